"""Rows: data cells -> claimed values, each keeping its cell as written and its location."""

from __future__ import annotations

import bisect
import re
from array import array
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from itertools import chain
from operator import itemgetter
from typing import Any, cast

import numpy as np

from verify.errors import did_you_mean
from verify.io.case import LABEL_MAX_CHARS
from verify.io.claims.apart import apart_message, other_marks, written_apart
from verify.io.claims.band import holds_number
from verify.io.claims.grid import FORCE_LIKE, Cell, Grid, Unusable, blank, cell_text
from verify.io.claims.labels import LabelMatcher, Match
from verify.io.claims.layout import Layout, ValueColumn
from verify.io.claims.plain_block import in_range, read_plain_block
from verify.io.claims.problems import Problems, quoted
from verify.io.claims.resolution import judge_resolutions, settle_rounding, unit_factors
from verify.io.claims.rounding import decimals_as_written, shown_decimals
from verify.io.claims.table import (
    CellTexts,
    ClaimArrays,
    ClaimedValue,
    Labels,
    MemberIndex,
    Places,
    SignConflict,
    UnmatchedLabel,
    compact_ints,
)
from verify.io.values import (
    MAX_FORCE_CHARS,
    PLAIN_NUMBER,
    is_nan_text,
    read_force_cell,
)
from verify.units import Dimension, Unit, lookup_unit

# Member labels and case names; longer text is a note, not a name. The case file's own limit, so
# that every member id a case file takes can be named in a claims table.
MAX_NAME_CHARS = LABEL_MAX_CHARS
# a totals row under a table ('Total', 'Sum', 'Max', 'Σ'): a sum or extreme of forces, no claim
_TOTALS = re.compile(r"(?i)\s*(?:totals?|sum|max(?:imum)?|min(?:imum)?|Σ)\b")


def refuse_name(text: str, what: str) -> str | None:
    """Why `text` cannot be a label or case name (too long, control characters), else None.

    Checked before any matching: the label patterns must never run over an 80 KB cell, and a
    control character would reach the terminal through every finding that quotes the label."""
    if len(text) > MAX_NAME_CHARS:
        return (
            f"the {what} '{quoted(text)}' is {len(text):,} characters long (limit "
            f"{MAX_NAME_CHARS}); a label names one member or reaction"
        )
    if any(ch < " " or "\x7f" <= ch < "\xa0" for ch in text):
        return (
            f"the {what} '{quoted(text)}' holds control characters (shown escaped); "
            "labels and case names are printable text"
        )
    return None


