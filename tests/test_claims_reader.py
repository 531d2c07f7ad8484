"""Reading claimed tables (CSV and .xlsx): layouts, labels, encodings, workbooks, bad files.

The expected numbers here are the numbers written in the test tables themselves (a reader must
return what the table says); T/C, accounting parentheses and decimal commas are read by the
conventions of the trade stated in tests/test_claim_values.py (common practice).
"""

from __future__ import annotations

import hashlib
import io
import os
import struct
import zipfile
from pathlib import Path

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from verify.errors import InputError
from verify.io import claims as claims_module
from verify.io.case import build_model
from verify.io.claims import ClaimedValue, ClaimsTable, read_claims
from verify.model import Model

REL = 1e-12


def _model(loads: dict | None = None, **extra: dict) -> Model:
    """A small 2D truss: A-B-C bottom chord, D above B; pinned at A, roller at C."""
    data = {
        "units": {"length": "m", "force": "kN"},
        "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
        "members": {
            "AB": ["A", "B"],
            "BC": ["B", "C"],
            "AD": ["A", "D"],
            "BD": ["B", "D"],
            "CD": ["C", "D"],
        },
        "supports": {"A": ["x", "y"], "C": ["y"]},
        "loads": loads
        if loads is not None
        else {"dead": {"D": [0.0, -10.0]}, "snow": {"D": [0.0, -5.0]}},
    }
    data.update(extra)
    return build_model(data, source="case.toml")


MODEL = _model()
ONE_CASE = _model({"dead": {"D": [0.0, -10.0]}})


def _csv(tmp_path: Path, text: str, name: str = "claims.csv", encoding: str = "utf-8") -> Path:
    path = tmp_path / name
    path.write_bytes(text.encode(encoding))
    return path


def _by(table: ClaimsTable) -> dict[tuple[str, str], ClaimedValue]:
    """Claims keyed by (member id or 'joint.axis', column)."""
    return {
        (v.member if v.member is not None else ".".join(v.reaction or ()), v.column): v
        for v in table.values
    }


def _errors(path: Path, model: Model = MODEL, **options: str) -> str:
    with pytest.raises(InputError) as info:
        read_claims(path, model, **options)
    return str(info.value)


# -- layouts ------------------------------------------------------------------------------------
def test_wide_form_reads_one_column_per_case_with_header_units(tmp_path: Path) -> None:
    """One column per load case; '(kN)' in the header is the unit; T/C and signs as written."""
    path = _csv(tmp_path, "Member,dead (kN),snow (kN)\nAB,12.4 C,-3\nBC,(5.0),\nCD,7 T,2.5\n")
    table = read_claims(path, MODEL)
    assert table.columns == ("dead", "snow")
    assert table.header_unit == "kN"
    got = _by(table)
    assert (
        got[("AB", "dead")].value == pytest.approx(-12.4, rel=REL)
        and got[("AB", "dead")].sign_fixed
    )
    assert got[("AB", "snow")].value == -3.0 and not got[("AB", "snow")].sign_fixed
    assert got[("BC", "dead")].value == -5.0
    assert ("BC", "snow") not in got  # a blank cell is no claim, never zero
    assert got[("CD", "dead")].value == 7.0 and got[("CD", "dead")].sign_fixed
    assert got[("AB", "dead")].where == "row 2, column 'dead (kN)'"
    assert all(v.unit == "kN" for v in table.values)
    assert len(table.values) == 5 and not table.unmatched


def test_long_form_reads_member_case_force_columns(tmp_path: Path) -> None:
    """Long form: the case comes from the case cell; columns list cases in order of appearance."""
    path = _csv(
        tmp_path, "Element,Load case,Axial force [kip]\nAB,snow,1.5\nAB,dead,2\nBD,dead,-4 C\n"
    )
    table = read_claims(path, MODEL)
    assert table.columns == ("snow", "dead")
    assert table.header_unit == "kip"
    got = _by(table)
    assert got[("AB", "snow")].value == 1.5
    assert got[("BD", "dead")].value == -4.0 and got[("BD", "dead")].unit == "kip"


def test_long_form_case_option_selects_rows(tmp_path: Path) -> None:
    """case= in a long table keeps only that case's rows."""
    path = _csv(tmp_path, "Member,Case,Force\nAB,snow,1.5\nAB,dead,2\n")
    table = read_claims(path, MODEL, case="dead")
    assert [(v.member, v.column, v.value) for v in table.values] == [("AB", "dead", 2.0)]
    assert table.columns == ("dead",)


def test_single_force_column_takes_the_only_load_case(tmp_path: Path) -> None:
    """A force column without a case column belongs to the model's only load case."""
    path = _csv(tmp_path, "Bar,Force (kN)\nAB,3\n")
    table = read_claims(path, ONE_CASE)
    assert [(v.member, v.column, v.value, v.unit) for v in table.values] == [
        ("AB", "dead", 3.0, "kN")
    ]


def test_single_force_column_needs_a_case_when_the_model_has_several(tmp_path: Path) -> None:
    """Several load cases and no case column: an error naming them; case= settles it."""
    path = _csv(tmp_path, "Member,N\nAB,3\n")
    message = _errors(path)
    assert "claims.csv row 1" in message and "'dead', 'snow'" in message
    assert read_claims(path, MODEL, case="snow").values[0].column == "snow"
    assert "Did you mean 'snow'" in _errors(path, case="snwo")


