"""Claims tables in text-based PDF calc pages, written in each test by fpdf2 (no checked-in
binaries): a table among a title block and notes, continued over pages under a repeated header,
a landscape page with two load cases side by side, --pages, page/row locations, a page with no
text layer, and oversized documents refused.

The truss and its closed-form forces are those of tests/test_claims_layouts.py: AB = BC = P/2,
AD = CD = -P/sqrt(2), BD = 0, for a load P down at the apex D.
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from fpdf import FPDF

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.compare.findings import FindingKind
from verify.errors import InputError
from verify.io.case import build_model
from verify.io.claims import read_claims
from verify.io.claims.source_pdf import MAX_PAGES_SEARCHED

DEAD, SNOW = 10.0, 4.0
REL = 1e-9


def _members(count: int) -> dict[str, tuple[str, str]]:
    """A chain of `count` triangles: bottom joints Bk, top joints Tk (an invented Warren-like
    layout); only the first triangle's forces are checked against the closed form."""
    return {
        "M1": ("A", "B"),
        "M2": ("B", "C"),
        "M3": ("A", "D"),
        "M4": ("B", "D"),
        "M5": ("C", "D"),
    }


MODEL = build_model(
    {
        "units": {"length": "m", "force": "kN"},
        "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
        "members": {m: list(ends) for m, ends in _members(5).items()},
        "supports": {"A": ["x", "y"], "C": ["y"]},
        "loads": {"dead": {"D": [0.0, -DEAD]}, "snow": {"D": [0.0, -SNOW]}},
    },
    source="case.toml",
)


def _force(member: str, load: float) -> float:
    return {
        "M1": load / 2,
        "M2": load / 2,
        "M3": -load / math.sqrt(2),
        "M4": 0.0,
        "M5": -load / math.sqrt(2),
    }[member]


def _page(pdf: FPDF, lines: list[list[str]], xs: list[float], *, y: float = 40.0) -> None:
    """One page: a title block, the given table lines at column positions xs, a note below."""
    pdf.add_page()
    pdf.set_font("Helvetica", size=10)
    pdf.text(15, 15, "Structural calculations - Roof truss T3 (invented)")
    pdf.text(15, 21, "Job 2291    Sheet 12 of 14    Calc by: A. Designer")
    for k, cells in enumerate(lines):
        for x, cell in zip(xs, cells, strict=False):
            if cell:
                pdf.text(x, y + 6 * k, cell)
    pdf.text(15, y + 6 * len(lines) + 12, "Note: forces from the analysis program, unfactored.")


def _rows(members: list[str]) -> list[list[str]]:
    return [[m, f"{_force(m, DEAD):.2f}", f"{_force(m, SNOW):.2f}"] for m in members]


def _write(pdf: FPDF, path: Path) -> Path:
    pdf.output(str(path))
    return path


def test_table_among_title_block_and_notes_is_read_and_agrees(tmp_path: Path) -> None:
    pdf = FPDF()
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], *_rows(list(_members(5)))], [20, 60, 100])
    table = read_claims(_write(pdf, tmp_path / "calc.pdf"), MODEL)
    assert table.columns == ("dead", "snow") and table.sheet == "page 1"
    got = {(v.member, v.column): v.value for v in table.values}
    assert got[("M3", "dead")] == pytest.approx(round(-DEAD / math.sqrt(2), 2), rel=REL)
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_table_continued_over_pages_under_a_repeated_header(tmp_path: Path) -> None:
    """Page 2 repeats the title block and the header: neither is read as a claim; the rows of
    page 2 are located by page and row."""
    pdf = FPDF()
    header = ["Member", "dead (kN)", "snow (kN)"]
    _page(pdf, [header, *_rows(["M1", "M2", "M3"])], [20, 60, 100])
    _page(pdf, [header, *_rows(["M4", "M5"])], [20, 60, 100])
    table = read_claims(_write(pdf, tmp_path / "calc.pdf"), MODEL)
    assert (
        sorted({v.member for v in table.values}) == ["M1", "M2", "M3", "M4", "M5"]
        and not table.unmatched
    )
    m5 = next(v for v in table.values if v.member == "M5" and v.column == "dead")
    assert m5.where.startswith("page 2 row ") and m5.where.endswith("column 'dead (kN)'")
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_landscape_page_with_two_load_cases_side_by_side_as_tc(tmp_path: Path) -> None:
    """A landscape page: 'Member | dead | T/C | snow | T/C' with magnitudes and letters."""
    pdf = FPDF(orientation="L")
    lines = [["Member", "dead (kN)", "T/C", "snow (kN)", "T/C"]]
    for m in _members(5):
        d, s = _force(m, DEAD), _force(m, SNOW)
        lines.append(
            [m, f"{abs(d):.2f}", "C" if d < 0 else "T", f"{abs(s):.2f}", "C" if s < 0 else "T"]
        )
    _page(pdf, lines, [20, 70, 110, 150, 200])
    table = read_claims(_write(pdf, tmp_path / "calc.pdf"), MODEL)
    got = {(v.member, v.column): v.value for v in table.values}
    assert got[("M5", "snow")] == pytest.approx(-round(SNOW / math.sqrt(2), 2), rel=REL)
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_pages_option_limits_the_search(tmp_path: Path) -> None:
    """--pages 2 reads only page 2's table (page 1 holds a different, wrong one)."""
    pdf = FPDF()
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], ["M1", "99.00", "99.00"]], [20, 60, 100])
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], *_rows(list(_members(5)))], [20, 60, 100])
    path = _write(pdf, tmp_path / "calc.pdf")
    table = read_claims(path, MODEL, pages="2")
    assert table.sheet == "page 2" and {
        v.where.split(",")[0].split(" row")[0] for v in table.values
    } == {"page 2"}
    with pytest.raises(InputError) as info:
        read_claims(path, MODEL, pages="3-5")
    assert "the PDF has pages 1-2" in str(info.value)


