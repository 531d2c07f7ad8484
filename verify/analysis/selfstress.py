"""Split the difference between claimed and computed forces of an indeterminate truss.

Statics cannot confirm the forces of a statically indeterminate truss
(shared/REFERENCES.md 1.2). Take t = [member forces; reactions]. Every t with ``A t + f = 0`` is
one particular solution plus a state of self-stress s with ``A s = 0`` (Pellegrino & Calladine,
IJSS 22(4) 1986). So a claimed set that differs from the elastic answer can be wrong in two ways:

(a) it violates equilibrium: some joint is out of balance whatever the unclaimed forces are;
(b) it is in equilibrium but carries a different self-stress. That is a different stiffness
    assumption (EA values, lack of fit, support settlement), not a statics error.

Only claimed values take part. Unclaimed members, and unclaimed reaction components, are *free
unknowns*: the claims are consistent with equilibrium when some completion of them is in
equilibrium. Filling the gaps with elastic values instead would blame the claims for a
self-stress they never stated.

Let d = claimed - reference on the claimed entries P, where the reference is the elastic solution
when given, otherwise the minimum-norm equilibrium solution. Let S = {s_P : A s = 0} be the claimed
part of the self-stress states. Then

* the self-stress part x is the self-stress whose claimed part is the orthogonal projection of d
  onto S. Its values on the unclaimed entries are the matching change of the free unknowns;
* the equilibrium violation v = d_P - x_P is the smallest correction (2-norm, force units) of the
  claimed values that makes them completable to an equilibrium state. v = 0 exactly when the
  claims are consistent;
* the joint residuals are ``min over free unknowns y of |A_P v_P + A_Q y|``, the out-of-balance
  force no choice of the unclaimed forces removes. They are zero exactly when v = 0. A single
  wrong member outside every self-stress loop shows up at its two end joints.

Two routes give the same decomposition:

* Models with at most ``dense_limit`` joint equations use a dense SVD of A. It gives the
  orthonormal self-stress basis (Pellegrino 1993), the projection is a least-squares fit on that
  basis, and the coefficients are reported.
* Larger models never form a basis. They solve the equality-constrained least-squares problem
  ``min |x_P - d_P|^2 subject to A x = 0`` through its sparse KKT system. The free unknowns get a
  tiny weight KKT_REG and the constraint block -KKT_REG, so that free self-stress loops or
  mechanisms do not make the system singular. The joint residuals come from the sparse augmented
  least-squares system. No coefficients are reported on this route.

Consistency tolerance: a joint is out of balance when its residual exceeds ``rtol`` times the
force scale, that is the largest claimed force or applied load of the column (default 1 %, the
"agree" band of shared/REFERENCES.md 5.1, because claimed tables are rounded to about 3 significant figures), or
``atol`` if larger.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.stability import DENSE_DOF_LIMIT, RANK_RTOL
from verify.analysis.stiffness import reactions_from_equilibrium
from verify.model import Model

CONSISTENCY_RTOL = 0.01  # REFERENCES.md 5.1: claims rounded to ~3 significant figures agree within 1 %
KKT_REG = 1e-9  # relative (A is dimensionless, the weights are 1): bias and noise both ~1e-9
LSQR_TOL = 1e-14


@dataclass(frozen=True)
class Decomposition:
    """Claimed minus reference forces of one load column, split into (a) and (b) above.

    Arrays are in the case's force unit. Member arrays have length b (members) and reaction arrays
    length r (reaction components). Unclaimed entries are zero in ``equilibrium_violation`` and
    carry the free unknowns' change in ``self_stress_part``.
    """

    load_name: str
    reference: str  # "elastic" or "minimum-norm equilibrium solution"
    equilibrium_violation: np.ndarray  # (b,) smallest correction of the claimed member forces
    reaction_violation: np.ndarray  # (r,) the same for claimed reaction components
    joint_residuals: dict[str, list[float]]  # joints out of balance beyond tolerance, largest first
    violation_members: tuple[str, ...]  # members whose correction exceeds the tolerance, largest first
    self_stress_part: np.ndarray  # (b,)
    self_stress_reactions: np.ndarray  # (r,)
    self_stress_members: tuple[str, ...]  # members carrying more than the tolerance, largest first
    self_stress_size: float  # largest |member value| of the self-stress part
    self_stress_norm: float  # 2-norm over members and reactions
    self_stress_coefficients: tuple[float, ...]  # on the orthonormal SVD basis (dense route only)
    self_stress_states: int | None  # number of independent states (dense route only)
    consistent_with_equilibrium: bool
    tolerance: float  # force units: the threshold used for every "exceeds" above
    method: str  # "dense-svd" or "sparse-kkt"
    notes: tuple[str, ...] = field(default=())


def _check_vector(name: str, value: np.ndarray, size: int) -> np.ndarray:
    arr = np.asarray(value, dtype=float).ravel()
    if arr.shape != (size,):
        raise ValueError(f"{name} must hold {size} values, got shape {np.shape(value)}")
    return arr


def _min_norm_solution(A: sp.csc_matrix, rhs: np.ndarray, dense: bool) -> np.ndarray:
    if dense:
        return np.linalg.lstsq(A.toarray(), rhs, rcond=None)[0]
    return spla.lsqr(A, rhs, atol=LSQR_TOL, btol=LSQR_TOL, iter_lim=20 * sum(A.shape))[0]


def decompose_claims(
    model: Model,
    claimed_members: np.ndarray,
    claimed_mask: np.ndarray,
    elastic_members: np.ndarray | None,
    load_column: int,
    reactions: np.ndarray | None,
    *,
    rtol: float = CONSISTENCY_RTOL,
    atol: float = 0.0,
    dense_limit: int = DENSE_DOF_LIMIT,
) -> Decomposition:
    """Decompose claimed forces (one load column) into an equilibrium violation and a self-stress.

    ``claimed_members`` (b,) holds the claims where ``claimed_mask`` is True (other entries are
    ignored and may be NaN). ``reactions`` (r,) are claimed reaction components, NaN where not
    claimed, or None when no reaction is claimed. ``elastic_members`` (b,) are the elastic forces
    (e.g. from solve_stiffness) or None.
    """
    b = len(model.members)
    r = len(model.reactions)
    names = model.load_names
    if not -len(names) <= load_column < len(names):
        raise ValueError(f"load_column {load_column} is out of range; the model has {len(names)} load column(s)")
    load_name = names[load_column]
    claims = _check_vector("claimed_members", claimed_members, b)
    mask_b = np.asarray(claimed_mask, dtype=bool).ravel()
    if mask_b.shape != (b,):
        raise ValueError(f"claimed_mask must hold {b} values, got shape {np.shape(claimed_mask)}")
    if reactions is None:
        r_claims = np.full(r, np.nan)
    else:
        r_claims = _check_vector("reactions", reactions, r)
    mask = np.concatenate([mask_b, np.isfinite(r_claims)])
    claims_t = np.concatenate([claims, np.nan_to_num(r_claims)])
    if not np.all(np.isfinite(claims_t[mask])):
        bad = [model.members[k].id for k in np.nonzero(mask_b & ~np.isfinite(claims))[0][:10]]
        raise ValueError(f"claimed forces are not finite for member(s) {', '.join(bad)} marked as claimed")

    A = assemble_equilibrium(model)
    f = model.load_matrix()[:, load_column]
    dense = model.dofs <= dense_limit and A.shape[1] <= 2 * dense_limit
    notes: list[str] = []

    if elastic_members is not None:
        N_ref = _check_vector("elastic_members", elastic_members, b)
        R_ref = reactions_from_equilibrium(model, N_ref[:, None], f[:, None])[:, 0]
        t_ref = np.concatenate([N_ref, R_ref])
        reference = "elastic"
    else:
        t_ref = _min_norm_solution(A, -f, dense)
        reference = "minimum-norm equilibrium solution"
        notes.append("no elastic solution given: the self-stress part is measured from the minimum-norm "
                     "equilibrium solution, so only its presence and pattern mean something, not its size")
    ref_leak = float(np.abs(A @ t_ref + f).max()) if f.size else 0.0

    scale = max(float(np.abs(claims_t[mask]).max()) if mask.any() else 0.0, float(np.abs(f).max()) if f.size else 0.0)
    tol = max(rtol * scale, atol)
    if ref_leak > 1e-6 * max(scale, 1.0):
        notes.append(f"the reference forces are out of balance by up to {ref_leak:.3g}; the split is only as good as they are")

    P = np.nonzero(mask)[0]
    Q = np.nonzero(~mask)[0]
    d = np.zeros(b + r)
    d[P] = claims_t[P] - t_ref[P]
    coefficients: tuple[float, ...] = ()
    states: int | None = None

    if dense:
        method = "dense-svd"
        Ad = A.toarray()
        _, S, Vh = np.linalg.svd(Ad, full_matrices=True)
        smax = float(S.max()) if S.size else 0.0
        rank = int((S > max(RANK_RTOL * smax, np.finfo(float).eps * max(Ad.shape) * smax)).sum())
        basis = Vh[rank:, :].T  # (b + r, s), orthonormal self-stress states
        states = basis.shape[1]
        if states and P.size:
            c = np.linalg.lstsq(basis[P], d[P], rcond=None)[0]
            coefficients = tuple(float(v) for v in c)
            x = basis @ c
        else:
            x = np.zeros(b + r)
        v = np.zeros(b + r)
        v[P] = d[P] - x[P]
        g = Ad[:, P] @ v[P]
        rho = g - Ad[:, Q] @ np.linalg.lstsq(Ad[:, Q], g, rcond=None)[0] if Q.size else g
    else:
        method = "sparse-kkt"
        n = b + r
        weight = np.where(mask, 1.0, KKT_REG)
        kkt = sp.bmat([[sp.diags(weight), A.T], [A, -KKT_REG * sp.identity(A.shape[0])]], format="csc")
        rhs = np.concatenate([np.where(mask, d, 0.0), np.zeros(A.shape[0])])
        x = spla.splu(kkt, permc_spec="COLAMD").solve(rhs)[:n]
        v = np.zeros(n)
        v[P] = d[P] - x[P]
        g = A[:, P] @ v[P]
        if Q.size:
            AQ = A[:, Q]
            aug = sp.bmat([[sp.identity(A.shape[0]), AQ], [AQ.T, -KKT_REG * sp.identity(len(Q))]], format="csc")
            sol = spla.splu(aug, permc_spec="COLAMD").solve(np.concatenate([g, np.zeros(len(Q))]))
            rho = sol[: A.shape[0]]
        else:
            rho = g
        notes.append("large model: the split was found by a sparse constrained least-squares solve, "
                     "without a self-stress basis (no coefficients)")

    d_dim = model.dim
    joint_norm = np.linalg.norm(rho.reshape(len(model.joints), d_dim), axis=1)
    out_of_balance = np.nonzero(joint_norm > tol)[0]
    out_of_balance = out_of_balance[np.argsort(-joint_norm[out_of_balance], kind="stable")]
    joint_residuals = {
        model.joints[j].id: [float(c) for c in rho[j * d_dim : (j + 1) * d_dim]] for j in out_of_balance
    }

    def over(values: np.ndarray) -> tuple[str, ...]:
        idx = np.nonzero(np.abs(values) > tol)[0]
        idx = idx[np.argsort(-np.abs(values[idx]), kind="stable")]
        return tuple(model.members[k].id for k in idx)

    ss_members = x[:b]
    return Decomposition(
        load_name=load_name,
        reference=reference,
        equilibrium_violation=v[:b],
        reaction_violation=v[b:],
        joint_residuals=joint_residuals,
        violation_members=over(v[:b]),
        self_stress_part=ss_members,
        self_stress_reactions=x[b:],
        self_stress_members=over(ss_members),
        self_stress_size=float(np.abs(ss_members).max()) if b else 0.0,
        self_stress_norm=float(np.linalg.norm(x)),
        self_stress_coefficients=coefficients,
        self_stress_states=states,
        consistent_with_equilibrium=not joint_residuals,
        tolerance=tol,
        method=method,
        notes=tuple(notes),
    )
