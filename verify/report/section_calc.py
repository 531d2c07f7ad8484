"""The calc sheet of a section cut, and of the overall-equilibrium step, as plain text.

Renders the records of `verify.analysis.cut_sheets` (the terminal's `cut` and `solve --show
sections`, and the Markdown report): the free body kept, the members cut (forces drawn as
tension), the loads and reactions on the kept side, one equation per member the free body solves
with its lever arms, and the results with T/C and the exact value where one is meaningful.
"""

from __future__ import annotations

from collections.abc import Sequence

from verify.analysis.cut_sheets import (
    FORCES_NORMAL,
    MOMENTS,
    CutSheet,
    Equation,
    ReactionsSheet,
    SheetSet,
)
from verify.model import Model
from verify.report.numbers import clean_zero, fmt, load_title

DIGITS = 6


def _n(x: float) -> str:
    return fmt(float(x), DIGITS)


def _vec(v: Sequence[float], scale: float = 1.0) -> str:
    """Components that are round-off beside `scale` print as 0."""
    return "(" + ", ".join(_n(clean_zero(float(c), scale) or 0.0) for c in v) + ")"


def _paren(x: float) -> str:
    text = _n(x)
    return f"({text})" if text.startswith("-") else text


def about(eq: Equation, extent: float, dim: int) -> str:
    """Where moments are taken: "joint L2 (8, 0)" or "the point (4, 3)"."""
    point = _vec(eq.moment_point or (), extent)
    return f"joint {eq.moment_joint} {point}" if eq.moment_joint else f"the point {point}"


def equation_head(eq: Equation, extent: float, dim: int) -> str:
    """The equation in words: what is summed, about or along what, and what drops out."""
    elim = ", ".join(eq.eliminated)
    if eq.method == MOMENTS:
        where = about(eq, extent, dim)
        if dim == 2:
            head = f"ΣM about {where} = 0, anticlockwise positive"
        else:
            head = f"ΣM about the axis through {where} along {_vec(eq.axis or ())} = 0"
        if elim:
            head += (
                f"; the lines of {elim} pass through it, so they drop out"
                if dim == 2
                else f"; the lines of {elim} meet the axis or run parallel to it, so they drop out"
            )
        return head
    if eq.method == FORCES_NORMAL:
        head = f"ΣF along {_vec(eq.axis or ())} = 0"
        if elim:
            head += f"; the direction is normal to {elim}, so they drop out"
        return head
    return "the free body's equations solved together"


def term_name(kind: str, label: str, component: str) -> str:
    if kind == "load":
        return f"load at {label} {component}"
    if kind == "reaction":
        return f"reaction {label}"
    if kind == "loads":
        return label
    return f"N({label})"


def render_cut_sheet(model: Model, sheet: CutSheet) -> str:
    """One free body and every member it solves."""
    fu, lu = model.units.force.symbol, model.units.length.symbol
    d = model.dim
    out: list[str] = []
    solves = ", ".join(sheet.solves)
    out.append(
        f"Section solving {solves}, load '{sheet.load_name}' (forces in {fu}, lengths in {lu})"
    )
    shape = (
        "straight cut"
        if sheet.straight
        else "the joints on one side of the cut members, found by connectivity"
    )
    listed = ", ".join(sheet.kept_listed)
    if sheet.kept_count > len(sheet.kept_listed):
        listed += f", ... ({sheet.kept_count} joints)"
    out.append(f"  Free body kept ({shape}): {listed}")
    out.append(
        "  Cut members (each force drawn as tension, pulling the free body toward the far joint):"
    )
    for c in sheet.cut_members:
        status = (
            f"known: {_n(c.known)} {fu} from an earlier cut" if c.known is not None else "unknown"
        )
        out.append(
            f"    {c.member}: at joint {c.kept_joint} {_vec(c.point, sheet.extent)}, "
            f"direction {_vec(c.direction)}; {status}"
        )
    if sheet.reactions:
        out.append(
            "  Reactions on the free body (from overall equilibrium): "
            + ", ".join(f"{x.label} = {_n(x.value)} {fu}" for x in sheet.reactions)
        )
    else:
        out.append("  Reactions on the free body: none (no support on the kept side)")
    if sheet.loads:
        shown = ", ".join(f"{x.label} {_vec(x.force)}" for x in sheet.loads)
        more = (
            f" and {sheet.loads_omitted} more loaded joints (resultant of all "
            f"{_vec(sheet.load_total)})"
            if sheet.loads_omitted
            else ""
        )
        out.append(f"  Loads on the free body: {shown}{more}")
    else:
        out.append("  Loads on the free body: none")
    for eq in sheet.equations:
        out.extend(_equation_lines(eq, sheet, d, fu, lu))
    if sheet.also:
        out.append(
            "  The free body's equations solved together also give: "
            + ", ".join(f"N({m}) = {_n(v)} {fu} ({tc})" for m, v, tc in sheet.also)
        )
    if sheet.combination:
        out.append("  (A combination of load cases: decimals only, no exact values.)")
    return "\n".join(out) + "\n"


