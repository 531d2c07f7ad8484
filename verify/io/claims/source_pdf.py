"""PDF source: the text layer of calc pages -> one Grid located by page and row.

Calc packages are printed from a spreadsheet or an analysis program; the table is found on each
page among title blocks and notes by the alignment of its words (pdfplumber's text strategy,
which needs no ruled lines), continued over pages whose repeated header and title block are
dropped. Only the text layer is read: a scanned page holds none and is refused (no OCR).

Limits, so a hostile file cannot take the machine: the file size, the pages searched without
--pages, each page's area and the characters on a page are checked before or while each page is
parsed, page by page, releasing each one after it is read.
"""

from __future__ import annotations

import bisect
import io
import math
import re
from collections import Counter
from collections.abc import Sequence
from typing import Any, NamedTuple

from verify.io.claims.grid import FORCE_LIKE, Cell, Grid, decimal_comma_written
from verify.io.claims.headers import unit_alone
from verify.io.claims.problems import Problems, quoted

MAX_PDF_BYTES = 100 * 1024 * 1024
MAX_PAGES_SEARCHED = 200  # without --pages; a calc package's table sits on a few of them
MAX_PAGE_AREA = (72 * 100) ** 2  # points^2: a page up to 100 x 100 inches (A0 is 33 x 47)
MAX_PAGE_CHARS = 100_000  # a dense A3 table page holds about 10,000
HEADER_LINES = 6  # heading lines kept above the forces (a group, names wrapped to 3 lines, units)
# Characters closer than WORD_GAP character heights form a word, words closer than CELL_GAP one
# cell: a space is 0.28 of the height in Helvetica and 0.6 in Courier, while printed tables leave
# about a character height or more between columns (common practice in spreadsheet and
# analysis-program print-outs).
WORD_GAP = 0.12
CELL_GAP = 0.8
MAX_TABLE_COLUMNS = 256  # as a workbook sheet (source_xlsx.MAX_COLUMNS)
MAX_RULES = 50_000  # ruled lines used to part cells; a page drawn with more is read without them
MAX_RULE_CHECKS = 5_000_000  # lines x rules looked at on one page
SPLIT_GAP = 0.45  # two headings printed close together still leave more than one space between
_RANGE = re.compile(r"\s*(\d{1,6})\s*(?:-\s*(\d{1,6})\s*)?$")


def parse_pages(text: str, count: int, problems: Problems) -> list[int] | None:
    """'12-14', '3', '1,4-6' -> 1-based page numbers, each within the document."""
    pages: list[int] = []
    for part in text.split(","):
        found = _RANGE.match(part)
        if not found:
            problems.add(
                f"--pages '{quoted(text)}' is not a page range; write pages like '12-14' or '3,5-6'"
            )
            return None
        first = int(found.group(1))
        last = int(found.group(2) or first)
        if not 1 <= first <= last <= count:
            problems.add(
                f"--pages '{quoted(text)}': the PDF has pages 1-{count}; a range must lie within "
                "them, first page first"
            )
            return None
        pages.extend(range(first, last + 1))
    if len(pages) > MAX_PAGES_SEARCHED:
        problems.add(
            f"--pages '{quoted(text)}' names {len(pages):,} pages (limit {MAX_PAGES_SEARCHED}); "
            "name the pages of the table"
        )
        return None
    return list(dict.fromkeys(pages))


def read_pdf(data: bytes, pages: str | None, problems: Problems) -> list[Grid]:
    if len(data) > MAX_PDF_BYTES:
        problems.add(
            f"the PDF is {len(data) / 1e6:,.0f} MB (limit {MAX_PDF_BYTES / 1e6:,.0f} MB); print "
            "the pages of the table to a new PDF"
        )
        return []
    import pdfplumber  # deferred: CSV and workbook runs need not load it

    try:
        document = pdfplumber.open(io.BytesIO(data))
    except Exception as exc:  # noqa: BLE001 -- a damaged PDF raises many kinds (PDFSyntaxError, KeyError ...); each becomes one message
        problems.add(
            f"not a readable PDF ({type(exc).__name__}: {quoted(str(exc))}); print it to PDF "
            "again or export the table to CSV"
        )
        return []
    with document:
        count = len(document.pages)
        if pages is not None:
            wanted = parse_pages(pages, count, problems)
            if wanted is None:
                return []
        elif count > MAX_PAGES_SEARCHED:
            problems.add(
                f"the PDF has {count:,} pages (limit {MAX_PAGES_SEARCHED} searched); name the "
                "pages of the table with --pages, e.g. --pages 12-14"
            )
            return []
        else:
            wanted = list(range(1, count + 1))
        return _read_pages(document, wanted, problems)


