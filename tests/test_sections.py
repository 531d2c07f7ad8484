"""Method of sections (Ritter's method): verify/analysis/sections.py and
verify/report/section_calc.py.

Sources of the expected values, named beside each check:
* shared/REFERENCES.md 3.2 -- 6-panel Pratt, Howe (d = 4, h = 3, P at L1..L5) and the 4-panel
  equilateral Warren; values verified there by two exact computations and matching the textbook
  treatments it names (Hibbeler, *Structural Analysis*; Timoshenko & Young, *Theory of Structures*,
  2nd ed. 1965). For P = 10 it records sympy's Truss results 100/3, 160/3, -160/3, -60, -125/3 ...
* shared/REFERENCES.md 3.1 -- beam analogy for parallel chords: chord = M / h about the Ritter
  point, diagonal = V / sin(theta) (common practice; exact statics for parallel chords).
* shared/REFERENCES.md 3.4 -- 3D tripod: legs -5P/12 under a vertical load; -10P/9, +5P/9, +5P/9
  under a horizontal load along +x.
* sympy's own truss module (sympy.physics.continuum_mechanics.truss.Truss), an exact solver.
* Random trusses from hypothesis, checked against the global sparse solve
  (verify.analysis.global_solve) -- a different algorithm on the same statics.
"""

from __future__ import annotations

import math
import random

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from trussgen import howe, make_model, pratt, random_simple_truss, truss_case, warren

from verify.analysis.cut_sheets import CalcSheets
from verify.analysis.global_solve import solve_global
from verify.analysis.sections import (
    FORCES_NORMAL,
    MOMENTS,
    cut_for_members,
    solve_cut,
    solve_sections,
)
from verify.io.case import read_case
from verify.report.section_calc import render_cut_sheet
from verify.report.section_calc import render_reactions as render_reactions_sheet


def render_cut(model, cut, load_name):
    """The text calc sheet of one cut (records from analysis/cut_sheets, rendered by the report)."""
    (sheet,) = CalcSheets(model, None).group([cut], load_name)
    return render_cut_sheet(model, sheet)


def render_reactions(model, load_name):
    return render_reactions_sheet(model, CalcSheets(model, None).reactions(load_name))


RTOL = 1e-9  # sections against another route: both are direct statics, ~1e-13 in practice
CASES = "cases/canal-footbridge/case.toml"


def force(model, solution, member, column=0):
    return float(solution.forces.member_forces[model.member_index[member], column])


def assert_matches_global(model, solution):
    """Every reached member equals the global solve, relative to the largest force."""
    ref = solve_global(model).member_forces
    got = solution.forces.member_forces
    reached = ~np.isnan(got)
    scale = max(
        float(np.abs(ref).max(initial=0.0)),
        float(np.abs(model.load_matrix()).max(initial=0.0)),
        1e-12,
    )
    np.testing.assert_allclose(got[reached], ref[reached], rtol=0, atol=RTOL * scale)


# -- published / tabulated values -----------------------------------------------------------------
PRATT_TABLE = {  # REFERENCES.md 3.2, Pratt, multiples of P
    "L0L1": 10 / 3,
    "L1L2": 10 / 3,
    "L2L3": 16 / 3,
    "U1U2": -16 / 3,
    "U2U3": -6.0,
    "L0U1": -25 / 6,
    "U1L1": 1.0,
    "U2L2": -0.5,
    "U3L3": 0.0,
    "U1L2": 2.5,
    "U2L3": 5 / 6,
}
HOWE_TABLE = {  # REFERENCES.md 3.2, Howe
    "L0L1": 10 / 3,
    "L1L2": 16 / 3,
    "L2L3": 6.0,
    "U1U2": -10 / 3,
    "U2U3": -16 / 3,
    "L0U1": -25 / 6,
    "U1L1": 2.5,
    "U2L2": 1.5,
    "U3L3": 1.0,
    "L1U2": -2.5,
    "L2U3": -5 / 6,
}
S3 = math.sqrt(3.0)
WARREN_TABLE = {  # REFERENCES.md 3.2, Warren (equilateral, side 4)
    "L0L1": S3 / 2,
    "L1L2": 7 * S3 / 6,
    "U1U2": -S3,
    "U2U3": -4 * S3 / 3,
    "L0U1": -S3,
    "U1L1": S3,
    "L1U2": -S3 / 3,
    "U2L2": S3 / 3,
}


