"""CSV source: a text file of delimited rows -> a Grid located by file row."""

from __future__ import annotations

import codecs
import csv
import io
import re
from collections.abc import Iterable, Iterator, Sequence
from dataclasses import dataclass
from itertools import islice
from operator import methodcaller
from typing import cast, overload

import numpy as np

from verify.io.cells import joined_spans
from verify.io.claims.grid import Cell, Grid, decimal_comma_written
from verify.io.claims.problems import Problems

CSV_DELIMITERS = ("\t", ";", ",", "|")
# Rows of a claims table: a million members with ten cases in the long layout (one row per member
# and case) is ten million; more is a file made to exhaust memory (256 MB of blank-ish lines).
MAX_CSV_ROWS = 10_000_000
# The line breaks other than "\n" that str.splitlines splits ASCII text at: text holding none of
# them has the lines of text.split("\n"), so its rows and cells can be found from its bytes.
_OTHER_BREAKS = "\r\x0b\x0c\x1c\x1d\x1e"
PLAIN_BYTES = True  # split plain ASCII text from its bytes (tests switch it off to compare)


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


def _sniff_delimiter(lines: Iterable[str]) -> str:
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
    if text.isspace() or not text:  # (as `not text.strip()`, without a copy of the text)
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
    # ASCII text broken only by "\n" (the common export) is split from its bytes: no list of
    # lines, and each cell's place found once for every later step (PlainText).
    if PLAIN_BYTES and "\r\n" in text:
        # Lines ended by CR LF (a spreadsheet's CSV on Windows) are the lines of the text with
        # LF alone, unless a CR is left (a lone CR breaks a line too: 'a\r\r\nb' is three
        # lines, 'a\r\nb' two); then the text is split as before.
        unix = text.replace("\r\n", "\n")
        if "\r" not in unix:
            text = unix
        del unix
    simple = PLAIN_BYTES and text.isascii() and not any(b in text for b in _OTHER_BREAKS)
    lines = [] if simple else text.splitlines()
    first = _first_line(text) if simple else (lines[0] if lines else None)
    offset = 0
    forced = re.fullmatch(r"\s*sep=(.)\s*", first) if first is not None else None
    if forced:
        # Excel's "sep=;" directive line: it fixes the delimiter and is not a table row.
        delimiter = forced.group(1)
        lines = lines[1:]
        offset = 1
    else:
        delimiter = _sniff_delimiter(_lines_of(text) if simple else lines)
    if simple:
        split = _split_plain_text(text, data, offset, delimiter)
        if split is not None:
            return Grid(
                split,
                range(1 + offset, len(split) + 1 + offset),
                None,
                decimal_comma=_decimal_comma(delimiter, split),
                delimiter=delimiter,
            )
        lines = text.splitlines()[offset:]
    elif _plainly_split(lines, delimiter):
        plain = SplitRows(lines, delimiter)
        return Grid(
            plain,
            range(1 + offset, len(plain) + 1 + offset),
            None,
            decimal_comma=_decimal_comma(delimiter, plain),
            delimiter=delimiter,
        )
    del text
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
    return Grid(
        rows, numbers, None, decimal_comma=_decimal_comma(delimiter, rows), delimiter=delimiter
    )


def _decimal_comma(delimiter: str, rows: Sequence[list[Cell]]) -> bool:
    """A ';' table writes the decimal comma (the reason it is not ','); a tab or '|' table may
    write either mark, told by its forces as a PDF's are ('28,13' beside no '28.13'). A ','
    table's commas are its separators."""
    if delimiter == ";":
        return True
    return delimiter in ("\t", "|") and decimal_comma_written(rows)


def _plainly_split(lines: list[str], delimiter: str) -> bool:
    """Whether csv.reader and the strip-or-None of each cell would give each line split at the
    delimiter: the common file where splitting is all there is to it (SplitRows reads it). Plain
    means: ASCII with no quote character (so no field is quoted), no line over the csv module's
    field limit (which it would refuse), and no cell that stripping would change or that is
    empty (no space or tab beside a delimiter or a line's ends, no delimiter beside another or a
    line's ends, no unit separator, the one other ASCII space after splitlines). Judged on the
    bytes with numpy: each byte's class, then each pair of neighbours."""
    joined = "\n".join(lines)
    if not joined.isascii():
        return False
    kind = np.zeros(256, dtype=np.uint8)  # 0 other, 1 delimiter, 2 line break, 3 space, 4 refused
    kind[[ord(" "), ord("\t")]] = 3
    kind[[ord('"'), 0x1F]] = 4
    kind[ord("\n")] = 2
    kind[ord(delimiter)] = 1
    cls = kind[np.frombuffer(joined.encode("ascii"), dtype=np.uint8)]
    if not cls.size:
        return True
    if (cls == 4).any() or cls[0] in (1, 3) or cls[-1] in (1, 3):
        return False
    breaks = np.flatnonzero(cls == 2)
    longest = int(np.diff(breaks, prepend=-1, append=cls.size).max()) - 1
    if longest > csv.field_size_limit():
        return False
    refused = np.zeros(16, dtype=bool)  # (left, right) classes: 4 * left + right
    for left, right in ((1, 3), (3, 1), (2, 3), (3, 2), (1, 1), (2, 1), (1, 2)):
        refused[4 * left + right] = True
    return not refused[cls[:-1] * 4 + cls[1:]].any()


