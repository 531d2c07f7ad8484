"""Rows: data cells -> claimed values, each keeping its cell as written and its location."""

from __future__ import annotations

from dataclasses import dataclass

from verify.errors import did_you_mean
from verify.io.claims.grid import Grid, Unusable, blank, cell_text
from verify.io.claims.labels import LabelMatcher, Match
from verify.io.claims.layout import Layout, ValueColumn
from verify.io.claims.problems import Problems, quoted
from verify.io.claims.table import ClaimedValue, SignConflict, UnmatchedLabel
from verify.io.values import is_nan_text, plain_number, read_force_cell
from verify.units import Dimension, lookup_unit

MAX_NAME_CHARS = 100  # member labels and case names; longer text is a note, not a name


def refuse_name(text: str, what: str) -> str | None:
    """Why `text` cannot be a label or case name (too long, control characters), else None.

    Checked before any matching: the label patterns must never run over an 80 KB cell, and a
    control character would reach the terminal through every finding that quotes the label."""
    if len(text) > MAX_NAME_CHARS:
        return (
            f"the {what} '{quoted(text)}' is {len(text):,} characters long (limit {MAX_NAME_CHARS}); "
            "a label names one member or reaction"
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
        self.header_row = layout.header_row
        self.pair = layout.pair

    def read_row(self, r: int) -> None:
        grid = self.grid
        row = grid.rows[r]
        if all(blank(c) for c in row):
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
        if match.kind == "unknown" and is_nan_text(label):
            self.problems.add(
                f"the member label '{quoted(label)}' is a missing value or spreadsheet error, not a label",
                where_label,
            )
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

    def read_plain_rows(self, start: int, stop: int) -> None:
        """read_row for every row of a wide table (no case, T/C or unit column), taking the
        common row (a label naming one member, plain numbers not yet claimed) directly and
        handing any other row to read_row. Same claims, same order: a 10^5-member table spent
        most of its reading time in read_row's general checks."""
        grid = self.grid
        rows = grid.rows
        label_at = self.member_h.index
        columns = [
            (v.index, v.case or "", (v.case or "").casefold(), v.unit, v.header)
            for v in self.columns
        ]
        match = self.matcher.match
        claimed, values = self._claimed, self.values
        decimal_comma = grid.decimal_comma
        for r in range(start, stop):
            row = rows[r]
            cell_label = row[label_at] if label_at < len(row) else None
            label = cell_label if isinstance(cell_label, str) else ""
            found = match(label) if label else None
            if found is None or found.kind != "member" or found.member is None:
                self.read_row(r)
                continue
            member = found.member
            cells = []
            for index, case, folded, unit, header in columns:
                cell = row[index] if index < len(row) else None
                if cell is None:
                    continue
                number = (
                    cell
                    if type(cell) is float
                    else (
                        plain_number(cell, decimal_comma=decimal_comma)
                        if type(cell) is str
                        else None
                    )
                )
                if number is None:
                    break  # anything but a plain number: the general reader words it
                value = number
                if (member, folded) in claimed:
                    break
                cells.append((index, case, folded, unit, header, value, cell))
            else:
                for index, case, folded, unit, header, value, cell in cells:
                    claimed[(member, folded)] = (r, label)
                    values.append(
                        ClaimedValue(
                            label,
                            member,
                            None,
                            case,
                            value + 0.0,
                            False,
                            unit,
                            grid.where(r, index, header),
                            cell_text(cell),
                        )
                    )
                continue
            self.read_row(r)

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
                f"the load case '{quoted(name)}' is a missing value or spreadsheet error, not a case name",
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
                    f"force '{quoted(cell_text(cell))}' is in {unit} but its column or row says {source_unit}",
                    where,
                )
                return
            unit = source_unit
        if match.kind == "reaction" and sign_fixed:
            self.problems.add(
                f"'{label}' is a reaction, which is neither tension nor compression; write a signed number",
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
            what = {
                "member": f"member '{match.member}'",
                "reaction": f"reaction '{match.reaction_label}'",
            }.get(match.kind, f"label '{label}'")
            case_text = f" for '{case_name}'" if case_name else ""
            self.problems.add(
                f"duplicate claim: {what}{case_text} is given twice, in {grid.row_ref(first_r)} (as '{first_label}') and "
                f"{grid.row_ref(r)} (as '{label}'); keep one row per member and load case",
                where,
            )
            return
        self._claimed[key] = (r, label)
        if minus_with_letter and match.kind == "member":
            self.minus_letters.append((len(self.values), "T" if value > 0 else "C"))
        if match.kind in ("member", "reaction"):
            # "+ 0.0" turns the -0.0 of "0 C" into 0.0.
            self.values.append(
                ClaimedValue(
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
            )


@dataclass(frozen=True)
class ReadRows:
    values: list[ClaimedValue]
    unmatched: list[UnmatchedLabel]
    columns: list[str]  # case names as written, in table order
    header_unit: str | None
    sign_conflicts: list[SignConflict]


def read_rows(
    grid: Grid, layout: Layout, matcher: LabelMatcher, problems: Problems, *, fast: bool
) -> ReadRows:
    """Every data row of `grid` under `layout`; problems are added, never raised here."""
    reader = RowReader(grid, matcher, problems, layout)
    if (
        fast
        and layout.case is None
        and layout.tc is None
        and layout.unit is None
        and layout.pair is None
        and not any(v.tc_index is not None for v in layout.columns)
    ):
        reader.read_plain_rows(layout.start, len(grid.rows))
    else:
        for r in range(layout.start, len(grid.rows)):
            reader.read_row(r)
    case_h = layout.case
    if reader.case_filter is not None and not reader.long_cases:
        problems.add(
            f"no rows for load case '{layout.case_filter}'; the table has {', '.join(repr(c) for c in reader.all_cases)}."
            f"{did_you_mean(reader.case_filter, reader.all_cases)}",
            f"column '{case_h.text}'" if case_h is not None else None,
        )
    units = {v.unit for v in layout.columns}
    header_unit = units.pop() if len(units) == 1 and layout.unit is None else None
    columns = reader.long_cases if case_h is not None else [v.case or "" for v in layout.columns]
    return ReadRows(reader.values, reader.unmatched, columns, header_unit, reader.sign_conflicts())
