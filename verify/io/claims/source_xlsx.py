"""Workbook source: one .xlsx sheet -> a Grid located by sheet cell.

Workbooks are read without evaluating anything: openpyxl in read-only mode with cached values
only (defusedxml hardens its XML parsing), after the zip's central directory has been checked
against the size limits below.
"""

from __future__ import annotations

import datetime as dt
import io
import math
import re
import warnings
import zipfile
from collections.abc import Callable
from typing import Any

from verify.errors import did_you_mean
from verify.io.claims.grid import Cell, Grid, Unusable, blank
from verify.io.claims.problems import Problems

# Refusal limits for workbooks, checked on the zip's central directory before any parsing. A
# claims sheet of 100,000 members is a few MB uncompressed; real .xlsx parts compress 5-20x.
MAX_UNCOMPRESSED_BYTES = 200 * 1024 * 1024
MAX_COMPRESSION_RATIO = 100.0
RATIO_CHECK_MIN_BYTES = 1024 * 1024  # tiny parts may compress extremely well and are harmless
MAX_ZIP_MEMBERS = 10_000
EXCEL_SUFFIXES = (".xlsx", ".xlsm")
_FORMULA_TAG = re.compile(rb"<(?:[A-Za-z0-9_]+:)?f[\s>/]")  # <f>, <f t="shared" .../>, <x:f>


