"""A claims column that names no load of the model but holds a combination of its load cases:
the finding says the factors and the case-file line that has the column checked.

The planted mistake is the model's: the calc defines a combination ('ULS-B' = 1.2 dead + 1.6
traffic, factors of common practice) that the case file lacks (it has 'ULS' = 1.35 dead + 1.5
traffic). Claims are the forces of the
calc's model (our global solve, itself held to sympy and published examples in
tests/test_sympy_oracle.py and tests/reference) rounded to 3 significant figures. The honest
check: the line the finding suggests, added to the case, makes the same table agree.
"""

from __future__ import annotations

import copy
import re
import tomllib

from claimsgen import round_sig, table
from test_causes import bridge
from trussgen import make_model

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims


def _claims(case, columns):
    analysis = analyse(make_model(case))
    forces = analysis.global_.member_forces
    names = analysis.model.load_names
    return table(
        {
            shown: {
                member: round_sig(float(forces[i, names.index(load)]))
                for i, member in enumerate(analysis.model.member_ids)
            }
            for shown, load in columns.items()
        }
    )


def _mismatch(review):
    return next(f for f in review.findings if f.kind == "case-mismatch")


def test_a_combination_the_case_lacks_is_named_with_its_factors_and_line():
    calc = bridge()
    calc["combinations"]["ULS-B"] = {"dead": 1.2, "traffic": 1.6}
    claims = _claims(calc, {"dead": "dead", "traffic": "traffic", "ULS-B": "ULS-B"})
    ours = bridge()  # the case file: no 'ULS-B'
    review = compare_claims(analyse(make_model(ours)), claims)
    finding = _mismatch(review)
    assert "its values are 1.6 x traffic + 1.2 x dead" in finding.detail
    line = re.search(r"\[combinations\] in the case file (.+)$", finding.detail).group(1)
    added = tomllib.loads(line)
    assert added == {"ULS-B": {"dead": 1.2, "traffic": 1.6}}
    mended = copy.deepcopy(ours)
    mended["combinations"].update(added)
    assert compare_claims(analyse(make_model(mended)), claims).verdict is Verdict.AGREES


def test_a_column_that_is_no_combination_gets_no_factors():
    """An unnamed column of one case's forces with every tenth value wrong fits no combination
    well enough to name (and a column matching one case is mapped to it, not fitted)."""
    calc = bridge()
    claims = _claims(calc, {"dead": "dead", "Other": "traffic"})
    garbled = table(
        {
            column: {
                v.member: (v.value * (1.7 if k % 4 == 0 and column == "Other" else 1.0))
                for k, v in enumerate(claims.values)
                if v.column == column
            }
            for column in ("dead", "Other")
        }
    )
    review = compare_claims(analyse(make_model(bridge())), garbled)
    details = " ".join(f.detail for f in review.findings if f.kind == "case-mismatch")
    assert "its values are" not in details


def test_too_few_distinct_claims_to_tell_a_fit_from_a_coincidence_get_no_factors():
    """The bundled sign bracket has two distinct non-zero member rows for its two cases: any
    values fit some factors exactly, so none are offered (arbitrary values planted)."""
    from pathlib import Path

    from verify.io.case import read_case

    root = Path(__file__).resolve().parents[2]
    model = read_case(str(root / "cases" / "sign-bracket" / "case.toml"))
    analysis = analyse(model)
    # DA and EA carry the same forces, as do DB and EC; DC none; DE left blank, as a table would.
    arbitrary = {"DA": 3.7, "DB": 1.2, "DC": 0.0, "EA": 3.7, "EC": 1.2}
    assert set(arbitrary) <= set(analysis.model.member_ids)
    review = compare_claims(analysis, table({"ULS-B": arbitrary}))
    details = " ".join(f.detail for f in review.findings if f.kind == "case-mismatch")
    assert "ULS-B" in details and "its values are" not in details


def test_a_combination_written_in_the_other_sign_is_left_to_the_sign_diagnoses():
    calc = bridge()
    calc["combinations"]["ULS-B"] = {"dead": 1.2, "traffic": 1.6}
    claims = _claims(calc, {"dead": "dead", "traffic": "traffic", "ULS-B": "ULS-B"})
    reversed_claims = table(
        {
            column: {v.member: (-v.value if column == "ULS-B" else v.value) for v in claims.values
                     if v.column == column}
            for column in ("dead", "traffic", "ULS-B")
        }
    )  # fmt: skip
    review = compare_claims(analyse(make_model(bridge())), reversed_claims)
    assert "its values are" not in _mismatch(review).detail
