"""The Model's leaner builds against plain readings: the load matrix (one array read from the load
vectors, joints looked up in the plain index) against a loop over every load, and the id lists
(read once, copied per call) against the tuples. Hypothesis draws the models."""

from __future__ import annotations

import dataclasses
import math
import pickle
from pathlib import Path

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.case import read_case
from verify.model import (
    SINGLE_READS,
    BulkJoints,
    BulkLoads,
    BulkMembers,
    Combination,
    Joint,
    LoadCase,
    Member,
    Model,
    Reaction,
    Units,
)
from verify.units import Dimension, lookup_unit

UNITS = Units(lookup_unit("m", Dimension.LENGTH), lookup_unit("kN", Dimension.FORCE))
NUMBERS = st.sampled_from([0.0, -0.0, 1.0, -2.5, 1e-300, 3e11]) | st.floats(-1e6, 1e6)


@st.composite
def models(draw: st.DrawFn) -> Model:
    dim = draw(st.sampled_from([2, 3]))
    n = draw(st.integers(2, 8))
    joints = tuple(Joint(f"J{k}", tuple(float(k + a) for a in range(dim))) for k in range(n))
    members = tuple(Member(f"M{k}", f"J{k}", f"J{k + 1}") for k in range(n - 1))
    cases = []
    for c in range(draw(st.integers(1, 3))):
        loaded = draw(st.lists(st.integers(0, n - 1), unique=True, max_size=n))
        vectors = [tuple(draw(NUMBERS) for _ in range(dim)) for _ in loaded]
        cases.append(
            LoadCase(f"case{c}", {f"J{j}": v for j, v in zip(loaded, vectors, strict=True)})
        )
    combos = []
    for c in range(draw(st.integers(0, 2))):
        factors = {case.name: draw(st.floats(-2, 2)) for case in cases[: c + 1]}
        combos.append(Combination(f"combo{c}", factors))
    support = Reaction("J0", tuple(1.0 if a == 0 else 0.0 for a in range(dim)), "x")
    return Model(
        "t", UNITS, dim, joints, members, (support,), tuple(cases), tuple(combos), source="t"
    )


@settings(max_examples=200, deadline=None)
@given(model=models())
def test_the_load_matrix_is_every_load_added_where_it_acts(model: Model) -> None:
    dim, n_cases = model.dim, len(model.cases)
    expected = [[0.0] * (n_cases + len(model.combinations)) for _ in range(model.dofs)]
    for k, case in enumerate(model.cases):
        for joint, vector in case.loads.items():
            for a in range(dim):
                expected[int(joint[1:]) * dim + a][k] += vector[a]
    for c, combo in enumerate(model.combinations):
        for name, factor in combo.factors.items():
            k = [case.name for case in model.cases].index(name)
            for row in expected:
                row[n_cases + c] += factor * row[k]
    got = model.load_matrix().tolist()
    # Bit for bit, the sign of zero included (a -0.0 load adds to the zeros as 0.0).
    assert [[(v, math.copysign(1, v)) for v in row] for row in got] == [
        [(v, math.copysign(1, v)) for v in row] for row in expected
    ]


def test_a_load_vector_of_another_length_is_still_refused() -> None:
    """The matrix is read straight from the vectors only when each has the model's dimension;
    otherwise the array of vectors is made as before, and refuses a ragged one as before."""
    joints = (Joint("A", (0.0, 0.0)), Joint("B", (1.0, 0.0)))
    members = (Member("M", "A", "B"),)
    bad = LoadCase("dead", {"A": (1.0, 2.0), "B": (1.0,)})
    support = Reaction("A", (1.0, 0.0), "x")
    try:
        Model("t", UNITS, 2, joints, members, (support,), (bad,))
    except ValueError:
        pass
    else:
        raise AssertionError("a load of one component in a 2D model was accepted")


@settings(max_examples=50, deadline=None)
@given(model=models())
def test_id_lists_are_the_tuples_ids_and_each_callers_own(model: Model) -> None:
    for ids, items in ((model.member_ids, model.members), (model.joint_ids, model.joints)):
        assert ids == [item.id for item in items]
        ids.append("changed by a caller")
    assert model.member_ids == [m.id for m in model.members]
    assert model.joint_ids == [j.id for j in model.joints]


