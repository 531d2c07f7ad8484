"""Reading valid case files (DESIGN.md section 4): inline TOML, CSV tables, stiffness, 3D.

Expected values come from the file text itself, from pint (unit products for EA = A E), or from
hand statics written as formulas (common practice).
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pint
import pytest
from trussgen import make_model, pratt, to_toml, truss_case, write_case

from verify.analysis.global_solve import solve_global
from verify.errors import InputError
from verify.io.case import read_case

RTOL = 1e-12
ROOT = Path(__file__).resolve().parent.parent
ureg = pint.UnitRegistry()

TRIANGLE = """\
title = "triangle"
notes = "free text is allowed here"

[units]
length = "m"
force = "kN"

[joints]
A = [0.0, 0.0]
B = [4.0, 0.0]
C = [2.0, 3.0]

[members]
AB = ["A", "B"]
BC = ["B", "C"]
CA = ["C", "A"]

[supports]
A = ["x", "y"]
B = ["y"]

[loads.dead]
C = [0.0, -10.0]
"""


def test_bundled_footbridge_case_reads():
    """cases/canal-footbridge: 12 joints, 21 members (6-panel Pratt), 3 cases, 2 combinations."""
    model = read_case(ROOT / "cases" / "canal-footbridge" / "case.toml")
    assert (model.dim, len(model.joints), len(model.members), len(model.reactions)) == (
        2,
        12,
        21,
        3,
    )
    assert model.units.length.symbol == "m" and model.units.force.symbol == "kN"
    assert model.load_names == ["dead", "crowd", "wind-uplift", "ULS-1", "SLS-1"]
    F = model.load_matrix()
    dead, crowd = F[:, 0], F[:, 1]
    np.testing.assert_allclose(F[:, 3], 1.35 * dead + 1.5 * crowd, rtol=RTOL)
    np.testing.assert_allclose(F[:, 4], dead + crowd, rtol=RTOL)
    # Five panel points at 9 kN dead each, straight down.
    assert F[1::2, 0].sum() == pytest.approx(-45.0)


def test_inline_case_values(write_files):
    model = read_case(write_files({"case.toml": TRIANGLE}))
    assert model.title == "triangle"
    assert model.joint_ids == ["A", "B", "C"]
    assert model.member_ids == ["AB", "BC", "CA"]
    assert [(m.start, m.end) for m in model.members] == [("A", "B"), ("B", "C"), ("C", "A")]
    assert [(r.joint, r.axis, r.direction) for r in model.reactions] == [
        ("A", "x", (1.0, 0.0)),
        ("A", "y", (0.0, 1.0)),
        ("B", "y", (0.0, 1.0)),
    ]
    assert model.cases[0].loads == {"C": (0.0, -10.0)}
    assert model.lengths.tolist() == pytest.approx([4.0, math.sqrt(13.0), math.sqrt(13.0)])
    assert not model.has_stiffness


def test_utf8_bom_is_accepted(write_files):
    path = write_files({"case.toml": TRIANGLE})
    path.write_bytes(b"\xef\xbb\xbf" + path.read_bytes())
    assert read_case(path).title == "triangle"


def test_numbers_stay_in_declared_units(write_files):
    """Internal convention: numbers are kept in the case's units (no conversion to SI)."""
    text = TRIANGLE.replace('length = "m"', 'length = "ft"').replace(
        'force = "kN"', 'force = "kip"'
    )
    model = read_case(write_files({"case.toml": text}))
    assert model.units.length.symbol == "ft" and model.units.force.symbol == "kip"
    assert model.joints[1].coords == (4.0, 0.0)
    assert model.cases[0].loads["C"] == (0.0, -10.0)


def test_ids_stay_strings_in_toml(write_files):
    """'007' and '1E1' are ids, not numbers (TOML quoted and bare keys are strings)."""
    text = TRIANGLE.replace("A = [0.0, 0.0]", '"007" = [0.0, 0.0]').replace(
        "B = [4.0, 0.0]", '"1E1" = [4.0, 0.0]'
    )
    text = text.replace('AB = ["A", "B"]', '"0.5" = ["007", "1E1"]').replace(
        'BC = ["B", "C"]', '010 = ["1E1", "C"]'
    )
    text = text.replace('CA = ["C", "A"]', 'CA = ["C", "007"]')
    text = text.replace('A = ["x", "y"]', '"007" = ["x", "y"]').replace(
        'B = ["y"]', '"1E1" = ["y"]'
    )
    model = read_case(write_files({"case.toml": text}))
    assert model.joint_ids == ["007", "1E1", "C"]
    assert model.member_ids == ["0.5", "010", "CA"]
    assert model.members[0].start == "007" and model.members[0].end == "1E1"
    assert [r.joint for r in model.reactions] == ["007", "007", "1E1"]


