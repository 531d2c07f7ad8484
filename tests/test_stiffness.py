"""Direct stiffness method and unit-load (virtual work) deflections.

Sources (shared/REFERENCES.md):
* 3.6: three-bar symmetric truss, S. Timoshenko, *Strength of Materials, Part I*, 3rd ed.,
  Van Nostrand 1955/56, ch. I (statically indeterminate tension/compression problems);
  formulas N_centre = P/(1+2cos^3 a), N_outer = P cos^2 a/(1+2cos^3 a), delta = PL/(EA(1+2cos^3 a)).
* 3.6: square panel with both diagonals (derived values [V]); the force-method form
  X = -sum N0 n L / sum n^2 L (common practice) is recomputed here independently.
* 3.7: unit-load method, Hibbeler, *Structural Analysis*, "Method of virtual work: trusses";
  worked examples 1 (triangle, Delta_C = 10.5 P/EA) and 2 (6-panel Pratt, Delta_L3 = 928P/(3EA)).
* Property tests on hypothesis-generated random trusses: equilibrium, compatibility (the force-
  method condition: every self-stress state does no work on the elastic elongations), equality with
  the statics solve on determinate trusses, and unit-load deflection = stiffness displacement.
"""

from __future__ import annotations

import math
import random
import time

import numpy as np
import pytest
import scipy.linalg
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt, random_simple_truss, truss_case

from verify.analysis import stiffness as stiffness_module
from verify.analysis.global_solve import solve_global
from verify.analysis.stiffness import (
    EQUAL_EA_NOTE,
    MissingStiffnessError,
    SingularStiffnessError,
    solve_stiffness,
)
from verify.analysis.virtual_work import unit_load_deflection
from verify.errors import InputError
from verify.forking import SERIAL_ENV
from verify.model import Model
from verify.report.virtual_work_text import render_virtual_work

RTOL = 1e-9  # exact closed forms against a double-precision solve of a small system
PROPERTY_RTOL = 1e-7  # random trusses: conditioning of K ~ cond(A)^2 costs a few digits
WELL_CONDITIONED = (
    1e4  # cond(A) limit for random determinate draws: K's error grows like eps cond(A)^2
)
SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])


# -- independent helpers (written here, not taken from the project) ------------------------------
def dense_equilibrium(model: Model) -> np.ndarray:
    """A (dofs x members+reactions) from the raw joint coordinates and member ends."""
    d = model.dim
    coords = {j.id: np.array(j.coords, dtype=float) for j in model.joints}
    order = {j.id: i for i, j in enumerate(model.joints)}
    A = np.zeros((d * len(model.joints), len(model.members) + len(model.reactions)))
    for k, m in enumerate(model.members):
        vec = coords[m.end] - coords[m.start]
        u = vec / np.linalg.norm(vec)
        A[order[m.start] * d : order[m.start] * d + d, k] += u
        A[order[m.end] * d : order[m.end] * d + d, k] -= u
    for k, r in enumerate(model.reactions):
        A[order[r.joint] * d : order[r.joint] * d + d, len(model.members) + k] = r.direction
    return A


def member_lengths(model: Model) -> np.ndarray:
    coords = {j.id: np.array(j.coords, dtype=float) for j in model.joints}
    return np.array([np.linalg.norm(coords[m.end] - coords[m.start]) for m in model.members])


def force(model: Model, solution_forces: np.ndarray, member: str, column: int = 0) -> float:
    return float(solution_forces[model.member_index[member], column])


def displacement(model: Model, x: np.ndarray, joint: str, axis: int, column: int = 0) -> float:
    return float(x[model.joint_index[joint] * model.dim + axis, column])


