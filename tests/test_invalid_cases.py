"""Invalid case files: each gives the expected message at the expected file and line.

A table of invalid inputs (STYLE.md "Tests"). Every row edits one or more lines of a valid base
case, so the line numbers below are those of BASE. All problems in a file must be reported
together, not just the first.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from verify.errors import EXIT_BAD_INPUT, InputError
from verify.io.case import build_model, read_case

BASE = """\
title = "invalid-case table base"
[units]
length = "m"
force = "kN"

[joints]
A = [0.0, 0.0]
B = [4.0, 0.0]
C = [4.0, 3.0]
D = [0.0, 3.0]

[members]
AB = ["A", "B"]
BC = ["B", "C"]
CD = ["C", "D"]
DA = ["D", "A"]
AC = ["A", "C"]

[supports]
A = ["x", "y"]
B = ["y"]

[loads.dead]
C = [0.0, -10.0]
D = [2.0, 0.0]
"""
BASE_LINES = BASE.splitlines()
END = len(BASE_LINES)  # 25: the last line; appended text starts at END + 1


def variant(edits: dict[int, str] | None = None, append: str = "") -> str:
    """BASE with whole lines replaced (1-based), so the other line numbers do not move."""
    lines = list(BASE_LINES)
    for number, text in (edits or {}).items():
        lines[number - 1] = text
    return "\n".join(lines) + "\n" + append


def problems_of(path: Path) -> tuple:
    with pytest.raises(InputError) as info:
        read_case(path)
    return info.value.problems


def test_base_case_is_valid(write_files):
    """The table below is only meaningful if the unedited base reads cleanly."""
    model = read_case(write_files({"case.toml": BASE}))
    assert len(model.members) == 5 and END == 25


# (id, case text, [(message fragment, line)]) -- every listed problem must be reported.
TOML_CASES = [
    (
        "member-missing-joint",
        variant({15: 'CD = ["C", "DD"]'}),
        [("member 'CD' names joint 'DD', which is not defined. Did you mean 'D'?", 15)],
    ),
    (
        "load-missing-joint",
        variant({24: "CC = [0.0, -10.0]"}),
        [("load case 'dead' names joint 'CC', which is not defined. Did you mean 'C'?", 24)],
    ),
    (
        "support-missing-joint",
        variant({21: 'BB = ["y"]'}),
        [("support names joint 'BB', which is not defined. Did you mean 'B'?", 21)],
    ),
    (
        "zero-length-member",
        variant({10: "D = [4.0, 3.0]"}),
        [
            ("member 'CD' has zero length (joints 'C' and 'D' coincide)", 15),
            ("joints 'C' and 'D' are at the same point", 10),
        ],
    ),
    (
        "two-members-same-pair",
        variant({16: 'DA = ["C", "A"]'}),
        [
            (
                "members 'DA' and 'AC' both join 'A' and 'C'; a pin-jointed model needs one member "
                "per joint pair",
                17,
            )
        ],
    ),
    (
        "coincident-joints",
        variant({10: "D = [4.0, 0.0]"}),
        [("joints 'B' and 'D' are at the same point (4.0, 0.0); merge them", 10)],
    ),
    (
        "mixed-2d-3d",
        variant({9: "C = [4.0, 3.0, 1.0]"}),
        [("joint 'C' has 3 coordinates but most joints have 2; a model is all 2D or all 3D", 9)],
    ),
    (
        "nan",
        variant({9: "C = [4.0, nan]"}),
        [("joint 'C' coordinate 2: nan is not a finite number", 9)],
    ),
    (
        "inf",
        variant({9: "C = [inf, 3.0]"}),
        [("joint 'C' coordinate 1: inf is not a finite number", 9)],
    ),
    (
        "overflow-1e400",
        variant({9: "C = [4.0, 1e400]"}),
        [("joint 'C' coordinate 2", 9), ("out of range", 9)],
    ),
    (
        "decimal-comma-string",
        variant({9: 'C = [4.0, "12,5"]'}),
        [
            (
                "joint 'C' coordinate 2: '12,5' uses a decimal comma; write a decimal point "
                "('12.5')",
                9,
            )
        ],
    ),
    (
        "number-as-text",
        variant({24: 'C = [0.0, "ten"]'}),
        [("load case 'dead' at joint 'C': 'ten' is not a number; expected a finite number", 24)],
    ),
    (
        "top-level-typo",
        variant({6: "[joitns]"}),
        [
            ("unknown key 'joitns'; expected one of title, units, joints", 6),
            ("Did you mean 'joints'", 6),
        ],
    ),
    (
        "unknown-member-key",
        variant({14: 'BC = { ends = ["B", "C"], EAA = 5.0 }'}),
        [("member 'BC': unknown key 'EAA'; expected ends, EA, A, E. Did you mean 'EA'", 14)],
    ),
    (
        "unknown-unit",
        variant({4: 'force = "kNN"'}),
        [
            (
                "units.force: unknown force unit 'kNN'; accepted: N, kN, MN, lbf, kip, kgf, "
                "tonne-force",
                4,
            )
        ],
    ),
    (
        "ambiguous-unit-t",
        variant({4: 'force = "t"'}),
        [
            ("units.force: unit 't' is ambiguous", 4),
            ("accepted force units: N, kN, MN, lbf, kip, kgf, tonne-force", 4),
        ],
    ),
    (
        "length-unit-for-force",
        variant({4: 'force = "mm"'}),
        [("'mm' is a length unit, but a force unit is expected", 4)],
    ),
    (
        "unknown-units-key",
        variant({3: 'lenght = "m"'}),
        [
            (
                "unknown key 'lenght' in [units]; expected length, force, area, modulus. Did you "
                "mean 'length'?",
                3,
            ),
            ("[units] has no 'length' unit", 2),
        ],
    ),
    (
        "load-on-unconnected-joint",
        variant({15: "", 16: ""}),
        [
            ("load case 'dead' loads joint 'D', which no member connects", 25),
            ("joint 'D' is not connected to any member", 10),
        ],
    ),
    (
        "missing-units",
        variant({2: "", 3: "", 4: ""}),
        [("missing [units] table; declare length and force units", 1)],
    ),
    (
        "combination-unknown-case",
        variant(append='\n[combinations]\n"ULS" = { dead = 1.35, daed = 1.5 }\n'),
        [
            (
                "combination 'ULS' names load case 'daed', which is not defined. Did you mean "
                "'dead'?",
                END + 3,
            )
        ],
    ),
    (
        "combination-named-like-case",
        variant(append="\n[combinations]\ndead = { dead = 1.0 }\n"),
        [("combination 'dead' has the same name as a load case; rename one", END + 3)],
    ),
    (
        "combination-decimal-comma",
        variant(append='\n[combinations]\nU = { dead = "1,5" }\n'),
        [("combination 'U' factor for 'dead': '1,5' uses a decimal comma", END + 3)],
    ),
    (
        "support-axis-not-in-2d",
        variant({21: 'B = ["z"]'}),
        [("support at 'B': direction 'z' is not one of x, y", 21)],
    ),
    (
        "support-axis-twice",
        variant({20: 'A = ["x", "y", "x"]'}),
        [("support at 'A': direction 'x' is listed twice", 20)],
    ),
    (
        "support-zero-direction",
        variant({21: "B = { direction = [0.0, 0.0] }"}),
        [("support at 'B': direction is the zero vector", 21)],
    ),
    (
        "support-direction-length",
        variant({21: "B = { direction = [0.0, 1.0, 0.0] }"}),
        [("support at 'B': direction must be a list of 2 numbers", 21)],
    ),
    (
        "load-vector-length",
        variant({24: "C = [0.0, -10.0, 0.0]"}),
        [("load case 'dead' at joint 'C': expected a force vector of 2 numbers", 24)],
    ),
    (
        "negative-ea",
        variant({14: 'BC = { ends = ["B", "C"], EA = -5.0 }'}),
        [("member 'BC': EA must be positive, got -5.0", 14)],
    ),
    (
        "area-without-units",
        variant({14: 'BC = { ends = ["B", "C"], A = 5.0, E = 3.0 }'}),
        [("member 'BC': A and E need [units] area", 14)],
    ),
    (
        "area-without-units-said-once",
        variant(
            {
                14: 'BC = { ends = ["B", "C"], A = 5.0, E = 3.0 }',
                15: 'CD = { ends = ["C", "D"], A = 5.0, E = 3.0 }',
            }
        ),
        [
            (
                'member \'BC\': A and E need [units] area (e.g. "mm2") and modulus (e.g. "GPa"); 1 '
                "more member gives A and E",
                14,
            )
        ],
    ),
    (
        "ea-and-a-e-both",
        variant({14: 'BC = { ends = ["B", "C"], EA = 5.0, A = 5.0, E = 3.0 }'}),
        [("member 'BC': give EA, or A and E, not both", 14)],
    ),
    (
        "stiffness-ea-and-a-e-both",
        variant(append="\n[stiffness]\nEA = 5.0\nE = 3.0\n"),
        [("[stiffness]: give EA, or A and E, not both", END + 2)],
    ),
    (
        "float-joint-reference",
        variant({13: 'AB = ["A", 1.5]'}),
        [("member 'AB': joint id 1.5 must be written as a string", 13)],
    ),
    ("member-one-end", variant({13: 'AB = ["A"]'}), [("member 'AB': expected two joint ids", 13)]),
    (
        "member-own-loop",
        variant({13: 'AB = ["A", "A"]'}),
        [("member 'AB' starts and ends at joint 'A'", 13)],
    ),
    (
        "stiffness-typo",
        variant(append="\n[stiffness]\nEa = 5.0\n"),
        [("unknown key 'Ea' in [stiffness]", END + 3)],
    ),
]


@pytest.mark.parametrize(("text", "expected"), [pytest.param(t, e, id=i) for i, t, e in TOML_CASES])
def test_invalid_case_reports_message_and_line(write_files, text, expected):
    path = write_files({"case.toml": text})
    problems = problems_of(path)
    for fragment, line in expected:
        hits = [p for p in problems if fragment in p.message]
        assert hits, f"no problem says {fragment!r}; got {[p.message for p in problems]}"
        assert any(p.line == line for p in hits), (
            f"{fragment!r} at lines {[p.line for p in hits]}, expected {line}"
        )
        assert all(p.file == str(path) for p in hits)


def test_empty_file_reports_every_missing_part(write_files):
    problems = problems_of(write_files({"case.toml": ""}))
    messages = [p.message for p in problems]
    for fragment in (
        "missing [units] table",
        "missing [supports] table",
        "missing [loads.<case>] table",
        "the model has no joints",
        "the model has no members",
    ):
        assert any(fragment in m for m in messages), (fragment, messages)


def test_empty_tables_are_an_empty_model(write_files):
    text = '[units]\nlength = "m"\nforce = "kN"\n[joints]\n[members]\n[supports]\n[loads.dead]\n'
    messages = [p.message for p in problems_of(write_files({"case.toml": text}))]
    assert any("the model has no joints" in m for m in messages)
    assert any("the model has no members" in m for m in messages)


def test_toml_syntax_error_names_the_line_in_the_message(write_files):
    """A duplicate key is a TOML error; tomllib's text carries the line."""
    problems = problems_of(write_files({"case.toml": variant({9: "A = [1.0, 1.0]"})}))
    assert len(problems) == 1
    assert "not valid TOML" in problems[0].message
    assert str(problems[0]).endswith(problems[0].message) and ":9:" in str(problems[0])


