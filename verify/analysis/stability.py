"""Stability and determinacy: Maxwell's rule and the rank of the equilibrium matrix.

Sources: J.C. Maxwell, Phil. Mag. 27 (1864) 294-299 (counting rule); S. Pellegrino &
C.R. Calladine, Int. J. Solids Struct. 22(4) (1986) 409-428 (rank, mechanisms m = dj - rank,
states of self-stress s = b + r - rank, and the SVD bases); S. Pellegrino, IJSS 30(21) (1993).

Small models (up to DENSE_DOF_LIMIT) use a dense SVD, which gives exact counts and the mechanism
and self-stress bases. Larger ones use sparse LU factorisation (of A when square, else of the
unit-stiffness matrix A W A^T), whose cost grows gently; they report "at least one mechanism" when
the factorisation is singular rather than an exact count.

Conditioning figure: rho = sigma_min / sigma_max of A is dimensionless but falls like 1/n^2 on
long, sound trusses (2.5e-2 at 10 panels, 3e-6 at 1000; shared/PERFORMANCE.md). We therefore judge
the *scaled* figure rho * S^2, with S the extent ratio (model extent / median member length), which
stays near 2-3 for sound parallel-chord trusses of any length. Calibration (shared/REFERENCES.md
1.2, two bars sagging by theta: rho ~ 0.54 theta, member force = P / (2 sin theta)): the
threshold ILL_CONDITIONED_SCALED = 1e-2 corresponds to a sag of about 0.26 degrees, where member
forces reach about 100 x the load. Our own calibration (common practice: forces two orders of
magnitude above the loads deserve a second look).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from verify.analysis.equilibrium import rigid_body_modes
from verify.analysis.lu_factors import u_diagonal_in_place
from verify.analysis.run import AnalysisRun, pivot_ratio, ratio_of_pivots
from verify.forking import Forked, ForkFailed
from verify.model import Model

DENSE_DOF_LIMIT = 400  # dense SVD (bases of every mode) costs ~0.1 s here; above, sparse LU first
DENSE_DETAIL_LIMIT = (
    1500  # a sparse screen that finds a mechanism hands over to the dense SVD up to here
)
POWER_ITERATIONS = (
    8  # for the sigma_min / sigma_max estimate of a large square A (a figure, not a verdict)
)
RANK_RTOL = 1e-10  # singular values below RANK_RTOL * sigma_max count as zero
ILL_CONDITIONED_SCALED = 1e-2  # see module docstring
LU_PIVOT_SINGULAR = (
    1e-11  # pivots of A: sound trusses >= 3e-5, defective <= 2e-14 (PERFORMANCE.md item 6)
)
# Pivots of the unit-stiffness matrix A W A^T (indeterminate trusses): measured here on Pratt
# trusses of 10 to 5000 panels with a mechanism plus two self-stresses, 3e-15 .. 2e-10, against
# 1.5e-2 .. 1.9e-5 for sound ones (tests/test_stability.py); 1e-8 lies in the gap.
K_PIVOT_SINGULAR = 1e-8
# How the counts were obtained (the JSON structure's `method`): the rank of A from its singular
# values, exact; or a sparse LU screen, whose counts are lower bounds.
FULL_RANK_COUNT = "full-rank-count"
SPARSE_SCREEN = "sparse-screen"
MODE_SHARE = 1e-3  # a joint/member takes part in a mode when its share exceeds this fraction


class Classification(StrEnum):
    STABLE_DETERMINATE = "stable-determinate"
    STABLE_INDETERMINATE = "stable-indeterminate"
    UNSTABLE = "unstable"


@dataclass(frozen=True)
class MechanismMode:
    """One independent mechanism: the joints that move and their (normalised) motions."""

    joints: tuple[str, ...]
    motions: tuple[tuple[float, ...], ...]
    rigid_body: bool


@dataclass(frozen=True)
class SelfStressMode:
    """One independent state of self-stress: members (and reactions) and their relative forces."""

    members: tuple[str, ...]
    values: tuple[float, ...]


@dataclass(frozen=True)
class StabilityResult:
    dim: int
    joints: int
    members: int
    reactions: int
    rank: int
    mechanisms: int
    self_stress: int
    rigid_body_mechanisms: int
    classification: Classification
    method: str  # FULL_RANK_COUNT or SPARSE_SCREEN
    exact_counts: bool  # False when the sparse screen can only bound the counts
    # sigma_min / sigma_max of A (its non-zero singular values); None where not computed.
    conditioning_ratio: float | None
    # conditioning_ratio * extent_ratio^2, or the LU pivot ratio (sparse screen).
    scaled_conditioning: float | None
    extent_ratio: float  # model extent / median member length (not KL/r: no buckling here)
    ill_conditioned: bool
    mechanism_modes: tuple[MechanismMode, ...] = ()
    self_stress_modes: tuple[SelfStressMode, ...] = ()
    notes: tuple[str, ...] = field(default=())

    @property
    def maxwell(self) -> int:
        """b + r - d*j: negative means at least that many mechanisms (necessary, not sufficient)."""
        return self.members + self.reactions - self.dim * self.joints

    @property
    def is_stable(self) -> bool:
        return self.classification is not Classification.UNSTABLE

    def as_dict(self) -> dict[str, object]:
        """The DESIGN.md section 4 "structure" object (plus extra fields)."""
        return {
            "dim": self.dim,
            "joints": self.joints,
            "members": self.members,
            "reactions": self.reactions,
            "mechanisms": self.mechanisms,
            "self_stress": self.self_stress,
            "classification": self.classification.value,
            "maxwell_count": self.maxwell,
            "rank": self.rank,
            "rigid_body_mechanisms": self.rigid_body_mechanisms,
            "method": self.method,
            "exact_counts": self.exact_counts,
            "conditioning_ratio": self.conditioning_ratio,
            "scaled_conditioning": self.scaled_conditioning,
            "extent_ratio": self.extent_ratio,
            "ill_conditioned": self.ill_conditioned,
            "mechanism_modes": [
                {
                    "joints": list(m.joints),
                    "motions": [list(v) for v in m.motions],
                    "rigid_body": m.rigid_body,
                }
                for m in self.mechanism_modes
            ],
            "self_stress_modes": [
                {"members": list(s.members), "values": list(s.values)}
                for s in self.self_stress_modes
            ],
            "notes": list(self.notes),
        }


def extent_ratio(model: Model) -> float:
    """Model extent over the median member length (the S of the module docstring)."""
    extent = float(np.ptp(model.xyz, axis=0).max()) if len(model.joints) > 1 else 1.0
    typical = float(np.median(model.lengths)) if len(model.members) else 1.0
    return max(extent / typical, 1.0)


def _classify(m: int, s: int) -> Classification:
    if m > 0:
        return Classification.UNSTABLE
    return Classification.STABLE_INDETERMINATE if s > 0 else Classification.STABLE_DETERMINATE


def solve_stability(
    model: Model,
    *,
    dense_limit: int = DENSE_DOF_LIMIT,
    detail_limit: int | None = None,
    run: AnalysisRun | None = None,
) -> StabilityResult:
    """Classify the truss. Never infers stability from a solver not raising: counts come from
    rank. The sparse screen's LU of a square A is handed to `run` for the global solve."""
    run = run if run is not None else AnalysisRun(model)
    A = run.equilibrium_matrix()
    if model.dofs <= dense_limit and A.shape[1] <= 2 * dense_limit:
        return _dense(model, A.toarray())
    screened = _sparse(model, A, run)
    # With an explicit dense_limit (tests of the sparse path) the hand-over follows it.
    limit = (
        detail_limit
        if detail_limit is not None
        else (DENSE_DETAIL_LIMIT if dense_limit == DENSE_DOF_LIMIT else dense_limit)
    )
    if not screened.exact_counts and model.dofs <= limit and A.shape[1] <= 2 * limit:
        # The screen found a mechanism; the dense SVD counts them and says which joints move.
        return _dense(model, A.toarray())
    return screened


