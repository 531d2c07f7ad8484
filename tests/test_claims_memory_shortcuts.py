"""The claims reader's lean shortcuts against the readings they replace (hypothesis draws inputs).

Each shortcut holds less memory than the reading before it and must give exactly what it gives:
a plain file's columns cut from its bytes (SplitRows.joined_columns) against the per-row split
(SplitRows.columns); a column read from its joined text against the list of its cells; the cells
kept as spans of one text (CellTexts) against the list of strings; compact integer items against
the int64 values; and the rounding allowances settled a chunk at a time against the whole column.
"""

from __future__ import annotations

import pickle

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.claims import rounding
from verify.io.claims import rows as rows_module
from verify.io.claims.rows import _plain_cells
from verify.io.claims.source_csv import SplitRows, _plainly_split
from verify.io.claims.table import CellTexts, MemberIndex, compact_ints, int_items_as_array

CELL = st.one_of(
    st.sampled_from(["M1", "M22", "1.5", "-2", "3e-07", "0", "1.50E+00", "x", "12.40", "7"]),
    st.text(alphabet=list("ab019.-+eE"), min_size=1, max_size=5),
)


@settings(max_examples=400, deadline=None)
@given(
    rows=st.lists(st.lists(CELL, min_size=1, max_size=4), min_size=1, max_size=8),
    delimiter=st.sampled_from([",", ";", "\t", "|"]),
    start=st.integers(0, 3),
    indexes=st.lists(st.integers(0, 4), min_size=1, max_size=3),
    blank=st.booleans(),
)
def test_columns_cut_from_the_bytes_equal_the_split_rows_joined(
    rows: list[list[str]], delimiter: str, start: int, indexes: list[int], blank: bool
) -> None:
    lines = [delimiter.join(row) for row in rows] + ([""] if blank else [])
    if not _plainly_split(lines, delimiter):
        return
    split = SplitRows(lines, delimiter)
    stop = len(split)
    cut = split.joined_columns(start, stop, indexes)
    columns = split.columns(start, stop, indexes)
    # The same rows give columns (one width, wider than any index), and the same texts.
    assert (cut is None) == (columns is None)
    if cut is not None and columns is not None:
        assert cut == ["\n".join(str(c) for c in column) for column in columns]


def test_columns_cut_from_the_bytes_of_a_common_table() -> None:
    split = SplitRows(["member,dead,wind", "M1,1.5,-2", "M2,0,3e-07"], ",")
    assert split.joined_columns(1, 3, [0, 2, 1]) == ["M1\nM2", "-2\n3e-07", "1.5\n0"]
    assert SplitRows(["M1", "M2"], ",").joined_columns(0, 2, [0]) == ["M1\nM2"]  # one column
    assert split.joined_columns(1, 3, [3]) is None  # no such column
    assert SplitRows(["a,b", "c"], ",").joined_columns(0, 2, [0]) is None  # rows of two widths


NUMBER_TEXT = st.one_of(
    st.from_regex(r"[+-]?[0-9]{1,3}(\.[0-9]{1,3})?([eE][+-]?[0-9]{1,3})?", fullmatch=True),
    st.sampled_from(["1e400", "7.599883247e-07", "00.10", "-0", "1.0e-400", "abc", "1.2.3"]),
)


@settings(max_examples=400, deadline=None)
@given(cells=st.lists(NUMBER_TEXT, min_size=1, max_size=8), decimal_comma=st.booleans())
def test_a_column_read_from_its_joined_text_equals_its_cells_read(
    cells: list[str], decimal_comma: bool
) -> None:
    joined = _plain_cells("\n".join(cells), decimal_comma)
    listed = _plain_cells(list(cells), decimal_comma)
    for a, b in zip(joined[:3], listed[:3], strict=True):
        if a is None or b is None:
            assert a is None and b is None
        else:
            np.testing.assert_array_equal(a, b)
    assert (joined[3] is None) == (listed[3] is None)
    if joined[3] is not None and listed[3] is not None:
        assert joined[3][0] == listed[3][0] == "\n".join(cells)
        np.testing.assert_array_equal(joined[3][1], listed[3][1])


