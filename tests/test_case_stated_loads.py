"""Loads and supports as engineers state them, read from case files (verify/io/case.py).

Outside references, named beside each check:
- REFERENCES.md 3.3 king post (span 8, rise 3, apex load P): rafters -5P/6, tie +2P/3, post 0.
- Standard gravity g_n = 9.80665 m/s^2: pint's own `standard_gravity` (NIST SP 811 value).
- Components of a force at an angle, a 3-4-5 direction and a member's normal: hand resolution
  (common practice), written as formulas.
- sympy's truss module for the same truss with the converted loads (REFERENCES.md 4.1).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pint
import pytest
import sympy
from click.testing import CliRunner
from sympy.physics.continuum_mechanics.truss import Truss

from verify.analysis.global_solve import solve_global
from verify.cli import main
from verify.errors import InputError
from verify.io.case import read_case

RTOL = 1e-12

KING_POST = """\
title = "king post, span 8, rise 3"
[units]
length = "m"
force = "kN"
[joints]
A = [0.0, 0.0]
B = [8.0, 0.0]
C = [4.0, 3.0]
D = [4.0, 0.0]
[members]
AD = ["A", "D"]
DB = ["D", "B"]
AC = ["A", "C"]
CB = ["C", "B"]
CD = ["C", "D"]
[chords]
top = ["A", "C", "B"]
[supports]
A = "pinned"
B = "roller"
"""


def load(case, name):
    k = [c.name for c in case.cases].index(name)
    return case.cases[k].loads


def forces(model, name):
    result = solve_global(model)
    column = model.load_names.index(name)
    return {m.id: float(result.member_forces[i, column]) for i, m in enumerate(model.members)}


def test_magnitude_and_angle_give_the_components(write_files):
    """10 kN at 270 degrees is exactly [0, -10]; 5 kN at 30 degrees is [5 cos 30, 5 sin 30]."""
    model = read_case(
        write_files(
            {
                "case.toml": KING_POST + "[loads.a]\nC = { magnitude = 10, angle = 270 }\n"
                "D = { magnitude = 5, angle = 30 }\n"
            }
        )
    )
    loads = load(model, "a")
    assert loads["C"] == (0.0, -10.0)
    np.testing.assert_allclose(loads["D"], [5 * math.sqrt(3) / 2, 2.5], rtol=RTOL)
    assert model.exact is not None and model.exact.loads[("a", "D")][0] == 5 * sympy.sqrt(3) / 2


def test_magnitude_and_direction_vector(write_files):
    """A 3-4-5 direction: 10 kN along [3, -4] is [6, -8]."""
    model = read_case(
        write_files(
            {"case.toml": KING_POST + "[loads.a]\nC = { magnitude = 10, direction = [3, -4] }\n"}
        )
    )
    np.testing.assert_allclose(load(model, "a")["C"], [6.0, -8.0], rtol=RTOL)


def test_normal_to_a_member_follows_the_stated_side_rule(write_files):
    """Member AC rises from A(0,0) to C(4,3), unit (0.8, 0.6): pressure (positive) acts along
    (0.6, -0.8), into the roof; suction -2.5 kN is 2.5 x (-0.6, 0.8), away from it."""
    model = read_case(
        write_files(
            {
                "case.toml": KING_POST
                + '[loads.wind]\nC = { normal_to = "AC", magnitude = -2.5 }\n'
                '[loads.push]\nC = { normal_to = "AC", magnitude = 2.5 }\n'
            }
        )
    )
    np.testing.assert_allclose(load(model, "wind")["C"], [-1.5, 2.0], rtol=RTOL)
    np.testing.assert_allclose(load(model, "push")["C"], [1.5, -2.0], rtol=RTOL)


def test_line_load_on_top_chord_gives_king_post_forces(write_files):
    """w on the rafters measured in plan: the apex takes w x 4 m (half of each rafter's 4 m plan
    length), so the forces are the king post's under P = 4w (REFERENCES.md 3.3):
    rafters -5P/6, tie 2P/3, post 0. The supports' shares go straight into the reactions."""
    w = 1.5
    model = read_case(
        write_files(
            {
                "case.toml": KING_POST
                + f'[loads.snow]\nline = {{ chord = "top", w = {w}, measured = "plan" }}\n'
            }
        )
    )
    P = 4 * w
    np.testing.assert_allclose(load(model, "snow")["C"], [0.0, -P], rtol=RTOL)
    np.testing.assert_allclose(load(model, "snow")["A"], [0.0, -P / 2], rtol=RTOL)
    got = forces(model, "snow")
    assert got["AC"] == pytest.approx(-5 * P / 6, rel=RTOL)
    assert got["AD"] == pytest.approx(2 * P / 3, rel=RTOL)
    assert got["CD"] == pytest.approx(0.0, abs=RTOL * P)


