"""Direct stiffness method: the elastic member forces of a pin-jointed truss.

Needed where statics alone cannot give the forces (statically indeterminate trusses,
shared/REFERENCES.md 1.2 and 3.6); on a determinate truss it reproduces the statics answer whatever
the EA values are.

Formulation (common practice, stated in the terms of verify.analysis.equilibrium):

* Member i from joint s to joint e, unit vector u, stiffness k = EA/L. Its elongation is
  ``e_i = (x_e - x_s) . u = -(A_b^T x)_i`` for joint displacements x (B = A^T is the compatibility
  matrix, with A's sign convention), and its force is ``N_i = k_i e_i`` (tension positive).
* ``K = A_b diag(k) A_b^T``: the 2x2 (3x3) blocks ``k u u^T`` on (s, s) and (e, e), and
  ``-k u u^T`` on (s, e) and (e, s). Assembled vectorised as COO, converted once to CSC.
* Supports: a reaction component along the unit vector n at a joint holds that joint's
  displacement along n at zero. Each joint's free directions form an orthonormal basis of the
  complement of its reaction directions (a batched SVD; an inclined roller is no special case).
  These bases are the columns of a sparse matrix T (dofs x free), and ``K_f = T^T K T``,
  ``f_f = T^T f``, ``x = T K_f^{-1} f_f``.
* Reactions come afterwards from equilibrium at each supported joint: the reaction components
  balance the member forces and the loads there (least squares per joint; exact when the
  directions at a joint are independent, minimum-norm split when they are parallel).

Ordering (shared/PERFORMANCE.md item 4): no single SuperLU ordering is safe for K. Symmetric-mode
MMD_AT_PLUS_A was best on a 10^5-member 3D grid (0.87 s against 3.7 s for COLAMD) but its fill
exploded on an offset double-layer grid (> 60 s against 2.6 s). So we try MMD_AT_PLUS_A first in
symmetric mode (diagonal pivots, valid because K_f is symmetric positive definite for a stable
truss) and fall back to COLAMD with partial pivoting if

* a sample of K_f predicts its fill explosion (see below): then it is not tried at all,
* it has not finished within its time box (see below), or
* it fails (a zero pivot without pivoting).

Small systems (at most DIRECT_FREE_LIMIT free dofs) are factorised directly. There MMD's worst
case, measured here on the offset grid, stays below 0.1 s. Larger ones run the MMD attempt in a
forked child process that is killed when the time box runs out. SuperLU cannot be interrupted,
and a thread left running would keep a core and gigabytes of fill busy. The child returns the
solution, not the factor, and only the solution is needed. Where fork() is not available the
COLAMD route is taken directly. The notes state the ordering actually used.

The time box grows with the size of the reduced K: ``ORDERING_SECONDS_PER_NONZERO`` per stored
nonzero of K_f, at least ``ORDERING_TIME_BOX_MIN`` and at most ``ORDERING_TIME_BOX`` (what a
fixed box of 1.5 s cost: a 10^4-member offset grid waited 1.5 s for an MMD attempt that could
not finish, where COLAMD then took 0.06 s). Calibration, measured here (2 cores, quiet machine,
4 repeats each, factorisation + solve in the forked child; grids from bench/generate.py with
``[stiffness] EA`` added):

============================  =======  =========  ========  ===========  ========
K_f of                        members  nonzeros   MMD       per nonzero  COLAMD
============================  =======  =========  ========  ===========  ========
determinate 3D grid             1,040     13,316  0.004 s   0.3 us       0.004 s
determinate 3D grid             2,948     38,768  0.009 s   0.23 us      0.016 s
determinate 3D grid            10,168    136,124  0.040 s   0.3 us       0.091 s
determinate 3D grid            30,388    410,384  0.16 s    0.40 us      0.53 s
determinate 3D grid            49,868    675,224  0.31 s    0.46 us      1.05 s
determinate 3D grid           100,104  1,359,148  0.87 s    0.64 us      3.7 s
2D Pratt, crossed diagonals   100,001    498,000  0.09 s    0.18 us      0.06 s
offset double-layer grid        2,888     30,176  0.045 s   1.5 us       0.013 s
offset double-layer grid        9,800    103,744  2.2 s     21 us        0.064 s
offset double-layer grid       29,768    317,204  > 10 s    > 31 us      0.34 s
============================  =======  =========  ========  ===========  ========

Where MMD wins it stayed at or below 0.64 us per nonzero (0.76 us in a slower repeat of the
10^5-member grid, 1.03 s); where its fill exploded it took 21 us and more. 2 us per nonzero leaves
the winners several times their time and stops the explosions after a tenth of theirs: the
9,800-member offset grid waited 0.21 s instead of 1.5 s (now none: see the sample below).
Timings here vary with other work on the machine (the 10^4 grid's MMD took 0.18-0.31 s while
another benchmark ran, against its box of 0.27 s); an attempt stopped early costs only the COLAMD
solve (0.09 s there) and notes say so.
The floor of 0.1 s covers the fork and the smallest time-boxed systems (just above
DIRECT_FREE_LIMIT); from 750,000 nonzeros the box is at its cap of 1.5 s, which the 10^5-member
grid's MMD (0.87-1.03 s) still needs.

No rule by size alone can spare the offset grid its wait: at 10^5 members its K_f has fewer
nonzeros (1,073,636) than the determinate grid's, so it waited the full 1.5 s box before COLAMD
(1.9 to 2.3 s). Its fill, though, shows the explosion early and without timing noise. Fill of
the symmetric-mode MMD over COLAMD's, measured here on the whole K_f, rises with size on the offset
grid (1.26, 1.5, 2.2, 3.5, 3.8, 6.3 at 800 to 9,800 members) and stays low where MMD wins (0.34
to 0.73 on the determinate grids, 1.09 on the crossed Pratt). So above 2 x MMD_SAMPLE_FREE free
dofs the same ratio is measured on a sample first: the principal submatrix of the
MMD_SAMPLE_FREE dofs reached breadth-first from the middle one (both factorisations of it take
0.004 to 0.06 s). On the sample the offset grids of 9,800, 29,768 and 100,352 members gave 1.93,
1.93 and 1.72, the determinate grids of 9,680 and 100,104 members 0.62 and 0.60, the crossed
Pratts of 10^4 and 10^5 members 1.09 and a plain Pratt 1.00. Above MMD_SAMPLE_FILL_LIMIT = 1.5
MMD is not tried: on every truss measured such a sample meant a whole K_f on which MMD's fill
exceeded COLAMD's, where the attempt could win nothing. Below it the time box still guards a
truss whose sample misleads.

Back-check: every answer is checked against equilibrium (max |A t + f|) and the figure recorded.
A mechanism makes K_f singular. An exactly singular factorisation, or a pivot ratio below
K_PIVOT_SINGULAR, raises :class:`SingularStiffnessError`. K pivots alone do not prove stability:
PERFORMANCE.md measured sound long trusses at 2e-12. The stability check
(verify.analysis.stability) is the authority on mechanisms.

Accuracy caveat (PERFORMANCE.md): cond(K) ~ cond(A)^2, so on very long determinate trusses
(thousands of panels) the statics route is more accurate than this one; the recorded residual
shows it.
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from scipy.sparse.csgraph import breadth_first_order

from verify.analysis.forces import ForceResult
from verify.analysis.lu_factors import factor_fill
from verify.analysis.run import AnalysisRun, pivot_ratio
from verify.forking import SERIAL_ENV, Forked, ForkFailed, ForkTimeout
from verify.malloc_reuse import defaults_in_child
from verify.model import Model

ORDERING_TIME_BOX = 1.5  # s, the cap: MMD took 0.87 s on the 10^5-member grid, where it wins
ORDERING_TIME_BOX_MIN = 0.1  # s: the fork and the smallest time-boxed systems
ORDERING_SECONDS_PER_NONZERO = 2e-6  # of K_f; calibration in the module docstring
DIRECT_FREE_LIMIT = (
    2000  # free dofs: MMD's worst case measured here stays below 0.1 s (no time box)
)
K_PIVOT_SINGULAR = (
    1e-15  # min/max |U_ii|; sound long trusses measured down to 2e-12 (PERFORMANCE.md)
)
MMD_SAMPLE_FREE = 2000  # free directions in the sample that predicts MMD's fill (<= DIRECT_...)
MMD_SAMPLE_FILL_LIMIT = 1.5  # sample's MMD fill / COLAMD fill above this: MMD not tried
SUPPORT_RANK_TOL = 1e-9  # singular value of a joint's unit reaction directions counted as zero
RESIDUAL_RTOL = 1e-8  # back-check: residual above this fraction of the load scale earns a note
EQUAL_EA_NOTE = "equal EA assumed: every output says so"
# A probe entry below this fraction of the probe's size is round-off: see SelfStressProbe.
SELF_STRESS_RTOL = 1e-7
SELF_STRESS_PROBES = 2  # random probes (independent right-hand sides); see SelfStressProbe
SELF_STRESS_PROJECTIONS = 8  # at most; the probe's states are projected until they settle
SETTLED = 1e-2 * SELF_STRESS_RTOL  # of r: a projection removing no more has settled them
UNSETTLED_MARGIN = 10.0  # unsettled: round-off is below this times what the last one removed

# K_f^-1 of the loads, and the self-stress probe's states (None: no probe)
Solved = tuple[np.ndarray, "SelfStressStates | None"]


class MissingStiffnessError(ValueError):
    """Some members have no EA, and no equal-EA assumption was requested."""

    def __init__(self, members: Sequence[str]) -> None:
        self.members = tuple(members)
        shown = ", ".join(f"'{m}'" for m in self.members[:10])
        more = f" and {len(self.members) - 10} more" if len(self.members) > 10 else ""
        super().__init__(
            f"{len(self.members)} member(s) have no axial stiffness EA: {shown}{more}; the elastic "
            "forces of an indeterminate truss depend on EA. Give EA (or A and E) per member or a "
            "default in [stiffness], or assume equal EA explicitly."
        )

    def __reduce__(self) -> tuple[type, tuple[tuple[str, ...]]]:
        # Made again from its members (its message is built from them) when it comes back from
        # a child process (AnalysisRun.start_elastic).
        return type(self), (self.members,)


class SingularStiffnessError(ValueError):
    """The reduced stiffness matrix is singular: the truss (with its supports) is a mechanism."""


@dataclass(frozen=True)
class ElasticSolution:
    """Elastic forces, reactions and joint displacements for every load column of the model.

    ``displacements`` is dofs x load columns, in the case's length unit (joint i, direction c is
    row ``i * dim + c``). ``max_residual`` is max |A t + f| over every joint equation and column,
    in the case's force unit. ``fixed_by_statics`` is per member: True when the member lies
    outside every state of self-stress (see :class:`SelfStressProbe`). The arrays are
    read-only: a run keeps the solution and hands the same one to every caller.
    """

    forces: ForceResult  # route="stiffness"
    displacements: np.ndarray  # dofs x load columns
    max_residual: float
    equal_EA_assumed: bool
    fixed_by_statics: np.ndarray  # members, bool
    notes: tuple[str, ...] = field(default=())

    def read_only(self) -> ElasticSolution:
        """This solution, its arrays made read-only (as made, and again when it comes back from
        a child process): a run shares it with every caller (AnalysisRun.elastic)."""
        for array in (
            self.forces.member_forces,
            self.forces.reactions,
            self.displacements,
            self.fixed_by_statics,
        ):
            array.setflags(write=False)
        return self


def member_stiffness(
    model: Model, *, assume_equal_EA: float | None = None
) -> tuple[np.ndarray, list[str]]:
    """EA per member (force units) and notes. Raises MissingStiffnessError when EA is missing.

    With ``assume_equal_EA`` every member takes that value, including members that have their own.
    Mixing given values with an arbitrary assumed one would make the forces depend on the assumed
    value. With equal EA everywhere the forces depend on geometry alone.
    """
    notes: list[str] = []
    if assume_equal_EA is not None:
        value = float(assume_equal_EA)
        if not math.isfinite(value) or value <= 0:
            raise ValueError(
                f"assume_equal_EA must be a positive finite number, got {assume_equal_EA!r}"
            )
        given = len(model.members) - len(model.members_without_stiffness())
        notes.append(EQUAL_EA_NOTE)
        if given:
            notes.append(f"the assumed EA = {value:g} replaced the EA given for {given} member(s)")
        return np.full(len(model.members), value), notes
    missing = model.members_without_stiffness()
    if missing:
        raise MissingStiffnessError(missing)
    return model.member_EA(), notes


def _support_layout(model: Model) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Supported joints, each reaction's (joint position in that list, slot at that joint), and
    the padded direction stack D (supported joints x slots x dim), zero rows for empty slots."""
    d = model.dim
    r = len(model.reactions)
    if r == 0:
        return np.zeros(0, dtype=np.int64), np.zeros((0, 2), dtype=np.int64), np.zeros((0, 1, d))
    r_joint = np.array([model.joint_index[x.joint] for x in model.reactions], dtype=np.int64)
    r_dir = np.array([x.direction for x in model.reactions], dtype=float).reshape(r, d)
    supported, pos = np.unique(r_joint, return_inverse=True)
    order = np.argsort(pos, kind="stable")
    counts = np.bincount(pos, minlength=len(supported))
    starts = np.concatenate([[0], np.cumsum(counts)[:-1]])
    slot = np.empty(r, dtype=np.int64)
    slot[order] = np.arange(r) - np.repeat(starts, counts)
    slots = max(int(counts.max()), d)
    D = np.zeros((len(supported), slots, d))
    D[pos, slot] = r_dir
    return supported, np.column_stack([pos, slot]), D


