"""U's diagonal and the fill read from a SuperLU factor's own storage (verify.analysis
.lu_factors) are bit for bit what scipy's copies of the factors give (lu.U.diagonal(),
lu.L.nnz + lu.U.nnz), on random sparse matrices with every ordering the analyses use, and where
the layout check fails the copies are read instead."""

from __future__ import annotations

import ctypes
import platform

import numpy as np
import pytest
import scipy.sparse as sp
import scipy.sparse.linalg as spla
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt

from verify.analysis import lu_factors, stability
from verify.analysis.lu_factors import (
    factor_fill,
    splu_checked,
    u_diagonal,
    u_diagonal_in_place,
)
from verify.analysis.run import AnalysisRun, pivot_ratio
from verify.analysis.stability import Classification, solve_stability

in_place = pytest.mark.skipif(
    platform.python_implementation() != "CPython", reason="read in place on CPython only"
)
_CACHED_U = 112  # offset of SuperLUObject.cached_U (scipy _superluobject.h), after perm_c
ORDERINGS = ("COLAMD", "MMD_ATA", "MMD_AT_PLUS_A", "NATURAL")


@st.composite
def factors(draw: st.DrawFn) -> spla.SuperLU:
    """A factor of a random sparse n x n matrix (small integers, so that elimination often
    cancels to stored zeros, or decimals), partial pivoting, or symmetric mode without pivoting
    on a symmetric positive definite one."""
    n = draw(st.integers(1, 40))
    seed = draw(st.integers(0, 2**32 - 1))
    rng = np.random.default_rng(seed)
    M = sp.random(n, n, density=draw(st.floats(0.02, 0.6)), random_state=rng, format="csc")
    if draw(st.booleans()):
        M.data = np.round(M.data * 4.0)
    M = sp.csc_matrix(M + sp.eye(n) * draw(st.sampled_from([0.0, 1.0, 2.5])))
    if draw(st.booleans()):
        M = sp.csc_matrix(M + M.T)
    options = {}
    if draw(st.booleans()):
        # Symmetric mode without pivoting, as the stiffness solve factors K: only on a symmetric
        # positive definite matrix, as K is (SuperLU divides by a zero pivot unchecked and has
        # crashed the test process on the random matrices drawn above).
        M = sp.csc_matrix(M @ M.T + sp.eye(n))
        options = {"diag_pivot_thresh": 0.0, "options": {"SymmetricMode": True}}
    M.eliminate_zeros()
    try:  # (an empty row or column is refused before SuperLU, which mishandles it)
        return splu_checked(M, permc_spec=draw(st.sampled_from(ORDERINGS)), **options)
    except RuntimeError:  # exactly singular: no factor to read
        return spla.splu(sp.csc_matrix(sp.eye(n)))


@in_place
@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(factors())
def test_read_in_place_equals_scipys_copies(lu: spla.SuperLU) -> None:
    assert u_diagonal_in_place(lu) is not None
    diag = u_diagonal(lu)
    fill = factor_fill(lu)
    np.testing.assert_array_equal(diag, lu.U.diagonal())  # read in place before the copies
    assert fill == lu.L.nnz + lu.U.nnz


@in_place
def test_stored_zeros_are_not_counted() -> None:
    """Natural order: eliminating row 1 cancels the (2, 3) entry to a stored zero, which scipy's
    copy drops (its fill is 10 of the 12 values stored)."""
    A = sp.csc_matrix(np.array([[1.0, 1.0, 1.0], [1.0, 2.0, 1.0], [1.0, 1.0, 2.0]]))
    lu = spla.splu(A, permc_spec="NATURAL", diag_pivot_thresh=0.0)
    assert u_diagonal_in_place(lu) is not None and lu.nnz == 12
    assert factor_fill(lu) == 10 == lu.L.nnz + lu.U.nnz
    np.testing.assert_array_equal(u_diagonal(lu), [1.0, 1.0, 1.0])


def test_an_unexpected_layout_reads_the_copies(monkeypatch: pytest.MonkeyPatch) -> None:
    A = sp.csc_matrix(np.array([[4.0, 1.0, 0.0], [1.0, 3.0, 1.0], [0.0, 2.0, 5.0]]))
    monkeypatch.setattr(lu_factors, "_OBJECT_SIZE", 0)  # not the object size checked for
    lu = spla.splu(A)
    assert u_diagonal_in_place(lu) is None
    np.testing.assert_array_equal(u_diagonal(lu), spla.splu(A).U.diagonal())
    assert factor_fill(lu) == lu.L.nnz + lu.U.nnz