# -- three-bar symmetric truss (Timoshenko, Strength of Materials I, 3rd ed., ch. I) -------------
@pytest.mark.parametrize("alpha_deg", [30.0, 45.0, 60.0])
def test_three_bar_truss_matches_timoshenko_formulas(alpha_deg: float) -> None:
    """Timoshenko SoM Part I 3rd ed. ch. I (REFERENCES 3.6): forces and deflection of the three-bar
    truss."""
    a = math.radians(alpha_deg)
    L, P, EA = 3.0, 50.0, 2.0e5
    case = truss_case(
        {"D": [0.0, 0.0], "A": [-L * math.tan(a), L], "B": [0.0, L], "C": [L * math.tan(a), L]},
        [("A", "D"), ("B", "D"), ("C", "D")],
        {"A": ["x", "y"], "B": ["x", "y"], "C": ["x", "y"]},
        {"P": {"D": [0.0, -P]}},
    )
    case["stiffness"] = {"EA": EA}
    model = make_model(case)
    sol = solve_stiffness(model)
    N = sol.forces.member_forces
    k = 1.0 + 2.0 * math.cos(a) ** 3
    assert force(model, N, "BD") == pytest.approx(P / k, rel=RTOL)
    assert force(model, N, "AD") == pytest.approx(P * math.cos(a) ** 2 / k, rel=RTOL)
    assert force(model, N, "CD") == pytest.approx(P * math.cos(a) ** 2 / k, rel=RTOL)
    assert displacement(model, sol.displacements, "D", 1) == pytest.approx(
        -P * L / (EA * k), rel=RTOL
    )
    assert displacement(model, sol.displacements, "D", 0) == pytest.approx(0.0, abs=1e-12 * L)
    assert sol.forces.route == "stiffness"
    assert not sol.equal_EA_assumed
    assert sol.max_residual <= 1e-10 * P


def test_three_bar_truss_45_degrees_exact_values() -> None:
    """REFERENCES 3.6 table (exact stiffness solve): alpha = 45 deg gives 2 - sqrt2 and 1 -
    sqrt2/2."""
    a = math.pi / 4
    case = truss_case(
        {"D": [0.0, 0.0], "A": [-1.0, 1.0], "B": [0.0, 1.0], "C": [1.0, 1.0]},
        [("A", "D"), ("B", "D"), ("C", "D")],
        {"A": ["x", "y"], "B": ["x", "y"], "C": ["x", "y"]},
        {"P": {"D": [0.0, -1.0]}},
    )
    model = make_model(case)
    sol = solve_stiffness(model, assume_equal_EA=7.0)
    assert math.tan(a) == pytest.approx(1.0)
    assert force(model, sol.forces.member_forces, "BD") == pytest.approx(2 - math.sqrt(2), rel=RTOL)
    assert force(model, sol.forces.member_forces, "AD") == pytest.approx(
        1 - math.sqrt(2) / 2, rel=RTOL
    )
    assert sol.equal_EA_assumed
    assert EQUAL_EA_NOTE in sol.notes and EQUAL_EA_NOTE in sol.forces.notes


