"""Shortcuts of the claims and case readers held to the code they replace (hypothesis draws the
inputs): the same results bit for bit.

- resolution.settle_rounding merges a column's significant-figure allowances only when there are
  some (significant_figure_places None: nothing to widen), instead of np.maximum with zeros;
- cells.joined_spans cuts a column in four passes over the bytes (was seven);
- source_csv.read_csv tells an empty file by str.isspace (no copy of the text by strip);
- case.member_lengths works the zero-length check a coordinate axis at a time;
- case.pair_order_of sorts the members by joint pair on one key (was np.lexsort of three).
"""

from __future__ import annotations

import numpy as np
from hypothesis import event, given, settings
from hypothesis import strategies as st
from test_io_cells import column_spans

from verify.io.case import member_lengths, pair_order_of
from verify.io.cells import joined_spans
from verify.io.claims.problems import Problems
from verify.io.claims.resolution import _written_allowance, settle_rounding
from verify.io.claims.rounding import (
    MAX_DECIMALS,
    rounding_allowances,
    significant_figure_allowances,
    significant_figure_places,
)
from verify.io.claims.source_csv import read_csv
from verify.io.claims.table import Resolution


def _settle_as_it_was(value, decimals, is_member, column, names, resolutions):
    """settle_rounding before this change (its code as it stood)."""
    quick = (decimals >= 0) & (decimals < MAX_DECIMALS) & np.isfinite(value)
    rounding = np.empty(value.shape)
    slow = np.flatnonzero(~quick)
    rounding[slow] = rounding_allowances(value[slow], 1.0)
    shown = np.flatnonzero(quick)
    rounding[shown] = _written_allowance(np.arange(MAX_DECIMALS))[decimals[shown]]
    shown = slow[decimals[slow] >= 0]
    rounding[shown] = np.minimum(rounding[shown], _written_allowance(decimals[shown]))
    steps = {r.column: r.step for r in resolutions}
    for k, name in enumerate(names):
        picked = (column == k) & is_member
        if not picked.any():
            continue
        rounding[picked] = np.maximum(
            rounding[picked], significant_figure_allowances(value[picked], 1.0)
        )
        if name in steps:
            rounding[picked] = np.maximum(rounding[picked], 0.5 * steps[name] * 1.0001)
    return rounding


# Values a table writes: whole numbers at 2 or 3 figures (140, 2500: widened), decimals, zeros,
# round-off, and the odd non-finite value.
ROUND = st.tuples(st.integers(-99, 99), st.integers(1, 4)).map(lambda t: t[0] * 10.0 ** t[1])
VALUE = st.one_of(
    st.sampled_from([140.0, 2500.0, 1.2e5, 35.0, 0.0, -0.0, 4.5, 0.27, 7.1e-16, np.nan, np.inf]),
    ROUND,
    ROUND,
    ROUND,
    st.tuples(st.integers(-999, 999), st.integers(0, 4)).map(lambda t: t[0] * 10.0 ** t[1]),
    st.floats(-1e6, 1e6, allow_nan=False),
    st.floats(-1e15, 1e15, allow_subnormal=False),  # (the reader's range of forces)
)


@settings(max_examples=400, deadline=None)
@given(
    claims=st.lists(
        st.tuples(
            VALUE,
            st.integers(-1, 9),
            st.sampled_from([True, True, True, False]),
            st.sampled_from([0, 0, 0, 1, 2]),
        ),
        max_size=40,
    ),
    step=st.sampled_from([None, 0.5, 5.0, 50.0]),
    figures=st.sampled_from([None, 2, 3]),
)
def test_settle_rounding_equals_the_merge_of_every_column(claims, step, figures) -> None:
    value = np.array([c[0] for c in claims], dtype=float)
    if figures is not None:  # a table written to 2 or 3 significant figures
        value = np.array([float(f"{v:.{figures}g}") for v in value.tolist()])
    decimals = np.array([c[1] for c in claims], dtype=np.int64)
    is_member = np.array([c[2] for c in claims], dtype=bool)
    column = np.array([c[3] for c in claims], dtype=np.int64)
    names = ("a", "b", "c")
    resolutions = () if step is None else (Resolution("b", step, None),)
    args = (value, decimals, is_member, column, names, resolutions)
    found = settle_rounding(*args)
    widened = [
        significant_figure_places(value[(column == k) & is_member]) is not None for k in range(3)
    ]
    event(f"a column widened: {any(widened)}")  # --hypothesis-show-statistics
    expected = _settle_as_it_was(*args)
    assert found.view(np.int64).tolist() == expected.view(np.int64).tolist()


