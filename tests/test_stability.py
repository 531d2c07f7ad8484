"""Stability and determinacy against published counts and the calibration of REFERENCES.md 1.

Sources:
* J.C. Maxwell, "On the calculation of the equilibrium and stiffness of frames", Phil. Mag. 27
  (1864) 294-299 (counting rule); the extended rule s - m = (b + r) - dj from Calladine, IJSS 14
  (1978) 161-172, in the form of REFERENCES.md 1.1.
* S. Pellegrino & C.R. Calladine, IJSS 22(4) (1986) 409-428: r_A, m = dj - r_A, s = b + r - r_A,
  rigid-body versus internal mechanisms.
* shared/REFERENCES.md 1.4 canonical table ([V], status columns agree with textbook statements),
  1.2 sagging two-bar calibration ([V]: bar force 1/(2 sin theta), rho ~ 0.54 theta),
  3.6 self-stress of the braced square (sides : diagonals = 1 : -sqrt 2).
* E.D. Bolker & B. Roth, Pacific J. Math. 90(1) (1980) 27-44: K3,3 with joints on a conic is a
  critical form.
* shared/PERFORMANCE.md: sigma ratio of a sound 100-panel Pratt ~3e-4.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from trussgen import make_model, pratt, truss_case

from verify.analysis.global_solve import solve_global
from verify.analysis.stability import ILL_CONDITIONED_SCALED, Classification, solve_stability

SIGMA_DIGITS = 3e-3  # REFERENCES.md 1.4 prints sigma ratios to 3 figures

TRI = {"A": [0, 0], "B": [4, 0], "C": [2, 3]}
TRI_MEMBERS = [("A", "B"), ("B", "C"), ("C", "A")]
SQUARE = {"A": [0, 0], "B": [1, 0], "C": [1, 1], "D": [0, 1]}
SIDES = [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")]
PIN_ROLLER = {"A": ["x", "y"], "B": ["y"]}
S3 = math.sqrt(3.0)
TRIPOD_FEET = {"F1": [3, 0, 0], "F2": [-1.5, 1.5 * S3, 0], "F3": [-1.5, -1.5 * S3, 0]}
TET = {"A": [0, 0, 0], "B": [4, 0, 0], "C": [0, 4, 0], "D": [1, 1, 4]}
TET_MEMBERS = [("A", "B"), ("A", "C"), ("A", "D"), ("B", "C"), ("B", "D"), ("C", "D")]
# K3,3 as a hexagon with its three long diagonals; all six joints on the circle x^2 + y^2 = 25.
K33 = {"1": [5, 0], "2": [3, 4], "3": [-3, 4], "4": [-5, 0], "5": [-3, -4], "6": [3, -4]}
K33_MEMBERS = [
    ("1", "2"),
    ("2", "3"),
    ("3", "4"),
    ("4", "5"),
    ("5", "6"),
    ("6", "1"),
    ("1", "4"),
    ("2", "5"),
    ("3", "6"),
]


def tri(supports):
    return truss_case(TRI, TRI_MEMBERS, supports, {"P": {"C": [0, -1]}})


def square(extra=(), supports=PIN_ROLLER):
    return truss_case(SQUARE, SIDES + list(extra), supports, {"P": {"C": [1, 0]}})


def k33(moved: bool = False):
    joints = dict(K33)
    if moved:
        joints["2"] = [3.2, 4]  # 0.2 off the circle
    return truss_case(joints, K33_MEMBERS, {"5": ["x", "y"], "6": ["y"]}, {"P": {"2": [0, -1]}})


# REFERENCES.md 1.4, row by row: (b, r, j, b+r-dj, r_A, m, s, rigid-body m, internal m, sigma ratio
# or None).
ROWS = {
    "triangle, pin + roller": (tri(PIN_ROLLER), (3, 3, 3, 0, 6, 0, 0, 0, 0), 0.228),
    "square, no diagonal": (square(), (4, 3, 4, -1, 7, 1, 0, 0, 1), 0.382),
    "square, one diagonal": (square([("A", "C")]), (5, 3, 4, 0, 8, 0, 0, 0, 0), 0.134),
    "square, both diagonals": (
        square([("A", "C"), ("B", "D")]),
        (6, 3, 4, 1, 8, 0, 1, 0, 0),
        0.139,
    ),
    "square, no diagonal, two pins": (
        square(supports={"A": ["x", "y"], "B": ["x", "y"]}),
        (4, 4, 4, 0, 7, 1, 1, 0, 1),
        None,
    ),
    "triangle on 3 parallel rollers": (
        tri({"A": ["y"], "B": ["y"], "C": ["y"]}),
        (3, 3, 3, 0, 5, 1, 1, 1, 0),
        None,
    ),
    "triangle, roller along AB": (
        tri({"A": ["x", "y"], "B": {"direction": [1, 0]}}),
        (3, 3, 3, 0, 5, 1, 1, 1, 0),
        None,
    ),
    "triangle, 3 rollers meeting at Q": (
        tri({"A": {"direction": [0, 1]}, "B": {"direction": [4, 2]}, "C": {"direction": [2, 5]}}),
        (3, 3, 3, 0, 5, 1, 1, 1, 0),
        None,
    ),
    "triangle, no supports": (tri({}), (3, 0, 3, -3, 3, 3, 0, 3, 0), None),
    "two collinear bars": (
        truss_case(
            {"A": [0, 0], "B": [1, 0], "C": [2, 0]},
            [("A", "B"), ("B", "C")],
            {"A": ["x", "y"], "C": ["x", "y"]},
            {"P": {"B": [0, -1]}},
        ),
        (2, 4, 3, 0, 5, 1, 1, 0, 1),
        None,
    ),
    "K3,3 on a circle": (k33(), (9, 3, 6, 0, 11, 1, 1, 0, 1), None),
    "K3,3 one joint off the circle": (k33(moved=True), (9, 3, 6, 0, 12, 0, 0, 0, 0), None),
    "tetrahedron, supports 3+2+1": (
        truss_case(
            TET,
            TET_MEMBERS,
            {"A": ["x", "y", "z"], "B": ["y", "z"], "C": ["z"]},
            {"P": {"D": [1, 2, -3]}},
        ),
        (6, 6, 4, 0, 12, 0, 0, 0, 0),
        None,
    ),
    "tetrahedron, 3 vertical supports": (
        truss_case(
            TET, TET_MEMBERS, {"A": ["z"], "B": ["z"], "C": ["z"]}, {"P": {"D": [0, 0, -3]}}
        ),
        (6, 3, 4, -3, 9, 3, 0, 3, 0),
        None,
    ),
    "tripod": (
        truss_case(
            {"O": [0, 0, 4], **TRIPOD_FEET},
            [("O", f) for f in TRIPOD_FEET],
            {f: ["x", "y", "z"] for f in TRIPOD_FEET},
            {"V": {"O": [0, 0, -1]}},
        ),
        (3, 9, 4, 0, 12, 0, 0, 0, 0),
        0.265,
    ),
    "tripod with legs in one plane": (
        truss_case(
            {"O": [0, 0, 4], "F1": [3, 0, 0], "F2": [-3, 0, 0], "F3": [1, 0, 0]},
            [("O", "F1"), ("O", "F2"), ("O", "F3")],
            {f: ["x", "y", "z"] for f in ("F1", "F2", "F3")},
            {"V": {"O": [0, 0, -1]}},
        ),
        (3, 9, 4, 0, 11, 1, 1, 1, 0),
        None,
    ),
}


@pytest.mark.parametrize("name", list(ROWS))
def test_canonical_counts(name):
    """REFERENCES.md 1.4 (P&C 1986 counts): b, r, j, Maxwell, r_A, m, s, rigid-body / internal m."""
    case, (b, r, j, maxwell, rank, m, s, rigid, internal), _ = ROWS[name]
    result = solve_stability(make_model(case))
    got = (
        result.members,
        result.reactions,
        result.joints,
        result.maxwell,
        result.rank,
        result.mechanisms,
        result.self_stress,
        result.rigid_body_mechanisms,
        result.mechanisms - result.rigid_body_mechanisms,
    )
    assert got == (b, r, j, maxwell, rank, m, s, rigid, internal)
    assert result.exact_counts and result.method == "full-rank-count"


@pytest.mark.parametrize("name", list(ROWS))
def test_canonical_classification(name):
    """Unstable iff m > 0; else indeterminate iff s > 0 (P&C 1986; textbook statements)."""
    case, (_, _, _, _, _, m, s, _, _), _ = ROWS[name]
    result = solve_stability(make_model(case))
    expected = (
        Classification.UNSTABLE
        if m
        else Classification.STABLE_INDETERMINATE
        if s
        else Classification.STABLE_DETERMINATE
    )
    assert result.classification is expected
    assert result.is_stable is (m == 0)


@pytest.mark.parametrize("name", list(ROWS))
def test_extended_maxwell_rule(name):
    """s - m = (b + r) - dj holds exactly for every geometry (Calladine 1978; REFERENCES.md 1.1)."""
    result = solve_stability(make_model(ROWS[name][0]))
    assert result.self_stress - result.mechanisms == result.maxwell


@pytest.mark.parametrize("name", [n for n, row in ROWS.items() if row[2] is not None])
def test_canonical_conditioning_ratio(name):
    """sigma_min / sigma_max over the non-zero singular values, as printed in REFERENCES.md 1.4."""
    case, _, sigma = ROWS[name]
    assert solve_stability(make_model(case)).conditioning_ratio == pytest.approx(
        sigma, abs=SIGMA_DIGITS / 2 + 1e-12
    )


def test_maxwell_count_negative_means_at_least_that_many_mechanisms():
    """b + r < dj implies at least dj - b - r mechanisms (Maxwell 1864; REFERENCES.md 1.1)."""
    for name, (case, _, _) in ROWS.items():
        result = solve_stability(make_model(case))
        if result.maxwell < 0:
            assert result.mechanisms >= -result.maxwell, name


def test_square_without_diagonal_sways():
    """The mechanism moves C and D together horizontally; A (pin) and B (roller + bar AB) stay."""
    result = solve_stability(make_model(square()))
    (mode,) = result.mechanism_modes
    assert set(mode.joints) == {"C", "D"}
    assert not mode.rigid_body
    motions = dict(zip(mode.joints, mode.motions, strict=True))
    for joint in ("C", "D"):
        assert abs(motions[joint][0]) == pytest.approx(1.0, rel=1e-9)
        assert motions[joint][1] == pytest.approx(0.0, abs=1e-9)
    assert motions["C"][0] == pytest.approx(motions["D"][0], rel=1e-9)  # a sway, not a rotation


def test_square_with_both_diagonals_self_stress():
    """Self-stress: sides : diagonals = 1 : -sqrt(2) (REFERENCES.md 3.6), reactions not involved."""
    model = make_model(square([("A", "C"), ("B", "D")]))
    (mode,) = solve_stability(model).self_stress_modes
    assert set(mode.members) == {"AB", "BC", "CD", "DA", "AC", "BD"}  # no reaction takes part
    values = dict(zip(mode.members, mode.values, strict=True))
    side = values["AB"]
    for member in ("BC", "CD", "DA"):
        assert values[member] == pytest.approx(side, rel=1e-9)
    for member in ("AC", "BD"):
        assert values[member] / side == pytest.approx(-math.sqrt(2.0), rel=1e-9)


def test_k33_on_a_conic_is_critical_but_count_passes():
    """Bolker & Roth 1980: Maxwell's count is met (0) yet there is one mechanism and one
    self-stress."""
    result = solve_stability(make_model(k33()))
    assert result.maxwell == 0
    assert (result.mechanisms, result.self_stress) == (1, 1)
    assert any("Maxwell's count is satisfied" in note for note in result.notes)


def test_unstable_load_orthogonal_to_mechanism_is_noted():
    """A load with no work on the mechanism can be equilibrated (P&C 1986), but the verdict stays
    unstable."""
    case = square()
    case["loads"] = {"P": {"C": [0.0, -1.0]}}  # vertical load on a horizontal sway
    result = solve_stability(make_model(case))
    assert result.classification is Classification.UNSTABLE
    assert any("orthogonal to every mechanism" in note for note in result.notes)


# -- near-mechanism calibration (REFERENCES.md 1.2) ---------------------------------------------
def sagging_two_bar(theta: float):
    """A-B-C, bars of length 1, B sagging by theta, A and C pinned, unit transverse load at B."""
    return truss_case(
        {"A": [0, 0], "B": [math.cos(theta), -math.sin(theta)], "C": [2 * math.cos(theta), 0]},
        [("A", "B"), ("B", "C")],
        {"A": ["x", "y"], "C": ["x", "y"]},
        {"P": {"B": [0, -1]}},
    )


@pytest.mark.parametrize(
    ("theta", "rho"), [(0.1, 5.40e-2), (0.01, 5.41e-3), (1e-3, 5.41e-4), (1e-6, 5.41e-7)]
)
def test_sagging_two_bar_conditioning_ratio(theta, rho):
    """REFERENCES.md 1.2 [V] table: rho ~ 0.54 theta, to the 3 printed figures."""
    result = solve_stability(make_model(sagging_two_bar(theta)))
    assert result.classification is Classification.STABLE_DETERMINATE
    assert result.conditioning_ratio == pytest.approx(rho, rel=2e-3)


@pytest.mark.parametrize("theta", [0.1, 0.01, 1e-3, 1e-6])
def test_sagging_two_bar_force(theta):
    """Bar force = P / (2 sin theta), exactly (REFERENCES.md 1.2)."""
    model = make_model(sagging_two_bar(theta))
    forces = solve_global(model).member_forces[:, 0]
    np.testing.assert_allclose(forces, [1.0 / (2.0 * math.sin(theta))] * 2, rtol=1e-9)


def test_sag_1e_3_is_flagged_as_near_mechanism():
    """theta = 1e-3 rad gives forces of 500 x the load: ill-conditioned (module docstring: threshold
    ~0.26 deg)."""
    result = solve_stability(make_model(sagging_two_bar(1e-3)))
    assert result.ill_conditioned
    assert result.scaled_conditioning < ILL_CONDITIONED_SCALED
    assert any("near-mechanism" in note for note in result.notes)


def test_sag_0_1_is_not_flagged():
    """theta = 0.1 rad (5.7 deg) gives forces of 5 x the load: a sound, if shallow, truss."""
    result = solve_stability(make_model(sagging_two_bar(0.1)))
    assert not result.ill_conditioned
    assert not any("near-mechanism" in note for note in result.notes)


def test_threshold_sits_near_a_quarter_degree():
    """The docstring's calibration: 1e-2 scaled corresponds to about 0.26 degrees of sag."""
    assert solve_stability(make_model(sagging_two_bar(math.radians(0.2)))).ill_conditioned
    assert not solve_stability(make_model(sagging_two_bar(math.radians(0.35)))).ill_conditioned


