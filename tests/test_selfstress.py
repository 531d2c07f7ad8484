"""Splitting claimed forces of indeterminate trusses into an equilibrium violation and a self-stress.

Sources (shared/REFERENCES.md):
* 1.2: Pellegrino & Calladine, IJSS 22(4) 1986: every equilibrium solution is a particular solution
  plus a combination of the self-stress states (null space of A).
* 3.6: square panel with both diagonals: the self-stress is sides : diagonals = 1 : -sqrt2, and the
  elastic forces for P horizontal at D are AB = DA = +P/2, BC = CD = -P/2, AC = +P/sqrt2, BD = -P/sqrt2
  (derived values [V]).
* Property tests on hypothesis-generated random cross-braced trusses, with the self-stress basis
  computed here independently (scipy.linalg.null_space of a dense A built in this file).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import scipy.linalg
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from test_stiffness import dense_equilibrium  # the independent test-side equilibrium matrix
from trussgen import make_model, pratt, truss_case

from verify.analysis.selfstress import decompose_claims
from verify.analysis.stiffness import solve_stiffness
from verify.model import Model

ATOL = 1e-9  # relative to the force scale: exact decompositions in double precision
SETTINGS = settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
r2 = math.sqrt(2.0)


def square_model(P: float = 10.0) -> Model:
    case = truss_case(
        {"A": [0.0, 0.0], "B": [2.0, 0.0], "C": [2.0, 2.0], "D": [0.0, 2.0]},
        [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"), ("B", "D")],
        {"A": ["x", "y"], "B": ["y"]},
        {"P": {"D": [P, 0.0]}},
    )
    case["stiffness"] = {"EA": 1.0e5}
    return make_model(case)


SQUARE_ELASTIC = np.array([0.5, -0.5, -0.5, 0.5, 1 / r2, -1 / r2])  # REFERENCES 3.6, per unit P at D
SQUARE_STATE = np.array([1.0, 1.0, 1.0, 1.0, -r2, -r2])  # REFERENCES 3.6 self-stress


def everything(model: Model) -> np.ndarray:
    return np.ones(len(model.members), dtype=bool)


@pytest.mark.parametrize("k", [-3.0, 0.25, 40.0])
def test_square_claims_differing_by_the_published_self_stress_are_pure_self_stress(k: float) -> None:
    """REFERENCES 3.6: elastic + k x (1, 1, 1, 1, -sqrt2, -sqrt2) is in equilibrium; the split says so."""
    P = 10.0
    model = square_model(P)
    elastic = P * SQUARE_ELASTIC
    claims = elastic + k * SQUARE_STATE
    dec = decompose_claims(model, claims, everything(model), elastic, 0, None)
    assert dec.consistent_with_equilibrium and dec.joint_residuals == {}
    np.testing.assert_allclose(dec.equilibrium_violation, 0.0, atol=ATOL * P)
    np.testing.assert_allclose(dec.self_stress_part, k * SQUARE_STATE, rtol=1e-12, atol=ATOL * P)
    assert dec.self_stress_size == pytest.approx(abs(k) * r2, rel=1e-12)
    assert set(dec.self_stress_members) == {"AB", "BC", "CD", "DA", "AC", "BD"}
    assert dec.self_stress_members[:2] in (("AC", "BD"), ("BD", "AC"))  # largest first
    assert dec.self_stress_states == 1 and len(dec.self_stress_coefficients) == 1
    assert dec.method == "dense-svd" and dec.reference == "elastic"


def test_square_claims_equal_to_elastic_have_no_self_stress() -> None:
    """The REFERENCES 3.6 elastic forces decompose to nothing."""
    model = square_model(10.0)
    elastic = 10.0 * SQUARE_ELASTIC
    dec = decompose_claims(model, elastic.copy(), everything(model), elastic, 0, None)
    assert dec.consistent_with_equilibrium
    assert dec.self_stress_members == () and dec.self_stress_size == pytest.approx(0.0, abs=1e-12)


def test_square_claim_out_of_balance_is_reported_at_joints() -> None:
    """Changing one side of the square alone is not a self-stress (REFERENCES 3.6 state has all six)."""
    P = 10.0
    model = square_model(P)
    elastic = P * SQUARE_ELASTIC
    claims = elastic.copy()
    claims[model.member_index["CD"]] += 3.0
    dec = decompose_claims(model, claims, everything(model), elastic, 0, None)
    assert not dec.consistent_with_equilibrium
    # The projection on the one state: c = 3 * 1 / |state|^2 = 3/8 of the state is self-stress.
    np.testing.assert_allclose(dec.self_stress_part, 3.0 / 8.0 * SQUARE_STATE, rtol=1e-12)
    expected_v = -3.0 / 8.0 * SQUARE_STATE
    expected_v[model.member_index["CD"]] += 3.0
    np.testing.assert_allclose(dec.equilibrium_violation, expected_v, atol=1e-12)
    assert set(dec.joint_residuals) <= {"A", "B", "C", "D"} and dec.joint_residuals


def two_panel_model() -> Model:
    """Panel 1 cross-braced (one self-stress), panel 2 a single diagonal (no self-stress there)."""
    case = truss_case(
        {"L0": [0.0, 0.0], "L1": [3.0, 0.0], "L2": [6.0, 0.0], "U0": [0.0, 3.0], "U1": [3.0, 3.0], "U2": [6.0, 3.0]},
        [("L0", "L1"), ("L1", "L2"), ("U0", "U1"), ("U1", "U2"), ("L0", "U0"), ("L1", "U1"), ("L2", "U2"),
         ("L0", "U1"), ("U0", "L1"), ("U1", "L2")],
        {"L0": ["x", "y"], "L2": ["y"]},
        {"P": {"U1": [4.0, -12.0], "L1": [0.0, -6.0]}},
    )
    case["stiffness"] = {"EA": 2.0e5}
    return make_model(case)


def test_corrupted_member_outside_the_self_stress_shows_at_its_end_joints() -> None:
    """One wrong value on the determinate part: the whole change is a violation at that member's joints."""
    model = two_panel_model()
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    claims = elastic.copy()
    k = model.member_index["U1L2"]
    claims[k] += 25.0
    dec = decompose_claims(model, claims, everything(model), elastic, 0, None)
    assert not dec.consistent_with_equilibrium
    assert dec.violation_members == ("U1L2",)
    assert dec.equilibrium_violation[k] == pytest.approx(25.0, rel=1e-12)
    assert set(dec.joint_residuals) <= {"U1", "L2"} and dec.joint_residuals
    assert dec.self_stress_members == ()


