"""The analysis run: what the analyses share lives there, and the model never changes."""

from __future__ import annotations

import numpy as np
import pytest
from trussgen import make_model, pratt

from verify.analysis import pipeline, stability
from verify.analysis import run as run_module
from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.global_solve import solve_global
from verify.analysis.run import AnalysisRun


def _state(model) -> dict[str, object]:
    return dict(vars(model))


def test_analyse_leaves_the_model_as_it_was():
    """No cache on the model: every attribute is the same object before and after a whole
    analysis and a comparison's questions to the run."""
    model = make_model(pratt(8, load=10.0))
    before = _state(model)
    analysis = pipeline.analyse(model)
    analysis.run.equilibrium_lu()
    analysis.run.members_fixed_by_statics(1.0)
    after = _state(model)
    assert after.keys() == before.keys()
    assert all(after[k] is before[k] for k in before)
    assert not hasattr(model, "memo")
    with pytest.raises(ValueError):
        model.load_matrix()[0, 0] = 1.0  # read-only


def test_the_routes_share_one_equilibrium_matrix_and_one_lu(monkeypatch):
    """The stability screen's LU of a square A is the global solve's: the global solve on the
    same run factors nothing (the sparse screen forced with a small dense limit)."""
    model = make_model(pratt(10, load=10.0))
    run = AnalysisRun(model)
    screened = stability.solve_stability(model, dense_limit=4, detail_limit=4, run=run)
    assert screened.method == "sparse-screen" and screened.mechanisms == 0

    def no_second_factorisation(*args, **kwargs):
        raise AssertionError("the LU was factored twice")

    monkeypatch.setattr(run_module.spla, "splu", no_second_factorisation)
    shared = solve_global(model, run)
    monkeypatch.undo()
    alone = solve_global(model)
    np.testing.assert_allclose(shared.member_forces, alone.member_forces, rtol=1e-12)
    A = run.equilibrium_matrix()
    assert A is run.equilibrium_matrix()
    # The shared matrix is the one assemble_equilibrium builds (compared entry by entry).
    assert (A != assemble_equilibrium(model)).nnz == 0


def test_member_forces_of_the_run_solve_statics():
    """run.member_forces against the global route (its own check: A t + f = 0 to round-off)."""
    model = make_model(pratt(6, load=10.0))
    analysis = pipeline.analyse(model)
    t = analysis.run.member_forces(np.arange(len(model.load_names)))
    assert t is not None
    A = assemble_equilibrium(model)
    b = len(model.members)
    residual = A[:, :b] @ t + A[:, b:] @ analysis.global_.reactions + model.load_matrix()
    assert np.abs(residual).max() <= 1e-9 * np.abs(model.load_matrix()).max()


def test_a_variant_run_is_a_fresh_run_of_the_changed_model():
    model = make_model(pratt(6, load=10.0))
    run = pipeline.analyse(model).run
    case = pratt(6, load=10.0)
    case["members"]["L2U3"] = ["L2", "U3"]  # one diagonal more: indeterminate
    variant = run.variant(make_model(case))
    assert variant is not run and variant.model is not model
    assert variant.member_forces([0]) is None  # A is not square: no statics answer
    assert variant.elastic_forces([0], assume_equal_EA=1.0) is not None


def test_code_handed_only_the_model_finds_the_run_of_its_analysis():
    """The section calc sheets get the model alone: solve_reactions(model) is the analysis run's
    answer (the same object), not a fresh solve per cut."""
    from verify.analysis.joints import solve_reactions

    model = make_model(pratt(6, load=10.0))
    analysis = pipeline.analyse(model)
    assert AnalysisRun.of(model) is analysis.run
    assert solve_reactions(model) is analysis.run.overall_reactions()
    other = make_model(pratt(6, load=10.0))  # equal, but another model: not analysed
    assert AnalysisRun.of(other) is not analysis.run
    assert AnalysisRun.of(other) is not AnalysisRun.of(other)  # nothing kept for it


def test_the_register_of_runs_keeps_no_model_alive():
    import gc
    import weakref

    model = make_model(pratt(6, load=10.0))
    analysis = pipeline.analyse(model)
    gone = weakref.ref(model)
    del analysis, model
    gc.collect()
    assert gone() is None