def _labels(model: Model) -> list[str]:
    return model.member_ids + [f"reaction {r.label}" for r in model.reactions]


def _dense(model: Model, A: np.ndarray) -> StabilityResult:
    dofs, cols = A.shape
    U, S, Vh = np.linalg.svd(A, full_matrices=True)
    smax = float(S.max()) if S.size else 0.0
    tol = max(RANK_RTOL * smax, np.finfo(float).eps * max(dofs, cols) * smax)
    rank = int((S > tol).sum())
    m = dofs - rank
    s = cols - rank
    extent = extent_ratio(model)
    nontrivial = S[:rank]
    rho = float(nontrivial.min() / smax) if rank else 0.0
    # When rank-deficient, the conditioning of the remaining part still matters, but the verdict
    # is already "unstable" or "indeterminate"; the figure reported is over the non-zero values.
    scaled = rho * extent**2
    ill = scaled < ILL_CONDITIONED_SCALED
    notes: list[str] = []

    # Rigid-body vs internal mechanisms (P&C 1986): rb = rank(R) - rank(C R).
    R = rigid_body_modes(model.xyz)
    rank_R = int(np.linalg.matrix_rank(R))
    if model.reactions:
        C = np.zeros((len(model.reactions), dofs))
        for k, reaction in enumerate(model.reactions):
            i = model.joint_index[reaction.joint]
            C[k, i * model.dim : (i + 1) * model.dim] = reaction.direction
        rank_CR = int(np.linalg.matrix_rank(C @ R))
    else:
        rank_CR = 0
    rigid = max(rank_R - rank_CR, 0)

    mech_modes: list[MechanismMode] = []
    if m:
        basis = U[:, rank:]
        # A mode is rigid-body when it lies in the span of the rigid-body motions (the SVD basis
        # may mix rigid and internal modes when both exist; this labels each mode by its content).
        coeff = np.linalg.lstsq(R, basis[:, : min(m, 10)], rcond=None)[0]
        leftover = np.linalg.norm(basis[:, : min(m, 10)] - R @ coeff, axis=0)
        mech_modes = [
            _mechanism(model, basis[:, k], bool(leftover[k] < 1e-6)) for k in range(min(m, 10))
        ]
        F = model.load_matrix()
        if F.size:
            leak = np.abs(basis.T @ F).max(axis=0)
            scale = np.abs(F).max(axis=0)
            ok = [
                name
                for name, lk, sc in zip(model.load_names, leak, scale, strict=True)
                if sc > 0 and lk <= 1e-9 * sc
            ]
            if ok:
                notes.append(
                    "the loads of "
                    + ", ".join(ok)
                    + " happen to be orthogonal to every mechanism, so they can be equilibrated; "
                    "the truss is still unstable for other loads"
                )
        if model.dim * len(model.joints) - cols > 0 and m == dofs - cols:
            notes.append("Maxwell's count alone shows the missing members or supports")
        elif m > 0 and model.members and cols >= dofs:
            notes.append(
                "Maxwell's count is satisfied, yet the geometry gives a mechanism (parallel or "
                "concurrent supports, collinear members, or a critical form)"
            )
    ss_modes: list[SelfStressMode] = []
    if s:
        basis = _local_basis(Vh[rank:, :].T)
        labels = _labels(model)
        for k in range(min(s, 10)):
            v = basis[:, k]
            big = np.abs(v).max()
            v = v / (v[np.argmax(np.abs(v))] if big else 1.0)
            idx = np.nonzero(np.abs(v) > MODE_SHARE)[0]
            ss_modes.append(
                SelfStressMode(tuple(labels[i] for i in idx), tuple(float(v[i]) for i in idx))
            )
        if s > 10:
            notes.append(f"only the first 10 of {s} self-stress states are listed")
    if ill and m == 0:
        notes.append(
            f"near-mechanism: sigma_min/sigma_max = {rho:.2e}, scaled by the extent ratio^2 = "
            f"{scaled:.2e} (< {ILL_CONDITIONED_SCALED:g}); member forces are sensitive to small "
            "changes of geometry"
        )
    return StabilityResult(
        dim=model.dim,
        joints=len(model.joints),
        members=len(model.members),
        reactions=len(model.reactions),
        rank=rank,
        mechanisms=m,
        self_stress=s,
        rigid_body_mechanisms=rigid,
        classification=_classify(m, s),
        method=FULL_RANK_COUNT,
        exact_counts=True,
        conditioning_ratio=rho,
        scaled_conditioning=scaled,
        extent_ratio=extent,
        ill_conditioned=bool(ill and m == 0),
        mechanism_modes=tuple(mech_modes),
        self_stress_modes=tuple(ss_modes),
        notes=tuple(notes),
    )


