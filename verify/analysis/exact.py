"""Exact values for the hand calc: fractions and square roots, in plain Python.

One engine and one notation for every exact value a report prints: a rational number, or a sum
of rationals times square roots of square-free integers, written `-160/3`, `(7/6)·√3`,
`-(693/32)·√41` or `5/2 + (3/4)·√3`.

Why no computer-algebra library: every value in a hand calc of a pin-jointed truss with
short-decimal coordinates and loads lies in such a field (a member direction is a rational vector
over the square root of a rational length squared), the sums stay in it, and every division the
calc makes is by one term (a lever arm times a direction cosine). A multi-term divisor makes the
value "not exact" (decimals only) rather than a guess. Importing a computer-algebra package cost
small reports half of their time (issue 12).

Numbers enter in two ways: `rational` reads a float as the short decimal it was written as
(coordinates, loads); `surd_of` recognises a computed float as (p/q)·√k for a small k (a force
carried from an earlier cut). Every exact value is compared with the floating-point route before
it is shown (`agrees`); a mismatch drops it.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from fractions import Fraction
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from verify.analysis.joints import JointSolution
    from verify.model import Model

MAX_DECIMAL_DENOMINATOR = 10**6  # coordinates and loads with at most 6 decimals count as exact
NICE_DENOMINATOR = 1000  # a computed value is recognised as (p/q)·√k with q at most this
NICE_RTOL = 1e-10  # ... when it lies this close to such a number
SMALL_SURDS = (1, 2, 3, 5, 6, 7, 10, 11, 13, 14, 15, 17, 19, 21, 22, 23, 26, 29, 30, 34, 41)
MAX_RADICAND = 10**12  # square-free parts are found by trial division up to 10^6
MAX_TERMS = 2  # more distinct roots than this: no help to a reader, and a likely misreading
AGREE_RTOL = 1e-8  # exact and floating routes must agree this closely (of the value's scale)


class NotExact(ArithmeticError):
    """The value leaves the numbers this module writes exactly (a decimal is shown instead)."""


def rational(value: float) -> Fraction | None:
    """A float as the short decimal it was written as (at most 6 places), else None."""
    if not math.isfinite(value):
        return None
    q = Fraction(repr(float(value)))
    return q if MAX_DECIMAL_DENOMINATOR % q.denominator == 0 else None


def square_free(n: int) -> tuple[int, int]:
    """n = outside² · inside with inside square-free; NotExact beyond MAX_RADICAND."""
    if n < 0 or n > MAX_RADICAND:
        raise NotExact(f"radicand {n} out of range")
    outside, inside, p = 1, 1, 2
    while p * p <= n:
        power = 0
        while n % p == 0:
            n //= p
            power += 1
        outside *= p ** (power // 2)
        inside *= p ** (power % 2)
        p += 1 if p == 2 else 2
    return outside, inside * n


@dataclass(frozen=True)
class Surd:
    """Σ c_k·√k over square-free k (k = 1 for the rational part); terms never hold a zero c."""

    terms: tuple[tuple[int, Fraction], ...] = ()

    @staticmethod
    def of(mapping: Mapping[int, Fraction]) -> Surd:
        return Surd(tuple(sorted((k, c) for k, c in mapping.items() if c != 0)))

    @staticmethod
    def rational(q: Fraction | int) -> Surd:
        return Surd.of({1: Fraction(q)})

    @staticmethod
    def root(q: Fraction) -> Surd:
        """√q for a rational q >= 0."""
        if q < 0:
            raise NotExact("square root of a negative number")
        # √(a/b) = √(a·b) / b
        outside, inside = square_free(q.numerator * q.denominator)
        return Surd.of({inside: Fraction(outside, q.denominator)})

    def __add__(self, other: Surd) -> Surd:
        out = dict(self.terms)
        for k, c in other.terms:
            out[k] = out.get(k, Fraction(0)) + c
        return Surd.of(out)

    def __neg__(self) -> Surd:
        return Surd(tuple((k, -c) for k, c in self.terms))

    def __sub__(self, other: Surd) -> Surd:
        return self + (-other)

    def __mul__(self, other: Surd) -> Surd:
        out: dict[int, Fraction] = {}
        for k1, c1 in self.terms:
            for k2, c2 in other.terms:
                g = math.gcd(k1, k2)
                # √k1·√k2 = g·√(k1·k2/g²), and k1·k2/g² is square-free when k1 and k2 are
                k = (k1 // g) * (k2 // g)
                out[k] = out.get(k, Fraction(0)) + c1 * c2 * g
        return Surd.of(out)

    def __truediv__(self, other: Surd) -> Surd:
        if len(other.terms) != 1:
            raise NotExact("division by zero or by a sum of roots")
        ((k, c),) = other.terms
        # 1 / (c·√k) = √k / (c·k)
        return self * Surd.of({k: 1 / (c * k)})

    def is_zero(self) -> bool:
        return not self.terms

    def __float__(self) -> float:
        return float(sum(float(c) * math.sqrt(k) for k, c in self.terms))

    def text(self) -> str:
        """The one notation: -160/3, (7/6)·√3, -(693/32)·√41, 5/2 + (3/4)·√3."""
        if not self.terms:
            return "0"
        parts = []
        for n, (k, c) in enumerate(self.terms):
            sign = "-" if c < 0 else ""
            body = _term(abs(c), k)
            if n == 0:
                parts.append(sign + body)
            else:
                parts.append(("- " if sign else "+ ") + body)
        return " ".join(parts)


def _fraction(q: Fraction) -> str:
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def _term(c: Fraction, k: int) -> str:
    if k == 1:
        return _fraction(c)
    if c == 1:
        return f"√{k}"
    if c.denominator == 1:
        return f"{c.numerator}·√{k}"
    return f"({_fraction(c)})·√{k}"


ZERO = Surd()
ONE = Surd.rational(1)


def exact_number(value: float) -> Surd:
    """A model number (coordinate, load) as written: a short decimal; NotExact otherwise."""
    q = rational(value)
    if q is None:
        raise NotExact(f"{value!r} is not a short decimal")
    return Surd.rational(q)


def surd_of(value: float, scale: float = 1.0) -> Surd:
    """A computed float recognised as (p/q)·√k for k in SMALL_SURDS; NotExact otherwise.

    Values below 1e-12 of `scale` are round-off and read as 0.
    """
    if not math.isfinite(value):
        raise NotExact("not finite")
    if abs(value) <= 1e-12 * max(scale, 1.0):
        return ZERO
    short = rational(value)
    if short is not None:
        return Surd.rational(short)
    for k in SMALL_SURDS:
        r = value / math.sqrt(k)
        f = Fraction(r).limit_denominator(NICE_DENOMINATOR)
        if abs(float(f) - r) <= NICE_RTOL * max(1.0, abs(r)):
            return Surd.of({k: f})
    raise NotExact(f"{value!r} is not a small fraction times a small root")


def member_force(value: float, a: list[Surd], b: list[Surd], scale: float = 1.0) -> Surd:
    """A member force computed in floats, recognised through its force density: with rational
    geometry and loads N / L is rational (Schek's force densities), so N = (N/L)·√(L²); NotExact
    when N / L is no small fraction or L² is not rational."""
    square = ZERO
    for x, y in zip(a, b, strict=True):
        square = square + (y - x) * (y - x)
    if len(square.terms) > 1 or (square.terms and square.terms[0][0] != 1):
        raise NotExact("a member length whose square is not rational")
    if not square.terms:
        raise NotExact("a member of zero length")
    length = Surd.root(square.terms[0][1])
    if abs(value) <= 1e-12 * max(scale, 1.0):
        return ZERO
    density = value / float(length)
    q = Fraction(density).limit_denominator(MAX_DECIMAL_DENOMINATOR)
    if abs(float(q) - density) > NICE_RTOL * max(1.0, abs(density)):
        raise NotExact(f"{value!r} has no small rational force density")
    return Surd.rational(q) * length


def vector(values: Iterable[float]) -> list[Surd]:
    return [exact_number(float(v)) for v in values]


def unit_direction(a: list[Surd], b: list[Surd]) -> list[Surd]:
    """The unit vector from point a to point b (rational coordinates: a rational over a root)."""
    d = [y - x for x, y in zip(a, b, strict=True)]
    square = ZERO
    for c in d:
        square = square + c * c
    if len(square.terms) != 1 or square.terms[0][0] != 1:
        raise NotExact("a member length whose square is not rational")
    length = Surd.root(square.terms[0][1])
    return [c / length for c in d]


def cross2(r: list[Surd], f: list[Surd]) -> Surd:
    return r[0] * f[1] - r[1] * f[0]


def cross3(a: list[Surd], b: list[Surd]) -> list[Surd]:
    return [
        a[1] * b[2] - a[2] * b[1],
        a[2] * b[0] - a[0] * b[2],
        a[0] * b[1] - a[1] * b[0],
    ]


def dot(a: list[Surd], b: list[Surd]) -> Surd:
    out = ZERO
    for x, y in zip(a, b, strict=True):
        out = out + x * y
    return out


def agrees(value: Surd, decimal: float, scale: float) -> bool:
    """The exact value matches the floating-point one (and is short enough to help a reader)."""
    if len(value.terms) > MAX_TERMS:
        return False
    return abs(float(value) - decimal) <= AGREE_RTOL * max(abs(decimal), scale, 1e-300)


def checked_text(value: Surd, decimal: float, scale: float) -> str | None:
    """The exact value's text when it agrees with the decimal, else None."""
    return value.text() if agrees(value, decimal, scale) else None


def rref_solve(M: list[list[Surd]], rhs: list[Surd]) -> dict[int, Surd]:
    """Unknowns of M x = rhs that the equations fix uniquely (Gauss-Jordan, exact).

    Pivots must be single terms (a rational or one root): NotExact otherwise.
    """
    rows, cols = len(M), len(M[0]) if M else 0
    A = [row[:] + [r] for row, r in zip(M, rhs, strict=True)]
    pivots: list[int] = []
    r = 0
    for c in range(cols):
        p = next((i for i in range(r, rows) if not A[i][c].is_zero()), None)
        if p is None:
            continue
        A[r], A[p] = A[p], A[r]
        pivot = A[r][c]
        A[r] = [x / pivot for x in A[r]]
        for i in range(rows):
            if i != r and not A[i][c].is_zero():
                f = A[i][c]
                A[i] = [x - f * y for x, y in zip(A[i], A[r], strict=True)]
        pivots.append(c)
        r += 1
        if r == rows:
            break
    free = [c for c in range(cols) if c not in pivots]
    out: dict[int, Surd] = {}
    for i, c in enumerate(pivots):
        if all(A[i][f].is_zero() for f in free):
            out[c] = A[i][cols]
    return out


# -- member forces along the joint steps (force densities) -----------------------------------------
MAX_SIMULTANEOUS_EXACT = 60  # unknowns of a simultaneous step solved in fractions, at most


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


def _rref_fractions(M: list[list[Fraction]], rhs: list[Fraction]) -> dict[int, Fraction]:
    """rref_solve over plain fractions (the joint steps have rational coefficients)."""
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


def member_values(model: Model, solution: JointSolution, load_name: str) -> ExactValues | None:
    """Member forces and reactions of one load column in exact form, following the joint steps.

    When every coordinate and load is a short decimal and every support restrains a global axis,
    the joint equations have rational coefficients if written in *force densities* q = N / L (the
    force a member puts on its joint is q times the coordinate difference: H.-J. Schek, "The force
    density method for form finding and computation of general networks", Comput. Methods Appl.
    Mech. Eng. 3 (1974) 115-134). Solving the steps in fractions gives q, then N = q·√(L²) with L²
    rational. None when the inputs are not all such numbers.
    """
    d = model.dim
    b = len(model.members)
    k = solution.forces.column(load_name)
    coords = [[rational(float(c)) for c in row] for row in model.xyz.tolist()]
    loads = [rational(float(v)) for v in model.load_matrix()[:, k]]
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
            solved = _rref_fractions(M, rhs)
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
        solved = _rref_fractions(M, rhs)
        for pos, c in enumerate(unknowns):
            if pos in solved:
                t[c] = solved[pos]

    scale = float(abs(solution.forces.member_forces[:, k]).max(initial=1.0))
    members = []
    for i, member in enumerate(model.members):
        decimal = float(solution.forces.member_forces[i, k])
        text = None
        if i in t:
            s, e = ends[i]
            square = sum(((X[e][a] - X[s][a]) ** 2 for a in range(d)), Fraction(0))
            try:
                text = checked_text(Surd.rational(t[i]) * Surd.root(square), decimal, scale)
            except NotExact:
                text = None
        members.append(ExactValue(member.id, decimal, text))
    reactions = []
    for i, r in enumerate(model.reactions):
        decimal = float(solution.forces.reactions[i, k])
        text = checked_text(Surd.rational(t[b + i]), decimal, scale) if b + i in t else None
        reactions.append(ExactValue(r.label, decimal, text))
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
