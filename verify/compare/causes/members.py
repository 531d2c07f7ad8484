"""A member drawn between other joints: the claims name a member the case does not have, written
as two of its joints ('B1T2', 'B1-T2'), and some member of the case has no claim ('T1B2'). If the
truss with that member moved to those two joints gives the disagreeing claims, the calc's truss
has (say) the diagonal of that panel the other way, and the table's values are right for it.

Each candidate changes one column of the equilibrium matrix A, so its forces follow from the
factorisation of the truss as drawn by the Sherman-Morrison formula (one solve; Golub & Van Loan,
Matrix Computations, 4th ed., section 2.1.4), as the moved supports do
(verify.compare.causes.variants.moved_support_forces).
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.search import CLEAR_MAJORITY, MIN_EXPLAINED
from verify.compare.causes.variants import GEOMETRY_MEMBER_LIMIT, statics_solution
from verify.compare.tolerances import allowance
from verify.formatting import fmt
from verify.model import Model

if TYPE_CHECKING:
    from verify.analysis.pipeline import Analysis
    from verify.analysis.run import AnalysisRun

MAX_LABELS = 10  # unknown labels read as joint pairs
MAX_UNCLAIMED = 20  # members without a claim tried as the one moved (nearest the named first)
SINGULAR = 1e-9  # |1 + w_m| below this: the moved member leaves a mechanism
_SEPARATORS = re.compile(r"\s*(?:-|–|—|_|/|\\|,|\s)\s*")


class WrittenForce(NamedTuple):
    """A value written under a label the model does not have, read as the member claims are."""

    load: int  # position among the model's load names
    value: float  # case units, tension positive
    atol: float  # the comparison's absolute allowance for the column
    rounding: float  # half a unit in its last written decimal, case units
    text: str  # the cell as written


class MovedMember(NamedTuple):
    words: str
    label: str  # the label the claims use
    member: int  # the case's member taken to be drawn elsewhere
    explained: np.ndarray  # mask over the frame


def joint_pair(label: str, model: Model) -> tuple[int, int] | None:
    """The two joints a label names ('B1T2', 'B1-T2', 'B1 / T2'), when it names exactly two
    distinct joints of the model in one way; else None."""
    found = _pairs(label.strip(), model.joint_index)
    if not found:
        # the claims reader matches labels whatever their case ('l2u3'): so are joints read,
        # when no two joint ids differ only by case
        folded: dict[str, int] = {}
        for joint, k in model.joint_index.items():
            key = joint.casefold()
            folded[key] = -1 if key in folded else k  # -1: two joints differ only by case
        found = _pairs(label.strip().casefold(), {j: k for j, k in folded.items() if k >= 0})
    if len(found) != 1:
        return None
    ((a, b),) = found
    return (a, b) if a != b else None


def _pairs(text: str, index: Mapping[str, int]) -> set[tuple[int, int]]:
    """The ways `text` names two joints of `index`: split at a separator, else written
    together."""
    parts = [p for p in _SEPARATORS.split(text) if p]
    if len(parts) == 2 and parts[0] in index and parts[1] in index:
        return {(index[parts[0]], index[parts[1]])}
    return {
        (index[text[:k]], index[text[k:]])
        for k in range(1, len(text))
        if text[:k] in index and text[k:] in index
    }


def replaced_member_forces(
    run: AnalysisRun, drawn: np.ndarray, member: int, ends: tuple[int, int]
) -> np.ndarray | None:
    """Member forces (members x the columns of `drawn`) with `member` drawn between `ends`
    (joint indices; its force keeps the member's position), from the truss as drawn: `drawn` is
    its solution (unknowns x columns). None when the change leaves a mechanism."""
    model = run.model
    d = model.dim
    lu = run.equilibrium_lu()
    xyz = model.xyz
    start, end = ends
    u = xyz[end] - xyz[start]
    length = float(np.linalg.norm(u))
    if length == 0.0:
        return None
    u = u / length
    change = np.zeros(lu.shape[0])
    change[start * d : start * d + d] += u
    change[end * d : end * d + d] -= u
    old_start, old_end = (int(j) for j in model.ends_index[member])
    old_u = model.unit_vectors[member]
    change[old_start * d : old_start * d + d] -= old_u
    change[old_end * d : old_end * d + d] += old_u
    w = np.asarray(lu.solve(change)).ravel()
    pivot = 1.0 + float(w[member])
    if abs(pivot) <= SINGULAR:
        return None
    t = drawn - np.outer(w, drawn[member] / pivot)
    scale = max(float(np.abs(drawn).max(initial=0.0)), 1e-300)
    if not np.isfinite(t).all() or np.abs(t).max(initial=0.0) > 1e6 * scale:
        return None  # a near-mechanism explains nothing
    return t[: len(model.members)]


def find_moved_member(
    frame: ClaimsFrame,
    pending: np.ndarray,
    analysis: Analysis,
    labels: Sequence[str],
    written: Mapping[str, Sequence[WrittenForce]] | None = None,
) -> MovedMember | None:
    """The move of one unclaimed member to the joints an unknown label names that explains the
    most disagreeing claims: a clear majority of those in the columns it changes, at least
    MIN_EXPLAINED of them, and no claim that agreed changed to disagree. Its words say whether
    the values `written` under that label are the moved member's forces."""
    model = analysis.model
    if analysis.global_ is None or len(model.members) > GEOMETRY_MEMBER_LIMIT:
        return None
    ends = model.ends_index
    joined = {(int(a), int(b)) for a, b in ends.tolist()}
    pairs = []
    for label in list(dict.fromkeys(labels))[:MAX_LABELS]:
        pair = joint_pair(label, model)
        if pair is not None and pair not in joined and pair[::-1] not in joined:
            pairs.append((label, pair))
    if not pairs:
        return None
    claimed = np.zeros(len(model.members), dtype=bool)
    claimed[frame.member] = True
    unclaimed = np.flatnonzero(~claimed)
    if not len(unclaimed):
        return None
    middles = model.xyz[ends[unclaimed]].mean(axis=1)
    columns, where = frame.column_positions()
    drawn = statics_solution(analysis.run, columns)
    if drawn is None:
        return None
    agreed = frame.agrees(frame.computed)
    best: MovedMember | None = None
    best_forces = np.zeros(0)  # the moved member's force in each of `columns`
    for label, pair in pairs:
        # the unclaimed members nearest the named one first (the other diagonal of its panel
        # has the same middle), so a spot-check table with many unclaimed members still finds it
        middle = model.xyz[list(pair)].mean(axis=0)
        near = np.argsort(np.linalg.norm(middles - middle, axis=1), kind="stable")
        for m in unclaimed[near[:MAX_UNCLAIMED]].tolist():
            t = replaced_member_forces(analysis.run, drawn, m, pair)
            if t is None:
                continue
            moved = t[frame.member, where]
            now = frame.agrees(moved)
            if (agreed & ~now).any():
                continue
            explained = pending & now
            changed_columns = np.unique(frame.column[~np.isclose(moved, frame.computed)])
            in_touched = pending & np.isin(frame.column, changed_columns)
            n = int(explained.sum())
            if n < MIN_EXPLAINED or n < CLEAR_MAJORITY * int(in_touched.sum()):
                continue
            if best is None or n > int(best.explained.sum()):
                best = MovedMember(_words(model, m, label, pair), label, m, explained)
                best_forces = t[m]
    if best is not None and written and written.get(best.label):
        words = _written_words(frame, best.label, written[best.label], columns, best_forces)
        best = best._replace(words=best.words + words)
    return best


def _written_words(
    frame: ClaimsFrame,
    label: str,
    written: Sequence[WrittenForce],
    columns: np.ndarray,
    forces: np.ndarray,
) -> str:
    """Whether the values written under `label` are the forces of the member drawn there, in
    the load columns the cause was judged on (none: nothing said)."""
    model = frame.model
    at = {int(k): i for i, k in enumerate(columns.tolist())}
    held = [(w, float(forces[at[w.load]])) for w in written if w.load in at]
    if not held:
        return ""
    wrong = [
        (w, f)
        for w, f in held
        if abs(w.value - f) > allowance(frame.rtol, w.value, f, w.atol, w.rounding)
    ]
    if not wrong:
        return f"; the forces written for {label} are that member's"
    w, f = wrong[0]
    return (
        f"; but the force written for {label} in '{model.load_names[w.load]}' "
        f"({w.text.strip()}) is not that member's ({fmt(f)} {model.units.force.symbol})"
    )


def _words(model: Model, member: int, label: str, pair: tuple[int, int]) -> str:
    ids = model.joint_ids
    old = (int(model.ends_index[member, 0]), int(model.ends_index[member, 1]))
    start, end = ids[old[0]], ids[old[1]]
    words = (
        f"a truss with {label} ({ids[pair[0]]} to {ids[pair[1]]}), which the claims name, in "
        f"place of {model.member_ids[member]} ({start} to {end}), which they leave out"
    )
    if _other_diagonal(model.xyz, old, pair):
        words += ": the diagonal of that panel drawn the other way"
    return words


def _other_diagonal(xyz: np.ndarray, old: tuple[int, int], new: tuple[int, int]) -> bool:
    """The two members are the two diagonals of one plane quadrilateral panel: four distinct
    joints, and the segments cross inside both."""
    if len({*old, *new}) != 4:
        return False
    p, r = xyz[old[0]], xyz[old[1]] - xyz[old[0]]
    q, s = xyz[new[0]], xyz[new[1]] - xyz[new[0]]
    # p + a r = q + b s with 0 < a, b < 1 (least squares; crossing only if it fits exactly)
    M = np.stack([r, -s], axis=1)
    (a, b), *_ = np.linalg.lstsq(M, q - p, rcond=None)
    size = max(float(np.linalg.norm(r)), float(np.linalg.norm(s)))
    miss = float(np.linalg.norm(p + a * r - (q + b * s)))
    return bool(0.0 < a < 1.0 and 0.0 < b < 1.0 and miss <= 1e-9 * size)
