"""The units table against pint (an independent units library) and NIST SP 811.

Sources: NIST Special Publication 811 (2008 ed.), Appendix B, as quoted in
shared/REFERENCES.md 5.3 (1 lbf = 4.4482216152605 N exact, 1 kgf = 9.80665 N exact, 1 ft =
0.3048 m exact, 1 in = 25.4 mm exact); pint's default registry for every factor.
"""

from __future__ import annotations

import itertools

import pint
import pytest

from verify.io.case import AREA_UNITS, MODULUS_UNITS
from verify.units import _ALIASES, AMBIGUOUS, UNITS, Dimension, factor, lookup_unit

RTOL = 1e-12

ureg = pint.UnitRegistry()

# Our symbol -> pint's name for the same unit. pint calls the tonne-force 'metric_ton_force'
# (its 'tf' alias means the same); 'tonne_force' is not a pint name.
PINT_NAME = {
    "m": "meter",
    "mm": "millimeter",
    "cm": "centimeter",
    "ft": "foot",
    "in": "inch",
    "N": "newton",
    "kN": "kilonewton",
    "MN": "meganewton",
    "lbf": "pound_force",
    "kip": "kip",
    "kgf": "kilogram_force",
    "tonne-force": "metric_ton_force",
}


def pint_si(name: str) -> float:
    return float(ureg.Quantity(1.0, name).to_base_units().magnitude)


def test_every_unit_has_a_pint_counterpart():
    """A unit added to the table without a pint check here fails this test."""
    assert set(UNITS) == set(PINT_NAME)


@pytest.mark.parametrize("symbol", sorted(PINT_NAME))
def test_factor_to_si_matches_pint(symbol):
    unit = UNITS[symbol]
    assert unit.to_si == pytest.approx(pint_si(PINT_NAME[symbol]), rel=RTOL)


@pytest.mark.parametrize("symbol", sorted(PINT_NAME))
def test_dimension_matches_pint(symbol):
    dims = ureg.Quantity(1.0, PINT_NAME[symbol]).dimensionality
    expected = {
        Dimension.LENGTH: ureg.meter.dimensionality,
        Dimension.FORCE: ureg.newton.dimensionality,
    }
    assert dims == expected[UNITS[symbol].dimension]


def test_nist_exact_factors():
    """NIST SP 811 App. B exact values (REFERENCES.md 5.3)."""
    assert UNITS["lbf"].to_si == pytest.approx(4.4482216152605, rel=RTOL)
    assert UNITS["kip"].to_si == pytest.approx(4448.2216152605, rel=RTOL)
    assert UNITS["kgf"].to_si == 9.80665
    assert UNITS["tonne-force"].to_si == pytest.approx(9806.65, rel=RTOL)
    assert UNITS["ft"].to_si == 0.3048
    assert UNITS["in"].to_si == 0.0254


PAIRS = [
    (a, b)
    for a, b in itertools.product(sorted(UNITS), repeat=2)
    if UNITS[a].dimension is UNITS[b].dimension
]


@pytest.mark.parametrize(("a", "b"), PAIRS)
def test_conversion_factor_matches_pint(a, b):
    expected = ureg.Quantity(1.0, PINT_NAME[a]).to(PINT_NAME[b]).magnitude
    assert factor(UNITS[a], UNITS[b]) == pytest.approx(expected, rel=RTOL)


def test_conversion_between_dimensions_is_refused():
    with pytest.raises(ValueError, match="cannot convert"):
        factor(UNITS["kN"], UNITS["m"])


# Spelled-out aliases and what pint makes of the same words.
ALIAS_PINT = {
    "metre": "metre",
    "meter": "meter",
    "metres": "metres",
    "meters": "meters",
    "millimetre": "millimetre",
    "millimeter": "millimeter",
    "millimetres": "millimetres",
    "millimeters": "millimeters",
    "foot": "foot",
    "feet": "feet",
    "inch": "inch",
    "inches": "inches",
    "newton": "newton",
    "newtons": "newtons",
    "kilonewton": "kilonewton",
    "kilonewtons": "kilonewtons",
    "meganewton": "meganewton",
    "kips": "kips",
    "kipf": "kip",
    "lbs-force": "pound_force",
    "pound-force": "pound_force",
    "tf": "tf",
    "tonnes-force": "metric_ton_force",
    "metric-ton-force": "metric_ton_force",
    "kilogram-force": "kilogram_force",
}


