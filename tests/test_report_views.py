"""Plan views of space trusses are seen from above, never mirrored (right-handed axes)."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from trussgen import make_model, truss_case

from verify.report.diagram import views_for


def _tower(long_axis: int):
    """A tripod-like space truss longer along `long_axis` (0 = x, 1 = y), z up, loaded down z."""
    spread = [[0.0, 0.0, 0.0], [2.0, 0.0, 0.0], [1.0, 1.0, 0.0]]
    if long_axis == 1:
        spread = [[y, x, z] for x, y, z in spread]
    joints = {"A": spread[0], "B": spread[1], "C": spread[2], "T": [0.5, 0.5, 3.0]}
    case = truss_case(
        joints,
        [("A", "T"), ("B", "T"), ("C", "T")],
        {j: ["x", "y", "z"] for j in "ABC"},
        {"P": {"T": [0.0, 0.0, -10.0]}},
    )
    return make_model(case)


def test_plan_views_are_right_handed_seen_from_above():
    for long_axis, word in ((0, "up"), (1, "down")):
        plan = views_for(_tower(long_axis))[0]
        across, other = plan.axes
        e = np.eye(3)
        # screen right x screen up (the second axis times its sign) points at the viewer: +z
        assert np.dot(np.cross(e[across], plan.up * e[other]), e[2]) > 0
        assert plan.name.endswith(f"{'xyz'[other]} {word} the page)")


def test_crossed_diagonals_get_their_labels_away_from_the_crossing():
    """Both diagonals of a braced square cross at its centre: each label sits on its own member,
    away from that point (the shared midpoint would put both labels on top of each other)."""
    import re

    from verify.report.diagram import render_diagram

    joints = {"A": [0.0, 0.0], "B": [4.0, 0.0], "C": [4.0, 4.0], "D": [0.0, 4.0]}
    members = [("A", "B"), ("B", "C"), ("C", "D"), ("D", "A"), ("A", "C"), ("B", "D")]
    case = truss_case(joints, members, {"A": ["x", "y"], "B": ["y"]}, {"P": {"C": [1.0, 0.0]}})
    svg = render_diagram(make_model(case))
    labels = {
        m.group(3): (float(m.group(1)), float(m.group(2)))
        for m in re.finditer(r'<text x="([-\d.]+)" y="([-\d.]+)"[^>]*>(AC|BD)</text>', svg)
    }
    assert set(labels) == {"AC", "BD"}
    (ax, ay), (bx, by) = labels["AC"], labels["BD"]
    assert abs(ax - bx) + abs(ay - by) > 30  # well apart, not both at the crossing


def _segment_distance(p, a, b):
    p, a, b = (np.asarray(v, dtype=float) for v in (p, a, b))
    ab = b - a
    t = 0.0 if not ab.any() else float(np.clip(np.dot(p - a, ab) / np.dot(ab, ab), 0.0, 1.0))
    return float(np.linalg.norm(p - (a + t * ab)))


def test_joint_labels_stay_clear_of_load_arrows():
    """A Pratt loaded at every bottom joint, arrows hanging below (a vertical member above): no
    joint label's anchor lies within 6 px of an arrow, nor of a member."""
    import re

    from trussgen import pratt

    from verify.report.diagram import render_diagram

    model = make_model(pratt(load=9.0))
    svg = render_diagram(model, load_name="P")
    loads = svg[svg.index('<g class="loads"') :]
    loads = loads[: loads.index("</g>")]
    arrows = [
        tuple(float(v) for v in m)
        for m in re.findall(
            r'<line x1="([-\d.]+)" y1="([-\d.]+)" x2="([-\d.]+)" y2="([-\d.]+)"', loads
        )
    ]
    members = svg[svg.index('<g class="members"') :]
    members = members[: members.index("</g>")]
    lines = arrows + [
        tuple(float(v) for v in m)
        for m in re.findall(
            r'<line x1="([-\d.]+)" y1="([-\d.]+)" x2="([-\d.]+)" y2="([-\d.]+)"', members
        )
    ]
    labels = svg[svg.index('<g class="joint-labels"') :]
    anchors = [
        (float(x), float(y) - 4.5, name)
        for x, y, name in re.findall(
            r'<text x="([-\d.]+)" y="([-\d.]+)"[^>]*>([^<]+)</text>', labels
        )
    ]
    assert len(arrows) == 5 and len(anchors) == len(model.joints)
    for x, y, name in anchors:
        for x1, y1, x2, y2 in lines:
            assert _segment_distance((x, y), (x1, y1), (x2, y2)) >= 6.0, name


def _crossing_pairs_one_by_one(ends, sx, sy):
    """Every pair of members tested on its own: do the two drawn segments cross strictly inside
    both (between 5 % and 95 % of each), sharing no joint? (Segment intersection by the two
    parameters of the crossing point, common practice.)"""
    out = set()
    for a in range(len(ends)):
        for b in range(a + 1, len(ends)):
            if set(ends[a].tolist()) & set(ends[b].tolist()):
                continue
            p1 = np.array([sx[ends[a, 0]], sy[ends[a, 0]]])
            p2 = np.array([sx[ends[b, 0]], sy[ends[b, 0]]])
            d1 = np.array([sx[ends[a, 1]], sy[ends[a, 1]]]) - p1
            d2 = np.array([sx[ends[b, 1]], sy[ends[b, 1]]]) - p2
            den = d1[0] * d2[1] - d1[1] * d2[0]
            if abs(den) < 1e-9:
                continue
            t = ((p2 - p1)[0] * d2[1] - (p2 - p1)[1] * d2[0]) / den
            u = ((p2 - p1)[0] * d1[1] - (p2 - p1)[1] * d1[0]) / den
            if 0.05 < t < 0.95 and 0.05 < u < 0.95:
                out.update((a, b))
    return out


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    joints=st.integers(2, 25),
    members=st.integers(1, 150),
    on_grid=st.booleans(),
)
def test_crossing_members_found_by_the_sweep_are_those_found_pair_by_pair(
    seed, joints, members, on_grid
):
    """The batched sweep that finds crossed members (for placing their labels) finds exactly the
    members a pair-by-pair test finds, on random drawings (grids make many collinear and
    overlapping members)."""
    import types

    from verify.report.diagram import _crossing

    rng = np.random.default_rng(seed)
    sx = (rng.integers(0, 5, joints) if on_grid else rng.random(joints) * 10).astype(float)
    sy = (rng.integers(0, 5, joints) if on_grid else rng.random(joints) * 10).astype(float)
    ends = rng.integers(0, joints, (members, 2))
    ends = ends[ends[:, 0] != ends[:, 1]]
    model = types.SimpleNamespace(ends_index=ends)
    assert _crossing(model, sx, sy) == _crossing_pairs_one_by_one(ends, sx, sy)
