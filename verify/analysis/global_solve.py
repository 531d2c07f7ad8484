"""The global sparse solve of A t = -f for a stable, statically determinate truss.

Ordering: COLAMD for 2D, MMD_ATA for 3D (shared/PERFORMANCE.md: the default ordering on 3D
equilibrium matrices lets fill-in explode; MMD_ATA kept a 10^5-member grid under a second).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse.linalg as spla

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.forces import ForceResult
from verify.model import Model


def equilibrium_lu(model: Model, A: object | None = None) -> spla.SuperLU:
    """The sparse LU of the square equilibrium matrix, factored once per model."""
    cached = model.memo.get("equilibrium_lu")
    if isinstance(cached, spla.SuperLU):
        return cached
    matrix = A if A is not None else assemble_equilibrium(model)
    lu = spla.splu(matrix, permc_spec="COLAMD" if model.dim == 2 else "MMD_ATA")
    model.memo["equilibrium_lu"] = lu
    return lu


def solve_global(model: Model) -> ForceResult:
    """Member forces and reactions for every load column; A must be square and non-singular."""
    A = assemble_equilibrium(model)
    if A.shape[0] != A.shape[1]:
        raise ValueError(
            "the global statics solve needs a determinate truss (square equilibrium matrix)"
        )
    F = model.load_matrix()
    lu = equilibrium_lu(model, A)
    t = lu.solve(-F) if F.size else np.zeros((A.shape[1], 0))
    t = t.reshape(A.shape[1], -1)
    b = len(model.members)
    return ForceResult("global", tuple(model.load_names), t[:b], t[b:])
