"""The bounded one-dimensional search of the dimension cause against scipy's bounded Brent
search (scipy.optimize.minimize_scalar) on random functions with one minimum in the bounds."""

from __future__ import annotations

import math

from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.optimize import minimize_scalar

from verify.compare.causes.search import golden_section


@settings(max_examples=60, deadline=None)
@given(
    centre=st.floats(-0.6, 0.6),
    width=st.floats(0.05, 3.0),
    power=st.sampled_from([2, 4]),
    floor=st.floats(0.0, 5.0),
)
def test_same_minimum_as_scipy(centre: float, width: float, power: int, floor: float) -> None:
    low, high = math.log(0.5), math.log(2.0)

    def f(x: float) -> float:
        return floor + abs((x - centre) / width) ** power + 0.01 * math.cosh(x)

    ours = golden_section(f, low, high, tolerance=1e-6, steps=80)
    theirs = minimize_scalar(f, bounds=(low, high), method="bounded", options={"xatol": 1e-8}).x
    assert abs(ours - theirs) < 1e-3 * max(1.0, width)
    assert low <= ours <= high


def test_minimum_at_a_bound_is_found_there() -> None:
    assert abs(golden_section(lambda x: x, 0.0, 1.0, tolerance=1e-6, steps=80)) < 1e-5
    assert abs(golden_section(lambda x: -x, 0.0, 1.0, tolerance=1e-6, steps=80) - 1.0) < 1e-5
