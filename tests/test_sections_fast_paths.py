"""Fast paths of the section route held to the slower forms they replace (hypothesis).

* Direction classes of the cut normals: `_row_classes` against np.unique(axis=0), and the
  cut normals `_directions` against the former implementation (np.unique over rows and
  np.add.at), copied below as the reference; both must agree to the last bit.
* Cut records read one force array shared by every batch (no copy per batch): each record's
  known forces must equal the final forces of those members, and each known member must have
  been solved by an earlier cut (the invariant that makes sharing the array exact).
* Row norms of 2 or 3 columns: `_row_norm` against np.linalg.norm(axis=1), bit for bit.
* Non-straight free bodies: `_Solver._moved_body` against the former check, on every candidate.
* A result pickled and read back (the forked child's path) gives the same records.
"""

from __future__ import annotations

import itertools
import pickle
import random

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt, random_simple_truss, truss_case, warren

from verify.analysis.sections import (
    MAX_CROSSING,
    MAX_DIRECTIONS,
    MAX_UNKNOWNS,
    _canonical,
    _directions,
    _row_classes,
    _row_norm,
    _Solver,
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


def _moved_body_reference(self, group, known, stops, side_cost, side_sup, g, base, moved, to_right):
    """The non-straight free body check as written before the fast path (checks in order)."""
    eng = self.eng
    ends = self.ends_list
    incidence = self.incidence
    moved_set = set(moved)

    def left(j):
        return (group[j] <= g) != (j in moved_set)

    incident = set()
    for j in moved:
        side_j = left(j)
        attached = False
        for m in incidence[j]:
            incident.add(m)
            a, b = ends[m]
            other = b if a == j else a
            if not attached and other not in moved_set and left(other) == side_j:
                attached = True
        if not attached:
            return None
    members = [m for m in base if m not in incident]
    members += [m for m in incident if left(ends[m][0]) != left(ends[m][1])]
    if not members or len(members) > MAX_CROSSING[eng.d]:
        return None
    unknown = sum(1 for m in members if not known[m])
    if unknown == 0 or unknown > MAX_UNKNOWNS[eng.d]:
        return None
    sign = -1 if to_right else 1
    shift_cost = sign * sum(self.cost_list[j] for j in moved)
    shift_sup = sign * sum(self.support_list[j] for j in moved)
    cost_l, cost_r = side_cost[0][g] + shift_cost, side_cost[1][g] - shift_cost
    sup_l, sup_r = side_sup[0][g] + shift_sup, side_sup[1][g] - shift_sup
    n_left = stops[g] + sign * len(moved)
    if n_left <= 0 or n_left >= eng.nj:
        return None
    if eng.first is not None:
        pin_l = left(eng.pin) if eng.pin >= 0 else False
        keep_left = cost_l < cost_r or (cost_l == cost_r and not pin_l)
    else:
        if sup_l and sup_r:
            return None
        keep_left = sup_l == 0 and (sup_r > 0 or cost_l <= cost_r)
    members.sort()
    kept = [ends[m][0] if left(ends[m][0]) == keep_left else ends[m][1] for m in members]
    return members, kept, keep_left, g, moved, to_right


def _crossed_panels(panels, h, supports, loads):
    """Parallel chords with both diagonals in every panel (and K-like extras): straight cuts
    stall, so the non-straight free bodies are searched."""
    joints = {}
    for i in range(panels + 1):
        joints[f"L{i}"] = [4.0 * i, 0.0]
        joints[f"U{i}"] = [4.0 * i, h]
    members = []
    for i in range(panels):
        members += [(f"L{i}", f"L{i + 1}"), (f"U{i}", f"U{i + 1}")]
        members += [(f"L{i}", f"U{i + 1}"), (f"U{i}", f"L{i + 1}")]
    members += [(f"L{i}", f"U{i}") for i in range(panels + 1)]
    table = {f"L{i}": [fx, fy] for i, (fx, fy) in enumerate(loads[: panels + 1])}
    return truss_case(joints, members, supports, {"P": table})


@settings(max_examples=30, deadline=None)
@given(
    st.integers(2, 9),
    st.floats(0.5, 8.0),
    st.sampled_from(["determinate", "two pins", "three pins"]),
    st.lists(st.tuples(st.floats(-5, 5), st.floats(-20, 5)), min_size=10, max_size=10),
    st.integers(0, 10**6),
    st.integers(3, 14),
)
def test_moved_body_equals_reference(panels, h, kind, loads, seed, joints):
    """Every non-straight candidate of crossed-diagonal trusses (reactions found first, or not:
    over-supported) and of random simple trusses: the same answer as the former check."""
    supports = {"L0": ["x", "y"], f"L{panels}": ["y"]}
    if kind != "determinate":
        supports[f"L{panels}"] = ["x", "y"]
    if kind == "three pins":
        supports[f"L{panels // 2}"] = ["x", "y"]
    models = [
        make_model(_crossed_panels(panels, h, supports, loads)),
        make_model(random_simple_truss(random.Random(seed), joints)),
    ]
    calls = []
    fast = _Solver._moved_body

    def both(self, *args):
        got = fast(self, *args)
        assert got == _moved_body_reference(self, *args)
        calls.append(got is not None)
        return got

    try:
        _Solver._moved_body = both
        for model in models:
            solve_sections(model)
    finally:
        _Solver._moved_body = fast
    assert calls  # the candidates were examined


def _all_sweeps_first(self, directions, sweeps):
    """The former order: every direction's sweep built before the first cut."""
    if not sweeps:
        sweeps.extend(self.eng.sweep(normal) for normal in directions)
    yield from sweeps


@settings(max_examples=30, deadline=None)
@given(st.integers(0, 10**6), st.integers(3, 16))
def test_sweeps_built_when_reached_give_the_same_cuts(seed, joints):
    """Sweeps built only when reached (none once every member is known) give the records, forces
    and unreached members of sweeps all built first; random simple trusses and a Pratt truss."""
    import verify.analysis.sections as sections

    for model in (
        make_model(random_simple_truss(random.Random(seed), joints)),
        make_model(pratt(panels=2 * (joints // 2 + 1), load=1.0)),
    ):
        lazy = solve_sections(model)
        original = sections._Solver._sweeps_in_turn
        sections._Solver._sweeps_in_turn = _all_sweeps_first
        try:
            eager = solve_sections(model)
        finally:
            sections._Solver._sweeps_in_turn = original
        assert _records(lazy) == _records(eager)
        assert lazy.unreached == eager.unreached
        assert np.array_equal(lazy.forces.member_forces, eager.forces.member_forces, equal_nan=True)


def test_a_pratt_truss_is_solved_before_its_last_directions_are_swept():
    """The saving itself: a Pratt truss is solved by its first three cut directions of six."""
    model = make_model(pratt(panels=8, load=1.0))
    solver = _Solver(model)
    solver.run()
    assert solver.known.all()
    assert len(solver.sweeps) == 3 < len(_directions(model)) == 6
