"""Geometry of the common truss patterns, as plain data: joints, members, chords, supports.

Every function takes the span, the depth (rise for pitched roofs, height for towers) and the
panel count, and returns a :class:`Pattern`. Coordinates are exact fractions of the inputs where
the geometry allows (a triangular tower's plan needs sqrt 3: floats there). Member ids are the
two joint ids, start then end ("U1L2"), as in shared/REFERENCES.md section 3.

Shapes are the trade's usual ones (common practice); where a pin-jointed idealisation needs a
member the drawings of the type often omit (the queen post's centre panel), the pattern adds it
and says so in `notes`, so that every pattern is stable and statically determinate.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from fractions import Fraction

Number = Fraction | float


@dataclass(frozen=True)
class Pattern:
    name: str
    dim: int
    joints: Mapping[str, tuple[Number, ...]]
    members: list[tuple[str, str]]
    pinned: list[str]  # joints restrained in every direction
    rollers: list[str]  # joints restrained vertically only (y in 2D)
    chords: dict[
        str, list[str]
    ]  # "top" / "bottom": the joints along each chord, support to support
    naming: list[str]  # the joint naming rule, one comment line each
    notes: list[str] = field(default_factory=list)
    restraints: dict[str, list[str]] = field(default_factory=dict)  # 3D: joint -> restrained axes


class PatternError(ValueError):
    """Inputs a pattern cannot be built from (a panel count it does not have, a negative span)."""


def _even(pattern: str, panels: int, least: int = 2) -> None:
    if panels < least or panels % 2:
        raise PatternError(
            f"{pattern} needs an even number of panels, at least {least}; got {panels}"
        )


def _fixed(pattern: str, panels: int | None, count: int) -> None:
    if panels is not None and panels != count:
        raise PatternError(
            f"{pattern} has {count} panels by its shape; got --panels {panels} (leave it out)"
        )


def _bottom(span: Fraction, panels: int) -> dict[str, tuple[Number, ...]]:
    return {f"L{i}": (span * i / panels, Fraction(0)) for i in range(panels + 1)}


PANEL_NAMING = [
    "L0 .. L{n}: bottom chord panel points, left to right, at x = i x span / {n}",
    "U<i>: the top chord joint of panel point i (above L<i>)",
]


def _naming(n: int, *extra: str) -> list[str]:
    return [line.format(n=n) for line in PANEL_NAMING] + list(extra)


def parallel(pattern: str, span: Fraction, depth: Fraction, panels: int | None) -> Pattern:
    """Pratt, Howe, warren-verticals: bottom L0..Ln, top U1..U(n-1) above them, inclined end
    posts."""
    n = panels or 6
    _even(pattern, n)
    joints = _bottom(span, n) | {f"U{i}": (span * i / n, depth) for i in range(1, n)}
    members = [(f"L{i}", f"L{i + 1}") for i in range(n)] + [
        (f"U{i}", f"U{i + 1}") for i in range(1, n - 1)
    ]
    members += [("L0", "U1"), (f"U{n - 1}", f"L{n}")] + [(f"U{i}", f"L{i}") for i in range(1, n)]
    half = n // 2
    for i in range(1, n - 1):
        if pattern == "pratt":  # diagonals slope down toward midspan (tension under gravity)
            members.append((f"U{i}", f"L{i + 1}") if i < half else (f"U{i + 1}", f"L{i}"))
        elif pattern == "howe":  # diagonals slope up toward midspan (compression under gravity)
            members.append((f"L{i}", f"U{i + 1}") if i < half else (f"L{i + 1}", f"U{i}"))
    if pattern == "warren-verticals":  # a zigzag L0-U1-L2-U3-...: diagonals alternate in slope
        members = [m for m in members if m not in (("L0", "U1"), (f"U{n - 1}", f"L{n}"))]
        for i in range(n):
            members.append((f"L{i}", f"U{i + 1}") if i % 2 == 0 else (f"U{i}", f"L{i + 1}"))
    top = ["L0"] + [f"U{i}" for i in range(1, n)] + [f"L{n}"]
    return Pattern(
        pattern,
        2,
        joints,
        members,
        ["L0"],
        [f"L{n}"],
        {"top": top, "bottom": [f"L{i}" for i in range(n + 1)]},
        _naming(n),
    )


def warren(span: Fraction, depth: Fraction, panels: int | None) -> Pattern:
    """Bottom L0..Ln, top U1..Un over the middle of each panel; no verticals."""
    n = panels or 4
    if n < 1:
        raise PatternError(f"warren needs at least 1 panel; got {n}")
    joints = _bottom(span, n) | {
        f"U{i}": (span * (2 * i - 1) / (2 * n), depth) for i in range(1, n + 1)
    }
    members = [(f"L{i}", f"L{i + 1}") for i in range(n)] + [
        (f"U{i}", f"U{i + 1}") for i in range(1, n)
    ]
    for i in range(1, n + 1):
        members += [(f"L{i - 1}", f"U{i}"), (f"U{i}", f"L{i}")]
    naming = [
        f"L0 .. L{n}: bottom chord panel points, left to right, at x = i x span / {n}",
        f"U1 .. U{n}: top chord joints over the middle of panels 1 .. {n}",
    ]
    top = ["L0"] + [f"U{i}" for i in range(1, n + 1)] + [f"L{n}"]
    return Pattern(
        "warren",
        2,
        joints,
        members,
        ["L0"],
        [f"L{n}"],
        {"top": top, "bottom": list(_bottom(span, n))},
        naming,
    )


def k_truss(span: Fraction, depth: Fraction, panels: int | None) -> Pattern:
    """Verticals at every panel point; each vertical except the middle one split at mid-height
    by M<i>, from which two diagonals reach the top and bottom joints one panel nearer midspan."""
    n = panels or 6
    _even("k", n)
    half = n // 2
    joints = _bottom(span, n) | {f"U{i}": (span * i / n, depth) for i in range(n + 1)}
    joints |= {f"M{i}": (span * i / n, depth / 2) for i in range(n + 1) if i != half}
    members = [(f"L{i}", f"L{i + 1}") for i in range(n)] + [
        (f"U{i}", f"U{i + 1}") for i in range(n)
    ]
    members.append((f"U{half}", f"L{half}"))
    for i in range(n + 1):
        if i == half:
            continue
        inner = i + 1 if i < half else i - 1
        members += [
            (f"U{i}", f"M{i}"),
            (f"M{i}", f"L{i}"),
            (f"M{i}", f"U{inner}"),
            (f"M{i}", f"L{inner}"),
        ]
    naming = [
        f"L0 .. L{n}: bottom chord panel points, left to right, at x = i x span / {n}",
        f"U0 .. U{n}: top chord joints above them (end verticals included)",
        "M<i>: the mid-height joint of vertical i, where its K's diagonals meet (none at midspan)",
    ]
    return Pattern(
        "k",
        2,
        joints,
        members,
        ["L0"],
        [f"L{n}"],
        {"top": [f"U{i}" for i in range(n + 1)], "bottom": list(_bottom(span, n))},
        naming,
    )


def king_post(span: Fraction, rise: Fraction, panels: int | None) -> Pattern:
    _fixed("king-post", panels, 2)
    joints = {
        "L0": (Fraction(0), Fraction(0)),
        "L1": (span / 2, Fraction(0)),
        "L2": (span, Fraction(0)),
        "U1": (span / 2, rise),
    }
    members = [("L0", "L1"), ("L1", "L2"), ("L0", "U1"), ("U1", "L2"), ("U1", "L1")]
    naming = [
        "L0, L1, L2: the tie, left support, midspan, right support",
        "U1: the ridge (apex), above L1",
    ]
    return Pattern(
        "king-post",
        2,
        joints,
        members,
        ["L0"],
        ["L2"],
        {"top": ["L0", "U1", "L2"], "bottom": ["L0", "L1", "L2"]},
        naming,
    )


def queen_post(span: Fraction, depth: Fraction, panels: int | None) -> Pattern:
    _fixed("queen-post", panels, 3)
    joints = _bottom(span, 3) | {"U1": (span / 3, depth), "U2": (span * 2 / 3, depth)}
    members = [
        ("L0", "L1"),
        ("L1", "L2"),
        ("L2", "L3"),
        ("L0", "U1"),
        ("U1", "U2"),
        ("U2", "L3"),
        ("U1", "L1"),
        ("U2", "L2"),
        ("U1", "L2"),
    ]
    naming = [
        "L0 .. L3: the tie at thirds of the span",
        "U1, U2: the heads of the queen posts, above L1 and L2",
    ]
    notes = [
        "The centre panel holds one diagonal U1L2: without it the pin-jointed rectangle is a "
        "mechanism.",
        "Under symmetric loads it carries no force.",
    ]
    return Pattern(
        "queen-post",
        2,
        joints,
        members,
        ["L0"],
        ["L3"],
        {"top": ["L0", "U1", "U2", "L3"], "bottom": ["L0", "L1", "L2", "L3"]},
        naming,
        notes,
    )


def fink(span: Fraction, rise: Fraction, panels: int | None) -> Pattern:
    """The W truss of REFERENCES.md 3.3: tie at thirds, rafters halved, webs in a W."""
    _fixed("fink", panels, 4)
    joints = {
        "L0": (Fraction(0), Fraction(0)),
        "L1": (span / 3, Fraction(0)),
        "L2": (span * 2 / 3, Fraction(0)),
        "L3": (span, Fraction(0)),
        "U1": (span / 4, rise / 2),
        "U2": (span / 2, rise),
        "U3": (span * 3 / 4, rise / 2),
    }
    members = [
        ("L0", "L1"),
        ("L1", "L2"),
        ("L2", "L3"),
        ("L0", "U1"),
        ("U1", "U2"),
        ("U2", "U3"),
        ("U3", "L3"),
        ("U1", "L1"),
        ("L1", "U2"),
        ("U2", "L2"),
        ("L2", "U3"),
    ]
    naming = ["L0 .. L3: the tie at thirds of the span", "U1, U3: rafter midpoints; U2: the ridge"]
    return Pattern(
        "fink",
        2,
        joints,
        members,
        ["L0"],
        ["L3"],
        {"top": ["L0", "U1", "U2", "U3", "L3"], "bottom": ["L0", "L1", "L2", "L3"]},
        naming,
    )


def fan(span: Fraction, rise: Fraction, panels: int | None) -> Pattern:
    """Tie at thirds; each rafter in three; webs fan from L1 (left) and L2 (right) to the rafter."""
    _fixed("fan", panels, 6)
    joints = _bottom(span, 3)
    for k in range(1, 6):
        x = span * k / 6
        joints[f"U{k}"] = (x, rise * min(k, 6 - k) / 3)
    members = [
        ("L0", "L1"),
        ("L1", "L2"),
        ("L2", "L3"),
        ("L0", "U1"),
        ("U1", "U2"),
        ("U2", "U3"),
        ("U3", "U4"),
        ("U4", "U5"),
        ("U5", "L3"),
        ("L1", "U1"),
        ("L1", "U2"),
        ("L1", "U3"),
        ("L2", "U3"),
        ("L2", "U4"),
        ("L2", "U5"),
    ]
    naming = [
        "L0 .. L3: the tie at thirds of the span",
        "U1 .. U5: rafter panel points at sixths of the span; U3: the ridge",
    ]
    return Pattern(
        "fan",
        2,
        joints,
        members,
        ["L0"],
        ["L3"],
        {"top": ["L0", "U1", "U2", "U3", "U4", "U5", "L3"], "bottom": ["L0", "L1", "L2", "L3"]},
        naming,
    )


def scissors(span: Fraction, rise: Fraction, panels: int | None) -> Pattern:
    """Pitched rafters over a raised tie that peaks at half the rise (common practice: the
    ceiling pitched at about half the roof pitch, from memory)."""
    _fixed("scissors", panels, 4)
    joints = {
        "L0": (Fraction(0), Fraction(0)),
        "L1": (span / 2, rise / 2),
        "L2": (span, Fraction(0)),
        "U1": (span / 4, rise / 2),
        "U2": (span / 2, rise),
        "U3": (span * 3 / 4, rise / 2),
    }
    members = [
        ("L0", "U1"),
        ("U1", "U2"),
        ("U2", "U3"),
        ("U3", "L2"),
        ("L0", "L1"),
        ("L1", "L2"),
        ("U1", "L1"),
        ("U2", "L1"),
        ("U3", "L1"),
    ]
    naming = [
        "L0, L2: the supports; L1: the peak of the raised tie (at half the rise)",
        "U1, U3: rafter midpoints; U2: the ridge",
    ]
    return Pattern(
        "scissors",
        2,
        joints,
        members,
        ["L0"],
        ["L2"],
        {"top": ["L0", "U1", "U2", "U3", "L2"], "bottom": ["L0", "L1", "L2"]},
        naming,
    )


def bowstring(span: Fraction, rise: Fraction, panels: int | None) -> Pattern:
    """Top chord joints on the parabola y = 4 rise x (span - x) / span^2 (straight segments
    between), verticals at every panel point, diagonals sloping down toward midspan."""
    n = panels or 6
    _even("bowstring", n, least=4)
    base = parallel("pratt", span, rise, n)
    joints = dict(base.joints)
    for i in range(1, n):
        x = span * i / n
        joints[f"U{i}"] = (x, 4 * rise * x * (span - x) / span**2)
    naming = _naming(n, "U<i> lies on the parabola y = 4 rise x (span - x) / span^2")
    return Pattern(
        "bowstring", 2, joints, base.members, base.pinned, base.rollers, base.chords, naming
    )


def tower(sides: int, width: Fraction, height: Fraction, panels: int | None) -> Pattern:
    """A lattice tower of 3 or 4 vertical legs, `panels` panels high: a ring of horizontals at
    every level above the base and one diagonal in each face of each panel; the base joints
    pinned."""
    n = panels or 4
    if n < 1:
        raise PatternError(f"tower-{sides} needs at least 1 panel; got {n}")
    letters = "ABCD"[:sides]
    if sides == 3:  # equilateral triangle of side `width`
        plan: list[tuple[Number, Number]] = [
            (0.0, 0.0),
            (float(width), 0.0),
            (float(width) / 2, float(width) * math.sqrt(3) / 2),
        ]
    else:
        plan = [
            (Fraction(0), Fraction(0)),
            (width, Fraction(0)),
            (width, width),
            (Fraction(0), width),
        ]
    joints: dict[str, tuple[Number, ...]] = {}
    for k in range(n + 1):
        for leg, (x, y) in zip(letters, plan, strict=True):
            joints[f"{leg}{k}"] = (x, y, height * k / n)
    members = []
    for k in range(1, n + 1):
        for s, leg in enumerate(letters):
            nxt = letters[(s + 1) % sides]
            members += [
                (f"{leg}{k - 1}", f"{leg}{k}"),
                (f"{leg}{k}", f"{nxt}{k}"),
                (f"{leg}{k - 1}", f"{nxt}{k}"),
            ]
    naming = [
        f"{', '.join(letters)}: the legs, counter-clockwise in plan from the origin",
        f"<leg><k>: leg joint at level k = 0 (base) .. {n} (top), at z = k x height / {n}",
    ]
    base = [f"{leg}0" for leg in letters]
    return Pattern(
        f"tower-{sides}",
        3,
        joints,
        members,
        base,
        [],
        {"top": [f"{leg}{n}" for leg in letters]},
        naming,
        ["Every base joint is pinned (x, y, z); the base has no ring, which would carry nothing."],
    )


def grid(span: Fraction, depth: Fraction, panels: int | None) -> Pattern:
    """Square-on-square offset double-layer grid without top chords, `panels` cells a side: the
    bottom layer a square grid with chords; one top joint over each cell, tied to its four corners.
    Every bottom perimeter joint held vertically; x, y at B0_0 and y at B<n>_0 stop sliding and
    turning in plan (the layout of bench/generate.py, determinate by its rank check)."""
    n = panels or 4
    if n < 2:
        raise PatternError(f"grid needs at least 2 cells a side; got {n}")
    cell = span / n
    joints: dict[str, tuple[Number, ...]] = {}
    for i in range(n + 1):
        for j in range(n + 1):
            joints[f"B{i}_{j}"] = (cell * i, cell * j, Fraction(0))
    for i in range(n):
        for j in range(n):
            joints[f"T{i}_{j}"] = (cell * i + cell / 2, cell * j + cell / 2, depth)
    members = [(f"B{i}_{j}", f"B{i + 1}_{j}") for i in range(n) for j in range(n + 1)]
    members += [(f"B{i}_{j}", f"B{i}_{j + 1}") for i in range(n + 1) for j in range(n)]
    for i in range(n):
        for j in range(n):
            members += [
                (f"T{i}_{j}", f"B{i + a}_{j + c}") for a, c in ((0, 0), (1, 0), (0, 1), (1, 1))
            ]
    restraints = {
        f"B{i}_{j}": ["z"] for i in range(n + 1) for j in range(n + 1) if i in (0, n) or j in (0, n)
    }
    restraints["B0_0"] = ["x", "y", "z"]
    restraints[f"B{n}_0"] = ["y", "z"]
    naming = [
        f"B<i>_<j>: bottom layer joint at x = i x span / {n}, y = j x span / {n}",
        "T<i>_<j>: top layer joint over the centre of bottom cell (i, j)",
    ]
    return Pattern(
        "grid",
        3,
        joints,
        members,
        [],
        [],
        {"top": [f"T{i}_{j}" for i in range(n) for j in range(n)]},
        naming,
        ["Bottom perimeter joints held vertically; B0_0 also in x and y, the next corner in y."],
        restraints=restraints,
    )


BUILDERS: dict[str, Callable[[Fraction, Fraction, int | None], Pattern]] = {
    "pratt": lambda s, d, n: parallel("pratt", s, d, n),
    "howe": lambda s, d, n: parallel("howe", s, d, n),
    "warren": warren,
    "warren-verticals": lambda s, d, n: parallel("warren-verticals", s, d, n),
    "k": k_truss,
    "king-post": king_post,
    "queen-post": queen_post,
    "fink": fink,
    "fan": fan,
    "scissors": scissors,
    "bowstring": bowstring,
    "tower-3": lambda s, d, n: tower(3, s, d, n),
    "tower-4": lambda s, d, n: tower(4, s, d, n),
    "grid": grid,
}
PATTERNS = tuple(BUILDERS)
