"""Progress of a check: the service reports its steps to a callback and never prints; the command
shows them only on a terminal, never with --json or into a pipe."""

from __future__ import annotations

from pathlib import Path

from click.testing import CliRunner

from verify import cli
from verify.service import check

CASE = Path(__file__).resolve().parent.parent / "cases" / "canal-footbridge"


def test_the_service_names_each_step_to_the_callback(capsys) -> None:
    steps: list[str] = []
    result = check(CASE / "case.toml", CASE / "claims.csv", progress=steps.append)
    assert steps[0] == "reading the case"
    assert steps[1].startswith("reading the claims (") and "members)" in steps[1]
    assert steps[2:] == ["analysing the truss", "comparing the claims"]
    assert result.review.rows
    assert capsys.readouterr() == ("", "")  # the library printed nothing


def test_no_progress_into_a_pipe_or_with_json(monkeypatch) -> None:
    monkeypatch.setattr(cli, "PROGRESS_AFTER_S", 0.0)  # show every step, were it shown at all
    runner = CliRunner()
    for extra in ([], ["--json"]):
        out = runner.invoke(
            cli.main,
            ["check", str(CASE / "case.toml"), "--claims", str(CASE / "claims.csv"), *extra],
        )
        assert "truss-verify: reading" not in out.stderr
    assert cli._progress_printer(as_json=True) is None


def test_progress_lines_on_a_terminal(monkeypatch, capsys) -> None:
    monkeypatch.setattr(cli, "PROGRESS_AFTER_S", 0.0)
    monkeypatch.setattr(cli.sys.stderr, "isatty", lambda: True)
    show = cli._progress_printer(as_json=False)
    assert show is not None
    show("analysing the truss")
    assert capsys.readouterr().err == "truss-verify: analysing the truss ...\n"


def test_the_command_passes_its_steps_on_and_names_the_report(monkeypatch, tmp_path) -> None:
    steps: list[str] = []
    monkeypatch.setattr(cli, "_progress_printer", lambda as_json: steps.append)
    report = tmp_path / "review.html"
    out = CliRunner().invoke(
        cli.main,
        [
            "check",
            str(CASE / "case.toml"),
            "--claims",
            str(CASE / "claims.csv"),
            "--report",
            str(report),
        ],
    )
    assert out.exit_code in (0, 1), out.output
    assert steps[0] == "reading the case" and steps[-1] == "writing the report"
    assert report.is_file()
