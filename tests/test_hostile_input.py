"""Hostile and broken input (issue 16): each test reproduces one hole an adversarial review found
and states the contract that closes it: exit status 2 with the file and location, no traceback,
inputs untouched, outputs to regular files only, bounded time.
"""

from __future__ import annotations

import json
import os
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest
from click.testing import CliRunner

from verify import api
from verify.cli import main
from verify.errors import InputError, OptionError
from verify.io.case import read_case
from verify.io.locate import LineLocator
from verify.report.table_csv import neutralise

# A 2D triangle: A(0,0) pinned, B(4,0) on a roller, C(2,2) loaded 10 down. By symmetry each
# inclined member carries 10 / (2 sin 45°) in compression and AB the horizontal part in tension.
TRIANGLE = """title = "triangle"
[units]
length = "m"
force = "kN"
[joints]
A = [0.0, 0.0]
B = [4.0, 0.0]
C = [2.0, 2.0]
[members]
AB = ["A", "B"]
AC = ["A", "C"]
BC = ["B", "C"]
[supports]
A = ["x", "y"]
B = ["y"]
[loads.dead]
C = [0.0, -10.0]
"""
DIAGONAL = 10 / (2 * 2**-0.5)
CLAIMS = f"member,dead (kN)\nAB,{DIAGONAL * 2**-0.5:.4f}\nAC,{-DIAGONAL:.4f}\nBC,{-DIAGONAL:.4f}\n"

# The same triangle with its joints, members and loads in CSV tables beside the case file.
TABLED = """title = "triangle, tables"
joints = "joints.csv"
members = "members.csv"
loads = "loads.csv"
[units]
length = "m"
force = "kN"
[supports]
A = ["x", "y"]
B = ["y"]
"""
JOINTS_CSV = "id,x,y\nA,0,0\nB,4,0\nC,2,2\n"
MEMBERS_CSV = "id,start,end\nAB,A,B\nAC,A,C\nBC,B,C\n"
LOADS_CSV = "case,joint,fx,fy\ndead,C,0,-10\n"

SLOW_SECONDS = 5.0  # every hostile input must be handled "within seconds"


def run(*args: object) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, [str(a) for a in args])
    if result.exception and not isinstance(result.exception, SystemExit):
        raise result.exception
    return result.exit_code, result.stdout, result.stderr


def folder(tmp_path: Path, files: dict[str, str | bytes]) -> Path:
    for name, content in files.items():
        path = tmp_path / name
        path.parent.mkdir(parents=True, exist_ok=True)
        if isinstance(content, bytes):
            path.write_bytes(content)
        else:
            path.write_text(content, encoding="utf-8")
    return tmp_path


def tabled(tmp_path: Path, **overrides: str | bytes) -> Path:
    files: dict[str, str | bytes] = {
        "case.toml": TABLED,
        "joints.csv": JOINTS_CSV,
        "members.csv": MEMBERS_CSV,
        "loads.csv": LOADS_CSV,
        "claims.csv": CLAIMS,
    }
    files.update(overrides)
    folder(tmp_path, files)
    return tmp_path / "case.toml"


def problems_of(path: Path, **options: bool) -> list[str]:
    with pytest.raises(InputError) as info:
        read_case(path, **options)
    return [str(p) for p in info.value.problems]


def test_the_triangle_and_its_tables_agree_with_their_claims(tmp_path):
    """The base of every test below is clean: its claims agree (exit 0)."""
    folder(tmp_path, {"case.toml": TRIANGLE, "claims.csv": CLAIMS})
    assert run("check", tmp_path / "case.toml", "--claims", tmp_path / "claims.csv")[0] == 0
    assert run("check", tabled(tmp_path / "t"), "--claims", tmp_path / "t" / "claims.csv")[0] == 0


