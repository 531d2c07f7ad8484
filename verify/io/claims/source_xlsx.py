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
from dataclasses import dataclass
from typing import Any

from verify.errors import did_you_mean
from verify.io.claims.grid import (
    Cell,
    Grid,
    Unusable,
    blank,
    column_letter,
    decimal_comma_written,
)
from verify.io.claims.problems import Problems, quoted
from verify.io.values import MAX_FORCE, MIN_FORCE, in_force_range

# Refusal limits for workbooks, checked on the zip's central directory before any parsing. A
# claims sheet of 100,000 members is a few MB uncompressed; real .xlsx parts compress 5-20x.
MAX_UNCOMPRESSED_BYTES = 200 * 1024 * 1024
MAX_COMPRESSION_RATIO = 100.0
RATIO_CHECK_MIN_BYTES = 1024 * 1024  # tiny parts may compress extremely well and are harmless
MAX_ZIP_MEMBERS = 10_000
EXCEL_SUFFIXES = (".xlsx", ".xlsm")
OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"  # legacy .xls and encrypted .xlsx both start so
# A claims table of 10^5 members in long form with a few cases stays far inside these.
MAX_COLUMNS = 256
MAX_ROWS = 500_000
_FORMULA_TAG = re.compile(rb"<(?:[A-Za-z0-9_]+:)?f[\s>/]")  # <f>, <f t="shared" .../>, <x:f>


