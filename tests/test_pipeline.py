"""The analysis pipeline: the section route gives the same answer in a second process."""

from __future__ import annotations

import os

import numpy as np
import pytest
from trussgen import make_model, pratt

from verify.analysis import pipeline


@pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
def test_section_route_in_a_child_process_matches_serial(monkeypatch):
    model = make_model(pratt(12, load=10.0))
    serial = pipeline.analyse(model)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    parallel = pipeline.analyse(make_model(pratt(12, load=10.0)))
    assert parallel.sections is not None and serial.sections is not None
    np.testing.assert_array_equal(parallel.sections.forces.member_forces, serial.sections.forces.member_forces)
    assert [c.target for c in parallel.sections.cuts] == [c.target for c in serial.sections.cuts]
    assert parallel.sections.cuts[3] == serial.sections.cuts[3]


def test_serial_switch_keeps_one_process(monkeypatch):
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    monkeypatch.setenv(pipeline.SERIAL_ENV, "1")
    assert pipeline._start_in_child(lambda m: m, None) is None  # type: ignore[arg-type]
