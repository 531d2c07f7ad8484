"""Header band: where the header sits and what each column's heading says, found from content.

A consultant's table often has titles and notes above it, a header of several rows (a group
cell such as "Axial force (kN)" merged over the load-case columns, a row of units) and a member
column whose heading is unfamiliar ("Member (joints)", "Bar No.", "Mem."). Instead of trusting
the header words, the band is found from the data: the column whose cells name the model's
members (or two columns of joints, from/to) marks the data rows; the non-blank rows just above
the first of them are the header. A merged cell keeps its text in its first column only, so a
group cell is carried to the right over the columns it spans.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

from verify.io.claims.apart import written_apart
from verify.io.claims.grid import Cell, Grid, blank, cell_text
from verify.io.claims.headers import (
    Header,
    header_key,
    other_unit_alone,
    parse_header,
    unit_alone,
)
from verify.io.claims.labels import LabelMatcher
from verify.io.values import plain_number

SCAN_ROWS = 2_000  # rows looked at to find the member column; a table shows itself long before
MAX_HEADER_ROWS = 4  # rows a header may span (group, case names, units, a second group)
TITLE_CHARS = 40  # a lone cell this long above the header is a title, not a group heading
# Heading pairs of joint columns that name a member by its ends.
PAIR_HEADERS = (
    ("from", "to"),
    ("start", "end"),
    ("i", "j"),
    ("node i", "node j"),
    ("joint i", "joint j"),
    ("start joint", "end joint"),
    ("start node", "end node"),
    ("from joint", "to joint"),
    ("from node", "to node"),
    ("end 1", "end 2"),
    ("node 1", "node 2"),
    ("joint 1", "joint 2"),
)


@dataclass(frozen=True)
class Band:
    top: int
    bottom: int  # the last header row; data rows follow it
    headers: list[Header]  # one per column, composed from the band's rows
    member_index: int | None  # the column whose cells name members, when one does
    pair: tuple[int, int] | None  # from/to joint columns naming members, when they do better
    unit_rows: tuple[int, ...]  # band rows holding only units


def holds_number(cell: Cell) -> bool:
    """Whether a cell holds a number (signed, bracketed, with a T/C letter): no heading does."""
    if isinstance(cell, float):
        return True
    if not isinstance(cell, str):
        return False
    head = cell.strip().lstrip("(+-\u2212").split(" ")[0].rstrip(")TC").replace(",", "")
    return bool(head) and plain_number(head) is not None


def _written_apart(grid: Grid, matcher: LabelMatcher, r: int, label_at: int) -> bool:
    """Whether row r of a CSV table is a claim written apart (apart.py) in its label cell, or in
    its first cell when the row is too short to reach the label column."""
    if grid.delimiter is None:
        return False
    row = grid.rows[r]
    cell = row[label_at] if label_at < len(row) else next((c for c in row if not blank(c)), None)
    text = cell_text(cell)
    return bool(text) and (
        written_apart(text, grid.delimiter, grid.decimal_comma, matcher) is not None
    )


def names_member(matcher: LabelMatcher, cell: Cell) -> bool:
    """Whether the cell's text names one of the model's members (or a reaction)."""
    text = cell_text(cell)
    return bool(text) and matcher.names(text) in ("member", "reaction")


def _pair_columns(
    grid: Grid, matcher: LabelMatcher, bottom_guess: int | None
) -> tuple[tuple[int, int], int, int] | None:
    """From/to columns by their headings in the first rows, scored by rows naming members."""
    best: tuple[tuple[int, int], int, int] | None = None
    rows = grid.rows[:SCAN_ROWS]
    for r, row in enumerate(rows[:40]):
        keys = [header_key(cell_text(c)) if isinstance(c, str) else "" for c in row]
        for first, second in PAIR_HEADERS:
            if first in keys and second in keys:
                a, b = keys.index(first), keys.index(second)
                hits = [
                    k
                    for k in range(r + 1, len(rows))
                    if cell_text(grid.cell(k, a))
                    and cell_text(grid.cell(k, b))
                    and matcher.names(f"{cell_text(grid.cell(k, a))}-{cell_text(grid.cell(k, b))}")
                    == "member"
                ]
                if hits and (best is None or len(hits) > best[1]):
                    best = ((a, b), len(hits), hits[0])
    return best


def find_band(grid: Grid, matcher: LabelMatcher) -> Band | None:
    """The header band found from content, or None when no column names the model's members."""
    counts: dict[int, int] = {}
    first_row: dict[int, int] = {}
    for r, row in enumerate(grid.rows[:SCAN_ROWS]):
        for c, cell in enumerate(row):
            if isinstance(cell, str) and names_member(matcher, cell):
                counts[c] = counts.get(c, 0) + 1
                first_row.setdefault(c, r)
    member_index = max(counts, key=lambda c: (counts[c], -c)) if counts else None
    pair = _pair_columns(grid, matcher, None)
    use_pair = pair is not None and (member_index is None or pair[1] > counts[member_index])
    if use_pair:
        assert pair is not None
        first_data = pair[2]
    elif member_index is not None:
        first_data = first_row[member_index]
    else:
        return None
    label_at = pair[0][0] if use_pair and pair is not None else member_index
    assert label_at is not None
    # The header's last row: the nearest row above the first member row that holds no numbers
    # (rows in between with numbers are data whose labels the model does not know, or a claim
    # written apart, 'M1;12.5': left to the row reader, which refuses it).
    bottom = first_data - 1
    while bottom >= 0 and (
        all(blank(c) for c in grid.rows[bottom])
        or any(holds_number(c) for k, c in enumerate(grid.rows[bottom]) if k != label_at)
        or _written_apart(grid, matcher, bottom, label_at)
    ):
        bottom -= 1
    if bottom < 0:
        return None
    top = bottom
    while top - 1 >= 0 and bottom - top + 1 < MAX_HEADER_ROWS:
        above = grid.rows[top - 1]
        filled = [(k, c) for k, c in enumerate(above) if not blank(c)]
        if not filled or any(holds_number(c) for _, c in filled):
            break
        if len(filled) == 1 and (
            filled[0][0] <= label_at or len(cell_text(filled[0][1])) > TITLE_CHARS
        ):
            break  # a title over the label column, or a sentence: not part of the header
        top -= 1
    headers, unit_rows = _compose(grid, top, bottom, label_at)
    return Band(
        top,
        bottom,
        headers,
        None if use_pair else member_index,
        pair[0] if use_pair and pair else None,
        unit_rows,
    )


