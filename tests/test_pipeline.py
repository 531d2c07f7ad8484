"""The analysis pipeline: the section route gives the same answer in a second process."""

from __future__ import annotations

import os
import threading

import numpy as np
import pytest
from trussgen import make_model, pratt

from verify import forking
from verify.analysis import pipeline


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_section_route_in_a_child_process_matches_serial(monkeypatch):
    model = make_model(pratt(12, load=10.0))
    serial = pipeline.analyse(model)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    parallel = pipeline.analyse(make_model(pratt(12, load=10.0)))
    assert parallel.sections is not None and serial.sections is not None
    np.testing.assert_array_equal(
        parallel.sections.forces.member_forces, serial.sections.forces.member_forces
    )
    assert [c.target for c in parallel.sections.cuts] == [c.target for c in serial.sections.cuts]
    assert parallel.sections.cuts[3] == serial.sections.cuts[3]


def test_serial_switch_keeps_one_process(monkeypatch):
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    child = forking.Forked.start(lambda: ("ran in", os.getpid()))
    assert child.pid is None
    assert child.result() == ("ran in", os.getpid())


def test_no_fork_while_other_threads_run(monkeypatch):
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    release = threading.Event()
    other = threading.Thread(target=release.wait)
    other.start()
    try:
        child = forking.Forked.start(lambda: ("ran in", os.getpid()))
        assert child.pid is None and child.result() == ("ran in", os.getpid())
    finally:
        release.set()
        other.join()


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_child_runs_the_route_in_another_process(monkeypatch):
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    child = forking.Forked.start(lambda: ("ran in", os.getpid()))
    assert child.pid is not None
    where, pid = child.result()
    assert where == "ran in" and pid != os.getpid()


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
@pytest.mark.parametrize("change", ["moved", "dropped", "added"])
def test_section_child_is_stopped_unless_the_truss_is_stable_and_determinate(monkeypatch, change):
    """The section route starts before the stability screen when A is square; a truss that is
    then found unstable (a diagonal moved to a braced panel: m = s = 1) stops it, and no child
    process is left behind. With one diagonal removed (unstable) or added (indeterminate) A is
    not square, so the truss cannot be stable and determinate and no section child starts."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started: list[str] = []
    cancelled: list[int | None] = []
    original_start = forking.Forked.start
    original = forking.Forked.cancel

    def start(function, *args):
        started.append(function.__name__)
        return original_start(function, *args)

    def cancel(self):
        cancelled.append(self.pid)
        original(self)

    monkeypatch.setattr(forking.Forked, "start", staticmethod(start))
    monkeypatch.setattr(forking.Forked, "cancel", cancel)
    case = pratt(6, load=10.0)
    if change != "added":
        del case["members"]["U2L3"]
    if change != "dropped":
        case["members"]["L1U2"] = ["L1", "U2"]
    analysis = pipeline.analyse(make_model(case))
    assert analysis.sections is None and analysis.joints is None
    assert started.count("solve_sections") == (change == "moved")
    stopped = [pid for pid in cancelled if pid is not None]
    assert len(stopped) == (change == "moved")
    for pid in stopped:
        with pytest.raises(ChildProcessError):
            os.waitpid(pid, os.WNOHANG)  # already reaped: not a child any more


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_an_error_in_the_joint_route_leaves_no_child_and_no_frozen_heap(monkeypatch):
    import gc

    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started: list[int] = []
    original = forking.Forked.start

    def start(route, *args):
        child = original(route, *args)
        started.append(child.pid)
        return child

    def broken(*args):
        raise RuntimeError("joint route failed")

    monkeypatch.setattr(pipeline.Forked, "start", staticmethod(start))
    monkeypatch.setattr(pipeline, "solve_joints", broken)
    with pytest.raises(RuntimeError, match="joint route failed"):
        pipeline.analyse(make_model(pratt(6, load=10.0)))
    assert started and started[0] is not None
    with pytest.raises(ChildProcessError):
        os.waitpid(started[0], os.WNOHANG)
    assert gc.get_freeze_count() == 0


def _large_pratt(monkeypatch):
    """A truss over the dense limit (102 panels: 410 joint equations, square A) treated as
    large, so that the section child and the screen beside the claims start for it."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    return make_model(pratt(102, load=10.0))


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_the_claims_are_read_in_a_thread_while_this_one_factors(monkeypatch):
    """The work handed over (reading the claims) runs in another thread; the screen, and the
    SuperLU factor it makes, in the calling thread (scipy keeps a factor made in a thread that
    ends); the verdict is the one a screen alone gives."""
    from verify.analysis import lu_factors, stability

    model = _large_pratt(monkeypatch)
    factored_in: list[int] = []
    original = lu_factors.splu_checked

    def recorded(*args, **kwargs):
        factored_in.append(threading.get_ident())
        return original(*args, **kwargs)

    monkeypatch.setattr(stability, "splu_checked", recorded)
    early = pipeline.EarlyRoutes(model)
    try:
        worked_in = early.screen_while(threading.get_ident)
        assert early.run._verdict is not None  # screened before the work was collected
        analysis = pipeline.analyse(model, early=early)
    finally:
        early.cancel()
    here = threading.get_ident()
    assert worked_in != here and factored_in == [here]
    alone = pipeline.analyse(make_model(pratt(102, load=10.0)), sections=False)
    assert analysis.stability == alone.stability
    np.testing.assert_array_equal(
        analysis.joints.forces.member_forces, alone.joints.forces.member_forces
    )


def test_a_small_truss_reads_its_claims_in_this_thread(monkeypatch):
    early = pipeline.EarlyRoutes(make_model(pratt(12, load=10.0)))
    assert early.screen_while(threading.get_ident) == threading.get_ident()
    assert early.run._verdict is None and early.run._stability is None  # left to analyse()


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_an_error_reading_the_claims_is_raised_before_the_screens(monkeypatch):
    from verify.analysis import stability
    from verify.errors import InputError

    model = _large_pratt(monkeypatch)

    def broken(*args, **kwargs):
        raise RuntimeError("planted in the screen")

    def refused():
        raise InputError(["claims.csv: row 2: planted"])

    early = pipeline.EarlyRoutes(model)
    try:
        monkeypatch.setattr(stability, "screen_stability", broken)
        with pytest.raises(InputError, match="planted"):
            early.screen_while(refused)
        with pytest.raises(RuntimeError, match="planted in the screen"):
            early.screen_while(lambda: "read")
    finally:
        early.cancel()
    assert threading.active_count() == 1


def test_the_sigma_figure_estimated_in_a_thread_is_the_one_estimated_in_turn():
    """The verdict comes at once without the figure; the whole result, waited for, equals the
    screen made in turn, field by field (the figure, its scaling, the notes in order)."""
    from verify.analysis.stability import (
        Classification,
        screen_stability,
        solve_stability,
    )

    model = make_model(pratt(102, load=10.0))
    verdict, whole = screen_stability(model, background=True)
    assert verdict.classification is Classification.STABLE_DETERMINATE
    assert verdict.conditioning_ratio is None
    result = whole()
    assert result == solve_stability(make_model(pratt(102, load=10.0)))
    assert result.conditioning_ratio is not None and result.notes[-1].startswith("sigma_min")
    assert threading.active_count() == 1
