"""Indeterminate trusses through the whole comparison: self-stress is 'not elastic', never wrong.

Truth: the direct stiffness solution (checked against Timoshenko's three-bar truss and the force
method in tests/test_stiffness.py); self-stress states from scipy.linalg.null_space of the
equilibrium matrix (Pellegrino & Calladine 1986: A t = 0).
"""

from __future__ import annotations

import numpy as np
import scipy.linalg
from claimsgen import table
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from test_stiffness import braced_case
from trussgen import make_model, pratt

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.pipeline import analyse
from verify.analysis.stability import Classification
from verify.compare.diagnose import compare_claims

SETTINGS = settings(max_examples=20, deadline=None, suppress_health_check=[HealthCheck.too_slow])


def _indeterminate(seed: int, panels: int):
    case, kinds = braced_case(seed, panels, extra_support=False, inclined=False)
    assume(2 in kinds)  # at least one cross-braced panel
    analysis = analyse(make_model(case))
    assume(analysis.stability.classification is Classification.STABLE_INDETERMINATE)
    return analysis


@SETTINGS
@given(
    seed=st.integers(0, 2**31),
    panels=st.integers(1, 5),
    size=st.floats(0.2, 3.0),
    sign=st.sampled_from([1, -1]),
)
def test_elastic_plus_self_stress_is_not_elastic_never_value_mismatch(seed, panels, size, sign):
    analysis = _indeterminate(seed, panels)
    model = analysis.model
    b = len(model.members)
    basis = scipy.linalg.null_space(assemble_equilibrium(model).toarray())
    state = basis[:, 0]
    assume(np.abs(state[b:]).max() < 1e-9)  # an internal state: reactions unchanged
    elastic = analysis.elastic.forces.member_forces
    scale = np.abs(elastic[:, 0]).max()
    shift = sign * size * scale * state[:b] / np.abs(state[:b]).max()
    claims = {"W": {m.id: float(elastic[i, 0] + shift[i]) for i, m in enumerate(model.members)}}
    review = compare_claims(analysis, table(claims))
    kinds = {f.kind for f in review.findings}
    assert "stiffness-dependent" in kinds
    assert not kinds & {
        "value-mismatch",
        "equilibrium-residual",
        "sign-flip",
        "unit-scale",
        "swapped-labels",
    }


@SETTINGS
@given(seed=st.integers(0, 2**31), panels=st.integers(2, 5), data=st.data())
def test_one_wrong_member_breaks_equilibrium_and_is_named(seed, panels, data):
    analysis = _indeterminate(seed, panels)
    model = analysis.model
    elastic = analysis.elastic.forces.member_forces[:, 0]
    scale = np.abs(elastic).max()
    target = data.draw(st.sampled_from([m.id for m in model.members]))
    claims = {"W": {m.id: float(v) for m, v in zip(model.members, elastic, strict=True)}}
    claims["W"][target] += 0.3 * scale
    review = compare_claims(analysis, table(claims))
    kinds = [f.kind for f in review.findings]
    # A member inside a state of self-stress is found through the equilibrium of its joints; one
    # outside every self-stress has its force fixed by statics and is compared directly.
    in_self_stress = {m for mode in analysis.stability.self_stress_modes for m in mode.members}
    if target in in_self_stress:
        assert "equilibrium-residual" in kinds
    # A corrupted value may happen to look like a unit slip or a reversed sign, or sit on a
    # zero-force member; either way the member is named.
    named = {
        m
        for f in review.findings
        if f.kind in ("value-mismatch", "unit-scale", "sign-flip", "zero-force-claimed")
        for m in f.members
    }
    assert target in named