@pytest.mark.parametrize(
    "builder, table",
    [(pratt, PRATT_TABLE), (howe, HOWE_TABLE), (warren, WARREN_TABLE)],
    ids=["pratt", "howe", "warren"],
)
def test_parallel_chord_tables(builder, table):
    """Section forces equal the REFERENCES.md 3.2 tables (Pratt, Howe, Warren), all members
    reached."""
    model = make_model(builder(load=1.0))
    solution = solve_sections(model)
    assert solution.coverage == 1.0
    assert solution.unreached == {}
    for member, expected in table.items():
        assert force(model, solution, member) == pytest.approx(expected, rel=1e-12, abs=1e-12), (
            member
        )


def test_pratt_panel_two_section_is_ritter():
    """REFERENCES.md 3.2 section check on panel 2: U1U2 = -M(L2)/h, L1L2 = M(U1)/h, U1L2 = V/sin."""
    P = 1.0
    model = make_model(pratt(load=P))
    solution = solve_sections(model)
    top, bottom, diagonal = (solution.cut_for(m) for m in ("U1U2", "L1L2", "U1L2"))
    assert set(top.cut_members) == {"U1U2", "U1L2", "L1L2"}
    assert top.method == MOMENTS and top.moment_joint == "L2"
    assert bottom.method == MOMENTS and bottom.moment_joint == "U1"
    assert diagonal.method == FORCES_NORMAL and abs(diagonal.axis[1]) == pytest.approx(1.0)
    h, sin = 3.0, 0.6
    assert force(model, solution, "U1U2") == pytest.approx(-16 * P / h)  # M(L2) = 16P
    assert force(model, solution, "L1L2") == pytest.approx(10 * P / h)  # M(U1) = M(L1) = 10P
    assert force(model, solution, "U1L2") == pytest.approx(1.5 * P / sin)  # V = 1.5P


def test_pratt_against_sympy_truss():
    """The 6-panel Pratt with P = 10 equals sympy's exact Truss solve, member by member."""
    from sympy.physics.continuum_mechanics.truss import Truss

    model = make_model(pratt(load=10.0))
    truss = Truss()
    for j in model.joints:
        truss.add_node((j.id, int(j.coords[0]), int(j.coords[1])))
    for m in model.members:
        truss.add_member((m.id, m.start, m.end))
    for i in range(1, 6):
        truss.apply_load((f"L{i}", 10, 270))
    truss.apply_support(("L0", "pinned"), ("L6", "roller"))
    truss.solve()
    solution = solve_sections(model)
    for m in model.members:
        # sympy's numbers are tension-positive in every case measured (REFERENCES.md 4)
        assert force(model, solution, m.id) == pytest.approx(
            float(truss.internal_forces[m.id]), abs=1e-9
        ), m.id


def test_tripod_3d():
    """REFERENCES.md 3.4 tripod: -5P/12 under vertical P, -10P/9 and +5P/9 under horizontal P."""
    joints = {"O": [0.0, 0.0, 4.0]}
    for k in range(3):
        a = 2 * math.pi * k / 3
        joints[f"F{k + 1}"] = [3 * math.cos(a), 3 * math.sin(a), 0.0]
    case = truss_case(
        joints,
        [("O", "F1"), ("O", "F2"), ("O", "F3")],
        {f"F{k}": ["x", "y", "z"] for k in (1, 2, 3)},
        {"vertical": {"O": [0.0, 0.0, -1.0]}, "horizontal": {"O": [1.0, 0.0, 0.0]}},
    )
    model = make_model(case)
    solution = solve_sections(model)
    assert solution.coverage == 1.0
    assert not solution.reactions_first  # 9 reaction components: only the support-free apex is used
    assert all(not cut.uses_reactions and cut.kept_joints == ("O",) for cut in solution.cuts)
    for leg in ("OF1", "OF2", "OF3"):
        assert force(model, solution, leg, 0) == pytest.approx(-5 / 12)
    assert force(model, solution, "OF1", 1) == pytest.approx(-10 / 9)
    assert force(model, solution, "OF2", 1) == pytest.approx(5 / 9)
    assert force(model, solution, "OF3", 1) == pytest.approx(5 / 9)
    assert np.isnan(solution.forces.reactions).all()
    assert any("only free bodies with no support" in note for note in solution.notes)


