"""The JSON writer's shortcuts of session 8, each held to the code it replaced:

- float_texts mends only the numbers of the two decades orjson lays out unlike repr (1e-9 to
  1e-4), written again on their own: held to float.__repr__ (json.dumps' text) on arrays drawn
  mostly from those decades and their edges, beside NaN, infinities, signed zeros and huge and
  tiny values;
- _plain_text looks at an ASCII text as bytes: held to the pattern it stands for;
- Places.split writes the row numbers with orjson: held to str() for every width of the
  compact arrays that hold them.
"""

from __future__ import annotations

from array import array

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.claims.table import Places
from verify.report.json_out import NEEDS_ESCAPE, _plain, _plain_text, float_texts

# the layout edges of orjson and repr, each with its neighbours on both sides
EDGES = [1e-9, 1e-5, 1e-4, 1e16, 1e-10, 1e-6, 5e-5, 9.999999999999999e-05]
EDGE_VALUES = [
    float(np.nextafter(edge, toward)) for edge in EDGES for toward in (0.0, edge, np.inf)
]


def json_text(value: float) -> str:
    """What json.dumps writes for a float (NaN and infinities as null, as the writer does)."""
    return repr(value) if np.isfinite(value) else "null"


in_mended_decades = st.floats(1e-9, 1e-4, exclude_max=True).flatmap(
    lambda v: st.sampled_from([v, -v])
)
values = st.one_of(
    in_mended_decades,
    in_mended_decades,  # drawn twice as often: the values the shortcut mends
    st.sampled_from(EDGE_VALUES + [-v for v in EDGE_VALUES]),
    st.sampled_from([0.0, -0.0, float("nan"), float("inf"), float("-inf"), 5e-324, 1.7e308]),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(1e-12, 1e-3).map(lambda v: round(v, 12)),  # near rounding steps of 12 places
)


@settings(max_examples=300, deadline=None)
@given(st.lists(values, max_size=80))
def test_float_texts_are_json_dumps_texts_in_and_around_the_mended_decades(
    drawn: list[float],
) -> None:
    array_ = np.array(drawn, dtype=np.float64)
    assert float_texts(array_) == [json_text(v) for v in drawn]


def test_a_chunk_like_a_pratt_trusss_columns() -> None:
    """Forces of every size with a sixth of round-off and differences in the decades."""
    rng = np.random.default_rng(8)
    forces = rng.normal(scale=1e5, size=12_000)
    forces[rng.choice(forces.size, 2_000, replace=False)] = rng.normal(scale=1e-7, size=2_000)
    forces[rng.choice(forces.size, 600, replace=False)] = rng.uniform(-1e-4, 1e-4, size=600)
    forces[::997] = np.nan
    forces[5::991] = -0.0
    assert float_texts(forces) == [json_text(v) for v in forces.tolist()]


texts = st.text(st.characters(codec="utf-8"), max_size=30)
ascii_texts = st.text(st.characters(max_codepoint=127), max_size=30)


@given(st.lists(st.one_of(texts, ascii_texts), max_size=8))
def test_plain_is_the_escape_pattern(column: list[str]) -> None:
    joined = "".join(column)
    assert _plain_text(joined) == (NEEDS_ESCAPE.search(joined) is None)
    assert _plain(column, column[:1]) == (NEEDS_ESCAPE.search(joined) is None)


@given(
    st.sampled_from(["b", "h", "i", "q"]).flatmap(
        lambda code: st.tuples(
            st.just(code),
            st.lists(
                st.integers(0, np.iinfo({"b": np.int8, "h": np.int16}.get(code, np.int32)).max),
                min_size=1,
                max_size=40,
            ),
        )
    )
)
def test_places_row_numbers_are_str_of_each(drawn: tuple[str, list[int]]) -> None:
    code, numbers = drawn
    places = Places(array(code, numbers), array("b", [0] * len(numbers)), [("row ", "")], {})
    split = places.split(np.arange(len(numbers)))
    assert split is not None
    assert split[1] == [str(n) for n in numbers]
    assert places.split(np.arange(0)) == ([], [], [])  # none picked: no text at all
