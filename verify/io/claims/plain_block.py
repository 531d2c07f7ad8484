"""The plain rows of a claims CSV read from the places of their cells in the file's text.

A text split from its bytes (source_csv.PlainText) knows where every cell ends; the value cells
of a wide table are checked and parsed from there as _plain_joined_spans (rows.py) reads a
column's joined text, without a string per column: number bytes, points and exponents found
with numpy over the text, the rows split a few thousand at a time for float() and for the
labels. Anything it does not read whole (a cell that is not a plain number) is left to the
column route, which reads it as before.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np

from verify.io.claims.source_csv import PlainBlock
from verify.io.claims.table import MemberIndex
from verify.io.values import MAX_FORCE, MAX_FORCE_CHARS, MIN_FORCE

ROWS_AT_A_TIME = 8_192  # rows split into cells at a time (their strings held meanwhile)


def in_range(value: np.ndarray) -> np.ndarray:
    """Where a value is a force the reader takes (zero, or a size within MIN..MAX_FORCE)."""
    size = np.abs(value)
    return np.isfinite(size) & ((size == 0) | ((size >= MIN_FORCE) & (size <= MAX_FORCE)))


def _number_bytes(raw: np.ndarray, is_e: np.ndarray) -> np.ndarray:
    """Where `raw` holds one of '+,-./0123456789eE' (a plain number's bytes, and two that
    float() refuses in any text), with one False more (the place past the text a last cell may
    end at); `is_e` where it holds 'e' or 'E'. By comparisons: a table lookup per byte costs
    about ten of them."""
    out = np.zeros(raw.size + 1, dtype=bool)
    np.less(raw - np.uint8(ord("+")), ord("9") - ord("+") + 1, out=out[:-1])
    out[:-1] |= is_e
    return out


def _is_digit(raw: np.ndarray, first: str = "0") -> np.ndarray:
    return (raw - np.uint8(ord(first))) <= ord("9") - ord(first)


def read_plain_block(
    block: PlainBlock, indexes: list[int], member_ids: MemberIndex, decimal_comma: bool
) -> (
    tuple[
        np.ndarray,
        Callable[[], list[str]],
        list[np.ndarray],
        list[np.ndarray],
        list[tuple[str, np.ndarray, np.ndarray]],
    ]
    | None
):
    """(member position of each row, its labels when asked, and per value column: values,
    decimals shown, (text, begins, ends) of its cells) for rows of a text split from its bytes
    whose label column is `indexes[0]` and value columns the others; None unless every value
    cell is a plain number (_plain_joined_spans's reading: then the column route is taken).

    The same judgement as _plain_joined_spans, made at each cell's place in the file's text:
    only number characters in a cell; a digit each side of every point; float() reading every
    cell; decimals from the places of points and exponents. No string per column is made: the
    rows are split a few thousand at a time for float() and for the labels, which are compared
    with the model's ids in order and looked up only when they differ."""
    ends, raw, text = block.ends, block.raw, block.text
    n, width = ends.shape
    value_at = indexes[1:]
    order = sorted(value_at)  # the value columns as the text holds them
    if max(indexes) >= width or len(set(order)) < len(order):
        return None
    k = len(order)
    begins_of = {j: block.begins(j) for j in order}
    stops_of = {j: np.ascontiguousarray(ends[:, j]) for j in order}
    # Every value cell, in the text's order (row by row, then column by column).
    begin = np.column_stack([begins_of[j] for j in order]).ravel()
    end = np.column_stack([stops_of[j] for j in order]).ravel()
    if not bool((end > begin).all()):
        return None
    if int((end - begin).max()) > MAX_FORCE_CHARS:
        return None  # a cell read_force_cell refuses (the column route leaves it to it)
    bounds = np.empty(2 * begin.size, dtype=np.int64)
    bounds[0::2], bounds[1::2] = begin, end
    # Only number bytes in a cell: each cell's bytes, and what lies between, reduced at once.
    # (The exponents' places found once, for this and for the marks below.)
    is_e = (raw | np.uint8(32)) == ord("e")
    if not np.logical_and.reduceat(_number_bytes(raw, is_e), bounds)[0::2].all():
        return None
    low, high = int(begin[0]), int(end[-1])
    marks = is_e[low:high]
    marks |= raw[low:high] == ord(".")
    marked = np.flatnonzero(marks) + low
    del is_e, marks
    cell = np.minimum(np.searchsorted(end, marked), end.size - 1)
    inside = begin[cell] <= marked  # (not a label's letter between value cells)
    cell, marked = cell[inside], marked[inside]
    is_point = raw[marked] == ord(".")
    at, points = cell[is_point], marked[is_point]
    if points.size:
        if decimal_comma or not ((points > begin[at]) & (points + 1 < end[at])).all():
            return None  # (a point first or last in its cell has no digit that side)
        if not (_is_digit(raw[points - 1]) & _is_digit(raw[points + 1])).all():
            return None
    decimals = np.full(begin.size, -1, dtype=np.int64)
    decimals[at] = end[at] - points - 1
    cell, exponents = cell[~is_point], marked[~is_point]
    if exponents.size:
        # As _plain_joined_spans: the decimals before an exponent are kept only when the
        # mantissa or the exponent has no non-zero digit. Whether a range holds one, by
        # logical_or over the ranges [start, e), [e, e + 1), [e + 1, end), [end, next).
        if (np.diff(cell) == 0).any():
            return None  # two exponents in a cell: float() refuses it (the column route)
        bounds = np.empty(4 * cell.size, dtype=np.int64)
        bounds[0::4], bounds[1::4] = begin[cell], exponents
        bounds[2::4], bounds[3::4] = exponents + 1, end[cell]
        if not (np.diff(bounds) > 0).all():
            return None  # an empty mantissa or exponent: float() refuses it
        non_zero = np.zeros(raw.size + 1, dtype=bool)
        non_zero[low:high] = _is_digit(raw[low:high], "1")
        some = np.logical_or.reduceat(non_zero, bounds)
        del non_zero
        mantissa_zero, exponent_zero = ~some[0::4], ~some[2::4]
        point_of = np.full(begin.size, -1, dtype=np.int64)
        point_of[at] = points
        kept = exponents - point_of[cell] - 1
        pointed = decimals[cell] >= 0
        decimals[cell] = np.where(
            pointed, np.where(mantissa_zero | exponent_zero, kept, -1), decimals[cell]
        )
    by_slot = decimals.reshape(n, k)
    shown_of = [np.ascontiguousarray(by_slot[:, order.index(j)]) for j in value_at]
    spans = [(text, begins_of[j], stops_of[j]) for j in value_at]
    found = _split_block(block, indexes, member_ids)
    if found is None:
        return None
    member, labels, values = found
    return member, labels, values, shown_of, spans


def _split_block(
    block: PlainBlock, indexes: list[int], member_ids: MemberIndex
) -> tuple[np.ndarray, Callable[[], list[str]], list[np.ndarray]] | None:
    """The rows split ROWS_AT_A_TIME at a time: float() of each value cell (None when it refuses
    one), and the labels compared with the model's ids in order (kept only once they differ)."""
    ends, text, row_begin = block.ends, block.text, block.row_begin
    n, width = ends.shape
    label_at, value_at = indexes[0], indexes[1:]
    values = [np.empty(n, dtype=np.float64) for _ in value_at]
    delimiter = text[int(ends[0, 0])] if width > 1 else "\n"
    in_order = n <= len(member_ids)
    listed: list[str] = []
    for first in range(0, n, ROWS_AT_A_TIME):
        stop = min(first + ROWS_AT_A_TIME, n)
        chunk = text[int(row_begin[first]) : int(ends[stop - 1, -1])]
        cells = (chunk.replace("\n", delimiter) if width > 1 else chunk).split(delimiter)
        del chunk
        try:
            for k, j in enumerate(value_at):
                values[k][first:stop] = np.fromiter(
                    map(float, cells[j::width]), dtype=np.float64, count=stop - first
                )
        except ValueError:
            return None
        labels = cells[label_at::width]
        if in_order and labels != member_ids.ids_between(first, stop):
            in_order = False
            listed = member_ids.ids_between(0, first)
        if not in_order:
            listed.extend(labels)
    if in_order:
        return np.arange(n, dtype=np.int64), lambda: member_ids.ids_between(0, n), values
    return member_ids.get_indexer(listed), lambda: listed, values