def space_tower(levels: int, seed: int):
    """A 3D simple truss: triangular frames stacked with slightly skewed joints, each new joint on
    three bars to joints already placed (Henneberg type I in 3D), on 3 + 2 + 1 supports."""
    rng = random.Random(seed)
    joints = {"A0": [0.0, 0.0, 0.0], "B0": [4.0, 0.0, 0.0], "C0": [2.0, 3.5, 0.0]}
    members = [("A0", "B0"), ("B0", "C0"), ("A0", "C0")]
    prev = ["A0", "B0", "C0"]
    for level in range(1, levels + 1):
        cur = [f"A{level}", f"B{level}", f"C{level}"]
        for name, below in zip(cur, prev, strict=True):
            x, y, z = joints[below]
            joints[name] = [x + rng.uniform(-0.3, 0.3), y + rng.uniform(-0.3, 0.3), z + 3.0]
        members += [(cur[0], prev[0]), (cur[0], prev[1]), (cur[0], prev[2])]
        members += [(cur[1], prev[1]), (cur[1], prev[2]), (cur[1], cur[0])]
        members += [(cur[2], prev[2]), (cur[2], cur[0]), (cur[2], cur[1])]
        prev = cur
    loads = {f"A{levels}": [1.0, 2.0, -3.0], f"C{max(levels // 2, 1)}": [0.5, 0.0, -1.0]}
    return truss_case(
        joints, members, {"A0": ["x", "y", "z"], "B0": ["y", "z"], "C0": ["z"]}, {"P": loads}
    )


@pytest.mark.parametrize("levels, seed", [(2, 1), (5, 2), (12, 3)])
def test_space_truss_equals_global(levels, seed):
    """3D plane cuts (rank test on the 6 x |U| system) reproduce the global solve on a space truss,
    and each cut's own equation (axis, force direction or least squares) gives the same force."""
    model = make_model(space_tower(levels, seed))
    solution = solve_sections(model)
    assert solution.coverage == 1.0
    assert_matches_global(model, solution)
    for cut in solution.cuts:
        assert solve_cut(model, cut, 0)[cut.target] == pytest.approx(
            force(model, solution, cut.target), abs=1e-9
        )
    assert {cut.method for cut in solution.cuts} <= {MOMENTS, FORCES_NORMAL, "least-squares"}


# -- K-truss ----------------------------------------------------------------------------------
def k_truss(panels: int, d: float = 4.0, h: float = 6.0):
    """K-truss: split verticals with K diagonals pointing to the supports; plain diagonals
    mid-span."""
    half = panels // 2
    joints = {f"L{i}": [i * d, 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [i * d, h] for i in range(panels + 1)})
    joints.update({f"M{i}": [i * d, h / 2] for i in range(1, panels) if i != half})
    members = [(f"L{i}", f"L{i + 1}") for i in range(panels)] + [
        (f"U{i}", f"U{i + 1}") for i in range(panels)
    ]
    members += [("L0", "U0"), (f"L{panels}", f"U{panels}"), (f"U{half}", f"L{half}")]
    for i in range(1, panels):
        if i != half:
            members += [(f"U{i}", f"M{i}"), (f"M{i}", f"L{i}")]
    for p in range(1, panels + 1):
        if p <= half - 1:
            members += [(f"M{p}", f"U{p - 1}"), (f"M{p}", f"L{p - 1}")]
        elif p >= half + 2:
            members += [(f"M{p - 1}", f"U{p}"), (f"M{p - 1}", f"L{p}")]
        elif p == half:
            members += [(f"U{p - 1}", f"L{p}")]
        else:
            members += [(f"U{p}", f"L{p - 1}")]
    loads = {f"L{i}": [0.0, -1.0 - 0.25 * i] for i in range(1, panels)}
    return truss_case(joints, members, {"L0": ["x", "y"], f"L{panels}": ["y"]}, {"P": loads})


