"""Likely causes: why a claimed table differs, in the one sentence a checker writes back.

Explainers, each on what the earlier ones left unexplained (the comparison calls them in turn,
between its own steps):

1. a slightly different model: a member the claims name by two joints the case does not join
   (:mod:`verify.compare.causes.members`, tried first: its rows otherwise read as values copied
   from rows that happen to carry the same force); loads at the other chord or another joint, a
   load left out, doubled, scaled, turned vertical or added over a level, a combination factor,
   the supports exchanged or one moved a member away, an overall dimension, one panel or one
   joint drawn elsewhere (see :mod:`verify.compare.causes.search`) — first, because its test (a
   clear majority of the disagreeing claims explained, none that agreed broken, none taken
   clearly further away) is the strictest, and a model change moves values in patterns that a
   row shift can imitate;
2. rows shifted against their labels (a row inserted or deleted in the table) — before swapped
   pairs, which a shifted run on a symmetric truss imitates;
3. a value copied from another row — last, after swapped pairs, because a mirror member of a
   symmetric truss carries the same value honestly.

Each returns the claims it explains and one `likely-cause` finding per cause, naming the change in
plain words, the members and where their claims were written, and how many disagreeing claims
remain unexplained.
"""

from __future__ import annotations

import shlex
from collections.abc import Mapping, Sequence
from typing import NamedTuple

import numpy as np

from verify.analysis.pipeline import Analysis
from verify.compare.causes.bracing import explain_tension_only
from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.members import WrittenForce, find_moved_member
from verify.compare.causes.search import search_causes
from verify.compare.causes.supports import explain_released_support
from verify.compare.causes.table_order import Shift, copied_values, shifted_runs
from verify.compare.findings import Finding, Severity

__all__ = [
    "CauseReport",
    "ClaimsFrame",
    "explain_bracing",
    "explain_copies",
    "explain_model",
    "explain_moved_member",
    "explain_release",
    "explain_shifted_rows",
]

SHOWN = 12  # members and locations listed in a finding's text


class CauseReport(NamedTuple):
    explained: np.ndarray  # mask over the frame
    findings: list[Finding]
    notes: list[str]
    status: str = "likely-cause"  # the status the explained rows take


def explain_bracing(frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis) -> CauseReport:
    """Tension-only bracing (verify.compare.causes.bracing): an idealisation, said as
    information."""
    explained, groups = explain_tension_only(frame, pending, analysis)
    findings = []
    for words, _, mask in groups:
        cases = frame.columns_of(mask)
        findings.append(
            Finding(
                "likely-cause",
                frame.member_ids(mask),
                f"the claims in {', '.join(repr(case) for case in cases)} assume {words}: "
                f"{int(mask.sum())} claim(s) that differ from the elastic solution agree with it. "
                "Confirm the bracing is slender enough to buckle before it carries load",
                Severity.INFO,
                case=cases[0] if len(cases) == 1 else None,
                variant=words,
                explains=int(mask.sum()),
                locations=frame.locations(mask),
            )
        )
    return CauseReport(explained, findings, [], status="tension-only")


def explain_release(frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis) -> CauseReport:
    """A support released on an indeterminate truss (verify.compare.causes.supports)."""
    release = explain_released_support(frame, pending, analysis)
    if release is None:
        return CauseReport(np.zeros(len(frame), dtype=bool), [], [])
    n = int(release.explained.sum())
    finding = Finding(
        "likely-cause",
        frame.member_ids(release.explained),
        f"the claims in {', '.join(repr(case) for case in frame.columns_of(release.explained))} "
        f"correspond to {release.words}: {n} disagreeing claim(s) agree with it and no claim that "
        "agreed is changed",
        Severity.ERROR,
        variant=release.words,
        explains=n,
        unexplained=int((pending & ~release.explained).sum()),
        joints=(release.joint,),
        locations=frame.locations(release.explained),
    )
    return CauseReport(release.explained, [finding], [])


def explain_shifted_rows(
    frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis
) -> CauseReport:
    """Runs of rows whose values belong to the member a few rows away: one finding for the same
    rows in every column. Runs first: on a symmetric truss a shifted run also reads as pairs of
    mirror members swapped, or as values copied from a mirror member."""
    groups: dict[tuple[int, tuple[str, ...]], list[Shift]] = {}
    for shift in shifted_runs(frame, pending, np.zeros(len(frame))):
        groups.setdefault((shift.offset, frame.member_ids(shift.explained)), []).append(shift)
    explained = np.zeros(len(frame), dtype=bool)
    findings = []
    for (offset, _), runs in groups.items():
        mask = np.zeros(len(frame), dtype=bool)
        for run in runs:
            mask |= run.explained
        first, last = runs[0].positions[0], runs[0].positions[-1]
        columns = ", ".join(f"'{frame.load_names[r.column]}'" for r in runs)
        way = "further down" if offset > 0 else "further up"
        words = (
            f"the values sit {abs(offset)} row(s) off their labels from {frame.where[first]} to "
            f"{frame.where[last]}: each is the force of the member {abs(offset)} row(s) {way} (a "
            "row inserted or deleted)"
        )
        findings.append(
            _finding(
                frame,
                mask,
                words,
                "rows-shifted",
                columns,
                analysis.model.source,
                pending_after=None,
                factor=float(offset),
            )
        )
        explained |= mask
    return CauseReport(explained, findings, [])


