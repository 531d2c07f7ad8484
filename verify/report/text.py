"""Plain-text renderings for the terminal: stability, solved forces, the joint-by-joint calc."""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from verify.analysis.joints import JointSolution
from verify.analysis.pipeline import Analysis
from verify.analysis.stability import ILL_CONDITIONED_SCALED, StabilityResult
from verify.model import Model
from verify.report import joint_calc
from verify.report.cautions import ELASTIC_CAUTION
from verify.report.names import method_phrase
from verify.report.numbers import fmt, fmt_ratio, load_title, plain_table, roundoff_text, tc

if TYPE_CHECKING:  # a type only: importing the sheet builder costs every command ~40 ms
    from verify.analysis.cut_sheets import ReactionsSheet

AXIS_NAMES = ("x", "y", "z")


def render_stability(model: Model, s: StabilityResult) -> str:
    d = model.dim
    lines = [
        f"Truss: {model.title or model.source}  ({d}D, {s.joints} joints, {s.members} members, "
        f"{s.reactions} reaction components)",
        f"Maxwell's rule: b + r - {d}j = {s.members} + {s.reactions} - {d}x{s.joints} = {s.maxwell}"
        + ("  (too few members or supports)" if s.maxwell < 0 else ""),
        f"Equilibrium matrix ({method_phrase(s.method)}): rank {s.rank} of {d * s.joints} joint "
        f"equations and {s.members + s.reactions} unknowns",
        f"  mechanisms: {s.mechanisms}{'' if s.exact_counts else ' (at least)'}"
        f"{f' ({s.rigid_body_mechanisms} rigid-body)' if s.rigid_body_mechanisms else ''}, "
        f"states of self-stress: {s.self_stress}",
    ]
    if s.conditioning_ratio is not None:
        lines.append(
            f"  conditioning: sigma_min/sigma_max = {fmt_ratio(s.conditioning_ratio)}; scaled by "
            f"extent ratio^2 ({fmt(s.extent_ratio, 3)}^2) = {fmt_ratio(s.scaled_conditioning)}"
            + (
                "  NEAR-MECHANISM"
                if s.ill_conditioned
                else "  (well conditioned; near-mechanism below "
                f"{fmt_ratio(ILL_CONDITIONED_SCALED)})"
                if s.is_stable
                else ""
            )
        )
    elif s.scaled_conditioning is not None:
        lines.append(f"  LU pivot ratio min/max = {fmt_ratio(s.scaled_conditioning)}")
    verdict = s.classification.value
    if s.classification.value == "stable-indeterminate":
        verdict += f" (degree {s.self_stress})"
    elif s.classification.value == "unstable":
        verdict += (
            f" ({s.mechanisms}{'+' if not s.exact_counts else ''} "
            f"mechanism{'s' if s.mechanisms != 1 else ''})"
        )
    lines.append(f"Verdict: {verdict}")
    for k, mode in enumerate(s.mechanism_modes, 1):
        moves = ", ".join(
            f"{j} ({', '.join(fmt(c, 2) for c in v)})"
            for j, v in zip(mode.joints[:8], mode.motions[:8], strict=False)
        )
        kind = "rigid-body" if mode.rigid_body else "internal"
        lines.append(
            f"  mechanism {k} ({kind}): joints that move (direction): "
            f"{moves}{' ...' if len(mode.joints) > 8 else ''}"
        )
    for k, state in enumerate(s.self_stress_modes, 1):
        carried = ", ".join(
            f"{m} ({fmt(v, 3)})"
            for m, v in zip(state.members[:10], state.values[:10], strict=False)
        )
        lines.append(
            f"  self-stress {k}: members that carry it (relative force): "
            f"{carried}{' ...' if len(state.members) > 10 else ''}"
        )
    lines.extend(f"  note: {n}" for n in s.notes)
    return "\n".join(lines)


MAX_TEXT_MEMBERS = 5000  # above this the terminal table lists the largest forces; --json has all