# -- square panel with both diagonals (REFERENCES 3.6) ------------------------------------------
def square_case(
    a: float, loads: dict[str, dict[str, list[float]]], *, roller: object = ("y",)
) -> dict:
    case = truss_case(
        {"A": [0.0, 0.0], "B": [a, 0.0], "C": [a, a], "D": [0.0, a]},
        [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"), ("B", "D")],
        {"A": ["x", "y"], "B": list(roller) if isinstance(roller, tuple) else roller},
        loads,
    )
    return case


SQUARE_LOADS = {
    "P at D, +x": {"D": [1.0, 0.0]},
    "P at C, +x": {"C": [1.0, 0.0]},
    "P at C, down": {"C": [0.0, -1.0]},
}
r2 = math.sqrt(2.0)
SQUARE_TABLE = {  # REFERENCES 3.6 table, per unit P: AB, BC, CD, DA, AC, BD
    "P at D, +x": [0.5, -0.5, -0.5, 0.5, 1 / r2, -1 / r2],
    "P at C, +x": [
        (3 - r2) / 4,
        -(1 + r2) / 4,
        (3 - r2) / 4,
        (3 - r2) / 4,
        (2 + r2) / 4,
        (2 - 3 * r2) / 4,
    ],
    "P at C, down": [
        (r2 - 1) / 4,
        -(5 - r2) / 4,
        (r2 - 1) / 4,
        (r2 - 1) / 4,
        -(2 - r2) / 4,
        -(2 - r2) / 4,
    ],
}


def test_square_panel_with_both_diagonals_matches_force_method_and_table() -> None:
    """REFERENCES 3.6: elastic forces equal the force method X = -sum N0 n L / sum n^2 L and the
    table."""
    a, EA = 2.5, 3.0e4
    case = square_case(a, SQUARE_LOADS)
    case["stiffness"] = {"EA": EA}
    model = make_model(case)
    sol = solve_stiffness(model)
    A = dense_equilibrium(model)
    L = member_lengths(model)
    b = len(model.members)
    # Independent force method: release BD (primary structure determinate), unit self-stress n.
    n = np.array([1.0, 1.0, 1.0, 1.0, -r2, -r2])  # sides : diagonals = 1 : -sqrt2 (REFERENCES 3.6)
    assert np.allclose(A[:, :b] @ n, 0.0)  # n really is a self-stress (no reactions involved)
    assert (n**2 * L).sum() == pytest.approx(4 * a * (1 + r2), rel=RTOL)
    keep = [k for k in range(A.shape[1]) if k != model.member_index["BD"]]
    F = model.load_matrix()
    for col, name in enumerate(model.load_names):
        t0 = np.linalg.solve(A[:, keep], -F[:, col])
        N0 = np.insert(t0[: b - 1], model.member_index["BD"], 0.0)
        X = -(N0 * n * L).sum() / (n**2 * L).sum()
        expected = N0 + X * n
        np.testing.assert_allclose(
            sol.forces.member_forces[:, col], expected, rtol=RTOL, atol=1e-12
        )
        np.testing.assert_allclose(
            sol.forces.member_forces[:, col], SQUARE_TABLE[name], rtol=1e-6, atol=1e-12
        )
    # REFERENCES 3.6: u_D = (1 + sqrt2) P a / EA for P at D.
    assert displacement(model, sol.displacements, "D", 0, 0) == pytest.approx(
        (1 + r2) * a / EA, rel=RTOL
    )


def rotation(theta: float) -> np.ndarray:
    return np.array([[math.cos(theta), -math.sin(theta)], [math.sin(theta), math.cos(theta)]])


@pytest.mark.parametrize("beta_deg", [20.0, 35.0, -50.0])
def test_inclined_roller_equals_axis_aligned_roller_of_rotated_truss(beta_deg: float) -> None:
    """Rotating geometry, loads and supports together changes no member force (common practice)."""
    beta = math.radians(beta_deg)
    Rm = rotation(beta)
    a = 2.0
    base = {"A": [0.0, 0.0], "B": [a, 0.0], "C": [a, a], "D": [0.0, a]}
    loads = {"L": {"C": [3.0, -7.0], "D": [1.0, 2.0]}}
    members = {
        "AB": ["A", "B"],
        "BC": ["B", "C"],
        "CD": ["C", "D"],
        "DA": ["D", "A"],
        "AC": ["A", "C"],
        "BD": ["B", "D"],
    }
    # Axis-aligned: roller at B restrains y.
    plain = truss_case(base, members, {"A": ["x", "y"], "B": ["y"]}, loads)
    plain["members"]["BD"] = {"ends": ["B", "D"], "EA": 2.0e4}
    plain["stiffness"] = {"EA": 1.0e4}
    # Rotated by beta: the roller at B now acts along R @ (0, 1), an inclined roller.
    rot = truss_case(
        {k: list(Rm @ np.array(v)) for k, v in base.items()},
        members,
        {"A": ["x", "y"], "B": {"direction": list(Rm @ np.array([0.0, 1.0]))}},
        {"L": {j: list(Rm @ np.array(v)) for j, v in loads["L"].items()}},
    )
    rot["members"]["BD"] = {"ends": ["B", "D"], "EA": 2.0e4}
    rot["stiffness"] = {"EA": 1.0e4}
    m_plain, m_rot = make_model(plain), make_model(rot)
    assert m_rot.reactions[-1].axis == "n"
    s_plain, s_rot = solve_stiffness(m_plain), solve_stiffness(m_rot)
    np.testing.assert_allclose(
        s_rot.forces.member_forces, s_plain.forces.member_forces, rtol=RTOL, atol=1e-10
    )
    # Displacements rotate with the truss; the inclined roller does not move along its normal.
    x_plain = s_plain.displacements[:, 0].reshape(-1, 2)
    x_rot = s_rot.displacements[:, 0].reshape(-1, 2)
    np.testing.assert_allclose(x_rot, x_plain @ Rm.T, rtol=1e-9, atol=1e-14)
    n = np.array(m_rot.reactions[-1].direction)
    assert float(x_rot[m_rot.joint_index["B"]] @ n) == pytest.approx(0.0, abs=1e-15)
    # Roller reaction magnitude is the same; the pin reaction rotates.
    assert s_rot.forces.reactions[-1, 0] == pytest.approx(s_plain.forces.reactions[-1, 0], rel=RTOL)
    pin_plain = s_plain.forces.reactions[:2, 0]
    np.testing.assert_allclose(s_rot.forces.reactions[:2, 0], Rm @ pin_plain, rtol=RTOL, atol=1e-10)


# -- stiffness data and singular cases ---------------------------------------------------------
def test_missing_ea_lists_first_ten_members_and_count() -> None:
    """Members without EA are named (first 10) with the total count; nothing is guessed."""
    case = pratt(6, load=1.0)  # 21 members, none with EA
    case["members"]["L0L1"] = {"ends": ["L0", "L1"], "EA": 1e5}
    model = make_model(case)
    with pytest.raises(MissingStiffnessError) as info:
        solve_stiffness(model)
    message = str(info.value)
    assert message.startswith("20 member(s) have no axial stiffness EA")
    assert "and 10 more" in message
    assert "'L0L1'" not in message and "'L1L2'" in message
    assert len(info.value.members) == 20
    assert isinstance(info.value, ValueError)


def test_assumed_equal_ea_is_refused_when_not_positive() -> None:
    model = make_model(pratt(4))
    for bad in (0.0, -1.0, float("nan")):
        with pytest.raises(ValueError, match="assume_equal_EA"):
            solve_stiffness(model, assume_equal_EA=bad)


def test_mechanism_raises_singular_stiffness_error() -> None:
    """A square without diagonals is a mechanism (REFERENCES 1.1 Maxwell count b + r < 2j)."""
    case = truss_case(
        {"A": [0.0, 0.0], "B": [1.0, 0.0], "C": [1.0, 1.0], "D": [0.0, 1.0]},
        [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"D": [1.0, 0.0]}},
    )
    with pytest.raises(SingularStiffnessError, match="mechanism"):
        solve_stiffness(make_model(case), assume_equal_EA=1.0)


