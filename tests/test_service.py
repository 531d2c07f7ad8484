"""One check service: the command line's `check --json` and `api.review` give the same review.

Every bundled case (cases/*/case.toml with its claims table, and the gantry's claimed
deflections) is checked under a table of option sets both ways; the CLI's JSON and the API's
DataFrames are brought to one plain form and compared. The API must also refuse what the CLI
refuses, with the project's errors (exit status 2 on the command line).
"""

from __future__ import annotations

import json
import math
from pathlib import Path
from typing import Any

import pytest
from click.testing import CliRunner

from verify.api import review
from verify.cli import main
from verify.compare.diagnose import Verdict
from verify.errors import EXIT_BAD_INPUT, InputError, OptionError
from verify.service import CheckOptions, check, exit_status

ROOT = Path(__file__).resolve().parents[1]
CASES = sorted(p for p in (ROOT / "cases").iterdir() if (p / "case.toml").is_file())
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge"
SIGNIFICANT = (
    12  # JSON writes floats exactly; this only absorbs a last-bit difference in a DataFrame
)

# (label, the CLI's arguments, the API's keywords): the same option set spelt both ways.
OPTION_SETS = [
    ("defaults", [], {}),
    ("compression-positive", ["--sign", "compression-positive"], {"sign": "compression-positive"}),
    ("unit-N", ["--unit", "N"], {"unit": "N"}),
    (
        "wider-tolerance",
        ["--relative-tolerance", "0.05", "--absolute-tolerance", "0.01"],
        {"rtol": 0.05, "atol_fraction": 0.01},
    ),
]


def _claims_of(folder: Path) -> Path:
    (claims,) = [p for p in folder.iterdir() if p.stem == "claims"]
    return claims


def _displacements_of(folder: Path) -> Path | None:
    found = [p for p in folder.iterdir() if p.stem == "deflections"]
    return found[0] if found else None