@settings(max_examples=300, deadline=None)
@given(
    texts=st.lists(st.text(alphabet=list("0123456789.-e"), max_size=6), min_size=1, max_size=9),
    data=st.data(),
)
def test_cells_kept_as_spans_read_as_the_list_of_them(texts: list[str], data) -> None:
    joined = "".join(texts)
    stops = np.cumsum([len(t) for t in texts])
    starts = stops - np.array([len(t) for t in texts])
    order = data.draw(st.permutations(range(len(texts))))  # claims in any order of the text
    given_at = data.draw(st.sets(st.sampled_from(range(len(texts))), max_size=3))
    want = [texts[k] for k in order]
    given = {i: f"given {i}" for i in given_at}
    for i, text in given.items():
        want[i] = text
    cells = CellTexts(joined, starts[order], stops[order], given)
    assert list(cells) == want and cells == want and len(cells) == len(want)
    assert cells[-1] == want[-1] and cells[np.int64(0)] == want[0]
    picked = np.array(data.draw(st.lists(st.sampled_from(range(len(texts))), max_size=6)))
    assert cells.take(picked.astype(np.int64)) == [want[i] for i in picked.tolist()]
    assert pickle.loads(pickle.dumps(cells)) == want


def test_spans_placed_among_claims_read_one_by_one() -> None:
    bulk = CellTexts("1.52-0.25", np.array([0, 3]), np.array([3, 9]), {})
    placed = bulk.placed(np.array([0, 2]), 3, np.array([1]), ["12.4 T"])
    assert list(placed) == ["1.5", "12.4 T", "2-0.25"]
    assert placed.take(np.array([2, 1, 0])) == ["2-0.25", "12.4 T", "1.5"]


@settings(max_examples=300, deadline=None)
@given(values=st.lists(st.integers(-(2**63), 2**63 - 1), max_size=12))
def test_compact_integer_items_hold_every_value(values: list[int]) -> None:
    items = compact_ints(np.array(values, dtype=np.int64))
    assert list(items) == values
    assert int_items_as_array(items).tolist() == values
    if values and all(-128 <= v < 128 for v in values):
        assert items.itemsize == 1  # a column slot in one byte


@settings(max_examples=200, deadline=None)
@given(
    values=st.lists(
        st.one_of(
            st.floats(allow_nan=True, allow_infinity=True),
            st.integers(-(10**6), 10**6).map(lambda k: k / 100),
            st.sampled_from([0.5, 93746.25, 7.599883247e-07, 1e-9, 12.0]),
        ),
        min_size=1,
        max_size=40,
    ),
    chunk=st.integers(1, 7),
    scale=st.sampled_from([1.0, 1000.0, -4.4482216152605]),
)
def test_rounding_settled_by_chunks_equals_the_whole_column(
    values: list[float], chunk: int, scale: float
) -> None:
    column = np.array(values)
    scales = np.full(column.size, scale)
    whole = rounding._rounding_allowances(column, scales)
    saved = rounding.ROUNDING_CHUNK
    rounding.ROUNDING_CHUNK = chunk
    try:
        by_chunks = rounding.rounding_allowances(column, scales)
        by_chunks_one_scale = rounding.rounding_allowances(column, scale)
    finally:
        rounding.ROUNDING_CHUNK = saved
    np.testing.assert_array_equal(by_chunks, whole)
    np.testing.assert_array_equal(by_chunks_one_scale, whole)
    # and each value's allowance is the one-value function's (outside the module's arrays)
    for v, got in zip(values, whole.tolist(), strict=True):
        assert got == rounding.rounding_allowance(v, scale)


@settings(max_examples=300, deadline=None)
@given(
    ids=st.lists(st.sampled_from(["M1", "M2", "M10", "a\nb", "a", "b", ""]), max_size=6),
    labels=st.lists(st.sampled_from(["M1", "M2", "M10", "a", "b", "x"]), min_size=1, max_size=6),
)
def test_labels_found_in_order_by_their_joined_text_as_one_by_one(
    ids: list[str], labels: list[str]
) -> None:
    index = MemberIndex(list(dict.fromkeys(ids)))
    found = index.joined_in_order("\n".join(labels))
    looked_up = index.get_indexer(labels)
    if found is not None:  # taken only when the labels are the first ids in order
        assert found.tolist() == looked_up.tolist() == list(range(len(labels)))
    else:
        assert looked_up.tolist() != list(range(len(labels)))


@settings(max_examples=200, deadline=None)
@given(cells=st.lists(st.text(alphabet="0123456789.-", max_size=4), min_size=1, max_size=30))
def test_cells_split_by_chunks_are_the_cells(cells: list[str]) -> None:
    joined = "\n".join(cells)
    ends = np.append(np.flatnonzero(np.frombuffer(joined.encode(), np.uint8) == 10), len(joined))
    saved = rows_module.SPLIT_CHUNK
    rows_module.SPLIT_CHUNK = 3
    try:
        assert list(rows_module._split_by_chunks(joined, ends)) == cells
    finally:
        rows_module.SPLIT_CHUNK = saved
