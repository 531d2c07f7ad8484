"""CSV of the member table, safe to open in a spreadsheet.

Text cells that a spreadsheet would read as a formula (starting with = + - @, tab or CR) get a
leading apostrophe; numbers stay numbers (OWASP "CSV injection" guidance, common practice).
Control characters are written as visible escapes first: a label "X\r=cmd|..." would otherwise
put "=cmd|..." at the start of a line that some spreadsheet imports read as a new cell.
"""

from __future__ import annotations

import csv
import io
import math

from verify.compare.diagnose import Review
from verify.errors import escape_controls
from verify.formatting import NOISE_FIGURES, clean_zero, fmt
from verify.report.cautions import CAUTION

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def neutralise(text: str) -> str:
    text = escape_controls(text)
    return "'" + text if text.startswith(FORMULA_START) else text


def data_number(value: float | None, scale: float) -> str:
    """A full-precision number for a spreadsheet: ten significant figures (float noise such as
    28.125000000000004 is not information), plain decimals, round-off beside the row's largest
    value (`scale`) written 0, never '-0' or '3.0e-14'."""
    cleaned = clean_zero(value, scale)
    if cleaned is None or not math.isfinite(cleaned):
        return ""
    return fmt(cleaned, NOISE_FIGURES)


def render_csv(review: Review) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    unit = review.analysis.model.units.force.symbol
    length = review.analysis.model.units.length.symbol
    # Displacements are lengths: they get columns of their own, never a force heading.
    writer.writerow(
        [
            "id",
            "kind",
            "case",
            f"claimed ({unit})",
            f"joints ({unit})",
            f"sections ({unit})",
            f"global ({unit})",
            f"elastic ({unit})",
            f"difference ({unit})",
            f"claimed displacement ({length})",
            f"recomputed displacement ({length})",
            f"displacement difference ({length})",
            "status",
        ]
    )
    for row in review.rows:
        cells: list[object] = [neutralise(row.id), row.kind, neutralise(row.case)]
        scale = max(
            (abs(v) for v in (row.claimed, row.joints, row.global_, row.elastic) if v is not None),
            default=0.0,
        )
        if row.kind == "displacement":
            values: tuple[float | None, ...] = (None,) * 6 + (
                row.claimed,
                row.elastic,
                row.difference,
            )
        else:
            values = (
                row.claimed,
                row.joints,
                row.sections,
                row.global_,
                row.elastic,
                row.difference,
            ) + (None,) * 3
        cells.extend(data_number(value, scale) for value in values)
        cells.append(row.status)
        writer.writerow(cells)
    # Below the table (a spreadsheet shows them; a reader stopping at the first blank row keeps
    # the table clean): what the elastic column rests on, and the caution every output carries.
    writer.writerow([])
    if getattr(review.analysis.elastic, "equal_EA_assumed", False):
        writer.writerow(
            [
                "note",
                "EQUAL EA ASSUMED for every member (--assume-equal-ea "
                f"{fmt(review.analysis.assumed_EA, 6)}, in {unit}): "
                "the elastic column depends on that assumption",
            ]
        )
    writer.writerow(["caution", CAUTION])
    return out.getvalue()