class RowReader:
    """Reads data rows into claims, matching labels once each and catching duplicate claims."""

    def __init__(
        self,
        grid: Grid,
        matcher: LabelMatcher,
        problems: Problems,
        layout: Layout,
    ) -> None:
        self.grid = grid
        self.problems = problems
        self.member_h = layout.member
        self.case_h = layout.case
        self.tc_h = layout.tc
        self.unit_h = layout.unit
        self.columns = layout.columns
        self.case_filter = layout.case_filter if layout.case is not None else None
        self.matcher = matcher
        self.values: list[ClaimedValue] = []
        self.unmatched: list[UnmatchedLabel] = []
        self.long_cases: list[str] = []
        self.all_cases: list[str] = []
        self._long_seen: set[str] = set()
        self._claimed: dict[tuple[str, str], tuple[int, str]] = {}  # (target, case) -> (row, label)
        self.minus_letters: list[tuple[int, str]] = []  # (value index, letter) of '-12.4 T' cells
        self.value_rows: list[int] = []  # the grid row of each entry of `values`
        # Values under labels the model does not have (member None): a member drawn between
        # other joints is held to them (compare/causes/members.py); never compared as claims.
        self.unknown_values: list[ClaimedValue] = []
        self.header_row = layout.header_row
        self._stacked_at: int | None = None  # the row a second table's header is written on
        self._repeats: list[int] | None = None  # rows writing the header again (_header_repeats)
        self._under: dict[int, int | None] = {}  # _first_label_under's answers
        self.pair = layout.pair
        # The cells a claim row spans: a CSV row shorter than this left cells off its end (empty
        # cells) or was written with another separator (refused when it reads as a claim).
        needed = [self.member_h.index] + [v.index for v in self.columns]
        self.needed = max(needed + ([self.pair[1]] if self.pair is not None else [])) + 1

    def _second_table(self, first_r: int, first_label: str, r: int) -> bool:
        """Whether the rows from a repeated header on restate the table above: a second table
        under the first (one per load case, each under its title), said once, at its header,
        instead of a duplicate claim per row (later duplicates under it are then passed over:
        True). It is one when the header is written again between two rows claiming the same
        thing and this row is the first claim under it; a table continued under a repeated
        header that gives one member twice keeps its duplicate claim."""
        if self._stacked_at is not None:
            return first_r < self._stacked_at < r
        repeats = self._header_repeats()
        at = bisect.bisect_left(repeats, r) - 1  # the last repeated header above this row
        if at < 0 or repeats[at] <= first_r:
            return False
        h = repeats[at]
        if self._first_label_under(h) != r:
            return False  # rows under that header name other things first: a continuation
        grid = self.grid
        self._stacked_at = h
        above = [cell_text(c).strip() for c in grid.rows[h - 1] if not blank(c)] if h else []
        title = f" under '{above[0]}' ({grid.row_ref(h - 1)})" if len(above) == 1 else ""
        self.problems.add(
            f"a second table starts here{title}: the header is written again and the rows under "
            f"it name members the table above already gave (first '{first_label}'"
            f", {grid.row_ref(first_r)}); give each load case a column of one table, or each "
            "table a file of its own (checked with --case NAME)",
            grid.where(h),
        )
        return True

    def _first_label_under(self, h: int) -> int | None:
        """The first row under row `h` whose member cell is written (found once per row)."""
        if h not in self._under:
            at, rows = self.member_h.index, self.grid.rows
            self._under[h] = next(
                (k for k in range(h + 1, len(rows)) if not blank(self.grid.cell(k, at))), None
            )
        return self._under[h]

    def _header_repeats(self) -> list[int]:
        """The rows below the header that write its member heading again over headings (no
        number), in order: found once, on the first duplicate claim."""
        if self._repeats is None:
            grid, at = self.grid, self.member_h.index
            heading = cell_text(grid.cell(self.header_row, at)).strip().casefold()
            self._repeats = [
                h
                for h in range(self.header_row + 1, len(grid.rows))
                if heading
                and cell_text(grid.cell(h, at)).strip().casefold() == heading
                and not any(holds_number(c) for c in grid.rows[h])
            ]
        return self._repeats

    def read_row(self, r: int) -> None:
        grid = self.grid
        row = grid.rows[r]
        if all(blank(c) for c in row):
            return
        if len(row) < self.needed and grid.delimiter is not None and self._short_row(r, row):
            return
        label_cell = grid.cell(r, self.member_h.index)
        where_label = grid.where(r, self.member_h.index, self.member_h.text)
        present = [v for v in self.columns if not blank(grid.cell(r, v.index))]
        if isinstance(label_cell, Unusable):
            self.problems.add(f"the member label {label_cell.reason}", where_label)
            return
        label = cell_text(label_cell)
        if self.pair is not None and label:
            # Members named by their end joints: the label reads 'B-C' from the from/to cells.
            end = cell_text(grid.cell(r, self.pair[1]))
            label = f"{label}-{end}" if end else ""
        if not label:
            if present:
                self.problems.add("this row has a force but no member label", where_label)
            return
        if not present:
            if self.pair is None:  # (a label with its force in it: refused, else no claim)
                self._written_apart(r, label)
            return
        refusal = refuse_name(label, "member label")
        if refusal:
            self.problems.add(refusal, where_label)
            return
        case_name = self._case_of_row(r)
        if case_name is None:
            return
        if self.case_filter is not None and case_name.casefold() != self.case_filter.casefold():
            return
        tc = self._tc_of_row(r)
        row_unit = self._unit_of_row(r)
        match = self.matcher.match(label)
        if match.kind == "unknown" and self.pair is None and self._written_apart(r, label):
            return
        if match.kind == "unknown" and is_nan_text(label):
            self.problems.add(
                f"the member label '{quoted(label)}' is a missing value or spreadsheet error, "
                "not a label",
                where_label,
            )
            return
        if match.kind == "unknown" and (
            _TOTALS.match(label) or not any(self._numeric(r, v) for v in present)
        ):
            # A note ('Date, 12.03.2024', 'see calc p.12'), a rule line ('-----') or a totals
            # row under the table: no member named and no force written, or a sum of forces,
            # which claims nothing of any member.
            return
        if match.kind in ("unknown", "ambiguous"):
            self.unmatched.append(UnmatchedLabel(label, where_label, match.kind, match.candidates))
        for v in present:
            self._read_value(
                r,
                label,
                match,
                v,
                case_name if self.case_h is not None else (v.case or ""),
                tc,
                row_unit,
            )

    def _numeric(self, r: int, column: ValueColumn) -> bool:
        """Whether the cell reads as a force (a number, with or without T/C or a unit)."""
        cell = self.grid.cell(r, column.index)
        if isinstance(cell, float):
            return True
        if not isinstance(cell, str):
            return False
        try:
            read_force_cell(cell, decimal_comma=self.grid.decimal_comma)
        except ValueError:
            return False
        return True

    def _short_row(self, r: int, row: list[Cell]) -> bool:
        """A CSV row with fewer cells than its table's columns need. Cells left off the end of a
        row are empty cells (no claim there: those members are missing claims, never agreeing),
        as a hand-written table often leaves them. A row written with another separator (';' in a
        ',' table) that reads as a claim (it names a member or reaction, or holds a number, once
        split) lost its values, as did one written with spaces or quoted whole that names a member
        or reaction with a force after it: the table is refused on that row (True). A note under
        the table ('forces from run 3', 'checked;JB', 'AC checked by JB') is no claim and passes."""
        delimiter = self.grid.delimiter or ""
        texts = [cell_text(c) for c in row]
        others = [
            d for d in other_marks(delimiter, self.grid.decimal_comma) if any(d in t for t in texts)
        ]
        pieces = [t for t in texts if t]
        for other in others:
            pieces = [p.strip() for t in pieces for p in t.split(other) if p.strip()]
        if others and (
            pieces
            and (
                self.matcher.names(pieces[0]) in ("member", "reaction")
                or any(FORCE_LIKE.match(p) for p in pieces)
            )
        ):
            self.problems.add(apart_message(others[0], delimiter, ""), self.grid.row_ref(r))
            return True
        first = next((t for t in texts if t), "")
        return self._written_apart(r, first)

    def _written_apart(self, r: int, cell: str) -> bool:
        """Whether the label cell `cell` holds a label and a force written apart (apart.py):
        refused on its row."""
        delimiter = self.grid.delimiter
        if delimiter is None or not cell:
            return False
        mark = written_apart(cell, delimiter, self.grid.decimal_comma, self.matcher)
        if mark is None:
            return False
        self.problems.add(apart_message(mark, delimiter, cell), self.grid.row_ref(r))
        return True

    def _case_of_row(self, r: int) -> str | None:
        if self.case_h is None:
            return ""
        cell = self.grid.cell(r, self.case_h.index)
        where = self.grid.where(r, self.case_h.index, self.case_h.text)
        if isinstance(cell, Unusable):
            self.problems.add(f"the load case {cell.reason}", where)
            return None
        name = cell_text(cell)
        if not name:
            self.problems.add("this row has a force but no load case", where)
            return None
        refusal = refuse_name(name, "load case")
        if refusal:
            self.problems.add(refusal, where)
            return None
        if is_nan_text(name):
            self.problems.add(
                f"the load case '{quoted(name)}' is a missing value or spreadsheet error, not a "
                "case name",
                where,
            )
            return None
        if name not in self._long_seen:
            self._long_seen.add(name)
            self.all_cases.append(name)
            if self.case_filter is None or name.casefold() == self.case_filter.casefold():
                self.long_cases.append(name)
        return name

    def _tc_of_row(self, r: int) -> str | None:
        if self.tc_h is None:
            return None
        return self._tc_at(r, self.tc_h.index)

    def _tc_at(self, r: int, index: int) -> str | None:
        cell = self.grid.cell(r, index)
        text = cell_text(cell).strip("() ").casefold()
        if not text:
            return None
        if text in ("t", "tension", "tens"):
            return "T"
        if text in ("c", "compression", "comp"):
            return "C"
        heading = cell_text(self.grid.cell(self.header_row, index)) or "T/C"
        self.problems.add(
            f"'{quoted(cell_text(cell))}' is not T or C", self.grid.where(r, index, heading)
        )
        return None

    def sign_conflicts(self) -> list[SignConflict]:
        """Cells whose minus contradicts their letter under the table's convention. A minus beside
        C is redundant where tension is positive; a minus beside T is how a table that writes
        compression positive says tension. The convention is the one most such cells follow."""
        beside_t = sum(1 for _, letter in self.minus_letters if letter == "T")
        compression_positive = beside_t > len(self.minus_letters) - beside_t
        wrong = "C" if compression_positive else "T"
        convention = "compression-positive" if compression_positive else "tension-positive"
        out = []
        for k, letter in self.minus_letters:
            if letter == wrong:
                v = self.values[k]
                assert v.member is not None
                out.append(SignConflict(v.label, v.member, v.column, v.where, v.text, convention))
        return out

    def _unit_of_row(self, r: int) -> str | None:
        if self.unit_h is None:
            return None
        cell = self.grid.cell(r, self.unit_h.index)
        if blank(cell):
            return None
        try:
            return lookup_unit(cell_text(cell).strip("()[] "), Dimension.FORCE).symbol
        except ValueError as exc:
            self.problems.add(
                f"unit: {exc}", self.grid.where(r, self.unit_h.index, self.unit_h.text)
            )
            return None

    def _read_value(
        self,
        r: int,
        label: str,
        match: Match,
        column: ValueColumn,
        case_name: str,
        tc: str | None,
        row_unit: str | None,
    ) -> None:
        grid = self.grid
        cell = grid.cell(r, column.index)
        where = grid.where(r, column.index, column.header)
        if isinstance(cell, Unusable):
            self.problems.add(f"the force cell {cell.reason}", where)
            return
        letter: str | None
        if isinstance(cell, float):
            value, letter, cell_unit = cell, None, None
        else:
            assert isinstance(cell, str)
            try:
                value, letter, cell_unit = read_force_cell(cell, decimal_comma=grid.decimal_comma)
            except ValueError as exc:
                self.problems.add(str(exc), where)
                return
        if column.tc_index is not None:
            tc = self._tc_at(r, column.tc_index)
        if tc is not None:
            if letter is not None and letter != tc:
                self.problems.add(
                    f"force '{quoted(cell_text(cell))}' says {letter} but the T/C column says {tc}",
                    where,
                )
                return
            letter = tc
        sign_fixed = letter is not None
        minus_with_letter = sign_fixed and value < 0
        if letter is not None:
            # The letter says tension or compression; whether a minus beside it is redundant or
            # contradicts it depends on the table's convention, settled once all rows are read.
            value = abs(value) if letter == "T" else -abs(value)
        unit = None
        for source_unit in (cell_unit, column.unit, row_unit):
            if source_unit is None:
                continue
            if unit is not None and source_unit != unit:
                self.problems.add(
                    f"force '{quoted(cell_text(cell))}' is in {unit} but its column or row says "
                    f"{source_unit}",
                    where,
                )
                return
            unit = source_unit
        if match.kind == "reaction" and sign_fixed:
            self.problems.add(
                f"'{label}' is a reaction, which is neither tension nor compression; write a "
                "signed number",
                where,
            )
            return
        target = (
            match.member
            if match.kind == "member"
            else (
                f"reaction {match.reaction}"
                if match.kind == "reaction"
                else f"label {label.casefold()}"
            )
        )
        assert target is not None
        key = (target, case_name.casefold())
        if key in self._claimed:
            first_r, first_label = self._claimed[key]
            if self._second_table(first_r, first_label, r):
                return
            what = {
                "member": f"member '{match.member}'",
                "reaction": f"reaction '{match.reaction_label}'",
            }.get(match.kind, f"label '{label}'")
            case_text = f" for '{case_name}'" if case_name else ""
            self.problems.add(
                f"duplicate claim: {what}{case_text} is given twice, in {grid.row_ref(first_r)} "
                f"(as '{first_label}') and {grid.row_ref(r)} (as '{label}'); keep one row per "
                "member and load case",
                where,
            )
            return
        self._claimed[key] = (r, label)
        if minus_with_letter and match.kind == "member":
            self.minus_letters.append((len(self.values), "T" if value > 0 else "C"))
        # "+ 0.0" turns the -0.0 of "0 C" into 0.0.
        claim = ClaimedValue(
            label,
            match.member,
            match.reaction,
            case_name,
            float(value) + 0.0,
            sign_fixed,
            unit,
            where,
            cell_text(cell),
        )
        if match.kind in ("member", "reaction"):
            self.value_rows.append(r)
            self.values.append(claim)
        elif match.kind == "unknown":
            self.unknown_values.append(claim)


