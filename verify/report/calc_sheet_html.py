"""A section cut's calc sheet in HTML: the free body drawn (inline SVG) and the equations set.

The drawing shows the kept side (members solid), the cut line (dashed), each cut member's force
drawn as assumed tension (an arrow pulling away from the free body), the loads and reactions on
the kept side, each moment point marked (circled, lettered A, B, ...) and the lever arm of each
solved member dimensioned from its moment point. The equations are HTML (subscripts, Σ, ·, ⇒),
one block per member solved: what is summed, a table of force × lever arm, the sum and the result.
No script, no external reference: the report stays self-contained and prints as drawn.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from html import escape

import numpy as np

from verify.analysis.cut_sheets import MOMENTS, CutSheet, Equation, ReactionsSheet
from verify.model import Model
from verify.report.numbers import fmt
from verify.report.section_calc import equation_head, term_name

WIDTH = 520.0  # drawing width in px (fits A4 portrait beside nothing, half a landscape page)
MAX_HEIGHT = 360.0
PAD = 64.0  # room for arrows (ARROW + 6 px) and their labels around the free body
ARROW = 34.0  # drawn length of a force arrow in px (forces are not to scale: values are labelled)
FONT = 11


# Moment points are named O1, O2, ... (O for the origin of moments: letters would clash with
# joint names such as A, B, C).
def _point_name(k: int) -> str:
    return f"O{k + 1}"


def _e(text: object) -> str:
    return escape(str(text), quote=True)


def _n(x: float) -> str:
    return fmt(float(x), 6)


def _c(v: float) -> str:
    text = f"{v:.1f}"
    return "0.0" if text == "-0.0" else text


class _Frame:
    """Model coordinates to drawing px (y up in the model, down on screen); 3D: the plane of
    the two largest extents of what is drawn."""

    def __init__(self, points: np.ndarray) -> None:
        if points.shape[1] == 3:
            spread = np.ptp(points, axis=0)
            self.axes = tuple(sorted(np.argsort(-spread, kind="stable")[:2].tolist()))
        else:
            self.axes = (0, 1)
        p = points[:, self.axes]
        lo, hi = p.min(axis=0), p.max(axis=0)
        size = np.maximum(hi - lo, 1e-9)
        scale = min((WIDTH - 2 * PAD) / size[0], (MAX_HEIGHT - 2 * PAD) / size[1])
        if not math.isfinite(scale) or scale <= 0:
            scale = 1.0
        self.scale = scale
        self.lo = lo
        self.height = float(size[1] * scale + 2 * PAD)
        self.offset_x = (WIDTH - size[0] * scale) / 2

    def xy(self, point: Sequence[float]) -> tuple[float, float]:
        a, b = (float(point[k]) for k in self.axes)
        return (
            self.offset_x + (a - self.lo[0]) * self.scale,
            self.height - PAD - (b - self.lo[1]) * self.scale,
        )

    def vec(self, v: Sequence[float]) -> tuple[float, float]:
        a, b = (float(v[k]) for k in self.axes)
        norm = math.hypot(a, b)
        return (a / norm, -b / norm) if norm > 0 else (0.0, 0.0)


def _head(x1: float, y1: float, x2: float, y2: float, size: float = 7.0) -> str:
    """A filled arrowhead at (x2, y2) pointing from (x1, y1): drawn, not a marker, so the SVG
    refers to nothing (no url() a browser could resolve)."""
    length = math.hypot(x2 - x1, y2 - y1) or 1.0
    ux, uy = (x2 - x1) / length, (y2 - y1) / length
    bx, by = x2 - ux * size, y2 - uy * size
    px, py = -uy * size * 0.4, ux * size * 0.4
    return (
        f'<path class="head" d="M{_c(x2)},{_c(y2)} L{_c(bx + px)},{_c(by + py)} '
        f'L{_c(bx - px)},{_c(by - py)} z"/>'
    )


def _span(x: float, label: str, anchor: str) -> tuple[float, float]:
    """The horizontal extent of a label (bold 11 px text: about 7 px a character)."""
    width = 7.0 * len(label)
    if anchor == "start":
        return x, x + width
    if anchor == "end":
        return x - width, x
    return x - width / 2, x + width / 2


def _frame_for(sheet: CutSheet) -> _Frame:
    """The drawing's frame: every joint drawn and every moment point fit on it."""
    points = [p for _, p in sheet.drawing.joints] + [
        eq.moment_point for eq in sheet.equations if eq.moment_point is not None
    ]
    return _Frame(np.asarray(points, dtype=float))


