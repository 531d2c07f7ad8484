"""Every finding says where its claims were written: the locations --json gives each finding
appear in the terminal text and the HTML report too, also for findings whose sentence names no
cell (a swapped pair, a combination column at odds with its own load cases)."""

from __future__ import annotations

import html
import json
import subprocess
import sys
from pathlib import Path

import pytest

from verify.report.written import MAX_LOCATIONS

ROOT = Path(__file__).resolve().parents[1]
CASES = sorted(p.name for p in (ROOT / "cases").iterdir() if (p / "case.toml").exists())


def _run(*args: str) -> str:
    done = subprocess.run(
        [sys.executable, "-m", "verify", *args], capture_output=True, text=True, cwd=ROOT
    )
    assert done.returncode in (0, 1, 3), done.stderr
    return done.stdout


@pytest.mark.parametrize("case", CASES)
def test_every_location_of_every_finding_is_printed(case: str, tmp_path: Path) -> None:
    folder = ROOT / "cases" / case
    claims = next(folder.glob("claims.*"))
    base = ("check", str(folder), "--claims", str(claims))
    findings = json.loads(_run(*base, "--json"))["findings"]
    text = _run(*base)
    _run(*base, "--report", str(tmp_path / "r.html"))
    page = html.unescape((tmp_path / "r.html").read_text())
    located = [f for f in findings if f.get("locations")]
    for f in located:
        # A sentence that names its cells may shorten the list ('...'); one that names none is
        # followed by the list.
        named = any(place in f["detail"] for place in f["locations"])
        for place in f["locations"][: 1 if named else MAX_LOCATIONS]:
            assert place in text, (f["kind"], place)
            assert place in page, (f["kind"], place)


def test_the_demo_has_findings_whose_sentence_names_no_cell() -> None:
    """The test above would pass vacuously if every detail already held its location."""
    folder = ROOT / "cases" / "canal-footbridge"
    base = ("check", str(folder), "--claims", str(folder / "claims.csv"))
    findings = json.loads(_run(*base, "--json"))["findings"]
    bare = [f for f in findings if f.get("locations") and f["locations"][0] not in f["detail"]]
    assert {f["kind"] for f in bare} >= {"swapped-labels"}


def test_a_pdf_table_is_placed_by_its_pages_not_called_a_sheet() -> None:
    from verify.report.written import table_place

    assert table_place("pages 2-3") == " (pages 2-3)"
    assert table_place("page 1") == " (page 1)"
    assert table_place("Member forces") == " (sheet 'Member forces')"
    assert table_place(None) == ""
