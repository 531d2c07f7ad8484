"""Claimed joint displacements (deflections), a small CSV of our own format.

Columns (headers case-insensitive, in any order): ``joint``, ``direction`` (x, y or z; a leading
minus such as ``-y`` means the value is measured against the axis, e.g. "downward"), ``case``
(load case or combination; may be omitted when the model has one), and ``value``. A length unit
must sit in the value header (``value (mm)``, ``deflection [in]``) or in each cell (``15.5 mm``):
deflections are written in mm as often as in the model's metres, so a bare number is refused
rather than guessed (a factor of 1000 either way). Example::

    joint,direction,case,deflection (mm)
    L3,-y,SLS-1,15.5
"""

from __future__ import annotations

import csv
import hashlib
import io
import re
from dataclasses import dataclass
from pathlib import Path

from verify.errors import InputError, Problem, ProblemList, did_you_mean, quoted
from verify.io.files import TABLE_MAX_BYTES, UnreadableFile, read_regular_file
from verify.io.numbers import NUMBER_MAX_CHARS, parse_number
from verify.model import Model
from verify.units import Dimension, factor, lookup_unit

VALUE_HEADERS = ("value", "deflection", "displacement", "disp", "delta", "δ")
_UNIT_IN_HEADER = re.compile(r"[\(\[]\s*([^\)\]]+?)\s*[\)\]]")
_UNIT_IN_CELL = re.compile(r"^\s*([+\-−]?[0-9.eE+\-]+)\s*([A-Za-z]+)\s*$")
# The two patterns above backtrack (quadratically) on long text; they only ever see short cells.
HEADER_MAX_CHARS = 200


@dataclass(frozen=True)
class ClaimedDisplacement:
    joint: str
    axis: str  # x, y or z
    case: str  # load case or combination of the model
    value: float  # along +axis, in the case's length unit
    written: str
    where: str
    scale: float = (
        1.0  # case length units per unit the value was written in (0.001 for mm in a m model)
    )


@dataclass(frozen=True)
class DisplacementClaims:
    source: str
    sha256: str
    values: tuple[ClaimedDisplacement, ...]