def test_unclaimed_members_are_free_unknowns() -> None:
    """Claims on some members only are consistent when a completion balances every joint."""
    model = two_panel_model()
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    A = dense_equilibrium(model)
    state = scipy.linalg.null_space(A)[:, 0]
    b = len(model.members)
    mask = np.zeros(b, dtype=bool)
    mask[[model.member_index[m] for m in ("L0L1", "U0U1", "L0U1", "U1L2")]] = True
    claims = np.where(mask, elastic + 7.0 * state[:b], np.nan)
    dec = decompose_claims(model, claims, mask, elastic, 0, None)
    assert dec.consistent_with_equilibrium
    np.testing.assert_allclose(dec.equilibrium_violation, 0.0, atol=1e-9)
    # The free unknowns take the matching change: the full self-stress state times 7.
    np.testing.assert_allclose(dec.self_stress_part, 7.0 * state[:b], atol=1e-9)
    # A wrong claim on a single claimed member is caught even with others free.
    bad = claims.copy()
    bad[model.member_index["U1L2"]] += 5.0
    dec_bad = decompose_claims(model, bad, mask, elastic, 0, None)
    assert not dec_bad.consistent_with_equilibrium and dec_bad.violation_members == ("U1L2",)


def test_wrong_claimed_reaction_is_an_equilibrium_violation() -> None:
    """A claimed reaction off by 5 unbalances its support joint (determinate Pratt, REFERENCES 3.2: 2.5P each)."""
    case = pratt(6, load=10.0)
    case["stiffness"] = {"EA": 1.0}
    model = make_model(case)
    sol = solve_stiffness(model)
    N = sol.forces.member_forces[:, 0]
    R = sol.forces.reactions[:, 0].copy()
    assert R[1] == pytest.approx(25.0) and R[2] == pytest.approx(25.0)
    good = decompose_claims(model, N, everything(model), None, 0, R)
    assert good.consistent_with_equilibrium and good.self_stress_states == 0
    R[2] += 5.0
    dec = decompose_claims(model, N, everything(model), None, 0, R)
    assert not dec.consistent_with_equilibrium
    assert list(dec.joint_residuals) == ["L6"]
    assert dec.reaction_violation[2] == pytest.approx(5.0)