def explain_model(frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis) -> CauseReport:
    """A slightly different model (verify.compare.causes.search)."""
    result = search_causes(frame, pending, analysis)
    explained = np.zeros(len(frame), dtype=bool)
    findings = []
    for cause in result.causes:
        columns = ", ".join(f"'{c}'" for c in frame.columns_of(cause.explained))
        touched = np.isin(frame.column, np.unique(frame.column[cause.explained]))
        findings.append(
            _finding(
                frame,
                cause.explained,
                cause.variant.words,
                cause.variant.kind,
                columns,
                analysis.model.source,
                pending_after=int((result.unexplained & touched).sum()),
                factor=cause.variant.factor,
                joints=cause.variant.joints,
            )
        )
        explained |= cause.explained
    return CauseReport(explained, findings, list(result.notes))


def explain_moved_member(
    frame: ClaimsFrame,
    pending: np.ndarray,
    analysis: Analysis,
    labels: tuple[str, ...],
    written: Mapping[str, Sequence[WrittenForce]] | None = None,
) -> CauseReport:
    """A member drawn between other joints, named by a label the case does not have, and whether
    the values written under that label are its forces (verify.compare.causes.members)."""
    moved = find_moved_member(frame, pending, analysis, labels, written)
    if moved is None:
        return CauseReport(np.zeros(len(frame), dtype=bool), [], [])
    columns = ", ".join(f"'{c}'" for c in frame.columns_of(moved.explained))
    touched = np.isin(frame.column, np.unique(frame.column[moved.explained]))
    ids = analysis.model.joint_ids
    joints = tuple(ids[int(j)] for j in analysis.model.ends_index[moved.member])
    finding = _finding(
        frame,
        moved.explained,
        moved.words,
        "member-moved",
        columns,
        analysis.model.source,
        pending_after=int((pending & ~moved.explained & touched).sum()),
        joints=joints,
    )
    return CauseReport(moved.explained, [finding], [])


def explain_copies(frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis) -> CauseReport:
    """A disagreeing value written exactly as another row whose claim agrees: copied from it."""
    explained = np.zeros(len(frame), dtype=bool)
    findings = []
    ids = analysis.model.member_ids
    for copy in copied_values(frame, pending, np.zeros(len(frame))):
        mask = np.zeros(len(frame), dtype=bool)
        mask[copy.position] = True
        target, origin = ids[int(frame.member[copy.position])], ids[int(frame.member[copy.source])]
        words = (
            f"the value claimed for {target} ({frame.written[copy.position].strip()}) is the one "
            f"claimed for {origin} at {frame.where[copy.source]}, which agrees with {origin}: "
            "copied from that row"
        )
        findings.append(
            _finding(
                frame,
                mask,
                words,
                "value-copied",
                f"'{frame.load_names[int(frame.column[copy.position])]}'",
                analysis.model.source,
                pending_after=None,
            )
        )
        explained |= mask
    return CauseReport(explained, findings, [])


def _finding(
    frame: ClaimsFrame,
    mask: np.ndarray,
    words: str,
    kind: str,
    columns: str,
    source: str,
    *,
    pending_after: int | None,
    factor: float | None = None,
    joints: tuple[str, ...] = (),
) -> Finding:
    members = frame.member_ids(mask)
    n = int(mask.sum())
    shown = ", ".join(members[:SHOWN]) + (
        f" and {len(members) - SHOWN} more" if len(members) > SHOWN else ""
    )
    where = "; ".join(frame.locations(mask, 4))
    rest = (
        ""
        if pending_after is None
        else (
            "; every other disagreeing claim in these columns is explained too"
            if pending_after == 0
            else f"; {pending_after} disagreeing claim(s) in these columns remain unexplained "
            "(listed below)"
        )
    )
    cases = frame.columns_of(mask)
    detail = (
        (
            f"the claims in {columns} correspond to {words}: with that change {n} disagreeing "
            f"claim(s) ({shown}) agree and no claim that agreed is changed{rest}. Written at "
            f"{where}" + (" …" if n > 4 else "")
        )
        if kind not in ("rows-shifted", "value-copied")
        else (
            f"in {columns}: {words}. {n} claim(s) explained ({shown}); written at {where}"
            + (" …" if n > 4 else "")
        )
    )
    step = (
        f"truss-verify solve {shlex.quote(source)} --show joints"
        + (f" --case {shlex.quote(cases[0])}" if len(cases) == 1 else "")
        if source
        else None
    )
    return Finding(
        "likely-cause",
        members,
        detail,
        Severity.ERROR,
        case=cases[0] if len(cases) == 1 else None,
        variant=words,
        explains=n,
        unexplained=pending_after,
        factor=factor,
        joints=joints,
        locations=frame.locations(mask),
        next_step=step,
    )
