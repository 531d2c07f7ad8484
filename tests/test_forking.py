"""verify.forking: the one rule for forking, and a function computed in a child process."""

from __future__ import annotations

import os
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