def test_sound_100_panel_pratt_is_not_flagged():
    """PERFORMANCE.md: a healthy 100-panel Pratt has sigma ratio ~3e-4, below REFERENCES.md 1.2's
    fixed
    1e-3 warning level; the extent-ratio-scaled judgement must not call it a near-mechanism."""
    result = solve_stability(make_model(pratt(100)))
    assert result.classification is Classification.STABLE_DETERMINATE
    assert 3e-5 < result.conditioning_ratio < 1e-3  # same order as PERFORMANCE.md's figure
    assert not result.ill_conditioned


# -- sparse screen (large-model path) against the dense SVD ---------------------------------------
def pratt_defect(panels: int):
    """One mechanism + one self-stress: panel 2 loses its diagonal, panel 3 gets a second one."""
    case = pratt(panels)
    del case["members"]["U1L2"]
    case["members"]["L2U3"] = ["L2", "U3"]
    return case


def pratt_extra(panels: int):
    case = pratt(panels)
    case["members"]["L2U3"] = ["L2", "U3"]
    return case


@pytest.mark.parametrize("panels", [10, 60])
@pytest.mark.parametrize(
    ("builder", "expected"),
    [
        (pratt, Classification.STABLE_DETERMINATE),
        (pratt_defect, Classification.UNSTABLE),
        (pratt_extra, Classification.STABLE_INDETERMINATE),
    ],
    ids=["sound", "defect", "extra-diagonal"],
)
def test_sparse_path_agrees_with_dense(panels, builder, expected):
    model = make_model(builder(panels))
    dense = solve_stability(model)
    sparse = solve_stability(model, dense_limit=0)
    assert dense.method == "full-rank-count" and sparse.method == "sparse-screen"
    assert dense.classification is expected
    assert sparse.classification is dense.classification