@pytest.mark.parametrize("layout_known", [True, False])
def test_the_kept_factor_leaves_no_copies_and_gives_scipys_ratio(
    monkeypatch: pytest.MonkeyPatch, layout_known: bool
) -> None:
    """The screen's pivot ratio of the factor the run keeps, read in place (or, where the layout
    is not the one checked for, in a child process or here), is scipy's own figure."""
    if not layout_known:
        monkeypatch.setattr(lu_factors, "_OBJECT_SIZE", 0)
    model = make_model(pratt(40, load=3.0))
    run = AnalysisRun(model)
    result = solve_stability(model, dense_limit=10, run=run)
    assert result.classification is Classification.STABLE_DETERMINATE
    kept = run.equilibrium_lu()
    reference = spla.splu(run.equilibrium_matrix(), permc_spec="COLAMD")
    diag = np.abs(reference.U.diagonal())
    assert pivot_ratio(kept) == diag.min() / diag.max()
    assert f"LU pivot ratio {diag.min() / diag.max():.2e}" in " ".join(result.notes)
    assert (stability.u_diagonal_in_place(kept) is not None) is layout_known
    if layout_known:  # scipy's cached copy of U (SuperLUObject.cached_U) was never made
        assert ctypes.c_void_p.from_address(id(kept) + _CACHED_U).value is None


def test_an_empty_row_or_column_is_refused_before_superlu(monkeypatch: pytest.MonkeyPatch) -> None:
    """A square matrix with an empty row (a joint direction nothing acts on) or column is
    exactly singular: refused as SuperLU refuses one, without calling SuperLU; a full one is
    factored as before."""
    called = []
    real = spla.splu
    monkeypatch.setattr(spla, "splu", lambda A, **kw: called.append(1) or real(A, **kw))
    empty_row = sp.csc_matrix(np.array([[1.0, 2.0], [0.0, 0.0]]))
    empty_column = sp.csc_matrix(np.array([[1.0, 0.0], [2.0, 0.0]]))
    for A in (empty_row, empty_column):
        with pytest.raises(RuntimeError, match="exactly singular"):
            splu_checked(A, permc_spec="COLAMD")
    assert called == []
    lu = splu_checked(sp.csc_matrix(np.array([[2.0, 1.0], [1.0, 3.0]])), permc_spec="COLAMD")
    assert called == [1]
    np.testing.assert_allclose(lu.solve(np.array([3.0, 4.0])), [1.0, 1.0])


def test_a_row_or_column_of_stored_zeros_is_empty_too(monkeypatch: pytest.MonkeyPatch) -> None:
    """The run factors a 3D A with its members' zero direction cosines stored: a row or column
    holding only stored zeros is as empty as one holding nothing, and refused the same way."""
    called = []
    real = spla.splu
    monkeypatch.setattr(spla, "splu", lambda A, **kw: called.append(1) or real(A, **kw))

    def stored(rows, cols, vals, n=2):
        return sp.csc_matrix((np.array(vals, float), (rows, cols)), shape=(n, n))

    zero_row = stored([0, 0, 1], [0, 1, 1], [1.0, 2.0, 0.0])  # row 1 holds one stored zero
    zero_column = stored([0, 1, 0], [0, 0, 1], [1.0, 2.0, 0.0])  # column 1 likewise
    last_empty = stored([0, 1], [0, 0], [1.0, 2.0])  # nothing at all in the last column
    assert zero_row.nnz == zero_column.nnz == 3  # the zeros are stored, not dropped
    for A in (zero_row, zero_column, last_empty):
        assert A.shape == (2, 2)
        with pytest.raises(RuntimeError, match="exactly singular"):
            splu_checked(A, permc_spec="COLAMD")
    assert called == []
    full = stored([0, 1, 0, 1], [0, 0, 1, 1], [2.0, 1.0, 0.0, 3.0])  # a stored zero, full rank
    np.testing.assert_allclose(
        splu_checked(full, permc_spec="COLAMD").solve(np.array([2.0, 4.0])), [1, 1]
    )


def test_the_3d_matrix_factored_is_a_with_its_zero_cosines_stored() -> None:
    """AnalysisRun.lu_matrix: in 3D the same numbers as A, every member end stored in all three
    directions of its joint; in 2D A itself."""
    from trussgen import make_model, pratt

    from verify.analysis.run import AnalysisRun
    from verify.io.case import build_model

    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {
                "A": [0.0, 0.0, 0.0], "B": [4.0, 0.0, 0.0], "C": [0.0, 4.0, 0.0],
                "D": [1.0, 1.0, 3.0],
            },
            "members": {
                "AB": ["A", "B"], "AC": ["A", "C"], "BC": ["B", "C"],
                "AD": ["A", "D"], "BD": ["B", "D"], "CD": ["C", "D"],
            },
            "supports": {"A": ["x", "y", "z"], "B": ["y", "z"], "C": ["z"]},
            "loads": {"P": {"D": [0.0, 0.0, -10.0]}},
        },
        source="case.toml",
    )  # fmt: skip
    run = AnalysisRun(model)
    A, M = run.equilibrium_matrix(), run.lu_matrix()
    np.testing.assert_array_equal(A.toarray(), M.toarray())
    b = len(model.members)
    assert (np.diff(M.indptr)[:b] == 6).all() and M.nnz > A.nnz  # AB, AC, BC: zeros stored
    planar = AnalysisRun(make_model(pratt(4, load=1.0)))
    assert planar.lu_matrix() is planar.equilibrium_matrix()
