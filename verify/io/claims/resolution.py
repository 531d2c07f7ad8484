"""Resolution: how finely a column was written, judged from its values.

A table rounded to the nearest 0.5 kN writes 0.615 as "0.5"; read by its decimals alone the
allowance would be 0.05, and 21 honest claims would be accused. When every member value of a
column is a multiple of a step 5 x 10^k (0.05, 0.5, 5, 50) coarser than its written decimals, and
some value is an odd multiple of it (so the step is not coarser still), the column is taken as
rounded to that step and its claims allowed half of it. An error larger than the step still
shows. Steps of 1 or 0.1 need no judgement: the written decimals already say them.
"""

from __future__ import annotations

import math
from collections import defaultdict

import numpy as np

from verify.io.claims.table import ClaimedValue, Resolution

STEPS = (50.0, 5.0, 0.5, 0.05)  # coarsest first: the largest step all values fit is the column's
SAMPLE = 2_000  # values looked at first to rule columns out cheaply
MIN_VALUES = 6  # fewer non-zero values could all land on a step by chance (0.2^6 for 0.5 steps)


def _decimals(text: str, value: float) -> int:
    """Decimals as written in the cell ('12.50 C' -> 2), else read from the value itself."""
    digits = "".join(ch if ch.isdigit() or ch in ".," else " " for ch in text).split()
    if digits:
        number = digits[0]
        for mark in ".,":
            if mark in number:
                return len(number.rsplit(mark, 1)[1])
        return 0
    for k in range(7):
        if abs(value - round(value, k)) <= 1e-9 * max(1.0, abs(value)):
            return k
    return 7


def judge_column(column: str, values: list[ClaimedValue]) -> Resolution | None:
    written = [
        v for v in values if v.member is not None and v.value != 0 and math.isfinite(v.value)
    ]
    if len(written) < MIN_VALUES:
        return None
    magnitudes = np.abs(np.array([v.value for v in written]))
    for step in STEPS:
        counts = magnitudes / step
        whole = np.rint(counts)
        if not (np.abs(counts - whole) <= 1e-6 * np.maximum(1.0, counts)).all():
            continue
        if not (whole % 2 == 1).any():
            continue  # all even multiples: the column may be coarser still; the next step decides
        # Judged last, as it reads every cell's text: only a column that fits a step gets here.
        finest = max(_decimals(v.text, v.value) for v in written)
        if step <= 10.0 ** (-finest) * 1.0001:
            return None  # the decimals already say this step or a finer one
        units = {v.unit for v in values}
        return Resolution(column, step, units.pop() if len(units) == 1 else None)
    return None


def judge_resolutions(values: list[ClaimedValue]) -> list[Resolution]:
    """Every column written to a step. The first SAMPLE values decide which columns could be: a
    column whose sample fits no step fits none, so a 10^5-row table of ordinary decimals costs
    no second pass."""
    candidates = _by_column(values[:SAMPLE])
    maybe = {
        column
        for column, claims in candidates.items()
        if len(values) > SAMPLE and _fits_a_step(claims)
    }
    if len(values) > SAMPLE and not maybe:
        return []
    by_column = _by_column(values) if len(values) > SAMPLE else candidates
    found = (
        judge_column(column, claims)
        for column, claims in by_column.items()
        if len(values) <= SAMPLE or column in maybe
    )
    return [r for r in found if r is not None]


def _by_column(values: list[ClaimedValue]) -> dict[str, list[ClaimedValue]]:
    out: dict[str, list[ClaimedValue]] = defaultdict(list)
    for v in values:
        out[v.column].append(v)
    return out


def _fits_a_step(values: list[ClaimedValue]) -> bool:
    magnitudes = np.abs(
        np.array(
            [
                v.value
                for v in values
                if v.member is not None and v.value != 0 and math.isfinite(v.value)
            ]
        )
    )
    for step in STEPS:
        counts = magnitudes / step
        if (np.abs(counts - np.rint(counts)) <= 1e-6 * np.maximum(1.0, counts)).all():
            return True
    return False
