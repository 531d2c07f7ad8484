"""The calc sheet of one section cut, and of the overall-equilibrium step, as plain text.

Written the way a checking engineer sets out a section in a review memo: the free body kept, the
members cut (forces drawn as tension, pulling the free body toward the far joint), the reactions
and loads on the kept side, the equation with its lever arms, and the result with T/C.

Exact values: where the geometry and loads are "nice" (grid coordinates, 3-4-5 slopes, square
roots of small integers) the result is recomputed in exact arithmetic with sympy and shown beside
the decimal, but only if it matches the decimal to EXACT_RTOL; otherwise decimals alone. sympy is
imported inside the functions because it takes about half a second to import.
"""

from __future__ import annotations

import math
from fractions import Fraction
from typing import Any

import numpy as np

from verify.analysis.joints import overall_equilibrium_matrix, solve_reactions
from verify.analysis.sections import (
    FORCES_NORMAL,
    LEAST_SQUARES,
    MOMENTS,
    SectionCut,
    cut_lines,
    equation_row,
    kept_external,
    solve_cut,
)
from verify.model import Model
from verify.report.numbers import clean_zero, fmt, load_title

DIGITS = 6
EXACT_RTOL = 1e-9  # an exact value is shown only if it matches the decimal this closely
NICE_RTOL = 1e-10  # a decimal input is taken as exact if a nice number lies this close
MAX_DENOMINATOR = 1000
SURDS = (1, 2, 3, 5, 6, 7, 10, 11, 13, 14, 15, 17, 19, 21, 22, 23, 26, 29, 30, 34, 41)
MAX_TERMS = 24  # itemised loads per equation; the rest are summed on one line
MAX_EXACT_TERMS = 200  # beyond this many inputs the exact recomputation is skipped (time)
MAX_LISTED_JOINTS = 20


def _n(x: float) -> str:
    return fmt(float(x), DIGITS)


def _tc(x: float, scale: float) -> str:
    if abs(x) <= 1e-9 * scale:
        return "zero force"
    return "T" if x > 0 else "C"


def _vec(v: Any, scale: float = 1.0) -> str:
    """A vector; components that are round-off beside `scale` (a direction: 1; a point: the
    model's extent) print as 0, not as -0.00000000173205."""
    return "(" + ", ".join(_n(clean_zero(float(c), scale) or 0.0) for c in v) + ")"


def _extent(model: Model) -> float:
    return float(np.abs(model.xyz).max(initial=1.0))


def _nice(x: float, scale: float, sp: Any) -> Any:
    """x as a small rational times the square root of a small integer, or None."""
    if abs(x) <= 1e-12 * max(scale, 1.0):
        return sp.Integer(0)
    for k in SURDS:
        r = x / math.sqrt(k)
        f = Fraction(r).limit_denominator(MAX_DENOMINATOR)
        if abs(float(f) - r) <= NICE_RTOL * max(1.0, abs(r)):
            return sp.Rational(f.numerator, f.denominator) * sp.sqrt(k)
    return None


class _Exact:
    """Exact counterparts of model numbers; any number without one makes the whole calc decimal."""

    def __init__(self, model: Model) -> None:
        import sympy

        self.sp = sympy
        self.scale = float(np.abs(model.xyz).max(initial=1.0))
        self.failed = False
        self.model = model

    def num(self, x: float, scale: float | None = None) -> Any:
        value = _nice(float(x), self.scale if scale is None else scale, self.sp)
        if value is None:
            self.failed = True
            return self.sp.Float(x)
        return value

    def vec(self, v: Any, scale: float | None = None) -> Any:
        return self.sp.Matrix([self.num(c, scale) for c in v])

    def joint(self, joint_id: str) -> Any:
        return self.vec(self.model.xyz[self.model.joint_index[joint_id]])

    def direction(self, member: str, from_joint: str) -> Any:
        m = self.model.members[self.model.member_index[member]]
        far = m.end if m.start == from_joint else m.start
        d = self.joint(far) - self.joint(from_joint)
        return d / self.sp.sqrt(sum(c**2 for c in d))

    def verified(self, value: Any, decimal: float, scale: float) -> str | None:
        """The simplified exact value as text, if every input was nice and it matches the decimal."""
        if self.failed:
            return None
        value = self.sp.radsimp(self.sp.simplify(value))
        try:
            close = abs(float(value) - decimal) <= EXACT_RTOL * max(abs(decimal), scale)
        except TypeError:  # a free symbol or a non-real result: no exact value to show
            return None
        return str(value) if close else None


