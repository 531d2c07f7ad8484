"""Strict number parsing for case files: a decimal point, finite, nothing else."""

from __future__ import annotations

import math
import re

NUMBER_PATTERN = r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?"  # a decimal point, nothing else
_NUMBER = re.compile(f"^{NUMBER_PATTERN}$")


def parse_number(value: object) -> float:
    """A finite float from a TOML value or CSV cell; ValueError with the rule it broke."""
    if isinstance(value, bool):
        raise ValueError(f"{value!r} is a boolean, not a number")
    if isinstance(value, int):
        return float(value)
    if isinstance(value, float):
        if not math.isfinite(value):
            raise ValueError(f"{value!r} is not a finite number (NaN, inf or out of range)")
        return value
    if isinstance(value, str):
        text = value.strip()
        if _NUMBER.match(text):
            result = float(text)
            if not math.isfinite(result):
                raise ValueError(f"'{text}' is out of range (not a finite number)")
            return result
        if re.match(r"^[+-]?\d+,\d+$", text):
            raise ValueError(f"'{text}' uses a decimal comma; write a decimal point ('{text.replace(',', '.')}')")
        raise ValueError(f"'{text}' is not a number")
    raise ValueError(f"{value!r} is not a number")