def test_toml_syntax_error_sets_the_problem_line(write_files):
    problems = problems_of(write_files({"case.toml": variant({9: "A = [1.0, 1.0]"})}))
    assert problems[0].line == 9


def test_missing_file():
    with pytest.raises(InputError, match="file not found"):
        read_case(Path("/nonexistent/case.toml"))


def test_not_utf8(write_files):
    path = write_files({"case.toml": BASE})
    path.write_bytes(BASE.encode("utf-16"))
    with pytest.raises(InputError, match="not UTF-8"):
        read_case(path)


def test_several_errors_are_reported_together(write_files):
    """Six independent mistakes: all six come back in one InputError, each at its line."""
    # 'foo' goes first (a key after a table header would belong to that table); BASE lines move by
    # 1.
    text = "foo = 1\n" + variant(
        {4: 'force = "kNN"', 15: 'CD = ["C", "E"]', 21: 'B = ["z"]', 24: "C = [0.0, -10.0, 1.0]"},
        append='\n[combinations]\n"ULS" = { daed = 1.5 }\n',
    )
    path = write_files({"case.toml": text})
    with pytest.raises(InputError) as info:
        read_case(path)
    error = info.value
    expected = [
        ("unknown key 'foo'", 1),
        ("unknown force unit 'kNN'", 5),
        ("names joint 'E'", 16),
        ("direction 'z' is not one of x, y", 22),
        ("expected a force vector of 2 numbers", 25),
        ("names load case 'daed'", END + 4),
    ]
    found = [(p.message, p.line) for p in error.problems]
    for fragment, line in expected:
        assert any(fragment in m and ln == line for m, ln in found), (fragment, line, found)
    assert len(error.problems) == len(expected), found
    assert str(error).startswith(f"{len(expected)} problems found in the input:")
    assert f"{path}:5: units.force" in str(error)
    assert isinstance(error, ValueError) and error.exit_code == EXIT_BAD_INPUT


