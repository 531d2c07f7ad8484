"""The sparse stability screen reads the LU pivot ratio of the factor the run keeps in a child
process (so the kept factor does not carry scipy's copies of L and U): the figure is the one
scipy's own factorisation of the same matrix gives, with or without a child process.
"""

from __future__ import annotations

import re

import numpy as np
import pytest
import scipy.sparse.linalg as spla
from trussgen import make_model, pratt

from verify.analysis.run import AnalysisRun, lu_ordering
from verify.analysis.stability import Classification, solve_stability
from verify.forking import SERIAL_ENV


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
