"""The whole-column shortcuts of the claims reader against the per-cell readings they replace.

Each shortcut reads a common kind of input at once (a plain CSV file split directly, a column of
plain number texts checked and parsed whole, claim places and labels made when asked) and must
give exactly what the slower reading gives, or decline. The yardsticks are outside the shortcut:
the csv module with a strip per cell, PLAIN_NUMBER with float() and decimals_as_written per
cell, and the general row reader (FAST_ROWS off) for whole tables. Hypothesis draws the inputs.
"""

from __future__ import annotations

import csv
import io
import pickle
from array import array
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from test_claim_arrays import _check
from test_claims_reader import MODEL

from verify.io.case import build_model
from verify.io.claims.grid import Grid
from verify.io.claims.labels import LabelMatcher
from verify.io.claims.rounding import decimals_as_written
from verify.io.claims.rows import _first_use, _plain_text_column
from verify.io.claims.source_csv import SplitRows, _plainly_split
from verify.io.claims.table import Labels, Places
from verify.io.values import MAX_FORCE, MIN_FORCE, PLAIN_NUMBER

# Characters that decide how a line splits or strips: delimiters, spaces, quotes, line breaks,
# a unit separator, a no-break space and a non-ASCII letter.
LINE_TEXT = st.text(alphabet=list('a1.-,;|\t "\n\r\x1f\xa0é'), max_size=24)


def _split_plainly(lines: list[str], delimiter: str) -> list[list[object]] | None:
    """The rows of a plain file as lists (None when it is not plain): what the reader takes."""
    return list(SplitRows(lines, delimiter)) if _plainly_split(lines, delimiter) else None


@settings(max_examples=400, deadline=None)
@given(text=LINE_TEXT, delimiter=st.sampled_from([",", ";", "\t", "|"]))
def test_a_plainly_split_file_gives_the_csv_modules_rows(text: str, delimiter: str) -> None:
    lines = text.splitlines()
    got = _split_plainly(lines, delimiter)
    if got is None:
        return  # declined: the csv module reads it
    reader = csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter)
    assert got == [[c.strip() or None for c in row] for row in reader]


@settings(max_examples=300, deadline=None)
@given(
    lines=st.lists(
        st.sampled_from(["M1,1,2", "M2,3.5,-4", "M3,5", "", "a,b,c,d", "x"]), max_size=8
    ),
    start=st.integers(0, 3),
    indexes=st.lists(st.integers(0, 3), min_size=1, max_size=3),
)
def test_rows_split_when_asked_read_as_the_split_lists(
    lines: list[str], start: int, indexes: list[int]
) -> None:
    """Columns taken as strides of one split (rows of one width) or row by row (any other)."""
    rows = _split_plainly(lines, ",")
    assert rows is not None
    lazy = Grid(SplitRows(lines, ","), list(range(len(rows))), None, decimal_comma=False)
    eager = Grid(rows, list(range(len(rows))), None, decimal_comma=False)
    assert len(lazy.rows) == len(rows) and list(lazy.rows) == rows
    assert lazy.rows[start:] == rows[start:] and lazy.row_lengths(start) == eager.row_lengths(start)
    for length in range(5):  # the rows the unheaded-data check looks through
        longer = [r for r in range(start, len(rows)) if len(rows[r]) > length]
        assert lazy.rows_longer_than(start, length) == eager.rows_longer_than(start, length)
        assert eager.rows_longer_than(start, length) == longer
    if rows:
        assert lazy.rows[-1] == rows[-1]
        lazy.rows[0].append("changed")  # a row handed out is the caller's own copy
        assert lazy.rows[0] == rows[0]
    stop = len(rows)
    assert lazy.columns(start, stop, indexes) == eager.columns(start, stop, indexes)
    assert eager.columns(start, stop, indexes) == [
        [row[i] if i < len(row) else None for row in rows[start:stop]] for i in indexes
    ]


def test_the_common_table_is_split_plainly() -> None:
    lines = ["member,dead,wind", "M1,1.5,-2", "M2,0,3e-07", "", "M3,4,5"]
    assert _split_plainly(lines, ",") == [
        ["member", "dead", "wind"],
        ["M1", "1.5", "-2"],
        ["M2", "0", "3e-07"],
        [],
        ["M3", "4", "5"],
    ]
    for declined in (['a,"b"'], ["a, b"], ["a,,b"], ["a,b,"], ["é,b"]):
        assert _split_plainly(declined, ",") is None


NUMBER_TEXT = st.one_of(
    st.from_regex(r"[+-]?[0-9]{1,3}(\.[0-9]{1,3})?([eE][+-]?[0-9]{1,3})?", fullmatch=True),
    st.sampled_from(
        ["0.0e5", "1.50E+00", "2.5e-0", "1e400", "1.0e-400", "7.599883247e-07", "00.10", "-0"]
    ),
    st.text(alphabet=list("0123456789+-.eE ,"), max_size=6),  # mostly not numbers
)


