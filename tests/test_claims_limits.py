"""Hostile or broken claims files are refused quickly, with their place named and the cell cut
short: out-of-range numbers, 80 KB cells, control characters, far-flung workbook cells, encrypted
workbooks. The limits are the reader's own constants; these tests check the refusals happen and
say where, never how fast (a quadratic pattern would make them hang instead)."""

from __future__ import annotations

import io
import zipfile
from pathlib import Path

import openpyxl
import pytest

from verify.cli import main
from verify.errors import InputError
from verify.io.case import build_model
from verify.io.claims import read_claims
from verify.io.claims.source_xlsx import MAX_COLUMNS, MAX_ROWS
from verify.io.values import MAX_QUOTED_CHARS

MODEL = build_model(
    {
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
        "loads": {"dead": {"D": [0.0, -10.0]}},
    },
    source="case.toml",
)
# A message quoting a cell shows at most MAX_QUOTED_CHARS of it plus its length and the place.
SHORT_MESSAGE = 600


def _refusal(path: Path, **options: str) -> str:
    with pytest.raises(InputError) as info:
        read_claims(path, MODEL, **options)
    return str(info.value)


def _patched_workbook(tmp_path: Path, rows: list[list[object]], old: bytes, new: bytes) -> Path:
    """A workbook written by openpyxl with one byte string of its sheet XML replaced."""
    book = openpyxl.Workbook()
    for row in rows:
        book.active.append(row)
    plain = io.BytesIO()
    book.save(plain)
    target = tmp_path / "claims.xlsx"
    with zipfile.ZipFile(plain) as zin, zipfile.ZipFile(target, "w", zipfile.ZIP_DEFLATED) as zout:
        for info in zin.infolist():
            data = zin.read(info.filename)
            if info.filename == "xl/worksheets/sheet1.xml":
                assert old in data
                data = data.replace(old, new)
            zout.writestr(info, data)
    return target


def test_xlsx_number_beyond_double_range_is_refused_at_its_cell(tmp_path: Path) -> None:
    """A cell holding 1e400 (infinity once read) is bad input at B3, never a claim that agrees."""
    path = _patched_workbook(
        tmp_path, [["Member", "dead"], ["AB", 1.5], ["BC", 2.25]], b"<v>2.25</v>", b"<v>1e400</v>"
    )
    message = _refusal(path)
    assert "cell B3" in message and "out of range" in message


def test_80_kb_force_cell_is_refused_and_quoted_short(tmp_path: Path) -> None:
    """An 80 KB force cell ending in letters (the unit pattern's worst case) is refused at once."""
    cell = "1 " + "k" * 80_000
    path = tmp_path / "claims.csv"
    path.write_text(f"Member,dead\nAB,{cell}\n")
    message = _refusal(path)
    assert "claims.csv row 2, column 'dead'" in message and "80,002 characters" in message
    assert len(message) < SHORT_MESSAGE and cell[:MAX_QUOTED_CHARS] in message


@pytest.mark.parametrize(
    "label",
    ["R" + " " * 80_000 + "x", "A" * 40_000 + "-B", "r" + "_" * 80_000],
    ids=["spaces", "letters", "separators"],
)
def test_80_kb_label_is_refused_and_quoted_short(tmp_path: Path, label: str) -> None:
    """Overlong labels (reaction and joint-pair patterns' worst cases) are refused, cut short."""
    path = tmp_path / "claims.csv"
    path.write_text(f'Member,dead\nAB,1\n"{label}",2\n')
    message = _refusal(path)
    assert "row 3, column 'Member'" in message and f"{len(label):,} characters" in message
    assert len(message) < SHORT_MESSAGE


def test_40_kb_header_is_a_note_and_is_not_echoed(tmp_path: Path) -> None:
    """A 40 KB header cell is read as a note column; the table still reads, nothing echoes it."""
    path = tmp_path / "claims.csv"
    path.write_text("Member,dead," + "n" * 40_000 + "\nAB,1,see note\n")
    [value] = read_claims(path, MODEL).values
    assert (value.member, value.value) == ("AB", 1.0)


def test_control_characters_in_a_label_are_refused_and_shown_escaped(tmp_path: Path) -> None:
    """An escape sequence in a label never reaches the terminal: refused, shown as \\x1b."""
    path = tmp_path / "claims.csv"
    path.write_text('Member,dead\nAB,1\n"B\x1b[31mC",2\n')
    message = _refusal(path)
    assert "row 3" in message and "\\x1b[31m" in message and "\x1b" not in message


def test_workbook_cell_in_the_last_column_is_refused_before_reading(tmp_path: Path) -> None:
    """Cells at column XFD on 6,000 rows would pad every row to 16,384 cells: refused, named."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Forces"
    ws.append(["Member", "dead"])
    ws.append(["AB", 1.0])
    for r in range(3, 6003):
        ws.cell(row=r, column=16_384, value="x")
    path = tmp_path / "claims.xlsx"
    book.save(path)
    assert 16_384 > MAX_COLUMNS
    message = _refusal(path)
    assert (
        "sheet 'Forces'" in message
        and "XFD" in message
        and f"limit {MAX_COLUMNS} columns" in message
    )


def test_workbook_with_a_million_rows_is_refused_before_reading(tmp_path: Path) -> None:
    """A cell on row 1,000,000 is far past any claims table: refused from the sheet XML."""
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = "Forces"
    ws.append(["Member", "dead"])
    ws.append(["AB", 1.0])
    ws.cell(row=1_000_000, column=1, value="end")
    path = tmp_path / "claims.xlsx"
    book.save(path)
    assert 1_000_000 > MAX_ROWS
    message = _refusal(path)
    assert "sheet 'Forces'" in message and "row 1,000,000" in message


def _encrypted_container() -> bytes:
    """The shape of a password-protected .xlsx: an OLE compound file (magic number, MS-CFB 2.2)
    whose directory names an 'EncryptedPackage' stream (MS-OFFCRYPTO 2.3.4.4). Only what the
    reader looks at is filled in."""
    header = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 504
    entry = "EncryptedPackage".encode("utf-16-le") + b"\x00\x00"
    return header + entry.ljust(128, b"\x00") + b"\x00" * 384


def test_encrypted_workbook_is_named_as_encrypted(tmp_path: Path) -> None:
    """Not 'a legacy .xls': the message says encrypted and how to get a readable copy; exit 2."""
    path = tmp_path / "claims.xlsx"
    path.write_bytes(_encrypted_container())
    message = _refusal(path)
    assert "encrypted" in message and "legacy" not in message
    case = tmp_path / "case.toml"
    case.write_text(
        '[units]\nlength = "m"\nforce = "kN"\n[joints]\nA = [0.0, 0.0]\nB = [3.0, 0.0]\n'
        "C = [1.5, 2.0]\n"
        '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nAC = ["A", "C"]\n[supports]\n'
        'A = ["x", "y"]\nB = ["y"]\n'
        "[loads.dead]\nC = [0.0, -10.0]\n"
    )
    from click.testing import CliRunner

    result = CliRunner().invoke(main, ["check", str(case), "--claims", str(path)])
    assert (
        result.exit_code == 2 and "encrypted" in result.stderr and "Traceback" not in result.output
    )
    assert path.read_bytes() == _encrypted_container()  # never modified
