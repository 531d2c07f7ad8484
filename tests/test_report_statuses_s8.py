"""The statuses a large report draws (diagram.RowStatuses, read from the rows' codes) against the
dict of every member they replace (document.member_statuses below ROW_STATUSES_FROM): the same
mapping, the same categories used, the same flagged members drawn; and the load columns found
in the order of their first rows (document.first_seen) against dict.fromkeys."""

from __future__ import annotations

from types import SimpleNamespace

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.compare.rows import Labels, Numbers, Plain, Rows
from verify.report import document
from verify.report.diagram import RowStatuses, _flagged_positions, used_categories

STATUS_WORDS = ["agrees", "missing", "sign-flip", "value-mismatch", "unit-scale", "agrees"]


@st.composite
def one_column(draw: st.DrawFn) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Member ids, the rows' id codes (each member at most once) and status codes."""
    n = draw(st.integers(1, 40))
    ids = [f"M{k}" for k in range(n)]
    picked = draw(st.lists(st.integers(0, n - 1), unique=True, min_size=1, max_size=n))
    statuses = draw(
        st.lists(st.integers(0, len(STATUS_WORDS) - 1), min_size=len(picked), max_size=len(picked))
    )
    return ids, np.array(picked), np.array(statuses)


@settings(max_examples=150, deadline=None)
@given(one_column(), st.booleans())
def test_row_statuses_read_as_the_dict_of_every_member(drawn, with_index: bool) -> None:
    ids, id_codes, status_codes = drawn
    expected = {ids[i]: STATUS_WORDS[s] for i, s in zip(id_codes, status_codes, strict=True)}
    index = {m: k for k, m in enumerate(ids)} if with_index else None
    statuses = RowStatuses(id_codes, ids, status_codes, STATUS_WORDS, index)
    assert len(statuses) == len(expected)
    assert list(statuses) == list(expected)
    assert dict(statuses.items()) == expected
    for member in [*ids, "M-none", "", "m1"]:
        assert (member in statuses) == (member in expected)
        assert statuses.get(member) == expected.get(member)
    assert statuses.distinct_values() == set(expected.values())
    assert used_categories(None, statuses) == used_categories(None, expected)
    model = SimpleNamespace(member_index={m: k for k, m in enumerate(ids)})
    assert _flagged_positions(model, statuses) == _flagged_positions(model, expected)


def _rows(ids: list[str], id_codes: np.ndarray, status_codes: np.ndarray) -> Rows:
    n = id_codes.size
    nothing = Numbers(np.zeros(n), np.zeros(n, dtype=bool))
    return Rows(
        [
            Labels(id_codes, ids),
            Labels(np.zeros(n), ["member"]),
            Labels(np.arange(n) % 2, ["dead", "wind"]),
            nothing,
            Plain([""] * n),
            nothing,
            nothing,
            nothing,
            nothing,
            nothing,
            Labels(status_codes, STATUS_WORDS),
        ]
    )


@settings(max_examples=100, deadline=None)
@given(one_column())
def test_member_statuses_by_codes_are_those_of_the_dict(drawn) -> None:
    ids, id_codes, status_codes = drawn
    grouped = document._CaseRows(_rows(ids, id_codes, status_codes))
    at = np.arange(id_codes.size)
    grouped.members = {"dead": at[at % 2 == 0], "wind": at[at % 2 == 1]}
    for name in ("dead", "wind"):
        with pytest.MonkeyPatch.context() as patch:
            patch.setattr(document, "ROW_STATUSES_FROM", 10**9)
            as_dict = document.member_statuses(grouped, name)
            patch.setattr(document, "ROW_STATUSES_FROM", 0)
            by_codes = document.member_statuses(grouped, name)
        assert isinstance(as_dict, dict)
        assert isinstance(by_codes, RowStatuses) == bool(grouped.members[name].size)
        assert dict(by_codes.items()) == as_dict


@given(st.lists(st.integers(0, 70), max_size=60), st.integers(0, 80))
def test_first_seen_is_dict_fromkeys(codes: list[int], extra: int) -> None:
    """The load columns of a report in the order of their first rows, as dict.fromkeys gives
    them, below and above the count where the scan gives way to the dict."""
    array_ = np.array(codes, dtype=np.int64)
    count = max(codes, default=-1) + 1 + extra
    assert document.first_seen(array_, count) == list(dict.fromkeys(codes))
