"""Claimed tables laid out as consultants and fabricators send them, each made in the test, read
and compared with the recomputed forces: every one of these honest tables must agree.

The truss (invented): joints A(0,0), B(3,0), C(6,0), D(3,3); pinned at A, roller at C; a load P
down at D. By symmetry each support carries P/2 up; at A the diagonal AD at 45 degrees balances
it: AD = CD = -(P/2)/sin 45 = -P/sqrt(2) (compression), AB = BC = (P/2)/tan 45 = P/2 (tension),
and BD = 0 (joint B has no other vertical force). Expected values below are these formulas.
"""

from __future__ import annotations

import math
from pathlib import Path

import openpyxl
import pytest

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.errors import InputError
from verify.io.case import build_model
from verify.io.claims import ClaimsTable, read_claims
from verify.io.claims.headers import parse_header
from verify.model import Model

DEAD, SNOW = 10.0, 4.0  # kN at D
REL = 1e-9


def _model() -> Model:
    return build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
            "members": {
                "M1": ["A", "B"],
                "M2": ["B", "C"],
                "M3": ["A", "D"],
                "M4": ["B", "D"],
                "M5": ["C", "D"],
            },
            "supports": {"A": ["x", "y"], "C": ["y"]},
            "loads": {"dead": {"D": [0.0, -DEAD]}, "snow": {"D": [0.0, -SNOW]}},
        },
        source="case.toml",
    )


MODEL = _model()
ENDS = {"M1": ("A", "B"), "M2": ("B", "C"), "M3": ("A", "D"), "M4": ("B", "D"), "M5": ("C", "D")}


def _force(member: str, load: float) -> float:
    """Tension-positive member force from the closed forms in the module docstring."""
    return {
        "M1": load / 2,
        "M2": load / 2,
        "M3": -load / math.sqrt(2),
        "M4": 0.0,
        "M5": -load / math.sqrt(2),
    }[member]


def _tc(value: float) -> tuple[str, str]:
    """(magnitude to 2 decimals, letter) as a table writes a force."""
    return f"{abs(value):.2f}", ("C" if value < 0 else "T")


def _agrees(table: ClaimsTable) -> None:
    review = compare_claims(analyse(MODEL), table)
    accused = [f for f in review.findings if f.severity.value == "error"]
    assert review.verdict is Verdict.AGREES and not accused, [f.detail for f in review.findings]


def _by(table: ClaimsTable) -> dict[tuple[str | None, str], float]:
    return {(v.member, v.column): v.value for v in table.values}


def _save(
    rows: list[list[object]], path: Path, merges: tuple[str, ...] = (), title: str = "Member forces"
) -> Path:
    book = openpyxl.Workbook()
    ws = book.active
    ws.title = title
    for row in rows:
        ws.append(row)
    for cells in merges:
        ws.merge_cells(cells)
    book.save(path)
    return path


def test_group_cell_merged_over_case_columns_with_the_unit(tmp_path: Path) -> None:
    """Titles, then a two-row header: 'Axial force (kN)' merged over 'dead' and 'snow'."""
    rows: list[list[object]] = [
        ["Roof truss T3 - member forces"],
        ["Checked against drawing 104"],
        [],
        ["Member", "Axial force (kN)", None, "Remarks"],
        [None, "dead", "snow", None],
    ]
    rows += [[m, round(_force(m, DEAD), 2), round(_force(m, SNOW), 2), ""] for m in ENDS]
    table = read_claims(_save(rows, tmp_path / "t.xlsx", merges=("B4:C4",)), MODEL)
    assert table.columns == ("dead", "snow") and table.header_unit == "kN"
    assert _by(table)[("M3", "dead")] == pytest.approx(round(-DEAD / math.sqrt(2), 2), rel=REL)
    assert table.values[0].where == "sheet 'Member forces' cell B6, column 'dead'"
    _agrees(table)


def test_group_over_a_second_group_and_units_row_above_the_case_names(tmp_path: Path) -> None:
    """Three header rows: 'Unfactored' group, a units row, then the case names; CSV."""
    text = "Job 2291 truss forces\n\n,Unfactored,\n,kN,kN\nBar,dead,snow\n" + "".join(
        f"{m},{_force(m, DEAD):.2f},{_force(m, SNOW):.2f}\n" for m in ENDS
    )
    path = tmp_path / "t.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    assert {v.unit for v in table.values} == {"kN"} and table.columns == ("dead", "snow")
    _agrees(table)


