"""Reading one heading cell: its name, its unit (force or another kind), its role spelling."""

from __future__ import annotations

import re
from dataclasses import dataclass

from verify.io.claims.grid import Cell, cell_text
from verify.io.claims.problems import quoted
from verify.io.values import normalize_text
from verify.units import Dimension, lookup_unit

MAX_HEADER_CHARS = 120  # longer header cells are notes

# Header spellings per role, compared after header_key(); earlier spellings win when a table
# has several (a table with "ID" and "Member" columns is labelled by "Member").
# fmt: off
MEMBER_HEADERS = (
    "member", "member id", "member label", "member name", "member no", "member #", "members",
    "mbr", "memb", "element", "element id", "elem", "bar", "bar id", "label", "mark", "id",
)
FORCE_HEADERS = (
    "force", "axial force", "member force", "axial", "axial load", "forces", "n", "p", "value",
)
CASE_HEADERS = (
    "case", "load case", "loadcase", "lc", "combination", "load combination", "combo", "comb",
    "case name",
)
TC_HEADERS = ("t/c", "t or c", "tc", "tension/compression", "sense")
UNIT_HEADERS = ("unit", "units")
# Descriptive columns a member table often carries; never read as load cases.
IGNORED_HEADERS = frozenset(
    {
        "remark", "remarks", "note", "notes", "comment", "comments", "description", "type",
        "section", "size", "profile", "length", "l", "start", "end", "from", "to", "i", "j",
        "node i", "node j", "joint i", "joint j", "start joint", "end joint", "start node",
        "end node", "status", "stress", "capacity", "utilisation", "utilization", "util",
        "ratio", "area", "no", "#", "item", "row", "group", "material", "check",
    }
)
# fmt: on

_NON_FORCE_UNIT = re.compile(
    r"^(%|-|mm2|mm²|cm2|cm²|m2|m²|in2|in²|ft2|pa|kpa|mpa|gpa|psi|ksi|n/mm2|n/mm²|kn/m2|kn/m|kn/m²|"
    r"knm|kn\.?m|kn·m|kip-ft|kip-in|lbf-ft|deg|°|rad)$",
    re.IGNORECASE,
)
_HEADER_UNIT = re.compile(
    r"^(?P<name>.*?)\s*(?:\((?P<p>[^()]*)\)|\[(?P<b>[^\[\]]*)\]|,\s*(?P<c>[^,]+))\s*$"
)

# A force unit written after the name without brackets ('Dead kN', 'Dead - kN', 'Dead in kN',
# 'Dead/kN'): only units that cannot be part of a load case's name. 'N' and 't' are left out
# ('Wind N' is wind from the north); 'MN' only in capitals ('mN' is not a unit here). A heading
# that names a load case as written ('Crane 10 kN') is read whole: see whole().
_BARE_UNIT = re.compile(
    r"^(?P<name>.*?[^\s\-/])\s*(?:\s(?:in|-)\s|/|\s)\s*(?P<u>(?i:kn|kips?|lbf|kgf)|MN)$"
)


def header_key(text: str) -> str:
    return re.sub(r"[\s_\-.:]+", " ", normalize_text(text).casefold()).strip()


@dataclass(frozen=True)
class Header:
    index: int
    text: str  # as written
    name: str  # without its unit
    key: str  # normalised name for spelling lookups
    unit: str | None
    unit_error: str | None
    descriptive: bool  # a non-force unit or a known descriptive heading
    other_unit: str | None = None  # a unit that is not a force (stress, length, moment), as written
    other_name: str = ""  # the heading without that unit
    bare_unit: bool = False  # the unit was written after the name without brackets ('Dead kN')


def _length_unit(text: str) -> bool:
    try:
        lookup_unit(text, Dimension.LENGTH)
    except ValueError:
        return False
    return True


def _force_per_something(text: str) -> bool:
    """'N/mm', 'kN/m2', 'kip/ft': a force unit divided by something (a line load, a stress)."""
    top, slash, _ = text.partition("/")
    if not slash:
        return False
    try:
        lookup_unit(top.strip(), Dimension.FORCE)
    except ValueError:
        return False
    return True


