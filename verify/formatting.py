"""Numbers written as an engineer writes them: significant figures, no '-0', T/C.

Shared by the comparison (finding texts) and every report, so it sits below both.

Rounding is decimal and half away from zero, applied to the shortest decimal that reads back as
the float (its repr): 173.25 is written 173.3 and 28.125 is written 28.13, as a checker rounding
by hand would, not 173.2 and 28.12 as binary round-half-to-even on the stored float gives.
Before that, a value is rounded to NOISE_FIGURES significant figures, so that 75.37499999999
from a solve and 75.375 typed in a case file print alike.
"""

from __future__ import annotations

import json
import math
import re
from decimal import ROUND_HALF_UP, Decimal, InvalidOperation
from functools import lru_cache

# Ten figures: far beyond any written engineering value, far above double round-off (~1e-16).
NOISE_FIGURES = 10
ZERO_RTOL = 1e-9  # a value below this fraction of its column's largest is round-off, shown as 0
NOTHING = "—"


def _decimal(value: float) -> Decimal | None:
    """The float as the decimal its repr spells, cleaned to NOISE_FIGURES figures (None:
    NaN/inf)."""
    if not math.isfinite(value):
        return None
    exact = Decimal(repr(float(value)))
    if exact == 0:
        return Decimal(0)
    exponent = exact.adjusted() - NOISE_FIGURES + 1
    return exact.quantize(Decimal(1).scaleb(exponent), rounding=ROUND_HALF_UP)


def round_half_away(value: float, decimals: int) -> Decimal:
    """`value` rounded to `decimals` places (negative: tens, hundreds...), halves away from zero."""
    number = _decimal(value)
    if number is None:
        raise ValueError(f"cannot round {value!r}")
    try:
        return number.quantize(Decimal(1).scaleb(-decimals), rounding=ROUND_HALF_UP)
    except InvalidOperation:  # more digits than the context holds: already exact at that place
        return number


def _plain(number: Decimal) -> str:
    """Fixed-point text without trailing zeros and never '-0'."""
    text = f"{number:f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "", "-") else text


def _missing(value: float | None) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def fmt(value: float | None, digits: int = 4) -> str:
    """`digits` significant figures (whole numbers are never cut), halves away from zero, no
    '-0'."""
    if _missing(value):
        return NOTHING
    assert value is not None
    return _fmt_float(float(value), digits)


# A report's member table writes each force in up to three columns (joints, sections, global
# agree to the last bit), and decimal rounding costs microseconds: each text is made once.
@lru_cache(maxsize=1 << 16)
def _fmt_float(value: float, digits: int) -> str:
    number = _decimal(value)
    if number is None:
        return "∞" if value > 0 else "−∞"
    if number == 0 or abs(value) < 1e-12:
        return "0"
    decimals = max(digits - 1 - number.adjusted(), 0)
    return _plain(number.quantize(Decimal(1).scaleb(-decimals), rounding=ROUND_HALF_UP))


def fmt_fixed(value: float | None, decimals: int) -> str:
    """Exactly `decimals` places, halves away from zero (a claim's 12.40 stays 12.40); no '-0'."""
    if _missing(value):
        return NOTHING
    assert value is not None
    text = f"{round_half_away(float(value), decimals):f}"
    if text.startswith("-") and not text.strip("-0."):
        text = text[1:]
    return text


def fmt_ratio(value: float | None, digits: int = 3) -> str:
    """A small or large dimensionless figure (a conditioning ratio): '4.71e-5', halves away from
    zero."""
    if _missing(value):
        return NOTHING
    assert value is not None
    number = _decimal(float(value))
    if number is None or number == 0:
        return "0" if number is not None else "∞"
    if 1e-3 <= abs(value) < 1e4:
        return fmt(value, digits)
    exponent = number.adjusted()
    mantissa = _plain(round_half_away(float(number.scaleb(-exponent)), digits - 1))
    if mantissa.lstrip("-") == "10":  # 9.996e-5 rounds up to 1e-4
        mantissa, exponent = mantissa.replace("10", "1"), exponent + 1
    return f"{mantissa}e{exponent}"


def fmt_percent(fraction: float, digits: int = 3) -> str:
    """A fraction as a percentage: 0.01 -> '1 %', halves away from zero."""
    return f"{fmt(fraction * 100, digits)} %"


def clean_zero(value: float | None, scale: float, *, rtol: float = ZERO_RTOL) -> float | None:
    """0.0 for a value that is round-off beside `scale` (its column's largest), else the value."""
    if value is None or not math.isfinite(value):
        return value
    return 0.0 if abs(value) <= rtol * (abs(scale) or 1.0) else value


def tc(value: float | None, *, zero_tol: float = 0.0, digits: int = 4) -> str:
    """Magnitude with T or C, as a hand calculation writes it."""
    if _missing(value):
        return NOTHING
    assert value is not None
    if abs(value) <= zero_tol or abs(value) < 1e-12:
        return "0"
    return f"{fmt(abs(value), digits)} {'T' if value > 0 else 'C'}"


# The first number of an ASCII text: its digits, then the digits after a point (str.isdigit
# is [0-9] on ASCII; other texts take the character loop below, which follows isdigit exactly).
FIRST_NUMBER = re.compile(r"[0-9]+(?:\.([0-9]+))?", re.ASCII)


def decimals_in(text: str) -> int | None:
    """Decimals of the first plain number in `text` ('12.40 C at row 4' -> 2); None when there is
    none."""
    if text.isascii():
        found = FIRST_NUMBER.search(text)
        if found is None:
            return None
        return len(found.group(1)) if found.group(1) is not None else 0
    return _decimals_by_character(text)


def _decimals_by_character(text: str) -> int | None:
    start = None
    for k, ch in enumerate(text):
        if ch.isdigit():
            start = k
            break
    if start is None:
        return None
    k = start
    while k < len(text) and text[k].isdigit():
        k += 1
    if k + 1 < len(text) and text[k] == "." and text[k + 1].isdigit():
        end = k + 1
        while end < len(text) and text[end].isdigit():
            end += 1
        return end - k - 1
    return 0


def toml_key(text: str) -> str:
    """A case-file (TOML) key for a name: bare when TOML allows it, else a quoted string."""
    return (
        text
        if text.replace("_", "").replace("-", "").isalnum() and text.isascii()
        else json.dumps(text)
    )