def force_table(model: Model, analysis: Analysis, load_name: str, *, all_rows: bool = False) -> str:
    ref = analysis.reference
    assert ref is not None
    k = ref.column(load_name)
    scale = float(np.nanmax(np.abs(ref.member_forces[:, k]))) if ref.member_forces.size else 0.0
    zero = 1e-9 * (scale or 1.0)
    unit = model.units.force.symbol
    headers = ["member", f"force ({unit})", "T/C"]
    routes: list[tuple[str, np.ndarray]] = []
    if analysis.joints is not None:
        routes.append(("joints", analysis.joints.forces.member_forces[:, k]))
    sections = getattr(analysis, "sections", None)
    if sections is not None:
        routes.append(("sections", sections.forces.member_forces[:, k]))
    for name, _ in routes:
        headers.append(f"{name} ({unit})")
    rows = []
    shown: list[int] | range = range(len(model.members))
    note = ""
    if not all_rows and len(model.members) > MAX_TEXT_MEMBERS:
        # The members a checker looks at first: the largest tension and compression.
        order = np.argsort(-np.abs(np.nan_to_num(ref.member_forces[:, k])), kind="stable")[
            :MAX_TEXT_MEMBERS
        ]
        shown = sorted(int(i) for i in order)
        note = (
            f"\n({len(model.members) - MAX_TEXT_MEMBERS} members with smaller forces are not "
            "listed; "
            "--all-rows lists every member, --json gives every value)"
        )
    for i in shown:
        member = model.members[i]
        value = float(ref.member_forces[i, k])
        row = [member.id, fmt(value if abs(value) > zero else 0.0), tc(value, zero_tol=zero)]
        row.extend(
            fmt(float(v[i]) if abs(v[i]) > zero else 0.0) if np.isfinite(v[i]) else "not reached"
            for _, v in routes
        )
        rows.append(row)
    table = plain_table(headers, rows)
    reactions = ref.reaction_vectors(model, load_name)
    # A direction the support does not restrain has no reaction: "—", not a computed 0. An
    # inclined roller acts in every global direction. Round-off below 1e-9 of the largest
    # reaction prints as 0.
    acting: dict[str, set[str]] = {}
    for r in model.reactions:
        acting.setdefault(r.joint, set()).update(
            AXIS_NAMES[: model.dim] if r.axis == "n" else r.axis
        )
    rzero = 1e-9 * max((abs(c) for vec in reactions.values() for c in vec), default=0.0)
    rrows = [
        [j]
        + [
            (fmt(c if abs(c) > rzero else 0.0) if a in acting[j] else "—")
            for a, c in zip(AXIS_NAMES, vec, strict=False)
        ]
        for j, vec in reactions.items()
    ]
    rtable = plain_table(["support"] + [f"R{a} ({unit})" for a in AXIS_NAMES[: model.dim]], rrows)
    return f"{table}{note}\n\nReactions ({model.units.force.symbol}):\n{rtable}"


def render_solution(
    model: Model, analysis: Analysis, *, all_rows: bool = False, load_names: list[str] | None = None
) -> str:
    parts = []
    unit = model.units.force.symbol
    route = (
        "global solve of every joint equation at once"
        if analysis.global_ is not None
        else "direct stiffness method"
    )
    for name in load_names or model.load_names:
        parts.append(
            f"{load_title(model, name)} — member forces in {unit}, tension positive ({route})"
        )
        parts.append(force_table(model, analysis, name, all_rows=all_rows))
        parts.append("")
    sections = analysis.sections
    if sections is not None:
        reached = len(model.members) - len(sections.unreached)
        parts.append(
            f"Section cuts (Ritter's method) reached {reached} of {len(model.members)} members"
            + (":" if sections.unreached else ".")
        )
        for member, reason in list(sections.unreached.items())[:20]:
            parts.append(f"  {member}: not reached — {reason}")
        if len(sections.unreached) > 20:
            parts.append(f"  ... and {len(sections.unreached) - 20} more")
    if analysis.joints is not None:
        parts.append(
            "Method of joints, section cuts and global solve "
            f"{roundoff_text(analysis.route_disagreement)}"
            + (" (BEYOND round-off: check geometry)" if analysis.route_disagreement > 1e-6 else "")
        )
    parts.extend(f"note: {n}" for n in analysis.notes)
    elastic = analysis.elastic
    if elastic is not None and analysis.global_ is None:
        parts.extend(f"note: {n}" for n in getattr(elastic, "notes", ()))
        if getattr(elastic, "equal_EA_assumed", False):
            parts.insert(
                0,
                "EQUAL EA ASSUMED for every member (--assume-equal-ea): the force distribution "
                "depends on that assumption.\n",
            )
        parts.append(f"note: {ELASTIC_CAUTION}")
    if analysis.joints is not None:
        parts.extend(f"note: {n}" for n in analysis.joints.notes)
    return "\n".join(parts)


def render_joint_calc(
    model: Model,
    solution: JointSolution,
    load_name: str,
    *,
    reactions: ReactionsSheet | None = None,
) -> str:
    """The joint-by-joint hand calc for one load column, equations with values substituted
    (records: verify/report/joint_calc.py)."""
    return joint_calc.render_text(
        joint_calc.joint_calc(model, solution, load_name, reactions=reactions)
    )
