"""The streamed JSON writer gives exactly the bytes of the standard library's encoder.

`verify.report.json_out.iter_dumps` encodes pieces by hand for speed; the yardstick here is
`json.dumps(..., indent=2, ensure_ascii=False, allow_nan=False)` after NaN and infinities are made
null, on hypothesis-drawn documents and on a real check of a bundled case.
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.report import json_out

ROOT = Path(__file__).resolve().parent.parent


def reference(value: Any) -> str:
    def clean(v: Any) -> Any:
        if isinstance(v, np.generic):
            v = v.item()
        if isinstance(v, float):
            return v if math.isfinite(v) else None
        if isinstance(v, dict):
            return {k: clean(x) for k, x in v.items()}
        if isinstance(v, (list, tuple)):
            return [clean(x) for x in v]
        return v

    return json.dumps(clean(value), indent=2, ensure_ascii=False, allow_nan=False)


scalars = (
    st.none()
    | st.booleans()
    | st.integers(min_value=-(10**20), max_value=10**20)
    | st.floats(allow_nan=True, allow_infinity=True)
    | st.text(max_size=12)
)
documents = st.recursive(
    scalars,
    lambda inner: (
        st.lists(inner, max_size=5) | st.dictionaries(st.text(max_size=6), inner, max_size=5)
    ),
    max_leaves=40,
)


def lazy(value: Any) -> Any:
    """The same document with every list turned into a generator, as check_json gives its rows."""
    if isinstance(value, dict):
        return {k: lazy(v) for k, v in value.items()}
    if isinstance(value, list):
        return (lazy(v) for v in value)
    return value


@settings(max_examples=300, deadline=None)
@given(st.dictionaries(st.text(max_size=6), documents, max_size=6))
def test_streamed_text_equals_the_standard_encoder(document: dict[str, Any]) -> None:
    expected = reference(document)
    assert json_out.dumps(document) == expected
    assert "".join(json_out.iter_dumps(lazy(document))) == expected


def test_long_lazy_lists_are_cut_into_pieces_and_joined_exactly() -> None:
    rows = [{"id": f"M{k}", "claimed": k / 7, "status": "agrees"} for k in range(5_003)]
    pieces = list(json_out.iter_dumps({"members": iter(rows), "n": np.int64(3)}))
    assert len(pieces) > 3  # drawn in batches, not held as one string
    assert "".join(pieces) == reference({"members": rows, "n": 3})


def test_empty_containers_and_numpy_scalars() -> None:
    document = {"a": [], "b": {}, "c": iter(()), "d": np.float64("nan"), "e": np.bool_(True)}
    assert json_out.dumps(document) == reference({**document, "c": []})


def test_check_json_streamed_equals_the_standard_encoder() -> None:
    from verify.service import check

    case = ROOT / "cases" / "conveyor-gantry" / "case.toml"
    claims = ROOT / "cases" / "conveyor-gantry" / "claims.csv"
    result = check(case, claims)
    text = "".join(json_out.iter_dumps(json_out.check_json(result.review)))
    held = json_out.check_json(result.review)
    held["members"] = list(held["members"])
    assert len(held["members"]) == len(result.review.rows) > 0
    assert text == reference(held)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.dictionaries(st.text(max_size=6), scalars, max_size=6), max_size=8))
def test_flat_objects_through_the_c_encoder_equal_the_standard_encoder(rows: list) -> None:
    """The member rows' path: each flat object encoded by the C encoder and laid out by its
    separators; NaN and infinities (null) fall back to the general path."""
    document = {"members": json_out.FlatObjects(rows), "after": 1}
    assert json_out.dumps(document) == reference({"members": rows, "after": 1})


def test_flat_objects_with_numpy_scalars_fall_back_exactly() -> None:
    rows = [{"a": np.float64(1.5), "b": np.int64(2)}, {"a": 0.1, "b": None}, {}]
    assert json_out.dumps({"m": json_out.FlatObjects(rows)}) == reference({"m": rows})


row_tuples = st.integers(min_value=0, max_value=4).flatmap(
    lambda width: st.lists(st.tuples(*[scalars] * width), max_size=8)
)


@settings(max_examples=200, deadline=None)
@given(row_tuples, st.text(max_size=4))
def test_row_tables_written_column_by_column_equal_the_standard_encoder(rows, extra) -> None:
    """The member rows' path: tuples read column by column (keys in another order than the
    fields, one key appended per row), every mix of types in a column, NaN and infinities."""
    width = len(rows[0]) if rows else 0
    fields = [(f"k{at}%", at) for at in reversed(range(width))]  # '%' must not break the layout
    appended = [("unit", [extra] * len(rows))] if extra else []  # no key at all when width is 0
    table = json_out.RowTable(rows, fields, appended)
    expected = [
        {**{key: row[at] for key, at in fields}, **({"unit": extra} if extra else {})}
        for row in rows
    ]
    assert list(table) == expected
    assert json_out.dumps({"members": table, "after": 1}) == reference(
        {"members": expected, "after": 1}
    )


def test_a_long_row_table_is_written_in_pieces() -> None:
    rows = [(f"M{k}", k / 7, None if k % 3 else float("nan")) for k in range(5_003)]
    table = json_out.RowTable(rows, [("id", 0), ("claimed", 1), ("elastic", 2)])
    pieces = list(json_out.iter_dumps({"members": table}))
    assert len(pieces) > 3
    assert "".join(pieces) == reference({"members": list(table)})


def test_rows_are_drawn_as_the_text_is_written_not_before() -> None:
    """Streaming: the first pieces come out while the rows are still being drawn, so memory does
    not grow with the output (an endless row source still gives its first pieces)."""
    import itertools

    def endless():
        for k in itertools.count():
            yield {"id": f"M{k}", "claimed": float(k)}

    for rows in (endless(), json_out.FlatObjects(endless())):
        pieces = itertools.islice(json_out.iter_dumps({"verdict": "agrees", "members": rows}), 4)
        text = "".join(pieces)
        assert text.startswith('{\n  "verdict": "agrees",\n  "members": [\n    {\n      "id": "M0"')
        assert len(text) < 10 * json_out.CHUNK_ITEMS * 60  # a few batches, not the whole
