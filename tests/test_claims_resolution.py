"""A column's resolution judged from its values: a table rounded to the nearest 0.5 kN (or 5 kN)
is allowed half that step, said in the tolerance line, while an error larger than the step still
shows. The honest tables are the recomputed forces rounded here with Python's round(); the step
expected is the one the test rounded to."""

from __future__ import annotations

from pathlib import Path

import pytest
from claimsgen import true_claims
from trussgen import make_model, pratt

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.io.claims import read_claims
from verify.io.claims.table import Resolution
from verify.report.review_text import render_review

LOAD = 7.3  # kN per panel point: forces with no round values
ANALYSIS = analyse(make_model(pratt(8, load=LOAD, case="dead")))
TRUE = true_claims(ANALYSIS)["dead"]


def _to_step(value: float, step: float) -> float:
    return round(value / step) * step


def _write(tmp_path: Path, values: dict[str, float], decimals: int) -> Path:
    path = tmp_path / "claims.csv"
    path.write_text(
        "Member,dead (kN)\n" + "".join(f"{m},{v:.{decimals}f}\n" for m, v in values.items())
    )
    return path


def test_a_column_rounded_to_half_a_kilonewton_is_judged_so(tmp_path: Path) -> None:
    """All values multiples of 0.5 written to one decimal: the column's step is 0.5 kN."""
    path = _write(tmp_path, {m: _to_step(v, 0.5) for m, v in TRUE.items()}, 1)
    table = read_claims(path, ANALYSIS.model)
    assert table.resolutions == (Resolution("dead", 0.5, "kN"),)


def test_an_honest_half_kilonewton_table_agrees_and_says_why(tmp_path: Path) -> None:
    """Rounded to 0.5 kN, several claims are off by more than the decimals' 0.05 allowance and
    more than 1 %, yet the table agrees; the tolerance line names the step."""
    rounded = {m: _to_step(v, 0.5) for m, v in TRUE.items()}
    off = [
        m
        for m, v in TRUE.items()
        if abs(rounded[m] - v) > max(0.05, 0.01 * abs(v), 1e-3 * max(map(abs, TRUE.values())))
    ]
    assert off, "the test table must include claims only the step explains"
    review = compare_claims(ANALYSIS, read_claims(_write(tmp_path, rounded, 1), ANALYSIS.model))
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]
    tolerance_line = next(
        line for line in render_review(review).splitlines() if line.startswith("Tolerance:")
    )
    assert "column 'dead' written to steps of 0.5 kN, so +-0.25 kN allowed" in tolerance_line


def test_an_error_larger_than_the_step_still_shows(tmp_path: Path) -> None:
    """One claim 1.5 steps away from its rounded value is a value mismatch on that member only."""
    rounded = {m: _to_step(v, 0.5) for m, v in TRUE.items()}
    wrong = max(TRUE, key=lambda m: abs(TRUE[m]))
    rounded[wrong] += 3 * 0.5  # 1.5 kN: three steps, so beyond half a step and beyond 1 %
    assert abs(rounded[wrong] - TRUE[wrong]) > max(0.25, 0.01 * abs(TRUE[wrong]))
    review = compare_claims(ANALYSIS, read_claims(_write(tmp_path, rounded, 1), ANALYSIS.model))
    assert review.verdict is Verdict.DISCREPANCIES
    accused = {m for f in review.findings if f.severity.value == "error" for m in f.members}
    assert accused == {wrong}


def test_a_five_kilonewton_step_in_whole_numbers(tmp_path: Path) -> None:
    """Whole numbers all multiples of 5 (some odd multiples): step 5 kN, allowance 2.5 kN."""
    scaled = {m: 10 * v for m, v in TRUE.items()}  # a heavier truss: forces of tens of kN
    path = _write(tmp_path, {m: _to_step(v, 5.0) for m, v in scaled.items()}, 0)
    assert read_claims(path, ANALYSIS.model).resolutions == (Resolution("dead", 5.0, "kN"),)


@pytest.mark.parametrize("decimals", [1, 2])
def test_ordinary_decimals_give_no_step(tmp_path: Path, decimals: int) -> None:
    """Values written to their decimals (not all on a coarser step) are left to the decimals."""
    path = _write(tmp_path, {m: round(v, decimals) for m, v in TRUE.items()}, decimals)
    assert read_claims(path, ANALYSIS.model).resolutions == ()