def test_wide_form_case_option_selects_a_column(tmp_path: Path) -> None:
    """case= in a wide table keeps that column only; an unknown one is an error with a hint."""
    path = _csv(tmp_path, "Member,dead,snow\nAB,1,2\n")
    assert [v.column for v in read_claims(path, MODEL, case="snow").values] == ["snow"]
    assert "Did you mean 'dead'" in _errors(path, case="daed")


def test_column_options_name_unrecognised_headers(tmp_path: Path) -> None:
    """member_column / case_column / force_column name columns whose headers are not recognised."""
    path = _csv(tmp_path, "Pos,Situation,Kraft\nAB,dead,1\n")
    table = read_claims(
        path, MODEL, member_column="Pos", case_column="Situation", force_column="Kraft"
    )
    assert [(v.member, v.column, v.value) for v in table.values] == [("AB", "dead", 1.0)]
    assert "Did you mean 'Pos'" in _errors(path, member_column="Poss")


def test_descriptive_columns_are_not_load_cases(tmp_path: Path) -> None:
    """Remarks, lengths and section columns beside a wide table are ignored, not read as cases."""
    path = _csv(tmp_path, "Member,Length (m),Section,dead (kN),Remarks\nAB,3.0,L50x5,1.5,ok\n")
    table = read_claims(path, MODEL)
    assert table.columns == ("dead",)
    assert [(v.member, v.value) for v in table.values] == [("AB", 1.5)]


def test_title_rows_above_the_header_are_skipped(tmp_path: Path) -> None:
    """A title line above the header does not hide the header; rows keep their file numbers."""
    path = _csv(tmp_path, "Member forces from the calc package\n\nMember,dead\nAB,1\n")
    table = read_claims(path, MODEL)
    assert table.values[0].where == "row 4, column 'dead'"


def test_units_row_under_the_header(tmp_path: Path) -> None:
    """A row of units directly under the header gives each column its unit."""
    path = _csv(tmp_path, "Member,dead,snow\n,kN,kip\nAB,1,2\n")
    table = read_claims(path, MODEL)
    assert {v.column: v.unit for v in table.values} == {"dead": "kN", "snow": "kip"}
    assert table.header_unit is None  # two different units: none applies to the whole table


def test_cell_unit_overrides_nothing_and_must_agree_with_the_header(tmp_path: Path) -> None:
    """A unit in the cell is used; one that contradicts the header is an error."""
    ok = _csv(tmp_path, "Member,dead\nAB,3 kip\n", "ok.csv")
    assert read_claims(ok, MODEL).values[0].unit == "kip"
    bad = _csv(tmp_path, "Member,dead (kN)\nAB,3 kip\n", "bad.csv")
    message = _errors(bad)
    assert "bad.csv row 2, column 'dead (kN)'" in message and "kip" in message and "kN" in message


def test_ambiguous_header_unit_is_refused(tmp_path: Path) -> None:
    """'(t)' could be tonne-force or short ton: refused with the column named."""
    path = _csv(tmp_path, "Member,dead (t)\nAB,3\n")
    message = _errors(path)
    assert "column 'dead (t)'" in message and "ambiguous" in message


def test_tc_column_beside_a_force_column(tmp_path: Path) -> None:
    """A T/C column settles the sign of magnitudes in the force column."""
    path = _csv(tmp_path, "Member,Force,T/C\nAB,3,C\nBC,4,T\n")
    got = _by(read_claims(path, ONE_CASE))
    assert got[("AB", "dead")].value == -3.0 and got[("AB", "dead")].sign_fixed
    assert got[("BC", "dead")].value == 4.0


# -- labels -------------------------------------------------------------------------------------
# (label, member id, behaviour)
MEMBER_LABELS = [
    ("AB", "AB", "exact id"),
    ("ab", "AB", "id, case-insensitive"),
    ("B-C", "BC", "joint pair with hyphen"),
    ("C-B", "BC", "joint pair reversed"),
    ("CB", "BC", "reversed pair without separator"),
    ("B C", "BC", "pair separated by a space"),
    ("B/C", "BC", "pair separated by a slash"),
    ("B\u2013C", "BC", "pair separated by an en dash"),
    ("D \u2014 b", "BD", "em dash, spaces, mixed case"),
    ("d_a", "AD", "underscore, lower case"),
]


@pytest.mark.parametrize(
    ("label", "member"), [m[:2] for m in MEMBER_LABELS], ids=[m[2] for m in MEMBER_LABELS]
)
def test_member_label_matching(tmp_path: Path, label: str, member: str) -> None:
    path = _csv(tmp_path, f"Member,dead\n{label},1\n")
    table = read_claims(path, MODEL)
    assert [(v.label, v.member) for v in table.values] == [(label, member)]


