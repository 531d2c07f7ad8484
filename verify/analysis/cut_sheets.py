"""Calc sheets of the method of sections as plain records: what a report draws and prints.

A checking engineer sets out a section in a review memo as: the free body kept, the members cut
(each force drawn as tension, pulling the free body toward the far joint), the loads and the
reactions on the kept side, one equation per member solved (moments about a point, "about joint X"
when it is a joint, or a force sum normal to parallel members) with its lever arms, and the
result with T/C. `CalcSheets` builds those records from the section route's cuts; the reports
(`verify/report/`) only render them.

One free body, one sheet: cuts of different members through the same members with the same kept
side are one sheet listing every member it solves, each with its own equation.

Cost: a report asks for the sheets of a few members (the flagged ones and a sample). The loads and
reactions on a cut's kept side are read from per-sweep prefix sums and the positions of the
loaded and supported joints in the sweep's order (binary search), never by scanning every joint
per cut; the drawing holds at most MAX_DRAWN_MEMBERS members of the kept side, nearest the cut
first. So each sheet costs O(log n) plus what it prints, after O(n) once per sweep direction.
"""

from __future__ import annotations

from collections import deque
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from verify.analysis import exact as ex
from verify.analysis.joints import JointSolution, overall_equilibrium_matrix, solve_reactions
from verify.analysis.sections import (
    EQUATIONS,
    FORCES_NORMAL,
    LEAST_SQUARES,
    MOMENTS,
    SectionCut,
    SectionSolution,
    _line_moment,
    _rank_solve,
    cut_for_members,
)
from verify.model import Model

MAX_ITEMS = 12  # loads itemised per sheet (and per equation); the rest are summed in one term
MAX_LISTED_JOINTS = 20  # kept joints named on a sheet
MAX_DRAWN_MEMBERS = 400  # kept-side members drawn on a free body, nearest the cut first
EXACT_MAX_INPUTS = 200  # beyond this many loads and members on one equation: decimals only
ZERO_RTOL = 1e-9  # |force| below this fraction of the sheet's largest is "zero force"
ROUNDOFF_RTOL = 1e-12  # coordinates below this fraction of the model's extent print as 0

Point = tuple[float, ...]


@dataclass(frozen=True)
class CutMember:
    """A member the section cuts: its force acts on the free body along `direction` (tension)."""

    member: str
    kept_joint: str  # its end on the kept side
    far_joint: str
    point: Point  # the kept end's coordinates
    direction: Point  # unit vector from the kept end toward the far end
    known: float | None  # its force, when an earlier cut found it (else an unknown here)


@dataclass(frozen=True)
class ExternalForce:
    """A load or a reaction on the kept side, in one load column."""

    kind: str  # "load" | "reaction"
    label: str  # the joint (load) or "<joint>.<axis>" (reaction)
    joint: str
    point: Point
    force: Point  # the global vector
    value: float  # a load's magnitude, a reaction along its stated direction


@dataclass(frozen=True)
class Term:
    """One term of an equation: force × lever arm (moments) or force × cosine (force sums)."""

    kind: str  # "load" | "loads" (the rest, summed) | "reaction" | "known" | "unknown" | "dropped"
    label: str  # joint, reaction label, member, or "other loads"
    component: str  # "Fx", "Fy", "Fz", "R" (along the support direction) or "N"
    force: float | None  # None for an unknown member force
    arm: float  # lever arm (signed, anticlockwise positive in 2D) or cosine
    product: float | None  # force × arm; None for the unknown
    foot: Point | None = None  # 2D moments: the foot of the perpendicular from the moment point


@dataclass(frozen=True)
class Equation:
    """The equation that isolates one member of the free body."""

    target: str
    method: str  # MOMENTS | FORCES_NORMAL | LEAST_SQUARES
    moment_point: Point | None
    moment_joint: str | None  # "about joint X" when the point is a joint
    axis: Point | None  # 3D moment axis, or the direction forces are summed along
    eliminated: tuple[str, ...]  # unknown members whose lines pass through the point (drop out)
    terms: tuple[Term, ...]
    coefficient: float  # of the target's force
    rest: float  # the sum of every other term
    value: float  # the target's force, tension positive
    tc: str  # "T" | "C" | "zero force"
    exact: str | None  # the exact value in the one notation, when meaningful and checked


@dataclass(frozen=True)
class FreeBodyDrawing:
    """What a drawing of the free body holds: joints, kept members, and what was left out."""

    joints: tuple[tuple[str, Point], ...]  # every joint drawn (kept side and far ends of cuts)
    members: tuple[tuple[str, str, str], ...]  # (member, joint, joint) on the kept side
    omitted_members: int  # kept-side members not drawn (large free bodies)