def _local_basis(basis: np.ndarray) -> np.ndarray:
    """Re-express a null-space basis so each state has one 'redundant' member of its own.

    Column-pivoted QR of the basis transpose picks s well-separated pivot members; scaling the
    basis so that it is the identity on those members gives states that each involve one
    redundant member and only the members it needs, which is how an engineer reads self-stress
    ("release member X and these members change"). Any basis of the same space is valid.
    """
    import scipy.linalg

    s = basis.shape[1]
    _, _, piv = scipy.linalg.qr(basis.T, pivoting=True, mode="economic")
    local = basis @ np.linalg.inv(basis[piv[:s], :])
    local[np.abs(local) < 1e-12] = 0.0
    return local


def _mechanism(model: Model, mode: np.ndarray, rigid: bool) -> MechanismMode:
    d = model.dim
    motion = mode.reshape(-1, d)
    size = np.linalg.norm(motion, axis=1)
    top = size.max() if size.size else 0.0
    idx = np.nonzero(size > MODE_SHARE * top)[0] if top else np.array([], dtype=int)
    idx = idx[np.argsort(-size[idx])][:20]
    scale = top or 1.0
    return MechanismMode(
        joints=tuple(model.joints[i].id for i in idx),
        motions=tuple(tuple(float(c) for c in motion[i] / scale) for i in idx),
        rigid_body=rigid,
    )