def test_colamd_fallback_gives_the_same_forces(monkeypatch: pytest.MonkeyPatch) -> None:
    """PERFORMANCE.md item 4: when the MMD attempt is timed out, COLAMD answers, identically.

    The forked child inherits the slowed-down splu, so the time box really runs out."""
    monkeypatch.delenv(SERIAL_ENV, raising=False)  # the time box needs its child process
    case = pratt(20, load=5.0)
    case["stiffness"] = {"EA": 1.0e5}
    model = make_model(case)
    first = solve_stiffness(model)
    assert "MMD_AT_PLUS_A" in first.notes[0] and "COLAMD" not in first.notes[0]
    real_splu = stiffness_module.spla.splu

    def slow_mmd(
        K, permc_spec=None, **options
    ):  # stands in for an MMD ordering whose fill explodes
        if permc_spec == "MMD_AT_PLUS_A":
            time.sleep(0.5)
        return real_splu(K, permc_spec=permc_spec, **options)

    monkeypatch.setattr(stiffness_module, "DIRECT_FREE_LIMIT", 0)
    monkeypatch.setattr(stiffness_module.spla, "splu", slow_mmd)
    second = solve_stiffness(model, time_box=0.05)
    assert (
        "COLAMD" in second.notes[0]
        and "time box" in second.notes[0]
        and "stopped" in second.notes[0]
    )
    np.testing.assert_allclose(second.forces.member_forces, first.forces.member_forces, rtol=1e-10)