# (label, (joint, axis), behaviour)
REACTION_LABELS = [
    ("RA.y", ("A", "y"), "R, joint, dot, axis"),
    ("R_A_y", ("A", "y"), "underscores"),
    ("A.x", ("A", "x"), "joint dot axis"),
    ("RAy", ("A", "y"), "R, joint, axis run together"),
    ("A (y)", ("A", "y"), "axis in parentheses"),
    ("Reaction C y", ("C", "y"), "the word reaction"),
    ("rc.Y", ("C", "y"), "case-insensitive"),
]


@pytest.mark.parametrize(
    ("label", "reaction"), [r[:2] for r in REACTION_LABELS], ids=[r[2] for r in REACTION_LABELS]
)
def test_reaction_label_matching(tmp_path: Path, label: str, reaction: tuple[str, str]) -> None:
    path = _csv(tmp_path, f"Member,dead\n{label},-5\n")
    [value] = read_claims(path, MODEL).values
    assert (value.member, value.reaction, value.value) == (None, reaction, -5.0)


def test_reaction_in_an_unrestrained_direction_is_read_and_elsewhere_unknown(
    tmp_path: Path,
) -> None:
    """C is a roller in y only: 'RC.x' is read as a claim on C's x direction (the comparison says
    C has no reaction there); B carries no support at all, so 'RB.x' names nothing and gets the
    real reaction labels as suggestions."""
    path = _csv(tmp_path, "Member,dead\nRC.x,0\nRB.x,1\n")
    table = read_claims(path, MODEL)
    assert [(v.reaction, v.value) for v in table.values] == [(("C", "x"), 0.0)]
    [unmatched] = table.unmatched
    assert (
        unmatched.label == "RB.x"
        and unmatched.reason == "unknown"
        and unmatched.candidates == ("A.x",)
    )


def test_reaction_with_tc_suffix_is_refused(tmp_path: Path) -> None:
    """A reaction is neither tension nor compression."""
    message = _errors(_csv(tmp_path, "Member,dead\nRA.y,5 C\n"))
    assert "row 2, column 'dead'" in message and "reaction" in message


def test_unknown_label_gets_nearest_real_labels(tmp_path: Path) -> None:
    """An unknown label is data, with the closest member ids suggested."""
    path = _csv(tmp_path, "Member,dead\nBX,1\nAB,2\n")
    table = read_claims(path, MODEL)
    assert [v.member for v in table.values] == ["AB"]
    [unmatched] = table.unmatched
    assert (unmatched.label, unmatched.reason, unmatched.where) == (
        "BX",
        "unknown",
        "row 2, column 'Member'",
    )
    assert unmatched.candidates and set(unmatched.candidates) <= {"BC", "BD", "AB"}


def test_joint_pair_without_a_member_is_unknown(tmp_path: Path) -> None:
    """A-C are both joints but no member joins them: unknown, never a guess."""
    table = read_claims(_csv(tmp_path, "Member,dead\nA-C,1\n"), MODEL)
    assert not table.values and table.unmatched[0].reason == "unknown"


def _numbered_model() -> Model:
    """Joints 1, 2, 11, 12: the label '112' reads as 1-12 and as 11-2."""
    return build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"1": [0.0, 0.0], "2": [1.0, 0.0], "11": [0.0, 1.0], "12": [1.0, 1.0]},
            "members": {
                "a": ["1", "12"],
                "b": ["11", "2"],
                "c": ["1", "2"],
                "d": ["11", "12"],
                "e": ["1", "11"],
            },
            "supports": {"1": ["x", "y"], "2": ["y"]},
            "loads": {"dead": {"12": [0.0, -1.0]}},
        },
        source="numbered.toml",
    )


def test_ambiguous_joint_pair_is_reported_with_both_members(tmp_path: Path) -> None:
    """'112' could be 1-12 (member a) or 11-2 (member b): reported as ambiguous, not guessed."""
    table = read_claims(_csv(tmp_path, "Member,dead\n112,1\n1-12,2\n"), _numbered_model())
    assert [(v.label, v.member) for v in table.values] == [("1-12", "a")]
    [unmatched] = table.unmatched
    assert unmatched.reason == "ambiguous" and set(unmatched.candidates) == {"a", "b"}


def _relabelled_model() -> Model:
    """Member 'BC' deliberately joins A and D; member 'X' joins B and C."""
    return build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
            "members": {
                "AB": ["A", "B"],
                "X": ["B", "C"],
                "BC": ["A", "D"],
                "BD": ["B", "D"],
                "CD": ["C", "D"],
            },
            "supports": {"A": ["x", "y"], "C": ["y"]},
            "loads": {"dead": {"D": [0.0, -10.0]}},
        },
        source="relabelled.toml",
    )


def test_exact_id_wins_over_joint_pair_reading(tmp_path: Path) -> None:
    """'BC' is an id (A-D) and a joint pair (member X): the exact id wins; 'C-B' is the pair."""
    table = read_claims(_csv(tmp_path, "Member,dead\nBC,1\nC-B,2\n"), _relabelled_model())
    assert [(v.label, v.member) for v in table.values] == [("BC", "BC"), ("C-B", "X")]


def test_case_folded_id_competing_with_a_joint_pair_is_ambiguous(tmp_path: Path) -> None:
    """'bc' is not exactly an id: it reads as id 'BC' and as pair B-C (member X), so it is
    ambiguous."""
    table = read_claims(_csv(tmp_path, "Member,dead\nbc,1\n"), _relabelled_model())
    assert not table.values
    assert table.unmatched[0].reason == "ambiguous" and set(table.unmatched[0].candidates) == {
        "BC",
        "X",
    }