def _first_line(text: str) -> str:
    end = text.find("\n")
    return text if end < 0 else text[:end]


def _lines_of(text: str) -> Iterator[str]:
    """The lines of text broken by "\n" only, as splitlines gives them, made as they are read
    (the delimiter sniffer reads the first fifty)."""
    begin, size = 0, len(text)
    while begin < size:
        end = text.find("\n", begin)
        if end < 0:
            end = size
        yield text[begin:end]
        begin = end + 1


def _ascii_bytes(text: str, data: bytes) -> np.ndarray:
    """The bytes of ASCII `text`: the file's own (past a UTF-8 byte order mark) when they are
    the text's, else encoded."""
    skip = len(codecs.BOM_UTF8) if data.startswith(codecs.BOM_UTF8) else 0
    if len(data) - skip == len(text):  # an ASCII text decoded from UTF-8 or Windows-1252
        return np.frombuffer(data, dtype=np.uint8, offset=skip)
    return np.frombuffer(text.encode("ascii"), dtype=np.uint8)


def _split_plain_text(text: str, data: bytes, offset: int, delimiter: str) -> SplitRows | None:
    """The rows of ASCII text broken by "\n" only, after `offset` directive lines, found from
    its bytes when the lines would split plainly (as _plainly_split judges them), else None.

    The lines joined are the text itself, less a last line break: so the same judgement is
    made on the file's bytes, at the delimiters and line breaks only (each pair it refuses
    has one of them on a side), and their places are kept for the rows, cells and columns."""
    base = len(_first_line(text)) + 1 if offset else 0
    stop = len(text) - text.endswith("\n")
    if base >= stop:  # no line, or one blank line, after the directive
        return SplitRows([], delimiter)
    if ord(delimiter) > 127:
        return None
    body = _ascii_bytes(text, data)[base:stop]
    kind = np.zeros(256, dtype=np.uint8)  # as _plainly_split classes them
    kind[[ord(" "), ord("\t")]] = 3
    kind[[ord('"'), 0x1F]] = 4
    kind[ord("\n")] = 2
    kind[ord(delimiter)] = 1
    # Classed only where judged (a table lookup per byte costs ten comparisons of every byte).
    for refused_byte in ('"', "\x1f"):
        if kind[ord(refused_byte)] == 4 and text.find(refused_byte, base, stop) >= 0:
            return None
    if kind[body[0]] in (1, 3) or kind[body[-1]] in (1, 3):
        return None
    ends = _cell_ends(body, ord(delimiter), base)
    terms = ends[:-1] - base if base else ends[:-1]  # (counted from base)
    cls = kind[body[terms]]
    break_at = np.flatnonzero(cls == 2)  # the place in `terms` of each line break
    breaks = terms[break_at]
    longest = int(np.diff(breaks, prepend=-1, append=body.size).max()) - 1
    if longest > csv.field_size_limit():
        return None
    refused = np.zeros(16, dtype=bool)  # (left, right) classes: 4 * left + right
    for left, right in ((1, 3), (3, 1), (2, 3), (3, 2), (1, 1), (2, 1), (1, 2)):
        refused[4 * left + right] = True
    # Each refused pair has a delimiter or line break on one side: the pairs either side of
    # those are all that need judging. Without a space or tab (class 3) in the text, only two of
    # them side by side can be refused (all but two breaks: a blank line).
    spaced = any(kind[ord(c)] == 3 and text.find(c, base, stop) >= 0 for c in " \t")
    if not spaced:
        side = np.flatnonzero(np.diff(terms) == 1)
        if ((cls[side] != 2) | (cls[side + 1] != 2)).any():
            return None
    else:
        inner = terms > 0
        if refused[kind[body[terms[inner] - 1]] * 4 + cls[inner]].any():
            return None
        inner = terms < body.size - 1
        if refused[cls[inner] * 4 + kind[body[terms[inner] + 1]]].any():
            return None
    return SplitRows.of_text(
        text,
        _ascii_bytes(text, data),
        PlainText(text, base, ends, break_at),
        delimiter,
    )


PLACES_AT_A_TIME = 1 << 24  # bytes searched for delimiters at a time