def _moment2(r: Any, f: Any) -> Any:
    return r[0] * f[1] - r[1] * f[0]


def _column(model: Model, load_name: str) -> int:
    names = model.load_names
    if load_name not in names:
        raise ValueError(f"load case '{load_name}' is not in the model (have: {', '.join(names)})")
    return names.index(load_name)


def render_cut(model: Model, cut: SectionCut, load_name: str, *, exact: bool = True) -> str:
    """The calc sheet of `cut` for one load case or combination."""
    column = _column(model, load_name)
    d = model.dim
    fu, lu = model.units.force.symbol, model.units.length.symbol
    values = solve_cut(model, cut, column)
    external = kept_external(model, cut, column)
    lines = cut_lines(model, cut)
    known = {m: f[column] for m, f in zip(cut.known_members, cut.known_forces, strict=True)}
    # zero-force judgement relative to the loads of the whole column, not just the kept side
    scale = max(
        [float(np.abs(model.load_matrix()[:, column]).max(initial=0.0))]
        + [float(np.abs(x.force).max()) for x in external]
        + [abs(v) for v in known.values()]
        + [abs(v) for v in values.values()]
        + [1e-300]
    )
    out: list[str] = []
    kept = cut.kept_joints
    shape = (
        "straight cut"
        if cut.straight
        else "the joints on one side of the cut members, found by connectivity"
    )
    out.append(
        f"Section for member {cut.target}, load '{load_name}' (forces in {fu}, lengths in {lu})"
    )
    listed = (
        ", ".join(kept)
        if len(kept) <= MAX_LISTED_JOINTS
        else (", ".join(kept[:MAX_LISTED_JOINTS]) + f", ... ({len(kept)} joints)")
    )
    out.append(f"  Free body kept ({shape}): {listed}")
    out.append(
        "  Cut members (each force drawn as tension, pulling the free body toward the far joint):"
    )
    for member, joint, p, e in lines:
        status = (
            f"known: {_n(known[member])} {fu} from an earlier cut" if member in known else "unknown"
        )
        out.append(
            f"    {member}: at joint {joint} {_vec(p, _extent(model))}, direction {_vec(e)}; {status}"
        )
    reactions = [x for x in external if x.kind == "reaction"]
    loads = [x for x in external if x.kind == "load"]
    if reactions:
        out.append(
            "  Reactions on the free body (from overall equilibrium): "
            + ", ".join(f"{x.label} = {_n(x.value)} {fu}" for x in reactions)
        )
    else:
        out.append("  Reactions on the free body: none (no support on the kept side)")
    if loads:
        shown = ", ".join(f"{x.label} {_vec(x.force)}" for x in loads[:MAX_TERMS])
        more = f" and {len(loads) - MAX_TERMS} more loaded joints" if len(loads) > MAX_TERMS else ""
        out.append(f"  Loads on the free body: {shown}{more}")
    else:
        out.append("  Loads on the free body: none")

    target_line = next(ln for ln in lines if ln[0] == cut.target)
    if cut.method == LEAST_SQUARES:
        out.append(
            f"  Equations: the {3 if d == 2 else 6} equilibrium equations of the free body "
            "(ΣF = 0, ΣM = 0) solved together; the rank test shows they fix this member"
        )
    else:
        out.extend(_equation_text(model, cut, external, lines, known, fu, lu))
        coef_t = equation_row(model, cut, target_line[2], target_line[3])
        rest = sum(equation_row(model, cut, x.point, x.force) for x in external)
        rest += sum(equation_row(model, cut, p, e) * known[m] for m, _, p, e in lines if m in known)
        out.append(f"    {_n(coef_t)}·N({cut.target}) + {_paren(rest)} = 0")
    value = values[cut.target]
    text = f"  ⇒ N({cut.target}) = {_n(value)} {fu} ({_tc(value, scale)})"
    if exact and cut.method != LEAST_SQUARES:
        exact_text = _exact_target(model, cut, column, external, lines, known, value, scale)
        if exact_text is not None:
            text += f"   exact: {exact_text}"
    out.append(text)
    others = [m for m in values if m != cut.target]
    if others:
        out.append(
            "  The same free body also gives: "
            + ", ".join(f"N({m}) = {_n(values[m])} {fu} ({_tc(values[m], scale)})" for m in others)
        )
    return "\n".join(out) + "\n"


def _paren(x: float) -> str:
    text = _n(x)
    return f"({text})" if text.startswith("-") else text


