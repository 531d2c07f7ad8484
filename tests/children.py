"""Test helper: record the child processes the tool starts (verify.forking.Forked.start)."""

from __future__ import annotations

import pytest

from verify import forking


def record_children(monkeypatch: pytest.MonkeyPatch) -> list[tuple[str, int | None]]:
    """From now on, every child Forked.start starts: (function name, pid; None when no child
    was forked and the function runs in this process)."""
    started: list[tuple[str, int | None]] = []
    original = forking.Forked.start

    def start(function, *args, **options):
        child = original(function, *args, **options)
        started.append((function.__name__, child.pid))
        return child

    monkeypatch.setattr(forking.Forked, "start", staticmethod(start))
    return started