# -- virtual work (REFERENCES 3.7) -------------------------------------------------------------
def test_virtual_work_example_1_triangle() -> None:
    """REFERENCES 3.7 worked example 1 (Hibbeler method): Delta_C = 10.5 P/EA = 5.25 mm; u_B =
    16P/(3EA)."""
    P, EA = 100.0, 2.0e5
    case = truss_case(
        {"A": [0.0, 0.0], "B": [8.0, 0.0], "C": [4.0, 3.0]},
        [("A", "B"), ("A", "C"), ("B", "C")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"C": [0.0, -P]}},
    )
    case["stiffness"] = {"EA": EA}
    model = make_model(case)
    N = np.array([2 * P / 3, -5 * P / 6, -5 * P / 6])  # REFERENCES 3.7: AB, AC, BC
    calc = unit_load_deflection(model, N, "C", [0.0, -1.0])
    assert calc.deflection == pytest.approx(10.5 * P / EA, rel=RTOL)
    assert calc.deflection == pytest.approx(5.25e-3, rel=RTOL)  # 5.25 mm in metres
    assert [r.unit_force for r in calc.rows] == pytest.approx([2 / 3, -5 / 6, -5 / 6], rel=RTOL)
    assert calc.unit_load_route == "statics (determinate)"
    outward = unit_load_deflection(model, N, "B", [1.0, 0.0])
    assert outward.deflection == pytest.approx(16 * P / (3 * EA), rel=RTOL)
    # The stiffness solve agrees with both (REFERENCES 3.7: "checked by exact direct stiffness").
    sol = solve_stiffness(model)
    np.testing.assert_allclose(sol.forces.member_forces[:, 0], N, rtol=RTOL)
    assert -displacement(model, sol.displacements, "C", 1) == pytest.approx(10.5 * P / EA, rel=RTOL)
    assert displacement(model, sol.displacements, "B", 0) == pytest.approx(
        16 * P / (3 * EA), rel=RTOL
    )
    text = render_virtual_work(calc, model)
    assert "n N L / EA (m)" in text and "sum" in text
    assert "Delta = 0.00525 m" in text


def test_virtual_work_example_2_pratt_midspan() -> None:
    """REFERENCES 3.7 worked example 2: 6-panel Pratt, Delta_L3 = 928P/(3EA) = 15.47 mm (P = 10
    kN)."""
    P, EA = 10.0, 2.0e5
    case = pratt(6, load=P)
    case["stiffness"] = {"EA": EA}
    model = make_model(case)
    N = solve_global(model).member_forces[:, 0]
    calc = unit_load_deflection(model, N, "L3", [0.0, -1.0])
    assert calc.deflection == pytest.approx(928 * P / 3 / EA, rel=RTOL)
    assert calc.deflection * 1000 == pytest.approx(15.47, abs=0.005)
    n = {r.member: r.unit_force for r in calc.rows}
    expected_n = {
        "L0L1": 2 / 3,
        "L1L2": 2 / 3,
        "L2L3": 4 / 3,
        "U1U2": -4 / 3,
        "U2U3": -2.0,
        "L0U1": -5 / 6,
        "U5L6": -5 / 6,
        "U1L2": 5 / 6,
        "U2L2": -0.5,
        "U1L1": 0.0,
        "U3L3": 0.0,
    }
    for member, value in expected_n.items():
        assert n[member] == pytest.approx(value, rel=RTOL, abs=1e-12), member
    sol = solve_stiffness(model)
    assert -displacement(model, sol.displacements, "L3", 1) == pytest.approx(
        928 * P / 3 / EA, rel=RTOL
    )


