"""Method of sections (Ritter's method): a second route to the member forces, independent of joints.

The route uses only the model, the reactions from overall equilibrium and its own cuts. It never
reads the forces of the method of joints, so agreement between the two routes means something.

Method: A. Ritter, *Elementare Theorie und Berechnung eiserner Dach- und Brücken-Constructionen*
(1863); recipe in shared/REFERENCES.md 2.1 (2D) and 2.2 (3D). The cut search is our own
(REFERENCES.md 2.3 notes that no standard published algorithm chooses sections):

1. Reactions first, from overall equilibrium (:func:`solve_reactions`), as a hand calc does. If
   the supports are not externally determinate, only free bodies holding no support are used.
2. Straight cuts (planes in 3D). For each candidate cut normal -- the coordinate axes and the
   normals of the most common member directions, capped -- sort the joints by their projection
   on the normal and sweep the gaps between consecutive distinct projections. A member crosses
   the gaps between its two end projections, so the count of (unknown) members crossing every gap
   comes from one difference array, and the loads and reactions on either side from prefix sums:
   O(n log n) per direction for the sort, O(n) per pass after that.
3. A gap crossed by at most ``MAX_UNKNOWNS`` unknown forces is a candidate free body. The side
   needing the fewest loads and reactions is kept. Members already solved are carried as knowns.
4. Each cut member is a line c = (e, p x e) in Plücker form, e pointing from its joint on the
   kept side to the far joint, so its force on the free body is N e (tension-positive). Member i
   is isolated by an equation row w with w.c_j = 0 for every other unknown j and w.c_i != 0. In
   2D such a w is a moment about the point where the other lines meet (Ritter point) or, when
   they are parallel, a force sum normal to them. In 3D the 6 x |U| system with a rank test
   decides; a moment axis or a force direction is then looked for to write the derivation.
5. Passes repeat while members are reached (a later pass re-examines only gaps crossed by a newly
   known member). When straight cuts stall, free bodies that are connected sets of joints are
   tried: one side of a straight cut with one or two joints of the next layer moved across. That
   is how the chords of a K-truss are isolated (three of the four cut members meet at a joint).
"""

from __future__ import annotations

import functools
import itertools
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, TypeVar, overload

import numpy as np

from verify.analysis.forces import ForceResult
from verify.analysis.joints import solve_reactions
from verify.analysis.run import AnalysisRun
from verify.model import Model

if TYPE_CHECKING:
    from verify.analysis.cut_sheets import CalcSheets

MOMENTS = "moments"
FORCES_NORMAL = "forces-normal"
LEAST_SQUARES = "least-squares"

EQUATIONS = {2: 3, 3: 6}  # equilibrium equations of one free body
# One or two more unknowns than equations still isolate a member when the others are concurrent
# or parallel (K-truss); beyond that a hand calc would not use the cut.
MAX_UNKNOWNS = {2: 5, 3: 8}
MAX_CROSSING = {2: 24, 3: 48}  # a cut crossing more members than this is no hand-calc section
MAX_DIRECTIONS = {2: 8, 3: 12}
ELIMINATED_RTOL = 1e-9  # |w.c_j| below this (unit w, |c| ~ 1) counts as eliminated
ISOLATED_RTOL = 1e-6  # |w.c_i| must exceed this: a lever arm of 1e-6 of the cut's size or more
NULL_RTOL = 1e-8  # 3D: a member is determined when its share of the null space is below this
RANK_RTOL = 1e-9
COINCIDENT_RTOL = 1e-9  # projections within this fraction of the extent are one layer of joints
PARALLEL_RTOL = 1e-10  # a Ritter point farther than 1e10 cut sizes means the lines are parallel
SHALLOW_SINE = 0.2  # with one other unknown, sum forces normal to it unless the angle is shallow
MAX_MOVED = 2  # joints moved across a straight cut to form a non-straight free body
MAX_LAYER = 4  # ... taken from a layer of at most this many joints
MAX_BODY_CANDIDATES = 50_000  # total non-straight free bodies examined (a time bound)

_MOMENT, _FORCE, _LSQ = 0, 1, 2
_METHOD_NAMES = {_MOMENT: MOMENTS, _FORCE: FORCES_NORMAL, _LSQ: LEAST_SQUARES}


@dataclass(frozen=True, eq=False)
class _JointSet:
    """The joints of a free body, stored compactly: a slice of a sorted joint order, adjusted.

    A straight cut keeps about half the joints; storing them per cut would cost O(n) per member.
    """

    names: tuple[str, ...]  # every joint id of the model (shared, not copied)
    order: np.ndarray  # joint indices (shared between the cuts of one sweep)
    start: int
    stop: int
    added: tuple[int, ...] = ()
    removed: tuple[int, ...] = ()

    def indices(self) -> np.ndarray:
        base = self.order[self.start : self.stop]
        if self.removed:
            base = base[~np.isin(base, self.removed)]
        if self.added:
            base = np.concatenate([base, np.asarray(self.added, dtype=np.int64)])
        return np.sort(base)

    def __len__(self) -> int:
        return self.stop - self.start + len(self.added) - len(self.removed)


@dataclass(frozen=True)
class SectionCut:
    """One free body of the method of sections and the equation that solves `target`.

    Each cut member's force acts on the free body along the unit vector from its joint on the
    kept side (`kept_ends`) toward its far joint, tension-positive.
    """

    target: str  # member id solved by this cut
    cut_members: tuple[str, ...]  # all members crossing the cut
    known_members: tuple[str, ...]  # cut members carried as known (from earlier cuts)
    method: str  # "moments" | "forces-normal" | "least-squares"
    moment_point: tuple[float, ...] | None  # Ritter point (2D) or a point on the axis (3D)
    axis: tuple[float, ...] | None  # 3D moment axis, or the force-sum direction
    kept_ends: tuple[str, ...]  # for each cut member, its joint on the kept side
    eliminated: tuple[str, ...]  # the other unknown members, which the equation eliminates
    moment_joint: str | None  # the joint at the Ritter point (or on the 3D axis), if any
    known_forces: tuple[tuple[float, ...], ...]  # per known member, its force in every load column
    uses_reactions: bool  # the kept side holds supports, so the reactions enter the equation
    straight: bool  # a straight cut (plane in 3D), or a connected set of joints otherwise
    _side: _JointSet = field(repr=False, compare=False)

    @property
    def kept_joints(self) -> tuple[str, ...]:
        """Joints of the free body kept (computed on demand: a cut may keep half the truss)."""
        names = self._side.names
        return tuple(names[i] for i in self._side.indices())

    @property
    def kept_size(self) -> int:
        return len(self._side)

    @property
    def unknown_members(self) -> tuple[str, ...]:
        known = set(self.known_members)
        return tuple(m for m in self.cut_members if m not in known)


@dataclass(frozen=True)
class SectionSolution:
    forces: ForceResult  # route="sections"; NaN for members not reached
    cuts: Sequence[SectionCut]  # one per reached member, in solve order (records built when read)
    unreached: dict[str, str]  # member id -> plain reason
    notes: tuple[str, ...]
    reactions_first: bool  # reactions came from overall equilibrium before any cut
    reaction_joint: str | None  # the joint overall moments were taken about

    @property
    def coverage(self) -> float:
        """Fraction of the members reached by a cut."""
        n = self.forces.member_forces.shape[0]
        return len(self.cuts) / n if n else 1.0

    def cut_for(self, member_id: str) -> SectionCut | None:
        for cut in self.cuts:
            if cut.target == member_id:
                return cut
        return None

    def calc_sheets(self, model: Model) -> CalcSheets:
        """The calc sheets of these cuts (records for the reports), built on request per member.

        A report chooses the members (the flagged ones, a sample) only after the comparison, so
        the analysis hands it this builder rather than every sheet of a large truss.
        """
        from verify.analysis.cut_sheets import CalcSheets

        return CalcSheets(model, self)


# -- small vector helpers ---------------------------------------------------------------------
def _moment_of(x: np.ndarray, f: np.ndarray) -> np.ndarray:
    """x x f for points (n, d) and forces (n, d, c): (n, 1, c) in 2D, (n, 3, c) in 3D."""
    if x.shape[1] == 2:
        return (x[:, 0, None] * f[:, 1] - x[:, 1, None] * f[:, 0])[:, None, :]
    return np.stack(
        [
            x[:, 1, None] * f[:, 2] - x[:, 2, None] * f[:, 1],
            x[:, 2, None] * f[:, 0] - x[:, 0, None] * f[:, 2],
            x[:, 0, None] * f[:, 1] - x[:, 1, None] * f[:, 0],
        ],
        axis=1,
    )


def _line_moment(p: np.ndarray, e: np.ndarray) -> np.ndarray:
    """p x e row-wise: (n, 1) in 2D, (n, 3) in 3D."""
    if p.shape[1] == 2:
        return (p[:, 0] * e[:, 1] - p[:, 1] * e[:, 0])[:, None]
    return np.cross(p, e)