# -- 1. silently wrong verdicts ------------------------------------------------------------------
def test_combination_factor_that_overflows_every_force_is_refused_not_agreed(tmp_path):
    text = TRIANGLE + '[combinations]\n"ULS" = { dead = 1e308 }\n'
    folder(tmp_path, {"case.toml": text, "claims.csv": CLAIMS})
    code, out, err = run(
        "check", tmp_path / "case.toml", "--claims", tmp_path / "claims.csv", "--json"
    )
    assert code == 2
    assert json.loads(out)["error"] == "bad-input"
    assert (
        "case.toml:19: combination 'ULS' factor for 'dead': 1e+308 is beyond the sane range" in err
    )


@pytest.mark.parametrize("load", ["1e308", "-1e308", "1e13"])
def test_loads_beyond_the_sane_range_are_refused_with_their_line(tmp_path, load):
    folder(tmp_path, {"case.toml": TRIANGLE.replace("C = [0.0, -10.0]", f"C = [0.0, {load}]")})
    problems = problems_of(tmp_path / "case.toml")
    assert any(":17: load case 'dead' at joint 'C'" in p and "sane range" in p for p in problems), (
        problems
    )


def test_loads_in_a_csv_table_beyond_the_sane_range_are_refused_with_their_line(tmp_path):
    case = tabled(tmp_path, **{"loads.csv": "case,joint,fx,fy\ndead,C,0,-1e300\n"})
    problems = problems_of(case)
    assert any("loads.csv:2:" in p and "sane range" in p for p in problems), problems


@pytest.mark.parametrize("scale", [1e155, 1e9])
def test_coordinates_beyond_the_sane_range_are_refused(tmp_path, scale):
    """1e155 squared overflows (a wrong 'unstable'); at 1e9 the section cuts lost every lever
    arm."""
    text = TRIANGLE.replace("B = [4.0, 0.0]", f"B = [{4 * scale:g}, 0.0]")
    folder(tmp_path, {"case.toml": text})
    problems = problems_of(tmp_path / "case.toml")
    assert any(":7: joint 'B' coordinate 1" in p and "sane range" in p for p in problems), problems


def test_inclined_roller_with_huge_direction_components_is_the_plain_direction(tmp_path):
    """[1e160, 1e160] is the 45° direction; its norm overflowed and the truss read as unstable."""
    text = TRIANGLE.replace('B = ["y"]', "B = { direction = [1e160, 1e160] }")
    folder(tmp_path, {"case.toml": text})
    model = read_case(tmp_path / "case.toml")
    inclined = [r for r in model.reactions if r.joint == "B"][0]
    assert inclined.direction == pytest.approx((2**-0.5, 2**-0.5))
    code, out, _ = run("stability", tmp_path / "case.toml", "--json")
    assert code == 0 and json.loads(out)["structure"]["classification"] == "stable-determinate"


def test_integer_beyond_the_float_range_is_refused_not_a_traceback(tmp_path):
    folder(
        tmp_path, {"case.toml": TRIANGLE.replace("C = [0.0, -10.0]", "C = [0, " + "9" * 400 + "]")}
    )
    problems = problems_of(tmp_path / "case.toml")
    assert any("beyond the float range" in p for p in problems), problems


def test_integer_with_thousands_of_digits_is_refused_not_a_traceback(tmp_path):
    """tomllib raises a plain ValueError past Python's 4300-digit limit (found by the fuzzer)."""
    folder(
        tmp_path, {"case.toml": TRIANGLE.replace("C = [0.0, -10.0]", "C = [0, " + "9" * 5000 + "]")}
    )
    code, _, err = run("stability", tmp_path / "case.toml")
    assert code == 2 and "an integer with thousands of digits" in err


# -- 2. inputs overwritten, outputs to non-regular files -----------------------------------------
def _check_writing(case: Path, *output: object) -> tuple[int, str]:
    code, _, err = run("check", case, "--claims", case.parent / "claims.csv", *output)
    return code, err


def test_csv_output_onto_a_table_the_case_names_is_refused(tmp_path):
    case = tabled(tmp_path)
    before = (tmp_path / "joints.csv").read_bytes()
    code, err = _check_writing(case, "--csv", tmp_path / "joints.csv")
    assert code == 2 and "refusing to write a report over an input file" in err
    assert (tmp_path / "joints.csv").read_bytes() == before


