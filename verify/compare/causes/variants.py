"""Plausible variants of the model, each as the change it makes to the recomputed forces.

A claimant who put the traffic loads on the wrong chord, forgot a load, used another load
factor, pinned the other support or drew the truss a little deeper produced forces that are
exactly the forces of that *variant* of the model. Each candidate here is such a variant, named in
plain words, with `shift`: the change of the recomputed value at every claim of the frame.

Load variants are found through influence lines: the force in member m due to joint loads f is
``t_m = -r_m . f`` where ``r_m`` is row m of A^-1, so one transposed solve per disagreeing member
(``A^T r_m = e_m``, on the factorisation already made) prices every load variant at those
members at once. Only the best few are then solved forward for every claim, so the test "makes
the disagreeing claims agree and breaks none that agreed" is exact.

Support and dimension variants change the matrix itself: each is a new sparse solve, so they are
tried only on trusses up to GEOMETRY_MEMBER_LIMIT members, and a dimension is fitted with a
bounded one-parameter search.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Callable, Iterator, Sequence
from typing import TYPE_CHECKING, NamedTuple

import numpy as np
import scipy.sparse as sp

from verify.compare.causes.frame import ClaimsFrame
from verify.formatting import fmt
from verify.model import Joint, Model, Reaction

if TYPE_CHECKING:
    from verify.analysis.run import AnalysisRun

SAMPLE_CLAIMS = 120  # disagreeing claims priced by influence lines (a sample above this): one
#                      transposed solve per member sampled, the costliest step on 3D trusses
SHORTLIST = 16  # candidates per round solved forward for every claim
MAX_JOINT_CHANGES = (
    6000  # single-joint load changes priced per round (nearest the disagreement first)
)
GEOMETRY_MEMBER_LIMIT = 5000  # support and dimension variants re-solve the truss: only below this
DIMENSION_RANGE = (0.5, 2.0)  # a dimension differing by more than this is not a slip


class Variant(NamedTuple):
    kind: str  # "loads-other-chord", "load-moved", "load-scaled", "loads-vertical", "case-scaled",
    #            "combination-factor", "support-moved", "dimension"
    words: str
    shift: np.ndarray  # change of the recomputed value at every claim of the frame
    case: str | None = None
    joints: tuple[str, ...] = ()
    factor: float | None = None
    fitted: bool = False  # a size fitted to the claims (a factor, a dimension, a thrust): on a tie,
    #                       a change with nothing fitted is the plainer explanation


class LoadChange(NamedTuple):
    """A change of one load case's joint loads and how to say it.

    `rows` and `values` are the changed joint directions (positions in the load vector) and the
    change there: sparse, because a 10^5-member truss has tens of thousands of single-load changes.
    """

    kind: str
    case: int
    rows: np.ndarray
    values: np.ndarray
    words: str | Callable[[float], str]  # a callable takes the fitted factor (for scaled loads)
    joints: tuple[str, ...]
    fitted: bool = (
        False  # the size of the change is fitted to the claims (values are one unit of it)
    )

    def dense(self, size: int) -> np.ndarray:
        out = np.zeros(size)
        np.add.at(out, self.rows, self.values)
        return out


def vertical_axis(model: Model) -> int:
    """y in 2D, z in 3D (common practice for gravity loads in case files)."""
    return model.dim - 1


# -- load changes -------------------------------------------------------------------------------
def _partner(model: Model) -> dict[int, int]:
    """The joint directly above or below each joint (same plan position), preferring one joined
    to it by a member (a vertical), else the nearest in height."""
    v = vertical_axis(model)
    xyz = model.xyz
    if not len(xyz):
        return {}
    span = float(np.ptp(xyz, axis=0).max()) or 1.0
    key = np.round(np.delete(xyz, v, axis=1) / (1e-6 * span)).astype(np.int64)
    _, group, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    group = group.ravel()
    stacked = np.flatnonzero(counts[group] > 1)  # joints sharing their plan position with another
    out: dict[int, int] = {}
    if not stacked.size:
        return out
    ends = model.ends_index
    same = group[ends[:, 0]] == group[ends[:, 1]]
    linked: dict[int, list[int]] = {}
    for a, b in ends[same].tolist():  # members along the vertical through a plan position
        linked.setdefault(a, []).append(b)
        linked.setdefault(b, []).append(a)
    members: dict[int, list[int]] = {}
    for j in stacked.tolist():
        members.setdefault(int(group[j]), []).append(j)
    for j in stacked.tolist():
        pool = linked.get(j) or [o for o in members[int(group[j])] if o != j]
        out[j] = min(pool, key=lambda o: abs(xyz[o, v] - xyz[j, v]))
    return out


def load_changes(
    model: Model, cases: list[int], near: set[int] | None = None, limit: int = MAX_JOINT_CHANGES
) -> tuple[list[LoadChange], Singles, bool]:
    """Candidate load changes for the given cases: whole-case ones, single-joint ones (arrays), and
    whether single-joint changes were capped.

    Whole-case changes always; single-joint changes (a load left out, scaled, or at the other end
    of a member) for the joints in `near` first, up to `limit` in all.
    """
    d = model.dim
    F = model.load_matrix()
    partner = _partner(model)
    ends = model.ends_index
    nj = len(model.joints)
    adjacency = sp.csr_matrix(
        (
            np.ones(2 * len(ends)),
            (np.concatenate([ends[:, 0], ends[:, 1]]), np.concatenate([ends[:, 1], ends[:, 0]])),
        ),
        shape=(nj, nj),
    )
    ids = model.joint_ids
    v = vertical_axis(model)
    restraints: dict[int, int] = {}
    for r in model.reactions:
        restraints[model.joint_index[r.joint]] = restraints.get(model.joint_index[r.joint], 0) + 1
    held = {j for j, count in restraints.items() if count >= d}
    out: list[LoadChange] = []
    single_case: list[np.ndarray] = []
    single_joints: list[np.ndarray] = []
    single_targets: list[np.ndarray] = []
    capped = False

    def change(
        kind: str,
        c: int,
        parts: list[tuple[int, np.ndarray]],
        words: str | Callable[[float], str],
        joints: tuple[str, ...],
        fitted: bool = False,
    ) -> LoadChange:
        rows = np.concatenate([j * d + np.arange(d) for j, _ in parts])
        values = np.concatenate([np.asarray(vec, dtype=float) for _, vec in parts])
        return LoadChange(kind, c, rows, values, words, joints, fitted)

    for c in cases:
        name = model.cases[c].name
        column = F[:, c].reshape(-1, d)
        loaded = [int(j) for j in np.flatnonzero(np.abs(column).sum(axis=1) > 0)]
        if not loaded:
            continue
        # The whole case on the other chord (the joints directly above or below).
        # A case on both chords (dead load) may have had one chord's loads moved: each direction
        # on its own, and both together when the case sits on one chord only.
        moved = [j for j in loaded if j in partner]
        up = [j for j in moved if model.xyz[partner[j], v] > model.xyz[j, v]]
        down = [j for j in moved if model.xyz[partner[j], v] < model.xyz[j, v]]
        groups = [
            (group, "above" if group is up else "below") for group in (up, down) if len(group) >= 2
        ]
        if up and down and len(moved) * 2 >= len(loaded):
            groups.append((moved, "above or below"))
        elif moved and len(moved) * 2 >= len(loaded) and not groups:
            groups.append((moved, "above" if up else "below"))
        for group, where in groups:
            targets = [partner[j] for j in group]
            parts = [(j, -column[j]) for j in group] + [
                (t, column[j]) for j, t in zip(group, targets, strict=True)
            ]
            out.append(
                change(
                    "loads-other-chord",
                    c,
                    parts,
                    f"the '{name}' loads applied at {joint_list(ids, targets)} (the joints "
                    f"directly {where}) instead of {joint_list(ids, group)}",
                    tuple(ids[t] for t in targets),
                )
            )
        # The whole case turned vertical (a load normal to a member applied straight down or up).
        across = np.abs(np.delete(column, v, axis=1)).max(axis=1)
        tilted = (across > 1e-9 * np.abs(column).max(axis=1)) & (column[:, v] != 0)
        slanted = [j for j in loaded if tilted[j]]
        if slanted:
            parts = []
            for j in slanted:
                turned = np.zeros(d)
                turned[v] = math.copysign(float(np.linalg.norm(column[j])), column[j, v])
                parts.append((j, turned - column[j]))
            out.append(
                change(
                    "loads-vertical",
                    c,
                    parts,
                    f"the '{name}' loads at {joint_list(ids, slanted)} applied vertically, with "
                    "their full magnitude, instead of in their stated directions (e.g. normal to "
                    "the member they act on)",
                    tuple(ids[j] for j in slanted),
                )
            )
        # The whole case scaled (a load value or factor other than the case file's).
        out.append(
            change(
                "case-scaled",
                c,
                [(j, column[j]) for j in loaded],
                case_scaled_words(name),
                (),
                fitted=True,
            )
        )
        # Single-joint changes, nearest the disagreement first: one load left out, doubled,
        # reversed or of another size ("load-scaled"), or at the other end of a member
        # ("load-moved", not onto a loaded joint: that reads as the other joint's load scaled).
        room = limit - sum(len(x) for x in single_joints)
        if room <= 0:
            capped = True
            continue
        ordered = sorted(loaded, key=lambda j: (near is not None and j not in near, j))
        at: list[int] = []
        to: list[int] = []
        for j in ordered:
            if len(at) >= room:
                capped = True
                break
            at.append(j)
            to.append(-1)
            for n in adjacency.indices[adjacency.indptr[j] : adjacency.indptr[j + 1]].tolist():
                if n in held:
                    continue  # onto a joint held in every direction: that is the load left out
                at.append(j)  # onto a loaded joint too: L3's load applied at L2 makes L2 carry both
                to.append(n)
        single_case.append(np.full(len(at), c, dtype=np.int64))
        single_joints.append(np.array(at, dtype=np.int64))
        single_targets.append(np.array(to, dtype=np.int64))
    singles = Singles(
        np.concatenate(single_case) if single_case else np.zeros(0, dtype=np.int64),
        np.concatenate(single_joints) if single_joints else np.zeros(0, dtype=np.int64),
        np.concatenate(single_targets) if single_targets else np.zeros(0, dtype=np.int64),
    )
    return out, singles, capped


class Singles(NamedTuple):
    """Single-joint load changes as arrays (a 10^5-member truss has tens of thousands of them):
    the load of `case` at `joint` scaled (target -1) or moved to `target`."""

    case: np.ndarray
    joint: np.ndarray
    target: np.ndarray

    def __len__(self) -> int:
        return len(self.joint)

    def matrix(self, model: Model) -> sp.csc_matrix:
        """dofs x changes: each column one unit of its change."""
        d = model.dim
        F = model.load_matrix()
        k = np.arange(len(self.joint))
        comp = np.arange(d)
        load = F.reshape(len(model.joints), d, -1)[self.joint, :, self.case]  # changes x d
        moved = self.target >= 0
        rows = [
            (self.joint[:, None] * d + comp).ravel(),
            (self.target[moved][:, None] * d + comp).ravel(),
        ]
        cols = [np.repeat(k, d), np.repeat(k[moved], d)]
        vals = [np.where(moved[:, None], -load, load).ravel(), load[moved].ravel()]
        return sp.csc_matrix(
            (np.concatenate(vals), (np.concatenate(rows), np.concatenate(cols))),
            shape=(model.dofs, len(self.joint)),
        )

    def change(self, model: Model, k: int) -> LoadChange:
        """The k-th change as a LoadChange, with its words."""
        d = model.dim
        c, j, n = int(self.case[k]), int(self.joint[k]), int(self.target[k])
        ids, name = model.joint_ids, model.cases[c].name
        load = model.load_matrix()[j * d : (j + 1) * d, c]
        if n < 0:
            return LoadChange(
                "load-scaled",
                c,
                j * d + np.arange(d),
                load.copy(),
                _scaled_words(name, ids[j], load),
                (ids[j],),
                fitted=True,
            )
        there = model.load_matrix()[n * d : (n + 1) * d, c]
        also = (
            (
                f" (which then carries {fmt(float(np.linalg.norm(there + load)), 4)} instead of "
                f"{fmt(float(np.linalg.norm(there)), 4)})"
            )
            if np.abs(there).sum() > 0
            else ""
        )
        return LoadChange(
            "load-moved",
            c,
            np.concatenate([j * d + np.arange(d), n * d + np.arange(d)]),
            np.concatenate([-load, load]),
            f"the '{name}' load at {ids[j]} applied at {ids[n]} instead{also}",
            (ids[j], ids[n]),
        )


def case_scaled_words(case: str) -> Callable[[float], str]:
    def words(f: float) -> str:
        if abs(f + 1.0) < 1e-9:
            return (
                f"the '{case}' loads applied in the opposite direction (suction for pressure, "
                "uplift for down)"
            )
        return (
            f"the '{case}' loads {fmt(f, 3)} times those of the case file (another load value, or "
            "a load factor applied to the case)"
        )

    return words


def _scaled_words(case: str, joint: str, vector: np.ndarray) -> Callable[[float], str]:
    size = float(np.linalg.norm(vector))

    def words(f: float) -> str:
        if abs(f) < 1e-9:
            return f"the '{case}' load at {joint} ({fmt(size, 4)}) left out"
        if abs(f - 2.0) < 1e-9:
            return (
                f"the '{case}' load at {joint} counted twice ({fmt(2 * size, 4)} instead of "
                f"{fmt(size, 4)})"
            )
        if abs(f + 1.0) < 1e-9:
            return f"the '{case}' load at {joint} applied in the opposite direction"
        return (
            f"the '{case}' load at {joint} taken as {fmt(abs(f) * size, 4)} instead of "
            f"{fmt(size, 4)}" + (" and reversed" if f < 0 else "")
        )

    return words


def joint_list(ids: Sequence[str], positions: Sequence[int], limit: int = 6) -> str:
    """Joints named in a cause: all up to `limit`, else the first few, '…', the last and a count."""
    names = [ids[p] for p in positions]
    return (
        ", ".join(names)
        if len(names) <= limit
        else f"{', '.join(names[: limit - 1])}, … {names[-1]} ({len(names)} joints)"
    )


# -- fitted sizes ---------------------------------------------------------------------------------
def nice_factors(value: float) -> list[float]:
    """Round numbers near a fitted factor, the ones a claimant would have used, plainest first."""
    out: list[float] = []
    for digits in (1, 2, 3):
        if value == 0:
            break
        magnitude = math.floor(math.log10(abs(value)))
        r = round(value, digits - 1 - magnitude)
        if r not in out:
            out.append(r)
        if digits == 2:
            twentieth = round(value * 20.0) / 20.0  # partial factors come in steps of 0.05 (1.35)
            if twentieth not in out and twentieth != 0:
                out.append(twentieth)
    for special in (0.0, 2.0, -1.0):
        if abs(value - special) < 0.05 and special not in out:
            out.insert(0, special)
    return out


def fit_scale(
    frame: ClaimsFrame, target: np.ndarray, unit: np.ndarray, pending: np.ndarray
) -> float | None:
    """The size s with claimed ≈ computed + s·unit at most disagreeing claims (median ratio)."""
    # Claims the change reaches at all (its size per unit may be far below the force tolerance:
    # one kN of thrust against chord forces of hundreds)
    usable = pending & (np.abs(unit) > 1e-3 * (float(np.abs(unit).max()) or 1.0))
    if usable.sum() < 2:
        return None
    with np.errstate(over="ignore"):  # a vanishing unit change (a subnormal load) fits nothing
        ratios = target[usable] / unit[usable]
    ratios = ratios[np.isfinite(ratios)]
    return float(np.median(ratios)) if len(ratios) >= 2 else None


# -- support and dimension variants -------------------------------------------------------------
def support_swaps(model: Model) -> Iterator[tuple[str, Model, tuple[str, ...]]]:
    """The restraints of two supports exchanged (the pin at the other end)."""
    by_joint: dict[str, list[Reaction]] = {}
    for r in model.reactions:
        by_joint.setdefault(r.joint, []).append(r)
    supported = list(by_joint)[:8]
    for a_pos, a in enumerate(supported):
        for b in supported[a_pos + 1 :]:
            ra = sorted(r.axis for r in by_joint[a])
            rb = sorted(r.axis for r in by_joint[b])
            if ra == rb:
                continue
            swapped = []
            for r in model.reactions:
                if r.joint == a:
                    continue
                if r.joint == b:
                    continue
                swapped.append(r)
            swapped += [Reaction(b, r.direction, r.axis) for r in by_joint[a]]
            swapped += [Reaction(a, r.direction, r.axis) for r in by_joint[b]]
            words = (
                f"the supports exchanged: {b} restrained as {a} is ({', '.join(ra)}) and {a} as "
                f"{b} is ({', '.join(rb)}) — e.g. the pin at the other end"
            )
            yield words, dataclasses.replace(model, reactions=tuple(swapped)), (a, b)


MOVES_PER_SUPPORT = 6  # joints one member away tried for each support (nearest first)


class SupportMove(NamedTuple):
    words: str
    reactions: tuple[int, ...]  # the moved reaction components (positions in model.reactions)
    joint: int  # where they are taken (joint index)
    joints: tuple[str, str]  # the support as drawn, and where the claims have it


def support_moves(model: Model) -> Iterator[SupportMove]:
    """One support's restraints taken at a joint one member away: the bearing drawn at the
    other chord (a top-chord bearing for a bottom-chord one), or a panel in from the end."""
    by_joint: dict[str, list[int]] = {}
    for i, r in enumerate(model.reactions):
        by_joint.setdefault(r.joint, []).append(i)
    ends = model.ends_index
    ids, member_ids, xyz = model.joint_ids, model.member_ids, model.xyz
    unit = model.units.length.symbol
    for s in list(by_joint)[:8]:
        k = model.joint_index[s]
        members = np.flatnonzero((ends[:, 0] == k) | (ends[:, 1] == k))
        others = ends[members].sum(axis=1) - k
        distance = np.linalg.norm(xyz[others] - xyz[k], axis=1)
        order = np.argsort(distance, kind="stable")  # nearest first; then table order
        axes = ", ".join(
            sorted(
                "inclined" if model.reactions[i].axis == "n" else model.reactions[i].axis
                for i in by_joint[s]
            )
        )
        tried: set[str] = set()
        for m, c_index in zip(members[order].tolist(), others[order].tolist(), strict=True):
            c = ids[c_index]
            if c in by_joint or c in tried:
                continue
            if len(tried) == MOVES_PER_SUPPORT:
                break
            tried.add(c)
            offset = xyz[c_index] - xyz[k]
            size = float(np.linalg.norm(offset))
            level = float(np.linalg.norm(offset[:-1]))  # the last axis is vertical
            where = (
                f"the joint directly {'above' if offset[-1] > 0 else 'below'} (the bearing at "
                "the other chord)"
                if level <= 1e-9 * size
                else f"{fmt(size, 4)} {unit} away along {member_ids[m]}"
            )
            words = f"the support at {s} ({axes}) taken at {c} instead, {where}"
            yield SupportMove(words, tuple(by_joint[s]), c_index, (s, c))


def statics_solution(run: AnalysisRun, columns: np.ndarray) -> np.ndarray | None:
    """Member forces and reactions (unknowns x columns) of a square, nonsingular A; else None."""
    try:
        lu = run.equilibrium_lu()
    except RuntimeError:
        return None
    if lu.shape[0] != lu.shape[1]:
        return None
    F = run.model.load_matrix()[:, columns]
    return np.asarray(lu.solve(-F)).reshape(lu.shape[0], -1)


def moved_support_forces(
    run: AnalysisRun, columns: np.ndarray, move: SupportMove, drawn: np.ndarray
) -> np.ndarray | None:
    """Member forces (members x columns) with `move`'s reactions acting at its joint, from the
    factorisation of the truss as drawn: moving k reaction components changes k columns of A,
    A' = A + U V^T, so A'^-1 follows by the Sherman-Morrison-Woodbury identity (k <= 3 solves;
    Golub & Van Loan, Matrix Computations, 4th ed., section 2.1.4) rather than a new
    factorisation per move. `drawn`: the solution of the truss as drawn for `columns` (members
    and reactions, `statics_solution`). None when the moved support leaves a mechanism (a
    singular or near-singular capacitance matrix) or the forces come out implausibly large."""
    model = run.model
    d, b = model.dim, len(model.members)
    lu = run.equilibrium_lu()  # made and square: `drawn` was solved on it
    U = np.zeros((lu.shape[0], len(move.reactions)))
    for i, r in enumerate(move.reactions):
        direction = np.asarray(model.reactions[r].direction, dtype=float)
        old = model.joint_index[model.reactions[r].joint]
        U[move.joint * d : move.joint * d + d, i] = direction
        U[old * d : old * d + d, i] -= direction
    W = np.asarray(lu.solve(U)).reshape(lu.shape[0], -1)
    picked = [b + r for r in move.reactions]
    capacitance = np.eye(len(picked)) + W[picked]
    sv = np.linalg.svd(capacitance, compute_uv=False)
    if sv.min() <= 1e-9 * max(sv.max(), 1.0):
        return None
    t = drawn - W @ np.linalg.solve(capacitance, drawn[picked])
    return None if implausible(t, model.load_matrix()[:, columns], b) else t[:b]


AXIS_NAMES = {
    0: ("x", "span (x extent)"),
    1: ("y", "depth (y extent)"),
    2: ("z", "height (z extent)"),
}


def scaled_model(model: Model, axis: int, s: float) -> Model:
    base = float(model.xyz[:, axis].min())
    joints = tuple(
        Joint(
            j.id, tuple(base + (c - base) * s if a == axis else c for a, c in enumerate(j.coords))
        )
        for j in model.joints
    )
    return dataclasses.replace(model, joints=joints)


def implausible(t: np.ndarray, F: np.ndarray, members: int) -> bool:
    """Forces of a near-mechanism (not finite, or past a million times the largest load times
    the member count): a near-singular variant explains nothing."""
    size = max(float(np.abs(F).max(initial=0.0)), 1e-300) * max(members, 1)
    return not np.isfinite(t).all() or np.abs(t).max(initial=0.0) > 1e6 * size


def solve_members(run: AnalysisRun, columns: np.ndarray) -> np.ndarray | None:
    """Member forces of a (variant) model's run for the given load columns; None when it cannot
    be solved by statics (not determinate, a mechanism) or is near-singular."""
    t = run.member_forces(columns)
    if t is None:
        return None
    F = run.model.load_matrix()[:, columns]
    return None if implausible(t, F, len(run.model.members)) else t