def test_bad_coordinate_is_reported_once(write_files):
    problems = problems_of(write_files({"case.toml": variant({9: "C = [4.0, nan]"})}))
    assert [p.line for p in problems] == [9], [p.message for p in problems]


def test_build_model_names_source_without_text():
    """build_model on Python data still reports problems against the given source name."""
    with pytest.raises(InputError) as info:
        build_model({"units": {"length": "m", "force": "kN"}}, source="from-python")
    assert all(p.file == "from-python" for p in info.value.problems)


# -- CSV tables ---------------------------------------------------------------------------------
CSV_CASE = """\
joints = "joints.csv"
members = "members.csv"
supports = "supports.csv"
loads = "loads.csv"
[units]
length = "m"
force = "kN"
"""
CSV_FILES = {
    "joints.csv": "id,x,y\nA,0,0\nB,4,0\nC,4,3\nD,0,3\n",
    "members.csv": "id,start,end,ea\nAB,A,B,\nBC,B,C,\nCD,C,D,\nDA,D,A,\nAC,A,C,\n",
    "supports.csv": "joint,directions\nA,x y\nB,y\n",
    "loads.csv": "case,joint,fx,fy\ndead,C,0,-10\ndead,D,2,0\n",
}


def csv_variant(name: str, text: str) -> dict[str, str]:
    files = {"case.toml": CSV_CASE, **CSV_FILES}
    files[name] = text
    return files


