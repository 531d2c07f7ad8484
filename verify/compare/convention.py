"""Inferring a claims table's sign convention and unit scale from the data.

For every candidate (sign, factor) we count the members whose scaled claim agrees with the
recomputed force. Factors are unit slips seen in practice (shared/REFERENCES.md 5.2; NIST SP 811
App. B): x1000 (N<->kN, lbf<->kip), 4.4482216 (kip<->kN, lbf<->N), 4448.2216 (kip<->N),
0.0044482 (lbf<->kN), 9.80665 (kgf<->N, tonne-force<->kN), 0.00980665 (kgf<->kN),
8.896443 (short ton-force<->kN), 9.964016 (long ton-force<->kN), and their inverses.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np

from verify.compare.tolerances import allowance
from verify.units import KGF_IN_N, Dimension, Unit, accepted, lookup_unit
from verify.units import factor as unit_factor

LBF = 4.4482216152605
G_N = KGF_IN_N  # standard gravity, N per kgf
UNIT_FACTORS: dict[float, str] = {
    1000.0: "x1000 (N vs kN, or lbf vs kip)",
    1e-3: "x0.001 (kN vs N, or kip vs lbf)",
    LBF: f"x{LBF:.6g} (kip vs kN, or lbf vs N)",
    1 / LBF: f"x{1 / LBF:.6g} (kN vs kip, or N vs lbf)",
    1000 * LBF: f"x{1000 * LBF:.6g} (kip vs N)",
    1 / (1000 * LBF): f"x{1 / (1000 * LBF):.6g} (N vs kip)",
    LBF / 1000: f"x{LBF / 1000:.6g} (lbf vs kN)",
    1000 / LBF: f"x{1000 / LBF:.6g} (kN vs lbf)",
    G_N: f"x{G_N} (kgf vs N, or tonne-force vs kN)",
    1 / G_N: f"x{1 / G_N:.6g} (N vs kgf, or kN vs tonne-force)",
    G_N / 1000: f"x{G_N / 1000:.6g} (kgf vs kN)",
    1000 / G_N: f"x{1000 / G_N:.6g} (kN vs kgf)",
    2 * LBF: f"x{2 * LBF:.6g} (short ton-force vs kN)",
    1 / (2 * LBF): f"x{1 / (2 * LBF):.6g} (kN vs short ton-force)",
    2.24 * LBF: f"x{2.24 * LBF:.6g} (long ton-force vs kN)",
    1 / (2.24 * LBF): f"x{1 / (2.24 * LBF):.6g} (kN vs long ton-force)",
}

MIN_MEMBERS_FOR_TABLE = 3  # fewer informative claims cannot tell a table convention from one slip
MIN_SHARE = 0.5  # a convention must explain at least half of the informative claims


@dataclass(frozen=True)
class Fit:
    sign: int  # +1 as written, -1 reversed (applies to values without T/C)
    factor: float  # multiply claims (already in case units) by this
    agree: int
    informative: int

    @property
    def share(self) -> float:
        return self.agree / self.informative if self.informative else 0.0


def _counts_by_sign(
    claimed: np.ndarray,
    fixed: np.ndarray,
    computed: np.ndarray,
    allowed_rel: float,
    atol: np.ndarray,
    rounding: np.ndarray,
    factor: float,
) -> dict[int, int]:
    """Claims agreeing for sign +1 and -1 at once: the allowance depends on the sizes only, so it
    is made once per factor (the same numbers: reversing a sign is exact)."""
    return _agreeing(claimed, fixed, computed, allowed_rel, atol, rounding, factor)[0]


def _agreeing(
    claimed: np.ndarray,
    fixed: np.ndarray,
    computed: np.ndarray,
    allowed_rel: float,
    atol: np.ndarray,
    rounding: np.ndarray,
    factor: float,
) -> tuple[dict[int, int], np.ndarray]:
    """_counts_by_sign's counts, and which claims agree for either sign."""
    value = claimed * factor
    allowed = allowance(allowed_rel, value, computed, atol, rounding * factor)
    # |value - computed| for each sign in one temporary array, the signs of the claims without
    # a T/C letter reversed in place for the second (the counts of np.where(fixed, v, -v)).
    gap = np.subtract(value, computed)
    np.abs(gap, out=gap)
    either = gap <= allowed
    agree_as_written = int(either.sum())
    np.negative(value, out=value, where=~fixed)
    np.subtract(value, computed, out=gap)
    np.abs(gap, out=gap)
    reversed_ = gap <= allowed
    agree_reversed = int(reversed_.sum())
    either |= reversed_
    return {1: agree_as_written, -1: agree_reversed}, either


