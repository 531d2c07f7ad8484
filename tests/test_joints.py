"""Method of joints: the order a hand calculation takes, stalls, zero-force members, and agreement
with the global solve.

Sources: shared/REFERENCES.md 2.3 (greedy method of joints, tested there on the 6-panel Pratt:
order L0, L1, L6, U1, ...; K3,3 stalls at once), 3.1 (zero-force rules: Hibbeler, Engineering
Mechanics: Statics, section "Zero-force members"; Kassimali, same topic), 1.4 (K3,3 off the conic,
Bolker & Roth 1980). Agreement between routes is checked against an exact rational solve where
stated (fractions.Fraction Gaussian elimination, independent of numpy).
"""

from __future__ import annotations

import random
from fractions import Fraction

import numpy as np
import pytest
from trussgen import forces_by_id, howe, make_model, pratt, random_simple_truss, truss_case, warren

from verify.analysis.equilibrium import equilibrium_residual
from verify.analysis.global_solve import solve_global
from verify.analysis.joints import solve_joints, solve_reactions
from verify.model import Model

RTOL = 1e-10
RESIDUAL = 1e-9  # out-of-balance force, relative to the largest load


def exact_solve(model: Model, column: int = 0) -> list[Fraction]:
    """t from A t + f = 0 by exact Gaussian elimination over the rationals.

    Only for models whose direction cosines are rational (3-4-5 geometry); A is rebuilt here from
    the joint coordinates, not from verify's assembler.
    """
    d, b = model.dim, len(model.members)
    joints = {j.id: [Fraction(c).limit_denominator(10**6) for c in j.coords] for j in model.joints}
    index = {j: i for i, j in enumerate(joints)}
    n = d * len(joints)
    A = [[Fraction(0)] * (b + len(model.reactions)) for _ in range(n)]
    for k, m in enumerate(model.members):
        delta = [e - s for s, e in zip(joints[m.start], joints[m.end], strict=True)]
        length_sq = sum(x * x for x in delta)
        length = Fraction(int(round(float(length_sq) ** 0.5 * 10**6)), 10**6)
        assert length * length == length_sq, "exact_solve needs rational member lengths"
        for a in range(d):
            A[index[m.start] * d + a][k] += delta[a] / length
            A[index[m.end] * d + a][k] -= delta[a] / length
    for k, r in enumerate(model.reactions):
        for a in range(d):
            A[index[r.joint] * d + a][b + k] = Fraction(r.direction[a]).limit_denominator(10**6)
    F = model.load_matrix()[:, column]
    rhs = [-Fraction(x).limit_denominator(10**6) for x in F]
    # Gauss-Jordan with exact pivots.
    rows = [row + [v] for row, v in zip(A, rhs, strict=True)]
    cols = len(rows[0]) - 1
    r = 0
    for c in range(cols):
        pivot = next((i for i in range(r, n) if rows[i][c] != 0), None)
        assert pivot is not None, "singular"
        rows[r], rows[pivot] = rows[pivot], rows[r]
        rows[r] = [x / rows[r][c] for x in rows[r]]
        for i in range(n):
            if i != r and rows[i][c] != 0:
                f = rows[i][c]
                rows[i] = [x - f * y for x, y in zip(rows[i], rows[r], strict=True)]
        r += 1
    return [rows[i][-1] for i in range(cols)]


def assert_routes_agree(model: Model) -> None:
    joints = solve_joints(model)
    glob = solve_global(model)
    scale = max(1.0, float(np.abs(glob.member_forces).max()))
    np.testing.assert_allclose(
        joints.forces.member_forces, glob.member_forces, rtol=RTOL, atol=RTOL * scale
    )
    np.testing.assert_allclose(
        joints.forces.reactions, glob.reactions, rtol=RTOL, atol=RTOL * scale
    )
    assert joints.forces.load_names == glob.load_names == tuple(model.load_names)
    assert not np.isnan(joints.forces.member_forces).any()


# -- the hand-calculation order ------------------------------------------------------------------
def test_pratt_starts_with_reactions_then_l0():
    """REFERENCES.md 2.3: reactions from overall equilibrium first, then joint L0 (moments about the
    pin)."""
    model = make_model(pratt(6))
    solution = solve_joints(model)
    assert solution.reactions_first
    assert solution.steps[0].kind == "reactions"
    assert solution.moment_joint == "L0" and solution.moment_point == (0.0, 0.0)
    assert solution.order[0] == "L0"
    assert not solution.stalled


