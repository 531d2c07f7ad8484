"""The joint-by-joint calc as records, set as equations in the HTML report: each member found
once, with the force of an exact rational solve of the same truss (fractions.Fraction Gaussian
elimination of the joint equations, outside the project's solvers); the plain text the terminal
and Markdown print holds the same results."""

from __future__ import annotations

import re
import subprocess
import sys
from fractions import Fraction
from pathlib import Path

from trussgen import make_model, pratt

from verify.analysis.pipeline import analyse
from verify.report.joint_calc import joint_calc, render_html, render_text

MODEL = make_model(pratt(4, d=2.0, h=1.0, load=3.0))  # diagonals of slope 1:2


def _exact_member_forces() -> dict[str, Fraction]:
    """Joint equilibrium solved with Fractions in force densities q = t / L, whose
    coefficients are the members' whole-number coordinate differences; t = q L after."""
    model = MODEL
    d = model.dim
    b = len(model.members)
    unknowns = b + len(model.reactions)
    rows = [[Fraction(0)] * (unknowns + 1) for _ in range(len(model.joints) * d)]
    xyz = [[Fraction(c).limit_denominator(1000) for c in p] for p in model.xyz.tolist()]
    for i, (a, e) in enumerate(model.ends_index.tolist()):
        delta = [xyz[e][k] - xyz[a][k] for k in range(d)]
        for k in range(d):  # tension pulls each end joint toward the other end
            rows[a * d + k][i] += delta[k]
            rows[e * d + k][i] -= delta[k]
    for r, reaction in enumerate(model.reactions):
        j = model.joint_index[reaction.joint]
        for k in range(d):
            direction = Fraction(float(reaction.direction[k])).limit_denominator(1000)
            rows[j * d + k][b + r] += direction
    loads = model.load_matrix()[:, 0]
    for n in range(len(rows)):
        rows[n][-1] = -Fraction(float(loads[n])).limit_denominator(1000)
    # Gauss-Jordan elimination over the rationals.
    pivot_row = 0
    where = {}
    for col in range(unknowns):
        found = next((n for n in range(pivot_row, len(rows)) if rows[n][col] != 0), None)
        if found is None:
            continue
        rows[pivot_row], rows[found] = rows[found], rows[pivot_row]
        p = rows[pivot_row][col]
        rows[pivot_row] = [v / p for v in rows[pivot_row]]
        for n in range(len(rows)):
            if n != pivot_row and rows[n][col] != 0:
                f = rows[n][col]
                rows[n] = [v - f * w for v, w in zip(rows[n], rows[pivot_row], strict=True)]
        where[col] = pivot_row
        pivot_row += 1
    return {m: rows[where[i]][-1] for i, m in enumerate(model.member_ids)}  # densities q_i


def _lengths() -> dict[str, float]:
    return {m: float(length) for m, length in zip(MODEL.member_ids, MODEL.lengths, strict=True)}


def test_every_member_is_found_once_with_the_exact_force() -> None:
    analysis = analyse(MODEL)
    assert analysis.joints is not None
    calc = joint_calc(MODEL, analysis.joints, MODEL.load_names[0])
    found = [f for step in calc.steps for f in step.found if not f.reaction]
    assert sorted(f.name for f in found) == sorted(MODEL.member_ids)
    exact, lengths = _exact_member_forces(), _lengths()
    for f in found:
        assert abs(f.value - float(exact[f.name]) * lengths[f.name]) < 1e-9


def test_html_sets_the_equations_and_holds_the_text_results() -> None:
    analysis = analyse(MODEL)
    assert analysis.joints is not None
    calc = joint_calc(MODEL, analysis.joints, MODEL.load_names[0])
    page, text = render_html(calc), render_text(calc)
    assert "<pre" not in page and page.count('class="eq jstep"') == len(calc.steps)
    in_text = dict(re.findall(r"(\w+) = ([\d.]+ [TC])", text))
    in_html = dict(re.findall(r"N<sub>(\w+)</sub> = ([\d.]+ [TC])", page))
    assert in_text and in_text == in_html


def test_the_report_appendix_has_no_text_dump(tmp_path: Path) -> None:
    root = Path(__file__).resolve().parents[1]
    case = root / "cases" / "canal-footbridge"
    report = tmp_path / "r.html"
    done = subprocess.run(
        [sys.executable, "-m", "verify", "check", str(case), "--claims", str(case / "claims.csv")]
        + ["--report", str(report)],
        capture_output=True,
        text=True,
        cwd=root,
    )
    assert done.returncode == 1, done.stderr  # the demo's claims hold planted errors
    page = report.read_text()
    assert "<pre>" not in page and 'class="eq jstep"' in page
