"""The calc sheets of the method of sections (verify/analysis/cut_sheets.py, exact.py) and their
drawing in the report (verify/report/calc_sheet_html.py).

References, named beside each check:
* sympy's own truss module (sympy.physics.continuum_mechanics.truss.Truss), an exact solver
  (REFERENCES.md 4): every value on every sheet, and every exact value, of the 6-panel Pratt with
  P = 10 and of a Pratt with 3-4-5 panels whose diagonals have irrational lengths.
* REFERENCES.md 3.2 (Pratt, P = 10, sympy's Truss results): U1U2 = -160/3 about joint L2.
* REFERENCES.md 3.1 (beam analogy, common practice): a chord's lever arm is the truss depth.
"""

from __future__ import annotations

import re
from collections import Counter

import pytest
import sympy
from sympy.physics.continuum_mechanics.truss import Truss
from trussgen import make_model, pratt

from verify.analysis import exact as ex
from verify.analysis.sections import MOMENTS, solve_sections
from verify.report.calc_sheet_html import sheet_html


def sympy_forces(model, load: float) -> dict[str, sympy.Expr]:
    """sympy's exact Truss solve of a Pratt from trussgen (integer coordinates, loads at L1..L5)."""
    truss = Truss()
    for j in model.joints:
        truss.add_node((j.id, sympy.nsimplify(j.coords[0]), sympy.nsimplify(j.coords[1])))
    for m in model.members:
        truss.add_member((m.id, m.start, m.end))
    loaded = sorted(
        {model.joints[j].id for j in range(len(model.joints)) if model.load_matrix()[2 * j + 1, 0]}
    )
    for joint in loaded:
        truss.apply_load((joint, sympy.nsimplify(load), 270))
    truss.apply_support(("L0", "pinned"), ("L6", "roller"))
    truss.solve()
    # sympy's numbers are tension-positive in every case measured (REFERENCES.md 4.3)
    return {m.id: sympy.nsimplify(truss.internal_forces[m.id]) for m in model.members}


def parse_exact(text: str) -> sympy.Expr:
    """Our one notation (-(45/8)·√41, 5/2 + (3/4)·√3) read back as a sympy number."""
    expr = re.sub(r"√(\d+)", r"sqrt(\1)", text.replace("·", "*"))
    return sympy.sympify(expr)


def all_sheets(model, load_name):
    solution = solve_sections(model)
    return solution, solution.calc_sheets(model).group(list(solution.cuts), load_name)


@pytest.mark.parametrize("panel", [(4.0, 3.0), (3.0, 2.4)], ids=["4x3", "3x2.4"])
def test_every_sheet_value_and_exact_value_equals_sympy(panel):
    """Each equation's result, each 'also gives' value and each exact value equal sympy's Truss."""
    d, h = panel
    model = make_model(pratt(load=10.0, d=d, h=h))
    expected = sympy_forces(model, 10.0)
    _, sheets = all_sheets(model, "P")
    seen = set()
    exact_count = 0
    for sheet in sheets:
        for eq in sheet.equations:
            seen.add(eq.target)
            assert eq.value == pytest.approx(float(expected[eq.target]), abs=1e-9), eq.target
            if eq.exact is not None:
                exact_count += 1
                assert sympy.simplify(parse_exact(eq.exact) - expected[eq.target]) == 0, (
                    eq.target,
                    eq.exact,
                    expected[eq.target],
                )
            # the equation as printed balances: coefficient·N + rest = 0
            assert eq.coefficient * eq.value + eq.rest == pytest.approx(0.0, abs=1e-9)
        for member, value, _ in sheet.also:
            seen.add(member)
            assert value == pytest.approx(float(expected[member]), abs=1e-9), member
    assert seen == set(model.member_ids)
    assert exact_count >= len(model.members) // 2  # the nice geometry gives most of them exactly