@pytest.mark.parametrize("panels", [6, 8, 12])
def test_k_truss_chords_reached(panels):
    """Every chord of a K-truss is reached by a cut, and the forces equal the global solve."""
    model = make_model(k_truss(panels))
    solution = solve_sections(model)
    chords = [m.id for m in model.members if m.id[0] == m.id[2] and m.id[0] in "LU"]
    assert all(solution.cut_for(c) is not None for c in chords)
    assert_matches_global(model, solution)


def test_k_truss_chord_by_concurrent_others(monkeypatch):
    """With vertical cuts only, a K-truss chord needs a cut of 4 members whose other 3 meet at a
    joint."""
    import verify.analysis.sections as sections

    monkeypatch.setattr(sections, "_directions", lambda model: np.eye(model.dim))
    model = make_model(k_truss(8))
    solution = solve_sections(model)
    cut = solution.cut_for("U1U2")
    assert not cut.straight and len(cut.unknown_members) == 4
    assert cut.method == MOMENTS and cut.moment_joint == "L2"  # U2M2, L2L3 and the arm meet at L2
    assert_matches_global(model, solution)


# -- user-requested cuts ----------------------------------------------------------------------
def test_cut_for_members_keeps_side_without_pin():
    """A requested Pratt panel-2 cut keeps the side without the pin; solve_cut matches REFERENCES
    3.2."""
    model = make_model(pratt(load=1.0))
    cut = cut_for_members(model, ["U1U2", "U1L2", "L1L2"])
    assert "L0" not in cut.kept_joints and "L6" in cut.kept_joints
    values = solve_cut(model, cut, "P")
    assert values == pytest.approx({"U1U2": -16 / 3, "U1L2": 2.5, "L1L2": 10 / 3})


def test_cut_with_four_unknowns_is_explained():
    """A K-truss panel cut (2 chords + 2 arms, none isolated) raises a plain ValueError."""
    model = make_model(k_truss(6))
    with pytest.raises(ValueError, match="4 unknown forces"):
        cut_for_members(model, ["U0U1", "L0L1", "M1U0", "M1L0"])


def test_cut_through_three_concurrent_members_is_explained():
    """Warren joint U1: its three members meet at U1, so no cut force can be isolated."""
    model = make_model(warren())
    with pytest.raises(ValueError, match="pass through one point, joint U1"):
        cut_for_members(model, ["L0U1", "U1U2", "U1L1"])


@pytest.mark.parametrize(
    "members, message",
    [
        (["L0L1"], "leaves the truss in one piece"),
        (["U1U2", "nope"], "member 'nope' is not in the model"),
        (["U1U2", "U1L2", "L1L2", "L0L1"], "L0L1 would have both ends on the same side"),
    ],
)
def test_bad_requested_cuts(members, message):
    """Requests that are not a section are refused with a plain message, not a crash."""
    model = make_model(pratt())
    with pytest.raises(ValueError, match=message):
        cut_for_members(model, members)


# -- the bundled case and the calc sheet --------------------------------------------------------
def test_canal_footbridge_every_cut_reproduces_itself():
    """On the bundled case, solve_cut of every cut and column equals the route's table and the
    global solve."""
    model = read_case(CASES)
    solution = solve_sections(model)
    assert solution.coverage == 1.0
    assert_matches_global(model, solution)
    for cut in solution.cuts:
        for column in range(len(model.load_names)):
            value = solve_cut(model, cut, column)[cut.target]
            assert value == pytest.approx(force(model, solution, cut.target, column), abs=1e-9)


def test_render_exact_values():
    """The calc sheet shows -160/3 for U1U2 at P = 10 (REFERENCES.md 3.2 sympy value) and (7/6)·√3
    for the Warren L1L2 (REFERENCES.md 3.2), with the Ritter point and T/C."""
    model = make_model(pratt(load=10.0))
    text = render_cut(model, solve_sections(model).cut_for("U1U2"), "P")
    assert "ΣM about joint L2" in text and "exact: -160/3" in text and "(C)" in text
    model = make_model(warren(load=1.0))
    text = render_cut(model, solve_sections(model).cut_for("L1L2"), "P")
    assert "exact: (7/6)·√3" in text and "(T)" in text