def test_pratt_steps_each_solve_at_most_two_unknowns():
    """Every joint step is a 2D joint with at most 2 unknowns; each force is found exactly once."""
    model = make_model(pratt(6))
    solution = solve_joints(model)
    b = len(model.members)
    seen: list[int] = []
    for step in solution.steps[1:]:
        assert step.kind == "joint"
        assert len(step.joints) == 1
        assert 1 <= len(step.unknowns) <= 2
        assert all(u < b for u in step.unknowns)  # reactions were already known
        # Each unknown acts at the joint of its step.
        joint = step.joints[0]
        for u in step.unknowns:
            assert joint in (model.members[u].start, model.members[u].end)
        seen.extend(step.unknowns)
    assert sorted(seen) == list(range(b))
    assert len(solution.order) == len(set(solution.order))


def test_pratt_joint_order_covers_all_but_one_joint():
    """As in REFERENCES.md 2.3's run (11 of 12 joints): the last joint only checks equilibrium."""
    model = make_model(pratt(6))
    solution = solve_joints(model)
    assert len(solution.order) == len(model.joints) - 1 == 11
    assert solution.max_residual < RESIDUAL


def test_reactions_by_overall_equilibrium_on_pratt():
    """REFERENCES.md 3.2: reactions 2.5P and 2.5P for P at L1..L5 (by symmetry, common practice)."""
    P = 10.0
    model = make_model(pratt(6, load=P))
    R, point, pivot = solve_reactions(model)
    assert pivot == "L0" and tuple(point) == (0.0, 0.0)
    np.testing.assert_allclose(R[:, 0], [0.0, 5 * P / 2, 5 * P / 2], atol=1e-12)


def test_tripod_reactions_solved_with_the_joints():
    """Nine reaction components cannot come from 6 overall equations: joints first, apex first."""
    model = make_model(
        truss_case(
            {
                "O": [0, 0, 4],
                "F1": [3, 0, 0],
                "F2": [-1.5, 2.598076211353316, 0],
                "F3": [-1.5, -2.598076211353316, 0],
            },
            [("O", "F1"), ("O", "F2"), ("O", "F3")],
            {f: ["x", "y", "z"] for f in ("F1", "F2", "F3")},
            {"V": {"O": [0, 0, -1]}},
        )
    )
    solution = solve_joints(model)
    assert not solution.reactions_first
    assert solution.order[0] == "O"
    assert all(len(s.unknowns) <= 3 for s in solution.steps)
    assert any("cannot all be found from overall equilibrium" in n for n in solution.notes)
    assert_routes_agree(model)


def test_3d_tetrahedron_steps_solve_at_most_three_unknowns():
    model = make_model(
        truss_case(
            {"A": [0, 0, 0], "B": [4, 0, 0], "C": [0, 4, 0], "D": [1, 1, 4]},
            [("A", "B"), ("A", "C"), ("A", "D"), ("B", "C"), ("B", "D"), ("C", "D")],
            {"A": ["x", "y", "z"], "B": ["y", "z"], "C": ["z"]},
            {"P": {"D": [1, 2, -3]}},
        )
    )
    solution = solve_joints(model)
    assert solution.reactions_first and not solution.stalled
    assert all(len(s.unknowns) <= 3 for s in solution.steps if s.kind == "joint")
    assert_routes_agree(model)