def test_claims_rounded_to_three_significant_figures_are_consistent() -> None:
    """REFERENCES 5.1 (Hibbeler, Statics ch. 1): answers rounded to 3 s.f. stay within the 1 % band."""
    model = two_panel_model()
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    rounded = np.array([float(f"{v:.3g}") for v in elastic])
    dec = decompose_claims(model, rounded, everything(model), elastic, 0, None)
    assert dec.consistent_with_equilibrium
    strict = decompose_claims(model, rounded, everything(model), elastic, 0, None, rtol=1e-9)
    assert not strict.consistent_with_equilibrium  # the rounding is visible at a tight tolerance


def test_reference_free_split_has_the_same_violation() -> None:
    """Without an elastic solution the violation is unchanged (it does not depend on the reference)."""
    model = two_panel_model()
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    claims = elastic + np.linspace(-2.0, 3.0, len(elastic))
    with_elastic = decompose_claims(model, claims, everything(model), elastic, 0, None)
    without = decompose_claims(model, claims, everything(model), None, 0, None)
    np.testing.assert_allclose(without.equilibrium_violation, with_elastic.equilibrium_violation, atol=1e-9)
    assert without.reference == "minimum-norm equilibrium solution"
    assert set(without.joint_residuals) == set(with_elastic.joint_residuals)


# -- random cross-braced trusses (hypothesis) -------------------------------------------------
def braced_model(seed: int, panels: int, extra_support: bool) -> Model:
    rng = np.random.default_rng(seed)
    xs = np.cumsum(np.concatenate([[0.0], rng.uniform(2.0, 5.0, panels)]))
    hs = rng.uniform(1.5, 4.0, panels + 1)
    joints = {f"L{i}": [float(xs[i]), 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [float(xs[i]), float(hs[i])] for i in range(panels + 1)})
    pairs = [(f"L{i}", f"L{i + 1}") for i in range(panels)] + [(f"U{i}", f"U{i + 1}") for i in range(panels)]
    pairs += [(f"L{i}", f"U{i}") for i in range(panels + 1)]
    for i, kind in enumerate(rng.integers(0, 3, panels)):
        if kind in (0, 2):
            pairs.append((f"L{i}", f"U{i + 1}"))
        if kind in (1, 2):
            pairs.append((f"U{i}", f"L{i + 1}"))
    members = {f"{p}{q}": {"ends": [p, q], "EA": float(rng.uniform(0.5, 5.0) * 1e5)} for p, q in pairs}
    supports = {"L0": ["x", "y"], f"L{panels}": ["y"]}
    if extra_support and panels >= 2:
        supports[f"L{panels // 2}"] = ["y"]
    names = list(joints)
    loads = {"W": {names[j]: [float(v) for v in rng.uniform(-20.0, 20.0, 2)] for j in rng.choice(len(names), 3, replace=False)}}
    return make_model(truss_case(joints, members, supports, loads))