def test_render_decimals_only_when_geometry_is_not_nice():
    """An irrational joint position (pi) gives decimals only, never a guessed exact value."""
    case = pratt(load=1.0)
    case["joints"]["U1"] = [4.0, math.pi]
    case["joints"]["U2"] = [8.0, math.pi]
    model = make_model(case)
    solution = solve_sections(model)
    text = render_cut(model, solution.cut_for("U1U2"), "P")
    assert "exact:" not in text
    assert force(model, solution, "U1U2") == pytest.approx(
        -16 / math.pi
    )  # -M(L2)/h, REFERENCES.md 3.1
    assert "N(U1U2) = -5.09296 kN (C)" in text


def test_render_reactions():
    """The overall-equilibrium step: moments about the pin give L6.y = 2.5P (REFERENCES.md 3.2)."""
    model = make_model(pratt(load=10.0))
    text = render_reactions(model, "P")
    assert (
        "ΣM about joint L0" in text
        and "⇒ L6.y = 25 kN" in text
        and "L0.y = 25 kN   exact: 25" in text
    )


def test_cantilever_with_two_wall_pins_uses_support_free_bodies():
    """A cantilever held by two wall pins (4 reaction components): reactions do not come first,
    every cut keeps the support-free tip side, and the forces equal the global solve."""
    joints = {f"L{i}": [4.0 * i, 0.0] for i in range(5)}
    joints.update({f"U{i}": [4.0 * i, 3.0] for i in range(5)})
    members = [(f"L{i}", f"L{i + 1}") for i in range(4)] + [
        (f"U{i}", f"U{i + 1}") for i in range(4)
    ]
    members += [(f"U{i}", f"L{i}") for i in range(1, 5)] + [
        (f"U{i}", f"L{i + 1}") for i in range(4)
    ]
    model = make_model(
        truss_case(
            joints, members, {"L0": ["x", "y"], "U0": ["x", "y"]}, {"tip": {"L4": [0.0, -10.0]}}
        )
    )
    solution = solve_sections(model)
    assert not solution.reactions_first
    assert solution.coverage == 1.0
    assert all(not cut.uses_reactions for cut in solution.cuts)
    assert_matches_global(model, solution)
    # chords next to the wall = M(Ritter point) / h (common practice, REFERENCES.md 3.1): the bottom
    # chord about U0 (lever 16 to the tip load), the top chord about L1 (lever 12)
    assert force(model, solution, "L0L1") == pytest.approx(-10 * 16 / 3)
    assert force(model, solution, "U0U1") == pytest.approx(10 * 12 / 3)


def test_two_pin_pratt_reports_why_nothing_is_reached():
    """Pratt on two pins: every cut either keeps a support or crosses too many members; each member
    carries the reason, and the notes say the reactions could not come first."""
    case = pratt(load=1.0)
    case["supports"]["L6"] = ["x", "y"]
    model = make_model(case)
    solution = solve_sections(model)
    assert not solution.reactions_first
    assert np.isnan(solution.forces.member_forces).all() and solution.coverage == 0.0
    assert set(solution.unreached) == set(model.member_ids)
    assert all("only free bodies without supports" in why for why in solution.unreached.values())
    assert any("cannot be found from overall equilibrium" in note for note in solution.notes)


# -- property tests -----------------------------------------------------------------------------
def parallel_chord(kind: str, panels: int, d: float, h: float, loads: list[tuple[float, float]]):
    """Pratt / Howe (any panel count, end posts, verticals) or Warren (no verticals), panel loads
    at the bottom joints (and the top joints for the Warren, which has one more)."""
    joints = {f"L{i}": [i * d, 0.0] for i in range(panels + 1)}
    members: list[tuple[str, str]] = [(f"L{i}", f"L{i + 1}") for i in range(panels)]
    if kind == "warren":
        joints.update({f"U{i}": [(i - 0.5) * d, h] for i in range(1, panels + 1)})
        members += [(f"U{i}", f"U{i + 1}") for i in range(1, panels)]
        for i in range(1, panels + 1):
            members += [(f"L{i - 1}", f"U{i}"), (f"U{i}", f"L{i}")]
    else:
        joints.update({f"U{i}": [i * d, h] for i in range(1, panels)})
        members += [(f"U{i}", f"U{i + 1}") for i in range(1, panels - 1)]
        members += [("L0", "U1"), (f"U{panels - 1}", f"L{panels}")]
        members += [(f"U{i}", f"L{i}") for i in range(1, panels)]
        for p in range(2, panels):
            left_half = (p - 0.5) <= panels / 2
            if (kind == "pratt") == left_half:
                members.append((f"U{p - 1}", f"L{p}"))
            else:
                members.append((f"L{p - 1}", f"U{p}"))
    names = [f"L{i}" for i in range(1, panels)]
    table = {n: [fx, fy] for n, (fx, fy) in zip(names, loads, strict=False)}
    return truss_case(joints, members, {"L0": ["x", "y"], f"L{panels}": ["y"]}, {"P": table})


