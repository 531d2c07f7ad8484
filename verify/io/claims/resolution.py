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

from verify.io.claims.table import ClaimedValue, Resolution

STEPS = (50.0, 5.0, 0.5, 0.05)  # coarsest first: the largest step all values fit is the column's
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


def _multiple(value: float, step: float) -> int | None:
    """The whole number of steps in `value`, when it is one (to round-off), else None."""
    count = value / step
    nearest = round(count)
    return int(nearest) if abs(count - nearest) <= 1e-6 * max(1.0, abs(count)) else None


def judge_column(column: str, values: list[ClaimedValue]) -> Resolution | None:
    written = [(v.value, v.text) for v in values if v.member is not None and v.value != 0 and math.isfinite(v.value)]
    if len(written) < MIN_VALUES:
        return None
    finest = max(_decimals(text, value) for value, text in written)
    for step in STEPS:
        if step <= 10.0 ** (-finest) * 1.0001:
            return None  # the decimals already say this step or a finer one
        counts = [_multiple(abs(value), step) for value, _ in written]
        if all(c is not None for c in counts) and any(c % 2 == 1 for c in counts if c is not None):
            units = {v.unit for v in values}
            return Resolution(column, step, units.pop() if len(units) == 1 else None)
    return None


def judge_resolutions(values: list[ClaimedValue]) -> list[Resolution]:
    by_column: dict[str, list[ClaimedValue]] = defaultdict(list)
    for v in values:
        by_column[v.column].append(v)
    found = (judge_column(column, claims) for column, claims in by_column.items())
    return [r for r in found if r is not None]