def _per_cell(cells: list[str], decimal_comma: bool) -> tuple[list[float], list[int]] | None:
    """The reading cell by cell: PLAIN_NUMBER, float(), decimals_as_written for exponents."""
    values, decimals = [], []
    for c in cells:
        if not PLAIN_NUMBER.fullmatch(c) or (decimal_comma and "." in c):
            return None
        v = float(c)
        values.append(v)
        if "." not in c:
            decimals.append(-1)
        elif "e" in c or "E" in c:
            shown = decimals_as_written(c, v + 0.0)
            decimals.append(-1 if shown is None else shown)
        else:
            decimals.append(len(c) - c.index(".") - 1)
    return values, decimals


@settings(max_examples=500, deadline=None)
@given(cells=st.lists(NUMBER_TEXT, min_size=1, max_size=8), decimal_comma=st.booleans())
def test_a_column_read_whole_equals_the_reading_cell_by_cell(
    cells: list[str], decimal_comma: bool
) -> None:
    whole = _plain_text_column(list(cells), decimal_comma)
    cell_by_cell = _per_cell(cells, decimal_comma)
    # It declines exactly the columns with a cell PLAIN_NUMBER refuses.
    assert (whole is None) == (cell_by_cell is None)
    if whole is None or cell_by_cell is None:
        return
    value, decimals = whole
    assert value.tolist() == cell_by_cell[0]
    in_range = [v == 0 or MIN_FORCE <= abs(v) <= MAX_FORCE for v in cell_by_cell[0]]
    # Decimals matter only for the values a claim can hold (the rest are refused later).
    got = [d for d, ok in zip(decimals.tolist(), in_range, strict=True) if ok]
    want = [d for d, ok in zip(cell_by_cell[1], in_range, strict=True) if ok]
    assert got == want


def test_a_column_with_a_cell_not_text_is_left_to_the_reader_per_cell() -> None:
    assert _plain_text_column(["1", None, "2"], False) is None
    assert _plain_text_column(["1", 2.0, "2"], False) is None
    assert _plain_text_column(["1\n2", "3"], False) is None  # a quoted break in a cell


def test_places_and_labels_read_like_the_lists_they_stand_for() -> None:
    places = Places(
        array("q", [7, 7, 9, 0]),
        array("q", [0, 1, 0, 0]),
        [("row ", ", column 'dead'"), ("row ", ", column 'wind'")],
        {3: "row 12, column 'snow'"},
    )
    want = ["row 7, column 'dead'", "row 7, column 'wind'", "row 9, column 'dead'"]
    want.append("row 12, column 'snow'")
    assert list(places) == want and places == want and len(places) == 4
    assert places[-1] == want[-1] and places[1:3] == want[1:3] and places[np.int64(2)] == want[2]
    with pytest.raises(IndexError):
        places[4]
    assert pickle.loads(pickle.dumps(places)) == want
    labels = Labels(array("q", [1, -1, 0]), ["M1", "M2"], {1: "RA.y"})
    assert list(labels) == ["M2", "RA.y", "M1"] and labels[-1] == "M1"
    assert pickle.loads(pickle.dumps(labels)) == ["M2", "RA.y", "M1"]


ROW_LABELS = ["AB", "BC", "CD", "AD", "BD", "ab", "B-C", "RA.y", "XY"]
EXPONENT_CELLS = st.one_of(
    st.sampled_from(["1.5e-07", "0.0e5", "1.50E+00", "2e3", "1.0e-400", "1e400", "-3.25E-1"]),
    st.floats(-1e5, 1e5, allow_nan=False).map(lambda v: f"{v:.3e}"),
    st.floats(-1e5, 1e5, allow_nan=False).map(repr),
    st.sampled_from(["", "12.40 C", "(2.5)", "two"]),
)