@dataclass(frozen=True)
class BulkClaims:
    """The plain rows of a wide table read as whole columns: claim k of row `rows[i]` and value
    column j is entry i * len(columns) + j of every array (row-major, the table's order)."""

    rows: np.ndarray  # int64: grid row of each claim
    slot: np.ndarray  # int64: position of the claim's value column in the layout
    member: np.ndarray  # int64: model member position
    value: np.ndarray  # float
    decimals: np.ndarray  # int64: decimals as written, -1 where the text does not show them
    numbers: np.ndarray  # int64: the file / sheet row number of each claim
    parts: tuple[tuple[str, str], ...] | None  # per value column, its place around the number
    where: list[str] | None  # each claim's place, made here only when `parts` cannot say it
    text: list[str] | CellTexts  # each claim's cell as written


# The characters of a column of plain numbers joined by line breaks; numpy checks them all at once.
_NUMBER_BYTES = np.zeros(256, dtype=bool)
_NUMBER_BYTES[list(b"0123456789+-.eE\n")] = True


def _plain_text_column(
    cells: list[Cell], decimal_comma: bool
) -> tuple[np.ndarray, np.ndarray] | None:
    """(value, decimals shown) when every cell is text PLAIN_NUMBER reads, else None."""
    found = _plain_text_spans(cells, decimal_comma)
    return None if found is None else (found[0], found[1])


