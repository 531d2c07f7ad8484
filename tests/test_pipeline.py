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


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_joint_walk_in_a_child_process_matches_serial(monkeypatch):
    """The method of joints walked in the second process (after the section route) gives the
    same forces, steps and order, bit for bit, as in one process."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    serial = pipeline.analyse(make_model(pratt(12, load=10.0)))
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    children: list[int | None] = []
    original = forking.Forked.start

    def start(function, *args, **options):
        child = original(function, *args, **options)
        children.append(child.pid)
        return child

    monkeypatch.setattr(forking.Forked, "start", staticmethod(start))
    parallel = pipeline.analyse(make_model(pratt(12, load=10.0)))
    assert children and children[0] is not None and children[0] != os.getpid()
    assert parallel.joints is not None and serial.joints is not None
    np.testing.assert_array_equal(
        parallel.joints.forces.member_forces, serial.joints.forces.member_forces
    )
    np.testing.assert_array_equal(parallel.joints.forces.reactions, serial.joints.forces.reactions)
    assert tuple(parallel.joints.steps) == tuple(serial.joints.steps)
    assert parallel.joints.order == serial.joints.order
    assert parallel.joints.max_residual == serial.joints.max_residual


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

    def start(function, *args, **options):
        started.append(function.__name__)
        return original_start(function, *args, **options)

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
    assert started.count("_sections_and_walk") == (change == "moved")
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

    def start(route, *args, **options):
        child = original(route, *args, **options)
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
