"""Every finding kind: a case where it must be found and a near miss where it must not.

Reference forces come from the 6-panel Pratt of shared/REFERENCES.md 3.2 (values verified there
by two exact computations and against sympy's truss module); claims are made from them and then
perturbed in one known way.
"""

from __future__ import annotations

import pytest
from claimsgen import round_sig, table, true_claims
from trussgen import make_model, pratt, truss_case

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import SignMode, Verdict, compare_claims
from verify.compare.findings import Severity
from verify.io.claims import ClaimedValue, ClaimsTable

P = 10.0  # kN per bottom panel point


@pytest.fixture(scope="module")
def pratt_analysis():
    return analyse(make_model(pratt(6, load=P, case="dead")))


def kinds(review, severity=None):
    return sorted(f.kind for f in review.findings if severity is None or f.severity is severity)


def test_exact_claims_agree(pratt_analysis):
    review = compare_claims(pratt_analysis, table(true_claims(pratt_analysis)))
    assert review.verdict is Verdict.AGREES
    assert kinds(review) == []


def test_three_figure_rounding_is_never_flagged(pratt_analysis):
    rounded = {
        c: {m: round_sig(v, 3) for m, v in ms.items()}
        for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(
        pratt_analysis, table(rounded), sign=SignMode.TENSION_POSITIVE, unit="kN"
    )
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_published_value_is_checked(pratt_analysis):
    """U1U2 = -16P/3 (REFERENCES.md 3.2, Pratt table) claimed as printed agrees."""
    review = compare_claims(pratt_analysis, table({"dead": {"U1U2": -16 * P / 3}}))
    row = next(r for r in review.rows if r.id == "U1U2")
    assert row.status == "agrees"
    assert row.recomputed == pytest.approx(-16 * P / 3, rel=1e-12)


def test_whole_table_reversed_is_one_convention_finding(pratt_analysis):
    flipped = {c: {m: -v for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()}
    review = compare_claims(pratt_analysis, table(flipped), sign=SignMode.AUTO)
    assert kinds(review) == ["table-sign-convention"]
    assert review.convention.sign == "compression-positive" and review.convention.inferred
    assert review.verdict is Verdict.AGREES  # inferred, not contradicted


def test_stated_convention_contradicted_is_a_discrepancy(pratt_analysis):
    flipped = {c: {m: -v for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()}
    review = compare_claims(pratt_analysis, table(flipped), sign=SignMode.TENSION_POSITIVE)
    assert kinds(review) == ["table-sign-convention"]
    assert review.verdict is Verdict.DISCREPANCIES
    assert not any(f.kind == "sign-flip" for f in review.findings)


def test_stated_compression_positive_is_obeyed(pratt_analysis):
    flipped = {c: {m: -v for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()}
    review = compare_claims(pratt_analysis, table(flipped), sign=SignMode.COMPRESSION_POSITIVE)
    assert review.verdict is Verdict.AGREES and kinds(review) == []


def test_single_sign_flip(pratt_analysis):
    claims = true_claims(pratt_analysis)
    claims["dead"]["U1L2"] *= -1
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["sign-flip"]
    assert review.findings[0].members == ("U1L2",)


def test_whole_table_times_1000_is_one_unit_finding(pratt_analysis):
    scaled = {
        c: {m: v * 1000 for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(scaled))
    assert kinds(review) == ["unit-scale"]
    assert review.convention.scale == pytest.approx(1e-3)
    assert review.verdict is Verdict.AGREES


def test_stated_unit_contradicted_is_a_discrepancy(pratt_analysis):
    scaled = {
        c: {m: v * 1000 for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(scaled, unit="kN"))
    assert kinds(review) == ["unit-scale"] and review.verdict is Verdict.DISCREPANCIES


def test_table_in_kip_is_converted(pratt_analysis):
    """1 kip = 4.4482216152605 kN (NIST SP 811, App. B)."""
    kip = {
        c: {m: v / 4.4482216152605 for m, v in ms.items()}
        for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(kip, unit="kip"))
    assert review.verdict is Verdict.AGREES and kinds(review) == []


def test_single_unit_slip(pratt_analysis):
    claims = true_claims(pratt_analysis)
    claims["dead"]["L2L3"] *= 1000
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["unit-scale"]
    assert "1000" in review.findings[0].detail


def test_swapped_labels(pratt_analysis):
    claims = true_claims(pratt_analysis)
    d = claims["dead"]
    d["U1L2"], d["U2L3"] = d["U2L3"], d["U1L2"]
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["swapped-labels"]
    assert set(review.findings[0].members) == {"U1L2", "U2L3"}


def test_swap_in_a_table_of_another_unit_is_judged_in_case_units(pratt_analysis):
    """A table in whole newtons for a case in kN: rounding to the newton is 0.0005 kN, not
    0.5 kN. Two claims 0.4 kN off each other's forces (8 % of U2L2's 5 kN) are two value
    mismatches, not a swap; the same two claims exchanged exactly are a swap."""
    forces = true_claims(pratt_analysis)["dead"]
    newtons = {m: round(v * 1000) for m, v in forces.items()}
    off = dict(newtons, U1L1=newtons["U2L2"] + 400, U2L2=newtons["U1L1"] + 400)
    review = compare_claims(pratt_analysis, table({"dead": off}, unit="N"))
    assert kinds(review) == ["value-mismatch", "value-mismatch"]
    swapped = dict(newtons, U1L1=newtons["U2L2"], U2L2=newtons["U1L1"])
    review = compare_claims(pratt_analysis, table({"dead": swapped}, unit="N"))
    assert kinds(review) == ["swapped-labels"]


def test_swapping_equal_forces_is_not_a_finding(pratt_analysis):
    """L0L1 and L1L2 both carry 10P/3 (REFERENCES.md 3.2): swapping them changes nothing."""
    claims = true_claims(pratt_analysis)
    d = claims["dead"]
    d["L0L1"], d["L1L2"] = d["L1L2"], d["L0L1"]
    assert compare_claims(pratt_analysis, table(claims)).verdict is Verdict.AGREES


def test_zero_force_member_claimed(pratt_analysis):
    """U3L3 is a zero-force member (REFERENCES.md 3.1, rule 2)."""
    claims = true_claims(pratt_analysis)
    claims["dead"]["U3L3"] = 4.0
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["zero-force-claimed"]


def test_tiny_value_on_zero_force_member_agrees(pratt_analysis):
    claims = true_claims(pratt_analysis)
    claims["dead"]["U3L3"] = 0.0004 * 6 * P  # below 1e-3 of the largest force (U2U3 = 6P)
    assert compare_claims(pratt_analysis, table(claims)).verdict is Verdict.AGREES


def test_value_mismatch_beyond_tolerance(pratt_analysis):
    claims = true_claims(pratt_analysis)
    claims["dead"]["U2U3"] *= 1.05
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["value-mismatch"]
    assert review.verdict is Verdict.DISCREPANCIES


def test_difference_within_tolerance_agrees(pratt_analysis):
    claims = true_claims(pratt_analysis)
    claims["dead"]["U2U3"] *= 1.008
    assert compare_claims(pratt_analysis, table(claims)).verdict is Verdict.AGREES


def test_spot_check_reports_missing_claims_but_agrees(pratt_analysis):
    claims = {
        "dead": {
            m: v
            for m, v in true_claims(pratt_analysis)["dead"].items()
            if m in ("U1U2", "L2L3", "U1L2")
        }
    }
    review = compare_claims(pratt_analysis, table(claims))
    assert kinds(review) == ["missing-claim"]
    assert review.findings[0].severity is Severity.INFO
    assert review.verdict is Verdict.AGREES and review.checked_members == 3


def test_unknown_label(pratt_analysis):
    review = compare_claims(pratt_analysis, table(true_claims(pratt_analysis), unknown=("U9L9",)))
    assert kinds(review) == ["unknown-label"]


def test_column_with_another_cases_values():
    model = make_model(
        truss_case(
            pratt(6)["joints"],
            {k: v for k, v in pratt(6)["members"].items()},
            {"L0": ["x", "y"], "L6": ["y"]},
            {
                "dead": {f"L{i}": [0, -10] for i in range(1, 6)},
                "snow": {f"U{i}": [0, -4] for i in range(1, 6)},
            },
        )
    )
    analysis = analyse(model)
    claims = true_claims(analysis)
    review = compare_claims(analysis, table({"dead": claims["snow"]}))
    (cause,) = [f for f in review.findings if f.kind == "likely-cause"]
    assert (
        cause.variant == "the column labelled 'dead' holding the forces of 'snow'"
        and cause.case == "snow"
    )
    assert cause.locations == ("row 2, column 'dead'",)


def test_near_miss_column_matching_its_case():
    analysis = analyse(make_model(pratt(6, load=P, case="Dead Load")))
    claims = true_claims(analysis)["Dead Load"]
    review = compare_claims(analysis, table({"dead-load": claims}))  # punctuation and case differ
    assert review.verdict is Verdict.AGREES


def test_unstable_truss_cannot_be_verified():
    """A square panel without a diagonal is a mechanism (REFERENCES.md 1.4)."""
    case = truss_case(
        {"A": [0, 0], "B": [1, 0], "C": [1, 1], "D": [0, 1]},
        [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"C": [1, 0]}},
    )
    analysis = analyse(make_model(case))
    review = compare_claims(analysis, table({"P": {"AB": 1.0}}))
    assert review.verdict is Verdict.CANNOT_VERIFY
    assert "mechanism" in kinds(review)


def _braced_square():
    """Square panel with both diagonals, pin + roller: one state of self-stress (REFERENCES.md
    1.4)."""
    return make_model(
        truss_case(
            {"A": [0, 0], "B": [4, 0], "C": [4, 4], "D": [0, 4]},
            [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"), ("B", "D")],
            {"A": ["x", "y"], "B": ["y"]},
            {"P": {"D": [10, 0]}},
        )
    )


def test_indeterminate_without_stiffness_checks_equilibrium_only():
    """With P at D: AB = DA = P/2, BC = CD = -P/2, AC = P/sqrt2, BD = -P/sqrt2 (REFERENCES.md
    3.6)."""
    analysis = analyse(_braced_square())
    s2 = 2**0.5
    good = {"AB": 5, "BC": -5, "CD": -5, "DA": 5, "AC": 10 / s2, "BD": -10 / s2}
    review = compare_claims(analysis, table({"P": good}))
    assert review.verdict is Verdict.CANNOT_VERIFY
    assert "indeterminate" in kinds(review) and "equilibrium-residual" not in kinds(review)
    # Any self-stress added keeps equilibrium: sides +1, diagonals -sqrt2 (REFERENCES.md 3.6).
    shifted = {m: v + 3.0 * (1 if m in ("AB", "BC", "CD", "DA") else -s2) for m, v in good.items()}
    assert compare_claims(analysis, table({"P": shifted})).verdict is Verdict.CANNOT_VERIFY


def test_indeterminate_claims_out_of_balance_are_located():
    analysis = analyse(_braced_square())
    s2 = 2**0.5
    bad = {"AB": 5, "BC": -5, "CD": -8, "DA": 5, "AC": 10 / s2, "BD": -10 / s2}
    review = compare_claims(analysis, table({"P": bad}))
    assert review.verdict is Verdict.DISCREPANCIES
    finding = next(f for f in review.findings if f.kind == "equilibrium-residual")
    assert "CD" in finding.members
    joints = {b.joint for b in review.imbalances}
    assert joints and joints <= {"C", "D"}


def test_column_of_zeros_does_not_rescale_the_table():
    """A second load column claimed as all zeros (a template never filled in) beside a correct
    column: the zeros carry no sign or scale information, so the table is read as written (no
    unit-scale reading, whose rounding allowance would let every 0 'agree'), and the zeros are
    one column-level finding rather than one per member."""
    case = pratt(6, load=P, case="dead")
    case["loads"]["live"] = {j: [0.0, -2 * P] for j in case["loads"]["dead"]}
    analysis = analyse(make_model(case))
    claims = true_claims(analysis, ["dead", "live"])
    claims["dead"] = dict(list(claims["dead"].items())[:8])  # a spot check: fewer claims than zeros
    claims["live"] = {m: 0.0 for m in claims["live"]}
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert review.convention.scale == 1.0 and review.convention.sign == "tension-positive"
    assert all(
        r.status == "agrees" for r in review.rows if r.case == "dead" and r.claimed is not None
    )
    live = [f for f in review.findings if f.case == "live"]
    assert [f.kind for f in live] == [
        "value-mismatch"
    ] and "every member claim in 'live' is 0" in live[0].detail
    largest = max(
        abs(r.recomputed) for r in review.rows if r.case == "live" and r.recomputed is not None
    )
    assert f"{largest:.4g}" in live[0].detail
    assert {
        r.status for r in review.rows if r.case == "live" and abs(r.recomputed or 0) > 1e-9
    } == {"value-mismatch"}


def _two_case_analysis():
    case = pratt(6, load=P, case="dead")
    case["loads"]["live"] = {j: [0.0, -2 * P] for j in case["loads"]["dead"]}
    return analyse(make_model(case))


def test_unitless_column_in_another_unit_is_read_in_its_own_scale():
    """'dead (kN)' beside a 'live' column written in N without a unit: the live column is read
    x0.001 (one column-level finding), and a real error in it is still found as one."""
    analysis = _two_case_analysis()
    claims = true_claims(analysis, ["dead", "live"])
    claims["live"] = {m: v * 1000 for m, v in claims["live"].items()}
    claims["live"]["U1L2"] *= 1.2  # a genuine 20 % error, in newtons
    dead = table({"dead": claims["dead"]}, unit="kN").values
    live = table({"live": claims["live"]}).values  # no unit stated anywhere for this column
    review = compare_claims(
        analysis, ClaimsTable("<memory>", None, "0" * 64, dead + live, (), ("dead", "live"), None)
    )
    assert review.convention.column_readings == (
        "column 'live' read in N (x0.001 against the rest of the table)",
    )
    live_findings = sorted(
        (f.kind, f.severity.value, f.members) for f in review.findings if f.case == "live"
    )
    # The reading is a guess about a table that mixes scales unsaid: an error to confirm.
    assert live_findings == [("unit-scale", "error", ()), ("value-mismatch", "error", ("U1L2",))]
    row = next(r for r in review.rows if r.case == "live" and r.id == "U1L2")
    assert row.claimed == pytest.approx(1.2 * row.recomputed, rel=1e-9)


def test_table_uniformly_in_another_unit_is_still_one_table_finding():
    analysis = _two_case_analysis()
    scaled = {
        c: {m: v * 1000 for m, v in ms.items()}
        for c, ms in true_claims(analysis, ["dead", "live"]).items()
    }
    review = compare_claims(analysis, table(scaled))
    assert kinds(review) == ["unit-scale"] and review.convention.column_readings == ()
    assert review.convention.scale == pytest.approx(1e-3)


def _combination_analysis():
    """Dead load down at the bottom joints, wind sideways at the top joints (not proportional),
    and ULS = 1.35 dead + 1.5 wind; forces by superposition (common practice)."""
    case = pratt(6, load=P, case="dead")
    case["loads"]["wind"] = {j: [3.0, 0.0] for j in case["joints"] if j.startswith("U")}
    case["combinations"] = {"ULS": {"dead": 1.35, "wind": 1.5}}
    return analyse(make_model(case))


def test_combination_claimed_with_other_factors_is_one_finding_naming_them():
    analysis = _combination_analysis()
    cases = true_claims(analysis, ["dead", "wind"])
    claims = true_claims(analysis, ["dead", "wind", "ULS"])
    claims["ULS"] = {
        m: 1.35 * cases["dead"][m] + 1.6 * cases["wind"][m] for m in claims["ULS"]
    }  # 1.6 for 1.5
    review = compare_claims(analysis, table(claims, unit="kN"))
    uls = [f for f in review.findings if f.case == "ULS" and f.severity is Severity.ERROR]
    assert [f.kind for f in uls] == ["likely-cause"]
    assert (
        "follow 1.35 × dead + 1.6 × wind" in uls[0].detail
        and "not 1.35 × dead + 1.5 × wind as the case file combines" in uls[0].detail
    )
    assert uls[0].variant == "'ULS' as 1.35 × dead + 1.6 × wind instead of 1.35 × dead + 1.5 × wind"
    assert all(
        r.status in ("likely-cause", "agrees")
        for r in review.rows
        if r.case == "ULS" and r.claimed is not None
    )


def test_proportional_cases_give_a_factor_on_the_whole_combination():
    """Live load on the same joints as dead: the cases cannot be told apart, only the total."""
    case = pratt(6, load=P, case="dead")
    case["loads"]["live"] = {j: [0.0, -2 * P] for j in case["loads"]["dead"]}
    case["combinations"] = {"ULS": {"dead": 1.35, "live": 1.5}}
    analysis = analyse(make_model(case))
    claims = true_claims(analysis, ["ULS"])
    claims["ULS"] = {m: 1.08 * v for m, v in claims["ULS"].items()}
    review = compare_claims(analysis, table(claims, unit="kN"))
    uls = [f for f in review.findings if f.case == "ULS"]
    # 1.08 x (1.35 + 1.5 x 2) dead-units = 4.698, which a claimant writes as 1.7 x dead + 1.5 x live
    assert [f.kind for f in uls] == ["likely-cause"] and uls[0].explains == len(
        claims["ULS"]
    ) - 1  # all but the idle mid-span vertical U3L3
    assert (
        "'ULS' taking 1.7 × dead instead of 1.35 × dead" in uls[0].variant
        and uls[0].unexplained == 0
    )


def test_one_wrong_claim_in_a_combination_is_not_a_factor_finding():
    analysis = _combination_analysis()
    claims = true_claims(analysis, ["ULS"])
    claims["ULS"]["U1U2"] *= 1.2
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert kinds(review) == ["value-mismatch"]


def _dead_and_wind():
    case = pratt(6, load=P, case="dead")
    case["loads"]["wind"] = {j: [3.0, 0.0] for j in case["joints"] if j.startswith("U")}
    return analyse(make_model(case))


def test_column_in_newtons_under_a_kn_header_is_one_column_finding():
    """Both headers say kN, the wind values are in N: one unit-scale finding for the column (not
    one per member, and not 'a different load factor')."""
    analysis = _dead_and_wind()
    claims = true_claims(analysis, ["dead", "wind"])
    dead = table({"dead": claims["dead"]}, unit="kN").values
    wind = table({"wind": {m: v * 1000 for m, v in claims["wind"].items()}}, unit="kN").values
    review = compare_claims(
        analysis, ClaimsTable("<memory>", None, "0" * 64, dead + wind, (), ("dead", "wind"), "kN")
    )
    assert [(f.kind, f.members) for f in review.findings] == [("unit-scale", ())]
    assert (
        "reads in N" in review.findings[0].detail
        and "its header states kN" in review.findings[0].detail
    )


def test_column_with_reversed_signs_is_one_column_finding_not_false_swaps():
    """A symmetric truss: reversed signs in one column also look like swaps of mirror members."""
    analysis = _dead_and_wind()
    claims = true_claims(analysis, ["dead", "wind"])
    claims["wind"] = {m: -v for m, v in claims["wind"].items()}
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert [(f.kind, f.members, f.case) for f in review.findings] == [
        ("table-sign-convention", (), "wind")
    ]
    assert review.verdict is Verdict.DISCREPANCIES


def test_load_factor_is_found_past_an_unrelated_typo():
    """The wind column is 1.5 x the case's forces, and one claim is a typo besides: the factor is
    one finding, the typo keeps its own."""
    analysis = _dead_and_wind()
    claims = true_claims(analysis, ["dead", "wind"])
    claims["wind"] = {m: 1.5 * v for m, v in claims["wind"].items()}
    claims["wind"]["U1U2"] = 123.0
    review = compare_claims(analysis, table(claims, unit="kN"))
    wind = sorted((f.kind, f.members if f.kind != "likely-cause" else ()) for f in review.findings)
    assert wind == [("likely-cause", ()), ("value-mismatch", ("U1U2",))]
    factor = next(f for f in review.findings if f.kind == "likely-cause")
    assert (
        factor.case == "wind"
        and factor.factor == 1.5
        and "U1U2" not in factor.members
        and factor.unexplained == 1
    )


def test_claims_near_the_defined_combination_are_not_a_factor_finding():
    """Several ULS claims 1.5 % off (beyond the 1 % tolerance) in scattered directions: no other
    combination explains them, so no combination finding; they are value mismatches."""
    analysis = _combination_analysis()
    claims = true_claims(analysis, ["ULS"])
    for k, member in enumerate(["L0L1", "U1U2", "L0U1", "U2L2", "U1L2"]):
        claims["ULS"][member] *= 1.015 if k % 2 else 0.985
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert set(kinds(review)) == {"value-mismatch"} and len(kinds(review)) >= 3


def test_claims_rounded_to_fixed_decimals_balance_within_their_rounding():
    """Every claim rounded to whole kN, as a tidy table would (P = 1 kN, so 3.333 is written 3):
    each member agrees within half a unit of its last decimal, and the joints, where four such
    roundings add up, must not be called out of balance either."""
    analysis = analyse(make_model(pratt(6, load=1.0, case="dead")))
    rounded = {
        c: {m: float(round(v)) + 0.0 for m, v in ms.items()}
        for c, ms in true_claims(analysis).items()
    }
    review = compare_claims(analysis, table(rounded, unit="kN"))
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]
    assert not any(f.kind == "equilibrium-residual" for f in review.findings)


def test_wrong_factor_found_when_some_load_cases_are_proportional():
    """Dead and live load the same joints (their forces are proportional, so no fit can tell them
    apart); uplift loads the top joints. ULS = 1.0 dead + 1.5 uplift claimed with 1.6: the fit
    uses the combination's own independent cases and names the factor."""
    case = pratt(6, load=P, case="dead")
    case["loads"]["live"] = {j: [0.0, -2 * P] for j in case["loads"]["dead"]}
    case["loads"]["uplift"] = {j: [0.0, 2.0] for j in case["joints"] if j.startswith("U")}
    case["combinations"] = {"ULS": {"dead": 1.0, "uplift": 1.5}}
    analysis = analyse(make_model(case))
    parts = true_claims(analysis, ["dead", "uplift"])
    claims = {"ULS": {m: parts["dead"][m] + 1.6 * parts["uplift"][m] for m in parts["dead"]}}
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert [f.kind for f in review.findings if f.case == "ULS"] == ["likely-cause"]
    # only 'ULS' is claimed, so a larger uplift load reads the same as a larger factor: both are
    # said
    assert review.findings[0].variant.startswith(
        "'ULS' taking 1.6 × uplift instead of 1.5 × uplift"
    )
    assert (
        "or, equally for these claims, the 'uplift' loads 1.07 times those of the case file"
        in review.findings[0].variant
    )
    assert review.findings[0].factor == 1.6


def test_one_wrong_reaction_is_one_finding(pratt_analysis):
    """A claimed reaction 20 % high: one value-mismatch, not also an imbalance at its joint."""
    claims = table(true_claims(pratt_analysis))
    reactions = pratt_analysis.reference.reaction_vectors(pratt_analysis.model, "dead")
    wrong = ClaimedValue(
        "R_L0_y",
        None,
        ("L0", "y"),
        "dead",
        1.2 * reactions["L0"][1],
        False,
        None,
        "row 99, column 'dead'",
    )
    review = compare_claims(
        pratt_analysis,
        ClaimsTable("<memory>", None, "0" * 64, claims.values + (wrong,), (), ("dead",), None),
    )
    assert [(f.kind, f.members) for f in review.findings] == [("value-mismatch", ("L0.y",))]


def test_reaction_claimed_where_the_support_does_not_restrain(pratt_analysis):
    """The roller at L6 restrains y only: a claimed L6.x of 0 agrees; 5 kN is a mismatch that
    says why (no reaction acts along x there)."""
    base = table(true_claims(pratt_analysis))
    for value, status in ((0.0, "agrees"), (5.0, "value-mismatch")):
        claim = ClaimedValue(
            "R_L6_x", None, ("L6", "x"), "dead", value, False, None, "row 99, column 'dead'"
        )
        review = compare_claims(
            pratt_analysis,
            ClaimsTable("<memory>", None, "0" * 64, base.values + (claim,), (), ("dead",), None),
        )
        row = next(r for r in review.rows if r.id == "L6.x")
        assert row.status == status and row.recomputed == 0.0
    assert "does not restrain x" in next(
        f.detail for f in review.findings if f.members == ("L6.x",)
    )


def test_rows_swapped_in_every_column_are_one_finding():
    """Two rows of the table exchanged (every column): one swapped-labels finding naming the
    columns, and no equilibrium finding for the joints the swap unbalances."""
    analysis = _dead_and_wind()
    claims = true_claims(analysis, ["dead", "wind"])
    for column in claims.values():
        column["L0L1"], column["L2L3"] = column["L2L3"], column["L0L1"]
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert [(f.kind, set(f.members)) for f in review.findings] == [
        ("swapped-labels", {"L0L1", "L2L3"})
    ]
    assert "in 2 load columns ('dead', 'wind')" in review.findings[0].detail


def test_table_rounded_to_two_significant_figures_agrees_and_still_shows_a_real_error():
    """Every claim rounded to 2 significant figures (135 written 140, 53.3 written 53): whole
    numbers are read as rounded at their second figure. A claim 20 % off is still found."""
    analysis = _dead_and_wind()
    two_figures = {
        c: {m: round_sig(v, 2) for m, v in ms.items()}
        for c, ms in true_claims(analysis, ["dead", "wind"]).items()
    }
    review = compare_claims(analysis, table(two_figures, unit="kN"))
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]
    two_figures["dead"]["U2U3"] = round_sig(1.2 * two_figures["dead"]["U2U3"], 2)
    review = compare_claims(analysis, table(two_figures, unit="kN"))
    assert [(f.kind, f.members) for f in review.findings] == [("value-mismatch", ("U2U3",))]


def test_whole_numbers_are_exact_when_the_column_shows_more_figures():
    """A 2-figure rounding that is more than 1 % off (e.g. 130 for 133.3) agrees in a column
    rounded to 2 figures; once another value of the column is written with 4 figures, the
    table is not rounded that way and the same 130 is a mismatch."""
    analysis = analyse(make_model(pratt(6, load=100.0, case="dead")))
    truth = true_claims(analysis)["dead"]
    loose = [
        m
        for m, v in truth.items()
        if 100 <= abs(v) < 1000 and 0.01 * abs(v) < abs(round_sig(v, 2) - v) < 5
    ]
    assert loose, "the test needs a force that 2-figure rounding moves by more than 1 %"
    claims = {"dead": {m: round_sig(v, 2) for m, v in truth.items()}}
    assert compare_claims(analysis, table(claims, unit="kN")).verdict is Verdict.AGREES
    other = next(m for m, v in truth.items() if m not in loose and abs(v) > 1)
    claims["dead"][other] = float(f"{truth[other]:.4g}")  # four figures somewhere in the column
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert {m for f in review.findings for m in f.members} == set(loose)


@pytest.mark.parametrize(
    ("value", "digits"), [(140.0, 2), (4.5, 2), (0.27, 2), (108.3, 4), (34650.0, 4), (7.0, 1)]
)
def test_significant_digits(value, digits):
    import numpy as np

    from verify.compare.tolerances import significant_digits_many

    assert (
        significant_digits_many(np.array([value])).tolist()
        == [digits]
        == [_significant_digits(value)]
    )


def _significant_digits(value: float) -> int:
    """The plain count, as a person does it from the number written to 11 figures."""
    digits = f"{abs(value):.10e}".split("e")[0].replace(".", "").rstrip("0")
    return max(len(digits), 1)


def test_significant_digits_vectorised_matches_the_plain_count():
    """The array version (used per column at 10^5 claims) against the one-value version on 5000
    random values written with 1 to 8 figures across 14 decades."""
    import random

    import numpy as np

    from verify.compare.tolerances import significant_digits_many

    rng = random.Random(7)
    values = [
        round(rng.uniform(1, 10), rng.randint(0, 7))
        * 10.0 ** rng.randint(-6, 7)
        * rng.choice([1, -1])
        for _ in range(5000)
    ] + [9.9999999999, 7.599883247e-07]
    assert significant_digits_many(np.array(values)).tolist() == [
        _significant_digits(v) for v in values
    ]


def test_table_ten_times_too_large_is_not_read_as_a_unit(pratt_analysis):
    """No force unit is 10 kN (long ton-force is 9.964 kN, and a table in it would be smaller,
    not larger): a table 10 x the forces is a load or factor error, not agreement."""
    tenfold = {
        c: {m: 10 * v for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(tenfold))
    assert review.verdict is Verdict.DISCREPANCIES
    assert [f.kind for f in review.findings] == ["likely-cause"]
    assert (
        review.findings[0].case == "dead"
        and review.findings[0].factor == 10.0
        and review.findings[0].unexplained == 0
    )


def test_decimals_are_taken_from_the_cell_as_written():
    """U1L1 carries the panel load P = 10.45 kN (REFERENCES 3.2, Pratt verticals). Written '10.00'
    (to the hundredth, like the rest of the table) it is a mismatch; written '10' it reads as a
    whole number honestly rounded (half a unit), as the number 10.0 alone would."""
    analysis = analyse(make_model(pratt(6, load=10.45, case="dead")))
    truth = true_claims(analysis)["dead"]
    assert truth["U1L1"] == pytest.approx(10.45, rel=1e-12)
    for text, expected in (("10.00", "value-mismatch"), ("10", "agrees")):
        values = tuple(
            ClaimedValue(
                m,
                m,
                None,
                "dead",
                float(text) if m == "U1L1" else round(v, 2),
                False,
                "kN",
                f"row {k}",
                text if m == "U1L1" else f"{v:.2f}",
            )
            for k, (m, v) in enumerate(truth.items(), 2)
        )
        review = compare_claims(
            analysis, ClaimsTable("<memory>", None, "0" * 64, values, (), ("dead",), "kN")
        )
        assert next(r.status for r in review.rows if r.id == "U1L1") == expected
    from verify.compare.tolerances import decimals_as_written

    assert [
        decimals_as_written(t, v)
        for t, v in (
            ("10.00", 10.0),
            ("4.50 T", 4.5),
            ("(12.40)", -12.4),
            ("1,250.5", 1250.5),
            ("12", 12.0),
        )
    ] == [2, 2, 2, None, None]


def test_small_truss_rounded_to_two_figures_agrees():
    """A 4-panel Pratt (13 members) at a load that puts several forces past 100 kN, every claim
    rounded to 2 significant figures: honest rounding, no finding (three whole numbers past the
    figures are enough to show how the column was rounded)."""
    analysis = analyse(make_model(pratt(4, load=41.3, case="dead")))
    claims = {
        c: {m: round_sig(v, 2) for m, v in ms.items()} for c, ms in true_claims(analysis).items()
    }
    widened = [v for v in claims["dead"].values() if abs(v) >= 100]
    assert len(widened) >= 3
    review = compare_claims(analysis, table(claims, unit="kN"))
    assert review.verdict is Verdict.AGREES, [f.detail for f in review.findings]


def test_decimal_comma_cells_keep_their_decimals():
    from verify.compare.tolerances import decimals_as_written

    assert [
        decimals_as_written(t, v)
        for t, v in (("10,00", 10.0), ("1,25 C", -1.25), ("1,250", 1250.0))
    ] == [2, 2, None]


def test_whole_table_in_meganewtons_names_the_unit(pratt_analysis):
    """A table in MN read as kN is off by x1000: said as values in MN, not 'N vs kN'."""
    small = {
        c: {m: v / 1000 for m, v in ms.items()} for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(small, unit="kN"))
    assert (
        kinds(review) == ["unit-scale"] and "values in MN, read as kN" in review.findings[0].detail
    )


def test_table_in_kgf_without_a_unit_is_read_as_kgf(pratt_analysis):
    """1 kgf = 9.80665 N (NIST SP 811, App. B): a kN model's forces written in kgf, no unit
    stated."""
    kgf = {
        c: {m: v * 1000 / 9.80665 for m, v in ms.items()}
        for c, ms in true_claims(pratt_analysis).items()
    }
    review = compare_claims(pratt_analysis, table(kgf))
    assert kinds(review) == ["unit-scale"] and "values in kgf" in review.findings[0].detail
    assert review.verdict is Verdict.AGREES  # inferred (no unit stated), said as information