def _plain_text_spans(
    cells: list[Cell], decimal_comma: bool
) -> tuple[np.ndarray, np.ndarray, str, np.ndarray] | None:
    """(value, decimals shown, the cells joined by line breaks, one past the end of each cell in
    that text) when every cell is text PLAIN_NUMBER reads, else None; checked on the column
    joined into one text, instead of a regular expression per cell.

    Only digits, signs, points, e/E and the joining breaks; a digit on each side of every point;
    and float() reading every cell. With those characters float() refuses what PLAIN_NUMBER
    refuses (a sign or exponent out of place, '1e', '1.2.3'), so together they accept exactly
    its texts. Decimals as _decimals_shown counts them, from the places of points and exponents."""
    n = len(cells)
    texts = cast("list[str]", cells)  # checked by the join: a cell not text is a TypeError
    try:
        joined = "\n".join(texts)
    except TypeError:
        return None
    if not n or joined.count("\n") != n - 1:
        return None  # a break inside a cell (a quoted field) would split it in two
    return _plain_joined_spans(joined, n, decimal_comma, texts)


def _plain_joined_spans(
    joined: str, n: int, decimal_comma: bool, texts: list[str] | None = None
) -> tuple[np.ndarray, np.ndarray, str, np.ndarray] | None:
    """_plain_text_spans of the `n` cells joined by line breaks in `joined` (no cell holding a
    break); `texts`, the cells themselves when at hand, else split from `joined` for float()."""
    if not joined.isascii():
        return None
    if decimal_comma and "." in joined:
        return None
    raw = np.frombuffer(joined.encode("ascii"), dtype=np.uint8)
    if not _NUMBER_BYTES[raw].all():
        return None
    points = np.flatnonzero(raw == ord("."))
    if points.size:
        if points[0] == 0 or points[-1] == raw.size - 1:
            return None
        digit = (raw >= ord("0")) & (raw <= ord("9"))
        if not (digit[points - 1].all() and digit[points + 1].all()):
            return None
    ends = np.append(np.flatnonzero(raw == ord("\n")), raw.size)  # one past each cell's end
    try:
        value = np.fromiter(
            map(float, _split_by_chunks(joined, ends) if texts is None else texts),
            dtype=np.float64,
            count=n,
        )
    except ValueError:
        return None
    decimals = np.full(n, -1, dtype=np.int64)
    at = np.searchsorted(ends, points)  # each point's cell (a plain number has one at most)
    decimals[at] = ends[at] - points - 1
    exponents = np.flatnonzero((raw == ord("e")) | (raw == ord("E")))
    if exponents.size:
        # decimals_as_written reads the digits before the exponent ('1.50e3': '1.50') and keeps
        # their decimals only when that number is the value itself: an exponent of zero, or a
        # mantissa of zeros. Counted from the non-zero digits either side of the 'e'.
        cell = np.searchsorted(ends, exponents)
        starts = np.concatenate([[0], ends[:-1] + 1])
        # The non-zero digits of the mantissa [start, e) and of the exponent [e + 1, end) of
        # each such cell, as differences of one running count (a sum per range over the whole
        # text would first widen every byte to 8: 0.2 s per 10^6-row column).
        running = np.zeros(raw.size + 1, dtype=np.int32 if raw.size < 2**31 else np.int64)
        np.cumsum((raw >= ord("1")) & (raw <= ord("9")), out=running[1:])
        mantissa_zero = running[exponents] == running[starts[cell]]
        exponent_zero = running[ends[cell]] == running[exponents + 1]
        pointed = decimals[cell] >= 0
        point_of = np.full(n, -1, dtype=np.int64)
        point_of[at] = points
        kept = exponents - point_of[cell] - 1
        decimals[cell] = np.where(
            pointed, np.where(mantissa_zero | exponent_zero, kept, -1), decimals[cell]
        )
    return value, decimals, joined, ends


SPLIT_CHUNK = 8_192  # cells split from a joined column at a time


