"""Units everywhere a number is shown: JSON value families, table headings, CSV columns.

References outside the project: the case files' own [units] tables, the claimed deflection file
(2.85 mm written, so 0.00285 m in the case's metres, an exact decimal conversion), and hashlib's
SHA-256 of the file's bytes for the audit trail.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import re
from pathlib import Path

from click.testing import CliRunner

from verify.cli import main

ROOT = Path(__file__).resolve().parents[1]
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge"
GANTRY = ROOT / "cases" / "conveyor-gantry"
NUMBER = re.compile(r"^-?\d+(\.\d+)?$")


def run(*args: object) -> tuple[int, str]:
    result = CliRunner().invoke(main, [str(a) for a in args])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout


def gantry_check(*extra: object) -> tuple[int, str]:
    return run(
        "check",
        GANTRY,
        "--claims",
        GANTRY / "claims.csv",
        "--displacements",
        GANTRY / "deflections.csv",
        *extra,
    )


def test_check_json_names_a_unit_for_every_value_family():
    """Every key of `check --json` that holds forces or lengths has its unit under "units"."""
    _, out = gantry_check("--json")
    data = json.loads(out)
    units = data["units"]
    assert (
        units["force"] == "kN" and units["length"] == "m"
    )  # cases/conveyor-gantry/case.toml [units]
    for family in ("members", "implied_loads", "implied_load_table", "imbalances", "displacements"):
        assert units[family] in ("kN", "m"), family
    assert units["displacements"] == "m"


def test_every_compared_row_carries_its_unit():
    """Member and reaction rows are in kN, displacement rows in m (the case's length unit)."""
    _, out = gantry_check("--json")
    rows = json.loads(out)["members"]
    kinds = {r["kind"]: r["unit"] for r in rows}
    assert kinds["member"] == "kN" and kinds["displacement"] == "m"
    claimed = {r["id"]: r["claimed"] for r in rows if r["kind"] == "displacement"}
    assert claimed["B2.y"] == -2.85 / 1000  # written '2.85' under 'deflection (mm)', direction -y


def test_convention_says_which_unit_the_table_was_written_in_and_which_the_values_are_in():
    """convention.claims_unit is the table's unit; convention.values_unit the unit of the values
    beside it."""
    _, out = run("check", FOOTBRIDGE, "--claims", FOOTBRIDGE / "claims.csv", "--json")
    convention = json.loads(out)["convention"]
    assert convention["values_unit"] == "kN"
    assert "claims_unit" in convention and "unit" not in convention
    assert "evidence" in convention and "support" not in convention


def test_solve_json_names_the_unit_of_forces_reactions_and_displacements():
    """`solve --json` states the unit of each family it prints."""
    _, out = run("solve", GANTRY, "--json")
    data = json.loads(out)
    for family in ("forces", "reactions", "displacements", "routes"):
        assert family in data["units"]
    assert data["units"]["forces"] == "kN" and data["units"]["displacements"] == "m"
    assert "displacements" in data


def test_json_inputs_hash_the_displacement_file():
    """The claimed displacements are part of the audit trail: their SHA-256 is in JSON inputs."""
    _, out = gantry_check("--json")
    inputs = json.loads(out)["inputs"]
    assert (
        inputs["displacements_sha256"]
        == hashlib.sha256((GANTRY / "deflections.csv").read_bytes()).hexdigest()
    )


def test_csv_puts_displacements_in_length_columns(tmp_path):
    """A displacement is never written under a force heading: its own columns, in m."""
    gantry_check("--csv", tmp_path / "t.csv")
    rows = list(csv.DictReader(io.StringIO((tmp_path / "t.csv").read_text().split("\n\n")[0])))
    row = next(r for r in rows if r["kind"] == "displacement" and r["id"] == "B2.y")
    assert row["claimed (kN)"] == "" and row["difference (kN)"] == ""
    assert float(row["claimed displacement (m)"]) == -0.00285
    member = next(r for r in rows if r["kind"] == "member")
    assert member["claimed displacement (m)"] == ""


def _md_tables(text: str) -> list[list[list[str]]]:
    tables, current = [], []
    for line in text.splitlines():
        if line.startswith("|"):
            current.append([c.strip() for c in line.strip().strip("|").split(" | ")])
        elif current:
            tables.append(current)
            current = []
    return tables + ([current] if current else [])


def test_every_numeric_column_of_the_report_names_its_unit(tmp_path):
    """In the Markdown report, a column of numbers has a heading with a unit in brackets."""
    gantry_check("--report", tmp_path / "r.md")
    tables = _md_tables((tmp_path / "r.md").read_text(encoding="utf-8"))
    checked = 0
    for table in tables:
        header, body = table[0], table[2:]
        for k, heading in enumerate(header):
            cells = [row[k] for row in body if k < len(row)]
            if cells and all(NUMBER.match(c.replace("\\", "")) for c in cells):
                assert "(" in heading, f"column '{heading}' of numbers without a unit"
                checked += 1
    assert checked > 10


def test_report_shows_the_deflection_check_and_calls_joints_joints(tmp_path):
    """Claimed against computed displacements with the unit-load calc; the finding lists joints."""
    gantry_check("--report", tmp_path / "r.md")
    text = (tmp_path / "r.md").read_text(encoding="utf-8")
    assert "## Deflection check" in text and "Unit-load calc: joint T2" in text
    assert "| T2.y | walkway | -1.6 |" in text  # '1.6' written under deflection (mm), direction -y
    assert "Joints: T2." in text and "Members: T2" not in text
    assert "deflections.csv" in text.split("## Diagram")[0]  # hashed with the inputs