def _compose(
    grid: Grid, top: int, bottom: int, label_at: int
) -> tuple[list[Header], tuple[int, ...]]:
    width = max(len(grid.rows[r]) for r in range(top, bottom + 1))
    # A row of units only ('', 'kN', 'kN') — never the header's only row, where 'N' is a heading.
    unit_rows = tuple(
        r
        for r in range(top, bottom + 1)
        if bottom > top
        and any(not blank(c) for c in grid.rows[r])
        and all(blank(c) or unit_alone(c) for c in grid.rows[r])
    )
    names: list[Cell] = [None] * width
    units: list[list[tuple[int, str]]] = [[] for _ in range(width)]  # (row, unit) per column
    for r in range(top, bottom + 1):
        row = grid.rows[r]
        carried: Cell = None
        above = list(names)  # each column's heading from the rows above this one
        carried_under: Cell = None  # the heading above the carried cell's own column
        for c in range(width):
            cell = row[c] if c < len(row) else None
            if (
                r < bottom
                and blank(cell)
                and c > label_at
                and carried is not None
                and above[c] == carried_under
            ):
                cell = carried  # a merged group cell spans to the right, within its group
            elif r < bottom:
                carried = cell if not blank(cell) and c > label_at else None
                carried_under = above[c]
            if blank(cell):
                continue
            unit = unit_alone(cell) if r in unit_rows or _unit_under(cell, names[c]) else None
            if unit is None and r > top and not blank(names[c]) and other_unit_alone(cell):
                continue  # 'mm' under 'Length': the heading above names the column
            if unit is not None:
                units[c].append((r, unit))
                continue
            parsed = parse_header(c, cell)
            if parsed.unit is not None:
                units[c].append((r, parsed.unit))
            names[c] = (
                cell  # the lowest heading names the column (case names sit under their group)
            )
    headers = []
    for c in range(width):
        header = parse_header(c, names[c])
        found = dict.fromkeys(u for _, u in units[c])
        if header.unit is None and len(found) == 1:
            header = replace(header, unit=next(iter(found)))
        elif len(found) > 1:
            header = replace(
                header, unit_error=f"its heading rows give different units ({', '.join(found)})"
            )
        headers.append(header)
    return headers, unit_rows


def _unit_under(cell: Cell, above: Cell) -> bool:
    """Whether a cell of a header row that also holds other words ('', '(kips)', 'T/C') gives its
    column's unit: written in brackets, or under a heading of its own ('Axial force' above
    'kips'). A bare 'N' or 'kN' heading a column from the band's top stays a name."""
    text = cell_text(cell).strip()
    # A bare 'N' under a heading may be the normal force (a name): only in brackets a unit.
    return (text[:1] in "([" and text[-1:] in ")]") or (not blank(above) and len(text) > 1)
