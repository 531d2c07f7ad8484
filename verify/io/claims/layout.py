"""Layout: which rows form the header and what each column holds.

Layouts (DESIGN.md section 4), found from the header:

- **wide**: a member column and one column per load case or combination, the header being the
  case name, optionally with a unit: ``Member, dead (kN), ULS-1 [kN]``;
- **long**: member, case and force columns, one row per member and case;
- **single**: member and force columns only; the load case comes from ``case=`` or, when the
  model has exactly one load case, is that one.

A row of units under the header (``kN``) and a T/C column beside a force column are also
understood. The column -> load-case mapping is settled here, once.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, replace

from verify.errors import did_you_mean
from verify.io.claims.band import SCAN_ROWS, find_band, names_member
from verify.io.claims.grid import Grid, Unusable, blank, cell_text
from verify.io.claims.headers import (
    CASE_HEADERS,
    FORCE_HEADERS,
    MEMBER_HEADERS,
    TC_HEADERS,
    UNIT_HEADERS,
    Header,
    header_key,
    parse_header,
    stated_units,
    unit_alone,
    whole,
)
from verify.io.claims.labels import LabelMatcher
from verify.io.claims.problems import Problems
from verify.model import Model

HEADER_SEARCH_ROWS = 20  # rows scanned for a header above which titles may sit
# Headings of a running number or a second label beside the member column ('Bar No.', 'No.',
# 'Item', '#', 'Mark'): never a load case, whatever the numbers under them.
_NUMBERING = re.compile(
    r"(?:(?:bar|member|mbr|memb|element|elem|item|row|line|seq|serial|s)\s*)?"
    r"(?:no|nr|num|number|#|index|idx|ref|item|seq)"
)


def _names_any_member(grid: Grid, matcher: LabelMatcher, column: int, start: int) -> bool:
    """Whether any of the first data cells of `column` names one of the model's members."""
    stop = min(len(grid.rows), start + SCAN_ROWS)
    return any(names_member(matcher, grid.cell(r, column)) for r in range(start, stop))


def _numbering(key: str) -> bool:
    return key in MEMBER_HEADERS or _NUMBERING.fullmatch(key) is not None


# Header units that are not forces: the column is descriptive (a length, stress, area, ratio).


@dataclass(frozen=True)
class Options:
    member_column: str | None
    case_column: str | None
    force_column: str | None
    case: str | None


def _find_header_row(grid: Grid, options: Options) -> int | None:
    seen = 0
    first: int | None = None
    for r, row in enumerate(grid.rows):
        if all(blank(c) for c in row):
            continue
        if first is None:
            first = r
        for cell in row:
            text = cell_text(cell)
            if options.member_column is not None:
                if text.casefold() == options.member_column.casefold():
                    return r
            elif header_key(text) in MEMBER_HEADERS:
                return r
        seen += 1
        if seen >= HEADER_SEARCH_ROWS:
            break
    return first


def _pick_column(
    role: str,
    spellings: Sequence[str],
    option: str | None,
    headers: list[Header],
    taken: set[int],
    load_names: set[str],
    grid: Grid,
    header_r: int,
    problems: Problems,
) -> Header | None:
    if option is not None:
        found = [h for h in headers if option.casefold() in (h.text.casefold(), h.name.casefold())]
        if len(found) == 1:
            return found[0]
        if not found:
            written = [h.text for h in headers if h.text]
            problems.add(
                f"no column named '{option}' for the {role}; the header row has "
                f"{', '.join(repr(t) for t in written)}.{did_you_mean(option, written)}",
                grid.where(header_r),
            )
        else:
            problems.add(
                f"{len(found)} columns are named '{option}'; the {role} column must be unique",
                grid.where(header_r),
            )
        return None
    for spelling in spellings:
        found = [
            h
            for h in headers
            if h.key == spelling and h.index not in taken and h.name.casefold() not in load_names
        ]
        if len(found) == 1:
            return found[0]
        if len(found) > 1:
            cols = " and ".join(f"'{h.text}' ({grid.where(header_r, h.index)})" for h in found)
            problems.add(f"two {role} columns, {cols}; name the one to use")
            return None
    return None


# -- the layout decided -------------------------------------------------------------------------
@dataclass(frozen=True)
class ValueColumn:
    index: int
    header: str  # as written, for messages
    case: str | None  # case name; None in long form (taken from the case cell)
    unit: str | None
    tc_index: int | None = None  # a T/C column beside this one, settling its signs