def _check_zip(data: bytes, problems: Problems) -> bool:
    """Refuse archives that would expand beyond the limits, judged from the central directory."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            infos = archive.infolist()
    except (zipfile.BadZipFile, ValueError, OSError) as exc:
        problems.add(
            f"not a readable .xlsx workbook (the zip archive is damaged: {exc}); save it again or export CSV"
        )
        return False
    if len(infos) > MAX_ZIP_MEMBERS:
        problems.add(
            f"the workbook archive holds {len(infos)} parts (limit {MAX_ZIP_MEMBERS}); refused before parsing as a possible zip bomb"
        )
        return False
    total = sum(info.file_size for info in infos)
    if total > MAX_UNCOMPRESSED_BYTES:
        problems.add(
            f"the workbook would expand to {total / 1e6:,.0f} MB (limit {MAX_UNCOMPRESSED_BYTES / 1e6:,.0f} MB); "
            "refused before parsing as a possible zip bomb; export the claims sheet to CSV"
        )
        return False
    for info in infos:
        ratio = info.file_size / max(info.compress_size, 1)
        if info.file_size > RATIO_CHECK_MIN_BYTES and ratio > MAX_COMPRESSION_RATIO:
            problems.add(
                f"the workbook part '{info.filename}' expands {ratio:,.0f} times (limit {MAX_COMPRESSION_RATIO:,.0f}); "
                "refused before parsing as a possible zip bomb; export the claims sheet to CSV"
            )
            return False
    return True


def read_workbook(data: bytes, sheet: str | None, problems: Problems) -> Grid | None:
    if not _check_zip(data, problems):
        return None
    import openpyxl  # deferred: CSV-only runs need not load it

    with warnings.catch_warnings():
        # openpyxl warns about unsupported extensions (data validation, styles); the library is silent.
        warnings.simplefilter("ignore")
        try:
            return _read_sheet(openpyxl.load_workbook, data, sheet, problems)
        except Exception as exc:  # noqa: BLE001 -- a damaged workbook raises many kinds (KeyError, XML errors); each becomes one message
            problems.add(
                f"cannot read the workbook ({type(exc).__name__}: {exc}); save it again or export CSV"
            )
            return None


def _read_sheet(
    load: Callable[..., Any], data: bytes, sheet: str | None, problems: Problems
) -> Grid | None:
    # Pass 1 sees formulas as formulas; pass 2 sees only the values the spreadsheet cached. A
    # formula without a cached value is reported, never read as blank or zero.
    formulas: set[tuple[int, int]] = set()
    if _may_hold_formulas(data):
        book = load(io.BytesIO(data), read_only=True, data_only=False)
        try:
            title = _pick_sheet(book, sheet, problems)
            if title is None:
                return None
            ws = book[title]
            ws.reset_dimensions()
            for row in ws.iter_rows(min_row=1, min_col=1):
                for cell in row:
                    if getattr(cell, "data_type", None) == "f":
                        formulas.add((cell.row, cell.column))
        finally:
            book.close()
    book = load(io.BytesIO(data), read_only=True, data_only=True)
    try:
        picked = _pick_sheet(book, sheet, problems)
        if picked is None:
            return None
        title = picked
        ws = book[title]
        ws.reset_dimensions()
        rows: list[list[Cell]] = []
        for r, cells in enumerate(ws.iter_rows(min_row=1, min_col=1), start=1):
            rows.append([_excel_cell(getattr(cell, "value", None), (r, c) in formulas, getattr(cell, "number_format", None))
                         for c, cell in enumerate(cells, start=1)])
    finally:
        book.close()
    if all(all(blank(c) for c in row) for row in rows):
        problems.add(
            f"sheet '{title}' is empty; expected a header row such as 'Member', 'dead (kN)' and one row per member"
        )
        return None
    return Grid(rows, list(range(1, len(rows) + 1)), title, decimal_comma=False)


def _may_hold_formulas(data: bytes) -> bool:
    """False only when no worksheet part has a formula element, so the formula pass can be skipped."""
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        parts = [n for n in archive.namelist() if "worksheets/" in n and n.endswith(".xml")]
        if not parts:
            return True
        return any(_FORMULA_TAG.search(archive.read(n)) for n in parts)


def _pick_sheet(book: Any, sheet: str | None, problems: Problems) -> str | None:
    names: list[str] = list(book.sheetnames)
    listed = ", ".join(f"'{n}'" for n in names)
    if sheet is not None:
        if sheet in names:
            return sheet
        folded = [n for n in names if n.casefold() == sheet.casefold()]
        if len(folded) == 1:
            return folded[0]
        problems.add(
            f"the workbook has no sheet '{sheet}'; it has {listed}.{did_you_mean(sheet, names)}"
        )
        return None
    if len(names) == 1:
        return names[0]
    problems.add(
        f"the workbook has {len(names)} sheets ({listed}); name the one holding the claimed forces with --sheet NAME"
    )
    return None


_FIXED_DECIMALS = re.compile(r"0\.(0+)")


def format_decimals(number_format: str | None) -> int | None:
    """Decimals a fixed number format shows ('0.00', '#,##0.000', '0.0;(0.0)' -> 2, 3, 1)."""
    if not number_format or number_format == "General":
        return None
    shown = re.sub(r'"[^"]*"|\\.|\[[^\]]*\]', "", number_format.split(";")[0])  # drop quoted text, escapes, colours
    found = _FIXED_DECIMALS.search(shown)
    return len(found.group(1)) if found else (0 if re.fullmatch(r"[#,0]+", shown) else None)


def _excel_cell(value: object, is_formula: bool, number_format: str | None = None) -> Cell:
    if value is None or (isinstance(value, str) and not value.strip()):
        if is_formula:
            return Unusable(
                "holds a formula with no cached value; recalculate and re-save the workbook "
                "in the spreadsheet program (formulas are never evaluated here)"
            )
        return None
    if isinstance(value, bool):
        return Unusable(f"holds the logical value {str(value).upper()}")
    if isinstance(value, int | float):
        # A number shown with fixed decimals ('10.00') was written to them: keep that as its text
        # (the value is unchanged; the rounding allowance reads the decimals from the text).
        decimals = format_decimals(number_format)
        if decimals is not None and math.isfinite(value) and round(float(value), decimals) == float(value):
            return f"{float(value):.{decimals}f}"
        return float(value)
    if isinstance(value, dt.datetime | dt.date | dt.time | dt.timedelta):
        return Unusable(f"holds a date or time ({value}); format the cell as a number")
    return str(value).strip()

