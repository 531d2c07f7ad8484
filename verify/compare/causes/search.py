"""Search the variants of the model for the one(s) that make the disagreeing claims agree.

Greedy, a few rounds: each round tries every variant on what is still unexplained and keeps the
one that explains the most claims, provided it breaks none that agreed and explains at least half
of the disagreeing claims whose value it changes; the next round searches again on top of it, so
two mistakes at once (the wrong chord *and* the wrong factor) are both named. At the end the
causes together must explain a clear majority of the disagreeing claims in the load columns they
touch, or none is reported: a cause is never a guess.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
import scipy.optimize as so
import scipy.sparse as sp

from verify.analysis.pipeline import Analysis
from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.variants import (
    AXIS_NAMES,
    DIMENSION_RANGE,
    GEOMETRY_MEMBER_LIMIT,
    SAMPLE_MEMBERS,
    SHORTLIST,
    LoadChange,
    Variant,
    fit_scale,
    load_changes,
    nice_factors,
    scaled_model,
    solve_members,
    support_swaps,
)
from verify.formatting import fmt

MAX_CAUSES = 3
MIN_EXPLAINED = 3  # one or two claims are per-member findings, not a model
CLEAR_MISS = 2.0  # a claim "clearly wrong" misses by this many times its allowance
FIRST_CHOICES = 4
ALIKE = "; or, equally for these claims, "
MAX_ALIKE = 2  # other readings named beside the closest  # first causes whose chains are followed
CLEAR_MAJORITY = 2 / 3  # of the disagreeing claims in the columns the causes touch
MIN_PURITY = 0.5  # of the disagreeing claims a variant changes, the share it must make agree


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
    if analysis.global_ is None or pending.sum() < MIN_EXPLAINED:
        return SearchResult([], pending.copy(), notes)
    agreed = frame.agrees(frame.computed)
    start = pending.copy()
    geometry = len(model.members) <= GEOMETRY_MEMBER_LIMIT
    if not geometry:
        notes.append(f"likely causes: support and dimension variants are tried only up to {GEOMETRY_MEMBER_LIMIT} members "
                     f"(this truss has {len(model.members)}); load and combination variants were tried")
    # The first cause is chosen among the best few by where the whole chain leads: two mistakes
    # at once can let a wrong first guess fit many claims within tolerance (1.6 x traffic for
    # 1.5 x dead on chords that see both loads alike), and the chain then explains less.
    chains = []
    for first in _round(frame, start, np.zeros(len(frame)), start, agreed, analysis, geometry)[:FIRST_CHOICES]:
        steps = [first]
        pending, base = start & ~first.explained, first.variant.shift
        while len(steps) < MAX_CAUSES and pending.sum() >= MIN_EXPLAINED:
            found = _round(frame, pending, base, start, agreed, analysis, False)
            if not found:
                break
            steps.append(found[0])
            pending, base = pending & ~found[0].explained, base + found[0].variant.shift
        chains.append((int((start & ~pending).sum()), -len(steps), steps, pending))
    if not chains:
        return SearchResult([], start.copy(), notes)
    _, _, steps, pending = max(chains, key=lambda chain: (chain[0], chain[1]))
    causes = [Cause(_with_alternates(frame, start, steps, i), step.explained) for i, step in enumerate(steps)]
    if causes:
        touched = np.zeros(len(frame), dtype=bool)
        for cause in causes:
            touched |= np.isin(frame.column, np.unique(frame.column[np.abs(cause.variant.shift) > 0]))
        total = sum(int(c.explained.sum()) for c in causes)
        if total < CLEAR_MAJORITY * int((start & touched).sum()):
            notes.append(f"likely causes: the best variants found explain only {total} of {int((start & touched).sum())} "
                         "disagreeing claims in the columns they change; no cause is reported")
            return SearchResult([], start, notes)
    return SearchResult(causes, pending, notes)


def _with_alternates(frame: ClaimsFrame, start: np.ndarray, steps: list[_Found], i: int) -> Variant:
    """Step i's variant, naming the other variants that do as well in its place in the whole chain
    (1.6 x traffic fits the chords as well as 1.5 x dead, but only the latter completes the chain;
    'self-weight left out' and '1.36 x traffic' are one and the same when both load the same joints)."""
    total = sum(step.variant.shift for step in steps)
    count = int((start & frame.agrees(frame.computed + total)).sum())
    variant = steps[i].variant
    alike = [alt.words for alt in steps[i].alternates
             if int((start & frame.agrees(frame.computed + total - variant.shift + alt.shift)).sum()) >= count]
    if alike:
        variant = variant._replace(words=variant.words + ALIKE + ALIKE.join(alike[:MAX_ALIKE]))
    return variant


class _Found(NamedTuple):
    explains: int
    misfit: float
    variant: Variant
    explained: np.ndarray
    alternates: list[Variant] = []  # other variants that explain the very same claims


def _round(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, start: np.ndarray, agreed: np.ndarray,
           analysis: Analysis, geometry: bool) -> list[_Found]:
    """Every variant that passes the test on top of `base`, best first."""
    found: list[_Found] = []
    for variant in _candidates(frame, pending, base, analysis, geometry=geometry):
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
        clear = explained & (np.abs(frame.claimed - frame.computed - base) > CLEAR_MISS * frame.allowed(frame.computed + base))
        if int(clear.sum()) < MIN_EXPLAINED or n < MIN_PURITY * int(changed.sum()):
            continue
        # Ties (two variants explaining as many claims) go to the closer fit over every claim it
        # explains or keeps.
        kept = explained | (agreed & ~start)
        misfit = float((((frame.claimed - computed) / frame.allowed(computed))[kept] ** 2).sum())
        found.append(_Found(n, misfit, variant, explained, []))
    found.sort(key=lambda f: (-f.explains, f.misfit))
    out: list[_Found] = []
    for f in found:
        # Variants that explain the very same claims (a deeper truss, or a shorter span, under
        # vertical loads) cannot be told apart by them: the closer fit names the others.
        twin = next((o for o in out if o.explains == f.explains and np.array_equal(o.explained, f.explained)), None)
        if twin is None:
            out.append(f)
        elif len(twin.alternates) < 2 * MAX_ALIKE and all(a.words != f.variant.words for a in twin.alternates):
            twin.alternates.append(f.variant)
    return out


# -- candidates ---------------------------------------------------------------------------------
def _candidates(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis, *, geometry: bool):
    yield from _combination_variants(frame, pending, base, analysis)
    yield from _load_variants(frame, pending, base, analysis)
    if geometry:
        yield from _support_variants(frame, base, analysis)
        yield from _dimension_variants(frame, pending, base, analysis)


def _combination_variants(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis):
    """A load case's factor in one combination differs (a case left out or added included)."""
    model = analysis.model
    ref = analysis.global_
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
            new = _plainest(frame, pending, base, [(f, (f - old) * unit) for f in nice_factors(old + s)
                                                   if abs(f - old) > 1e-12])
            if new is not None:
                if new == 0:
                    words = f"'{case.name}' left out of '{combo.name}'"
                elif old == 0:
                    words = f"'{case.name}' added to '{combo.name}' with factor {fmt(new, 3)}"
                else:
                    words = f"'{combo.name}' taking {fmt(new, 3)} × {case.name} instead of {fmt(old, 3)} × {case.name}"
                yield Variant("combination-factor", words, (new - old) * unit, combo.name, (), new)


