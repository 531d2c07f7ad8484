"""The convention search tests most claims where they lie (no copy of the candidates) and counts
both signs in one temporary array: its fits are held to counting claim by claim with
Tolerance.agrees (hypothesis draws the tables, as tests/compare/test_convention_screen.py)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from test_convention_screen import FACTORS, _by_hand, claims

from verify.compare.convention import best_fit
from verify.compare.tolerances import Tolerance


@settings(max_examples=200, deadline=None)
@given(claims())
def test_the_fits_found_are_those_counted_claim_by_claim(data):
    c, fixed, r, rtol, atol, rounding = data
    best, identity = best_fit(c, fixed, r, rtol, atol, rounding, factors=tuple(FACTORS[1:]))
    informative = (np.abs(r) > atol) & (c != 0)
    picked = [x[informative] for x in (c, fixed, r, atol, rounding)]
    tol = Tolerance(rtol=rtol)
    counts = {f: _by_hand(*picked[:3], tol, *picked[3:], f) for f in FACTORS}
    assert identity.agree == counts[1.0][1]
    assert identity.informative == best.informative == int(informative.sum())
    assert best.agree == max(n for by_sign in counts.values() for n in by_sign.values())
    assert best.agree == counts[best.factor][best.sign]