SCREEN_SLACK = 0.05  # claims whose atol or rounding exceeds this share of them are always tested
SCREEN_MARGIN = 1e-6  # widens the ratio window beyond round-off in the ratios themselves


def _loose(c: np.ndarray, r: np.ndarray, atol: np.ndarray, rounding: np.ndarray) -> np.ndarray:
    """The claims whose atol or rounding exceeds SCREEN_SLACK of their size, or whose claim or
    force is not finite (an infinite allowance agrees with anything): a window of ratios says
    nothing about them."""
    size = np.abs(c)
    with np.errstate(invalid="ignore"):
        tight = (atol <= SCREEN_SLACK * size) & (np.abs(rounding) <= SCREEN_SLACK * size)
    tight &= np.isfinite(size)
    tight &= np.isfinite(r)
    return ~tight


def _window(factor: float, rtol: float) -> tuple[float, float]:
    """The ratios |computed| / |claimed| of the claims (not loose) that can agree under
    `factor`, inclusive (0 <= rtol < 1)."""
    window = max(factor * rtol / (1 - rtol), SCREEN_SLACK, factor * SCREEN_SLACK)
    window = window * (1 + SCREEN_MARGIN) + SCREEN_MARGIN * factor
    return factor - window, factor + window


def _overlap(a: tuple[float, float], b: tuple[float, float]) -> bool:
    return a[0] <= b[1] and b[0] <= a[1]


class _RatioScreen:
    """The claims that can agree under a factor f, found by their ratio |computed| / |claimed|.

    A claim agrees when |s f c - r| <= max(rtol max(|f c|, |r|), atol, f rounding); since
    ||f c| - |r|| <= |s f c - r|, the ratio q = |r| / |c| is then within
    max(f rtol / (1 - rtol), atol / |c|, f rounding / |c|) of f. For the claims whose atol and
    rounding are at most SCREEN_SLACK of |c| (nearly all), that window is known without looking at
    the claim: each factor tests only the claims in its window and the few others. The counts are
    those of testing every claim (tests/compare/test_convention_screen.py); 17 factors over
    2x10^6 claims tested whole took most of the convention search.

    Most claims of a table sit in the identity's window (those a reading as written explains):
    they are found by one mask, and only the claims outside it are sorted by ratio for the other
    factors' windows (a sort of every claim per call cost 25 ms a call at 10^6 claims)."""

    def __init__(
        self, c: np.ndarray, r: np.ndarray, atol: np.ndarray, rounding: np.ndarray, rtol: float
    ) -> None:
        size = np.abs(c)
        loose = _loose(c, r, atol, rounding)
        # (a force that all but vanishes, from a subnormal load, overflows the ratio: loose too)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            ratio = np.abs(r) / size
        loose |= ~np.isfinite(ratio)
        self.usable = 0 <= rtol < 1 and size.size > 0
        self.rtol = rtol
        self.size = size.size
        self.loose = np.flatnonzero(loose)
        self.ratio = ratio
        self.identity = self._window(1.0) if self.usable else (1.0, 1.0)
        lo, hi = self.identity
        inside = (ratio >= lo) & (ratio <= hi)
        inside &= ~loose
        self.inside = np.flatnonzero(inside)
        outside = np.flatnonzero(~(inside | loose))
        order = np.argsort(ratio[outside], kind="stable")
        self.outside, self.sorted_ratio = outside[order], ratio[outside][order]

    def _window(self, factor: float) -> tuple[float, float]:
        return _window(factor, self.rtol)

    def candidates(self, factor: float) -> np.ndarray:
        if not self.usable or not (np.isfinite(factor) and factor > 0):
            return np.arange(self.size)
        lo, hi = self._window(factor)
        if (lo, hi) == self.identity:
            return np.concatenate([self.inside, self.loose])
        start = np.searchsorted(self.sorted_ratio, lo, side="left")
        stop = np.searchsorted(self.sorted_ratio, hi, side="right")
        found = [self.outside[start:stop], self.loose]
        if lo <= self.identity[1] and hi >= self.identity[0]:  # the windows overlap
            near = self.ratio[self.inside]
            found.append(self.inside[(near >= lo) & (near <= hi)])
        return np.concatenate(found)