def test_unit_in_each_case_cell_under_a_group(tmp_path: Path) -> None:
    """The group cell has no unit; each case cell carries its own."""
    rows: list[list[object]] = [["Member", "Axial forces", None], [None, "dead [kN]", "snow [kN]"]]
    rows += [[m, _force(m, DEAD), _force(m, SNOW)] for m in ENDS]
    table = read_claims(_save(rows, tmp_path / "t.xlsx", merges=("B1:C1",)), MODEL)
    assert table.header_unit == "kN"
    _agrees(table)


@pytest.mark.parametrize("heading", ["Member (joints)", "Bar No.", "Element / nodes", "Mem."])
def test_member_column_found_by_its_cells(tmp_path: Path, heading: str) -> None:
    """An unfamiliar heading over labels written as joint pairs: the cells name the members."""
    text = f"{heading},dead (kN)\n" + "".join(
        f"{a}-{b},{_force(m, DEAD):.3f}\n" for m, (a, b) in ENDS.items()
    )
    path = tmp_path / "t.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    assert sorted(v.member for v in table.values) == sorted(ENDS) and not table.unmatched
    _agrees(table)


@pytest.mark.parametrize("heading", ["Bar No.", "No.", "Item", "#", "Mark"])
def test_a_running_number_beside_the_member_column_is_no_load_case(
    tmp_path: Path, heading: str
) -> None:
    """'Bar No.' counting 1...n beside a 'Joints' column that names the members: the numbers are
    neither claims nor an unknown load case (an acceptance table was accused over this)."""
    text = f"{heading},Joints,dead (kN),snow (kN)\n" + "".join(
        f"{k},{a}-{b},{_force(m, DEAD):.2f},{_force(m, SNOW):.2f}\n"
        for k, (m, (a, b)) in enumerate(ENDS.items(), start=1)
    )
    path = tmp_path / "t.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    assert table.columns == ("dead", "snow")
    _agrees(table)


def test_members_numbered_with_from_and_to_joints(tmp_path: Path) -> None:
    """'No.' counts 1...n (not the model's ids); the From/To joints name each member."""
    text = "No.,From,To,dead (kN)\n" + "".join(
        f"{k},{b},{a},{_force(m, DEAD):.2f}\n"
        for k, (m, (a, b)) in enumerate(ENDS.items(), start=1)
    )
    path = tmp_path / "t.csv"
    path.write_text(text)
    table = read_claims(path, MODEL)
    assert sorted(v.member for v in table.values) == sorted(ENDS)
    assert _by(table)[("M1", "dead")] == pytest.approx(round(DEAD / 2, 2), rel=REL)
    _agrees(table)


def test_a_tc_column_beside_each_force_column(tmp_path: Path) -> None:
    """'dead (kN) | T/C | snow (kN) | T/C': each letter settles the magnitudes on its left."""
    rows = []
    for m in ENDS:
        (d, dl), (s, sl) = _tc(_force(m, DEAD)), _tc(_force(m, SNOW))
        rows.append(f"{m},{d},{dl},{s},{sl}\n")
    path = tmp_path / "t.csv"
    path.write_text("Member,dead (kN),T/C,snow (kN),T/C\n" + "".join(rows))
    table = read_claims(path, MODEL)
    got = _by(table)
    assert got[("M5", "snow")] == pytest.approx(-round(SNOW / math.sqrt(2), 2), rel=REL)
    assert got[("M2", "snow")] == pytest.approx(SNOW / 2, rel=REL)
    _agrees(table)


def _compression_positive_rows(flip: str | None = None) -> str:
    """Signs and letters together, compression written positive: '7.07 C', '-5.00 T'. The member
    `flip` gets a minus that contradicts its letter."""
    lines = []
    for m in ENDS:
        value = _force(m, DEAD)
        magnitude, letter = _tc(value)
        signed = f"-{magnitude}" if letter == "T" and value else magnitude
        if m == flip:
            signed = f"-{magnitude}"
            letter = "C"
        lines.append(f"{m},{signed} {letter}\n")
    return "Member,dead (kN)\n" + "".join(lines)


