"""Which sheet of a workbook holds the claims: the one whose rows name the model's members.

A workbook usually carries a cover sheet, a loads sheet and the member forces. Without --sheet,
a sheet qualifies when some row names a member of the model (by id or joint pair) beside a
number; the reader asks only when two or more sheets qualify, naming them.
"""

from __future__ import annotations

from verify.io.claims.band import SCAN_ROWS
from verify.io.claims.grid import Grid, cell_text
from verify.io.claims.labels import LabelMatcher
from verify.io.claims.problems import Problems
from verify.io.values import plain_number


def member_rows(grid: Grid, matcher: LabelMatcher) -> int:
    """Rows (of the first SCAN_ROWS) holding a member label and, elsewhere, a number."""
    count = 0
    for row in grid.rows[:SCAN_ROWS]:
        texts = [cell_text(c) for c in row]
        named = [k for k, t in enumerate(texts) if t and matcher.names(t) == "member"]
        if not named:
            continue
        numbers = [
            k
            for k, c in enumerate(row)
            if k not in named
            and (isinstance(c, float) or (isinstance(c, str) and _numeric_start(c)))
        ]
        if numbers:
            count += 1
    return count


def _numeric_start(text: str) -> bool:
    """'12.4', '12.4 C', '(5.0)', '-3 kN': a cell that starts like a force."""
    head = text.strip().lstrip("(+-\u2212").split(" ")[0].rstrip("TC)")
    return bool(head) and plain_number(head.replace(",", "")) is not None


def choose_sheet(grids: list[Grid], matcher: LabelMatcher, problems: Problems) -> Grid | None:
    if len(grids) == 1:
        return grids[0]
    if not grids:
        return None
    counts = [(member_rows(g, matcher), g) for g in grids]
    qualified = [g for n, g in counts if n > 0]
    if len(qualified) == 1:
        return qualified[0]
    listed = ", ".join(f"'{g.sheet}'" for g in (qualified or grids))
    if qualified:
        problems.add(
            f"sheets {listed} each name members of the model beside numbers; say which holds the "
            "claimed forces with --sheet NAME"
        )
    else:
        problems.add(
            f"no sheet of the workbook ({listed}) names a member of the model beside a number; "
            "expected a sheet with one row per member (labels such as the member ids or joint "
            "pairs 'B-C'), or name the sheet with --sheet NAME"
        )
    return None
