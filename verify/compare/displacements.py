"""Claimed joint displacements against the direct stiffness method, confirmed by virtual work.

Each claim is compared with the stiffness displacement (same tolerance rule as forces, with the
absolute floor scaled to the largest displacement of that load column). The first claims are
also recomputed by the unit-load method, 1 x delta = sum n N L / (EA) (Hibbeler, *Structural
Analysis*, "Method of virtual work: trusses"; shared/REFERENCES.md 3.7), and printed as a hand calc.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np

from verify.analysis.pipeline import Analysis
from verify.compare.diagnose import Review, Row, _verdict
from verify.compare.findings import Finding, Severity, ordered
from verify.compare.tolerances import Tolerance, rounding_allowance
from verify.io.displacements import DisplacementClaims
from verify.model import Model

if TYPE_CHECKING:  # a result type, made by the analysis run (analysis.run.unit_load_deflection)
    from verify.analysis.virtual_work import VirtualWorkCalc

AXES = ("x", "y", "z")
MAX_HAND_CALCS = 5  # virtual-work tables printed per review; every claim is still compared


@dataclass(frozen=True)
class DisplacementCheck:
    rows: tuple[Row, ...]
    findings: tuple[Finding, ...]
    calcs: tuple[VirtualWorkCalc, ...]
    calc_cases: tuple[str, ...]


def compare_displacements(
    analysis: Analysis, claims: DisplacementClaims, *, tolerance: Tolerance | None = None
) -> DisplacementCheck:
    tol = tolerance or Tolerance()
    model = analysis.model
    unit = model.units.length.symbol
    elastic = analysis.elastic
    rows: list[Row] = []
    findings: list[Finding] = []
    calcs: list[VirtualWorkCalc] = []
    calc_cases: list[str] = []
    if elastic is None:
        missing = model.members_without_stiffness()
        reason = (
            f"{len(missing)} member(s) have no EA (e.g. {', '.join(missing[:5])})"
            if missing
            else "the truss is unstable"
        )
        for c in claims.values:
            rows.append(
                Row(
                    f"{c.joint}.{c.axis}",
                    "displacement",
                    c.case,
                    c.value,
                    f"{c.written} at {c.where}",
                    None,
                    None,
                    None,
                    None,
                    None,
                    "not-verifiable",
                )
            )
        findings.append(
            Finding(
                "displacement-mismatch",
                (),
                f"claimed displacements cannot be checked: {reason}; give EA (or A and E) for "
                "every member",
                Severity.CANNOT_VERIFY,
            )
        )
        return DisplacementCheck(tuple(rows), tuple(findings), (), ())
    disp = elastic.displacements
    forces = elastic.forces.member_forces
    d = model.dim
    for c in claims.values:
        k = model.load_names.index(c.case)
        j = model.joint_index[c.joint]
        computed = float(disp[j * d + AXES.index(c.axis), k])
        scale = float(np.abs(disp[:, k]).max()) if disp.size else 0.0
        atol = tol.atol_fraction * scale
        # Half a unit in the last decimal as written, in the unit it was written in ('0 mm' is
        # not +-0.5 m).
        ok = tol.agrees(c.value, computed, atol, rounding_allowance(c.value / c.scale, c.scale))
        status = "agrees" if ok else "displacement-mismatch"
        rows.append(
            Row(
                f"{c.joint}.{c.axis}",
                "displacement",
                c.case,
                c.value,
                f"{c.written} at {c.where}",
                None,
                None,
                None,
                computed,
                c.value - computed,
                status,
            )
        )
        if not ok:
            sign = " (opposite direction)" if c.value * computed < 0 else ""
            assumed = _assumed_EA(analysis)
            if assumed is not None and _against_its_only_load(
                model, c.case, c.joint, c.axis, c.value
            ):
                # Under one point load the loaded joint moves with the load along its line whatever
                # the member sizes (the load's work, P x delta, equals the strain energy > 0).
                assumed = None
                sign += (
                    ": a joint carrying the only load moves along that load, whatever the member "
                    "sizes"
                )
            # Deflections scale with 1/EA: against an assumed EA a difference is no evidence.
            findings.append(
                Finding(
                    "displacement-mismatch",
                    (c.joint,),
                    f"joint {c.joint} along {c.axis} in '{c.case}': claimed "
                    f"{_length(c.value, unit)}, recomputed {_length(computed, unit)}{sign}"
                    + (
                        f" with the equal EA assumed ({assumed:g}): not evidence of an error, "
                        "since deflections depend on the real member sizes"
                        if assumed is not None
                        else ""
                    ),
                    Severity.INFO if assumed is not None else Severity.ERROR,
                    case=c.case,
                )
            )
        if len(calcs) < MAX_HAND_CALCS:
            direction = [1.0 if a == c.axis else 0.0 for a in AXES[:d]]
            try:
                calc = analysis.run.unit_load_deflection(
                    forces[:, k], c.joint, direction, _assumed_EA(analysis)
                )
            except ValueError:
                continue
            calcs.append(calc)
            calc_cases.append(c.case)
    return DisplacementCheck(tuple(rows), tuple(findings), tuple(calcs), tuple(calc_cases))


def _against_its_only_load(model: Model, case: str, joint: str, axis: str, value: float) -> bool:
    """True when `case` is one load at `joint`, along `axis` only, and `value` does not go with
    it."""
    if case not in {c.name for c in model.cases}:
        return False
    loads = next(c for c in model.cases if c.name == case).loads
    if set(loads) != {joint}:
        return False
    vector = loads[joint]
    k = AXES.index(axis)
    along_axis_only = all(
        abs(x) <= 1e-12 * max(abs(v) for v in vector) for n, x in enumerate(vector) if n != k
    )
    return (
        along_axis_only and vector[k] != 0 and value * vector[k] <= 0
    )  # not moving at all is impossible too


def _length(value: float, unit: str) -> str:
    """Deflections read better in millimetres when the model is in metres."""
    if unit == "m":
        return f"{value * 1000:.4g} mm"
    return f"{value:.4g} {unit}"


def _assumed_EA(analysis: Analysis) -> float | None:
    elastic = analysis.elastic
    if elastic is not None and getattr(elastic, "equal_EA_assumed", False):
        return analysis.assumed_EA
    return None


def attach_displacements(review: Review, check: DisplacementCheck) -> Review:
    """The review with the displacement rows and findings merged in and the verdict recomputed."""
    findings = ordered(list(review.findings) + list(check.findings))
    verdict = _verdict(
        findings, review.analysis.stability.classification, review.analysis.reference is not None
    )
    return replace(
        review,
        rows=review.rows + check.rows,
        findings=tuple(findings),
        verdict=verdict,
        displacements=check,
    )