@dataclass(frozen=True)
class Layout:
    """What each column of a grid holds and where the data rows start."""

    header_row: int
    start: int  # first data row
    member: Header
    case: Header | None
    tc: Header | None
    unit: Header | None
    columns: list[ValueColumn]
    case_filter: str | None  # the case= option, for long tables
    pair: tuple[int, int] | None = None  # from/to joint columns that name each row's member


def decide_layout(
    grid: Grid, model: Model, matcher: LabelMatcher, options: Options, problems: Problems
) -> Layout | None:
    """The layout of `grid`, or None with the reasons added to `problems`."""
    empty = None
    band = find_band(grid, matcher) if options.member_column is None else None
    if band is not None:
        header_r = band.bottom
        headers = band.headers
    else:
        found_r = _find_header_row(grid, options)
        if found_r is None:
            problems.add(
                "the table is empty; expected a header row such as 'Member', 'dead (kN)' and one "
                "row per member"
            )
            return empty
        header_r = found_r
        headers = [parse_header(c, cell) for c, cell in enumerate(grid.rows[header_r])]
    for h in headers:
        cell = grid.cell(header_r, h.index)
        if isinstance(cell, Unusable):
            problems.add(f"the header cell {cell.reason}", grid.where(header_r, h.index))
    load_names = {n.casefold() for n in model.load_names}
    headers = [whole(h, load_names) for h in headers]
    taken: set[int] = set()
    args = (headers, taken, load_names, grid, header_r, problems)
    member_h = _pick_column("member", MEMBER_HEADERS, options.member_column, *args)
    pair: tuple[int, int] | None = None
    if (
        member_h is not None
        and band is not None
        and band.member_index is not None
        and band.member_index != member_h.index
        and not _names_any_member(grid, matcher, member_h.index, band.bottom + 1)
    ):
        # A label heading ('Mark', 'ID') over running numbers, beside a column whose cells name
        # the members: the cells win.
        member_h = None
    if member_h is None and band is not None:
        # The heading is unfamiliar ('Member (joints)', 'Bar No.') but the cells name members.
        if band.member_index is not None:
            member_h = headers[band.member_index]
        elif band.pair is not None:
            pair = band.pair
            member_h = headers[pair[0]]
            taken.add(pair[1])
    elif (
        member_h is not None
        and band is not None
        and band.pair is not None
        and band.member_index is None
    ):
        # A numbered member column (1...n) beside from/to joints: the joints name the member.
        pair = band.pair
        taken.update(pair)
        member_h = headers[pair[0]]
    if member_h is None and options.member_column is None and headers and not headers[0].text:
        member_h = headers[0]  # an unheaded first column of labels is the usual layout
    if member_h is None:
        if options.member_column is None:
            written = ", ".join(f"'{h.text}'" for h in headers if h.text) or "nothing"
            problems.add(
                "no usable columns: no member column found; expected a header such as 'Member', "
                "'Element', 'Bar', 'Label' or 'ID' (or name the column with --member-column); "
                f"the header row has {written}",
                grid.where(header_r),
            )
        return empty
    taken.add(member_h.index)
    case_h = _pick_column("load case", CASE_HEADERS, options.case_column, *args)
    if case_h is not None:
        taken.add(case_h.index)
    force_h = _pick_column("force", FORCE_HEADERS, options.force_column, *args)
    if force_h is not None:
        taken.add(force_h.index)
    tc_all = [h for h in headers if h.key in TC_HEADERS and h.index not in taken]
    taken.update(h.index for h in tc_all)
    tc_h = None
    if force_h is not None and len(tc_all) > 1:
        both = " and ".join(f"'{h.text}' ({grid.where(header_r, h.index)})" for h in tc_all)
        problems.add(f"two T/C columns beside one force column, {both}; keep one")
    elif force_h is not None and tc_all:
        tc_h = tc_all[0]
    unit_h = _pick_column("unit", UNIT_HEADERS, None, *args)
    if unit_h is not None:
        taken.add(unit_h.index)
    if problems:
        return empty

    for h in headers:
        if h.unit_error and (h.index not in taken or h is force_h):
            problems.add(f"column '{h.text}': {h.unit_error}", grid.where(header_r, h.index))

    # Decide the layout and the value columns.
    fixed_case: str | None = None
    if case_h is not None and force_h is None:
        problems.add(
            f"a load case column ('{case_h.text}') needs a force column beside it, e.g. 'Force "
            "(kN)'; or give one column per load case instead",
            grid.where(header_r),
        )
        return empty
    if force_h is not None and case_h is None:
        fixed_case = _single_case(model, options.case, grid, header_r, force_h, problems)
        if fixed_case is None:
            return empty

    if force_h is not None:
        value_columns = [ValueColumn(force_h.index, force_h.text, fixed_case, force_h.unit)]
        if case_h is None:
            for h in headers:
                if h.index not in taken and h.name.casefold() in load_names:
                    problems.add(
                        f"column '{h.text}' is named like a load case, beside the force column "
                        f"'{force_h.text}'; use one layout (one column per load case, or a force "
                        "column with a case column) or name the force column with --force-column",
                        grid.where(header_r, h.index),
                    )
            if problems:
                return empty
    else:
        value_columns = []
        for h in headers:
            if (
                h.other_unit is not None
                and h.index not in taken
                and h.other_name.casefold() in load_names
            ):
                # Named like a load case but not in a force unit: skipping it would pass its
                # claims over in silence.
                problems.add(
                    f"column '{h.text}' is named like load case '{h.other_name}', but "
                    f"'{h.other_unit}' is not a force unit; give the forces in a force unit such "
                    "as kN, N, kip or lbf",
                    grid.where(header_r, h.index),
                )
            if h.index in taken or h.descriptive or not h.text:
                continue
            if _numbering(h.key) and h.name.casefold() not in load_names:
                continue
            value_columns.append(ValueColumn(h.index, h.text, h.name, h.unit))
        if problems:
            return empty
        value_columns = _pair_tc_columns(value_columns, tc_all, grid, header_r, problems)
        if options.case is not None:
            chosen = [
                v
                for v in value_columns
                if v.case is not None and v.case.casefold() == options.case.casefold()
            ]
            if not chosen:
                cols = [v.case or "" for v in value_columns]
                problems.add(
                    f"no column for load case '{options.case}'; the table has "
                    f"{', '.join(repr(c) for c in cols) or 'none'}."
                    f"{did_you_mean(options.case, cols)}",
                    grid.where(header_r),
                )
                return empty
            value_columns = chosen
        if not value_columns:
            skipped = [
                f"'{h.text}' ('{h.other_unit}' is not a force unit)"
                for h in headers
                if h.other_unit is not None and h.index not in taken
            ]
            problems.add(
                f"no usable columns: besides the member column '{member_h.text}' there is no force "
                "column; expected one column per load case (e.g. 'dead (kN)') or a force column "
                "with a case column" + (f"; skipped {', '.join(skipped)}" if skipped else ""),
                grid.where(header_r),
            )
            return empty
        seen_names: dict[str, ValueColumn] = {}
        for v in value_columns:
            assert v.case is not None
            other = seen_names.get(v.case.casefold())
            if other is not None:
                problems.add(
                    f"load case '{v.case}' has two columns, '{other.header}' "
                    f"({grid.where(header_r, other.index)}) and "
                    f"'{v.header}'; keep one column per load case",
                    grid.where(header_r, v.index),
                )
            seen_names[v.case.casefold()] = v

    used = (
        {member_h.index}
        | set(pair or ())
        | {h.index for h in tc_all}
        | {v.index for v in value_columns}
        | {h.index for h in (case_h, tc_h, unit_h) if h is not None}
    )
    start = header_r + 1
    if band is None:
        start = _apply_units_row(grid, start, member_h.index, value_columns, problems)
    if unit_h is None:  # a unit column gives each row's unit: a title's is not read
        value_columns = _apply_stated_unit(
            grid, band.top if band is not None else header_r, value_columns, problems
        )
    _check_unheaded_data(grid, start, headers, used, problems)
    if problems:
        return empty
    if all(all(blank(c) for c in grid.rows[r]) for r in range(start, len(grid.rows))):
        problems.add("the table has a header but no rows of claims", grid.where(header_r))
        return empty
    return Layout(
        header_r, start, member_h, case_h, tc_h, unit_h, value_columns, options.case, pair
    )