def _informative(claimed: np.ndarray, computed: np.ndarray, atol: np.ndarray) -> np.ndarray:
    """Claims that say something of sign and scale: the force clearly non-zero, the claim not
    written as zero (see best_fit)."""
    return (np.abs(computed) > atol) & (claimed != 0)


WHOLE_COLUMN = 0.9  # a column read reversed "agrees whole" when this share of it agrees


def _median_ratio(claimed: np.ndarray, computed: np.ndarray) -> float:
    """The median of claimed / computed, whose sign is what it is asked for: a force that all but
    vanishes (a subnormal load: the fuzzer's 1e-320) makes a ratio overflow to an infinity of the
    same sign, said without a warning."""
    with np.errstate(over="ignore"):
        return float(np.median(claimed / computed))


def columns_reversed(
    claimed: np.ndarray,
    fixed: np.ndarray,
    computed: np.ndarray,
    rtol: float,
    atol: np.ndarray,
    rounding: np.ndarray,
    column: np.ndarray,
    *,
    min_claims: int,
) -> Fit | None:
    """The table read with every sign reversed, when whole columns say so and none says the
    opposite: some column of at least `min_claims` informative claims agrees (WHOLE_COLUMN of it)
    only reversed, no column agrees as read for half its claims, and every other column, read
    reversed, still runs with its forces (its claims over the forces have a positive median: a
    load scaled or added, not reversed). A sign convention is the table's, so load columns computed
    from the same model (snow, wind) settle it even when another column (a dead load with
    self-weight added) agrees neither way, which the half-of-the-table rule (MIN_SHARE) cannot
    see. A column that would then run against its forces says the reversed column is rather its
    load applied the other way (an independent review's table: dead reversed, live load 1.5
    times). None when the columns do not say so."""
    informative = _informative(claimed, computed, atol)
    reversed_whole = False
    agree = 0
    for k in np.unique(column[informative]).tolist():
        at = informative & (column == k)
        n = int(at.sum())
        counts = _counts_by_sign(
            claimed[at], fixed[at], computed[at], rtol, atol[at], rounding[at], 1.0
        )
        if counts[1] >= MIN_SHARE * n:
            return None  # a column agrees as read
        if n >= min_claims and counts[-1] >= WHOLE_COLUMN * n:
            reversed_whole = True
        elif _median_ratio(np.where(fixed[at], 1.0, -1.0) * claimed[at], computed[at]) <= 0:
            return None  # read reversed, this column would run against its forces
        agree += counts[-1]
    if not reversed_whole:
        return None
    return Fit(-1, 1.0, agree, int(informative.sum()))