def test_inclined_roller_direction_is_normalised(write_files):
    text = TRIANGLE.replace('B = ["y"]', "B = { direction = [3.0, 4.0] }")
    model = read_case(write_files({"case.toml": text}))
    roller = model.reactions[2]
    assert (roller.joint, roller.axis) == ("B", "n")
    assert roller.direction == pytest.approx((0.6, 0.8), rel=RTOL)


def test_inclined_roller_reaction_by_hand_statics(write_files):
    """Moments about pin A: R_B (x_B n_y - y_B n_x) = P x_C, so R_B = P x_C / (4 * 0.8)."""
    text = TRIANGLE.replace('B = ["y"]', "B = { direction = [3.0, 4.0] }")
    model = read_case(write_files({"case.toml": text}))
    P, x_C = 10.0, 2.0
    R_B = P * x_C / (4.0 * 0.8)
    result = solve_global(model)
    assert result.reactions[2, 0] == pytest.approx(R_B, rel=1e-12)
    vectors = result.reaction_vectors(model, "dead")
    assert vectors["B"] == pytest.approx([0.6 * R_B, 0.8 * R_B], rel=1e-12)
    assert vectors["A"] == pytest.approx([-0.6 * R_B, P - 0.8 * R_B], rel=1e-12)


STIFF = """\
[units]
length = "mm"
force = "kN"
area = "mm2"
modulus = "GPa"

[stiffness]
A = 1000.0
E = 200.0

[joints]
A = [0.0, 0.0]
B = [4000.0, 0.0]
C = [2000.0, 3000.0]

[members]
AB = ["A", "B"]
BC = { ends = ["B", "C"], EA = 5.0e4 }
CA = { ends = ["C", "A"], A = 2.5, E = 10.0 }

[supports]
A = ["x", "y"]
B = ["y"]

[loads.dead]
C = [0.0, -10.0]
"""


def pint_ea(area: str, modulus: str, force: str) -> float:
    return float((ureg.Quantity(area) * ureg.Quantity(modulus)).to(force).magnitude)


def test_member_stiffness_from_ea_and_from_area_and_modulus(write_files):
    """EA from A and E is A*E in the case's force unit (pint gives the product's conversion)."""
    model = read_case(write_files({"case.toml": STIFF}))
    ea = {m.id: m.EA for m in model.members}
    assert ea["AB"] == pytest.approx(
        pint_ea("1000 mm**2", "200 GPa", "kN"), rel=RTOL
    )  # [stiffness] default
    assert ea["BC"] == 5.0e4  # its own EA wins over the default
    assert ea["CA"] == pytest.approx(pint_ea("2.5 mm**2", "10 GPa", "kN"), rel=RTOL)
    assert model.has_stiffness


@pytest.mark.parametrize(
    ("area", "modulus", "force", "pint_area", "pint_modulus"),
    [
        ("in2", "ksi", "kip", "inch**2", "ksi"),
        ("cm2", "N/mm2", "N", "cm**2", "N/mm**2"),
        ("m2", "kPa", "MN", "m**2", "kPa"),
        ("ft2", "psi", "lbf", "foot**2", "psi"),
    ],
)
def test_area_modulus_units_against_pint(
    write_files, area, modulus, force, pint_area, pint_modulus
):
    text = (
        STIFF.replace('"mm2"', f'"{area}"')
        .replace('"GPa"', f'"{modulus}"')
        .replace('force = "kN"', f'force = "{force}"')
    )
    model = read_case(write_files({"case.toml": text}))
    expected = pint_ea(f"1000 {pint_area}", f"200 {pint_modulus}", force)
    assert model.members[0].EA == pytest.approx(expected, rel=RTOL)