# -- complex truss -------------------------------------------------------------------------------
def k33_off_conic():
    """K3,3 (hexagon + long diagonals) with joint 2 moved 0.2 off the circle (REFERENCES.md 1.4)."""
    joints = {"1": [5, 0], "2": [3.2, 4], "3": [-3, 4], "4": [-5, 0], "5": [-3, -4], "6": [3, -4]}
    members = [
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
    return truss_case(
        joints, members, {"5": ["x", "y"], "6": ["y"]}, {"P": {"2": [0, -1], "3": [2, 1]}}
    )


def test_k33_stalls_and_solves_simultaneously():
    """REFERENCES.md 2.3: every K3,3 joint has 3 unknowns, so the greedy method stalls at once."""
    model = make_model(k33_off_conic())
    solution = solve_joints(model)
    assert solution.stalled
    assert [s.kind for s in solution.steps] == ["reactions", "simultaneous"]
    assert solution.order == []
    assert any("compound or complex truss" in n for n in solution.notes)
    assert solution.max_residual < RESIDUAL


def test_k33_joint_route_matches_global():
    assert_routes_agree(make_model(k33_off_conic()))


# -- zero-force members (Hibbeler Statics / Kassimali zero-force rules, REFERENCES.md 3.1) ---------
ZERO_FORCE = [
    ("Pratt U3L3 (rule 2)", pratt(6), ["U3L3"]),
    (
        "king post CD under an apex load (rule 2)",
        truss_case(
            {"A": [0, 0], "B": [8, 0], "C": [4, 3], "D": [4, 0]},
            [("A", "D"), ("D", "B"), ("A", "C"), ("C", "B"), ("C", "D")],
            {"A": ["x", "y"], "B": ["y"]},
            {"P": {"C": [0, -1]}},
        ),
        ["CD"],
    ),
    (
        "Howe-type roof U1L1, U3L3 (rule 2)",
        truss_case(
            {
                "L0": [0, 0],
                "L1": [3, 0],
                "L2": [6, 0],
                "L3": [9, 0],
                "L4": [12, 0],
                "U1": [3, 1.5],
                "U2": [6, 3],
                "U3": [9, 1.5],
            },
            [
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
                ("U1", "L2"),
                ("U3", "L2"),
            ],
            {"L0": ["x", "y"], "L4": ["y"]},
            {"P": {"U1": [0, -1], "U2": [0, -1], "U3": [0, -1]}},
        ),
        ["U1L1", "U3L3"],
    ),
    (
        "unloaded two-bar corner (rule 1)",
        truss_case(
            {"A": [0, 0], "B": [4, 0], "C": [2, 3], "D": [6, 3]},
            [("A", "B"), ("B", "C"), ("C", "A"), ("B", "D"), ("C", "D")],
            {"A": ["x", "y"], "B": ["y"]},
            {"P": {"C": [0, -1]}},
        ),
        ["BD", "CD"],
    ),
]


@pytest.mark.parametrize(("case", "members"), [pytest.param(c, m, id=n) for n, c, m in ZERO_FORCE])
@pytest.mark.parametrize("route", ["joints", "global"])
def test_zero_force_members_are_zero(case, members, route):
    model = make_model(case)
    result = solve_joints(model).forces if route == "joints" else solve_global(model)
    scale = float(np.abs(result.member_forces).max())
    forces = forces_by_id(model, result.member_forces)
    for member in members:
        assert abs(forces[member]) <= 1e-12 * scale, (member, forces[member])
    assert scale > 0.1  # the other members do carry load


# -- joints route = global route -----------------------------------------------------------------
@pytest.mark.parametrize(
    "case",
    [pratt(2), pratt(6), pratt(20), howe(6), howe(12), warren(2), warren(4), warren(9)],
    ids=lambda c: c["title"],
)
def test_joint_route_equals_global_route(case):
    model = make_model(case)
    assert not solve_joints(model).stalled
    assert_routes_agree(model)


@pytest.mark.parametrize(
    "case", [pratt(6), howe(6), pratt(4, d=3.0, h=4.0)], ids=["pratt", "howe", "pratt-4-3"]
)
def test_joint_route_equals_exact_rational_solve(case):
    """3-4-5 geometry has rational direction cosines, so the exact solution is a Fraction."""
    model = make_model(case)
    exact = [float(x) for x in exact_solve(model)]
    result = solve_joints(model).forces
    b = len(model.members)
    np.testing.assert_allclose(result.member_forces[:, 0], exact[:b], rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(result.reactions[:, 0], exact[b:], rtol=1e-12, atol=1e-12)


@pytest.mark.parametrize("seed", range(8))
def test_simple_trusses_never_stall(seed):
    """A simple truss (Henneberg type I steps) is always solved joint by joint (REFERENCES.md
    2.3)."""
    model = make_model(random_simple_truss(random.Random(seed), 4 + seed))
    solution = solve_joints(model)
    assert not solution.stalled
    assert all(len(s.unknowns) <= 2 for s in solution.steps if s.kind == "joint")
    assert_routes_agree(model)


def test_combinations_follow_superposition():
    """Every load case and combination is a column; a combination is the factored sum (common
    practice)."""
    case = pratt(6)
    case["loads"]["W"] = {"U1": [2.0, 0.0], "U2": [0.0, 1.5]}
    case["combinations"] = {"ULS": {"P": 1.35, "W": 1.5}}
    model = make_model(case)
    result = solve_joints(model).forces
    assert result.load_names == ("P", "W", "ULS")
    np.testing.assert_allclose(
        result.member_forces[:, 2],
        1.35 * result.member_forces[:, 0] + 1.5 * result.member_forces[:, 1],
        rtol=RTOL,
        atol=1e-12,
    )
    assert_routes_agree(model)


def test_joint_forces_satisfy_equilibrium():
    """A t + f = 0 at every joint direction, for every load column (P&C 1986 formulation)."""
    case = howe(8)
    case["loads"]["side"] = {"U3": [4.0, 0.0], "L2": [-1.0, 2.0]}
    model = make_model(case)
    result = solve_joints(model).forces
    residual = equilibrium_residual(model, result.member_forces, result.reactions)
    assert np.abs(residual).max() < RESIDUAL * np.abs(model.load_matrix()).max()