def _arrow(x1: float, y1: float, x2: float, y2: float, css: str) -> str:
    return f'<line class="{css}" x1="{_c(x1)}" y1="{_c(y1)}" x2="{_c(x2)}" y2="{_c(y2)}"/>' + _head(
        x1, y1, x2, y2
    )


def _text(x: float, y: float, label: str, css: str = "", anchor: str = "middle") -> str:
    cls = f' class="{css}"' if css else ""
    return (
        f'<text{cls} x="{_c(x)}" y="{_c(y)}" text-anchor="{anchor}" '
        f'font-size="{FONT}">{_e(label)}</text>'
    )


def free_body_svg(model: Model, sheet: CutSheet, sheet_id: str) -> str:
    """The free body of `sheet` as inline SVG."""
    fu, lu = model.units.force.symbol, model.units.length.symbol
    drawing = sheet.drawing
    where = dict(drawing.joints)
    frame = _frame_for(sheet)
    out: list[str] = []
    out.append(
        f'<svg xmlns="http://www.w3.org/2000/svg" id="{_e(sheet_id)}" class="freebody" '
        f'width="{_c(WIDTH)}" height="{_c(frame.height)}" viewBox="0 0 {_c(WIDTH)} '
        f'{_c(frame.height)}" role="img" aria-label="Free body of the section through '
        f'{_e(", ".join(c.member for c in sheet.cut_members))}">'
    )
    # members of the kept side
    for _, a, b in drawing.members:
        (x1, y1), (x2, y2) = frame.xy(where[a]), frame.xy(where[b])
        out.append(f'<line class="kept" x1="{_c(x1)}" y1="{_c(y1)}" x2="{_c(x2)}" y2="{_c(y2)}"/>')
    # cut members: the kept half solid, the far half ghosted; the cut line through the midpoints
    mids = []
    arrows = []
    placed: list[tuple[tuple[float, float], float]] = []
    for c in sheet.cut_members:
        (x1, y1), (x2, y2) = frame.xy(where[c.kept_joint]), frame.xy(where[c.far_joint])
        mx, my = (x1 + x2) / 2, (y1 + y2) / 2
        mids.append((mx, my))
        out.append(
            f'<line class="kept" x1="{_c(x1)}" y1="{_c(y1)}" x2="{_c(mx)}" y2="{_c(my)}"/>'
            f'<line class="far" x1="{_c(mx)}" y1="{_c(my)}" x2="{_c(x2)}" y2="{_c(y2)}"/>'
        )
        ux, uy = frame.vec(c.direction)
        label = f"N({c.member})" if c.known is None else f"N({c.member}) = {_n(c.known)} {fu}"
        arrows.append(_arrow(mx, my, mx + ux * ARROW, my + uy * ARROW, "force"))
        lx, ly = mx + ux * (ARROW + 8), my + uy * (ARROW + 8)
        anchor = "start" if ux >= 0.3 else ("end" if ux <= -0.3 else "middle")
        box = _span(lx, label, anchor)
        while any(box[0] < b[1] and b[0] < box[1] and abs(ly - y) < 12 for b, y in placed):
            ly += 13  # two arrows end at one place (3D projections): stack their labels
        placed.append((box, ly))
        arrows.append(_text(lx, ly + 4, label, "flabel", anchor))
    out.append(_cut_line(mids) if model.dim == 2 else _cut_ticks(frame, sheet, where))
    # loads: arrows ending short of the joint, label at the tail
    for x in sheet.loads:
        jx, jy = frame.xy(x.point)
        ux, uy = frame.vec(x.force)
        if ux == 0 and uy == 0:
            continue
        tail = (jx - ux * (ARROW + 6), jy - uy * (ARROW + 6))
        arrows.append(_arrow(tail[0], tail[1], jx - ux * 5, jy - uy * 5, "load"))
        anchor = "end" if ux > 0.3 else ("start" if ux < -0.3 else "middle")
        ty = tail[1] - 4 if uy >= 0 else tail[1] + 12
        arrows.append(_text(tail[0], ty, f"{_n(x.value)} {fu}", "llabel", anchor))
    # reactions: drawn along the support's stated direction from below/behind the joint
    for x in sheet.reactions:
        jx, jy = frame.xy(x.point)
        r = next(r for r in model.reactions if r.label == x.label)
        ux, uy = frame.vec(r.direction)
        tail = (jx - ux * (ARROW + 6), jy - uy * (ARROW + 6))
        arrows.append(_arrow(tail[0], tail[1], jx - ux * 5, jy - uy * 5, "reaction"))
        anchor = "end" if ux > 0.3 else ("start" if ux < -0.3 else "middle")
        ty = tail[1] + 12 if uy <= 0 else tail[1] - 4
        arrows.append(_text(tail[0], ty, f"{x.label} = {_n(x.value)} {fu}", "rlabel", anchor))
    # joints and their labels (offset up-left, clear of the arrows drawn at the joint)
    for joint, p in drawing.joints:
        jx, jy = frame.xy(p)
        out.append(f'<circle class="joint" cx="{_c(jx)}" cy="{_c(jy)}" r="2.5"/>')
        out.append(_text(jx - 5, jy - 6, joint, "jlabel", "end"))
    # moment points and lever arms of the solved members
    moments = [e for e in sheet.equations if e.method == MOMENTS]
    names: dict[tuple[float, ...], list[str]] = {}
    for k, eq in enumerate(moments):  # one mark per point, named by every equation about it
        if eq.moment_point is not None:
            names.setdefault(tuple(eq.moment_point), []).append(_point_name(k))
    for k, eq in enumerate(moments):
        if eq.moment_point is None:
            continue
        shared = names[tuple(eq.moment_point)]
        first = shared[0] == _point_name(k)
        out.extend(_moment_marks(frame, eq, ", ".join(shared), lu, model.dim, mark=first))
    out.extend(arrows)
    out.append("</svg>")
    return "".join(out)


