"""Which members lie in a state of self-stress: the stiffness solve's probe against exact answers.

Truth, from outside the project:
* sympy's exact null space (DomainMatrix over the rationals) of the equilibrium matrix written
  here from the integer (or decimal) coordinates as exact rationals; the states of self-stress
  are that null space (S. Pellegrino & C.R. Calladine, Int. J. Solids Struct. 22(4) (1986)
  409-428). Each member's column is scaled by its length, which keeps the entries rational and
  leaves which entries of the null space are zero unchanged.
* hypothesis-generated small 2D trusses through the same exact null space;
* the answer of comparing two elastic solves with different, randomly varied EA (a member whose
  force changes lies in a self-stress), on trusses loaded at every joint;
* trusses built so that each cross-braced panel is one state of self-stress of its own (common
  practice), whose count is checked against b - (free directions).
"""

from __future__ import annotations

import dataclasses
import itertools

import numpy as np
import pytest
import sympy
from hypothesis import HealthCheck, assume, event, given, settings
from hypothesis import strategies as st
from sympy.polys.matrices import DomainMatrix
from trussgen import make_model, truss_case

from verify.analysis import stiffness as stiffness_module
from verify.analysis.pipeline import analyse
from verify.analysis.run import AnalysisRun
from verify.analysis.stiffness import (
    free_direction_basis,
    member_stiffness,
    members_fixed_by_statics,
    solve_stiffness,
)

AXES = {"x": 0, "y": 1, "z": 2}
SETTINGS = settings(
    max_examples=60,
    deadline=None,
    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much],
)


# -- the exact oracle (written here from the case dict, not taken from the project) ---------------
def exact_equilibrium(case: dict) -> tuple[sympy.Matrix, int]:
    """Rational equilibrium matrix (dofs x members + reaction components) and the member count.

    Member columns hold (x_start - x_end) at the end joint and (x_end - x_start) at the start
    joint: the unit-vector columns times the member's length. Supports are given by axis names.
    """
    joints = list(case["joints"])
    dim = len(case["joints"][joints[0]])
    where = {j: i for i, j in enumerate(joints)}
    xyz = {j: [sympy.Rational(repr(float(c))) for c in v] for j, v in case["joints"].items()}
    members = [m["ends"] if isinstance(m, dict) else m for m in case["members"].values()]
    columns = []
    for start, end in members:
        col = [sympy.Integer(0)] * (dim * len(joints))
        for c in range(dim):
            delta = xyz[end][c] - xyz[start][c]
            col[where[start] * dim + c] += delta
            col[where[end] * dim + c] -= delta
        columns.append(col)
    for joint, axes in case["supports"].items():
        for axis in axes:
            col = [sympy.Integer(0)] * (dim * len(joints))
            col[where[joint] * dim + AXES[axis]] = sympy.Integer(1)
            columns.append(col)
    return sympy.Matrix(columns).T, len(members)


def exact_in_self_stress(case: dict) -> tuple[list[bool], bool]:
    """Per member, whether some exact state of self-stress loads it; and whether the truss is
    free of mechanisms (rank = dofs). Exact rational arithmetic (sympy's DomainMatrix over QQ,
    the engine behind Matrix.nullspace, called directly: the Matrix front end took minutes on
    the 3D grid below)."""
    A, b = exact_equilibrium(case)
    D = DomainMatrix.from_Matrix(A).to_field()
    stable = D.rank() == A.rows
    states = D.nullspace().to_Matrix()  # one state per row
    return [any(states[k, i] != 0 for k in range(states.rows)) for i in range(b)], stable


def with_stiffness(case: dict, EA: float = 2.0e5) -> dict:
    return {**case, "stiffness": {"EA": EA}}


