"""Search the variants of the model for the one(s) that make the disagreeing claims agree.

Greedy, a few rounds: each round tries every variant on what is still unexplained and keeps the
one that explains the most claims, provided it breaks none that agreed and explains at least half
of the disagreeing claims whose value it changes; the next round searches again on top of it, so
two mistakes at once (the wrong chord *and* the wrong factor) are both named. At the end the
causes together must explain a clear majority of the disagreeing claims in the load columns they
touch, or none is reported: a cause is never a guess.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator
from typing import NamedTuple

import numpy as np
import scipy.sparse as sp

from verify.analysis.pipeline import Analysis
from verify.compare.balance import JointImbalance, claims_balance
from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.geometry import (
    LOCAL_MEMBER_LIMIT,
    Move,
    joint_moves,
    moved_model,
    panel_moves,
    screen,
)
from verify.compare.causes.table_order import significant_figures
from verify.compare.causes.variants import (
    AXIS_NAMES,
    DIMENSION_RANGE,
    GEOMETRY_MEMBER_LIMIT,
    MAX_JOINT_CHANGES,
    SAMPLE_CLAIMS,
    SHORTLIST,
    LoadChange,
    Variant,
    case_scaled_words,
    fit_scale,
    joint_list,
    load_changes,
    moved_support_forces,
    nice_factors,
    scaled_model,
    solve_members,
    statics_solution,
    support_moves,
    support_swaps,
)
from verify.compare.tolerances import Tolerance, allowance
from verify.formatting import fmt
from verify.model import Model

MAX_CAUSES = 3
MIN_EXPLAINED = 3  # one or two claims are per-member findings, not a model
CLEAR_MISS = 2.0  # a claim "clearly wrong" misses by this many times its allowance
MIN_EXPLAINED_FITTED = 5  # for a change whose size is fitted to the claims
FIRST_CHOICES = 4  # first causes whose chains are followed
SPECIAL_FACTORS = (0.0, 2.0, -1.0)  # a load left out, counted twice, reversed
SOLVE_BUDGET = 4e7  # entries of the LU factors touched by the transposed solves of one round
MIN_SAMPLE = 12
LOAD_FACTOR_RANGE = (-2.0, 10.0)  # a load taken as f times its value: plausible slips only
COMBINATION_FACTOR_RANGE = (-5.0, 5.0)  # partial factors of common practice lie well inside; a
#                                        negative one is a case taken in the opposite direction
SAMPLE_SHARE = (
    0.1  # of the sampled disagreeing claims, the share a load change must explain to be solved
)
ALIKE = "; or, equally for these claims, "
MAX_ALIKE = 2  # other readings named beside the closest
CLEAR_MAJORITY = 2 / 3  # of the disagreeing claims in the columns the causes touch
MIN_PURITY = 0.5  # of the disagreeing claims a variant changes, the share it must make agree
WORSE = 2.0  # a cause may not take a disagreeing claim this many times further from its value
WORSE_ALLOWED = (
    2  # ... beyond this many claims (or a tenth of those it explains): slips of the table
)


class Cause(NamedTuple):
    variant: Variant
    explained: np.ndarray  # mask over the frame


class SearchResult(NamedTuple):
    causes: list[Cause]
    unexplained: np.ndarray  # mask over the frame: disagreeing claims no cause explains
    notes: list[str]


def search_causes(frame: ClaimsFrame, pending: np.ndarray, analysis: Analysis) -> SearchResult:
    """Causes for the disagreeing claims `pending` (a mask over the frame)."""
    notes: list[str] = []
    model = analysis.model
    if analysis.reference is None or pending.sum() < MIN_EXPLAINED:
        return SearchResult([], pending.copy(), notes)
    # An indeterminate truss (forces from the direct stiffness method) has no statics LU to price
    # load or support changes on, but a factor on a load case or in a combination changes its
    # forces in proportion whatever the stiffness: those are searched there too.
    statics = analysis.global_ is not None
    agreed = frame.agrees(frame.computed)
    start = pending.copy()
    geometry = statics and len(model.members) <= GEOMETRY_MEMBER_LIMIT
    if statics and not geometry:
        notes.append(
            "likely causes: support and dimension variants are tried only up to "
            f"{GEOMETRY_MEMBER_LIMIT} members (this truss has {len(model.members)}); load and "
            "combination variants were tried"
        )
    # The first cause is chosen among the best few by where the whole chain leads: two mistakes
    # at once can let a wrong first guess fit many claims within tolerance (1.6 x traffic for
    # 1.5 x dead on chords that see both loads alike), and the chain then explains less.
    chains = []
    for first in _round(
        frame, start, np.zeros(len(frame)), start, agreed, analysis, geometry, notes
    )[:FIRST_CHOICES]:
        steps = [first]
        pending, base = start & ~first.explained, first.variant.shift
        while len(steps) < MAX_CAUSES and pending.sum() >= MIN_EXPLAINED:
            found = _round(frame, pending, base, start, agreed, analysis, False, notes)
            if not found:
                break
            steps.append(found[0])
            pending, base = pending & ~found[0].explained, base + found[0].variant.shift
        chains.append((int((start & ~pending).sum()), -len(steps), steps, pending))
    if not chains:
        columns = ", ".join(f"'{c}'" for c in frame.columns_of(start))
        if statics:  # on an indeterminate truss only factors were tried, and other steps follow
            notes.append(
                "likely causes: no single change of the model among those tried (loads, "
                f"combination factors, supports, dimensions) explains the {int(start.sum())} "
                f"disagreeing claim(s) in {columns}; their findings follow"
            )
        return SearchResult([], start.copy(), notes)
    _, _, steps, pending = max(chains, key=lambda chain: (chain[0], chain[1]))
    causes = [
        Cause(_with_alternates(frame, start, steps, i), step.explained)
        for i, step in enumerate(steps)
    ]
    touched = np.zeros(len(frame), dtype=bool)
    for cause in causes:
        touched |= np.isin(frame.column, np.unique(frame.column[np.abs(cause.variant.shift) > 0]))
    total = sum(int(c.explained.sum()) for c in causes)
    if total < CLEAR_MAJORITY * int((start & touched).sum()):
        notes.append(
            "likely causes: no single change of the model explains most differences: the best "
            f"found explain only {total} of {int((start & touched).sum())} disagreeing claims in "
            "the columns they change, so none is reported"
        )
        return SearchResult([], start, notes)
    return SearchResult(causes, pending, notes)


def _with_alternates(frame: ClaimsFrame, start: np.ndarray, steps: list[_Found], i: int) -> Variant:
    """Step i's variant, naming the other variants that do as well in its place in the whole chain
    (1.6 x traffic fits the chords as well as 1.5 x dead, but only the latter completes the chain;
    'self-weight left out' and '1.36 x traffic' are one and the same when both load the same
    joints)."""
    total = sum(step.variant.shift for step in steps)
    count = int((start & frame.agrees(frame.computed + total)).sum())
    variant = steps[i].variant
    # loads read off the claims restate a named load change: never listed beside one
    alike = [
        alt.words
        for alt in steps[i].alternates
        if alt.kind != "loads-implied"
        and int((start & frame.agrees(frame.computed + total - variant.shift + alt.shift)).sum())
        >= count
    ]
    if alike:
        variant = variant._replace(words=variant.words + ALIKE + ALIKE.join(alike[:MAX_ALIKE]))
    return variant


class _Found(NamedTuple):
    explains: int
    misfit: float
    variant: Variant
    explained: np.ndarray
    alternates: list[Variant] = []  # other variants that explain the very same claims


def _round(
    frame: ClaimsFrame,
    pending: np.ndarray,
    base: np.ndarray,
    start: np.ndarray,
    agreed: np.ndarray,
    analysis: Analysis,
    geometry: bool,
    notes: list[str],
) -> list[_Found]:
    """Every variant that passes the test on top of `base`, best first."""
    found: list[_Found] = []
    before = np.abs(frame.claimed - frame.computed - base)  # each claim's miss before a change
    for variant in _candidates(frame, pending, base, analysis, notes, geometry=geometry):
        computed = frame.computed + base + variant.shift
        now = frame.agrees(computed)
        if (agreed & ~start & ~now).any():
            continue  # it breaks a claim that agreed
        explained = pending & now
        n = int(explained.sum())
        changed = pending & (np.abs(variant.shift) > frame.allowed(frame.computed + base))
        # Claims only just outside the tolerance are what any fitted dimension or factor can
        # absorb (scattered 1.5 % slips fitted by a span 0.8 % short): a cause must explain
        # claims that were clearly wrong.
        clear = explained & (
            np.abs(frame.claimed - frame.computed - base)
            > CLEAR_MISS * frame.allowed(frame.computed + base)
        )
        # a fitted size (a factor, a dimension) can absorb more noise: it must explain more claims
        # (a table rounded twice to two figures leaves a few claims just outside, which 1.45 for
        # 1.5 on a load case then "explains")
        needed = MIN_EXPLAINED_FITTED if variant.fitted else MIN_EXPLAINED
        if int(clear.sum()) < needed or n < MIN_PURITY * int(changed.sum()):
            continue
        # The model the claims came from moves every claim it changes towards its value: one that
        # takes a claim clearly further away is not that model, however many others it brings
        # within the tolerance (a canopy drawn with one panel 0.5 m longer: its small, smooth
        # differences fit 'the end load moved a panel in' to 0.3 % on 22 members, while the
        # three members at that end went from 1 % off to 9.5 %).
        # A slip of the table's own (a sign, a typo) that happens to sit near the drawn value
        # is taken further away by the true cause too: one or two such claims, or a tenth of
        # those explained, are the table's; more say the model is another.
        after = np.abs(frame.claimed - computed)
        worse = int(
            (
                pending
                & ~now
                & (after > CLEAR_MISS * frame.allowed(computed))
                & (after > WORSE * before)
            ).sum()
        )
        if worse > max(WORSE_ALLOWED, n // 10):
            continue
        # Ties (two variants explaining as many claims) go to the closer fit over every claim it
        # explains or keeps.
        kept = explained | (agreed & ~start)
        misfit = float((((frame.claimed - computed) / frame.allowed(computed))[kept] ** 2).sum())
        found.append(_Found(n, misfit, variant, explained, []))
    found.sort(key=lambda f: (-f.explains, f.variant.fitted, f.misfit))
    out: list[_Found] = []
    for f in found:
        # Variants that explain the very same claims (a deeper truss, or a shorter span, under
        # vertical loads) cannot be told apart by them: the closer fit names the others.
        twin = next(
            (
                o
                for o in out
                if o.explains == f.explains and np.array_equal(o.explained, f.explained)
            ),
            None,
        )
        if twin is None:
            out.append(f)
        elif len(twin.alternates) < 2 * MAX_ALIKE and all(
            a.words != f.variant.words for a in twin.alternates
        ):
            twin.alternates.append(f.variant)
    return out


# -- candidates ---------------------------------------------------------------------------------
def _candidates(
    frame: ClaimsFrame,
    pending: np.ndarray,
    base: np.ndarray,
    analysis: Analysis,
    notes: list[str],
    *,
    geometry: bool,
):
    yield from _combination_variants(frame, pending, base, analysis)
    if analysis.global_ is None:
        yield from _case_scale_variants(frame, pending, base, analysis)
        return
    yield from _load_variants(frame, pending, base, analysis, notes)
    yield from _implied_load_variants(frame, pending, base, analysis)
    yield from _level_load_variants(frame, pending, base, analysis)
    if geometry:
        yield from _support_variants(frame, base, analysis)
        yield from _added_restraint_variants(frame, pending, base, analysis)
        yield from _dimension_variants(frame, pending, base, analysis)
        if len(analysis.model.members) <= LOCAL_MEMBER_LIMIT:
            yield from _local_geometry_variants(frame, pending, base, analysis)


LOAD_MATCH = 0.03  # an implied load matches a case load within this fraction of its size


def _implied_load_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """Several loads of one case left out, scaled or moved at once, read off the loads the claims
    balance (implied loads): where every member has a claim, joint equilibrium gives the load the
    claims carry at each joint. The differences are taken as the change only when they look like
    loads: each is the case load there scaled (left out, doubled, reversed), or a load that left one
    joint arriving at another; a wrong member value instead leaves equal and opposite forces along
    the member at its two ends, which are neither."""

    model = analysis.model
    n_cases = len(model.cases)
    d = model.dim
    names = list(frame.load_names)
    claimed = np.full((len(model.members), len(names)), np.nan)
    claimed[frame.member, frame.column] = frame.claimed
    rounding = np.zeros_like(claimed)
    rounding[frame.member, frame.column] = frame.rounding
    F = model.load_matrix()
    C = model.combination_matrix()
    lu = analysis.run.equilibrium_lu()
    imbalances = claims_balance(analysis, claimed, {}, names, Tolerance(rtol=frame.rtol), rounding)
    for k in sorted({int(x) for x in frame.column[pending].tolist() if x < n_cases}):
        joints = [b for b in imbalances if b.case == names[k]]
        if not joints:
            continue
        added = _uniform_addition(model, joints, names[k])
        if added is not None:
            words, delta = added
            t = lu.solve(-delta)[: len(model.members)]
            shift = t[frame.member] * C[k, frame.column]
            yield Variant(
                "loads-implied", words, shift, names[k], tuple(b.joint for b in joints), fitted=True
            )
            continue
        delta = np.zeros(model.dofs)
        scaled: list[tuple[str, float, float]] = []
        gone: list[tuple[str, float, float]] = []
        arrived: list[tuple[str, float, np.ndarray]] = []
        for b in joints:
            j = model.joint_index[b.joint]
            load = F[j * d : (j + 1) * d, k]
            change = -np.asarray(b.residual)  # implied - case load
            implied = load + change
            size = float(np.linalg.norm(load))
            if size > 0:
                ratio = float(implied @ load) / size**2
                if np.linalg.norm(implied - ratio * load) > LOAD_MATCH * size:
                    break  # not along the case load: no load slip
                plain = _plain_load_factor(ratio)
                if plain is None:
                    break
                ratio = plain
                (gone if abs(ratio) < LOAD_MATCH else scaled).append((b.joint, ratio, size))
            else:
                arrived.append((b.joint, float(np.linalg.norm(implied)), implied))
            delta[j * d : (j + 1) * d] = change
        else:
            # loads that arrive where there were none must be ones that left elsewhere, size for
            # size
            left = sorted(size for _, _, size in gone)
            came = sorted(size for _, size, _ in arrived)
            if len(came) > len(left) or any(
                not any(abs(c - x) <= LOAD_MATCH * x for x in left) for c in came
            ):
                continue
            if len(gone) + len(scaled) + len(arrived) < 2:
                continue  # one joint: the single-load variants say it better
            t = lu.solve(-delta)[: len(model.members)]
            shift = t[frame.member] * C[k, frame.column]
            parts = []
            if gone:
                parts.append(f"left out at {', '.join(j for j, _, _ in gone)}")
            if scaled:
                parts.append(
                    "taken as "
                    + ", ".join(f"{fmt(r, 3)} times the case load at {j}" for j, r, _ in scaled)
                )
            if arrived:
                parts.append(
                    "applied at " + ", ".join(f"{j} ({fmt(size, 3)})" for j, size, _ in arrived)
                )
            words = f"the '{names[k]}' loads as the claims balance them: " + "; ".join(parts)
            # read off the claims, so fitted: a named slip (the other chord, one load moved) that
            # explains as much is the plainer reading
            yield Variant(
                "loads-implied", words, shift, names[k], tuple(b.joint for b in joints), fitted=True
            )


def _plain_load_factor(ratio: float) -> float | None:
    """The plain factor (two figures or steps of 0.05) a load was taken as, within the range of
    load slips; None for a ratio no claimant writes (a load taken as 41.5 or 1.37 x itself is a
    wrong member value there, not a slip)."""
    plain = min(
        [
            f
            for f in nice_factors(ratio)
            if significant_figures(f"{f:g}") <= 2 or abs(f * 20 - round(f * 20)) < 1e-9
        ]
        or [0.0],
        key=lambda f: abs(f - ratio),
    )
    if (
        abs(plain - ratio) > LOAD_MATCH * max(abs(ratio), 1.0)
        or not LOAD_FACTOR_RANGE[0] <= plain <= LOAD_FACTOR_RANGE[1]
    ):
        return None
    return plain


MIN_ADDED_JOINTS = 3  # an added load read off the claims is named only at this many joints


def _uniform_addition(
    model: Model, joints: list[JointImbalance], case: str
) -> tuple[str, np.ndarray] | None:
    """The same extra load at every joint where the claims are out of balance with the case's
    loads (services hung from joints, say), unless the loaded ones read as their own load taken
    as a plain factor (left out, doubled, reversed: said so by the caller): its
    words and the change of the load vector. None unless there are MIN_ADDED_JOINTS such joints
    and every difference has one size and direction within LOAD_MATCH; a wrong member value
    instead leaves equal and opposite forces at its two ends. The size is the claims' own
    (as they balance it), written to three figures."""
    if len(joints) < MIN_ADDED_JOINTS:
        return None
    d = model.dim
    k = model.load_names.index(case)
    F = model.load_matrix()
    at = np.array([model.joint_index[b.joint] for b in joints])
    changes = np.array([-np.asarray(b.residual, dtype=float) for b in joints])
    loads = F[(at[:, None] * d + np.arange(d)).ravel(), k].reshape(len(at), d)
    loaded = np.linalg.norm(loads, axis=1) > 0
    if loaded.all() and all(
        _plain_load_factor(float((load + change) @ load) / float(load @ load)) is not None
        and np.linalg.norm(change - ((change @ load) / (load @ load)) * load)
        <= LOAD_MATCH * float(np.linalg.norm(load))
        for load, change in zip(loads[loaded], changes[loaded], strict=True)
    ):
        return None  # every joint's own load taken as a plain factor: read as such by the caller
    mean = changes.mean(axis=0)
    size = float(np.linalg.norm(mean))
    if size == 0 or (np.linalg.norm(changes - mean, axis=1) > LOAD_MATCH * size).any():
        return None
    # the plainest round size within the match (7.5 for the claims' 7.52), along the mean
    size = next((v for v in nice_factors(size) if abs(v - size) <= LOAD_MATCH * size), size)
    mean = mean * (size / float(np.linalg.norm(mean)))
    delta = np.zeros(model.dofs)
    for j in at.tolist():
        delta[j * d : (j + 1) * d] = mean
    unit = model.units.force.symbol
    axis = int(np.argmax(np.abs(mean)))
    if np.linalg.norm(np.delete(mean, axis)) <= LOAD_MATCH * size:
        way = _direction(axis, d, mean[axis] > 0)
    else:
        way = f"along ({', '.join(fmt(float(v) / size, 3) for v in mean)})"
    shown = joint_list(model.joint_ids, at.tolist())
    words = (
        f"the '{case}' loads with {fmt(size, 3)} {unit} more {way} at each of {shown}, as the "
        "claims balance them (e.g. self-weight or another load added to the case)"
    )
    return words, delta


def _direction(axis: int, dim: int, positive: bool) -> str:
    """A load's direction in words: upward or downward on the vertical (last) axis, else along
    +x, -y ..."""
    if axis == dim - 1:
        return "upward" if positive else "downward"
    return f"along {'+' if positive else '-'}{'xyz'[axis]}"


MIN_LEVEL_JOINTS = 3  # joints at one height for a load added at all of them
MAX_LEVELS = 8  # levels tried, the most populous
ALMOST_ALL = 0.9  # of its case's disagreeing claims, the share a load over a level must explain


def _level_load_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """The same load added at every joint of a set: downward at every joint of one level (a
    chord: self-weight, a ceiling, services), or along one axis at every joint off the supports
    (self-weight spread to every panel point; wind on every joint of a mast, leeward leg and
    all). The size is fitted per load case to its own column's disagreeing claims, then tried at
    round values."""
    model = analysis.model
    d = model.dim
    C = model.combination_matrix()
    lu = analysis.run.equilibrium_lu()
    unit = model.units.force.symbol
    target = frame.claimed - frame.computed - base
    ids = model.joint_ids
    assert analysis.reference is not None
    forces = analysis.reference.member_forces
    for at, axis, sense, where in _load_sets(model):
        load = np.zeros(model.dofs)
        load[at * d + axis] = sense  # one force unit at each joint of the set
        response = lu.solve(-load)[: len(model.members)]
        for k in range(len(model.cases)):
            # the case's own column; where the table claims only combinations, those holding it
            holds = frame.column == k
            if not (pending & holds).any():
                holds = C[k, frame.column] != 0
            own = pending & holds
            if not own.any() or _parallel(response, forces[:, k]):
                continue  # no claims of the case, or its loads are this set's: a factor on it
            per_claim = response[frame.member] * C[k, frame.column]
            size = fit_scale(frame, target, np.where(holds, per_claim, 0.0), own)
            if size is None or size == 0:
                continue
            options = [(w, w * per_claim) for w in nice_factors(size) if w != 0]
            w = _plainest(frame, pending, base, options)
            if w is None:
                continue
            # Spread evenly, a load at a few joints of a level moves the chords nearly as the
            # same total over the whole level does: the set's reading must fit the case's
            # column(s) almost whole (three 6 kN loads were read as 2 kN at all nine joints,
            # leaving 20 of 70 claims unexplained).
            fits = frame.agrees(frame.computed + base + w * per_claim)
            if int((own & fits).sum()) < ALMOST_ALL * int(own.sum()):
                continue
            names = [ids[int(j)] for j in at]
            shown = joint_list(ids, at.tolist())
            way = _direction(axis, d, w * sense > 0)
            example = "self-weight" if axis == d - 1 else "a load on another face"
            words = (
                f"the '{model.cases[k].name}' loads with {fmt(abs(w), 3)} {unit} more {way} "
                f"at each {where} ({shown}): e.g. {example} or another load added to the case"
            )
            yield Variant(
                "loads-added",
                words,
                w * per_claim,
                model.cases[k].name,
                tuple(names),
                w,
                fitted=True,
            )


def _load_sets(model: Model) -> Iterator[tuple[np.ndarray, int, float, str]]:
    """(joints, axis, unit load's sense, words) for each set a load may have been added over:
    every joint of a level (downward), then every joint off the supports along each axis."""
    d = model.dim
    heights = model.xyz[:, d - 1]
    extent = max(float(np.ptp(model.xyz, axis=0).max(initial=0.0)), 1e-300)
    length = model.units.length.symbol
    # Joints by height, split where the next is more than a hair higher: one sort, not a pass
    # over every joint per level (a tower's thousand storeys).
    order = np.argsort(heights, kind="stable")
    steps = np.flatnonzero(np.diff(heights[order]) > 1e-6 * extent) + 1
    sets = [np.sort(group) for group in np.split(order, steps)] if order.size else []
    # The most populous levels (the chords), in height order: each costs a solve.
    fullest = sorted(range(len(sets)), key=lambda k: -len(sets[k]))[:MAX_LEVELS]
    for k in sorted(fullest):
        if len(sets[k]) >= MIN_LEVEL_JOINTS:
            level = float(heights[sets[k]].min())
            yield sets[k], d - 1, -1.0, f"joint at {'xyz'[d - 1]} = {fmt(level, 4)} {length}"
    off_supports = np.ones(len(heights), dtype=bool)
    off_supports[[model.joint_index[r.joint] for r in model.reactions]] = False
    free = np.flatnonzero(off_supports)
    if len(free) >= MIN_LEVEL_JOINTS and len(sets) > 1:
        for axis in range(d):
            yield free, axis, (-1.0 if axis == d - 1 else 1.0), "joint off the supports"


def _parallel(a: np.ndarray, b: np.ndarray) -> bool:
    size = float(np.linalg.norm(a)) * float(np.linalg.norm(b))
    return size > 0 and abs(float(a @ b)) >= (1.0 - 1e-9) * size


def _case_scale_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """A load case's loads all scaled (or reversed): its forces scale alike in every column that
    holds it, whatever the member stiffnesses (no solve needed)."""
    model = analysis.model
    ref = analysis.reference
    assert ref is not None
    C = model.combination_matrix()
    target = frame.claimed - frame.computed - base
    for c, case in enumerate(model.cases):
        unit = ref.member_forces[frame.member, c] * C[c, frame.column]
        s = fit_scale(frame, target, unit, pending)
        if s is None:
            continue
        new = _plainest(
            frame,
            pending,
            base,
            [
                (f, (f - 1.0) * unit)
                for f in nice_factors(1.0 + s)
                if abs(f - 1.0) > 1e-12 and LOAD_FACTOR_RANGE[0] <= f <= LOAD_FACTOR_RANGE[1]
            ],
        )
        if new is not None:
            words = case_scaled_words(case.name)(new)
            yield Variant("case-scaled", words, (new - 1.0) * unit, case.name, (), new, fitted=True)


def _combination_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """A load case's factor in one combination differs (a case left out or added included)."""
    model = analysis.model
    ref = analysis.reference
    assert ref is not None
    n_cases = len(model.cases)
    C = model.combination_matrix()
    target = frame.claimed - frame.computed - base
    for k in sorted(set(frame.column[pending].tolist())):
        if k < n_cases:
            continue
        combo = model.combinations[k - n_cases]
        in_column = frame.column == k
        for c, case in enumerate(model.cases):
            unit = np.where(in_column, ref.member_forces[frame.member, c], 0.0)
            s = fit_scale(frame, target, unit, pending & in_column)
            if s is None:
                continue
            old = float(C[c, k])
            new = _plainest(
                frame,
                pending,
                base,
                [
                    (f, (f - old) * unit)
                    for f in nice_factors(old + s)
                    if abs(f - old) > 1e-12
                    and COMBINATION_FACTOR_RANGE[0] <= f <= COMBINATION_FACTOR_RANGE[1]
                ],
            )
            if new is not None:
                if new == 0:
                    words = f"'{case.name}' left out of '{combo.name}'"
                elif old == 0:
                    words = f"'{case.name}' added to '{combo.name}' with factor {fmt(new, 3)}"
                elif new * old < 0:
                    words = (
                        f"'{combo.name}' taking {fmt(new, 3)} × {case.name} instead of "
                        f"{fmt(old, 3)} × {case.name} ('{case.name}' in the opposite direction)"
                    )
                else:
                    words = (
                        f"'{combo.name}' taking {fmt(new, 3)} × {case.name} instead of "
                        f"{fmt(old, 3)} × {case.name}"
                    )
                yield Variant(
                    "combination-factor",
                    words,
                    (new - old) * unit,
                    combo.name,
                    (),
                    new,
                    fitted=True,
                )


def _load_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis, notes: list[str]
):
    """Load changes priced by influence lines on a sample of the disagreeing claims (one array
    operation for every change and every round size), the best few solved forward for all claims."""
    model = analysis.model
    C = model.combination_matrix()
    cases = [
        c for c in range(len(model.cases)) if np.any(C[c, np.unique(frame.column[pending])] != 0)
    ]
    lu = analysis.run.equilibrium_lu()
    # One transposed solve per sampled member: on a large 3D truss the factors are dense enough
    # that 120 solves would take seconds, so the sample shrinks to a budget of work (never below
    # MIN_SAMPLE: a true cause explains most disagreeing claims, and shows in a dozen).
    fill = int(lu.L.nnz + lu.U.nnz)
    sample_size = int(np.clip(SOLVE_BUDGET // max(fill, 1), MIN_SAMPLE, SAMPLE_CLAIMS))
    sample = np.flatnonzero(pending)
    if len(sample) > sample_size:
        sample = np.sort(np.random.default_rng(0).choice(sample, sample_size, replace=False))
    members = np.unique(frame.member[sample])
    ends = model.ends_index[members]
    near = set(ends.ravel().tolist())
    for (
        a,
        b,
    ) in model.ends_index.tolist():  # and one member further: the loads that reach them directly
        if a in near or b in near:
            near.update((a, b))
    whole, singles, capped = load_changes(model, cases, near)
    if not whole and not len(singles):
        return
    capped_note = (
        f"likely causes: single-joint load changes were tried at the {MAX_JOINT_CHANGES} joints "
        "nearest the disagreeing claims only"
    )
    if capped and capped_note not in notes:
        notes.append(capped_note)
    n = lu.shape[0]
    E = np.zeros((n, len(members)))
    E[members, np.arange(len(members))] = 1.0
    X = lu.solve(E, trans="T")  # rows of A^-1 for the sampled members (influence lines)
    lengths = [len(ch.rows) for ch in whole]
    D_whole = sp.csc_matrix(
        (
            np.concatenate([ch.values for ch in whole]),
            (np.concatenate([ch.rows for ch in whole]), np.repeat(np.arange(len(whole)), lengths)),
        ),
        shape=(n, len(whole)),
    )
    D = sp.hstack([D_whole, singles.matrix(model)]).tocsc()
    G = -np.asarray((D.T @ X).T)  # sampled members x changes: member force per unit of each change
    position = np.searchsorted(members, frame.member[sample])
    case_of = np.concatenate([np.array([ch.case for ch in whole], dtype=np.int64), singles.case])
    n_changes = D.shape[1]

    def change_at(v: int) -> LoadChange:
        return whole[v] if v < len(whole) else singles.change(model, v - len(whole))

    unit = G[position, :] * C[case_of[None, :], frame.column[sample][:, None]]  # claims x changes
    target = (frame.claimed - frame.computed - base)[sample]
    # Round sizes to try per change: the change itself (1) or, for fitted ones, round factors near
    # the median ratio of what is missing to one unit of the change.
    fitted = np.concatenate([np.array([ch.fitted for ch in whole], dtype=bool), singles.target < 0])
    usable = np.abs(unit) > 1e-3 * np.maximum(np.abs(unit).max(axis=0), 1e-300)[None, :]
    with np.errstate(
        divide="ignore", invalid="ignore", over="ignore"
    ):  # a vanishing unit change: no fit
        ratios = np.where(usable, target[:, None] / unit, np.nan)
    ratios[~np.isfinite(ratios)] = np.nan
    enough = usable.sum(axis=0) >= 2
    median = np.zeros(n_changes)
    if enough.any():
        median[enough] = np.nanmedian(ratios[:, enough], axis=0)
    factor = 1.0 + median
    # Plainest first, so that a tie goes to it: a load left out, counted twice or reversed (always
    # tried: rounding in the claims can pull the fitted factor a few per cent off them), then
    # round factors near the fit.
    sizes = np.vstack(
        [np.full(len(factor), special - 1.0) for special in SPECIAL_FACTORS]
        + [
            _round_to(factor, 1) - 1.0,
            _round_to(factor, 2) - 1.0,
            np.round(factor * 20.0) / 20.0 - 1.0,
            _round_to(factor, 3) - 1.0,
        ]
    )
    sizes[:, ~fitted] = 1.0
    sizes[:, fitted & ~enough] = 0.0  # nothing to fit: no change
    # A load off by more than a factor of ten, or reversed more than twice over, is no slip of a
    # load value: a unit problem at most, which the unit diagnoses name.
    sizes[(sizes + 1.0 > LOAD_FACTOR_RANGE[1]) | (sizes + 1.0 < LOAD_FACTOR_RANGE[0])] = 0.0
    computed = (frame.computed + base)[sample]
    scores = np.zeros(sizes.shape, dtype=np.int64)
    misfits = np.zeros(sizes.shape)
    for row in range(sizes.shape[0]):
        trial = computed[:, None] + sizes[row][None, :] * unit
        y = frame.claimed[sample][:, None]
        allowed = allowance(
            frame.rtol, y, trial, frame.atol[sample][:, None], frame.rounding[sample][:, None]
        )
        scores[row] = (np.abs(y - trial) <= allowed).sum(axis=0)
        misfits[row] = np.minimum(((y - trial) / allowed) ** 2, 100.0).sum(axis=0)
    scores[np.abs(sizes) < 1e-12] = 0
    best_row = np.argmax(scores, axis=0)  # ties go to the plainest size (the first row)
    best = scores[best_row, np.arange(n_changes)]
    misfit = misfits[best_row, np.arange(n_changes)]
    # A change worth a forward solve explains a tenth of the sampled differences at least: a true
    # cause explains most of them, while scattered errors agree with some change by chance now
    # and then (a few claims of a hundred), and each forward solve costs a full back-substitution.
    needed = max(MIN_EXPLAINED, int(SAMPLE_SHARE * len(sample)))
    # On a long truss many single loads, each resized, fit the sampled web members about as well:
    # the closest fit goes first (the load actually left out fits to the rounding of the claims).
    # Among equal scores the plainer size first (a load left out before one taken as 1.96 reversed).
    for v in np.lexsort((misfit, best_row, -best))[:SHORTLIST]:
        if best[v] < needed:
            break
        change, size = change_at(int(v)), float(sizes[best_row[v], v])
        dt = lu.solve(-size * change.dense(n))[: len(model.members)]
        shift = dt[frame.member] * C[change.case, frame.column]
        words = change.words(1.0 + size) if callable(change.words) else change.words
        # A load left out, counted twice or reversed is one of three fixed slips tried on every
        # change, not a size fitted to the claims: like a load moved to another joint it has
        # nothing to absorb rounding noise with, so it needs only MIN_EXPLAINED clear claims
        # (a wind load left out low on a mast changed 4 claims clearly and was not named).
        special = any(abs(1.0 + size - f) < 1e-12 for f in SPECIAL_FACTORS)
        yield Variant(
            change.kind,
            words,
            shift,
            model.cases[change.case].name,
            change.joints,
            1.0 + size if change.fitted else None,
            fitted=change.fitted and not special,
        )


def _round_to(values: np.ndarray, digits: int) -> np.ndarray:
    """Each value rounded to `digits` significant figures (0 stays 0)."""
    with np.errstate(divide="ignore", invalid="ignore"):
        magnitude = np.floor(np.log10(np.abs(values)))
    magnitude = np.where(np.isfinite(magnitude), magnitude, 0.0)
    scale = 10.0 ** (digits - 1 - magnitude)
    return np.round(values * scale) / scale


def _plainest(
    frame: ClaimsFrame,
    pending: np.ndarray,
    base: np.ndarray,
    options: list[tuple[float, np.ndarray]],
) -> float | None:
    """Of round values (plainest first) and their shifts, the plainest that explains the most."""
    best: tuple[int, float] | None = None
    for value, shift in options:
        n = int((pending & frame.agrees(frame.computed + base + shift)).sum())
        if best is None or n > best[0]:
            best = (n, value)
    return None if best is None or best[0] == 0 else best[1]


def _support_variants(frame: ClaimsFrame, base: np.ndarray, analysis: Analysis):
    columns, where = frame.column_positions()
    for words, variant_model, joints in support_swaps(analysis.model):
        t = solve_members(analysis.run.variant(variant_model), columns)
        if t is None:
            continue
        yield Variant("support-moved", words, t[frame.member, where] - frame.computed, None, joints)
    drawn = statics_solution(analysis.run, columns)
    if drawn is None:
        return
    for move in support_moves(analysis.model):
        t = moved_support_forces(analysis.run, columns, move, drawn)
        if t is None:
            continue
        shift = t[frame.member, where] - frame.computed
        yield Variant("support-moved", move.words, shift, None, move.joints)


def _added_restraint_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """A support restrained in one more direction (a roller taken as a pin, say).

    The truss then has one state of self-stress: adding a reaction r along e at a joint gives
    member forces t = t0 + r s with s = -A^-1 e (statics, whatever the stiffness). So each load
    column's claims may carry any multiple of s: the size r (the thrust between the supports) is
    fitted per column from its disagreeing claims; the claims are then explained by statics alone.
    """
    model = analysis.model
    d = model.dim
    restrained: dict[str, set[str]] = {}
    for r in model.reactions:
        restrained.setdefault(r.joint, set()).add(r.axis)
    lu = analysis.run.equilibrium_lu()
    axes = "xyz"[:d]
    target = frame.claimed - frame.computed - base
    for joint, have in list(restrained.items())[:8]:
        if "n" in have:
            continue  # an inclined roller: its other direction is not a plain axis
        for a, axis in enumerate(axes):
            if axis in have:
                continue
            e = np.zeros(lu.shape[0])
            e[model.joint_index[joint] * d + a] = 1.0
            s = -lu.solve(e)[: len(model.members)]
            unit = s[frame.member]
            shift = np.zeros(len(frame))
            thrusts = []
            for k in np.unique(frame.column[pending]).tolist():
                in_column = frame.column == k
                size = fit_scale(frame, target, np.where(in_column, unit, 0.0), pending & in_column)
                if size is None:
                    continue
                shift = np.where(
                    in_column, size * unit, shift
                )  # a fitted reaction, not a round input value
                thrusts.append(f"{fmt(size, 3)} in '{frame.load_names[k]}'")
            if not thrusts:
                continue
            words = (
                f"{joint} restrained along {axis} as well ({', '.join(sorted(have))} in the case "
                f"file): a support reaction along {axis} of "
                f"{', '.join(thrusts[:4])}{' …' if len(thrusts) > 4 else ''} "
                f"{model.units.force.symbol}, which sets up forces the case file's supports do not"
            )
            yield Variant("support-added", words, shift, None, (joint,), fitted=True)


GOLDEN = (np.sqrt(5.0) - 1.0) / 2.0


def golden_section(
    f: Callable[[float], float], low: float, high: float, *, tolerance: float, steps: int
) -> float:
    """The point of [low, high] where f is least, for f with one minimum there (golden-section
    search, Kiefer 1953). Hand-written rather than scipy.optimize: importing that module took
    0.08 s, a fifth of a small check, for one bounded search of at most `steps` evaluations."""
    a, b = low, high
    c, d = b - GOLDEN * (b - a), a + GOLDEN * (b - a)
    fc, fd = f(c), f(d)
    for _ in range(steps):
        if b - a <= tolerance:
            break
        if fc <= fd:
            b, d, fd = d, c, fc
            c = b - GOLDEN * (b - a)
            fc = f(c)
        else:
            a, c, fc = c, d, fd
            d = a + GOLDEN * (b - a)
            fd = f(d)
    return c if fc <= fd else d


def _clipped_misfit(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, t: np.ndarray | None
) -> float:
    """How far a fitted variant's forces `t` leave the disagreeing claims: the sum of their
    squared misses in allowances, each counted up to ten allowances (a slip of the table must not
    steer the fit); 1e12 for a variant that cannot be solved."""
    if t is None:
        return 1e12
    ratio = (frame.claimed - t - base) / frame.allowed(t + base)
    return float(np.minimum(ratio[pending] ** 2, 100.0).sum())


def _dimension_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """One overall dimension (span, depth, height) other than the case file's, fitted."""
    model = analysis.model
    columns, where = frame.column_positions()
    length = model.units.length.symbol
    for axis in range(model.dim):
        extent = float(np.ptp(model.xyz[:, axis]))
        if extent <= 0:
            continue

        def forces(s: float, axis: int = axis) -> np.ndarray | None:
            t = solve_members(analysis.run.variant(scaled_model(model, axis, s)), columns)
            return None if t is None else t[frame.member, where]

        def misfit(log_s: float) -> float:
            return _clipped_misfit(frame, pending, base, forces(float(np.exp(log_s))))

        low, high = np.log(DIMENSION_RANGE[0]), np.log(DIMENSION_RANGE[1])
        s = float(np.exp(golden_section(misfit, low, high, tolerance=1e-4, steps=30)))
        if abs(s - 1.0) < 1e-3:
            continue
        tried = []
        for candidate in nice_factors(extent * s):
            t = forces(candidate / extent)
            if t is not None and abs(candidate - extent) > 1e-12 * extent:
                tried.append((candidate, t - frame.computed))
        new_extent = _plainest(frame, pending, base, tried)
        if new_extent is not None:
            shift = dict(tried)[new_extent]
            letter, name = AXIS_NAMES[axis]
            words = (
                f"the {name} taken as {fmt(new_extent, 4)} {length} instead of {fmt(extent, 4)} "
                f"{length} (every {letter} coordinate scaled by {fmt(new_extent / extent, 4)})"
            )
            yield Variant("dimension", words, shift, None, (), new_extent / extent, fitted=True)


def _local_geometry_variants(
    frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis
):
    """One panel or one joint drawn elsewhere (verify.compare.causes.geometry): the moves that
    screen best, fitted, then tried at round values of the dimension."""
    model = analysis.model
    columns, where = frame.column_positions()
    moves = panel_moves(model) + joint_moves(model, frame, pending)
    for screened in screen(analysis.run, frame, pending, base, moves):
        move = screened.move

        def forces(delta: float, move: Move = move) -> np.ndarray | None:
            t = solve_members(analysis.run.variant(moved_model(model, move, delta)), columns)
            return None if t is None else t[frame.member, where]

        def misfit(delta: float) -> float:
            return _clipped_misfit(frame, pending, base, forces(delta))

        # the screen's clipped least squares gives the direction; the size is searched over
        # the whole half-range (a large slip's misfits are clipped, so its step reads small)
        low, high = sorted((0.0, float(np.sign(screened.delta)) * move.limit))
        delta = golden_section(misfit, low, high, tolerance=1e-3 * move.limit, steps=20)
        tried = []
        for value in nice_factors(move.value + delta):
            step = value - move.value
            if abs(step) <= 1e-12 * max(abs(move.value), 1.0) or abs(step) > move.limit:
                continue
            t = forces(step)
            if t is not None:
                tried.append((value, t - frame.computed))
        drawn = _plainest(frame, pending, base, tried)
        if drawn is not None:
            shift = dict(tried)[drawn]
            yield Variant("dimension", move.words(drawn), shift, None, move.named, fitted=True)