def chords_and_diagonals(model):
    """Every member that is not vertical (the chords, end posts and diagonals)."""
    return [m.id for i, m in enumerate(model.members) if abs(model.unit_vectors[i][0]) > 1e-9]


trusses = st.builds(
    lambda kind, panels, d, h, loads: (kind, panels, d, h, loads),
    st.sampled_from(["pratt", "howe", "warren"]),
    st.integers(2, 30),
    st.floats(1.0, 10.0),
    st.floats(0.3, 12.0),
    st.lists(st.tuples(st.floats(-5, 5), st.floats(-50, 5)), min_size=30, max_size=30),
)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(trusses)
def test_parallel_chord_sections_equal_global(spec):
    """Random Pratt/Howe/Warren: every chord and diagonal is reached and every reached force equals
    the global solve (loads with both components)."""
    kind, panels, d, h, loads = spec
    model = make_model(parallel_chord(kind, panels, d, h, loads))
    solution = solve_sections(model)
    assert all(solution.cut_for(m) is not None for m in chords_and_diagonals(model))
    assert_matches_global(model, solution)


@settings(max_examples=40, deadline=None)
@given(trusses)
def test_beam_analogy(spec):
    """REFERENCES.md 3.1 (common practice): in every vertical cut of a parallel-chord truss under
    vertical loads, chord = -/+ M(Ritter point) / h and diagonal = V / sin(theta)."""
    kind, panels, d, h, loads = spec
    vertical = [(0.0, fy) for _, fy in loads]
    model = make_model(parallel_chord(kind, panels, d, h, vertical))
    solution = solve_sections(model)
    span = panels * d
    P = {model.xyz[model.joint_index[j]][0]: -f[1] for j, f in model.cases[0].loads.items()}
    left_reaction = sum(p * (span - x) for x, p in P.items()) / span

    def moment(x):
        return left_reaction * x - sum(p * (x - xi) for xi, p in P.items() if xi < x)

    def shear(x):  # just right of x
        return left_reaction - sum(p for xi, p in P.items() if xi <= x + 1e-12)

    xs = sorted(set(model.xyz[:, 0].tolist()))
    scale = max(abs(left_reaction), max(P.values(), key=abs, default=1.0), 1.0) * span / h
    for x0, x1 in zip(xs, xs[1:], strict=False):
        mid = (x0 + x1) / 2
        crossing = [
            i
            for i, m in enumerate(model.members)
            if min(model.xyz[model.joint_index[m.start]][0], model.xyz[model.joint_index[m.end]][0])
            < mid
            < max(model.xyz[model.joint_index[m.start]][0], model.xyz[model.joint_index[m.end]][0])
        ]
        web = [i for i in crossing if abs(model.unit_vectors[i][1]) > 1e-9]
        assert len(web) == 1
        w = web[0]
        a, b = (
            model.xyz[model.joint_index[model.members[w].start]],
            model.xyz[model.joint_index[model.members[w].end]],
        )
        top, bottom = (a, b) if a[1] > b[1] else (b, a)
        left, right = (a, b) if a[0] < b[0] else (b, a)
        sin_up = (right[1] - left[1]) / np.linalg.norm(
            right - left
        )  # e from the left end, vertical part
        expected = {w: -shear(x0) / sin_up}
        for i in crossing:
            if i == w:
                continue
            y = model.xyz[model.joint_index[model.members[i].start]][1]
            # a chord's Ritter point is the web member's end on the other chord
            expected[i] = moment(bottom[0]) / -h if y > 0 else moment(top[0]) / h
        for i, value in expected.items():
            got = solution.forces.member_forces[i, 0]
            assert got == pytest.approx(value, abs=RTOL * scale), model.members[i].id


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10**6), st.integers(3, 14))
def test_random_simple_trusses_equal_global(seed, joints):
    """Random simple trusses (Henneberg type I steps, REFERENCES.md 1.3): reached forces equal the
    global solve, and every member not reached has a reason."""
    model = make_model(random_simple_truss(random.Random(seed), joints))
    solution = solve_sections(model)
    assert_matches_global(model, solution)
    reached = {c.target for c in solution.cuts}
    assert reached | set(solution.unreached) == set(model.member_ids)
    assert not reached & set(solution.unreached)
    assert all(solution.unreached.values())


