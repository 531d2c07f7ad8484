"""Unit-load (virtual work) deflection of a joint, kept as a hand calculation.

Method (shared/REFERENCES.md 3.7; Hibbeler, *Structural Analysis*, "Method of virtual work:
trusses"): ``1 . Delta = sum n N L / (E A)``. N are the real member forces, and n the member forces
caused by a unit load at the joint, in the direction of Delta. Both are tension positive. A negative
Delta means the joint moves opposite to the unit load.

The n forces come from statics. When the truss is statically determinate (square, non-singular
equilibrium matrix) they are the unique solution of ``A n + f_unit = 0``, found by sparse LU
(ordering as in verify.analysis.global_solve). When the truss is indeterminate the formula still
holds with *any* statically admissible n (the reduced-structure theorem of virtual work, common
practice), provided N are the real, compatible forces. Up to DENSE_LIMIT joint equations we release
the redundants, as a hand calc does: QR with column pivoting picks independent members and reaction
components, the rest get n = 0, and the reduced, determinate truss is solved by statics. Otherwise
(larger models, or no such reduction) we use the minimum-norm solution of ``A n = -f_unit`` (dense
least squares, or sparse LSQR started from zero). The calculation states which route was taken.
Support movements are zero, so the reactions of the unit load do no work.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse.linalg as spla

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.stiffness import member_stiffness
from verify.errors import InputError, Problem, did_you_mean
from verify.model import Model

DENSE_LIMIT = 1500  # joint equations; dense least squares is at most ~1 s here (PERFORMANCE.md)
UNIT_LOAD_RTOL = 1e-8  # |A n + f_unit| above this means the unit load cannot be carried
LSQR_TOL = 1e-14
DISPLAY_ZERO_RTOL = 1e-12  # of the column's largest value: shown as 0 in the hand calc


@dataclass(frozen=True)
class VirtualWorkRow:
    """One member's line of the hand calc; ``term`` = unit_force * real_force * length / EA."""

    member: str
    real_force: float  # N, case force unit, tension positive
    unit_force: float  # n, force per unit applied force (dimensionless)
    length: float  # L, case length unit
    EA: float  # case force unit
    term: float  # n N L / EA, case length unit


@dataclass(frozen=True)
class VirtualWorkCalc:
    """Delta = sum of the terms, along ``direction`` (a unit vector) at ``joint``."""

    joint: str
    direction: tuple[float, ...]
    rows: tuple[VirtualWorkRow, ...]
    deflection: float  # case length unit; positive along `direction`
    unit_load_route: str  # "statics (determinate)" or "minimum-norm admissible set"
    unit_reactions: tuple[tuple[str, float], ...]  # reaction label -> reaction to the unit load
    equal_EA_assumed: bool
    notes: tuple[str, ...] = field(default=())


def _bad(model: Model, message: str) -> InputError:
    return InputError([Problem(model.source or "<model>", message)])


def _unit_direction(model: Model, direction: Sequence[float]) -> np.ndarray:
    vec = np.asarray(direction, dtype=float).ravel()
    if vec.shape != (model.dim,) or not np.all(np.isfinite(vec)):
        raise _bad(
            model,
            f"unit-load direction must be {model.dim} finite numbers, got {list(direction)!r}",
        )
    norm = float(np.linalg.norm(vec))
    if norm == 0.0:
        raise _bad(model, "unit-load direction is the zero vector; give e.g. [0, -1] for downward")
    return vec / norm


def solve_unit_load(
    model: Model, joint: str, direction: np.ndarray
) -> tuple[np.ndarray, str, list[str]]:
    """t = [n (members); reactions] for a unit load along `direction` at `joint`, plus the route."""
    A = assemble_equilibrium(model)
    f = np.zeros(model.dofs)
    i = model.joint_index[joint]
    f[i * model.dim : (i + 1) * model.dim] = direction
    notes: list[str] = []
    t: np.ndarray | None = None
    route = ""
    if A.shape[0] == A.shape[1]:
        try:
            lu = spla.splu(A, permc_spec="COLAMD" if model.dim == 2 else "MMD_ATA")
            t = lu.solve(-f)
            route = "statics (determinate)"
        except RuntimeError:
            notes.append(
                "the square equilibrium matrix is singular; the minimum-norm solution was tried"
            )
    if t is None and A.shape[0] < A.shape[1] <= 2 * DENSE_LIMIT:
        t, route, released = _released_structure(model, A.toarray(), f)
        if t is not None:
            notes.append(
                f"redundants released for the unit load: {', '.join(released)} (their n = 0); the "
                "rest is a statically determinate truss, so n can be checked by hand "
                "(reduced-structure theorem: any set in equilibrium with the unit load gives the "
                "same deflection when N is the real, compatible force set)"
            )
    if t is None:
        route = "minimum-norm admissible set"
        if A.shape[0] <= DENSE_LIMIT:
            t = np.linalg.lstsq(A.toarray(), -f, rcond=None)[0]
        else:
            t = spla.lsqr(A, -f, atol=LSQR_TOL, btol=LSQR_TOL, iter_lim=20 * sum(A.shape))[0]
        notes.append(
            "the unit-load forces n are the minimum-norm statically admissible set "
            "(reduced-structure theorem: any set in equilibrium with the unit load gives the same "
            "deflection when N is the real, compatible force set)"
        )
    leak = float(np.abs(A @ t + f).max())
    if not math.isfinite(leak) or leak > UNIT_LOAD_RTOL:
        raise ValueError(
            f"a unit load at joint '{joint}' along {tuple(float(c) for c in direction)} cannot be "
            f"carried (out-of-balance {leak:.2e}): the truss is a mechanism for that load"
        )
    return t, route, notes