def _split_by_chunks(joined: str, ends: np.ndarray) -> Iterator[str]:
    """The cells of `joined` (one past each one's end in `ends`), split a few thousand at a time:
    the strings of a whole column at once were most of the memory of reading its numbers. (The
    chunks chained in C: a generator's step per cell cost as much as float() of it.)"""
    n = ends.size
    firsts = range(0, n, SPLIT_CHUNK)
    begins = [int(ends[first - 1]) + 1 if first else 0 for first in firsts]
    stops = [int(ends[min(first + SPLIT_CHUNK, n) - 1]) for first in firsts]
    return chain.from_iterable(
        joined[begin:stop].split("\n") for begin, stop in zip(begins, stops, strict=True)
    )


def _plain_cells(
    column: list[Cell] | str, decimal_comma: bool
) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, tuple[str, np.ndarray] | None]:
    """(value, plain, decimals, spans) for a column of cells: plain where the cell is a number
    with nothing to interpret (the cells plain_number reads, or a workbook's float); parsed in
    one numpy call. `decimals` (as _decimals_shown counts them) and `spans` (the cells joined by
    line breaks, and one past each one's end there) when every cell is such text. `column` is
    the cells, or their texts joined by line breaks (a plain file: no cell empty or holding a
    break), split here only when some cell is not a plain number."""
    if isinstance(column, str):
        n = column.count("\n") + 1
        whole = _plain_joined_spans(column, n, decimal_comma)
        cells: list[Cell] = [] if whole is not None else _cells_of_text(column)
    else:
        cells = column
        n = len(cells)
        whole = _plain_text_spans(cells, decimal_comma)
    spans = None
    if whole is not None:
        value, decimals, joined, ends = whole
        spans = (joined, ends)
        # A cell past MAX_FORCE_CHARS is refused by read_force_cell: the general reader words it.
        plain = np.diff(ends, prepend=-1) - 1 <= MAX_FORCE_CHARS
        at = np.arange(n)
    else:
        decimals = None
        fullmatch = PLAIN_NUMBER.fullmatch
        plain = np.fromiter(
            (
                type(c) is str
                and len(c) <= MAX_FORCE_CHARS
                and fullmatch(c) is not None
                and not (decimal_comma and "." in c)
                for c in cells
            ),
            dtype=bool,
            count=n,
        )
        value = np.full(n, np.nan)
        at = np.flatnonzero(plain)
        if at.size:
            # float() of each text, as plain_number reads it (correctly rounded).
            value[at] = np.fromiter(
                map(float, itemgetter(*at.tolist())(cells) if at.size > 1 else [cells[at[0]]]),
                dtype=float,
                count=at.size,
            )
    if at.size:
        inside = in_range(value[at])
        if not inside.all():
            plain[at[~inside]] = False
    if whole is None:
        floats = np.fromiter((type(c) is float for c in cells), dtype=bool, count=n)
        if floats.any():
            value[floats] = [cells[i] for i in np.flatnonzero(floats).tolist()]
            plain |= floats
    return value, plain, decimals, spans


PLAIN_BLOCKS = True  # read a text split from its bytes by its cells' places (tests compare)


def _cells_of_text(joined: str) -> list[Cell]:
    return cast("list[Cell]", joined.split("\n"))


def _take(items: list[Cell], at: list[int]) -> list[Cell]:
    if len(at) > 1:
        return list(itemgetter(*at)(items))
    return [items[i] for i in at]


def _label_widths(labels: list[Cell] | str) -> np.ndarray:
    """The characters of each label (0 for a cell that is not text), from the labels or their
    text joined by line breaks."""
    if isinstance(labels, str):
        if labels.isascii():
            raw = np.frombuffer(labels.encode("ascii"), dtype=np.uint8)
            breaks = np.flatnonzero(raw == ord("\n"))
            return np.diff(breaks, prepend=-1, append=len(labels)) - 1
        labels = _cells_of_text(labels)
    return np.fromiter(
        (len(c) if type(c) is str else 0 for c in labels), dtype=np.int64, count=len(labels)
    )


