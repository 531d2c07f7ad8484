"""The HTML report printed to PDF by headless Chromium, on A4 and on US Letter.

Checks what a checker stapling the print-out to a memo needs: the first page holds the verdict,
the facts and the findings; no row of a member table is split across pages or wrapped; the
major sections start on a new page; the severities read in black and white (words, not a white
tag on a black background). The PDF text is read with pdfplumber. Skipped, with the reason
shown, when no chromium binary is installed (.ci/run installs it).
"""

from __future__ import annotations

import re
import shutil
import subprocess
from pathlib import Path

import pdfplumber
import pytest
from click.testing import CliRunner

from verify.cli import main

ROOT = Path(__file__).resolve().parent.parent
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")
pytestmark = [
    pytest.mark.slow,
    pytest.mark.skipif(
        CHROMIUM is None, reason="chromium is not installed (apt-get install -y chromium)"
    ),
]
FLAGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-background-networking",
    "--no-first-run",
    "--disable-component-update",
    "--disable-sync",
    "--disable-extensions",
    "--no-pings",
    "--proxy-server=127.0.0.1:9",
    "--host-resolver-rules=MAP * ~NOTFOUND",
    "--no-pdf-header-footer",
]
PAPER = {"A4": (595, 842), "letter": (612, 792)}  # points (ISO 216; ANSI letter 8.5 x 11 in)


@pytest.fixture(scope="module", params=sorted(PAPER))
def printed(
    request: pytest.FixtureRequest, tmp_path_factory: pytest.TempPathFactory
) -> tuple[str, list[str]]:
    folder = tmp_path_factory.mktemp(f"print-{request.param}")
    html = folder / "review.html"
    result = CliRunner().invoke(
        main,
        [
            "check",
            str(FOOTBRIDGE),
            "--claims",
            str(FOOTBRIDGE / "claims.csv"),
            "--report",
            str(html),
        ],
    )
    assert result.exit_code == 1
    # The paper is the printer's choice; this stands in for the print dialog's paper setting.
    text = html.read_text(encoding="utf-8").replace(
        "</head>", f"<style>@page{{size:{request.param}}}</style></head>"
    )
    html.write_text(text, encoding="utf-8")
    pdf = folder / "review.pdf"
    assert CHROMIUM is not None
    subprocess.run(
        [CHROMIUM, *FLAGS, f"--print-to-pdf={pdf}", html.as_uri()],
        check=True,
        timeout=180,
        capture_output=True,
        cwd=folder,
    )
    with pdfplumber.open(pdf) as document:
        width, height = PAPER[request.param]
        assert (
            abs(float(document.pages[0].width) - width) < 2
            and abs(float(document.pages[0].height) - height) < 2
        )
        pages = [page.extract_text() or "" for page in document.pages]
    return request.param, pages


def test_first_page_holds_verdict_facts_and_findings(printed):
    """Page 1: the verdict, the facts (Maxwell's rule, units, tolerance) and every finding."""
    _, pages = printed
    first = pages[0]
    assert "Verdict: DISCREPANCIES" in first
    for fact in ("Maxwell's rule", "Units (case)", "Tolerance", "Structure"):
        assert fact in first
    assert "Findings" in first
    for title in (
        "Claimed value differs",
        "Values off by a unit factor",
        "Two member labels swapped",
        "Single sign reversed",
        "Force claimed for a zero-force member",
    ):
        assert title in first


def test_severity_is_a_word_that_prints_in_black_and_white(printed):
    """The severity prints as a bracketed word, legible without background colours."""
    _, pages = printed
    assert "[ERROR]" in pages[0]


def test_no_member_table_row_is_split_or_wrapped(printed):
    """Every claimed row (member id ... 'at row N') lies on one text line of one page."""
    _, pages = printed
    start = next(k for k, p in enumerate(pages) if p.lstrip().startswith("Member table"))
    lines = [line for page in pages[start:] for line in page.splitlines()]
    rows = [line for line in lines if re.match(r"^(L\d|U\d)\S* .* at row \d+, column", line)]
    # 21 members and 2 reactions in each of the three claimed load columns
    # (cases/canal-footbridge/claims.csv)
    assert len(rows) == 3 * (21 + 2)


def test_major_sections_start_on_a_new_page(printed):
    """The diagram, the member table and the appendix each begin a page."""
    _, pages = printed
    starts = [page.lstrip().splitlines()[0] if page.strip() else "" for page in pages]
    for heading in ("Diagram", "Member table", "Appendix: hand calculation"):
        assert heading in starts, heading
