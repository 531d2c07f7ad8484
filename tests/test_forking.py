"""verify.forking: the one rule for forking, and a function computed in a child process."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import threading
import time

import pytest

from verify import forking
from verify.batch import run as batch_run

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")


def _fails() -> None:
    raise ValueError("planted failure")


def _sleeps(seconds: float) -> str:
    time.sleep(seconds)
    return "woke"


@needs_fork
def test_fork_allowed_follows_the_serial_switch_and_the_threads(monkeypatch):
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    assert forking.fork_allowed()
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    assert not forking.fork_allowed()
    monkeypatch.delenv(forking.SERIAL_ENV)
    release = threading.Event()
    other = threading.Thread(target=release.wait)
    other.start()
    try:
        assert not forking.fork_allowed()
    finally:
        release.set()
        other.join()


@needs_fork
def test_the_batch_pool_asks_the_same_rule(monkeypatch):
    """One helper everywhere: the batch forks its workers only when verify.forking allows it."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    assert batch_run._start_method() == "fork"
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    assert batch_run._start_method() != "fork"


@needs_fork
def test_an_error_in_the_child_comes_back_as_fork_failed(monkeypatch):
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    child = forking.Forked.start(_fails)
    assert child.forked
    with pytest.raises(forking.ForkFailed, match="ValueError: planted failure"):
        child.result()
    assert not child.forked  # reaped


@needs_fork
def test_a_child_past_its_time_is_stopped_and_reaped(monkeypatch):
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    child = forking.Forked.start(_sleeps, 30.0)
    pid = child.pid
    assert pid is not None
    with pytest.raises(forking.ForkTimeout):
        child.result(timeout=0.05)
    with pytest.raises(ChildProcessError):
        os.waitpid(pid, os.WNOHANG)  # already reaped: not a child any more


def test_without_fork_the_function_runs_here_when_asked(monkeypatch):
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    child = forking.Forked.start(_sleeps, 0.0)
    assert not child.forked
    assert child.result(timeout=0.01) == "woke"  # no child: no time box either


CANAL = os.path.join(os.path.dirname(__file__), "..", "cases", "canal-footbridge")


@needs_fork
def test_the_section_child_started_before_the_claims_is_stopped_when_they_are_refused(
    monkeypatch, tmp_path
):
    """service.check forks the section route as soon as the case is read; a claims file that is
    refused (exit 2) must leave no child behind, and a good one gives what one process gives."""
    from verify import service
    from verify.analysis import pipeline
    from verify.errors import InputError

    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 1)  # fork even for 21 members
    started: list[int] = []
    real_start = forking.Forked.start.__func__

    def recording(cls, function, *args, **options):
        child = real_start(cls, function, *args, **options)
        started.append(child.pid)
        return child

    monkeypatch.setattr(forking.Forked, "start", classmethod(recording))
    bad = tmp_path / "claims.csv"
    bad.write_text("Member,dead (kN)\nL0L1,twelve\n")
    with pytest.raises(InputError):
        service.check(os.path.join(CANAL, "case.toml"), bad)
    assert started and started[0] is not None  # the child had been forked before the claims
    with pytest.raises(ChildProcessError):
        os.waitpid(started[0], os.WNOHANG)  # stopped and reaped
    claims = os.path.join(CANAL, "claims.csv")
    forked = service.check(os.path.join(CANAL, "case.toml"), claims)
    assert len(started) == 2  # one child per check: the analysis took the early one
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    serial = service.check(os.path.join(CANAL, "case.toml"), claims)
    assert forked.review.verdict == serial.review.verdict
    assert forked.review.findings == serial.review.findings


_ORPHAN = """
import os, signal, sys, time
from verify import forking
child = forking.Forked.start(time.sleep, 30.0)
print(child.pid, flush=True)
os.kill(os.getpid(), signal.SIGKILL)  # no clean-up runs: the child is not cancelled
"""


@needs_fork
@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="parent-death signal: Linux")
def test_a_child_does_not_outlive_a_parent_killed_without_clean_up(monkeypatch):
    """A job scheduler's SIGTERM or SIGKILL ends the parent without its finally blocks; its
    section child must not work on alone to the end of its route."""
    env = {k: v for k, v in os.environ.items() if k != forking.SERIAL_ENV}
    done = subprocess.run(
        [sys.executable, "-c", _ORPHAN], env=env, capture_output=True, text=True, timeout=60
    )
    pid = int(done.stdout.split()[0])
    for _ in range(100):  # up to 5 s for the kernel to deliver the signal
        try:
            os.kill(pid, 0)
        except ProcessLookupError:
            return
        time.sleep(0.05)
    os.kill(pid, signal.SIGKILL)
    pytest.fail(f"the child {pid} outlived its killed parent")


@needs_fork
def test_the_heap_stays_frozen_while_any_child_lives(monkeypatch):
    """Two children at once (the section route's and the sigma figure's): the heap is thawed
    only when the last has ended, whichever order they are collected in."""
    import gc

    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    first = forking.Forked.start(_sleeps, 0.0)
    second = forking.Forked.start(_sleeps, 0.0)
    assert first.forked and second.forked and gc.get_freeze_count() > 0
    assert first.result() == "woke"
    assert gc.get_freeze_count() > 0  # the second still shares the heap's pages
    second.cancel()
    assert gc.get_freeze_count() == 0


@needs_fork
def test_an_interrupted_wait_stops_and_reaps_the_child(monkeypatch):
    """Ctrl-C while the answer is awaited: the interruption goes on up, the child is stopped
    and reaped, and a later cancel() does nothing (it used to close a closed descriptor)."""
    import gc
    import signal

    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    child = forking.Forked.start(_sleeps, 30.0)
    pid = child.pid

    def interrupt(signum, frame):
        raise KeyboardInterrupt

    previous = signal.signal(signal.SIGALRM, interrupt)
    signal.setitimer(signal.ITIMER_REAL, 0.2)
    try:
        with pytest.raises(KeyboardInterrupt):
            child.result()
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, previous)
    assert not child.forked and child.read_fd is None
    with pytest.raises(ChildProcessError):
        os.waitpid(pid, os.WNOHANG)
    child.cancel()
    assert gc.get_freeze_count() == 0


@needs_fork
def test_a_child_never_stops_its_sibling(monkeypatch):
    """A child inherits this process's handle on an earlier child (the analysis run holds it):
    stopping it there must leave the sibling alone, which still answers here."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    sibling = forking.Forked.start(_sleeps, 0.5)

    def stop_the_sibling():
        sibling.cancel()
        return "asked"

    other = forking.Forked.start(stop_the_sibling)
    assert other.result() == "asked"
    assert sibling.result() == "woke"