def parse_header(index: int, cell: Cell) -> Header:
    text = cell_text(cell)
    if len(text) > MAX_HEADER_CHARS:
        # A paragraph of notes, not a heading: never parsed (the unit pattern backtracks over
        # its length) and cut short wherever messages name the column.
        return Header(index, quoted(text), quoted(text), "", None, None, True)
    name, unit, error, other_unit, other_name = text, None, None, None, ""
    m = _HEADER_UNIT.match(text)
    if m and m.group("name").strip():
        inner = (m.group("p") or m.group("b") or m.group("c") or "").strip()
        try:
            unit = lookup_unit(inner, Dimension.FORCE).symbol
            name = m.group("name").strip()
        except ValueError as exc:
            if _other_unit(inner):
                other_unit, other_name = inner, m.group("name").strip()
            elif "ambiguous" in str(exc):
                error = str(exc)
                name = m.group("name").strip()
    elif (bare := _BARE_UNIT.match(text.strip())) is not None:
        try:
            unit = lookup_unit(bare.group("u"), Dimension.FORCE).symbol
        except ValueError:  # not a force unit after all: the heading is a name
            pass
        else:
            name, key = bare.group("name"), header_key(bare.group("name"))
            return Header(
                index, text, name, key, unit, None, key in IGNORED_HEADERS, bare_unit=True
            )
    key = header_key(name)
    descriptive = other_unit is not None or key in IGNORED_HEADERS
    return Header(index, text, name, key, unit, error, descriptive, other_unit, other_name)


def whole(header: Header, load_names: set[str]) -> Header:
    """A heading with a unit written after its name without brackets, read whole (no unit)
    when the whole of it names a load case ('Crane 10 kN' for load case 'Crane 10 kN');
    `load_names` case-folded."""
    name = header.text.strip()
    if not header.bare_unit or name.casefold() not in load_names:
        return header
    key = header_key(name)
    return Header(header.index, header.text, name, key, None, None, key in IGNORED_HEADERS)


def other_unit_alone(cell: Cell) -> bool:
    """Whether a cell holds only a unit that is not a force ('mm', '(m)', 'MPa', 'kN/m')."""
    text = cell_text(cell).strip("()[] ")
    return bool(text) and _other_unit(text)


def _other_unit(text: str) -> bool:
    """A unit of another kind than force: a stress, an area, a length, a force per length."""
    return bool(_NON_FORCE_UNIT.match(text)) or _force_per_something(text) or _length_unit(text)


def unit_alone(cell: Cell) -> str | None:
    """The force unit written alone in a cell ('kN', '[kN]', '(kip)'), else None."""
    text = cell_text(cell).strip("()[] ")
    if not text:
        return None
    try:
        return lookup_unit(text, Dimension.FORCE).symbol
    except ValueError:
        return None


# A force unit stated in a line of text above a table ('Member forces (kips)', 'all forces in
# kN', 'Units: kN'): in brackets, after 'in', or after 'unit(s)', on a line that speaks of forces
# or of units. Only units no word of prose is spelt like: 'N' (the north truss, 'N. Yorkshire')
# and 'MN' (a state) are passed over, as are 'kN/m' loads and 'kNm' moments.
_STATED_UNIT = (
    re.compile(r"[(\[]\s*([^()\[\]]+?)\s*[)\]]"),
    re.compile(r"\bin\s+([^\s,;:()\[\]]+)", re.IGNORECASE),
    re.compile(r"\bunits?\s*[:=]?\s*([^\s,;()\[\]]+)", re.IGNORECASE),
)
_STATING = re.compile(r"\bforces?\b|^\s*units?\b", re.IGNORECASE)
_PROSE_PROOF_UNITS = frozenset({"kN", "kip", "lbf", "kgf"})


def stated_units(text: str) -> list[str]:
    """The force units a line of text states for the table under it, in the line's order."""
    if not _STATING.search(text) or "convert" in text.casefold():
        return []  # no word of forces or units; or two units, one converted to the other
    places: list[tuple[int, str]] = []
    for pattern in _STATED_UNIT:
        for match in pattern.finditer(text):
            try:
                symbol = lookup_unit(match.group(1).rstrip("."), Dimension.FORCE).symbol
            except ValueError:
                continue
            if symbol in _PROSE_PROOF_UNITS:
                places.append((match.start(), symbol))
    return list(dict.fromkeys(symbol for _, symbol in sorted(places)))
