"""The units table: small, audited, with dimensions.

Factors are to SI (metre, newton). Sources: NIST Special Publication 811 (2008 ed.), Appendix B
(1 lbf = 4.4482216152605 N exact; 1 ft = 0.3048 m exact; 1 in = 25.4 mm exact; 1 kgf = 9.80665 N
exact). Checked against pint in tests/test_units.py.

Ambiguous symbols ('k', 't', 'ton', 'T', 'lb') are refused on purpose: 't' may be tonne-force or
short ton, 'lb' may be mass or force, 'k' is a prefix, not a unit.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum


class Dimension(Enum):
    LENGTH = "length"
    FORCE = "force"


@dataclass(frozen=True)
class Unit:
    symbol: str
    dimension: Dimension
    to_si: float  # multiply a value in this unit by to_si to get metres or newtons
    name: str


LBF_IN_N = 4.4482216152605  # NIST SP 811 App. B, exact
KGF_IN_N = 9.80665  # NIST SP 811 App. B, exact (standard gravity)

_UNITS = (
    Unit("m", Dimension.LENGTH, 1.0, "metre"),
    Unit("mm", Dimension.LENGTH, 1e-3, "millimetre"),
    Unit("cm", Dimension.LENGTH, 1e-2, "centimetre"),
    Unit("ft", Dimension.LENGTH, 0.3048, "foot"),
    Unit("in", Dimension.LENGTH, 0.0254, "inch"),
    Unit("N", Dimension.FORCE, 1.0, "newton"),
    Unit("kN", Dimension.FORCE, 1e3, "kilonewton"),
    Unit("MN", Dimension.FORCE, 1e6, "meganewton"),
    Unit("lbf", Dimension.FORCE, LBF_IN_N, "pound-force"),
    Unit("kip", Dimension.FORCE, 1000.0 * LBF_IN_N, "kip (1000 lbf)"),
    Unit("kgf", Dimension.FORCE, KGF_IN_N, "kilogram-force"),
    Unit("tonne-force", Dimension.FORCE, 1000.0 * KGF_IN_N, "tonne-force (metric)"),
)

UNITS: dict[str, Unit] = {u.symbol: u for u in _UNITS}

# Common spellings that mean exactly one unit. Keys are lower-case.
_ALIASES = {
    "metre": "m",
    "meter": "m",
    "metres": "m",
    "meters": "m",
    "millimetre": "mm",
    "millimeter": "mm",
    "millimetres": "mm",
    "millimeters": "mm",
    "foot": "ft",
    "feet": "ft",
    "inch": "in",
    "inches": "in",
    "newton": "N",
    "newtons": "N",
    "kilonewton": "kN",
    "kilonewtons": "kN",
    "meganewton": "MN",
    "kips": "kip",
    "kipf": "kip",
    "lbs-force": "lbf",
    "pound-force": "lbf",
    "tf": "tonne-force",
    "tonnes-force": "tonne-force",
    "metric-ton-force": "tonne-force",
    "kilogram-force": "kgf",
}

_FOLDABLE = {
    "kn": "kN",
    "kip": "kip",
    "lbf": "lbf",
    "kgf": "kgf",
    "ft": "ft",
    "in": "in",
    "tonne-force": "tonne-force",
}

AMBIGUOUS = {
    "k": "'k' is a prefix, not a unit (kN? kip?)",
    "t": "'t' may mean tonne-force or short ton-force",
    "ton": "'ton' may mean tonne-force, short ton or long ton",
    "tons": "'tons' may mean tonne-force, short ton or long ton",
    "tonne": "'tonne' is a mass; write 'tonne-force'",
    "lb": "'lb' is a mass; write 'lbf'",
    "lbs": "'lbs' is a mass; write 'lbf'",
    "kg": "'kg' is a mass; write 'kgf'",
}


def accepted(dimension: Dimension) -> list[str]:
    return [u.symbol for u in _UNITS if u.dimension is dimension]


def lookup_unit(text: str, dimension: Dimension) -> Unit:
    """The unit named by `text`, of the given dimension. Raises ValueError with a helpful
    message."""
    raw = str(text).strip()
    if raw in UNITS:
        unit = UNITS[raw]
    else:
        key = raw.lower()
        if key in AMBIGUOUS or raw in AMBIGUOUS:
            raise ValueError(
                f"unit '{raw}' is ambiguous: {AMBIGUOUS.get(key, AMBIGUOUS.get(raw))}; accepted "
                f"{dimension.value} units: {', '.join(accepted(dimension))}"
            )
        # Case matters for SI prefixes ('mN' is a millinewton, 'MN' a meganewton), so only
        # spellings that cannot be confused are case-folded (e.g. 'KN', 'Kip', 'LBF').
        symbol = _ALIASES.get(key) or _FOLDABLE.get(key)
        if symbol is None:
            raise ValueError(
                f"unknown {dimension.value} unit '{raw}'; accepted: "
                f"{', '.join(accepted(dimension))}"
            )
        unit = UNITS[symbol]
    if unit.dimension is not dimension:
        raise ValueError(
            f"'{raw}' is a {unit.dimension.value} unit, but a {dimension.value} unit is expected "
            f"({', '.join(accepted(dimension))})"
        )
    return unit


def factor(from_unit: Unit, to_unit: Unit) -> float:
    """Multiply a value in `from_unit` by this to express it in `to_unit`."""
    if from_unit.dimension is not to_unit.dimension:
        raise ValueError(f"cannot convert {from_unit.symbol} to {to_unit.symbol}")
    return from_unit.to_si / to_unit.to_si