def _row_norm(v: np.ndarray) -> np.ndarray:
    """np.linalg.norm(v, axis=1) for rows of 2 or 3 numbers, the same to the last bit.

    np.linalg.norm reduces each short row in a slow generic loop (about 10x this at 10^6 rows);
    its sum of the squares runs left to right, as here.
    """
    if v.ndim == 2 and v.shape[1] in (2, 3) and v.dtype == np.float64:
        s = v * v
        total = s[:, 0] + s[:, 1]
        if v.shape[1] == 3:
            total = total + s[:, 2]
        return np.sqrt(total)
    return np.linalg.norm(v, axis=1)


def _canonical(v: np.ndarray) -> np.ndarray:
    """Unit vectors with the sign fixed (largest component positive), so n and -n coincide."""
    norm = _row_norm(v)
    v = v[norm > 0] / norm[norm > 0, None]
    pick = np.abs(v).argmax(axis=1)
    sign = np.sign(v[np.arange(len(v)), pick])
    return v * sign[:, None]


def _row_classes(r: np.ndarray) -> tuple[int, np.ndarray, np.ndarray]:
    """Classes of equal rows of r (finite), numbered in lexicographic order of the rows: the
    count, each row's class and each class's size, as np.unique(r, axis=0) numbers them.

    np.unique sorts 10^6 rows as structured records (0.6 s); rows of numbers rounded to 6
    decimals are packed into one int64 code instead (a mixed-radix number, so the order of codes
    is the order of rows), the few distinct codes found by hashing and each row's class by a
    binary search among them. Exactness is checked, not assumed: every row must equal its class's
    row and the classes must be strictly ascending; otherwise np.unique decides.
    """
    n, d = r.shape
    if n:
        digits = np.rint(r * 1e6)
        low = digits.min(axis=0)
        span = digits.max(axis=0) - low + 1
        if float(np.prod(span)) < 2.0**62:
            code = np.zeros(n, dtype=np.int64)
            for k in range(d):
                code = code * np.int64(span[k]) + (digits[:, k] - low[k]).astype(np.int64)
            codes = np.unique(code)
            inverse = np.searchsorted(codes, code)
            rows = np.empty((len(codes), d))
            rows[inverse] = r
            if (rows[inverse] == r).all() and _ascending(rows):
                return len(codes), inverse, np.bincount(inverse, minlength=len(codes))
    keys, inverse, counts = np.unique(r, axis=0, return_inverse=True, return_counts=True)
    return len(keys), inverse.ravel(), counts


def _ascending(rows: np.ndarray) -> bool:
    """True when the rows are strictly increasing in lexicographic order."""
    a, b = rows[:-1], rows[1:]
    less = a[:, -1] < b[:, -1]
    for k in range(rows.shape[1] - 2, -1, -1):
        less = (a[:, k] < b[:, k]) | ((a[:, k] == b[:, k]) & less)
    return bool(less.all())


def _directions(model: Model) -> np.ndarray:
    """Cut normals: the axes first, then normals of the most common member directions."""
    d = model.dim
    cap = MAX_DIRECTIONS[d]
    u = _canonical(model.unit_vectors[np.isfinite(model.unit_vectors).all(axis=1)])
    common = np.zeros((0, d))
    if len(u):
        n_classes, inverse, counts = _row_classes(np.round(u, 6))
        top = np.argsort(-counts, kind="stable")[:cap]
        # average the members of each direction class: rounding must not tilt the normal
        # (bincount adds in member order, as np.add.at did: the same sums to the last bit)
        sums = np.column_stack(
            [np.bincount(inverse, weights=u[:, k], minlength=n_classes) for k in range(d)]
        )
        common = sums[top] / np.linalg.norm(sums[top], axis=1)[:, None]
    candidates = [np.eye(d)]
    if d == 2:
        candidates.append(np.column_stack([-common[:, 1], common[:, 0]]))
        candidates.append(common)
    else:
        candidates.append(common)
        pairs = [np.cross(a, b) for a, b in itertools.combinations(common[:4], 2)]
        if pairs:
            candidates.append(np.array(pairs))
    allc = _canonical(np.vstack(candidates))
    _, first = np.unique(np.round(allc, 6), axis=0, return_index=True)
    return allc[np.sort(first)][:cap]


# -- straight-cut sweeps ------------------------------------------------------------------------
@dataclass
class _Sweep:
    """Joints sorted along one cut normal, with per-gap side totals (built once per direction)."""

    normal: np.ndarray
    order: np.ndarray
    group: np.ndarray  # layer index of every joint
    stops: np.ndarray  # gap g lies between order[:stops[g]] and order[stops[g]:]
    lo: np.ndarray  # per member: lower layer of its ends
    hi: np.ndarray
    crossing: np.ndarray  # per member: lo < hi
    total: np.ndarray  # per gap: number of members crossing it
    side_ext: tuple[np.ndarray, np.ndarray]  # per gap: (left, right) external loads+reactions
    side_cost: tuple[np.ndarray, np.ndarray]  # per gap: loaded joints + reaction components
    side_supports: tuple[np.ndarray, np.ndarray]
    pin_left: np.ndarray
    snapshot: np.ndarray | None = None  # known members when this sweep was last examined


