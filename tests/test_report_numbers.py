"""Numbers as a checker rounds them by hand: decimal, halves away from zero, no float noise.

Reference: the decimal value written in the test (an exact decimal half such as 173.25) and the
rule "round half away from zero" (ISO 80000-1:2009, annex B, rule B; Python's
decimal.ROUND_HALF_UP implements it). Expected texts are the exact decimals worked by hand.
"""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal
from fractions import Fraction

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.formatting import clean_zero, decimals_in, fmt, fmt_fixed, fmt_percent, fmt_ratio, tc
from verify.report.numbers import difference_text, roundoff_text
from verify.report.table_csv import data_number


@pytest.mark.parametrize(
    ("value", "digits", "shown"),
    [
        (173.25, 4, "173.3"),  # binary round-half-even on the float gave 173.2
        (28.125, 4, "28.13"),  # ... and 28.12
        (46.875, 4, "46.88"),
        (34.65, 3, "34.7"),  # 34.65 is stored just below the half: binary rounding gave 34.6
        (-173.25, 4, "-173.3"),  # away from zero on the negative side too
        (0.5, 1, "0.5"),
        (2.5, 1, "3"),  # not to even
        (-2.5, 1, "-3"),
        (0.125, 2, "0.13"),
    ],
)
def test_exact_halves_round_away_from_zero(value, digits, shown):
    """An exact decimal half is rounded up in size, whatever the float stored for it."""
    assert fmt(value, digits) == shown


@pytest.mark.parametrize(
    ("value", "shown"), [(173.25, "173.3 T"), (-28.125, "28.13 C"), (-46.875, "46.88 C")]
)
def test_tc_rounds_halves_away_from_zero(value, shown):
    """The T/C form rounds the magnitude as fmt does."""
    assert tc(value) == shown


def test_fixed_places_keep_trailing_zeros_and_round_halves_up():
    """fmt_fixed keeps the places asked for: 12.4 to 2 places is 12.40; 0.045 to 2 places is
    0.05."""
    assert fmt_fixed(12.4, 2) == "12.40"
    assert fmt_fixed(0.045, 2) == "0.05"
    assert fmt_fixed(-0.045, 2) == "-0.05"


@pytest.mark.parametrize("value", [-0.0, -1e-13, -0.004])
def test_no_negative_zero(value):
    """A value that rounds to nothing at two places is written 0.00, never -0.00."""
    assert fmt_fixed(value, 2) == "0.00"


@pytest.mark.parametrize("value", [-0.0, -1e-13])
def test_round_off_is_zero_at_significant_figures(value):
    """Below 1e-12, fmt writes 0, never -0."""
    assert fmt(value) == "0"


def test_float_noise_below_ten_figures_is_not_shown():
    """75.37499999999 from a solve prints as 75.375 typed in a file does: 75.38 at four figures."""
    assert fmt(75.37499999999) == fmt(75.375) == "75.38"
    assert data_number(28.125000000000004, 28.125) == "28.125"


def test_round_off_beside_the_row_is_zero_in_the_csv():
    """-9.707e-10 beside forces of order 10 and 3.0e-14 are round-off: the CSV says 0, not -0 or
    3.0e-14."""
    assert data_number(-9.707e-10, 12.0) == "0"
    assert data_number(3.0e-14, 45.0) == "0"
    assert data_number(-0.0, 1.0) == "0"
    assert data_number(None, 1.0) == ""


def test_ratio_and_percent_round_half_away():
    """Conditioning figures in scientific form and tolerances in percent, both halves away from
    zero."""
    assert fmt_ratio(4.705e-5) == "4.71e-5"
    assert fmt_ratio(9.9996e-5) == "1e-4"
    assert fmt_percent(0.01) == "1 %"
    assert fmt_percent(0.0125, 2) == "1.3 %"


def test_routes_agreeing_to_round_off_are_said_so():
    """2.9e-16 is not printed as a figure: the routes agree to round-off."""
    assert "round-off" in roundoff_text(2.9e-16)
    assert "2.9e-16" not in roundoff_text(2.9e-16)
    assert "agree to 0.0032 of the largest force" in roundoff_text(3.2e-3)


def test_difference_keeps_the_precision_the_claim_was_written_in():
    """Claim '173.3' (1 decimal) against 173.25: difference 0.05 at the claim's decimals plus one
    guard."""
    assert difference_text(173.3 - 173.25, 173.3, "173.3 T at row 4, column 'ULS'", 173.3) == "0.05"
    assert difference_text(28.1 - 28.125, 28.1, "28.1 T at row 2", 28.1) == "-0.03"
    assert difference_text(-9.707e-10, 12.0, "12 T at row 2", 12.0) == "0.0"


def test_difference_of_a_claim_written_with_a_decimal_comma_keeps_its_precision():
    """'28,1 T' from a decimal-comma table is 28.1 written to one decimal, as '28.1 T' is: the same
    difference text. '1,234' beside a claim of 1234 is a thousands mark, read as written."""
    point = difference_text(28.1 - 28.125, 28.1, "28.1 T at row 2", 28.1)
    assert difference_text(28.1 - 28.125, 28.1, "28,1 T at row 2", 28.1) == point == "-0.03"
    assert difference_text(0.4, 1234.0, "1,234 at row 2", 1234.0) == "0.4"
    assert difference_text(0.4, 1234.0, "1234 at row 2", 1234.0) == "0.4"


def test_difference_of_a_converted_claim_uses_significant_figures():
    """A claim written in N and read in kN has no written decimals in kN: four figures instead."""
    assert difference_text(0.01234, 12.34, "12340 at row 2", 12.34) == "0.01234"


def test_decimals_in_reads_the_first_number():
    """'12.40 C at row 4' has 2 decimals; '(3) at row 2' has none; text without a number gives
    None."""
    assert decimals_in("12.40 C at row 4") == 2
    assert decimals_in("(3) at row 2") == 0
    assert decimals_in("n/a") is None


def test_clean_zero_is_relative_to_scale():
    """1e-10 is round-off beside 1.0, but not beside 1e-9."""
    assert clean_zero(1e-10, 1.0) == 0.0
    assert clean_zero(1e-10, 1e-9) == 1e-10


@given(st.integers(min_value=-(10**7), max_value=10**7), st.integers(min_value=1, max_value=4))
def test_any_decimal_rounds_as_decimal_half_up_does(units, places):
    """For any decimal n/10^(p+1), fmt_fixed to p places equals exact decimal ROUND_HALF_UP (the
    reference)."""
    exact = Fraction(units, 10 ** (places + 1))
    value = float(Decimal(units).scaleb(-(places + 1)))
    expected = Decimal(exact.numerator) / Decimal(exact.denominator)
    expected = expected.quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_UP)
    text = f"{expected:f}"
    if text.startswith("-") and not text.strip("-0."):
        text = text[1:]
    assert fmt_fixed(value, places) == text


@settings(max_examples=400, deadline=None)
@given(
    st.text(
        alphabet=st.sampled_from(list("0123456789..,- eE+TCkN'at row") + ["²", "٣", "½"]),
        max_size=24,
    )
)
def test_first_number_regexes_read_as_the_character_loops(text):
    """The regex fast paths for ASCII texts give what the character loops (str.isdigit) give;
    other texts take the loops."""
    from verify.formatting import _decimals_by_character
    from verify.report.numbers import _number_by_character, _written_number

    assert decimals_in(text) == _decimals_by_character(text)
    assert _written_number(text) == _number_by_character(text)