def _load_variants(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis):
    """Load changes priced by influence lines on the disagreeing members, the best solved forward."""
    from verify.analysis.global_solve import equilibrium_lu

    model = analysis.model
    C = model.combination_matrix()
    cases = [c for c in range(len(model.cases)) if np.any(C[c, np.unique(frame.column[pending])] != 0)]
    changes = list(load_changes(model, cases))
    if not changes:
        return
    lu = equilibrium_lu(model)
    members = np.unique(frame.member[pending])
    if len(members) > SAMPLE_MEMBERS:
        members = np.random.default_rng(0).choice(members, SAMPLE_MEMBERS, replace=False)
    n = lu.shape[0]
    E = np.zeros((n, len(members)))
    E[members, np.arange(len(members))] = 1.0
    X = lu.solve(E, trans="T")  # rows of A^-1 for the sampled members (influence lines)
    D = sp.csc_matrix(np.column_stack([ch.delta for ch in changes]))
    G = -(D.T @ X).T  # members sampled x changes: member force per unit of each change
    position = {int(m): i for i, m in enumerate(members.tolist())}
    sample = np.flatnonzero(pending & np.isin(frame.member, members))
    rows = np.array([position[int(m)] for m in frame.member[sample]], dtype=np.int64)
    target = (frame.claimed - frame.computed - base)[sample]
    scored: list[tuple[int, LoadChange, float]] = []
    for v, change in enumerate(changes):
        unit = G[rows, v] * C[change.case, frame.column[sample]]
        sizes = [1.0]
        if change.fitted:
            usable = np.abs(unit) > frame.atol[sample]
            if usable.sum() < 2:
                continue
            s = float(np.median(target[usable] / unit[usable]))
            sizes = [f - 1.0 for f in nice_factors(1.0 + s) if abs(f - 1.0) > 1e-12]
        best: tuple[int, float] | None = None  # the plainest size that explains the most
        for size in sizes:
            score = int(frame.agrees_at(sample, (frame.computed + base)[sample] + size * unit).sum())
            if best is None or score > best[0]:
                best = (score, size)
        if best is not None and best[0] >= MIN_EXPLAINED:
            scored.append((best[0], change, best[1]))
    scored.sort(key=lambda item: -item[0])
    for _, change, size in scored[:SHORTLIST]:
        dt = lu.solve(-size * change.delta)[: len(model.members)]
        shift = dt[frame.member] * C[change.case, frame.column]
        words = change.words(1.0 + size) if callable(change.words) else change.words
        yield Variant(change.kind, words, shift, model.cases[change.case].name, change.joints,
                      1.0 + size if change.fitted else None)


