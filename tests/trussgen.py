"""Builders of test trusses as case dicts (the parsed form of a DESIGN.md section 4 case file).

Every builder returns plain data that :func:`make_model` turns into a validated Model through the
same :func:`verify.io.case.build_model` the file reader uses, so tests exercise the real
validation. Geometry follows shared/REFERENCES.md section 3 where a builder mirrors a published
example (panel naming L0..Ln bottom, U1.. top).

Member ids are the two joint ids written start-then-end ("U1L2"), as in the tables of
REFERENCES.md 3.2.
"""

from __future__ import annotations

import math
import random
from collections.abc import Iterable, Mapping, Sequence
from pathlib import Path
from typing import Any

import numpy as np

from verify.io.case import build_model
from verify.model import Model

Case = dict[str, Any]


def truss_case(
    joints: Mapping[str, Sequence[float]],
    members: Iterable[tuple[str, str]] | Mapping[str, Any],
    supports: Mapping[str, Any],
    loads: Mapping[str, Mapping[str, Sequence[float]]],
    *,
    units: tuple[str, str] = ("m", "kN"),
    title: str = "test truss",
    combinations: Mapping[str, Mapping[str, float]] | None = None,
) -> Case:
    """A case dict; members given as (start, end) pairs get the id start+end."""
    if isinstance(members, Mapping):
        member_table = {str(k): v for k, v in members.items()}
    else:
        member_table = {f"{a}{b}": [a, b] for a, b in members}
    case: Case = {
        "title": title,
        "units": {"length": units[0], "force": units[1]},
        "joints": {str(k): [float(c) for c in v] for k, v in joints.items()},
        "members": member_table,
        "supports": {str(k): v for k, v in supports.items()},
        "loads": {
            name: {str(j): [float(c) for c in vec] for j, vec in table.items()}
            for name, table in loads.items()
        },
    }
    if combinations:
        case["combinations"] = {k: dict(v) for k, v in combinations.items()}
    return case


def make_model(case: Mapping[str, Any], *, source: str = "<test>") -> Model:
    """Validate and freeze a case dict exactly as the file reader would."""
    return build_model(dict(case), source=source)


def member_force(model: Model, forces: np.ndarray, member: str, column: int = 0) -> float:
    """One member's force from a members x load-columns array, by member id."""
    return float(forces[model.member_index[member], column])


def forces_by_id(model: Model, forces: np.ndarray, column: int = 0) -> dict[str, float]:
    return {m.id: float(forces[i, column]) for i, m in enumerate(model.members)}


# -- parallel-chord trusses (REFERENCES.md 3.2 geometry by default) ------------------------------
def _chorded(
    panels: int, d: float, h: float
) -> tuple[dict[str, list[float]], list[tuple[str, str]]]:
    joints = {f"L{i}": [i * d, 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [i * d, h] for i in range(1, panels)})
    members = [(f"L{i}", f"L{i + 1}") for i in range(panels)]
    members += [(f"U{i}", f"U{i + 1}") for i in range(1, panels - 1)]
    members += [("L0", "U1"), (f"U{panels - 1}", f"L{panels}")]
    members += [(f"U{i}", f"L{i}") for i in range(1, panels)]
    return joints, members


def _bottom_loads(panels: int, load: float) -> dict[str, list[float]]:
    return {f"L{i}": [0.0, -load] for i in range(1, panels)}


def pratt(
    panels: int = 6, *, d: float = 4.0, h: float = 3.0, load: float = 1.0, case: str = "P"
) -> Case:
    """Pratt: diagonals slope down toward midspan (U1L2, ..., U5L4 for 6 panels); even panels."""
    if panels < 2 or panels % 2:
        raise ValueError("pratt() needs an even number of panels >= 2")
    joints, members = _chorded(panels, d, h)
    half = panels // 2
    members += [(f"U{i}", f"L{i + 1}") for i in range(1, half)]
    members += [(f"U{i}", f"L{i - 1}") for i in range(half + 1, panels)]
    return truss_case(
        joints,
        members,
        {"L0": ["x", "y"], f"L{panels}": ["y"]},
        {case: _bottom_loads(panels, load)},
        title=f"{panels}-panel Pratt",
    )


def howe(
    panels: int = 6, *, d: float = 4.0, h: float = 3.0, load: float = 1.0, case: str = "P"
) -> Case:
    """Howe: diagonals slope up toward midspan (L1U2, ..., L5U4 for 6 panels); even panels."""
    if panels < 2 or panels % 2:
        raise ValueError("howe() needs an even number of panels >= 2")
    joints, members = _chorded(panels, d, h)
    half = panels // 2
    members += [(f"L{i}", f"U{i + 1}") for i in range(1, half)]
    members += [(f"L{i}", f"U{i - 1}") for i in range(half + 1, panels)]
    return truss_case(
        joints,
        members,
        {"L0": ["x", "y"], f"L{panels}": ["y"]},
        {case: _bottom_loads(panels, load)},
        title=f"{panels}-panel Howe",
    )


