"""Two tables stacked in one file (one per load case, each under its title and its own header)
are said once, at the second header, instead of a duplicate claim per row; a table continued
under a repeated header (an export with page breaks) is still read whole.

Check values: the triangle's closed forms (tests/test_claims_layouts.py).
"""

from __future__ import annotations

import pytest
from test_claims_layouts import DEAD, MODEL, SNOW, _force

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.errors import InputError
from verify.io.claims import read_claims

MEMBERS = ("M1", "M2", "M3", "M4", "M5")


def _block(load: float, members=MEMBERS) -> str:
    return "".join(f"{m},{_force(m, load):.3f}\n" for m in members)


def _refusal(tmp_path, text: str, **options) -> str:
    path = tmp_path / "claims.csv"
    path.write_text(text)
    with pytest.raises(InputError) as raised:
        read_claims(path, MODEL, **options)
    return str(raised.value)


def test_a_second_table_under_its_title_is_said_once_at_its_header(tmp_path):
    text = (
        "Dead load forces\nMember,Force (kN)\n"
        + _block(DEAD)
        + "\nSnow load forces\nMember,Force (kN)\n"
        + _block(SNOW * 1.3)
    )
    message = _refusal(tmp_path, text, case="dead")
    assert "row 10: a second table starts here under 'Snow load forces' (row 9)" in message
    assert "first 'M1', row 3" in message
    assert "duplicate claim" not in message and message.count("second table") == 1


def test_a_second_table_with_its_own_case_heading_is_said_too(tmp_path):
    text = "Member,dead (kN)\n" + _block(DEAD) + "\nMember,snow (kN)\n" + _block(SNOW)
    message = _refusal(tmp_path, text)
    assert "row 8: a second table starts here" in message and "duplicate claim" not in message


def test_a_table_continued_under_a_repeated_header_is_read_whole(tmp_path):
    text = "Member,dead (kN),snow (kN)\n" + "".join(
        f"{m},{_force(m, DEAD):.3f},{_force(m, SNOW):.3f}\n"
        + ("Member,dead (kN),snow (kN)\n" if m == "M2" else "")
        for m in MEMBERS
    )
    path = tmp_path / "claims.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    assert len(table.values) == 10
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_a_member_written_twice_in_one_table_is_still_a_duplicate_claim(tmp_path):
    message = _refusal(tmp_path, "Member,dead (kN)\n" + _block(DEAD) + "M3,-7.071\n")
    assert "duplicate claim: member 'M3' for 'dead' is given twice, in row 4" in message


def test_a_continued_table_that_gives_a_member_twice_keeps_its_duplicate_claim(tmp_path):
    """Header repeated after M2, new members under it, then M2 again: a duplicate claim."""
    text = (
        "Member,dead (kN)\n"
        + _block(DEAD, ("M1", "M2"))
        + "Member,dead (kN)\n"
        + _block(DEAD, ("M3", "M4", "M2"))
    )
    message = _refusal(tmp_path, text)
    assert "duplicate claim: member 'M2' for 'dead' is given twice, in row 3" in message
    assert "second table" not in message
