"""The stiffness solve's time box for the MMD ordering attempt scales with the size of K_f.

The calibration (measured MMD and COLAMD times) is in verify/analysis/stiffness.py's docstring;
these tests hold the rule itself: linear in the nonzeros of the reduced K, never below the floor
or above the cap, and the box a default solve uses is the one its note names.
"""

from __future__ import annotations

import time

import numpy as np
import pytest
import scipy.sparse as sp
from hypothesis import given
from hypothesis import strategies as st
from trussgen import make_model, pratt

from verify.analysis import stiffness as stiffness_module
from verify.analysis.stiffness import (
    ORDERING_SECONDS_PER_NONZERO,
    ORDERING_TIME_BOX,
    ORDERING_TIME_BOX_MIN,
    assemble_stiffness,
    free_direction_basis,
    member_stiffness,
    ordering_time_box,
    solve_stiffness,
)
from verify.forking import SERIAL_ENV


@given(st.integers(min_value=0, max_value=10**9))
def test_time_box_is_the_clamped_linear_rule(nonzeros: int) -> None:
    box = ordering_time_box(nonzeros)
    assert ORDERING_TIME_BOX_MIN <= box <= ORDERING_TIME_BOX
    linear = ORDERING_SECONDS_PER_NONZERO * nonzeros
    if ORDERING_TIME_BOX_MIN <= linear <= ORDERING_TIME_BOX:
        assert box == linear
    assert ordering_time_box(nonzeros + 1000) >= box


def test_time_box_ends_on_the_measured_cases() -> None:
    """The docstring's calibration points: the 9,800-member offset grid (103,744 nonzeros, MMD
    2.2 s where COLAMD took 0.064 s) is stopped well before the old fixed 1.5 s; the 10^5-member
    grid (1,359,148 nonzeros, MMD 0.87 s in PERFORMANCE.md) keeps the full cap; the 10^4 grid
    (136,124 nonzeros, MMD 0.04 s on a quiet machine) keeps several times its time."""
    assert ordering_time_box(103_744) == pytest.approx(0.207, abs=1e-3)
    assert ordering_time_box(1_359_148) == ORDERING_TIME_BOX
    assert ordering_time_box(136_124) > 5 * 0.04
    assert ordering_time_box(0) == ORDERING_TIME_BOX_MIN


def test_default_solve_uses_the_scaled_box(monkeypatch: pytest.MonkeyPatch) -> None:
    """A stand-in MMD slower than the scaled box (but inside the old fixed one) is stopped at
    the scaled box, and COLAMD's forces are the same."""
    monkeypatch.delenv(SERIAL_ENV, raising=False)  # the time box needs its child process
    case = pratt(20, load=5.0)
    case["stiffness"] = {"EA": 1.0e5}
    model = make_model(case)
    first = solve_stiffness(model)
    EA, _ = member_stiffness(model)
    T, _ = free_direction_basis(model)
    nonzeros = (T.T @ assemble_stiffness(model, EA) @ T).tocsc().nnz
    box = ordering_time_box(nonzeros)
    assert box == ORDERING_TIME_BOX_MIN  # a small K: the floor
    real_splu = stiffness_module.spla.splu

    def slow_mmd(K, permc_spec=None, **options):  # an MMD whose fill explodes
        if permc_spec == "MMD_AT_PLUS_A":
            time.sleep(box + 0.4)
        return real_splu(K, permc_spec=permc_spec, **options)

    monkeypatch.setattr(stiffness_module, "DIRECT_FREE_LIMIT", 0)
    monkeypatch.setattr(stiffness_module.spla, "splu", slow_mmd)
    second = solve_stiffness(model)
    assert f"within the {box:.2g} s time box" in second.notes[0]
    assert "COLAMD" in second.notes[0]
    np.testing.assert_allclose(second.forces.member_forces, first.forces.member_forces, rtol=1e-10)


def test_a_failed_fork_never_runs_mmd_without_its_time_box(monkeypatch: pytest.MonkeyPatch) -> None:
    """When fork() fails, the MMD attempt (whose fill can run for minutes) is not made in this
    process with no box around it: the solve falls back at once, saying why."""
    import os

    def no_fork() -> int:
        raise OSError("fork failed (as when out of process slots)")

    def must_not_run(*_: object) -> object:
        raise AssertionError("MMD ran in this process")

    monkeypatch.setattr(os, "fork", no_fork)
    monkeypatch.setattr(stiffness_module, "_mmd_solve", must_not_run)
    K = sp.identity(4, format="csc")
    answer, why = stiffness_module._time_boxed_mmd(K, np.ones((4, 1)), 1.5)
    assert answer is None and "fork() failed" in why
