"""Method of joints, in the order a hand calculation would take.

Algorithm (shared/REFERENCES.md 2.3, common practice):
1. If the supports are externally determinate (3 reaction components in 2D, 6 in 3D, not
   parallel or concurrent), find the reactions from overall equilibrium first, taking moments
   about the support with the most reaction components.
2. Repeatedly solve a joint with at most d unknown forces (d = 2 in 2D, 3 in 3D) whose unknown
   directions are independent. When none is left, a joint with d + 1 unknowns may still give some
   of them (e.g. the zero-force rule for a joint with two collinear members), which a hand calc
   also uses.
3. If unknowns remain (compound or complex trusses), say so and solve the rest simultaneously.

The order depends only on geometry, so it is found once and applied to every load column.
"""

from __future__ import annotations

from array import array
from collections import deque
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass, field
from itertools import islice
from typing import Any, NamedTuple, overload

import numpy as np
import scipy.sparse.linalg as spla

from verify.analysis.forces import ForceResult
from verify.analysis.run import AnalysisRun
from verify.model import Model

PARTIAL_GIVE_UP = 500  # consecutive fruitless d+1-unknown joints before partial steps stop
DEPENDENT_RTOL = 1e-9  # relative singular value below which unknown directions are dependent


class JointStep(NamedTuple):
    """One step of the hand calc: solve `unknowns` (columns of t) from the equations of `joints`.

    A named tuple: a 10^5-member truss takes 5x10^4 steps, and a frozen dataclass cost three
    times as much to make.
    """

    kind: str  # "reactions" | "joint" | "simultaneous"
    joints: tuple[str, ...]
    unknowns: tuple[int, ...]  # indices into t = [member forces; reactions]
    partial: bool = False  # some unknowns at this joint stay for later steps


