"""A large truss with more unknown forces than joint equations: the stability screen factorises
its unit-stiffness matrix in a child process while this one makes the elastic solve the verdict
asks for (verify.analysis.pipeline._early_elastic). Every result equals the one-process analysis
bit for bit, an unstable verdict drops the early solve as before, and no child is left behind.
The classifications are the dense SVD's counts (tests/test_stability.py, Pellegrino & Calladine
1986)."""

from __future__ import annotations

import gc
import os
import re
from typing import Any

import numpy as np
import pytest
from children import record_children
from trussgen import make_model, pratt, write_case

from verify import forking
from verify.analysis import pipeline
from verify.analysis.run import AnalysisRun
from verify.analysis.stability import (
    Classification,
    solve_stability,
    unit_stiffness_ratio,
    unit_stiffness_screened,
)
from verify.service import check

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")
PANELS = 120  # 482 joint equations: above the dense SVD's limit, so the sparse screen runs


def _with_EA(case: dict[str, Any]) -> dict[str, Any]:
    case["stiffness"] = {"EA": 2.0e5}
    return case


def extra_diagonal(panels: int) -> dict[str, Any]:
    """Stable, one self-stress: panel 3 braced both ways."""
    case = pratt(panels, load=10.0)
    case["members"]["L2U3"] = ["L2", "U3"]
    return _with_EA(case)


def mechanism_and_two_self_stresses(panels: int) -> dict[str, Any]:
    """m = 1, s = 2 (Maxwell's count says +1): panel 2 loses its diagonal, panels 3 and 4 each
    get a second one."""
    case = extra_diagonal(panels)
    del case["members"]["U1L2"]
    case["members"]["L3U4"] = ["L3", "U4"]
    return case


def _untimed(notes: tuple[str, ...]) -> list[str]:
    """The notes without the factorisation's seconds (the one figure that varies by run)."""
    return [re.sub(r"[0-9.e-]+ s,", "(time) s,", note) for note in notes]


