"""Property tests for likely causes: random trusses and loads (hypothesis), one random model mistake
planted, claims made from the mistaken model and rounded to 3 significant figures; the mistake
must be named with the right joints / factor / dimension whenever it changes at least three
claims clearly, and an honest table rounded to 2 or 3 figures must never get a cause.

The forces behind the claims come from our global solve of the *variant* model, itself checked
against sympy's truss module and published examples (tests/test_sympy_oracle.py, tests/reference).
"""

from __future__ import annotations

import copy

from claimsgen import round_sig, table
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from test_causes import mast
from trussgen import howe, make_model, pratt

from verify.analysis.pipeline import analyse
from verify.compare.diagnose import Verdict, compare_claims
from verify.compare.tolerances import RTOL

SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
CLEAR = 3.0  # a claim changed by more than this many tolerances is "clearly" changed


@st.composite
def two_case_trusses(draw):
    family = draw(st.sampled_from([pratt, howe]))
    panels = draw(st.integers(2, 5)) * 2
    case = family(
        panels,
        d=draw(st.sampled_from([2.5, 3.0, 4.0])),
        h=draw(st.sampled_from([2.0, 3.0, 3.5])),
        case="A",
    )
    bottom = [f"L{i}" for i in range(1, panels)]
    loaded = draw(st.lists(st.sampled_from(bottom), min_size=1, max_size=len(bottom), unique=True))
    case["loads"]["A"] = {j: [0.0, -float(draw(st.integers(5, 60)))] for j in loaded}
    top = [f"U{i}" for i in range(1, panels)]
    case["loads"]["B"] = {
        j: [float(draw(st.integers(-10, 10))), -float(draw(st.integers(0, 30)))]
        for j in draw(st.lists(st.sampled_from(top), min_size=1, max_size=3, unique=True))
    }
    assume(any(v != [0.0, 0.0] for v in case["loads"]["B"].values()))
    case["combinations"] = {"C": {"A": draw(st.sampled_from([1.2, 1.35])), "B": 1.5}}
    return case


def forces(case):
    analysis = analyse(make_model(case))
    ref = analysis.reference
    return analysis, {
        c: {
            m: float(ref.member_forces[i, ref.column(c)])
            for i, m in enumerate(analysis.model.member_ids)
        }
        for c in analysis.model.load_names
    }


def clearly_changed(truth, variant) -> int:
    largest = {c: max(abs(v) for v in col.values()) for c, col in truth.items()}
    return sum(
        1
        for c in truth
        for m in truth[c]
        if abs(variant[c][m] - truth[c][m])
        > CLEAR * max(RTOL * abs(truth[c][m]), 1e-3 * largest[c], 0.005 * abs(truth[c][m]))
    )


def rounded(values, figures=3):
    """As a table writes them: 3 (or 2) significant figures, and round-off noise of an idle member
    (1e-13 of the largest force) written as 0."""
    out = {}
    for c, col in values.items():
        largest = max(abs(v) for v in col.values()) or 1.0
        out[c] = {
            m: 0.0 if abs(v) < 1e-9 * largest else round_sig(v, figures) for m, v in col.items()
        }
    return out


def likely(review):
    return [f for f in review.findings if f.kind == "likely-cause"]