def test_a_page_without_text_is_refused_with_a_sentence(tmp_path: Path) -> None:
    """A scanned page (drawn shapes, no text layer) is refused: it holds no text, no OCR."""
    pdf = FPDF()
    pdf.add_page()
    for k in range(20):
        pdf.rect(20, 20 + 8 * k, 150, 6, style="F")
    with pytest.raises(InputError) as info:
        read_claims(_write(pdf, tmp_path / "scan.pdf"), MODEL)
    assert (
        "calc.pdf" not in str(info.value)
        and "holds no text" in str(info.value)
        and "OCR" in str(info.value)
    )


def test_thousands_of_pages_are_refused_without_pages(tmp_path: Path) -> None:
    """More pages than MAX_PAGES_SEARCHED: refused before any page is parsed; --pages reads one."""
    pdf = FPDF()
    for _ in range(MAX_PAGES_SEARCHED + 1):
        pdf.add_page()
    pdf.set_font("Helvetica", size=10)
    for k, cells in enumerate([["Member", "dead (kN)"], ["M1", "5.00"]]):
        for x, cell in zip([20, 60], cells, strict=True):
            pdf.text(x, 40 + 6 * k, cell)
    path = _write(pdf, tmp_path / "big.pdf")
    with pytest.raises(InputError) as info:
        read_claims(path, MODEL)
    assert f"{MAX_PAGES_SEARCHED + 1:,} pages" in str(info.value) and "--pages" in str(info.value)
    [value] = read_claims(path, MODEL, pages=str(MAX_PAGES_SEARCHED + 1)).values
    assert (value.member, value.value) == ("M1", DEAD / 2)


def test_a_huge_page_is_refused(tmp_path: Path) -> None:
    """A page 200 inches square is refused as a possible bomb, named by its page."""
    pdf = FPDF(unit="pt", format=(72 * 200, 72 * 200))
    pdf.add_page()
    pdf.set_font("Helvetica", size=10)
    pdf.text(20, 40, "Member")
    with pytest.raises(InputError) as info:
        read_claims(_write(pdf, tmp_path / "huge.pdf"), MODEL)
    assert "page 1 is 200 x 200 inches" in str(info.value)


def _spreadsheet_print(
    widths: list[float], header: list[str], *, orientation: str = "P", group: str | None = None
) -> FPDF:
    """A table as a spreadsheet prints it: ruled cells, headings wrapped inside narrow cells
    ('dead' over '(kN)', 'Member' centred beside them), forces right-aligned."""
    pdf = FPDF(orientation=orientation)
    pdf.add_page()
    pdf.set_font("Helvetica", size=9)
    pdf.cell(0, 8, "Roof truss T3 - member forces (invented)", new_x="LMARGIN", new_y="NEXT")
    lines = [header, *_rows(list(_members(5)))]
    with pdf.table(
        col_widths=widths,
        width=sum(widths),
        text_align=("LEFT", "RIGHT", "RIGHT"),
        first_row_as_headings=group is None,
        align="LEFT",
    ) as table:
        if group is not None:
            row = table.row()
            row.cell("")
            row.cell(group, colspan=2, align="CENTER")
        for cells in lines:
            row = table.row()
            for cell in cells:
                row.cell(cell)
    return pdf


