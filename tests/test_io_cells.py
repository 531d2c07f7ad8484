"""verify.io.cells.joined_spans against cutting the cells with Python's own split."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.cells import joined_spans

CELL = st.text(alphabet="ab1.-_", max_size=6)


def column_spans(
    rows: list[list[str]], column: int
) -> tuple[str, np.ndarray, np.ndarray, np.ndarray]:
    """The rows (padded to one width) written as a ',' table, its bytes (read-only, as a file's),
    and where each cell of `column` starts and stops."""
    width = max(map(len, rows))
    text = "".join(",".join(row + [""] * (width - len(row))) + "\n" for row in rows)
    data = np.frombuffer(text.encode("ascii"), dtype=np.uint8)
    marks = np.flatnonzero((data == ord(",")) | (data == ord("\n")))
    stops = marks[column::width]
    starts = (
        np.concatenate([[0], marks[width - 1 : -1 : width] + 1])
        if column == 0
        else (marks[column - 1 :: width] + 1)
    )
    return text, data, starts, stops


@settings(max_examples=300, deadline=None)
@given(
    rows=st.lists(st.lists(CELL, min_size=1, max_size=4), min_size=1, max_size=12), pick=st.data()
)
def test_a_column_joined_is_the_cells_split_by_python(rows, pick) -> None:
    width = max(map(len, rows))
    rows = [row + [""] * (width - len(row)) for row in rows]
    column = pick.draw(st.integers(0, width - 1))
    _, data, starts, stops = column_spans(rows, column)
    assert joined_spans(data, starts, stops).split("\n") == [row[column] for row in rows]
