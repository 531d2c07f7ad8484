"""Strict number parsing for case files: a decimal point, finite, nothing else."""

from __future__ import annotations

import math
import re

from verify.errors import shown

NUMBER_PATTERN = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"  # a decimal point, nothing else
_NUMBER = re.compile(f"^{NUMBER_PATTERN}$")
_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")
# 17 significant digits carry all a float holds; 64 characters leave room for zeros and an
# exponent. Longer text is never a number a person wrote, and is not echoed whole.
NUMBER_MAX_CHARS = 64


def parse_number(value: object) -> float:
    """A finite float from a TOML value or CSV cell; ValueError with the rule it broke."""
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is a boolean, not a number")
    if isinstance(value, int):
        try:
            return float(value)
        except OverflowError:  # TOML integers are unbounded in tomllib
            raise ValueError("an integer beyond the float range (not a finite number)") from None
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ValueError(f"{value!r} is not a finite number (NaN, inf or out of range)")
        return value
    if isinstance(value, str):
        text = value.strip()
        if len(text) > NUMBER_MAX_CHARS:
            raise ValueError(
                f"'{shown(text, limit=20)}' is not a number ({len(text)} characters; at most "
                f"{NUMBER_MAX_CHARS})"
            )
        if _NUMBER.match(text):
            result = float(text)
            if not math.isfinite(result):
                raise ValueError(f"'{text}' is out of range (not a finite number)")
            return result
        if _DECIMAL_COMMA.match(text):
            raise ValueError(
                f"'{text}' uses a decimal comma; write a decimal point ('{text.replace(',', '.')}')"
            )
        raise ValueError(f"'{shown(text)}' is not a number")
    raise ValueError(f"{shown(value)} is not a number")
