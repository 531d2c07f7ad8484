"""The claims' balance at supported joints (verify.compare.balance._balance_supports): claimed
reactions are added, and the part of the leftover force the joint's other reactions can carry is
taken away, the least-squares fit of those reactions. Joints with the same free directions are
fitted together; every residual must equal the fit made joint by joint with numpy's lstsq
(the definition: the residual minus its projection onto the span of the free directions),
on random supports of every kind: axis rollers, inclined rollers, pins, repeated directions."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.compare.balance import _balance_supports


def _joint_by_joint(residual, magnitude, checkable, r_joint, r_dir, claimed):
    residual, magnitude = residual.copy(), magnitude.copy()
    at: dict[int, list[int]] = {}
    for n, j in enumerate(r_joint.tolist()):
        at.setdefault(j, []).append(n)
    for j, ids in at.items():
        if not checkable[j]:
            continue
        free = []
        for n in ids:
            if n in claimed:
                residual[j] += r_dir[n] * claimed[n]
                magnitude[j] += abs(claimed[n])
            else:
                free.append(r_dir[n])
        if free:
            D = np.column_stack(free)
            residual[j] = residual[j] + D @ np.linalg.lstsq(D, -residual[j], rcond=None)[0]
    return residual, magnitude


@settings(max_examples=200, deadline=None)
@given(st.integers(0, 2**32 - 1), st.sampled_from([2, 3]))
def test_grouped_fit_equals_the_fit_joint_by_joint(seed: int, d: int) -> None:
    rng = np.random.default_rng(seed)
    nj = int(rng.integers(1, 30))
    choices = [np.eye(d)[a] for a in range(d)]
    choices += [v / np.linalg.norm(v) for v in rng.normal(size=(2, d))]  # two inclined rollers
    reactions = int(rng.integers(0, 3 * nj))
    r_joint = rng.integers(0, nj, size=reactions)
    r_dir = np.array([choices[i] for i in rng.integers(0, len(choices), size=reactions)])
    r_dir = r_dir.reshape(reactions, d)
    claimed = {int(n): float(rng.normal() * 10) for n in range(reactions) if rng.random() < 0.3}
    residual = rng.normal(size=(nj, d)) * 100
    magnitude = np.abs(rng.normal(size=nj)) * 100
    checkable = rng.random(nj) < 0.8
    expected = _joint_by_joint(residual, magnitude, checkable, r_joint, r_dir, claimed)
    directions, r_code = np.unique(r_dir, axis=0, return_inverse=True)
    got_r, got_m = residual.copy(), magnitude.copy()
    _balance_supports(got_r, got_m, checkable, r_joint, r_dir, directions, r_code.ravel(), claimed)
    np.testing.assert_allclose(got_r, expected[0], rtol=0, atol=1e-9)
    np.testing.assert_array_equal(got_m, expected[1])
    # Where nothing is free or claimed the residual is untouched, bit for bit.
    untouched = ~np.isin(np.arange(nj), r_joint) | ~checkable
    np.testing.assert_array_equal(got_r[untouched], residual[untouched])


def test_joints_with_many_reactions_are_not_mixed_up() -> None:
    """Two joints with 33 free reactions each, the same 32 vertical ones and a different first
    one (x at one, z at the other): each is fitted with its own directions (a key made as one
    number of their codes overflowed here and fitted both with the first joint's)."""
    d = 3
    x, y, z = np.eye(d)
    r_joint = np.array([0] + [0] * 32 + [1] + [1] * 32)
    r_dir = np.array([x] + [y] * 32 + [z] + [y] * 32)
    residual = np.array([[1.0, 2.0, 3.0], [1.0, 2.0, 3.0]])
    magnitude = np.zeros(2)
    checkable = np.array([True, True])
    expected = _joint_by_joint(residual, magnitude, checkable, r_joint, r_dir, {})
    directions, r_code = np.unique(r_dir, axis=0, return_inverse=True)
    _balance_supports(
        residual, magnitude, checkable, r_joint, r_dir, directions, r_code.ravel(), None
    )
    np.testing.assert_allclose(residual, expected[0], rtol=0, atol=1e-12)
    np.testing.assert_allclose(residual, [[0.0, 0.0, 3.0], [1.0, 0.0, 0.0]], atol=1e-12)