def _cut_ticks(frame: _Frame, sheet: CutSheet, where: dict[str, tuple[float, ...]]) -> str:
    """3D: a plane cut seen in projection is no line; each cut member gets a short dashed tick
    across it at its midpoint instead."""
    out = []
    for c in sheet.cut_members:
        (x1, y1), (x2, y2) = frame.xy(where[c.kept_joint]), frame.xy(where[c.far_joint])
        mx, my = (x1 + x2) / 2, (y1 + y2) / 2
        length = math.hypot(x2 - x1, y2 - y1) or 1.0
        px, py = -(y2 - y1) / length * 10, (x2 - x1) / length * 10
        out.append(
            f'<line class="cutmark" x1="{_c(mx - px)}" y1="{_c(my - py)}" '
            f'x2="{_c(mx + px)}" y2="{_c(my + py)}"/>'
        )
    return "".join(out)


def _cut_line(mids: list[tuple[float, float]]) -> str:
    if not mids:
        return ""
    pts = np.asarray(mids)
    if len(pts) > 1:
        centre = pts.mean(axis=0)
        _, _, vh = np.linalg.svd(pts - centre)
        along = vh[0]
        t = (pts - centre) @ along
        order = np.argsort(t)
        first, last = centre + along * (t[order[0]] - 14), centre + along * (t[order[-1]] + 14)
        path = [tuple(first)] + [tuple(pts[i]) for i in order] + [tuple(last)]
    else:
        x, y = mids[0]
        path = [(x, y - 16), (x, y + 16)]
    d = " ".join(f"{_c(x)},{_c(y)}" for x, y in path)
    return f'<polyline class="cut" points="{d}"/>'