def _pair_tc_columns(
    columns: list[ValueColumn], tc_all: list[Header], grid: Grid, header_r: int, problems: Problems
) -> list[ValueColumn]:
    """Each T/C column settles the signs of the force column on its left ('dead | T/C | snow |
    T/C')."""
    out = list(columns)
    for tc in tc_all:
        left = [k for k, v in enumerate(out) if v.index < tc.index]
        if not left:
            problems.add(
                f"the T/C column '{tc.text}' has no force column on its left",
                grid.where(header_r, tc.index),
            )
            continue
        k = left[-1]
        if out[k].tc_index is not None:
            problems.add(
                f"the force column '{out[k].header}' has two T/C columns on its right; keep one",
                grid.where(header_r, tc.index),
            )
            continue
        out[k] = replace(out[k], tc_index=tc.index)
    return out


def _single_case(
    model: Model,
    case: str | None,
    grid: Grid,
    header_r: int,
    force_h: Header,
    problems: Problems,
) -> str | None:
    names = model.load_names
    if case is None:
        if len(names) == 1:
            return names[0]
        problems.add(
            f"the table has one force column ('{force_h.text}') and no load case column; say which "
            "load case or combination it holds with --case NAME (the model has "
            f"{', '.join(repr(n) for n in names)})",
            grid.where(header_r),
        )
        return None
    if case in names:
        return case
    folded = [n for n in names if n.casefold() == case.casefold()]
    if len(folded) == 1:
        return folded[0]
    problems.add(
        f"load case '{case}' is not a load case or combination of the model; it has "
        f"{', '.join(repr(n) for n in names)}.{did_you_mean(case, names)}"
    )
    return None