def test_stiffness_default_as_ea(write_files):
    text = STIFF.replace("[stiffness]\nA = 1000.0\nE = 200.0", "[stiffness]\nEA = 7.0e4")
    model = read_case(write_files({"case.toml": text}))
    assert [m.EA for m in model.members][:2] == [7.0e4, 5.0e4]


def test_combinations_superpose_load_cases(write_files):
    text = (
        TRIANGLE
        + '\n[loads.snow]\nC = [1.0, -4.0]\nB = [0.5, 0.0]\n\n[combinations]\n"ULS-1" = { dead = '
        '1.35, snow = 1.5 }\n"W" = { snow = -1.0 }\n'
    )
    model = read_case(write_files({"case.toml": text}))
    assert model.load_names == ["dead", "snow", "ULS-1", "W"]
    assert dict(model.combinations[0].factors) == {"dead": 1.35, "snow": 1.5}
    F = model.load_matrix()
    np.testing.assert_allclose(F[:, 2], 1.35 * F[:, 0] + 1.5 * F[:, 1], rtol=RTOL)
    np.testing.assert_allclose(F[:, 3], -F[:, 1], rtol=RTOL)
    C = model.combination_matrix()
    np.testing.assert_allclose(C, [[1, 0, 1.35, 0], [0, 1, 1.5, -1]], rtol=RTOL)


# -- CSV tables ---------------------------------------------------------------------------------
CSV_CASE = """\
title = "csv tables"
joints = "joints.csv"
members = "members.csv"
supports = "supports.csv"
loads = "loads.csv"

[units]
length = "m"
force = "kN"
"""


def pratt_csv_files(case: dict) -> dict[str, str]:
    joints = "id,x,y\n" + "".join(f"{j},{x!r},{y!r}\n" for j, (x, y) in case["joints"].items())
    members = "id,start,end,ea\n" + "".join(
        f"{m},{a},{b},\n" for m, (a, b) in case["members"].items()
    )
    supports = "joint,directions\n" + "".join(
        f"{j},{' '.join(ax)}\n" for j, ax in case["supports"].items()
    )
    loads = "case,joint,fx,fy\n" + "".join(
        f"{name},{j},{fx!r},{fy!r}\n"
        for name, table in case["loads"].items()
        for j, (fx, fy) in table.items()
    )
    return {
        "case.toml": CSV_CASE,
        "joints.csv": joints,
        "members.csv": members,
        "supports.csv": supports,
        "loads.csv": loads,
    }


def test_csv_tables_read_like_inline_tables(write_files, tmp_path):
    """The same 6-panel Pratt written inline and as CSV tables gives the same model and forces."""
    case = pratt(6)
    from_csv = read_case(write_files(pratt_csv_files(case)))
    inline = read_case(write_case(tmp_path, case, "inline.toml"))
    assert from_csv.joints == inline.joints
    assert from_csv.members == inline.members
    assert from_csv.reactions == inline.reactions
    assert [dict(c.loads) for c in from_csv.cases] == [dict(c.loads) for c in inline.cases]
    np.testing.assert_allclose(
        solve_global(from_csv).member_forces, solve_global(inline).member_forces, rtol=RTOL
    )