def _moment_marks(
    frame: _Frame, eq: Equation, letter: str, lu: str, dim: int, *, mark: bool = True
) -> list[str]:
    """The moment point (circled cross and its name; once per point) and the lever arms of the
    solved member and the reactions, dimensioned (2D)."""
    if eq.moment_point is None:
        return []
    px, py = frame.xy(eq.moment_point)
    out = (
        [
            f'<circle class="mpoint" cx="{_c(px)}" cy="{_c(py)}" r="6"/>',
            f'<line class="mpoint" x1="{_c(px - 4)}" y1="{_c(py)}" x2="{_c(px + 4)}" '
            f'y2="{_c(py)}"/>',
            f'<line class="mpoint" x1="{_c(px)}" y1="{_c(py - 4)}" x2="{_c(px)}" '
            f'y2="{_c(py + 4)}"/>',
            _text(px + 9, py + 14, letter, "mlabel", "start"),
        ]
        if mark
        else []
    )
    if dim != 2:
        return out
    for t in eq.terms:
        if t.foot is None or t.kind not in ("unknown", "reaction"):
            continue
        fx, fy = frame.xy(t.foot)
        if math.hypot(fx - px, fy - py) < 8:
            continue
        out.append(
            f'<line class="dim" x1="{_c(px)}" y1="{_c(py)}" x2="{_c(fx)}" y2="{_c(fy)}"/>'
            + _head(px, py, fx, fy, 5.0)
            + _head(fx, fy, px, py, 5.0)
        )
        mx, my = (px + fx) / 2, (py + fy) / 2
        out.append(_text(mx + 4, my - 3, f"{_n(abs(t.arm))} {lu}", "dlabel", "start"))
    return out


FREE_BODY_CSS = """
.sheet{margin:.6em 0 1.2em;border-top:1px solid #bbb;padding-top:.4em}
.sheet svg.freebody,.eq{break-inside:avoid}
svg.freebody{display:block;max-width:100%;height:auto;margin:.3em 0}
svg.freebody line.kept{stroke:#3A3A3A;stroke-width:1.6}
svg.freebody line.far{stroke:#9a9a9a;stroke-width:1;stroke-dasharray:3 3}
svg.freebody polyline.cut{fill:none;stroke:#1a1a1a;stroke-width:1.2;stroke-dasharray:8 4}
svg.freebody line.cutmark{stroke:#1a1a1a;stroke-width:1.6}
svg.freebody line.force,svg.freebody line.load,svg.freebody line.reaction{stroke:#1a1a1a;\
stroke-width:1.4}
svg.freebody line.reaction{stroke-dasharray:5 2}
svg.freebody line.dim{stroke:#1a1a1a;stroke-width:.7}
svg.freebody circle.joint,svg.freebody path.head{fill:#1a1a1a}
svg.freebody circle.mpoint{fill:#fff;stroke:#1a1a1a;stroke-width:1.2}
svg.freebody line.mpoint{stroke:#1a1a1a;stroke-width:1}
svg.freebody text{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;fill:#1a1a1a;\
paint-order:stroke;stroke:#fff;stroke-width:3px}
svg.freebody text.flabel,svg.freebody text.mlabel{font-weight:bold}
.eq{margin:.5em 0 .8em}.eq .head{margin:.2em 0}.eq table{margin:.2em 0}
.eq .sum{font-family:'DejaVu Serif',Georgia,serif;margin:.3em 0 .2em 1.2em}
.eq .result{font-weight:bold;margin-left:1.2em}
@media print{
svg.freebody{max-height:62mm;width:auto}
.sheet p,.eq p{margin:.15em 0}.eq{margin:.3em 0 .5em}.eq table.calc{font-size:7.5pt}
}
"""