@dataclass(frozen=True)
class CutSheet:
    """One free body and every member it solves, for one load column."""

    load_name: str
    combination: bool  # the column combines load cases (no exact values)
    straight: bool  # a straight cut (a plane in 3D), else a connected set of joints
    kept_count: int
    kept_listed: tuple[str, ...]  # the first MAX_LISTED_JOINTS kept joints
    cut_members: tuple[CutMember, ...]
    loads: tuple[ExternalForce, ...]  # the first MAX_ITEMS loads on the kept side
    loads_omitted: int
    load_total: Point  # resultant of every load on the kept side
    reactions: tuple[ExternalForce, ...]
    equations: tuple[Equation, ...]  # one per member solved by its own equation
    also: tuple[tuple[str, float, str], ...]  # (member, force, T/C) from the full equation set
    drawing: FreeBodyDrawing
    extent: float  # the model's size (for rounding coordinates)

    @property
    def solves(self) -> tuple[str, ...]:
        return tuple(e.target for e in self.equations) + tuple(m for m, _, _ in self.also)


@dataclass(frozen=True)
class OverallRow:
    """One equation of overall equilibrium: Σ coefficient·reaction + load total = 0."""

    title: str
    coefficients: tuple[tuple[str, float], ...]  # (reaction label, coefficient), non-zero only
    loads: tuple[tuple[str, float], ...]  # (joint, contribution), the first MAX_ITEMS
    loads_omitted: int
    load_total: float
    solves: tuple[str, float] | None  # (reaction label, value) when this row fixes a new one


@dataclass(frozen=True)
class ReactionsSheet:
    """The overall-equilibrium step for one load column."""

    load_name: str
    possible: bool
    why: str  # when not possible
    pivot: str | None  # the joint moments are taken about
    rows: tuple[OverallRow, ...]
    reactions: tuple[tuple[str, float, str | None], ...]  # (label, value, exact)


@dataclass(frozen=True)
class SheetSet:
    """The sheets asked for, and why any asked-for member has none."""

    sheets: tuple[CutSheet, ...]
    unreached: tuple[tuple[str, str], ...]  # (member, reason)


def _tc(x: float, scale: float) -> str:
    if abs(x) <= ZERO_RTOL * scale:
        return "zero force"
    return "T" if x > 0 else "C"


def _pt(v: np.ndarray | Sequence[float]) -> Point:
    return tuple(float(c) for c in v)


class _Side:
    """Loads and reactions of kept sides that share one joint order, without scanning it."""

    def __init__(self, book: CalcSheets, order: np.ndarray, column: int) -> None:
        model = book.model
        d = model.dim
        nj = len(model.joints)
        F = book.loads[column]  # (nj, d)
        self.F = F
        self.order = order
        self.rank = np.full(nj, -1, dtype=np.int64)
        self.rank[order] = np.arange(len(order))
        loaded = np.flatnonzero((F[order] != 0).any(axis=1))
        self.loaded_pos = loaded  # positions in `order` of loaded joints, ascending
        f_sorted = F[order]
        m_sorted = _moment0(model.xyz[order], f_sorted)
        self.cf = np.vstack([np.zeros((1, d)), np.cumsum(f_sorted, axis=0)])
        self.cm = np.vstack([np.zeros((1, m_sorted.shape[1])), np.cumsum(m_sorted, axis=0)])

    def kept(self, side, joint: int) -> bool:
        r = int(self.rank[joint])
        inside = side.start <= r < side.stop if r >= 0 else False
        if joint in side.removed:
            return False
        return inside or joint in side.added

    def loads(self, side) -> tuple[list[int], int, np.ndarray, np.ndarray]:
        """(first loaded joints, how many loaded joints in all, force sum, moment sum about 0)."""
        lo = int(np.searchsorted(self.loaded_pos, side.start, side="left"))
        hi = int(np.searchsorted(self.loaded_pos, side.stop, side="left"))
        force = self.cf[side.stop] - self.cf[side.start]
        moment = self.cm[side.stop] - self.cm[side.start]
        removed = set(side.removed)
        count = hi - lo
        picked: list[int] = []
        for pos in self.loaded_pos[lo:hi].tolist():
            j = int(self.order[pos])
            if j in removed:
                continue
            picked.append(j)
            if len(picked) >= MAX_ITEMS:
                break
        model_xyz = self._xyz
        for j in side.removed:
            if self.rank[j] >= 0 and side.start <= self.rank[j] < side.stop:
                if (self.F[j] != 0).any():
                    count -= 1
                force = force - self.F[j]
                moment = moment - _moment0(model_xyz[j][None], self.F[j][None])[0]
        for j in side.added:
            if (self.F[j] != 0).any():
                count += 1
                picked.append(int(j))
            force = force + self.F[j]
            moment = moment + _moment0(model_xyz[j][None], self.F[j][None])[0]
        picked = sorted(set(picked))[:MAX_ITEMS]
        return picked, count, force, moment

    _xyz: np.ndarray