def _read_pages(document: Any, wanted: list[int], problems: Problems) -> list[Grid]:
    # document: a pdfplumber PDF (the library ships no type information)
    rows: list[list[Cell]] = []
    numbers: list[int] = []
    page_of: list[int] = []
    seen_plain: set[str] = set()  # header and title rows already read, as their joined text
    any_text = False
    for number in wanted:
        page = document.pages[number - 1]
        try:
            if float(page.width) * float(page.height) > MAX_PAGE_AREA:
                problems.add(
                    f"page {number} is {float(page.width) / 72:,.0f} x "
                    f"{float(page.height) / 72:,.0f} inches "
                    "(limit 100 x 100); refused as a possible PDF bomb"
                )
                return []
            if len(page.chars) > MAX_PAGE_CHARS:
                problems.add(
                    f"page {number} holds {len(page.chars):,} characters (limit "
                    f"{MAX_PAGE_CHARS:,}); refused as a possible PDF bomb; name the pages of the "
                    "table with --pages"
                )
                return []
            if page.chars:
                any_text = True
            kept = _page_rows(page)
        finally:
            page.close()  # a page's parsed objects are released before the next is read
        # Compared without spaces: the same header may split into cells differently on each page.
        texts_of = [
            "".join(c for c in cells if isinstance(c, str)).replace(" ", "") for _, cells in kept
        ]
        # A continuation page repeats the header: it and the title block above it are dropped.
        repeated = [
            i
            for i, (t, (_, cells)) in enumerate(zip(texts_of, kept, strict=True))
            if not _has_number(cells) and t in seen_plain
        ]
        body = kept[repeated[-1] + 1 :] if repeated else kept
        seen_plain.update(
            t for t, (_, cells) in zip(texts_of, kept, strict=True) if not _has_number(cells)
        )
        for k, cells in body:
            rows.append(cells)
            numbers.append(k)
            page_of.append(number)
    if not any_text:
        shown = f"pages {wanted[0]}-{wanted[-1]}" if len(wanted) > 1 else f"page {wanted[0]}"
        problems.add(
            f"the PDF holds no text on {shown} (a scanned image?); only PDFs printed from a "
            "program, with a text layer, are read (no OCR): export the table to CSV or .xlsx "
            "instead"
        )
        return []
    if not rows:
        problems.add(
            "no table found on the pages searched; expected rows of member labels and forces "
            "under a header"
        )
        return []
    return [Grid(rows, numbers, None, decimal_comma=decimal_comma_written(rows), pages=page_of)]


def _has_number(cells: list[Cell]) -> bool:
    """A row with a cell that reads like a force ('5.00', '-7.07', '7.07 C', '(12.4)')."""
    return any(
        isinstance(c, str) and len(c) <= 40 and FORCE_LIKE.match(c) is not None for c in cells
    )


class _Glyph(NamedTuple):
    """One non-blank character in reading coordinates: u along its line, v down the page as
    the text reads (a turned table reads like an upright one)."""

    u0: float
    u1: float
    v0: float
    v1: float
    text: str

    @property
    def middle(self) -> float:
        return (self.v0 + self.v1) / 2

    @property
    def height(self) -> float:
        return self.v1 - self.v0


class _Phrase(NamedTuple):
    """The words of one cell on one line, and where they run along the line."""

    u0: float
    u1: float
    text: str
    cell: int = 0  # between which ruled lines it stands; words across a rule never join


class _Line(NamedTuple):
    number: int  # 1-based, counted down the page
    v: float
    height: float
    words: list[_Phrase]
    phrases: list[_Phrase]  # the words joined into cells (_joined), made once per line


_NUMBER = re.compile(r"^[(+\-\u2212]?\d[\d,.']*\)?$")
_GROUP_OF_THREE = re.compile(r"^\d{3}(?:[.,]\d+)?\)?$")  # '400' of '12 400' written with a space