def test_ids_stay_strings(tmp_path: Path) -> None:
    """Ids like '007' and '1E1' are matched as text, never turned into numbers."""
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"P": [0.0, 0.0], "Q": [4.0, 0.0], "S": [2.0, 2.0]},
            "members": {"007": ["P", "Q"], "1E1": ["P", "S"], "10": ["Q", "S"]},
            "supports": {"P": ["x", "y"], "Q": ["y"]},
            "loads": {"dead": {"S": [0.0, -1.0]}},
        },
        source="ids.toml",
    )
    table = read_claims(_csv(tmp_path, "Member,dead\n007,1\n1E1,2\n10,3\n"), model)
    assert [(v.label, v.member) for v in table.values] == [
        ("007", "007"),
        ("1E1", "1E1"),
        ("10", "10"),
    ]


# -- encodings and delimiters -------------------------------------------------------------------
def test_european_csv_semicolons_and_decimal_commas(tmp_path: Path) -> None:
    """';'-separated: ',' is the decimal mark and '.' or ' ' group thousands."""
    path = _csv(
        tmp_path, "Stab;Lastfall;Kraft (kN)\nAB;dead;-12,5\nBC;dead;1.234,5\nCD;dead;1 234,5 C\n"
    )
    got = _by(
        read_claims(
            path, MODEL, member_column="Stab", case_column="Lastfall", force_column="Kraft (kN)"
        )
    )
    assert got[("AB", "dead")].value == -12.5
    assert got[("BC", "dead")].value == 1234.5
    assert got[("CD", "dead")].value == -1234.5


def test_excel_sep_directive_line(tmp_path: Path) -> None:
    """Excel's 'sep=;' first line fixes the delimiter and is not a table row."""
    path = _csv(tmp_path, "sep=;\nMember;dead\nAB;2,5\n")
    [value] = read_claims(path, MODEL).values
    assert value.value == 2.5 and value.where == "row 3, column 'dead'"


def test_utf8_bom_is_ignored(tmp_path: Path) -> None:
    """A UTF-8 byte-order mark does not become part of the first header."""
    path = _csv(tmp_path, "Member,dead\nAB,1\n", encoding="utf-8-sig")
    assert read_claims(path, MODEL).values[0].member == "AB"


def test_cp1252_fallback(tmp_path: Path) -> None:
    """Windows-1252 text (en dash as separator and minus) is read when it is not UTF-8."""
    path = _csv(
        tmp_path,
        "Member,dead (kN),Remarks\nB\u2013C,\u20133.5,\u00e9l\u00e9ment\n",
        encoding="cp1252",
    )
    [value] = read_claims(path, MODEL).values
    assert (value.label, value.member, value.value) == ("B\u2013C", "BC", -3.5)


def test_utf16_text_is_read(tmp_path: Path) -> None:
    """Excel's 'Unicode text' export (UTF-16 with BOM, tab-separated) is read."""
    path = _csv(tmp_path, "Member\tdead\nAB\t4\n", name="claims.txt", encoding="utf-16")
    assert read_claims(path, MODEL).values[0].value == 4.0


def test_quoted_comma_thousands_in_comma_csv(tmp_path: Path) -> None:
    """A quoted '1,234.5' in a comma-separated file is one value with a thousands separator."""
    path = _csv(tmp_path, 'Member,dead\nAB,"1,234.5"\n')
    assert read_claims(path, MODEL).values[0].value == 1234.5


def test_the_input_file_is_not_modified_and_is_hashed(tmp_path: Path) -> None:
    """The reader leaves the file as it was and reports the SHA-256 of its bytes."""
    path = _csv(tmp_path, "Member,dead\nAB,1\n")
    before = path.read_bytes()
    stamp = os.stat(path).st_mtime_ns
    table = read_claims(path, MODEL)
    assert path.read_bytes() == before and os.stat(path).st_mtime_ns == stamp
    assert table.sha256 == hashlib.sha256(before).hexdigest()
    assert table.source == str(path) and table.sheet is None


