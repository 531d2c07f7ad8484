"""Terminal rendering of a review: verdict line, findings, member table."""

from __future__ import annotations

import numpy as np

from verify.compare.diagnose import Review, Row
from verify.compare.findings import Severity
from verify.compare.rows import Rows
from verify.report.cautions import CAUTION, ELASTIC_CAUTION
from verify.report.numbers import difference_text, fmt, fmt_percent, fmt_ratio, plain_table
from verify.report.written import table_place, written_at

MAX_ROWS = 200  # the terminal table is a summary; full tables go to --csv / --report


def verdict_line(review: Review) -> str:
    errors = sum(1 for f in review.findings if f.severity is Severity.ERROR)
    model = review.analysis.model
    checked = (
        f"{review.checked_members} of {len(model.members)} members in "
        f"{len(review.checked_cases)} of {len(model.load_names)} load cases/combinations "
        "checked"
    )
    if review.analysis.reference is None:
        checked = (
            f"{review.checked_members} of {len(model.members)} members claimed; no forces "
            "recomputed, so only the equilibrium of the claims was checked"
        )
    if review.analysis.assumed_EA is not None:
        checked += (
            f"; EQUAL EA ASSUMED ({fmt(review.analysis.assumed_EA, 6)} {model.units.force.symbol})"
        )
    if review.verdict.value == "agrees":
        if any(f.kind == "stiffness-dependent" for f in review.findings):
            return (
                "AGREES — the claims balance at every joint that could be checked; where they "
                "differ from the elastic solution the difference is a state of self-stress "
                f"({checked})"
            )
        return f"AGREES — every claim checked agrees within tolerance ({checked})"
    if review.verdict.value == "discrepancies":
        return f"DISCREPANCIES — {errors} finding(s) need attention ({checked})"
    return (
        "CANNOT VERIFY — "
        f"""{
            next(
                (f.detail for f in review.findings if f.severity is Severity.CANNOT_VERIFY),
                "see findings",
            )
        }"""
    )


def _row_cells(row: Row) -> list[str]:
    recomputed = row.global_ if row.global_ is not None else row.elastic
    scale = max(
        (abs(v) for v in (row.claimed, row.joints, recomputed) if v is not None), default=0.0
    )
    return [
        row.id,
        row.case,
        fmt(row.claimed),
        fmt(row.joints),
        fmt(row.sections),
        fmt(recomputed),
        difference_text(row.difference, row.claimed, row.written, scale),
        row.status,
    ]


def _vector(values: tuple[float, ...]) -> str:
    return "(" + ", ".join(fmt(v) for v in values) + ")"


def implied_lines(review: Review, limit: int = 40) -> list[str]:
    """The loads the claims balance, at the joints where they differ from the case's loads."""
    implied = review.implied
    if implied is None or not implied.differing:
        return []
    unit = review.analysis.model.units.force.symbol
    undetermined = {n: k for n, k in implied.undetermined.items() if k}
    told = (
        (
            "; not determined at "
            + ", ".join(f"{k} joint(s) in '{n}'" for n, k in undetermined.items())
            + " (a member there has no claim)"
        )
        if undetermined
        else ""
    )
    rows = [
        [
            item.joint + (" (support)" if item.supported else ""),
            item.case,
            _vector(item.load),
            _vector(item.implied),
            _vector(item.difference),
        ]
        for item in implied.differing[:limit]
    ]
    out = [
        "",
        f"Loads the claimed forces balance, where they differ from the case's loads ({unit}, "
        f"global axes{told}):",
        plain_table(
            ["joint", "load column"]
            + [f"{h} ({unit})" for h in ("case load", "claims balance", "difference")],
            rows,
        ),
    ]
    if len(implied.differing) > limit:
        out.append(
            f"({len(implied.differing) - limit} more joints: --json or --report lists them all)"
        )
    return out