def best_fit(
    claimed: np.ndarray,
    fixed: np.ndarray,
    computed: np.ndarray,
    rtol: float,
    atol: np.ndarray,
    rounding: np.ndarray,
    *,
    signs: tuple[int, ...] = (1, -1),
    factors: tuple[float, ...] | None = None,
) -> tuple[Fit, Fit]:
    """(best fit, identity fit) over the candidate signs and factors, judged on informative pairs.

    Informative pairs are those whose recomputed force is clearly non-zero and whose claim is not
    written as zero: a zero says nothing about sign or scale, and its rounding allowance (half a
    unit, times the candidate factor) would let a column of zeros "agree" with any large factor.
    Ties prefer the identity, then the written sign.
    """
    informative = _informative(claimed, computed, atol)
    n = int(informative.sum())
    every = [claimed, fixed, computed, atol, rounding]
    c, f, r, a, rd = every if n == claimed.size else [x[informative] for x in every]
    del every
    candidates = [1.0] + list(factors if factors is not None else UNIT_FACTORS)
    # The identity first, on every claim (its window holds most of them).
    first, either = _agreeing(c, f, r, rtol, a, rd, 1.0)
    counted: dict[float, dict[int, int]] = {1.0: first}
    best_agree = max(counted[1.0][sign] for sign in (1, *signs))
    # A claim (not loose) that agrees as read, for either sign, has its ratio in the identity's
    # window: it cannot agree under a factor whose window lies apart. Such a factor can explain
    # at most the other claims; when they are no more than the identity explains, it cannot win
    # (a fit must explain strictly more) and is not counted: an honest table is settled by the
    # identity alone (the same fits: tests/compare/test_convention_scale.py).
    others = candidates[1:]
    if others and 0 <= rtol < 1:
        window = _window(1.0, rtol)
        beyond = n - int((either & ~_loose(c, r, a, rd)).sum())
        others = [
            factor
            for factor in others
            if beyond > best_agree or _overlap(_window(factor, rtol), window)
        ]
    del either
    # Without other factors (a load column against each load) no screen is made.
    screen = _RatioScreen(c, r, a, rd, rtol) if others else None
    for factor in others:
        at = screen.candidates(factor) if screen is not None else None
        if at is None or 2 * at.size >= n:
            # Most claims are candidates (the identity's window): every claim is tested where it
            # lies instead of copying the candidates. The same counts: a claim outside the window
            # cannot agree (tests/compare/test_convention_screen.py holds the screen to testing
            # every claim).
            counted[factor] = _counts_by_sign(c, f, r, rtol, a, rd, factor)
        else:
            counted[factor] = _counts_by_sign(c[at], f[at], r[at], rtol, a[at], rd[at], factor)
        del at
    identity = Fit(1, 1.0, counted[1.0][1], n)
    best = identity
    for factor in candidates:
        if factor not in counted:
            continue  # it cannot explain more than the identity (above)
        for sign in signs:
            if sign == 1 and factor == 1.0:
                continue
            fit = Fit(sign, factor, counted[factor][sign], n)
            if fit.agree > best.agree:
                best = fit
    return best, identity


def describe_factor(factor: float) -> str:
    for known, text in UNIT_FACTORS.items():
        if abs(known - factor) <= 1e-9 * known:
            return text
    return f"x{factor:.6g}"


def force_unit_for(scale: float, reference: Unit) -> str | None:
    """The accepted force unit U with U = scale x reference (N for 0.001 against kN), if one is."""
    for symbol in accepted(Dimension.FORCE):
        unit = lookup_unit(symbol, Dimension.FORCE)
        if abs(unit_factor(unit, reference) - scale) <= 1e-6 * scale:
            return unit.symbol
    return None


def possible_factors(reference: Unit, *, ratios: bool = False) -> tuple[float, ...]:
    """The unit factors a table written in `reference` can really be off by.

    A factor f (claims x f = computed) is possible when the values could be in another accepted
    force unit U: f = U / reference. With `ratios`, the same as claimed / computed (1 / f). A
    table ten times too large is not "long ton-force" when the reference is kN.
    """
    return tuple(
        k for k in UNIT_FACTORS if force_unit_for(1.0 / k if ratios else k, reference) is not None
    )


def matching_factor(
    ratio: float, rtol: float, factors: Iterable[float] | None = None
) -> float | None:
    """The unit factor that `ratio` (claimed / computed) matches, if any."""
    for factor in UNIT_FACTORS if factors is None else factors:
        if abs(abs(ratio) - factor) <= rtol * factor:
            return factor
    return None