def _joined(words: list[_Phrase], gap: float) -> list[_Phrase]:
    """Words closer than `gap` joined into one phrase, except that a cell holds one number: a
    number after a phrase that has one starts the next cell ('22.50' right-aligned beside '30'
    left-aligned in the next, '414.8 T' beside '289.3 T'), unless it is a group of three digits
    a space after (thousands written '12 400')."""
    phrases: list[_Phrase] = []
    numbered: list[bool] = []
    for w in words:
        number = _NUMBER.match(w.text) is not None
        if phrases and w.cell == phrases[-1].cell and w.u0 - phrases[-1].u1 <= gap:
            last = phrases[-1]
            thousands = (
                _GROUP_OF_THREE.match(w.text) is not None
                and _NUMBER.match(last.text) is not None
                and w.u0 - last.u1 <= gap / 2
            )
            if not (number and numbered[-1]) or thousands:
                phrases[-1] = _Phrase(last.u0, w.u1, f"{last.text} {w.text}", last.cell)
                numbered[-1] = numbered[-1] or number
                continue
        phrases.append(w)
        numbered.append(number)
    return phrases


_QUARTERS = ((1, 0), (0, 1), (-1, 0), (0, -1))  # reading directions: page x right, y down


def _quarter(char: dict[str, Any]) -> tuple[int, int]:
    a, b = float(char["matrix"][0]), float(char["matrix"][1])
    return _QUARTERS[round(math.atan2(-b, a) / (math.pi / 2)) % 4]


def _turned(box: dict[str, Any], direction: tuple[int, int]) -> tuple[float, float, float, float]:
    """A page box (x0, x1, top, bottom) as (u0, u1, v0, v1) in the reading frame."""
    dx, dy = direction
    corners = [
        (float(x), float(y)) for x in (box["x0"], box["x1"]) for y in (box["top"], box["bottom"])
    ]
    us = [x * dx + y * dy for x, y in corners]
    vs = [y * dx - x * dy for x, y in corners]
    return min(us), max(us), min(vs), max(vs)


def _glyphs(chars: list[dict[str, Any]]) -> tuple[list[_Glyph], tuple[int, int]]:
    """The glyphs that read in the page's main direction, and that direction. pdfplumber gives
    each character's text matrix with the page's /Rotate applied: a landscape table printed on
    a portrait sheet, or a page turned by /Rotate, reads along (0, -1) or (0, 1), turned back
    here."""
    marks = [(c, _quarter(c)) for c in chars if c["text"].strip()]
    if not marks:
        return [], (1, 0)
    direction = Counter(q for _, q in marks).most_common(1)[0][0]
    found = [
        _Glyph(*_turned(char, direction), char["text"])
        for char, quarter in marks
        if quarter == direction  # a stamp or a margin note turned another way is left out
    ]
    return found, direction


def _rules(
    edges: list[dict[str, Any]], direction: tuple[int, int]
) -> list[tuple[float, float, float]]:
    """Ruled lines across the reading direction, as (u, v0, v1): the borders between cells of a
    ruled table. Two cells' texts printed close together (a right-aligned force and the T/C
    letter in the next cell) stay apart when a rule stands between them."""
    if len(edges) > MAX_RULES:
        return []
    found = []
    for edge in edges:
        u0, u1, v0, v1 = _turned(edge, direction)
        if u1 - u0 < 1.0 and v1 - v0 > 3.0:
            found.append(((u0 + u1) / 2, v0, v1))
    return found


