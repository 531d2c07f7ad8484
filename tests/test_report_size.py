"""The review report stays small at any truss size (issue 12): its byte size, not its time.

A 10^5-member Pratt from the benchmark's generator (bench/generate.py), claims written by the
benchmark floor's own sparse solve with one member 25 % high (bench/floor.py): the HTML must stay
under 5 MB, draw the outline and the flagged member, hold that member's section cut, and say
what it left out and how to print it.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pytest

from verify.report.document import render_document
from verify.service import check

BENCH = Path(__file__).resolve().parents[1] / "bench"
MAX_BYTES = 5_000_000


@pytest.fixture(scope="module")
def big_case(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    sys.path.insert(0, str(BENCH))
    try:
        import floor
        import generate
    finally:
        sys.path.remove(str(BENCH))
    out = tmp_path_factory.mktemp("pratt-1e5")
    case = generate.write_case(generate.build("pratt", 1e5), out)
    claims = out / "claims.csv"
    assert floor.main([str(case), "--write-claims", str(claims)]) == 0
    return case, claims


def test_html_report_of_a_hundred_thousand_members_stays_under_5_mb(big_case, capsys) -> None:
    case, claims = big_case
    capsys.readouterr()  # the floor prints one line
    result = check(case, claims)
    assert len(result.model.members) >= 100_000
    flagged = [r.id for r in result.review.rows if r.status == "value-mismatch"]
    assert flagged
    html = render_document(result.review, fmt="html", generated="2026-01-01")
    size = len(html.encode("utf-8"))
    assert size < MAX_BYTES, f"{size} bytes"
    assert 'class="outline"' in html and f"<title>{flagged[0]}:" in html
    appendix = html[html.index('id="appendix"') :]
    assert f"Solves <strong>{flagged[0]}" in appendix or f", {flagged[0]}" in appendix
    assert "truss-verify cut case.toml --members" in appendix
    assert "truss-verify solve case.toml --show sections" in appendix
