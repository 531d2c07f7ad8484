"""A unit written on a lower header row that also holds other words ('T/C') gives its column's
unit: the table below states kips under 'Axial force' beside a T/C column.

The planted mistake is the calc's own: forces worked out in kN and written under a kips heading
(a unit slip), which must not agree; the honest table of the same truss, in kips, must. Check
values: the closed forms of the module's triangle (tests/test_claims_layouts.py), and 1 kip =
4.448222 kN (the international foot-pound definitions, common practice).
"""

from __future__ import annotations

from pathlib import Path

import openpyxl
import pytest
from test_claims_layouts import DEAD, MODEL, SNOW, _force

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.io.claims import read_claims
from verify.io.claims.band import _compose
from verify.io.claims.grid import Grid

KN_PER_KIP = 4.4482216152605
MEMBERS = ("M1", "M2", "M3", "M4", "M5")


def _rows(scale: float, units_row: list[object]) -> list[list[object]]:
    rows: list[list[object]] = [["Member", "dead", None, "snow", None], units_row]
    for m in ("M1", "M2", "M3", "M4", "M5"):
        row: list[object] = [m]
        for load in (DEAD, SNOW):
            value = _force(m, load) * scale
            row += [round(abs(value), 3), "C" if value < 0 else "T"]
        rows.append(row)
    return rows


def _review(rows: list[list[object]], path: Path):
    book = openpyxl.Workbook()
    for row in rows:
        book.active.append(row)
    book.save(path)
    table = read_claims(path, MODEL)
    return table, compare_claims(analyse(MODEL), table)


@pytest.mark.parametrize("unit", ["(kips)", "kips", "[kip]"])
def test_kn_values_under_a_kips_heading_beside_tc_columns_do_not_agree(tmp_path, unit):
    table, review = _review(_rows(1.0, [None, unit, "T/C", unit, "T/C"]), tmp_path / "t.xlsx")
    assert {v.unit for v in table.values} == {"kip"}
    assert review.verdict is not Verdict.AGREES
    kinds = {f.kind for f in review.findings if f.severity.value == "error"}
    assert "unit-scale" in kinds, [f.detail for f in review.findings]


@pytest.mark.parametrize("unit", ["(kips)", "kips"])
def test_the_same_table_in_kips_agrees(tmp_path, unit):
    table, review = _review(
        _rows(1 / KN_PER_KIP, [None, unit, "T/C", unit, "T/C"]), tmp_path / "t.xlsx"
    )
    assert {v.unit for v in table.values} == {"kip"}
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_a_unit_heading_a_column_from_the_top_row_stays_its_name():
    """'N' (normal force) heads a column on the band's top row, its unit on the row below: 'N'
    is the name, kN the unit; a lower-row word that is no unit stays a name."""
    grid = Grid([["Member", "N", "Remark"], [None, "kN", "T/C"]], [1, 2], None, False, ",")
    headers, _ = _compose(grid, 0, 1, 0)
    assert (headers[1].text, headers[1].unit) == ("N", "kN")
    assert (headers[2].text, headers[2].unit) == ("T/C", None)


def _titled(title: str, scale: float, heading: str = "dead") -> str:
    """A CSV under a title line, one column per load case with T/C columns."""
    rows = [f'"{title}"' if "," in title else title, f"Member,{heading},T/C,snow,T/C"]
    for m in ("M1", "M2", "M3", "M4", "M5"):
        cells = [m]
        for load in (DEAD, SNOW):
            value = _force(m, load) * scale
            cells += [f"{abs(value):.3f}", "C" if value < 0 else "T"]
        rows.append(",".join(cells))
    return "\n".join(rows) + "\n"


def _csv_review(tmp_path, text):
    path = tmp_path / "claims.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    return table, compare_claims(analyse(MODEL), table)


@pytest.mark.parametrize(
    "title", ["Truss T1 member forces (all forces in kips)", "Units: kips", "Member forces [kip]"]
)
def test_kn_values_under_a_title_stating_kips_do_not_agree(tmp_path, title):
    table, review = _csv_review(tmp_path, _titled(title, 1.0))
    assert {v.unit for v in table.values} == {"kip"}
    assert review.verdict is not Verdict.AGREES
    assert "unit-scale" in {f.kind for f in review.findings if f.severity.value == "error"}


def test_the_table_in_kips_under_that_title_agrees(tmp_path):
    _, review = _csv_review(tmp_path, _titled("All forces in kips", 1 / KN_PER_KIP))
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_a_headings_own_unit_stands_over_the_title(tmp_path):
    """ "Member forces (kips)" above a table whose dead heading says kN: that heading is read."""
    table, review = _csv_review(tmp_path, _titled("Member forces (kips)", 1.0, heading="dead (kN)"))
    units = {v.column: v.unit for v in table.values}
    assert units["dead"] == "kN" and units["snow"] == "kip"  # snow's heading states none


def test_two_units_stated_above_a_table_without_one_are_refused(tmp_path):
    from verify.errors import InputError

    path = tmp_path / "claims.csv"
    path.write_text(_titled("Forces in kN; reactions in kips", 1.0))
    with pytest.raises(InputError) as raised:
        read_claims(path, MODEL)
    message = str(raised.value)
    assert "row 2" in message and "kN (row 1)" in message and "kip (row 1)" in message


def test_titles_that_state_no_force_unit_change_nothing(tmp_path):
    """Loads per metre, moments, a grid line 'N', a drawing number: the case's unit stands."""
    text = _titled("Grid line N, loads in kN/m, moments in kNm, drawing 104", 1.0)
    table, review = _csv_review(tmp_path, text)
    assert {v.unit for v in table.values} == {None}
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


@pytest.mark.parametrize(
    "title",
    [
        "Truss T2 (N)",
        "Sign bracket in N. Yorkshire",
        "Designer: J. Smith (MN)",
        "Ref: Unit N",
        "Elevation (N)",
        "Forces in kips, converted to kN",
    ],
)
def test_prose_that_only_looks_like_a_unit_states_none(tmp_path, title):
    """A north truss, a state, a county, a conversion: no force unit is read from them, so the
    kN table agrees as the case's unit (a title read as N made it a 1000x unit-scale error)."""
    table, review = _csv_review(tmp_path, _titled(title, 1.0))
    assert {v.unit for v in table.values} == {None}
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_a_unit_column_gives_each_rows_unit_over_a_title(tmp_path):
    """A long table with a Unit column under 'Member forces (kN)': each row's own unit."""
    rows = ["Member forces (kN)", "Member,Load case,Force,Unit"]
    for m in ("M1", "M2", "M3", "M4", "M5"):
        rows.append(f"{m},dead,{_force(m, DEAD) / KN_PER_KIP:.4f},kip")
    table, review = _csv_review(tmp_path, "\n".join(rows) + "\n")
    assert {v.unit for v in table.values} == {"kip"}
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_a_case_name_is_not_carried_past_its_group_into_a_length_column(tmp_path):
    """'Axial force' merged over three case columns beside 'Length', case names under the
    group, then a units row ('kN' x3, 'mm'): the length column keeps its own heading (it had
    taken the last case name and been refused as a second column of that case)."""
    rows: list[list[object]] = [
        ["Member", "Axial force", None, "Length"],
        [None, "dead", "snow", None],
        [None, "kN", "kN", "mm"],
    ]
    rows += [[m, round(_force(m, DEAD), 3), round(_force(m, SNOW), 3), 3000] for m in MEMBERS]
    table, review = _review(rows, tmp_path / "t.xlsx")
    assert table.columns == ("dead", "snow") and {v.unit for v in table.values} == {"kN"}
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]
