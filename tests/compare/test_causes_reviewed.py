"""Regression cases from an adversarial review of the likely-cause search (tests/data/causes/).

Each folder holds an invented truss and a claims table made from a planted *model* mistake (or an
honest table), written to 2 or 3 significant figures as a consultant would; each test states what a
checker must read from it. The forces behind the claims came from the tool's own solve of the
variant model (checked against sympy and published values elsewhere in tests/).
"""

from __future__ import annotations

from pathlib import Path

import pytest

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import compare_claims
from verify.io.case import read_case
from verify.io.claims import read_claims

DATA = Path(__file__).resolve().parent.parent / "data" / "causes"


def review_of(name: str):
    model = read_case(DATA / name / "case.toml")
    return compare_claims(analyse(model), read_claims(DATA / name / "claims.csv", model))


def causes(review):
    return [f.variant for f in review.findings if f.kind == "likely-cause"]


@pytest.mark.parametrize("name", ["honest_combo_fit", "kip_steps"])
def test_honest_tables_get_no_cause(name):
    """A combination made from the table's own rounded columns and rounded again; a table in kip
    rounded to 5 kip: rounding, never another factor or 'wind as 0'."""
    assert causes(review_of(name)) == []


def test_one_chords_dead_loads_moved_up_is_named_as_such():
    (cause,) = causes(review_of("dead_all_on_top"))
    assert (
        cause.startswith("the 'dead' loads applied at U1")
        and "(the joints directly above) instead of L1" in cause
    )


def test_load_moved_onto_a_loaded_neighbour():
    (cause,) = causes(review_of("load_moved_to_loaded_neighbour"))
    assert cause.startswith(
        "the 'traffic' load at L3 applied at L2 instead (which then carries 80 instead of 40)"
    )


def test_two_loads_left_out_read_off_the_loads_the_claims_balance():
    (cause,) = causes(review_of("two_loads_left_out"))
    assert cause == "the 'traffic' loads as the claims balance them: left out at L3, L6"


def test_a_reversed_load_case_is_a_cause_not_a_sign_convention():
    review = review_of("wind_reversed")
    assert causes(review) == [
        "the 'wind' loads applied in the opposite direction (suction for pressure, uplift for down)"
    ]
    assert not [f for f in review.findings if f.kind == "table-sign-convention"]


def test_a_sign_flip_on_a_symmetric_truss_is_not_a_copy():
    review = review_of("signflip_as_copy")
    assert causes(review) == [] and [
        f.members for f in review.findings if f.kind == "sign-flip"
    ] == [("U1U2",)]


def test_combination_factor_named_on_an_indeterminate_truss():
    (cause,) = causes(review_of("indet_factor"))
    assert cause == "'ULS' taking 1.5 × dead instead of 1.35 × dead"


def test_an_added_restraint_explains_every_column():
    review = review_of("roller_as_pin")
    (cause,) = [f for f in review.findings if f.kind == "likely-cause"]
    assert cause.unexplained == 0 and "L8 restrained along x as well" in cause.variant


def test_a_factor_of_1_35_is_found_as_such_at_two_figures():
    (cause,) = causes(review_of("factor_2sf"))
    assert cause == "'ULS' taking 1.35 × traffic instead of 1.5 × traffic"