def test_csv_base_is_valid(write_files):
    assert len(read_case(write_files({"case.toml": CSV_CASE, **CSV_FILES})).members) == 5


# (id, file edited, its new text, [(file holding the problem, fragment, line)])
CSV_CASES = [
    (
        "duplicate-joint-id",
        "joints.csv",
        "id,x,y\nA,0,0\nB,4,0\nC,4,3\nD,0,3\nC,5,5\n",
        [("joints.csv", "duplicate joint id 'C' (first on line 4)", 6)],
    ),
    (
        "duplicate-member-id",
        "members.csv",
        "id,start,end,ea\nAB,A,B,\nBC,B,C,\nCD,C,D,\nDA,D,A,\nAB,A,C,\n",
        [("members.csv", "duplicate member id 'AB' (first on line 2)", 6)],
    ),
    (
        "decimal-comma",
        "joints.csv",
        'id,x,y\nA,0,0\nB,4,0\nC,"4,5",3\nD,0,3\n',
        [
            (
                "joints.csv",
                "joint 'C' x: '4,5' uses a decimal comma; write a decimal point ('4.5')",
                4,
            )
        ],
    ),
    (
        "member-missing-joint",
        "members.csv",
        "id,start,end,ea\nAB,A,B,\nBC,B,C,\nCD,C,DD,\nDA,D,A,\nAC,A,C,\n",
        [
            (
                "members.csv",
                "member 'CD' end names joint 'DD', which is not defined. Did you mean 'D'?",
                4,
            )
        ],
    ),
    (
        "support-missing-joint",
        "supports.csv",
        "joint,directions\nA,x y\nBB,y\n",
        [("supports.csv", "support names joint 'BB', which is not defined. Did you mean 'B'?", 3)],
    ),
    (
        "load-missing-joint",
        "loads.csv",
        "case,joint,fx,fy\ndead,CC,0,-10\ndead,D,2,0\n",
        [
            (
                "loads.csv",
                "load case 'dead' names joint 'CC', which is not defined. Did you mean 'C'?",
                2,
            )
        ],
    ),
    (
        "nan-in-load",
        "loads.csv",
        "case,joint,fx,fy\ndead,C,0,nan\ndead,D,2,0\n",
        [("loads.csv", "'nan' is not a number", 2)],
    ),
    (
        "short-row",
        "joints.csv",
        "id,x,y\nA,0,0\nB,4\nC,4,3\nD,0,3\n",
        [("joints.csv", "row has 2 fields, the header has 3", 3)],
    ),
    (
        "missing-column",
        "members.csv",
        "id,start\nAB,A\n",
        [("members.csv", "header lacks column(s) end", 1)],
    ),
    (
        "empty-table",
        "supports.csv",
        "",
        [("supports.csv", "the table is empty; expected a header row", 1)],
    ),
    (
        "missing-table-file",
        "case.toml",
        CSV_CASE.replace("joints.csv", "joint.csv"),
        [("case.toml", "joints names the table 'joint.csv', which does not exist", 1)],
    ),
    (
        "support-bad-axis",
        "supports.csv",
        "joint,directions\nA,x y\nB,w\n",
        [("supports.csv", "support at 'B': direction 'w' is not one of x, y", 3)],
    ),
]
# Problems found after the tables are read (geometry checks) should point at the CSV row too.
CSV_GEOMETRY_CASES = [
    (
        "coincident-joints",
        "joints.csv",
        "id,x,y\nA,0,0\nB,4,0\nC,4,3\nD,4,0\n",
        [("joints.csv", "joints 'B' and 'D' are at the same point", 5)],
    ),
    (
        "two-members-same-pair",
        "members.csv",
        "id,start,end,ea\nAB,A,B,\nBC,B,C,\nCD,C,D,\nDA,D,A,\nCA,C,A,\nAC,A,C,\n",
        [("members.csv", "both join 'A' and 'C'", 7)],
    ),
    (
        "mixed-2d-3d",
        "joints.csv",
        "id,x,y,z\nA,0,0,\nB,4,0,\nC,4,3,1\nD,0,3,\n",
        [("joints.csv", "joint 'C' has 3 coordinates but most joints have 2", 4)],
    ),
]