def read_bulk(
    reader: RowReader, start: int, stop: int, member_ids: MemberIndex
) -> tuple[BulkClaims | None, list[int]]:
    """The plain rows of a wide table (no case, T/C, unit or joint-pair column) as columns, and
    the rows left to the general reader (in order). A row is plain when its label is a member id
    as the model writes it, every value cell is a plain number, and its member has no other row
    (a repeated member goes to the general reader, which words the duplicate)."""
    grid = reader.grid
    label_at = reader.member_h.index
    columns = reader.columns
    indexes = [label_at] + [v.index for v in columns]
    # A text split from its bytes gives the places of its cells: the plain numbers are checked
    # and parsed from those (read_plain_block), and kept as spans of the text itself.
    block_of = getattr(grid.rows, "plain_block", None)
    block = block_of(start, stop) if PLAIN_BLOCKS and block_of is not None else None
    from_block = (
        read_plain_block(block, indexes, member_ids, grid.decimal_comma)
        if block is not None
        else None
    )
    labels: list[Cell] | None = None
    texts_of: list[list[Cell] | str] = []
    cells_of: list[list[Cell]] | list[str] = []
    values: list[np.ndarray] = []
    decimals_of: list[np.ndarray | None] = []
    spans_of: list[tuple[str, np.ndarray, np.ndarray] | None] = []
    if from_block is not None:
        member, label_texts, values, shown_of, spans = from_block
        decimals_of = list(shown_of)
        spans_of = list(spans)
        ok = member >= 0
        for value in values:
            ok &= in_range(value)

        def labels_of() -> list[Cell]:
            return cast("list[Cell]", label_texts())

    else:
        # A plain CSV file gives each column's texts joined by line breaks, cut from its rows
        # without a string per cell (a 10^5-row table of three columns made 3x10^5 strings at
        # once, most of the reading's memory); the labels are split from theirs, the numbers
        # parsed from theirs.
        joined_of = getattr(grid.rows, "joined_columns", None)
        joined = joined_of(start, stop, indexes) if joined_of is not None else None
        cells_of = joined if joined is not None else grid.columns(start, stop, indexes)
        first = cells_of[0]
        # The labels of a table listing the members in the model's order (the common export)
        # are found by one comparison of texts; split into strings only when some label is
        # looked up.
        positions = member_ids.joined_in_order(first) if isinstance(first, str) else None
        if positions is None:
            labels = _cells_of_text(first) if isinstance(first, str) else first
            positions = member_ids.get_indexer(labels)
        member = positions
        ok = member >= 0
        texts_of = list(cells_of[1:])
        for cells in texts_of:
            value, plain, decimals, joined_spans = _plain_cells(cells, grid.decimal_comma)
            ok &= plain
            values.append(value)
            decimals_of.append(decimals)
            spans_of.append(None if joined_spans is None else _spans_of_joined(*joined_spans))

        def labels_of() -> list[Cell]:
            return _cells_of_text(cast(str, first))

    # A label past MAX_NAME_CHARS (a model built in memory may hold such an id) is refused by
    # the general reader, which words it: its row goes there.
    if block is not None and from_block is not None:
        widths = block.ends[:, label_at] - block.begins(label_at)
    else:
        widths = _label_widths(cells_of[0])
    ok &= widths <= MAX_NAME_CHARS
    # A member named on another row too (by the same id or another spelling) is left to the
    # general reader with all its rows, so duplicates are found and worded in table order.
    others = np.flatnonzero(~ok)
    named = np.full(stop - start, -1, dtype=np.int64)
    named[ok] = member[ok]
    match = reader.matcher.match
    if others.size and labels is None:
        labels = labels_of()
    for i in others.tolist():
        assert labels is not None
        cell = labels[i]
        label_text = cell if type(cell) is str else cell_text(cell)
        if label_text and refuse_name(label_text, "member label") is None:
            # (a refused label names no member: the patterns never run over a long cell)
            found = match(label_text)
            if found.kind == "member" and found.member is not None:
                named[i] = member_ids.get_loc(found.member)
    counts = np.bincount(named[named >= 0], minlength=len(member_ids))
    ok &= counts[np.where(ok, member, 0)] == 1
    picked = np.flatnonzero(ok)
    general = (np.flatnonzero(~ok) + start).tolist()
    k = len(columns)
    if not picked.size or not k:
        return None, list(range(start, stop))
    value = np.column_stack([values[j][picked] for j in range(k)]).ravel() + 0.0
    text: list[str] | CellTexts
    if all(spans is not None for spans in spans_of):  # every cell text (plain numbers)
        text = _cell_spans(cast("list[tuple[str, np.ndarray, np.ndarray]]", spans_of), picked)
        shown = np.column_stack([d[picked] for d in decimals_of if d is not None]).ravel()
    else:
        split_of = [_cells_of_text(t) if isinstance(t, str) else t for t in texts_of]
        if picked.size < stop - start:
            split_of = [_take(split_of[j], picked.tolist()) for j in range(k)]
        cells = list(chain.from_iterable(zip(*split_of, strict=True))) if k > 1 else split_of[0]
        del split_of
        text = [c if type(c) is str else cell_text(c) for c in cells]
        shown = _decimalsshown_decimals(text, value)
    del cells_of, texts_of, labels
    grid_rows = np.repeat(picked + start, k)
    slot = np.tile(np.arange(k, dtype=np.int64), picked.size)
    found_parts = [grid.where_parts(v.index, v.header) for v in columns]
    parts = tuple(p for p in found_parts if p is not None)
    where = None
    if len(parts) < k:
        headers = [v.header for v in columns]
        indexes = [v.index for v in columns]
        where = [
            grid.where(r, indexes[j], headers[j])
            for r, j in zip(grid_rows.tolist(), slot.tolist(), strict=True)
        ]
    return (
        BulkClaims(
            rows=grid_rows,
            slot=slot,
            member=np.repeat(member[picked], k),
            value=value,
            decimals=shown,
            numbers=_row_numbers(grid.row_numbers, grid_rows),
            parts=parts if where is None else None,
            where=where,
            text=text,
        ),
        general,
    )


def _spans_of_joined(joined: str, ends: np.ndarray) -> tuple[str, np.ndarray, np.ndarray]:
    """(text, begins, stops) of the cells joined by line breaks in `joined` (one past each
    one's end in `ends`)."""
    begins = np.empty_like(ends)
    begins[0] = 0
    begins[1:] = ends[:-1] + 1  # after the line break that ends the cell before
    return joined, begins, ends


def _row_numbers(numbers: Sequence[int], rows: np.ndarray) -> np.ndarray:
    """The row numbers of grid rows `rows` (a range's worked out, not listed: 0.05 s at 10^6)."""
    if isinstance(numbers, range):
        return rows * numbers.step + numbers.start
    return np.asarray(numbers, dtype=np.int64)[rows]


def _cell_spans(
    spans_of: list[tuple[str, np.ndarray, np.ndarray]], picked: np.ndarray
) -> CellTexts:
    """The cells of rows `picked` of these columns (each a text, and where each cell begins and
    ends in it), in claim order (row by row, then column by column), cut when asked from one
    text: the columns' own when they share it (cells of a file split from its bytes), else
    their texts joined."""
    texts = [text for text, _, _ in spans_of]
    shared = all(text is texts[0] for text in texts)
    base = 0
    starts, stops = [], []
    for text, begins, ends in spans_of:
        starts.append(begins[picked] + base)
        stops.append(ends[picked] + base)
        base += 0 if shared else len(text)
    return CellTexts(
        texts[0] if shared else "".join(texts),
        np.column_stack(starts).ravel(),
        np.column_stack(stops).ravel(),
        {},
    )