def _cell_ends(body: np.ndarray, delimiter: int, base: int) -> np.ndarray:
    """The place (counted from base) of every delimiter and line break in `body`, and one more
    item, set to one past the body's end (the end of its last line), for PlainText. In four
    bytes per place where the text allows, found a slice at a time: an array of eight bytes
    per delimiter beside it would be most of the memory a file of delimiters (hostile, or a
    very wide table) takes to read."""
    stop = base + body.size
    count = int(np.count_nonzero(body == delimiter)) + int(np.count_nonzero(body == ord("\n")))
    places = np.int32 if stop < np.iinfo(np.int32).max else np.int64
    ends: np.ndarray = np.empty(count + 1, dtype=places)
    filled = 0
    for first in range(0, body.size, PLACES_AT_A_TIME):
        part = body[first : first + PLACES_AT_A_TIME]
        found = np.flatnonzero((part == delimiter) | (part == ord("\n")))
        ends[filled : filled + found.size] = found + (base + first)
        filled += found.size
    ends[-1] = stop
    return ends


class PlainText(Sequence[str]):
    """Where the lines and cells of a plainly split text are (SplitRows.of_text): `ends` holds
    the place of every delimiter and line break of its lines (_cell_ends) and the end of the
    last, and `break_at` which of them are the breaks, so each line and each cell's end (and a
    line's width) are known without a string per line or per cell."""

    def __init__(self, text: str, base: int, ends: np.ndarray, break_at: np.ndarray) -> None:
        self.text = text
        self.ends = ends  # each cell's end: its delimiter or line break, or the text's end
        # The place in `ends` of each line's last cell's end, each line's start and end.
        self.line_end = np.empty(break_at.size + 1, dtype=np.int64)
        self.line_end[:-1], self.line_end[-1] = break_at, ends.size - 1
        self.stops = self.ends[self.line_end]
        self.begins = np.empty_like(self.stops)
        self.begins[0] = base
        self.begins[1:] = self.stops[:-1] + 1
        if self.begins.size > 1 and self.begins[-1] == self.stops[-1]:
            # A blank last line is no row, as SplitRows drops it from a list of lines.
            self.begins, self.stops = self.begins[:-1], self.stops[:-1]
            self.line_end = self.line_end[:-1]

    def __len__(self) -> int:
        return int(self.begins.size)

    @overload
    def __getitem__(self, i: int) -> str: ...

    @overload
    def __getitem__(self, i: slice) -> list[str]: ...

    def __getitem__(self, i: int | slice) -> str | list[str]:
        if isinstance(i, slice):
            text = self.text
            starts = self.begins[i].tolist()
            return [text[a:b] for a, b in zip(starts, self.stops[i].tolist(), strict=True)]
        return self.text[int(self.begins[i]) : int(self.stops[i])]

    def joined(self, start: int, stop: int) -> str:
        """Lines start..stop (some) joined by line breaks: a slice of the text."""
        return self.text[int(self.begins[start]) : int(self.stops[stop - 1])]

    def lengths(self) -> np.ndarray:
        """The number of cells of each line (0 for a blank one)."""
        count = np.diff(self.line_end, prepend=-1)
        return np.where(self.stops > self.begins, count, 0)


def _cells(texts: list[str]) -> list[Cell]:
    return cast("list[Cell]", texts)  # a list of text is a list of cells (read, never added to)