def _equation_text(
    model: Model, cut: SectionCut, external, lines, known, fu: str, lu: str
) -> list[str]:
    d = model.dim
    out: list[str] = []
    elim = ", ".join(cut.eliminated)
    if cut.method == MOMENTS:
        extent = _extent(model)
        where = (
            f"joint {cut.moment_joint} {_vec(cut.moment_point, extent)}"
            if cut.moment_joint
            else f"the point {_vec(cut.moment_point, extent)}"
        )
        if d == 2:
            head = f"  ΣM about {where} = 0, anticlockwise positive"
        else:
            head = f"  ΣM about the axis through {where} along {_vec(cut.axis)} = 0"
        if elim:
            head += (
                f"; the lines of {elim} pass through it, so they drop out"
                if d == 2
                else f"; the lines of {elim} meet the axis or run parallel to it, so they drop out"
            )
        out.append(head)
        out.append(f"    force ({fu}) × lever arm ({lu}) = moment ({fu}·{lu}):")
    else:
        head = f"  ΣF along {_vec(cut.axis)} = 0"
        if elim:
            head += f"; the direction is normal to {elim}, so they drop out"
        out.append(head)
        out.append(f"    force ({fu}) × cosine = component ({fu}):")
    axes = "xyz"
    terms = []
    for x in external:
        for k in range(d):
            if x.force[k] == 0:
                continue
            unit = np.zeros(d)
            unit[k] = 1.0
            coef = equation_row(model, cut, x.point, unit)
            if coef == 0:
                continue
            what = "reaction" if x.kind == "reaction" else "load at"
            terms.append(
                f"    {what} {x.label} F{axes[k]} = {_n(x.force[k])} × {_n(coef)} = {_n(x.force[k] * coef)}"
            )
    for member, _, p, e in lines:
        coef = equation_row(model, cut, p, e)
        if member in known:
            terms.append(
                f"    N({member}) = {_n(known[member])} (known) × {_n(coef)} = {_n(known[member] * coef)}"
            )
        elif member == cut.target:
            terms.append(f"    N({member}) × {_n(coef)}")
    if len(terms) > MAX_TERMS + 1:
        hidden = len(terms) - MAX_TERMS
        terms = terms[:MAX_TERMS] + [f"    ... {hidden} more terms (included in the sum below)"]
    return out + terms


def _exact_target(
    model: Model, cut: SectionCut, column: int, external, lines, known, value: float, scale: float
) -> str | None:
    if len(external) + len(lines) > MAX_EXACT_TERMS:
        return None
    ex = _Exact(model)
    sp = ex.sp
    d = model.dim

    def row(point: Any, force: Any) -> Any:
        if cut.method == FORCES_NORMAL:
            return (ex.vec(cut.axis, 1.0).T * force)[0]
        rel = point - ex.vec(cut.moment_point)
        if d == 2:
            return _moment2(rel, force)
        return (ex.vec(cut.axis, 1.0).T * rel.cross(force))[0]

    reaction_values: list[Any] = []
    if any(x.kind == "reaction" for x in external):
        first = solve_reactions(model)
        if first is None:
            return None
        solved = _exact_reaction_values(ex, first[1], column, scale)
        if solved is None:
            return None
        reaction_values = solved
    total = sp.Integer(0)
    for x in external:
        if x.kind == "load":
            force = ex.vec(x.force, scale)
        else:
            k = next(i for i, r in enumerate(model.reactions) if r.label == x.label)
            force = reaction_values[k] * ex.vec(model.reactions[k].direction, 1.0)
        total += row(ex.vec(x.point), force)
    coef_t = None
    for member, joint, _, _ in lines:
        c = row(ex.joint(joint), ex.direction(member, joint))
        if member == cut.target:
            coef_t = c
        elif member in known:
            total += c * ex.num(known[member], scale)
    if coef_t is None or ex.failed or sp.simplify(coef_t) == 0:
        return None
    return ex.verified(-total / coef_t, value, scale)


