"""A claims table printed to PDF by a real spreadsheet program (LibreOffice Calc, a Debian
package that .ci/run installs), not by the PDF-writing library the other PDF tests use: ruled
cells, headings wrapped inside narrow cells, a group heading merged over the case columns, a
landscape sheet with T/C letters. The workbook is written here with openpyxl and printed with
`soffice --convert-to pdf`; the test skips, saying why, where the program is missing.

Forces are the closed form of tests/test_claims_pdf.py (a load P at the apex D of a 3-3-3
triangle pair: AB = BC = P/2, AD = CD = -P/sqrt(2), BD = 0).
"""

from __future__ import annotations

import shutil
import subprocess
from pathlib import Path

import pytest
from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Side
from test_claims_pdf import DEAD, MODEL, SNOW, _force, _members

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.compare.findings import FindingKind
from verify.io.claims import read_claims

SOFFICE = shutil.which("soffice") or shutil.which("libreoffice")
pytestmark = pytest.mark.skipif(
    SOFFICE is None, reason="LibreOffice (soffice) is not installed; .ci/run installs it"
)
WRONG = 9.99  # planted on M1 dead in the landscape sheet: a real error, well beyond rounding


def _ruled(ws, rows: range, wrapped: tuple[int, ...]) -> None:
    thin = Side(style="thin")
    for row in ws.iter_rows(min_row=rows.start, max_row=rows.stop - 1, max_col=5):
        for cell in row:
            cell.border = Border(top=thin, bottom=thin, left=thin, right=thin)
            if cell.row in wrapped:
                cell.alignment = Alignment(wrap_text=True, horizontal="center", vertical="center")
            elif cell.column > 1 and isinstance(cell.value, float):
                cell.number_format = "0.00"


