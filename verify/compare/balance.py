"""Equilibrium of the claimed forces on their own, joint by joint.

A joint can be checked when every member meeting there has a claim. Reactions there are the
claimed ones when given, otherwise whatever best balances the joint (they act only at their
joint, so this is a small least-squares problem per supported joint). A joint is out of balance
when the leftover force exceeds the comparison tolerance applied to the forces meeting there.
Vectorised over joints: one sparse product per load column.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import TYPE_CHECKING

import numpy as np
import scipy.sparse as sp

from verify.compare.tolerances import Tolerance
from verify.model import Model

if TYPE_CHECKING:
    from verify.analysis.pipeline import Analysis


@dataclass(frozen=True)
class JointImbalance:
    joint: str
    case: str
    residual: tuple[float, ...]
    size: float
    members: tuple[str, ...]


def _incidence(model: Model) -> tuple[sp.csr_matrix, np.ndarray]:
    """Joints x members 0/1 matrix (which members meet at each joint) and each joint's degree."""
    b, nj, ends = len(model.members), len(model.joints), model.ends_index
    # Column by column (two entries a member, its ends) and turned into rows: the matrix the
    # coordinate form gave (rows in order, duplicates summed), without its sort of 2b entries.
    incidence = sp.csc_matrix(
        (np.ones(2 * b), np.ascontiguousarray(ends, dtype=np.int64).ravel(), 2 * np.arange(b + 1)),
        shape=(nj, b),
    ).tocsr()
    incidence.sum_duplicates()
    return incidence, np.asarray(incidence.sum(axis=1)).ravel()


def claims_balance(
    analysis: Analysis,
    claimed: np.ndarray,
    reaction_claims: dict[tuple[int, int], float],
    load_names: list[str],
    tol: Tolerance,
    rounding: np.ndarray | None = None,
) -> list[JointImbalance]:
    """Joints where the claims do not balance, per load column.

    `rounding` (members x load columns, case units) is each claim's allowance for the decimals it
    was written with: members rounded honestly leave some force unbalanced at a joint, about the
    root-sum-square of their allowances, which is not an error.
    """
    model = analysis.model
    d = model.dim
    b = len(model.members)
    nj = len(model.joints)
    F = model.load_matrix()
    A = analysis.run.equilibrium_matrix()[:, :b]
    incidence, degree = _incidence(model)
    reactions_at: dict[int, list[int]] = {}
    for n, r in enumerate(model.reactions):
        reactions_at.setdefault(model.joint_index[r.joint], []).append(n)
    out: list[JointImbalance] = []
    for k, name in enumerate(load_names):
        column = claimed[:, k]
        finite = np.isfinite(column)
        if not finite.any():
            continue
        values = np.where(finite, column, 0.0)
        loads = F[:, k]
        scale = max(float(np.abs(values).max()), float(np.abs(loads).max()) if loads.size else 0.0)
        unclaimed = incidence @ (~finite).astype(float)
        checkable = (degree > 0) & (unclaimed == 0)
        residual = (A @ values + loads).reshape(nj, d)
        magnitude = incidence @ np.abs(values) + np.abs(loads.reshape(nj, d)).sum(axis=1)
        for j, ids in reactions_at.items():
            if not checkable[j]:
                continue
            free = []
            for n in ids:
                direction = np.asarray(model.reactions[n].direction)
                if (n, k) in reaction_claims:
                    residual[j] += direction * reaction_claims[(n, k)]
                    magnitude[j] += abs(reaction_claims[(n, k)])
                else:
                    free.append(direction)
            if free:
                D = np.column_stack(free)
                coeffs = np.linalg.lstsq(D, -residual[j], rcond=None)[0]
                residual[j] = residual[j] + D @ coeffs
        size = np.linalg.norm(residual, axis=1)
        allowed = np.maximum(
            tol.rtol * magnitude, tol.atol_fraction * scale * np.maximum(degree, 1)
        )
        if rounding is not None:
            # Independent roundings add like random errors: root-sum-square of the allowances of
            # the members at the joint (the worst-case sum would hide a real 2 kN slip among
            # five whole-kN claims).
            squares = np.where(finite, np.nan_to_num(rounding[:, k]), 0.0) ** 2
            allowed = allowed + np.sqrt(incidence @ squares)
        for jj in np.nonzero(checkable & (size > allowed))[0]:
            j = int(jj)
            members = incidence.indices[incidence.indptr[j] : incidence.indptr[j + 1]]
            out.append(
                JointImbalance(
                    model.joints[j].id,
                    name,
                    tuple(float(x) for x in residual[j]),
                    float(size[j]),
                    tuple(model.members[i].id for i in sorted(members)),
                )
            )
    return out


def checkable_joints(model: Model, claimed: np.ndarray, load_names: list[str]) -> dict[str, int]:
    """Per load column with claims: how many joints have a claim for every member meeting there."""
    incidence, degree = _incidence(model)
    out: dict[str, int] = {}
    for k, name in enumerate(load_names):
        finite = np.isfinite(claimed[:, k])
        if finite.any():
            unclaimed = incidence @ (~finite).astype(float)
            out[name] = int(((degree > 0) & (unclaimed == 0)).sum())
    return out
