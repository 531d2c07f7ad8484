"""tolerances.allowance worked in one array (the convention search's many calls over every
claim) gives the bits of the expression it replaces (copied below), NaN and infinities included,
for arrays, broadcast scalars and per-claim atol and rounding."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from verify.compare.tolerances import allowance


def former(rtol, claimed, computed, atol, rounding=0.0):
    return np.maximum(
        np.maximum(rtol * np.maximum(np.abs(claimed), np.abs(computed)), atol), rounding
    )


def same_bits(a, b) -> bool:
    a, b = np.asarray(a, dtype=np.float64), np.asarray(b, dtype=np.float64)
    return a.shape == b.shape and np.array_equal(a.view(np.int64), b.view(np.int64))


floats = st.floats(width=64)


@settings(max_examples=300, deadline=None)
@given(
    st.integers(0, 30).flatmap(
        lambda n: st.tuples(
            hnp.arrays(np.float64, n, elements=floats),
            hnp.arrays(np.float64, n, elements=floats),
            st.one_of(floats, hnp.arrays(np.float64, n, elements=floats)),
            st.one_of(floats, hnp.arrays(np.float64, n, elements=floats)),
        )
    ),
    st.sampled_from([0.0, 0.005, 0.01, 0.3]),
)
def test_allowance_gives_the_former_bits(arrays, rtol):
    claimed, computed, atol, rounding = arrays
    with np.errstate(all="ignore"):
        assert same_bits(
            allowance(rtol, claimed, computed, atol, rounding),
            former(rtol, claimed, computed, atol, rounding),
        )
        assert same_bits(
            allowance(rtol, claimed, computed, atol), former(rtol, claimed, computed, atol)
        )


def test_inputs_left_untouched_and_other_shapes_through_the_general_path():
    claimed = np.array([1.0, -2.0, np.nan])
    computed = np.array([0.5, 3.0, 1.0])
    kept = claimed.copy(), computed.copy()
    assert same_bits(allowance(0.01, claimed, computed, 0.1), former(0.01, claimed, computed, 0.1))
    assert same_bits(claimed, kept[0]) and same_bits(computed, kept[1])
    wide = np.ones((2, 3))  # atol wider than the claims: broadcast, as before
    assert same_bits(
        allowance(0.01, claimed, computed, wide), former(0.01, claimed, computed, wide)
    )
    assert same_bits(allowance(0.01, 2.0, -3.0, 0.5), former(0.01, 2.0, -3.0, 0.5))
    ints = np.array([1, -2, 3])
    assert same_bits(allowance(0.01, ints, ints, 0.5), former(0.01, ints, ints, 0.5))