def free_direction_basis(model: Model) -> tuple[sp.csc_matrix, list[str]]:
    """T (dofs x free): orthonormal free directions of every joint, joint by joint.

    A joint without reactions keeps its global axes; a supported joint keeps the orthonormal
    complement of the span of its reaction directions (right singular vectors of zero singular
    value). Notes name joints whose reaction directions are linearly dependent.
    """
    d = model.dim
    nj = len(model.joints)
    supported, _, D = _support_layout(model)
    free = np.ones((nj, d), dtype=bool)
    vectors = np.broadcast_to(np.eye(d), (nj, d, d)).copy()  # vectors[j, k] = k-th free direction
    notes: list[str] = []
    if len(supported):
        _, S, Vh = np.linalg.svd(D, full_matrices=True)  # S: (ns, d) since slots >= d
        rank = (S > SUPPORT_RANK_TOL).sum(axis=1)
        free[supported] = np.arange(d)[None, :] >= rank[:, None]
        vectors[supported] = Vh
        counts = (np.abs(D).sum(axis=2) > 0).sum(axis=1)
        dependent = supported[counts > rank]
        if len(dependent):
            names = ", ".join(f"'{model.joints[j].id}'" for j in dependent[:10])
            notes.append(
                f"the reaction directions at joint(s) {names} are linearly dependent: their split "
                "between those components is not determined by statics or stiffness; the "
                "minimum-norm split is reported"
            )
    joint_of, slot_of = np.nonzero(free)  # row-major: joint by joint
    ncols = len(joint_of)
    rows = (joint_of[:, None] * d + np.arange(d)).ravel()
    cols = np.repeat(np.arange(ncols), d)
    vals = vectors[joint_of, slot_of].ravel()
    keep = vals != 0.0
    T = sp.coo_matrix((vals[keep], (rows[keep], cols[keep])), shape=(model.dofs, ncols)).tocsc()
    return T, notes


