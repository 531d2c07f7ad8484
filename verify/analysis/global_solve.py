"""The global sparse solve of A t = -f for a stable, statically determinate truss.

Ordering: COLAMD for 2D, MMD_ATA for 3D (verify.analysis.run.lu_ordering; shared/PERFORMANCE.md:
the default ordering on 3D equilibrium matrices lets fill-in explode; MMD_ATA kept a
10^5-member grid under a second). The LU is the analysis run's, shared with the stability screen.
"""

from __future__ import annotations

import numpy as np

from verify.analysis.forces import ForceResult
from verify.analysis.run import AnalysisRun
from verify.model import Model


def solve_global(model: Model, run: AnalysisRun | None = None) -> ForceResult:
    """Member forces and reactions for every load column; A must be square and non-singular."""
    run = run if run is not None else AnalysisRun(model)
    A = run.equilibrium_matrix()
    if A.shape[0] != A.shape[1]:
        raise ValueError(
            "the global statics solve needs a determinate truss (square equilibrium matrix)"
        )
    F = model.load_matrix()
    t = run.equilibrium_lu().solve(-F) if F.size else np.zeros((A.shape[1], 0))
    t = t.reshape(A.shape[1], -1)
    b = len(model.members)
    return ForceResult("global", tuple(model.load_names), t[:b], t[b:])
