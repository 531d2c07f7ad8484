"""Hostile input the fast readers took while the careful ones refused it (or the other way), and
input read silently as something else. Each test plants the messy input, says what must come of
it (exit status 2 and one message naming file, row or line, field and what was expected; or a
warning naming the row), and checks that the honest table of the same truss still agrees.
"""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner
from test_hostile_input import (
    CLAIMS,
    JOINTS_CSV,
    LOADS_CSV,
    MEMBERS_CSV,
    TABLED,
    TRIANGLE,
    folder,
)

from verify.cli import main
from verify.io import case as case_module
from verify.io import claims as claims_module
from verify.io.claims import rows as rows_module
from verify.io.claims import source_csv

ROUTES = {
    "fast": dict(fast=True, shortcuts=True),
    "columns": dict(fast=True, shortcuts=False),
    "general": dict(fast=False, shortcuts=False),
}


def check(
    monkeypatch: pytest.MonkeyPatch, case: Path, claims: Path, *, fast: bool, shortcuts: bool
) -> tuple[int, str, str]:
    """`check` of a case and claims by one route of the claims reader: the fast plain rows
    (read from the cells' places, or from columns cut from the text) or the general reader."""
    with monkeypatch.context() as patch:
        patch.setattr(claims_module, "FAST_ROWS", fast)
        patch.setattr(rows_module, "PLAIN_BLOCKS", shortcuts)
        patch.setattr(source_csv, "PLAIN_BYTES", shortcuts)
        result = CliRunner().invoke(main, ["check", str(case), "--claims", str(claims)])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout, result.stderr


def every_route(monkeypatch: pytest.MonkeyPatch, case: Path, claims: Path) -> tuple[int, str]:
    """The exit status and message of `check`, the same by every route of the claims reader."""
    found = {name: check(monkeypatch, case, claims, **route)[::2] for name, route in ROUTES.items()}
    assert len(set(found.values())) == 1, found
    return found["general"]


def triangle(tmp_path: Path, claims: str, case: str = TRIANGLE) -> tuple[Path, Path, Path]:
    """The triangle case, the planted claims and its honest claims."""
    folder(tmp_path, {"case.toml": case, "claims.csv": claims, "honest.csv": CLAIMS})
    return tmp_path / "case.toml", tmp_path / "claims.csv", tmp_path / "honest.csv"


# -- 1. a long force cell or member label: the same answer by every route ------------------------

LONG_NUMBER = "-7.07106781186547524400844362104849039284835937688474036588339868995366"


