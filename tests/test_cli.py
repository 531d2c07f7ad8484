"""The command line, in-process with click's CliRunner: exit codes, JSON contract, no tracebacks."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from verify.cli import main

ROOT = Path(__file__).resolve().parents[1]
FOOTBRIDGE = ROOT / "cases" / "canal-footbridge" / "case.toml"
FOOTBRIDGE_CLAIMS = ROOT / "cases" / "canal-footbridge" / "claims.csv"


def run(*args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, [str(a) for a in args])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout, result.stderr


def test_stability_json_has_structure_contract():
    code, out, _ = run("stability", FOOTBRIDGE, "--json")
    assert code == 0
    structure = json.loads(out)["structure"]
    for key in (
        "dim",
        "joints",
        "members",
        "reactions",
        "mechanisms",
        "self_stress",
        "classification",
    ):
        assert key in structure
    assert structure["classification"] == "stable-determinate"


def test_solve_json_has_every_load_column():
    code, out, _ = run("solve", FOOTBRIDGE, "--json")
    data = json.loads(out)
    assert code == 0
    assert set(data["forces"]) == {"dead", "crowd", "wind-uplift", "ULS-1", "SLS-1"}
    assert set(data["reactions"]["dead"]) == {"L0", "L6"}
    # Superposition: ULS-1 = 1.35 dead + 1.5 crowd (the case file's combination).
    for member, value in data["forces"]["ULS-1"].items():
        assert value == pytest.approx(
            1.35 * data["forces"]["dead"][member] + 1.5 * data["forces"]["crowd"][member], abs=1e-9
        )


def test_solve_show_joints_prints_the_hand_calc():
    code, out, _ = run("solve", FOOTBRIDGE, "--show", "joints", "--case", "dead")
    assert code == 0
    assert "reactions from overall equilibrium" in out and "joint L0" in out and "ΣFy" in out


def test_check_json_contract_and_exit_status():
    code, out, _ = run("check", FOOTBRIDGE, "--claims", FOOTBRIDGE_CLAIMS, "--json")
    data = json.loads(out)
    assert code == 1 and data["verdict"] == "discrepancies"
    assert set(data["convention"]) >= {"sign", "scale", "inferred"}
    row = data["members"][0]
    assert set(row) >= {"id", "case", "claimed", "joints", "sections", "status"}
    found = {f["kind"] for f in data["findings"]}
    assert {
        "sign-flip",
        "value-mismatch",
        "unit-scale",
        "swapped-labels",
        "zero-force-claimed",
    } <= found


def test_demo_runs_from_package_data():
    code, out, _ = run("demo")
    assert code == 0 and "DISCREPANCIES" in out and "Caution" in out


def test_csv_output_is_atomic_and_refuses_inputs(tmp_path):
    target = tmp_path / "table.csv"
    code, _, _ = run("check", FOOTBRIDGE, "--claims", FOOTBRIDGE_CLAIMS, "--csv", target)
    assert code == 1 and target.read_text().startswith("id,kind,case")
    code, _, err = run(
        "check", FOOTBRIDGE, "--claims", FOOTBRIDGE_CLAIMS, "--csv", FOOTBRIDGE_CLAIMS
    )
    assert code == 2 and "input file" in err


def test_unstable_truss_exits_3(tmp_path):
    case = tmp_path / "sway.toml"
    case.write_text(
        '[units]\nlength = "m"\nforce = "kN"\n[joints]\nA = [0, 0]\nB = [1, 0]\nC = [1, 1]\n'
        "D = [0, 1]\n"
        '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nCD = ["C", "D"]\nDA = ["D", "A"]\n'
        '[supports]\nA = ["x", "y"]\nB = ["y"]\n[loads.wind]\nC = [1.0, 0.0]\n'
    )
    code, out, _ = run("stability", case)
    assert code == 3 and "unstable" in out and "mechanism 1" in out
    code, _, _ = run("solve", case)
    assert code == 3


@pytest.mark.parametrize(
    "args, fragment",
    [
        (("stability", "no-such-file.toml"), "file not found"),
        (("check", str(FOOTBRIDGE), "--claims", "missing.csv"), "missing.csv"),
        (
            ("check", str(FOOTBRIDGE), "--claims", str(FOOTBRIDGE_CLAIMS), "--unit", "t"),
            "ambiguous",
        ),
        (
            ("check", str(FOOTBRIDGE), "--claims", str(FOOTBRIDGE_CLAIMS), "--sign", "up"),
            "Invalid value",
        ),
        (("solve", str(FOOTBRIDGE), "--case", "dead load"), "Did you mean"),
    ],
)
def test_bad_input_is_one_message_exit_2(args, fragment):
    code, out, err = run(*args)
    assert code == 2
    assert fragment in (err + out)
    assert "Traceback" not in err + out


def test_bad_case_file_lists_every_problem(tmp_path):
    case = tmp_path / "bad.toml"
    case.write_text(
        '[units]\nlength = "m"\nforce = "ton"\n[joints]\nA = [0, 0]\nB = [1, 0]\n'
        '[members]\nAB = ["A", "Q"]\n[supports]\nA = ["x", "y"]\n[loads.dead]\nB = [0, "12,5"]\n'
    )
    code, _, err = run("solve", case)
    assert code == 2
    assert "ambiguous" in err and "'Q'" in err and "12,5" in err
    assert f"{case}:" in err


def test_cut_prints_the_ritter_calc_for_a_panel():
    """Panel 3 of the footbridge under 'dead': U2U3 = -M(L3)/h = -(22.5*9 - 9*3 - 9*6)/2.4 (common
    practice: chord = M/h)."""
    code, out, _ = run("cut", FOOTBRIDGE, "--members", "U2U3,U2L3,L2L3", "--case", "dead")
    assert code == 0
    expected = -(22.5 * 9 - 9 * 3 - 9 * 6) / 2.4
    assert "ΣM about joint L3" in out
    assert f"N(U2U3) = {expected:g} kN (C)" in out


def test_cut_that_does_not_split_the_truss_is_explained():
    code, _, err = run("cut", FOOTBRIDGE, "--members", "U2U3,L2L3")
    assert code == 2 and "do not form a section" in err


@pytest.mark.parametrize(
    "content, fragment",
    [
        ("", "empty"),
        ("Member,Dead (kN)\nL0-L1,twelve\n", "twelve"),
        ("Member,Dead (kN)\nL0-L1,12.0\nL0-L1,13.0\n", "L0"),
        ("Member,Dead (kN)\nL0-L1,nan\n", "nan"),
    ],
)
def test_malformed_claims_file_is_one_message_exit_2(tmp_path, content, fragment):
    claims = tmp_path / "claims.csv"
    claims.write_text(content)
    before = claims.read_bytes()
    code, out, err = run("check", FOOTBRIDGE, "--claims", claims)
    assert code == 2 and fragment.lower() in err.lower() and "Traceback" not in err + out
    assert str(claims) in err
    assert claims.read_bytes() == before  # inputs are never modified


def test_csv_output_neutralises_formula_labels(tmp_path):
    """A label such as '=cmd()' must not become a spreadsheet formula (OWASP CSV injection, common
    practice)."""
    case = tmp_path / "case.toml"
    case.write_text(
        '[units]\nlength = "m"\nforce = "kN"\n[joints]\nA = [0, 0]\nB = [4, 0]\nC = [2, 3]\n'
        '[members]\n"=cmd()" = ["A", "B"]\nBC = ["B", "C"]\nCA = ["C", "A"]\n'
        '[supports]\nA = ["x", "y"]\nB = ["y"]\n[loads."+dead"]\nC = [0, -10]\n'
    )
    claims = tmp_path / "claims.csv"
    claims.write_text("Member,+dead (kN)\n=cmd(),3.333 T\nBC,6.009 C\nCA,6.009 C\n")
    out_csv = tmp_path / "out.csv"
    code, _, err = run("check", case, "--claims", claims, "--csv", out_csv)
    text = out_csv.read_text()
    assert "'=cmd()" in text and "'+dead" in text
    assert "\n=cmd()" not in text
    # Numbers stay numbers: the claimed value column of the first row parses as a float.
    first = text.splitlines()[1].split(",")
    assert float(first[3]) == pytest.approx(3.333)
    # King-post statics (REFERENCES.md 3.3 general form): tie = P/(2 tan a) = 10/3, rafters = P/(2
    # sin a).
    assert code == 0, err


def test_packaged_demo_is_the_bundled_case():
    """The demo ships as package data; it must stay identical to cases/canal-footbridge."""
    data = ROOT / "verify" / "data" / "demo"
    for name in ("case.toml", "claims.csv"):
        assert (data / name).read_bytes() == (
            ROOT / "cases" / "canal-footbridge" / name
        ).read_bytes()


def _console(*args: str) -> subprocess.CompletedProcess[str]:
    return subprocess.run(
        [sys.executable, "-m", "verify", *map(str, args)],
        capture_output=True,
        text=True,
        cwd=ROOT,
        encoding="utf-8",
        timeout=120,
    )


def test_console_entry_delivers_all_output_and_the_exit_status():
    """`python -m verify` (the console entry, which leaves without interpreter teardown) still
    flushes every line and keeps each command's exit status; the JSON equals the in-process run."""
    solved = _console("solve", FOOTBRIDGE, "--json")
    assert solved.returncode == 0
    assert json.loads(solved.stdout) == json.loads(run("solve", FOOTBRIDGE, "--json")[1])
    checked = _console("check", FOOTBRIDGE, "--claims", FOOTBRIDGE_CLAIMS)
    assert checked.returncode == 1 and checked.stdout.rstrip().splitlines()[-1].startswith(
        "Caution:"
    )
    missing = _console("solve", ROOT / "no-such-case.toml")
    assert (
        missing.returncode == 2
        and "file not found" in missing.stderr
        and "Traceback" not in missing.stderr
    )