def test_signs_and_letters_together_in_a_compression_positive_table(tmp_path: Path) -> None:
    """'-5.00 T' is tension in a table that writes compression positive: read, never refused."""
    path = tmp_path / "t.csv"
    path.write_text(_compression_positive_rows())
    table = read_claims(path, MODEL)
    assert not table.sign_conflicts and _by(table)[("M1", "dead")] == pytest.approx(
        DEAD / 2, rel=REL
    )
    _agrees(table)


def test_a_letter_against_its_sign_is_reported_on_that_member(tmp_path: Path) -> None:
    """One '-7.07 C' among '-5.00 T' rows contradicts the table's convention: a sign-flip finding
    on that member, at its cell; the table is still read."""
    path = tmp_path / "t.csv"
    path.write_text(_compression_positive_rows(flip="M3").replace("\nM1,-5.00 T", "\nM1,-5.00 T"))
    table = read_claims(path, MODEL)
    [conflict] = table.sign_conflicts
    assert (conflict.member, conflict.convention, conflict.where) == (
        "M3",
        "compression-positive",
        "row 4, column 'dead (kN)'",
    )
    review = compare_claims(analyse(MODEL), table)
    flips = [f for f in review.findings if f.kind == "sign-flip" and f.members == ("M3",)]
    assert flips and flips[0].locations == ("row 4, column 'dead (kN)'",)


@pytest.mark.parametrize(
    ("heading", "name", "unit"),
    [
        ("Dead kN", "Dead", "kN"),
        ("Dead - kN", "Dead", "kN"),
        ("Dead in kN", "Dead", "kN"),
        ("Dead/kN", "Dead", "kN"),
        ("Snow kips", "Snow", "kip"),
        ("Wind N", "Wind N", None),  # wind from the north, not newtons
        ("Domain", "Domain", None),
        ("kN", "kN", None),  # a unit alone: a units row's cell, read elsewhere
    ],
)
def test_a_unit_written_after_the_name_without_brackets(heading: str, name: str, unit: str) -> None:
    header = parse_header(0, heading)
    assert (header.name, header.unit) == (name, unit)


def test_columns_headed_dead_kn_are_matched_by_name_even_when_their_values_do_not_fit(
    tmp_path: Path,
) -> None:
    """'dead kN' and 'snow kN' name the load cases and state the unit. The snow column comes
    from a model with twice the snow load (a model mistake planted, not a wrong number): it is
    still compared with 'snow', where the difference is reported, rather than set aside as a
    column naming no load case. The honest table with the same headings agrees."""
    lines = ["Member,dead kN,snow kN"]
    lines += [f"{m},{_force(m, DEAD):.2f},{_force(m, 2 * SNOW):.2f}" for m in ENDS]
    path = tmp_path / "doubled.csv"
    path.write_text("\n".join(lines) + "\n")
    table = read_claims(path, MODEL)
    assert table.columns == ("dead", "snow") and {v.unit for v in table.values} == {"kN"}
    review = compare_claims(analyse(MODEL), table)
    assert review.verdict is Verdict.DISCREPANCIES
    assert not [f for f in review.findings if f.kind == "case-mismatch"]
    wrong = {m for f in review.findings if f.severity.value == "error" for m in f.members}
    assert wrong == {"M1", "M2", "M3", "M5"}  # M4 is a zero-force member in both models
    honest = ["Member,dead kN,snow kN"]
    honest += [f"{m},{_force(m, DEAD):.2f},{_force(m, SNOW):.2f}" for m in ENDS]
    path.write_text("\n".join(honest) + "\n")
    _agrees(read_claims(path, MODEL))


def _comma_text(value: float) -> object:
    """A whole force stays a number; '-7,07' is text, as a ';' file with decimal commas opened
    with a '.' locale leaves it in the sheet."""
    rounded = round(value, 2)
    return rounded if rounded == int(rounded) else f"{rounded:.2f}".replace(".", ",")


def test_a_sheet_of_decimal_comma_text_beside_whole_numbers_agrees(tmp_path: Path) -> None:
    rows: list[list[object]] = [["Member", "dead (kN)", "snow (kN)"]]
    rows += [[m, _comma_text(_force(m, DEAD)), _comma_text(_force(m, SNOW))] for m in ENDS]
    assert rows[3][1] == "-7,07" and rows[1][1] == 5.0  # both kinds of cell are in the sheet
    table = read_claims(_save(rows, tmp_path / "t.xlsx"), MODEL)
    assert _by(table)[("M3", "dead")] == pytest.approx(-7.07, rel=REL)
    _agrees(table)


