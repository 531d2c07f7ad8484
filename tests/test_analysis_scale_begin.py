"""The check starts the analysis's child processes before it reads the claims
(verify.analysis.pipeline.begin), so the section route of a large truss works while they are
read. The results are those of analyse() alone, bit for bit, and a claims table that cannot be
used stops the child: no process or frozen heap is left behind."""

from __future__ import annotations

import gc
import os
from pathlib import Path

import numpy as np
import pytest
from trussgen import make_model, pratt, write_case

from verify import forking, service
from verify.analysis import pipeline
from verify.analysis.joints import solve_joints
from verify.errors import InputError

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")


def _started(monkeypatch: pytest.MonkeyPatch) -> list[tuple[str, int | None]]:
    started: list[tuple[str, int | None]] = []
    original = forking.Forked.start

    def start(function, *args):
        child = original(function, *args)
        started.append((function.__name__, child.pid))
        return child

    monkeypatch.setattr(forking.Forked, "start", staticmethod(start))
    return started


def _reaped(pid: int) -> bool:
    try:
        os.waitpid(pid, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


@needs_fork
def test_begun_analysis_equals_analyse(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    alone = pipeline.analyse(make_model(pratt(12, load=10.0)))
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started = _started(monkeypatch)
    model = make_model(pratt(12, load=10.0))
    begun = pipeline.begin(model)
    assert [name for name, _ in started] == ["solve_sections"]
    # other work here, as the check reads the claims
    other = make_model(pratt(12, load=10.0))
    assert solve_joints(other).forces.member_forces.shape == (len(other.members), 1)
    analysis = begun.analyse()
    assert analysis.sections is not None and alone.sections is not None
    np.testing.assert_array_equal(
        analysis.sections.forces.member_forces, alone.sections.forces.member_forces
    )
    assert alone.global_ is not None and analysis.global_ is not None
    np.testing.assert_array_equal(analysis.global_.member_forces, alone.global_.member_forces)
    assert analysis.stability.as_dict() == alone.stability.as_dict()
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0
    begun.cancel()  # nothing left to stop: harmless


@needs_fork
def test_unusable_claims_stop_the_begun_analysis(
    monkeypatch: pytest.MonkeyPatch, tmp_path: Path
) -> None:
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    case = write_case(tmp_path, pratt(12, load=10.0))
    claims = tmp_path / "claims.csv"
    claims.write_text("member,P\nX1,10\nX2,-5\n", encoding="utf-8")
    started = _started(monkeypatch)
    with pytest.raises(InputError, match="no label matches"):
        service.check(case, claims)
    assert [name for name, _ in started] == ["solve_sections"]
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0
