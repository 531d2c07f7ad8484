"""The method of joints with several load columns: the written-out loops for one and two
columns and the general one give, column by column, the very numbers a solve of that column
alone gives from the same reactions (each column's sums run in the same order), and they match
an exact solve.

(The reactions found first come from one dense solve of every column at once, which may differ
in the last bit from a solve of one column, so the one-column runs are handed the same reactions.)
"""

from __future__ import annotations

import copy
import random
from collections import deque

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_joints import exact_solve, k33_off_conic
from trussgen import howe, make_model, pratt, random_simple_truss, truss_case

from verify.analysis.joints import DEPENDENT_RTOL, JointStep, JointSteps, solve_joints
from verify.analysis.run import AnalysisRun
from verify.model import Model


def _with_columns(case: dict, columns: int, rng: random.Random) -> dict:
    """The case with `columns - 1` more load cases of random float loads at random joints."""
    case = copy.deepcopy(case)
    names = list(case["joints"])
    for k in range(columns - 1):
        picked = rng.sample(names, max(1, len(names) // 2))
        case["loads"][f"extra{k}"] = {
            j: [rng.uniform(-50, 50), rng.uniform(-50, 50)] for j in picked
        }
    return case


def _alone(case: dict, name: str) -> Model:
    single = copy.deepcopy(case)
    single["loads"] = {name: case["loads"][name]}
    single.pop("combinations", None)
    return make_model(single)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 10**6), st.integers(3, 16), st.integers(1, 4))
def test_columns_together_equal_each_alone(seed: int, joints: int, columns: int) -> None:
    rng = random.Random(seed)
    case = _with_columns(random_simple_truss(rng, joints), columns, rng)
    model = make_model(case)
    together = solve_joints(model)
    t = together.forces
    first = AnalysisRun(model).overall_reactions()
    # The unknowns found before the first joint step that is not a plane two-unknown one: they
    # came from the reactions through the written-out loops alone.
    written_out: list[int] = []
    for step in together.steps:
        if step.kind == "joint":
            if len(step.unknowns) != 2:
                break
            written_out += step.unknowns
    for k, name in enumerate(case["loads"]):
        single = _alone(case, name)
        run = AnalysisRun(single)
        if first is not None:
            R, point, joint = first
            same = (np.ascontiguousarray(R[:, k : k + 1]), point, joint)
            run.overall_reactions = lambda same=same: same
        alone = solve_joints(single, run)
        assert [s.unknowns for s in alone.steps] == [s.unknowns for s in together.steps]
        got = np.concatenate([t.member_forces[:, k], t.reactions[:, k]])
        want = np.concatenate([alone.forces.member_forces[:, 0], alone.forces.reactions[:, 0]])
        # Bit for bit where only the written-out loops ran: the JSON prints forces with repr.
        assert got[written_out].tobytes() == want[written_out].tobytes()
        # A step through numpy (a matrix product over the known forces) may sum the columns of
        # several load cases in another order than one column alone: the last bits may differ.
        np.testing.assert_allclose(got, want, rtol=0, atol=1e-12 * np.abs(want).max())


@pytest.mark.parametrize("maker", [pratt, howe])
@pytest.mark.parametrize("columns", [1, 2, 3, 5])
def test_columns_match_the_exact_solve(maker, columns: int) -> None:
    """3-4-5 panels: rational direction cosines, so Fraction elimination is exact; loads in
    quarters are exact in binary too."""
    case = maker(6, load=4.0)
    for k in range(columns - 1):
        case["loads"][f"X{k}"] = {
            j: [0.25 * (k + 1), -1.5 - 0.75 * k] for j in list(case["joints"])[1::2]
        }
    model = make_model(case)
    t = solve_joints(model).forces
    values = np.vstack([t.member_forces, t.reactions])
    for column in range(columns):
        exact = np.array([float(x) for x in exact_solve(model, column)])
        scale = np.abs(exact).max()
        np.testing.assert_allclose(values[:, column], exact, rtol=0, atol=1e-12 * scale)