def test_a_sheet_mixing_decimal_comma_and_point_text_is_refused_cell_by_cell(
    tmp_path: Path,
) -> None:
    rows: list[list[object]] = [["Member", "dead (kN)", "snow (kN)"]]
    rows += [[m, _comma_text(_force(m, DEAD)), _comma_text(_force(m, SNOW))] for m in ENDS]
    rows[5][2] = "-2.83"  # M5 snow typed with a point
    with pytest.raises(InputError) as caught:
        read_claims(_save(rows, tmp_path / "t.xlsx"), MODEL)
    assert "cell B4, column 'dead (kN)': force '-7,07'" in str(caught.value)


def test_a_heading_that_names_a_load_case_with_a_unit_in_its_name_is_read_whole(
    tmp_path: Path,
) -> None:
    """Load cases named after their load ('Crane 10 kN', 'Crane 15 kN'): each heading names its
    case as written, so swapped columns are reported as swapped (not quietly paired with the
    case their values fit), and the honest table agrees without a case-mismatch note."""
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"A": [0.0, 0.0], "B": [3.0, 0.0], "C": [6.0, 0.0], "D": [3.0, 3.0]},
            "members": {m: list(ends) for m, ends in ENDS.items()},
            "supports": {"A": ["x", "y"], "C": ["y"]},
            "loads": {"Crane 10 kN": {"D": [0.0, -10.0]}, "Crane 15 kN": {"D": [0.0, -15.0]}},
        },
        source="case.toml",
    )
    rows = [f"{m},{_force(m, 10.0):.2f},{_force(m, 15.0):.2f}" for m in ENDS]
    path = tmp_path / "t.csv"
    path.write_text("\n".join(["Member,Crane 10 kN,Crane 15 kN", *rows]) + "\n")
    honest = compare_claims(analyse(model), read_claims(path, model))
    assert honest.verdict is Verdict.AGREES
    assert not [f for f in honest.findings if f.kind == "case-mismatch"]
    path.write_text("\n".join(["Member,Crane 15 kN,Crane 10 kN", *rows]) + "\n")
    swapped = compare_claims(analyse(model), read_claims(path, model))
    assert swapped.verdict is Verdict.DISCREPANCIES
    errors = [f for f in swapped.findings if f.severity.value == "error"]
    assert len(errors) == 2 and all("labelled as 'Crane" in f.detail for f in errors)


def test_a_lower_case_mn_after_a_name_is_no_unit() -> None:
    assert (parse_header(0, "Dead mN").name, parse_header(0, "Dead mN").unit) == ("Dead mN", None)
    assert parse_header(0, "Dead MN").unit == "MN"


def test_labels_like_decimals_do_not_turn_thousands_into_decimals(tmp_path: Path) -> None:
    """Members named by joint numbers ('1,2') and forces in newtons with thousands commas
    ('5,000') under a kN heading, typed as text: '5,000' must stay five thousand, so the unit
    slip is reported; read as 5.000 every claim would wrongly agree."""
    names = {"M1": "1,2", "M2": "2,3", "M3": "1,4", "M4": "2,4", "M5": "3,4"}
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": {"1": [0.0, 0.0], "2": [3.0, 0.0], "3": [6.0, 0.0], "4": [3.0, 3.0]},
            "members": {
                names[m]: [str(" ABCD".index(e)) for e in ends] for m, ends in ENDS.items()
            },
            "supports": {"1": ["x", "y"], "3": ["y"]},
            "loads": {"dead": {"4": [0.0, -DEAD]}, "snow": {"4": [0.0, -SNOW]}},
        },
        source="case.toml",
    )
    rows: list[list[object]] = [["Member", "dead (kN)", "snow (kN)"]]
    rows += [
        [names[m], f"{1000 * _force(m, DEAD):,.0f}", f"{1000 * _force(m, SNOW):,.0f}"] for m in ENDS
    ]
    assert rows[1][1] == "5,000" and rows[3][1] == "-7,071"
    review = compare_claims(analyse(model), read_claims(_save(rows, tmp_path / "t.xlsx"), model))
    assert review.verdict is Verdict.DISCREPANCIES
    assert [f.kind for f in review.findings if f.severity.value == "error"] == ["unit-scale"]