def test_csv_table_ends_with_the_caution_and_the_equal_ea_assumption(tmp_path):
    """The CSV carries the caution below the table, and says when the elastic column rests on
    an assumed equal EA; the table itself still reads as plain CSV up to the blank row."""
    import csv as csv_module

    gantry = ROOT / "cases" / "conveyor-gantry"
    case = tmp_path / "case.toml"
    # The bundled gantry gives A and E; without them the truss needs --assume-equal-ea.
    text = (gantry / "case.toml").read_text()
    text = re.sub(r"\{ ends = (\[[^\]]*\]), A = [0-9.]+, E = [0-9.]+ \}", r"\1", text)
    case.write_text(
        "\n".join(
            line
            for line in text.splitlines()
            if not line.startswith(("area", "modulus", "[stiffness]", "A =", "E ="))
        )
        + "\n"
    )
    out_csv = tmp_path / "out.csv"
    code, _, err = run(
        "check",
        case,
        "--claims",
        gantry / "claims.csv",
        "--csv",
        out_csv,
        "--assume-equal-ea",
        "2e5",
    )
    assert code in (0, 1), err
    rows = list(csv_module.reader(out_csv.read_text().splitlines()))
    blank = rows.index([])
    assert rows[0][0] == "id" and all(len(r) == len(rows[0]) for r in rows[:blank])
    tail = {r[0]: r[1] for r in rows[blank + 1 :]}
    assert "EQUAL EA ASSUMED" in tail["note"] and "200000, in kN" in tail["note"]
    assert "idealised pin-jointed" in tail["caution"] and "qualified" in tail["caution"]