def _moment0(x: np.ndarray, f: np.ndarray) -> np.ndarray:
    """x × f row-wise about the origin: (n, 1) in 2D, (n, 3) in 3D."""
    return _line_moment(x, f)


class CalcSheets:
    """Calc sheets of one model's section cuts, built on request for the members asked for."""

    def __init__(self, model: Model, sections: SectionSolution | None) -> None:
        self.model = model
        self.sections = sections
        d = model.dim
        F = model.load_matrix()
        nj = len(model.joints)
        self.loads = [F[:, c].reshape(nj, d) for c in range(F.shape[1])]
        self.first = solve_reactions(model) if model.reactions else None
        xyz = model.xyz
        self.extent = float(np.ptp(xyz, axis=0).max()) if nj else 1.0
        self.extent = self.extent or 1.0
        self._sides: dict[tuple[int, int], tuple[np.ndarray, _Side]] = {}
        self._positions: dict[str, int] | None = None
        self._by_member: np.ndarray | None = None
        self._joint_ids: list[str] | None = None
        self._member_ids: list[str] | None = None
        self._exact_reactions: dict[int, list[ex.Surd] | None] = {}
        self._points: dict[tuple[float, ...], list[ex.Surd]] = {}
        self._incidence: tuple[np.ndarray, np.ndarray] | None = None
        combos = {c.name for c in model.combinations}
        self.is_combination = [name in combos for name in model.load_names]

    def joint_id(self, j: int) -> str:
        """Joint j's id, from one list of ids: indexing the model's joints past a few reads makes
        every joint record of a bulk table (0.25 s at 10^6 joints, for a handful of sheets)."""
        if self._joint_ids is None:
            self._joint_ids = self.model.joint_ids
        return self._joint_ids[j]

    def member_ids(self) -> list[str]:
        """The model's member ids, copied once for all the sheets (not once per drawing)."""
        if self._member_ids is None:
            self._member_ids = self.model.member_ids
        return self._member_ids

    # -- which cut solves a member ---------------------------------------------------------
    def _position(self, member: str) -> int | None:
        """The cut that solves `member` (the last, should several), or None."""
        if self.sections is None:
            return None
        cuts = self.sections.cuts
        indices = getattr(cuts, "target_indices", None)
        if indices is not None:
            # By member position: a report of a 10^6-member truss asks for a handful of cuts, and
            # a dict of every cut's member name cost 0.3-0.6 s to make.
            if self._by_member is None:
                targets = indices()
                self._by_member = np.full(len(self.model.members), -1, dtype=np.int64)
                np.maximum.at(self._by_member, targets, np.arange(len(targets), dtype=np.int64))
            m = self.model.member_index.get(member)
            k = -1 if m is None else int(self._by_member[m])
            return None if k < 0 else k
        if self._positions is None:
            self._positions = {c.target: k for k, c in enumerate(cuts)}
        return self._positions.get(member)

    def cut_of(self, member: str) -> SectionCut | None:
        k = self._position(member)
        return None if k is None or self.sections is None else self.sections.cuts[k]

    def sample(self, count: int) -> list[str]:
        """Members whose cuts are spread evenly over the solve order (a sample of the sheets)."""
        if self.sections is None or not len(self.sections.cuts) or count <= 0:
            return []
        cuts = self.sections.cuts
        picks = np.unique(np.linspace(0, len(cuts) - 1, num=min(count, len(cuts))).astype(int))
        return [cuts[int(k)].target for k in picks]

    # -- the sheets -----------------------------------------------------------------------------
    def for_members(
        self, members: Sequence[str], load_name: str, *, exact: bool = True
    ) -> SheetSet:
        """The free bodies that solve `members` in one load column, each free body once."""
        cuts: list[SectionCut] = []
        missing: list[tuple[str, str]] = []
        reasons = dict(self.sections.unreached) if self.sections is not None else {}
        seen: set[str] = set()
        for m in members:
            if m in seen:
                continue
            seen.add(m)
            cut = self.cut_of(m)
            if cut is None:
                missing.append((m, reasons.get(m, "no section cut was computed")))
            else:
                cuts.append(cut)
        return SheetSet(self.group(cuts, load_name, exact=exact), tuple(missing))

    def group(
        self, cuts: Sequence[SectionCut], load_name: str, *, exact: bool = True
    ) -> tuple[CutSheet, ...]:
        """One sheet per distinct free body among `cuts`, in the order first met."""
        bodies: dict[tuple, list[SectionCut]] = {}
        for cut in cuts:
            key = (
                frozenset(zip(cut.cut_members, cut.kept_ends, strict=True)),
                cut.kept_size,
            )
            bodies.setdefault(key, []).append(cut)
        return tuple(self._sheet(group, load_name, exact) for group in bodies.values())

    def _column(self, load_name: str) -> int:
        names = self.model.load_names
        if load_name not in names:
            raise ValueError(
                f"load case '{load_name}' is not in the model (have: {', '.join(names)})"
            )
        return names.index(load_name)

    def _side(self, cut: SectionCut, column: int) -> _Side:
        order = cut._side.order
        key = (id(order), column)
        hit = self._sides.get(key)
        if hit is None or hit[0] is not order:
            side = _Side(self, order, column)
            side._xyz = self.model.xyz
            self._sides[key] = (order, side)
            return side
        return hit[1]

    def _sheet(self, cuts: list[SectionCut], load_name: str, exact: bool) -> CutSheet:
        model = self.model
        column = self._column(load_name)
        cut = cuts[0]
        side = self._side(cut, column)
        js = cut._side
        picked, count, load_sum, load_m0 = side.loads(js)
        xyz = model.xyz
        loads = tuple(
            ExternalForce(
                "load",
                self.joint_id(j),
                self.joint_id(j),
                _pt(xyz[j]),
                _pt(side.F[j]),
                float(np.linalg.norm(side.F[j])),
            )
            for j in picked
        )
        reactions = []
        for k, r in enumerate(model.reactions):
            j = model.joint_index[r.joint]
            if not side.kept(js, j):
                continue
            if self.first is None:
                raise ValueError(
                    "the kept side of this cut holds supports, and the reactions cannot be found "
                    "from overall equilibrium"
                )
            value = float(self.first[0][k, column])
            reactions.append(
                ExternalForce(
                    "reaction",
                    r.label,
                    r.joint,
                    _pt(xyz[j]),
                    _pt(np.asarray(r.direction, dtype=float) * value),
                    value,
                )
            )
        # One free body may serve several cuts taken at different steps: a member unknown in
        # the first may be known (solved meanwhile) in a later one. The drawing shows every value
        # known by then; each equation uses only what its own cut knew.
        known: dict[str, float] = {}
        for each in cuts:
            known.update(
                (m, f[column])
                for m, f in zip(each.known_members, each.known_forces, strict=True)
                if m not in known
            )
        cut_members = []
        for member, joint in zip(cut.cut_members, cut.kept_ends, strict=True):
            i = model.member_index[member]
            m = model.members[i]
            u = model.unit_vectors[i]
            e = u if m.start == joint else -u
            cut_members.append(
                CutMember(
                    member,
                    joint,
                    m.end if m.start == joint else m.start,
                    _pt(xyz[model.joint_index[joint]]),
                    _pt(e),
                    known.get(member),
                )
            )
        scale = max(
            [float(np.abs(self.loads[column]).max(initial=0.0))]
            + [abs(x.value) for x in reactions]
            + [abs(v) for v in known.values()]
            + [1e-300]
        )
        rest_load = load_sum - sum((np.asarray(x.force) for x in loads), np.zeros(model.dim))
        rest_m0 = load_m0 - sum(
            (_moment0(np.asarray([x.point]), np.asarray([x.force]))[0] for x in loads),
            np.zeros(load_m0.shape),
        )
        combination = self.is_combination[column]
        equations = []
        for each in cuts:
            if each.method == LEAST_SQUARES:
                continue
            equations.append(
                self._equation(
                    each,
                    column,
                    cut_members,
                    loads,
                    (count - len(loads), rest_load, rest_m0),
                    reactions,
                    scale,
                    exact and not combination,
                )
            )
        solved = {e.target for e in equations}
        also = tuple(
            (m, v, _tc(v, max(scale, abs(v))))
            for m, v in self._full_set(cut_members, load_sum, load_m0, reactions).items()
            if m not in solved
        )
        drawing = self._drawing(cut, side, cut_members, loads, reactions)
        kept_listed = self._kept_listed(js, cut_members)
        return CutSheet(
            load_name=load_name,
            combination=combination,
            straight=cut.straight,
            kept_count=cut.kept_size,
            kept_listed=kept_listed,
            cut_members=tuple(cut_members),
            loads=loads,
            loads_omitted=count - len(loads),
            load_total=_pt(load_sum),
            reactions=tuple(reactions),
            equations=tuple(equations),
            also=also,
            drawing=drawing,
            extent=self.extent,
        )

    def _kept_listed(self, js, cut_members: list[CutMember]) -> tuple[str, ...]:
        if len(js) <= MAX_LISTED_JOINTS:
            return tuple(js.names[i] for i in js.indices())
        # a large side: its joints at the cut (the reader finds them on the drawing)
        return tuple(dict.fromkeys(c.kept_joint for c in cut_members))[:MAX_LISTED_JOINTS]

    # -- one equation --------------------------------------------------------------------------
    def _row(self, cut: SectionCut, point: np.ndarray, force: np.ndarray) -> float:
        if cut.method == FORCES_NORMAL and cut.axis is not None:
            return float(np.dot(np.asarray(cut.axis), force))
        rel = np.asarray(point, dtype=float) - np.asarray(cut.moment_point)
        if self.model.dim == 2:
            return float(rel[0] * force[1] - rel[1] * force[0])
        return float(np.dot(np.asarray(cut.axis), np.cross(rel, force)))

    def _foot(self, cut: SectionCut, point: Point, direction: Point) -> Point | None:
        if cut.method != MOMENTS or self.model.dim != 2 or cut.moment_point is None:
            return None
        x, e, p = np.asarray(point), np.asarray(direction), np.asarray(cut.moment_point)
        norm = float(np.linalg.norm(e))
        if norm == 0:
            return None
        e = e / norm
        return _pt(x + np.dot(p - x, e) * e)

    def _equation(
        self,
        cut: SectionCut,
        column: int,
        cut_members: list[CutMember],
        loads: tuple[ExternalForce, ...],
        rest: tuple[int, np.ndarray, np.ndarray],
        reactions: list[ExternalForce],
        scale: float,
        exact: bool,
    ) -> Equation:
        d = self.model.dim
        axes = "xyz"
        terms: list[Term] = []
        for x in loads:
            for k in range(d):
                if x.force[k] == 0:
                    continue
                unit = np.zeros(d)
                unit[k] = 1.0
                arm = self._row(cut, np.asarray(x.point), unit)
                if arm == 0:
                    continue
                terms.append(
                    Term(
                        "load",
                        x.label,
                        f"F{axes[k]}",
                        x.force[k],
                        arm,
                        x.force[k] * arm,
                        self._foot(cut, x.point, _pt(unit)),
                    )
                )
        omitted, rest_force, rest_m0 = rest
        if omitted:
            if cut.method == FORCES_NORMAL:
                total = float(np.dot(np.asarray(cut.axis), rest_force))
            else:
                p = np.asarray(cut.moment_point)
                m = rest_m0 - _moment0(p[None], rest_force[None])[0]
                total = float(m[0]) if d == 2 else float(np.dot(np.asarray(cut.axis), m))
            terms.append(Term("loads", f"{omitted} other loaded joints", "F", None, 0.0, total))
        for x in reactions:
            if abs(x.value) <= ZERO_RTOL * scale:
                continue  # a zero reaction adds nothing; a hand calc leaves it out
            r = next(r for r in self.model.reactions if r.label == x.label)
            direction = np.asarray(r.direction, dtype=float)
            arm = self._row(cut, np.asarray(x.point), direction)
            terms.append(
                Term(
                    "reaction",
                    x.label,
                    "R",
                    x.value,
                    arm,
                    x.value * arm,
                    self._foot(cut, x.point, _pt(direction)),
                )
            )
        coefficient = 0.0
        eliminated = set(cut.eliminated)
        known_here = set(cut.known_members)
        for c in cut_members:
            arm = self._row(cut, np.asarray(c.point), np.asarray(c.direction))
            foot = self._foot(cut, c.point, c.direction)
            if c.known is not None and c.member in known_here:
                terms.append(Term("known", c.member, "N", c.known, arm, c.known * arm, foot))
            elif c.member == cut.target:
                coefficient = arm
                terms.append(Term("unknown", c.member, "N", None, arm, None, foot))
            elif c.member in eliminated:
                terms.append(Term("dropped", c.member, "N", None, 0.0, None, foot))
        rest_sum = sum(t.product for t in terms if t.product is not None)
        value = -rest_sum / coefficient
        exact_text = None
        if exact and len(loads) + len(cut_members) <= EXACT_MAX_INPUTS and not omitted:
            exact_text = self._exact(cut, column, cut_members, loads, reactions, value, scale)
        return Equation(
            target=cut.target,
            method=cut.method,
            moment_point=cut.moment_point,
            moment_joint=cut.moment_joint,
            axis=cut.axis,
            eliminated=cut.eliminated,
            terms=tuple(terms),
            coefficient=coefficient,
            rest=rest_sum,
            value=value,
            tc=_tc(value, max(scale, abs(value))),
            exact=exact_text,
        )

    def _full_set(
        self,
        cut_members: list[CutMember],
        load_sum: np.ndarray,
        load_m0: np.ndarray,
        reactions: list[ExternalForce],
    ) -> dict[str, float]:
        """Unknowns the free body's full equation set fixes (rank test), moments about a kept
        end."""
        d = self.model.dim
        ref = np.asarray(cut_members[0].point)
        ext = np.zeros(EQUATIONS[d])
        ext[:d] += load_sum
        ext[d:] += load_m0 - _moment0(ref[None], load_sum[None])[0]
        for x in reactions:
            f = np.asarray(x.force)
            ext[:d] += f
            ext[d:] += _moment0((np.asarray(x.point) - ref)[None], f[None])[0]
        unknown = []
        for c in cut_members:
            p, e = np.asarray(c.point), np.asarray(c.direction)
            if c.known is not None:
                ext[:d] += c.known * e
                ext[d:] += c.known * _moment0((p - ref)[None], e[None])[0]
            else:
                unknown.append(c)
        if not unknown:
            return {}
        size = max(float(np.linalg.norm(np.asarray(c.point) - ref)) for c in cut_members) or 1.0
        C = np.array(
            [
                np.concatenate(
                    [
                        np.asarray(c.direction),
                        _moment0((np.asarray(c.point) - ref)[None], np.asarray(c.direction)[None])[
                            0
                        ]
                        / size,
                    ]
                )
                for c in unknown
            ]
        ).T
        rhs = -ext.copy()
        rhs[d:] /= size
        ok, val = _rank_solve(C[None], rhs[None, :, None])
        return {c.member: float(val[0, i, 0]) for i, c in enumerate(unknown) if ok[0, i]}

    # -- exact values --------------------------------------------------------------------------
    def _exact_point(self, p: Sequence[float] | np.ndarray) -> list[ex.Surd]:
        key = tuple(float(c) for c in p)
        hit = self._points.get(key)
        if hit is None:  # a joint is read once, however many equations use it
            hit = self._points[key] = [ex.surd_of(c, self.extent) for c in key]
        return hit

    def _exact(
        self,
        cut: SectionCut,
        column: int,
        cut_members: list[CutMember],
        loads: tuple[ExternalForce, ...],
        reactions: list[ExternalForce],
        value: float,
        scale: float,
    ) -> str | None:
        model = self.model
        try:
            if cut.method == FORCES_NORMAL:
                axis = _exact_axis(cut.axis or ())

                def row(point: list[ex.Surd], force: list[ex.Surd]) -> ex.Surd:
                    return ex.dot(axis, force)
            else:
                if cut.moment_joint is not None:
                    q = self._exact_point(model.xyz[model.joint_index[cut.moment_joint]])
                else:
                    q = self._exact_point(cut.moment_point or ())
                axis3 = _exact_axis(cut.axis) if cut.axis is not None else []

                def row(point: list[ex.Surd], force: list[ex.Surd]) -> ex.Surd:
                    rel = [a - b for a, b in zip(point, q, strict=True)]
                    if model.dim == 2:
                        return ex.cross2(rel, force)
                    return ex.dot(axis3, ex.cross3(rel, force))

            total = ex.ZERO
            for x in loads:
                total = total + row(
                    self._exact_point(x.point), [ex.exact_number(f) for f in x.force]
                )
            if reactions:
                values = self._reactions_exact(column)
                if values is None:
                    return None
                for x in reactions:
                    k = next(i for i, r in enumerate(model.reactions) if r.label == x.label)
                    direction = [ex.surd_of(c) for c in model.reactions[k].direction]
                    force = [values[k] * c for c in direction]
                    total = total + row(self._exact_point(x.point), force)
            coefficient = None
            for c in cut_members:
                a = self._exact_point(model.xyz[model.joint_index[c.kept_joint]])
                b = self._exact_point(model.xyz[model.joint_index[c.far_joint]])
                term = row(a, ex.unit_direction(a, b))
                if c.member == cut.target:
                    coefficient = term
                elif c.known is not None and c.member in cut.known_members:
                    total = total + term * ex.member_force(c.known, a, b, scale)
            if coefficient is None or coefficient.is_zero():
                return None
            return ex.checked_text(-(total / coefficient), value, scale)
        except ex.NotExact:
            return None

    def _reactions_exact(self, column: int) -> list[ex.Surd] | None:
        if column not in self._exact_reactions:
            self._exact_reactions[column] = self._solve_reactions_exact(column)
        return self._exact_reactions[column]

    def _solve_reactions_exact(self, column: int) -> list[ex.Surd] | None:
        model = self.model
        if self.first is None or len(model.joints) > 4 * EXACT_MAX_INPUTS:
            return None
        d = model.dim
        try:
            point = self._exact_point(self.first[1])

            def eq(x: list[ex.Surd], f: list[ex.Surd]) -> list[ex.Surd]:
                r = [a - b for a, b in zip(x, point, strict=True)]
                return f + ([ex.cross2(r, f)] if d == 2 else ex.cross3(r, f))

            neq = EQUATIONS[d]
            G = [[ex.ZERO] * len(model.reactions) for _ in range(neq)]
            for k, reaction in enumerate(model.reactions):
                col = eq(
                    self._exact_point(model.xyz[model.joint_index[reaction.joint]]),
                    [ex.surd_of(c) for c in reaction.direction],
                )
                for i in range(neq):
                    G[i][k] = col[i]
            E = [ex.ZERO] * neq
            F = self.loads[column]
            for j in np.flatnonzero((F != 0).any(axis=1)).tolist():
                col = eq(self._exact_point(model.xyz[j]), [ex.exact_number(v) for v in F[j]])
                E = [a + b for a, b in zip(E, col, strict=True)]
            solved = ex.rref_solve(G, [-e for e in E])
        except ex.NotExact:
            return None
        if len(solved) != len(model.reactions):
            return None
        return [solved[k] for k in range(len(model.reactions))]

    # -- the drawing ---------------------------------------------------------------------------
    def _adjacency(self) -> tuple[np.ndarray, np.ndarray]:
        if self._incidence is None:
            ends = self.model.ends_index
            nb = len(ends)
            joints = np.concatenate([ends[:, 0], ends[:, 1]])
            members = np.concatenate([np.arange(nb), np.arange(nb)])
            order = np.argsort(joints, kind="stable")
            ptr = np.concatenate(
                [[0], np.cumsum(np.bincount(joints, minlength=len(self.model.joints)))]
            )
            self._incidence = (members[order], ptr)
        return self._incidence

    def _drawing(
        self,
        cut: SectionCut,
        side: _Side,
        cut_members: list[CutMember],
        loads: tuple[ExternalForce, ...],
        reactions: list[ExternalForce],
    ) -> FreeBodyDrawing:
        """The kept side's members nearest the cut (breadth first from the cut), at most
        MAX_DRAWN_MEMBERS; far ends of the cut members are drawn too (dashed by the renderer)."""
        model = self.model
        members, ptr = self._adjacency()
        js = cut._side
        ends = model.ends_index
        cut_set = {model.member_index[c.member] for c in cut_members}
        start = [model.joint_index[c.kept_joint] for c in cut_members]
        seen_j = set(start)
        queue = deque(dict.fromkeys(start))
        drawn: list[int] = []
        seen_m: set[int] = set()
        full = True
        while queue:
            j = queue.popleft()
            for m in members[ptr[j] : ptr[j + 1]].tolist():
                if m in seen_m or m in cut_set:
                    continue
                a, b = int(ends[m, 0]), int(ends[m, 1])
                other = b if a == j else a
                if not side.kept(js, other):
                    continue
                if len(drawn) >= MAX_DRAWN_MEMBERS:
                    full = False
                    queue.clear()
                    break
                seen_m.add(m)
                drawn.append(m)
                if other not in seen_j:
                    seen_j.add(other)
                    queue.append(other)
        for c in cut_members:
            seen_j.add(model.joint_index[c.far_joint])
        for x in list(loads) + list(reactions):
            seen_j.add(model.joint_index[x.joint])
        drawn.sort()
        ids = self.member_ids()
        kept_members_total = _kept_member_count(self, js, side) if not full else len(drawn)
        return FreeBodyDrawing(
            joints=tuple((self.joint_id(j), _pt(model.xyz[j])) for j in sorted(seen_j)),
            members=tuple(
                (ids[m], self.joint_id(int(ends[m, 0])), self.joint_id(int(ends[m, 1])))
                for m in drawn
            ),
            omitted_members=max(kept_members_total - len(drawn), 0),
        )

    # -- exact member forces along the joint steps -------------------------------------------------
    def exact_members(self, joints: JointSolution, load_name: str) -> ex.ExactValues | None:
        """Member forces and reactions in exact form (None: inputs not all short decimals, or a
        combination of load cases, where an exact form says nothing a decimal does not)."""
        if self.is_combination[self._column(load_name)]:
            return None
        return ex.member_values(self.model, joints, load_name)

    # -- overall equilibrium --------------------------------------------------------------------
    def reactions(self, load_name: str, *, exact: bool = True) -> ReactionsSheet:
        """The overall-equilibrium step: ΣM about the pin, then the force sums, and the
        reactions."""
        model = self.model
        column = self._column(load_name)
        d = model.dim
        need = EQUATIONS[d]
        if self.first is None:
            why = (
                f"there are {len(model.reactions)} reaction components, not {need}"
                if len(model.reactions) != need
                else "the supports are parallel or concurrent"
            )
            return ReactionsSheet(load_name, False, why, None, (), ())
        R, point, pivot = self.first
        G, E = overall_equilibrium_matrix(model, point)
        F = self.loads[column]
        loaded = np.flatnonzero((F != 0).any(axis=1))
        labels = [r.label for r in model.reactions]
        if d == 2:
            order = [(2, f"ΣM about joint {pivot} = 0 (anticlockwise positive)")]
            order += [(0, "ΣFx = 0"), (1, "ΣFy = 0")]
        else:
            order = [
                (3 + k, f"ΣM about the {a}-axis through joint {pivot} = 0")
                for k, a in enumerate("xyz")
            ]
            order += [(k, f"ΣF{a} = 0") for k, a in enumerate("xyz")]
        rel = model.xyz[loaded] - point
        contributions = np.concatenate([F[loaded], _moment0(rel, F[loaded])], axis=1)
        solved: set[int] = set()
        rows = []
        for row, title in order:
            coefficients = tuple(
                (labels[k], float(G[row, k])) for k in range(len(labels)) if abs(G[row, k]) > 1e-12
            )
            # only the first MAX_ITEMS are listed: the others are counted (10^5 loaded joints)
            at = np.flatnonzero(contributions[:, row] != 0)
            nonzero = [
                (self.joint_id(j), float(c))
                for j, c in zip(
                    loaded[at[:MAX_ITEMS]].tolist(),
                    contributions[at[:MAX_ITEMS], row].tolist(),
                    strict=True,
                )
            ]
            fresh = [k for k in range(len(labels)) if abs(G[row, k]) > 1e-12 and k not in solved]
            solves = None
            if len(fresh) == 1:
                solved.add(fresh[0])
                solves = (labels[fresh[0]], float(R[fresh[0], column]))
            rows.append(
                OverallRow(
                    title,
                    coefficients,
                    tuple(nonzero),
                    max(at.size - MAX_ITEMS, 0),
                    float(E[row, column]),
                    solves,
                )
            )
        exact_values = None
        if exact and not self.is_combination[column]:
            exact_values = self._reactions_exact(column)
        scale = max(float(np.abs(F).max(initial=0.0)), float(np.abs(R[:, column]).max()), 1e-300)
        out = []
        for k, label in enumerate(labels):
            value = float(R[k, column])
            text = None
            if exact_values is not None:
                text = ex.checked_text(exact_values[k], value, scale)
            out.append((label, value, text))
        return ReactionsSheet(load_name, True, "", pivot, tuple(rows), tuple(out))