def test_pratt_chord_sheet_about_joint_l2():
    """REFERENCES.md 3.2: U1U2 = -160/3 (P = 10) by moments about joint L2; lever arm = depth 3
    (REFERENCES.md 3.1), and the sheet for U1U2 also holds L1L2 and U1L2 (one free body)."""
    model = make_model(pratt(load=10.0))
    solution = solve_sections(model)
    sheet = solution.calc_sheets(model).for_members(["U1U2"], "P").sheets[0]
    (eq,) = [e for e in sheet.equations if e.target == "U1U2"]
    assert eq.method == MOMENTS and eq.moment_joint == "L2"
    assert eq.exact == "-160/3" and eq.tc == "C"
    (term,) = [t for t in eq.terms if t.kind == "unknown"]
    assert abs(term.arm) == pytest.approx(3.0)
    assert set(sheet.solves) == {"U1U2", "L1L2", "U1L2"}
    html = sheet_html(model, sheet, "t")
    # drawn: the moment point marked and named, the chord's lever arm dimensioned (3 m), the
    # equation set with subscripts, the exact value in the one notation
    assert 'class="mpoint"' in html and ">O1<" in html
    assert re.search(r'<text class="dlabel"[^>]*>3 m</text>', html)
    assert "N<sub>U1U2</sub> = -53.3333 kN (C); exact -160/3 kN" in html


def test_each_free_body_appears_once():
    """Cuts of several members through one free body give one sheet (and one drawing); every
    member is solved on exactly one sheet."""
    model = make_model(pratt(load=10.0))
    solution, sheets = all_sheets(model, "P")
    bodies = {
        (frozenset(zip(c.cut_members, c.kept_ends, strict=True)), c.kept_size)
        for c in solution.cuts
    }
    assert len(sheets) == len(bodies) < len(solution.cuts)
    counts = Counter(m for s in sheets for m in (e.target for e in s.equations))
    assert all(n == 1 for n in counts.values())
    html = "".join(sheet_html(model, s, f"t{k}") for k, s in enumerate(sheets))
    assert html.count('class="freebody"') == len(bodies)
    assert "url(" not in html and "<script" not in html


def test_drawing_is_bounded_and_says_what_it_left_out():
    """A long truss: the free body drawing holds at most MAX_DRAWN_MEMBERS members, and the
    count of those left out is the kept side's member count minus those drawn."""
    from verify.analysis import cut_sheets

    model = make_model(pratt(load=1.0, panels=240))
    solution = solve_sections(model)
    book = solution.calc_sheets(model)
    middle = "U119U120"
    sheet = book.for_members([middle], "P").sheets[0]
    drawn = len(sheet.drawing.members)
    assert drawn <= cut_sheets.MAX_DRAWN_MEMBERS and sheet.drawing.omitted_members > 0
    kept = set(solution.cut_for(middle).kept_joints)
    on_side = sum(1 for m in model.members if m.start in kept and m.end in kept)
    assert drawn + sheet.drawing.omitted_members == on_side


def test_exact_notation_and_arithmetic():
    """√ and fractions, one notation; the field arithmetic checked against sympy."""
    a = ex.Surd.of({41: ex.Fraction(-45, 8)})
    assert a.text() == "-(45/8)·√41"
    b = ex.Surd.rational(ex.Fraction(5, 2)) + ex.Surd.of({3: ex.Fraction(3, 4)})
    assert b.text() == "5/2 + (3/4)·√3"
    assert ex.Surd.root(ex.Fraction(1476, 100)).text() == "(3/5)·√41"
    product = (b * b) / ex.Surd.of({3: ex.Fraction(2)})
    want = (sympy.Rational(5, 2) + sympy.Rational(3, 4) * sympy.sqrt(3)) ** 2 / (2 * sympy.sqrt(3))
    assert sympy.simplify(parse_exact(product.text()) - want) == 0
    with pytest.raises(ex.NotExact):
        ex.surd_of(3.141592653589793)


