"""Random stable determinate 2D trusses against sympy's own truss module.

Oracle: sympy.physics.continuum_mechanics.truss.Truss (sympy >= 1.13 tuple API; shared/
REFERENCES.md 4.1). It only takes pin and vertical-roller supports and needs 2j = b + r exactly
(4.2), so the trusses here are simple trusses grown by Henneberg type I steps from a triangle
(REFERENCES.md 1.3) with integer coordinates, a pin at J0 and a vertical roller elsewhere.
Loads are applied as separate x and y components with non-zero integer magnitudes, because a
zero-magnitude load breaks sympy's solve (4.2). sympy's internal_forces are tension-positive in
practice although its docstring says otherwise (4.3); a pinned regression test guards that.
"""

from __future__ import annotations

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, given, reject, settings
from hypothesis import strategies as st
from sympy.physics.continuum_mechanics.truss import Truss
from trussgen import make_model, simple_truss, truss_case

from verify.analysis.global_solve import solve_global
from verify.analysis.joints import solve_joints
from verify.analysis.stability import Classification, solve_stability

RTOL = 1e-9


def sympy_truss(case: dict, *, exact: bool) -> Truss:
    number = (lambda v: sympy.Integer(round(v))) if exact else float
    truss = Truss()
    truss.add_node(*[(j, number(x), number(y)) for j, (x, y) in case["joints"].items()])
    truss.add_member(*[(m, a, b) for m, (a, b) in case["members"].items()])
    truss.apply_support(
        *[(j, "pinned" if axes == ["x", "y"] else "roller") for j, axes in case["supports"].items()]
    )
    for joint, (fx, fy) in case["loads"]["L"].items():
        if fx:
            truss.apply_load((joint, number(abs(fx)), 0 if fx > 0 else 180))
        if fy:
            truss.apply_load((joint, number(abs(fy)), 90 if fy > 0 else 270))
    truss.solve()
    return truss


@st.composite
def simple_trusses(draw, max_joints: int = 8, span: int = 10):
    n = draw(st.integers(4, max_joints))
    points = draw(
        st.lists(
            st.tuples(st.integers(0, span), st.integers(0, span)),
            min_size=n,
            max_size=n,
            unique=True,
        )
    )
    attachments = [
        tuple(draw(st.lists(st.integers(0, k - 1), min_size=2, max_size=2, unique=True)))
        for k in range(3, n)
    ]
    component = st.integers(-20, 20)
    loads = {k: draw(st.tuples(component, component)) for k in range(n)}
    loads = {k: v for k, v in loads.items() if v != (0, 0)}
    roller = draw(st.integers(1, n - 1))
    case = simple_truss(points, attachments, loads, roller=roller)
    if case is None or not loads:
        reject()
    return case


def compare(case: dict, truss: Truss) -> None:
    model = make_model(case)
    expected = np.array([float(truss.internal_forces[m.id]) for m in model.members])
    expected_r = np.array(
        [float(truss.reaction_loads[f"R_{r.joint}_{r.axis}"]) for r in model.reactions]
    )
    scale = max(1.0, float(np.abs(expected).max()))
    for forces in (solve_joints(model).forces, solve_global(model)):
        np.testing.assert_allclose(
            forces.member_forces[:, 0], expected, rtol=RTOL, atol=RTOL * scale
        )
        np.testing.assert_allclose(forces.reactions[:, 0], expected_r, rtol=RTOL, atol=RTOL * scale)


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(simple_trusses())
def test_random_simple_truss_matches_sympy(case):
    """Both routes agree with sympy (float input) on random simple trusses of 4 to 8 joints."""
    model = make_model(case)
    assert solve_stability(model).classification is Classification.STABLE_DETERMINATE
    compare(case, sympy_truss(case, exact=False))


@settings(max_examples=6, deadline=None, suppress_health_check=[HealthCheck.filter_too_much])
@given(simple_trusses(max_joints=6))
def test_random_simple_truss_matches_sympy_exact(case):
    """With integer input sympy solves exactly (sqrt terms kept), an exact rational oracle."""
    compare(case, sympy_truss(case, exact=True))


def test_sympy_sign_convention_is_tension_positive():
    """Pinned regression of REFERENCES.md 4.3/4.4: sympy's own king-post output with sympy 1.14.

    A docstring-driven change of sign in sympy would make this fail before it silently turns the
    oracle above into a compression-positive one.
    """
    P = sympy.symbols("P", positive=True)
    truss = Truss()
    truss.add_node(("A", 0, 0), ("B", 8, 0), ("C", 4, 3), ("D", 4, 0))
    truss.add_member(
        ("AD", "A", "D"), ("DB", "D", "B"), ("AC", "A", "C"), ("CB", "C", "B"), ("CD", "C", "D")
    )
    truss.apply_support(("A", "pinned"), ("B", "roller"))
    truss.apply_load(("C", P, 270), ("D", 10, 270))
    truss.solve()
    f = truss.internal_forces
    assert sympy.simplify(f["AD"] - (2 * P / 3 + sympy.Rational(20, 3))) == 0
    assert sympy.simplify(f["AC"] - (-5 * P / 6 - sympy.Rational(25, 3))) == 0
    assert f["CD"] == 10  # the hanger under a bottom load is in tension: +P
    assert sympy.simplify(truss.reaction_loads["R_A_y"] - (P / 2 + 5)) == 0


def test_sympy_and_verify_agree_on_the_king_post_signs():
    """The same king post in verify: tie in tension (+), rafters in compression (-), hanger +10."""
    case = truss_case(
        {"A": [0, 0], "B": [8, 0], "C": [4, 3], "D": [4, 0]},
        [("A", "D"), ("D", "B"), ("A", "C"), ("C", "B"), ("C", "D")],
        {"A": ["x", "y"], "B": ["y"]},
        {"L": {"C": [0, -6], "D": [0, -10]}},
    )
    compare(case, sympy_truss(case, exact=True))
    model = make_model(case)
    forces = solve_global(model).member_forces[:, 0]
    assert forces[model.member_index["CD"]] == pytest.approx(10.0)
    assert forces[model.member_index["AD"]] == pytest.approx(2 * 6 / 3 + 20 / 3)
    assert forces[model.member_index["AC"]] == pytest.approx(-5 * 6 / 6 - 25 / 3)


def test_sympy_refuses_a_count_it_cannot_solve():
    """REFERENCES.md 4.2: sympy demands 2j = b + r; the oracle is only used on such trusses."""
    truss = Truss()
    truss.add_node(("A", 0, 0), ("B", 1, 0), ("C", 1, 1), ("D", 0, 1))
    truss.add_member(
        ("AB", "A", "B"),
        ("BC", "B", "C"),
        ("CD", "C", "D"),
        ("DA", "D", "A"),
        ("AC", "A", "C"),
        ("BD", "B", "D"),
    )
    truss.apply_support(("A", "pinned"), ("B", "roller"))
    truss.apply_load(("C", 10, 0))
    with pytest.raises(ValueError, match="cannot be solved"):
        truss.solve()