def _check_zip(data: bytes, problems: Problems) -> bool:
    """Refuse archives that would expand beyond the limits, judged from the central directory."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            infos = archive.infolist()
    except (zipfile.BadZipFile, ValueError, OSError) as exc:
        problems.add(
            f"not a readable .xlsx workbook (the zip archive is damaged: {exc}); save it again "
            "or export CSV"
        )
        return False
    if len(infos) > MAX_ZIP_MEMBERS:
        problems.add(
            f"the workbook archive holds {len(infos)} parts (limit {MAX_ZIP_MEMBERS}); refused "
            "before parsing as a possible zip bomb"
        )
        return False
    total = sum(info.file_size for info in infos)
    if total > MAX_UNCOMPRESSED_BYTES:
        problems.add(
            f"the workbook would expand to {total / 1e6:,.0f} MB (limit "
            f"{MAX_UNCOMPRESSED_BYTES / 1e6:,.0f} MB); "
            "refused before parsing as a possible zip bomb; export the claims sheet to CSV"
        )
        return False
    for info in infos:
        ratio = info.file_size / max(info.compress_size, 1)
        if info.file_size > RATIO_CHECK_MIN_BYTES and ratio > MAX_COMPRESSION_RATIO:
            problems.add(
                f"the workbook part '{info.filename}' expands {ratio:,.0f} times (limit "
                f"{MAX_COMPRESSION_RATIO:,.0f}); refused before parsing as a possible zip bomb; "
                "export the claims sheet to CSV"
            )
            return False
    return True


def read_workbook(data: bytes, sheet: str | None, problems: Problems) -> list[Grid]:
    """The grid of the sheet asked for, or of every sheet that is not empty (the caller picks
    the one holding the claims by its content)."""
    if not _check_zip(data, problems):
        return []
    import openpyxl  # deferred: CSV-only runs need not load it

    with warnings.catch_warnings():
        # openpyxl warns about unsupported extensions (data validation, styles); the library is
        # silent.
        warnings.simplefilter("ignore")
        try:
            return _read_sheets(openpyxl.load_workbook, data, sheet, problems)
        except Exception as exc:  # noqa: BLE001 -- a damaged workbook raises many kinds (KeyError, XML errors); each becomes one message
            problems.add(
                f"cannot read the workbook ({type(exc).__name__}: {quoted(str(exc))}); save it "
                "again or export CSV"
            )
            return []


def _read_sheets(
    load: Callable[..., Any], data: bytes, sheet: str | None, problems: Problems
) -> list[Grid]:
    extents = _sheet_extents(data)
    # Pass 1 sees formulas as formulas; pass 2 sees only the values the spreadsheet cached. A
    # formula without a cached value is reported, never read as blank or zero.
    book = load(io.BytesIO(data), read_only=True, data_only=True)
    try:
        titles = _pick_sheets(book, sheet, problems)
        wanted = []
        for title in titles:
            extent = extents.get(title)
            if extent is not None and not _within_limits(title, extent, problems):
                return []
            wanted.append((title, extent.columns if extent is not None else MAX_COLUMNS))
    finally:
        book.close()
    formulas: dict[str, set[tuple[int, int]]] = {title: set() for title, _ in wanted}
    if wanted and _may_hold_formulas(data):
        book = load(io.BytesIO(data), read_only=True, data_only=False)
        try:
            for title, columns in wanted:
                ws = book[title]
                ws.reset_dimensions()
                for row in ws.iter_rows(min_row=1, min_col=1, max_col=max(columns, 1)):
                    for cell in row:
                        if getattr(cell, "data_type", None) == "f":
                            formulas[title].add((cell.row, cell.column))
        finally:
            book.close()
    grids = []
    book = load(io.BytesIO(data), read_only=True, data_only=True)
    try:
        for title, columns in wanted:
            ws = book[title]
            ws.reset_dimensions()
            found = formulas[title]
            rows: list[list[Cell]] = []
            # max_col bounds the padding openpyxl adds before a far cell (a stray cell in column
            # XFD would pad every row to 16,384 cells).
            for r, cells in enumerate(
                ws.iter_rows(min_row=1, min_col=1, max_col=max(columns, 1)), start=1
            ):
                rows.append(
                    [
                        _excel_cell(
                            getattr(cell, "value", None),
                            (r, c) in found,
                            getattr(cell, "number_format", None),
                        )
                        for c, cell in enumerate(cells, start=1)
                    ]
                )
            if any(not blank(c) for row in rows for c in row):
                numbers = range(1, len(rows) + 1)
                grids.append(Grid(rows, numbers, title, decimal_comma_written(rows)))
            elif sheet is not None or len(titles) == 1:
                problems.add(
                    f"sheet '{title}' is empty; expected a header row such as 'Member', 'dead "
                    "(kN)' and one row per member"
                )
    finally:
        book.close()
    if not grids and not problems:
        problems.add(
            "every sheet of the workbook is empty; expected a sheet with a header row such as "
            "'Member', 'dead (kN)' and one row per member"
        )
    return grids


@dataclass(frozen=True)
class _Extent:
    columns: int  # the last column holding something, 1-based
    rows: int  # the last row holding something
    far_cell: str  # the reference of a cell at the last column, for the message


def _sheet_extents(data: bytes) -> dict[str, _Extent]:
    """Per sheet title, how far its cells with content reach, read from the XML before openpyxl
    builds anything: a 35 KB workbook can place cells at XFD on 6,000 rows (870 MB once padded)."""
    import defusedxml.ElementTree as ElementTree

    extents: dict[str, _Extent] = {}
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        names = set(archive.namelist())
        if "xl/workbook.xml" not in names or "xl/_rels/workbook.xml.rels" not in names:
            return extents
        book = ElementTree.fromstring(archive.read("xl/workbook.xml"))
        rels = ElementTree.fromstring(archive.read("xl/_rels/workbook.xml.rels"))
        targets = {rel.get("Id"): rel.get("Target", "") for rel in rels}
        for node in book.iter():
            if not node.tag.endswith("}sheet"):
                continue
            rid = next((v for k, v in node.attrib.items() if k.endswith("}id")), None)
            target = targets.get(rid, "")
            part = target.lstrip("/") if target.startswith("/") else f"xl/{target}"
            if part not in names:
                continue
            last_col, last_row, far = 0, 0, ""
            for found in _CONTENT_CELL.finditer(archive.read(part)):
                letters, number = found.group(1).decode(), int(found.group(2))
                col = _column_number(letters)
                if col > last_col:
                    last_col, far = col, f"{letters}{number}"
                last_row = max(last_row, number)
            extents[node.get("name", "")] = _Extent(last_col, last_row, far)
    return extents


# A cell element that holds something (<c r="B7" t="s"><v>..), not an empty styled one (<c .../>).
_CONTENT_CELL = re.compile(rb'<(?:\w+:)?c r="([A-Z]{1,3})(\d{1,7})"[^>]*?(?<!/)>')


def _column_number(letters: str) -> int:
    number = 0
    for ch in letters:
        number = number * 26 + ord(ch) - 64
    return number


def _within_limits(title: str, extent: _Extent, problems: Problems) -> bool:
    if extent.columns > MAX_COLUMNS:
        problems.add(
            f"sheet '{title}' holds a cell at {extent.far_cell}, beyond column "
            f"{column_letter(MAX_COLUMNS - 1)} (limit {MAX_COLUMNS} columns); a claims table is "
            "narrower: delete the stray cells or copy the table to a new sheet"
        )
        return False
    if extent.rows > MAX_ROWS:
        problems.add(
            f"sheet '{title}' holds cells down to row {extent.rows:,} (limit {MAX_ROWS:,} rows); a "
            "claims table of 10^5 members fits well within it: delete the stray rows or copy the "
            "table to a new sheet"
        )
        return False
    return True


def _may_hold_formulas(data: bytes) -> bool:
    """False only when no worksheet part has a formula element, so the formula pass can be
    skipped."""
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        parts = [n for n in archive.namelist() if "worksheets/" in n and n.endswith(".xml")]
        if not parts:
            return True
        return any(_FORMULA_TAG.search(archive.read(n)) for n in parts)


def _pick_sheets(book: Any, sheet: str | None, problems: Problems) -> list[str]:
    names: list[str] = list(book.sheetnames)
    if sheet is None:
        return names
    if sheet in names:
        return [sheet]
    folded = [n for n in names if n.casefold() == sheet.casefold()]
    if len(folded) == 1:
        return folded
    listed = ", ".join(f"'{n}'" for n in names)
    problems.add(
        f"the workbook has no sheet '{quoted(sheet)}'; it has {listed}.{did_you_mean(sheet, names)}"
    )
    return []


def is_encrypted_workbook(data: bytes) -> bool:
    """A password-protected .xlsx is an OLE compound file holding an 'EncryptedPackage' stream
    (the stream name is stored in UTF-16 in the file's directory)."""
    return data[:8] == OLE_MAGIC and "EncryptedPackage".encode("utf-16-le") in data


_FIXED_DECIMALS = re.compile(r"0\.(0+)")


def format_decimals(number_format: str | None) -> int | None:
    """Decimals a fixed number format shows ('0.00', '#,##0.000', '0.0;(0.0)' -> 2, 3, 1)."""
    if not number_format or number_format == "General":
        return None
    shown = re.sub(
        r'"[^"]*"|\\.|\[[^\]]*\]', "", number_format.split(";")[0]
    )  # drop quoted text, escapes, colours
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
        if not in_force_range(float(value)):
            # openpyxl reads '1e400' as infinity, and 1e308 would overflow the comparison: refused
            # here, so no path can take it for a claim.
            return Unusable(
                f"holds a number out of range ({value:.6g}); expected 0 or a force between "
                f"{MIN_FORCE:g} and {MAX_FORCE:g} in size"
            )
        # A number shown with fixed decimals ('10.00') was written to them: keep that as its text
        # (the value is unchanged; the rounding allowance reads the decimals from the text).
        decimals = format_decimals(number_format)
        if (
            decimals is not None
            and math.isfinite(value)
            and round(float(value), decimals) == float(value)
        ):
            return f"{float(value):.{decimals}f}"
        return float(value)
    if isinstance(value, dt.datetime | dt.date | dt.time | dt.timedelta):
        return Unusable(f"holds a date or time ({value}); format the cell as a number")
    return str(value).strip()