def assemble_stiffness(model: Model, EA: np.ndarray) -> sp.csc_matrix:
    """The global stiffness matrix K (dofs x dofs, unconstrained), vectorised COO assembly."""
    d = model.dim
    b = len(model.members)
    k = EA / model.lengths
    u = model.unit_vectors
    blocks = k[:, None, None] * u[:, :, None] * u[:, None, :]  # (b, d, d)
    s = model.ends_index[:, 0]
    e = model.ends_index[:, 1]
    comp = np.arange(d)
    rs = s[:, None, None] * d + comp[None, :, None]
    re = e[:, None, None] * d + comp[None, :, None]
    cs = s[:, None, None] * d + comp[None, None, :]
    ce = e[:, None, None] * d + comp[None, None, :]
    shape = (b, d, d)
    rows = np.concatenate([np.broadcast_to(x, shape).ravel() for x in (rs, re, rs, re)])
    cols = np.concatenate([np.broadcast_to(x, shape).ravel() for x in (cs, ce, ce, cs)])
    vals = np.concatenate([blocks.ravel(), blocks.ravel(), -blocks.ravel(), -blocks.ravel()])
    return sp.coo_matrix((vals, (rows, cols)), shape=(model.dofs, model.dofs)).tocsc()


def reactions_from_equilibrium(
    model: Model, member_forces: np.ndarray, loads: np.ndarray, run: AnalysisRun | None = None
) -> np.ndarray:
    """Reaction components (r x columns) balancing member forces and loads at each supported joint.

    Solves ``A_R R = -(A_b N + f)`` joint by joint in the least-squares sense (batched pseudo-
    inverse of each joint's direction matrix), so a joint with parallel reaction components gets
    the minimum-norm split.
    """
    r = len(model.reactions)
    cols = loads.shape[1]
    if r == 0:
        return np.zeros((0, cols))
    d = model.dim
    b = len(model.members)
    A = (run if run is not None else AnalysisRun(model)).equilibrium_matrix()
    g = A[:, :b] @ member_forces + loads  # net force on each joint without the reactions
    supported, where, D = _support_layout(model)
    G = np.transpose(D, (0, 2, 1))  # (ns, d, slots): columns are the directions
    pinv = np.linalg.pinv(G, rcond=SUPPORT_RANK_TOL)  # (ns, slots, d)
    rows = supported[:, None] * d + np.arange(d)
    R_pad = -np.einsum("jsd,jdc->jsc", pinv, g[rows])  # (ns, slots, cols)
    return R_pad[where[:, 0], where[:, 1]]