def test_csv_output_through_a_symlink_to_a_case_table_is_refused(tmp_path):
    case = tabled(tmp_path)
    (tmp_path / "out").mkdir()
    (tmp_path / "out" / "link.csv").symlink_to(tmp_path / "members.csv")
    code, err = _check_writing(case, "--csv", tmp_path / "out" / "link.csv")
    assert code == 2 and "input file" in err
    assert (tmp_path / "members.csv").read_text() == MEMBERS_CSV
    assert (tmp_path / "out" / "link.csv").is_symlink()


def test_report_onto_a_markdown_named_case_table_is_refused(tmp_path):
    case = tabled(tmp_path, **{"loads.md": LOADS_CSV})
    case.write_text(TABLED.replace('loads = "loads.csv"', 'loads = "loads.md"'))
    code, err = _check_writing(case, "--report", tmp_path / "loads.md")
    assert code == 2 and "input file" in err
    assert (tmp_path / "loads.md").read_text() == LOADS_CSV


def test_csv_output_onto_a_hard_link_of_the_claims_is_refused(tmp_path):
    case = tabled(tmp_path)
    os.link(tmp_path / "claims.csv", tmp_path / "other-name.csv")
    code, err = _check_writing(case, "--csv", tmp_path / "other-name.csv")
    assert code == 2 and "input file" in err
    assert (tmp_path / "claims.csv").read_text() == CLAIMS


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="needs named pipes (POSIX)")
def test_output_through_a_symlink_to_a_non_regular_file_is_refused_and_leaves_it(tmp_path):
    """(As root, a link to a device node had the node replaced by a regular file.)"""
    case = tabled(tmp_path)
    os.mkfifo(tmp_path / "pipe")
    (tmp_path / "report.md").symlink_to(tmp_path / "pipe")
    code, err = _check_writing(case, "--report", tmp_path / "report.md")
    assert code == 2 and "not a regular file" in err
    assert stat.S_ISFIFO(os.stat(tmp_path / "pipe").st_mode)


def test_report_into_a_folder_says_so_without_a_temporary_file_name(tmp_path):
    case = tabled(tmp_path)
    (tmp_path / "out.md").mkdir()
    code, err = _check_writing(case, "--report", tmp_path / "out.md")
    assert code == 2 and "is a folder; name the file to write" in err
    assert ".tmp" not in err and "Errno" not in err


# -- 3. regular-expression blow-ups --------------------------------------------------------------
def test_line_locator_is_linear_on_a_long_bracket_line():
    """A 7 KB case with a '[' line inside a multi-line string took 74 s (a cubic regex)."""
    text = (
        'title = "x"\nnotes = """\n['
        + "a " * 4000
        + "\n"
        + "["
        + " b" * 4000
        + '\n"""\n[units]\nforce = "kN"\n'
    )
    start = time.perf_counter()
    locator = LineLocator(text)
    assert time.perf_counter() - start < 0.5
    # Lines inside the multi-line string are text, not tables: [units] is found on its own line.
    assert locator.line("units", "force") == 7 and locator.line("units") == 6


def test_case_file_with_a_long_bracket_line_in_a_string_is_read_within_seconds(tmp_path):
    text = TRIANGLE.replace(
        'title = "triangle"', 'title = "triangle"\nnotes = """\n[' + " x" * 4000 + '\n"""'
    )
    folder(tmp_path, {"case.toml": text})
    start = time.perf_counter()
    read_case(tmp_path / "case.toml")
    assert time.perf_counter() - start < SLOW_SECONDS


def test_locator_finds_quoted_and_dotted_keys_and_headers():
    text = '[ loads . "dead" ]  # comment\n"A B" = [0, 1]\nC.x = 2\n'
    locator = LineLocator(text)
    assert locator.line("loads", "dead") == 1
    assert locator.line("loads", "dead", "A B") == 2
    assert locator.line("loads", "dead", "C", "x") == 3


# -- 4. formula guard --------------------------------------------------------------------------
def test_csv_cell_with_a_carriage_return_cannot_start_a_formula_line():
    cell = neutralise("X\r=cmd|' /C calc'!A0")
    assert "\r" not in cell and "\n" not in cell
    assert cell == "X\\r=cmd|' /C calc'!A0"