def test_solve_text_prints_only_the_asked_case_and_no_reaction_a_support_lacks():
    """--case limits the force tables too; the roller at L6 restrains y only, so its Rx is '—'.
    Footbridge dead load: 9 kN at each of the 5 inner bottom joints (case file), so each
    support takes 5 x 9 / 2 = 22.5 kN by symmetry (common practice)."""
    code, out, _ = run("solve", FOOTBRIDGE, "--case", "dead")
    assert code == 0
    assert out.count("Load case '") == 1 and "Load case 'dead'" in out
    reactions = out.split("Reactions (kN):", 1)[1].splitlines()
    l6 = next(line.split() for line in reactions if line.split()[:1] == ["L6"])
    assert l6[1] == "—" and float(l6[2]) == pytest.approx(22.5, rel=1e-9)
    assert out.rstrip().splitlines()[-1].startswith("Caution:")


def test_stability_text_carries_the_caution():
    code, out, _ = run("stability", FOOTBRIDGE)
    assert code == 0 and "Caution:" in out and "qualified" in out


def test_case_argument_mistakes_get_a_plain_answer():
    """A claims table passed as CASE is named as such; a case folder means its case.toml."""
    for table in (FOOTBRIDGE_CLAIMS, ROOT / "cases" / "mezzanine-roof" / "claims.xlsx"):
        code, _, err = run("solve", table)
        assert (
            code == 2
            and "looks like a table" in err
            and "--claims" in err
            and "Traceback" not in err
        )
    code, out, _ = run("stability", FOOTBRIDGE.parent)
    assert code == 0 and "21 members" in out
    code, _, err = run("stability", ROOT / "cases")
    assert code == 2 and "folder without a case.toml" in err


