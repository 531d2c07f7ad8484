"""Claim rows written apart from their table: a label and its force in one cell of a CSV row.

A row separated by another mark than the table's (';' in a ',' table), by spaces, or quoted
whole ('"M1,12.5"') reaches the reader as one cell (or a label cell with a force in it): read as
it stands, its label names nothing, or the row looks like a second header row, and the force
written in it is lost, so a wrong value there could never show. Such a row is refused on its
row (the header band leaves it to the row reader, which refuses it).
"""

from __future__ import annotations

from collections.abc import Callable

from verify.io.claims.grid import FORCE_LIKE
from verify.io.claims.problems import quoted

OTHER_MARKS = (",", ";", "\t", "|")  # the CSV delimiters a row may be written with by mistake
SPACES = " "  # (a mark: the row's cells separated by runs of spaces)
LONGEST_CELL = 400  # longer text is no label and force (labels are at most 200 characters)
LABEL_WORDS = 4  # words a label separated by spaces may take ('U1 - U2', 'R L0 y')


def other_marks(delimiter: str, decimal_comma: bool) -> tuple[str, ...]:
    """The separators a row written apart may use: ',' is a decimal in a decimal-comma table."""
    marks = OTHER_MARKS[1:] if decimal_comma else OTHER_MARKS
    return tuple(m for m in marks if m != delimiter)


def written_apart(
    cell: str, delimiter: str, decimal_comma: bool, names: Callable[[str], str]
) -> str | None:
    """How `cell` holds a member or reaction label and the force written after it, separated
    by a mark other than the table's cells are: that mark, `delimiter` itself (only a quoted
    cell holds it: the row was written as one quoted cell), or SPACES; else None. A cell naming
    a member whole is a label, however it is spelled ('U1 U2'); a label followed by words (a
    note: 'AC checked by JB') is no claim."""
    if len(cell) > LONGEST_CELL or names(cell) in ("member", "reaction"):
        return None
    for mark in (*other_marks(delimiter, decimal_comma), delimiter):
        if mark in cell:
            pieces = [p.strip() for p in cell.split(mark)]
            if _label_then_force(pieces[:1], pieces[1:2], names):
                return mark
    words = cell.split()
    for k in range(1, min(len(words), LABEL_WORDS + 1)):
        if _label_then_force(words[:k], words[k : k + 1], names):
            return SPACES
    return None


def _label_then_force(label: list[str], after: list[str], names: Callable[[str], str]) -> bool:
    return (
        bool(after)
        and FORCE_LIKE.match(after[0]) is not None
        and names(" ".join(label)) in ("member", "reaction")
    )


def apart_message(mark: str, delimiter: str, cell: str) -> str:
    """The one message for a row written apart with `mark` (written_apart's answer)."""
    table = quoted(delimiter)
    expected = f"so its values cannot be read; expected its cells separated by '{table}' like the "
    if mark == delimiter:
        return (
            f"this row is written as one quoted cell ('{quoted(cell)}') where the table's cells "
            f"are separated by '{table}' outside quotes, {expected}header's"
        )
    how = "spaces" if mark == SPACES else f"'{quoted(mark)}'"
    return (
        f"this row is separated by {how} where the table's cells are separated by '{table}', "
        f"{expected}header's"
    )