def warren(panels: int = 4, *, side: float = 4.0, load: float = 1.0, case: str = "P") -> Case:
    """Warren without verticals, equilateral triangles: bottom L0..Ln, top U1..Un at mid-panel."""
    h = side * math.sqrt(3.0) / 2.0
    joints = {f"L{i}": [i * side, 0.0] for i in range(panels + 1)}
    joints.update({f"U{i}": [(i - 0.5) * side, h] for i in range(1, panels + 1)})
    members = [(f"L{i}", f"L{i + 1}") for i in range(panels)]
    members += [(f"U{i}", f"U{i + 1}") for i in range(1, panels)]
    for i in range(1, panels + 1):
        members += [(f"L{i - 1}", f"U{i}"), (f"U{i}", f"L{i}")]
    return truss_case(
        joints,
        members,
        {"L0": ["x", "y"], f"L{panels}": ["y"]},
        {case: _bottom_loads(panels, load)},
        title=f"{panels}-panel Warren",
    )


# -- random simple trusses (Henneberg type I steps from a triangle) ------------------------------
def _collinear(p: Sequence[float], q: Sequence[float], r: Sequence[float]) -> bool:
    return (q[0] - p[0]) * (r[1] - p[1]) - (q[1] - p[1]) * (r[0] - p[0]) == 0


def simple_truss(
    points: Sequence[tuple[int, int]],
    attachments: Sequence[tuple[int, int]],
    loads: Mapping[int, tuple[float, float]],
    *,
    roller: int = 1,
) -> Case | None:
    """A simple truss: joints J0, J1, J2 form a triangle; joint k >= 3 hangs on two earlier joints.

    `attachments[k - 3]` names the two earlier joints of joint k. Supports: pin at J0, vertical
    roller at J`roller`. Returns None when the data do not give a stable simple truss (collinear
    triangle or attachment, coincident joints, or a roller whose vertical line passes through the
    pin, which makes the supports concurrent).
    """
    n = len(points)
    if n < 3 or len(attachments) != n - 3 or len(set(points)) != n:
        return None
    if _collinear(points[0], points[1], points[2]):
        return None
    pairs: list[tuple[int, int]] = [(0, 1), (1, 2), (0, 2)]
    for k, (a, b) in enumerate(attachments, start=3):
        if not (0 <= a < k and 0 <= b < k) or a == b or _collinear(points[a], points[b], points[k]):
            return None
        pairs.append((min(a, b), k))
        pairs.append((max(a, b), k))
    if roller == 0 or points[roller][0] == points[0][0]:
        return None
    joints = {f"J{i}": [float(x), float(y)] for i, (x, y) in enumerate(points)}
    members = {f"M{a}_{b}": [f"J{a}", f"J{b}"] for a, b in pairs}
    case_loads = {"L": {f"J{i}": [float(fx), float(fy)] for i, (fx, fy) in loads.items()}}
    return truss_case(
        joints,
        members,
        {"J0": ["x", "y"], f"J{roller}": ["y"]},
        case_loads,
        title=f"random simple truss, {n} joints",
    )


def random_simple_truss(
    rng: random.Random, joints: int, *, span: int = 12, max_load: int = 20
) -> Case:
    """A random stable simple truss with integer coordinates and integer loads (retries until
    valid)."""
    while True:
        points: list[tuple[int, int]] = []
        while len(points) < joints:
            p = (rng.randint(0, span), rng.randint(0, span))
            if p not in points:
                points.append(p)
        attachments = [(a, b) for a, b in (rng.sample(range(k), 2) for k in range(3, joints))]
        loads = {
            rng.randrange(joints): (
                rng.randint(-max_load, max_load),
                rng.randint(-max_load, max_load),
            )
        }
        loads = {k: v for k, v in loads.items() if v != (0, 0)}
        if not loads:
            continue
        roller = rng.randrange(1, joints)
        case = simple_truss(points, attachments, loads, roller=roller)
        if case is not None:
            return case


# -- writing cases as files (for the reader tests) -----------------------------------------------
def _toml_value(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, (int, float)):
        return repr(float(value)) if isinstance(value, float) else str(value)
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, Mapping):
        return (
            "{ " + ", ".join(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in value.items()) + " }"
        )
    raise TypeError(f"cannot write {value!r} as TOML")


def _toml_key(key: str) -> str:
    return '"' + str(key).replace('"', '\\"') + '"'


def to_toml(case: Mapping[str, Any]) -> str:
    """The case dict as TOML text (quoted keys, so ids such as "007" stay strings)."""
    sections = ("units", "stiffness", "joints", "members", "supports", "loads", "combinations")
    # Plain top-level values (the title, CSV file names) must come before the first table header.
    lines = [
        f"{k} = {_toml_value(v)}"
        for k, v in case.items()
        if k not in sections or isinstance(v, str)
    ]
    for section in sections:
        table = case.get(section)
        if not isinstance(table, Mapping):
            continue
        if section == "loads" and any(isinstance(v, Mapping) for v in table.values()):
            files = {k: v for k, v in table.items() if isinstance(v, str)}
            if files:
                lines.append("\n[loads]")
                lines.extend(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in files.items())
            for name, loads in table.items():
                if isinstance(loads, Mapping):
                    lines.append(f"\n[loads.{_toml_key(name)}]")
                    lines.extend(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in loads.items())
            continue
        lines.append(f"\n[{section}]")
        lines.extend(f"{_toml_key(k)} = {_toml_value(v)}" for k, v in table.items())
    return "\n".join(lines) + "\n"


def write_case(directory: Path, case: Mapping[str, Any], name: str = "case.toml") -> Path:
    path = Path(directory) / name
    path.write_text(to_toml(case), encoding="utf-8")
    return path