@pytest.mark.parametrize("layout", ["plain", "padded", "quoted", "no-break-space"])
def test_bulk_csv_reader_matches_row_by_row_reader(write_files, monkeypatch, layout):
    """Clean tables are read in bulk (pandas, arrays handed to the Model); the careful row reader
    must give the same model, arrays included, however the cells are padded or quoted and
    whatever the row order. The bulk reader must really have read them."""
    import verify.io.case as case_module

    monkeypatch.setattr(case_module, "BULK_MIN_ROWS", 0)  # small tables too go to the bulk reader
    files = pratt_csv_files(pratt(6))
    for name in ("joints.csv", "members.csv", "loads.csv"):
        header, *rows = files[name].splitlines()
        rows = rows[::-1]  # row order is not joint order
        first, rest = zip(*(row.split(",", 1) for row in rows), strict=True)
        label = {"plain": "{}", "padded": " {} ", "quoted": '" {} "', "no-break-space": "{}\u00a0"}[
            layout
        ]
        rows = [
            label.format(a) + ("\t," if layout == "padded" else ",") + b
            for a, b in zip(first, rest, strict=True)
        ]
        files[name] = "\n".join([header, *rows]) + "\n"
    original = case_module._clean_frame
    bulk_reads: list[str] = []

    def counted(*args):
        found = original(*args)
        if found is not None:
            bulk_reads.append(args[2])
        return found

    monkeypatch.setattr(case_module, "_clean_frame", counted)
    # The pandas reader is held here; the loads cut from bytes by tests/test_case_scale_loads.py.
    monkeypatch.setattr(case_module, "_plain_loads", lambda *args: False)
    bulk = read_case(write_files(files))
    assert sorted(bulk_reads) == ["joints.csv", "loads.csv", "members.csv"]
    monkeypatch.setattr(case_module, "_clean_frame", lambda *args: None)
    careful = read_case(write_files(files))
    assert bulk.joints == careful.joints and bulk.members == careful.members
    assert [j.id for j in bulk.joints][:2] == ["U5", "U4"]  # ids stripped, row order kept
    assert [dict(c.loads) for c in bulk.cases] == [dict(c.loads) for c in careful.cases]
    np.testing.assert_array_equal(bulk.xyz, careful.xyz)
    np.testing.assert_array_equal(bulk.ends_index, careful.ends_index)
    np.testing.assert_array_equal(bulk.unit_vectors, careful.unit_vectors)


def test_bulk_csv_reader_leaves_rows_longer_than_the_header_to_the_careful_reader(
    write_files, monkeypatch
):
    """Every row one field too long: pandas would quietly take the first column as an index."""
    import verify.io.case as case_module

    monkeypatch.setattr(case_module, "BULK_MIN_ROWS", 0)
    files = pratt_csv_files(pratt(6))
    files["loads.csv"] = "case,joint,fx,fy\n" + "".join(f"P,{j},0,-12,5\n" for j in ("L1", "L2"))
    with pytest.raises(InputError) as info:
        read_case(write_files(files))
    assert "row has 5 fields, the header has 4" in info.value.render()


def test_toml_writer_round_trip(tmp_path):
    """The test helper's TOML writer gives back the same model as building from the dict."""
    case = pratt(4)
    assert read_case(write_case(tmp_path, case)).members == make_model(case).members
    assert '[loads."P"]' in to_toml(case)


def test_csv_ids_stay_strings_and_optional_columns(write_files):
    files = {
        "case.toml": CSV_CASE,
        "joints.csv": "id,x,y\n007,0,0\n1E1,4,0\nC,2,3\n",
        "members.csv": "ID,Start,End,EA\nm1,007,1E1,\n0010,1E1,C,5e5\nm3,C,007,\n",
        "supports.csv": "joint,directions,nx,ny\n007,x y,,\n1E1,,3,4\n",
        "loads.csv": "case,joint,fx,fy\ndead,C,0,-10\nlive,1E1,1.5,-2\nlive,C,0.0,-1e1\n",
    }
    model = read_case(write_files(files))
    assert model.joint_ids == ["007", "1E1", "C"]
    assert model.member_ids == ["m1", "0010", "m3"]
    assert [m.EA for m in model.members] == [None, 5e5, None]
    assert [(r.joint, r.axis) for r in model.reactions] == [
        ("007", "x"),
        ("007", "y"),
        ("1E1", "n"),
    ]
    assert model.reactions[2].direction == pytest.approx((0.6, 0.8), rel=RTOL)
    assert model.load_names == ["dead", "live"]
    assert dict(model.cases[1].loads) == {"1E1": (1.5, -2.0), "C": (0.0, -10.0)}


def test_csv_one_file_per_load_case(write_files):
    text = (
        CSV_CASE.replace('loads = "loads.csv"\n', "")
        + '\n[loads]\ndead = "dead.csv"\nwind = "wind.csv"\n'
    )
    files = pratt_csv_files(pratt(4))
    files.update(
        {
            "case.toml": text,
            "dead.csv": "joint,fx,fy\nL1,0,-5\nL2,0,-5\n",
            "wind.csv": "joint,fx,fy\nU1,2.5,0\n",
        }
    )
    model = read_case(write_files(files))
    assert model.load_names == ["dead", "wind"]
    assert dict(model.cases[0].loads) == {"L1": (0.0, -5.0), "L2": (0.0, -5.0)}
    assert dict(model.cases[1].loads) == {"U1": (2.5, 0.0)}


