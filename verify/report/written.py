"""Where a finding's claims were written, for findings whose sentence does not already say it
(a swapped pair, a combination column at odds with its own cases): every finding points at the
cells a checker must look at."""

from __future__ import annotations

from verify.compare.findings import Finding

MAX_LOCATIONS = 6  # beyond this the count is given; --json lists them all


def written_at(finding: Finding) -> str | None:
    """'row 19, column 'ULS-1 (kN)'; row 20, ...', or None when the detail already says where
    (or the finding concerns no written claim)."""
    places = finding.locations
    if not places or any(place in finding.detail for place in places):
        return None
    shown = "; ".join(places[:MAX_LOCATIONS])
    more = len(places) - MAX_LOCATIONS
    return shown + (f"; and {more} more (all in --json 'locations')" if more > 0 else "")


def table_place(sheet: str | None) -> str:
    """Where in the claims file the table was read, for a heading line: " (sheet 'Forces')" for
    a workbook, " (pages 12-14)" for a PDF (ClaimsTable.sheet holds the pages there)."""
    if not sheet:
        return ""
    if sheet.startswith("page"):
        return f" ({sheet})"
    return f" (sheet '{sheet}')"