def sheet_html(model: Model, sheet: CutSheet, sheet_id: str) -> str:
    """The free body and every equation of one section cut."""
    fu, lu = model.units.force.symbol, model.units.length.symbol
    out = ['<div class="sheet">']
    solved = ", ".join(sheet.solves)
    listed = ", ".join(sheet.kept_listed)
    if sheet.kept_count > len(sheet.kept_listed):
        listed += f" … ({sheet.kept_count} joints)"
    shape = "straight cut" if sheet.straight else "the joints on one side, found by connectivity"
    out.append(
        f"<p>Solves <strong>{_e(solved)}</strong>. Free body kept ({_e(shape)}): {_e(listed)}. "
        "Cut member forces are drawn as tension, pulling away from the free body; the values "
        f"beside the arrows are in {_e(fu)} (arrows not to scale).</p>"
    )
    out.append(free_body_svg(model, sheet, sheet_id))
    if model.dim == 3:
        axes = _frame_for(sheet).axes
        out.append(
            f"<p><em>Drawn projected on the {'xyz'[axes[0]]}–{'xyz'[axes[1]]} plane; each "
            "cut member is marked by a tick across it.</em></p>"
        )
    notes = []
    if sheet.drawing.omitted_members:
        notes.append(
            f"the drawing shows the {len(sheet.drawing.members)} kept members nearest the cut; "
            f"{sheet.drawing.omitted_members} more on the kept side are not drawn"
        )
    if sheet.loads_omitted:
        notes.append(
            f"{sheet.loads_omitted} more loaded joints on the kept side are summed in one term "
            "and not drawn"
        )
    if notes:
        out.append(f"<p><em>{_e('; '.join(notes).capitalize())}.</em></p>")
    moment_eqs = [e for e in sheet.equations if e.method == MOMENTS]
    for eq in sheet.equations:
        letter = _point_name(moment_eqs.index(eq)) if eq in moment_eqs else None
        out.append(_equation_html(eq, sheet, letter, fu, lu, model.dim))
    if sheet.also:
        out.append(
            "<p>The free body's equations solved together also give "
            + ", ".join(
                f"N<sub>{_e(m)}</sub> = {_e(_n(v))} {_e(fu)} ({_e(tc)})" for m, v, tc in sheet.also
            )
            + ".</p>"
        )
    if sheet.combination:
        out.append("<p>A combination of load cases: decimals only, no exact values.</p>")
    out.append("</div>")
    return "".join(out)


def _sym(label: str) -> str:
    return f"N<sub>{_e(label)}</sub>"