def _reaped(pid: int) -> bool:
    try:
        os.waitpid(pid, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


@needs_fork
@pytest.mark.parametrize(
    ("builder", "expected"),
    [
        (extra_diagonal, Classification.STABLE_INDETERMINATE),
        (mechanism_and_two_self_stresses, Classification.UNSTABLE),
    ],
    ids=["stable", "mechanism"],
)
def test_screen_in_a_child_beside_the_elastic_solve_equals_one_process(
    monkeypatch: pytest.MonkeyPatch, builder, expected
) -> None:
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    alone = pipeline.analyse(make_model(builder(PANELS)))
    monkeypatch.delenv(forking.SERIAL_ENV)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started = record_children(monkeypatch)
    model = make_model(builder(PANELS))
    assert unit_stiffness_screened(model)
    overlapped = pipeline.analyse(model)

    assert overlapped.stability.classification is alone.stability.classification is expected
    assert overlapped.stability.as_dict() == alone.stability.as_dict()
    assert overlapped.notes == alone.notes
    if expected is Classification.STABLE_INDETERMINATE:
        assert overlapped.elastic is not None and alone.elastic is not None
        np.testing.assert_array_equal(
            overlapped.elastic.forces.member_forces, alone.elastic.forces.member_forces
        )
        np.testing.assert_array_equal(
            overlapped.elastic.forces.reactions, alone.elastic.forces.reactions
        )
        assert _untimed(overlapped.elastic.notes) == _untimed(alone.elastic.notes)
    else:
        assert overlapped.elastic is None and alone.elastic is None
    # The screen ran in a child, no section route was started (A is not square), none is left.
    names = [name for name, _ in started]
    assert "unit_stiffness_ratio" in names and "_sections_and_walk" not in names
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0


def test_unit_stiffness_ratio_is_the_screens_figure() -> None:
    """The screen's figure is the ratio the function gives, in the note and the JSON field."""
    model = make_model(extra_diagonal(PANELS))
    ratio = unit_stiffness_ratio(model, AnalysisRun(model).equilibrium_matrix())
    result = solve_stability(model)
    assert result.method == "sparse-screen" and result.scaled_conditioning == ratio
    assert f"unit-stiffness LU pivot ratio {ratio:.2e}" in " ".join(result.notes)
    singular = make_model(mechanism_and_two_self_stresses(PANELS))
    assert unit_stiffness_ratio(singular, AnalysisRun(singular).equilibrium_matrix()) < 1e-8


def test_only_wide_sparse_models_are_screened_by_unit_stiffness() -> None:
    assert not unit_stiffness_screened(make_model(pratt(PANELS)))  # square A: LU of A
    assert not unit_stiffness_screened(make_model(extra_diagonal(10)))  # dense SVD
    assert unit_stiffness_screened(make_model(extra_diagonal(PANELS)))


@needs_fork
def test_an_error_in_the_early_solve_leaves_no_child_and_no_frozen_heap(
    monkeypatch: pytest.MonkeyPatch,
) -> None:
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started = record_children(monkeypatch)

    def broken(self, assume_equal_EA):
        raise RuntimeError("elastic solve failed")

    monkeypatch.setattr(AnalysisRun, "elastic", broken)
    with pytest.raises(RuntimeError, match="elastic solve failed"):
        pipeline.analyse(make_model(extra_diagonal(PANELS)))
    assert [name for name, _ in started] == ["unit_stiffness_ratio"]
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0


@needs_fork
def test_a_singular_stiffness_found_early_is_the_same_note(monkeypatch: pytest.MonkeyPatch) -> None:
    """A singular K found by the early solve is said as the one-process analysis says it; here
    one member's EA is so small against the others that K's pivots fall below the limit."""
    case = extra_diagonal(PANELS)
    case["members"]["L0L1"] = {"ends": ["L0", "L1"], "EA": 1e-12}
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    alone = pipeline.analyse(make_model(case))
    monkeypatch.delenv(forking.SERIAL_ENV)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    overlapped = pipeline.analyse(make_model(case))
    assert overlapped.notes == alone.notes
    assert overlapped.elastic is None and alone.elastic is None
    assert overlapped.stability.classification is Classification.STABLE_INDETERMINATE
    assert any("direct stiffness solve not possible" in note for note in overlapped.notes)


def _case_and_claims(tmp_path, builder, *, with_EA: bool = True):
    """The case file of `builder(PANELS)` and a claims table of its elastic forces (one process)
    with one value 25 % high."""
    case = builder(PANELS)
    if not with_EA:
        del case["stiffness"]
    path = write_case(tmp_path, case)
    model = make_model(case)
    forces = AnalysisRun(model).elastic(None if with_EA else 2.0e5).forces.member_forces.copy()
    forces[7, 0] *= 1.25
    lines = ["member," + ",".join(model.load_names)]
    lines += [
        f"{m}," + ",".join(repr(float(x)) for x in row)
        for m, row in zip(model.member_ids, forces, strict=True)
    ]
    claims = tmp_path / "claims.csv"
    claims.write_text("\n".join(lines) + "\n")
    return path, claims


@needs_fork
def test_the_elastic_solve_started_before_the_claims_equals_one_process(
    monkeypatch: pytest.MonkeyPatch, tmp_path
) -> None:
    """A check starts the direct stiffness solve in a child before reading the claims
    (service.check -> EarlyRoutes), and the screen's child after them: the review equals the
    one-process check's, the forces and displacements bit for bit and read-only, and no child
    is left behind."""
    path, claims = _case_and_claims(tmp_path, extra_diagonal)
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    alone = check(path, claims)
    monkeypatch.delenv(forking.SERIAL_ENV)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started = record_children(monkeypatch)
    early = check(path, claims)
    names = [name for name, _ in started]
    assert "_elastic_answer" in names and "unit_stiffness_ratio" in names
    assert names.count("unit_stiffness_ratio") == 1  # started once, after the claims
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    a, b = early.review.analysis.elastic, alone.review.analysis.elastic
    assert a is not None and b is not None
    np.testing.assert_array_equal(a.forces.member_forces, b.forces.member_forces)
    np.testing.assert_array_equal(a.displacements, b.displacements)
    np.testing.assert_array_equal(a.fixed_by_statics, b.fixed_by_statics)
    assert not a.forces.member_forces.flags.writeable and not a.displacements.flags.writeable
    assert early.review.verdict == alone.review.verdict
    assert early.review.findings == alone.review.findings
    assert any(f.kind == "value-mismatch" for f in early.review.findings)
    assert gc.get_freeze_count() == 0


@needs_fork
def test_the_early_solve_follows_the_equal_EA_asked_and_a_refused_table_stops_it(
    monkeypatch: pytest.MonkeyPatch, tmp_path
) -> None:
    from verify.errors import InputError
    from verify.service import CheckOptions

    path, claims = _case_and_claims(tmp_path, extra_diagonal, with_EA=False)
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    monkeypatch.setattr(pipeline, "PARALLEL_MIN_MEMBERS", 0)
    started = record_children(monkeypatch)
    check(path, claims)  # no EA and none assumed: nothing to solve early
    assert "_elastic_answer" not in [name for name, _ in started]
    result = check(path, claims, CheckOptions(assume_equal_EA=2.0e5))
    assert "_elastic_answer" in [name for name, _ in started]
    assert result.review.analysis.assumed_EA == 2.0e5
    bad = tmp_path / "bad.csv"
    bad.write_text("member,P\nL0L1,twelve\n")
    with pytest.raises(InputError):
        check(path, bad, CheckOptions(assume_equal_EA=2.0e5))
    assert all(pid is not None and _reaped(pid) for _, pid in started)
    assert gc.get_freeze_count() == 0


def test_a_missing_stiffness_error_comes_back_from_a_child_whole() -> None:
    """The error a child sends back is made again from its members, message and all."""
    import pickle

    from verify.analysis.stiffness import MissingStiffnessError

    error = MissingStiffnessError([f"M{k}" for k in range(12)])
    back = pickle.loads(pickle.dumps(error))
    assert type(back) is MissingStiffnessError
    assert back.members == error.members and str(back) == str(error)