@pytest.mark.parametrize(
    "label", ["M\r=cmd|' /C calc'!A0", "M\x1b[31m", "M\x07", "M\x00", "M\u2028"]
)
def test_member_ids_with_control_characters_are_refused(tmp_path, label):
    escaped = "".join(c if c.isalnum() or c in "=|' /!" else f"\\u{ord(c):04x}" for c in label)
    text = TRIANGLE.replace('AB = ["A", "B"]', f'"{escaped}" = ["A", "B"]')
    folder(tmp_path, {"case.toml": text})
    problems = problems_of(tmp_path / "case.toml")
    assert any("member id" in p and "control character" in p for p in problems), problems
    assert all(not any(ord(c) < 32 and c != "\n" for c in p) for p in problems)


def test_load_case_name_with_a_nul_is_refused_not_a_new_case(tmp_path):
    text = TRIANGLE + '[loads."dead\\u0000"]\nC = [0.0, -1.0]\n'
    folder(tmp_path, {"case.toml": text})
    problems = problems_of(tmp_path / "case.toml")
    assert any("load case name 'dead\\x00' holds a control character" in p for p in problems), (
        problems
    )


def test_csv_table_ids_with_escape_characters_are_refused_with_their_line(tmp_path):
    case = tabled(tmp_path, **{"joints.csv": "id,x,y\nA,0,0\nB\x1b[2J,4,0\nC,2,2\n"})
    problems = problems_of(case)
    assert any(
        "joints.csv:3: joint id 'B\\x1b[2J' holds a control character" in p for p in problems
    ), problems


def test_empty_joint_id_is_called_empty_not_unconnected(tmp_path):
    folder(
        tmp_path,
        {"case.toml": TRIANGLE.replace("C = [2.0, 2.0]", 'C = [2.0, 2.0]\n"" = [9.0, 9.0]')},
    )
    problems = problems_of(tmp_path / "case.toml")
    assert any("joint id is empty" in p for p in problems), problems
    assert not any("not connected" in p for p in problems)


# -- 5. tracebacks on bad input ------------------------------------------------------------------
def test_cr_only_line_endings_in_a_case_table_are_read(tmp_path):
    case = tabled(tmp_path, **{"joints.csv": JOINTS_CSV.replace("\n", "\r").encode()})
    assert list(read_case(case).joint_ids) == ["A", "B", "C"]


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        (b"id,x,y\nA,0,0\nB,4\x00,0\nC,2,2\n", "holds NUL bytes"),
        (bytes(range(256)) * 4, "is not UTF-8 text"),
        (b"id,x,y\nA,0,0\nB," + b"9" * 200_000 + b",0\nC,2,2\n", "joints.csv:3:"),
        (b'id,x,y\nA,0,0\nB,"4,0\nC,2,2\n', "joints.csv"),
    ],
)
def test_binary_or_broken_csv_tables_are_refused_by_name(tmp_path, content, expected):
    case = tabled(tmp_path, **{"joints.csv": content})
    code, out, err = run("solve", case, "--json")
    assert code == 2 and expected in err, err
    assert "Traceback" not in err and json.loads(out)["error"] == "bad-input"


def test_deeply_nested_toml_is_refused_not_a_recursion_error(tmp_path):
    folder(tmp_path, {"case.toml": TRIANGLE + "deep = " + "[" * 100_000 + "]" * 100_000 + "\n"})
    code, _, err = run("stability", tmp_path / "case.toml")
    assert code == 2 and "nested too deeply" in err


def test_displacement_file_with_nul_bytes_or_huge_fields_is_refused(tmp_path):
    folder(
        tmp_path,
        {
            "case.toml": TRIANGLE,
            "claims.csv": CLAIMS,
            "d1.csv": b"joint,direction,value (mm)\nC,y\x00,1\n",
            "d2.csv": b"joint,direction,value (mm)\nC,y," + b"1" * 200_000 + b"\n",
        },
    )
    for name in ("d1.csv", "d2.csv"):
        code, _, err = run(
            "check",
            tmp_path / "case.toml",
            "--claims",
            tmp_path / "claims.csv",
            "--displacements",
            tmp_path / name,
            "--assume-equal-ea",
            "1e5",
        )
        assert code == 2 and name in err and "Traceback" not in err, (name, err)