def _equation_html(
    eq: Equation, sheet: CutSheet, letter: str | None, fu: str, lu: str, dim: int
) -> str:
    head = equation_head(eq, sheet.extent, dim)
    if letter is not None:
        head += f" (point {letter} on the drawing)"
    moments = eq.method == MOMENTS
    arm_head = f"lever arm ({lu})" if moments else "cosine"
    product_head = f"moment ({fu}·{lu})" if moments else f"component ({fu})"
    rows = []
    sum_terms = []
    for t in eq.terms:
        if t.kind == "dropped":
            continue
        name = _e(term_name(t.kind, t.label, t.component))
        if t.kind == "unknown":
            rows.append(
                f'<tr><td>{_sym(t.label)}</td><td class="num">unknown</td>'
                f'<td class="num">{_e(_n(t.arm))}</td>'
                f'<td class="num">{_e(_n(t.arm))}·{_sym(t.label)}</td></tr>'
            )
            sum_terms.append(f"{_e(_n(t.arm))}·{_sym(t.label)}")
            continue
        force = "" if t.force is None else _e(_n(t.force))
        arm = "" if t.kind == "loads" else _e(_n(t.arm))
        product = _e(_n(t.product or 0.0))
        rows.append(
            f'<tr><td>{name}</td><td class="num">{force}</td><td class="num">{arm}</td>'
            f'<td class="num">{product}</td></tr>'
        )
        if t.kind == "loads" or t.force is None:
            sum_terms.append(f"({product})")
        else:
            sum_terms.append(f"({force})({arm})")
    lhs = "ΣM" if moments else "ΣF"
    sub = f"<sub>{letter}</sub>" if letter is not None else ""
    equation = f"{lhs}{sub} = " + " + ".join(sum_terms) + " = 0"
    reduced = f"{_e(_n(eq.coefficient))}·{_sym(eq.target)} + ({_e(_n(eq.rest))}) = 0"
    result = f"⇒ {_sym(eq.target)} = {_e(_n(eq.value))} {_e(fu)} ({_e(eq.tc)})"
    if eq.exact is not None:
        result += f"; exact {_e(eq.exact)} {_e(fu)}"
    return (
        f'<div class="eq"><p class="head"><strong>{_sym(eq.target)}</strong>: {_e(head)}</p>'
        f'<table class="calc"><thead><tr><th>force</th><th>value ({_e(fu)})</th>'
        f"<th>{_e(arm_head)}</th><th>{_e(product_head)}</th></tr></thead><tbody>"
        + "".join(rows)
        + f'</tbody></table><p class="sum">{equation}</p><p class="sum">{reduced}</p>'
        f'<p class="result">{result}</p></div>'
    )


def reactions_html(model: Model, sheet: ReactionsSheet) -> str:
    """The overall-equilibrium step set as equations: each sum, the reaction it fixes, and the
    reactions with their exact values."""
    fu, lu = model.units.force.symbol, model.units.length.symbol
    if not sheet.possible:
        return (
            f"<p>Reactions cannot come first from overall equilibrium: {_e(sheet.why)}. The "
            "method of sections then uses only free bodies without supports.</p>"
        )
    out = [
        f"<p>Forces in {_e(fu)}, lengths in {_e(lu)}; each reaction is positive along its "
        "support's stated direction.</p>"
    ]
    for row in sheet.rows:
        terms = [f"{_e(_n(c))}·R<sub>{_e(label)}</sub>" for label, c in row.coefficients]
        terms.append(f"({_e(_n(row.load_total))})")
        loads = ""
        if row.loads:
            listed = ", ".join(f"{_e(j)}: {_e(_n(c))}" for j, c in row.loads)
            more = f" and {row.loads_omitted} more" if row.loads_omitted else ""
            unit = f"{fu}·{lu}" if row.title.startswith("ΣM") else fu
            loads = (
                f'<p class="sum">loads ({_e(unit)}): {listed}{more}; '
                f"total {_e(_n(row.load_total))} {_e(unit)}</p>"
            )
        solved = ""
        if row.solves is not None:
            solved = (
                f'<p class="result">⇒ R<sub>{_e(row.solves[0])}</sub> = '
                f"{_e(_n(row.solves[1]))} {_e(fu)}</p>"
            )
        out.append(
            f'<div class="eq"><p class="head">{_e(row.title)}</p>'
            f'<p class="sum">{" + ".join(terms)} = 0</p>{loads}{solved}</div>'
        )
    rows = "".join(
        f'<tr><td>{_e(label)}</td><td class="num">{_e(_n(value))}</td>'
        f'<td class="num">{_e(exact) if exact is not None else "—"}</td></tr>'
        for label, value, exact in sheet.reactions
    )
    out.append(
        f'<table class="calc"><thead><tr><th>reaction</th><th>value ({_e(fu)})</th>'
        f"<th>exact ({_e(fu)})</th></tr></thead><tbody>{rows}</tbody></table>"
    )
    return "".join(out)