def test_report_to_an_unwritable_folder_is_one_plain_message(tmp_path, monkeypatch):
    """A folder that refuses new files (read-only, or special like /proc): the temporary file
    cannot be made there. Simulated, since tests may run as root, which ignores folder modes."""
    import errno

    import verify.report.atomic as atomic

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(atomic.tempfile, "mkstemp", refuse)
    code, _, err = run(
        "check", FOOTBRIDGE, "--claims", FOOTBRIDGE_CLAIMS, "--report", tmp_path / "review.html"
    )
    assert (
        code == 2
        and f"cannot write in the folder {tmp_path} (Permission denied)" in err
        and ".tmp" not in err
    )
    assert list(tmp_path.iterdir()) == []


def test_report_into_a_missing_folder_is_refused(tmp_path):
    code, _, err = run(
        "check",
        FOOTBRIDGE,
        "--claims",
        FOOTBRIDGE_CLAIMS,
        "--report",
        tmp_path / "nope" / "review.md",
    )
    assert code == 2 and "does not exist" in err


def test_cut_accepts_member_labels_written_as_in_claims_tables():
    """'u2u3', 'U2-L3' and 'L2 L3' name U2U3, U2L3 and L2L3, as they would in a claims table;
    the Ritter sheet for U2U3 is the same as with the exact ids."""
    code, loose, err = run(
        "cut", FOOTBRIDGE, "--members", "u2u3,U2-L3,L2 L3", "--case", "dead", "--decimals-only"
    )
    assert code == 0, err
    code, exact, _ = run(
        "cut", FOOTBRIDGE, "--members", "U2U3,U2L3,L2L3", "--case", "dead", "--decimals-only"
    )
    assert loose == exact and "Section solving U2U3" in exact


def test_output_cut_short_by_the_reader_is_not_discrepancies(tmp_path):
    """`truss-verify solve ... | head -1`: the reader goes away; the status is 141 (128 + SIGPIPE,
    what a shell reports), not 1, which means discrepancies; no traceback. The output (a
    400-panel Pratt's joint calc, megabytes) is far larger than any pipe buffer."""
    from trussgen import pratt, write_case

    case = write_case(tmp_path, pratt(400))
    pipeline = subprocess.run(
        f'"{sys.executable}" -m verify solve "{case}" --show joints | head -1; exit '
        '"${PIPESTATUS[0]}"',
        shell=True,
        executable="/bin/bash",
        capture_output=True,
        text=True,
        cwd=ROOT,
        timeout=120,
    )
    assert pipeline.stdout.startswith("Truss:")
    assert pipeline.returncode == 141 and "Traceback" not in pipeline.stderr


def _entry(code: str) -> subprocess.CompletedProcess[str]:
    """Run the console entry in a fresh interpreter after `code` (which may patch the pipeline)."""
    script = f"import verify.cli as cli\n{code}\ncli.run(['solve', {str(FOOTBRIDGE)!r}])\n"
    return subprocess.run(
        [sys.executable, "-c", script], capture_output=True, text=True, cwd=ROOT, timeout=120
    )


@pytest.mark.parametrize(
    ("patch", "status", "says"),
    [
        (
            "def stop(*a, **k):\n    raise KeyboardInterrupt\ncli.analyse = stop",
            130,
            "Interrupted.",
        ),
        (
            "def fault(*a, **k):\n    raise ZeroDivisionError('planted')\ncli.analyse = fault",
            70,
            "internal error",
        ),
    ],
    ids=["interrupted", "fault in the tool"],
)
def test_console_entry_status_is_never_1_for_what_is_not_a_discrepancy(patch, status, says):
    """1 means discrepancies: an interruption (130, as shells report Ctrl-C) and a fault in the
    tool (70, EX_SOFTWARE) get their own statuses and a plain sentence."""
    result = _entry(patch)
    assert result.returncode == status and says in result.stderr


