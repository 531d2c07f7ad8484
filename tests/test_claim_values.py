"""Force cells of claimed tables: text -> (value, sign_fixed, unit), and the texts refused.

The readings are conventions of the trade, not computations: T = tension, C = compression
(common practice); accounting parentheses mean a negative number (common practice in
spreadsheets); thousands grouped in threes by ',', space or apostrophe, and ',' as the decimal
mark in ';'-separated European CSV files (common practice). The property tests check the parser
against Python's own number formatting ("{:,.3f}"), which is outside the project.
"""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.values import is_nan_text, parse_force_cell

REL = 1e-12  # parsing is exact up to float rounding of the decimal text

# (text, decimal_comma, value, sign_fixed, unit, behaviour)
# fmt: off
READINGS = [
    ("12.4", False, 12.4, False, None, "a plain number keeps its sign"),
    ("-12.4", False, -12.4, False, None, "a minus sign is kept, sign not fixed"),
    ("+3", False, 3.0, False, None, "a plus sign is allowed"),
    ("0", False, 0.0, False, None, "zero is a value, not missing"),
    ("1E1", False, 10.0, False, None, "scientific notation is a number"),
    ("2.5e-3", False, 0.0025, False, None, "negative exponents"),
    (".5", False, 0.5, False, None, "a leading decimal point"),
    ("12.4 C", False, -12.4, True, None, "C means compression: negative, sign fixed"),
    ("12.4C", False, -12.4, True, None, "C attached to the number"),
    ("12.4T", False, 12.4, True, None, "T means tension: positive, sign fixed"),
    ("12.4 (C)", False, -12.4, True, None, "C in parentheses"),
    ("12.4 (T)", False, 12.4, True, None, "T in parentheses"),
    ("12.4 tension", False, 12.4, True, None, "the word tension"),
    ("12.4 Compression", False, -12.4, True, None, "the word compression, any case"),
    ("-12.4 C", False, -12.4, True, None, "a redundant minus with C is still compression"),
    ("0 C", False, 0.0, True, None, "zero compression is zero"),
    ("(12.4)", False, -12.4, False, None, "accounting parentheses mean negative"),
    ("(12.4) C", False, -12.4, True, None, "accounting negative and C agree"),
    ("1,234.5", False, 1234.5, False, None, "comma thousands separator"),
    ("1,234,567", False, 1234567.0, False, None, "several comma groups"),
    ("1 234.5", False, 1234.5, False, None, "space thousands separator"),
    ("1\u00a0234.5", False, 1234.5, False, None, "no-break space thousands separator"),
    ("1 234,5", False, 1234.5, False, None,
        "space groups settle a decimal comma even in a point table"),
    ("1'234.5", False, 1234.5, False, None, "apostrophe thousands separator"),
    ("12,4", True, 12.4, False, None, "decimal comma in a decimal-comma table"),
    ("-0,75", True, -0.75, False, None, "negative decimal comma"),
    ("1.234,5", True, 1234.5, False, None, "dot thousands with a decimal comma"),
    ("1 234,5", True, 1234.5, False, None, "space thousands with a decimal comma"),
    ("1.234.567", True, 1234567.0, False, None, "two dot groups cannot be a decimal point"),
    ("12.4", True, 12.4, False, None, "a decimal point that cannot be a thousands group"),
    ("1,5e3", True, 1500.0, False, None, "scientific notation with a decimal comma"),
    ("12,4 C", True, -12.4, True, None, "decimal comma with C"),
    ("\u221212.4", False, -12.4, False, None, "Unicode minus sign"),
    ("\u201312.4", False, -12.4, False, None, "en dash used as a minus"),
    ("\u201412.4", False, -12.4, False, None, "em dash used as a minus"),
    ("12.4 kN", False, 12.4, False, "kN", "a unit in the cell"),
    ("3.1kip", False, 3.1, False, "kip", "a unit attached to the number"),
    ("3.1 kips", False, 3.1, False, "kip", "a plural unit spelling"),
    ("12.4 kN C", False, -12.4, True, "kN", "unit then C"),
    ("12.4 C kN", False, -12.4, True, "kN", "C then unit"),
    ("12.4 kN (T)", False, 12.4, True, "kN", "unit then (T)"),
    ("500 N", False, 500.0, False, "N", "newtons"),
    ("2 tonne-force", False, 2.0, False, "tonne-force", "a hyphenated unit"),
    ("  7.5  ", False, 7.5, False, None, "surrounding spaces are ignored"),
]
# fmt: on


@pytest.mark.parametrize(
    ("text", "decimal_comma", "value", "sign_fixed", "unit"),
    [r[:5] for r in READINGS],
    ids=[r[5] for r in READINGS],
)
def test_force_cell_reading(
    text: str, decimal_comma: bool, value: float, sign_fixed: bool, unit: str | None
) -> None:
    got = parse_force_cell(text, decimal_comma=decimal_comma)
    assert got[0] == pytest.approx(value, rel=REL)
    assert got[1:] == (sign_fixed, unit)


