"""Numbers written as an engineer writes them: significant figures, no '-0', T/C.

Shared by the comparison (finding texts) and every report, so it sits below both.
"""

from __future__ import annotations

import math


def fmt(value: float | None, digits: int = 4) -> str:
    """Significant-figure formatting that never prints '-0'."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if value == 0 or abs(value) < 1e-12:
        return "0"
    # Round away float noise first, so 75.37499999999 and 75.37500000001 print alike.
    value = float(f"{value:.10g}")
    magnitude = math.floor(math.log10(abs(value)))
    decimals = max(digits - 1 - magnitude, 0)
    text = f"{value:.{decimals}f}"
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def tc(value: float | None, *, zero_tol: float = 0.0, digits: int = 4) -> str:
    """Magnitude with T or C, as a hand calculation writes it."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "—"
    if abs(value) <= zero_tol or abs(value) < 1e-12:
        return "0"
    return f"{fmt(abs(value), digits)} {'T' if value > 0 else 'C'}"
