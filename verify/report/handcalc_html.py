"""The hand-calc appendix of the review report: reactions, joint sequence, section cuts, exact
values.

Renders records only: the cut sheets and the overall-equilibrium step come from the section
route's `calc_sheets` (verify/analysis/cut_sheets.py), exact values from verify/analysis/exact.py.
A section-cut block carries its `CutSheet`; the HTML draws it (free body and equations), the
Markdown and the terminal print its text form.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, replace
from typing import Any

from verify.analysis.cut_sheets import CutSheet, ReactionsSheet
from verify.analysis.joints import JointSolution
from verify.analysis.pipeline import Analysis
from verify.report.joint_calc import JointCalc, joint_calc, render_text
from verify.report.numbers import fmt


@dataclass(frozen=True)
class Block:
    """One piece of the appendix: a heading and preformatted text, a table, a paragraph, or a
    calc sheet (`sheet`: a section cut; `reactions`: the overall-equilibrium step)."""

    heading: str
    kind: str  # "pre" | "table" | "para" | "sheet" | "reactions" | "joints"
    text: str = ""
    header: tuple[str, ...] = ()
    rows: tuple[tuple[str, ...], ...] = ()
    sheet: CutSheet | None = None
    reactions: ReactionsSheet | None = None
    joints: JointCalc | None = None  # the joint-by-joint records, set as equations in HTML


# -- appendix blocks ------------------------------------------------------------------------------
def _truncate_steps(solution: JointSolution, max_steps: int | None) -> tuple[JointSolution, int]:
    if max_steps is None or len(solution.steps) <= max_steps:
        return solution, 0
    return replace(solution, steps=solution.steps[:max_steps]), len(solution.steps) - max_steps


def appendix_blocks(
    analysis: Analysis,
    load_name: str,
    *,
    members: Sequence[str] | None = None,
    max_steps: int | None = None,
    exact: bool = True,
    book: Any = None,
) -> list[Block]:
    """The hand calc of one load column: reactions, joint by joint, section cuts, exact values.

    `members`: the members whose section cuts are shown (None: every cut); each free body once.
    `book`: the cut sheets when the caller has built them already (one per report), as
    `analysis.sections.calc_sheets` makes them (typed Any: reports may not import the builder).
    """
    from verify.report.section_calc import render_reactions

    model = analysis.model
    unit = model.units.force.symbol
    blocks: list[Block] = []
    sections = analysis.sections
    if book is None and sections is not None:
        book = sections.calc_sheets(model)
    ref = analysis.reference

    # Reactions.
    reactions_sheet = book.reactions(load_name, exact=exact) if book is not None else None
    if reactions_sheet is not None:
        blocks.append(
            Block(
                "Reactions",
                "reactions",
                render_reactions(model, reactions_sheet),
                reactions=reactions_sheet,
            )
        )
    elif ref is not None:
        vectors = ref.reaction_vectors(model, load_name)
        axes = "xyz"[: model.dim]
        rows = tuple((j,) + tuple(fmt(c) for c in vec) for j, vec in vectors.items())
        how = (
            "from overall equilibrium: step 1 of the joint sequence below shows the equations"
            if analysis.joints is not None and analysis.joints.reactions_first
            else "solved together with the joints (the supports are not externally determinate)"
        )
        blocks.append(
            Block(
                "Reactions",
                "table",
                f"Reactions in {unit}, {how}.",
                ("support",) + tuple(f"R{a} ({unit})" for a in axes),
                rows,
            )
        )

    # Joint by joint.
    if analysis.joints is not None:
        shown, cut = _truncate_steps(analysis.joints, max_steps)
        calc = joint_calc(model, shown, load_name, reactions=reactions_sheet)
        text = render_text(calc)
        if cut:
            text += (
                f"\n\n… {cut} further step(s) are not shown in this report (large model); "
                "`truss-verify solve --show joints` prints them all."
            )
        blocks.append(Block("Method of joints", "joints", text, joints=calc))
    else:
        why = (
            "the truss is unstable, so no force can be recomputed"
            if not analysis.stability.is_stable
            else "the truss is statically indeterminate: statics alone do not give the member "
            "forces"
            + (
                "; they come from the direct stiffness method"
                if analysis.elastic is not None
                else ""
            )
        )
        blocks.append(Block("Method of joints", "para", f"No joint-by-joint calculation: {why}."))

    # Section cuts.
    if sections is not None and book is not None:
        from verify.report.section_calc import render_cut_sheet

        unreached = dict(sections.unreached)
        reach = (
            f"The cuts reach {len(model.members) - len(unreached)} of {len(model.members)} "
            "members. Each free body is shown once, with every member it solves."
        )
        if unreached:
            listed = "; ".join(
                f"{m} ({why})" if why else m for m, why in list(unreached.items())[:30]
            )
            reach += f" Not reached: {listed}" + (
                f" and {len(unreached) - 30} more." if len(unreached) > 30 else "."
            )
        blocks.append(Block("Method of sections (Ritter)", "para", reach))
        if members is None:
            sheets = book.group(list(sections.cuts), load_name, exact=exact)
        else:
            wanted = [m for m in members if m not in unreached]
            sheets = book.for_members(wanted, load_name, exact=exact).sheets
        for sheet in sheets:
            blocks.append(
                Block(
                    "Section through " + ", ".join(c.member for c in sheet.cut_members),
                    "sheet",
                    render_cut_sheet(model, sheet),
                    sheet=sheet,
                )
            )
    elif analysis.joints is not None:
        blocks.append(
            Block(
                "Method of sections (Ritter)",
                "para",
                "No section cuts were computed for this truss.",
            )
        )

    # Exact values.
    if exact and analysis.joints is not None and book is not None:
        values = book.exact_members(analysis.joints, load_name)
        combination = load_name in {c.name for c in model.combinations}
        if values is None:
            why = (
                "this column combines load cases with factors, where an exact form adds "
                "nothing to the decimals above"
                if combination
                else "the coordinates, loads or support directions are not all short decimals "
                "along the axes, so the decimals above are the result"
            )
            blocks.append(Block("Exact values", "para", f"Not given: {why}."))
        else:
            rows = tuple(
                (v.label, fmt(v.decimal, 6), v.exact or "—")
                for v in values.members + values.reactions
            )
            intro = (
                f"Member forces (tension positive) and reactions in {unit}, solved again in "
                "exact fractions along the same steps; a force is (force density) × (member "
                "length), hence the square roots."
            )
            if values.note:
                intro += f" Note: {values.note}."
            blocks.append(
                Block(
                    "Exact values",
                    "table",
                    intro,
                    ("member / reaction", f"decimal ({unit})", f"exact ({unit})"),
                    rows,
                )
            )
    return blocks