# (text, decimal_comma, fragment of the message, behaviour)
# fmt: off
REFUSED = [
    ("12,4.0 C", False, "force '12,4.0 C' is not a number with an optional T/C suffix",
        "a comma that fits no grouping"),
    ("12,4", False, "write a decimal point", "a decimal comma in a point table"),
    ("1.234", True, "ambiguous", "one dot group in a decimal-comma table could be either"),
    ("", False, "empty", "empty text"),
    ("nan", False, "force 'nan' is not a number", "NaN"),
    ("NaN", False, "leave the cell blank", "NaN in any case"),
    ("#N/A", False, "spreadsheet error", "spreadsheet #N/A"),
    ("#VALUE!", False, "spreadsheet error", "spreadsheet #VALUE!"),
    ("#DIV/0!", False, "spreadsheet error", "spreadsheet #DIV/0!"),
    ("inf", False, "not a number", "infinity"),
    ("1e999", False, "out of range", "overflow to infinity"),
    ("-12.4 T", False, "negative but marked T", "minus and T contradict"),
    ("(12.4) T", False, "negative but marked T", "accounting negative and T contradict"),
    ("(-12.4)", False, "parentheses already mean negative", "a sign inside accounting parentheses"),
    ("12.4 t", False, "write 'T' for tension", "lower-case t may be tonnes"),
    ("12.4 c", False, "write 'C' for compression", "lower-case c is refused too"),
    ("12 ft", False, "length unit", "a length unit in a force cell"),
    ("12 lb", False, "ambiguous", "lb is a mass"),
    ("12 furlongs", False, "unknown force unit", "an unknown unit"),
    ("abc", False, "is not a number", "words"),
    ("-", False, "is not a number", "a lone dash is not zero"),
    ("C", False, "is not a number", "a T/C letter without a number"),
    ("12 4", False, "is not a number", "a space that is not a thousands group"),
    ("1,23,456", False, "is not a number", "irregular comma groups"),
    ("12.4.5", False, "is not a number", "two decimal points"),
]
# fmt: on


@pytest.mark.parametrize(
    ("text", "decimal_comma", "fragment"),
    [r[:3] for r in REFUSED],
    ids=[r[3] for r in REFUSED],
)
def test_force_cell_refused(text: str, decimal_comma: bool, fragment: str) -> None:
    with pytest.raises(ValueError) as info:
        parse_force_cell(text, decimal_comma=decimal_comma)
    assert fragment in str(info.value)


@pytest.mark.parametrize("text", ["nan", "#N/A", "#VALUE!", "N/A", "null", " NaN "])
def test_nan_words_are_recognised(text: str) -> None:
    """Missing-value words and spreadsheet error codes are told apart from labels and numbers."""
    assert is_nan_text(text)


@pytest.mark.parametrize("text", ["AB", "12.4", "N-A", ""])
def test_ordinary_text_is_not_nan(text: str) -> None:
    """Labels, numbers and blanks are not mistaken for missing-value words."""
    assert not is_nan_text(text)


_magnitudes = st.decimals(
    min_value=0, max_value=10**9, places=3, allow_nan=False, allow_infinity=False
)


@settings(max_examples=150, deadline=None)
@given(
    _magnitudes,
    st.sampled_from(["", " T", " C", "T", "C", " (C)"]),
    st.sampled_from(["", " kN", "kip"]),
)
def test_python_formatted_numbers_read_back(magnitude, suffix: str, unit: str) -> None:
    """Numbers formatted by Python's '{:,.3f}' (comma thousands) read back with T/C and unit
    applied."""
    text = f"{magnitude:,.3f}{unit}{suffix}"
    value, sign_fixed, symbol = parse_force_cell(text)
    expected = float(magnitude) * (-1.0 if "C" in suffix else 1.0)
    assert value == pytest.approx(expected, rel=REL, abs=0.0)
    assert sign_fixed == bool(suffix)
    assert symbol == ({"": None, " kN": "kN", "kip": "kip"}[unit])


@settings(max_examples=150, deadline=None)
@given(_magnitudes, st.booleans(), st.sampled_from([".", " "]))
def test_european_formatted_numbers_read_back(magnitude, negative: bool, grouping: str) -> None:
    """'1.234.567,891' and '1 234 567,891' (Python's formatting with marks swapped) read back in
    decimal-comma mode."""
    swapped = f"{magnitude:,.3f}".replace(",", "\x00").replace(".", ",").replace("\x00", grouping)
    text = ("-" if negative else "") + swapped
    value, sign_fixed, _ = parse_force_cell(text, decimal_comma=True)
    assert value == pytest.approx(float(magnitude) * (-1 if negative else 1), rel=REL, abs=0.0)
    assert not sign_fixed