class SplitRows(Sequence[list[Cell]]):
    """The rows of a plain file (see _plainly_split), each split when asked: a list per row and
    a string per cell made up front were most of the reading time of a 10^6-row table and held
    three times the file's size. A blank line is an empty row, as csv.reader gives it (a last
    one is no row: the joined text ends in a line break there, which ends the row above). The
    last row asked is kept, as the row reader asks for one row's cells several times. Made from
    a list of lines, or (of_text) from a text's bytes: then its lines are cut from the text when
    asked, and the places of its cells are known (lengths, plain_block) without splitting it."""

    def __init__(self, lines: list[str], delimiter: str) -> None:
        self._lines: list[str] | PlainText = lines[:-1] if lines and not lines[-1] else lines
        self._delimiter = delimiter
        self._last: tuple[int, list[Cell]] = (-1, [])
        self._lengths: np.ndarray | None = None
        self._plain: PlainText | None = None
        self._raw: np.ndarray | None = None

    @classmethod
    def of_text(cls, text: str, raw: np.ndarray, plain: PlainText, delimiter: str) -> SplitRows:
        """The rows of a text split from its bytes `raw` (see _split_plain_text): each line is
        cut from the text when asked, and the cells' places are known (plain_block)."""
        rows = cls([], delimiter)
        rows._lines, rows._plain, rows._raw = plain, plain, raw
        return rows

    def __len__(self) -> int:
        return len(self._lines)

    @overload
    def __getitem__(self, i: int) -> list[Cell]: ...

    @overload
    def __getitem__(self, i: slice) -> list[list[Cell]]: ...

    def __getitem__(self, i: int | slice) -> list[Cell] | list[list[Cell]]:
        if isinstance(i, slice):
            d = self._delimiter
            return [_cells(line.split(d)) if line else [] for line in self._lines[i]]
        if i < 0:
            i += len(self._lines)
        if self._last[0] != i:
            line = self._lines[i]
            self._last = (i, _cells(line.split(self._delimiter)) if line else [])
        return list(self._last[1])

    def lengths(self, start: int) -> np.ndarray:
        """The number of cells of each row from `start` on (0 for a blank line); counted once."""
        if self._lengths is None and self._plain is not None:
            self._lengths = self._plain.lengths()
        if self._lengths is None:
            lines = self._lines
            count = np.fromiter(
                map(methodcaller("count", self._delimiter), lines), dtype=np.int64, count=len(lines)
            )
            filled = np.fromiter(map(bool, lines), dtype=bool, count=len(lines))
            self._lengths = np.where(filled, count + 1, 0)
        return self._lengths[start:]

    def columns(self, start: int, stop: int, indexes: list[int]) -> list[list[Cell]] | None:
        """The cells of columns `indexes` in rows start..stop when every such row has the same
        number of cells, more than any index (else None): the rows joined by the delimiter and
        split once, each column a stride of that one list."""
        lines = self._lines[start:stop]
        if not lines:
            return None
        widths = self.lengths(start)[: len(lines)]
        width = int(widths[0])
        if width <= max(indexes) or not (widths == width).all():
            return None
        cells = self._delimiter.join(lines).split(self._delimiter)
        return [_cells(cells[i::width]) for i in indexes]

    def joined_columns(self, start: int, stop: int, indexes: list[int]) -> list[str] | None:
        """The cells of columns `indexes` in rows start..stop as columns() gives them, each
        column's joined by line breaks (None where columns() gives None): cut from the rows'
        bytes with numpy (verify.io.cells), without a string per cell (a plain file's cells
        hold neither delimiters nor line breaks)."""
        plain = self._plain
        stop = min(stop, len(self._lines))
        lines = [] if plain is not None else cast("list[str]", self._lines[start:stop])
        count = max(stop - start, 0)
        if not count or ord(self._delimiter) > 127:
            return None
        widths = self.lengths(start)[:count]
        width = int(widths[0])
        if width <= max(indexes) or not (widths == width).all():
            return None
        block = ("\n".join(lines) if plain is None else plain.joined(start, stop)) + "\n"
        if not block.isascii():
            return None
        raw = np.frombuffer(block.encode("ascii"), dtype=np.uint8)
        del block
        delimiter = ord(self._delimiter)
        terminator = np.zeros(256, dtype=bool)
        terminator[[delimiter, ord("\n")]] = True
        ends = np.flatnonzero(terminator[raw])  # each cell's terminator
        if ends.size != count * width:
            return None
        out = []
        for i in indexes:
            stops = ends[i::width]
            begins = np.empty_like(stops)
            if i:
                begins[:] = ends[i - 1 :: width] + 1
            else:  # a row's first cell begins past the line break that ends the row above
                begins[0] = 0
                begins[1:] = ends[width - 1 : -1 : width] + 1
            out.append(joined_spans(raw, begins, stops))
        return out

    def plain_block(self, start: int, stop: int) -> PlainBlock | None:
        """The places of the cells of rows start..stop of a text split from its bytes, when every
        such row has the same number of cells (else None)."""
        plain, raw = self._plain, self._raw
        stop = min(stop, len(self._lines))
        if plain is None or raw is None or start >= stop:
            return None
        widths = self.lengths(start)[: stop - start]
        width = int(widths[0])
        if not width or not (widths == width).all():
            return None
        first = int(plain.line_end[start - 1]) + 1 if start else 0
        ends = plain.ends[first : int(plain.line_end[stop - 1]) + 1]
        return PlainBlock(
            plain.text, raw, ends.reshape(stop - start, width), plain.begins[start:stop]
        )


@dataclass(frozen=True)
class PlainBlock:
    """Rows of a plain text as places in it: row i's cell j ends at ends[i, j] (its delimiter or
    line break), begins one past ends[i, j - 1], and a row's first cell at row_begin[i]."""

    text: str
    raw: np.ndarray  # the text's bytes (ASCII)
    ends: np.ndarray  # int64, rows x width
    row_begin: np.ndarray  # int64

    def begins(self, j: int) -> np.ndarray:
        return self.row_begin if j == 0 else self.ends[:, j - 1] + 1