def _plainest(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray,
              options: list[tuple[float, np.ndarray]]) -> float | None:
    """Of round values (plainest first) and their shifts, the plainest that explains the most."""
    best: tuple[int, float] | None = None
    for value, shift in options:
        n = int((pending & frame.agrees(frame.computed + base + shift)).sum())
        if best is None or n > best[0]:
            best = (n, value)
    return None if best is None or best[0] == 0 else best[1]


def _claimed_columns(frame: ClaimsFrame) -> np.ndarray:
    return np.unique(frame.column)


def _support_variants(frame: ClaimsFrame, base: np.ndarray, analysis: Analysis):
    columns = _claimed_columns(frame)
    lookup = {int(k): i for i, k in enumerate(columns.tolist())}
    where = np.array([lookup[int(k)] for k in frame.column], dtype=np.int64)
    for words, variant_model, joints in support_swaps(analysis.model):
        t = solve_members(variant_model, columns)
        if t is None:
            continue
        yield Variant("support-moved", words, t[frame.member, where] - frame.computed, None, joints)


def _dimension_variants(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray, analysis: Analysis):
    """One overall dimension (span, depth, height) other than the case file's, fitted."""
    model = analysis.model
    columns = _claimed_columns(frame)
    lookup = {int(k): i for i, k in enumerate(columns.tolist())}
    where = np.array([lookup[int(k)] for k in frame.column], dtype=np.int64)
    length = model.units.length.symbol
    for axis in range(model.dim):
        extent = float(np.ptp(model.xyz[:, axis]))
        if extent <= 0:
            continue

        def forces(s: float, axis: int = axis) -> np.ndarray | None:
            t = solve_members(scaled_model(model, axis, s), columns)
            return None if t is None else t[frame.member, where]

        def misfit(log_s: float) -> float:
            t = forces(float(np.exp(log_s)))
            if t is None:
                return 1e12
            ratio = (frame.claimed - t - base) / frame.allowed(t + base)
            return float(np.minimum(ratio[pending] ** 2, 100.0).sum())

        low, high = np.log(DIMENSION_RANGE[0]), np.log(DIMENSION_RANGE[1])
        fit = so.minimize_scalar(misfit, bounds=(low, high), method="bounded", options={"xatol": 1e-4, "maxiter": 30})
        s = float(np.exp(fit.x))
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
            words = (f"the {name} taken as {fmt(new_extent, 4)} {length} instead of {fmt(extent, 4)} {length} "
                     f"(every {letter} coordinate scaled by {fmt(new_extent / extent, 4)})")
            yield Variant("dimension", words, shift, None, (), new_extent / extent)
