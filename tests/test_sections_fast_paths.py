"""Fast paths of the section route held to the slower forms they replace (hypothesis).

* Direction classes of the cut normals: `_row_classes` against np.unique(axis=0), and the
  cut normals `_directions` against the former implementation (np.unique over rows and
  np.add.at), copied below as the reference; both must agree to the last bit.
* Cut records read one force array shared by every batch (no copy per batch): each record's
  known forces must equal the final forces of those members, and each known member must have
  been solved by an earlier cut (the invariant that makes sharing the array exact).
* Row norms of 2 or 3 columns: `_row_norm` against np.linalg.norm(axis=1), bit for bit.
* A result pickled and read back (the forked child's path) gives the same records.
"""

from __future__ import annotations

import itertools
import pickle
import random

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt, random_simple_truss, warren

from verify.analysis.sections import (
    MAX_DIRECTIONS,
    _canonical,
    _directions,
    _row_classes,
    _row_norm,
    solve_sections,
)


def _directions_reference(model):
    """The cut normals as computed before the fast path (np.unique over rows, np.add.at)."""
    d = model.dim
    cap = MAX_DIRECTIONS[d]
    u = _canonical(model.unit_vectors[np.isfinite(model.unit_vectors).all(axis=1)])
    common = np.zeros((0, d))
    if len(u):
        keys, inverse, counts = np.unique(
            np.round(u, 6), axis=0, return_inverse=True, return_counts=True
        )
        top = np.argsort(-counts, kind="stable")[:cap]
        sums = np.zeros((len(keys), d))
        np.add.at(sums, inverse.ravel(), u)
        common = sums[top] / np.linalg.norm(sums[top], axis=1)[:, None]
    candidates = [np.eye(d)]
    if d == 2:
        candidates.append(np.column_stack([-common[:, 1], common[:, 0]]))
        candidates.append(common)
    else:
        candidates.append(common)
        pairs = [np.cross(a, b) for a, b in itertools.combinations(common[:4], 2)]
        if pairs:
            candidates.append(np.array(pairs))
    allc = _canonical(np.vstack(candidates))
    _, first = np.unique(np.round(allc, 6), axis=0, return_index=True)
    return allc[np.sort(first)][:cap]


def _assert_same_classes(r):
    count, inverse, counts = _row_classes(r)
    keys, ref_inverse, ref_counts = np.unique(r, axis=0, return_inverse=True, return_counts=True)
    assert count == len(keys)
    assert np.array_equal(inverse, ref_inverse.ravel())
    assert np.array_equal(counts, ref_counts)


# values as rounded unit-vector components are: few distinct ones, signed zeros among them
components = st.one_of(
    st.sampled_from([0.0, -0.0, 1.0, -1.0, 0.5, 0.6, 0.8, -0.6, 0.707107, -0.707107]),
    st.floats(-1.0, 1.0).map(lambda x: round(x, 6)),
)


@settings(max_examples=200, deadline=None)
@given(st.integers(1, 3), st.data())
def test_row_classes_equal_unique(d, data):
    """Rounded rows: the packed codes give np.unique's classes, in its order."""
    n = data.draw(st.integers(0, 60))
    rows = data.draw(st.lists(st.lists(components, min_size=d, max_size=d), min_size=n, max_size=n))
    r = np.array(rows, dtype=float).reshape(n, d)
    _assert_same_classes(r)


@settings(max_examples=100, deadline=None)
@given(st.lists(st.floats(-1e9, 1e9, allow_subnormal=True), min_size=1, max_size=40))
def test_row_classes_fallback_on_unrounded_rows(values):
    """Rows not rounded to 6 decimals (distinct rows may share a code, or the code would
    overflow): the check falls back to np.unique, with the same answer."""
    r = np.array(values + [1e-7, 2e-7, 3e18, -3e18], dtype=float).reshape(-1, 1)
    _assert_same_classes(r)
    _assert_same_classes(np.column_stack([r, r[::-1]]))


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10**6), st.integers(3, 40))
def test_directions_equal_reference(seed, joints):
    """Cut normals of random trusses: bit for bit those of the former implementation."""
    model = make_model(random_simple_truss(random.Random(seed), joints))
    assert np.array_equal(_directions(model), _directions_reference(model))


def test_directions_equal_reference_parallel_chords():
    for model in (make_model(pratt(load=1.0)), make_model(warren(7))):
        assert np.array_equal(_directions(model), _directions_reference(model))


def _records(solution):
    return [
        (
            c.target,
            c.cut_members,
            c.known_members,
            c.method,
            c.moment_point,
            c.axis,
            c.kept_ends,
            c.eliminated,
            c.moment_joint,
            c.known_forces,
            c.uses_reactions,
            c.straight,
            c.kept_joints,
        )
        for c in solution.cuts
    ]


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 10**6), st.integers(3, 16))
def test_known_forces_are_final_and_solved_earlier(seed, joints):
    """Each cut carries known members solved by earlier cuts, with their final forces: so one
    shared force array gives every record what a snapshot per batch gave."""
    model = make_model(random_simple_truss(random.Random(seed), joints))
    solution = solve_sections(model)
    position = {c.target: k for k, c in enumerate(solution.cuts)}
    forces = solution.forces.member_forces
    for k, cut in enumerate(solution.cuts):
        for member, carried in zip(cut.known_members, cut.known_forces, strict=True):
            assert position[member] < k
            assert carried == tuple(forces[model.member_index[member]].tolist())


def test_pickled_solution_gives_the_same_records():
    model = make_model(pratt(load=1.0))
    solution = solve_sections(model)
    back = pickle.loads(pickle.dumps(solution, protocol=pickle.HIGHEST_PROTOCOL))
    assert _records(back) == _records(solution)
    assert back.unreached == solution.unreached
    assert np.array_equal(back.forces.member_forces, solution.forces.member_forces)


@settings(max_examples=200, deadline=None)
@given(
    st.integers(2, 3),
    st.lists(
        st.floats(allow_nan=True, allow_infinity=True, allow_subnormal=True),
        min_size=0,
        max_size=90,
    ),
)
def test_row_norm_equals_linalg_norm(d, values):
    """Any finite, infinite, NaN or subnormal components: the same bits as np.linalg.norm."""
    n = len(values) // d
    v = np.array(values[: n * d], dtype=float).reshape(n, d)
    with np.errstate(over="ignore", invalid="ignore"):  # squares of huge values overflow (both)
        assert np.array_equal(_row_norm(v), np.linalg.norm(v, axis=1), equal_nan=True)
    rng = np.random.default_rng(len(values))
    w = rng.standard_normal((5000, d)) * np.exp(rng.standard_normal((5000, d)) * 20)
    assert np.array_equal(_row_norm(w), np.linalg.norm(w, axis=1))
