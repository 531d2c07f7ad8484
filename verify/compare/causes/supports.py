"""A support released: the claims come from the truss with one reaction component fewer.

On a statically indeterminate truss the claimed forces may balance every joint and still differ
from the elastic solution because the claimant left one restraint out (a pin taken as a roller, a
bearing taken as free). Each reaction component is released in turn; the truss that remains is
solved (by statics when it has become determinate, else by the direct stiffness method with the
same EA), and the release is named when it makes a clear majority of the disagreeing claims agree
and changes none that agreed. A release that leaves a mechanism is skipped.
"""

from __future__ import annotations

import dataclasses
from typing import NamedTuple

import numpy as np

from verify.analysis.pipeline import Analysis
from verify.analysis.run import AnalysisRun
from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.search import CLEAR_MAJORITY, MIN_EXPLAINED
from verify.compare.causes.variants import GEOMETRY_MEMBER_LIMIT, solve_members

MAX_RELEASES = 24  # reaction components tried (a truss has a handful of supports)


class Release(NamedTuple):
    words: str
    joint: str
    explained: np.ndarray  # mask over the frame


def explain_released_support(
    frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis
) -> Release | None:
    model = analysis.model
    if (
        not pending.any()
        or len(model.members) > GEOMETRY_MEMBER_LIMIT
        or analysis.reference is None
    ):
        return None
    columns, where = frame.column_positions()
    agreed = frame.agrees(frame.computed)
    best: Release | None = None
    for reaction in model.reactions[:MAX_RELEASES]:
        kept = tuple(r for r in model.reactions if r is not reaction)
        variant = dataclasses.replace(model, reactions=kept)
        run = analysis.run.variant(variant)
        forces, by_stiffness = _solve(run, columns, analysis.assumed_EA)
        if forces is None:
            continue  # a mechanism without it
        computed = forces[frame.member, where]
        now = frame.agrees(computed)
        if (agreed & ~pending & ~now).any():
            continue
        explained = pending & now
        if explained.sum() < max(MIN_EXPLAINED, CLEAR_MAJORITY * pending.sum()):
            continue
        if by_stiffness and not _stable_indeterminate(run):
            continue  # the stiffness solve went through, yet the truss is not that
        if best is None or explained.sum() > best.explained.sum():
            restrained = sorted(r.axis for r in model.reactions if r.joint == reaction.joint)
            words = (
                f"the support at {reaction.joint} free along {reaction.axis} (the case file "
                f"restrains {', '.join(restrained)} there): the claims are the forces of the truss "
                "without that reaction"
            )
            best = Release(words, reaction.joint, explained)
    return best


def _solve(
    run: AnalysisRun, columns: np.ndarray, assume_equal_EA: float | None
) -> tuple[np.ndarray | None, bool]:
    """Member forces of the released truss for the claimed columns (None for a mechanism), and
    whether they came from the stiffness solve.

    Those need the released truss to be stable and indeterminate, which the stability check (the
    authority on mechanisms) tells; it is far dearer than the solve (a full classification per
    release), so the caller asks it only for a release that would explain the claims
    (_stable_indeterminate): most explain nothing, and a singular K already shows most mechanisms.
    """
    forces = solve_members(run, columns)  # determinate once released
    if forces is not None:
        return forces, False
    try:
        elastic = run.elastic(assume_equal_EA)
    except ValueError:
        return None, True  # a singular K (a mechanism), or no stiffness
    return np.asarray(elastic.forces.member_forces)[:, np.asarray(columns, dtype=np.int64)], True


def _stable_indeterminate(run: AnalysisRun) -> bool:
    from verify.analysis.stability import Classification

    return run.stability().classification is Classification.STABLE_INDETERMINATE