def _released_structure(
    model: Model, A: np.ndarray, f: np.ndarray
) -> tuple[np.ndarray | None, str, list[str]]:
    """n for the unit load on the truss with its redundants removed, as a hand calc would do it.

    QR with column pivoting keeps a well-conditioned set of independent columns (members and
    reaction components, weighted as below); the columns it leaves out are the redundants,
    released (n = 0). Returns
    (None, "", []) when no square, non-singular reduced system is found (a mechanism).
    """
    import scipy.linalg

    rows, cols = A.shape
    # Pivoting takes the largest columns first: weight the supports most and short members over
    # long ones, so the released redundants are the long diagonals a hand calc would cut.
    typical = float(np.median(model.lengths)) if len(model.members) else 1.0
    weights = np.concatenate(
        [1.0 / model.lengths, np.full(cols - len(model.members), 10.0 / typical)]
    )
    _, R, order = scipy.linalg.qr(A * weights, pivoting=True, mode="economic")
    diag = np.abs(np.diag(R))
    rank = int((diag > 1e-10 * diag.max()).sum()) if diag.size else 0
    if rank != rows:
        return None, "", []
    kept = np.sort(order[:rank])
    t = np.zeros(cols)
    t[kept] = np.linalg.solve(A[:, kept], -f)
    names = [m.id for m in model.members] + [f"support {r.label}" for r in model.reactions]
    released = [names[c] for c in sorted(order[rank:])]
    return t, "statics on the truss with its redundants released", released


def unit_load_deflection(
    model: Model,
    forces_real: np.ndarray,
    joint: str,
    direction: Sequence[float],
    *,
    assume_equal_EA: float | None = None,
) -> VirtualWorkCalc:
    """Deflection of `joint` along `direction` by the unit-load method, with per-member rows.

    ``forces_real`` are the real member forces (one load column, tension positive, case force unit).
    For an indeterminate truss they must be the elastic forces (e.g. from solve_stiffness).
    """
    if joint not in model.joint_index:
        raise _bad(
            model,
            f"unit-load joint '{joint}' is not defined.{did_you_mean(joint, model.joint_ids)}",
        )
    N = np.asarray(forces_real, dtype=float).ravel()
    if N.shape != (len(model.members),):
        raise _bad(
            model,
            f"real forces must hold one value per member ({len(model.members)}), got shape "
            f"{np.shape(forces_real)}",
        )
    if not np.all(np.isfinite(N)):
        bad = [model.members[k].id for k in np.nonzero(~np.isfinite(N))[0][:10]]
        raise _bad(model, f"real forces are not finite for member(s) {', '.join(bad)}")
    unit = _unit_direction(model, direction)
    EA, notes = member_stiffness(model, assume_equal_EA=assume_equal_EA)
    t, route, solve_notes = solve_unit_load(model, joint, unit)
    notes += solve_notes
    b = len(model.members)
    n = t[:b]
    L = model.lengths
    terms = n * N * L / EA
    rows = tuple(
        VirtualWorkRow(m.id, float(N[k]), float(n[k]), float(L[k]), float(EA[k]), float(terms[k]))
        for k, m in enumerate(model.members)
    )
    reactions = tuple((r.label, float(t[b + k])) for k, r in enumerate(model.reactions))
    return VirtualWorkCalc(
        joint=joint,
        direction=tuple(float(c) for c in unit),
        rows=rows,
        deflection=float(terms.sum()),
        unit_load_route=route,
        unit_reactions=reactions,
        equal_EA_assumed=assume_equal_EA is not None,
        notes=tuple(notes),
    )
