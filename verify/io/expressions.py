"""Arithmetic in case files: ``"4.5 * tan(30)"``, ``"span / 6"``, ``"sqrt(3) / 2 * side"``.

A small evaluator over Python's :mod:`ast` (parsed, never run with ``eval``): only the nodes
below are accepted, everything else is refused with the rule it broke.

Accepted
    numbers written with a decimal point or exponent (``4.5``, ``2e3``); ``+ - * / **``;
    unary ``+ -``; parentheses; ``pi``; ``sqrt(x)``, ``sin(x)``, ``cos(x)``, ``tan(x)`` with
    the angle in **degrees**; names defined in the case's ``[parameters]`` table.
Refused
    anything else: attribute access, subscripts, calls of other names, keywords, strings,
    comparisons, lambdas, comprehensions, ``//`` and ``%``; division by zero; the root of a
    negative number; ``tan`` of an odd multiple of 90 degrees.

Bounds, so that a hostile file cannot hang the reader: at most ``MAX_CHARS`` characters and
``MAX_NODES`` syntax nodes per expression, exponents within +-``MAX_EXPONENT``, every
intermediate value within ``MAGNITUDE_LIMIT`` in size (and, when not zero, above its inverse), and
an exact value is dropped (the decimal kept) when its rational parts would grow past
``EXACT_MAX_BITS``.

Exactness: each number is also carried as a sympy value, the decimal as written (``4.5`` is 9/2,
not the nearest binary fraction). Where the result is rational or a surd (``3*sqrt(3)/2``) it is
kept beside the float, and the float is taken from it, so ``cos(90)`` is 0, not 6e-17. Where it
is not (``sin(17)``, ``pi``), only the float is kept. sympy is imported only when a case holds
an expression.
"""

from __future__ import annotations

import ast
import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

MAX_CHARS = 200  # a hand-written expression; longer text is generated data: write the number
MAX_NODES = 80
MAX_EXPONENT = 16  # squares, cubes, roots as ** 0.5; nothing a truss needs comes near 16
MAGNITUDE_LIMIT = 1e30  # far above every sane-range check of the reader (loads 1e12, EA 1e18)
EXACT_MAX_BITS = 4096  # numerator + denominator bits of any rational inside an exact value
FUNCTIONS = ("sqrt", "sin", "cos", "tan")
CONSTANTS = ("pi",)
RESERVED = FUNCTIONS + CONSTANTS
ACCEPTED = "+ - * / **, parentheses, pi, sqrt, sin, cos, tan (degrees) and [parameters] names"


class ExpressionError(ValueError):
    """An expression that is not accepted; the message says which rule it broke."""


@dataclass(frozen=True)
class Value:
    """A number from a case file: the float every analysis uses, and its exact form when the
    result is rational or a surd (a sympy expression), else None."""

    number: float
    exact: Any = None


def evaluate(
    text: str, parameters: Mapping[str, Value] | None = None, *, exact: bool = True
) -> Value:
    """The value of `text`; ExpressionError with the rule it broke.

    `exact=False` skips the sympy track (the float alone), for readers past their budget of
    exact values."""
    if len(text) > MAX_CHARS:
        raise ExpressionError(f"{len(text)} characters; an expression has at most {MAX_CHARS}")
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except (SyntaxError, ValueError, RecursionError, MemoryError):
        raise ExpressionError(f"not arithmetic that can be read; accepted: {ACCEPTED}") from None
    nodes = sum(1 for _ in ast.walk(tree))
    if nodes > MAX_NODES:
        raise ExpressionError(f"{nodes} terms; an expression has at most {MAX_NODES}")
    walker = _Walker(parameters or {}, exact)
    number, exact_value = walker.visit(tree.body)
    if exact_value is not None and not _is_surd(exact_value):
        exact_value = None
    if exact_value is not None:
        number = float(exact_value)
    return Value(_checked(number), exact_value)


def _checked(number: float) -> float:
    if not math.isfinite(number) or abs(number) > MAGNITUDE_LIMIT:
        raise ExpressionError(f"a value beyond {MAGNITUDE_LIMIT:g} in size on the way")
    if number != 0.0 and abs(number) < 1.0 / MAGNITUDE_LIMIT:
        raise ExpressionError(f"a value below {1.0 / MAGNITUDE_LIMIT:g} in size on the way")
    return number


def _sympy() -> Any:
    import sympy

    return sympy


def _is_surd(expr: Any) -> bool:
    """Rational, or built from rationals by + - * / and rational powers (no pi, no trig)."""
    sympy = _sympy()
    if not expr.is_number or expr.has(sympy.pi) or expr.has(sympy.sin, sympy.cos, sympy.tan):
        return False
    return bool(expr.is_real) and expr.is_finite is not False


def _bits(expr: Any) -> int:
    sympy = _sympy()
    total = 0
    for atom in expr.atoms(sympy.Rational):
        total += int(atom.p).bit_length() + int(atom.q).bit_length()
    return total


