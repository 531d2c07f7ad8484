"""Places.split (the claims' places in parts, for the JSON writer) reads as the places it
splits: joined back per claim, every part gives the text that indexing the claim gives."""

from __future__ import annotations

from array import array

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from verify.io.claims.table import Places

PARTS = (("row ", ", column 'dead'"), ("row ", ", column 'wind \"gust\"'"), ("sheet B row ", ""))


@given(
    st.lists(st.tuples(st.integers(1, 10**7), st.integers(0, len(PARTS) - 1)), min_size=1),
    st.data(),
)
def test_split_joins_to_each_place(claims: list[tuple[int, int]], data: st.DataObject) -> None:
    numbers = array("q", [n for n, _ in claims])
    slots = array("q", [s for _, s in claims])
    given_at = data.draw(st.sets(st.integers(0, len(claims) - 1), max_size=2))
    places = Places(numbers, slots, PARTS, {i: f"cell {i}" for i in given_at})
    picked = np.array(
        data.draw(st.lists(st.integers(0, len(claims) - 1), min_size=1)), dtype=np.int64
    )
    split = places.split(picked)
    if given_at & set(picked.tolist()):
        assert split is None
        return
    assert split is not None
    before, texts, after = split
    rows = len(picked)
    befores = [before] * rows if isinstance(before, str) else before
    afters = [after] * rows if isinstance(after, str) else after
    joined = [b + t + a for b, t, a in zip(befores, texts, afters, strict=True)]
    assert joined == [places[i] for i in picked.tolist()]
    assert isinstance(before, str) == (len({slots[i] for i in picked.tolist()}) == 1)