def test_every_alias_is_checked():
    assert set(_ALIASES) == set(ALIAS_PINT)


@pytest.mark.parametrize("alias", sorted(ALIAS_PINT))
def test_alias_resolves_to_the_unit_pint_gives(alias):
    target = UNITS[_ALIASES[alias]]
    unit = lookup_unit(alias, target.dimension)
    assert unit.to_si == pytest.approx(pint_si(ALIAS_PINT[alias]), rel=RTOL)


@pytest.mark.parametrize(
    "text", ["k", "t", "T", "ton", "tons", "Ton", "lb", "lbs", "LB", "tonne", "kg"]
)
@pytest.mark.parametrize("dimension", [Dimension.FORCE, Dimension.LENGTH])
def test_ambiguous_symbols_are_refused_listing_accepted_units(text, dimension):
    with pytest.raises(ValueError) as info:
        lookup_unit(text, dimension)
    message = str(info.value)
    assert "ambiguous" in message
    accepted = [s for s, u in UNITS.items() if u.dimension is dimension]
    assert all(s in message for s in accepted), message


def test_ambiguous_table_covers_the_documented_symbols():
    """k, t, ton and lb are the symbols the design names as ambiguous."""
    assert {"k", "t", "ton", "lb"} <= set(AMBIGUOUS)


def test_lb_message_suggests_lbf():
    with pytest.raises(ValueError, match="lbf"):
        lookup_unit("lb", Dimension.FORCE)


def test_unknown_unit_lists_accepted_units():
    with pytest.raises(
        ValueError,
        match="unknown force unit 'kNN'; accepted: N, kN, MN, lbf, kip, kgf, tonne-force",
    ):
        lookup_unit("kNN", Dimension.FORCE)


def test_length_unit_for_force_is_refused():
    with pytest.raises(ValueError, match="'mm' is a length unit, but a force unit is expected"):
        lookup_unit("mm", Dimension.FORCE)


def test_case_insensitive_kn_is_kilonewton():
    """'kn' and 'KN' are common spreadsheet spellings of kN (common practice)."""
    assert lookup_unit("kn", Dimension.FORCE) is UNITS["kN"]
    assert lookup_unit("KN", Dimension.FORCE) is UNITS["kN"]


@pytest.mark.parametrize(("text", "dimension"), [("mN", Dimension.FORCE), ("Mm", Dimension.LENGTH)])
def test_prefix_case_is_not_folded_into_another_unit(text, dimension):
    """pint reads 'mN' as millinewton and 'Mm' as megametre: refuse them, or read them as pint
    does."""
    try:
        unit = lookup_unit(text, dimension)
    except ValueError:
        return
    assert unit.to_si == pytest.approx(pint_si(text), rel=RTOL)


AREA_PINT = {"m2": "m**2", "cm2": "cm**2", "mm2": "mm**2", "in2": "inch**2", "ft2": "foot**2"}
MODULUS_PINT = {
    "Pa": "Pa",
    "kPa": "kPa",
    "MPa": "MPa",
    "GPa": "GPa",
    "N/mm2": "N/mm**2",
    "kN/m2": "kN/m**2",
    "psi": "psi",
    "ksi": "ksi",
}


def test_area_and_modulus_tables_are_fully_checked():
    assert set(AREA_UNITS) == set(AREA_PINT)
    assert set(MODULUS_UNITS) == set(MODULUS_PINT)


@pytest.mark.parametrize("symbol", sorted(AREA_PINT))
def test_area_factor_matches_pint(symbol):
    assert AREA_UNITS[symbol] == pytest.approx(pint_si(AREA_PINT[symbol]), rel=RTOL)


@pytest.mark.parametrize("symbol", sorted(MODULUS_PINT))
def test_modulus_factor_matches_pint(symbol):
    assert MODULUS_UNITS[symbol] == pytest.approx(pint_si(MODULUS_PINT[symbol]), rel=RTOL)