def test_zero_force_vertical_and_known_members_carried():
    """Pratt U3L3 is zero-force (REFERENCES.md 3.1 rule 2); its cut carries known members."""
    model = make_model(pratt(load=1.0))
    solution = solve_sections(model)
    cut = solution.cut_for("U3L3")
    assert force(model, solution, "U3L3") == pytest.approx(0.0, abs=1e-12)
    assert cut.known_members and set(cut.known_members) <= set(cut.cut_members)
    order = [c.target for c in solution.cuts]
    assert all(order.index(k) < order.index("U3L3") for k in cut.known_members)


def test_reasons_for_unreached_members():
    """A fan of bars meeting at one apex: members not reached carry a plain reason."""
    joints = {"A": [0.0, 0.0], "B": [6.0, 0.0], "C": [3.0, 4.0], "D": [3.0, 0.0]}
    case = truss_case(
        joints,
        [("A", "D"), ("D", "B"), ("A", "C"), ("C", "B"), ("C", "D")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"D": [0.0, -1.0]}},
    )
    model = make_model(case)
    solution = solve_sections(model)
    assert_matches_global(model, solution)
    for member, why in solution.unreached.items():
        assert member in model.member_ids and len(why) > 20


# -- calc sheets: every value on them is the statics of the truss ---------------------------------
def _assert_sheets_match_global(model):
    """Each equation's result and each 'also gives' value on the calc sheets of every cut (free
    bodies read incrementally from the sweeps, moved joints included) equals the global solve."""
    solution = solve_sections(model)
    ref = solve_global(model).member_forces
    # Round-off is relative to the loads as well as to the forces: a truss whose loads all sit
    # over supports has forces of round-off size only (seen: 2.6e-16 beside 1e-12).
    loads = float(np.abs(model.load_matrix()).max(initial=0.0))
    scale = max(float(np.abs(ref).max(initial=0.0)), loads, 1e-12)
    book = solution.calc_sheets(model)
    for column, name in enumerate(model.load_names):
        for sheet in book.group(list(solution.cuts), name):
            values = [(e.target, e.value) for e in sheet.equations] + [
                (m, v) for m, v, _ in sheet.also
            ]
            for member, value in values:
                want = ref[model.member_index[member], column]
                assert value == pytest.approx(want, abs=RTOL * scale), (member, name)


@pytest.mark.parametrize("panels", [4, 8])
def test_k_truss_sheets_equal_global(panels):
    _assert_sheets_match_global(make_model(k_truss(panels)))


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 10**6), st.integers(3, 12))
def test_random_truss_sheets_equal_global(seed, joints):
    from verify.analysis.stability import Classification, solve_stability

    model = make_model(random_simple_truss(random.Random(seed), joints))
    if solve_stability(model).classification is not Classification.STABLE_DETERMINATE:
        return
    _assert_sheets_match_global(model)


@pytest.mark.parametrize(
    "case", ["canal-footbridge", "mezzanine-roof", "service-road-overbridge", "sign-bracket"]
)
def test_bundled_case_sheets_equal_global(case):
    """Every calc sheet of the bundled determinate cases, 2D and 3D, every load column."""
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    _assert_sheets_match_global(read_case(root / "cases" / case / "case.toml"))