def test_virtual_work_rejects_unknown_joint_and_zero_direction() -> None:
    case = pratt(4)
    case["stiffness"] = {"EA": 1.0}
    model = make_model(case)
    N = np.zeros(len(model.members))
    with pytest.raises(InputError, match="Did you mean 'L3'"):
        unit_load_deflection(model, N, "L33", [0.0, -1.0])
    with pytest.raises(InputError, match="zero vector"):
        unit_load_deflection(model, N, "L2", [0.0, 0.0])


def test_virtual_work_on_indeterminate_square_uses_admissible_set() -> None:
    """Reduced-structure theorem (common practice): n on the square with one redundant released
    reproduces u_D = (1+sqrt2) P a/EA (REFERENCES 3.6); s = 1, so exactly one member is released
    (n = 0), and it is a diagonal (the longest members are released first, as by hand)."""
    a, EA = 1.5, 4.0e3
    case = square_case(a, {"P": {"D": [1.0, 0.0]}})
    case["stiffness"] = {"EA": EA}
    model = make_model(case)
    N = np.array(SQUARE_TABLE["P at D, +x"])
    calc = unit_load_deflection(model, N, "D", [1.0, 0.0])
    assert calc.unit_load_route == "statics on the truss with its redundants released"
    assert calc.deflection == pytest.approx((1 + r2) * a / EA, rel=RTOL)
    text = render_virtual_work(calc, model)
    released = (
        text.split("redundants released for the unit load: ", 1)[1]
        .split(" (their n = 0)")[0]
        .split(", ")
    )
    assert len(released) == 1
    diagonal = next(m for m in model.members if m.id == released[0])
    assert model.lengths[model.member_index[diagonal.id]] == pytest.approx(a * r2, rel=RTOL)
    assert next(r.unit_force for r in calc.rows if r.member == diagonal.id) == 0.0


# -- random trusses (hypothesis) ------------------------------------------------------------
def braced_case(
    seed: int, panels: int, extra_support: bool, inclined: bool
) -> tuple[dict, list[int]]:
    """A random multi-panel truss: per panel one diagonal (either way) or both; random EA, loads.

    Returns the case and the kinds per panel (0, 1: one diagonal; 2: cross-braced).
    """
    rng = np.random.default_rng(seed)
    xs = np.cumsum(np.concatenate([[0.0], rng.uniform(2.0, 5.0, panels)]))
    hs = rng.uniform(1.5, 4.0, panels + 1)
    joints = {f"L{i}": [float(xs[i]), 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [float(xs[i]), float(hs[i])] for i in range(panels + 1)})
    pairs = [(f"L{i}", f"L{i + 1}") for i in range(panels)] + [
        (f"U{i}", f"U{i + 1}") for i in range(panels)
    ]
    pairs += [(f"L{i}", f"U{i}") for i in range(panels + 1)]
    kinds = [int(k) for k in rng.integers(0, 3, panels)]
    for i, kind in enumerate(kinds):
        if kind in (0, 2):
            pairs.append((f"L{i}", f"U{i + 1}"))
        if kind in (1, 2):
            pairs.append((f"U{i}", f"L{i + 1}"))
    members = {
        f"{p}{q}": {"ends": [p, q], "EA": float(rng.uniform(0.5, 5.0) * 1e5)} for p, q in pairs
    }
    last = f"L{panels}"
    if inclined:
        angle = rng.uniform(-0.6, 0.6)
        supports: dict = {"L0": ["x", "y"], last: {"direction": [math.sin(angle), math.cos(angle)]}}
    else:
        supports = {"L0": ["x", "y"], last: ["y"]}
    if extra_support and panels >= 2:
        supports[f"L{panels // 2}"] = ["y"]
    names = list(joints)
    loads = {"W": {}, "S": {}}
    for case_name in loads:
        for j in rng.choice(len(names), size=3, replace=False):
            loads[case_name][names[j]] = [float(v) for v in rng.uniform(-20.0, 20.0, 2)]
    case = truss_case(joints, members, supports, loads, combinations={"C": {"W": 1.5, "S": -0.5}})
    return case, kinds