def _apply_units_row(
    grid: Grid, start: int, member_index: int, columns: list[ValueColumn], problems: Problems
) -> int:
    """Detect a row of units right under the header; record them on the columns. Returns the first
    data row."""
    if start >= len(grid.rows):
        return start
    member_cell = grid.cell(start, member_index)
    cells = [grid.cell(start, v.index) for v in columns]
    if not (
        blank(member_cell) or unit_alone(member_cell) or cell_text(member_cell) in ("-", "[-]")
    ):
        return start
    if all(blank(c) for c in cells) or not all(blank(c) or unit_alone(c) for c in cells):
        return start
    for k, (v, c) in enumerate(zip(columns, cells, strict=True)):
        unit = unit_alone(c)
        if unit is None:
            continue
        if v.unit is not None and v.unit != unit:
            problems.add(
                f"the header says {v.unit} but the units row says {unit}",
                grid.where(start, v.index, v.header),
            )
            continue
        columns[k] = ValueColumn(v.index, v.header, v.case, unit)
    return start + 1


def _apply_stated_unit(
    grid: Grid, top: int, columns: list[ValueColumn], problems: Problems
) -> list[ValueColumn]:
    """Value columns whose heading gives no unit take the force unit the lines above the table
    state ('Member forces (kips)', 'all forces in kN'); a heading's own unit stands. Lines that
    state two units leave nothing to choose between: a problem, never a guess."""
    if all(v.unit is not None for v in columns):
        return columns
    stated: dict[str, int] = {}  # unit -> the row stating it first
    for r in range(max(0, top - HEADER_SEARCH_ROWS), top):
        for cell in grid.rows[r]:
            if isinstance(cell, str):
                for unit in stated_units(cell):
                    stated.setdefault(unit, r)
    if len(stated) > 1:
        places = ", ".join(f"{unit} ({grid.row_ref(r)})" for unit, r in stated.items())
        problems.add(
            f"the lines above the table state more than one force unit ({places}) and the "
            "heading gives none; state the claims' unit in the heading, e.g. 'dead (kN)'",
            grid.where(top),
        )
        return columns
    if not stated:
        return columns
    unit = next(iter(stated))
    return [v if v.unit is not None else replace(v, unit=unit) for v in columns]


def _check_unheaded_data(
    grid: Grid, start: int, headers: list[Header], used: set[int], problems: Problems
) -> None:
    headed = {h.index for h in headers if h.text}
    reported: set[int] = set()
    hint = (
        " (a decimal comma in a comma-separated file splits a number in two: quote such values "
        "or separate the fields with ';')"
        if grid.delimiter == ","
        else ""
    )
    # A row no longer than the first column without a header or use has nothing to report (the
    # common row of a table: each cell under a heading), so only longer rows are looked through.
    first_free = min(set(range(len(headed) + len(used) + 1)) - headed - used)
    rows = grid.rows
    for r in grid.rows_longer_than(start, first_free):
        for c, cell in enumerate(rows[r]):
            if c in headed or c in used or c in reported or blank(cell):
                continue
            reported.add(c)
            problems.add(
                f"column {c + 1} has values but no header; give it a load case name or remove "
                f"it{hint}",
                grid.where(r, c),
            )
