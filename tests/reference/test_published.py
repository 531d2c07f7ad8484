"""Published and closed-form member forces, by the method of joints and by the global solve.

Every expected value is written as a formula beside the source it comes from (shared/REFERENCES.md
section 3). Tension positive throughout; printed "(C)" values are negative here.

Sources:
* REFERENCES.md 3.2 [V]: 6-panel Pratt and Howe (d = 4, h = 3, P at L1..L5) and 4-panel Warren
  (side 4); beam analogy (chord = M / h, diagonal = V / sin theta), common in Hibbeler,
  Structural Analysis, and Kassimali, Structural Analysis (section numbers from memory).
* REFERENCES.md 3.3 [V]: king post, Fink (W) and 4-panel roof trusses (span 12, rise 3).
* REFERENCES.md 3.4 [V]: 3D tripod, vertical and horizontal apex load.
* Hibbeler, Engineering Mechanics: Statics, Example 6.1 (from memory of the 12th/13th eds.;
  REFERENCES.md 3.5).
* Beer, Johnston, Mazurek & Eisenberg, Vector Mechanics for Engineers: Statics, Problem 6.1
  (probably 9th ed., 2010; printed solution values, geometry reconstructed; REFERENCES.md 3.5).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from trussgen import forces_by_id, howe, make_model, pratt, truss_case, warren

from verify.analysis.global_solve import solve_global
from verify.analysis.joints import solve_joints

P = 10.0  # any load; the expected values scale with it
RTOL = 1e-10
ATOL = 1e-10 * P
SQRT2, SQRT3, SQRT5, SQRT13 = math.sqrt(2), math.sqrt(3), math.sqrt(5), math.sqrt(13)
ROUTES = {"joints": lambda model: solve_joints(model).forces, "global": solve_global}


def check(
    case: dict,
    expected: dict[str, float],
    *,
    route: str,
    column: int = 0,
    reactions: dict[str, list[float]] | None = None,
    rtol: float = RTOL,
) -> None:
    model = make_model(case)
    result = ROUTES[route](model)
    forces = forces_by_id(model, result.member_forces, column)
    for member, value in expected.items():
        assert forces[member] == pytest.approx(value, rel=rtol, abs=ATOL), member
    if reactions:
        got = result.reaction_vectors(model, model.load_names[column])
        for joint, vector in reactions.items():
            assert got[joint] == pytest.approx(vector, rel=rtol, abs=ATOL), joint


def symmetric(values: dict[str, float], mirror: dict[str, str]) -> dict[str, float]:
    return {**values, **{mirror[k]: v for k, v in values.items() if k in mirror}}


PRATT_MIRROR = {
    "L0L1": "L5L6",
    "L1L2": "L4L5",
    "L2L3": "L3L4",
    "U1U2": "U4U5",
    "U2U3": "U3U4",
    "L0U1": "U5L6",
    "U1L1": "U5L5",
    "U2L2": "U4L4",
    "U1L2": "U5L4",
    "U2L3": "U4L3",
}
HOWE_MIRROR = {
    **{k: v for k, v in PRATT_MIRROR.items() if k not in ("U1L2", "U2L3")},
    "L1U2": "L5U4",
    "L2U3": "L4U3",
}


@pytest.mark.parametrize("route", ROUTES)
def test_pratt_6_panel(route):
    """REFERENCES.md 3.2 Pratt table (beam analogy; sympy gave the same exactly with P = 10)."""
    expected = symmetric(
        {
            "L0L1": 10 * P / 3,
            "L1L2": 10 * P / 3,
            "L2L3": 16 * P / 3,
            "U1U2": -16 * P / 3,
            "U2U3": -6 * P,
            "L0U1": -25 * P / 6,
            "U1L1": P,
            "U2L2": -P / 2,
            "U3L3": 0.0,
            "U1L2": 5 * P / 2,
            "U2L3": 5 * P / 6,
        },
        PRATT_MIRROR,
    )
    check(
        pratt(6, load=P),
        expected,
        route=route,
        reactions={"L0": [0.0, 5 * P / 2], "L6": [0.0, 5 * P / 2]},
    )


@pytest.mark.parametrize("route", ROUTES)
def test_pratt_section_check(route):
    """REFERENCES.md 3.2 Ritter check on panel 2: U1U2 = -M(L2)/h, L1L2 = M(U1)/h, U1L2 =
    V/sin(theta)."""
    h, sin_theta = 3.0, 0.6
    M_L2, M_L1, V2 = 16 * P, 10 * P, 1.5 * P
    check(
        pratt(6, load=P), {"U1U2": -M_L2 / h, "L1L2": M_L1 / h, "U1L2": V2 / sin_theta}, route=route
    )


@pytest.mark.parametrize("route", ROUTES)
def test_howe_6_panel(route):
    """REFERENCES.md 3.2 Howe table."""
    expected = symmetric(
        {
            "L0L1": 10 * P / 3,
            "L1L2": 16 * P / 3,
            "L2L3": 6 * P,
            "U1U2": -10 * P / 3,
            "U2U3": -16 * P / 3,
            "L0U1": -25 * P / 6,
            "U1L1": 5 * P / 2,
            "U2L2": 3 * P / 2,
            "U3L3": P,
            "L1U2": -5 * P / 2,
            "L2U3": -5 * P / 6,
        },
        HOWE_MIRROR,
    )
    check(
        howe(6, load=P),
        expected,
        route=route,
        reactions={"L0": [0.0, 5 * P / 2], "L6": [0.0, 5 * P / 2]},
    )


@pytest.mark.parametrize("route", ROUTES)
def test_warren_4_panel(route):
    """REFERENCES.md 3.2 Warren (equilateral, side 4; P at L1, L2, L3; reactions 1.5P)."""
    expected = {
        "L0L1": SQRT3 / 2 * P,
        "L1L2": 7 * SQRT3 / 6 * P,
        "U1U2": -SQRT3 * P,
        "U2U3": -4 * SQRT3 / 3 * P,
        "L0U1": -SQRT3 * P,
        "U1L1": SQRT3 * P,
        "L1U2": -SQRT3 / 3 * P,
        "U2L2": SQRT3 / 3 * P,
        # mirror images
        "L3L4": SQRT3 / 2 * P,
        "L2L3": 7 * SQRT3 / 6 * P,
        "U3U4": -SQRT3 * P,
        "U4L4": -SQRT3 * P,
        "L3U4": SQRT3 * P,
        "U3L3": -SQRT3 / 3 * P,
        "L2U3": SQRT3 / 3 * P,
    }
    check(
        warren(4, load=P),
        expected,
        route=route,
        reactions={"L0": [0.0, 1.5 * P], "L4": [0.0, 1.5 * P]},
    )


@pytest.mark.parametrize("route", ROUTES)
def test_warren_beam_analogy(route):
    """REFERENCES.md 3.2: end diagonal = V / sin 60 deg; L1L2 = M(x = 6) / h with h = 2 sqrt 3."""
    V, h, M6 = 1.5 * P, 2 * SQRT3, 1.5 * P * 6 - P * 2
    check(warren(4, load=P), {"L0U1": -V / math.sin(math.radians(60)), "L1L2": M6 / h}, route=route)


KING_POST = {"A": [0, 0], "B": [8, 0], "C": [4, 3], "D": [4, 0]}
KING_MEMBERS = [("A", "D"), ("D", "B"), ("A", "C"), ("C", "B"), ("C", "D")]
KING_SUPPORTS = {"A": ["x", "y"], "B": ["y"]}


@pytest.mark.parametrize("route", ROUTES)
def test_king_post_apex_load(route):
    """REFERENCES.md 3.3: rafters -P/(2 sin a) = -5P/6, tie P/(2 tan a) = 2P/3, CD = 0."""
    sin_a, tan_a = 3 / 5, 3 / 4
    case = truss_case(
        KING_POST, KING_MEMBERS, KING_SUPPORTS, {"apex": {"C": [0, -P]}, "hanger": {"D": [0, -P]}}
    )
    rafter, tie = -P / (2 * sin_a), P / (2 * tan_a)
    assert rafter == pytest.approx(-5 * P / 6) and tie == pytest.approx(2 * P / 3)
    check(
        case,
        {"AC": rafter, "CB": rafter, "AD": tie, "DB": tie, "CD": 0.0},
        route=route,
        reactions={"A": [0.0, P / 2], "B": [0.0, P / 2]},
    )
    # Load at D instead: same chords and rafters, CD = +P (tension).
    check(case, {"AC": rafter, "CB": rafter, "AD": tie, "DB": tie, "CD": P}, route=route, column=1)


@pytest.mark.parametrize("route", ROUTES)
def test_fink_truss(route):
    """REFERENCES.md 3.3 Fink (W): span 12, rise 3, P at F, C, G."""
    joints = {
        "A": [0, 0],
        "B": [12, 0],
        "C": [6, 3],
        "D": [4, 0],
        "E": [8, 0],
        "F": [3, 1.5],
        "G": [9, 1.5],
    }
    members = [
        ("A", "D"),
        ("D", "E"),
        ("E", "B"),
        ("A", "F"),
        ("F", "C"),
        ("C", "G"),
        ("G", "B"),
        ("F", "D"),
        ("D", "C"),
        ("C", "E"),
        ("E", "G"),
    ]
    case = truss_case(
        joints,
        members,
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"F": [0, -P], "C": [0, -P], "G": [0, -P]}},
    )
    expected = {
        "AD": 3 * P,
        "EB": 3 * P,
        "DE": 2 * P,
        "AF": -3 * SQRT5 * P / 2,
        "GB": -3 * SQRT5 * P / 2,
        "FC": -5 * SQRT5 * P / 4,
        "CG": -5 * SQRT5 * P / 4,
        "FD": -SQRT13 * P / 4,
        "EG": -SQRT13 * P / 4,
        "DC": SQRT13 * P / 4,
        "CE": SQRT13 * P / 4,
    }
    check(case, expected, route=route, reactions={"A": [0.0, 1.5 * P], "B": [0.0, 1.5 * P]})


ROOF_JOINTS = {
    "L0": [0, 0],
    "L1": [3, 0],
    "L2": [6, 0],
    "L3": [9, 0],
    "L4": [12, 0],
    "U1": [3, 1.5],
    "U2": [6, 3],
    "U3": [9, 1.5],
}
ROOF_CHORDS = [
    ("L0", "L1"),
    ("L1", "L2"),
    ("L2", "L3"),
    ("L3", "L4"),
    ("L0", "U1"),
    ("U1", "U2"),
    ("U2", "U3"),
    ("U3", "L4"),
    ("U1", "L1"),
    ("U2", "L2"),
    ("U3", "L3"),
]
ROOF_LOADS = {"P": {"U1": [0, -P], "U2": [0, -P], "U3": [0, -P]}}


@pytest.mark.parametrize("route", ROUTES)
def test_roof_diagonals_down_to_centre(route):
    """REFERENCES.md 3.3, 4-panel roof, diagonals U1L2 and U3L2 (Howe-type)."""
    case = truss_case(
        ROOF_JOINTS,
        ROOF_CHORDS + [("U1", "L2"), ("U3", "L2")],
        {"L0": ["x", "y"], "L4": ["y"]},
        ROOF_LOADS,
    )
    expected = {
        "L0L1": 3 * P,
        "L1L2": 3 * P,
        "L2L3": 3 * P,
        "L3L4": 3 * P,
        "L0U1": -3 * SQRT5 * P / 2,
        "U3L4": -3 * SQRT5 * P / 2,
        "U1U2": -SQRT5 * P,
        "U2U3": -SQRT5 * P,
        "U1L1": 0.0,
        "U3L3": 0.0,
        "U2L2": P,
        "U1L2": -SQRT5 * P / 2,
        "U3L2": -SQRT5 * P / 2,
    }
    check(case, expected, route=route, reactions={"L0": [0.0, 1.5 * P], "L4": [0.0, 1.5 * P]})


@pytest.mark.parametrize("route", ROUTES)
def test_roof_diagonals_up_to_centre(route):
    """REFERENCES.md 3.3, 4-panel roof, diagonals L1U2 and L3U2 (Pratt-type)."""
    case = truss_case(
        ROOF_JOINTS,
        ROOF_CHORDS + [("L1", "U2"), ("L3", "U2")],
        {"L0": ["x", "y"], "L4": ["y"]},
        ROOF_LOADS,
    )
    expected = {
        "L0L1": 3 * P,
        "L3L4": 3 * P,
        "L1L2": 2 * P,
        "L2L3": 2 * P,
        "L0U1": -3 * SQRT5 * P / 2,
        "U1U2": -3 * SQRT5 * P / 2,
        "U2U3": -3 * SQRT5 * P / 2,
        "U3L4": -3 * SQRT5 * P / 2,
        "U1L1": -P,
        "U3L3": -P,
        "U2L2": 0.0,
        "L1U2": SQRT2 * P,
        "L3U2": SQRT2 * P,
    }
    check(case, expected, route=route, reactions={"L0": [0.0, 1.5 * P], "L4": [0.0, 1.5 * P]})


def tripod():
    feet = {
        f"F{k + 1}": [3 * math.cos(math.radians(120 * k)), 3 * math.sin(math.radians(120 * k)), 0.0]
        for k in range(3)
    }
    return truss_case(
        {"O": [0, 0, 4], **feet},
        [("O", f) for f in feet],
        {f: ["x", "y", "z"] for f in feet},
        {"vertical": {"O": [0, 0, -P]}, "horizontal": {"O": [P, 0, 0]}},
    )


@pytest.mark.parametrize("route", ROUTES)
def test_tripod_vertical_load(route):
    """REFERENCES.md 3.4: each leg = -P / (3 cos b) = -P L / (3 h) = -5P/12 (L = 5, h = 4)."""
    L, h = 5.0, 4.0
    leg = -P * L / (3 * h)
    assert leg == pytest.approx(-5 * P / 12)
    check(tripod(), {"OF1": leg, "OF2": leg, "OF3": leg}, route=route)


@pytest.mark.parametrize("route", ROUTES)
def test_tripod_horizontal_load(route):
    """REFERENCES.md 3.4: P along +x toward foot 1: leg 1 = -10P/9, legs 2 and 3 = +5P/9."""
    check(tripod(), {"OF1": -10 * P / 9, "OF2": 5 * P / 9, "OF3": 5 * P / 9}, route=route, column=1)


@pytest.mark.parametrize("route", ROUTES)
def test_hibbeler_statics_example_6_1(route):
    """Hibbeler, Engineering Mechanics: Statics, Ex. 6.1 (from memory, 12th/13th eds.): 500 N at B.

    F_BC = 707.1 N (C) = 500 sqrt 2; F_BA = 500 N (T); F_CA = 500 N (T); C_y = 500 N up;
    A_x = 500 N (-x); A_y = 500 N down.
    """
    case = truss_case(
        {"A": [0, 0], "B": [0, 2], "C": [2, 0]},
        [("A", "B"), ("B", "C"), ("C", "A")],
        {"A": ["x", "y"], "C": ["y"]},
        {"P": {"B": [500.0, 0.0]}},
        units=("m", "N"),
    )
    check(
        case,
        {"BC": -500 * SQRT2, "AB": 500.0, "CA": 500.0},
        route=route,
        reactions={"C": [0.0, 500.0], "A": [-500.0, -500.0]},
    )
    assert 500 * SQRT2 == pytest.approx(707.1, abs=0.05)  # the printed 4-figure value


@pytest.mark.parametrize("route", ROUTES)
def test_beer_johnston_statics_problem_6_1(route):
    """Beer & Johnston, Vector Mechanics for Engineers: Statics, Problem 6.1 (printed solution):
    C = 48 kN; A_x = 48 kN; A_y = 84 kN; F_AB = 52 kN (T); F_AC = 64.0 kN (T); F_BC = 80.0 kN (C).
    Directions of the reactions from the free body (84 kN down at B, common practice)."""
    case = truss_case(
        {"A": [0, 5.25], "B": [3, 4], "C": [0, 0]},
        [("A", "B"), ("A", "C"), ("B", "C")],
        {"A": ["x", "y"], "C": ["x"]},
        {"P": {"B": [0.0, -84.0]}},
    )
    check(
        case,
        {"AB": 52.0, "AC": 64.0, "BC": -80.0},
        route=route,
        reactions={"C": [48.0, 0.0], "A": [-48.0, 84.0]},
    )


def test_member_lengths_of_beer_johnston_geometry():
    """The reconstruction is confirmed by the printed lengths AB = 3.25 m, BC = 5 m."""
    model = make_model(
        truss_case(
            {"A": [0, 5.25], "B": [3, 4], "C": [0, 0]},
            [("A", "B"), ("B", "C")],
            {"A": ["x", "y"], "C": ["x"]},
            {"P": {"B": [0.0, -84.0]}},
        )
    )
    np.testing.assert_allclose(model.lengths, [3.25, 5.0], rtol=1e-12)