def test_displacement_file_with_cr_only_line_endings_is_read(tmp_path):
    folder(
        tmp_path,
        {
            "case.toml": TRIANGLE,
            "claims.csv": CLAIMS,
            "d.csv": b"joint,direction,value (mm)\rC,y,1\r",
        },
    )
    code, out, err = run(
        "check",
        tmp_path / "case.toml",
        "--claims",
        tmp_path / "claims.csv",
        "--displacements",
        tmp_path / "d.csv",
        "--assume-equal-ea",
        "1e5",
        "--json",
    )
    assert code in (0, 1) and "Traceback" not in err
    assert json.loads(out)["verdict"] in ("agrees", "discrepancies")


def test_long_displacement_cell_is_refused_quickly(tmp_path):
    """A unit regex with overlapping classes ([0-9.eE+-]+ then [A-Za-z]+) backtracked on this."""
    folder(
        tmp_path,
        {
            "case.toml": TRIANGLE,
            "claims.csv": CLAIMS,
            "d.csv": "joint,direction,value\nC,y,1" + "e" * 50_000 + "!\n",
        },
    )
    start = time.perf_counter()
    code, _, err = run(
        "check",
        tmp_path / "case.toml",
        "--claims",
        tmp_path / "claims.csv",
        "--displacements",
        tmp_path / "d.csv",
        "--assume-equal-ea",
        "1e5",
    )
    assert time.perf_counter() - start < SLOW_SECONDS
    assert code == 2 and "d.csv row 2" in err and len(err) < 2000


# -- 6. paths ---------------------------------------------------------------------------------
def test_table_outside_the_case_folder_is_refused_without_echoing_it(tmp_path):
    folder(
        tmp_path,
        {
            "case.toml": TABLED.replace('"joints.csv"', '"/etc/passwd"'),
            "members.csv": MEMBERS_CSV,
            "loads.csv": LOADS_CSV,
        },
    )
    problems = problems_of(tmp_path / "case.toml")
    assert any("outside the case's folder" in p and "--tables-anywhere" in p for p in problems), (
        problems
    )
    assert not any("root:" in p for p in problems)


def test_table_in_the_parent_folder_needs_the_explicit_option(tmp_path):
    tabled(tmp_path / "shared")
    (tmp_path / "case").mkdir()
    case = tmp_path / "case" / "case.toml"
    case.write_text(TABLED.replace('"joints.csv"', '"../shared/joints.csv"'))
    for name in ("members.csv", "loads.csv"):
        (tmp_path / "case" / name).write_text((tmp_path / "shared" / name).read_text())
    assert any("outside the case's folder" in p for p in problems_of(case))
    assert list(read_case(case, tables_outside=True).joint_ids) == ["A", "B", "C"]
    assert run("stability", case, "--tables-anywhere")[0] == 0


def test_symlink_inside_the_folder_to_a_file_outside_is_outside(tmp_path):
    tabled(tmp_path / "elsewhere")
    case = tabled(tmp_path / "case")
    (tmp_path / "case" / "joints.csv").unlink()
    (tmp_path / "case" / "joints.csv").symlink_to(tmp_path / "elsewhere" / "joints.csv")
    assert any("outside the case's folder" in p for p in problems_of(case))


@pytest.mark.skipif(not Path("/dev/zero").exists(), reason="needs /dev/zero")
@pytest.mark.parametrize("device", ["/dev/zero", "/dev/stdin"])
def test_device_tables_are_refused_even_when_allowed_outside(tmp_path, device):
    case = tabled(tmp_path)
    case.write_text(TABLED.replace('"joints.csv"', f'"{device}"'))
    start = time.perf_counter()
    problems = problems_of(case, tables_outside=True)
    assert time.perf_counter() - start < SLOW_SECONDS
    assert any("not a regular file" in p for p in problems), problems