def _sparse(model: Model, A: sp.csc_matrix, run: AnalysisRun) -> StabilityResult:
    dofs, cols = A.shape
    extent = extent_ratio(model)
    notes: list[str] = [
        f"large model ({dofs} joint equations): sparse LU screen instead of a dense SVD"
    ]
    base: dict[str, Any] = dict(
        dim=model.dim,
        joints=len(model.joints),
        members=len(model.members),
        reactions=len(model.reactions),
        method=SPARSE_SCREEN,
        conditioning_ratio=None,
        extent_ratio=extent,
    )
    if cols < dofs:
        m = dofs - cols
        notes.append(f"Maxwell's count shows at least {m} mechanism(s)")
        return StabilityResult(
            **base,
            rank=cols,
            mechanisms=m,
            self_stress=0,
            rigid_body_mechanisms=0,
            classification=Classification.UNSTABLE,
            exact_counts=False,
            scaled_conditioning=None,
            ill_conditioned=False,
            notes=tuple(notes),
        )
    if cols == dofs:
        try:
            # The pivots of the run's LU, which the global statics solve and the joints share.
            ratio = run.lu_pivot_ratio()
            singular = ratio < LU_PIVOT_SINGULAR
        except RuntimeError:
            ratio, singular = 0.0, True
    else:
        # Possibly read by a child process the run started earlier (AnalysisRun
        # .start_unit_stiffness_screen): the same figure.
        ratio = run.unit_stiffness_ratio()
        singular = ratio < K_PIVOT_SINGULAR
    rho = scaled = None
    ill = False
    if singular:
        notes.append(
            "the factorisation is singular: at least one mechanism (exact count needs the dense "
            "method on a smaller model)"
        )
        m, rank = 1, dofs - 1
    else:
        m, rank = 0, dofs
        if cols == dofs:
            rho = run.conditioning()  # possibly estimated by a child while claims were read
            scaled = rho * extent**2
            ill = bool(scaled < ILL_CONDITIONED_SCALED)
            notes.append(
                f"sigma_min/sigma_max estimated by {POWER_ITERATIONS} power iterations with the LU "
                f"factors (LU pivot ratio {ratio:.2e})"
            )
            if ill:
                notes.append(
                    f"near-mechanism: sigma_min/sigma_max = {rho:.2e}, scaled by the extent "
                    f"ratio^2 = {scaled:.2e} (< {ILL_CONDITIONED_SCALED:g}); member forces are "
                    "sensitive to small changes of geometry"
                )
        else:
            notes.append(
                f"unit-stiffness LU pivot ratio {ratio:.2e} (a screen; no sigma figure for "
                "indeterminate trusses this large)"
            )
    s = cols - rank
    base["conditioning_ratio"] = rho
    return StabilityResult(
        **base,
        rank=rank,
        mechanisms=m,
        self_stress=s,
        rigid_body_mechanisms=0,
        classification=_classify(m, s),
        exact_counts=not singular,
        scaled_conditioning=scaled if scaled is not None else ratio,
        ill_conditioned=ill,
        notes=tuple(notes),
    )