def _agrees(path: Path) -> None:
    table = read_claims(path, MODEL)
    assert table.columns == ("dead", "snow") and not table.unmatched
    got = {(v.member, v.column): v.value for v in table.values}
    assert got[("M5", "snow")] == pytest.approx(round(-SNOW / math.sqrt(2), 2), rel=REL)
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_headings_wrapped_inside_narrow_cells_are_read_whole(tmp_path: Path) -> None:
    """'dead (kN)' in a cell too narrow for it prints as 'dead' over '(kN)', with 'Member'
    centred beside the two lines: one heading per column, not a column per word."""
    pdf = _spreadsheet_print([18, 12, 12], ["Member", "dead (kN)", "snow (kN)"])
    _agrees(_write(pdf, tmp_path / "narrow.pdf"))


def test_headings_printed_close_together_are_parted_by_their_columns(tmp_path: Path) -> None:
    """Two headings about two spaces apart ('dead (kN)  snow (kN)') belong to the columns below."""
    pdf = FPDF()
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], *_rows(list(_members(5)))], [20, 38, 56])
    _agrees(_write(pdf, tmp_path / "close.pdf"))


def test_group_heading_over_the_case_columns_gives_their_unit(tmp_path: Path) -> None:
    """'Axial force (kN)' spanning both case columns above 'dead' and 'snow'."""
    pdf = _spreadsheet_print([25, 22, 22], ["Member", "dead", "snow"], group="Axial force (kN)")
    table = read_claims(_write(pdf, tmp_path / "group.pdf"), MODEL)
    assert {v.unit for v in table.values} == {"kN"}
    _agrees(tmp_path / "group.pdf")


@pytest.mark.parametrize("turn", [90, 270])
def test_a_page_turned_by_rotate_is_read_upright(tmp_path: Path, turn: int) -> None:
    """A page whose /Rotate turns it: pdfplumber gives the turned coordinates, read back here."""
    from pypdf import PdfReader, PdfWriter

    pdf = FPDF()
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], *_rows(list(_members(5)))], [20, 60, 100])
    reader = PdfReader(str(_write(pdf, tmp_path / "upright.pdf")))
    writer = PdfWriter()
    for page in reader.pages:
        writer.add_page(page.rotate(turn))
    with (tmp_path / "turned.pdf").open("wb") as out:
        writer.write(out)
    _agrees(tmp_path / "turned.pdf")


def test_a_landscape_table_printed_along_a_portrait_sheet(tmp_path: Path) -> None:
    """The table drawn turned a quarter on an upright page (a landscape print on portrait
    paper), with the page's title block upright: the table's own direction wins."""
    pdf = FPDF()
    pdf.add_page()
    pdf.set_font("Helvetica", size=10)
    pdf.text(15, 15, "Sheet 12")
    lines = [["Member", "dead (kN)", "snow (kN)"], *_rows(list(_members(5)))]
    with pdf.rotation(90, x=105, y=148):
        for k, cells in enumerate(lines):
            for x, cell in zip([40, 80, 120], cells, strict=True):
                pdf.text(x, 100 + 6 * k, cell)
    _agrees(_write(pdf, tmp_path / "along.pdf"))


def test_headings_wrapped_over_three_lines_keep_every_line(tmp_path: Path) -> None:
    """'snow' / 'load' / '(kN)' in a narrow ruled cell, centred beside one-line headings: the
    header is five printed lines deep and all of it belongs to the table."""
    pdf = _spreadsheet_print([16, 11, 11], ["Member (joints)", "dead load (kN)", "snow load (kN)"])
    table = read_claims(_write(pdf, tmp_path / "deep.pdf"), MODEL)
    assert table.columns == ("dead load", "snow load") and {v.unit for v in table.values} == {"kN"}
    review = compare_claims(analyse(MODEL), table)  # 'dead load' is matched to 'dead' by fit
    assert review.verdict is Verdict.AGREES
    assert not [f for f in review.findings if f.severity.value == "error"]


def test_a_subtitle_just_above_the_header_is_not_part_of_a_heading(tmp_path: Path) -> None:
    """A line of prose close above the header, reaching past the table's sides, on both pages
    of a table continued under a repeated header: it names no column, and page 2's header is
    recognised as the repeat it is."""
    pdf = FPDF(orientation="L")
    header = ["Member", "dead (kN)", "snow (kN)"]
    for members in (["M1", "M2", "M3"], ["M4", "M5"]):
        pdf.add_page()
        pdf.set_font("Helvetica", size=10)
        pdf.text(15, 33, "Job 2291 - roof over the loading bay.    T = tension, C = compression.")
        for k, cells in enumerate([header, *_rows(members)]):
            for x, cell in zip([70, 110, 150], cells, strict=True):
                pdf.text(x, 40 + 7 * k, cell)
    _agrees(_write(pdf, tmp_path / "subtitle.pdf"))