class _Engine:
    """Precomputed data shared by every cut of one model."""

    def __init__(self, model: Model) -> None:
        self.model = model
        d = self.d = model.dim
        self.neq = EQUATIONS[d]
        nj = self.nj = len(model.joints)
        self.nb = len(model.members)
        xyz = model.xyz
        self.centre = (xyz.min(axis=0) + xyz.max(axis=0)) / 2 if nj else np.zeros(d)
        self.X = xyz - self.centre
        extent = float(np.ptp(xyz, axis=0).max()) if nj else 0.0
        self.extent = extent if extent > 0 else 1.0
        self.ends = model.ends_index
        self.u = model.unit_vectors
        self.L = model.lengths
        run = AnalysisRun.of(model)  # the pipeline's, whose tuples its child's answer refers to
        self.joint_names = run.id_tuple("joints")
        self.member_names = run.id_tuple("members")
        F = model.load_matrix()
        self.ncols = F.shape[1]
        loads = F.reshape(nj, d, self.ncols)
        self.loads = loads
        r = len(model.reactions)
        self.r_joint, self.r_dir = model.reaction_arrays()
        self.support_count = (
            np.bincount(self.r_joint, minlength=nj) if nj else np.zeros(0, dtype=np.int64)
        )
        first = solve_reactions(model) if r else None
        self.first = first
        P = loads.copy()
        if first is not None:
            R = first[0]
            np.add.at(P, self.r_joint, self.r_dir[:, :, None] * R[:, None, :])
            self.reactions = R
            self.pin = model.joint_index[first[2]]
        else:
            self.reactions = np.full((r, self.ncols), np.nan)
            self.pin = -1
        self.ext = np.concatenate(
            [P, _moment_of(self.X, P)], axis=1
        )  # (nj, neq, ncols), about centre
        loaded = (np.abs(loads) > 0).any(axis=(1, 2)) if self.ncols else np.zeros(nj, dtype=bool)
        self.cost = loaded.astype(np.int64) + (self.support_count if first is not None else 0)
        # incidence lists (CSR) for the non-straight free bodies
        inc_member = np.concatenate([np.arange(self.nb), np.arange(self.nb)])
        inc_joint = np.concatenate([self.ends[:, 0], self.ends[:, 1]])
        order = np.argsort(inc_joint, kind="stable")
        self.inc_members = inc_member[order]
        self.inc_ptr = np.concatenate([[0], np.cumsum(np.bincount(inc_joint, minlength=nj))])
        self.tied = np.zeros(self.nb, dtype=bool)

    # -- sweeps --------------------------------------------------------------------------------
    def sweep(self, normal: np.ndarray) -> _Sweep:
        nj = self.nj
        proj = self.X @ normal
        order = np.argsort(proj, kind="stable")
        sp = proj[order]
        brk = np.diff(sp) > COINCIDENT_RTOL * self.extent
        layer_sorted = np.concatenate([[0], np.cumsum(brk)])
        group = np.empty(nj, dtype=np.int64)
        group[order] = layer_sorted
        n_layers = int(layer_sorted[-1]) + 1 if nj else 0
        stops = np.flatnonzero(brk) + 1
        ga = group[self.ends[:, 0]]
        gb = group[self.ends[:, 1]]
        lo = np.minimum(ga, gb)
        hi = np.maximum(ga, gb)
        crossing = lo < hi
        total = self._gap_counts(lo, hi, crossing, n_layers)
        ext_sorted = self.ext[order]
        left = np.cumsum(ext_sorted, axis=0)[stops - 1]
        right = np.cumsum(ext_sorted[::-1], axis=0)[::-1][stops]
        cost = self.cost[order]
        sup = self.support_count[order]
        cl = np.cumsum(cost)[stops - 1]
        sl = np.cumsum(sup)[stops - 1]
        pin_left = (
            (group[self.pin] < np.arange(1, n_layers))
            if self.pin >= 0
            else np.zeros(len(stops), dtype=bool)
        )
        return _Sweep(
            normal,
            order,
            group,
            stops,
            lo,
            hi,
            crossing,
            total,
            (left, right),
            (cl, cost.sum() - cl),
            (sl, sup.sum() - sl),
            pin_left,
        )

    @staticmethod
    def _gap_counts(lo: np.ndarray, hi: np.ndarray, mask: np.ndarray, n_layers: int) -> np.ndarray:
        """Members (where mask) crossing each gap: an interval sweep by difference array."""
        if n_layers < 2:
            return np.zeros(0, dtype=np.int64)
        diff = np.bincount(lo[mask], minlength=n_layers) - np.bincount(hi[mask], minlength=n_layers)
        return np.cumsum(diff)[: n_layers - 1]

    def _keep_left(self, sw: _Sweep, gaps: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Which side of each gap to keep, and whether either side is usable at all.

        Keep the side needing fewer loads and reactions (ties: the side without the pin). Without
        reactions from overall equilibrium, only a side holding no support is usable.
        """
        cl, cr = sw.side_cost[0][gaps], sw.side_cost[1][gaps]
        sl, sr = sw.side_supports[0][gaps], sw.side_supports[1][gaps]
        if self.first is not None:
            return (cl < cr) | ((cl == cr) & ~sw.pin_left[gaps]), np.ones(len(gaps), dtype=bool)
        return (sl == 0) & ((sr > 0) | (cl <= cr)), (sl == 0) | (sr == 0)

    @staticmethod
    def _pairs(sw: _Sweep, gaps: np.ndarray, members: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """(gap position, member) for every member crossing one of the sorted `gaps`."""
        lo = sw.lo[members]
        hi = sw.hi[members]
        s0 = np.searchsorted(gaps, lo, side="left")
        s1 = np.searchsorted(gaps, hi, side="left")
        count = s1 - s0
        total = int(count.sum())
        pm = np.repeat(members, count)
        offsets = np.repeat(np.cumsum(count) - count, count)
        pc = np.repeat(s0, count) + (np.arange(total) - offsets)
        order = np.argsort(pc, kind="stable")
        return pc[order], pm[order]

    # -- evaluating free bodies ------------------------------------------------------------------
    def evaluate(
        self,
        pc: np.ndarray,
        pm: np.ndarray,
        kept: np.ndarray,
        cand_ext: np.ndarray,
        known: np.ndarray,
        t: np.ndarray,
    ) -> _Found:
        """Solve every candidate free body for the unknowns it isolates.

        pc, pm, kept: per (candidate, cut member) pair, sorted by candidate: the candidate,
        the member and the member's joint on the kept side. cand_ext: loads and reactions on each
        kept side (resultant force, then moment about the model centre).
        """
        d, neq = self.d, self.neq
        nc = len(cand_ext)
        s = self.ends[pm, 0]
        kept_start = kept == s
        far = np.where(kept_start, self.ends[pm, 1], s)
        p = self.X[kept]
        e = np.where(kept_start[:, None], self.u[pm], -self.u[pm])
        npair = np.bincount(pc, minlength=nc)
        sums = np.column_stack([np.bincount(pc, weights=p[:, k], minlength=nc) for k in range(d)])
        q0 = sums / np.maximum(npair, 1)[:, None]
        rel = p - q0[pc]
        Ls = np.zeros(nc)
        np.maximum.at(Ls, pc, np.maximum(_row_norm(rel), self.L[pm]))
        Ls[Ls == 0] = 1.0
        col = np.concatenate([e, _line_moment(rel, e) / Ls[pc, None]], axis=1)
        isknown = known[pm]
        rhs = cand_ext.copy()
        rhs[:, d:] -= _moment_of(q0, rhs[:, :d])
        rhs[:, d:] /= Ls[:, None, None]
        if isknown.any():
            np.add.at(rhs, pc[isknown], col[isknown][:, :, None] * t[pm[isknown]][:, None, :])
        rhs = -rhs
        unknown_pos = np.flatnonzero(~isknown)
        ku = np.bincount(pc[unknown_pos], minlength=nc)
        found = _Found(pc, pm, kept, far, q0, Ls, col)
        for k in np.unique(ku[ku > 0]):
            cands = np.flatnonzero(ku == k)
            sel = np.isin(pc[unknown_pos], cands)
            idx = unknown_pos[sel].reshape(-1, int(k))
            C = col[idx].transpose(0, 2, 1)
            if d == 2:
                rel_s = rel[idx] / Ls[cands, None, None]
                ok, W, code = _ritter_2d(C, rel_s, self.L[pm[idx]] / Ls[cands, None])
                den = np.einsum("nke,nek->nk", W, C)
                with np.errstate(invalid="ignore", divide="ignore"):
                    val = np.einsum("nke,nec->nkc", W, rhs[cands]) / den[:, :, None]
            else:
                ok, val = _rank_solve(C, rhs[cands])
                W = np.zeros((len(cands), int(k), neq))
                code = np.full((len(cands), int(k)), _LSQ)
            self.tied[pm[idx][~ok]] = True
            r, c = np.nonzero(ok)
            found.add(cands[r], idx[r, c], val[r, c], W[r, c], code[r, c], int(k))
        return found


class _Found:
    """Isolated unknowns of a batch of candidate free bodies (arrays, one row per solution)."""

    def __init__(self, pc, pm, kept, far, q0, Ls, col) -> None:
        self.pc, self.pm, self.kept, self.far, self.q0, self.Ls, self.col = (
            pc,
            pm,
            kept,
            far,
            q0,
            Ls,
            col,
        )
        self.cand: list[np.ndarray] = []
        self.pair: list[np.ndarray] = []
        self.value: list[np.ndarray] = []
        self.w: list[np.ndarray] = []
        self.code: list[np.ndarray] = []
        self.k: list[np.ndarray] = []
        self.offsets = np.concatenate([[0], np.cumsum(np.bincount(pc, minlength=len(q0)))])

    def add(self, cand, pair, value, w, code, k) -> None:
        self.cand.append(cand)
        self.pair.append(pair)
        self.value.append(value)
        self.w.append(w)
        self.code.append(code)
        self.k.append(np.full(len(cand), k))

    def rows(self):
        if not self.cand or sum(len(c) for c in self.cand) == 0:
            return None
        return (
            np.concatenate(self.cand),
            np.concatenate(self.pair),
            np.concatenate(self.value),
            np.concatenate(self.w),
            np.concatenate(self.code),
            np.concatenate(self.k),
        )


def _ritter_2d(
    C: np.ndarray, P: np.ndarray, Lk: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Ritter equations for every unknown of a batch of 2D cuts.

    C: (n, 3, k) lines (ex, ey, m/Ls) about the cut's reference point; P: (n, k, 2) kept-side
    joints of the members, and Lk: (n, k) their lengths, both in units of the cut size Ls.
    Returns ok (n, k), W (n, k, 3) unit equation rows, code (n, k).
    """
    n, _, k = C.shape
    ok = np.zeros((n, k), dtype=bool)
    W = np.zeros((n, k, 3))
    code = np.full((n, k), _MOMENT)
    rows = np.arange(n)
    crosses = {}
    for j, m in itertools.combinations(range(k), 2):
        a, b = C[:, :, j], C[:, :, m]
        cr = np.column_stack(
            [
                a[:, 1] * b[:, 2] - a[:, 2] * b[:, 1],
                a[:, 2] * b[:, 0] - a[:, 0] * b[:, 2],
                a[:, 0] * b[:, 1] - a[:, 1] * b[:, 0],
            ]
        )
        crosses[j, m] = (cr, np.sqrt((cr * cr).sum(axis=1)))
    for t in range(k):
        others = [j for j in range(k) if j != t]
        ct = C[:, :, t]
        if not others:
            w = np.column_stack([ct[:, 0], ct[:, 1], np.zeros(n)])
        else:
            best = np.zeros((n, 3))
            best_norm = np.zeros(n)
            for j, m in itertools.combinations(others, 2):
                cr, nm = crosses[j, m]
                better = nm > best_norm
                best[better] = cr[better]
                best_norm[better] = nm[better]
            w = best
            single = best_norm <= ELIMINATED_RTOL
            if single.any():
                w = w.copy()
                w[single] = _one_other(
                    ct[single],
                    C[single][:, :, others[0]],
                    P[single][:, others[0]],
                    Lk[single][:, others[0]],
                )
        norm = _row_norm(w)
        norm[norm == 0] = 1.0
        w = w / norm[:, None]
        parallel = np.abs(w[:, 2]) <= PARALLEL_RTOL * _row_norm(w[:, :2])
        w[parallel, 2] = 0.0
        good = np.abs(np.einsum("ne,ne->n", w, ct)) > ISOLATED_RTOL
        for j in others:
            good &= np.abs(np.einsum("ne,ne->n", w, C[:, :, j])) <= ELIMINATED_RTOL
        ok[:, t] = good
        W[rows, t] = w
        code[:, t] = np.where(parallel, _FORCE, _MOMENT)
    return ok, W, code


def _one_other(ct: np.ndarray, cj: np.ndarray, pj: np.ndarray, lj: np.ndarray) -> np.ndarray:
    """Equation rows isolating member t when one other unknown line j remains (scaled units).

    A force sum normal to j if t crosses it at a fair angle; otherwise moments about whichever
    joint of j gives t the longer lever arm.
    """
    ej = cj[:, :2]
    normal = np.column_stack([-ej[:, 1], ej[:, 0], np.zeros(len(ct))])
    sine = np.abs(ct[:, 0] * ej[:, 1] - ct[:, 1] * ej[:, 0])
    pa = pj
    pb = pj + lj[:, None] * ej
    wa = np.column_stack([pa[:, 1], -pa[:, 0], np.ones(len(ct))])
    wb = np.column_stack([pb[:, 1], -pb[:, 0], np.ones(len(ct))])
    la = np.abs(np.einsum("ne,ne->n", wa, ct)) / _row_norm(wa)
    lb = np.abs(np.einsum("ne,ne->n", wb, ct)) / _row_norm(wb)
    moment = np.where((la >= lb)[:, None], wa, wb)
    return np.where((sine >= SHALLOW_SINE)[:, None], normal, moment)


def _rank_solve(C: np.ndarray, rhs: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Which unknowns a batch of equation systems C x = rhs determines, and their values.

    Unknown i is determined iff it has no component in the null space of C.
    """
    n, neq, k = C.shape
    _, s, vh = np.linalg.svd(C, full_matrices=True)
    smax = s[:, :1] if s.size else np.zeros((n, 1))
    rank = (s > RANK_RTOL * np.maximum(smax, 1e-300)).sum(axis=1)
    null_rows = np.arange(k)[None, :, None] >= rank[:, None, None]
    share = np.where(null_rows, np.abs(vh), 0.0).max(axis=1)
    ok = share < NULL_RTOL
    val = np.linalg.pinv(C, rcond=RANK_RTOL) @ rhs
    return ok, val


# -- readable 3D equations ---------------------------------------------------------------------
def _cross3(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Cross product over the last axis (np.cross costs ~10 us of overhead per call)."""
    return np.stack(
        [
            a[..., 1] * b[..., 2] - a[..., 2] * b[..., 1],
            a[..., 2] * b[..., 0] - a[..., 0] * b[..., 2],
            a[..., 0] * b[..., 1] - a[..., 1] * b[..., 0],
        ],
        axis=-1,
    )


def _readable_3d(
    p: np.ndarray, e: np.ndarray, far: np.ndarray, scale: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Moment axes or force directions that isolate member 0 of each 3D cut, for the derivation.

    p, e, far: (n, k, 3) kept-side joints, directions and far joints of each cut's unknown
    members, the target first; scale: (n,) cut sizes. Candidate axes pass through a joint of
    another unknown; the axis direction a is the part of the target's moment vector normal to the
    other members' moment vectors about that joint, so a.m_j = 0 eliminates every other j.
    Preference: an axis through a point where two or more others meet (Ritter), then a force sum
    normal to all the others, then any axis found, else the least-squares solve.
    Returns code (n,), point (n, 3) and vector (n, 3), NaN where unused.
    """
    n, k, _ = p.shape
    code = np.full(n, _LSQ)
    point = np.full((n, 3), np.nan)
    vector = np.full((n, 3), np.nan)
    if k == 1:
        code[:] = _FORCE
        vector[:] = e[:, 0]
        return code, point, vector
    rows = np.arange(n)
    op, oe, of = p[:, 1:], e[:, 1:], far[:, 1:]
    Q = np.concatenate([op, of], axis=1)  # (n, q, 3)
    mt = _cross3(p[:, None, 0] - Q, e[:, None, 0])  # (n, q, 3)
    mj = _cross3(op[:, None] - Q[:, :, None], oe[:, None])  # (n, q, m, 3)
    tol = ELIMINATED_RTOL * scale
    tiny = np.linalg.norm(mj, axis=3) <= tol[:, None, None]
    through = tiny.sum(axis=2)
    B = np.where(tiny[..., None], 0.0, mj)
    _, sv, vh = np.linalg.svd(B, full_matrices=True)  # vh: (n, q, 3, 3)
    smax = np.maximum(sv.max(axis=2, initial=0.0), 1e-300)
    rank = (sv > RANK_RTOL * smax[..., None]).sum(axis=2)
    coef = np.einsum("nqij,nqj->nqi", vh, mt) * (np.arange(3) < rank[..., None])
    a = mt - np.einsum("nqi,nqij->nqj", coef, vh)
    na = np.linalg.norm(a, axis=2)
    valid = na > ISOLATED_RTOL * scale[:, None]
    a = a / np.where(valid, na, 1.0)[..., None]
    valid &= np.abs(np.einsum("nqmj,nqj->nqm", mj, a)).max(axis=2) <= tol[:, None]
    lever = np.abs(np.einsum("nqj,nqj->nq", a, mt)) / scale[:, None]
    valid &= lever > ISOLATED_RTOL
    key = np.where(valid, through * 1e3 + np.minimum(lever, 999.0), -1.0)
    pick = key.argmax(axis=1)
    has_axis = valid[rows, pick]
    ritter = has_axis & (through[rows, pick] >= 2)
    uu, ss, _ = np.linalg.svd(oe.transpose(0, 2, 1), full_matrices=False)  # (n, 3, m)
    keep = ss > RANK_RTOL * np.maximum(ss.max(axis=1, initial=0.0), 1e-300)[:, None]
    along = np.einsum("nim,ni->nm", uu, e[:, 0]) * keep
    normal = e[:, 0] - np.einsum("nim,nm->ni", uu, along)
    nn = np.linalg.norm(normal, axis=1)
    force_ok = ~ritter & (nn > ISOLATED_RTOL)
    moment = ritter | (~force_ok & has_axis)
    code[moment] = _MOMENT
    point[moment] = Q[rows, pick][moment]
    vector[moment] = a[rows, pick][moment]
    code[force_ok] = _FORCE
    vector[force_ok] = normal[force_ok] / nn[force_ok, None]
    return code, point, vector


# -- the solve ---------------------------------------------------------------------------------
class _Solver:
    def __init__(self, model: Model) -> None:
        self.eng = _Engine(model)
        eng = self.eng
        self.known = np.zeros(eng.nb, dtype=bool)
        self.t = np.full((eng.nb, eng.ncols), np.nan)
        self.cuts: list[_CutBatch] = []
        self.budget = MAX_BODY_CANDIDATES
        self.notes: list[str] = []

    # plain lists for the per-candidate Python loops of the non-straight free bodies, made when
    # that pass first runs (at 10^6 members converting them took 0.8 s, and most trusses never
    # need the pass)
    @functools.cached_property
    def ends_list(self) -> list[list[int]]:
        return self.eng.ends.tolist()

    @functools.cached_property
    def cost_list(self) -> list[int]:
        return self.eng.cost.tolist() if self.eng.nj else []

    @functools.cached_property
    def support_list(self) -> list[int]:
        return self.eng.support_count.tolist()

    @functools.cached_property
    def incidence(self) -> list[list[int]]:
        """Members at each joint as plain lists; only the non-straight pass needs them."""
        eng = self.eng
        members = eng.inc_members.tolist()
        ptr = eng.inc_ptr.tolist()
        return [members[ptr[j] : ptr[j + 1]] for j in range(eng.nj)]

    def run(self) -> None:
        eng = self.eng
        if eng.nb == 0 or eng.nj < 2:
            return
        directions = _directions(eng.model)
        sweeps: list[_Sweep] = []
        while True:
            progress = False
            for sw in self._sweeps_in_turn(directions, sweeps):
                progress |= self._straight(sw) > 0
            if progress:
                continue
            if self.known.all() or self.budget <= 0:
                break
            moved = sum(self._moved(sw) for sw in sweeps)
            if moved == 0:
                break
        if self.budget <= 0 and not self.known.all():
            self.notes.append(
                f"the search for non-straight free bodies stopped after {MAX_BODY_CANDIDATES} "
                "candidates"
            )
        self.sweeps = sweeps

    def _sweeps_in_turn(self, directions: np.ndarray, sweeps: list[_Sweep]) -> Iterator[_Sweep]:
        """The sweeps along `directions` in order, each built when first reached and kept in
        `sweeps`; none is built once every member is known (its cuts would find nothing). A plane
        Pratt truss is solved by its first three of six directions: building the other three cost
        a sixth of the route at 10^6 members, and their arrays the memory."""
        for k, normal in enumerate(directions):
            if k == len(sweeps):
                if self.known.all():
                    return
                sweeps.append(self.eng.sweep(normal))
            yield sweeps[k]

    def _straight(self, sw: _Sweep) -> int:
        eng = self.eng
        n_layers = len(sw.stops) + 1
        unknown = eng._gap_counts(sw.lo, sw.hi, sw.crossing & ~self.known, n_layers)
        cand = (unknown >= 1) & (unknown <= MAX_UNKNOWNS[eng.d]) & (sw.total <= MAX_CROSSING[eng.d])
        if sw.snapshot is not None:
            fresh = self.known & ~sw.snapshot
            cand &= eng._gap_counts(sw.lo, sw.hi, sw.crossing & fresh, n_layers) > 0
        sw.snapshot = self.known.copy()
        gaps = np.flatnonzero(cand)
        keep_left, ok = eng._keep_left(sw, gaps)
        gaps, keep_left = gaps[ok], keep_left[ok]
        if not len(gaps):
            return 0
        pc, pm = eng._pairs(sw, gaps, np.flatnonzero(sw.crossing))
        low_end_start = sw.group[eng.ends[pm, 0]] == sw.lo[pm]
        start_kept = low_end_start == keep_left[pc]
        kept = np.where(start_kept, eng.ends[pm, 0], eng.ends[pm, 1])
        cand_ext = np.where(keep_left[:, None, None], sw.side_ext[0][gaps], sw.side_ext[1][gaps])
        found = eng.evaluate(pc, pm, kept, cand_ext, self.known, self.t)

        names, order, nj = eng.joint_names, sw.order, eng.nj
        held = np.where(keep_left, sw.side_supports[0][gaps], sw.side_supports[1][gaps]) > 0
        sides = _StraightSides(names, order, sw.stops[gaps], keep_left, nj)
        return self._accept(found, sides, held, straight=True)

    def _moved(self, sw: _Sweep) -> int:
        """Non-straight free bodies: a straight cut's side with 1-2 joints of a layer moved
        across."""
        eng = self.eng
        n_layers = len(sw.stops) + 1
        # a layer next to the gap must hold a joint with an unknown member: moving it may cut that
        # member alone (the unknown need not cross the straight gap itself)
        open_joint = np.zeros(eng.nj, dtype=bool)
        unknown_members = np.flatnonzero(~self.known)
        open_joint[eng.ends[unknown_members].ravel()] = True
        open_layer = np.bincount(sw.group[open_joint], minlength=n_layers) > 0
        gaps = np.flatnonzero(
            (open_layer[:-1] | open_layer[1:]) & (sw.total <= MAX_CROSSING[eng.d])
        )
        if not len(gaps) or self.budget <= 0:
            return 0
        pc_g, pm_g = eng._pairs(sw, gaps, np.flatnonzero(sw.crossing))
        offsets = np.concatenate([[0], np.cumsum(np.bincount(pc_g, minlength=len(gaps)))])
        starts = np.concatenate([[0], sw.stops])
        ends_ = np.concatenate([sw.stops, [eng.nj]])
        group = sw.group.tolist()
        known = self.known.tolist()
        stops = sw.stops.tolist()
        side_cost = (sw.side_cost[0].tolist(), sw.side_cost[1].tolist())
        side_sup = (sw.side_supports[0].tolist(), sw.side_supports[1].tolist())
        order = sw.order.tolist()
        bodies: list[tuple[list[int], list[int], bool, int, tuple[int, ...], bool]] = []
        for gi, g in enumerate(gaps.tolist()):
            base = set(pm_g[offsets[gi] : offsets[gi + 1]].tolist())
            for layer_index, to_right in ((g, True), (g + 1, False)):
                layer = order[starts[layer_index] : ends_[layer_index]]
                if len(layer) > MAX_LAYER:
                    continue
                for size in range(1, MAX_MOVED + 1):
                    for moved in itertools.combinations(layer, size):
                        if self.budget <= 0:
                            break
                        body = self._moved_body(
                            group, known, stops, side_cost, side_sup, g, base, moved, to_right
                        )
                        if body is not None:
                            self.budget -= 1
                            bodies.append(body)
        if not bodies:
            return 0
        pcs, pms, kepts, sides, sup = [], [], [], [], []
        ext = np.empty((len(bodies), eng.neq, eng.ncols))
        for c, (members, kept, keep_left, g, moved, to_right) in enumerate(bodies):
            pcs.append(np.full(len(members), c))
            pms.append(members)
            kepts.append(kept)
            # moved joints join the kept side, or leave it
            joins = to_right != keep_left
            ext[c] = sw.side_ext[0 if keep_left else 1][g] + (1 if joins else -1) * eng.ext[
                list(moved)
            ].sum(axis=0)
            added, removed = (moved, ()) if joins else ((), moved)
            if keep_left:
                sides.append(
                    _JointSet(eng.joint_names, sw.order, 0, int(sw.stops[g]), added, removed)
                )
            else:
                sides.append(
                    _JointSet(eng.joint_names, sw.order, int(sw.stops[g]), eng.nj, added, removed)
                )
            sup.append(
                bool(
                    side_sup[0 if keep_left else 1][g]
                    + (1 if joins else -1) * sum(self.support_list[j] for j in moved)
                    > 0
                )
            )
        found = eng.evaluate(
            np.concatenate(pcs),
            np.array([m for ms in pms for m in ms], dtype=np.int64),
            np.array([j for ks in kepts for j in ks], dtype=np.int64),
            ext,
            self.known,
            self.t,
        )
        return self._accept(found, sides, sup, straight=False)

    def _moved_body(
        self,
        group: list[int],
        known: list[bool],
        stops: list[int],
        side_cost,
        side_sup,
        g: int,
        base: set[int],
        moved: tuple[int, ...],
        to_right: bool,
    ):
        """The free body `left of gap g` with `moved` joints sent across (pure Python: it runs per
        candidate). Returns (members, kept ends, keep_left, g, moved, to_right) or None if
        unusable."""
        eng = self.eng
        ends = self.ends_list
        incidence = self.incidence
        moved_set = set(moved)

        def left(j: int) -> bool:
            return (group[j] <= g) != (j in moved_set)

        # Most candidates are rejected (a crossed-diagonal truss of 10^5 members rejects 5 x 10^5
        # of them), so the checks that need no member lists come first (every check is pure: the
        # order does not change the answer) and the others are written out inline: a moved joint
        # j is on the left when group[j] > g, any other joint when group[j] <= g.
        sign = -1 if to_right else 1  # moved joints leave (to_right) or join the left side
        n_left = stops[g] + sign * len(moved)
        if n_left <= 0 or n_left >= eng.nj:
            return None
        shift_sup = sign * sum(self.support_list[j] for j in moved)
        sup_l, sup_r = side_sup[0][g] + shift_sup, side_sup[1][g] - shift_sup
        if eng.first is None and sup_l and sup_r:
            return None
        incident: set[int] = set()
        for j in moved:
            incident.update(incidence[j])
            stays_left = group[j] > g  # the moved joint's new side
            for m in incidence[j]:  # each moved joint must join its new side through a member
                a, b = ends[m]
                other = b if a == j else a
                if other not in moved_set and (group[other] <= g) == stays_left:
                    break
            else:
                return None
        members = [m for m in base if m not in incident]
        for m in incident:
            a, b = ends[m]
            if ((group[a] <= g) != (a in moved_set)) != ((group[b] <= g) != (b in moved_set)):
                members.append(m)
        if not members or len(members) > MAX_CROSSING[eng.d]:
            return None
        unknown = 0
        for m in members:
            if not known[m]:
                unknown += 1
        if unknown == 0 or unknown > MAX_UNKNOWNS[eng.d]:
            return None
        shift_cost = sign * sum(self.cost_list[j] for j in moved)
        cost_l, cost_r = side_cost[0][g] + shift_cost, side_cost[1][g] - shift_cost
        if eng.first is not None:
            pin_l = left(eng.pin) if eng.pin >= 0 else False
            keep_left = cost_l < cost_r or (cost_l == cost_r and not pin_l)
        else:
            keep_left = sup_l == 0 and (sup_r > 0 or cost_l <= cost_r)
        members.sort()
        kept = [ends[m][0] if left(ends[m][0]) == keep_left else ends[m][1] for m in members]
        return members, kept, keep_left, g, moved, to_right

    def _accept(
        self,
        found: _Found,
        side: Sequence[_JointSet],
        supports: Sequence[bool] | np.ndarray,
        *,
        straight: bool,
    ) -> int:
        """Record the first cut found for every newly isolated member."""
        rows = found.rows()
        if rows is None:
            return 0
        cand, pair, value, w, code, k = rows
        member = found.pm[pair]
        fresh = ~self.known[member]
        if not fresh.any():
            return 0
        # the keys of the choice are masked; the other columns are read at the chosen rows only
        kept_rows = None if fresh.all() else np.flatnonzero(fresh)
        if kept_rows is not None:
            cand, k, member = cand[kept_rows], k[kept_rows], member[kept_rows]
        n_known = found.offsets[cand + 1] - found.offsets[cand] - k
        order = np.lexsort((cand, n_known, k, member))
        member_sorted = member[order]
        first = order[np.concatenate([[True], member_sorted[1:] != member_sorted[:-1]])]
        first = first[np.argsort(cand[first], kind="stable")]
        at = first if kept_rows is None else kept_rows[first]  # chosen rows, unmasked columns
        cs = cand[first]
        self.cuts.append(
            _build_cuts(
                self.eng,
                found,
                cs,
                pair[at],
                w[at],
                code[at],
                _Mapped(side, cs),
                np.asarray(supports, dtype=bool)[cs],
                straight,
                self.known,
                self.t,
            )
        )
        members = member[first]
        self.t[members] = value[at]
        self.known[members] = True
        return len(first)


def _build_cuts(
    eng: _Engine,
    found: _Found,
    cand: np.ndarray,
    pair: np.ndarray,
    w: np.ndarray,
    code: np.ndarray,
    sides: Sequence[_JointSet],
    uses_reactions: Sequence[bool] | np.ndarray,
    straight: bool,
    known: np.ndarray,
    t: np.ndarray,
) -> _CutBatch:
    """SectionCut records for accepted solutions (row r: candidate cand[r], target pair[r]).

    The Ritter points, force directions and the joints at the points are found for all rows at
    once; the per-cut Python work is only packing names (10^5 cuts must take about a second).
    """
    n = len(cand)
    d = eng.d
    q0 = found.q0[cand]
    Ls = found.Ls[cand]
    code = code.copy()
    point = np.full((n, d), np.nan)
    axis = np.full((n, d), np.nan)
    if d == 2:
        mom = code == _MOMENT
        with np.errstate(invalid="ignore", divide="ignore"):
            o = np.column_stack([-w[:, 1] / w[:, 2], w[:, 0] / w[:, 2]]) * Ls[:, None] + q0
        point[mom] = o[mom]
        nxy = _row_norm(w[:, :2])
        nxy[nxy == 0] = 1.0
        axis[~mom] = w[~mom, :2] / nxy[~mom, None]
    else:
        # unknown pairs of every row, the target first, grouped by their number
        size = found.offsets[cand + 1] - found.offsets[cand]
        unknown_of = [
            [int(pair[r])]
            + [
                q
                for q in range(int(found.offsets[c]), int(found.offsets[c] + size[r]))
                if q != pair[r] and not known[found.pm[q]]
            ]
            for r, c in enumerate(cand.tolist())
        ]
        counts = np.array([len(u) for u in unknown_of])
        for k in np.unique(counts):
            rows = np.flatnonzero(counts == k)
            idx = np.array([unknown_of[r] for r in rows], dtype=np.int64)
            c3, pt, ax = _readable_3d(
                eng.X[found.kept[idx]], found.col[idx, :3], eng.X[found.far[idx]], Ls[rows]
            )
            code[rows] = c3
            point[rows] = pt
            axis[rows] = ax
    # the joint at the moment point, looked for among the joints of each cut's members (only
    # the rows that have a point: a force sum has none)
    has_point = ~np.isnan(point[:, 0])
    with_point = np.flatnonzero(has_point)
    lo = found.offsets[cand[with_point]]
    size = found.offsets[cand[with_point] + 1] - lo
    row_of = np.repeat(with_point, size)
    q = np.repeat(lo, size) + (np.arange(int(size.sum())) - np.repeat(np.cumsum(size) - size, size))
    joint_at = np.full(n, -1)
    tol = COINCIDENT_RTOL * np.maximum(Ls, eng.extent)
    for ends in (found.kept, found.far):
        j = ends[q]
        hit = _row_norm(eng.X[j] - point[row_of]) <= tol[row_of]
        hit &= joint_at[row_of] < 0
        rows_hit = row_of[hit]
        if len(rows_hit):
            # row_of ascends, so the first hit of each row starts a run (no sort needed)
            first = np.flatnonzero(np.concatenate([[True], rows_hit[1:] != rows_hit[:-1]]))
            joint_at[rows_hit[first]] = j[hit][first]
    snapped = joint_at >= 0
    point[snapped] = eng.X[joint_at[snapped]]
    point = point + eng.centre + 0.0
    # rounding noise (1e-16) and -0.0 would only clutter the report
    axis = np.where(np.abs(axis) < 1e-14, 0.0, axis) + 0.0
    return _CutBatch(
        names=eng.member_names,
        joint_names=eng.joint_names,
        pm=found.pm,
        kept=found.kept,
        is_known=known[found.pm],
        # not a copy: a known member's force is never written again, and a record reads only the
        # members known when it was accepted, so every batch shares the solver's array (and the
        # pickled result holds it once, with the forces)
        t=t,
        offsets=found.offsets,
        cand=cand,
        pair=pair,
        point=point,
        has_point=has_point,
        axis=axis,
        code=code,
        joint_at=joint_at,
        sides=sides,
        uses_reactions=np.asarray(uses_reactions, dtype=bool),
        straight=straight,
    )


_Item = TypeVar("_Item")


class _Lazy(Sequence[_Item]):
    """A sequence whose items are built when read: subclasses give __len__ and _item(index)."""

    def _item(self, index: int) -> _Item:
        raise NotImplementedError

    @overload
    def __getitem__(self, index: int) -> _Item: ...

    @overload
    def __getitem__(self, index: slice) -> list[_Item]: ...

    def __getitem__(self, index: int | slice) -> _Item | list[_Item]:
        if isinstance(index, slice):
            return [self._item(k) for k in range(*index.indices(len(self)))]
        if index < 0:
            index += len(self)
        if not 0 <= index < len(self):
            raise IndexError(index)
        return self._item(index)


class _CutBatch(_Lazy["SectionCut"]):
    """The cuts accepted in one pass, kept as arrays; a SectionCut is built when it is read.

    Building 10^5 records of name tuples up front cost more than finding the cuts, and most runs
    read only a few of them (a report prints dozens). `known` and `t` are snapshots taken when the
    cuts were accepted, so each record shows what was known at that step.
    """

    def __init__(
        self,
        *,
        names: Sequence[str],
        joint_names: Sequence[str],
        pm: np.ndarray,
        kept: np.ndarray,
        is_known: np.ndarray,
        t: np.ndarray,
        offsets: np.ndarray,
        cand: np.ndarray,
        pair: np.ndarray,
        point: np.ndarray,
        has_point: np.ndarray,
        axis: np.ndarray,
        code: np.ndarray,
        joint_at: np.ndarray,
        sides: Sequence[_JointSet],
        uses_reactions: np.ndarray,
        straight: bool,
    ) -> None:
        # Indices as int32 and method codes as int8: a large result is pickled back from a
        # forked child, and its size is the cost (records convert every index with int()).
        wide = max(len(names), len(joint_names), len(pm)) >= 2**31
        index = np.int64 if wide else np.int32
        pm, kept, offsets, cand, pair, joint_at = (
            a.astype(index, copy=False) for a in (pm, kept, offsets, cand, pair, joint_at)
        )
        self._names, self._jn = names, joint_names
        self._pm, self._kept, self._is_known, self._t = pm, kept, is_known, t
        self._offsets, self._cand, self._pair = offsets, cand, pair
        self._point, self._has_point, self._axis, self._joint_at = point, has_point, axis, joint_at
        self._code = code.astype(np.int8, copy=False)
        self._sides, self._uses_reactions, self._straight = sides, uses_reactions, straight

    def __len__(self) -> int:
        return len(self._cand)

    def _item(self, r: int) -> SectionCut:
        names, jn, pm = self._names, self._jn, self._pm
        c, tp = int(self._cand[r]), int(self._pair[r])
        span = range(int(self._offsets[c]), int(self._offsets[c + 1]))
        is_known = self._is_known
        known_idx = [x for x in span if is_known[x]]
        point = tuple(self._point[r].tolist()) if self._has_point[r] else None
        axis = None if np.isnan(self._axis[r, 0]) else tuple(self._axis[r].tolist())
        at = int(self._joint_at[r])
        return SectionCut(
            target=names[int(pm[tp])],
            cut_members=tuple(names[int(pm[x])] for x in span),
            known_members=tuple(names[int(pm[x])] for x in known_idx),
            method=_METHOD_NAMES[int(self._code[r])],
            moment_point=point,
            axis=axis,
            kept_ends=tuple(jn[int(self._kept[x])] for x in span),
            eliminated=tuple(names[int(pm[x])] for x in span if x != tp and not is_known[x]),
            moment_joint=jn[at] if at >= 0 else None,
            known_forces=tuple(tuple(self._t[int(pm[x])].tolist()) for x in known_idx),
            uses_reactions=bool(self._uses_reactions[r]),
            straight=self._straight,
            _side=self._sides[r],
        )


class _StraightSides(_Lazy["_JointSet"]):
    """The kept side of each gap of a straight sweep, as a joint set built when read."""

    def __init__(
        self,
        names: tuple[str, ...],
        order: np.ndarray,
        stops: np.ndarray,
        lefts: np.ndarray,
        nj: int,
    ) -> None:
        self._names, self._order, self._stops, self._lefts, self._nj = (
            names,
            order,
            stops,
            lefts,
            nj,
        )

    def __len__(self) -> int:
        return len(self._stops)

    def _item(self, c: int) -> _JointSet:
        stop = int(self._stops[c])
        if self._lefts[c]:
            return _JointSet(self._names, self._order, 0, stop)
        return _JointSet(self._names, self._order, stop, self._nj)


class _Mapped(_Lazy["_JointSet"]):
    """sides[key] for each key, read when needed (a free body's joint set per accepted cut)."""

    def __init__(self, sides: Sequence[_JointSet], keys: np.ndarray) -> None:
        self._sides, self._keys = sides, keys

    def __len__(self) -> int:
        return len(self._keys)

    def _item(self, r: int) -> _JointSet:
        return self._sides[int(self._keys[r])]


class _CutSequence(_Lazy["SectionCut"]):
    """Every accepted cut, in solve order, across the batches of each pass."""

    def __init__(self, batches: Sequence[_CutBatch]) -> None:
        self._batches = [b for b in batches if len(b)]
        self._starts = np.cumsum([0] + [len(b) for b in self._batches])

    def __len__(self) -> int:
        return int(self._starts[-1])

    def _item(self, r: int) -> SectionCut:
        b = int(np.searchsorted(self._starts, r, side="right")) - 1
        return self._batches[b][r - int(self._starts[b])]

    def target_indices(self) -> np.ndarray:
        """The member each cut solves, in solve order, as positions in the model's members
        (one integer array: no names, no cut records)."""
        parts = [np.asarray(batch._pm[batch._pair], dtype=np.int64) for batch in self._batches]
        return np.concatenate(parts) if parts else np.zeros(0, dtype=np.int64)

    def __iter__(self) -> Iterator[SectionCut]:
        for batch in self._batches:
            for k in range(len(batch)):
                yield batch[k]


def solve_sections(model: Model) -> SectionSolution:
    """Member forces by the method of sections, with one cut per reached member."""
    solver = _Solver(model)
    eng = solver.eng
    notes: list[str] = []
    d = model.dim
    if eng.first is not None:
        notes.append(
            f"reactions from overall equilibrium first (moments about {eng.first[2]}, then force "
            "sums), as a hand calc does"
        )
    elif model.reactions:
        need = EQUATIONS[d]
        why = (
            f"{len(model.reactions)} reaction components, not {need}"
            if len(model.reactions) != need
            else "the supports are parallel or concurrent"
        )
        notes.append(
            f"the reactions cannot be found from overall equilibrium ({why}); the section route "
            "covers only free bodies with no support on them"
        )
    solver.run()
    notes.extend(solver.notes)
    unreached = _reasons(solver)
    members = solver.t
    if unreached:
        notes.append(f"{len(unreached)} of {eng.nb} members not reached by a cut")
    return SectionSolution(
        forces=ForceResult(
            "sections", tuple(model.load_names), members, eng.reactions.copy(), tuple(notes)
        ),
        cuts=_CutSequence(solver.cuts),
        unreached=unreached,
        notes=tuple(notes),
        reactions_first=eng.first is not None,
        reaction_joint=eng.first[2] if eng.first is not None else None,
    )


def _reasons(solver: _Solver) -> dict[str, str]:
    eng = solver.eng
    missing = np.flatnonzero(~solver.known)
    if not len(missing):
        return {}
    neq = eng.neq
    never = np.iinfo(np.int64).max  # read once: np.iinfo costs 1.5 us per call
    fewest = np.full(eng.nb, never)
    for sw in getattr(solver, "sweeps", []):
        n_layers = len(sw.stops) + 1
        unknown = eng._gap_counts(sw.lo, sw.hi, sw.crossing & ~solver.known, n_layers)
        ms = missing[sw.crossing[missing]]
        if not len(ms) or not len(unknown):
            continue
        bounds = np.column_stack([sw.lo[ms], sw.hi[ms]]).ravel()
        mins = np.minimum.reduceat(np.append(unknown, 0), bounds)[::2]
        fewest[ms] = np.minimum(fewest[ms], mins)
    suffix = (
        ""
        if eng.first is not None or not eng.model.reactions
        else (
            "; only free bodies without supports were usable, because the reactions cannot be "
            "found from overall equilibrium"
        )
    )
    out: dict[str, str] = {}
    limit = 2000  # joint-only checks are per member in Python; beyond this the generic reason
    # Members with the same facts share one text object: building 10^5 equal strings cost more
    # than the section search of a grid, and a shared object is pickled once (the forked child
    # sends this dict back).
    texts: dict[tuple[int, str | None, bool], str] = {}
    names = eng.member_names
    few_of = fewest[missing].tolist()
    tied_of = eng.tied[missing].tolist()
    for count, m in enumerate(missing.tolist()):
        few = few_of[count]
        joint = _joint_alone(eng, solver.known, m) if count < limit else None
        key = (few, joint, tied_of[count])
        shared = texts.get(key)
        if shared is not None:
            out[names[m]] = shared
            continue
        if eng.nj < 2 or few == never:
            text = "no cut tried crosses it"
        elif joint is not None:
            text = (
                f"only the equilibrium of joint {joint} on its own isolates it (method of joints); "
                f"every section through it cuts at least {few} members with unknown forces"
            )
        elif tied_of[count] and few <= neq:
            text = (
                "each cut through it with few enough unknowns leaves it tied to the other cut "
                "members (their lines meet on its line or are parallel to it), so no equation "
                "isolates it"
            )
        else:
            text = (
                f"every section tried through it cuts at least {few} members with unknown forces, "
                f"more than the {neq} equations of one free body can resolve"
            )
        out[names[m]] = texts[key] = text + suffix
    return out


def _joint_alone(eng: _Engine, known: np.ndarray, m: int) -> str | None:
    """A joint of member m whose own equations isolate it, if there is one."""
    for j in (int(eng.ends[m, 0]), int(eng.ends[m, 1])):
        if eng.support_count[j] and eng.first is None:
            continue
        inc = eng.inc_members[eng.inc_ptr[j] : eng.inc_ptr[j + 1]]
        unk = [x for x in inc.tolist() if not known[x]]
        if len(unk) > eng.neq // (2 if eng.d == 3 else 1) + (eng.d - 2):
            continue
        E = np.array([eng.u[x] for x in unk]).T  # (d, k)
        _, s, vh = np.linalg.svd(E, full_matrices=True)
        rank = int((s > RANK_RTOL * max(s.max(initial=0.0), 1e-300)).sum())
        i = unk.index(m)
        if np.abs(vh[rank:, i]).max(initial=0.0) < NULL_RTOL:
            return eng.joint_names[j]
    return None


# -- user-requested cuts and single-cut solves -------------------------------------------------
def cut_for_members(model: Model, member_ids: Sequence[str]) -> SectionCut:
    """A cut through exactly these members, its free body and the equation for the first member
    it isolates.

    The free body is a part of the truss that removing the members separates; the side without
    the pin is kept when possible, then the one with fewer loads and reactions. Raises ValueError,
    in plain words, if they do not split the truss or if no member of the cut can be isolated
    (too many unknowns, or concurrent or parallel lines).
    """
    from scipy.sparse import coo_matrix
    from scipy.sparse.csgraph import connected_components

    from verify.errors import did_you_mean

    ids = list(dict.fromkeys(str(m) for m in member_ids))
    if not ids:
        raise ValueError("a cut needs at least one member")
    for m in ids:
        if m not in model.member_index:
            raise ValueError(
                f"member '{m}' is not in the model.{did_you_mean(m, model.member_ids)}"
            )
    eng = _Engine(model)
    cut_idx = np.array([model.member_index[m] for m in ids], dtype=np.int64)
    keep = np.ones(eng.nb, dtype=bool)
    keep[cut_idx] = False
    ends = eng.ends[keep]
    graph = coo_matrix((np.ones(len(ends)), (ends[:, 0], ends[:, 1])), shape=(eng.nj, eng.nj))
    n_parts, label = connected_components(graph, directed=False)
    listed = ", ".join(ids)
    if n_parts < 2:
        raise ValueError(
            f"removing {listed} leaves the truss in one piece, so these members do not form a "
            "section; a section must cut the truss into two parts"
        )
    la = label[eng.ends[cut_idx, 0]]
    lb = label[eng.ends[cut_idx, 1]]
    candidates = []
    for part in range(n_parts):
        crosses = (la == part) != (lb == part)
        if crosses.all():
            candidates.append(part)
    if not candidates:
        stray = [ids[i] for i in range(len(ids)) if la[i] == lb[i]]
        detail = (
            f"{', '.join(stray)} would have both ends on the same side"
            if stray
            else "no single connected part is separated from the rest by exactly these members"
        )
        raise ValueError(f"the members {listed} do not form one section: {detail}")
    options = []
    for part in candidates:
        joints = np.flatnonzero(label == part)
        supp = int(eng.support_count[joints].sum())
        if eng.first is None and supp:
            continue
        has_pin = eng.pin >= 0 and label[eng.pin] == part
        options.append(
            (bool(has_pin), int(eng.cost[joints].sum()), len(joints), part, joints, supp > 0)
        )
    if not options:
        raise ValueError(
            f"every free body of the cut through {listed} holds a support, and the reactions "
            "cannot be found from overall equilibrium"
        )
    options.sort(key=lambda o: o[:3])
    _, _, _, part, joints, uses_reactions = options[0]
    kept = np.where(label[eng.ends[cut_idx, 0]] == part, eng.ends[cut_idx, 0], eng.ends[cut_idx, 1])
    ext = eng.ext[joints].sum(axis=0)[None]
    known = np.zeros(eng.nb, dtype=bool)
    found = eng.evaluate(
        np.zeros(len(cut_idx), dtype=np.int64),
        cut_idx,
        kept,
        ext,
        known,
        np.zeros((eng.nb, eng.ncols)),
    )
    rows = found.rows()
    if rows is None:
        raise ValueError(_unresolvable(eng, found, ids))
    cand, pair, value, w, code, k = rows
    first = int(np.argmin(pair))
    side = _JointSet(eng.joint_names, joints.astype(np.int64), 0, len(joints))
    return _build_cuts(
        eng,
        found,
        cand[first : first + 1],
        pair[first : first + 1],
        w[first : first + 1],
        code[first : first + 1],
        [side],
        [uses_reactions],
        False,
        known,
        np.zeros((eng.nb, eng.ncols)),
    )[0]


def _unresolvable(eng: _Engine, found: _Found, ids: list[str]) -> str:
    """Why no member of a user-requested cut can be isolated."""
    listed = ", ".join(ids)
    k = len(ids)
    neq = eng.neq
    C = found.col.T  # (neq, k)
    rank = int(np.linalg.matrix_rank(C, tol=RANK_RTOL * max(np.abs(C).max(), 1e-300)))
    if eng.d == 2 and k >= 2:
        lines = found.col
        if np.linalg.norm(np.cross(lines[0], lines[1])) > 0:
            w = np.cross(lines[0], lines[1])
            w = w / np.linalg.norm(w)
            if np.all(np.abs(lines @ w) <= ELIMINATED_RTOL):
                if abs(w[2]) <= PARALLEL_RTOL * np.linalg.norm(w[:2]):
                    return (
                        f"the lines of {listed} are all parallel: a force sum across them "
                        "gives 0 = 0 and the cut cannot isolate any of them"
                    )
                o = np.array([-w[1] / w[2], w[0] / w[2]]) * found.Ls[0] + found.q0[0] + eng.centre
                where = f"({', '.join(f'{x:.6g}' for x in o)})"
                for j in range(eng.nj):
                    if np.linalg.norm(eng.model.xyz[j] - o) <= COINCIDENT_RTOL * eng.extent:
                        where = f"joint {eng.joint_names[j]} {where}"
                        break
                return (
                    f"the lines of {listed} all pass through one point, {where}: moments about it "
                    f"vanish for every one of them and the force sums give only 2 equations for "
                    f"{k} unknowns, so the cut cannot isolate any of them"
                )
    if k > neq:
        return (
            f"the cut through {listed} has {k} unknown forces but a free body gives only {neq} "
            "equations, and no member is isolated: the lines of the others neither meet at one "
            "point nor are all parallel"
        )
    return (
        f"the {neq} equations of the free body have rank {rank} for the {k} unknown forces of "
        f"{listed}, and no member is isolated by them (concurrent or parallel lines)"
    )


@dataclass(frozen=True)
class ExternalForce:
    """A load or a reaction acting on a cut's free body, for one load column."""

    kind: str  # "load" | "reaction"
    label: str  # joint id for a load, "<joint>.<axis>" for a reaction component
    point: np.ndarray
    force: np.ndarray  # global vector
    value: float  # the load's magnitude along its vector, or the reaction along its direction


def kept_external(model: Model, cut: SectionCut, column: int) -> list[ExternalForce]:
    """Every load and reaction on the kept side of `cut`, for one load column."""
    idx = cut._side.indices()
    d = model.dim
    F = model.load_matrix()[:, column].reshape(-1, d)
    out: list[ExternalForce] = []
    for j in idx.tolist():
        if np.any(F[j] != 0):
            out.append(
                ExternalForce(
                    "load",
                    model.joints[j].id,
                    model.xyz[j],
                    F[j].copy(),
                    float(np.linalg.norm(F[j])),
                )
            )
    kept = set(idx.tolist())
    reacting = [k for k, r in enumerate(model.reactions) if model.joint_index[r.joint] in kept]
    if reacting:
        first = solve_reactions(model)
        if first is None:
            raise ValueError(
                "the kept side of this cut holds supports, and the reactions cannot be found from "
                "overall equilibrium"
            )
        for k in reacting:
            reaction = model.reactions[k]
            j = model.joint_index[reaction.joint]
            value = float(first[0][k, column])
            out.append(
                ExternalForce(
                    "reaction",
                    reaction.label,
                    model.xyz[j],
                    np.asarray(reaction.direction) * value,
                    value,
                )
            )
    return out


def _column(model: Model, load_column: int | str) -> int:
    if isinstance(load_column, str):
        names = model.load_names
        if load_column not in names:
            from verify.errors import did_you_mean

            raise ValueError(
                f"load case '{load_column}' is not in the model.{did_you_mean(load_column, names)}"
            )
        return names.index(load_column)
    column = int(load_column)
    if not 0 <= column < len(model.load_names):
        raise ValueError(
            f"load column {column} is out of range (the model has {len(model.load_names)})"
        )
    return column


def equation_row(model: Model, cut: SectionCut, point: np.ndarray, force: np.ndarray) -> float:
    """The cut's equation applied to one force acting at `point` (its coefficient in the sum)."""
    if cut.method == FORCES_NORMAL and cut.axis is not None:
        return float(np.dot(np.asarray(cut.axis), force))
    if cut.method == MOMENTS and cut.moment_point is not None:
        rel = np.asarray(point, dtype=float) - np.asarray(cut.moment_point)
        if model.dim == 2:
            return float(rel[0] * force[1] - rel[1] * force[0])
        if cut.axis is not None:
            return float(np.dot(np.asarray(cut.axis), np.cross(rel, force)))
    raise ValueError("a least-squares cut has no single equation")


def cut_lines(model: Model, cut: SectionCut) -> list[tuple[str, str, np.ndarray, np.ndarray]]:
    """(member, kept joint, kept point, unit vector away from the free body) for each cut member."""
    out = []
    for member, joint in zip(cut.cut_members, cut.kept_ends, strict=True):
        i = model.member_index[member]
        u = model.unit_vectors[i]
        start = model.members[i].start
        e = u if start == joint else -u
        out.append((member, joint, model.xyz[model.joint_index[joint]], e))
    return out


def solve_cut(model: Model, cut: SectionCut, load_column: int | str) -> dict[str, float]:
    """Forces of the cut's unknown members that the cut determines, for one load column.

    The target comes from the cut's own equation (moments about the Ritter point or axis, or the
    force sum normal to the others); any other determined unknowns from the free body's full
    equation set with a rank test. Known members use the values carried in the cut.
    """
    column = _column(model, load_column)
    d = model.dim
    external = kept_external(model, cut, column)
    known = {m: f[column] for m, f in zip(cut.known_members, cut.known_forces, strict=True)}
    lines = cut_lines(model, cut)
    out: dict[str, float] = {}
    if cut.method != LEAST_SQUARES:
        total = sum(equation_row(model, cut, x.point, x.force) for x in external)
        coef_t = 0.0
        for member, _, p, e in lines:
            coef = equation_row(model, cut, p, e)
            if member == cut.target:
                coef_t = coef
            elif member in known:
                total += coef * known[member]
        out[cut.target] = -total / coef_t
    # the full set: F + sum N e = 0 and M + sum N (p x e) = 0, moments about the first kept joint
    ref = lines[0][2]
    ext = np.zeros(EQUATIONS[d])
    for x in external:
        ext[:d] += x.force
        ext[d:] += _line_moment((x.point - ref)[None], x.force[None])[0]
    unknown = [ln for ln in lines if ln[0] not in known]
    for member, _, p, e in lines:
        if member in known:
            ext[:d] += known[member] * e
            ext[d:] += known[member] * _line_moment((p - ref)[None], e[None])[0]
    scale = max(float(np.linalg.norm(p - ref)) for _, _, p, _ in lines) or 1.0
    C = np.array(
        [
            np.concatenate([e, _line_moment((p - ref)[None], e[None])[0] / scale])
            for _, _, p, e in unknown
        ]
    ).T
    rhs = -ext.copy()
    rhs[d:] /= scale
    ok, val = _rank_solve(C[None], rhs[None, :, None])
    for i, (member, _, _, _) in enumerate(unknown):
        if ok[0, i] and member not in out:
            out[member] = float(val[0, i, 0])
    if cut.target not in out:
        raise ValueError(f"the cut does not determine {cut.target}")
    return out