# -- malformed files ----------------------------------------------------------------------------
# (file text, fragments of the message, behaviour)
# fmt: off
MALFORMED = [
    ("", ["claims.csv:", "empty"], "empty file"),
    ("  \n\n", ["claims.csv:", "empty"], "blank lines only"),
    ("Member,dead\n", ["claims.csv row 1", "no rows"], "header only"),
    ("Remarks,Length (m)\nok,3\n", ["claims.csv row 1", "no usable columns", "no member column"],
        "no member column"),
    ("Member,Remarks\nAB,ok\n", ["claims.csv row 1", "no usable columns"], "no force column"),
    ('Member,dead\nAB,1\nBC,"12,4.0 C"\n', ["claims.csv row 3, column 'dead': force '12,4.0 C' "
        "is not a number with an optional T/C suffix."], "text in a number"),
    ("Member,dead\nAB,1\nBD,2\nB-A,3\n", ["claims.csv row 4, column 'dead'", "member 'AB'",
        "row 2 (as 'AB')", "row 4 (as 'B-A')"], "duplicate rows for one member"),
    ("Member,dead\nAB,nan\n", ["claims.csv row 2, column 'dead'", "'nan' is not a number"],
        "NaN text"),
    ("Member,dead\nAB,#VALUE!\n", ["claims.csv row 2, column 'dead'", "spreadsheet error"],
        "spreadsheet error text"),
    ("Member,dead\n#N/A,1\n", ["claims.csv row 2, column 'Member'", "'#N/A'"],
        "spreadsheet error as a label"),
    ("Member,dead\n,1\n", ["claims.csv row 2, column 'Member'", "no member label"],
        "force without a label"),
    ("Member,Case,Force\nAB,,1\n", ["claims.csv row 2, column 'Case'", "no load case"],
        "force without a case"),
    ("Member,Case\nAB,dead\n", ["claims.csv row 1", "needs a force column"],
        "case column without forces"),
    ("Member,dead,dead\nAB,1,2\n", ["claims.csv row 1, column 3", "two columns"],
        "one case in two columns"),
    ("Member,dead\nAB,1,5\n", ["claims.csv row 2, column 3", "no header"],
        "values beyond the header"),
    ("Member,Force,T/C\nAB,3,X\n", ["claims.csv row 2, column 'T/C'", "not T or C"],
        "a bad T/C cell"),
    ("Member,dead\nRA.y,1\nA.y,2\n", ["claims.csv row 3, column 'dead'", "reaction 'A.y'",
        "row 2 (as 'RA.y')"], "duplicate reaction"),
    ("Member,dead (kN),snow (MPa)\nAB,1,2\n", ["claims.csv row 1, column 3",
        "named like load case 'snow'", "'MPa' is not a force unit"],
        "load case column in a stress unit"),
    ("Member,dead (kN),snow (N/mm)\nAB,1,2\n", ["claims.csv row 1, column 3",
        "'N/mm' is not a force unit"], "load case column in a line-load unit"),
    ("Member,M (kNm)\nAB,1\n", ["claims.csv row 1", "no usable columns",
        "skipped 'M (kNm)' ('kNm' is not a force unit)"], "only a moment column"),
]
# fmt: on


@pytest.mark.parametrize(
    ("text", "fragments"), [m[:2] for m in MALFORMED], ids=[m[2] for m in MALFORMED]
)
def test_malformed_claims_file(tmp_path: Path, text: str, fragments: list[str]) -> None:
    path = _csv(tmp_path, text)
    message = _errors(path, ONE_CASE if "Force" in text else MODEL)
    for fragment in fragments:
        assert fragment in message


def test_every_problem_is_reported_at_once(tmp_path: Path) -> None:
    """Three bad cells in one file give one InputError with three located problems."""
    path = _csv(tmp_path, "Member,dead,snow\nAB,x,1\nBC,2,#DIV/0!\nCD,nan,\n")
    with pytest.raises(InputError) as info:
        read_claims(path, MODEL)
    wheres = [p.where for p in info.value.problems]
    assert wheres == ["row 2, column 'dead'", "row 3, column 'snow'", "row 4, column 'dead'"]
    assert all(p.file == str(path) for p in info.value.problems)


def test_missing_file(tmp_path: Path) -> None:
    """A file that does not exist is an input error, not a traceback."""
    assert "file not found" in _errors(tmp_path / "nope.csv")


def test_undecodable_bytes(tmp_path: Path) -> None:
    """Bytes that are neither UTF-8 nor Windows-1252 (0x81 is unassigned in cp1252) are refused."""
    path = tmp_path / "claims.csv"
    path.write_bytes(b"Member,dead\nAB,\x81\n")
    assert "neither UTF-8 nor Windows-1252" in _errors(path)


def test_legacy_xls_is_refused(tmp_path: Path) -> None:
    """An old binary .xls (OLE2 signature) is refused with the remedy."""
    path = tmp_path / "claims.xls"
    path.write_bytes(b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 100)
    assert "save it as .xlsx" in _errors(path)


def test_xlsx_that_is_not_a_zip(tmp_path: Path) -> None:
    """A .xlsx that is not a zip archive is refused, not parsed."""
    path = tmp_path / "claims.xlsx"
    path.write_bytes(b"Member,dead\nAB,1\n")
    assert "claims.xlsx: not a readable .xlsx workbook" in _errors(path)


# -- Excel --------------------------------------------------------------------------------------
def _workbook(path: Path, sheets: dict[str, list[list[object]]]) -> Path:
    book = openpyxl.Workbook()
    book.remove(book.active)
    for title, rows in sheets.items():
        ws = book.create_sheet(title)
        for row in rows:
            ws.append(row)
    book.save(path)
    return path


