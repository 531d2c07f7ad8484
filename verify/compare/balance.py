"""Equilibrium of the claimed forces on their own, joint by joint.

A joint can be checked when every member meeting there has a claim. Reactions there are the
claimed ones when given, otherwise whatever best balances the joint (they act only at their
joint, so this is a small least-squares problem per joint). A joint is out of balance when the
leftover force exceeds the comparison tolerance applied to the forces meeting there.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from verify.compare.tolerances import Tolerance
from verify.model import Model


@dataclass(frozen=True)
class JointImbalance:
    joint: str
    case: str
    residual: tuple[float, ...]
    size: float
    members: tuple[str, ...]


def claims_balance(model: Model, claimed: np.ndarray, reaction_claims: dict[tuple[int, int], float],
                   load_names: list[str], tol: Tolerance) -> list[JointImbalance]:
    d = model.dim
    F = model.load_matrix()
    len(model.members)
    at_joint: list[list[int]] = [[] for _ in model.joints]
    for i, (s, e) in enumerate(model.ends_index.tolist()):
        at_joint[s].append(i)
        at_joint[e].append(i)
    reactions_at: list[list[int]] = [[] for _ in model.joints]
    for n, r in enumerate(model.reactions):
        reactions_at[model.joint_index[r.joint]].append(n)
    out: list[JointImbalance] = []
    for k, name in enumerate(load_names):
        column = claimed[:, k]
        if not np.isfinite(column).any():
            continue
        scale = float(np.nanmax(np.abs(column)))
        for j, members in enumerate(at_joint):
            if not members or not np.isfinite(column[members]).all():
                continue
            force = F[j * d:(j + 1) * d, k].copy()
            magnitude = np.abs(force).sum()
            for i in members:
                u = model.unit_vectors[i] if model.ends_index[i, 0] == j else -model.unit_vectors[i]
                force += u * column[i]
                magnitude += abs(column[i])
            free = []
            for n in reactions_at[j]:
                direction = np.asarray(model.reactions[n].direction)
                if (n, k) in reaction_claims:
                    force += direction * reaction_claims[(n, k)]
                else:
                    free.append(direction)
            if free:
                D = np.column_stack(free)
                coeffs = np.linalg.lstsq(D, -force, rcond=None)[0]
                force = force + D @ coeffs
            size = float(np.linalg.norm(force))
            allowed = max(tol.rtol * magnitude, tol.atol_fraction * scale * len(members))
            if size > allowed:
                out.append(JointImbalance(model.joints[j].id, name, tuple(float(x) for x in force), size,
                                          tuple(model.members[i].id for i in members)))
    return out