def test_line_load_measured_along_uses_member_length(write_files):
    """Along the rafters (each 5 m): the total is w x 10 m, the apex takes w x 5 m."""
    model = read_case(
        write_files(
            {"case.toml": KING_POST + '[loads.d]\nline = [{ members = ["AC", "CB"], w = 2.0 }]\n'}
        )
    )
    loads = load(model, "d")
    total = sum(np.array(v) for v in loads.values())
    np.testing.assert_allclose(total, [0.0, -2.0 * 10.0], rtol=RTOL)
    np.testing.assert_allclose(loads["C"], [0.0, -10.0], rtol=RTOL)


def test_normal_line_load_matches_sympy_truss(write_files):
    """Wind pressure normal to both rafters, converted, then solved by sympy's truss module with
    the converted joint loads (REFERENCES.md 4.1): the same member forces."""
    model = read_case(
        write_files(
            {
                "case.toml": KING_POST
                + '[loads.w]\nline = { chord = "top", w = 0.8, normal = true }\n'
            }
        )
    )
    truss = Truss()
    truss.add_node(
        *[(j.id, sympy.nsimplify(j.coords[0]), sympy.nsimplify(j.coords[1])) for j in model.joints]
    )
    truss.add_member(*[(m.id, m.start, m.end) for m in model.members])
    truss.apply_support(("A", "pinned"), ("B", "roller"))
    for joint, (fx, fy) in load(model, "w").items():
        for value, angle in ((fx, 0), (fy, 90)):
            if abs(value) > 1e-12:
                truss.apply_load((joint, abs(value), angle if value > 0 else angle + 180))
    truss.solve()
    got = forces(model, "w")
    for member, value in got.items():
        assert value == pytest.approx(float(truss.internal_forces[member]), rel=1e-9, abs=1e-9)


def test_self_weight_uses_standard_gravity(write_files):
    """25 kg/m on every member: each member's weight m L g_n, half to each end; g_n from pint."""
    g = pint.UnitRegistry().Quantity(1, "standard_gravity").to("m/s**2").magnitude
    model = read_case(
        write_files(
            {"case.toml": KING_POST + "[loads.sw]\nself_weight = { mass_per_length = 25 }\n"}
        )
    )
    total = sum(np.array(v) for v in load(model, "sw").values())
    length = 8 + 5 + 5 + 3  # tie, two rafters, post
    np.testing.assert_allclose(total, [0.0, -25 * length * g / 1000], rtol=RTOL)
    # Joint D: half of AD, DB (4 m each) and CD (3 m).
    np.testing.assert_allclose(
        load(model, "sw")["D"], [0.0, -25 * (2 + 2 + 1.5) * g / 1000], rtol=RTOL
    )


def test_self_weight_in_millimetres_and_newtons(write_files):
    """The same weight in a case drawn in mm with forces in N: units converted, not assumed."""
    text = KING_POST.replace('length = "m"', 'length = "mm"').replace('force = "kN"', 'force = "N"')
    text = (
        text.replace("[8.0, 0.0]", "[8000.0, 0.0]")
        .replace("[4.0, 3.0]", "[4000.0, 3000.0]")
        .replace("[4.0, 0.0]", "[4000.0, 0.0]")
    )
    model = read_case(
        write_files(
            {
                "case.toml": text
                + '[loads.sw]\nself_weight = { mass_per_length = 25, members = ["AD"] }\n'
            }
        )
    )
    np.testing.assert_allclose(load(model, "sw")["A"], [0.0, -25 * 4 * 9.80665 / 2], rtol=RTOL)


def test_point_load_and_line_load_on_one_joint_add_up(write_files):
    """A joint with its own load and a share of a line load carries their sum."""
    model = read_case(
        write_files(
            {
                "case.toml": KING_POST + "[loads.s]\nC = [1.0, -2.0]\n"
                'line = { chord = "top", w = 1.0, measured = "plan" }\n'
            }
        )
    )
    np.testing.assert_allclose(load(model, "s")["C"], [1.0, -2.0 - 4.0], rtol=RTOL)