def _plain_reading(model: Model, first: tuple | None) -> tuple[list[tuple[int, int, int]], dict]:
    """The method of joints for a plane truss read plainly, the slow reading the written-out
    loop of solve_joints must equal: every joint's columns in column order, each solved joint
    queued again whenever a count of unknowns falls (its own too), sums over the known forces
    in that order, Cramer's rule. It follows the plane two-unknown steps only and stops at the
    first joint that is not one (solve_joints then takes its general step).

    Returns the steps as (joint, first unknown, second unknown) and the forces it found, by
    column, one value per load column.
    """
    b = len(model.members)
    F = model.load_matrix()
    ncols = F.shape[1]
    u = model.unit_vectors.tolist()
    ends = model.ends_index.tolist()
    at: list[list[tuple[int, float, float]]] = [[] for _ in model.joints]
    for c, (s, e) in enumerate(ends):
        at[s].append((c, u[c][0], u[c][1]))
        at[e].append((c, -u[c][0], -u[c][1]))
    reaction_joint = [model.joint_index[x.joint] for x in model.reactions]
    for k, reaction in enumerate(model.reactions):
        at[reaction_joint[k]].append(
            (b + k, float(reaction.direction[0]), float(reaction.direction[1]))
        )
    for columns in at:
        columns.sort()
    t: dict[int, list[float]] = {}
    if first is not None:
        for k, row in enumerate(first[0].tolist()):
            t[b + k] = row
    unknown = [sum(c not in t for c, _, _ in columns) for columns in at]
    primary = deque(j for j, n in enumerate(unknown) if 0 < n <= 2)
    secondary = deque(j for j, n in enumerate(unknown) if n == 3)
    steps: list[tuple[int, int, int]] = []
    while primary or secondary:
        j = primary.popleft() if primary else secondary.popleft()
        if unknown[j] == 0 or unknown[j] > 3:
            continue
        if unknown[j] != 2:
            break
        rx = [-float(F[2 * j, k]) for k in range(ncols)]
        ry = [-float(F[2 * j + 1, k]) for k in range(ncols)]
        free = []
        for c, ax, ay in at[j]:
            if c in t:
                for k in range(ncols):
                    rx[k] -= ax * t[c][k]
                    ry[k] -= ay * t[c][k]
            else:
                free.append((c, ax, ay))
        (c1, a1, b1), (c2, a2, b2) = free
        det = a1 * b2 - a2 * b1
        if abs(det) <= DEPENDENT_RTOL:
            break
        t[c1] = [(b2 * x - a2 * y) / det for x, y in zip(rx, ry, strict=True)]
        t[c2] = [(a1 * y - b1 * x) / det for x, y in zip(rx, ry, strict=True)]
        steps.append((j, c1, c2))
        for c in (c1, c2):
            for other in ends[c] if c < b else [reaction_joint[c - b]]:
                unknown[other] -= 1
                if 0 < unknown[other] <= 2:
                    primary.append(other)
                elif unknown[other] == 3:
                    secondary.append(other)
    return steps, t


def _compare_with_the_plain_reading(model: Model, reactions_first: bool) -> list[tuple]:
    """Same steps in the same order as the plain reading, and bit-identical forces (the JSON
    prints them with repr); returns the reading's steps."""
    run = AnalysisRun(model)
    if not reactions_first:
        run.overall_reactions = lambda: None  # the reactions become unknowns of the joints
    first = run.overall_reactions()
    solution = solve_joints(model, run)
    want_steps, want = _plain_reading(model, first)
    got_steps = [s for s in solution.steps if s.kind == "joint"][: len(want_steps)]
    names = model.joint_ids
    assert [(s.joints, s.unknowns) for s in got_steps] == [
        ((names[j],), (c1, c2)) for j, c1, c2 in want_steps
    ]
    b = len(model.members)
    t = solution.forces
    for c, values in want.items():
        got = t.member_forces[c] if c < b else t.reactions[c - b]
        assert got.tobytes() == np.array(values).tobytes()
    return want_steps


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 10**6), st.integers(3, 30), st.integers(1, 4), st.booleans())
def test_written_out_loop_equals_the_plain_reading(
    seed: int, joints: int, columns: int, reactions_first: bool
) -> None:
    """With the reactions found first or solved with the joints, for 1, 2 and more columns."""
    rng = random.Random(seed)
    model = make_model(_with_columns(random_simple_truss(rng, joints), columns, rng))
    steps = _compare_with_the_plain_reading(model, reactions_first)
    if reactions_first:
        # A simple truss is then solved joint by joint: the reading reaches all but the last.
        assert len(steps) >= len(model.joints) - 2