def test_dense_counts_of_the_defective_pratt():
    """Maxwell's count is met, yet m = s = 1: the count cannot see where the bars are (REFERENCES.md
    1.1)."""
    result = solve_stability(make_model(pratt_defect(10)))
    assert (result.maxwell, result.mechanisms, result.self_stress) == (0, 1, 1)
    (mode,) = result.self_stress_modes
    assert {"U2L3", "L2U3"} <= set(mode.members)  # the double-braced panel carries the self-stress


def test_sparse_counts_are_exact_only_when_sound():
    sound = solve_stability(make_model(pratt(10)), dense_limit=0)
    defect = solve_stability(make_model(pratt_defect(10)), dense_limit=0)
    assert sound.exact_counts and (sound.mechanisms, sound.self_stress) == (0, 0)
    assert not defect.exact_counts and defect.mechanisms >= 1


def test_sparse_path_counts_missing_members():
    """Rectangular A with fewer columns than rows: Maxwell's count alone gives the mechanisms."""
    case = pratt(10)
    del case["members"]["U1L2"]
    result = solve_stability(make_model(case), dense_limit=0)
    assert result.classification is Classification.UNSTABLE
    assert result.mechanisms >= 1


def pratt_defect_indeterminate(panels: int):
    """m = 1 and s = 2: panel 2 loses its diagonal, panels 3 and 4 each get a second one."""
    case = pratt_defect(panels)
    case["members"]["L3U4"] = ["L3", "U4"]
    return case


def test_dense_counts_of_the_defective_indeterminate_pratt():
    """Maxwell's count says indeterminate (+1), but the rank gives m = 1, s = 2 (P&C 1986)."""
    result = solve_stability(make_model(pratt_defect_indeterminate(10)))
    assert (result.maxwell, result.mechanisms, result.self_stress) == (1, 1, 2)
    assert result.classification is Classification.UNSTABLE


@pytest.mark.parametrize("panels", [10, 60])
def test_sparse_path_finds_a_mechanism_in_an_indeterminate_truss(panels):
    model = make_model(pratt_defect_indeterminate(panels))
    assert solve_stability(model, dense_limit=0).classification is Classification.UNSTABLE