def test_parameters_and_arithmetic_in_coordinates_keep_exact_values(write_files):
    """rise = 4.5 tan 30 is 3 sqrt(3) / 2 exactly; the float is that value rounded once."""
    text = KING_POST.replace(
        "[joints]", '[parameters]\nhalf = 4.5\nrise = "half * tan(30)"\n[joints]'
    )
    text = (
        text.replace("B = [8.0, 0.0]", 'B = ["2 * half", 0.0]')
        .replace("C = [4.0, 3.0]", 'C = ["half", "rise"]')
        .replace("D = [4.0, 0.0]", 'D = ["half", 0]')
    )
    model = read_case(write_files({"case.toml": text + '[loads.a]\nC = [0, "-10 * cos(60)"]\n'}))
    exact = model.exact
    assert exact is not None
    assert sympy.simplify(exact.coords["C"][1] - 3 * sympy.sqrt(3) / 2) == 0
    assert model.joints[model.joint_index["C"]].coords[1] == float(3 * sympy.sqrt(3) / 2)
    assert load(model, "a")["C"] == (0.0, -5.0)
    # The rafter at 30 degrees carries P / (2 sin 30) = P under an apex load P (REFERENCES.md 3.3,
    # general form).
    assert forces(model, "a")["AC"] == pytest.approx(-5.0, rel=1e-12)


@pytest.mark.parametrize(
    ("spec", "expected"),
    [
        ('"pinned"', [("x", (1.0, 0.0)), ("y", (0.0, 1.0))]),
        ('"roller"', [("y", (0.0, 1.0))]),
        ('{ type = "roller", rolls = [1, 0] }', [("y", (0.0, 1.0))]),
        ('{ type = "roller", rolls = [0, 1] }', [("n", (-1.0, 0.0))]),
        ('{ type = "roller", normal = [3, 4] }', [("n", (0.6, 0.8))]),
    ],
)
def test_supports_by_words(write_files, spec, expected):
    """Words name the reactions they stand for: a roller rolling along x resists y, a roller on
    a surface with normal [3, 4] resists along (0.6, 0.8)."""
    text = KING_POST.replace('B = "roller"', f"B = {spec}")
    model = read_case(write_files({"case.toml": text + "[loads.a]\nC = [0, -1]\n"}))
    got = [(r.axis, r.direction) for r in model.reactions if r.joint == "B"]
    assert [a for a, _ in got] == [a for a, _ in expected]
    for (_, vector), (_, want) in zip(got, expected, strict=True):
        np.testing.assert_allclose(vector, want, atol=1e-15)


INVALID = [
    ("C = { magnitude = 10 }", "expected { magnitude = ..., angle = ... }"),
    ("C = { magnitude = 10, angle = 90, direction = [0, 1] }", "got both angle and direction"),
    (
        "C = { magnitude = 10, angel = 90 }",
        "unknown key 'angel'; expected magnitude with one of angle, direction, normal_to. Did you "
        "mean 'angle'",
    ),
    ("C = { magnitude = 10, angle = 400 }", "angle: 400 is beyond the sane range of +-360 degrees"),
    (
        "C = { magnitude = 1e13, angle = 90 }",
        "magnitude: 1e+13 is beyond the sane range of +-1e+12 kN",
    ),
    (
        'C = { normal_to = "AX", magnitude = 1 }',
        "normal_to names member 'AX', which is not defined. Did you mean 'AD' or 'AC'",
    ),
    ('line = { chord = "tp", w = 1 }', "chord 'tp' is not defined in [chords]. Did you mean 'top'"),
    ('line = { chord = "top" }', "give w, the force per length (kN/m)"),
    ('line = { members = ["AC", "ACC"], w = 1 }', "member 'ACC' is not defined. Did you mean 'AC'"),
    ('line = { chord = "top", w = 1, measured = "slope" }', 'expected "along"'),
    (
        'line = { chord = "top", w = 1, normal = true, direction = [0, 1] }',
        "give direction or normal = true, not both",
    ),
    ("self_weight = { mass_per_length = -3 }", "mass_per_length must not be negative"),
    ("self_weight = { mass = 3 }", "unknown key 'mass'"),
    (
        'C = [0, "span / 2"]',
        "'span / 2' is not a number; expected a finite number or arithmetic ('span' is not defined "
        "in [parameters]",
    ),
    ("C = [0, \"__import__('os')\"]", "is not accepted"),
    ('C = [0, "1e12 * 10"]', "beyond the sane range of +-1e+12 kN"),
]


@pytest.mark.parametrize(("line", "fragment"), INVALID)
def test_invalid_stated_loads_name_line_field_and_expectation(write_files, line, fragment):
    """One clear message per problem, at the line of the load, naming what was expected."""
    text = KING_POST + "[loads.a]\n" + line + "\n"
    path = write_files({"case.toml": text})
    with pytest.raises(InputError) as info:
        read_case(path)
    hits = [p for p in info.value.problems if fragment in p.message]
    assert hits, [p.message for p in info.value.problems]
    assert hits[0].line == len(text.splitlines())