def _joined_spans_as_it_was(data, starts, stops) -> str:
    marks = np.zeros(len(data) + 1, dtype=np.int8)
    marks[starts] += 1
    marks[stops] -= 1
    inside = np.cumsum(marks, dtype=np.int8)[:-1] > 0
    after = np.zeros(len(data), dtype=bool)
    after[stops] = True
    picked = np.where(after, np.uint8(10), data)[inside | after]
    return picked.tobytes().decode("ascii")[:-1]


@settings(max_examples=300, deadline=None)
@given(
    rows=st.lists(
        st.lists(st.text(alphabet="ab1.-_ ", max_size=7), min_size=1, max_size=4), min_size=1
    ),
    pick=st.data(),
)
def test_joined_spans_equals_the_seven_passes(rows, pick) -> None:
    width = max(map(len, rows))
    column = pick.draw(st.integers(0, width - 1))
    text, data, starts, stops = column_spans(rows, column)  # bytes read-only, as a file's
    assert joined_spans(data, starts, stops) == _joined_spans_as_it_was(data, starts, stops)
    assert data.tobytes() == text.encode("ascii")  # the bytes are not written to


@settings(max_examples=300, deadline=None)
@given(text=st.text(alphabet=st.sampled_from(" \t\r\n\x0b\x0c\x1c\x85\xa0\u2028\u3000a,1")))
def test_an_empty_claims_file_is_told_as_strip_told_it(text: str) -> None:
    problems = Problems("claims.csv")
    read_csv(text.encode("utf-8"), problems)
    said_empty = any("the file is empty" in p.message for p in problems.items)
    assert said_empty == (not text.strip())


COORDINATE = st.floats(-1e7, 1e7, allow_subnormal=False)


@settings(max_examples=300, deadline=None)
@given(
    dim=st.sampled_from([2, 3]),
    data=st.data(),
)
def test_member_lengths_equal_the_norm_of_the_differences(dim: int, data) -> None:
    """case.member_lengths (the zero-length check of the case reader) against np.linalg.norm of
    the end differences, bit for bit."""
    joints = data.draw(st.integers(1, 12))
    xyz = np.array(
        data.draw(st.lists(st.tuples(*[COORDINATE] * dim), min_size=joints, max_size=joints))
    ).reshape(joints, dim)
    ends = np.array(
        data.draw(st.lists(st.tuples(st.integers(0, joints - 1), st.integers(0, joints - 1)))),
        dtype=np.int64,
    ).reshape(-1, 2)
    starts, stops = ends[:, 0], ends[:, 1]
    found = member_lengths(xyz, starts, stops)
    expected = np.linalg.norm(xyz[stops] - xyz[starts], axis=1)
    assert found.view(np.int64).tolist() == expected.view(np.int64).tolist()


@settings(max_examples=300, deadline=None)
@given(
    pairs=st.lists(
        st.tuples(
            st.one_of(st.integers(0, 6), st.integers(-(2**40), 2**40)),
            st.one_of(st.integers(0, 6), st.integers(0, 2**32)),
        ),
        max_size=30,
    )
)
def test_pair_order_equals_the_lexicographic_sort(pairs) -> None:
    """case.pair_order_of (the repeated joint pair check) against np.lexsort of (low, high) with
    ties in row order, for joint numbers and for numbers past its one-key range."""
    low = np.array([p[0] for p in pairs], dtype=np.int64)
    high = np.array([p[1] for p in pairs], dtype=np.int64)
    expected = np.lexsort((np.arange(low.size), high, low))
    assert pair_order_of(low, high).tolist() == expected.tolist()