def test_numbers_printed_close_together_without_rules_stay_in_their_cells(
    tmp_path: Path,
) -> None:
    """A right-aligned force and a left-aligned one in the next cell a space apart ('5.00 2.00'),
    and magnitudes with letters ('7.07 C 2.83 C'): one number per cell."""
    pdf = FPDF()
    pdf.add_page()
    pdf.set_font("Helvetica", size=10)
    pdf.text(20, 40, "Member")
    pdf.text(45, 40, "dead (kN)")
    pdf.text(66, 40, "snow (kN)")
    for k, m in enumerate(_members(5), start=1):
        dead, snow = _force(m, DEAD), _force(m, SNOW)
        dead_text = f"{abs(dead):.2f} {'C' if dead < 0 else 'T'}"
        snow_text = f"{abs(snow):.2f} {'C' if snow < 0 else 'T'}"
        pdf.text(20, 40 + 6 * k, m)
        pdf.text(64 - pdf.get_string_width(dead_text), 40 + 6 * k, dead_text)
        pdf.text(65.5, 40 + 6 * k, snow_text)  # a space's width after the dead column
    _agrees(_write(pdf, tmp_path / "tight.pdf"))


def test_a_page_of_more_columns_than_a_sheet_holds_is_no_claims_table(tmp_path: Path) -> None:
    """Rows of 300 numbers (a page of figures, or a file made to be slow): no table is taken
    from it, and the message says what a table needs."""
    pdf = FPDF(unit="pt", format=(72 * 60, 72 * 10))
    pdf.add_page()
    pdf.set_font("Helvetica", size=5)
    for r in range(4):
        pdf.text(10, 20 + 8 * r, "M1 " + "  ".join(f"{k}.5" for k in range(300)))
    with pytest.raises(InputError) as info:
        read_claims(_write(pdf, tmp_path / "wide.pdf"), MODEL)
    assert "no table found" in str(info.value)


def _comma_rows(members: list[str], wrong: str | None = None) -> list[list[str]]:
    """The closed-form forces written with decimal commas, as a ';'-separated sheet prints
    them; `wrong` gets 10 % more dead load (a planted error)."""
    rows = []
    for m in members:
        dead = _force(m, DEAD) * (1.1 if m == wrong else 1.0)
        rows.append(
            [m, f"{dead:.2f}".replace(".", ","), f"{_force(m, SNOW):.2f}".replace(".", ",")]
        )
    return rows


def test_decimal_commas_are_read_as_the_decimal_mark(tmp_path: Path) -> None:
    """A PDF carries no delimiter to say the table writes decimal commas; its forces do."""
    pdf = FPDF()
    header = ["Member", "dead (kN)", "snow (kN)"]
    _page(pdf, [header, *_comma_rows(list(_members(5)))], [20, 60, 100])
    table = read_claims(_write(pdf, tmp_path / "calc.pdf"), MODEL)
    got = {(v.member, v.column): v.value for v in table.values}
    assert got[("M3", "dead")] == pytest.approx(round(-DEAD / math.sqrt(2), 2), rel=REL)
    assert compare_claims(analyse(MODEL), table).verdict is Verdict.AGREES


def test_a_planted_error_in_a_decimal_comma_table_is_found_where_it_was_written(
    tmp_path: Path,
) -> None:
    pdf = FPDF()
    header = ["Member", "dead (kN)", "snow (kN)"]
    _page(pdf, [header, *_comma_rows(list(_members(5)), wrong="M3")], [20, 60, 100])
    result = compare_claims(analyse(MODEL), read_claims(_write(pdf, tmp_path / "c.pdf"), MODEL))
    errors = [f for f in result.findings if f.kind is FindingKind.VALUE_MISMATCH]
    assert result.verdict is Verdict.DISCREPANCIES and [f.members for f in errors] == [("M3",)]
    assert errors[0].locations == ("page 1 row 6, column 'dead (kN)'",)


def test_decimal_points_and_commas_in_one_table_are_not_read_by_guess(tmp_path: Path) -> None:
    """'7,07' beside '2.83' could be either convention's slip: each comma cell is refused with
    the row and column where it was written, none is read one way or the other."""
    rows = _comma_rows(list(_members(5)))
    rows[2][2] = rows[2][2].replace(",", ".")  # M3 snow written with a point
    pdf = FPDF()
    _page(pdf, [["Member", "dead (kN)", "snow (kN)"], *rows], [20, 60, 100])
    with pytest.raises(InputError) as caught:
        read_claims(_write(pdf, tmp_path / "calc.pdf"), MODEL)
    text = str(caught.value)
    assert "row 6, column 'dead (kN)': force '-7,07'" in text and "decimal point" in text