@pytest.mark.parametrize(
    ("spec", "fragment"),
    [
        (
            '"pined"',
            '\'pined\' is not a support type; expected "pinned" or "roller" (or a list of '
            "restrained axes). Did you mean 'pinned'",
        ),
        (
            '{ type = "pinned", normal = [0, 1] }',
            "a pinned support restrains every direction; 'normal' belongs to a roller",
        ),
        (
            '{ type = "roller", normal = [0, 1], rolls = [1, 0] }',
            "give one of normal, rolls, direction, not normal and rolls",
        ),
        ('{ type = "roller", normal = [0, 0] }', "normal is the zero vector"),
        ('{ type = "roller", slides = [1, 0] }', "unknown key 'slides'"),
    ],
)
def test_invalid_support_words(write_files, spec, fragment):
    text = KING_POST.replace('B = "roller"', f"B = {spec}") + "[loads.a]\nC = [0, -1]\n"
    with pytest.raises(InputError) as info:
        read_case(write_files({"case.toml": text}))
    hits = [p for p in info.value.problems if fragment in p.message]
    assert hits and hits[0].line == text.splitlines().index(f"B = {spec}") + 1, [
        p.message for p in info.value.problems
    ]


@pytest.mark.parametrize(
    ("parameters", "fragment"),
    [
        ('"2x" = 3', "parameter '2x' is not a plain name"),
        ("pi = 3", "parameter 'pi' is a reserved word"),
        ('a = "b * 2"\nb = 1', "'b' is not defined in [parameters]"),
    ],
)
def test_invalid_parameters(write_files, parameters, fragment):
    text = (
        KING_POST.replace("[joints]", f"[parameters]\n{parameters}\n[joints]")
        + "[loads.a]\nC = [0, -1]\n"
    )
    with pytest.raises(InputError) as info:
        read_case(write_files({"case.toml": text}))
    assert any(fragment in p.message for p in info.value.problems), [
        p.message for p in info.value.problems
    ]


def test_solve_prints_each_conversion_with_its_line(write_files):
    """`solve` shows every stated load as the joint loads it became, with file and line."""
    text = KING_POST + '[loads.snow]\nline = { chord = "top", w = 1.5, measured = "plan" }\n'
    path = write_files({"case.toml": text})
    result = CliRunner().invoke(main, ["solve", str(path)])
    assert result.exit_code == 0, result.output
    line = len(text.splitlines())
    assert f"case.toml:{line}: load case 'snow': line load 1.5 kN/m" in result.output
    assert "C [0, -6]" in result.output and "A [0, -3]" in result.output


def test_bad_stated_load_exits_2_without_traceback(write_files):
    """The CLI says the problem and exits 2; the input file is left as it was."""
    text = KING_POST + '[loads.a]\nC = { magnitude = 10, angle = "1/0" }\n'
    path = write_files({"case.toml": text})
    result = CliRunner().invoke(main, ["solve", str(path)])
    assert result.exit_code == 2
    assert "Traceback" not in result.output
    assert (
        f"case.toml:{len(text.splitlines())}: load case 'a' at joint 'C' angle: '1/0' is not a "
        "number" in result.output
    )
    assert path.read_text(encoding="utf-8") == text


def test_converted_loads_are_listed_in_the_json_and_the_report(tmp_path):
    """A load stated by magnitude and angle is shown as the joint loads it became, in solve --json
    and among the report's notes (resolved by hand: 10 kN at 45 degrees is 10/sqrt(2) each way)."""
    import math

    from verify.analysis.pipeline import analyse
    from verify.io.case import read_case
    from verify.report.document import notes
    from verify.report.json_out import solve_json

    path = tmp_path / "case.toml"
    path.write_text(
        'title = "t"\n[units]\nlength = "m"\nforce = "kN"\n[joints]\nA = [0.0, 0.0]\nB = [4.0, '
        "0.0]\nC = [2.0, 2.0]\n"
        '[members]\nAB = ["A", "B"]\nBC = ["B", "C"]\nAC = ["A", "C"]\n[supports]\nA = "pinned"\nB '
        '= "roller"\n'
        "[loads.wind]\nC = { magnitude = 10.0, angle = 45 }\n",
        encoding="utf-8",
    )
    model = read_case(path)
    (text,) = solve_json(model, analyse(model))["case"]["load_conversions"]
    assert "10 kN at 45 degrees" in text and f"{10 / math.sqrt(2):.6g}" in text

    class _Review:  # the report's notes read the review's own notes and the analysis
        notes = ()
        analysis = analyse(model)

    stand_in: Any = _Review()  # the two fields notes() reads
    assert any(n.startswith("load converted:") and "joint loads C" in n for n in notes(stand_in))