# -- small trusses with known self-stress ---------------------------------------------------------
def braced_panels(panels: int, crossed: set[int], *, extra: dict | None = None) -> dict:
    """A parallel-chord truss with end verticals: panel i has the diagonal L_i-U_{i+1}, and the
    second diagonal U_i-L_{i+1} when i is in `crossed`. Pinned at L0, roller at L_n."""
    joints = {f"L{i}": [3.0 * i, 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [3.0 * i, 4.0] for i in range(panels + 1)})
    pairs = [(f"L{i}", f"L{i + 1}") for i in range(panels)]
    pairs += [(f"U{i}", f"U{i + 1}") for i in range(panels)]
    pairs += [(f"L{i}", f"U{i}") for i in range(panels + 1)]
    pairs += [(f"L{i}", f"U{i + 1}") for i in range(panels)]
    pairs += [(f"U{i}", f"L{i + 1}") for i in sorted(crossed)]
    supports: dict = {"L0": ["x", "y"], f"L{panels}": ["y"], **(extra or {})}
    loads = {"P": {f"L{i}": [0.0, -10.0] for i in range(1, panels)}}
    return with_stiffness(truss_case(joints, pairs, supports, loads))


def panel_members(i: int) -> set[str]:
    """The members of a cross-braced panel i: its chords, its verticals and both diagonals."""
    return {
        f"L{i}L{i + 1}",
        f"U{i}U{i + 1}",
        f"L{i}U{i}",
        f"L{i + 1}U{i + 1}",
        f"L{i}U{i + 1}",
        f"U{i}L{i + 1}",
    }


def fixed_by_name(model, fixed) -> dict[str, bool]:
    return {m.id: bool(f) for m, f in zip(model.members, fixed, strict=True)}


@pytest.mark.parametrize("crossed", [set(), {0}, {2}, {1, 2}, {0, 3}])
def test_cross_braced_panels_match_the_exact_null_space(crossed):
    case = braced_panels(4, crossed)
    in_state, stable = exact_in_self_stress(case)
    assert stable
    model = make_model(case)
    fixed = solve_stiffness(model).fixed_by_statics
    assert fixed.tolist() == [not s for s in in_state]
    # The exact answer is the common-practice one: each crossed panel's six members, no others.
    expected = set().union(*(panel_members(i) for i in crossed)) if crossed else set()
    assert {m for m, f in fixed_by_name(model, fixed).items() if not f} == expected


def test_a_support_over_the_middle_puts_both_spans_in_one_self_stress():
    """A third support makes the chords and diagonals of every panel work together (the
    continuous-beam redundant): every member the exact null space loads, the probe finds."""
    case = braced_panels(4, set(), extra={"L2": ["y"]})
    in_state, stable = exact_in_self_stress(case)
    assert stable and any(in_state) and not all(in_state)  # the end verticals stay statical
    fixed = solve_stiffness(make_model(case)).fixed_by_statics
    assert fixed.tolist() == [not s for s in in_state]


def test_three_dimensional_grid_with_some_top_chords_matches_the_exact_null_space():
    """A 3 x 3-cell double-layer grid (bench/generate.py's geometry, depth 0.7) with two top
    chords: 3D, decimal coordinates, supports on the bottom perimeter."""
    n, depth = 3, 0.7
    joints = {f"B{i}_{j}": [float(i), float(j), 0.0] for i in range(n + 1) for j in range(n + 1)}
    joints.update({f"T{i}_{j}": [i + 0.5, j + 0.5, depth] for i in range(n) for j in range(n)})
    pairs = [(f"B{i}_{j}", f"B{i + 1}_{j}") for i in range(n) for j in range(n + 1)]
    pairs += [(f"B{i}_{j}", f"B{i}_{j + 1}") for i in range(n + 1) for j in range(n)]
    for i, j in itertools.product(range(n), range(n)):
        pairs += [(f"T{i}_{j}", f"B{i + a}_{j + c}") for a in (0, 1) for c in (0, 1)]
    pairs += [("T0_0", "T1_0"), ("T1_1", "T1_2")]
    perimeter = [
        f"B{i}_{j}" for i in range(n + 1) for j in range(n + 1) if i in (0, n) or j in (0, n)
    ]
    supports: dict = {joint: ["z"] for joint in perimeter}
    supports["B0_0"] = ["x", "y", "z"]
    supports[f"B{n}_0"] = ["y", "z"]
    loads = {"P": {f"T{i}_{j}": [0.0, 0.0, -10.0] for i in range(n) for j in range(n)}}
    case = with_stiffness(truss_case(joints, pairs, supports, loads))
    in_state, stable = exact_in_self_stress(case)
    assert stable and any(in_state) and not all(in_state)
    fixed = solve_stiffness(make_model(case)).fixed_by_statics
    assert fixed.tolist() == [not s for s in in_state]


# -- hypothesis: random small 2D trusses through the exact null space ----------------------------
@st.composite
def small_trusses(draw) -> dict:
    n = draw(st.integers(4, 6))
    points = draw(
        st.lists(
            st.tuples(st.integers(0, 6), st.integers(0, 5)), min_size=n, max_size=n, unique=True
        )
    )
    names = [f"J{k}" for k in range(n)]
    joints = {name: [float(x), float(y)] for name, (x, y) in zip(names, points, strict=True)}
    # Three pairs in four joined: mostly stable, often indeterminate in a part only.
    pairs = [p for p in itertools.combinations(names, 2) if draw(st.integers(0, 3))]
    assume(pairs)
    supports: dict = {names[0]: ["x", "y"], names[1]: draw(st.sampled_from([["x"], ["y"]]))}
    if draw(st.booleans()):
        supports[names[2]] = draw(st.sampled_from([["x"], ["y"], ["x", "y"]]))
    used = {j for p in pairs for j in p}
    assume(set(names) <= used)  # every joint connected (the reader refuses loose joints)
    loaded = draw(st.sampled_from(names))
    loads = {"P": {loaded: [float(draw(st.integers(-9, 9))), -5.0]}}
    EA = {
        f"{a}{b}": {"ends": [a, b], "EA": draw(st.sampled_from([1e5, 2e5, 7e5]))} for a, b in pairs
    }
    return truss_case(joints, EA, supports, loads)


@SETTINGS
@given(case=small_trusses())
def test_random_small_trusses_match_the_exact_null_space(case):
    in_state, stable = exact_in_self_stress(case)
    assume(stable)  # a mechanism has no elastic solve to probe
    event("inside: " + ("none" if not any(in_state) else "all" if all(in_state) else "some"))
    fixed = solve_stiffness(make_model(case)).fixed_by_statics
    assert fixed.tolist() == [not s for s in in_state]


# -- against the varied-EA answer -----------------------------------------------------------------
def varied_EA_answer(model) -> np.ndarray:
    """Members whose elastic force does not change when every EA is scaled by a random factor
    (0.5 to 2): with loads at every joint, those outside every self-stress."""
    EA, _ = member_stiffness(model)
    first = solve_stiffness(model).forces.member_forces
    scaled = EA * np.random.default_rng(7).uniform(0.5, 2.0, len(EA))
    again = solve_stiffness(model, EA=scaled).forces.member_forces
    return np.all(np.abs(again - first) <= 1e-7 * np.abs(first).max(), axis=1)


@SETTINGS
@given(
    panels=st.integers(2, 8),
    crossed=st.sets(st.integers(0, 7), max_size=4),
    middle=st.booleans(),
    seed=st.integers(0, 2**31),
)
def test_the_probe_agrees_with_varying_EA(panels, crossed, middle, seed):
    crossed = {i for i in crossed if i < panels}
    extra = {f"L{panels // 2}": ["y"]} if middle and panels >= 2 else None
    case = braced_panels(panels, crossed, extra=extra)
    rng = np.random.default_rng(seed)
    case["loads"] = {"P": {j: [float(v) for v in rng.uniform(-10, 10, 2)] for j in case["joints"]}}
    model = make_model(case)
    assert solve_stiffness(model).fixed_by_statics.tolist() == varied_EA_answer(model).tolist()


# -- a long span, where K is ill-conditioned -----------------------------------------------------
def test_a_long_single_span_with_a_crossed_panel_in_fifty():
    """2000 panels on two supports (K pivot ratio ~3e-9): the varied-EA comparison called 3889 of
    the 7801 members outside every self-stress; the projected probe finds exactly the 40 crossed
    panels' members. Truth: each crossed panel is a self-stress of its own, and there are
    b - (free directions) = 40 independent states, so their members are all the states load."""
    panels, crossed = 2000, set(range(0, 2000, 50))
    model = make_model(braced_panels(panels, crossed))
    T, _ = free_direction_basis(model)
    assert len(model.members) - T.shape[1] == len(crossed)
    fixed = fixed_by_name(model, solve_stiffness(model).fixed_by_statics)
    expected = set().union(*(panel_members(i) for i in crossed))
    assert {m for m, f in fixed.items() if not f} == expected


