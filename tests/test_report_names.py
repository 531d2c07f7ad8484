"""Our own colour code and plain names: agreement drawn plain, marks that clash with no trade
symbol,
JSON keys and options in the trade's words, old option names still accepted."""

from __future__ import annotations

import json
import re
from pathlib import Path

from click.testing import CliRunner

from verify.cli import main
from verify.report.diagram import NEUTRAL, STATUS_STYLES

ROOT = Path(__file__).resolve().parents[1]
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge"
GANTRY = ROOT / "cases" / "conveyor-gantry"
# Letters that mean something else to an engineer: N (newton, axial force), X (fail), and the
# usual symbols for moment, shear, load, section modulus.
TRADE_SYMBOLS = set("NXMVPSWEAFRT")


def _run(*args: object) -> tuple[int, str]:
    result = CliRunner().invoke(main, [str(a) for a in args])
    return result.exit_code, result.stdout


def test_status_marks_clash_with_no_trade_symbol():
    """No status is marked with N, X or another common engineering letter."""
    marks = {s.marker for s in STATUS_STYLES.values() if s.marker}
    assert marks and not marks & TRADE_SYMBOLS
    assert len(marks) == len([s for s in STATUS_STYLES.values() if s.marker])  # one mark per status


def test_agreement_is_drawn_plain():
    """An agreeing member has no mark and the colour of an unchecked member, not green."""
    agrees = STATUS_STYLES["agrees"]
    assert agrees.marker == "" and agrees.colour == NEUTRAL.colour


def test_report_diagram_colours_only_findings_and_says_it_is_no_capacity_check(tmp_path):
    """In the HTML drawing, agreeing members are neutral; the caption disclaims a capacity check."""
    _run(
        "check", FOOTBRIDGE, "--claims", FOOTBRIDGE / "claims.csv", "--report", tmp_path / "r.html"
    )
    html = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert "not a capacity check" in html
    agreeing = re.findall(r'stroke="(#[0-9A-Fa-f]{6})"[^>]*><title>[^<]*; agrees</title>', html)
    assert agreeing and set(agreeing) == {NEUTRAL.colour}
    assert "#009E73" not in html  # the green of the old code
    assert "✓" not in html


def test_json_uses_the_plain_names():
    """No slenderness, sigma_ratio, blocker, not-elastic or convention.support in JSON."""
    _, out = _run("check", GANTRY, "--claims", GANTRY / "claims.csv", "--json")
    data = json.loads(out)
    assert "extent_ratio" in data["structure"] and "conditioning_ratio" in data["structure"]
    assert data["structure"]["method"] == "full-rank-count"
    assert set(data["tolerance"]) == {"relative", "fraction_of_largest_force"}
    text = json.dumps(data)
    for old in ("slenderness", "sigma_ratio", '"blocker"', "not-elastic", "dense-svd", '"rtol"'):
        assert old not in text
    assert "support" not in data["convention"]


def test_old_tolerance_options_still_work():
    """--rtol and --atol-fraction are kept as hidden spellings of the new options."""
    new = _run(
        "check",
        FOOTBRIDGE,
        "--claims",
        FOOTBRIDGE / "claims.csv",
        "--json",
        "--relative-tolerance",
        "0.02",
        "--absolute-tolerance",
        "0.002",
    )
    old = _run(
        "check",
        FOOTBRIDGE,
        "--claims",
        FOOTBRIDGE / "claims.csv",
        "--json",
        "--rtol",
        "0.02",
        "--atol-fraction",
        "0.002",
    )
    assert new == old
    assert json.loads(new[1])["tolerance"] == {"relative": 0.02, "fraction_of_largest_force": 0.002}
    _, helptext = _run("check", "--help")
    assert "--relative-tolerance" in helptext and "--rtol" not in helptext


OLD_WORDS = ("not-elastic", "blocker", "dense-svd", "sparse-lu", "sigma_ratio", "slenderness")


def test_names_are_chosen_at_the_source():
    """One word inside and out: the enums, the structure's fields and keys, and the convention's
    keys already carry the words the outputs show; no output translates them."""
    from dataclasses import fields

    from verify.analysis.stability import FULL_RANK_COUNT, SPARSE_SCREEN, StabilityResult
    from verify.compare.findings import FindingKind, RowStatus, Severity

    inside = {m.value for e in (FindingKind, RowStatus, Severity) for m in e}
    inside |= {f.name for f in fields(StabilityResult)} | {FULL_RANK_COUNT, SPARSE_SCREEN}
    assert {"stiffness-dependent", "cannot-verify", "conditioning_ratio", "extent_ratio"} <= inside
    assert not inside & set(OLD_WORDS)


CASES = sorted(p for p in (ROOT / "cases").iterdir() if (p / "case.toml").exists())


def test_every_word_json_shows_is_a_word_the_code_uses():
    """For every bundled case, each kind, status, severity and method in --json is a value of the
    enum (or constant) the code itself uses, and the structure's keys are StabilityResult's."""
    from verify.analysis.stability import FULL_RANK_COUNT, SPARSE_SCREEN
    from verify.compare.findings import FindingKind, RowStatus, Severity

    for case in CASES:
        claims = next(case.glob("claims.*"))
        extra = ["--sheet", "Member forces"] if claims.suffix == ".xlsx" else []
        _, out = _run("check", case, "--claims", claims, "--json", *extra)
        data = json.loads(out)
        assert data["structure"]["method"] in {FULL_RANK_COUNT, SPARSE_SCREEN}
        assert {"conditioning_ratio", "extent_ratio", "scaled_conditioning"} <= set(
            data["structure"]
        )
        assert {f["kind"] for f in data["findings"]} <= {k.value for k in FindingKind}
        assert {f["severity"] for f in data["findings"]} <= {s.value for s in Severity}
        assert {m["status"] for m in data["members"]} <= {s.value for s in RowStatus}
        assert not any(word in out for word in OLD_WORDS), case.name
