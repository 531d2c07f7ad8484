"""Claim rows written apart from their table: a label and its force in one cell of a CSV row.

A row separated by another mark than the table's (';' in a ',' table), by spaces, or quoted
whole ('"M1,12.5"') reaches the reader as one cell (or a label cell with a force in it): read as
it stands, its label names nothing, or the row looks like a second header row, and the force
written in it is lost, so a wrong value there could never show. Such a row is refused on its
row (the header band leaves it to the row reader, which refuses it).
"""

from __future__ import annotations

from verify.io.claims.grid import FORCE_LIKE
from verify.io.claims.labels import LabelMatcher
from verify.io.claims.problems import quoted

OTHER_MARKS = (",", ";", "\t", "|")  # the CSV delimiters a row may be written with by mistake
SPACES = " "  # (a mark: the row's cells separated by runs of spaces)
LONGEST_CELL = 400  # longer text is no label and force (labels are at most 200 characters)
MOST_WORDS = 12  # a row of cells written with spaces has a few words; a longer text is a note
LABEL_WORDS = 4  # words a label separated by spaces may take ('U1 - U2', 'R L0 y')
_NAMED = ("member", "reaction")


def other_marks(delimiter: str, decimal_comma: bool) -> tuple[str, ...]:
    """The separators a row written apart may use: ',' is a decimal in a decimal-comma table."""
    marks = OTHER_MARKS[1:] if decimal_comma else OTHER_MARKS
    return tuple(m for m in marks if m != delimiter)


def written_apart(
    cell: str, delimiter: str, decimal_comma: bool, matcher: LabelMatcher
) -> str | None:
    """How `cell` holds a claim, separated by a mark other than the table's cells are: that
    mark, `delimiter` itself (only a quoted cell holds it: the row was written as one quoted
    cell), or SPACES; else None. A claim: a member or reaction label, then (past a load case
    name, as a long table writes it) a force; a running number may stand before the label. A
    cell naming a member whole is a label, however it is spelled ('U1 U2'); a label followed by
    words (a note: 'AC checked by JB', 'AC see note 2') is no claim."""
    if len(cell) > LONGEST_CELL or matcher.names(cell) in _NAMED:
        return None
    for mark in (*other_marks(delimiter, decimal_comma), delimiter):
        if mark in cell and _holds_claim([p.strip() for p in cell.split(mark)], 1, matcher):
            return mark
    words = cell.split()
    if len(words) <= MOST_WORDS and _holds_claim(words, LABEL_WORDS, matcher):
        return SPACES
    return None


def _holds_claim(pieces: list[str], label_pieces: int, matcher: LabelMatcher) -> bool:
    """Whether some piece (or up to `label_pieces` pieces joined by a space) names a member or
    reaction and the first piece after it that is not a load case name reads as a force."""
    force = [FORCE_LIKE.match(p) is not None for p in pieces]
    if not any(force):  # (most unknown labels: one look at each piece)
        return False
    cases = matcher.case_names
    n = len(pieces)
    after = [n] * (n + 1)  # after[i]: the first piece from i on that is no load case name
    for i in range(n - 1, -1, -1):
        after[i] = after[i + 1] if pieces[i].casefold() in cases else i
    for i in range(n - 1):
        for k in range(1, min(label_pieces, n - 1 - i) + 1):
            j = after[i + k]
            if j < n and force[j] and matcher.names(" ".join(pieces[i : i + k])) in _NAMED:
                return True
    return False


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