@settings(
    max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(
    rows=st.lists(
        st.tuples(st.sampled_from(ROW_LABELS), EXPONENT_CELLS, EXPONENT_CELLS),
        min_size=1,
        max_size=10,
    ),
    header=st.sampled_from(["Member,dead (kN),snow", "Member;dead;snow [N]"]),
)
def test_tables_of_exponents_read_in_bulk_equal_the_general_reader(
    tmp_path: Path, monkeypatch, rows, header: str
) -> None:
    """Exponent cells (their decimals shown only when the exponent or the mantissa is zero),
    tables of plain rows only and mixed ones, both delimiters."""
    delimiter = ";" if ";" in header else ","
    path = tmp_path / "exponents.csv"
    lines = [header] + [delimiter.join(r) for r in rows]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    _check(path, monkeypatch)


JOINT_NAMES = st.sampled_from(["A", "B", "1", "2", "1e2", "\u22123", " 4 ", "e", "L0", "ß"])


@settings(max_examples=150, deadline=None)
@given(
    joints=st.lists(JOINT_NAMES, min_size=3, max_size=3, unique=True),
    member_names=st.lists(
        st.sampled_from(["M1", "12", "1E2", "-3", "x", "5.0"]), min_size=3, max_size=3, unique=True
    ),
    labels=st.lists(st.text(alphabet=list("0123456789+-.eE"), min_size=1, max_size=5), max_size=6),
)
def test_a_number_cell_is_judged_as_the_full_matching_judges_it(
    joints: list[str], member_names: list[str], labels: list[str]
) -> None:
    """The shortcut for cells of number characters against matching in full (folded ids, joint
    pairs, reactions), on models whose ids are or are not written like numbers."""
    a, b, c = joints
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {a: [0.0, 0.0], b: [3.0, 0.0], c: [3.0, 3.0]},
            "members": dict(zip(member_names, [[a, b], [b, c], [a, c]], strict=True)),
            "supports": {a: ["x", "y"], b: ["y"]},
            "loads": {"dead": {c: [0.0, -10.0]}},
        }
    )
    matcher = LabelMatcher(model)
    for label in labels + [f"{a}-{b}", f"{b}{c}", f"r{a}.y", f"{a}.x"]:
        assert matcher.names(label) == LabelMatcher(model)._match(label, suggest=False).kind


def test_number_cells_are_judged_without_folding_the_models_ids() -> None:
    matcher = LabelMatcher(MODEL)  # ids AB, BC, ...; joints A..D: none written like a number
    assert [matcher.names(t) for t in ("12.5", "-3", "1e5", "AB")] == [
        "unknown",
        "unknown",
        "unknown",
        "member",
    ]
    assert "_fold_groups" not in vars(matcher) and "_joints_folded" not in vars(matcher)


@settings(max_examples=150, deadline=None)
@given(
    joints=st.lists(
        st.sampled_from(["A", "B", "C1", "L0", "n2", "X", "\u22123", "Ab"]),
        min_size=3,
        max_size=3,
        unique=True,
    ),
    member_names=st.lists(
        st.sampled_from(["M1", "AB", "d1", "Top 1", "w"]), min_size=3, max_size=3, unique=True
    ),
    labels=st.lists(
        st.text(alphabet=list("ABCLMabcdmnwxyz0123 -.()_:\u2212\u00a0Rr"), min_size=1, max_size=7),
        max_size=8,
    ),
)
def test_a_heading_or_label_is_judged_as_the_full_matching_judges_it(
    joints: list[str], member_names: list[str], labels: list[str]
) -> None:
    """The shortcut for labels holding a character no reading could use, against matching in
    full: reactions ('RA.y', 'A (x)'), joint pairs, folded ids, headings."""
    a, b, c = joints
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {a: [0.0, 0.0], b: [3.0, 0.0], c: [3.0, 3.0]},
            "members": dict(zip(member_names, [[a, b], [b, c], [a, c]], strict=True)),
            "supports": {a: ["x", "y"], b: ["y"]},
            "loads": {"dead": {c: [0.0, -10.0]}},
        }
    )
    matcher = LabelMatcher(model)
    fixed = [f"R{a}.y", f"{a} (x)", f"{b}-{c}", f"y {a}", "dead (kN)", member_names[0].lower()]
    fixed += [f"r\t{a}.y", f"{a}\t(y)"]
    for label in labels + fixed:
        assert matcher.names(label) == LabelMatcher(model)._match(label, suggest=False).kind


def test_a_heading_is_judged_without_folding_the_models_ids() -> None:
    matcher = LabelMatcher(MODEL)
    assert [matcher.names(t) for t in ("Member", "dead (kN)", "snow")] == ["unknown"] * 3
    assert "_fold_groups" not in vars(matcher) and "_joints_folded" not in vars(matcher)
    assert [matcher.names(t) for t in ("ab", "RA.y", "B-C")] == ["member", "reaction", "member"]


@settings(max_examples=300, deadline=None)
@given(
    items=st.integers(1, 40).map(lambda n: [f"case {k}" for k in range(n)]),
    picks=st.lists(st.integers(0, 39), max_size=60),
)
def test_names_in_order_of_first_use_equal_the_sorting_of_every_code(
    items: list[str], picks: list[int]
) -> None:
    """_first_use looks for each of a few items in turn; the yardstick sorts every code."""
    codes = np.array([p % len(items) for p in picks], dtype=np.int64)
    used, first = np.unique(codes, return_index=True)
    by_first = used[np.argsort(first, kind="stable")].tolist()
    want_names = tuple(items[k] for k in by_first)
    renumber = {k: n for n, k in enumerate(by_first)}
    names, renumbered = _first_use(codes, items)
    assert names == want_names
    assert renumbered.tolist() == [renumber[c] for c in codes.tolist()]
