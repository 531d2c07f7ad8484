"""A claims CSV made of millions of near-empty lines is refused by its line count before any
row is split into fields, with one message naming the file and the limit."""

from __future__ import annotations

from pathlib import Path

import pytest

from verify.errors import InputError
from verify.io.case import build_model
from verify.io.claims import read_claims, source_csv

MODEL = build_model(
    {
        "units": {"length": "m", "force": "kN"},
        "joints": {"A": [0.0, 0.0], "B": [4.0, 0.0], "C": [2.0, 2.0]},
        "members": {"AB": ["A", "B"], "AC": ["A", "C"], "BC": ["B", "C"]},
        "supports": {"A": ["x", "y"], "B": ["y"]},
        "loads": {"dead": {"C": [0.0, -10.0]}},
    },
    source="case.toml",
)


def test_a_table_of_more_lines_than_the_limit_is_refused_by_count(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(source_csv, "MAX_CSV_ROWS", 50)
    path = tmp_path / "claims.csv"
    path.write_text("Member,dead (kN)\nAB,5\n" + ",\n" * 60)
    with pytest.raises(InputError) as info:
        read_claims(path, MODEL)
    message = str(info.value)
    assert "claims.csv" in message and "62 lines (limit 50)" in message


def test_a_table_within_the_limit_is_read(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(source_csv, "MAX_CSV_ROWS", 50)
    path = tmp_path / "claims.csv"
    path.write_text("Member,dead (kN)\nAB,5\nAC,-7.07\nBC,-7.07\n")
    table = read_claims(path, MODEL)
    assert {v.member: v.value for v in table.values} == {"AB": 5.0, "AC": -7.07, "BC": -7.07}