def _symmetric_mmd(K: sp.csc_matrix) -> spla.SuperLU:
    return spla.splu(
        K, permc_spec="MMD_AT_PLUS_A", diag_pivot_thresh=0.0, options={"SymmetricMode": True}
    )


def _solve_both(lu: spla.SuperLU, rhs: np.ndarray, probe: SelfStressProbe | None) -> Solved:
    # The probe's columns in calls of their own, not appended to the loads: the load columns then
    # come out bit for bit as they would without it (a multi-column solve may sum in another
    # order).
    return lu.solve(rhs), (probe.states(lu.solve) if probe is not None else None)


def _mmd_solve(
    K: sp.csc_matrix, rhs: np.ndarray, probe: SelfStressProbe | None
) -> tuple[Solved, float, int, float]:
    """Runs in a forked process, so a runaway factorisation can be killed: ((x, self-stress
    states), pivot ratio, fill, seconds). With malloc's defaults: its time box is wall-clock
    time, and reusing freed blocks it shares with its parent (verify.malloc_reuse) slowed the
    10^6-member X-braced truss's MMD from 1.1 s past its 1.5 s box."""
    defaults_in_child()
    start = time.perf_counter()
    lu = _symmetric_mmd(K)
    solved = _solve_both(lu, rhs, probe)
    return solved, pivot_ratio(lu), factor_fill(lu), time.perf_counter() - start