def render_reactions(model: Model, load_name: str, *, exact: bool = True) -> str:
    """The overall-equilibrium step: ΣM about the pin, then the force sums, and the reactions."""
    column = _column(model, load_name)
    d = model.dim
    fu, lu = model.units.force.symbol, model.units.length.symbol
    first = solve_reactions(model)
    need = 3 if d == 2 else 6
    title = load_title(model, load_name)
    out = [
        f"Reactions from overall equilibrium, {title[0].lower()}{title[1:]} (forces in {fu}, lengths in {lu})"
    ]
    if first is None:
        why = (
            f"there are {len(model.reactions)} reaction components, not {need}"
            if len(model.reactions) != need
            else "the supports are parallel or concurrent"
        )
        out.append(
            f"  Not possible: {why}. The method of sections then uses only free bodies "
            "without supports."
        )
        return "\n".join(out) + "\n"
    R, point, pivot = first
    G, E = overall_equilibrium_matrix(model, point)
    F = model.load_matrix()[:, column].reshape(-1, d)
    loaded = [j for j in range(len(model.joints)) if np.any(F[j] != 0)]
    labels = [r.label for r in model.reactions]
    if d == 2:
        rows = [
            (2, f"ΣM about joint {pivot} = 0 (anticlockwise positive)"),
            (0, "ΣFx = 0"),
            (1, "ΣFy = 0"),
        ]
    else:
        rows = [
            (3 + k, f"ΣM about the {a}-axis through joint {pivot} = 0") for k, a in enumerate("xyz")
        ]
        rows += [(k, f"ΣF{a} = 0") for k, a in enumerate("xyz")]
    solved: set[int] = set()
    scale = max(
        float(np.abs(F).max(initial=0.0)), float(np.abs(R[:, column]).max(initial=0.0)), 1e-300
    )
    for row, title in rows:
        terms = [
            f"{_n(G[row, k])}·{labels[k]}" for k in range(len(labels)) if abs(G[row, k]) > 1e-12
        ]
        load_terms = []
        for j in loaded:
            rel = model.xyz[j] - point
            contribution = _load_row(rel, F[j], row, d)
            if abs(contribution) > 0:
                load_terms.append(f"{model.joints[j].id}: {_n(contribution)}")
        text = " + ".join(terms) if terms else "0"
        if load_terms:
            shown = load_terms[:MAX_TERMS]
            more = f" + {len(load_terms) - MAX_TERMS} more" if len(load_terms) > MAX_TERMS else ""
            text += f" + [loads: {', '.join(shown)}{more}; total {_n(E[row, column])}]"
        out.append(f"  {title}:")
        out.append(f"    {text} = 0")
        fresh = [k for k in range(len(labels)) if abs(G[row, k]) > 1e-12 and k not in solved]
        if len(fresh) == 1:
            k = fresh[0]
            solved.add(k)
            out.append(f"    ⇒ {labels[k]} = {_n(R[k, column])} {fu}")
    exact_values = _exact_reactions(model, point, column, R[:, column], scale) if exact else None
    out.append("  Reactions (positive along the support's stated direction):")
    for k, label in enumerate(labels):
        line = f"    {label} = {_n(R[k, column])} {fu}"
        if exact_values is not None:
            line += f"   exact: {exact_values[k]}"
        out.append(line)
    return "\n".join(out) + "\n"


def _load_row(rel: np.ndarray, f: np.ndarray, row: int, d: int) -> float:
    if row < d:
        return float(f[row])
    if d == 2:
        return float(rel[0] * f[1] - rel[1] * f[0])
    return float(np.cross(rel, f)[row - 3])


def _exact_reaction_values(
    ex: _Exact, point: np.ndarray, column: int, scale: float
) -> list[Any] | None:
    """The reactions solved again in exact arithmetic from nice-number geometry and loads."""
    model = ex.model
    if len(model.joints) > MAX_EXACT_TERMS:
        return None
    sp = ex.sp
    d = model.dim
    neq = 3 if d == 2 else 6
    q = ex.vec(point)
    F = model.load_matrix()[:, column].reshape(-1, d)

    def eq(x: Any, f: Any) -> list[Any]:
        r = x - q
        m = [_moment2(r, f)] if d == 2 else list(r.cross(f))
        return list(f) + m

    G = sp.zeros(neq, len(model.reactions))
    for k, reaction in enumerate(model.reactions):
        col = eq(ex.joint(reaction.joint), ex.vec(reaction.direction, 1.0))
        for i in range(neq):
            G[i, k] = col[i]
    E = sp.zeros(neq, 1)
    for j in range(len(model.joints)):
        if np.any(F[j] != 0):
            col = eq(ex.vec(model.xyz[j]), ex.vec(F[j], scale))
            for i in range(neq):
                E[i] += col[i]
    if ex.failed:
        return None
    solution = G.LUsolve(-E)
    return [solution[k] for k in range(len(model.reactions))]


def _exact_reactions(
    model: Model, point: np.ndarray, column: int, decimals: np.ndarray, scale: float
) -> list[str] | None:
    ex = _Exact(model)
    values = _exact_reaction_values(ex, point, column, scale)
    if values is None:
        return None
    out = []
    for k, value in enumerate(values):
        text = ex.verified(value, float(decimals[k]), scale)
        if text is None:
            return None
        out.append(text)
    return out