def _exact_axis(axis: Sequence[float]) -> list[ex.Surd]:
    """A moment axis or force direction up to a factor: the equation's solution does not change
    when every coefficient is scaled alike, and a unit vector's components often carry a root of
    no small integer while their ratios are plain fractions."""
    v = np.asarray(axis, dtype=float)
    big = float(np.abs(v).max(initial=0.0))
    if big == 0:
        raise ex.NotExact("no axis")
    return [ex.surd_of(float(c) / big) for c in v]


def _kept_member_count(book: CalcSheets, js, side: _Side) -> int:
    """Members with both ends on the kept side (only counted when the drawing was cut short)."""
    ends = book.model.ends_index
    rank = side.rank
    inside = (rank >= js.start) & (rank < js.stop)
    if js.removed:
        inside[list(js.removed)] = False
    if js.added:
        inside[list(js.added)] = True
    return int((inside[ends[:, 0]] & inside[ends[:, 1]]).sum())


def requested_sheets(
    model: Model, member_ids: Sequence[str], load_names: Sequence[str], *, exact: bool = True
) -> list[tuple[ReactionsSheet | None, CutSheet]]:
    """The calc sheet of the section through exactly `member_ids`, per load column.

    One free body; one equation per cut member it isolates, each with its own moment point.
    Raises ValueError, in plain words, when the members do not form a section or none can be
    isolated.
    """
    first = cut_for_members(model, member_ids)
    cuts = [first]
    for member in member_ids:
        if member == first.target:
            continue
        try:
            other = cut_for_members(model, [member] + [m for m in member_ids if m != member])
        except ValueError:
            continue
        if other.target == member:
            cuts.append(other)
    book = CalcSheets(model, None)
    out = []
    for name in load_names:
        (sheet,) = book.group(cuts, name, exact=exact)
        reactions = book.reactions(name, exact=exact) if sheet.reactions else None
        out.append((reactions, sheet))
    return out
