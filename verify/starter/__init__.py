"""Starter geometry: an ordinary, editable case file for a common truss pattern.

:func:`build_starter` returns the case as plain data (the parsed form of a case file, as
:func:`verify.io.case.build_model` takes it) plus the comment lines; :func:`render_case` writes
it as TOML text. The CLI writes that text atomically; nothing here touches files.

Loads (one load case): ``panel_load`` P downward at every panel point of the loaded chord that
is not over a support (REFERENCES.md 3.2 and 3.3 load their trusses so), or ``line_load`` w per
unit of plan length along the loaded chord, turned into panel-point loads by tributary length
(half the plan length of each chord segment meeting at the joint, common practice), the
supported ends included so that the reactions carry their share. Towers and grids take P at
every top joint.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction

from verify.starter.patterns import PATTERNS, Pattern, PatternError
from verify.starter.text import render_case

__all__ = ["PATTERNS", "PatternError", "Starter", "build_starter", "render_case"]

SIZE_LIMIT = 1e6  # spans and depths in the case's length unit (a 1,000 km truss is a slip)
PANELS_LIMIT = 500  # a starter is edited by hand; bench/generate.py writes the huge ones
LOAD_LIMIT = 1e12  # as the case reader's sane range


@dataclass(frozen=True)
class Starter:
    pattern: Pattern
    title: str
    units: tuple[str, str]
    case_name: str
    loads: dict[str, tuple[float, ...]]  # joint -> load vector
    load_comments: dict[str, str]  # joint -> how its load was found
    load_rule: str  # one line: what the load case holds


def _exact(value: float, what: str) -> Fraction:
    if not (0 < value <= SIZE_LIMIT):
        raise PatternError(f"{what} must be a positive length up to {SIZE_LIMIT:g}; got {value:g}")
    return Fraction(repr(float(value)))


def build_starter(
    pattern: str,
    *,
    span: float,
    depth: float,
    panels: int | None = None,
    loaded_chord: str = "top",
    panel_load: float | None = None,
    line_load: float | None = None,
    units: tuple[str, str] = ("m", "kN"),
    case_name: str = "dead",
) -> Starter:
    """The case for `pattern`; PatternError names what cannot be built and why."""
    from verify.starter.patterns import BUILDERS

    if pattern not in BUILDERS:
        raise PatternError(f"unknown pattern '{pattern}'; the patterns are {', '.join(PATTERNS)}")
    if panels is not None and not (1 <= panels <= PANELS_LIMIT):
        raise PatternError(f"--panels must be 1 to {PANELS_LIMIT}; got {panels}")
    if panel_load is not None and line_load is not None:
        raise PatternError("give --panel-load or --line-load, not both")
    for name, value in (("--panel-load", panel_load), ("--line-load", line_load)):
        if value is not None and not (abs(value) <= LOAD_LIMIT):
            raise PatternError(
                f"{name} must be a finite force within +-{LOAD_LIMIT:g}; got {value:g}"
            )
    if loaded_chord not in ("top", "bottom"):
        raise PatternError(f"--loaded-chord must be top or bottom; got {loaded_chord}")
    shape = BUILDERS[pattern](_exact(span, "--span"), _exact(depth, "--depth"), panels)
    if shape.dim == 3 and (loaded_chord == "bottom" or line_load is not None):
        raise PatternError(
            f"{pattern} takes --panel-load at its top joints only (no --loaded-chord bottom or "
            "--line-load)"
        )
    chord = shape.chords["top" if shape.dim == 3 else loaded_chord]
    supported = set(shape.pinned) | set(shape.rollers) | set(shape.restraints)
    down = (0.0, -1.0) if shape.dim == 2 else (0.0, 0.0, -1.0)
    loads: dict[str, tuple[float, ...]] = {}
    comments: dict[str, str] = {}
    P = 10.0 if panel_load is None and line_load is None else panel_load
    if P is not None:
        for joint in chord:
            if joint not in supported:
                loads[joint] = tuple(P * c + 0.0 for c in down)
        rule = (
            f"{P:g} {units[1]} downward at every "
            f"{'top joint' if shape.dim == 3 else f'{loaded_chord} chord panel point'} not over a "
            "support"
        )
    else:
        assert line_load is not None  # P is None only when a line load was given
        w = float(line_load)
        tributary: dict[str, Fraction] = {}
        for a, b in zip(chord, chord[1:], strict=False):
            plan = abs(Fraction(shape.joints[b][0]) - Fraction(shape.joints[a][0]))
            for joint in (a, b):
                tributary[joint] = tributary.get(joint, Fraction(0)) + plan / 2
        for joint, length in tributary.items():
            loads[joint] = tuple(w * float(length) * c + 0.0 for c in down)
            comments[joint] = (
                f"{w:g} {units[1]}/{units[0]} x tributary {float(length):g} {units[0]} (plan)"
            )
        rule = (
            f"line load {w:g} {units[1]}/{units[0]} downward on the {loaded_chord} chord, per unit "
            "of plan length, to panel points by tributary length (half of each chord segment "
            "meeting there)"
        )
    title = (
        f"{pattern} truss, span {span:g} {units[0]}, depth {depth:g} {units[0]}, "
        f"{len(shape.chords.get('bottom', chord)) - 1 if shape.dim == 2 else panels or ''} panels "
        "(starter)"
    )
    if shape.dim == 3:
        title = (
            f"{pattern} starter, {span:g} {units[0]} wide, {depth:g} {units[0]} "
            f"{'high' if pattern != 'grid' else 'deep'}"
        )
    return Starter(shape, title, units, case_name, loads, comments, rule)