# -- joints and members of tables read in bulk, made when first read ----------------------------
@st.composite
def bulk_tables(draw: st.DrawFn) -> tuple[BulkJoints, BulkMembers, int]:
    dim = draw(st.sampled_from([2, 3]))
    n = draw(st.integers(2, 9))
    ids = draw(st.lists(st.text(min_size=1, max_size=5), min_size=n, max_size=n, unique=True))
    xyz = np.array(draw(st.lists(NUMBERS, min_size=n * dim, max_size=n * dim))).reshape(n, dim)
    b = draw(st.integers(0, 12))
    ends = np.array(draw(st.lists(st.integers(0, n - 1), min_size=2 * b, max_size=2 * b)))
    ends = ends.reshape(b, 2).astype(np.int64)
    names = draw(st.lists(st.text(min_size=1, max_size=5), min_size=b, max_size=b, unique=True))
    ea = draw(st.none() | st.floats(1.0, 1e9))
    return BulkJoints(ids, xyz), BulkMembers(names, ids, ends, ea), dim


def _as_tuples(joints: BulkJoints, members: BulkMembers) -> tuple[tuple, tuple]:
    """The tuples the careful reader makes of the same rows, one item at a time."""
    made_joints = tuple(
        Joint(i, tuple(float(v) for v in row))
        for i, row in zip(joints.ids(), joints.xyz, strict=True)
    )
    ids = joints.ids()
    made_members = tuple(
        Member(m, ids[a], ids[b], members.ea)
        for m, (a, b) in zip(members.ids(), members.ends.tolist(), strict=True)
    )
    return made_joints, made_members


@settings(max_examples=150, deadline=None)
@given(tables=bulk_tables())
def test_bulk_items_read_like_the_tuples_they_stand_for(
    tables: tuple[BulkJoints, BulkMembers, int],
) -> None:
    joints, members, _ = tables
    for lazy, made in zip((joints, members), _as_tuples(joints, members), strict=True):
        assert len(lazy) == len(made) and lazy._all is None  # the length makes no item
        # Read by position, one at a time (negative positions too), before any tuple is made.
        for k in range(-len(made), len(made)):
            assert lazy[k] == made[k] and type(lazy[k]) is type(made[k])
        assert lazy._all is None
        for outside in (len(made), -len(made) - 1):
            try:
                lazy[outside]
            except IndexError:
                pass
            else:
                raise AssertionError(f"position {outside} of {len(made)} items read")
        assert lazy.ids() == [item[0] for item in made] and lazy._all is None
        assert lazy == made and made == lazy and hash(lazy) == hash(made)
        assert list(lazy) == list(made) and lazy[:3] == made[:3] and repr(lazy) == repr(made)
        if made:
            assert lazy[-1] == made[-1] and made[0] in lazy
        assert pickle.loads(pickle.dumps(lazy)) == made
        assert lazy != made + (made[0],) if made else lazy == ()


@settings(max_examples=100, deadline=None)
@given(tables=bulk_tables())
def test_a_model_of_bulk_items_is_the_model_of_their_tuples(
    tables: tuple[BulkJoints, BulkMembers, int],
) -> None:
    joints, members, dim = tables
    made_joints, made_members = _as_tuples(joints, members)
    support = Reaction(joints.ids()[0], tuple(1.0 if a == 0 else 0.0 for a in range(dim)), "x")
    loads = LoadCase("dead", {joints.ids()[-1]: tuple(1.0 for _ in range(dim))})
    parts = ("t", UNITS, dim)
    lazy = Model(*parts, joints, members, (support,), (loads,))
    made = Model(*parts, made_joints, made_members, (support,), (loads,))
    assert lazy == made
    assert lazy.joint_ids == made.joint_ids and lazy.member_ids == made.member_ids
    assert dict(lazy.joint_index) == dict(made.joint_index)
    assert dict(lazy.member_index) == dict(made.member_index)
    assert lazy.has_stiffness == made.has_stiffness
    assert lazy.members_without_stiffness() == made.members_without_stiffness()
    assert np.array_equal(lazy.member_EA(), made.member_EA(), equal_nan=True)
    assert np.array_equal(  # the careful reader's list, missing EA as NaN
        made.member_EA(),
        np.array([math.nan if m.EA is None else m.EA for m in made_members], dtype=float),
        equal_nan=True,
    )
    for name in ("xyz", "ends_index", "lengths", "unit_vectors", "applied_loads"):
        assert np.array_equal(getattr(lazy, name), getattr(made, name), equal_nan=True), name
    # A variant made by dataclasses.replace keeps the bulk items and reads the same arrays.
    variant = dataclasses.replace(lazy, reactions=())
    assert variant.joints is joints and np.array_equal(variant.xyz, made.xyz, equal_nan=True)
    assert np.array_equal(variant.ends_index, made.ends_index)
    ids = lazy.member_ids
    ids.append("a caller's own list")
    assert lazy.member_ids == made.member_ids


