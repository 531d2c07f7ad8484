"""The convention search's cheaper screen (verify.compare.convention._RatioScreen: one mask for
the identity's window, only the claims outside it sorted) lets through exactly the claims the
former screen (a copy below: every claim sorted by ratio) let through, for every factor,
including factors whose window overlaps the identity's; and best_fit with the identity alone
(no screen) counts as testing every claim one by one."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from test_convention_screen import FACTORS, _by_hand, claims

from verify.compare.convention import (
    SCREEN_MARGIN,
    SCREEN_SLACK,
    UNIT_FACTORS,
    _counts_by_sign,
    _RatioScreen,
    best_fit,
)
from verify.compare.diagnose import _one_factor
from verify.compare.tolerances import Tolerance

NEAR_ONE = [1.02, 0.97, 1.1, 0.9, 1.0 + 1e-7]


class FormerScreen:
    """_RatioScreen before this change, kept as the reference."""

    def __init__(self, c, r, atol, rounding, rtol):
        size = np.abs(c)
        with np.errstate(divide="ignore", invalid="ignore"):
            loose = ~((atol <= SCREEN_SLACK * size) & (np.abs(rounding) <= SCREEN_SLACK * size))
            ratio = np.abs(r) / size
        loose |= ~np.isfinite(ratio)
        self.usable = 0 <= rtol < 1 and size.size > 0
        self.rtol = rtol
        self.size = size.size
        tight = np.flatnonzero(~loose)
        order = np.argsort(ratio[tight], kind="stable")
        self.tight, self.sorted_ratio = tight[order], ratio[tight][order]
        self.loose = np.flatnonzero(loose)

    def candidates(self, factor):
        if not self.usable or not (np.isfinite(factor) and factor > 0):
            return np.arange(self.size)
        window = max(factor * self.rtol / (1 - self.rtol), SCREEN_SLACK, factor * SCREEN_SLACK)
        window = window * (1 + SCREEN_MARGIN) + SCREEN_MARGIN * factor
        lo = np.searchsorted(self.sorted_ratio, factor - window, side="left")
        hi = np.searchsorted(self.sorted_ratio, factor + window, side="right")
        return np.concatenate([self.tight[lo:hi], self.loose])


def _same_candidates(c, r, atol, rounding, rtol, factors):
    new, old = _RatioScreen(c, r, atol, rounding, rtol), FormerScreen(c, r, atol, rounding, rtol)
    for factor in factors:
        got, expected = new.candidates(factor), old.candidates(factor)
        assert got.size == expected.size
        assert np.array_equal(np.sort(got), np.sort(expected))


@settings(max_examples=200, deadline=None)
@given(claims(), st.sampled_from([-1.0, 0.0, np.nan, np.inf]))
def test_the_screen_lets_through_the_claims_the_former_screen_did(data, odd_factor):
    c, fixed, r, rtol, atol, rounding = data
    _same_candidates(c, r, atol, rounding, rtol, [*FACTORS, *NEAR_ONE, odd_factor])
    screen = _RatioScreen(c, r, atol, rounding, rtol)
    tol = Tolerance(rtol=rtol)
    for factor in NEAR_ONE:  # windows overlapping the identity's
        at = screen.candidates(factor)
        screened = _counts_by_sign(c[at], fixed[at], r[at], rtol, atol[at], rounding[at], factor)
        assert screened == _by_hand(c, fixed, r, tol, atol, rounding, factor)


def test_large_random_tables_as_the_former_screen():
    rng = np.random.default_rng(8)
    n = 50_000
    r = rng.normal(scale=200.0, size=n)
    picks = rng.choice([1.0, 1.0, 1.0, *UNIT_FACTORS], size=n)
    c = np.round(r / picks * (1 + rng.normal(scale=0.01, size=n)), rng.integers(0, 4))
    c[::13] = rng.normal(scale=200.0, size=c[::13].size)  # anything
    rounding = np.full(n, 0.005)
    rounding[::17] = 50.0  # coarse cells: loose
    atol = np.full(n, 0.5)
    for rtol in (0.0, 0.01, 0.3):
        _same_candidates(c, r, atol, rounding, rtol, [1.0, *UNIT_FACTORS, *NEAR_ONE])


@settings(max_examples=100, deadline=None)
@given(claims())
def test_the_identity_alone_counts_every_claim(data):
    c, fixed, r, rtol, atol, rounding = data
    best, identity = best_fit(c, fixed, r, rtol, atol, rounding, factors=())
    informative = (np.abs(r) > atol) & (c != 0)
    tol = Tolerance(rtol=rtol)
    i = informative
    counts = _by_hand(c[i], fixed[i], r[i], tol, atol[i], rounding[i], 1.0)
    assert identity.agree == counts[1] and identity.informative == int(i.sum())
    assert best.agree == max(counts[1], counts[-1])
    assert (best.sign, best.factor) == ((-1, 1.0) if counts[-1] > counts[1] else (1, 1.0))


@settings(max_examples=300, deadline=None)
@given(
    st.lists(
        st.sampled_from([1.0, 1.0 + 1e-14, 1.0 + 1e-11, 1e-3, 0.0, -0.0, float("nan")])
        | st.floats(width=64),
        max_size=8,
    )
)
def test_one_factor_as_the_former_set_of_rounded_factors(factors):
    """diagnose._one_factor (the table's scale) tells what len(set(...)) == 1 told."""
    conv = np.array(factors, dtype=np.float64)
    with np.errstate(all="ignore"):
        expected = bool(len(conv)) and len(set(np.round(conv, 12))) == 1
        assert _one_factor(conv) == expected


def every_claim_best_fit(claimed, fixed, computed, rtol, atol, rounding, factors=None):
    """best_fit as it was defined before the identity's bound and the screens: every claim
    counted under every factor, the same choice of the best (strictly more agreeing wins)."""
    informative = (np.abs(computed) > atol) & (claimed != 0)
    n = int(informative.sum())
    c, f, r, a, rd = (x[informative] for x in (claimed, fixed, computed, atol, rounding))
    candidates = [1.0, *(factors if factors is not None else UNIT_FACTORS)]
    counted = {factor: _counts_by_sign(c, f, r, rtol, a, rd, factor) for factor in candidates}
    identity = (1, 1.0, counted[1.0][1], n)
    best = identity
    for factor in candidates:
        for sign in (1, -1):
            if sign == 1 and factor == 1.0:
                continue
            if counted[factor][sign] > best[2]:
                best = (sign, factor, counted[factor][sign], n)
    return best, identity


def as_tuple(fit):
    return (fit.sign, fit.factor, fit.agree, fit.informative)


@settings(max_examples=300, deadline=None)
@given(claims(), st.sampled_from([None, (), (1000.0, 1e-3), (1.02, 2.0)]), st.data())
def test_best_fit_as_counting_every_claim_under_every_factor(data, factors, more):
    c, fixed, r, rtol, atol, rounding = data
    rtol = more.draw(st.sampled_from([rtol, 0.5, 0.9, 1.5]))  # wide windows overlap
    with np.errstate(all="ignore"):
        best, identity = best_fit(c, fixed, r, rtol, atol, rounding, factors=factors)
        expected = every_claim_best_fit(c, fixed, r, rtol, atol, rounding, factors)
    assert (as_tuple(best), as_tuple(identity)) == expected


def test_an_honest_table_is_settled_by_the_identity_without_a_screen(monkeypatch):
    import verify.compare.convention as convention

    rng = np.random.default_rng(6)
    r = rng.normal(scale=300.0, size=20_000)
    c = np.round(r, 2)
    c[:40] = -c[:40]  # a few sign slips
    c[40:45] *= 1000.0  # and a few values in N
    args = (c, np.zeros(c.size, bool), r, 0.01, np.full(c.size, 0.3), np.full(c.size, 0.005))
    made = []
    monkeypatch.setattr(convention, "_RatioScreen", lambda *a: made.append(1) or _RatioScreen(*a))
    best, identity = best_fit(*args)
    assert not made  # no other factor could explain more than the identity does
    assert (as_tuple(best), as_tuple(identity)) == every_claim_best_fit(*args)
    # a table in newtons still is read so, through the screen
    args = (c * 1000.0, *args[1:])
    best, identity = best_fit(*args)
    assert made and (best.sign, best.factor) == (1, 1e-3)
    assert (as_tuple(best), as_tuple(identity)) == every_claim_best_fit(*args)
