"""A starter case as TOML text: plain tables a checking engineer edits by hand, with comments.

Coordinates that are exact fractions are written as decimals when they end within 9 places, and
as the fraction itself ("16/3", read back exactly by the case file's arithmetic) when they do not.
"""

from __future__ import annotations

import json
from fractions import Fraction
from typing import TYPE_CHECKING

from verify.formatting import toml_key

if TYPE_CHECKING:
    from verify.starter import Starter

DECIMAL_PLACES = 9


def number(value: Fraction | float) -> str:
    """A TOML value for one coordinate or load."""
    if isinstance(value, Fraction):
        scaled = value * 10**DECIMAL_PLACES
        if scaled.denominator == 1:
            text = f"{float(value)!r}"
            return text if Fraction(text) == value else f'"{value.numerator}/{value.denominator}"'
        return f'"{value.numerator}/{value.denominator}"'
    return repr(float(value))


def render_case(starter: Starter) -> str:
    shape = starter.pattern
    axes = "x, y" if shape.dim == 2 else "x, y, z"
    lines = [
        f"title = {json.dumps(starter.title)}",
        f"# Written by `truss-verify starter {shape.name}`: an ordinary case file; edit it freely.",
        "# Joint naming:",
    ]
    lines += [f"#   {rule}" for rule in shape.naming]
    lines += [f"# {note}" for note in shape.notes]
    lines += [
        "",
        "[units]",
        f"length = {json.dumps(starter.units[0])}",
        f"force = {json.dumps(starter.units[1])}",
        "",
        f"[joints]                                    # id = [{axes}]",
    ]
    lines += [
        f"{toml_key(j)} = [{', '.join(number(c) for c in coords)}]"
        for j, coords in shape.joints.items()
    ]
    lines += ["", "[members]                                   # id = [joint, joint]"]
    lines += [f"{toml_key(a + b)} = [{json.dumps(a)}, {json.dumps(b)}]" for a, b in shape.members]
    if shape.dim == 2:
        lines += [
            "",
            "[chords]                                    # the joints along each chord, in order",
        ]
        lines += [
            f"{name} = [{', '.join(json.dumps(j) for j in joints)}]"
            for name, joints in shape.chords.items()
        ]
    lines += ["", "[supports]"]
    if shape.restraints:
        lines += [
            f"{toml_key(j)} = [{', '.join(json.dumps(a) for a in axes_)}]"
            for j, axes_ in shape.restraints.items()
        ]
    else:
        lines += [f'{toml_key(j)} = "pinned"' for j in shape.pinned]
        lines += [
            f'{toml_key(j)} = "roller"                              # reaction vertical'
            for j in shape.rollers
        ]
    lines += ["", f"# {starter.load_rule}", f"[loads.{toml_key(starter.case_name)}]"]
    for joint, vector in starter.loads.items():
        comment = starter.load_comments.get(joint)
        lines.append(
            f"{toml_key(joint)} = [{', '.join(number(v) for v in vector)}]"
            + (f"   # {comment}" if comment else "")
        )
    return "\n".join(lines) + "\n"
