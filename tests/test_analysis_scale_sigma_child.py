"""A large 3D truss whose A is square is factored before its claims are read, and the stability
screen's sigma figure (sigma_min / sigma_max by power iterations with the LU factors) is
estimated in a child process meanwhile (verify.analysis.run.AnalysisRun.start_conditioning).
Every result equals the one-process check bit for bit, the figure equals the estimate made
from the same factors here, a truss found unstable or a claims table refused leaves no child
behind. The double-layer grid is the benchmark's own family (bench/generate.py)."""

from __future__ import annotations

import gc
import os
import sys
from pathlib import Path

import numpy as np
import pytest
from children import record_children

from verify import forking
from verify.analysis import pipeline
from verify.analysis import run as run_module
from verify.analysis.run import AnalysisRun
from verify.analysis.stability import conditioning_estimate
from verify.errors import InputError
from verify.io.case import read_case
from verify.service import check

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
BENCH = Path(__file__).resolve().parents[1] / "bench"


@pytest.fixture(scope="module")
def grid_case(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    """A determinate double-layer grid of about 1,000 members (over 400 joint equations: the
    sparse screen) and a claims table of its forces with one value 25 % high."""
    sys.path.insert(0, str(BENCH))
    try:
        import generate
    finally:
        sys.path.remove(str(BENCH))
    case = generate.write_case(generate.build("grid", 1000), tmp_path_factory.mktemp("grid"))
    model = read_case(case)
    run = AnalysisRun(model)
    forces = run.equilibrium_lu().solve(-model.load_matrix())[: len(model.members)]
    forces[5, 0] *= 1.25
    lines = ["member," + ",".join(model.load_names)]
    lines += [
        f"{m}," + ",".join(repr(float(x)) for x in row)
        for m, row in zip(model.member_ids, forces, strict=True)
    ]
    claims = case.parent / "claims.csv"
    claims.write_text("\n".join(lines) + "\n")
    return case, claims


def _recorded(monkeypatch: pytest.MonkeyPatch) -> list[tuple[str, int | None]]:
    """Fork for this small grid, and record every child started: (function name, pid)."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    monkeypatch.setattr(run_module, "SIGMA_CHILD_MIN_ENTRIES", 0)
    return record_children(monkeypatch)


def _gone(pid: int | None) -> bool:
    try:
        os.waitpid(pid or 0, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


@needs_fork
def test_the_sigma_figure_from_the_child_equals_the_one_process_check(grid_case, monkeypatch):
    case, claims = grid_case
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    serial = check(case, claims)
    started = _recorded(monkeypatch)
    forked = check(case, claims)
    names = [name for name, _ in started]
    assert "conditioning_estimate" in names and "_sections_and_walk" in names
    assert all(pid is not None and _gone(pid) for _, pid in started)
    a, b = forked.review.analysis, serial.review.analysis
    assert a.stability == b.stability and a.stability.conditioning_ratio is not None
    np.testing.assert_array_equal(a.global_.member_forces, b.global_.member_forces)
    np.testing.assert_array_equal(a.joints.forces.member_forces, b.joints.forces.member_forces)
    np.testing.assert_array_equal(a.sections.forces.member_forces, b.sections.forces.member_forces)
    assert a.route_disagreement == b.route_disagreement
    assert forked.review.verdict == serial.review.verdict
    assert forked.review.findings == serial.review.findings
    assert any(f.kind == "value-mismatch" for f in forked.review.findings)
    # The figure is the power iterations' estimate from the same factors, made here.
    model = read_case(case)
    run = AnalysisRun(model)
    assert a.stability.conditioning_ratio == conditioning_estimate(
        run.equilibrium_matrix(), run.equilibrium_lu()
    )
    assert gc.get_freeze_count() == 0


@needs_fork
def test_a_refused_claims_table_leaves_no_child_behind(grid_case, monkeypatch, tmp_path):
    case, _ = grid_case
    started = _recorded(monkeypatch)
    bad = tmp_path / "claims.csv"
    bad.write_text("member,dead\nM1,twelve\n")
    with pytest.raises(InputError):
        check(case, bad)
    assert "conditioning_estimate" in [name for name, _ in started]
    assert all(pid is not None and _gone(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0


@needs_fork
def test_no_child_for_small_factors_or_a_plane_truss(grid_case, monkeypatch):
    """Below SIGMA_CHILD_MIN_ENTRIES the figure is made in the main process, as before."""
    case, claims = grid_case
    started = _recorded(monkeypatch)
    monkeypatch.setattr(run_module, "SIGMA_CHILD_MIN_ENTRIES", 10**12)
    check(case, claims)
    assert "conditioning_estimate" not in [name for name, _ in started]


@needs_fork
def test_an_error_while_starting_the_early_routes_leaves_no_child(grid_case, monkeypatch):
    """The section child is forked before A is factored: an interruption or error then (here
    raised by the progress report of the factorisation) stops it."""
    from verify.analysis.pipeline import EarlyRoutes

    case, _ = grid_case
    started = _recorded(monkeypatch)

    def progress(step: str) -> None:
        if step.startswith("factoring"):
            raise KeyboardInterrupt

    with pytest.raises(KeyboardInterrupt):
        EarlyRoutes(read_case(case), factor_now=True, progress=progress)
    assert [name for name, _ in started] == ["_sections_and_walk"]
    assert all(_gone(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0


@needs_fork
def test_no_sigma_child_for_factors_the_screen_finds_singular(grid_case, monkeypatch):
    """Where the LU's pivot ratio says singular, the screen asks for no figure: no child is
    started for it and no route is finished ahead (every pivot ratio below the threshold
    here); the verdict is the one-process one."""
    from verify.analysis import stability

    case, claims = grid_case
    monkeypatch.setattr(stability, "LU_PIVOT_SINGULAR", 2.0)  # every ratio is at most 1
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    serial = check(case, claims)
    started = _recorded(monkeypatch)
    ahead: list[bool] = []  # per call: made before the stability verdict?
    original = pipeline._determinate_routes

    def recorded(routes):
        ahead.append(routes.run._stability is None)
        return original(routes)

    monkeypatch.setattr(pipeline, "_determinate_routes", recorded)
    forked = check(case, claims)
    assert "conditioning_estimate" not in [name for name, _ in started]
    assert not any(ahead)
    assert forked.review.verdict == serial.review.verdict
    assert forked.review.analysis.stability == serial.review.analysis.stability
    assert all(_gone(pid) for _, pid in started)


def test_an_exactly_singular_A_is_factored_once_and_its_error_holds_no_matrix(monkeypatch):
    """The second ask raises a new error with the same words at once (no second factorisation,
    no traceback kept from the first)."""
    from verify.analysis import run as run_module

    calls: list[int] = []
    original = run_module.splu_checked

    def counting(*args, **kwargs):
        calls.append(1)
        return original(*args, **kwargs)

    monkeypatch.setattr(run_module, "splu_checked", counting)
    from trussgen import make_model, truss_case

    # D sits between A and B on the chord, held across it by nothing: its vertical equation
    # is empty (A square: 4 members and 4 reaction components for 4 joints).
    case = truss_case(
        {"A": [0, 0], "D": [2, 0], "B": [4, 0], "C": [2, 2]},
        [("A", "D"), ("D", "B"), ("A", "C"), ("B", "C")],
        {"A": ["x", "y"], "B": ["y"], "D": ["x"]},
        {"P": {"C": [0, -10]}},
    )
    run = AnalysisRun(make_model(case))
    errors = []
    for _ in range(2):
        with pytest.raises(RuntimeError) as caught:
            run.equilibrium_lu()
        errors.append(caught.value)
    assert len(calls) == 1 and str(errors[0]) == str(errors[1]) and errors[0] is not errors[1]
