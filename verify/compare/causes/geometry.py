"""One panel or one joint drawn elsewhere: the local slips of geometry a calc's model can carry
(one panel drawn 3 m long where the drawing says 2.5 m, one joint's height typed as 2.3 for 2.0),
beside the overall span, depth and height that verify.compare.causes.search scales.

Each is a one-parameter move of some joint coordinates. Every move is first screened to first
order: the derivative of the claimed members' forces along it (from the drawn truss's own
factorisation) gives the least-squares step that best fits the disagreeing claims, and how much
of their misfit it removes. Only the
best few moves are then fitted properly (search.py) and tried at the round values a claimant
would have drawn.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.variants import AXIS_NAMES, statics_solution
from verify.formatting import fmt
from verify.model import Joint, Model

if TYPE_CHECKING:
    from verify.analysis.run import AnalysisRun

LOCAL_MEMBER_LIMIT = 800  # moves are screened and fitted by re-solving the truss: only below this
SCREENED_JOINTS = 12  # joints whose coordinates are screened (most disagreeing claims first)
FITTED_MOVES = 3  # best screened moves fitted and tried at round values
MIN_GAIN = 0.5  # a screened move must remove this share of the disagreeing claims' misfit
CLIP = 10.0  # a claim's misfit counts at most this many allowances (the fit clips alike)


class Move(NamedTuple):
    """Coordinates `joints` (positions) along `axis` moved by one step `delta`; `value` is the
    dimension as drawn (a panel's length or a joint's coordinate), `limit` the largest step a
    slip could be."""

    axis: int
    joints: np.ndarray
    value: float
    limit: float
    words: Callable[[float], str]  # the sentence for the dimension drawn as the given value
    named: tuple[str, ...]


def moved_model(model: Model, move: Move, delta: float) -> Model:
    xyz = model.xyz.copy()
    xyz[move.joints, move.axis] += delta
    joints = tuple(Joint(j.id, tuple(float(c) for c in xyz[k])) for k, j in enumerate(model.joints))
    return dataclasses.replace(model, joints=joints)


def panel_moves(model: Model) -> list[Move]:
    """Each gap between neighbouring coordinate levels along an axis with three levels or more
    (a panel along the span, a storey of a mast) drawn longer or shorter: every joint beyond it
    moves by the difference. An axis with two levels is the overall dimension, scaled already."""
    moves = []
    unit = model.units.length.symbol
    ids = model.joint_ids
    for axis in range(model.dim):
        coords = model.xyz[:, axis]
        size = max(float(np.ptp(coords)), 1e-300)
        levels = _levels(coords, 1e-6 * size)
        if len(levels) < 3:
            continue
        letter = AXIS_NAMES[axis][0]
        for low, high in zip(levels[:-1], levels[1:], strict=True):
            beyond = np.flatnonzero(coords >= high - 1e-6 * size)
            gap = high - low

            what, how = ("the height", "high") if axis == model.dim - 1 else ("the panel", "long")

            def words(
                new: float,
                low: float = low,
                high: float = high,
                gap: float = gap,
                letter: str = letter,
                what: str = what,
                how: str = how,
            ) -> str:
                return (
                    f"{what} from {letter} = {fmt(low, 4)} {unit} to {letter} = {fmt(high, 4)} "
                    f"{unit} drawn {fmt(new, 4)} {unit} {how} instead of {fmt(gap, 4)} {unit} "
                    f"(every joint from {letter} = {fmt(high, 4)} {unit} on moved "
                    f"{fmt(new - gap, 3)} {unit} along {letter})"
                )

            named = tuple(ids[int(k)] for k in beyond[:12])
            moves.append(Move(axis, beyond, gap, 0.5 * gap, words, named))
    return moves


def joint_moves(model: Model, frame: ClaimsFrame, pending: np.ndarray) -> list[Move]:
    """One joint's coordinate along one axis drawn otherwise, for the joints whose members hold
    the most disagreeing claims; by at most half its shortest member."""
    ends = model.ends_index
    touched = np.bincount(ends[frame.member[pending]].ravel(), minlength=len(model.joints)).astype(
        np.int64
    )
    order = np.argsort(-touched, kind="stable")
    lengths = np.linalg.norm(model.xyz[ends[:, 1]] - model.xyz[ends[:, 0]], axis=1)
    unit = model.units.length.symbol
    moves = []
    for k in order[:SCREENED_JOINTS].tolist():
        if touched[k] == 0:
            break
        at = (ends[:, 0] == k) | (ends[:, 1] == k)
        shortest = float(lengths[at].min()) if at.any() else 0.0
        if shortest <= 0:
            continue
        joint = model.joint_ids[k]
        for axis in range(model.dim):
            letter = AXIS_NAMES[axis][0]
            value = float(model.xyz[k, axis])

            def words(new: float, joint: str = joint, letter: str = letter, old: float = value):
                return (
                    f"joint {joint} drawn at {letter} = {fmt(new, 4)} {unit} instead of "
                    f"{letter} = {fmt(old, 4)} {unit}"
                )

            moves.append(Move(axis, np.array([k]), value, 0.5 * shortest, words, (joint,)))
    return moves


class Screened(NamedTuple):
    move: Move
    delta: float  # the least-squares step
    gain: float  # share of the disagreeing claims' misfit it removes (linearised)


def screen(
    run: AnalysisRun,
    frame: ClaimsFrame,
    pending: np.ndarray,
    base: np.ndarray,
    moves: Sequence[Move],
) -> list[Screened]:
    """Each move's best step and the share of misfit it removes, to first order, best first.

    The derivative of the forces along every move comes from the drawn truss's factorisation:
    A t + f = 0 with f fixed gives A dt = -(dA) t, and dA has a column only for the members
    the move stretches (one end moved, not the other), whose unit vector u turns by
    (I - u u^T) e / L per unit step along axis e. All moves are one solve with many right-hand
    sides; no variant truss is factorised until the few best are fitted.
    """
    model = run.model
    columns, where = frame.column_positions()
    drawn = statics_solution(run, columns)
    if drawn is None or not moves:
        return []
    d, b = model.dim, len(model.members)
    ends, u = model.ends_index, model.unit_vectors
    lengths = np.linalg.norm(model.xyz[ends[:, 1]] - model.xyz[ends[:, 0]], axis=1)
    ncols = drawn.shape[1]
    rhs = np.zeros((model.dofs, len(moves) * ncols))
    for i, move in enumerate(moves):
        moved = np.zeros(len(model.joints), dtype=bool)
        moved[move.joints] = True
        start_moved, end_moved = moved[ends[:, 0]], moved[ends[:, 1]]
        members = np.flatnonzero(start_moved != end_moved)
        sign = np.where(end_moved[members], 1.0, -1.0)
        turn = -u[members] * u[members, move.axis][:, None]
        turn[:, move.axis] += 1.0
        turn *= (sign / lengths[members])[:, None]  # d(u)/d(step), one row per member
        block = rhs[:, i * ncols : (i + 1) * ncols]
        for axis in range(d):
            change = turn[:, axis][:, None] * drawn[members]  # (members, columns)
            np.add.at(block, ends[members, 0] * d + axis, change)
            np.add.at(block, ends[members, 1] * d + axis, -change)
    slopes = np.asarray(run.equilibrium_lu().solve(-rhs)).reshape(model.dofs, -1)
    allowed = frame.allowed(frame.computed + base)[pending]
    # Misfits in allowances, clipped as the fit clips them: one slip of the table's own (a sign
    # flipped on a 100 kN member) must not outweigh the many small differences a move makes.
    ratio = np.clip((frame.claimed - frame.computed - base)[pending] / allowed, -CLIP, CLIP)
    total = float((ratio**2).sum())
    out = []
    for i, move in enumerate(moves):
        slope = (slopes[:b, i * ncols : (i + 1) * ncols][frame.member, where][pending]) / allowed
        curvature = float((slope**2).sum())
        if curvature <= 0 or total <= 0:
            continue
        delta = float((ratio * slope).sum()) / curvature
        gain = delta * delta * curvature / total
        if 0 < abs(delta) <= move.limit and gain >= MIN_GAIN:
            out.append(Screened(move, delta, gain))
    out.sort(key=lambda s: -s.gain)
    return out[:FITTED_MOVES]


def _levels(coords: np.ndarray, tolerance: float) -> list[float]:
    """The distinct coordinate values, merged within `tolerance`, in order."""
    values = np.sort(coords)
    levels = [float(values[0])] if len(values) else []
    for v in values[1:].tolist():
        if v - levels[-1] > tolerance:
            levels.append(v)
    return levels
