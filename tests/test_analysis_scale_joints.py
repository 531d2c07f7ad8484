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

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_joints import exact_solve
from trussgen import howe, make_model, pratt, random_simple_truss

from verify.analysis.joints import solve_joints
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