def test_console_entry_on_a_full_output_says_so():
    """Writing the result fails (a full disk): one sentence and status 2, no traceback. The full
    output is simulated (every write to stdout fails with ENOSPC), as not every system has
    /dev/full."""
    patch = (
        "import errno\nimport click\nprint_text = click.echo\n"
        "def echo(message=None, file=None, nl=True, err=False, color=None):\n"
        "    if not err:\n        raise OSError(errno.ENOSPC, 'No space left on device')\n"
        "    return print_text(message, file=file, nl=nl, err=err, color=color)\n"
        "click.echo = echo"
    )
    result = _entry(patch)
    assert (
        result.returncode == 2
        and "cannot write the output (No space left on device)" in result.stderr
    )
    assert "Traceback" not in result.stderr


def test_convention_contradicting_the_stated_sign_says_whose_it_is(tmp_path):
    """The roof table writes compression positive; declared tension-positive, the header line and
    the report must not present the data's convention as the one stated."""
    roof = ROOT / "cases" / "mezzanine-roof"
    report = tmp_path / "review.md"
    code, out, _ = run(
        "check",
        roof,
        "--claims",
        roof / "claims.xlsx",
        "--sheet",
        "Member forces",
        "--sign",
        "tension-positive",
        "--report",
        report,
    )
    assert code == 1
    assert "Convention: compression-positive (the data's: --sign said tension-positive)" in out
    assert "compression-positive (the data's: --sign said tension-positive)" in report.read_text(
        encoding="utf-8"
    )
    assert "(as stated)" not in report.read_text(encoding="utf-8")


def _gantry_without_stiffness(tmp_path: Path) -> Path:
    gantry = ROOT / "cases" / "conveyor-gantry"
    text = re.sub(
        r"\{ ends = (\[[^\]]*\]), A = [0-9.]+, E = [0-9.]+ \}",
        r"\1",
        (gantry / "case.toml").read_text(),
    )
    case = tmp_path / "case.toml"
    case.write_text(
        "\n".join(
            line
            for line in text.splitlines()
            if not line.startswith(("area", "modulus", "[stiffness]", "A =", "E ="))
        )
        + "\n"
    )
    return case


def test_assumed_equal_ea_never_turns_a_stiffness_difference_into_an_error(tmp_path):
    """Claims that are the elastic forces for the real bracing sizes balance at every joint; checked
    against an assumed equal EA they differ by a self-stress only: information, verdict agrees,
    and the headline says the EA was assumed. (Truth: the bundled gantry's own stiffness solve,
    itself checked against the force method and Timoshenko's three-bar truss in test_stiffness.)"""
    from verify.api import solve as api_solve

    real = api_solve(str(ROOT / "cases" / "conveyor-gantry" / "case.toml")).forces
    claims = tmp_path / "claims.csv"
    real.rename_axis("member").reset_index()[["member", "belt", "walkway"]].to_csv(
        claims, index=False
    )
    case = _gantry_without_stiffness(tmp_path)
    code, out, err = run("check", case, "--claims", claims, "--assume-equal-ea", "4.54e5")
    assert code == 0, out + err
    first = out.splitlines()[0]
    assert (
        first.startswith("AGREES — the claims balance at every joint")
        and "EQUAL EA ASSUMED (454000 kN)" in first
    )
    assert "[info] stiffness-dependent" in out and "[error]" not in out
    code, out, _ = run(
        "check", case, "--claims", claims
    )  # no EA, nothing assumed: statics cannot decide
    assert code == 3 and out.startswith("CANNOT VERIFY — statically indeterminate")


def test_json_commands_answer_bad_input_in_json_too(tmp_path):
    """With --json, a script reading stdout gets one JSON object saying why there is no result
    (file, line, message), besides the message on stderr and exit status 2."""
    code, out, err = run("check", FOOTBRIDGE, "--claims", tmp_path / "missing.csv", "--json")
    data = json.loads(out)
    assert code == 2 and data["error"] == "bad-input" and "file not found" in err
    assert data["problems"][0]["file"].endswith("missing.csv")
    broken = tmp_path / "case.toml"
    broken.write_text(FOOTBRIDGE.read_text().replace('force = "kN"', 'force = "k"'))
    code, out, _ = run("solve", broken, "--json")
    data = json.loads(out)
    assert (
        code == 2
        and data["problems"][0]["line"] is not None
        and "'k'" in data["problems"][0]["message"]
    )
