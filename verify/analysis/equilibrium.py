"""The equilibrium matrix of a pin-jointed truss (Pellegrino & Calladine 1986 formulation).

A is dofs x (b + r): one row per joint direction, one column per member force then one per
reaction component. Member i from joint s to joint e with unit vector u = (x_e - x_s)/L has +u in
the rows of s and -u in the rows of e; a reaction has its unit direction in the rows of its
joint. Equilibrium is ``A t + f = 0`` with t tension-positive, so a positive member force pulls
each end joint toward the other. A is dimensionless (direction cosines only).
"""

from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from verify.model import Model


def assemble_equilibrium(model: Model, *, member_zeros: bool = False) -> sp.csc_matrix:
    """The sparse equilibrium matrix A (vectorised COO assembly), built anew at each call.

    Within an analysis, ask the run (verify.analysis.run.AnalysisRun.equilibrium_matrix), which
    builds it once for every route. `member_zeros` keeps a member's zero direction cosines as
    stored entries (the same matrix, every member end then touching all d directions of its
    joint): the pattern the run factors a 3D A with (AnalysisRun.lu_matrix).
    """
    d = model.dim
    b = len(model.members)
    r = len(model.reactions)
    u = model.unit_vectors
    s = model.ends_index[:, 0]
    e = model.ends_index[:, 1]
    comp = np.arange(d)
    rows_s = (s[:, None] * d + comp).ravel()
    rows_e = (e[:, None] * d + comp).ravel()
    cols_m = np.repeat(np.arange(b), d)
    vals = u.ravel()
    rows = [rows_s, rows_e]
    cols = [cols_m, cols_m]
    data = [vals, -vals]
    if r:
        r_joint = np.array([model.joint_index[x.joint] for x in model.reactions], dtype=np.int64)
        r_dir = np.array([x.direction for x in model.reactions], dtype=float).reshape(r, d)
        acting = r_dir.ravel() != 0  # a reaction acts along its own direction only
        rows.append((r_joint[:, None] * d + comp).ravel()[acting])
        cols.append(np.repeat(np.arange(b, b + r), d)[acting])
        data.append(r_dir.ravel()[acting])
    A = sp.coo_matrix(
        (np.concatenate(data), (np.concatenate(rows), np.concatenate(cols))),
        shape=(model.dofs, b + r),
    ).tocsc()
    if not member_zeros:
        A.eliminate_zeros()
    return A


def equilibrium_residual(
    model: Model, member_forces: np.ndarray, reactions: np.ndarray, loads: np.ndarray | None = None
) -> np.ndarray:
    """Out-of-balance force A t + f at every joint direction (dofs x load columns)."""
    A = assemble_equilibrium(model)
    t = (
        np.vstack([np.atleast_2d(member_forces.T).T, np.atleast_2d(reactions.T).T])
        if reactions.size
        else member_forces
    )
    F = model.load_matrix() if loads is None else loads
    return A @ t + F


def rigid_body_modes(xyz: np.ndarray) -> np.ndarray:
    """Columns spanning the rigid-body displacements of the joints (translations, rotations)."""
    n, d = xyz.shape
    centre = xyz.mean(axis=0) if n else np.zeros(d)
    x = xyz - centre
    cols = []
    for k in range(d):
        t = np.zeros((n, d))
        t[:, k] = 1.0
        cols.append(t.ravel())
    if d == 2:
        rot = np.column_stack([-x[:, 1], x[:, 0]])
        cols.append(rot.ravel())
    else:
        for axis in np.eye(3):
            cols.append(np.cross(axis, x).ravel())
    return np.column_stack(cols)