@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), panels=st.integers(1, 6), extra=st.booleans(),
       coefficient_seed=st.integers(0, 2**32 - 1))
def test_elastic_plus_any_self_stress_is_pure_self_stress(seed: int, panels: int, extra: bool, coefficient_seed: int) -> None:
    """P&C 1986 (REFERENCES 1.2): adding any combination of self-stress states keeps equilibrium."""
    model = braced_model(seed, panels, extra)
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    A = dense_equilibrium(model)
    S = scipy.linalg.null_space(A)
    b = len(model.members)
    coeff = np.random.default_rng(coefficient_seed).uniform(-50.0, 50.0, S.shape[1])
    added = S @ coeff
    claims = elastic + added[:b]
    reactions = solve_stiffness(model).forces.reactions[:, 0] + added[b:]
    dec = decompose_claims(model, claims, np.ones(b, dtype=bool), elastic, 0, reactions)
    scale = max(np.abs(claims).max(), np.abs(reactions).max())
    assert dec.consistent_with_equilibrium
    np.testing.assert_allclose(dec.equilibrium_violation, 0.0, atol=ATOL * scale)
    np.testing.assert_allclose(dec.self_stress_part, added[:b], atol=ATOL * scale)
    assert dec.self_stress_states == S.shape[1]


@SETTINGS
@given(seed=st.integers(0, 2**32 - 1), panels=st.integers(1, 6), extra=st.booleans(), pick=st.integers(0, 10**6),
       delta=st.floats(50.0, 500.0), sign=st.sampled_from([-1.0, 1.0]))
def test_corrupting_a_member_outside_every_self_stress_is_located(seed: int, panels: int, extra: bool, pick: int,
                                                                  delta: float, sign: float) -> None:
    """A large error on a member no self-stress state uses is all violation, at that member's joints."""
    model = braced_model(seed, panels, extra)
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    A = dense_equilibrium(model)
    S = scipy.linalg.null_space(A)
    b = len(model.members)
    outside = [k for k in range(b) if S.shape[1] == 0 or np.abs(S[k]).max() < 1e-12]
    assume(outside)
    k = outside[pick % len(outside)]
    claims = elastic.copy()
    claims[k] += sign * delta
    dec = decompose_claims(model, claims, np.ones(b, dtype=bool), elastic, 0, None)
    member = model.members[k]
    assert not dec.consistent_with_equilibrium
    assert dec.violation_members == (member.id,)
    assert dec.equilibrium_violation[k] == pytest.approx(sign * delta, rel=1e-9)
    assert dec.joint_residuals and set(dec.joint_residuals) <= {member.start, member.end}


@settings(max_examples=10, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), panels=st.integers(2, 6), extra=st.booleans(), mask_seed=st.integers(0, 2**32 - 1))
def test_sparse_route_agrees_with_dense_route(seed: int, panels: int, extra: bool, mask_seed: int) -> None:
    """The sparse constrained least-squares split equals the SVD split (same definition, two routes)."""
    model = braced_model(seed, panels, extra)
    elastic = solve_stiffness(model).forces.member_forces[:, 0]
    rng = np.random.default_rng(mask_seed)
    b = len(model.members)
    mask = rng.random(b) < 0.7
    claims = np.where(mask, elastic + rng.uniform(-10.0, 10.0, b), np.nan)
    dense = decompose_claims(model, claims, mask, elastic, 0, None)
    sparse = decompose_claims(model, claims, mask, elastic, 0, None, dense_limit=0)
    assert sparse.method == "sparse-kkt" and dense.method == "dense-svd"
    scale = 10.0
    np.testing.assert_allclose(sparse.equilibrium_violation, dense.equilibrium_violation, atol=1e-6 * scale)
    np.testing.assert_allclose(sparse.self_stress_part[mask], dense.self_stress_part[mask], atol=1e-6 * scale)
    assert set(sparse.joint_residuals) == set(dense.joint_residuals)
