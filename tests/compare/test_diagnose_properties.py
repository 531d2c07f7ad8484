"""Property tests: claims made from the true forces, perturbed in one known way, give exactly
the right finding (hypothesis-generated trusses and loads; the truth is our global solve, itself
checked against sympy and published values in tests/test_sympy_oracle.py and tests/reference)."""

from __future__ import annotations

import math

import numpy as np
from claimsgen import table, true_claims
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from trussgen import howe, make_model, pratt

from verify.analysis.pipeline import analyse
from verify.compare.convention import possible_factors
from verify.compare.diagnose import SignMode, Verdict, compare_claims
from verify.compare.tolerances import rounding_allowance
from verify.units import Dimension, lookup_unit

SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def loaded_trusses(draw):
    family = draw(st.sampled_from([pratt, howe]))
    panels = draw(st.integers(1, 6)) * 2
    depth = draw(st.floats(1.0, 5.0))
    case = family(panels, d=draw(st.floats(2.0, 6.0)), h=depth, case="LC1")
    loads = {}
    for joint in case["joints"]:
        if draw(st.booleans()):
            loads[joint] = [draw(st.integers(-20, 20)) * 1.0, draw(st.integers(-60, 0)) * 1.0]
    assume(any(v != [0.0, 0.0] for v in loads.values()))
    case["loads"] = {"LC1": loads}
    analysis = analyse(make_model(case))
    return analysis


def _kinds(review):
    return sorted(f.kind for f in review.findings)


def _informative(analysis):
    forces = analysis.reference.member_forces[:, 0]
    # The comparison's yardstick for "near zero" is the largest member force or reaction.
    big = max(np.abs(forces).max(), np.abs(analysis.reference.reactions[:, 0]).max())
    if big < 1e-6 * np.abs(analysis.model.load_matrix()).max():
        return []  # every member idle (loads straight over the supports)
    return [
        m for m, f in zip(analysis.model.member_ids, forces, strict=True) if abs(f) > 0.05 * big
    ]


@SETTINGS
@given(loaded_trusses())
def test_true_claims_agree(analysis):
    assert compare_claims(analysis, table(true_claims(analysis))).verdict is Verdict.AGREES


@SETTINGS
@given(loaded_trusses())
def test_negated_table_is_one_convention_finding_never_sign_flips(analysis):
    assume(len(_informative(analysis)) >= 3)
    flipped = {c: {m: -v for m, v in ms.items()} for c, ms in true_claims(analysis).items()}
    review = compare_claims(analysis, table(flipped), sign=SignMode.AUTO)
    assert _kinds(review) == ["table-sign-convention"]
    assert review.verdict is Verdict.AGREES


@SETTINGS
# The slips a kN table can really have: values in N, MN, kip, lbf or tonne-force (the models are in
# kN).
@given(
    loaded_trusses(),
    st.sampled_from(sorted(possible_factors(lookup_unit("kN", Dimension.FORCE), ratios=True))),
)
def test_scaled_table_is_one_unit_finding(analysis, factor):
    assume(len(_informative(analysis)) >= 3)
    scaled = {c: {m: v * factor for m, v in ms.items()} for c, ms in true_claims(analysis).items()}
    review = compare_claims(analysis, table(scaled))
    assert _kinds(review) == ["unit-scale"]
    assert (
        review.convention.scale * factor == np.float64(1.0)
        or abs(review.convention.scale * factor - 1) < 1e-9
    )


@SETTINGS
@given(loaded_trusses(), st.data())
def test_swapped_pair_is_found(analysis, data):
    members = _informative(analysis)
    assume(len(members) >= 2)
    a, b = data.draw(st.sampled_from(members)), data.draw(st.sampled_from(members))
    claims = true_claims(analysis)
    col = claims["LC1"]
    assume(a != b and abs(col[a] - col[b]) > 0.05 * max(abs(col[a]), abs(col[b])))
    # A value that reads as the other one honestly rounded ("2" for 2.4) cannot show a swap.
    assume(
        abs(col[a] - col[b]) > max(rounding_allowance(col[a], 1.0), rounding_allowance(col[b], 1.0))
    )
    col[a], col[b] = col[b], col[a]
    review = compare_claims(analysis, table(claims))
    assert "swapped-labels" in _kinds(review)
    assert set(review.findings[0].members) == {a, b} or any(
        set(f.members) == {a, b} for f in review.findings
    )
    assert all(f.kind in ("swapped-labels",) for f in review.findings)


@SETTINGS
@given(loaded_trusses(), st.data(), st.floats(0.04, 0.6))
def test_one_corrupted_member_is_a_value_mismatch(analysis, data, extra):
    members = _informative(analysis)
    assume(members)
    target = data.draw(st.sampled_from(members))
    claims = true_claims(analysis)
    true_value = claims["LC1"][target]
    claims["LC1"][target] *= 1 + extra
    # A corrupted value that lands on a round number ("13" for 12.5) reads as honest rounding to
    # that many decimals: indistinguishable from a correct claim, so not this property's case.
    assume(abs(claims["LC1"][target] - true_value) > rounding_allowance(claims["LC1"][target], 1.0))
    # A corrupted value that lands on another row's value (-2.66667 = 4/3 x -2 beside a member
    # carrying -8/3 on a regular truss) reads as copied from that row: a likely cause, rightly.
    corrupted = claims["LC1"][target]
    assume(
        not any(
            math.isclose(v, corrupted, rel_tol=1e-6)
            for m, v in claims["LC1"].items()
            if m != target
        )
    )
    review = compare_claims(analysis, table(claims))
    assert _kinds(review) == ["value-mismatch"], [f.detail for f in review.findings]
    assert review.findings[0].members == (target,)