def test_plain_reading_with_the_reactions_as_unknowns_covers_them() -> None:
    """The reactions-as-unknowns runs above are not empty: over 40 random simple trusses most
    joints are plane two-unknown steps, and some of those steps find a reaction."""
    rng = random.Random(7)
    joints_total = reached = reactions = 0
    for _ in range(40):
        model = make_model(_with_columns(random_simple_truss(rng, rng.randint(3, 30)), 2, rng))
        steps = _compare_with_the_plain_reading(model, reactions_first=False)
        joints_total += len(model.joints)
        reached += len(steps)
        b = len(model.members)
        reactions += sum(c1 >= b or c2 >= b for _, c1, c2 in steps)
    assert reached > joints_total // 2
    assert reactions > 0


@settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(0, 10**6), st.integers(3, 20), st.booleans(), st.integers(0, 40))
def test_steps_read_like_the_tuple_they_stand_for(
    seed: int, joints: int, reactions_first: bool, cut: int
) -> None:
    """JointSteps (plane steps kept as integers) reads like the tuple of its steps: length,
    items, slices (the first steps a report shows, and others) and the joint order."""
    rng = random.Random(seed)
    model = make_model(random_simple_truss(rng, joints))
    run = AnalysisRun(model)
    if not reactions_first:
        run.overall_reactions = lambda: None
    steps = solve_joints(model, run).steps
    assert isinstance(steps, JointSteps)
    whole = tuple(iter(steps))
    assert all(isinstance(s, JointStep) for s in whole)
    assert len(steps) == len(whole)
    assert steps[:cut] == whole[:cut]
    assert steps[cut // 3 : cut] == whole[cut // 3 : cut]
    assert steps[::2] == whole[::2]
    assert [steps[i] for i in range(-len(whole), len(whole))] == list(whole + whole)
    assert tuple(steps) == whole
    # Equal like the tuple it stands for (a JointSolution compares its steps by value).
    assert steps == whole and steps == solve_joints(model, run).steps
    assert steps != whole[:-1] and steps != list(whole)
    assert solve_joints(model, run).order == [
        j for s in whole if s.kind == "joint" for j in s.joints
    ]
    if reactions_first:  # a step kept as it is comes first, before the plane steps
        assert whole[0].kind == "reactions" and steps[0] == whole[0]


def _tetrahedron() -> dict:
    return truss_case(
        {"A": [0, 0, 0], "B": [4, 0, 0], "C": [0, 4, 0], "D": [1, 1, 4]},
        [("A", "B"), ("A", "C"), ("A", "D"), ("B", "C"), ("B", "D"), ("C", "D")],
        {"A": ["x", "y", "z"], "B": ["y", "z"], "C": ["z"]},
        {"P": {"D": [1, 2, -3]}},
    )


@pytest.mark.parametrize(
    ("case", "plain_steps"),
    [(pratt(8), True), (howe(6), True), (_tetrahedron(), False), (k33_off_conic(), False)],
    ids=["pratt", "howe", "3d-tetrahedron", "k33-simultaneous"],
)
def test_joint_order_between_steps_kept_as_they_are(case: dict, plain_steps: bool) -> None:
    """The joint order read from the integers equals the one read from the steps, also where
    steps kept as they are (reactions, a last joint with one unknown, 3D joints, a simultaneous
    step) come between the plane ones or take their place."""
    solution = solve_joints(make_model(case))
    whole = tuple(solution.steps)
    assert whole[0].kind == "reactions"
    if plain_steps:  # plane steps, then a joint step kept as it is: the last joint's one unknown
        assert whole[-1].kind == "joint" and len(whole[-1].unknowns) == 1
        assert all(s.kind == "joint" and len(s.unknowns) == 2 for s in whole[1:-1])
    assert solution.order == [j for s in whole if s.kind == "joint" for j in s.joints]
