"""Resolution: how finely a column was written, judged from its values.

A table rounded to the nearest 0.5 kN writes 0.615 as "0.5"; read by its decimals alone the
allowance would be 0.05, and 21 honest claims would be accused. When every member value of a
column is a multiple of a step 5 x 10^k (0.05, 0.5, 5, 50) coarser than its written decimals, and
some value is an odd multiple of it (so the step is not coarser still), the column is taken as
rounded to that step and its claims allowed half of it. An error larger than the step still
shows. Steps of 1 or 0.1 need no judgement: the written decimals already say them.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence

import numpy as np

from verify.io.claims.rounding import (
    MAX_DECIMALS,
    rounding_allowances,
    shown_decimals,
    significant_figure_places,
)
from verify.io.claims.table import ClaimArrays, ClaimedValue, Resolution
from verify.units import Dimension, Unit, factor, lookup_unit

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


def judge_resolutions(
    value: np.ndarray,
    is_member: np.ndarray,
    column: np.ndarray,
    names: tuple[str, ...],
    unit: np.ndarray,
    units: tuple[str | None, ...],
    text: Sequence[str],
) -> list[Resolution]:
    """Every column written to a step, judged on whole columns at once (arrays of the claims)."""
    found = []
    usable = is_member & (value != 0) & np.isfinite(value)  # (the same for every column)
    for k, name in enumerate(names):
        in_column = column == k
        written = in_column & usable
        if int(written.sum()) < MIN_VALUES:
            continue
        magnitudes = np.abs(value[written])
        for step in STEPS:
            # A first few thousand off the step: so is the column (no pass over all of it).
            if not _fit(magnitudes[:SAMPLE], step) or not _fit(magnitudes, step):
                continue
            if not (np.rint(magnitudes / step) % 2 == 1).any():
                # All even multiples: the column may be coarser still; the next step decides.
                continue
            # Judged last, as it reads every cell's text: only a column that fits a step gets here.
            finest = max(
                _decimals(text[i], float(value[i])) for i in np.flatnonzero(written).tolist()
            )
            if step > 10.0 ** (-finest) * 1.0001:  # else the decimals already say this step
                stated = {units[u] for u in np.unique(unit[in_column])}
                found.append(Resolution(name, step, stated.pop() if len(stated) == 1 else None))
            break
    return found


SAMPLE = 2_000  # values of a column tried on a step before all of them


def _fit(magnitudes: np.ndarray, step: float) -> bool:
    """Whether every magnitude is a whole number of steps (within 1e-6 of one)."""
    counts = magnitudes / step
    return bool((np.abs(counts - np.rint(counts)) <= 1e-6 * np.maximum(1.0, counts)).all())


def _written_allowance(decimals: np.ndarray) -> np.ndarray:
    """0.5 * 10^-decimals * 1.0001, worked in one temporary array."""
    written = decimals.astype(float)
    np.negative(written, out=written)
    np.power(10.0, written, out=written)
    written *= 0.5
    written *= 1.0001
    return written


def settle_rounding(
    value: np.ndarray,
    decimals: np.ndarray,
    is_member: np.ndarray,
    column: np.ndarray,
    names: tuple[str, ...],
    resolutions: Sequence[Resolution],
) -> np.ndarray:
    """Each claim's rounding allowance in its own unit: half a unit in the last decimal (as the
    cell shows them when it does: '10.00' was written to the hundredth, not the unit), widened
    for a column written to 2 or 3 significant figures or judged rounded to a step."""
    # min(allowance of the value, 0.5 * 10^-decimals * 1.0001) where the text shows decimals.
    # A value written with d < MAX_DECIMALS decimals reads as itself rounded to d (float() of
    # the text is the correctly rounded N / 10^d), so its allowance is settled at d or fewer
    # decimals and is at least the written one: the written one is the minimum, and the value
    # need not be settled (most of this step's time for a table of decimals).
    quick = (decimals >= 0) & (decimals < MAX_DECIMALS) & np.isfinite(value)
    rounding = np.empty(value.shape)
    slow = np.flatnonzero(~quick)
    rounding[slow] = rounding_allowances(value[slow], 1.0)  # in the value's own unit
    shown = np.flatnonzero(quick)
    rounding[shown] = _written_allowance(np.arange(MAX_DECIMALS))[decimals[shown]]
    shown = slow[decimals[slow] >= 0]
    rounding[shown] = np.minimum(rounding[shown], _written_allowance(decimals[shown]))
    del shown, slow
    steps = {r.column: r.step for r in resolutions}
    for k, name in enumerate(names):
        picked = (column == k) & is_member
        if not picked.any():
            continue
        # Nothing to widen (most columns): no merge, which would leave every allowance as it is
        # (all are >= 0 or nan, and np.maximum with 0 keeps those).
        places = significant_figure_places(value[picked])
        if places is not None:
            rounding[picked] = np.maximum(rounding[picked], places * 1.0 * 1.0001)
        if name in steps:
            rounding[picked] = np.maximum(rounding[picked], 0.5 * steps[name] * 1.0001)
    return rounding


def claim_arrays(
    values: Sequence[ClaimedValue],
    member_index: Mapping[str, int],
    case_unit: Unit,
    resolutions: Sequence[Resolution] | None = None,
) -> ClaimArrays:
    """The arrays of claims given one by one (a table built in memory, or the rows the general
    reader took); `resolutions` None judges them here."""
    n = len(values)
    value = np.fromiter((v.value for v in values), dtype=float, count=n)
    member = np.fromiter(
        (member_index[v.member] if v.member is not None else -1 for v in values),
        dtype=np.int64,
        count=n,
    )
    names = tuple(dict.fromkeys(v.column for v in values))
    code = {name: k for k, name in enumerate(names)}
    column = np.fromiter((code[v.column] for v in values), dtype=np.int64, count=n)
    units = tuple(dict.fromkeys(v.unit for v in values))
    unit_code = {u: k for k, u in enumerate(units)}
    unit = np.fromiter((unit_code[v.unit] for v in values), dtype=np.int64, count=n)
    text = [v.text for v in values]
    decimals = np.fromiter(
        (shown_decimals(v.text, v.value) for v in values), dtype=np.int64, count=n
    )
    is_member = np.fromiter((v.reaction is None for v in values), dtype=bool, count=n)
    if resolutions is None:
        resolutions = judge_resolutions(value, is_member, column, names, unit, units, text)
    return ClaimArrays(
        value=value,
        sign_fixed=np.fromiter((v.sign_fixed for v in values), dtype=bool, count=n),
        member=member,
        column=column,
        names=names,
        unit=unit,
        units=units,
        unit_factor=unit_factors(unit, units, case_unit),
        rounding=settle_rounding(value, decimals, is_member, column, names, resolutions),
        where=[v.where for v in values],
        text=text,
        label=[v.label for v in values],
        reaction={i: v.reaction for i, v in enumerate(values) if v.reaction is not None},
        member_ids=list(member_index),
        resolutions=tuple(resolutions),
    )


def unit_factors(unit: np.ndarray, units: tuple[str | None, ...], case_unit: Unit) -> np.ndarray:
    """Per claim, its stated unit to the case's force unit; nan where no unit is stated."""
    table = np.array(
        [
            factor(lookup_unit(u, Dimension.FORCE), case_unit) if u is not None else np.nan
            for u in units
        ]
        or [np.nan]
    )
    return table[unit] if unit.size else np.zeros(0)
