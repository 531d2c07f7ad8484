"""The stiffness solve's sample of K_f that predicts an MMD fill explosion.

Truth: the fill of whole factorisations (SuperLU's own counts of L and U), on the benchmark
families of bench/generate.py (the 3D grid with top chords, whose MMD fill explodes; the
determinate grid and the crossed Pratt, where MMD wins or ties); calibration in
verify/analysis/stiffness.py's docstring.
"""

from __future__ import annotations

import dataclasses
import sys
from pathlib import Path

import numpy as np
import pytest
import scipy.sparse.linalg as spla

from verify.analysis import stiffness as stiffness_module
from verify.analysis.stiffness import (
    MMD_SAMPLE_FILL_LIMIT,
    MMD_SAMPLE_FREE,
    assemble_stiffness,
    free_direction_basis,
    member_stiffness,
    mmd_sample_fill,
    solve_stiffness,
)
from verify.forking import SERIAL_ENV
from verify.io.case import read_case

BENCH = Path(__file__).resolve().parents[1] / "bench"


@pytest.fixture(scope="module")
def generate():
    sys.path.insert(0, str(BENCH))
    try:
        import generate
    finally:
        sys.path.remove(str(BENCH))
    return generate


def _model(generate, truss, tmp_path):
    return read_case(generate.write_case(truss, tmp_path / truss.name))


def _reduced_K(model):
    EA, _ = member_stiffness(model)
    T, _ = free_direction_basis(model)
    return (T.T @ assemble_stiffness(model, EA) @ T).tocsc()


def _whole_fill_ratio(K) -> float:
    mmd = stiffness_module._symmetric_mmd(K)
    colamd = spla.splu(K, permc_spec="COLAMD")
    return (mmd.L.nnz + mmd.U.nnz) / (colamd.L.nnz + colamd.U.nnz)


@pytest.mark.parametrize(
    "family, parameter, explodes",
    [("grid-full", 25, True), ("grid", 40, False), ("pratt-x", 2000, False)],
)
def test_the_sample_tells_what_the_whole_fill_does(generate, tmp_path, family, parameter, explodes):
    make = {
        "grid-full": generate.grid_full,
        "grid": lambda n: dataclasses.replace(generate.grid(n), ea=generate.EA),
        "pratt-x": generate.pratt_x,
    }[family]
    K = _reduced_K(_model(generate, make(parameter), tmp_path))
    assert K.shape[0] > MMD_SAMPLE_FREE
    sample = mmd_sample_fill(K)
    assert sample is not None and sample[1] == MMD_SAMPLE_FREE
    whole = _whole_fill_ratio(K)
    if explodes:
        assert sample[0] > MMD_SAMPLE_FILL_LIMIT and whole > 2.0
    else:
        assert sample[0] < MMD_SAMPLE_FILL_LIMIT and whole < 1.2


def test_a_grid_with_top_chords_goes_straight_to_colamd(generate, tmp_path, monkeypatch):
    """9,800 members (7,420 free dofs): no MMD attempt and no time box waited; the forces are
    COLAMD's and balance the loads."""

    def no_attempt(*_: object) -> object:
        raise AssertionError("the MMD attempt was started")

    model = _model(generate, generate.grid_full(35), tmp_path)
    monkeypatch.setattr(stiffness_module, "_time_boxed_mmd", no_attempt)
    solution = solve_stiffness(model)
    assert solution.notes[0].startswith("MMD_AT_PLUS_A not tried: on a sample of K (2000 free")
    assert "COLAMD" in solution.notes[0]
    loads = np.abs(model.load_matrix()).max()
    assert solution.max_residual < 1e-8 * loads


def test_the_crossed_pratt_still_tries_mmd(generate, tmp_path, monkeypatch):
    monkeypatch.delenv(SERIAL_ENV, raising=False)  # the MMD attempt needs its child process
    model = _model(generate, generate.pratt_x(2000), tmp_path)
    solution = solve_stiffness(model)
    assert "MMD_AT_PLUS_A ordering (symmetric mode, time-boxed" in solution.notes[0]