@pytest.fixture(scope="module")
def printed(tmp_path_factory: pytest.TempPathFactory) -> Path:
    folder = tmp_path_factory.mktemp("printed")
    book = Workbook()
    portrait = book.active
    portrait.title = "Forces"
    portrait.append(["Roof truss T3 - member forces (invented)"])
    portrait.append(["Job 2291   Calc by A. Designer"])
    portrait.append([])
    portrait.append(["Member", "Axial force (kN)", None])
    portrait.merge_cells("B4:C4")
    portrait.append([None, "dead", "snow"])
    for m in _members(5):
        portrait.append([m, round(_force(m, DEAD), 2), round(_force(m, SNOW), 2)])
    portrait.append([])
    portrait.append(["Note: unfactored forces, tension positive."])
    for column, width in zip("ABC", (9, 7, 7), strict=True):
        portrait.column_dimensions[column].width = width
    _ruled(portrait, range(4, 11), wrapped=(4, 5))

    landscape = book.create_sheet("Forces TC")
    landscape.page_setup.orientation = "landscape"
    landscape.append(["Member", "dead (kN)", "T/C", "snow (kN)", "T/C"])
    for m in _members(5):
        d, s = _force(m, DEAD), _force(m, SNOW)
        dead = WRONG if m == "M1" else round(abs(d), 2)
        landscape.append([m, dead, "C" if d < 0 else "T", round(abs(s), 2), "C" if s < 0 else "T"])
    for column, width in zip("ABCDE", (9, 7, 5, 7, 5), strict=True):
        landscape.column_dimensions[column].width = width
    _ruled(landscape, range(1, 7), wrapped=(1,))

    plain = book.create_sheet("Forces plain")  # no rules; some forces typed in as text
    plain.append(["Member", "Axial force (kN)", None])
    plain.merge_cells("B1:C1")
    plain.append([None, "dead", "snow"])
    for k, m in enumerate(_members(5)):
        dead, snow = round(_force(m, DEAD), 2), round(_force(m, SNOW), 2)
        # Text cells print left-aligned, hard against the right-aligned number before them.
        plain.append([m, dead, f"{snow:.2f}" if k % 2 else snow])
    for column, width in zip("ABC", (9, 7, 7), strict=True):
        plain.column_dimensions[column].width = width
    plain["B1"].alignment = Alignment(horizontal="center")

    mixed = book.create_sheet("Forces mixed")  # wide columns: text left, numbers right
    mixed.append(["Member", "dead (kN)", "snow (kN)"])
    for k, m in enumerate(_members(5)):
        dead, snow = round(_force(m, DEAD), 2), round(_force(m, SNOW), 2)
        mixed.append([m, f"{dead:.2f}" if k % 2 else dead, snow if k % 2 else f"{snow:.2f}"])
    for column, width in zip("ABC", (10, 16, 16), strict=True):
        mixed.column_dimensions[column].width = width

    book.save(folder / "forces.xlsx")
    subprocess.run(
        [
            str(SOFFICE),
            f"-env:UserInstallation=file://{folder / 'profile'}",
            "--headless",
            "--convert-to",
            "pdf",
            "--outdir",
            str(folder),
            str(folder / "forces.xlsx"),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    return folder / "forces.pdf"


def test_printed_sheet_with_group_heading_and_wrapped_headings_agrees(printed: Path) -> None:
    table = read_claims(printed, MODEL, pages="1")
    assert table.columns == ("dead", "snow") and {v.unit for v in table.values} == {"kN"}
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_printed_landscape_sheet_finds_the_one_planted_error_where_it_was_written(
    printed: Path,
) -> None:
    table = read_claims(printed, MODEL, pages="2")
    result = compare_claims(analyse(MODEL), table)
    errors = [f for f in result.findings if f.kind is FindingKind.VALUE_MISMATCH]
    assert result.verdict is Verdict.DISCREPANCIES and [f.members for f in errors] == [("M1",)]
    assert errors[0].locations and errors[0].locations[0].startswith("page 2 row ")


def test_printed_sheet_without_rules_and_forces_typed_as_text_agrees(printed: Path) -> None:
    table = read_claims(printed, MODEL, pages="3")
    assert table.columns == ("dead", "snow") and {v.unit for v in table.values} == {"kN"}
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_printed_column_of_text_and_numbers_aligned_apart_is_one_column(printed: Path) -> None:
    """A spreadsheet prints text cells left and numbers right in one wide column: two clusters
    of words that never share a row, read as the one column they are."""
    table = read_claims(printed, MODEL, pages="4")
    assert table.columns == ("dead", "snow") and len(table.values) == 10
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def _print_csv(folder: Path, name: str, text: str) -> Path:
    """A ';'-separated CSV opened with LibreOffice's CSV filter (';' separated, UTF-8, English
    locale) and printed to PDF: '7,07' stays text and prints left-aligned, '0' is a number
    and prints right-aligned in the same column."""
    (folder / name).write_text(text, encoding="utf-8-sig")
    subprocess.run(
        [
            str(SOFFICE),
            f"-env:UserInstallation=file://{folder / 'profile'}",
            "--headless",
            "--infilter=CSV:59,34,76,1",
            "--convert-to",
            "pdf",
            "--outdir",
            str(folder),
            str(folder / name),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    return folder / name.replace(".csv", ".pdf")


def test_printed_semicolon_table_with_decimal_commas_agrees(tmp_path: Path) -> None:
    lines = ["Member;Dead (kN);Snow (kN)"]
    for m in _members(5):
        d, s = round(_force(m, DEAD), 2), round(_force(m, SNOW), 2)
        lines.append(f"{m};{d:g};{s:g}".replace(".", ","))
    table = read_claims(_print_csv(tmp_path, "forces.csv", "\n".join(lines) + "\n"), MODEL)
    got = {(v.member, v.column): v.value for v in table.values}
    assert got[("M3", "Dead")] == pytest.approx(round(-DEAD / 2**0.5, 2), rel=1e-9)
    assert got[("M4", "Snow")] == 0.0
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES
