"""The review's rows kept as columns (verify.compare.rows) read exactly as a list of Row tuples,
and a comparison large enough to cross the chunks the rows are made in gives the rows, missing
claims and counts that a plain per-claim derivation (written here, claim by claim) gives.

References: the list model is Python's own list of the tuples the columns were made from; the
recomputed forces are our global solve, itself checked against sympy's truss module and published
examples (tests/test_sympy_oracle.py, tests/reference).
"""

from __future__ import annotations

import math
import pickle
import random

import numpy as np
from claimsgen import table, true_claims
from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, pratt

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import compare_claims
from verify.compare.rows import CHUNK, Labels, Numbers, Plain, Row, Rows, Written

WORDS = st.sampled_from(["agrees", "value-mismatch", "sign-flip", "ü-case", ""])
NUMBERS = st.one_of(
    st.none(),
    st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0.0, -0.0, 1.5, -1.5]),
)


@st.composite
def row_columns(draw):
    """Random rows as tuples, and the same rows as columns of every kind."""
    n = draw(st.integers(0, 40))
    cells = [draw(st.text(max_size=6)) for _ in range(n + 3)]
    where = [f"row {k}, column 'x'" for k in range(n + 3)]
    claim = [draw(st.integers(-1, n + 2)) for _ in range(n)]
    words = [[draw(WORDS) for _ in range(n)] for _ in range(4)]
    numbers = [[draw(NUMBERS) for _ in range(n)] for _ in range(6)]

    def spelled(k: int) -> str:
        return cells[k] or f"<{k}>"

    written = [f"{spelled(k)} at {where[k]}" if k >= 0 else "" for k in claim]
    tuples = [
        Row(
            words[0][i],
            words[1][i],
            words[2][i],
            numbers[0][i],
            written[i],
            *(numbers[j][i] for j in range(1, 5)),
            numbers[5][i],
            words[3][i],
        )
        for i in range(n)
    ]

    def labelled(values: list[str]) -> Labels:
        labels = sorted(set(values)) + ["unused"]
        return Labels(np.array([labels.index(v) for v in values], dtype=np.int64), labels)

    def numbered(values: list[float | None]) -> Numbers:
        present = np.array([v is not None for v in values], dtype=bool)
        return Numbers(np.array([math.nan if v is None else v for v in values]), present)

    columns = [
        labelled(words[0]),
        Plain(list(words[1])),
        labelled(words[2]),
        numbered(numbers[0]),
        Written(np.array(claim, dtype=np.int64), spelled, cells, where),
        *(numbered(numbers[j]) for j in range(1, 5)),
        numbered(numbers[5]),
        labelled(words[3]),
    ]
    return tuples, Rows(columns)


def same(a: Row, b: Row) -> bool:
    """Equal field by field, NaN equal to NaN, and -0.0 told from 0.0 (a report writes both)."""

    def alike(x: object, y: object) -> bool:
        if isinstance(x, float) and isinstance(y, float):
            return (math.isnan(x) and math.isnan(y)) or (x == y and str(x) == str(y))
        return type(x) is type(y) and x == y

    return all(alike(x, y) for x, y in zip(a, b, strict=True))


@settings(max_examples=60, deadline=None)
@given(row_columns(), st.data())
def test_rows_as_columns_read_as_the_list_of_their_tuples(made, data):
    tuples, rows = made
    assert len(rows) == len(tuples)
    assert all(same(a, b) for a, b in zip(rows, tuples, strict=True))
    assert all(same(rows[i], tuples[i]) for i in range(len(tuples)))
    if tuples:
        assert same(rows[-1], tuples[-1])
        # set a row, or only its status, as the comparison does; the list model does the same
        i = data.draw(st.integers(0, len(tuples) - 1))
        other = data.draw(st.integers(0, len(tuples) - 1))
        rows[i] = tuples[other]
        tuples[i] = tuples[other]
        status = data.draw(WORDS)
        rows.set_status(other, status)
        tuples[other] = tuples[other]._replace(status=status)
        assert all(same(a, b) for a, b in zip(rows, tuples, strict=True))
    extra = [Row("D1.y", "displacement", "A", 1.0, "0.1 at row 2", None, None, 0.5, None, 0.5, "")]
    joined = rows + extra
    assert len(joined) == len(tuples) + 1
    assert all(same(a, b) for a, b in zip(joined, tuples + extra, strict=True))
    doubled = rows.extended(rows)
    assert all(same(a, b) for a, b in zip(doubled, tuples + tuples, strict=True))


def test_a_large_comparison_gives_the_rows_a_claim_by_claim_derivation_gives():
    """~2.4x10^3 members, two load columns with random members left out and a few values changed:
    more rows than one chunk of the row columns, so chunk edges are crossed."""
    panels = 600
    case = pratt(panels, d=3.0, h=4.0, case="A")
    case["loads"]["B"] = {f"U{i}": [2.0, -5.0] for i in range(1, panels, 7)}
    analysis = analyse(make_model(case))
    model = analysis.model
    truth = true_claims(analysis)
    rng = random.Random(12)
    claims: dict[str, dict[str, float]] = {}
    wrong: set[tuple[str, str]] = set()
    for name, column in truth.items():
        kept = {}
        for member, value in column.items():
            if rng.random() < 0.03:
                continue  # not claimed
            if rng.random() < 0.002 and abs(value) > 1.0:
                kept[member] = value * 1.37  # plainly wrong
                wrong.add((member, name))
            else:
                kept[member] = value
        claims[name] = kept
    review = compare_claims(analysis, table(claims))
    rows = list(review.rows)
    assert len(rows) > CHUNK
    assert rows == [review.rows[i] for i in range(len(review.rows))]
    # Claim by claim, in table order: the claimed rows, then per column the members left out.
    expected_claimed = [
        (member, name, value, value - truth[name][member])
        for name, column in claims.items()
        for member, value in column.items()
    ]
    claimed_rows = [r for r in rows if r.status != "missing-claim"]
    assert [(r.id, r.case, r.claimed, r.difference) for r in claimed_rows] == expected_claimed
    assert all(r.kind == "member" for r in rows)
    assert all(r.global_ == truth[r.case][r.id] for r in rows)
    # every exact claim agrees; each plainly wrong one does not
    assert {(r.id, r.case) for r in claimed_rows if r.status != "agrees"} == wrong
    missing = [
        (member, name)
        for name in truth
        for member in model.member_ids
        if member not in claims[name]
    ]
    missing_rows = [r for r in rows if r.status == "missing-claim"]
    assert [(r.id, r.case) for r in missing_rows] == missing
    assert all(r.claimed is None and r.written == "" and r.difference is None for r in missing_rows)
    assert all(r.global_ == truth[r.case][r.id] for r in missing_rows)
    assert review.checked_members == len({m for column in claims.values() for m in column})
    assert review.checked_cases == ("A", "B")
    counted = sorted(len(f.members) for f in review.findings if f.kind == "missing-claim")
    assert counted == sorted(len(truth[n]) - len(claims[n]) for n in truth)
    # where each claim was written, as the table says it
    assert claimed_rows[0].written.endswith(" at row 2, column 'A'")


def test_rows_pickle_as_their_tuples():
    case = pratt(6, case="A")
    analysis = analyse(make_model(case))
    review = compare_claims(analysis, table(true_claims(analysis)))
    again = pickle.loads(pickle.dumps(review.rows))
    assert list(again) == list(review.rows)
    assert len(again) == len(review.rows) > 0


@settings(max_examples=60, deadline=None)
@given(row_columns(), st.data())
def test_words_where_and_take_read_as_the_tuples(made, data):
    """The grouped readers the report uses (words, where, take) against list comprehensions over
    the tuples, with a column joined from two label lists (a word under two codes)."""
    tuples, rows = made
    if data.draw(st.booleans()):  # rows joined with more rows of other labels
        more_tuples, more = data.draw(row_columns())
        rows, tuples = rows + more, tuples + more_tuples
    for name in ("id", "kind", "case", "status"):
        codes, words = rows.words(name)
        assert len(set(words)) == len(words)
        assert [words[c] for c in codes.tolist()] == [getattr(t, name) for t in tuples]
        word = data.draw(WORDS)
        expected = [n for n, t in enumerate(tuples) if getattr(t, name) == word]
        assert rows.where(name, word).tolist() == expected
    picked = data.draw(st.lists(st.integers(0, max(len(tuples) - 1, 0)), max_size=8))
    picked = picked if tuples else []
    assert all(same(a, tuples[i]) for a, i in zip(rows.take(picked), picked, strict=True))


def test_words_of_ids_joined_twice_are_found_once_each():
    """Member ids joined from two label lists (rows with a reaction claim, then the missing
    claims) read as one code per id, each id once, at a size where a list search per label
    would take minutes."""
    n = 50_000
    ids = [f"M{k}" for k in range(n)]
    first = Labels(np.arange(n), ids + ["RL0.x"])
    second = Labels(np.arange(n)[::-1], ids)
    rows_a = Rows([first] + [Plain(["member"] * n) for _ in Row._fields[1:]])
    rows_b = Rows([second] + [Plain(["member"] * n) for _ in Row._fields[1:]])
    codes, words = (rows_a + rows_b).words("id")
    assert words == ids + ["RL0.x"]
    assert [words[c] for c in codes.tolist()] == ids + ids[::-1]