def test_xlsx_numbers_and_text_cells(tmp_path: Path) -> None:
    """Numeric cells are numbers already; text cells are read like CSV cells; cells are located."""
    path = _workbook(
        tmp_path / "claims.xlsx",
        {
            "Forces": [
                ["Member", "dead (kN)", "snow (kN)"],
                ["AB", 12.5, "3.5 C"],
                ["B-C", -4, "(2)"],
                [7, None, 1],
            ]
        },
    )
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
            "members": {
                "AB": ["A", "B"],
                "BC": ["B", "C"],
                "7": ["A", "D"],
                "BD": ["B", "D"],
                "CD": ["C", "D"],
            },
            "supports": {"A": ["x", "y"], "C": ["y"]},
            "loads": {"dead": {"D": [0.0, -10.0]}, "snow": {"D": [0.0, -5.0]}},
        },
        source="case.toml",
    )
    table = read_claims(path, model)
    assert table.sheet == "Forces" and table.header_unit == "kN"
    got = _by(table)
    assert got[("AB", "dead")].value == 12.5 and not got[("AB", "dead")].sign_fixed
    assert got[("AB", "snow")].value == -3.5 and got[("AB", "snow")].sign_fixed
    assert got[("BC", "dead")].value == -4.0
    assert got[("BC", "snow")].value == -2.0
    assert got[("7", "snow")].value == 1.0  # a numeric label cell 7 is the id '7'
    assert ("7", "dead") not in got
    assert got[("BC", "snow")].where == "sheet 'Forces' cell C3, column 'snow (kN)'"


def test_xlsx_formula_without_cached_value_is_an_error(tmp_path: Path) -> None:
    """openpyxl saves formulas without results: the cell is reported, never read as blank or 0."""
    path = _workbook(
        tmp_path / "claims.xlsx", {"Forces": [["Member", "dead"], ["AB", 1], ["BC", "=1+2"]]}
    )
    message = _errors(path)
    assert "claims.xlsx sheet 'Forces' cell B3, column 'dead'" in message
    assert "recalculate and re-save the workbook" in message


def test_xlsx_formula_uses_the_cached_value_and_is_never_evaluated(tmp_path: Path) -> None:
    """A formula '=1+2' whose cached result is 7 reads as 7: the cached value, not an evaluation."""
    plain = _workbook(tmp_path / "plain.xlsx", {"Forces": [["Member", "dead"], ["BC", "=1+2"]]})
    source = io.BytesIO(plain.read_bytes())
    target = tmp_path / "cached.xlsx"
    with zipfile.ZipFile(source) as zin, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                assert b"<f>1+2</f><v />" in data
                data = data.replace(b"<f>1+2</f><v />", b"<f>1+2</f><v>7</v>")
            zout.writestr(info, data)
    [value] = read_claims(target, MODEL).values
    assert (value.member, value.value) == ("BC", 7.0)


def test_xlsx_error_cell_is_reported(tmp_path: Path) -> None:
    """A cached spreadsheet error (#N/A) is a clear error at its cell."""
    path = _workbook(tmp_path / "claims.xlsx", {"Forces": [["Member", "dead"], ["AB", "#N/A"]]})
    message = _errors(path)
    assert "cell B2" in message and "#N/A" in message


def test_xlsx_date_cell_is_reported(tmp_path: Path) -> None:
    """A date in a force cell is not silently turned into a serial number."""
    import datetime

    path = _workbook(
        tmp_path / "claims.xlsx",
        {"Forces": [["Member", "dead"], ["AB", datetime.date(2024, 3, 1)]]},
    )
    assert "date" in _errors(path)


def test_xlsx_sheet_is_chosen_by_its_content(tmp_path: Path) -> None:
    """Several sheets and none named: the one whose rows name the model's members is read; naming
    one reads it; a typo gets a hint."""
    path = _workbook(
        tmp_path / "claims.xlsx",
        {
            "Cover": [["Truss T1 calculation"], ["Checked by", "someone"]],
            "Loads": [["Joint", "Fy (kN)"], ["D", -10]],
            "Forces": [["Member", "dead"], ["AB", 2]],
        },
    )
    table = read_claims(path, MODEL)
    assert table.sheet == "Forces" and table.values[0].value == 2.0
    assert read_claims(path, MODEL, sheet="forces").sheet == "Forces"
    assert "Did you mean 'Forces'" in _errors(path, sheet="Forcse")


def test_xlsx_two_sheets_naming_members_ask_which(tmp_path: Path) -> None:
    """Two sheets both name members beside numbers: the reader asks, naming both, and reads none."""
    path = _workbook(
        tmp_path / "claims.xlsx",
        {
            "Notes": [["Checked by", "someone"]],
            "Issue A": [["Member", "dead"], ["AB", 2]],
            "Issue B": [["Member", "dead"], ["B-C", 3]],
        },
    )
    message = _errors(path)
    assert "'Issue A', 'Issue B'" in message and "'Notes'" not in message and "--sheet" in message
    assert read_claims(path, MODEL, sheet="Issue B").values[0].member == "BC"


def test_sheet_option_on_a_csv_is_an_error(tmp_path: Path) -> None:
    """A CSV has no sheets; asking for one is a usage error, not silently ignored."""
    assert "no sheets" in _errors(_csv(tmp_path, "Member,dead\nAB,1\n"), sheet="Forces")


def test_zip_bomb_by_compression_ratio_is_refused(tmp_path: Path) -> None:
    """20 MB of zeros deflates to ~20 kB: the ratio is far over the limit, refused before
    parsing."""
    path = tmp_path / "bomb.xlsx"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"\x00" * (20 * 1024 * 1024))
    assert path.stat().st_size < 200_000
    message = _errors(path)
    assert "bomb.xlsx" in message and "zip bomb" in message and "times" in message