def test_reading_a_large_case_makes_no_joint_or_member(tmp_path: Path) -> None:
    """The plain tables of a large case give bulk items, and a model's ids, indexes, arrays and
    stiffness flag are read without making them."""
    from test_case_scale_members import _files, _members

    import verify.io.case as case_module

    ids = [f"J{k}" for k in range(12)]
    for name, text in _files(ids, _members(ids, ["M"], [])).items():
        (tmp_path / name).write_text(text, encoding="utf-8")
    saved = case_module.BULK_MIN_ROWS
    case_module.BULK_MIN_ROWS = 0
    try:
        model = read_case(tmp_path / "case.toml")
    finally:
        case_module.BULK_MIN_ROWS = saved
    assert isinstance(model.joints, BulkJoints) and isinstance(model.members, BulkMembers)
    assert model.joint_ids == ids and len(model.member_ids) == len(model.members) == 21
    assert model.has_stiffness is False and len(model.members_without_stiffness()) == 21
    assert np.isnan(model.member_EA()).all() and len(model.member_EA()) == 21
    assert model.joints._all is None and model.members._all is None
    loads = model.cases[0].loads
    assert isinstance(loads, BulkLoads) and loads._dict is None  # the load matrix read them
    assert dict(loads) == {"J1": (0.0, -10.0)}
    assert model.members[0] == Member("M0", "J0", "J1", None)  # made when read


def test_items_read_often_by_position_are_made_once() -> None:
    """Past SINGLE_READS reads by position the whole tuple is made, and read from then on."""
    ids = [f"J{k}" for k in range(5)]
    joints = BulkJoints(ids, np.arange(10.0).reshape(5, 2))
    for k in range(SINGLE_READS):
        assert joints[k % 5] == Joint(ids[k % 5], (2.0 * (k % 5), 2.0 * (k % 5) + 1))
    assert joints._all is None
    assert joints[4] == Joint("J4", (8.0, 9.0)) and joints._all is not None
    assert joints[2] is joints[2]  # the made tuple's own item


@settings(max_examples=150, deadline=None)
@given(tables=bulk_tables(), data=st.data())
def test_bulk_loads_read_like_the_dict_they_stand_for(
    tables: tuple[BulkJoints, BulkMembers, int], data: st.DataObject
) -> None:
    joints, _, dim = tables
    ids = joints.ids()
    rows = data.draw(st.lists(st.integers(0, len(ids) - 1), unique=True, max_size=len(ids)))
    values = data.draw(st.lists(NUMBERS, min_size=len(rows) * dim, max_size=len(rows) * dim))
    vectors = np.array(values, dtype=float).reshape(len(rows), dim)
    lazy = BulkLoads(ids, np.array(rows, dtype=np.int64), vectors)
    made = {
        ids[r]: tuple(float(v) for v in vector) for r, vector in zip(rows, vectors, strict=True)
    }
    assert len(lazy) == len(made) and lazy._dict is None  # the length makes no vector
    assert lazy == made and made == lazy and list(lazy.items()) == list(made.items())
    assert pickle.loads(pickle.dumps(lazy)) == made and repr(lazy) == repr(made)
    # The load matrix of a model with these loads: the same bits as with the dict.
    support = Reaction(ids[0], tuple(1.0 if a == 0 else 0.0 for a in range(dim)), "x")
    fresh = BulkLoads(ids, np.array(rows, dtype=np.int64), vectors)
    parts = ("t", UNITS, dim, joints, (), (support,))
    combo = (Combination("c", {"dead": 1.5}),)
    with_bulk = Model(*parts, (LoadCase("dead", fresh),), combo)
    with_dict = Model(*parts, (LoadCase("dead", made),), combo)
    assert fresh._dict is None  # read as positions and vectors
    got, expected = with_bulk.load_matrix(), with_dict.load_matrix()
    assert got.tobytes() == expected.tobytes()
    assert with_bulk == with_dict