def unit_stiffness_screened(model: Model) -> bool:
    """True when `solve_stability` (default limits) screens the model by the LU of its
    unit-stiffness matrix: a model too large for the dense SVD with more unknown forces than joint
    equations (never stable and determinate)."""
    cols = len(model.members) + len(model.reactions)
    dense = model.dofs <= DENSE_DOF_LIMIT and cols <= 2 * DENSE_DOF_LIMIT
    return cols > model.dofs and not dense


def unit_stiffness_ratio(model: Model, A: sp.csc_matrix) -> float:
    """min/max |U_ii| of the LU of the unit-stiffness matrix A W A^T (W = 1/L, each reaction a
    spring of the median member's), 0.0 when the factorisation is exactly singular. The matrix is
    singular exactly when the truss has a mechanism: the screen of a truss whose A has more
    columns than rows."""
    w = np.concatenate(
        [
            1.0 / model.lengths,
            np.full(len(model.reactions), 1.0 / float(np.median(model.lengths))),
        ]
    )
    M = (A @ sp.diags(w) @ A.T).tocsc()
    try:
        lu = spla.splu(M, permc_spec="COLAMD")
    except RuntimeError:
        return 0.0
    return pivot_ratio(lu)


def kept_pivot_ratio(lu: spla.SuperLU) -> float:
    """pivot_ratio of an LU the run keeps: read from the factor's own storage where it can be,
    else in a child process where one may be used.

    Reading lu.U makes CSC copies of both factors, and scipy keeps them on the factor object for
    as long as it lives (135 MB on the 10^5-member 3D grid, held to the end of a check). Neither
    the reading in place (verify.analysis.lu_factors) nor a forked child, which reads the same
    factors and returns one number, leaves copies on the kept factor.
    """
    diagonal = u_diagonal_in_place(lu)
    if diagonal is not None:
        return ratio_of_pivots(diagonal)
    child = Forked.start(pivot_ratio, lu)
    try:
        return child.result()
    except ForkFailed:  # the child could not answer (out of memory?): read it here after all
        return pivot_ratio(lu)
    finally:
        child.cancel()


def conditioning_estimate(A: sp.csc_matrix, lu: spla.SuperLU) -> float:
    """sigma_min / sigma_max of a square, non-singular A by power iterations.

    sigma_max from A^T A; sigma_min from (A^T A)^-1 = A^-1 A^-T, applied with the LU factors the
    solve needs anyway, so the cost is a few triangular solves rather than an SVD.
    """
    rng = np.random.default_rng(0)
    x = rng.standard_normal(A.shape[1])
    x /= np.linalg.norm(x)
    for _ in range(POWER_ITERATIONS):
        y = A.T @ (A @ x)
        x = y / np.linalg.norm(y)
    sigma_max = float(np.sqrt(x @ (A.T @ (A @ x))))
    z = rng.standard_normal(A.shape[1])
    z /= np.linalg.norm(z)
    for _ in range(POWER_ITERATIONS):
        w = lu.solve(lu.solve(z, trans="T"))
        z = w / np.linalg.norm(w)
    inverse = float(z @ lu.solve(lu.solve(z, trans="T")))
    sigma_min = 1.0 / np.sqrt(inverse) if inverse > 0 else 0.0
    return sigma_min / sigma_max if sigma_max else 0.0