def self_stress_basis(A: np.ndarray) -> np.ndarray:
    return scipy.linalg.null_space(A)


@SETTINGS
@given(
    seed=st.integers(0, 2**32 - 1),
    panels=st.integers(1, 6),
    extra=st.booleans(),
    inclined=st.booleans(),
)
def test_random_indeterminate_truss_equilibrium_and_compatibility(
    seed: int, panels: int, extra: bool, inclined: bool
) -> None:
    """Elastic forces satisfy A t + f = 0, the supports do not move, e = NL/EA = B^T u, and every
    self-stress state does no work on the elongations (force-method compatibility, common
    practice)."""
    case, _ = braced_case(seed, panels, extra, inclined)
    model = make_model(case)
    sol = solve_stiffness(model)
    A = dense_equilibrium(model)
    b = len(model.members)
    F = model.load_matrix()
    t = np.vstack([sol.forces.member_forces, sol.forces.reactions])
    scale = np.abs(F).max()
    np.testing.assert_allclose(A @ t + F, 0.0, atol=PROPERTY_RTOL * scale)
    assert sol.max_residual <= PROPERTY_RTOL * scale
    # Compatibility: elongation from the displacements (B = A^T, so e = -A_b^T x).
    L = member_lengths(model)
    EA = np.array([m.EA for m in model.members])
    e = sol.forces.member_forces * (L / EA)[:, None]
    x = sol.displacements
    e_scale = np.abs(e).max()
    np.testing.assert_allclose(-A[:, :b].T @ x, e, atol=PROPERTY_RTOL * e_scale)
    np.testing.assert_allclose(A[:, b:].T @ x, 0.0, atol=PROPERTY_RTOL * np.abs(x).max())
    S = self_stress_basis(A)  # orthonormal columns; empty for determinate draws
    np.testing.assert_allclose(S[:b].T @ e, 0.0, atol=PROPERTY_RTOL * e_scale * math.sqrt(b))
    # Superposition: the combination column equals 1.5 W - 0.5 S.
    N = sol.forces.member_forces
    np.testing.assert_allclose(
        N[:, 2], 1.5 * N[:, 0] - 0.5 * N[:, 1], rtol=1e-9, atol=1e-9 * np.abs(N).max()
    )


@SETTINGS
@given(seed=st.integers(0, 10**9), joints=st.integers(3, 9), ea_seed=st.integers(0, 2**32 - 1))
def test_determinate_truss_stiffness_equals_statics_whatever_ea(
    seed: int, joints: int, ea_seed: int
) -> None:
    """On a determinate truss the elastic forces are the statics forces for any EA (common
    practice)."""
    case = random_simple_truss(random.Random(seed), joints)
    rng = np.random.default_rng(ea_seed)
    for mid, ends in list(case["members"].items()):
        case["members"][mid] = {"ends": ends, "EA": float(10 ** rng.uniform(2, 6))}
    model = make_model(case)
    A = dense_equilibrium(model)
    assume(np.linalg.cond(A) < WELL_CONDITIONED)
    statics = solve_global(model)
    sol = solve_stiffness(model)
    scale = max(np.abs(statics.member_forces).max(), np.abs(model.load_matrix()).max())
    np.testing.assert_allclose(
        sol.forces.member_forces, statics.member_forces, atol=PROPERTY_RTOL * scale
    )
    np.testing.assert_allclose(sol.forces.reactions, statics.reactions, atol=PROPERTY_RTOL * scale)


