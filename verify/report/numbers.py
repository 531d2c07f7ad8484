"""Number formatting shared by every report."""

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


def plain_table(headers: list[str], rows: list[list[str]]) -> str:
    """A right-aligned text table in the layout of tabulate's "simple" format.

    Cells are already strings (ids are never number-parsed). Written by hand because tabulate
    inspects every cell's type, which dominated the run time of 10^4-member tables.
    """
    widths = [len(h) for h in headers]
    for row in rows:
        for k, cell in enumerate(row):
            if len(cell) > widths[k]:
                widths[k] = len(cell)
    lines = ["  ".join(h.rjust(w) for h, w in zip(headers, widths, strict=True)),
             "  ".join("-" * w for w in widths)]
    lines.extend("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in rows)
    return "\n".join(lines)