def read_displacements(path: str | Path, model: Model) -> DisplacementClaims:
    path = Path(path)
    name = str(path)
    problems = ProblemList(name)
    try:
        data = read_regular_file(path, limit=TABLE_MAX_BYTES)
    except FileNotFoundError:
        raise InputError([Problem(name, "file not found")]) from None
    except UnreadableFile as exc:
        raise InputError([Problem(name, str(exc))]) from None
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = data.decode("cp1252", errors="replace")
    if "\x00" in text:
        raise InputError(
            [
                Problem(
                    name, f"holds NUL bytes (byte {text.index(chr(0))}); expected a CSV text table"
                )
            ]
        )
    # CR-only line endings (old spreadsheets) read as lines too.
    reader = csv.reader(io.StringIO(text.replace("\r\n", "\n").replace("\r", "\n")))
    try:
        rows = [r for r in reader]
    except csv.Error as exc:  # an unclosed quote, a field beyond the csv module's size limit
        raise InputError(
            [Problem(name, f"not readable as CSV from here on ({exc})", reader.line_num)]
        ) from None
    if not rows or not any(c.strip() for c in rows[0]):
        raise InputError(
            [Problem(name, "empty file; expected a header: joint, direction, case, value (mm)")]
        )
    header = [h.strip() for h in rows[0]]
    if any(len(h) > HEADER_MAX_CHARS for h in header):
        raise InputError(
            [
                Problem(
                    name,
                    f"a header cell is over {HEADER_MAX_CHARS} characters; expected a header: "
                    "joint, direction, case, value (mm)",
                    1,
                )
            ]
        )
    lowered = [h.lower() for h in header]

    def find(names: tuple[str, ...]) -> int | None:
        for i, h in enumerate(lowered):
            base = _UNIT_IN_HEADER.sub("", h).strip()
            if base in names:
                return i
        return None

    joint_col = find(("joint", "node", "point"))
    dir_col = find(("direction", "dir", "axis", "component"))
    case_col = find(("case", "load case", "combination", "lc"))
    value_col = find(VALUE_HEADERS)
    for what, col in (
        ("joint", joint_col),
        ("direction", dir_col),
        ("value (e.g. 'deflection (mm)')", value_col),
    ):
        if col is None:
            problems.add(f"no '{what}' column; found {', '.join(header)}", line=1)
    if case_col is None and len(model.load_names) > 1:
        problems.add(
            "no 'case' column, and the model has several load columns "
            f"({', '.join(model.load_names)})",
            line=1,
        )
    problems.raise_if_any()
    assert joint_col is not None and dir_col is not None and value_col is not None
    header_unit = None
    found = _UNIT_IN_HEADER.search(header[value_col])
    if found:
        try:
            header_unit = lookup_unit(found.group(1), Dimension.LENGTH)
        except ValueError as exc:
            problems.add(f"column '{header[value_col]}': {exc}", line=1)
    axes = ("x", "y", "z")[: model.dim]
    out: list[ClaimedDisplacement] = []
    seen: dict[tuple[str, str, str], int] = {}
    unitless: list[int] = []
    for number, row in enumerate(rows[1:], start=2):
        if not any(c.strip() for c in row):
            continue
        if len(row) < len(header):
            row = row + [""] * (len(header) - len(row))
        joint = row[joint_col].strip()
        direction = row[dir_col].strip().lower().replace("−", "-")
        case = row[case_col].strip() if case_col is not None else model.load_names[0]
        raw = row[value_col].strip()
        where = f"row {number}"
        if joint not in model.joint_index:
            problems.add(
                f"joint {quoted(joint)} is not in the model.{did_you_mean(joint, model.joint_ids)}",
                where=where,
            )
            continue
        sign = -1.0 if direction.startswith("-") else 1.0
        axis = direction.lstrip("+-")
        if axis not in axes:
            problems.add(
                f"direction {quoted(row[dir_col])} is not one of {', '.join(axes)} (a leading '-' "
                "measures against the axis)",
                where=where,
            )
            continue
        if case not in model.load_names:
            problems.add(
                f"case {quoted(case)} is not a load case or "
                f"combination.{did_you_mean(case, model.load_names)}",
                where=where,
            )
            continue
        if not raw:
            continue  # blank: no claim
        if len(raw) > NUMBER_MAX_CHARS + 8:  # a number, a space and a unit
            problems.add(
                f"value {quoted(raw, limit=20)} is not a number with an optional length unit",
                where=where,
            )
            continue
        unit = header_unit
        cell = _UNIT_IN_CELL.match(raw)
        number_text = raw
        if cell:
            number_text = cell.group(1)
            try:
                unit = lookup_unit(cell.group(2), Dimension.LENGTH)
            except ValueError as exc:
                problems.add(f"value {quoted(raw)}: {exc}", where=where)
                continue
        try:
            value = parse_number(number_text.replace("−", "-"))
        except ValueError as exc:
            problems.add(f"column '{header[value_col]}': {exc}", where=where)
            continue
        key = (joint, axis, case)
        if key in seen:
            problems.add(
                f"a second claim for {joint}.{axis} in '{case}' (first on row {seen[key]})",
                where=where,
            )
            continue
        seen[key] = number
        if unit is None:
            unitless.append(number)
            continue
        scale = factor(unit, model.units.length)
        out.append(ClaimedDisplacement(joint, axis, case, sign * value * scale, raw, where, scale))
    if unitless:
        rows_text = ", ".join(str(n) for n in unitless[:10]) + (
            " ..." if len(unitless) > 10 else ""
        )
        problems.add(
            f"the value{'s' if len(unitless) > 1 else ''} on row{'s' if len(unitless) > 1 else ''} "
            f"{rows_text} {'have' if len(unitless) > 1 else 'has'} no length unit; put the unit in "
            f"the header, e.g. '{header[value_col].strip() or 'deflection'} (mm)', or in each "
            "cell, e.g. '15.5 mm'",
            where=f"row {unitless[0]}",
        )
    problems.raise_if_any()
    if not out:
        raise InputError([Problem(name, "no displacement values found")])
    return DisplacementClaims(name, hashlib.sha256(data).hexdigest(), tuple(out))