def render_review(review: Review, *, all_rows: bool = False) -> str:
    model = review.analysis.model
    c = review.convention
    lines = [verdict_line(review), ""]
    lines.append(
        f"Case: {model.title or model.source}   Claims: {review.claims.source}"
        + table_place(review.claims.sheet)
    )
    source = {
        "table": "stated in the table",
        "option": "stated with --unit",
        "assumed": "not stated; the case's unit assumed",
    }.get(c.unit_source, c.unit_source)
    scaled = (f", read {c.scale_reason}" if c.scale_reason else "") + "".join(
        f"; {r}" for r in c.column_readings
    )
    lines.append(
        f"Convention: {c.sign_words}; claims in {c.unit} ({source}{scaled}); evidence: {c.support}"
    )
    lines.append(
        f"Tolerance: {fmt_percent(review.tolerance.rtol)} relative, "
        f"{fmt_ratio(review.tolerance.atol_fraction)} x largest force absolute, "
        "half a unit in the last written decimal"
        + "".join(f"; {w}" for w in review.tolerance.widened)
    )
    s = review.analysis.stability
    lines.append(
        f"Structure: {s.classification.value}, {s.dim}D, {s.joints} joints, {s.members} members, "
        f"{s.reactions} reactions, {s.mechanisms} mechanism(s), {s.self_stress} state(s) of "
        "self-stress"
    )
    lines.append("")
    if review.findings:
        lines.append("Findings (most serious first):")
        for f in review.findings:
            lines.append(f"  [{f.severity.value}] {f.kind}: {f.detail}")
            where = written_at(f)
            if where:
                lines.append(f"      written at: {where}")
            if f.next_step:
                lines.append(f"      next step: {f.next_step}")
    else:
        lines.append("Findings: none")
    lines.append("")
    rows = Rows.as_columns(review.rows)
    # picked by the codes of the kind and status columns: a Row is made only for a row shown
    is_displacement = rows.holds("kind", "displacement")
    missing_claim = rows.holds("status", "missing-claim")
    displacement_rows = rows.take(np.flatnonzero(is_displacement))
    shown_at = np.flatnonzero(~is_displacement & (all_rows | ~missing_claim))
    force = model.units.force.symbol
    headers = (
        ["member", "case"]
        + [f"{h} ({force})" for h in ("claimed", "joints", "sections", "recomputed", "difference")]
        + ["status"]
    )
    if not all_rows and shown_at.size > MAX_ROWS:
        agrees = rows.holds("status", "agrees")[shown_at]
        shown_at = np.concatenate([shown_at[~agrees], shown_at[agrees]])[:MAX_ROWS]
        lines.append(
            f"Member table (first {MAX_ROWS} rows, problems first; --all-rows or --csv for "
            f"everything), {model.units.force.symbol}, tension positive:"
        )
    else:
        lines.append(f"Member table ({model.units.force.symbol}, tension positive):")
    lines.append(plain_table(headers, [_row_cells(r) for r in rows.take(shown_at)]))
    if displacement_rows:
        length = model.units.length.symbol
        factor_mm = 1000.0 if length == "m" else 1.0
        unit = "mm" if length == "m" else length
        lines.append("")
        lines.append(f"Joint displacements ({unit}; claimed vs direct stiffness method):")
        lines.append(
            plain_table(
                ["joint.axis", "case"]
                + [f"{h} ({unit})" for h in ("claimed", "recomputed", "difference")]
                + ["status"],
                [
                    [
                        r.id,
                        r.case,
                        fmt(None if r.claimed is None else r.claimed * factor_mm),
                        fmt(None if r.elastic is None else r.elastic * factor_mm),
                        fmt(None if r.difference is None else r.difference * factor_mm),
                        r.status,
                    ]
                    for r in displacement_rows
                ],
            )
        )
    lines.extend(implied_lines(review))
    missing = int(missing_claim.sum())
    if missing and not all_rows:
        lines.append(
            f"({missing} member/case pairs without a claim are not listed; --all-rows shows them)"
        )
    lines.extend(f"note: {n}" for n in review.notes)
    check = review.displacements
    if check is not None and getattr(check, "calcs", None):
        from verify.report.virtual_work_text import render_virtual_work

        lines.append("")
        lines.append(
            "Deflection by the unit-load (virtual work) method, 1 x delta = sum n N L / (EA):"
        )
        for calc, case in zip(check.calcs, check.calc_cases, strict=True):
            lines.append(f"\nLoad column '{case}':")
            lines.append(render_virtual_work(calc, model))
    if review.analysis.global_ is None and review.analysis.elastic is not None or displacement_rows:
        lines.append(f"note: {ELASTIC_CAUTION}")
    lines.append("")
    lines.append(f"Caution: {CAUTION}")
    return "\n".join(lines)
