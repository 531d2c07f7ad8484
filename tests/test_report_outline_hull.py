"""The outline drawn for large trusses (verify.report.diagram.convex_hull) against scipy's
qhull (scipy.spatial.ConvexHull): the same corners in the same cyclic order, on random points,
points on integer grids (many collinear and repeated) and two parallel chords; flat sets give
fewer than three corners where qhull refuses them."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import ConvexHull, QhullError

from verify.report.diagram import convex_hull

# Drawn coordinates: whole pixels on a small grid (collinear and repeated points) or tenths of a
# pixel over a drawing's width (points closer than round-off are merged by qhull, not here).
COORDS = st.one_of(
    st.integers(-4, 4).map(float),
    st.integers(-10_000, 10_000).map(lambda k: k / 10),
)


def _same_ring(expected: np.ndarray, got: np.ndarray) -> bool:
    if len(expected) != len(got):
        return False
    rows = [tuple(p) for p in expected.tolist()]
    if tuple(got[0]) not in rows:
        return False
    return bool(np.array_equal(np.roll(expected, -rows.index(tuple(got[0])), axis=0), got))


@settings(max_examples=300, deadline=None)
@given(st.lists(st.tuples(COORDS, COORDS), min_size=1, max_size=40))
def test_hull_is_qhulls(points: list[tuple[float, float]]) -> None:
    pts = np.array(points, dtype=float)
    got = convex_hull(pts)
    try:
        expected = pts[ConvexHull(pts).vertices]
    except (QhullError, ValueError):  # flat, too few points, or too close for qhull
        if len(got) >= 3:  # then it must at least be a hull: every point inside or on it
            _assert_contains(got, pts)
        return
    if len(expected) >= 3 and _well_spread(pts):
        assert _same_ring(expected, got)
    _assert_contains(got, pts)


def _well_spread(pts: np.ndarray) -> bool:
    """Away from round-off: qhull and the sweep may then differ on nearly collinear corners."""
    span = float(np.ptp(pts, axis=0).min())
    return span > 1e-6 * max(float(np.abs(pts).max()), 1.0)


def _assert_contains(ring: np.ndarray, pts: np.ndarray) -> None:
    scale = max(float(np.abs(pts).max()), 1.0) ** 2
    for a, b in zip(ring, np.roll(ring, -1, axis=0), strict=True):
        cross = (b[0] - a[0]) * (pts[:, 1] - a[1]) - (b[1] - a[1]) * (pts[:, 0] - a[0])
        assert (cross >= -1e-9 * scale).all()  # anticlockwise: every point left of each edge


def test_parallel_chords_have_four_corners() -> None:
    chords = np.array([[x, y] for x in range(30) for y in (0.0, 2.5)], dtype=float)
    got = convex_hull(chords)
    assert {tuple(p) for p in got.tolist()} == {(0.0, 0.0), (29.0, 0.0), (29.0, 2.5), (0.0, 2.5)}
    assert _same_ring(chords[ConvexHull(chords).vertices], got)


def test_flat_and_single_points() -> None:
    assert len(convex_hull(np.array([[1.0, 1.0]] * 3))) == 1
    assert len(convex_hull(np.array([[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]]))) == 2
    assert convex_hull(np.zeros((0, 2))).shape == (0, 2)


def test_pitched_chords_with_decimal_coordinates_have_four_corners() -> None:
    """Decimal coordinates of a sloped chord are collinear only to round-off: its inner joints
    are not corners (as qhull, which merges them too)."""
    i = np.arange(200)
    bottom = np.column_stack([i * 0.1, i * 0.03])
    pts = np.vstack([bottom, bottom + [0.0, 1.7]])
    got = convex_hull(pts)
    assert len(got) == 4
    assert _same_ring(pts[ConvexHull(pts).vertices], got)