def test_case_file_that_is_a_device_is_refused(tmp_path):
    code, _, err = run("stability", "/dev/null")
    assert code == 2 and "not a regular file" in err


def test_case_file_over_the_size_cap_is_refused_before_parsing(tmp_path):
    path = tmp_path / "case.toml"
    with open(path, "wb") as handle:  # sparse: costs no disk
        handle.truncate(64 * 2**20)
    start = time.perf_counter()
    code, _, err = run("stability", path)
    assert time.perf_counter() - start < SLOW_SECONDS
    assert code == 2 and "MB an input may have" in err


# -- 8. options -------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("option", "value"),
    [
        ("--rtol", "nan"),
        ("--atol-fraction", "nan"),
        ("--rtol", "inf"),
        ("--rtol", "5.0"),
        ("--atol-fraction", "-0.1"),
    ],
)
def test_tolerance_options_out_of_range_are_refused(tmp_path, option, value):
    folder(tmp_path, {"case.toml": TRIANGLE, "claims.csv": CLAIMS})
    code, _, err = run(
        "check", tmp_path / "case.toml", "--claims", tmp_path / "claims.csv", option, value
    )
    assert code == 2 and f"{option}={value}" in err


@pytest.mark.parametrize(
    "options",
    [
        {"rtol": 5.0},
        {"rtol": float("nan")},
        {"atol_fraction": float("nan")},
        {"sign": "upside-down"},
        {"unit": "furlong"},
        {"assume_equal_EA": -1.0},
    ],
)
def test_api_refuses_the_options_the_cli_refuses(tmp_path, options):
    folder(tmp_path, {"case.toml": TRIANGLE, "claims.csv": CLAIMS})
    with pytest.raises(OptionError):
        api.review(tmp_path / "case.toml", tmp_path / "claims.csv", **options)


# -- 9. closed stdout / stderr ------------------------------------------------------------------
@pytest.mark.parametrize("closed", [(1,), (2,), (1, 2)])
def test_closed_output_streams_keep_the_true_exit_status(tmp_path, closed):
    """Exit 1 means discrepancies; a run whose output was discarded must not say that."""
    folder(tmp_path, {"case.toml": TRIANGLE, "claims.csv": CLAIMS})
    script = (
        "import os, sys\n"
        f"for fd in {closed!r}: os.close(fd)\n"
        "from verify.cli import run\n"
        "run(sys.argv[1:])\n"
    )
    done = subprocess.run(
        [
            sys.executable,
            "-c",
            script,
            "check",
            str(tmp_path / "case.toml"),
            "--claims",
            str(tmp_path / "claims.csv"),
        ],
        capture_output=True,
        timeout=120,
    )
    assert done.returncode == 0, done.stderr.decode()


# -- 11. wording -------------------------------------------------------------------------------
def test_messages_quote_long_values_clipped(tmp_path):
    text = TRIANGLE.replace("C = [0.0, -10.0]", 'C = [0.0, "' + "x" * 40_000 + '"]')
    folder(tmp_path, {"case.toml": text})
    problems = problems_of(tmp_path / "case.toml")
    assert problems and all(len(p) < 1000 for p in problems), [len(p) for p in problems]


@pytest.mark.parametrize("report", ["r.md", "r.html", None])
def test_control_characters_from_a_claims_label_are_escaped_in_every_output(tmp_path, report):
    claims = CLAIMS + "XY\x1b[31mZ\x07,5\n"
    folder(tmp_path, {"case.toml": TRIANGLE, "claims.csv": claims})
    args = ["check", tmp_path / "case.toml", "--claims", tmp_path / "claims.csv"]
    code, out, err = run(*args, *(["--report", tmp_path / report] if report else []))
    # The claims reader refuses a label holding control characters, quoting it escaped; no output
    # of any kind carries the raw characters.
    assert code == 2
    assert "\x1b" not in out + err and "\x07" not in out + err and "\\x1b" in err
    assert report is None or not (tmp_path / report).exists()