def _decimalsshown_decimals(text: list[str], value: np.ndarray) -> np.ndarray:
    """decimals_as_written for plain numbers: the digits after the point of '12.340' (3); none
    for '12'; a text with an exponent is left to decimals_as_written itself. Whole columns at
    once with numpy's string functions."""
    if not text:
        return np.zeros(0, dtype=np.int64)
    cells = np.array(text, dtype=np.str_)
    point = np.strings.find(cells, ".")
    out = np.where(point >= 0, np.strings.str_len(cells) - point - 1, -1).astype(np.int64)
    exponent = (np.strings.find(cells, "e") >= 0) | (np.strings.find(cells, "E") >= 0)
    for i in np.flatnonzero(exponent & (point >= 0)).tolist():
        shown = decimals_as_written(text[i], float(value[i]))
        out[i] = -1 if shown is None else shown
    return out


@dataclass(frozen=True)
class ReadRows:
    values: list[ClaimedValue]  # the claims the general reader took, one object each
    unmatched: list[UnmatchedLabel]
    columns: list[str]  # case names as written, in table order
    header_unit: str | None
    sign_conflicts: list[SignConflict]
    value_rows: list[int]  # the grid row of each of `values`
    bulk: BulkClaims | None = None  # the plain rows, read as columns
    layout_columns: tuple[ValueColumn, ...] = ()
    unknown_values: tuple[ClaimedValue, ...] = ()  # under labels the model does not have


def read_rows(
    grid: Grid,
    layout: Layout,
    matcher: LabelMatcher,
    problems: Problems,
    *,
    fast: bool,
    member_ids: MemberIndex,
) -> ReadRows:
    """Every data row of `grid` under `layout`; problems are added, never raised here.

    With `fast` and the model's `member_ids`, the plain rows of a wide table are read as whole
    columns (read_bulk) and only the others one by one."""
    reader = RowReader(grid, matcher, problems, layout)
    bulk = None
    wide = (
        fast
        and layout.case is None
        and layout.tc is None
        and layout.unit is None
        and layout.pair is None
        and not any(v.tc_index is not None for v in layout.columns)
    )
    # (decide_layout refused a load case with two columns before any row is read)
    if wide:
        bulk, general = read_bulk(reader, layout.start, len(grid.rows), member_ids)
        for r in general:
            reader.read_row(r)
    else:
        for r in range(layout.start, len(grid.rows)):
            reader.read_row(r)
    case_h = layout.case
    if reader.case_filter is not None and not reader.long_cases:
        problems.add(
            f"no rows for load case '{layout.case_filter}'; the table has "
            f"{', '.join(repr(c) for c in reader.all_cases)}."
            f"{did_you_mean(reader.case_filter, reader.all_cases)}",
            f"column '{case_h.text}'" if case_h is not None else None,
        )
    units = {v.unit for v in layout.columns}
    header_unit = units.pop() if len(units) == 1 and layout.unit is None else None
    columns = reader.long_cases if case_h is not None else [v.case or "" for v in layout.columns]
    return ReadRows(
        reader.values,
        reader.unmatched,
        columns,
        header_unit,
        reader.sign_conflicts(),
        reader.value_rows,
        bulk,
        tuple(layout.columns),
        tuple(reader.unknown_values),
    )


