"""One caution, said the same way in the README, the terminal and every report (DESIGN.md section
5)."""

from __future__ import annotations

import re
from pathlib import Path

from click.testing import CliRunner

from verify.cli import main
from verify.report.cautions import CAUTION, ELASTIC_CAUTION, SHORT_CAUTION

ROOT = Path(__file__).resolve().parents[1]
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge"
GANTRY = ROOT / "cases" / "conveyor-gantry"


def _words(text: str) -> str:
    return re.sub(r"\s+", " ", text).strip()


def _run(*args: object) -> str:
    return CliRunner().invoke(main, [str(a) for a in args]).stdout


def test_readme_quotes_the_caution_word_for_word():
    """The README's Cautions section holds the very text every output prints."""
    readme = _words((ROOT / "README.md").read_text(encoding="utf-8"))
    assert _words(CAUTION) in readme and _words(ELASTIC_CAUTION) in readme


def test_short_caution_keeps_licensed_and_dynamic_effects():
    """The short form drops neither the licensed reviewer nor dynamic effects."""
    for word in ("licensed", "dynamic effects", "capacity", "buckling", "connections"):
        assert word in SHORT_CAUTION and word in CAUTION


def test_report_has_the_short_caution_at_the_top_and_the_full_one_at_the_end(tmp_path):
    """Short beside the verdict, full at the end, in HTML and Markdown alike."""
    for name in ("r.html", "r.md"):
        _run(
            "check", FOOTBRIDGE, "--claims", FOOTBRIDGE / "claims.csv", "--report", tmp_path / name
        )
        text = (tmp_path / name).read_text(encoding="utf-8")
        assert text.index(SHORT_CAUTION) < text.index("Findings") < text.rindex(CAUTION)


def test_terminal_ends_with_the_caution():
    """The terminal review closes with the same full caution."""
    out = _run("check", FOOTBRIDGE, "--claims", FOOTBRIDGE / "claims.csv")
    assert out.rstrip().endswith(CAUTION)


def test_elastic_results_carry_the_elastic_assumption(tmp_path):
    """Deflections are elastic results: the report, the terminal and JSON say they rest on EA."""
    args = (
        "check",
        GANTRY,
        "--claims",
        GANTRY / "claims.csv",
        "--displacements",
        GANTRY / "deflections.csv",
    )
    assert ELASTIC_CAUTION in _run(*args)
    assert ELASTIC_CAUTION in _run(*args, "--json")
    _run(*args, "--report", tmp_path / "r.md")
    deflections = (tmp_path / "r.md").read_text(encoding="utf-8").split("## Deflection check")[1]
    assert ELASTIC_CAUTION in deflections.split("###")[0]


def test_no_sound_beside_an_unstable_truss(tmp_path):
    """A mechanism's conditioning figure is not called sound."""
    case = tmp_path / "case.toml"
    case.write_text(
        '[units]\nlength = "m"\nforce = "kN"\n[joints]\nA = [0, 0]\nB = [3, 0]\nC = [3, 3]\n'
        "D = [0, 3]\n"
        '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nCD = ["C", "D"]\nDA = ["D", "A"]\n'
        '[supports]\nA = ["x", "y"]\nB = ["y"]\n[loads.dead]\nC = [1.0, 0.0]\n'
    )
    out = _run("stability", case).replace(str(tmp_path), "")
    assert "unstable" in out and not re.search(r"\bsound\b", out)
    claims = tmp_path / "claims.csv"
    claims.write_text("member,dead\nAB,1\n")
    _run("check", case, "--claims", claims, "--report", tmp_path / "r.md")
    report = (tmp_path / "r.md").read_text(encoding="utf-8").replace(str(tmp_path), "")
    assert (
        "CANNOT VERIFY" in report
        and not re.search(r"\bsound\b", report)
        and "well conditioned" not in report
    )