@SETTINGS
@given(
    two_case_trusses(),
    st.sampled_from(["left-out", "doubled", "factor", "chord", "depth"]),
    st.data(),
)
def test_a_planted_model_mistake_is_named(case, mistake, data):
    analysis, truth = forces(case)
    variant = copy.deepcopy(case)
    if mistake in ("left-out", "doubled"):
        joint = data.draw(st.sampled_from(sorted(case["loads"]["A"])))
        if mistake == "left-out":
            del variant["loads"]["A"][joint]
            assume(variant["loads"]["A"])
        else:
            variant["loads"]["A"][joint] = [2 * x for x in case["loads"]["A"][joint]]
    elif mistake == "factor":
        new = data.draw(
            st.sampled_from([f for f in (1.0, 1.5, 1.6) if f != case["combinations"]["C"]["A"]])
        )
        variant["combinations"]["C"]["A"] = new
    elif mistake == "chord":
        variant["loads"]["A"] = {"U" + j[1:]: v for j, v in case["loads"]["A"].items()}
    else:
        scale = data.draw(st.sampled_from([0.9, 1.2, 1.25]))
        for joint, xy in variant["joints"].items():
            if joint.startswith("U"):
                xy[1] = round(xy[1] * scale, 6)
    _, claimed = forces(variant)
    assume(clearly_changed(truth, claimed) >= 3)
    review = compare_claims(analysis, table(rounded(claimed)))
    named = likely(review)
    assert named, [f.detail for f in review.findings]
    words = " | ".join(f.variant for f in named)
    if mistake == "left-out":
        # a load moved onto a support is a load left out: alike readings are named together
        assert (
            any(f.joints == (joint,) and f.factor == 0.0 for f in named)
            or "'A' loads 0 times" in words
            or "'A' left out of 'C'" in words
            or (f"'A' load at {joint} (" in words and "left out" in words)
        ), words
    elif mistake == "doubled":
        assert (
            any(f.joints == (joint,) and f.factor == 2.0 for f in named)
            or "'A' loads 2 times" in words
        ), words
    elif mistake == "factor":
        # with 1.0 x A and a light B the column is A's own forces within tolerance: said so
        assert (
            any(f.case == "C" and f.factor == new for f in named)
            or f"{new:g} × A" in words
            or (new == 1.0 and "the column labelled 'C' holding the forces of 'A'" in words)
        ), words
    elif mistake == "chord":
        assert "(the joints directly above)" in words, words
    else:
        assert "depth (y extent)" in words or "span (x extent)" in words, words


@SETTINGS
@given(two_case_trusses(), st.sampled_from([2, 3]))
def test_an_honest_rounded_table_never_gets_a_cause(case, figures):
    analysis, truth = forces(case)
    review = compare_claims(analysis, table(rounded(truth, figures)))
    assert likely(review) == [], [f.detail for f in likely(review)]


@settings(max_examples=12, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(2, 4), st.data())
def test_mast_load_left_out_is_named_in_3d(levels, data):
    case = mast(levels)
    # wind of 200-900 N per joint in either direction: loads a thousand times apart make a table
    # whose every value reads as another unit, a separate diagnosis
    size = st.integers(200, 900).flatmap(lambda n: st.sampled_from([n, -n]))
    loads = {
        f"{c}{k}": [float(data.draw(size)), float(data.draw(size)), 0.0]
        for k in range(1, levels + 1)
        for c in "ABC"
        if data.draw(st.booleans())
    }
    assume(len(loads) >= 2)
    case["loads"]["wind"] = loads
    analysis, truth = forces(case)
    joint = data.draw(st.sampled_from(sorted(loads)))
    variant = copy.deepcopy(case)
    del variant["loads"]["wind"][joint]
    _, claimed = forces(variant)
    assume(clearly_changed(truth, claimed) >= 3)
    review = compare_claims(analysis, table(rounded(claimed)))
    named = likely(review)
    # equal loads stacked up a leg: leaving out the top one reads the same as moving each down a
    # level (the lowest onto the support), and such alike readings are named together
    assert any(f.joints == (joint,) and f.factor == 0.0 for f in named) or any(
        f"'wind' load at {joint} (" in f.variant and "left out" in f.variant for f in named
    ), [f.detail for f in review.findings]


def test_mast_wind_load_left_out_low_down_is_named():
    """Plants the 'wind' load at B1 left out of a 4-level mast (wind also at B3 and B4). Of the 5
    claims it changes, 4 miss clearly and B0B1 misses by just under twice its allowance; leaving a
    load out is a fixed slip, not a size fitted to the claims, so 4 clear claims must do (found by
    the property test above with a random seed; CI's fixed examples never reached it)."""
    case = mast(4)
    case["loads"]["wind"] = {
        "B1": [200.0, -305.0, 0.0],
        "B3": [200.0, 200.0, 0.0],
        "B4": [200.0, 200.0, 0.0],
    }
    analysis, truth = forces(case)
    variant = copy.deepcopy(case)
    del variant["loads"]["wind"]["B1"]
    _, claimed = forces(variant)
    review = compare_claims(analysis, table(rounded(claimed)))
    (cause,) = likely(review)
    assert cause.joints == ("B1",) and cause.factor == 0.0, cause.detail
    assert "'wind' load at B1 (364.7) left out" in cause.variant
    assert cause.explains == 5 and cause.unexplained == 0
    # the honest table of the same mast agrees and gets no cause
    honest = compare_claims(analysis, table(rounded(truth)))
    assert honest.verdict is Verdict.AGREES and likely(honest) == []
