"""Number formatting shared by every report."""

from __future__ import annotations

from verify.formatting import fmt, tc

__all__ = ["fmt", "plain_table", "tc"]


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