@SETTINGS
@given(seed=st.integers(0, 2**31), panels=st.integers(2, 5), data=st.data())
def test_several_wrong_members_are_never_said_to_explain_it_alone(seed, panels, data):
    """Two corrupted claims far apart: wherever more than one member is named, none is described
    as 'all other claims kept' (that wording holds only when one member alone balances)."""
    analysis = _indeterminate(seed, panels)
    model = analysis.model
    elastic = analysis.elastic.forces.member_forces[:, 0]
    scale = np.abs(elastic).max()
    # Members inside a state of self-stress: those are judged through the equilibrium of their
    # joints (members outside every self-stress are compared directly).
    ids = sorted({m for mode in analysis.stability.self_stress_modes for m in mode.members})
    assume(len(ids) >= 2)
    first = data.draw(st.sampled_from(ids))
    second = data.draw(st.sampled_from([m for m in ids if m != first]))
    claims = {"W": {m.id: float(v) for m, v in zip(model.members, elastic, strict=True)}}
    claims["W"][first] += 0.3 * scale
    claims["W"][second] -= 0.45 * scale
    review = compare_claims(analysis, table(claims))
    # Members named through the equilibrium of their joints (those outside every self-stress are
    # compared directly and say so differently).
    named = [
        f
        for f in review.findings
        if f.kind in ("value-mismatch", "unit-scale", "sign-flip")
        and ("equilibrium of its joints" in f.detail or "no single member explains" in f.detail)
    ]
    assume(len(named) > 1)  # (both corruptions inside one self-stress loop can balance out)
    assert not any("all other claims kept" in f.detail for f in named)
    assert all("no single member explains" in f.detail for f in named if f.kind == "value-mismatch")


def test_member_outside_every_self_stress_is_judged_by_statics_alone():
    """A 6-panel Pratt with a second diagonal in panel 2 (s = 1; only panel 2's members carry the
    self-stress). Claims = the elastic forces except U4U5 doubled: U4U5's force is fixed by
    statics whatever the EA, so it is a value-mismatch, even with an assumed equal EA, and the
    member whose claim agrees (L1L2) is never blamed. Truth: the direct stiffness solve (checked
    against the force method in tests/test_stiffness.py) and the Pratt statics (REFERENCES 3.2)."""
    case = pratt(6, load=10.0, case="dead")
    case["members"]["L1U2"] = ["L1", "U2"]
    model = make_model(case)
    analysis = analyse(model, assume_equal_EA=2.0e5)
    elastic = analysis.elastic.forces.member_forces[:, 0]
    claims = {"dead": {m.id: float(v) for m, v in zip(model.members, elastic, strict=True)}}
    claims["dead"]["U4U5"] *= 2
    review = compare_claims(analysis, table(claims))
    errors = [(f.kind, f.members) for f in review.findings if f.severity.value == "error"]
    assert errors == [("value-mismatch", ("U4U5",))]
    claims["dead"]["U4U5"] /= 2
    claims["dead"]["L2L3"] *= 1.25  # also outside the self-stress; L1L2 shares joint L2 with it
    review = compare_claims(analysis, table(claims))
    assert [(f.kind, f.members) for f in review.findings if f.severity.value == "error"] == [
        ("value-mismatch", ("L2L3",))
    ]


@SETTINGS
@given(seed=st.integers(0, 2**31), panels=st.integers(1, 5))
def test_members_fixed_by_statics_are_those_outside_the_null_space(seed, panels):
    """The self-stress probe of verify.analysis.stiffness agrees with the null space of
    the equilibrium matrix (scipy.linalg.null_space; Pellegrino & Calladine 1986): a member's
    force is independent of EA exactly when every self-stress state leaves it unloaded."""
    from verify.analysis.stiffness import members_fixed_by_statics

    analysis = _indeterminate(seed, panels)
    model = analysis.model
    null = scipy.linalg.null_space(assemble_equilibrium(model).toarray())
    outside = np.abs(null[: len(model.members)]).max(axis=1) < 1e-9
    assert members_fixed_by_statics(model).tolist() == outside.tolist()


def test_chord_far_from_many_redundants_is_still_judged_by_statics():
    """A 30-panel Pratt with a second diagonal in 11 panels (s = 11, more states than the
    stability report lists): a doubled chord in an unbraced panel is a value-mismatch, even with
    an assumed equal EA."""
    case = pratt(30, load=10.0, case="dead")
    for k in range(1, 12):
        case["members"][f"L{k}U{k + 1}"] = [f"L{k}", f"U{k + 1}"]
    analysis = analyse(make_model(case), assume_equal_EA=2.0e5)
    assert analysis.stability.self_stress == 11
    elastic = analysis.elastic.forces.member_forces[:, 0]
    claims = {
        "dead": {m.id: float(v) for m, v in zip(analysis.model.members, elastic, strict=True)}
    }
    claims["dead"]["U25U26"] *= 2
    review = compare_claims(analysis, table(claims))
    assert [(f.kind, f.members) for f in review.findings if f.severity.value == "error"] == [
        ("value-mismatch", ("U25U26",))
    ]