def test_a_plain_number_past_the_force_cell_limit_is_refused_by_every_route(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A force cell longer than 64 characters is refused by the careful reader (no force cell is
    that long); the fast routes took it when it was a plain number."""
    assert len(LONG_NUMBER) > 64 and float(LONG_NUMBER) == pytest.approx(-7.0711, abs=1e-4)
    case, planted, honest = triangle(tmp_path, CLAIMS.replace("-7.0711", LONG_NUMBER, 1))
    status, message = every_route(monkeypatch, case, planted)
    assert status == 2
    assert message.startswith(f"{planted} row 3, column 'dead (kN)': force '-7.0710678")
    assert f"is {len(LONG_NUMBER)} characters long (limit 64)" in message
    assert "Traceback" not in message
    assert every_route(monkeypatch, case, honest) == (0, "")


def test_a_member_id_the_case_file_takes_can_be_named_in_a_claims_table(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A member id of 150 characters is within the case file's limit (200): every route reads a
    claim naming it (the general reader refused labels past 100, the fast routes took them)."""
    long_id = "chord-" + "A" * 144
    case_text = TRIANGLE.replace('AB = ["A", "B"]', f'"{long_id}" = ["A", "B"]')
    claims = CLAIMS.replace("AB,", f"{long_id},")
    case, planted, honest = triangle(tmp_path, claims, case_text)
    status, message = every_route(monkeypatch, case, planted)
    assert (status, message) == (0, "")
    assert every_route(monkeypatch, case, honest)[0] == 0  # (its AB row names no member)
    assert rows_module.MAX_NAME_CHARS == 200


def test_a_label_past_the_name_limit_is_refused_by_every_route(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A model built in memory may hold an id longer than labels may be: the fast routes send
    its row to the general reader, which words it (here the limit is lowered to 1 to plant it)."""
    case, planted, honest = triangle(tmp_path, CLAIMS)
    monkeypatch.setattr(rows_module, "MAX_NAME_CHARS", 1)
    status, message = every_route(monkeypatch, case, planted)
    assert status == 2
    assert message.startswith("3 problems found in the input:\n")
    assert f"{planted} row 2, column 'member': the member label 'AB' is 2" in message
    assert message.count("characters long (limit 1)") == 3
    monkeypatch.undo()
    assert every_route(monkeypatch, case, honest) == (0, "")


# -- 2. a z load in a 2D case's loads table: refused, not dropped --------------------------------


def tabled_triangle(tmp_path: Path, loads: str) -> Path:
    files = {
        "case.toml": TABLED,
        "joints.csv": JOINTS_CSV,
        "members.csv": MEMBERS_CSV,
        "loads.csv": loads,
        "claims.csv": CLAIMS,
    }
    folder(tmp_path, files)
    return tmp_path / "case.toml"


def check_case(
    monkeypatch: pytest.MonkeyPatch, case: Path, *, bulk: bool
) -> tuple[int, str, list[str]]:
    """`check` of the triangle's claims with the case's tables read by the careful reader, or
    (`bulk`) by the bulk readers however small the table; and which bulk loads reader took it."""
    took: list[str] = []
    with monkeypatch.context() as patch:
        patch.setattr(case_module, "BULK_MIN_ROWS", 0 if bulk else 10**9)
        for name in ("_plain_loads", "_fast_loads"):
            reader = getattr(case_module, name)

            def spy(*args, _reader=reader, _name=name, **kwargs):
                found = _reader(*args, **kwargs)
                if found:
                    took.append(_name)
                return found

            patch.setattr(case_module, name, spy)
        result = CliRunner().invoke(
            main, ["check", str(case), "--claims", str(case.parent / "claims.csv")]
        )
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stderr, took


@pytest.mark.parametrize("bulk", [False, True])
@pytest.mark.parametrize("fz", ["5", "-0.001", "1e-9", "x"])
def test_a_z_load_in_a_2d_loads_table_is_refused_with_its_line(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, bulk: bool, fz: str
) -> None:
    """fz of a 2D case was dropped silently (only fx and fy read) by every loads reader."""
    loads = f"case,joint,fx,fy,fz\ndead,A,0,0,0\ndead,C,0,-10,{fz}\n"
    status, message, _ = check_case(monkeypatch, tabled_triangle(tmp_path, loads), bulk=bulk)
    assert status == 2
    assert message == (
        f"{tmp_path / 'loads.csv'}:3: load case 'dead' at joint 'C': field fz holds '{fz}'; "
        "expected 0 or a blank cell, as a 2D case has no z loads\n"
    )


@pytest.mark.parametrize("bulk", [False, True])
@pytest.mark.parametrize("fz", ["0", "0.0", "-0", ""])
def test_a_2d_loads_table_with_zero_or_blank_fz_is_read(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, bulk: bool, fz: str
) -> None:
    loads = f"case,joint,fx,fy,fz\ndead,C,0,-10,{fz}\n"
    status, message, took = check_case(monkeypatch, tabled_triangle(tmp_path, loads), bulk=bulk)
    assert (status, message) == (0, "")
    # (the bulk readers take a table of numbers; a blank cell is the careful reader's)
    assert bool(took) == (bulk and fz != "")
    honest = check_case(monkeypatch, tabled_triangle(tmp_path / "honest", LOADS_CSV), bulk=bulk)
    assert honest[:2] == (0, "")


# -- 3. a row written with another separator: refused on its row, never "no claim" ------------


def test_a_row_separated_by_semicolons_in_a_comma_table_is_refused_on_its_row(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """'AC;-7.0711' in a ',' table was read as member AC without a claim (an info line only) and
    the verdict was AGREES: its value was lost. Now every route refuses the table on that row
    (exit 2, one message: file, row, what was expected); the honest table still agrees."""
    case, planted, honest = triangle(tmp_path, CLAIMS.replace("AC,-7.0711", "AC;-7.0711"))
    outputs = {check(monkeypatch, case, planted, **route) for route in ROUTES.values()}
    assert len(outputs) == 1, outputs
    status, out, err = outputs.pop()
    assert status == 2 and out == ""
    assert "row 3" in err and str(planted) in err
    assert (
        "this row is separated by ';' where the table's cells are separated by ',', so its "
        "values cannot be read; expected its cells separated by ',' like the header's"
    ) in err
    assert check(monkeypatch, case, honest, **ROUTES["fast"])[0] == 0


def test_a_row_missing_its_last_cells_is_a_member_without_a_claim(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """'AC' with its last cell left off, as a hand-written table leaves it: no claim for AC (a
    missing claim, never agreeing), not an error, by every route (an independent review showed
    honest ragged tables refused when this was an error)."""
    case, planted, _ = triangle(tmp_path, CLAIMS.replace("AC,-7.0711", "AC"))
    for route in ROUTES.values():
        status, out, _ = check(monkeypatch, case, planted, **route)
        assert status == 0 and "unknown-label" not in out
        assert "[info] missing-claim: 'dead': no claim for 1 of 3 members (AC)" in out
    result = CliRunner().invoke(main, ["check", str(case), "--claims", str(planted), "--json"])
    statuses = {(m["id"], m["status"]) for m in json.loads(result.stdout)["members"]}
    assert ("AC", "agrees") not in statuses


def test_a_row_with_an_empty_last_cell_is_still_no_claim(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """'AC,' writes every cell (the last one empty): a member listed without a claim, as before."""
    case, planted, _ = triangle(tmp_path, CLAIMS.replace("AC,-7.0711", "AC,"))
    status, out, _ = check(monkeypatch, case, planted, **ROUTES["fast"])
    assert status == 0 and "unknown-label" not in out
    assert "[info] missing-claim: 'dead': no claim for 1 of 3 members (AC)" in out


# -- 4. "did you mean" for an unknown joint: the same words every run ---------------------------

NODES = ("node9", "node2", "node7", "node1", "node5", "node3", "node8", "node4", "node6")
NODE_CASE = (
    'title = "nodes"\n[units]\nlength = "m"\nforce = "kN"\n[joints]\n'
    + "".join(f"{j} = [{k}.0, {k % 2}.0]\n" for k, j in enumerate(NODES))
    + '[members]\nM1 = ["node", "node2"]\n[supports]\nnode9 = ["x", "y"]\nnode2 = ["y"]\n'
    + "[loads.dead]\nnode7 = [0.0, -1.0]\n"
)
READ = (
    "import sys\nfrom verify.errors import InputError\nfrom verify.io.case import read_case\n"
    "try:\n    read_case(sys.argv[1])\nexcept InputError as error:\n    print(error.render())\n"
)


def test_did_you_mean_for_an_unknown_joint_follows_table_order(tmp_path: Path) -> None:
    """Every joint contains 'node': the suggestions tie, and were taken from a set, whose order
    changes with the hash seed from run to run. Now the first two in the joints table."""
    folder(tmp_path, {"case.toml": NODE_CASE})
    said = set()
    for seed in ("0", "1", "2", "3", "4", "5", "6", "7"):
        env = {**os.environ, "PYTHONHASHSEED": seed}
        done = subprocess.run(
            [sys.executable, "-c", READ, str(tmp_path / "case.toml")],
            capture_output=True,
            text=True,
            env=env,
            cwd=Path(__file__).parent.parent,
            check=True,
        )
        said.add(done.stdout)
    assert len(said) == 1, said
    assert "names joint 'node', which is not defined. Did you mean 'node9' or 'node2'?" in (
        said.pop()
    )


@pytest.mark.parametrize(
    "note", ["forces from run 3", "see note 2) below", "checked;JB", "2024", "18 m", "-7.0711"]
)
def test_a_short_note_row_under_the_table_is_no_claim(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, note: str
) -> None:
    """A note of one cell, a number in it or not, is no claim and not a finding; a ';' note that
    names no member and holds no number ('checked;JB') passes too."""
    case, planted, _ = triangle(tmp_path, CLAIMS + note + "\n")
    for route in ROUTES.values():
        status, out, _ = check(monkeypatch, case, planted, **route)
        assert status == 0 and "unknown-label" not in out


@pytest.mark.parametrize("row", ["XY;-7.0711", "AB;1;2"])
def test_a_semicolon_row_holding_a_number_is_refused(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, row: str
) -> None:
    case, planted, _ = triangle(tmp_path, CLAIMS + row + "\n")
    status, out, err = every_route_output(monkeypatch, case, planted)
    assert status == 2 and "row 5" in err and "separated by ';'" in err


def test_a_short_row_in_a_decimal_comma_table_is_a_missing_claim(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """In a ';' table with decimal commas a row's commas are decimals: a row with its last cell
    left off is a missing claim, never 'separated by ,'."""
    semicolons = CLAIMS.replace(",", ";").replace(".", ",")
    case, planted, honest = triangle(tmp_path, semicolons.replace(";-7,0711", ""))
    status, out, err = every_route_output(monkeypatch, case, planted)
    assert (status, err) == (0, "") and "missing-claim" in out
    folder(tmp_path, {"honest.csv": semicolons})
    assert check(monkeypatch, case, honest, **ROUTES["fast"])[0] == 0


def every_route_output(
    monkeypatch: pytest.MonkeyPatch, case: Path, claims: Path
) -> tuple[int, str, str]:
    found = {check(monkeypatch, case, claims, **route) for route in ROUTES.values()}
    assert len(found) == 1, found
    return found.pop()


# -- tables as they arrive: tab with decimal commas, notes, rule lines and totals under a table --


@pytest.mark.parametrize(
    "tail",
    [
        "\nNote: forces from run 3, see calc p.12\nChecked by JB, 12.03.2024\n",
        "Date,12.03.2024\n",
        "-----,-----\n",
        "Total,-7.5\n",
        "Max.,7.0711\n",
    ],
    ids=["notes-with-commas", "date", "rule-line", "total", "max"],
)
def test_notes_rule_lines_and_totals_under_a_table_claim_nothing(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch, tail: str
) -> None:
    """Honest tables refused before an independent review's reading (exit 2 on the note's words,
    or an unknown-label error for 'Total'): now they agree by every route, and a planted error
    above the same tail is still found."""
    planted_claims = CLAIMS.replace("AC,-7.0711", "AC,-7.9") + tail
    case, planted, _ = triangle(tmp_path, planted_claims)
    folder(tmp_path, {"honest.csv": CLAIMS + tail})
    honest = tmp_path / "honest.csv"
    for route in ROUTES.values():
        status, out, err = check(monkeypatch, case, honest, **route)
        assert (status, err) == (0, "") and out.startswith("AGREES"), (route, out, err)
        status, out, _ = check(monkeypatch, case, planted, **route)
        assert status == 1 and "value-mismatch: AC in 'dead'" in out


def test_totals_rows_are_told_by_their_label() -> None:
    """Totals rows are told by their first word; a row that names no member but writes a force
    (a mistyped label) stays an unknown-label error (tests/test_hostile_input.py)."""
    from verify.io.claims.rows import _TOTALS

    assert _TOTALS.match("Total") and _TOTALS.match("SUM") and _TOTALS.match("Σ")
    assert not _TOTALS.match("Totalizer") and not _TOTALS.match("AC")


def test_a_tab_table_with_decimal_commas_is_read(
    tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Saved as tab-separated text with a ',' locale ('-7,0711'): refused cell by cell before;
    now read by its forces, as a PDF's are, and a planted error found at its row."""
    tabbed = CLAIMS.replace(",", "\t").replace(".", ",")
    case, planted, _ = triangle(tmp_path, tabbed.replace("-7,0711", "-7,9", 1))
    folder(tmp_path, {"honest.csv": tabbed})
    assert check(monkeypatch, case, tmp_path / "honest.csv", **ROUTES["fast"])[0] == 0
    status, out, _ = check(monkeypatch, case, planted, **ROUTES["fast"])
    assert status == 1 and "written -7,9 at row 3" in out


def test_did_you_mean_is_given_for_the_first_unknown_joints_only(tmp_path: Path) -> None:
    """Each suggestion compares the id with every joint id (0.1 s at 5x10^4 joints: a members
    table of 10^4 mistyped ids took a quarter of an hour). The first SUGGESTED_JOINTS unknown
    joints get one; every unknown joint is still named."""
    from verify.errors import InputError
    from verify.io.case import SUGGESTED_JOINTS, read_case

    members = "".join(f'M{k} = ["node{k}x", "node1"]\n' for k in range(1, 31))
    case = NODE_CASE.replace('[members]\nM1 = ["node", "node2"]\n', "[members]\n" + members)
    folder(tmp_path, {"case.toml": case})
    with pytest.raises(InputError) as raised:
        read_case(tmp_path / "case.toml")
    lines = [line for line in raised.value.render().splitlines() if "is not defined" in line]
    assert len(lines) == 30
    hinted = [line for line in lines if "Did you mean" in line]
    assert len(hinted) == SUGGESTED_JOINTS and lines[:SUGGESTED_JOINTS] == hinted
