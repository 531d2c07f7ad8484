"""How finely a claimed value was written, as an allowance in the value's own unit.

Half a unit in the last written decimal (decimals as the cell shows them: '10.00' was written to
the hundredth), and for a column written to 2 or 3 significant figures half a unit of the last
significant figure of its whole numbers. Settled by the claims reader, once per claim; the
comparison scales these by the unit factor (compare/tolerances.py explains the tolerances).
"""

from __future__ import annotations

import math
import re

import numpy as np

MAX_DECIMALS = 6


def written_decimals(value: float) -> int:
    """How many decimals a number seems to have been written with (0..MAX_DECIMALS)."""
    if not math.isfinite(value):
        return MAX_DECIMALS
    for k in range(MAX_DECIMALS + 1):
        if abs(value - round(value, k)) <= 1e-9 * max(1.0, abs(value)):
            return k
    return MAX_DECIMALS


def rounding_allowance(raw_value: float, scale: float) -> float:
    """Half a unit in the last written decimal, in the case's units (after scaling)."""
    k = written_decimals(raw_value)
    if k >= MAX_DECIMALS:
        return 0.0
    # Whole numbers written as e.g. "12" are read as 0 decimals, but many tables round to
    # 3 significant figures instead; the relative tolerance covers those.
    return 0.5 * 10.0 ** (-k) * abs(scale) * 1.0001


ROUNDING_CHUNK = (
    32_768  # values settled at a time: each is settled alone, so the answer is the same
)


def rounding_allowances(raw_values: np.ndarray, scales: np.ndarray | float) -> np.ndarray:
    """Vectorised :func:`rounding_allowance` for many claims at once (`scales` one per value, or
    one for all). Settled a chunk at a time: a dozen temporary arrays the size of the chunk, not
    of the table (they set the reader's peak of memory at 10^5 claims)."""
    values = np.asarray(raw_values, dtype=float)
    if values.ndim != 1 or values.size <= ROUNDING_CHUNK:
        return _rounding_allowances(values, scales)
    scale_of = np.broadcast_to(np.asarray(scales, dtype=float), values.shape)
    out = np.empty(values.shape)
    for start in range(0, values.size, ROUNDING_CHUNK):
        stop = start + ROUNDING_CHUNK
        out[start:stop] = _rounding_allowances(values[start:stop], scale_of[start:stop])
    return out


def _rounding_allowances(values: np.ndarray, scales: np.ndarray | float) -> np.ndarray:
    out = np.zeros(values.shape)
    pending = np.flatnonzero(np.isfinite(values))
    slack = 1e-9 * np.maximum(1.0, np.abs(values))
    for k in range(MAX_DECIMALS):
        # Only the values not yet settled are rounded again (the same test per value).
        left = values[pending]
        hit = np.abs(left - np.round(left, k)) <= slack[pending]
        out[pending[hit]] = 0.5 * 10.0 ** (-k)
        pending = pending[~hit]
    return out * np.abs(np.asarray(scales, dtype=float)) * 1.0001


SIGNIFICANT_MIN = 2  # a column rounded to 1 significant figure says too little to widen anything
SIGNIFICANT_MAX = 3  # tables rounded to 2 or 3 significant figures (common practice)
SIGNIFICANT_MIN_VALUES = 5  # fewer values cannot show how a column was rounded
SIGNIFICANT_WIDENED_MIN = 3  # nor fewer whole numbers past the figures (the values widened)


def significant_digits_many(values: np.ndarray) -> np.ndarray:
    """Digits from the first non-zero one to the last non-zero one (140 -> 2, 4.50 -> 2, 0.27 -> 2),
    for many non-zero finite values at once, read from 11-digit mantissas."""
    magnitude = np.floor(np.log10(np.abs(values)))
    mantissa = np.rint(np.abs(values) / 10.0 ** (magnitude - 10)).astype(np.int64)  # 11 digits
    mantissa = np.where(
        mantissa >= 10**11, mantissa // 10, mantissa
    )  # rounded up to the next power
    digits = np.full(values.shape, 11, dtype=np.int64)
    for _ in range(10):
        trailing = mantissa % 10 == 0
        digits -= trailing
        mantissa = np.where(trailing, mantissa // 10, mantissa)
    return digits


def significant_figure_allowances(raw_values: np.ndarray, scales: np.ndarray | float) -> np.ndarray:
    """Rounding allowances for a column written to S = 2 or 3 significant figures.

    When no value of the column has more than S significant digits (and there are enough values
    to tell), a whole number such as 140 is read as rounded at its S-th digit (half of 10, not of
    1): a table rounded to 2 figures writes 135 as 140. Otherwise the allowance is zero here (the
    last-decimal allowance applies). In the case's units, like rounding_allowances.
    """
    values = np.asarray(raw_values, dtype=float)
    out = significant_figure_places(values)
    if out is None:
        out = np.zeros(values.shape)
    return out * np.abs(np.asarray(scales, dtype=float)) * 1.0001


def significant_figure_places(values: np.ndarray) -> np.ndarray | None:
    """significant_figure_allowances before its unit and margin (half a unit of each value's
    last significant figure where it is widened, else zero); None where every value's is zero
    (the column is not written to 2 or 3 significant figures), so a caller need not merge it."""
    nonzero = np.isfinite(values) & (values != 0)
    if nonzero.sum() < SIGNIFICANT_MIN_VALUES:
        return None
    picked = values[nonzero]
    # The most figures of any value: a first thousand already past SIGNIFICANT_MAX settles the
    # answer below (the maximum of all is at least theirs), without counting every value.
    figures = int(significant_digits_many(picked[:1000]).max())
    if figures <= SIGNIFICANT_MAX and picked.size > 1000:
        figures = int(significant_digits_many(picked).max())
    if not SIGNIFICANT_MIN <= figures <= SIGNIFICANT_MAX:
        return None
    magnitude = np.floor(np.log10(np.abs(values[nonzero])))  # 140 -> 2
    place = magnitude - (
        figures - 1
    )  # the place of the last significant figure: 140 at 2 figures -> 1
    widened = place > 0
    if widened.sum() < SIGNIFICANT_WIDENED_MIN:
        return None  # too few whole numbers past the figures to show the column was rounded so
    # A power of ten (100 at 2 figures) stands for 99.5 to 105; the symmetric allowance (+-5)
    # also admits 95 to 99.5, within the precision the column itself shows (150 covers +-3 %).
    out = np.zeros(values.shape)
    out[nonzero] = np.where(widened, 0.5 * 10.0**place, 0.0)
    return out


_DECIMAL_TOKEN = re.compile(r"(\d+)\.(\d+)")
_DECIMAL_COMMA_TOKEN = re.compile(r"(\d+),(\d+)")


def shown_decimals(text: str, value: float) -> int:
    """decimals_as_written, with -1 for a text that shows none (array-friendly)."""
    shown = decimals_as_written(text, value)
    return -1 if shown is None else shown


def decimals_as_written(text: str, value: float) -> int | None:
    """Decimals shown in the cell text ('10.00' or '10,00' -> 2), when the number in it is plainly
    `value` read that way (a thousands separator reads as another number and is left alone)."""
    if not text:
        return None
    if "," in text and "." not in text:  # a decimal comma ('10,00'), if that is what it reads as
        found = _DECIMAL_COMMA_TOKEN.search(text)
        if found is not None and float(found.group(0).replace(",", ".")) == abs(value):
            return len(found.group(2))
        return None
    if "," in text:
        return None
    found = _DECIMAL_TOKEN.search(text)
    if found is None or float(found.group(0)) != abs(value):
        return None
    return len(found.group(2))