def test_combination_columns_give_decimals_only():
    """A combination of load cases: no exact values on its sheets, reactions or member table (an
    exact form of factored sums says nothing the decimals do not), while the cases keep theirs."""
    from pathlib import Path

    from verify.analysis.pipeline import analyse
    from verify.io.case import read_case

    model = read_case(Path(__file__).resolve().parents[1] / "cases/canal-footbridge/case.toml")
    combination = model.combinations[0].name
    solution = solve_sections(model)
    book = solution.calc_sheets(model)
    cuts = list(solution.cuts)
    combined = book.group(cuts, combination)
    assert all(s.combination and all(e.exact is None for e in s.equations) for s in combined)
    assert all(exact is None for _, _, exact in book.reactions(combination).reactions)
    assert book.exact_members(analyse(model).joints, combination) is None
    case = book.group(cuts, model.cases[0].name)
    assert any(e.exact is not None for s in case for e in s.equations)


def test_one_notation_for_exact_values_in_every_golden_report():
    """Exact values are written with √ and fractions everywhere: never as code (sqrt, *)."""
    from pathlib import Path

    golden = Path(__file__).resolve().parent / "golden"
    for path in golden.glob("*.md"):
        for line in path.read_text(encoding="utf-8").splitlines():
            if "exact" in line and "exact:" in line:
                value = line.split("exact:", 1)[1]
                assert "sqrt" not in value and "*" not in value, (path.name, line)


def test_tripod_sheet_exact_values_3d():
    """REFERENCES.md 3.4 tripod (legs from (0, 0, 4) to a circle of radius 3, feet at 120°):
    -5P/12 per leg under a vertical P; -10P/9, +5P/9, +5P/9 under a horizontal P along +x. With
    P = 36 the sheet's exact values must be exactly -15, and -40, 20, 20 (the force directions
    are unit vectors with roots of no small integer: the exact route scales them to ratios)."""
    import math

    from trussgen import truss_case

    joints = {"O": [0.0, 0.0, 4.0]}
    for k in range(3):
        a = 2 * math.pi * k / 3
        joints[f"F{k + 1}"] = [3 * math.cos(a), 3 * math.sin(a), 0.0]
    model = make_model(
        truss_case(
            joints,
            [("O", "F1"), ("O", "F2"), ("O", "F3")],
            {f"F{k}": ["x", "y", "z"] for k in (1, 2, 3)},
            {"vertical": {"O": [0.0, 0.0, -36.0]}, "horizontal": {"O": [36.0, 0.0, 0.0]}},
        )
    )
    solution = solve_sections(model)
    book = solution.calc_sheets(model)
    want = {
        "vertical": {"OF1": -15, "OF2": -15, "OF3": -15},
        "horizontal": {"OF1": -40, "OF2": 20, "OF3": 20},
    }
    for name, forces in want.items():
        (sheet,) = book.group(list(solution.cuts), name)  # the apex: one free body
        for eq in sheet.equations:
            assert eq.value == pytest.approx(forces[eq.target], abs=1e-9)
            assert eq.exact is not None and sympy.sympify(eq.exact) == forces[eq.target], (
                name,
                eq.target,
                eq.exact,
            )


@pytest.mark.parametrize("family", ["pratt", "bench-pratt"])
def test_cut_of_each_member_is_the_cut_that_names_it(family, tmp_path):
    """The sheets find a member's cut by member position (an integer array over the cuts); held to
    the lookup by name it replaced: the last cut whose target is the member, None for a member
    no cut solves (a member asked for by a wrong name too)."""
    if family == "pratt":
        model = make_model(pratt(8, d=3.0, h=2.5))
    else:
        import sys
        from pathlib import Path

        from verify.io.case import read_case

        sys.path.insert(0, str(Path(__file__).resolve().parents[1] / "bench"))
        import generate  # the benchmark's own scalable families

        model = read_case(generate.write_case(generate.build("pratt", 2000), tmp_path))
    solution = solve_sections(model)
    book = solution.calc_sheets(model)
    by_name = {c.target: k for k, c in enumerate(solution.cuts)}
    assert len(by_name) > 0
    for member in [*model.member_ids, "no-such-member"]:
        expected = by_name.get(member)
        got = book.cut_of(member)
        if expected is None:
            assert got is None
        else:
            assert got is not None and got.target == member
            assert got == solution.cuts[expected]