def assemble_claims(
    read: ReadRows, member_ids: MemberIndex, case_unit: Unit
) -> tuple[ClaimArrays, Callable[[], tuple[ClaimedValue, ...]] | tuple[ClaimedValue, ...]]:
    """The claims as columns in table order, and their per-claim objects (made on first use when
    the plain rows were read in bulk): the general reader's claims and the bulk ones merged by
    row."""
    general = read.values
    bulk = read.bulk
    n_general = len(general)
    slots = read.layout_columns
    value = np.fromiter((v.value for v in general), dtype=float, count=n_general)
    member = np.fromiter(
        (member_ids.get_loc(v.member) if v.member is not None else -1 for v in general),
        dtype=np.int64,
        count=n_general,
    )
    column_names = [v.column for v in general]
    unit_names = [v.unit for v in general]
    decimals = np.fromiter((shown_decimals(v.text, v.value) for v in general), np.int64, n_general)
    where: Sequence[str] = [v.where for v in general]
    text: Sequence[str] = [v.text for v in general]
    fixed = np.fromiter((v.sign_fixed for v in general), dtype=bool, count=n_general)
    label: Sequence[str] = [v.label for v in general]
    reaction = {i: v.reaction for i, v in enumerate(general) if v.reaction is not None}
    order = None
    ids: list[str] = member_ids.tolist()
    if bulk is not None:
        # Codes into lists of names met in either part, then renumbered by first use in the
        # merged order (as dict.fromkeys over the merged names would number them).
        name_list = list(dict.fromkeys(column_names + [v.case or "" for v in slots]))
        unit_list = list(dict.fromkeys(unit_names + [v.unit for v in slots]))
        name_at = {name: k for k, name in enumerate(name_list)}
        unit_at = {u: k for k, u in enumerate(unit_list)}
        slot_name = np.array([name_at[v.case or ""] for v in slots], dtype=np.int64)
        slot_unit = np.array([unit_at[v.unit] for v in slots], dtype=np.int64)
        name_code = np.concatenate(
            [np.array([name_at[c] for c in column_names], dtype=np.int64), slot_name[bulk.slot]]
        )
        unit_code = np.concatenate(
            [np.array([unit_at[u] for u in unit_names], dtype=np.int64), slot_unit[bulk.slot]]
        )
        n = n_general + bulk.value.size
        position = np.arange(n)  # where each claim of the two parts lands in table order
        if n_general:
            rows = np.concatenate([np.asarray(read.value_rows, dtype=np.int64), bulk.rows])
            order = np.argsort(rows, kind="stable")
            position[order] = np.arange(n)
            if isinstance(bulk.text, CellTexts):
                text = bulk.text.placed(position[n_general:], n, position[:n_general], text)
            else:
                all_text = list(text) + bulk.text
                text = [all_text[i] for i in order.tolist()]
        else:
            text = bulk.text  # the bulk rows alone: already in table order
        placing = position if n_general else None  # the bulk rows alone: in order
        value = _placed(np.concatenate([value, bulk.value]), placing)
        member = _placed(np.concatenate([member, bulk.member]), placing)
        decimals = _placed(np.concatenate([decimals, bulk.decimals]), placing)
        fixed = _placed(np.concatenate([fixed, np.zeros(bulk.value.size, dtype=bool)]), placing)
        names_code = _placed(name_code, placing)
        units_code = _placed(unit_code, placing)
        names, column = _first_use(names_code, name_list)
        units, unit = _first_use(units_code, unit_list)
        at_general = position[:n_general].tolist()
        if bulk.where is None:
            assert bulk.parts is not None
            numbers, slot = bulk.numbers, bulk.slot
            if n_general:
                numbers = np.zeros(n, dtype=np.int64)
                numbers[position[n_general:]] = bulk.numbers
                slot = np.zeros(n, dtype=np.int64)
                slot[position[n_general:]] = bulk.slot
            where = Places(
                _int_array(numbers),
                _int_array(slot),
                bulk.parts,
                dict(zip(at_general, where, strict=True)),
            )
        else:
            all_where = list(where) + bulk.where
            where = [all_where[i] for i in order.tolist()] if order is not None else all_where
        label = Labels(_int_array(member), ids, dict(zip(at_general, label, strict=True)))
        reaction = {at_general[i]: joint_axis for i, joint_axis in reaction.items()}
    else:
        names = tuple(dict.fromkeys(column_names))
        name_of = {name: k for k, name in enumerate(names)}
        units = tuple(dict.fromkeys(unit_names))
        unit_of = {u: k for k, u in enumerate(units)}
        column = np.array([name_of[c] for c in column_names], dtype=np.int64)
        unit = np.array([unit_of[u] for u in unit_names], dtype=np.int64)
    is_member = member >= 0
    resolutions = judge_resolutions(value, is_member, column, names, unit, units, text)
    arrays = ClaimArrays(
        value=value,
        sign_fixed=fixed,
        member=member,
        column=column,
        names=names,
        unit=unit,
        units=units,
        unit_factor=unit_factors(unit, units, case_unit),
        rounding=settle_rounding(value, decimals, is_member, column, names, resolutions),
        where=where,
        text=text,
        label=label,
        reaction=reaction,
        member_ids=ids,
        resolutions=tuple(resolutions),
    )
    if order is None and bulk is None:
        return arrays, tuple(general)
    return arrays, _LazyValues(arrays, order, general)


def _placed(values: np.ndarray, position: np.ndarray | None) -> np.ndarray:
    """`values` (the general reader's claims, then the bulk ones) put in table order (None: the
    bulk ones alone, in order already)."""
    if position is None:
        return values
    out = np.empty_like(values)
    out[position] = values
    return out


FEW_ITEMS = 16  # up to this many names or units, _first_use looks for each one in turn


def _first_use(codes: np.ndarray, items: list[Any]) -> tuple[tuple[Any, ...], np.ndarray]:
    """The items the codes use, in order of first use, and the codes renumbered into them."""
    if len(items) <= FEW_ITEMS:
        # A few names or units (the common table): one comparison per item finds where each is
        # first used, instead of sorting every code (0.15 s per 2x10^6 claims).
        first_of: dict[int, int] = {}
        for k in range(len(items)):
            hits = codes == k
            if hits.any():
                first_of[k] = int(hits.argmax())
        by_first = np.array(sorted(first_of, key=first_of.__getitem__), dtype=np.int64)
    else:
        used, first = np.unique(codes, return_index=True)
        by_first = used[np.argsort(first, kind="stable")]
    renumber = np.zeros(len(items), dtype=np.int64)
    renumber[by_first] = np.arange(by_first.size)
    return tuple(items[k] for k in by_first.tolist()), renumber[codes]


def _int_array(values: np.ndarray) -> array[int]:
    """A compact array of Python-int items (indexed without numpy's scalars)."""
    return compact_ints(values)


@dataclass(frozen=True)
class _LazyValues:
    """Makes the per-claim objects of a bulk-read table on first use: the general reader's own
    claims in place, the bulk ones from the columns. A plain object (not a closure) so that a
    claims table still pickles (the batch runner sends results between processes)."""

    arrays: ClaimArrays
    order: np.ndarray | None  # claim positions of the two parts merged; None: bulk claims only
    general: list[ClaimedValue]

    def __call__(self) -> tuple[ClaimedValue, ...]:
        arrays, general = self.arrays, self.general
        n_general = len(general)
        names, units, member_ids = arrays.names, arrays.units, arrays.member_ids
        value, member = arrays.value.tolist(), arrays.member.tolist()
        column, unit = arrays.column.tolist(), arrays.unit.tolist()
        out = []
        order = self.order.tolist() if self.order is not None else range(len(arrays))
        for k, i in enumerate(order):
            if i < n_general:
                out.append(general[i])
                continue
            mid = member_ids[member[k]]
            out.append(
                ClaimedValue(
                    mid,
                    mid,
                    None,
                    names[column[k]],
                    value[k],
                    False,
                    units[unit[k]],
                    arrays.where[k],
                    arrays.text[k],
                )
            )
        return tuple(out)
