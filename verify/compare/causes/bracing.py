"""Tension-only bracing: the compression diagonal of each crossed panel taken as slack.

A common idealisation for slender cross bracing (rods, flats, angles): the diagonal that would
be in compression buckles early and is left out, and the tension diagonal carries the panel shear
alone (common practice). A claimed table built that way differs from the elastic solution of the
full truss by a state of self-stress; it is not an error when the claims are exactly the forces
of the truss without the slack diagonals. This explainer rebuilds that truss per load column
(the diagonals claimed as zero among crossing pairs), solves it by statics, and names the
idealisation when the claims then agree: information, not an error.
"""

from __future__ import annotations

import dataclasses

import numpy as np

from verify.analysis.pipeline import Analysis
from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.search import CLEAR_MAJORITY
from verify.compare.causes.variants import solve_members
from verify.model import Model


def crossing_pairs(model: Model) -> list[tuple[int, int]]:
    """Pairs of members (2D) whose lines cross inside both of them, not at a joint."""
    if model.dim != 2 or len(model.members) > 20000:
        return []
    xy = model.xyz
    ends = model.ends_index
    lo = np.minimum(xy[ends[:, 0]], xy[ends[:, 1]])
    hi = np.maximum(xy[ends[:, 0]], xy[ends[:, 1]])
    order = np.argsort(lo[:, 0]).tolist()
    # Plain lists for the sweep: slicing the order array per member made it quadratic (half of
    # a 10^4-member check of an X-braced truss).
    lo_l, hi_l, ends_l = lo.tolist(), hi.tolist(), ends.tolist()
    out = []
    for pos, a in enumerate(order):
        for next_pos in range(pos + 1, len(order)):
            b = order[next_pos]
            if lo_l[b][0] > hi_l[a][0]:
                break  # sorted by left end: nothing further can overlap a in x
            if (
                lo_l[b][1] > hi_l[a][1]
                or hi_l[b][1] < lo_l[a][1]
                or set(ends_l[a]) & set(ends_l[b])
            ):
                continue
            if _cross(xy[ends[a, 0]], xy[ends[a, 1]], xy[ends[b, 0]], xy[ends[b, 1]]):
                out.append((a, b))
    return out


def _cross(p: np.ndarray, q: np.ndarray, r: np.ndarray, s: np.ndarray) -> bool:
    d1, d2 = q - p, s - r
    denominator = d1[0] * d2[1] - d1[1] * d2[0]
    if abs(denominator) < 1e-12 * (np.linalg.norm(d1) * np.linalg.norm(d2)):
        return False  # parallel
    t = ((r[0] - p[0]) * d2[1] - (r[1] - p[1]) * d2[0]) / denominator
    u = ((r[0] - p[0]) * d1[1] - (r[1] - p[1]) * d1[0]) / denominator
    return 1e-9 < t < 1 - 1e-9 and 1e-9 < u < 1 - 1e-9


def explain_tension_only(
    frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis
) -> tuple[np.ndarray, list[tuple[str, tuple[str, ...], np.ndarray]]]:
    """Claims explained, and per group of load columns (words, slack members, mask explained)."""
    model = analysis.model
    explained = np.zeros(len(frame), dtype=bool)
    groups: list[tuple[str, tuple[str, ...], np.ndarray]] = []
    pairs = crossing_pairs(model)
    if not pairs or analysis.reference is None:
        return explained, groups
    elastic = analysis.reference.member_forces
    claimed = np.full((len(model.members), len(frame.load_names)), np.nan)
    claimed[frame.member, frame.column] = frame.claimed
    allowance = np.zeros_like(claimed)
    allowance[frame.member, frame.column] = np.maximum(frame.atol, frame.rounding)
    by_slack: dict[tuple[int, ...], list[int]] = {}
    for k in np.unique(frame.column[pending]).tolist():
        slack = []
        for a, b in pairs:
            for idle, busy in ((a, b), (b, a)):
                if (
                    np.isfinite(claimed[idle, k])
                    and abs(claimed[idle, k]) <= allowance[idle, k]
                    and elastic[idle, k] < 0
                    and np.isfinite(claimed[busy, k])
                    and claimed[busy, k] > 0
                ):
                    slack.append(idle)
        if slack:
            by_slack.setdefault(tuple(sorted(set(slack))), []).append(k)
    for slack_t, columns in by_slack.items():
        kept = [m for i, m in enumerate(model.members) if i not in set(slack_t)]
        variant = dataclasses.replace(model, members=tuple(kept))
        forces = solve_members(analysis.run.variant(variant), np.array(columns))
        if forces is None:
            continue  # still indeterminate, or a mechanism, without the slack diagonals
        full = np.zeros((len(model.members), len(columns)))
        keep_index = [i for i in range(len(model.members)) if i not in set(slack_t)]
        full[keep_index] = forces
        in_columns = np.isin(frame.column, columns)
        lookup = {k: n for n, k in enumerate(columns)}
        where = np.array([lookup.get(int(k), 0) for k in frame.column])
        computed = np.where(in_columns, full[frame.member, where], frame.computed)
        now = frame.agrees(computed)
        agreed = frame.agrees(frame.computed)
        mask = pending & in_columns & now
        if (agreed & in_columns & ~now).any() or mask.sum() < CLEAR_MAJORITY * (
            pending & in_columns
        ).sum():
            continue  # it breaks a claim that agreed, or leaves most differences unexplained
        names = tuple(model.members[i].id for i in slack_t)
        words = (
            "tension-only bracing: the compression diagonal of each crossed panel taken as slack "
            f"({', '.join(names[:8])}{' …' if len(names) > 8 else ''} carry nothing) — a common "
            "idealisation for slender cross bracing; the claims are the statics of the truss "
            "without them"
        )
        explained |= mask
        groups.append((words, names, mask))
    return explained, groups
