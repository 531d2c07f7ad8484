"""A model mistake must not be read as a unit slip by coincidence.

Planted mistake: a 4-panel Pratt truss (invented: 10 m span, 2 m deep) with loads of 5 kN at L1
and 22 kN at L2; the claims come from the same truss with the L2 load left out, rounded to 3
significant figures. The members beyond L2 then carry forces set by the right-hand reaction
alone, 1.25 kN against the true 12.25 kN, and 1.25 x 9.80665 = 12.26 kN: about half the column
agrees once read in tonne-force; over 8 panels, 22 of 27 members do. That is a coincidence, not
a unit: read in tonne-force the claims balance the loads at fewer joints than as written, and a
slip of unit would balance them better (statics decides the reading). Hypothesis found this
(tests/compare/test_causes_properties.py); before the mend the table or the column was read in
tonne-force and the load left out was never named.

Reference values: our global solve of the variant model, itself checked against sympy's truss
module and published examples (tests/test_sympy_oracle.py, tests/reference).
"""

from __future__ import annotations

import copy

import pytest
from claimsgen import round_sig, table
from trussgen import make_model, pratt

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims


def _case(with_combination: bool, panels: int = 4) -> dict:
    case = pratt(panels, d=2.5, h=2.0, case="A")
    case["loads"]["A"] = {"L1": [0.0, -5.0], "L2": [0.0, -22.0]}
    if with_combination:
        case["loads"]["B"] = {"U1": [0.0, -1.0]}
        case["combinations"] = {"C": {"A": 1.2, "B": 1.5}}
    return case


def _claims(case: dict) -> dict[str, dict[str, float]]:
    ref = analyse(make_model(case)).reference
    model = make_model(case)
    largest = {
        name: float(abs(ref.member_forces[:, ref.column(name)]).max()) for name in model.load_names
    }
    return {
        name: {
            m: (
                0.0
                if abs(v := float(ref.member_forces[i, ref.column(name)])) < 1e-9 * largest[name]
                else round_sig(v, 3)
            )
            for i, m in enumerate(model.member_ids)
        }
        for name in model.load_names
    }


def _review_of_left_out_load(with_combination: bool, panels: int):
    case = _case(with_combination, panels)
    variant = copy.deepcopy(case)
    del variant["loads"]["A"]["L2"]
    return compare_claims(analyse(make_model(case)), table(_claims(variant)))


@pytest.mark.parametrize("panels", [4, 8])
def test_a_load_left_out_is_not_read_as_tonne_force(panels):
    review = _review_of_left_out_load(with_combination=False, panels=panels)
    kinds = {f.kind for f in review.findings}
    assert "unit-scale" not in kinds, [f.detail for f in review.findings]
    assert review.convention.scale == 1.0
    causes = [f for f in review.findings if f.kind == "likely-cause"]
    assert len(causes) == 1 and "'A' load at L2 (22) left out" in causes[0].detail, [
        f.detail for f in review.findings
    ]


@pytest.mark.parametrize("panels", [4, 8])
def test_a_load_left_out_does_not_make_its_column_read_in_another_unit(panels):
    """With a second load case (unchanged, so it agrees) and a combination, the column of the
    mistaken case must not be read in tonne-force against the rest, nor the agreeing column in
    kN against a tonne-force table."""
    review = _review_of_left_out_load(with_combination=True, panels=panels)
    assert review.convention.column_readings == ()
    assert review.convention.scale == 1.0
    assert "unit-scale" not in {f.kind for f in review.findings}
    causes = [f for f in review.findings if f.kind == "likely-cause"]
    assert any("'A' load at L2 (22) left out" in f.detail for f in causes), [
        f.detail for f in review.findings
    ]


@pytest.mark.parametrize("panels", [4, 8])
def test_the_honest_table_of_the_same_truss_agrees(panels):
    for with_combination in (False, True):
        case = _case(with_combination, panels)
        review = compare_claims(analyse(make_model(case)), table(_claims(case)))
        assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_a_real_unit_slip_in_one_column_is_still_read():
    """The honest forces of case 'B' written in newtons beside kN columns: every value of that
    column agrees once read in N, so the column reading stands."""
    case = _case(with_combination=True)
    claims = _claims(case)
    claims["B"] = {m: v * 1000.0 for m, v in claims["B"].items()}
    review = compare_claims(analyse(make_model(case)), table(claims))
    assert any("column 'B'" in r for r in review.convention.column_readings), (
        review.convention.column_readings
    )
