"""CSV source: a text file of delimited rows -> a Grid located by file row."""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections.abc import Sequence
from itertools import islice
from operator import methodcaller
from typing import cast

from verify.io.claims.grid import Cell, Grid
from verify.io.claims.problems import Problems

CSV_DELIMITERS = ("\t", ";", ",", "|")
# Rows of a claims table: a million members with ten cases in the long layout (one row per member
# and case) is ten million; more is a file made to exhaust memory (256 MB of blank-ish lines).
MAX_CSV_ROWS = 10_000_000


def _decode(data: bytes, problems: Problems) -> str | None:
    if data.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        try:
            return data.decode("utf-16")
        except UnicodeDecodeError as exc:
            problems.add(
                f"the file starts as UTF-16 text but byte {exc.start} is not; save it as UTF-8"
            )
            return None
    try:
        return data.decode("utf-8-sig")
    except UnicodeDecodeError:
        pass
    try:
        # Spreadsheets on Windows save "CSV" in the ANSI code page; cp1252 is the common one.
        return data.decode("cp1252")
    except UnicodeDecodeError as exc:
        problems.add(
            f"the file is neither UTF-8 nor Windows-1252 text (byte {exc.start}); save it as CSV "
            "UTF-8"
        )
        return None


def _sniff_delimiter(lines: Sequence[str]) -> str:
    """The delimiter that splits the sample into the most consistent rows of two or more fields."""
    sample = list(islice((line for line in lines if line.strip()), 50))
    best = (0.0, 0, ",")
    for order, delimiter in enumerate(CSV_DELIMITERS):
        try:
            counts = [len(row) for row in csv.reader(sample, delimiter=delimiter)]
        except csv.Error:
            continue
        if not counts:
            continue
        mode = max(set(counts), key=lambda n: (counts.count(n), n))
        if mode < 2:
            continue
        score = (counts.count(mode) / len(counts), mode, CSV_DELIMITERS[order])
        if score[:2] > best[:2]:
            best = score
    return best[2]


def read_csv(data: bytes, problems: Problems) -> Grid | None:
    text = _decode(data, problems)
    if text is None:
        return None
    if "\x00" in text:
        problems.add(
            "the file contains NUL bytes, so it is not CSV text; export the table as CSV or .xlsx"
        )
        return None
    if not text.strip():
        problems.add(
            "the file is empty; expected a header row such as 'Member,dead (kN)' and one row per "
            "member"
        )
        return None
    breaks = text.count("\n") or text.count("\r")  # CR-only files are read too
    count = breaks + (not text.endswith(("\n", "\r")))
    if count > MAX_CSV_ROWS:
        problems.add(
            f"the file has {count:,} lines (limit {MAX_CSV_ROWS:,}); "
            "split the table, or check that this is the claims table"
        )
        return None
    lines = text.splitlines()
    offset = 0
    forced = re.fullmatch(r"\s*sep=(.)\s*", lines[0]) if lines else None
    if forced:
        # Excel's "sep=;" directive line: it fixes the delimiter and is not a table row.
        delimiter = forced.group(1)
        lines = lines[1:]
        offset = 1
    else:
        delimiter = _sniff_delimiter(lines)
    del text
    plain = _split_plainly(lines, delimiter)
    if plain is not None:
        numbers = list(range(1 + offset, len(plain) + 1 + offset))
        return Grid(plain, numbers, None, decimal_comma=delimiter == ";", delimiter=delimiter)
    rows: list[list[Cell]] = []
    numbers = []
    reader = csv.reader(io.StringIO("\n".join(lines)), delimiter=delimiter)
    try:
        for index, row in enumerate(reader, start=1):
            rows.append([c.strip() or None for c in row])
            numbers.append(index + offset)
    except csv.Error as exc:
        problems.add(
            f"the CSV cannot be split into fields ({exc})", f"row {len(rows) + 1 + offset}"
        )
        return None
    return Grid(rows, numbers, None, decimal_comma=delimiter == ";", delimiter=delimiter)


def _split_plainly(lines: list[str], delimiter: str) -> list[list[Cell]] | None:
    """The rows csv.reader and the strip-or-None of each cell would give, split directly, for the
    common file where splitting is all there is to it; None otherwise (the reader above then
    reads it). Plain means: ASCII with no quote character (so no field is quoted), no line over
    the csv module's field limit (which it would refuse), and no cell that stripping would change
    or that is empty (no space or tab beside a delimiter or a line's ends, no delimiter beside
    another or a line's ends, no unit separator, the one other ASCII space after splitlines).
    A blank line is an empty row, as csv.reader gives it (a last one is no row). Several times
    quicker than the csv module and a strip per cell."""
    joined = "\n".join(lines)
    if not joined.isascii() or '"' in joined or "\x1f" in joined:
        return None
    if lines and max(map(len, lines)) > csv.field_size_limit():
        return None
    edges = ["\n"]
    for space in (" ", "\t"):
        if space != delimiter:
            edges.append(space)
            if space + delimiter in joined or delimiter + space in joined:
                return None
            if "\n" + space in joined or space + "\n" in joined:
                return None
    if delimiter * 2 in joined or "\n" + delimiter in joined or delimiter + "\n" in joined:
        return None
    if joined.startswith((delimiter, *edges[1:])) or joined.endswith((delimiter, *edges[1:])):
        return None
    rows = cast(list[list[Cell]], list(map(methodcaller("split", delimiter), lines)))
    if "" in lines:
        for k, line in enumerate(lines):
            if not line:
                rows[k] = []
        if not lines[-1]:
            rows.pop()  # the joined text ends in a line break there, which ends the row above
    return rows