def test_zip_declaring_two_gigabytes_is_refused(tmp_path: Path) -> None:
    """A small zip whose central directory declares 2 GB uncompressed is refused on the
    declaration."""
    small = io.BytesIO()
    with zipfile.ZipFile(small, "w", zipfile.ZIP_STORED) as archive:
        archive.writestr("xl/worksheets/sheet1.xml", b"<worksheet/>")
    data = bytearray(small.getvalue())
    entry = data.index(b"PK\x01\x02")
    # Central directory file header: uncompressed size is the 4-byte field at offset 24 (APPNOTE
    # 4.3.12).
    struct.pack_into("<I", data, entry + 24, 2 * 1024**3)
    path = tmp_path / "huge.xlsx"
    path.write_bytes(bytes(data))
    assert 2 * 1024**3 > claims_module.MAX_UNCOMPRESSED_BYTES
    message = _errors(path)
    assert "huge.xlsx" in message and "2,147 MB" in message and "zip bomb" in message


def test_empty_workbook_sheet(tmp_path: Path) -> None:
    """A workbook whose only sheet is empty is an error naming the sheet."""
    path = _workbook(tmp_path / "claims.xlsx", {"Forces": []})
    assert "sheet 'Forces' is empty" in _errors(path)


def test_workbook_table_problems_name_the_sheet(tmp_path: Path) -> None:
    """Header-level problems in a workbook name the sheet and row."""
    path = _workbook(tmp_path / "claims.xlsx", {"Forces": [["Member", "Remarks"], ["AB", "ok"]]})
    assert "claims.xlsx sheet 'Forces' row 1: no usable columns" in _errors(path)


def test_problems_are_capped_and_counted(tmp_path: Path) -> None:
    """A wholly broken table lists the first MAX_PROBLEMS problems and counts the rest."""
    cap = claims_module.MAX_PROBLEMS
    rows = "".join(f"AB,x{k}\n" if k == 0 else f"A-B,x{k}\n" for k in range(cap + 30))
    with pytest.raises(InputError) as info:
        read_claims(_csv(tmp_path, "Member,dead\n" + rows), MODEL)
    assert len(info.value.problems) == cap + 1
    assert "and 30 more problems" in str(info.value.problems[-1])


# -- property: joint-pair labels never resolve to the wrong member -------------------------------
_JOINT_NAMES = ["A", "B", "AB", "1", "11", "2", "12", "C1", "C"]
_SEPARATORS = ["", "-", " ", "/", "\u2013", "_"]


@st.composite
def _pair_truss(draw: st.DrawFn) -> tuple[Model, list[tuple[str, str, str]]]:
    """A random model over joint names chosen to collide when run together ('1'+'12' vs
    '11'+'2')."""
    names = draw(st.lists(st.sampled_from(_JOINT_NAMES), min_size=3, max_size=7, unique=True))
    # Joints on a parabola: distinct points, no member passes through another joint's position.
    joints = {n: [float(k), float(k * k)] for k, n in enumerate(names)}
    pairs = [(names[k], names[k + 1]) for k in range(len(names) - 1)]
    extra = [(a, b) for i, a in enumerate(names) for b in names[i + 2 :]]
    pairs += draw(st.lists(st.sampled_from(extra), unique=True, max_size=6)) if extra else []
    members = {f"m{k}": [a, b] for k, (a, b) in enumerate(pairs)}
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": joints,
            "members": members,
            "supports": {names[0]: ["x", "y"], names[-1]: ["y"]},
            "loads": {"dead": {names[1]: [0.0, -1.0]}},
        },
        source="random.toml",
    )
    labels = []
    for k, (a, b) in enumerate(pairs):
        sep = draw(st.sampled_from(_SEPARATORS))
        first, second = draw(st.sampled_from([(a, b), (b, a)]))
        text = f"{first}{sep}{second}"
        labels.append((f"m{k}", draw(st.sampled_from([text, text.lower()])), f"c{k}"))
    return model, labels


