"""The convention search's ratio screen (verify.compare.convention._RatioScreen) never changes
a count: for every candidate factor and sign, the claims it lets through agree exactly as often
as all claims tested one by one with Tolerance.agrees (the scalar definition of agreement)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.compare.convention import UNIT_FACTORS, _counts_by_sign, _RatioScreen, best_fit
from verify.compare.tolerances import Tolerance

FACTORS = [1.0, *UNIT_FACTORS, 10.0, 0.1, 2.0]


def _by_hand(c, fixed, r, tol, atol, rounding, factor):
    counts = {1: 0, -1: 0}
    for sign in (1, -1):
        for ci, fi, ri, ai, rdi in zip(c, fixed, r, atol, rounding, strict=True):
            value = ci * factor * (1 if fi else sign)
            if tol.agrees(value, ri, ai, rdi * factor):
                counts[sign] += 1
    return counts


@st.composite
def claims(draw):
    n = draw(st.integers(1, 40))
    r = np.array(draw(st.lists(st.floats(-1e4, 1e4), min_size=n, max_size=n)))
    # claims near some factor times the truth, or anything, or written coarsely
    picks = draw(st.lists(st.sampled_from(FACTORS), min_size=n, max_size=n))
    noise = np.array(draw(st.lists(st.floats(-0.05, 0.05), min_size=n, max_size=n)))
    wild = np.array(draw(st.lists(st.floats(-1e4, 1e4), min_size=n, max_size=n)))
    use_wild = np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)))
    c = np.where(use_wild, wild, r / np.array(picks) * (1 + noise))
    c = np.where(np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n))), -c, c)
    decimals = np.array(draw(st.lists(st.integers(-2, 4), min_size=n, max_size=n)))
    c = np.round(c, decimals[0])
    rounding = 0.5 * 10.0 ** (-decimals.astype(float))
    fixed = np.array(draw(st.lists(st.booleans(), min_size=n, max_size=n)))
    atol = np.full(n, draw(st.sampled_from([0.0, 1e-3, 0.5, 50.0])))
    rtol = draw(st.sampled_from([0.0, 0.005, 0.01, 0.2]))
    return c, fixed, r, rtol, atol, rounding


@settings(max_examples=200, deadline=None)
@given(claims())
def test_screened_counts_are_the_counts_of_every_claim(data):
    c, fixed, r, rtol, atol, rounding = data
    screen = _RatioScreen(c, r, atol, rounding, rtol)
    tol = Tolerance(rtol=rtol)
    for factor in FACTORS:
        at = screen.candidates(factor)
        screened = _counts_by_sign(c[at], fixed[at], r[at], rtol, atol[at], rounding[at], factor)
        assert screened == _by_hand(c, fixed, r, tol, atol, rounding, factor)


def test_a_table_in_newtons_is_found_through_the_screen():
    rng = np.random.default_rng(3)
    r = rng.uniform(-500, 500, 5_000)
    c = np.round(r * 1000.0, 0)  # written in N against kN
    atol = np.full(r.size, 0.5)
    best, identity = best_fit(c, np.zeros(r.size, bool), r, 0.01, atol, np.full(r.size, 0.5))
    assert best.factor == 1e-3 and best.sign == 1
    assert best.agree == int((np.abs(r) > 0.5).sum()) and identity.agree == 0