def _equation_lines(eq: Equation, sheet: CutSheet, d: int, fu: str, lu: str) -> list[str]:
    out = [f"  For {eq.target}: {equation_head(eq, sheet.extent, d)}"]
    if eq.method == MOMENTS:
        out.append(f"    force ({fu}) × lever arm ({lu}) = moment ({fu}·{lu}):")
    else:
        out.append(f"    force ({fu}) × cosine = component ({fu}):")
    for t in eq.terms:
        name = term_name(t.kind, t.label, t.component)
        if t.kind == "unknown":
            out.append(f"    {name} × {_n(t.arm)}")
        elif t.kind == "dropped":
            continue
        elif t.kind == "loads":
            out.append(f"    {name}: {_n(t.product or 0.0)}")
        elif t.kind == "known":
            out.append(
                f"    {name} = {_n(t.force or 0.0)} (known) × {_n(t.arm)} = {_n(t.product or 0.0)}"
            )
        else:
            out.append(f"    {name} = {_n(t.force or 0.0)} × {_n(t.arm)} = {_n(t.product or 0.0)}")
    out.append(f"    {_n(eq.coefficient)}·N({eq.target}) + {_paren(eq.rest)} = 0")
    text = f"  ⇒ N({eq.target}) = {_n(eq.value)} {fu} ({eq.tc})"
    if eq.exact is not None:
        text += f"   exact: {eq.exact}"
    out.append(text)
    return out


def render_sheet_set(model: Model, sheets: SheetSet) -> str:
    parts = [render_cut_sheet(model, s) for s in sheets.sheets]
    parts += [f"No section cut for {m}: {why}.\n" for m, why in sheets.unreached]
    return "\n".join(parts)


def render_reactions(model: Model, sheet: ReactionsSheet) -> str:
    """The overall-equilibrium step: ΣM about the pin, then the force sums, and the reactions."""
    fu, lu = model.units.force.symbol, model.units.length.symbol
    title = load_title(model, sheet.load_name)
    out = [
        f"Reactions from overall equilibrium, {title[0].lower()}{title[1:]} "
        f"(forces in {fu}, lengths in {lu})"
    ]
    if not sheet.possible:
        out.append(
            f"  Not possible: {sheet.why}. The method of sections then uses only free bodies "
            "without supports."
        )
        return "\n".join(out) + "\n"
    for row in sheet.rows:
        terms = [f"{_n(c)}·{label}" for label, c in row.coefficients]
        text = " + ".join(terms) if terms else "0"
        if row.loads:
            shown = ", ".join(f"{j}: {_n(c)}" for j, c in row.loads)
            more = f" + {row.loads_omitted} more" if row.loads_omitted else ""
            text += f" + [loads: {shown}{more}; total {_n(row.load_total)}]"
        out.append(f"  {row.title}:")
        out.append(f"    {text} = 0")
        if row.solves is not None:
            out.append(f"    ⇒ {row.solves[0]} = {_n(row.solves[1])} {fu}")
    out.append("  Reactions (positive along the support's stated direction):")
    for label, value, exact in sheet.reactions:
        line = f"    {label} = {_n(value)} {fu}"
        if exact is not None:
            line += f"   exact: {exact}"
        out.append(line)
    return "\n".join(out) + "\n"
