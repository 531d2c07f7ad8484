"""The hand-calc appendix of the review report: reactions, joint sequence, section cuts, exact values.

Exact values ("where the geometry allows"): when every coordinate and load is a short decimal
and every support restrains a global axis, the joint equations have rational coefficients if
written in *force densities* q = N / L (the force a member puts on its joint is q times the
coordinate difference, Schek's force density method, H.-J. Schek, Comput. Methods Appl. Mech.
Eng. 3 (1974) 115-134). Solving the hand-calc steps in exact fractions gives q, and then
N = q * sqrt(L^2) with L^2 rational, written as (a/b)·√c with c square-free. Every exact value is
compared with the floating-point route before it is shown; a mismatch drops it.
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass, replace
from fractions import Fraction

from verify.analysis.joints import JointSolution
from verify.analysis.pipeline import Analysis
from verify.model import Model
from verify.report.numbers import fmt

MAX_DECIMAL_DENOMINATOR = 10**6  # coordinates and loads with at most 6 decimals count as exact
MAX_SIMULTANEOUS_EXACT = 60  # unknowns of a simultaneous step solved in fractions, at most
EXACT_CHECK_RTOL = 1e-8  # exact and floating routes must agree this closely


@dataclass(frozen=True)
class ExactValue:
    label: str
    decimal: float
    exact: str | None  # None when this value could not be expressed exactly


@dataclass(frozen=True)
class ExactValues:
    load_name: str
    members: tuple[ExactValue, ...]
    reactions: tuple[ExactValue, ...]
    note: str


@dataclass(frozen=True)
class Block:
    """One piece of the appendix: a heading and either preformatted text, a table or a paragraph."""

    heading: str
    kind: str  # "pre" | "table" | "para"
    text: str = ""
    header: tuple[str, ...] = ()
    rows: tuple[tuple[str, ...], ...] = ()


# -- exact arithmetic ----------------------------------------------------------------------------
def _rational(value: float) -> Fraction | None:
    if not math.isfinite(value):
        return None
    q = Fraction(repr(float(value)))
    return q if MAX_DECIMAL_DENOMINATOR % q.denominator == 0 else None


def _rref_solve(M: list[list[Fraction]], rhs: list[Fraction]) -> dict[int, Fraction]:
    """Unknowns of M x = rhs that the equations determine uniquely (pivot columns free of free columns)."""
    rows, cols = len(M), len(M[0]) if M else 0
    A = [row[:] + [r] for row, r in zip(M, rhs, strict=True)]
    pivots: list[int] = []
    r = 0
    for c in range(cols):
        p = next((i for i in range(r, rows) if A[i][c] != 0), None)
        if p is None:
            continue
        A[r], A[p] = A[p], A[r]
        inv = 1 / A[r][c]
        A[r] = [x * inv for x in A[r]]
        for i in range(rows):
            if i != r and A[i][c] != 0:
                f = A[i][c]
                A[i] = [x - f * y for x, y in zip(A[i], A[r], strict=True)]
        pivots.append(c)
        r += 1
        if r == rows:
            break
    free = [c for c in range(cols) if c not in pivots]
    out: dict[int, Fraction] = {}
    for i, c in enumerate(pivots):
        if all(A[i][f] == 0 for f in free):
            out[c] = A[i][cols]
    return out


def _surd(coefficient: Fraction, square: Fraction) -> tuple[str, float]:
    """coefficient · √square as text '(a/b)·√c' with c square-free, and its float value."""
    import sympy

    if coefficient == 0:
        return "0", 0.0
    n = square.numerator * square.denominator  # √(p/r) = √(p·r) / r
    outside, inside = 1, 1
    for prime, power in sorted(sympy.factorint(n).items()):
        outside *= prime ** (power // 2)
        inside *= prime ** (power % 2)
    k = coefficient * Fraction(outside, square.denominator)
    sign = "-" if k < 0 else ""
    k = abs(k)
    value = float(k) * math.sqrt(inside) * (-1 if sign else 1)
    if inside == 1:
        return sign + _frac(k), value
    if k == 1:
        return f"{sign}√{inside}", value
    if k.denominator == 1:
        return f"{sign}{k.numerator}·√{inside}", value
    return f"{sign}({_frac(k)})·√{inside}", value


def _frac(q: Fraction) -> str:
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def exact_values(model: Model, solution: JointSolution, load_name: str) -> ExactValues | None:
    """Member forces and reactions of one load column in exact form, following the joint steps."""
    d = model.dim
    b = len(model.members)
    k = solution.forces.column(load_name)
    coords = [[_rational(float(c)) for c in row] for row in model.xyz.tolist()]
    loads = [_rational(float(v)) for v in model.load_matrix()[:, k]]
    axis_aligned = all(all(c in (0.0, 1.0, -1.0) for c in r.direction) for r in model.reactions)
    if (
        any(c is None for row in coords for c in row)
        or any(v is None for v in loads)
        or not axis_aligned
    ):
        return None
    X = [[c for c in row if c is not None] for row in coords]
    F = [v if v is not None else Fraction(0) for v in loads]
    ends = model.ends_index.tolist()
    directions = [[Fraction(int(c)) for c in r.direction] for r in model.reactions]
    t: dict[int, Fraction] = {}  # member force densities (col < b) and reactions (col >= b)

    def coef(joint: int, col: int) -> list[Fraction]:
        if col >= b:
            return directions[col - b]
        s, e = ends[col]
        other = e if s == joint else s
        return [X[other][a] - X[joint][a] for a in range(d)]

    cols_at: list[list[int]] = [[] for _ in model.joints]
    for i, (s, e) in enumerate(ends):
        cols_at[s].append(i)
        cols_at[e].append(i)
    for i, r in enumerate(model.reactions):
        cols_at[model.joint_index[r.joint]].append(b + i)

    note = ""
    for step in solution.steps:
        if step.kind == "reactions":
            point = (
                X[model.joint_index[solution.moment_joint or ""]]
                if solution.moment_joint
                else [Fraction(0)] * d
            )
            M, rhs = _overall(model, X, F, directions, point)
            solved = _rref_solve(M, rhs)
            for i in range(len(model.reactions)):
                if i in solved:
                    t[b + i] = solved[i]
            continue
        unknowns = list(step.unknowns)
        if step.kind == "simultaneous" and len(unknowns) > MAX_SIMULTANEOUS_EXACT:
            note = (
                f"the simultaneous step has {len(unknowns)} unknowns; exact values stop before it"
            )
            break
        joints = [model.joint_index[j] for j in step.joints]
        extra = sorted({c for j in joints for c in cols_at[j] if c not in t and c not in unknowns})
        cols = unknowns + extra
        M, rhs = [], []
        for j in joints:
            for a in range(d):
                M.append([coef(j, c)[a] for c in cols])
                rhs.append(
                    -F[j * d + a]
                    - sum((coef(j, c)[a] * t[c] for c in cols_at[j] if c in t), Fraction(0))
                )
        solved = _rref_solve(M, rhs)
        for pos, c in enumerate(unknowns):
            if pos in solved:
                t[c] = solved[pos]

    members = []
    for i, member in enumerate(model.members):
        decimal = float(solution.forces.member_forces[i, k])
        exact = None
        if i in t:
            s, e = ends[i]
            square = sum(((X[e][a] - X[s][a]) ** 2 for a in range(d)), Fraction(0))
            text, value = _surd(t[i], square)
            if abs(value - decimal) <= EXACT_CHECK_RTOL * max(abs(decimal), 1.0):
                exact = text
        members.append(ExactValue(member.id, decimal, exact))
    reactions = []
    for i, r in enumerate(model.reactions):
        decimal = float(solution.forces.reactions[i, k])
        exact = None
        if b + i in t and abs(float(t[b + i]) - decimal) <= EXACT_CHECK_RTOL * max(
            abs(decimal), 1.0
        ):
            exact = _frac(t[b + i])
        reactions.append(ExactValue(r.label, decimal, exact))
    return ExactValues(load_name, tuple(members), tuple(reactions), note)


def _overall(
    model: Model,
    X: list[list[Fraction]],
    F: list[Fraction],
    directions: list[list[Fraction]],
    point: list[Fraction],
) -> tuple[list[list[Fraction]], list[Fraction]]:
    """Overall equilibrium G R = -E in fractions (forces, then moments about `point`)."""
    d = model.dim
    rows = 3 if d == 2 else 6

    def moment(p: list[Fraction], n: list[Fraction]) -> list[Fraction]:
        if d == 2:
            return [p[0] * n[1] - p[1] * n[0]]
        return [p[1] * n[2] - p[2] * n[1], p[2] * n[0] - p[0] * n[2], p[0] * n[1] - p[1] * n[0]]

    G = [[Fraction(0)] * len(model.reactions) for _ in range(rows)]
    E = [Fraction(0)] * rows
    for i, r in enumerate(model.reactions):
        j = model.joint_index[r.joint]
        p = [X[j][a] - point[a] for a in range(d)]
        column = directions[i] + moment(p, directions[i])
        for row in range(rows):
            G[row][i] = column[row]
    for j in range(len(model.joints)):
        f = F[j * d : (j + 1) * d]
        p = [X[j][a] - point[a] for a in range(d)]
        column = f + moment(p, f)
        for row in range(rows):
            E[row] += column[row]
    return G, [-e for e in E]


# -- appendix blocks ------------------------------------------------------------------------------
def _truncate_steps(solution: JointSolution, max_steps: int | None) -> tuple[JointSolution, int]:
    if max_steps is None or len(solution.steps) <= max_steps:
        return solution, 0
    return replace(solution, steps=solution.steps[:max_steps]), len(solution.steps) - max_steps


def appendix_blocks(
    analysis: Analysis,
    load_name: str,
    *,
    max_steps: int | None = None,
    max_cuts: int | None = None,
    exact: bool = True,
) -> list[Block]:
    """The hand calc of one load column: reactions, joint by joint, section cuts, exact values."""
    from verify.report.text import render_joint_calc

    model = analysis.model
    unit = model.units.force.symbol
    blocks: list[Block] = []
    section_calc = _section_calc()
    ref = analysis.reference

    # Reactions.
    if section_calc is not None:
        blocks.append(Block("Reactions", "pre", section_calc[1](model, load_name)))
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
        text = render_joint_calc(model, shown, load_name)
        if cut:
            text += f"\n\n… {cut} further step(s) are not shown in this report (large model); `truss-verify solve --show joints` prints them all."
        blocks.append(Block("Method of joints", "pre", text))
    else:
        why = (
            "the truss is unstable, so no force can be recomputed"
            if not analysis.stability.is_stable
            else "the truss is statically indeterminate: statics alone do not give the member forces"
            + (
                "; they come from the direct stiffness method"
                if analysis.elastic is not None
                else ""
            )
        )
        blocks.append(Block("Method of joints", "para", f"No joint-by-joint calculation: {why}."))

    # Section cuts.
    sections = analysis.sections
    if sections is not None:
        # Cut records are built lazily: slice first, so a large model builds only those shown.
        cuts = getattr(sections, "cuts", ())
        shown_cuts = list(cuts if max_cuts is None else cuts[:max_cuts])
        if section_calc is not None:
            texts = [section_calc[0](model, cut, load_name) for cut in shown_cuts]
        else:
            texts = [_cut_summary(model, sections, cut, load_name) for cut in shown_cuts]
        if len(shown_cuts) < len(cuts):
            texts.append(
                f"… {len(cuts) - len(shown_cuts)} further cut(s) are not shown in this report (large model)."
            )
        unreached = getattr(sections, "unreached", None) or {}
        reasons = dict(unreached) if isinstance(unreached, dict) else {m: "" for m in unreached}
        reach = (
            f"The cuts reach {len(model.members) - len(reasons)} of {len(model.members)} members."
        )
        if reasons:
            listed = "; ".join(
                f"{m} ({why})" if why else m for m, why in list(reasons.items())[:30]
            )
            reach += f" Not reached: {listed}" + (
                f" and {len(reasons) - 30} more." if len(reasons) > 30 else "."
            )
        blocks.append(
            Block(
                "Method of sections (Ritter)",
                "pre",
                reach + ("\n\n" + "\n\n".join(texts) if texts else ""),
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
    if exact and analysis.joints is not None:
        values = exact_values(model, analysis.joints, load_name)
        if values is None:
            blocks.append(
                Block(
                    "Exact values",
                    "para",
                    "Not given: the coordinates, loads or support directions are not all short "
                    "decimals along the axes, so the decimals above are the result.",
                )
            )
        else:
            rows = tuple(
                (v.label, fmt(v.decimal, 6), v.exact or "—")
                for v in values.members + values.reactions
            )
            intro = (
                f"Member forces (tension positive) and reactions in {unit}, solved again in exact fractions along the same steps; "
                "a force is (force density) × (member length), hence the square roots."
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


def _cut_summary(model: Model, sections: object, cut: object, load_name: str) -> str:
    """One cut in words, for when the section-cut equation renderer is not installed."""
    target = str(getattr(cut, "target", "?"))
    members = ", ".join(getattr(cut, "cut_members", ()))
    method = {
        "moments": "moments about the Ritter point",
        "forces-normal": "forces summed normal to the parallel members",
        "least-squares": "the cut's equilibrium equations solved together",
    }.get(str(getattr(cut, "method", "")), str(getattr(cut, "method", "")))
    where = getattr(cut, "moment_joint", None)
    point = getattr(cut, "moment_point", None)
    about = (
        f" (joint {where})"
        if where
        else (f" (point {', '.join(fmt(c) for c in point)})" if point is not None else "")
    )
    forces = getattr(sections, "forces", None)
    value = ""
    if forces is not None and target in model.member_index:
        v = float(forces.member_forces[model.member_index[target], forces.column(load_name)])
        value = f" => {target} = {fmt(v)}"
    return f"Cut for {target}: through {members}; {method}{about}{value}"


def _section_calc() -> tuple[Callable[..., str], Callable[..., str]] | None:
    """(render_cut, render_reactions) when the section-cut renderer is installed, else None."""
    try:
        from verify.report.section_calc import render_cut, render_reactions
    except ImportError:
        return None
    return render_cut, render_reactions