class JointSteps(Sequence[JointStep]):
    """The steps of one solve, read like a tuple of JointStep.

    The plane two-unknown steps, nearly all of them on a large plane truss, are kept as flat
    (joint, unknown, unknown) integers and made into JointStep tuples only when read: a 10^6-member
    truss takes 5x10^5 steps, which the JSON output reads only for the joint order and a report
    reads only as far as the steps it shows.
    """

    def __init__(
        self,
        joints: Sequence[Any],
        plain: Sequence[int],
        others: list[tuple[int, JointStep]],
    ) -> None:
        # joints: the model's joints (read for their .id); plain: joint, c1, c2 per plane step;
        # others: (plane steps before it, step) for every other step, in order.
        self._joints = joints
        # Kept as 8-byte integers: the list's int objects cost ~36 bytes each (54 MB at 10^6).
        self._plain = plain if isinstance(plain, array) else array("q", plain)
        self._others = others
        self._all: tuple[JointStep, ...] | None = None

    def __len__(self) -> int:
        return len(self._plain) // 3 + len(self._others)

    def __repr__(self) -> str:  # a solution's repr names its steps without making them all
        return f"JointSteps({len(self)} steps)"

    def __iter__(self) -> Iterator[JointStep]:
        if self._all is not None:
            yield from self._all
            return
        joints, plain = self._joints, self._plain
        done = 0  # plane steps yielded
        for before, step in [*self._others, (len(plain) // 3, None)]:
            for k in range(3 * done, 3 * before, 3):
                yield JointStep("joint", (joints[plain[k]].id,), (plain[k + 1], plain[k + 2]))
            done = before
            if step is not None:
                yield step

    @overload
    def __getitem__(self, index: int) -> JointStep: ...

    @overload
    def __getitem__(self, index: slice) -> tuple[JointStep, ...]: ...

    def __getitem__(self, index: int | slice) -> JointStep | tuple[JointStep, ...]:
        if isinstance(index, slice) and self._all is None:
            start, stop, stride = index.indices(len(self))
            if stride == 1:  # the first steps a report shows: made without making the rest
                return tuple(islice(self, start, stop))
        if self._all is None:
            self._all = tuple(self)
        return self._all[index]

    def __eq__(self, other: object) -> bool:
        """Equal to the same steps, as JointSteps or as a tuple (like the tuple it stands for)."""
        if isinstance(other, JointSteps | tuple):
            return tuple(self) == tuple(other)
        return NotImplemented

    def joint_order(self) -> list[str]:
        """Ids of the joints solved one by one, in the order they were solved (read from the
        integers: no JointStep is made)."""
        joints, plain = self._joints, self._plain
        order: list[str] = []
        done = 0  # plane steps listed
        for before, step in [*self._others, (len(plain) // 3, None)]:
            order += [joints[j].id for j in plain[3 * done : 3 * before : 3]]
            done = before
            if step is not None and step.kind == "joint":
                order += step.joints
        return order


@dataclass(frozen=True)
class JointSolution:
    forces: ForceResult
    steps: Sequence[JointStep]
    reactions_first: bool
    moment_point: tuple[float, ...] | None  # where overall moments were taken, if reactions first
    moment_joint: str | None
    stalled: bool  # a simultaneous solve was needed
    max_residual: float  # largest out-of-balance force over all joint equations
    notes: tuple[str, ...] = field(default=())

    @property
    def order(self) -> list[str]:
        if isinstance(self.steps, JointSteps):
            return self.steps.joint_order()
        return [j for s in self.steps if s.kind == "joint" for j in s.joints]


def overall_equilibrium_matrix(model: Model, point: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Rows of overall equilibrium (forces, then moments about `point`) for reactions and loads.

    Returns (G, E) with G: equations x reactions and E: equations x load columns, so that the
    reactions R satisfy G R + E = 0.
    """
    d = model.dim
    rows = 3 if d == 2 else 6
    G = np.zeros((rows, len(model.reactions)))
    for k, reaction in enumerate(model.reactions):
        p = model.xyz[model.joint_index[reaction.joint]] - point
        n = np.asarray(reaction.direction)
        G[:d, k] = n
        G[d:, k] = _moment(p, n)
    F = model.load_matrix()
    E = np.zeros((rows, F.shape[1]))
    rel = model.xyz - point
    for axis in range(d):
        E[axis] = F[axis::d].sum(axis=0)
    if d == 2:
        E[2] = (rel[:, 0:1] * F[1::2] - rel[:, 1:2] * F[0::2]).sum(axis=0)
    else:
        fx, fy, fz = F[0::3], F[1::3], F[2::3]
        x, y, z = rel[:, 0:1], rel[:, 1:2], rel[:, 2:3]
        E[3] = (y * fz - z * fy).sum(axis=0)
        E[4] = (z * fx - x * fz).sum(axis=0)
        E[5] = (x * fy - y * fx).sum(axis=0)
    return G, E


def _moment(p: np.ndarray, n: np.ndarray) -> np.ndarray:
    if len(p) == 2:
        return np.array([p[0] * n[1] - p[1] * n[0]])
    return np.cross(p, n)


def solve_reactions(
    model: Model, run: AnalysisRun | None = None
) -> tuple[np.ndarray, np.ndarray, str] | None:
    """Reactions from overall equilibrium when the supports are externally determinate:
    (reactions x load columns, the moment point, its joint), or None.

    Kept by the analysis run: the one given, else the run of this model's analysis if there is
    one (the joint and section routes and every section calc sheet start here).
    """
    return (run if run is not None else AnalysisRun.of(model)).overall_reactions()


def overall_reactions(model: Model) -> tuple[np.ndarray, np.ndarray, str] | None:
    """solve_reactions without a run: computed each time it is called."""
    rows = 3 if model.dim == 2 else 6
    if len(model.reactions) != rows:
        return None
    counts: dict[str, int] = {}
    for reaction in model.reactions:
        counts[reaction.joint] = counts.get(reaction.joint, 0) + 1
    pivot_joint = max(counts, key=lambda j: (counts[j], -model.joint_index[j]))
    point = model.xyz[model.joint_index[pivot_joint]]
    G, E = overall_equilibrium_matrix(model, point)
    s = np.linalg.svd(G, compute_uv=False)
    if s.min() <= DEPENDENT_RTOL * s.max():
        return None  # parallel or concurrent supports: the reactions cannot come first
    R = np.linalg.solve(G, -E)
    return R, point, pivot_joint


def _view(array: np.ndarray) -> Any:
    """The array's buffer as a memoryview: indexing it reads or writes one element in place as a
    Python float, int or bool (typed Any: a memoryview is typed as holding ints)."""
    return array.data


class JointWalk(NamedTuple):
    """The joint-by-joint part of the method of joints (walk_joints): what a forked child sends
    back, so it holds no reference to the model (its 10^6 joints would be pickled with it)."""

    t: np.ndarray  # unknowns x load columns; NaN where no joint gave the force
    known: np.ndarray  # which unknowns the walk found
    plain: array  # joint, unknown, unknown of every plane two-unknown step (JointSteps)
    others: list[tuple[int, JointStep]]  # every other step, after how many plane steps
    notes: list[str]
    moment_point: tuple[float, ...] | None
    moment_joint: str | None


def solve_joints(
    model: Model, run: AnalysisRun | None = None, walk: JointWalk | None = None
) -> JointSolution:
    """Member forces and reactions by the method of joints, with the steps a hand calc takes.

    `run` shares the equilibrium matrix, its LU and the overall reactions with other routes;
    `walk`: this model's walk_joints, made elsewhere (a forked child of the pipeline), else
    made here.
    """
    run = run if run is not None else AnalysisRun(model)
    if walk is None:
        walk = walk_joints(model, run)
    return _finish(model, run, walk)


def walk_joints(model: Model, run: AnalysisRun) -> JointWalk:
    """Solve joint after joint while one has at most d unknowns (steps 1 and 2 of the module
    docstring), from the run's overall reactions; the simultaneous rest is left to _finish."""
    d = model.dim
    b = len(model.members)
    r = len(model.reactions)
    n_unknowns = b + r
    F = model.load_matrix()
    ncols = F.shape[1]
    # t by load column (row k of t_cols is column k of t), so the loop below reads and writes
    # one flat row per column through a memoryview: no list per unknown, no copy at the end.
    t_cols = np.full((ncols, n_unknowns), np.nan)
    known = np.zeros(n_unknowns, dtype=bool)
    # The steps (JointSteps): plane two-unknown steps as flat integers, the others as they are.
    plain: list[int] = []
    others: list[tuple[int, JointStep]] = []

    def add(step: JointStep) -> None:
        others.append((len(plain) // 3, step))

    notes: list[str] = []

    first = run.overall_reactions()
    moment_point = moment_joint = None
    if first is not None:
        R, point, moment_joint = first
        t_cols[:, b:] = R.T
        known[b:] = True
        moment_point = tuple(float(x) for x in point)
        add(JointStep("reactions", (moment_joint,), tuple(range(b, b + r))))
    elif r:
        determinate = 3 if d == 2 else 6
        why = f"more than {determinate}" if r > determinate else "parallel or concurrent"
        notes.append(
            f"the {r} reaction components cannot all be found from overall equilibrium "
            f"({why}); they are solved with the joints"
        )

    # Incidence: for every joint, the columns acting on it and their direction vectors.
    n_j = len(model.joints)
    u = model.unit_vectors
    r_joint, r_dir = model.reaction_arrays()
    ends = model.ends_index
    # Per joint: its columns and the d x k block of direction cosines acting on it, as views
    # into one array sorted by joint (vectorised; a loop per joint cost ~10 us each at 10^5).
    # Listed by column (each member's start, then its end; then the reactions), so a stable
    # sort by joint puts each joint's columns in column order: unknowns in member order.
    inc_joint = np.concatenate([ends.ravel(), r_joint])
    inc_col = np.concatenate([np.repeat(np.arange(b), 2), b + np.arange(r)])
    inc_vec = (
        np.concatenate([np.stack([u, -u], axis=1).reshape(2 * b, d), r_dir])
        if b + r
        else np.zeros((0, d))
    )
    order = np.argsort(inc_joint, kind="stable")
    inc_col, inc_vec = inc_col[order], np.ascontiguousarray(inc_vec[order].T)
    ptr = np.concatenate([[0], np.cumsum(np.bincount(inc_joint, minlength=n_j))])

    joints = model.joints
    counts = np.bincount(
        inc_joint[order], weights=(~known[inc_col]).astype(float), minlength=n_j
    ).astype(np.int64)
    del inc_joint, order
    primary: deque[int] = deque(np.flatnonzero((counts > 0) & (counts <= d)).tolist())
    secondary: deque[int] = deque(np.flatnonzero(counts == d + 1).tolist())
    unknown_count = counts.tolist()
    tried_partial: set[tuple[int, int]] = set()
    # Joints with d + 1 unknowns rarely give anything (only special geometry, e.g. two collinear
    # members); on large generic trusses trying each cost more than the whole solve. Stop trying
    # after PARTIAL_GIVE_UP fruitless attempts in a row.
    fruitless = 0

    # Plain-Python access for the 2D inner loop: at 10^5 members numpy's per-call overhead on
    # 2x2 blocks cost more than the arithmetic (same equations, same order, same results).
    # Memoryviews index the arrays in place (an element each time, as a Python float or int),
    # where lists made by tolist() cost time and a Python object per element up front.
    known_v = _view(known)
    t_v = [_view(row) for row in t_cols]
    neg_v = [_view(row) for row in np.ascontiguousarray((-F).T)]
    inc_col_v = _view(inc_col)
    vx_v = _view(inc_vec[0]) if d == 2 else _view(np.zeros(0))
    vy_v = _view(inc_vec[1]) if d == 2 else _view(np.zeros(0))
    ptr_v = _view(ptr)
    start_v = _view(np.ascontiguousarray(ends[:, 0]))
    end_v = _view(np.ascontiguousarray(ends[:, 1]))
    # The sum of the two end joints of each column (twice the joint for a reaction): the joint
    # at the other end of a column from the one being solved is one subtraction away.
    ends_sum = np.concatenate([ends[:, 0] + ends[:, 1], 2 * r_joint])
    sum_v = _view(ends_sum)
    r_joint_l = r_joint.tolist()
    primary_append, secondary_append = primary.append, secondary.append
    primary_popleft, secondary_popleft = primary.popleft, secondary.popleft
    t0_v = t_v[0] if ncols else known_v
    t1_v = t_v[1] if ncols > 1 else t0_v
    n0_v = neg_v[0] if ncols else known_v
    n1_v = neg_v[1] if ncols > 1 else n0_v
    plane = d == 2
    plain_append = plain.append

    def mark(cols: Iterable[int]) -> None:
        for c in cols:
            known_v[c] = True
            touched = (start_v[c], end_v[c]) if c < b else (r_joint_l[c - b],)
            for j in touched:
                left = unknown_count[j] - 1
                unknown_count[j] = left
                if 0 < left <= d:
                    primary_append(j)
                elif left == d + 1:
                    secondary_append(j)

    while True:
        if primary:
            joint = primary_popleft()
        elif secondary:
            joint = secondary_popleft()
        else:
            break
        count = unknown_count[joint]
        if count == 2 and plane:
            # The two-unknown joint of a plane truss, written out for one and two load columns
            # (each right-hand side is its own running sum: the order of the terms of each sum
            # is the incidence order whatever the number of columns).
            c1 = c2 = -1
            a1 = b1 = a2 = b2 = 0.0
            row = joint + joint  # the joint's x equation (two per joint; an add, not a multiply)
            if ncols == 2:
                x0, y0, x1, y1 = n0_v[row], n0_v[row + 1], n1_v[row], n1_v[row + 1]
                for p in range(ptr_v[joint], ptr_v[joint + 1]):
                    c = inc_col_v[p]
                    if known_v[c]:
                        ax = vx_v[p]
                        ay = vy_v[p]
                        k0 = t0_v[c]
                        k1 = t1_v[c]
                        x0 -= ax * k0
                        y0 -= ay * k0
                        x1 -= ax * k1
                        y1 -= ay * k1
                    elif c1 < 0:
                        c1, a1, b1 = c, vx_v[p], vy_v[p]
                    else:
                        c2, a2, b2 = c, vx_v[p], vy_v[p]
                det2 = a1 * b2 - a2 * b1
                solved = abs(det2) > DEPENDENT_RTOL
                if solved:
                    t0_v[c1] = (b2 * x0 - a2 * y0) / det2
                    t1_v[c1] = (b2 * x1 - a2 * y1) / det2
                    t0_v[c2] = (a1 * y0 - b1 * x0) / det2
                    t1_v[c2] = (a1 * y1 - b1 * x1) / det2
            elif ncols == 1:
                x0, y0 = n0_v[row], n0_v[row + 1]
                for p in range(ptr_v[joint], ptr_v[joint + 1]):
                    c = inc_col_v[p]
                    if known_v[c]:
                        ax = vx_v[p]
                        ay = vy_v[p]
                        k0 = t0_v[c]
                        x0 -= ax * k0
                        y0 -= ay * k0
                    elif c1 < 0:
                        c1, a1, b1 = c, vx_v[p], vy_v[p]
                    else:
                        c2, a2, b2 = c, vx_v[p], vy_v[p]
                det2 = a1 * b2 - a2 * b1
                solved = abs(det2) > DEPENDENT_RTOL
                if solved:
                    t0_v[c1] = (b2 * x0 - a2 * y0) / det2
                    t0_v[c2] = (a1 * y0 - b1 * x0) / det2
            else:
                rx = [n[row] for n in neg_v]
                ry = [n[row + 1] for n in neg_v]
                for p in range(ptr_v[joint], ptr_v[joint + 1]):
                    c = inc_col_v[p]
                    if known_v[c]:
                        ax, ay = vx_v[p], vy_v[p]
                        for k in range(ncols):
                            value = t_v[k][c]
                            rx[k] -= ax * value
                            ry[k] -= ay * value
                    elif c1 < 0:
                        c1, a1, b1 = c, vx_v[p], vy_v[p]
                    else:
                        c2, a2, b2 = c, vx_v[p], vy_v[p]
                det2 = a1 * b2 - a2 * b1
                solved = abs(det2) > DEPENDENT_RTOL
                if solved:
                    for k in range(ncols):
                        t_v[k][c1] = (b2 * rx[k] - a2 * ry[k]) / det2
                        t_v[k][c2] = (a1 * ry[k] - b1 * rx[k]) / det2
            if solved:
                plain_append(joint)
                plain_append(c1)
                plain_append(c2)
                # mark((c1, c2)) written out: it runs for every joint of a large plane truss.
                # This joint has no unknowns left; of the joints at the other ends of c1 and c2
                # (this joint again for a reaction) those left with at most 2 unknowns are queued,
                # c1's first. mark() would also queue this joint once more, after its count fell
                # to 1, which its turn would then pass over (count 0): that entry is left out.
                known_v[c1] = known_v[c2] = True
                j = sum_v[c1] - joint
                left = unknown_count[j] - 1
                unknown_count[j] = left
                if 0 < left <= 2:
                    primary_append(j)
                elif left == 3:
                    secondary_append(j)
                j = sum_v[c2] - joint
                left = unknown_count[j] - 1
                unknown_count[j] = left
                if 0 < left <= 2:
                    primary_append(j)
                elif left == 3:
                    secondary_append(j)
                unknown_count[joint] = 0
                continue
        elif count == 0 or count > d + 1:
            continue
        if count == d + 1:
            key = (joint, count)
            if key in tried_partial or fruitless >= PARTIAL_GIVE_UP:
                continue
            tried_partial.add(key)
        p0, p1 = ptr_v[joint], ptr_v[joint + 1]
        cols_j = inc_col[p0:p1]
        is_known = known[cols_j]
        block = inc_vec[:, p0:p1]
        M = block[:, ~is_known]
        # C-ordered like the rows it replaces, so the product below takes the same path.
        known_rows = np.ascontiguousarray(t_cols[:, cols_j[is_known]].T)
        rhs = -F[joint * d : (joint + 1) * d] - block[:, is_known] @ known_rows
        unknown = [int(c) for c in cols_j[~is_known]]
        if M.shape[1] == d:
            # The common hand-calc step: d independent unknowns, d equations. Every column is a
            # unit vector, so |det| is the sine-like measure of their independence.
            if d == 2:
                a, b_, c, e = M[0, 0], M[0, 1], M[1, 0], M[1, 1]
                det = float(a * e - b_ * c)
            else:
                det = float(np.linalg.det(M))
            if abs(det) > DEPENDENT_RTOL:
                if d == 2:
                    t_cols[:, unknown[0]] = (e * rhs[0] - b_ * rhs[1]) / det
                    t_cols[:, unknown[1]] = (a * rhs[1] - c * rhs[0]) / det
                else:
                    t_cols[:, unknown] = np.linalg.solve(M, rhs).T
                add(JointStep("joint", (joints[joint].id,), tuple(unknown)))
                mark(unknown)
                continue
        # Which unknowns does this joint determine? Those with no component in null(M).
        left, sv, vh = np.linalg.svd(M)
        rank = int((sv > DEPENDENT_RTOL * max(sv.max(), 1e-300)).sum())
        null = vh[rank:]
        determined = [
            k for k in range(len(unknown)) if null.size == 0 or np.abs(null[:, k]).max() < 1e-9
        ]
        if not determined:
            fruitless += 1
            continue
        fruitless = 0
        # Minimum-norm solution from the same SVD; its determined components are unique.
        solution = vh[:rank].T @ ((left[:, :rank].T @ rhs) / sv[:rank, None])
        chosen = [unknown[k] for k in determined]
        t_cols[:, chosen] = solution[determined].T
        add(
            JointStep(
                "joint",
                (joints[joint].id,),
                tuple(chosen),
                partial=len(chosen) < len(unknown),
            )
        )
        mark(chosen)

    return JointWalk(
        np.ascontiguousarray(t_cols.T),
        known,
        array("q", plain),
        others,
        notes,
        moment_point,
        moment_joint,
    )


def _finish(model: Model, run: AnalysisRun, walk: JointWalk) -> JointSolution:
    """The walk's forces with the simultaneous solve of any rest (step 3), and its residual."""
    d = model.dim
    b = len(model.members)
    n_unknowns = b + len(model.reactions)
    F = model.load_matrix()
    # Copies of what the steps below add to (the walk stays as it was made).
    t, known, plain, others, notes = (
        walk.t.copy(),
        walk.known,
        walk.plain,
        [*walk.others],
        [*walk.notes],
    )
    moment_point, moment_joint = walk.moment_point, walk.moment_joint

    def add(step: JointStep) -> None:
        others.append((len(plain) // 3, step))

    stalled = not known.all()
    if stalled:
        rest = np.nonzero(~known)[0]
        A = run.equilibrium_matrix()
        if len(rest) == A.shape[1] == A.shape[0]:
            # Nothing could be solved joint by joint: the simultaneous step is the whole system.
            t = run.equilibrium_lu().solve(-F).reshape(n_unknowns, -1)
            add(JointStep("simultaneous", tuple(model.joint_ids), tuple(rest.tolist())))
            notes.append(
                f"no joint with at most {d} unknowns: all {len(rest)} forces at "
                f"{len(model.joints)} joints are solved simultaneously (compound or complex truss)"
            )
            residual = A @ t + F
            return JointSolution(
                forces=ForceResult("joints", tuple(model.load_names), t[:b], t[b:], tuple(notes)),
                steps=JointSteps(model.joints, plain, others),
                reactions_first=moment_joint is not None,
                moment_point=moment_point,
                moment_joint=moment_joint,
                stalled=True,
                max_residual=float(np.abs(residual).max()) if residual.size else 0.0,
                notes=tuple(notes),
            )
        rows_needed = np.unique(A[:, rest].nonzero()[0])
        sub = A[rows_needed][:, rest].tocsc()
        rhs = -F[rows_needed] - A[rows_needed][:, known] @ np.nan_to_num(t[known])
        joints_involved = sorted({int(x) // d for x in rows_needed})
        if sub.shape[0] == sub.shape[1]:
            # Same ordering choice as the global solve: COLAMD fill-in explodes on 3D systems.
            solution = spla.splu(sub, permc_spec="MMD_ATA" if d == 3 else "COLAMD").solve(rhs)
        elif min(sub.shape) <= 3000:
            solution = np.linalg.lstsq(sub.toarray(), rhs, rcond=None)[0]
        else:
            normal = (sub.T @ sub).tocsc()
            solution = spla.splu(normal, permc_spec="MMD_AT_PLUS_A").solve(sub.T @ rhs)
        t[rest] = solution.reshape(len(rest), -1)
        add(
            JointStep(
                "simultaneous",
                tuple(model.joints[j].id for j in joints_involved),
                tuple(rest.tolist()),
            )
        )
        solved_joints = len(plain) // 3 + sum(s.kind == "joint" for _, s in others)
        notes.append(
            f"no joint with at most {d} unknowns remains after "
            f"{solved_joints} joint(s): {len(rest)} forces at "
            f"{len(joints_involved)} joints are solved simultaneously (compound or complex truss)"
        )
    A = run.equilibrium_matrix()
    residual = A @ t + F
    max_residual = float(np.abs(residual).max()) if residual.size else 0.0
    return JointSolution(
        forces=ForceResult("joints", tuple(model.load_names), t[:b], t[b:], tuple(notes)),
        steps=JointSteps(model.joints, plain, others),
        reactions_first=moment_joint is not None,
        moment_point=moment_point,
        moment_joint=moment_joint,
        stalled=stalled,
        max_residual=max_residual,
        notes=tuple(notes),
    )
