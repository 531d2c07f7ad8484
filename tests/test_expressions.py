"""The case file's arithmetic evaluator (verify/io/expressions.py).

Outside references: Python's fractions module (exact rational arithmetic) for random
expressions; the exact trigonometric values of 30, 45, 60 and 90 degrees (common practice, the
values every trade handbook tabulates: sin 30 = 1/2, tan 30 = 1/sqrt 3, cos 45 = sqrt 2 / 2);
math.sin etc. for angles without exact values.
"""

from __future__ import annotations

import math
import time
from fractions import Fraction

import pytest
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.io.expressions import MAX_CHARS, ExpressionError, Value, evaluate

RTOL = 1e-12
HOSTILE_SECONDS = 1.0  # any refusal must come at once; a hang is the failure being guarded


@pytest.mark.parametrize(
    ("text", "exact"),
    [
        ("4.5 * tan(30)", sympy.Rational(9, 2) / sympy.sqrt(3)),
        ("sin(30)", sympy.Rational(1, 2)),
        ("cos(60) + sin(90)", sympy.Rational(3, 2)),
        ("sqrt(2) / 2", sympy.sqrt(2) / 2),
        ("cos(45)", sympy.sqrt(2) / 2),
        ("2 ** 0.5 * 3", 3 * sympy.sqrt(2)),
        ("24 / 6 - 0.5", sympy.Rational(7, 2)),
        ("-(3 - 5) ** 2", -4),
    ],
)
def test_exact_values_survive(text, exact):
    """Rational results and surds are kept exactly, and the float is the exact value rounded
    once."""
    value = evaluate(text)
    assert sympy.simplify(value.exact - exact) == 0
    assert value.number == float(exact)


def test_cos_90_is_zero_not_float_noise():
    """cos(90 degrees) is 0 exactly; math.cos(math.radians(90)) is 6e-17."""
    assert math.cos(math.radians(90)) != 0.0
    assert evaluate("cos(90)").number == 0.0


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("sin(17)", math.sin(math.radians(17))),
        ("pi * 2", 2 * math.pi),
        ("tan(10) + 1", math.tan(math.radians(10)) + 1),
    ],
)
def test_transcendental_results_keep_the_float_only(text, expected):
    """Where the result is neither rational nor a surd, no exact value is claimed."""
    value = evaluate(text)
    assert value.exact is None
    assert value.number == pytest.approx(expected, rel=RTOL)


def test_parameters_are_used_by_name_and_misspellings_get_a_hint():
    """Names come from [parameters]; an unknown one is refused with the closest name."""
    params = {"span": Value(24.0, sympy.Integer(24)), "depth": Value(3.0, sympy.Integer(3))}
    assert evaluate("span / 6 + depth", params).exact == 7
    with pytest.raises(
        ExpressionError, match="'spn' is not defined in \\[parameters\\]. Did you mean 'span'"
    ):
        evaluate("spn / 6", params)


@pytest.mark.parametrize(
    ("text", "fragment"),
    [
        ("__import__('os').system('true')", "is not accepted"),
        ("(1).__class__", "attribute access"),
        ("open('x')", "'open(...)' is not accepted"),
        ("[1, 2][0]", "indexing"),
        ("1 if 1 else 2", "if/else"),
        ("3 ^ 2", "write ** for a power"),
        ("7 // 2", "'//' is not accepted"),
        ("'text'", "text in quotes"),
        ("1, 2", "a comma"),
        ("1 / 0", "division by zero"),
        ("sqrt(-1)", "sqrt of a negative number"),
        ("tan(90)", "is infinite"),
        ("(-8) ** 0.5", "fractional power of a negative"),
        ("sin", "is a function"),
        ("sin(1, 2)", "takes one number"),
        ("9 ** 9 ** 9", "exponent"),
        ("10 ** 16 * 10 ** 16", "beyond"),
        ("1e308 * 10", "beyond"),
        ("1" * 400, "characters"),
        ("(" * 150 + "1" + ")" * 49, "not arithmetic"),
        ("1 +", "not arithmetic"),
        ("a" * 5 + "\x00", "not arithmetic"),
    ],
)
def test_refused_forms_say_the_rule_and_return_at_once(text, fragment):
    """Every refused form names its rule, and hostile ones cannot run code or hang the reader."""
    start = time.perf_counter()
    with pytest.raises(ExpressionError) as info:
        evaluate(text[: MAX_CHARS * 2])
    assert fragment in str(info.value)
    assert time.perf_counter() - start < HOSTILE_SECONDS


def test_huge_exact_powers_are_bounded():
    """Powers near 1 raised again and again keep the float; the exact value stops growing."""
    start = time.perf_counter()
    value = evaluate("((((1 + 1/7) ** 16) ** 0.5) ** 16) ** 0.25")
    assert value.number == pytest.approx((8 / 7) ** 32, rel=1e-9)
    value = evaluate("((((1.0000001 ** 16) ** 16) ** 16) ** 16) ** 16")
    assert value.number == pytest.approx(1.0000001 ** (16**5), rel=1e-9)
    assert time.perf_counter() - start < HOSTILE_SECONDS


small = st.integers(-50, 50)


@st.composite
def rational_expressions(draw, depth: int = 3):
    """Random + - * / trees of small integers, with the same tree evaluated by fractions."""
    if depth == 0 or draw(st.booleans()):
        n = draw(small)
        return (f"({n})", Fraction(n))
    left, lf = draw(rational_expressions(depth - 1))
    right, rf = draw(rational_expressions(depth - 1))
    op = draw(st.sampled_from("+-*/"))
    if op == "/" and rf == 0:
        op = "*"
    value = {"+": lf + rf, "-": lf - rf, "*": lf * rf, "/": lf / rf if rf else lf * rf}[op]
    return (f"({left} {op} {right})", value)


@settings(max_examples=60, deadline=None)
@given(rational_expressions())
def test_random_rational_arithmetic_matches_fractions(pair):
    """Exact results equal Python's Fraction arithmetic on the same tree."""
    text, expected = pair
    try:
        value = evaluate(text)
    except ExpressionError as exc:  # only the size bounds may refuse these
        assert "below" in str(exc) or "beyond" in str(exc)
        return
    assert value.exact == sympy.Rational(expected.numerator, expected.denominator)
    assert value.number == float(expected)