def check_csv_case(write_files, tmp_path, name, text, expected):
    problems = problems_of(write_files(csv_variant(name, text)))
    for file, fragment, line in expected:
        hits = [p for p in problems if fragment in p.message]
        assert hits, f"no problem says {fragment!r}; got {[str(p) for p in problems]}"
        assert any(p.file == str(tmp_path / file) and p.line == line for p in hits), [
            str(p) for p in hits
        ]


@pytest.mark.parametrize(
    ("name", "text", "expected"), [pytest.param(n, t, e, id=i) for i, n, t, e in CSV_CASES]
)
def test_invalid_csv_table(write_files, tmp_path, name, text, expected):
    check_csv_case(write_files, tmp_path, name, text, expected)


@pytest.mark.parametrize(
    ("name", "text", "expected"), [pytest.param(n, t, e, id=i) for i, n, t, e in CSV_GEOMETRY_CASES]
)
def test_csv_geometry_problem_points_at_the_row(write_files, tmp_path, name, text, expected):
    check_csv_case(write_files, tmp_path, name, text, expected)


@pytest.mark.parametrize(
    ("name", "text", "fragment"),
    [pytest.param(n, t, e[0][1], id=i) for i, n, t, e in CSV_GEOMETRY_CASES],
)
def test_csv_geometry_problem_is_reported(write_files, name, text, fragment):
    """Even located at the case file, the geometry problem must be found."""
    problems = problems_of(write_files(csv_variant(name, text)))
    assert any(fragment in p.message for p in problems), [str(p) for p in problems]


def test_csv_and_toml_problems_reported_together(write_files, tmp_path):
    files = csv_variant("joints.csv", "id,x,y\nA,0,0\nB,4,0\nC,4,3\nD,0,3\nC,1,1\n")
    files["loads.csv"] = "case,joint,fx,fy\ndead,C,0,-10\ndead,DD,2,0\n"
    files["case.toml"] = CSV_CASE.replace('force = "kN"', 'force = "ton"')
    problems = problems_of(write_files(files))
    where = {(Path(p.file).name, p.line) for p in problems}
    assert {("joints.csv", 6), ("loads.csv", 3), ("case.toml", 7)} <= where, [
        str(p) for p in problems
    ]


def test_unreadable_joints_table_is_one_problem_not_an_echo_per_reference(write_files, tmp_path):
    """A joints table that cannot be read is said once; members, supports and loads naming its
    joints are not each reported as 'not defined', nor is the model 'without members'."""
    problems = problems_of(
        write_files(csv_variant("joints.csv", "name,X,Y\nA,0,0\nB,4,0\nC,4,3\nD,0,3\n"))
    )
    assert [(Path(p.file).name, p.line) for p in problems] == [("joints.csv", 1)], [
        str(p) for p in problems
    ]
    assert "header lacks column(s) id; found name, x, y" in problems[0].message


def test_semicolon_separated_tables_are_read(write_files, tmp_path):
    """Spreadsheets in many locales save CSV with ';': the same tables read the same model."""
    comma = read_case(write_files({"case.toml": CSV_CASE, **CSV_FILES}))
    semicolon = {name: text.replace(",", ";") for name, text in CSV_FILES.items()}
    model = read_case(write_files({"case.toml": CSV_CASE, **semicolon}))
    assert model.joints == comma.joints and model.members == comma.members
    assert [dict(c.loads) for c in model.cases] == [dict(c.loads) for c in comma.cases]


def test_joints_table_with_a_header_only_is_one_message(write_files, tmp_path):
    """No traceback, no echo at every reference: the empty table is named."""
    problems = problems_of(write_files(csv_variant("joints.csv", "id,x,y\n")))
    assert [(Path(p.file).name, p.line) for p in problems] == [("joints.csv", 1)], [
        str(p) for p in problems
    ]
    assert "the table has a header (id, x, y) but no rows" in problems[0].message