def mmd_sample_fill(K: sp.csc_matrix) -> tuple[float, int] | None:
    """MMD's fill over COLAMD's on a sample of K, and the sample's size; None when a sample
    factorisation fails.

    The sample is the principal submatrix of the MMD_SAMPLE_FREE free directions first reached
    breadth-first (in the graph of K) from the middle one: a patch of the truss, itself
    symmetric positive definite. Both factorisations of it take a few hundredths of a second,
    and MMD's worst case at that size stays below 0.1 s (DIRECT_FREE_LIMIT).
    """
    order = breadth_first_order(K, K.shape[0] // 2, directed=False, return_predecessors=False)
    keep = np.sort(order[:MMD_SAMPLE_FREE])
    patch = K[keep][:, keep].tocsc()
    try:
        mmd = _symmetric_mmd(patch)
        colamd = spla.splu(patch, permc_spec="COLAMD")
    except RuntimeError:
        return None
    return factor_fill(mmd) / factor_fill(colamd), len(keep)


def ordering_time_box(nonzeros: int) -> float:
    """Seconds the MMD attempt on a reduced K with this many stored nonzeros may take (see the
    module docstring for the calibration)."""
    return min(
        ORDERING_TIME_BOX, max(ORDERING_TIME_BOX_MIN, ORDERING_SECONDS_PER_NONZERO * nonzeros)
    )


def _time_boxed_mmd(
    K: sp.csc_matrix, rhs: np.ndarray, time_box: float, probe: SelfStressProbe | None = None
) -> tuple[tuple[Solved, float, int, float] | None, str]:
    """Symmetric MMD factorisation and solve in a child process, stopped after `time_box` seconds.

    Returns (((x, self-stress states), pivot_ratio, fill, seconds) or None, reason for falling
    back).
    """
    child = Forked.start(_mmd_solve, K, rhs, probe)
    if not child.forked:  # fork() not allowed here, or it failed: never run MMD without its box
        return None, (
            f"no child process to time-box MMD_AT_PLUS_A in (no fork() here, {SERIAL_ENV} set, "
            "other threads running, or fork() failed)"
        )
    try:
        return child.result(timeout=time_box), ""
    except ForkTimeout:
        return None, (
            f"MMD_AT_PLUS_A did not finish within the {time_box:.2g} s time box (its fill can "
            "explode on some 3D grids) and was stopped"
        )
    except ForkFailed as exc:
        return None, f"MMD_AT_PLUS_A in symmetric mode failed ({exc})"
    finally:
        child.cancel()  # nothing once it has answered; an interruption leaves no child behind


def _solve_reduced(
    K: sp.csc_matrix,
    rhs: np.ndarray,
    time_box: float | None,
    probe: SelfStressProbe | None = None,
) -> tuple[Solved, float, list[str]]:
    """Solve K x = rhs for the symmetric positive definite K_f, and the probe's self-stress states
    with the same factorisation; ordering per the module docstring.

    Returns ((x, states or None), LU pivot ratio, notes naming the ordering used).
    """
    fill_note = "fill {} nonzeros for {} in K"
    if K.shape[0] <= DIRECT_FREE_LIMIT:
        start = time.perf_counter()
        try:
            lu = _symmetric_mmd(K)
        except RuntimeError as exc:
            why = f"MMD_AT_PLUS_A in symmetric mode failed ({exc})"
        else:
            return (
                _solve_both(lu, rhs, probe),
                pivot_ratio(lu),
                [
                    "sparse LU of K with MMD_AT_PLUS_A ordering (symmetric mode), "
                    f"{time.perf_counter() - start:.3g} s, "
                    + fill_note.format(factor_fill(lu), K.nnz)
                ],
            )
    else:
        sample = mmd_sample_fill(K) if K.shape[0] > 2 * MMD_SAMPLE_FREE else None
        if sample is not None and sample[0] > MMD_SAMPLE_FILL_LIMIT:
            answer = None
            why = (
                f"MMD_AT_PLUS_A not tried: on a sample of K ({sample[1]} free directions around "
                f"the middle one) its fill was {sample[0]:.2f} times COLAMD's (its fill explodes "
                "on some 3D grids)"
            )
        else:
            box = time_box if time_box is not None else ordering_time_box(K.nnz)
            answer, why = _time_boxed_mmd(K, rhs, box, probe)
        if answer is not None:
            solved, ratio, fill, seconds = answer
            return (
                solved,
                ratio,
                [
                    f"sparse LU of K with MMD_AT_PLUS_A ordering (symmetric mode, time-boxed in a "
                    f"child process), {seconds:.3g} s, " + fill_note.format(fill, K.nnz)
                ],
            )
    start = time.perf_counter()
    try:
        lu = spla.splu(K, permc_spec="COLAMD")
    except RuntimeError as exc:
        raise SingularStiffnessError(
            f"the stiffness matrix is singular ({exc}): the truss with its supports is a "
            "mechanism; the stability check names the joints that can move"
        ) from None
    return (
        _solve_both(lu, rhs, probe),
        pivot_ratio(lu),
        [
            f"{why}; sparse LU of K with COLAMD ordering, {time.perf_counter() - start:.3g} s, "
            + fill_note.format(factor_fill(lu), K.nnz)
        ],
    )


def solve_stiffness(
    model: Model,
    *,
    assume_equal_EA: float | None = None,
    time_box: float | None = None,
    run: AnalysisRun | None = None,
    EA: np.ndarray | None = None,
) -> ElasticSolution:
    """Elastic member forces, reactions and joint displacements by the direct stiffness method.

    ``time_box``: seconds for the MMD attempt; None scales it with the size of K_f
    (:func:`ordering_time_box`). ``EA``: member stiffnesses to use instead of the model's (the
    same truss with other stiffnesses, without making a model for it).
    The same factorisation also answers which members lie in a state of self-stress (one more
    right-hand side, :class:`SelfStressProbe`).
    Raises MissingStiffnessError when some members have no EA and ``assume_equal_EA`` is None,
    and SingularStiffnessError when the supported truss is a mechanism (K_f singular).
    """
    run = run if run is not None else AnalysisRun(model)
    if EA is None:
        EA, notes = member_stiffness(model, assume_equal_EA=assume_equal_EA)
    else:
        notes = []
    F = model.load_matrix()
    cols = F.shape[1]
    T, support_notes = free_direction_basis(model)
    notes += support_notes
    K = assemble_stiffness(model, EA)
    Kf = (T.T @ K @ T).tocsc()
    nfree = Kf.shape[0]
    b = len(model.members)
    if nfree:
        # A zero right-hand side still factorises K, so a mechanism is reported even without loads.
        Ff = np.asfortranarray(T.T @ F) if cols else np.zeros((nfree, 1))
        # K_f is not singular (checked below), so the self-stress states of the members span
        # b - nfree dimensions: none without more members than free directions, nothing to probe.
        probe = SelfStressProbe.draw(model, EA, T) if b > nfree else None
        (xf, states), pivot_ratio, order_notes = _solve_reduced(Kf, Ff, time_box, probe)
        notes += order_notes
        if pivot_ratio < K_PIVOT_SINGULAR:
            raise SingularStiffnessError(
                "the stiffness matrix is singular to working precision (pivot ratio "
                f"{pivot_ratio:.1e} < {K_PIVOT_SINGULAR:g}): the truss with its supports is a "
                "mechanism; the stability check names the joints that can move"
            )
        notes.append(
            f"LU pivot ratio min/max |U_ii| = {pivot_ratio:.2e} (K pivots are only a screen; the "
            "stability check decides on mechanisms)"
        )
        x = T @ xf.reshape(nfree, -1)[:, :cols]
        fixed = states.fixed_by_statics() if states is not None else np.ones(b, dtype=bool)
    else:
        notes.append("every joint direction is restrained: no displacement, members carry no force")
        x = np.zeros((model.dofs, cols))
        # Each member can carry any force against the reactions: each is a self-stress of its own.
        fixed = np.zeros(b, dtype=bool)
    d = model.dim
    s = model.ends_index[:, 0]
    e = model.ends_index[:, 1]
    xj = x.reshape(len(model.joints), d, cols)
    elongation = np.einsum("bd,bdc->bc", model.unit_vectors, xj[e] - xj[s])
    N = (EA / model.lengths)[:, None] * elongation
    R = reactions_from_equilibrium(model, N, F, run)
    A = run.equilibrium_matrix()
    residual = A @ np.vstack([N, R]) + F if cols else np.zeros((model.dofs, 0))
    max_residual = float(np.abs(residual).max()) if residual.size else 0.0
    scale = max(
        float(np.abs(F).max()) if F.size else 0.0, float(np.abs(N).max()) if N.size else 0.0
    )
    if max_residual > RESIDUAL_RTOL * max(scale, np.finfo(float).tiny):
        notes.append(
            f"equilibrium back-check: max |A t + f| = {max_residual:.3g} is large against the "
            f"forces ({scale:.3g}); the stiffness answer is not reliable (ill-conditioned K)"
        )
    else:
        notes.append(f"equilibrium back-check: max |A t + f| = {max_residual:.3g}")
    notes_t = tuple(notes)
    forces = ForceResult("stiffness", tuple(model.load_names), N, R, notes=notes_t)
    return ElasticSolution(
        forces=forces,
        displacements=x,
        max_residual=max_residual,
        equal_EA_assumed=assume_equal_EA is not None,
        fixed_by_statics=fixed,
        notes=notes_t,
    ).read_only()


@dataclass(frozen=True)
class SelfStressProbe:
    """Random member forces r, projected onto the states of self-stress by the elastic solve.

    With B the compatibility matrix on the free directions (elongations e = B x), W = diag(EA/L)
    and K = B^T W B: the loads B^T r are those that initial member forces r put on the joints,
    y = K^-1 B^T r the displacements they cause, and s = r - W B y satisfies B^T s = 0, i.e. s is
    a state of self-stress (with the reactions it needs). s = (I - P) r, where P = W B K^-1 B^T is
    a projection whose complement I - P maps onto the self-stress space and keeps every
    self-stress as it is. So a member with s_i = 0 for every r lies outside every self-stress,
    and one inside some self-stress has s_i != 0 for all r but a set of measure zero: a random r
    tells them apart with a few more right-hand sides on the elastic solve's own factor.

    Two things keep that true in floating point (measured on trusses from bench/generate.py,
    some with X-bracing in one panel of 50 or 500 or 7, some grids with a few top chords):

    * "Measure zero" is not "never": s_i of a member inside a self-stress is a random
      combination of the states' entries. With one probe the smallest such entry was 5e-7 of r
      on the 10^5-member X-braced Pratt (1e-5 on 10^4 members, 5e-6 on the 10^5-member grid
      with top chords), so at 10^6 members one probe would call some member "outside" with a
      fair chance. With SELF_STRESS_PROBES = 2 independent ones (a member is outside only when
      both leave it at round-off) the smallest was 1e-3 there, and at least 4e-5 on every truss
      measured (a 20,000-panel Pratt crossed in one panel of 7 on a support every 100 panels).
    * s from K^-1 is a least-squares residual from the normal equations: its error on members
      outside grows like eps cond(K), and cond(K) ~ cond(A)^2. On a 2000-panel single-span
      Pratt (K pivot ratio 3e-9) those entries reached 1e-7 of r, and on 20,000 panels (2.5e-12)
      most of them did. The varied-EA comparison used before failed the same way: it found 3889
      and 35 members of 7801 and 79,801 outside. So s is projected again
      (s <- s - W B K^-1 B^T s; the error left in s lies in the range of W B, which the
      projection removes: iterative refinement of a least-squares residual, common practice)
      until a projection removes no more than SETTLED of r. The 2000-panel span settles after 3
      projections, with 2e-14 of r left outside (the benchmark trusses after 2). The
      20,000-panel span loses only 0.4 of the error per projection; after
      SELF_STRESS_PROJECTIONS the zero test takes 10 times what the last one removed as its
      tolerance instead (the error still there is what further projections would remove:
      rho / (1 - rho) times the last, 0.7 times at rho = 0.4, within the factor 10 up to
      rho = 0.9). There that is 7e-5 and 2e-5 of r for the two probes, where the members
      outside stayed below 2.1e-6 and those inside above 2.7e-2 (all 79,801 and 240 told apart).

    Cost: each projection is one solve with SELF_STRESS_PROBES columns; well-conditioned trusses
    settle after 2. On the 10^5-member grid with top chords the probe took 0.15 s where the
    varied-EA comparison's second solve took 1.0 s (a second factorisation, by MMD in its child
    process); on the X-braced Pratt 0.035 s against 0.24 s.
    """

    r: np.ndarray  # members x SELF_STRESS_PROBES
    k: np.ndarray  # EA/L per member
    B: sp.csr_matrix  # members x free directions: the compatibility matrix

    @classmethod
    def draw(cls, model: Model, EA: np.ndarray, T: sp.csc_matrix, seed: int = 0) -> SelfStressProbe:
        rng = np.random.default_rng(seed)
        shape = (len(model.members), SELF_STRESS_PROBES)
        # Sizes 0.5 to 2 with random signs: no entry near zero, none dominating.
        r = rng.uniform(0.5, 2.0, shape) * rng.choice([-1.0, 1.0], shape)
        return cls(r, EA / model.lengths, (compatibility_matrix(model) @ T).tocsr())

    def states(self, solve: Callable[[np.ndarray], np.ndarray]) -> SelfStressStates:
        """s = (I - P) r, projected again until a projection removes no more than SETTLED of r
        (see the class docstring); `solve` applies K^-1."""
        s = self.r
        size = np.abs(self.r).max(axis=0)
        removed = size
        for _ in range(SELF_STRESS_PROJECTIONS):
            y = solve(np.asfortranarray(self.B.T @ s))
            step = self.k[:, None] * (self.B @ y.reshape(self.B.shape[1], -1))
            s = s - step
            removed = np.abs(step).max(axis=0)
            if np.all(removed <= SETTLED * size):
                break
        # The zero test. Outside every self-stress the exact s_i is 0, and what is left is the
        # error of the projections: below SETTLED of r once they have settled (2e-14 on every
        # truss measured), else a fraction of what the last one removed (class docstring).
        # Inside one, s_i is of the size of r (one probe of the two above 4e-5 of it on every
        # truss measured). SELF_STRESS_RTOL = 1e-7 of r lies between the two (the figure the
        # varied-EA comparison used against the largest force).
        zero = np.maximum(SELF_STRESS_RTOL * size, UNSETTLED_MARGIN * removed)
        return SelfStressStates(s, zero)


@dataclass(frozen=True)
class SelfStressStates:
    """A probe's states of self-stress (members x probes) and, per probe, the size below which
    an entry is round-off."""

    s: np.ndarray
    zero: np.ndarray

    def fixed_by_statics(self) -> np.ndarray:
        """Per member, True outside every self-stress: every probe leaves it at round-off."""
        return np.all(np.abs(self.s) <= self.zero, axis=1)


def compatibility_matrix(model: Model) -> sp.csr_matrix:
    """B (members x dofs): member i's elongation u_i . (x_end - x_start) for displacements x."""
    b, d = len(model.members), model.dim
    rows = np.repeat(np.arange(b), 2 * d)
    ends = model.ends_index[:, [1, 0]]  # end first: +u, then start: -u
    cols = (ends[:, :, None] * d + np.arange(d)).reshape(b, 2 * d)
    u = model.unit_vectors
    vals = np.concatenate([u, -u], axis=1)
    return sp.csr_matrix((vals.ravel(), (rows, cols.ravel())), shape=(b, model.dofs))


def members_fixed_by_statics(
    model: Model,
    *,
    assume_equal_EA: float | None = None,
    run: AnalysisRun | None = None,
) -> np.ndarray:
    """Per member: True when it lies outside every state of self-stress, so that statics alone
    fixes its force (whatever the member stiffnesses; a member inside some self-stress generally
    changes its force with them). Read from the elastic solve of the run (one more right-hand side
    on its factor; see SelfStressProbe), solving it if the run has not yet. ValueError (missing or
    singular stiffness) as from solve_stiffness.
    """
    run = run if run is not None else AnalysisRun(model)
    return np.asarray(run.elastic(assume_equal_EA).fixed_by_statics)
