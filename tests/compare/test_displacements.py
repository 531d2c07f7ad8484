"""Claimed joint displacements through the whole check.

Check values: shared/REFERENCES.md 3.7, worked example 1 (triangle A(0,0) pin, B(8,0) roller,
C(4,3), P downward at C, equal EA): by the unit-load method Delta_C = 10.5 P/(EA), and the roller
moves u_B = 16P/(3EA) outward; with P = 100 kN and EA = 2.0e5 kN that is 5.25 mm and 2.667 mm
(Hibbeler, *Structural Analysis*, "Method of virtual work: trusses", for the method).
"""

from __future__ import annotations

import json

import pytest
from click.testing import CliRunner

from verify.cli import main

P = 100.0
EA = 2.0e5
DELTA_C_MM = 10.5 * P / EA * 1000
U_B_MM = 16 * P / (3 * EA) * 1000

CASE = f"""
[units]
length = "m"
force = "kN"
[joints]
A = [0.0, 0.0]
B = [8.0, 0.0]
C = [4.0, 3.0]
[members]
AB = {{ ends = ["A", "B"], EA = {EA} }}
BC = {{ ends = ["B", "C"], EA = {EA} }}
CA = {{ ends = ["C", "A"], EA = {EA} }}
[supports]
A = ["x", "y"]
B = ["y"]
[loads.P]
C = [0.0, -{P}]
"""
# Member forces of the same example: AB = +2P/3, AC = BC = -5P/6 (REFERENCES.md 3.7).
CLAIMS = f"Member,P (kN)\nAB,{2 * P / 3:.2f} T\nBC,{5 * P / 6:.2f} C\nCA,{5 * P / 6:.2f} C\n"


def _run(tmp_path, deflections: str):
    (tmp_path / "case.toml").write_text(CASE)
    (tmp_path / "claims.csv").write_text(CLAIMS)
    (tmp_path / "d.csv").write_text(deflections)
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
            "--displacements",
            str(tmp_path / "d.csv"),
            "--json",
        ],
    )
    return result.exit_code, json.loads(result.stdout)


def test_published_deflections_agree(tmp_path):
    code, data = _run(
        tmp_path,
        f"joint,direction,case,deflection (mm)\nC,-y,P,{DELTA_C_MM:.2f}\nB,x,P,{U_B_MM:.3f}\n",
    )
    rows = [r for r in data["members"] if r["kind"] == "displacement"]
    assert code == 0 and data["verdict"] == "agrees"
    assert {r["status"] for r in rows} == {"agrees"}
    by_id = {r["id"]: r for r in rows}
    assert by_id["C.y"]["elastic"] == pytest.approx(-DELTA_C_MM / 1000, rel=1e-9)
    assert by_id["B.x"]["elastic"] == pytest.approx(U_B_MM / 1000, rel=1e-9)


def test_wrong_deflection_is_a_discrepancy(tmp_path):
    code, data = _run(tmp_path, "joint,direction,case,deflection (mm)\nC,-y,P,6.0\n")
    assert code == 1
    assert [f["kind"] for f in data["findings"]] == ["displacement-mismatch"]


def test_deflection_without_stiffness_cannot_be_verified(tmp_path):
    global CASE
    saved = CASE
    try:
        CASE = saved.replace(f", EA = {EA}", "")
        code, data = _run(tmp_path, "joint,direction,case,deflection (mm)\nC,-y,P,5.25\n")
    finally:
        CASE = saved
    assert code == 3 and data["verdict"] == "cannot-verify"


def test_deflection_without_a_unit_is_refused(tmp_path):
    """A bare 5.25 could be mm or the model's metres (a factor of 1000): one message, exit 2."""
    (tmp_path / "case.toml").write_text(CASE)
    (tmp_path / "claims.csv").write_text(CLAIMS)
    (tmp_path / "d.csv").write_text("joint,direction,case,deflection\nC,-y,P,5.25\nB,x,P,2.67\n")
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
            "--displacements",
            str(tmp_path / "d.csv"),
        ],
    )
    assert result.exit_code == 2
    assert "d.csv row 2: the values on rows 2, 3 have no length unit" in result.stderr
    assert "Traceback" not in result.stderr


def test_unit_in_each_cell_is_read(tmp_path):
    code, data = _run(tmp_path, f"joint,direction,case,deflection\nC,-y,P,{DELTA_C_MM:.2f} mm\n")
    assert code == 0 and data["verdict"] == "agrees"


def test_loaded_joint_moving_against_its_only_load_is_an_error_even_with_assumed_ea(tmp_path):
    """Triangle of REFERENCES 3.7, P down at C only: C moves down for any member sizes (P x delta
    equals the strain energy, positive), so a claimed upward movement is an error even when the EA
    is only assumed; a wrong size downward is information under an assumed EA."""
    case = CASE.replace(f", EA = {EA}", "")
    (tmp_path / "case.toml").write_text(case)
    (tmp_path / "claims.csv").write_text(CLAIMS)
    (tmp_path / "d.csv").write_text("joint,direction,case,deflection (mm)\nC,y,P,5.0\n")
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
            "--displacements",
            str(tmp_path / "d.csv"),
            "--assume-equal-ea",
            str(EA),
            "--json",
        ],
    )
    data = json.loads(result.stdout)
    [finding] = [f for f in data["findings"] if f["kind"] == "displacement-mismatch"]
    assert (
        result.exit_code == 1
        and "moves along that load, whatever the member sizes" in finding["detail"]
    )
    (tmp_path / "d.csv").write_text(
        "joint,direction,case,deflection (mm)\nC,y,P,0\n"
    )  # not moving at all
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
            "--displacements",
            str(tmp_path / "d.csv"),
            "--assume-equal-ea",
            str(EA),
            "--json",
        ],
    )
    assert result.exit_code == 1
    (tmp_path / "d.csv").write_text("joint,direction,case,deflection (mm)\nC,-y,P,9.0\n")
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
            "--displacements",
            str(tmp_path / "d.csv"),
            "--assume-equal-ea",
            str(EA),
            "--json",
        ],
    )
    assert result.exit_code == 0 and json.loads(result.stdout)["verdict"] == "agrees"