def test_csv_supports_by_direction_components(write_files):
    files = pratt_csv_files(pratt(4))
    files["supports.csv"] = "joint,nx,ny\nL0,1,0\nL0,0,2\nL4,0,-1\n"
    model = read_case(write_files(files))
    assert [(r.joint, r.direction) for r in model.reactions] == [
        ("L0", (1.0, 0.0)),
        ("L0", (0.0, 1.0)),
        ("L4", (0.0, -1.0)),
    ]


# -- 3D ---------------------------------------------------------------------------------------
TRIPOD = """\
[units]
length = "m"
force = "kN"

[joints]
O = [0.0, 0.0, 4.0]
F1 = [3.0, 0.0, 0.0]
F2 = [-1.5, 2.598076211353316, 0.0]
F3 = [-1.5, -2.598076211353316, 0.0]

[members]
OF1 = ["O", "F1"]
OF2 = ["O", "F2"]
OF3 = ["O", "F3"]

[supports]
F1 = ["x", "y", "z"]
F2 = ["x", "y", "z"]
F3 = ["x", "y", "z"]

[loads.vertical]
O = [0.0, 0.0, -1.0]
"""


def test_3d_inline_case(write_files):
    model = read_case(write_files({"case.toml": TRIPOD}))
    assert model.dim == 3
    assert model.dofs == 12
    assert len(model.reactions) == 9
    assert model.cases[0].loads["O"] == (0.0, 0.0, -1.0)
    assert model.lengths == pytest.approx(
        [5.0, 5.0, 5.0], rel=1e-12
    )  # 3-4-5 legs (REFERENCES.md 3.4)


def test_3d_csv_tables(write_files):
    files = {
        "case.toml": CSV_CASE,
        "joints.csv": "id,x,y,z\nO,0,0,4\nF1,3,0,0\n"
        "F2,-1.5,2.598076211353316,0\nF3,-1.5,-2.598076211353316,0\n",
        "members.csv": "id,start,end\nOF1,O,F1\nOF2,O,F2\nOF3,O,F3\n",
        "supports.csv": "joint,directions\nF1,x y z\nF2,x y z\nF3,x y z\n",
        "loads.csv": "case,joint,fx,fy,fz\nvertical,O,0,0,-1\n",
    }
    from_csv = read_case(write_files(files))
    inline = make_model(
        truss_case(
            {
                "O": [0, 0, 4],
                "F1": [3, 0, 0],
                "F2": [-1.5, 2.598076211353316, 0],
                "F3": [-1.5, -2.598076211353316, 0],
            },
            [("O", "F1"), ("O", "F2"), ("O", "F3")],
            {f: ["x", "y", "z"] for f in ("F1", "F2", "F3")},
            {"vertical": {"O": [0, 0, -1]}},
        )
    )
    assert from_csv.dim == 3
    assert from_csv.joints == inline.joints
    assert from_csv.reactions == inline.reactions
    assert dict(from_csv.cases[0].loads) == dict(inline.cases[0].loads)


def test_area_unit_with_superscript_and_axis_letters_in_capitals(write_files):
    """'mm²' reads as mm2 and support directions 'X', ' Y' as x, y: spellings, not different units.
    EA = A E: 1000 mm² x 200 GPa = 1e-3 m² x 2e11 Pa = 2e8 N = 2e5 kN (arithmetic)."""
    text = """[units]
length = "m"
force = "kN"
area = "mm²"
modulus = "GPa"
[joints]
A = [0.0, 0.0]
B = [4.0, 0.0]
C = [2.0, 3.0]
[members]
AB = { ends = ["A", "B"], A = 1000.0, E = 200.0 }
BC = ["B", "C"]
CA = ["C", "A"]
[stiffness]
EA = 1.0e5
[supports]
A = ["X", "y"]
B = [" Y"]
[loads.P]
C = [0.0, -10.0]
"""
    model = read_case(write_files({"case.toml": text}))
    assert model.members[0].EA == pytest.approx(2e5, rel=1e-12)
    assert [r.label for r in model.reactions] == ["A.x", "A.y", "B.y"]
