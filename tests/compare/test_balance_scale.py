"""The joints x members incidence matrix of the balance check (verify.compare.balance._incidence)
built column by column gives the matrix the coordinate form gave (the former function, copied
below): the same rows, column order, values and degrees, members with both ends at one joint
included, on random member lists and on a generated truss."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import scipy.sparse as sp
from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt

from verify.compare.balance import _incidence


def former_incidence(model):
    b, nj, ends = len(model.members), len(model.joints), model.ends_index
    incidence = sp.csr_matrix(
        (np.ones(2 * b), (np.concatenate([ends[:, 0], ends[:, 1]]), np.tile(np.arange(b), 2))),
        shape=(nj, b),
    )
    return incidence, np.asarray(incidence.sum(axis=1)).ravel()


def assert_same(model) -> None:
    (got, degree), (expected, expected_degree) = _incidence(model), former_incidence(model)
    assert got.shape == expected.shape
    assert np.array_equal(got.indptr, expected.indptr)
    assert np.array_equal(got.indices, expected.indices)
    assert np.array_equal(got.data, expected.data)
    assert np.array_equal(degree, expected_degree)
    values = np.random.default_rng(1).normal(size=got.shape[1])
    assert np.array_equal(got @ values, expected @ values)  # same sums, same order


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 30), st.data())
def test_random_member_lists_as_the_coordinate_form(joints, data):
    b = data.draw(st.integers(0, 60))
    ends = np.array(
        data.draw(
            st.lists(
                st.tuples(st.integers(0, joints - 1), st.integers(0, joints - 1)),
                min_size=b,
                max_size=b,
            )
        ),
        dtype=np.int64,
    ).reshape(b, 2)
    assert_same(SimpleNamespace(members=[None] * b, joints=[None] * joints, ends_index=ends))


def test_a_generated_truss_as_the_coordinate_form():
    assert_same(make_model(pratt(400, d=3.0, h=4.0, case="dead")))
