"""The balance test of a swapped pair on an indeterminate truss, formed on the two members' joint
rows only, gives the answer of the whole equilibrium matrix (the plain formula: the residual
A t + f at those joints, with the two claims as written and exchanged)."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
from trussgen import make_model, pratt

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.run import AnalysisRun
from verify.compare.diagnose import _swap_restores_balance


def _whole_matrix_answer(model, claimed: np.ndarray, k: int, m1: int, m2: int) -> bool:
    A = assemble_equilibrium(model)[:, : len(model.members)].toarray()
    joints = np.unique(np.concatenate([model.ends_index[m1], model.ends_index[m2]]))
    rows = (joints[:, None] * model.dim + np.arange(model.dim)).ravel()
    loads = model.load_matrix()[rows, k]
    column = np.nan_to_num(claimed[:, k]).copy()
    as_written = np.linalg.norm(A[rows] @ column + loads)
    column[[m1, m2]] = column[[m2, m1]]
    return bool(np.linalg.norm(A[rows] @ column + loads) < 0.5 * as_written)


def test_rows_only_balance_equals_the_whole_matrix() -> None:
    model = make_model(pratt(6))
    rng = np.random.default_rng(7)
    b = len(model.members)
    answers = set()
    for trial in range(40):
        claimed = rng.normal(0.0, 5.0, size=(b, 1))
        claimed[rng.random(b) < 0.1, 0] = np.nan  # members without a claim
        analysis = SimpleNamespace(run=AnalysisRun(model))  # the run's A, as compare gets it
        c = SimpleNamespace(model=model, claimed_matrix=claimed, analysis=analysis)
        for m1, m2 in rng.choice(b, size=(6, 2), replace=True).tolist():
            if m1 == m2:
                continue
            first = (0, SimpleNamespace(member=model.member_ids[m1]))
            second = (1, SimpleNamespace(member=model.member_ids[m2]))
            expected = _whole_matrix_answer(model, claimed, 0, m1, m2)
            got = _swap_restores_balance(c, model.load_names[0], first, second)
            assert got == expected, (trial, m1, m2)
            answers.add(got)
    assert answers == {True, False}  # both outcomes were exercised