def _plain(value: Any) -> Any:
    """A cell as both sides can state it: no value (None or NaN) is None, floats rounded."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, float):
        return float(f"{value:.{SIGNIFICANT}g}")
    return value


ROW_FIELDS = ("case", "claimed", "joints", "sections", "global", "elastic", "difference", "status")


def _from_cli(data: dict[str, Any]) -> dict[str, Any]:
    return {
        "verdict": data["verdict"],
        "findings": [
            (f["kind"], ", ".join(f.get("members", [])), f["detail"]) for f in data["findings"]
        ],
        "rows": [
            (r["kind"], r["id"], *(_plain(r.get(k)) for k in ROW_FIELDS))
            for r in data["members"]
            if r["kind"] in ("member", "reaction")
        ],
    }


def _from_api(result: Any) -> dict[str, Any]:
    rows = []
    for kind, frame in (("member", result.members), ("reaction", result.reactions)):
        rows += [
            (kind, r[kind], *(_plain(r[k]) for k in ROW_FIELDS)) for r in frame.to_dict("records")
        ]
    order = {
        (kind, label, case): i
        for i, (kind, label, case) in enumerate(
            (row.kind, row.id, row.case) for row in result.review.rows
        )
    }
    rows.sort(
        key=lambda r: order[(r[0], r[1], r[2])]
    )  # the CLI lists members and reactions as the review does
    return {
        "verdict": result.verdict,
        "findings": [
            (f["kind"], f["members"], f["detail"]) for f in result.findings.to_dict("records")
        ],
        "rows": rows,
    }


def _cli(*args: object) -> tuple[int, str, str]:
    outcome = CliRunner().invoke(main, [str(a) for a in args])
    if outcome.exception and not isinstance(outcome.exception, SystemExit):
        raise outcome.exception
    return outcome.exit_code, outcome.stdout, outcome.stderr


@pytest.mark.parametrize(
    "label, cli_args, api_kwargs", OPTION_SETS, ids=[s[0] for s in OPTION_SETS]
)
@pytest.mark.parametrize("folder", CASES, ids=[p.name for p in CASES])
def test_cli_json_and_api_review_agree_on_verdict_findings_and_rows(
    folder, label, cli_args, api_kwargs
):
    """check --json and api.review give one verdict, the same findings and the same rows."""
    claims, displacements = _claims_of(folder), _displacements_of(folder)
    extra_cli = ["--displacements", displacements] if displacements else []
    extra_api = {"displacements": displacements} if displacements else {}
    code, out, err = _cli(
        "check", folder / "case.toml", "--claims", claims, "--json", *cli_args, *extra_cli
    )
    assert code != EXIT_BAD_INPUT, err
    result = review(folder / "case.toml", claims, **api_kwargs, **extra_api)
    from_cli, from_api = _from_cli(json.loads(out)), _from_api(result)
    assert from_api["verdict"] == from_cli["verdict"] and result.exit_code == code
    assert from_api["findings"] == from_cli["findings"]
    assert from_api["rows"] == from_cli["rows"] and from_cli["rows"]


# (what is wrong, the CLI's arguments, the API's keywords, the error the API raises, words both say)
REFUSALS = [
    (
        "relative tolerance above 1",
        ["--relative-tolerance", "5"],
        {"rtol": 5.0},
        OptionError,
        "must be a number in (0, 1)",
    ),
    (
        "negative absolute tolerance",
        ["--absolute-tolerance", "-0.1"],
        {"atol_fraction": -0.1},
        OptionError,
        "must be a number in [0, 1)",
    ),
    ("unknown unit", ["--unit", "bogus"], {"unit": "bogus"}, OptionError, "bogus"),
    (
        "claims of another case",
        ["--claims", ROOT / "cases/sign-bracket/claims.csv"],
        {"claims_path": ROOT / "cases/sign-bracket/claims.csv"},
        InputError,
        "no label matches",
    ),
    (
        "missing displacements file",
        ["--displacements", "no-such-file.csv"],
        {"displacements": "no-such-file.csv"},
        InputError,
        "no-such-file.csv",
    ),
]


@pytest.mark.parametrize(
    "what, cli_args, api_kwargs, error, words", REFUSALS, ids=[r[0] for r in REFUSALS]
)
def test_api_refuses_what_the_cli_refuses(what, cli_args, api_kwargs, error, words):
    """An input the CLI refuses with status 2 makes the API raise the project's error, in the same
    words."""
    args = ["--claims", FOOTBRIDGE / "claims.csv", *cli_args]  # a later --claims wins in click
    code, _, err = _cli("check", FOOTBRIDGE, *args)
    assert code == EXIT_BAD_INPUT and words in err
    kwargs = {"claims_path": FOOTBRIDGE / "claims.csv", **api_kwargs}
    with pytest.raises(error) as raised:
        review(FOOTBRIDGE, **kwargs)
    assert words in str(raised.value) and raised.value.exit_code == EXIT_BAD_INPUT


def test_options_are_clean_once_made():
    """CheckOptions turns 'auto' into no unit and the sign into its mode, and compares by value."""
    options = CheckOptions(unit="auto", sign="compression-positive", rtol=0.02)
    assert options.unit is None and options.sign == "compression-positive"
    assert options.tolerance.rtol == 0.02 and options == CheckOptions(
        sign="compression-positive", rtol=0.02
    )


def test_options_name_the_option_as_the_user_typed_it():
    """A message names the option by the spelling the caller gave (a CLI flag, a manifest
    column)."""
    with pytest.raises(OptionError, match=r"^--rtol=2"):
        CheckOptions(rtol=2, spelt=(("rtol", "--rtol"),))


def test_text_options_must_be_text():
    """A sheet given as a number is refused, not silently turned into text."""
    with pytest.raises(OptionError, match="sheet=3"):
        CheckOptions(sheet=3)  # type: ignore[arg-type]  # the wrong type is the point of the test


def test_exit_status_follows_the_verdict():
    """0 agrees, 1 discrepancies, 3 cannot verify: the statuses the CLI documents."""
    assert [
        exit_status(v) for v in (Verdict.AGREES, Verdict.DISCREPANCIES, Verdict.CANNOT_VERIFY)
    ] == [0, 1, 3]


def test_a_case_folder_stands_for_its_case_file():
    """check() accepts a case folder as the CLI does, and lists every file it read."""
    result = check(FOOTBRIDGE, FOOTBRIDGE / "claims.csv")
    assert Path(result.model.source).name == "case.toml" and result.exit_code == 1
    assert str(FOOTBRIDGE / "claims.csv") in result.inputs


def test_an_option_error_is_an_input_error_said_in_one_line():
    """Callers catch one type for every bad input; the CLI still exits 2 with the option's own
    sentence as its only line (no file name before it, no traceback)."""
    with pytest.raises(InputError) as raised:
        review(FOOTBRIDGE, FOOTBRIDGE / "claims.csv", rtol=5.0)
    assert isinstance(raised.value, OptionError)
    assert str(raised.value) == raised.value.render() and raised.value.render().startswith("rtol=5")
    code, out, err = _cli(
        "check", FOOTBRIDGE, "--claims", FOOTBRIDGE / "claims.csv", "--relative-tolerance", "5"
    )
    assert code == EXIT_BAD_INPUT and out == ""
    assert len(err.strip().splitlines()) == 1 and "Traceback" not in err
    assert "must be a number in (0, 1)" in err


PLAIN_CASE = {
    "case.toml": 'title = "triangle"\n\n[units]\nlength = "m"\nforce = "kN"\n\n'
    "[joints]\nA = [0, 0]\nB = [4, 0]\nC = [2, 3]\n\n"
    '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nCA = ["C", "A"]\n\n'
    '[supports]\nA = "pinned"\nB = "roller"\n\n[loads.dead]\nC = [0, -12]\n',
    # C: each diagonal carries 12 / 2 / (3 / sqrt 13) = 7.2111 kN compression; the tie 4 kN.
    "claims.csv": "member,dead\nAB,4\nBC,-7.2111\nCA,-7.2111\n",
}


def test_a_plain_claims_table_is_checked_without_one_object_per_claim(write_files):
    """The plain rows of a wide table are read as columns; the check asks the table how many
    claims it holds, not for its per-claim objects (2x10^5 of them at 10^5 members)."""
    case = write_files(PLAIN_CASE)
    result = check(case, case.parent / "claims.csv")
    assert result.review.verdict is Verdict.AGREES
    assert result.claims.count == 3
    assert result.claims._values is None  # never made
    assert len(result.claims.values) == 3  # made when asked for
