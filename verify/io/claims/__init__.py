"""Read a claimed member-force table (CSV, .xlsx or text-based PDF) as the reviewer received it.

The reader is a pipeline of steps, each its own module:

- *sources* turn a file into grids of cells that know where they came from
  (:mod:`.source_csv`, :mod:`.source_xlsx`, :mod:`.source_pdf`);
- :mod:`.layout` decides which rows form the header and what each column holds (labels, load
  cases, units, T/C, notes), settling the column -> load-case mapping once;
- :mod:`.rows` turns cells into claimed values, keeping each cell as written;
- :mod:`.labels` matches labels to the model's members and reactions;
- :mod:`.resolution` judges how finely each column was written.

Values are returned as written (sign as written unless a T/C letter settled it; unit as found);
converting to the model's sign convention and force unit is the comparison stage's job. Anything
malformed is collected and raised as one :class:`~verify.errors.InputError`.
"""

from __future__ import annotations

import hashlib
from pathlib import Path

from verify.errors import InputError, Problem
from verify.io.claims.grid import Grid
from verify.io.claims.labels import LabelMatcher, member_ids_for
from verify.io.claims.layout import Options, decide_layout
from verify.io.claims.problems import MAX_PROBLEMS, Problems, quoted
from verify.io.claims.rows import assemble_claims, read_rows
from verify.io.claims.sheets import choose_sheet
from verify.io.claims.source_csv import read_csv
from verify.io.claims.source_pdf import read_pdf
from verify.io.claims.source_xlsx import (
    EXCEL_SUFFIXES,
    MAX_UNCOMPRESSED_BYTES,
    OLE_MAGIC,
    format_decimals,
    is_encrypted_workbook,
    read_workbook,
)
from verify.io.claims.table import ClaimedValue, ClaimsTable, MemberIndex, UnmatchedLabel
from verify.model import Model

__all__ = [
    "MAX_PROBLEMS",
    "MAX_UNCOMPRESSED_BYTES",
    "ClaimedValue",
    "ClaimsTable",
    "UnmatchedLabel",
    "member_ids_for",
    "read_claims",
]

FAST_ROWS = True  # read plain rows of wide tables directly (tests switch it off to compare)
_format_decimals = format_decimals  # the name the tests of number formats use


def read_claims(
    path: str | Path,
    model: Model,
    *,
    sheet: str | None = None,
    member_column: str | None = None,
    case_column: str | None = None,
    force_column: str | None = None,
    case: str | None = None,
    pages: str | None = None,
) -> ClaimsTable:
    """Read the claimed table at `path` against `model`. Raises InputError listing every problem.

    `sheet` picks a workbook sheet (needed when there are several); `member_column`,
    `case_column` and `force_column` name columns whose headers are not recognised; `case` names
    the load case or combination of a table with a single force column (or selects one column
    or case from a wider table). `pages` ('12-14') limits the pages of a PDF searched.
    """
    path = Path(path)
    name = str(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise InputError([Problem(name, "file not found.")]) from None
    except OSError as exc:
        raise InputError([Problem(name, f"cannot read the file ({exc.strerror}).")]) from None
    problems = Problems(name)
    suffix = path.suffix.lower()
    grids: list[Grid] = []
    if is_encrypted_workbook(data):
        problems.add(
            "the workbook is encrypted (password-protected), so its cells cannot be read; remove "
            "the password in the spreadsheet program and save a copy, or export the sheet to CSV"
        )
    elif data[:8] == OLE_MAGIC or suffix == ".xls":
        problems.add(
            "this is a legacy binary Excel (.xls) file; save it as .xlsx or export the sheet to CSV"
        )
    elif suffix == ".ods":
        problems.add("OpenDocument spreadsheets are not read; save the sheet as .xlsx or CSV")
    elif data[:5] == b"%PDF-" or suffix == ".pdf":
        grids = read_pdf(data, pages, problems)
    elif data[:4] == b"PK\x03\x04" or suffix in EXCEL_SUFFIXES:
        grids = read_workbook(data, sheet, problems)
    else:
        if sheet is not None:
            problems.add(f"sheet '{quoted(sheet)}' was asked for, but a CSV file has no sheets")
        grids = [g for g in (read_csv(data, problems),) if g is not None]
    if pages is not None and not (data[:5] == b"%PDF-" or suffix == ".pdf"):
        problems.add(f"--pages '{quoted(pages)}' was given, but only a PDF has pages")
    problems.raise_if_any()
    matcher = LabelMatcher(model)
    grid = choose_sheet(grids, matcher, problems)
    problems.raise_if_any()
    assert grid is not None
    options = Options(member_column, case_column, force_column, case)
    layout = decide_layout(grid, model, matcher, options, problems)
    problems.raise_if_any()
    assert layout is not None
    member_ids = MemberIndex(matcher.member_ids, model.member_index)
    read = read_rows(grid, layout, matcher, problems, fast=FAST_ROWS, member_ids=member_ids)
    problems.raise_if_any()
    arrays, values = assemble_claims(read, member_ids, model.units.force)
    return ClaimsTable(
        source=name,
        sheet=grid.sheet if grid.pages is None else _pages_read(grid.pages),
        sha256=hashlib.sha256(data).hexdigest(),
        values=values,
        unmatched=tuple(read.unmatched),
        unknown_values=read.unknown_values,
        columns=tuple(read.columns),
        header_unit=read.header_unit,
        sign_conflicts=tuple(read.sign_conflicts),
        resolutions=arrays.resolutions,
        arrays=arrays,
        count=len(arrays),
    )


def _pages_read(pages: list[int]) -> str:
    first, last = min(pages), max(pages)
    return f"page {first}" if first == last else f"pages {first}-{last}"
