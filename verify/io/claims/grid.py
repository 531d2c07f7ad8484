"""The grid of cells every source (CSV, workbook sheet, PDF pages) is read into.

Each row knows where it came from, so every message and finding can point at the cell: a CSV
row, a sheet cell (``sheet 'Forces' cell C7``) or a PDF page row (``page 12 row 5``).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass
from operator import itemgetter
from typing import cast

import numpy as np


@dataclass(frozen=True)
class Unusable:
    """A cell whose content cannot be read as text or number (uncached formula, date, boolean)."""

    reason: str


Cell = str | float | Unusable | None

# A text cell that reads like a force ('5.00', '-7,07', '7.07 C', '(12.4)', '12 400 kN').
FORCE_LIKE = re.compile(r"^[(+\-\u2212]?\d[\d,. ']*\)?(?:\s*[A-Za-z]{1,3})?(?:\s*[TC])?$")
# A mark followed by other than three digits cannot group thousands: it is a decimal mark.
_COMMA_DECIMAL = re.compile(r"\d,(?:\d{1,2}|\d{4,})(?!\d)")
_POINT_DECIMAL = re.compile(r"\d\.(?:\d{1,2}|\d{4,})(?!\d)")
_COMMA_GROUPS = re.compile(r"\d,\d{3}(?!\d)")  # '12,400': a thousands group, or three decimals


def decimal_comma_written(rows: Sequence[list[Cell]]) -> bool:
    """Whether the forces written as text use ',' as the decimal mark, for a source with no
    delimiter to tell (a ';'-separated CSV does): a PDF, or a workbook whose forces were typed
    or imported as text ('28,1' from a ';' file opened with a '.' locale). Some text cell has a
    comma that cannot group thousands ('28,1', '6,25', '1.234,5'), none a point that cannot
    ('28.1', '12,400.5') and none a comma that could ('12,400', '0,125'). Cells are looked at
    before the table's columns are known, so a label such as '1,2' (a member named by its
    joints) counts too: that is why a comma that could group thousands anywhere keeps the point,
    where a wrong guess would read '28,125' N as 28.125 kN. The point kept, each comma cell
    that cannot group thousands is refused with a message of its own: never read by guess."""
    forces = [c for cells in rows for c in cells if isinstance(c, str) and FORCE_LIKE.match(c)]
    return (
        any(_COMMA_DECIMAL.search(c) for c in forces)
        and not any(_POINT_DECIMAL.search(c) for c in forces)
        and not any(_COMMA_GROUPS.search(c) for c in forces)
    )


def column_letter(index: int) -> str:
    """Spreadsheet column letters for a 0-based index (0 -> A, 26 -> AA)."""
    letters = ""
    n = index + 1
    while n:
        n, rest = divmod(n - 1, 26)
        letters = chr(65 + rest) + letters
    return letters


@dataclass
class Grid:
    rows: Sequence[list[Cell]]  # a list, or for a plain CSV file rows split when asked
    # The file / sheet / page row number of each entry, 1-based (a range for a plain CSV file).
    row_numbers: Sequence[int]
    sheet: str | None  # None for CSV and PDF
    decimal_comma: bool
    delimiter: str | None = None  # CSV only
    pages: list[int] | None = None  # PDF only: the page of each row

    def cell(self, r: int, c: int) -> Cell:
        row = self.rows[r]
        return row[c] if c < len(row) else None

    def row_ref(self, r: int) -> str:
        if self.pages is not None:
            return f"page {self.pages[r]} row {self.row_numbers[r]}"
        return f"row {self.row_numbers[r]}"

    def where(self, r: int, c: int | None = None, column: str | None = None) -> str:
        number = self.row_numbers[r]
        if self.sheet is None:
            # Called once per claim (10^5-row tables): the common CSV case is built inline.
            base = f"row {number}" if self.pages is None else f"page {self.pages[r]} row {number}"
            if column is not None:
                return f"{base}, column '{column}'"
            return base if c is None else f"{base}, column {c + 1}"
        if c is None:
            return f"sheet '{self.sheet}' row {number}"
        text = f"sheet '{self.sheet}' cell {column_letter(c)}{number}"
        return text + (f", column '{column}'" if column is not None else "")

    def columns(self, start: int, stop: int, indexes: list[int]) -> list[list[Cell]]:
        """The cells of each column at `indexes` in rows start..stop (None past a row's end)."""
        taken = getattr(self.rows, "columns", None)
        found = taken(start, stop, indexes) if taken is not None else None
        if found is not None:
            return cast("list[list[Cell]]", found)
        rows = list(self.rows[start:stop])
        need = max(indexes) + 1
        for k, row in enumerate(rows):
            if len(row) < need:  # a blank or short row, padded in the copy
                rows[k] = list(row) + [None] * (need - len(row))
        return [list(map(itemgetter(i), rows)) for i in indexes]

    def row_lengths(self, start: int) -> list[int]:
        """The number of cells of each row from `start` on."""
        lengths = getattr(self.rows, "lengths", None)
        if lengths is not None:
            return cast("list[int]", lengths(start).tolist())
        return [len(self.rows[r]) for r in range(start, len(self.rows))]

    def rows_longer_than(self, start: int, length: int) -> list[int]:
        """The rows from `start` on with more than `length` cells (by numpy when the rows count
        their cells at once: a loop over 10^6 row lengths took 0.06 s for the few rows found)."""
        lengths = getattr(self.rows, "lengths", None)
        if lengths is not None:
            return cast("list[int]", (np.flatnonzero(lengths(start) > length) + start).tolist())
        return [r for r in range(start, len(self.rows)) if len(self.rows[r]) > length]

    def where_parts(self, c: int, column: str | None) -> tuple[str, str] | None:
        """(before, after) with where(r, c, column) == before + str(row number of r) + after for
        every row r, so a column's places can be made from row numbers alone; None for PDF
        pages, whose places also name the page."""
        if self.pages is not None:
            return None
        if self.sheet is None:
            after = f", column '{column}'" if column is not None else f", column {c + 1}"
            return "row ", after
        after = f", column '{column}'" if column is not None else ""
        return f"sheet '{self.sheet}' cell {column_letter(c)}", after


# A lone dash in a force table means "nothing here" (often for a zero-force member); it is read
# as no claim, never as a value, so a "not computed" dash cannot become a false error.
DASHES = frozenset({"-", "--", "–", "—", "−"})


def blank(cell: Cell) -> bool:
    return cell is None or (isinstance(cell, str) and (not cell.strip() or cell.strip() in DASHES))


def cell_text(cell: Cell) -> str:
    """A label, case name or header from a cell: numbers written as a person would type them."""
    if isinstance(cell, float):
        return str(int(cell)) if cell.is_integer() else repr(cell)
    if cell is None or isinstance(cell, Unusable):
        return ""
    return cell.strip()
