"""The deflection check in the review report: claimed against computed joint displacements, and
the unit-load (virtual work) hand calc that confirms each computed value.

Displacements are shown in millimetres when the case is in metres (a deflection of 0.00285 m is
read as 2.85 mm), otherwise in the case's length unit; every heading carries its unit.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from verify.compare.diagnose import Review
from verify.compare.rows import Rows
from verify.report.cautions import ELASTIC_CAUTION
from verify.report.numbers import clean_zero, difference_text, fmt
from verify.report.tables import Table

ELASTIC_NOTE = ELASTIC_CAUTION + " The claimed values may include them."


def shown_length(length_unit: str) -> tuple[str, float]:
    """(unit shown, factor from the case's length unit): metres are shown as millimetres."""
    return ("mm", 1000.0) if length_unit == "m" else (length_unit, 1.0)


def _scaled(value: float | None, factor: float) -> float | None:
    return None if value is None else value * factor


def deflection_table(review: Review) -> Table | None:
    """Claimed against computed displacements, one row per joint direction and load column."""
    all_rows = Rows.as_columns(review.rows)
    rows = all_rows.take(all_rows.where("kind", "displacement"))
    if not rows:
        return None
    unit, factor = shown_length(review.analysis.model.units.length.symbol)
    cells = []
    for r in rows:
        claimed, computed, difference = (
            _scaled(v, factor) for v in (r.claimed, r.elastic, r.difference)
        )
        scale = max(abs(v) for v in (claimed, computed, 0.0) if v is not None)
        cells.append(
            (
                r.id,
                r.case,
                fmt(claimed),
                fmt(clean_zero(computed, scale)),
                difference_text(difference, None, r.written, scale),
                r.status,
                r.written,
            )
        )
    header = (
        "joint.direction",
        "load column",
        f"claimed ({unit})",
        f"computed ({unit})",
        f"difference ({unit})",
        "status",
        "claim as written",
    )
    intro = (
        f"Joint displacements in {unit}, positive along the global axis named; computed by the "
        "direct stiffness method and confirmed below by the unit-load method. " + ELASTIC_NOTE
    )
    return Table("Deflection check", intro, header, tuple(cells), tuple(r.status for r in rows))


@dataclass(frozen=True)
class UnitLoadCalc:
    heading: str
    intro: str
    header: tuple[str, ...]
    rows: tuple[tuple[str, ...], ...]
    result: str


def unit_load_calcs(review: Review) -> list[UnitLoadCalc]:
    """The virtual-work sum of each checked displacement, as a table a checker can re-add."""
    check = review.displacements
    calcs = getattr(check, "calcs", None) if check is not None else None
    if not calcs:
        return []
    model = review.analysis.model
    fu, lu = model.units.force.symbol, model.units.length.symbol
    unit, factor = shown_length(lu)
    out = []
    cases = getattr(check, "calc_cases", ())
    for calc, case in zip(calcs, cases, strict=True):
        values = np.array(
            [[r.real_force, r.unit_force, r.length, r.EA, r.term] for r in calc.rows]
        ).reshape(-1, 5)
        largest = np.abs(values).max(axis=0) if len(values) else np.zeros(5)
        rows = tuple(
            (
                r.member,
                *(fmt(clean_zero(float(v), float(s))) for v, s in zip(row, largest, strict=True)),
            )
            for r, row in zip(calc.rows, values, strict=True)
        )
        direction = "(" + ", ".join(fmt(c) for c in calc.direction) + ")"
        heading = f"Unit-load calc: joint {calc.joint} along {direction}, load column '{case}'"
        intro = (
            f"1 × Δ = Σ n·N·L / (EA): N the real member forces ({fu}, tension positive), n the "
            f"forces from a unit load at joint {calc.joint} along {direction} "
            f"({calc.unit_load_route})."
        )
        result = (
            f"Δ = Σ = {fmt(calc.deflection, 6)} {lu}"
            + (f" = {fmt(calc.deflection * factor, 4)} {unit}" if factor != 1.0 else "")
            + (" (negative: the joint moves against the unit load)" if calc.deflection < 0 else "")
        )
        if calc.notes:
            result += " " + " ".join(f"Note: {n}" for n in calc.notes)
        out.append(
            UnitLoadCalc(
                heading,
                intro,
                ("member", f"N ({fu})", "n (–)", f"L ({lu})", f"EA ({fu})", f"n·N·L/EA ({lu})"),
                rows,
                result,
            )
        )
    return out