class _Walker:
    """Evaluates the accepted nodes on two tracks: float (math) and exact (sympy) or None."""

    def __init__(self, parameters: Mapping[str, Value], exact: bool) -> None:
        self.parameters = parameters
        self.exact = exact

    def visit(self, node: ast.AST) -> tuple[float, Any]:
        if isinstance(node, ast.Constant):
            return self._constant(node.value)
        if isinstance(node, ast.Name):
            return self._name(node.id)
        if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.UAdd, ast.USub)):
            number, exact = self.visit(node.operand)
            if isinstance(node.op, ast.USub):
                return -number, (-exact if exact is not None else None)
            return number, exact
        if isinstance(node, ast.BinOp) and isinstance(
            node.op, (ast.Add, ast.Sub, ast.Mult, ast.Div, ast.Pow)
        ):
            return self._binary(node)
        if isinstance(node, ast.Call):
            return self._call(node)
        if isinstance(node, (ast.BinOp, ast.UnaryOp)):
            symbol = _OPERATORS.get(type(node.op), type(node.op).__name__)
            raise ExpressionError(f"the operator '{symbol}' is not accepted; accepted: {ACCEPTED}")
        raise ExpressionError(f"'{_kind(node)}' is not accepted; accepted: {ACCEPTED}")

    def _constant(self, value: object) -> tuple[float, Any]:
        if isinstance(value, bool) or not isinstance(value, (int, float)):
            raise ExpressionError(
                f"{_kind_of_constant(value)} is not accepted; accepted: {ACCEPTED}"
            )
        try:
            number = float(value)
        except OverflowError:
            raise ExpressionError(f"a number beyond {MAGNITUDE_LIMIT:g} in size") from None
        _checked(number)
        exact = None
        if self.exact:
            # The decimal as written: repr gives the shortest text that reads back as this float.
            exact = _sympy().Rational(str(value) if isinstance(value, int) else repr(value))
        return number, exact

    def _name(self, name: str) -> tuple[float, Any]:
        if name == "pi":
            return math.pi, (_sympy().pi if self.exact else None)
        if name in FUNCTIONS:
            raise ExpressionError(f"'{name}' is a function; write {name}(x)")
        found = self.parameters.get(name)
        if found is None:
            from verify.errors import did_you_mean

            hint = did_you_mean(name, list(self.parameters) + list(CONSTANTS))
            raise ExpressionError(f"'{name}' is not defined in [parameters].{hint}".rstrip("."))
        return found.number, (found.exact if self.exact else None)

    def _binary(self, node: ast.BinOp) -> tuple[float, Any]:
        a, ea = self.visit(node.left)
        b, eb = self.visit(node.right)
        both = ea is not None and eb is not None
        op = node.op
        if isinstance(op, ast.Add):
            return _checked(a + b), (ea + eb if both else None)
        if isinstance(op, ast.Sub):
            return _checked(a - b), (ea - eb if both else None)
        if isinstance(op, ast.Mult):
            return _checked(a * b), (ea * eb if both else None)
        if isinstance(op, ast.Div):
            if b == 0.0 or (eb is not None and eb == 0):
                raise ExpressionError("division by zero")
            return _checked(a / b), (ea / eb if both else None)
        if abs(b) > MAX_EXPONENT:
            raise ExpressionError(f"exponent {b:g} is beyond +-{MAX_EXPONENT}")
        if a < 0 and b != int(b):
            raise ExpressionError("a fractional power of a negative number")
        if a == 0.0 and b < 0:
            raise ExpressionError("division by zero (zero to a negative power)")
        try:
            number = _checked(a**b)
        except OverflowError:
            raise ExpressionError(
                f"a value beyond {MAGNITUDE_LIMIT:g} in size on the way"
            ) from None
        exact = None
        if both and eb.is_Rational and _bits(ea) * max(1, abs(int(eb.p))) <= EXACT_MAX_BITS:
            exact = ea**eb
        return number, exact

    def _call(self, node: ast.Call) -> tuple[float, Any]:
        if not isinstance(node.func, ast.Name) or node.func.id not in FUNCTIONS:
            name = node.func.id if isinstance(node.func, ast.Name) else _kind(node.func)
            raise ExpressionError(
                f"'{name}(...)' is not accepted; the functions are {', '.join(FUNCTIONS)}"
            )
        name = node.func.id
        if node.keywords or len(node.args) != 1 or isinstance(node.args[0], ast.Starred):
            raise ExpressionError(f"{name} takes one number, e.g. {name}(30)")
        x, ex = self.visit(node.args[0])
        if name == "sqrt":
            if x < 0:
                raise ExpressionError(f"sqrt of a negative number ({x:g})")
            return _checked(math.sqrt(x)), (_sympy().sqrt(ex) if ex is not None else None)
        # Degrees: the trade writes roof pitches and load angles in degrees.
        if name == "tan" and math.isclose(math.fmod(abs(x), 180.0), 90.0, abs_tol=1e-9):
            raise ExpressionError(f"tan({x:g}) is infinite (an odd multiple of 90 degrees)")
        number = {"sin": math.sin, "cos": math.cos, "tan": math.tan}[name](math.radians(x))
        exact = None
        if ex is not None:
            sympy = _sympy()
            exact = getattr(sympy, name)(ex * sympy.pi / 180)
        # sin(180) is 1.2e-16 in floats: below the magnitude floor it is the zero it stands for.
        return (_checked(number) if abs(number) >= 1.0 / MAGNITUDE_LIMIT else 0.0), exact


_OPERATORS = {
    ast.FloorDiv: "//",
    ast.Mod: "%",
    ast.MatMult: "@",
    ast.BitAnd: "&",
    ast.BitOr: "|",
    ast.BitXor: "^ (write ** for a power)",
    ast.LShift: "<<",
    ast.RShift: ">>",
    ast.Invert: "~",
    ast.Not: "not",
}


def _kind(node: ast.AST) -> str:
    return {
        ast.Attribute: "attribute access (a.b)",
        ast.Subscript: "indexing (a[b])",
        ast.Compare: "a comparison",
        ast.BoolOp: "and/or",
        ast.Lambda: "lambda",
        ast.Tuple: "a list of values (a comma)",
        ast.List: "a list",
        ast.Dict: "a table",
        ast.IfExp: "if/else",
    }.get(type(node), type(node).__name__)


def _kind_of_constant(value: object) -> str:
    if isinstance(value, str):
        return "text in quotes"
    if isinstance(value, complex):
        return "a complex number"
    return repr(value)
