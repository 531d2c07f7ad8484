"""Number formatting shared by every report."""

from __future__ import annotations

import re
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from verify.model import Model

from verify.formatting import clean_zero, decimals_in, fmt, fmt_fixed, fmt_percent, fmt_ratio, tc

__all__ = [
    "clean_zero",
    "difference_text",
    "fmt",
    "fmt_fixed",
    "fmt_percent",
    "fmt_ratio",
    "plain_table",
    "roundoff_text",
    "tc",
]

GUARD_DECIMALS = 1  # one decimal beyond the claim's own (see difference_text)
ROUNDOFF = 1e-9  # routes agreeing closer than this fraction of the largest force agree to round-off


def difference_text(
    difference: float | None, claimed: float | None, written: str, scale: float
) -> str:
    """claimed − recomputed to the precision the claim was written in, plus one guard decimal
    ('12.4' -> 2 places): at the claim's own precision, 173.3 against 173.25 would read
    "difference 0.1" beside two values both shown as 173.3; the guard decimal shows it is 0.05,
    half a unit of the written decimal, which is what the rounding tolerance allows.

    The written decimals are used only when the claim was read without a unit factor (the written
    number is the claimed value), since 12.40 kip read into kN has no such precision. Round-off
    beside the row's largest value (`scale`) is shown as 0.
    """
    value = clean_zero(difference, scale)
    if value is None:
        return fmt(value)
    shown = written.split(" at ", 1)[0]
    # A table written with decimal commas ('28,1 T') is read as such; the written number must
    # equal the claim either way, so '1,234' read as 1.234 beside a claim of 1234 is not used.
    readings = [shown] + ([shown.replace(",", ".")] if "," in shown and "." not in shown else [])
    for text in readings:
        decimals = decimals_in(text)
        if decimals is not None and claimed is not None and _written_number(text) == abs(claimed):
            return fmt_fixed(value, decimals + GUARD_DECIMALS)
    return fmt(value)


# The first run of digits and points of an ASCII text (see _written_number).
DIGITS_AND_POINTS = re.compile(r"[0-9][0-9.]*", re.ASCII)


def _written_number(text: str) -> float | None:
    """The first run of digits and points read as a number (None: none, or not a number)."""
    if text.isascii():
        found = DIGITS_AND_POINTS.search(text)
        try:
            return float(found.group()) if found is not None else None
        except ValueError:
            return None
    return _number_by_character(text)


def _number_by_character(text: str) -> float | None:
    digits = ""
    for ch in text:
        if ch.isdigit() or (ch == "." and digits):
            digits += ch
        elif digits:
            break
    try:
        return float(digits) if digits else None
    except ValueError:
        return None


def roundoff_text(disagreement: float) -> str:
    """How closely independent routes agree, without printing float noise such as 2.9e-16."""
    if disagreement <= ROUNDOFF:
        return f"agree to round-off (within {fmt_ratio(ROUNDOFF)} of the largest force)"
    return f"agree to {fmt_ratio(disagreement, 2)} of the largest force"


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
    lines = [
        "  ".join(h.rjust(w) for h, w in zip(headers, widths, strict=True)),
        "  ".join("-" * w for w in widths),
    ]
    lines.extend("  ".join(c.rjust(w) for c, w in zip(row, widths, strict=True)) for row in rows)
    return "\n".join(lines)


def load_title(model: Model, name: str) -> str:
    """'Load case 'dead'' or 'Load combination 'ULS' = 1.35 × dead + 1.5 × traffic'."""
    for combo in model.combinations:
        if combo.name == name:
            terms = " + ".join(f"{fmt(f)} × {case}" for case, f in combo.factors.items())
            return f"Load combination '{name}' = {terms}"
    return f"Load case '{name}'"
