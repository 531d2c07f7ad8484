"""The Model's leaner builds against plain readings: the load matrix (one array read from the load
vectors, joints looked up in the plain index) against a loop over every load, and the id lists
(read once, copied per call) against the tuples. Hypothesis draws the models."""

from __future__ import annotations

import math

from hypothesis import given, settings
from hypothesis import strategies as st

from verify.model import Combination, Joint, LoadCase, Member, Model, Reaction, Units
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
