"""The truss drawn as hand-written, self-contained SVG: tension/compression and review status.

Visual code (our own, explained in the legend that every drawing carries):

- *Force*: compression is a wide band, tension a narrow line, a zero-force member a dotted
  hairline, a member without a recomputed force a long-dashed line. Thickness survives greyscale
  printing and colour blindness.
- *Status*: members whose claim agrees are drawn plain (dark grey, no mark): colour appears only
  where there is a finding, one colour per status from the Okabe-Ito palette (M. Okabe & K. Ito,
  "Color Universal Design", 2008, designed to stay distinguishable for the common colour-vision
  deficiencies), plus a mark in a small circle (! ↔ ± ÷ ∅ ?), chosen to clash with no symbol of
  the trade (N is a force, X reads as "fail"), so the status reads without colour.

Every text is escaped; coordinates are written with one decimal and members in model order, so the
same input gives byte-identical output.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass
from html import escape

import numpy as np

from verify.model import Model
from verify.report.numbers import fmt


@dataclass(frozen=True)
class StatusStyle:
    key: str
    colour: str
    marker: str  # letter drawn at the member's midpoint; "" for none
    words: str  # the legend's plain words
    rank: int  # when several claims of one member differ, the lower rank is drawn


STATUS_STYLES: dict[str, StatusStyle] = {
    s.key: s
    for s in (
        StatusStyle(
            "discrepancy",
            "#D55E00",
            "!",
            "claimed value differs (wrong value, force claimed for a zero-force member, "
            "or a distribution that depends on the stiffness assumed)",
            0,
        ),
        StatusStyle(
            "swapped", "#0072B2", "↔", "claim belongs to another member (labels swapped)", 1
        ),
        StatusStyle("sign", "#CC79A7", "±", "sign or T/C reversed", 2),
        StatusStyle("unit", "#E69F00", "÷", "off by a unit factor (e.g. N written for kN)", 3),
        StatusStyle(
            "not-reached", "#000000", "∅", "not reached: no recomputed force to compare with", 4
        ),
        StatusStyle("missing", "#8C8C8C", "?", "no claim given for this member (not checked)", 5),
        # Agreement is the ordinary case: drawn like an unchecked member, with no colour and no
        # mark, so colour never reads as "this member passes" the way a capacity check colours it.
        StatusStyle("agrees", "#3A3A3A", "", "agrees within tolerance (drawn plain)", 6),
    )
}
NEUTRAL = StatusStyle("neutral", "#3A3A3A", "", "member (no claims compared)", 7)

STATUS_CATEGORY: dict[str, str] = {
    "agrees": "agrees",
    "value-mismatch": "discrepancy",
    "likely-cause": "discrepancy",
    # statics of the truss without its slack diagonals: said as information
    "tension-only": "agrees",
    "zero-force-claimed": "discrepancy",
    "stiffness-dependent": "discrepancy",
    "equilibrium-residual": "discrepancy",
    "sign-flip": "sign",
    "table-sign-convention": "sign",
    "unit-scale": "unit",
    "swapped-labels": "swapped",
    "missing-claim": "missing",
    "not-verifiable": "not-reached",
}

COMPRESSION_WIDTH = 7.0
TENSION_WIDTH = 2.4
ZERO_WIDTH = 1.4
ZERO_DASH = "1.5 4"
UNKNOWN_DASH = "10 6"
ZERO_RTOL = 1e-9  # |force| below this fraction of the largest is drawn as a zero-force member

BASE_WIDTH = 900.0  # px of the drawing area for a small truss
MAX_WIDTH = 2400.0  # px; larger models are drawn smaller rather than wider
MAX_HEIGHT = 900.0  # px of one view (2D)
MAX_HEIGHT_3D = 520.0  # px of each of the two views of a space truss
MARGIN = 100.0  # room for load arrows (at most 62 px) and their labels
LABEL_MIN_PX = 42.0  # member labels only when the median member is at least this long on screen
MAX_LABELLED_MEMBERS = 2000  # above this, no per-member labels or markers (DESIGN: large models)
# An outline draws at most this many supported joints spread along the truss, and those of the
# members with a finding: a continuous truss on 40,000 supports drew 4 MB of supports.
OUTLINE_SUPPORTS = 200
FONT = "font-family:'DejaVu Sans',Verdana,Arial,sans-serif"


def status_category(status: str) -> str:
    return STATUS_CATEGORY.get(status, "discrepancy")


def worst_status(statuses: Sequence[str]) -> str:
    """The category drawn for a member with several claims in one load column."""
    cats = [status_category(s) for s in statuses]
    return min(cats, key=lambda c: STATUS_STYLES[c].rank)


class RowStatuses(Mapping[str, str]):
    """Member id -> status of the rows of one load column with one claim per member, read from
    the rows' codes (`ids` into `id_words`, `statuses` into `status_words`, one of each per row)
    instead of a dict of every member: a 10^6-member report draws the flagged few, and the dict
    took a third of a second. `index` maps an id word to its code when a table of them exists
    (the model's member index, when the words are the model's ids); else one is made on the
    first lookup."""

    def __init__(
        self,
        ids: np.ndarray,
        id_words: Sequence[str],
        statuses: np.ndarray,
        status_words: Sequence[str],
        index: Mapping[str, int] | None = None,
    ) -> None:
        self.ids, self.id_words = np.asarray(ids, dtype=np.int64), id_words
        self.statuses, self.status_words = np.asarray(statuses, dtype=np.int64), status_words
        self._index = index
        self._row_of: np.ndarray | None = None  # the row of each id code, -1 for none

    def __len__(self) -> int:
        return int(self.ids.size)

    def __iter__(self) -> Iterator[str]:
        return iter(list(map(self.id_words.__getitem__, self.ids.tolist())))

    def __getitem__(self, member: str) -> str:
        if self._index is None:
            self._index = {word: n for n, word in enumerate(self.id_words)}
        if self._row_of is None:
            self._row_of = np.full(len(self.id_words), -1, dtype=np.int64)
            self._row_of[self.ids] = np.arange(self.ids.size)
        code = self._index.get(member) if isinstance(member, str) else None
        if code is None or not 0 <= code < len(self.id_words) or self.id_words[code] != member:
            raise KeyError(member)
        row = int(self._row_of[code])
        if row < 0:
            raise KeyError(member)
        return self.status_words[int(self.statuses[row])]

    def distinct_values(self) -> set[str]:
        """`set(self.values())`, from the status codes present."""
        return {self.status_words[c] for c in np.unique(self.statuses).tolist()}

    def members_with(self, wanted: set[str]) -> list[str]:
        """The members whose status is one of `wanted`, in row order."""
        codes = [n for n, word in enumerate(self.status_words) if word in wanted]
        picked = self.ids[np.isin(self.statuses, codes)]
        return list(map(self.id_words.__getitem__, picked.tolist()))


def _distinct_statuses(statuses: Mapping[str, str]) -> set[str]:
    if isinstance(statuses, RowStatuses):
        return statuses.distinct_values()
    return set(statuses.values())


def _n(value: float) -> str:
    text = f"{value:.1f}"
    return "0.0" if text == "-0.0" else text


@dataclass(frozen=True)
class _View:
    name: str  # caption, e.g. "Elevation (x-y)"
    axes: tuple[int, int]  # model axes drawn as screen x and screen up
    up: float = (
        1.0  # -1 draws the second axis down the page, so a plan seen from above is not mirrored
    )


def views_for(model: Model) -> list[_View]:
    """2D: the plane itself. 3D: a plan and an elevation, the vertical taken from the loads."""
    names = "xyz"
    if model.dim == 2:
        return [_View("Elevation (x–y)", (0, 1))]
    # z is the usual vertical (common practice); a model loaded only along y is taken as y-up.
    loads = (
        np.abs(model.load_matrix()).reshape(len(model.joints), 3, -1).sum(axis=(0, 2))
        if len(model.joints)
        else np.zeros(3)
    )
    vertical = 1 if loads[2] == 0 and loads[1] > 0 else 2
    horizontal = [a for a in range(3) if a != vertical]
    extent = np.ptp(model.xyz, axis=0) if len(model.joints) else np.zeros(3)
    across = max(horizontal, key=lambda a: (extent[a], -a))
    other = [a for a in horizontal if a != across][0]
    # Seen from above (the vertical toward the viewer), screen right x screen up must be the
    # vertical: (x, y) under z is; (y, x) is not, and then x is drawn down the page instead.
    e = np.eye(3)
    up = 1.0 if float(np.dot(np.cross(e[across], e[other]), e[vertical])) > 0 else -1.0
    return [
        _View(
            f"Plan (looking down {names[vertical]}: {names[across]} across, {names[other]} "
            f"{'up' if up > 0 else 'down'} the page)",
            (across, other),
            up,
        ),
        _View(
            f"Elevation (looking along {names[other]}: {names[across]} across, {names[vertical]} "
            "up)",
            (across, vertical),
        ),
    ]


def render_diagram(
    model: Model,
    *,
    forces: Sequence[float] | np.ndarray | None = None,
    statuses: Mapping[str, str] | None = None,
    load_name: str | None = None,
    caption: str = "",
    legend: bool = True,
    implied: np.ndarray | None = None,
    outline: bool = False,
) -> str:
    """An HTML <figure> with one SVG per view and (unless `legend` is False) a legend in plain
    words.

    `outline`: draw the truss's outline (the convex hull of its joints in each view), the
    supports and only the members with a finding, for trusses too large to draw member by member
    (the caller says so in the caption).

    `forces` are member forces (tension positive) in model order for the load column
    `load_name`; `statuses` maps member id to a review status (see STATUS_CATEGORY). Without
    statuses the members are drawn in one neutral colour.
    """
    force_arr = None if forces is None else np.asarray(forces, dtype=float)
    loads = None
    if load_name is not None and load_name in model.load_names:
        loads = model.load_matrix()[:, model.load_names.index(load_name)]
    views = views_for(model)
    svgs = [_svg(model, view, force_arr, statuses, loads, implied, outline) for view in views]
    parts = ['<figure class="truss">']
    for view, svg in zip(views, svgs, strict=True):
        parts.append(
            f'<div class="view"><div class="view-name">{escape(view.name)}</div>{svg}</div>'
        )
    if caption:
        parts.append(f"<figcaption>{escape(caption)}</figcaption>")
    if legend:
        parts.append(
            legend_html(
                with_status=statuses is not None, used=used_categories(model, statuses), model=model
            )
        )
    parts.append("</figure>")
    return "\n".join(parts)


def used_categories(model: Model, statuses: Mapping[str, str] | None) -> set[str]:
    if statuses is None:
        return set()
    # Every key is a member id (rows name members of this model): one look per status.
    return {status_category(s) for s in _distinct_statuses(statuses)}


def _style_for(member_id: str, statuses: Mapping[str, str] | None) -> StatusStyle:
    if statuses is None:
        return NEUTRAL
    status = statuses.get(member_id)
    return (
        STATUS_STYLES[status_category(status)] if status is not None else STATUS_STYLES["missing"]
    )


def _svg(
    model: Model,
    view: _View,
    forces: np.ndarray | None,
    statuses: Mapping[str, str] | None,
    loads: np.ndarray | None,
    implied: np.ndarray | None = None,
    outline: bool = False,
) -> str:
    ax, ay = view.axes
    pts = (
        model.xyz[:, [ax, ay]] * np.array([1.0, view.up]) if len(model.joints) else np.zeros((0, 2))
    )
    lo = pts.min(axis=0) if len(pts) else np.zeros(2)
    hi = pts.max(axis=0) if len(pts) else np.ones(2)
    span = np.maximum(hi - lo, 1e-12)
    projected_len = (
        np.linalg.norm(pts[model.ends_index[:, 1]] - pts[model.ends_index[:, 0]], axis=1)
        if len(model.members)
        else np.ones(1)
    )
    positive = projected_len[projected_len > 1e-9 * float(span.max())]
    median = float(np.median(positive)) if positive.size else float(span.max())
    scale = BASE_WIDTH / float(span.max())
    if len(model.members) <= MAX_LABELLED_MEMBERS and median * scale < LABEL_MIN_PX * 1.6:
        scale = LABEL_MIN_PX * 1.6 / median  # enlarge so labels fit, within the caps below
    scale = min(
        scale,
        MAX_WIDTH / float(span[0]) if span[0] > 1e-9 * span.max() else scale,
        (MAX_HEIGHT if model.dim == 2 else MAX_HEIGHT_3D) / float(span[1])
        if span[1] > 1e-9 * span.max()
        else scale,
    )
    width = float(span[0]) * scale + 2 * MARGIN
    height = float(span[1]) * scale + 2 * MARGIN
    # Screen coordinates: x right, y down.
    sx = (pts[:, 0] - lo[0]) * scale + MARGIN
    sy = (hi[1] - pts[:, 1]) * scale + MARGIN
    labels = len(model.members) <= MAX_LABELLED_MEMBERS and median * scale >= LABEL_MIN_PX
    joint_labels = (
        len(model.joints) <= MAX_LABELLED_MEMBERS and median * scale >= LABEL_MIN_PX * 0.6
    )
    largest = (
        float(np.nanmax(np.abs(forces)))
        if forces is not None and forces.size and np.isfinite(forces).any()
        else 0.0
    )
    zero = ZERO_RTOL * (largest or 1.0)

    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" role="img" width="{_n(width)}" '
        f'height="{_n(height)}" viewBox="0 0 {_n(width)} {_n(height)}" '
        f'style="max-width:100%;height:auto;{FONT}">'
    ]
    out.append(f"<title>{escape(model.title or 'truss')} — {escape(view.name)}</title>")
    out.append(f'<rect x="0" y="0" width="{_n(width)}" height="{_n(height)}" fill="#ffffff"/>')

    # Members: compression bands under tension lines so thin lines stay visible at crossings.
    order = list(range(len(model.members)))
    if outline:
        out.append(_outline(sx, sy))
        order = _flagged_positions(model, statuses)
    if forces is not None:
        order.sort(key=lambda i: 0 if np.isfinite(forces[i]) and forces[i] < -zero else 1)
    lines = []
    for i in order:
        member = model.members[i]
        a, b = model.ends_index[i]
        style = _style_for(member.id, statuses)
        value = float(forces[i]) if forces is not None else math.nan
        if forces is None:
            width_px, dash, kind = TENSION_WIDTH, "", "member"
        elif not math.isfinite(value):
            width_px, dash, kind = TENSION_WIDTH, UNKNOWN_DASH, "no recomputed force"
        elif value < -zero:
            width_px, dash, kind = COMPRESSION_WIDTH, "", f"compression {fmt(-value)}"
        elif value > zero:
            width_px, dash, kind = TENSION_WIDTH, "", f"tension {fmt(value)}"
        else:
            width_px, dash, kind = ZERO_WIDTH, ZERO_DASH, "zero force"
        dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
        tooltip = f"{member.id}: {kind}" + (
            f"; {statuses[member.id]}" if statuses and member.id in statuses else ""
        )
        lines.append(
            f'<line x1="{_n(sx[a])}" y1="{_n(sy[a])}" x2="{_n(sx[b])}" y2="{_n(sy[b])}" '
            f'stroke="{style.colour}" stroke-width="{width_px:g}"{dash_attr} '
            f'stroke-linecap="round"><title>{escape(tooltip)}</title></line>'
        )
    out.append('<g class="members">' + "".join(lines) + "</g>")

    arrows: dict[int, tuple[float, float]] = {}
    out.extend(_supports(model, view, sx, sy, arrows, _supports_drawn(model, order, outline)))
    if loads is not None and not outline:
        out.extend(_loads(model, view, sx, sy, loads, arrows))
    if implied is not None:
        # The loads the claims balance, dashed and in another colour, scaled with the case's own
        # so that the two sets of arrows compare at a glance.
        out.extend(
            _loads(
                model,
                view,
                sx,
                sy,
                implied,
                arrows,
                style=IMPLIED_STYLE,
                largest=_largest_load(model, loads, implied),
            )
        )

    shown_joints = (
        sorted({int(j) for i in order for j in model.ends_index[i]})
        if outline
        else range(len(model.joints))
    )
    joints = [
        f'<circle cx="{_n(sx[j])}" cy="{_n(sy[j])}" r="3.5" fill="#ffffff" stroke="#1a1a1a" '
        'stroke-width="1.5"/>'
        for j in shown_joints
    ]
    out.append('<g class="joints">' + "".join(joints) + "</g>")

    if len(model.members) <= MAX_LABELLED_MEMBERS and statuses is not None:
        out.append('<g class="markers">' + "".join(_markers(model, sx, sy, statuses)) + "</g>")
    if labels:
        out.append(
            '<g class="member-labels" font-size="12" fill="#1a1a1a">'
            + "".join(_member_labels(model, sx, sy, statuses))
            + "</g>"
        )
    if joint_labels:
        out.append(
            '<g class="joint-labels" font-size="13" font-weight="bold" fill="#1a1a1a">'
            + "".join(_joint_labels(model, sx, sy, arrows))
            + "</g>"
        )
    out.append("</svg>")
    return "".join(out)


def _flagged_positions(model: Model, statuses: Mapping[str, str] | None) -> list[int]:
    """The positions of the members with a finding, in member order (one look at each distinct
    status, not a call per member of a 10^6-member outline)."""
    if not statuses:
        return []
    bad = {
        s for s in _distinct_statuses(statuses) if status_category(s) not in ("agrees", "missing")
    }
    index = model.member_index
    if isinstance(statuses, RowStatuses):  # the flagged few found by their codes
        return sorted(index[m] for m in statuses.members_with(bad) if m in index)
    return sorted(index[m] for m, s in statuses.items() if s in bad and m in index)


def _outline(sx: np.ndarray, sy: np.ndarray) -> str:
    """The convex hull of the joints as drawn; a bounding line if flat."""
    pts = np.column_stack([sx, sy])
    if len(pts) == 0:
        return ""
    ring = convex_hull(pts)
    if len(ring) < 3:  # flat or a single point: draw the extent instead
        lo, hi = pts.min(axis=0), pts.max(axis=0)
        ring = np.array([lo, [hi[0], lo[1]], hi, [lo[0], hi[1]]])
    points = " ".join(f"{_n(x)},{_n(y)}" for x, y in ring)
    return (
        f'<polygon class="outline" points="{points}" fill="#f3f3f3" stroke="#8C8C8C" '
        'stroke-width="1.5"/>'
    )


def convex_hull(pts: np.ndarray) -> np.ndarray:
    """The corners of the convex hull of 2D points, anticlockwise (y up) from the lowest-left
    one; points on an edge are not corners.

    Quickhull, each step on whole arrays: a truss's outline has a handful of corners, so a few
    passes over the joints (qhull's module cost more to import than this takes at 10^6 joints).
    """
    pts = np.asarray(pts, dtype=float)
    if len(pts) == 0:
        return pts.reshape(0, 2)
    order = np.lexsort((pts[:, 1], pts[:, 0]))
    a, b = pts[order[0]], pts[order[-1]]  # leftmost (lowest of them), rightmost (highest)
    if np.array_equal(a, b):
        return a.reshape(1, 2)
    # Closer to a line than this is on it: decimal coordinates of a pitched chord are collinear
    # only to round-off.
    tol = HULL_TOLERANCE * float(np.ptp(pts, axis=0).max())
    side = _cross(a, b, pts) / float(np.hypot(*(b - a)))
    ring = [
        a,
        *_hull_side(a, b, pts[side < -tol], tol),
        b,
        *_hull_side(b, a, pts[side > tol], tol),
    ]
    return np.array(ring)


HULL_TOLERANCE = 1e-9  # of the points' extent


def _cross(a: np.ndarray, b: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """Twice the signed area of (a, b, p) for each p: positive when p is left of a -> b."""
    return (b[0] - a[0]) * (pts[:, 1] - a[1]) - (b[1] - a[1]) * (pts[:, 0] - a[0])


def _right_of(p: np.ndarray, q: np.ndarray, pts: np.ndarray) -> np.ndarray:
    """The distance of each point to the right of the line p -> q (negative: left of it)."""
    return -_cross(p, q, pts) / float(np.hypot(*(q - p)))


def _hull_side(a: np.ndarray, b: np.ndarray, pts: np.ndarray, tol: float) -> list[np.ndarray]:
    """Hull corners right of a -> b by more than `tol`, from a towards b (anticlockwise with y
    up)."""
    corners: list[np.ndarray] = []
    # Depth first with an explicit stack: the part towards `a` is taken first, then the corner.
    pending: list[tuple[np.ndarray, np.ndarray, np.ndarray] | np.ndarray] = [(a, b, pts)]
    while pending:
        item = pending.pop()
        if not isinstance(item, tuple):
            corners.append(item)
            continue
        p, q, candidates = item
        if not len(candidates):
            continue
        distance = _right_of(p, q, candidates)
        if distance.max() <= tol:
            continue
        # Of points equally far (a chord of a grid lies parallel to p -> q) only the ends are
        # corners: the one furthest along p -> q.
        tied = candidates[distance >= distance.max() - tol]
        far = tied[int(np.argmax((tied - p) @ (q - p)))]
        first = candidates[_right_of(p, far, candidates) > tol]
        second = candidates[_right_of(far, q, candidates) > tol]
        pending.extend([(far, q, second), far, (p, far, first)])
    return corners


def _halo() -> str:
    return 'paint-order="stroke" stroke="#ffffff" stroke-width="3.5" stroke-linejoin="round"'


CROSSING_CHUNK = 256  # members swept per batch of pair tests (bounds the pair arrays' memory)
CROSSING_AT = (
    0.3  # where along a member that crosses another its label and mark sit (not the crossing)
)


def _crossing(model: Model, sx: np.ndarray, sy: np.ndarray) -> set[int]:
    """Members whose drawn lines cross another member's inside both (crossed bracing)."""
    ends = model.ends_index
    p, q = (
        np.column_stack([sx[ends[:, 0]], sy[ends[:, 0]]]),
        np.column_stack([sx[ends[:, 1]], sy[ends[:, 1]]]),
    )
    lo, hi = np.minimum(p, q), np.maximum(p, q)
    order = np.argsort(lo[:, 0])
    # A sweep along x: member a meets only the members after it in this order whose boxes start
    # before its box ends. All those pairs are tested at once (at most MAX_LABELLED_MEMBERS
    # members are labelled, so the pairs stay few; a plan view of a 3D grid overlaps many boxes,
    # and one pair at a time in Python cost 0.2 s per drawing at 10^3 members).
    stop = np.searchsorted(lo[order, 0], hi[order, 0], side="right")
    start = np.arange(1, order.size + 1)
    count = np.maximum(stop - start, 0)
    out: set[int] = set()
    for first in range(0, order.size, CROSSING_CHUNK):
        sl = slice(first, first + CROSSING_CHUNK)
        c = count[sl]
        if not c.sum():
            continue
        a = np.repeat(order[sl], c)
        offset = np.arange(c.sum()) - np.repeat(np.cumsum(c) - c, c)
        b = order[np.repeat(start[sl], c) + offset]
        keep = ~((lo[b, 1] > hi[a, 1]) | (hi[b, 1] < lo[a, 1]))
        keep &= (ends[b, 0] != ends[a, 0]) & (ends[b, 0] != ends[a, 1])
        keep &= (ends[b, 1] != ends[a, 0]) & (ends[b, 1] != ends[a, 1])
        a, b = a[keep], b[keep]
        d1, d2 = q[a] - p[a], q[b] - p[b]
        den = d1[:, 0] * d2[:, 1] - d1[:, 1] * d2[:, 0]
        ok = np.abs(den) >= 1e-9
        a, b, d1, d2, den = a[ok], b[ok], d1[ok], d2[ok], den[ok]
        dp = p[b] - p[a]
        t = (dp[:, 0] * d2[:, 1] - dp[:, 1] * d2[:, 0]) / den
        u = (dp[:, 0] * d1[:, 1] - dp[:, 1] * d1[:, 0]) / den
        hit = (0.05 < t) & (t < 0.95) & (0.05 < u) & (u < 0.95)
        out.update(a[hit].tolist())
        out.update(b[hit].tolist())
    return out


def _midpoint_frame(
    model: Model, sx: np.ndarray, sy: np.ndarray, i: int, at: float = 0.5
) -> tuple[float, float, float, float]:
    """The point `at` along member i (its midpoint by default) and the unit normal (screen);
    the normal points up (or right)."""
    a, b = model.ends_index[i]
    mx, my = sx[a] + at * (sx[b] - sx[a]), sy[a] + at * (sy[b] - sy[a])
    dx, dy = sx[b] - sx[a], sy[b] - sy[a]
    length = math.hypot(dx, dy) or 1.0
    nx, ny = -dy / length, dx / length
    if ny > 0 or (abs(ny) < 1e-9 and nx < 0):
        nx, ny = -nx, -ny
    return float(mx), float(my), nx, ny


def _markers(
    model: Model, sx: np.ndarray, sy: np.ndarray, statuses: Mapping[str, str]
) -> list[str]:
    out = []
    crossing = _crossing(model, sx, sy)
    for i, member in enumerate(model.members):
        style = _style_for(member.id, statuses)
        if not style.marker:
            continue
        mx, my, _, _ = _midpoint_frame(model, sx, sy, i, CROSSING_AT if i in crossing else 0.5)
        out.append(
            f'<circle cx="{_n(mx)}" cy="{_n(my)}" r="8.5" fill="#ffffff" stroke="{style.colour}" '
            f'stroke-width="2"/><text x="{_n(mx)}" y="{_n(my + 4.2)}" text-anchor="middle" '
            f'font-size="12" font-weight="bold" fill="#1a1a1a">{escape(style.marker)}</text>'
        )
    return out


def _member_labels(
    model: Model, sx: np.ndarray, sy: np.ndarray, statuses: Mapping[str, str] | None
) -> list[str]:
    out = []
    crossing = _crossing(model, sx, sy)
    for i, member in enumerate(model.members):
        # on crossed bracing the label goes beyond the mark, both clear of the crossing point
        at = 1.0 - CROSSING_AT if i in crossing else 0.5
        mx, my, nx, ny = _midpoint_frame(model, sx, sy, i, at)
        offset = 15.0
        x, y = mx + nx * offset, my + ny * offset + 4
        anchor = "middle" if abs(nx) < 0.5 else ("start" if nx > 0 else "end")
        out.append(
            f'<text x="{_n(x)}" y="{_n(y)}" text-anchor="{anchor}" '
            f"{_halo()}>{escape(_short(member.id))}</text>"
        )
    return out


def _short(label: str, limit: int = 14) -> str:
    return label if len(label) <= limit else label[: limit - 1] + "…"


def _joint_labels(
    model: Model, sx: np.ndarray, sy: np.ndarray, arrows: Mapping[int, tuple[float, float]]
) -> list[str]:
    """Each joint label in the clearest of eight directions around its joint: the one farthest
    (in angle) from every member and load arrow there, so no label sits on a line or an arrow.

    Ties go to the side opposite the mean of those directions (a label outside the truss)."""
    n = len(model.joints)
    around: list[list[float]] = [[] for _ in range(n)]
    dirx = np.zeros(n)
    diry = np.zeros(n)
    for a, b in model.ends_index.tolist():
        dx, dy = sx[b] - sx[a], sy[b] - sy[a]
        length = math.hypot(dx, dy) or 1.0
        dirx[a] += dx / length
        diry[a] += dy / length
        dirx[b] -= dx / length
        diry[b] -= dy / length
        if length > 1e-9:
            around[a].append(math.atan2(dy, dx))
            around[b].append(math.atan2(-dy, -dx))
    for j, (ax_, ay_) in arrows.items():
        # an arrow is drawn long and carries a label at its tail: twice a member's weight
        dirx[j] += 2 * ax_
        diry[j] += 2 * ay_
        around[j].append(math.atan2(ay_, ax_))
    out = []
    for j, joint in enumerate(model.joints):
        length = math.hypot(dirx[j], diry[j])
        ux, uy = (-dirx[j] / length, -diry[j] / length) if length > 1e-6 else (-0.7071, -0.7071)
        ux, uy = _clearest(around[j], (ux, uy))
        x, y = sx[j] + ux * 14, sy[j] + uy * 14 + 4.5
        anchor = "middle" if abs(ux) < 0.4 else ("start" if ux > 0 else "end")
        out.append(
            f'<text x="{_n(x)}" y="{_n(y)}" text-anchor="{anchor}" '
            f"{_halo()}>{escape(_short(joint.id))}</text>"
        )
    return out


LABEL_DIRECTIONS = tuple(k * math.pi / 4 for k in range(8))


def _clearest(obstacles: Sequence[float], preferred: tuple[float, float]) -> tuple[float, float]:
    """The unit direction among LABEL_DIRECTIONS with the widest angle to every obstacle; among
    those within 1° of the widest, the one closest to `preferred`."""
    if not obstacles:
        return preferred

    def gap(theta: float) -> float:
        return min(abs((theta - o + math.pi) % (2 * math.pi) - math.pi) for o in obstacles)

    best = max(gap(t) for t in LABEL_DIRECTIONS)
    near = [t for t in LABEL_DIRECTIONS if gap(t) >= best - math.radians(1)]
    theta = max(near, key=lambda t: math.cos(t) * preferred[0] + math.sin(t) * preferred[1])
    return math.cos(theta), math.sin(theta)


def _supports_drawn(model: Model, flagged: list[int], outline: bool) -> set[str] | None:
    """The supported joints an outline draws when there are more than OUTLINE_SUPPORTS: that
    many spread evenly over them in the model's order, and those at the ends of the members with
    a finding (`flagged`); None: every one."""
    if not outline:
        return None
    supported = list(dict.fromkeys(r.joint for r in model.reactions))
    if len(supported) <= OUTLINE_SUPPORTS:
        return None
    spread = np.unique(np.linspace(0, len(supported) - 1, OUTLINE_SUPPORTS).round().astype(int))
    keep = {supported[k] for k in spread.tolist()}
    ids = model.joint_ids
    for i in flagged:
        keep.update(ids[int(j)] for j in model.ends_index[i])
    return keep


def _supports(
    model: Model,
    view: _View,
    sx: np.ndarray,
    sy: np.ndarray,
    occupied: dict[int, tuple[float, float]],
    only: set[str] | None = None,
) -> list[str]:
    """A triangle whose apex is the joint, its base on the side the support pushes from (at the
    joints of `only` when given)."""
    by_joint: dict[str, list[tuple[float, ...]]] = {}
    for reaction in model.reactions:
        if only is None or reaction.joint in only:
            by_joint.setdefault(reaction.joint, []).append(reaction.direction)
    ax, ay = view.axes
    out = ['<g class="supports" fill="#ffffff" stroke="#1a1a1a" stroke-width="1.5">']
    for joint_id, directions in by_joint.items():
        j = model.joint_index[joint_id]
        vertical = [d for d in directions if abs(d[ay]) > 0.5]
        main = vertical[0] if vertical else directions[0]
        ux, uy = float(main[ax]), -view.up * float(main[ay])
        length = math.hypot(ux, uy)
        if length < 1e-9:  # restraint along the viewing direction only
            ux, uy = 0.0, -1.0
        else:
            ux, uy = ux / length, uy / length
        occupied[j] = (-ux, -uy)
        size = 16.0
        bx, by = sx[j] + (-ux) * size, sy[j] + (-uy) * size  # the base centre, away from the push
        px, py = -uy, ux
        half = size * 0.7
        p1 = (bx + px * half, by + py * half)
        p2 = (bx - px * half, by - py * half)
        out.append(
            f'<polygon points="{_n(sx[j])},{_n(sy[j])} {_n(p1[0])},{_n(p1[1])} '
            f'{_n(p2[0])},{_n(p2[1])}"/>'
        )
        full = len(directions) >= model.dim
        gx, gy = bx - ux * (0.5 if full else 7.5), by - uy * (0.5 if full else 7.5)
        if not full:
            for s in (-0.45, 0.45):
                cx, cy = bx - ux * 3.8 + px * half * s * 1.4, by - uy * 3.8 + py * half * s * 1.4
                out.append(f'<circle cx="{_n(cx)}" cy="{_n(cy)}" r="3.2"/>')
        g1 = (gx + px * half * 1.4, gy + py * half * 1.4)
        g2 = (gx - px * half * 1.4, gy - py * half * 1.4)
        out.append(
            f'<line x1="{_n(g1[0])}" y1="{_n(g1[1])}" x2="{_n(g2[0])}" y2="{_n(g2[1])}" '
            'stroke-width="2.5"/>'
        )
    out.append("</g>")
    return out


def _loads(
    model: Model,
    view: _View,
    sx: np.ndarray,
    sy: np.ndarray,
    loads: np.ndarray,
    arrows: dict[int, tuple[float, float]],
    *,
    style: tuple[str, str, str] = ("loads", "#5A3E99", ""),
    largest: float | None = None,
) -> list[str]:
    """Load arrows; `arrows` receives, per joint, the screen direction the arrow's body takes.

    `style` is (css class, colour, dash pattern); `largest` the load drawn at full arrow length.
    """
    d = model.dim
    ax, ay = view.axes
    vectors = loads.reshape(len(model.joints), d)
    magnitude = np.linalg.norm(vectors, axis=1)
    if largest is None:
        largest = float(magnitude.max()) if magnitude.size else 0.0
    if largest <= 0:
        return []
    css, colour, dash = style
    dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
    # Implied loads carry the rounding of the claims: an arrow a fiftieth of the largest is noise.
    smallest = 0.02 * largest if css != "loads" else 1e-12 * largest
    unit = model.units.force.symbol
    loaded = np.flatnonzero(magnitude > smallest)
    # The members at each loaded joint, in member order (an outline of 10^6 members draws the
    # implied loads of a few joints: the other joints' members are never looked at).
    ends = model.ends_index
    touching = np.isin(ends[:, 0], loaded) | np.isin(ends[:, 1], loaded)
    neighbours: dict[int, list[int]] = {j: [] for j in loaded.tolist()}
    for a, b in ends[touching].tolist():
        if a in neighbours:
            neighbours[a].append(b)
        if b in neighbours:
            neighbours[b].append(a)
    case_loaded = set(arrows)  # joints whose arrows were drawn before this call
    out = [f'<g class="{css}" stroke="{colour}" fill="{colour}" font-size="11.5">']
    for j in loaded.tolist():
        vx, vy = float(vectors[j, ax]), -view.up * float(vectors[j, ay])
        shown = math.hypot(vx, vy)
        if shown < 0.05 * magnitude[j]:
            continue  # the load points along the line of sight of this view
        ux, uy = vx / shown, vy / shown
        length = 22.0 + 34.0 * float(magnitude[j]) / largest
        if _blocked(neighbours, sx, sy, j, -ux, -uy) and not _blocked(
            neighbours, sx, sy, j, ux, uy
        ):
            # A member lies where the arrow would come in: draw it leaving the joint instead.
            tail_x, tail_y = sx[j] + ux * 6, sy[j] + uy * 6
            tx, ty = tail_x + ux * length, tail_y + uy * length
            label_x, label_y = tx + ux * 4, ty + uy * 4
            arrows[j] = _add(arrows.get(j), (ux, uy))
        else:
            tx, ty = sx[j] - ux * 5, sy[j] - uy * 5  # the tip stops short of the joint circle
            tail_x, tail_y = tx - ux * length, ty - uy * length
            label_x, label_y = tail_x - ux * 4, tail_y - uy * 4
            arrows[j] = _add(arrows.get(j), (-ux, -uy))
        head = 8.0
        hx, hy = tx - ux * head, ty - uy * head
        px, py = -uy * head * 0.45, ux * head * 0.45
        out.append(
            f'<line x1="{_n(tail_x)}" y1="{_n(tail_y)}" x2="{_n(hx)}" y2="{_n(hy)}" '
            f'stroke-width="2"{dash_attr}/><polygon points="{_n(tx)},{_n(ty)} '
            f'{_n(hx + px)},{_n(hy + py)} {_n(hx - px)},{_n(hy - py)}" stroke-width="1"/>'
        )
        ex, ey = label_x - sx[j], label_y - sy[j]
        el = math.hypot(ex, ey) or 1.0
        ex, ey = ex / el, ey / el
        text = f"{fmt(float(magnitude[j]), 3)} {unit}"
        lx, ly = label_x, label_y + (4 if abs(ey) < 0.5 else (12 if ey > 0 else -3))
        anchor = "middle" if abs(ex) < 0.5 else ("start" if ex > 0 else "end")
        if css != "loads" and j in case_loaded:
            # the case's own load has its label at this tail already: set this one beside it
            lx, anchor = lx + 18, "start"
        out.append(
            f'<text x="{_n(lx)}" y="{_n(ly)}" text-anchor="{anchor}" stroke="none" '
            f"{_halo()}>{escape(text)}</text>"
        )
    out.append("</g>")
    return out


IMPLIED_STYLE = (
    "implied-loads",
    "#D55E00",
    "5 3",
)  # orange, dashed: distinct from the case's solid purple


def _largest_load(model: Model, loads: np.ndarray | None, implied: np.ndarray) -> float:
    both = [implied] if loads is None else [loads, implied]
    return max(
        float(np.linalg.norm(v.reshape(len(model.joints), model.dim), axis=1).max()) for v in both
    )


def _add(a: tuple[float, float] | None, b: tuple[float, float]) -> tuple[float, float]:
    return b if a is None else (a[0] + b[0], a[1] + b[1])


def _blocked(
    neighbours: Mapping[int, list[int]],
    sx: np.ndarray,
    sy: np.ndarray,
    j: int,
    dx: float,
    dy: float,
) -> bool:
    """Does a member leave joint j within 25 degrees of the screen direction (dx, dy)?"""
    for other in neighbours[j]:
        mx, my = sx[other] - sx[j], sy[other] - sy[j]
        length = math.hypot(mx, my)
        if length > 1e-9 and (mx * dx + my * dy) / length > math.cos(math.radians(25)):
            return True
    return False


def _swatch(colour: str, width: float, dash: str = "", marker: str = "") -> str:
    dash_attr = f' stroke-dasharray="{dash}"' if dash else ""
    mark = ""
    if marker:
        mark = (
            f'<circle cx="28" cy="9" r="7.5" fill="#ffffff" stroke="{colour}" stroke-width="2"/>'
            '<text x="28" y="13" text-anchor="middle" font-size="11" font-weight="bold" '
            f'fill="#1a1a1a">{escape(marker)}</text>'
        )
    return (
        '<svg xmlns="http://www.w3.org/2000/svg" width="56" height="18" viewBox="0 0 56 18" '
        f'style="{FONT}" aria-hidden="true"><line x1="3" y1="9" x2="53" y2="9" stroke="{colour}" '
        f'stroke-width="{width:g}"{dash_attr} stroke-linecap="round"/>{mark}</svg>'
    )


def legend_html(
    *, with_status: bool, used: set[str] | None = None, model: Model | None = None
) -> str:
    """The legend in plain words; statuses that do not occur are still listed, marked as such."""
    rows = [
        ("force", _swatch("#3A3A3A", COMPRESSION_WIDTH), "compression (wide band)"),
        ("force", _swatch("#3A3A3A", TENSION_WIDTH), "tension (narrow line)"),
        ("force", _swatch("#3A3A3A", ZERO_WIDTH, ZERO_DASH), "zero force (dotted hairline)"),
        (
            "force",
            _swatch("#3A3A3A", TENSION_WIDTH, UNKNOWN_DASH),
            "no recomputed force (long dashes)",
        ),
    ]
    if with_status:
        for style in sorted(STATUS_STYLES.values(), key=lambda s: s.rank):
            note = "" if used is None or style.key in used else " (none here)"
            letter = f"mark {style.marker}: " if style.marker else "no mark: "
            rows.append(
                (
                    "status",
                    _swatch(style.colour, 4.0, "", style.marker),
                    f"{letter}{style.words}{note}",
                )
            )
    unit = escape(model.units.force.symbol) if model is not None else "force units"
    rows.append(
        (
            "other",
            '<svg xmlns="http://www.w3.org/2000/svg" width="56" height="18" viewBox="0 0 56 18" '
            'aria-hidden="true"><polygon points="28,2 20,16 36,16" fill="#ffffff" stroke="#1a1a1a" '
            'stroke-width="1.5"/></svg>',
            "support: the triangle's point is the joint; two small wheels under it mark a roller "
            "(one reaction direction)",
        )
    )
    rows.append(
        (
            "other",
            '<svg xmlns="http://www.w3.org/2000/svg" width="56" height="18" viewBox="0 0 56 18" '
            'aria-hidden="true"><line x1="4" y1="9" x2="44" y2="9" stroke="#5A3E99" '
            'stroke-width="2"/><polygon points="52,9 44,5.4 44,12.6" fill="#5A3E99"/></svg>',
            f"applied joint load of the load column drawn, with its size in {unit}",
        )
    )
    rows.append(
        (
            "load",
            '<svg xmlns="http://www.w3.org/2000/svg" width="56" height="18" viewBox="0 0 56 18" '
            'aria-hidden="true"><line x1="4" y1="9" x2="44" y2="9" stroke="#D55E00" '
            'stroke-width="2" stroke-dasharray="5 3"/><polygon points="52,9 44,5.4 44,12.6" '
            'fill="#D55E00"/></svg>',
            "dashed orange arrow: the load the claimed forces balance at that joint, where it "
            f"differs from the case's load (size in {unit})",
        )
    )
    cells = "".join(
        f'<tr class="legend-{kind}"><td>{swatch}</td><td>{escape(text)}</td></tr>'
        for kind, swatch, text in rows
    )
    return f'<table class="legend"><caption>Legend</caption>{cells}</table>'