def _lines(glyphs: list[_Glyph], rules: Sequence[tuple[float, float, float]] = ()) -> list[_Line]:
    """Glyphs -> lines down the page, each a list of words along it. Glyphs whose middles lie
    within 0.4 of a character height share a line; characters closer than WORD_GAP heights and
    not parted by a rule form a word (words closer than CELL_GAP heights form a cell: phrases)."""
    groups: list[list[_Glyph]] = []
    for g in sorted(glyphs, key=lambda g: g.middle):
        if groups and abs(g.middle - groups[-1][0].middle) <= 0.4 * max(
            g.height, groups[-1][0].height, 1e-6
        ):
            groups[-1].append(g)
        else:
            groups.append([g])
    if len(rules) * len(groups) > MAX_RULE_CHECKS:
        rules = ()  # each line looks at every rule: past this, read without them
    lines = []
    for number, group in enumerate(groups, start=1):
        group.sort(key=lambda g: g.u0)
        height = sorted(g.height for g in group)[len(group) // 2]
        middle = group[0].middle
        across = sorted(u for u, v0, v1 in rules if v0 - 1.0 <= middle <= v1 + 1.0)
        words: list[_Phrase] = []
        for g in group:
            cell = bisect.bisect(across, (g.u0 + g.u1) / 2)
            last = words[-1] if words else None
            if last is not None and last.cell == cell and g.u0 - last.u1 <= WORD_GAP * height:
                words[-1] = _Phrase(last.u0, max(last.u1, g.u1), last.text + g.text, cell)
            else:
                words.append(_Phrase(g.u0, g.u1, g.text, cell))
        lines.append(_Line(number, middle, height, words, _joined(words, CELL_GAP * height)))
    return lines


def _numeric(line: _Line) -> bool:
    """A line with a cell that reads like a force ('5.00', '-7.07', '7.07 C', '(12.4)')."""
    return any(len(p.text) <= 40 and FORCE_LIKE.match(p.text) for p in line.phrases)


def _body(lines: list[_Line]) -> list[int]:
    """Indices of the table's data lines: lines of two or more cells with a force in them. A
    lone such line (a title block's 'Rev 3', a note's '1.35 x dead') is left out when the page
    has runs of them."""
    data = [k for k, line in enumerate(lines) if len(line.phrases) >= 2 and _numeric(line)]
    runs: list[list[int]] = []
    for k in data:
        if runs and k == runs[-1][-1] + 1:
            runs[-1].append(k)
        else:
            runs.append([k])
    if any(len(run) >= 2 for run in runs):
        return [k for run in runs if len(run) >= 2 for k in run]
    return data


def _columns(lines: list[_Line], body: list[int]) -> list[tuple[float, float]]:
    """Column extents along the line: the union of the data cells' extents. Headings are left
    out on purpose: a heading wider than its column ('Member (joints)', 'dead (kN)' in a narrow
    cell) or a group heading over several columns must not merge or split columns."""
    spans = sorted((p.u0, p.u1) for k in body for p in lines[k].phrases)
    columns: list[tuple[float, float]] = []
    for u0, u1 in spans:
        if columns and u0 <= columns[-1][1]:
            columns[-1] = (columns[-1][0], max(columns[-1][1], u1))
        else:
            columns.append((u0, u1))
    return columns


def _cuts(columns: list[tuple[float, float]]) -> list[float]:
    """Where the line is parted: midway between neighbouring columns' data."""
    return [(a[1] + b[0]) / 2 for a, b in zip(columns, columns[1:], strict=False)]


def _placed(phrase: _Phrase, cuts: list[float]) -> tuple[int, list[int]]:
    """The column holding most of a phrase, and every column it reaches into (a tenth of the
    phrase's width or more). Only the parts the phrase spans are looked at (bisection)."""
    first, last = bisect.bisect(cuts, phrase.u0), bisect.bisect(cuts, phrase.u1)
    if first == last:
        return first, [first]
    width = max(phrase.u1 - phrase.u0, 1e-6)
    edges = [-math.inf, *cuts, math.inf]
    shares = {
        c: max(0.0, min(phrase.u1, edges[c + 1]) - max(phrase.u0, edges[c])) / width
        for c in range(first, last + 1)
    }
    owner = max(shares, key=lambda c: (shares[c], -c))
    return owner, [c for c, share in shares.items() if share >= 0.1]


def _cells(
    line: _Line, columns: list[tuple[float, float]], below: frozenset[int] = frozenset()
) -> tuple[list[Cell], bool]:
    """A line's cells, and whether it holds a group heading. A phrase reaching over several
    columns that have headings of their own on the lines below (`below`), where no other phrase
    of its line stands, is a group heading ('Axial force (kN)' over 'dead' and 'snow'), kept
    whole in its first column; otherwise it is a heading a little wide for its column. A phrase
    whose words, two spaces or more apart, stand over different columns is two headings printed
    close together, parted."""
    texts: list[list[str]] = [[] for _ in columns]
    group = False
    phrases = line.phrases
    cuts = _cuts(columns)
    placed = [_placed(p, cuts) for p in phrases]
    held = Counter(o for o, _ in placed)  # phrases owned by each column
    for phrase, (owner, reached) in zip(phrases, placed, strict=True):
        if len(reached) >= 2:
            others = {c for c in reached if held[c] > (c == owner)}
            words = [w for w in line.words if phrase.u0 <= w.u0 and w.u1 <= phrase.u1]
            pieces = _joined(words, SPLIT_GAP * line.height)
            owners = [_placed(piece, cuts)[0] for piece in pieces]
            if len(pieces) > 1 and len(set(owners)) == len(pieces):
                for piece, c in zip(pieces, owners, strict=True):
                    texts[c].append(piece.text)
                continue
            if not others and len(below & set(reached)) >= 2:
                texts[reached[0]].append(phrase.text)
                group = True
                continue
        texts[owner].append(phrase.text)
    return [" ".join(t) or None for t in texts], group


def _stacked(rows: list[list[Cell]]) -> list[Cell]:
    """Heading lines of one header row read top to bottom per column: a cell wrapped over two
    lines ('dead' over '(kN)') or a unit line under the names becomes 'dead (kN)'."""
    out: list[Cell] = []
    for parts in zip(*rows, strict=True):
        words = []
        for part in parts:
            if not isinstance(part, str):
                continue
            unit = unit_alone(part)
            words.append(f"({unit})" if unit is not None and part.strip("()[] ") == part else part)
        out.append(" ".join(words) or None)
    return out


def _page_rows(page: Any) -> list[tuple[int, list[Cell]]]:
    """The rows of one page's table with their line numbers: each run of data lines (and the
    lines between them, such as a row of dashes) under up to HEADER_LINES heading lines just
    above it, close enough to belong to it. Title blocks further up and notes below are prose."""
    glyphs, direction = _glyphs(page.chars)
    lines = _lines(glyphs, _rules(page.edges, direction))
    body = _body(lines)
    if not body:
        return []
    columns = _columns(lines, body)
    if len(columns) > MAX_TABLE_COLUMNS:
        return []  # not a claims table (a page of figures, or a file made to be slow)
    is_body = set(body)
    steps = sorted(lines[k + 1].v - lines[k].v for k in body if k + 1 in is_body)
    pitch = steps[len(steps) // 2] if steps else 2.0 * lines[body[0]].height
    left, right = columns[0][0], columns[-1][1]
    runs: list[list[int]] = []  # [first, last] data line of each run, gaps of prose ending a run
    for k in body:
        if runs and all(
            _numeric(lines[j]) or len(lines[j].phrases) <= 2 for j in range(runs[-1][1] + 1, k)
        ):
            runs[-1][1] = k
        else:
            runs.append([k, k])
    rows: list[tuple[int, list[Cell]]] = []
    for first, last in runs:
        header: list[int] = []
        k = first - 1
        while k >= 0 and len(header) < HEADER_LINES and k not in is_body:
            if _numeric(lines[k]):
                break
            below = lines[header[-1]] if header else lines[first]
            if below.v - lines[k].v > 1.6 * pitch + 0.5 * below.height:
                break  # a gap: a title block above the table, not its header
            reach = 4.0 * lines[k].height
            if any(p.u0 < left - reach or p.u1 > right + reach for p in lines[k].phrases):
                break  # a line reaching past the table's sides is a title or a note, not a heading
            header.append(k)
            k -= 1
        header.reverse()
        groups: list[tuple[int, list[Cell]]] = []
        plain: list[tuple[int, list[Cell]]] = []
        headed: set[int] = set()  # columns with a heading on the lines below
        for h in reversed(header):
            cells, spans = _cells(lines[h], columns, frozenset(headed))
            (groups if spans else plain).insert(0, (lines[h].number, cells))
            headed.update(c for c, cell in enumerate(cells) if cell is not None)
        table = list(groups)
        if plain:
            table.append((plain[-1][0], _stacked([cells for _, cells in plain])))
        table.extend(
            (lines[k].number, _cells(lines[k], columns)[0]) for k in range(first, last + 1)
        )
        rows.extend(_merged_alignments(table))
    return rows


def _merged_alignments(rows: list[tuple[int, list[Cell]]]) -> list[tuple[int, list[Cell]]]:
    """Columns that are one printed column: a spreadsheet prints text cells ('28.1 T') left and
    numbers ('22.5') right in the same column, so their words stand in two clusters that never
    share a row. A column is joined to the one on its left when no row, heading rows included,
    has something in both."""
    width = max((len(cells) for _, cells in rows), default=0)
    keep = list(range(width))
    merged = [list(cells) + [None] * (width - len(cells)) for _, cells in rows]
    c = 1
    while c < len(keep):
        left, right = keep[c - 1], keep[c]
        if all(row[left] is None or row[right] is None for row in merged):
            for row in merged:
                if row[left] is None:
                    row[left] = row[right]
            del keep[c]
        else:
            c += 1
    return [(number, [row[k] for k in keep]) for (number, _), row in zip(rows, merged, strict=True)]
