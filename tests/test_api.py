"""The notebook API: review() and solve() return DataFrames and render themselves as HTML."""

from __future__ import annotations

import math
from pathlib import Path

import pytest
from trussgen import pratt, write_case

from verify.api import NOTEBOOK_ROWS, review, solve
from verify.errors import InputError

ROOT = Path(__file__).resolve().parent.parent
CANAL = ROOT / "cases/canal-footbridge/case.toml"
CANAL_CLAIMS = ROOT / "cases/canal-footbridge/claims.csv"
RTOL = 1e-9  # the API hands over the solver's numbers unchanged


def test_solve_forces_follow_the_beam_analogy() -> None:
    """solve().forces of the 6-panel Pratt footbridge match chord = M/h and diagonal = V/sin(theta).

    REFERENCES.md 3.1/3.2 (P = 9 kN dead load at each bottom panel point, d = 3 m, h = 2.4 m).
    """
    result = solve(CANAL)
    P, d, h = 9.0, 3.0, 2.4
    forces = result.forces
    assert list(forces.columns) == ["dead", "crowd", "wind-uplift", "ULS-1", "SLS-1"]
    assert forces.loc["L0L1", "dead"] == pytest.approx(2.5 * P * d / h, rel=RTOL)
    assert forces.loc["U2U3", "dead"] == pytest.approx(-(2.5 * P * 3 * d - 3 * P * d) / h, rel=RTOL)
    assert forces.loc["U1L2", "dead"] == pytest.approx(1.5 * P * math.hypot(d, h) / h, rel=RTOL)
    # Combinations by superposition: ULS-1 = 1.35 dead + 1.5 crowd (case file).
    assert forces.loc["L0L1", "ULS-1"] == pytest.approx(
        1.35 * forces.loc["L0L1", "dead"] + 1.5 * forces.loc["L0L1", "crowd"], rel=RTOL
    )
    assert result.verdict == "stable-determinate"
    assert result.members.loc["U1L2", "length"] == pytest.approx(math.hypot(d, h), rel=RTOL)
    assert result.reactions.loc["L6.y", "dead"] == pytest.approx(2.5 * P, rel=RTOL)


def test_review_exposes_verdict_findings_and_member_table() -> None:
    """review() gives the verdict, one findings row per finding and one member row per claim or
    missing claim."""
    result = review(CANAL, CANAL_CLAIMS)
    assert result.verdict == "discrepancies" and result.exit_code == 1
    kinds = set(result.findings["kind"])
    assert {
        "sign-flip",
        "swapped-labels",
        "unit-scale",
        "zero-force-claimed",
        "value-mismatch",
    } <= kinds
    members = result.members
    row = members[(members["member"] == "U2L2") & (members["case"] == "dead")].iloc[0]
    assert row["status"] == "sign-flip"
    assert row["global"] == pytest.approx(
        -(2.5 - 2) * 9.0, rel=RTOL
    )  # Pratt U2L2 = -(R - 2P), REFERENCES.md 3.2
    assert set(result.reactions["reaction"]) == {"L0.y", "L6.y"}


def test_review_renders_in_a_notebook() -> None:
    """_repr_html_ holds the verdict, the findings, the table and the diagram, all escaped."""
    html = review(CANAL, CANAL_CLAIMS)._repr_html_()
    assert "DISCREPANCIES" in html and "Two member labels swapped" in html
    assert "<table" in html and "<svg" in html and "<script" not in html.lower()


def test_solve_renders_in_a_notebook_and_truncates_big_tables(tmp_path: Path) -> None:
    """A big truss shows only the first rows of its table in the notebook; the DataFrame keeps
    all."""
    path = write_case(tmp_path, pratt(60))
    result = solve(path)
    html = result._repr_html_()
    assert f"First {NOTEBOOK_ROWS} of {len(result.forces)} rows" in html
    assert len(result.forces) == 4 * 60 - 3 and "<svg" in html


def test_report_method_writes_the_same_document() -> None:
    """ReviewResult.report() is the document `check --report` writes."""
    from verify.report.document import render_document

    result = review(CANAL, CANAL_CLAIMS)
    assert result.report("md", generated="2000-01-01") == render_document(
        result.review, fmt="md", generated="2000-01-01"
    )


def test_bad_case_raises_input_error(tmp_path: Path) -> None:
    missing = tmp_path / "nope.toml"
    with pytest.raises(InputError):
        solve(missing)


def test_review_findings_carry_the_cause_fields() -> None:
    """The findings DataFrame has the fields scripts read: a likely cause's variant and count."""
    result = review(
        ROOT / "cases/service-road-overbridge/case.toml",
        ROOT / "cases/service-road-overbridge/claims.csv",
    )
    causes = result.findings[result.findings["kind"] == "likely-cause"]
    assert "'ULS-1' taking 1.5 × dead instead of 1.35 × dead" in set(causes["variant"])
    assert causes["explains"].min() >= 1 and all(causes["locations"].str.contains("row "))