# -- edge cases -----------------------------------------------------------------------------------
def test_a_determinate_truss_has_every_member_fixed_and_needs_no_probe(monkeypatch):
    def no_probe(*_: object) -> object:
        raise AssertionError("a determinate truss has no self-stress to probe")

    monkeypatch.setattr(stiffness_module.SelfStressProbe, "states", no_probe)
    model = make_model(braced_panels(5, set()))
    assert solve_stiffness(model).fixed_by_statics.all()


def test_without_loads_the_probe_still_answers():
    model = make_model(braced_panels(4, {1}))
    unloaded = dataclasses.replace(model, cases=())
    assert unloaded.load_matrix().shape[1] == 0
    solution = solve_stiffness(unloaded)
    assert solution.forces.member_forces.shape == (len(model.members), 0)
    assert solution.fixed_by_statics.tolist() == solve_stiffness(model).fixed_by_statics.tolist()
    assert not solution.fixed_by_statics.all() and solution.fixed_by_statics.any()


def test_every_direction_restrained_puts_every_member_in_a_self_stress():
    case = with_stiffness(
        truss_case(
            {"A": [0.0, 0.0], "B": [4.0, 0.0], "C": [2.0, 3.0]},
            [("A", "B"), ("B", "C"), ("A", "C")],
            {"A": ["x", "y"], "B": ["x", "y"], "C": ["x", "y"]},
            {"P": {"C": [1.0, -2.0]}},
        )
    )
    in_state, stable = exact_in_self_stress(case)
    assert stable and all(in_state)
    solution = solve_stiffness(make_model(case))
    assert not solution.fixed_by_statics.any()
    assert not solution.forces.member_forces.any()  # no displacement: no elastic force


def test_a_member_between_two_fixed_supports_is_a_self_stress_of_its_own():
    """Its elastic force is zero whatever the EA, yet statics cannot fix it: the reactions take
    any force it carries (the exact null space says so; comparing two elastic solves cannot)."""
    case = braced_panels(3, set(), extra={"L3": ["x", "y"], "L4": ["x", "y"]})
    joints = dict(case["joints"], L4=[12.0, -3.0])
    members = dict(case["members"], L3L4=["L3", "L4"])
    case = {**case, "joints": joints, "members": members}
    in_state, stable = exact_in_self_stress(case)
    assert stable
    model = make_model(case)
    fixed = solve_stiffness(model).fixed_by_statics
    assert fixed.tolist() == [not s for s in in_state]
    assert fixed_by_name(model, fixed)["L3L4"] is False


# -- the run keeps the elastic solve --------------------------------------------------------------
def test_the_run_answers_from_its_one_elastic_solve(monkeypatch):
    analysis = analyse(make_model(braced_panels(4, {1})))
    assert analysis.elastic is not None
    run = analysis.run
    assert run.elastic(None) is analysis.elastic  # kept, not solved again

    def no_second_solve(*_: object, **__: object) -> object:
        raise AssertionError("the stiffness was solved again")

    monkeypatch.setattr(stiffness_module, "solve_stiffness", no_second_solve)
    fixed = run.members_fixed_by_statics(None)
    assert fixed.tolist() == analysis.elastic.fixed_by_statics.tolist()
    assert members_fixed_by_statics(analysis.model, run=run).tolist() == fixed.tolist()
    with pytest.raises(ValueError):
        analysis.elastic.forces.member_forces[0, 0] = 1.0  # shared: read-only


def test_an_assumed_EA_is_a_solve_of_its_own():
    model = make_model(braced_panels(4, {1}))
    run = AnalysisRun(model)
    given_EA = run.elastic(None)
    assumed = run.elastic(1.0)
    assert assumed is not given_EA and assumed.equal_EA_assumed and not given_EA.equal_EA_assumed
    assert run.elastic(1.0) is assumed
    assert assumed.fixed_by_statics.tolist() == given_EA.fixed_by_statics.tolist()