@settings(
    max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(_pair_truss())
def test_joint_pair_labels_resolve_to_their_member_or_are_ambiguous(
    tmp_path: Path, case: tuple[Model, list[tuple[str, str, str]]]
) -> None:
    """Every member written as a joint pair (any order, separator, case) is matched to that member,
    or reported ambiguous with that member among the candidates -- never matched to another one."""
    model, labels = case
    text = "Member,Case,Force\n" + "".join(f"{label},{column},1\n" for _, label, column in labels)
    table = read_claims(_csv(tmp_path, text, name="pairs.csv"), model)
    matched = {v.column: v.member for v in table.values}
    ambiguous = {u.where: u for u in table.unmatched}
    for row, (member, label, column) in enumerate(labels, start=2):
        if column in matched:
            assert matched[column] == member, label
        else:
            found = ambiguous[f"row {row}, column 'Member'"]
            assert found.reason == "ambiguous" and member in found.candidates, label


def test_unquoted_decimal_comma_in_comma_csv_gets_a_hint(tmp_path: Path) -> None:
    """'AB,12,4' splits into two fields; the message says why and how to fix it."""
    message = _errors(_csv(tmp_path, "Member,dead\nAB,12,4\n"))
    assert "claims.csv row 2, column 3" in message and "decimal comma" in message


def test_force_column_beside_case_named_columns_is_refused(tmp_path: Path) -> None:
    """A force column and a column named like a load case: two layouts at once, so not guessed."""
    message = _errors(_csv(tmp_path, "Member,Force,snow\nAB,1,2\n"), case="dead")
    assert "claims.csv row 1, column 3" in message and "column 'snow'" in message


# -- the direct reading of plain rows ------------------------------------------------------------
# Wide tables mixing rows the direct path takes (a member label, plain numbers) with rows it hands
# to the general reader (T/C, units in cells, reactions, unknown or ambiguous labels, blanks,
# duplicates, decimal commas, text): both readers must give the same claims or the same message.
# fmt: off
PLAIN_AND_MESSY = [
    "Member,dead (kN),snow\nAB,12.5,-3\nBC,1.5e1,\nCD,7 T,2.5\nAD,-4.25E-1,0\nBD,(5.0),1\n"
        "RA.y,3,1\n",
    "Member,dead,snow\nAB,1,2\nA-B,3,4\nXY,5,6\nBD,,\n\nCD,8 kN,9\n",
    "Member;dead (kN);snow\nAB;1,5;2\nBC;1.250;3\nCD;-4;5,25\n",
    "Member,dead\nAB,1\nBC,two\n",
    "Member,dead\nAB,1\nBC,1e400\n",
    "Member,dead,snow\nab,1,2\nB C,3,4\nD-C,5,6\nAD,#N/A,1\n",
    "Label,Remarks,dead (kN)\nAB,ok,1\nBC,,2\n",
]
# fmt: on


@pytest.mark.parametrize("text", PLAIN_AND_MESSY, ids=range(len(PLAIN_AND_MESSY)))
def test_direct_row_reading_matches_the_general_reader(
    tmp_path: Path, monkeypatch, text: str
) -> None:
    import verify.io.claims as claims_module

    path = _csv(tmp_path, text)

    def outcome() -> object:
        try:
            table = read_claims(path, MODEL)
        except InputError as error:
            return error.render()
        return (table.values, table.unmatched, table.columns, table.header_unit)

    direct = outcome()
    monkeypatch.setattr(claims_module, "FAST_ROWS", False)
    assert direct == outcome()


def test_direct_row_reading_matches_for_excel_numbers(tmp_path: Path, monkeypatch) -> None:
    import verify.io.claims as claims_module

    path = _workbook(
        tmp_path / "claims.xlsx",
        {
            "Forces": [
                ["Member", "dead (kN)", "snow (kN)"],
                ["AB", 12.5, "3 C"],
                ["BC", -1.0, None],
                ["XY", 2.0, 1.0],
            ]
        },
    )
    direct = read_claims(path, MODEL)
    monkeypatch.setattr(claims_module, "FAST_ROWS", False)
    general = read_claims(path, MODEL)
    assert (direct.values, direct.unmatched) == (general.values, general.unmatched)
    assert [v.where for v in direct.values][:2] == [
        "sheet 'Forces' cell B2, column 'dead (kN)'",
        "sheet 'Forces' cell C2, column 'snow (kN)'",
    ]


def test_a_lone_dash_is_no_claim(tmp_path: Path) -> None:
    """'-' or '—' where a zero-force member would be: nothing claimed there, not bad input."""
    path = _csv(tmp_path, "Member,dead (kN),snow (kN)\nAB,1.5,—\nBC,-,2\nCD,–,\n")
    table = read_claims(path, MODEL)
    assert sorted((v.member, v.column) for v in table.values) == [("AB", "dead"), ("BC", "snow")]


def test_each_value_keeps_its_cell_as_written(tmp_path: Path) -> None:
    """The audit trail quotes the cell, not a re-formatted number: '4.50 T', '(12.40)', '0.270'."""
    path = _csv(tmp_path, "Member,dead (kN)\nAB,4.50 T\nBC,(12.40)\nCD,0.270\n")
    assert [v.text for v in read_claims(path, MODEL).values] == ["4.50 T", "(12.40)", "0.270"]


def test_xlsx_number_shown_with_fixed_decimals_keeps_them(tmp_path: Path) -> None:
    """A cell holding 10 shown as '10.00' (format 0.00) was written to the hundredth: its text is
    '10.00', so the rounding allowance is half a hundredth, not half a unit. General cells are
    left as numbers."""
    from verify.io.claims import _format_decimals

    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Forces"
    ws.append(["Member", "dead (kN)"])
    ws.append(["AB", 10])
    ws.append(["BC", 2.5])
    ws["B2"].number_format = "0.00"
    path = tmp_path / "claims.xlsx"
    book.save(path)
    values = read_claims(path, MODEL).values
    assert [(v.member, v.value, v.text) for v in values] == [
        ("AB", 10.0, "10.00"),
        ("BC", 2.5, "2.5"),
    ]
    assert [
        _format_decimals(f)
        for f in ("General", "0.00", "#,##0.000", "0.0;(0.0)", "#,##0", '"kN" 0.00', "0%")
    ] == [None, 2, 3, 1, 0, 2, None]
