"""Rows.words made once and kept until a row is set: read before and after the comparison's
ways of setting rows (a whole row, a status), every reading matches the list of tuples and the
words made afresh (the code the kept result replaces)."""

from __future__ import annotations

from hypothesis import given, settings
from hypothesis import strategies as st
from test_compare_scale_rows import WORDS, row_columns, same

NAMES = ("id", "kind", "case", "status")


def read_as_tuples(rows, tuples) -> None:
    for name in NAMES:
        codes, words = rows.words(name)
        assert words == rows._made_words(name)[1]
        assert (codes == rows._made_words(name)[0]).all()
        assert [words[c] for c in codes.tolist()] == [getattr(t, name) for t in tuples]


@settings(max_examples=80, deadline=None)
@given(row_columns(), st.data())
def test_words_kept_until_a_row_is_set(made, data) -> None:
    tuples, rows = made
    if data.draw(st.booleans()):  # joined with rows of other labels: words made by a dict
        more_tuples, more = data.draw(row_columns())
        rows, tuples = rows + more, tuples + more_tuples
    read_as_tuples(rows, tuples)
    assert all(rows.words(name) is rows.words(name) for name in NAMES)  # kept
    for _ in range(data.draw(st.integers(1, 4)) if tuples else 0):
        i = data.draw(st.integers(0, len(tuples) - 1))
        if data.draw(st.booleans()):
            other = data.draw(st.integers(0, len(tuples) - 1))
            rows[i] = tuples[other]
            tuples[i] = tuples[other]
        else:
            status = data.draw(st.one_of(WORDS, st.just("a status new to the rows")))
            rows.set_status(i, status)
            tuples[i] = tuples[i]._replace(status=status)
        read_as_tuples(rows, tuples)


@settings(max_examples=80, deadline=None)
@given(row_columns(), st.data())
def test_take_reads_column_by_column_what_indexing_gives(made, data) -> None:
    """Rows.take against the row by row indexing it replaced, after rows are set (a written
    text set anew among them), with positions repeated, unsorted and negative."""
    tuples, rows = made
    if not tuples:
        assert rows.take([]) == []
        return
    for _ in range(data.draw(st.integers(0, 3))):
        i, other = (data.draw(st.integers(0, len(tuples) - 1)) for _ in range(2))
        rows[i] = tuples[other]._replace(written=data.draw(st.text(max_size=5)))
    n = len(tuples)
    positions = data.draw(st.lists(st.integers(-n, n - 1), max_size=12))
    taken = rows.take(positions)
    assert all(same(a, rows[i]) for a, i in zip(taken, positions, strict=True))
