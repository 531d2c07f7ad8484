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

import io
import re

from verify.io.claims.grid import Cell, Grid
from verify.io.claims.problems import Problems, quoted

MAX_PDF_BYTES = 100 * 1024 * 1024
MAX_PAGES_SEARCHED = 200  # without --pages; a calc package's table sits on a few of them
MAX_PAGE_AREA = (72 * 100) ** 2  # points^2: a page up to 100 x 100 inches (A0 is 33 x 47)
MAX_PAGE_CHARS = 100_000  # a dense A3 table page holds about 10,000
TABLE_SETTINGS = {
    "vertical_strategy": "text",
    "horizontal_strategy": "text",
    "snap_tolerance": 3,
    "join_tolerance": 3,
    "intersection_tolerance": 5,
    "text_x_tolerance": 2,
    "min_words_vertical": 2,
}  # a short table (two rows) still aligns its columns
HEADER_ROWS = 4  # rows of words kept above the forces of a page
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
                f"--pages '{quoted(text)}': the PDF has pages 1-{count}; a range must lie within them, first page first"
            )
            return None
        pages.extend(range(first, last + 1))
    if len(pages) > MAX_PAGES_SEARCHED:
        problems.add(
            f"--pages '{quoted(text)}' names {len(pages):,} pages (limit {MAX_PAGES_SEARCHED}); name the pages of the table"
        )
        return None
    return list(dict.fromkeys(pages))


def read_pdf(data: bytes, pages: str | None, problems: Problems) -> list[Grid]:
    if len(data) > MAX_PDF_BYTES:
        problems.add(
            f"the PDF is {len(data) / 1e6:,.0f} MB (limit {MAX_PDF_BYTES / 1e6:,.0f} MB); print the pages of the table to a new PDF"
        )
        return []
    import pdfplumber  # deferred: CSV and workbook runs need not load it

    try:
        document = pdfplumber.open(io.BytesIO(data))
    except Exception as exc:  # noqa: BLE001 -- a damaged PDF raises many kinds (PDFSyntaxError, KeyError ...); each becomes one message
        problems.add(
            f"not a readable PDF ({type(exc).__name__}: {quoted(str(exc))}); print it to PDF again or export the table to CSV"
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
                f"the PDF has {count:,} pages (limit {MAX_PAGES_SEARCHED} searched); name the pages of the table with --pages, e.g. --pages 12-14"
            )
            return []
        else:
            wanted = list(range(1, count + 1))
        return _read_pages(document, wanted, problems)


def _read_pages(document: object, wanted: list[int], problems: Problems) -> list[Grid]:
    rows: list[list[Cell]] = []
    numbers: list[int] = []
    page_of: list[int] = []
    seen_plain: set[str] = set()  # header and title rows already read, as their joined text
    any_text = False
    for number in wanted:
        page = document.pages[number - 1]  # type: ignore[attr-defined]
        try:
            if float(page.width) * float(page.height) > MAX_PAGE_AREA:
                problems.add(
                    f"page {number} is {float(page.width) / 72:,.0f} x {float(page.height) / 72:,.0f} inches "
                    "(limit 100 x 100); refused as a possible PDF bomb"
                )
                return []
            if len(page.chars) > MAX_PAGE_CHARS:
                problems.add(
                    f"page {number} holds {len(page.chars):,} characters (limit {MAX_PAGE_CHARS:,}); "
                    "refused as a possible PDF bomb; name the pages of the table with --pages"
                )
                return []
            if page.chars:
                any_text = True
            table = _page_table(page)
        finally:
            page.close()  # a page's parsed objects are released before the next is read
        kept = _table_rows(table)
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
            f"the PDF holds no text on {shown} (a scanned image?); only PDFs printed from a program, with a "
            "text layer, are read (no OCR): export the table to CSV or .xlsx instead"
        )
        return []
    if not rows:
        problems.add(
            "no table found on the pages searched; expected rows of member labels and forces under a header"
        )
        return []
    return [Grid(rows, numbers, None, decimal_comma=False, pages=page_of)]


def _has_number(cells: list[Cell]) -> bool:
    """A row with a cell that reads like a force ('5.00', '-7.07', '7.07 C', '(12.4)')."""
    return any(
        isinstance(c, str) and len(c) <= 40 and _FORCE_LIKE.match(c) is not None for c in cells
    )


_FORCE_LIKE = re.compile(r"^[(+\-\u2212]?\d[\d,. ']*\)?(?:\s*[A-Za-z]{1,3})?(?:\s*[TC])?$")


def _table_rows(table: list[list[str | None]]) -> list[tuple[int, list[Cell]]]:
    """The rows of one page's table that can matter: rows with forces, and up to HEADER_ROWS
    rows of words just above a run of them (the header). Title lines far above and notes below
    the table are prose, not claims."""
    cleaned: list[list[Cell]] = [
        [(c.strip() or None) if isinstance(c, str) else None for c in raw] for raw in table
    ]
    numeric = [_has_number(cells) for cells in cleaned]
    keep = []
    for k, cells in enumerate(cleaned):
        if not any(cells):
            continue
        if numeric[k] or any(numeric[k + 1 : k + 1 + HEADER_ROWS]):
            keep.append((k + 1, cells))
    return keep


def _page_table(page: object) -> list[list[str | None]]:
    """The page's table as rows of cell texts. The table's cells give the rows and the column
    boundaries; every word is then placed by its centre, the outer columns reaching to the page
    edges, so a heading wider than its column ('snow (kN)' over '-8.80') is not cut short."""
    found = page.find_table(TABLE_SETTINGS)  # type: ignore[attr-defined]
    if found is None:
        return []
    columns = sorted(
        {(round(c[0], 1), round(c[2], 1)) for row in found.rows for c in row.cells if c is not None}
    )
    rows = [row.bbox for row in found.rows]
    if not columns or not rows:
        return []
    cuts = [
        (a[1] + b[0]) / 2 for a, b in zip(columns, columns[1:], strict=False)
    ]  # between columns
    grid: list[list[list[str]]] = [[[] for _ in columns] for _ in rows]
    for word in page.extract_words(x_tolerance=2, keep_blank_chars=False):  # type: ignore[attr-defined]
        middle_y = (word["top"] + word["bottom"]) / 2
        r = next((k for k, box in enumerate(rows) if box[1] - 1 <= middle_y <= box[3] + 1), None)
        if r is None:
            continue  # outside the table: titles and notes
        middle_x = (word["x0"] + word["x1"]) / 2
        c = sum(1 for cut in cuts if middle_x > cut)
        grid[r][c].append(word["text"])
    return [[" ".join(words) or None for words in row] for row in grid]
