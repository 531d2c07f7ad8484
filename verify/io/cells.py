"""Cells cut from the bytes of a plain table (no quoting: a cell is the text between two marks)."""

from __future__ import annotations

import numpy as np


def joined_spans(data: np.ndarray, starts: np.ndarray, stops: np.ndarray) -> str:
    """The cells data[start:stop] (ASCII bytes; one column's, in order: no two share a start or a
    stop, and data[stop] is the mark ending each) joined by line breaks, without a string per
    cell.

    +1 where a cell starts and -1 where it stops make a running sum that is 1 on the cells'
    bytes; each cell is taken with the mark after it, written as a line break (an empty cell's
    +1 and -1 cancel and leave its mark alone)."""
    marks = np.zeros(len(data) + 1, dtype=np.int8)
    marks[starts] += 1
    marks[stops] -= 1
    inside = np.cumsum(marks, dtype=np.int8)[:-1] > 0
    after = np.zeros(len(data), dtype=bool)
    after[stops] = True
    picked = np.where(after, np.uint8(10), data)[inside | after]
    return picked.tobytes().decode("ascii")[:-1]