@SETTINGS
@given(
    seed=st.integers(0, 2**32 - 1),
    panels=st.integers(1, 5),
    extra=st.booleans(),
    inclined=st.booleans(),
    which=st.integers(0, 10**6),
    angle=st.floats(0.0, 2 * math.pi),
)
def test_unit_load_deflection_equals_stiffness_displacement(
    seed: int, panels: int, extra: bool, inclined: bool, which: int, angle: float
) -> None:
    """REFERENCES 3.7 unit-load method = direct stiffness displacement, determinate or not (reduced-
    structure theorem for indeterminate draws)."""
    case, kinds = braced_case(seed, panels, extra, inclined)
    model = make_model(case)
    sol = solve_stiffness(model)
    joint = model.joints[which % len(model.joints)].id
    direction = np.array([math.cos(angle), math.sin(angle)])
    i = model.joint_index[joint]
    for col in range(len(model.load_names)):
        calc = unit_load_deflection(model, sol.forces.member_forces[:, col], joint, direction)
        expected = float(sol.displacements[2 * i : 2 * i + 2, col] @ direction)
        scale = np.abs(sol.displacements[:, col]).max()
        assert calc.deflection == pytest.approx(expected, abs=PROPERTY_RTOL * scale)
    determinate = all(k < 2 for k in kinds) and not (extra and panels >= 2)
    assert (calc.unit_load_route == "statics (determinate)") == determinate


def space_case(seed: int, extra_joints: int) -> dict:
    """A random simple space truss: a base triangle, then each new joint on three earlier ones."""
    rng = np.random.default_rng(seed)
    pts = [np.array([0.0, 0.0, 0.0]), np.array([4.0, 0.0, 0.0]), np.array([1.5, 3.5, 0.0])]
    pairs = [(0, 1), (1, 2), (0, 2)]
    for k in range(3, 3 + extra_joints):
        pts.append(rng.uniform([-1.0, -1.0, 1.0], [5.0, 5.0, 3.0]) + np.array([0.0, 0.0, k - 3.0]))
        for a in rng.choice(k, size=3, replace=False):
            pairs.append((int(a), k))
    joints = {f"J{i}": [float(c) for c in p] for i, p in enumerate(pts)}
    members = {
        f"M{a}_{b}": {"ends": [f"J{a}", f"J{b}"], "EA": float(rng.uniform(1.0, 3.0) * 1e5)}
        for a, b in pairs
    }
    loads = {"L": {f"J{len(pts) - 1}": [float(v) for v in rng.uniform(-10, 10, 3)]}}
    return truss_case(
        joints, members, {"J0": ["x", "y", "z"], "J1": ["y", "z"], "J2": ["z"]}, loads
    )


@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), extra_joints=st.integers(1, 6))
def test_space_truss_stiffness_equals_statics(seed: int, extra_joints: int) -> None:
    """3D determinate trusses: stiffness forces equal the statics solve (common practice)."""
    model = make_model(space_case(seed, extra_joints))
    A = dense_equilibrium(model)
    assume(np.linalg.cond(A) < WELL_CONDITIONED)
    statics = solve_global(model)
    sol = solve_stiffness(model)
    scale = max(np.abs(statics.member_forces).max(), np.abs(model.load_matrix()).max())
    np.testing.assert_allclose(
        sol.forces.member_forces, statics.member_forces, atol=PROPERTY_RTOL * scale
    )
    assert sol.max_residual <= PROPERTY_RTOL * max(scale, 1.0)
