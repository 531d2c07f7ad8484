"""The sparse stability screen reads the LU pivot ratio of the factor the run keeps in place, or
else in a child process (so the kept factor does not carry scipy's copies of L and U): the figure
is the one scipy's own factorisation of the same matrix gives, with or without a child process.
"""

from __future__ import annotations

import re
import warnings

import numpy as np
import pytest
import scipy.sparse.linalg as spla
from trussgen import make_model, pratt

from verify.analysis import lu_factors
from verify.analysis.run import AnalysisRun, lu_ordering
from verify.analysis.stability import Classification, solve_stability
from verify.forking import SERIAL_ENV, fork_allowed


@pytest.mark.parametrize("serial", [False, True])
def test_kept_factor_pivot_ratio_is_scipys(monkeypatch: pytest.MonkeyPatch, serial: bool) -> None:
    if serial:
        monkeypatch.setenv(SERIAL_ENV, "1")
    else:
        monkeypatch.delenv(SERIAL_ENV, raising=False)
    model = make_model(pratt(40, load=3.0))
    run = AnalysisRun(model)
    result = solve_stability(model, dense_limit=10, run=run)
    assert result.classification is Classification.STABLE_DETERMINATE
    A = run.equilibrium_matrix()
    assert A.shape[0] == A.shape[1]
    # Outside reference: scipy's LU of the same A with the same ordering, read directly.
    diag = np.abs(spla.splu(A, permc_spec=lu_ordering(model)).U.diagonal())
    note = next(n for n in result.notes if "LU pivot ratio" in n)
    shown = re.search(r"LU pivot ratio ([0-9.e+-]+)\)", note)
    assert shown is not None and shown.group(1) == f"{diag.min() / diag.max():.2e}"
    # The run kept the factor for the global solve; it still solves.
    x = run.equilibrium_lu().solve(-model.load_matrix())
    np.testing.assert_allclose(A @ x, -model.load_matrix(), atol=1e-9)


def _defective_pratt(panels: int) -> dict:
    """Square A with a mechanism: panel 2 loses its diagonal, panel 3 gets a second one (the
    LU does not fail outright, its pivot ratio shows the singularity)."""
    case = pratt(panels, load=3.0)
    del case["members"]["U1L2"]
    case["members"]["L2U3"] = ["L2", "U3"]
    return case


@pytest.mark.parametrize("defective", [False, True])
def test_screen_with_a_child_equals_the_screen_in_one_process(
    monkeypatch: pytest.MonkeyPatch, defective: bool
) -> None:
    """The square screen with the pivot ratio read in a child and all in one process: the same
    result, figure for figure, without a warning, sound or defective (a mechanism found by the
    pivot ratio, with no conditioning figure); the conditioning estimate is the sigma ratio of a
    dense SVD to the accuracy of its power iterations."""
    model = make_model(_defective_pratt(40) if defective else pratt(40, load=3.0))
    # The child reads the ratio only where the factor's storage cannot be read in place
    # (verify.analysis.lu_factors): make it so, for the child's reading to be compared.
    monkeypatch.setattr(lu_factors, "_OBJECT_SIZE", 0)
    results = []
    for serial in (False, True):
        if serial:
            monkeypatch.setenv(SERIAL_ENV, "1")
        else:
            monkeypatch.delenv(SERIAL_ENV, raising=False)
            # the comparison needs the forked reading: where fork() is not allowed this fails
            assert fork_allowed(), "fork() not allowed here: the forked reading would not run"
        with warnings.catch_warnings():
            warnings.simplefilter("error")
            results.append(solve_stability(model, dense_limit=10, run=AnalysisRun(model)))
    forked, alone = results
    assert forked.method == alone.method == "sparse-screen"
    assert forked.as_dict() == alone.as_dict()
    assert forked.classification is (
        Classification.UNSTABLE if defective else Classification.STABLE_DETERMINATE
    )
    if defective:
        assert forked.conditioning_ratio is None
    else:
        sigma = np.linalg.svd(AnalysisRun(model).equilibrium_matrix().toarray(), compute_uv=False)
        assert forked.conditioning_ratio == pytest.approx(sigma.min() / sigma.max(), rel=0.05)
