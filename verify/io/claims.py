"""Read a claimed member-force table (CSV or .xlsx) as the reviewer received it.

Layouts (DESIGN.md section 4), found from the header row:

- **wide**: a member column and one column per load case or combination, the header being the
  case name, optionally with a unit: ``Member, dead (kN), ULS-1 [kN]``;
- **long**: member, case and force columns, one row per member and case;
- **single**: member and force columns only; the load case comes from ``case=`` or, when the
  model has exactly one load case, is that one.

A row of units under the header (``kN``) and a T/C column beside a single force column are also
understood. Member labels are matched to the model by id, or by joint pair in either order with
or without a separator (``B-C``, ``C-B``, ``BC``, ``B/C``), case-insensitively; an exact id always
wins. Reaction claims are rows labelled like ``RA.y``, ``R_A_y``, ``A.y``, ``RAy``, ``A (y)``,
matched against the model's reaction components. Unknown and ambiguous labels are returned as
data; anything malformed is collected and raised as one :class:`~verify.errors.InputError`.

Values are returned as written (sign as written unless a T/C suffix settled it; unit as found);
converting to the model's sign convention and force unit is the comparison stage's job.

Workbooks are read without evaluating anything: openpyxl in read-only mode with cached values
only (defusedxml hardens its XML parsing), after the zip's central directory has been checked
against the size limits below.
"""

from __future__ import annotations

import codecs
import csv
import datetime as dt
import difflib
import hashlib
import io
import math
import re
import warnings
import zipfile
from collections import defaultdict
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, NamedTuple

from verify.errors import InputError, Problem, did_you_mean
from verify.io.values import is_nan_text, normalize_text, parse_force_cell, plain_number
from verify.model import Model
from verify.units import Dimension, lookup_unit

# Refusal limits for workbooks, checked on the zip's central directory before any parsing. A
# claims sheet of 100,000 members is a few MB uncompressed; real .xlsx parts compress 5-20x.
MAX_UNCOMPRESSED_BYTES = 200 * 1024 * 1024
MAX_COMPRESSION_RATIO = 100.0
RATIO_CHECK_MIN_BYTES = 1024 * 1024  # tiny parts may compress extremely well and are harmless
MAX_ZIP_MEMBERS = 10_000

MAX_PROBLEMS = 200  # problems reported per file; the rest are counted
HEADER_SEARCH_ROWS = 20  # rows scanned for a header above which titles may sit
FAST_ROWS = True  # read plain rows of wide tables directly (tests switch it off to compare)
MAX_SUGGESTED_LABELS = 50  # unknown labels that get "nearest label" suggestions
SUGGESTION_POOL_LIMIT = 20_000  # above this, suggestions look only at similar-looking labels

EXCEL_SUFFIXES = (".xlsx", ".xlsm")
CSV_DELIMITERS = ("\t", ";", ",", "|")

# Header spellings per role, compared after _header_key(); earlier spellings win when a table
# has several (a table with "ID" and "Member" columns is labelled by "Member").
# fmt: off
MEMBER_HEADERS = (
    "member", "member id", "member label", "member name", "member no", "member #", "members",
    "mbr", "memb", "element", "element id", "elem", "bar", "bar id", "label", "mark", "id",
)
FORCE_HEADERS = (
    "force", "axial force", "member force", "axial", "axial load", "forces", "n", "p", "value",
)
CASE_HEADERS = (
    "case", "load case", "loadcase", "lc", "combination", "load combination", "combo", "comb",
    "case name",
)
TC_HEADERS = ("t/c", "t or c", "tc", "tension/compression", "sense")
UNIT_HEADERS = ("unit", "units")
# Descriptive columns a member table often carries; never read as load cases.
IGNORED_HEADERS = frozenset(
    {
        "remark", "remarks", "note", "notes", "comment", "comments", "description", "type",
        "section", "size", "profile", "length", "l", "start", "end", "from", "to", "i", "j",
        "node i", "node j", "joint i", "joint j", "start joint", "end joint", "start node",
        "end node", "status", "stress", "capacity", "utilisation", "utilization", "util",
        "ratio", "area", "no", "#", "item", "row", "group", "material", "check",
    }
)
# fmt: on

# Header units that are not forces: the column is descriptive (a length, stress, area, ratio).
_NON_FORCE_UNIT = re.compile(
    r"^(%|-|mm2|mm²|cm2|cm²|m2|m²|in2|in²|ft2|pa|kpa|mpa|gpa|psi|ksi|n/mm2|n/mm²|kn/m2|kn/m|kn/m²|"
    r"knm|kn\.?m|kn·m|kip-ft|kip-in|lbf-ft|deg|°|rad)$",
    re.IGNORECASE,
)

# Characters that may separate the two joints of a member label, after normalize_text().
LABEL_SEPARATORS = frozenset(" -_/\\|:,.")
AXES = ("x", "y", "z", "n")
_REACTION_PREFIX = re.compile(r"^(?:reaction|reac|rxn|r)[\s_.\-:]*(?P<body>.+)$")
_AXIS_TAIL = re.compile(r"(?P<sep>[\s_.\-:,]*)(?:\(\s*(?P<paren>[xyzn])\s*\)|(?P<bare>[xyzn]))$")
_AXIS_HEAD = re.compile(r"^(?P<axis>[xyz])[\s_.\-:,]+(?P<joint>.+)$")
_FORMULA_TAG = re.compile(rb"<(?:[A-Za-z0-9_]+:)?f[\s>/]")  # <f>, <f t="shared" .../>, <x:f>
_HEADER_UNIT = re.compile(
    r"^(?P<name>.*?)\s*(?:\((?P<p>[^()]*)\)|\[(?P<b>[^\[\]]*)\]|,\s*(?P<c>[^,]+))\s*$"
)


class ClaimedValue(NamedTuple):
    """One claimed value as read. A named tuple: a 10^5-member table gives 2x10^5 of them."""

    label: str  # as written in the table
    member: str | None  # matched model member id (None for a reaction claim)
    reaction: tuple[str, str] | None  # (joint id, axis) for a claimed reaction, else None
    column: str  # load case / combination name as written (header or case cell); "" if none
    value: float  # T/C applied (T positive, C negative); else the sign as written
    sign_fixed: bool  # True when a T/C suffix settled the sign
    unit: str | None  # canonical unit symbol (verify.units) from the cell or header, or None
    where: str  # e.g. "row 9, column 'dead'" or "sheet 'Forces' cell C7, column 'dead'"
    text: str = ""  # the cell exactly as written, for the audit trail ("4.50 T", "(12.4)")


@dataclass(frozen=True)
class UnmatchedLabel:
    label: str
    where: str
    reason: str  # "unknown" or "ambiguous"
    candidates: tuple[
        str, ...
    ]  # nearest real labels (unknown) or the competing matches (ambiguous)


@dataclass(frozen=True)
class ClaimsTable:
    source: str
    sheet: str | None
    sha256: str  # of the file bytes
    values: tuple[ClaimedValue, ...]
    unmatched: tuple[UnmatchedLabel, ...]
    columns: tuple[str, ...]  # case/combination names as written, in table order
    header_unit: str | None  # unit found in headers, if one applies to the whole table


# -- problems -----------------------------------------------------------------------------------
class _Problems:
    """Collects problems for one file, capped so a wholly broken table stays readable."""

    def __init__(self, file: str) -> None:
        self.file = file
        self.items: list[Problem] = []
        self.dropped = 0

    def add(self, message: str, where: str | None = None) -> None:
        if len(self.items) >= MAX_PROBLEMS:
            self.dropped += 1
            return
        if message and message[-1] not in ".?!":
            message += "."
        self.items.append(Problem(self.file, message, None, where))

    def raise_if_any(self) -> None:
        if not self.items:
            return
        items = list(self.items)
        if self.dropped:
            items.append(
                Problem(self.file, f"... and {self.dropped} more problems of the same kinds.")
            )
        raise InputError(items)

    def __bool__(self) -> bool:
        return bool(self.items)


# -- the cell grid both formats are read into ----------------------------------------------------
@dataclass(frozen=True)
class _Unusable:
    """A cell whose content cannot be read as text or number (uncached formula, date, boolean)."""

    reason: str


Cell = str | float | _Unusable | None


@dataclass
class _Grid:
    rows: list[list[Cell]]
    row_numbers: list[int]  # the spreadsheet / file row number of each entry, 1-based
    sheet: str | None  # None for CSV
    decimal_comma: bool
    delimiter: str | None = None  # CSV only

    def cell(self, r: int, c: int) -> Cell:
        row = self.rows[r]
        return row[c] if c < len(row) else None

    def row_ref(self, r: int) -> str:
        return f"row {self.row_numbers[r]}"

    def where(self, r: int, c: int | None = None, column: str | None = None) -> str:
        number = self.row_numbers[r]
        if self.sheet is None:
            if column is not None:
                return f"row {number}, column '{column}'"
            return f"row {number}" if c is None else f"row {number}, column {c + 1}"
        if c is None:
            return f"sheet '{self.sheet}' row {number}"
        from openpyxl.utils import get_column_letter

        text = f"sheet '{self.sheet}' cell {get_column_letter(c + 1)}{number}"
        return text + (f", column '{column}'" if column is not None else "")


# A lone dash in a force table means "nothing here" (often for a zero-force member); it is read
# as no claim, never as a value, so a "not computed" dash cannot become a false error.
DASHES = frozenset({"-", "--", "–", "—", "−"})


def _blank(cell: Cell) -> bool:
    return cell is None or (isinstance(cell, str) and (not cell.strip() or cell.strip() in DASHES))


def _text(cell: Cell) -> str:
    """A label, case name or header from a cell: numbers written as a person would type them."""
    if isinstance(cell, float):
        return str(int(cell)) if cell.is_integer() else repr(cell)
    if cell is None or isinstance(cell, _Unusable):
        return ""
    return cell.strip()


# -- public entry point -------------------------------------------------------------------------
def read_claims(
    path: str | Path,
    model: Model,
    *,
    sheet: str | None = None,
    member_column: str | None = None,
    case_column: str | None = None,
    force_column: str | None = None,
    case: str | None = None,
) -> ClaimsTable:
    """Read the claimed table at `path` against `model`. Raises InputError listing every problem.

    `sheet` picks a workbook sheet (needed when there are several); `member_column`,
    `case_column` and `force_column` name columns whose headers are not recognised; `case` names
    the load case or combination of a table with a single force column (or selects one column
    or case from a wider table).
    """
    path = Path(path)
    name = str(path)
    try:
        data = path.read_bytes()
    except FileNotFoundError:
        raise InputError([Problem(name, "file not found.")]) from None
    except OSError as exc:
        raise InputError([Problem(name, f"cannot read the file ({exc.strerror}).")]) from None
    problems = _Problems(name)
    suffix = path.suffix.lower()
    grid: _Grid | None
    if data[:8] == b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" or suffix == ".xls":
        problems.add(
            "this is a legacy binary Excel (.xls) file; save it as .xlsx or export the sheet to CSV"
        )
        grid = None
    elif suffix == ".ods":
        problems.add("OpenDocument spreadsheets are not read; save the sheet as .xlsx or CSV")
        grid = None
    elif data[:4] == b"PK\x03\x04" or suffix in EXCEL_SUFFIXES:
        grid = _read_workbook(data, sheet, problems)
    else:
        if sheet is not None:
            problems.add(f"sheet '{sheet}' was asked for, but a CSV file has no sheets")
        grid = _read_csv(data, problems)
    problems.raise_if_any()
    assert grid is not None
    options = _Options(member_column, case_column, force_column, case)
    table = _interpret(grid, model, options, problems)
    problems.raise_if_any()
    values, unmatched, columns, header_unit = table
    return ClaimsTable(
        source=name,
        sheet=grid.sheet,
        sha256=hashlib.sha256(data).hexdigest(),
        values=tuple(values),
        unmatched=tuple(unmatched),
        columns=tuple(columns),
        header_unit=header_unit,
    )


# -- CSV ----------------------------------------------------------------------------------------
def _decode(data: bytes, problems: _Problems) -> str | None:
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
            f"the file is neither UTF-8 nor Windows-1252 text (byte {exc.start}); save it as CSV UTF-8"
        )
        return None


def _sniff_delimiter(lines: Sequence[str]) -> str:
    """The delimiter that splits the sample into the most consistent rows of two or more fields."""
    sample = [line for line in lines if line.strip()][:50]
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


def _read_csv(data: bytes, problems: _Problems) -> _Grid | None:
    text = _decode(data, problems)
    if text is None:
        return None
    if "\x00" in text:
        problems.add(
            "the file contains NUL bytes, so it is not CSV text; export the table as CSV or .xlsx"
        )
        return None
    if not text.strip():
        problems.add(
            "the file is empty; expected a header row such as 'Member,dead (kN)' and one row per member"
        )
        return None
    lines = text.splitlines()
    offset = 0
    forced = re.fullmatch(r"\s*sep=(.)\s*", lines[0]) if lines else None
    if forced:
        # Excel's "sep=;" directive line: it fixes the delimiter and is not a table row.
        delimiter = forced.group(1)
        lines = lines[1:]
        offset = 1
    else:
        delimiter = _sniff_delimiter(lines)
    rows: list[list[Cell]] = []
    numbers: list[int] = []
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
    return _Grid(rows, numbers, None, decimal_comma=delimiter == ";", delimiter=delimiter)


# -- Excel --------------------------------------------------------------------------------------
def _check_zip(data: bytes, problems: _Problems) -> bool:
    """Refuse archives that would expand beyond the limits, judged from the central directory."""
    try:
        with zipfile.ZipFile(io.BytesIO(data)) as archive:
            infos = archive.infolist()
    except (zipfile.BadZipFile, ValueError, OSError) as exc:
        problems.add(
            f"not a readable .xlsx workbook (the zip archive is damaged: {exc}); save it again or export CSV"
        )
        return False
    if len(infos) > MAX_ZIP_MEMBERS:
        problems.add(
            f"the workbook archive holds {len(infos)} parts (limit {MAX_ZIP_MEMBERS}); refused before parsing as a possible zip bomb"
        )
        return False
    total = sum(info.file_size for info in infos)
    if total > MAX_UNCOMPRESSED_BYTES:
        problems.add(
            f"the workbook would expand to {total / 1e6:,.0f} MB (limit {MAX_UNCOMPRESSED_BYTES / 1e6:,.0f} MB); "
            "refused before parsing as a possible zip bomb; export the claims sheet to CSV"
        )
        return False
    for info in infos:
        ratio = info.file_size / max(info.compress_size, 1)
        if info.file_size > RATIO_CHECK_MIN_BYTES and ratio > MAX_COMPRESSION_RATIO:
            problems.add(
                f"the workbook part '{info.filename}' expands {ratio:,.0f} times (limit {MAX_COMPRESSION_RATIO:,.0f}); "
                "refused before parsing as a possible zip bomb; export the claims sheet to CSV"
            )
            return False
    return True


def _read_workbook(data: bytes, sheet: str | None, problems: _Problems) -> _Grid | None:
    if not _check_zip(data, problems):
        return None
    import openpyxl  # deferred: CSV-only runs need not load it

    with warnings.catch_warnings():
        # openpyxl warns about unsupported extensions (data validation, styles); the library is silent.
        warnings.simplefilter("ignore")
        try:
            return _read_sheet(openpyxl.load_workbook, data, sheet, problems)
        except Exception as exc:  # noqa: BLE001 -- a damaged workbook raises many kinds (KeyError, XML errors); each becomes one message
            problems.add(
                f"cannot read the workbook ({type(exc).__name__}: {exc}); save it again or export CSV"
            )
            return None


def _read_sheet(
    load: Callable[..., Any], data: bytes, sheet: str | None, problems: _Problems
) -> _Grid | None:
    # Pass 1 sees formulas as formulas; pass 2 sees only the values the spreadsheet cached. A
    # formula without a cached value is reported, never read as blank or zero.
    formulas: set[tuple[int, int]] = set()
    if _may_hold_formulas(data):
        book = load(io.BytesIO(data), read_only=True, data_only=False)
        try:
            title = _pick_sheet(book, sheet, problems)
            if title is None:
                return None
            ws = book[title]
            ws.reset_dimensions()
            for row in ws.iter_rows(min_row=1, min_col=1):
                for cell in row:
                    if getattr(cell, "data_type", None) == "f":
                        formulas.add((cell.row, cell.column))
        finally:
            book.close()
    book = load(io.BytesIO(data), read_only=True, data_only=True)
    try:
        picked = _pick_sheet(book, sheet, problems)
        if picked is None:
            return None
        title = picked
        ws = book[title]
        ws.reset_dimensions()
        rows: list[list[Cell]] = []
        for r, cells in enumerate(ws.iter_rows(min_row=1, min_col=1), start=1):
            rows.append([_excel_cell(getattr(cell, "value", None), (r, c) in formulas, getattr(cell, "number_format", None))
                         for c, cell in enumerate(cells, start=1)])
    finally:
        book.close()
    if all(all(_blank(c) for c in row) for row in rows):
        problems.add(
            f"sheet '{title}' is empty; expected a header row such as 'Member', 'dead (kN)' and one row per member"
        )
        return None
    return _Grid(rows, list(range(1, len(rows) + 1)), title, decimal_comma=False)


def _may_hold_formulas(data: bytes) -> bool:
    """False only when no worksheet part has a formula element, so the formula pass can be skipped."""
    with zipfile.ZipFile(io.BytesIO(data)) as archive:
        parts = [n for n in archive.namelist() if "worksheets/" in n and n.endswith(".xml")]
        if not parts:
            return True
        return any(_FORMULA_TAG.search(archive.read(n)) for n in parts)


def _pick_sheet(book: Any, sheet: str | None, problems: _Problems) -> str | None:
    names: list[str] = list(book.sheetnames)
    listed = ", ".join(f"'{n}'" for n in names)
    if sheet is not None:
        if sheet in names:
            return sheet
        folded = [n for n in names if n.casefold() == sheet.casefold()]
        if len(folded) == 1:
            return folded[0]
        problems.add(
            f"the workbook has no sheet '{sheet}'; it has {listed}.{did_you_mean(sheet, names)}"
        )
        return None
    if len(names) == 1:
        return names[0]
    problems.add(
        f"the workbook has {len(names)} sheets ({listed}); name the one holding the claimed forces with --sheet NAME"
    )
    return None


_FIXED_DECIMALS = re.compile(r"0\.(0+)")


def _format_decimals(number_format: str | None) -> int | None:
    """Decimals a fixed number format shows ('0.00', '#,##0.000', '0.0;(0.0)' -> 2, 3, 1)."""
    if not number_format or number_format == "General":
        return None
    shown = re.sub(r'"[^"]*"|\\.|\[[^\]]*\]', "", number_format.split(";")[0])  # drop quoted text, escapes, colours
    found = _FIXED_DECIMALS.search(shown)
    return len(found.group(1)) if found else (0 if re.fullmatch(r"[#,0]+", shown) else None)


def _excel_cell(value: object, is_formula: bool, number_format: str | None = None) -> Cell:
    if value is None or (isinstance(value, str) and not value.strip()):
        if is_formula:
            return _Unusable(
                "holds a formula with no cached value; recalculate and re-save the workbook "
                "in the spreadsheet program (formulas are never evaluated here)"
            )
        return None
    if isinstance(value, bool):
        return _Unusable(f"holds the logical value {str(value).upper()}")
    if isinstance(value, int | float):
        # A number shown with fixed decimals ('10.00') was written to them: keep that as its text
        # (the value is unchanged; the rounding allowance reads the decimals from the text).
        decimals = _format_decimals(number_format)
        if decimals is not None and math.isfinite(value) and round(float(value), decimals) == float(value):
            return f"{float(value):.{decimals}f}"
        return float(value)
    if isinstance(value, dt.datetime | dt.date | dt.time | dt.timedelta):
        return _Unusable(f"holds a date or time ({value}); format the cell as a number")
    return str(value).strip()


# -- header -------------------------------------------------------------------------------------
def _header_key(text: str) -> str:
    return re.sub(r"[\s_\-.:]+", " ", normalize_text(text).casefold()).strip()


@dataclass(frozen=True)
class _Header:
    index: int
    text: str  # as written
    name: str  # without its unit
    key: str  # normalised name for spelling lookups
    unit: str | None
    unit_error: str | None
    descriptive: bool  # a non-force unit or a known descriptive heading
    other_unit: str | None = None  # a unit that is not a force (stress, length, moment), as written
    other_name: str = ""  # the heading without that unit


def _length_unit(text: str) -> bool:
    try:
        lookup_unit(text, Dimension.LENGTH)
    except ValueError:
        return False
    return True


def _force_per_something(text: str) -> bool:
    """'N/mm', 'kN/m2', 'kip/ft': a force unit divided by something (a line load, a stress)."""
    top, slash, _ = text.partition("/")
    if not slash:
        return False
    try:
        lookup_unit(top.strip(), Dimension.FORCE)
    except ValueError:
        return False
    return True


def _parse_header(index: int, cell: Cell) -> _Header:
    text = _text(cell)
    name, unit, error, other_unit, other_name = text, None, None, None, ""
    m = _HEADER_UNIT.match(text)
    if m and m.group("name").strip():
        inner = (m.group("p") or m.group("b") or m.group("c") or "").strip()
        try:
            unit = lookup_unit(inner, Dimension.FORCE).symbol
            name = m.group("name").strip()
        except ValueError as exc:
            if _NON_FORCE_UNIT.match(inner) or _force_per_something(inner) or _length_unit(inner):
                other_unit, other_name = inner, m.group("name").strip()
            elif "ambiguous" in str(exc):
                error = str(exc)
                name = m.group("name").strip()
    key = _header_key(name)
    descriptive = other_unit is not None or key in IGNORED_HEADERS
    return _Header(index, text, name, key, unit, error, descriptive, other_unit, other_name)


@dataclass(frozen=True)
class _Options:
    member_column: str | None
    case_column: str | None
    force_column: str | None
    case: str | None


def _find_header_row(grid: _Grid, options: _Options) -> int | None:
    seen = 0
    first: int | None = None
    for r, row in enumerate(grid.rows):
        if all(_blank(c) for c in row):
            continue
        if first is None:
            first = r
        for cell in row:
            text = _text(cell)
            if options.member_column is not None:
                if text.casefold() == options.member_column.casefold():
                    return r
            elif _header_key(text) in MEMBER_HEADERS:
                return r
        seen += 1
        if seen >= HEADER_SEARCH_ROWS:
            break
    return first


def _pick_column(
    role: str,
    spellings: Sequence[str],
    option: str | None,
    headers: list[_Header],
    taken: set[int],
    load_names: set[str],
    grid: _Grid,
    header_r: int,
    problems: _Problems,
) -> _Header | None:
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


# -- reading rows -------------------------------------------------------------------------------
@dataclass(frozen=True)
class _ValueColumn:
    index: int
    header: str  # as written, for messages
    case: str | None  # case name; None in long form (taken from the case cell)
    unit: str | None


_Result = tuple[list[ClaimedValue], list[UnmatchedLabel], list[str], str | None]


def _interpret(grid: _Grid, model: Model, options: _Options, problems: _Problems) -> _Result:
    empty: _Result = ([], [], [], None)
    header_r = _find_header_row(grid, options)
    if header_r is None:
        problems.add(
            "the table is empty; expected a header row such as 'Member', 'dead (kN)' and one row per member"
        )
        return empty
    headers = [_parse_header(c, cell) for c, cell in enumerate(grid.rows[header_r])]
    for h in headers:
        cell = grid.cell(header_r, h.index)
        if isinstance(cell, _Unusable):
            problems.add(f"the header cell {cell.reason}", grid.where(header_r, h.index))
    load_names = {n.casefold() for n in model.load_names}
    taken: set[int] = set()
    args = (headers, taken, load_names, grid, header_r, problems)
    member_h = _pick_column("member", MEMBER_HEADERS, options.member_column, *args)
    if member_h is None and options.member_column is None and headers and not headers[0].text:
        member_h = headers[0]  # an unheaded first column of labels is the usual layout
    if member_h is None:
        if options.member_column is None:
            written = ", ".join(f"'{h.text}'" for h in headers if h.text) or "nothing"
            problems.add(
                "no usable columns: no member column found; expected a header such as 'Member', "
                f"'Element', 'Bar', 'Label' or 'ID' (or name the column with --member-column); the header row has {written}",
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
    tc_h = _pick_column("T/C", TC_HEADERS, None, *args)
    if tc_h is not None:
        taken.add(tc_h.index)
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
            f"a load case column ('{case_h.text}') needs a force column beside it, e.g. 'Force (kN)'; "
            "or give one column per load case instead",
            grid.where(header_r),
        )
        return empty
    if force_h is not None and case_h is None:
        fixed_case = _single_case(model, options.case, grid, header_r, force_h, problems)
        if fixed_case is None:
            return empty
    if tc_h is not None and force_h is None:
        problems.add(
            f"a T/C column ('{tc_h.text}') is only understood beside a single force column",
            grid.where(header_r),
        )
        return empty

    if force_h is not None:
        value_columns = [_ValueColumn(force_h.index, force_h.text, fixed_case, force_h.unit)]
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
            if h.other_unit is not None and h.index not in taken and h.other_name.casefold() in load_names:
                # Named like a load case but not in a force unit: skipping it would pass its
                # claims over in silence.
                problems.add(
                    f"column '{h.text}' is named like load case '{h.other_name}', but '{h.other_unit}' is not a "
                    "force unit; give the forces in a force unit such as kN, N, kip or lbf",
                    grid.where(header_r, h.index),
                )
            if h.index in taken or h.descriptive or not h.text:
                continue
            value_columns.append(_ValueColumn(h.index, h.text, h.name, h.unit))
        if problems:
            return empty
        if options.case is not None:
            chosen = [
                v
                for v in value_columns
                if v.case is not None and v.case.casefold() == options.case.casefold()
            ]
            if not chosen:
                cols = [v.case or "" for v in value_columns]
                problems.add(
                    f"no column for load case '{options.case}'; the table has {', '.join(repr(c) for c in cols) or 'none'}.{did_you_mean(options.case, cols)}",
                    grid.where(header_r),
                )
                return empty
            value_columns = chosen
        if not value_columns:
            skipped = [f"'{h.text}' ('{h.other_unit}' is not a force unit)" for h in headers
                       if h.other_unit is not None and h.index not in taken]
            problems.add(
                f"no usable columns: besides the member column '{member_h.text}' there is no force column; "
                "expected one column per load case (e.g. 'dead (kN)') or a force column with a case column"
                + (f"; skipped {', '.join(skipped)}" if skipped else ""),
                grid.where(header_r),
            )
            return empty
        seen_names: dict[str, _ValueColumn] = {}
        for v in value_columns:
            assert v.case is not None
            other = seen_names.get(v.case.casefold())
            if other is not None:
                problems.add(
                    f"load case '{v.case}' has two columns, '{other.header}' ({grid.where(header_r, other.index)}) and "
                    f"'{v.header}'; keep one column per load case",
                    grid.where(header_r, v.index),
                )
            seen_names[v.case.casefold()] = v

    used = (
        {member_h.index}
        | {v.index for v in value_columns}
        | {h.index for h in (case_h, tc_h, unit_h) if h is not None}
    )
    start = header_r + 1
    start = _apply_units_row(grid, start, member_h.index, value_columns, problems)
    _check_unheaded_data(grid, start, headers, used, problems)
    if problems:
        return empty
    if all(all(_blank(c) for c in grid.rows[r]) for r in range(start, len(grid.rows))):
        problems.add("the table has a header but no rows of claims", grid.where(header_r))
        return empty

    reader = _RowReader(
        grid, model, problems, member_h, case_h, tc_h, unit_h, value_columns, options.case
    )
    if FAST_ROWS and case_h is None and tc_h is None and unit_h is None:
        reader.read_plain_rows(start, len(grid.rows))
    else:
        for r in range(start, len(grid.rows)):
            reader.read_row(r)
    if reader.case_filter is not None and not reader.long_cases:
        problems.add(
            f"no rows for load case '{options.case}'; the table has {', '.join(repr(c) for c in reader.all_cases)}."
            f"{did_you_mean(reader.case_filter, reader.all_cases)}",
            f"column '{case_h.text}'" if case_h is not None else None,
        )

    units = {v.unit for v in value_columns}
    header_unit = units.pop() if len(units) == 1 and unit_h is None else None
    columns = reader.long_cases if case_h is not None else [v.case or "" for v in value_columns]
    return reader.values, reader.unmatched, columns, header_unit


def _single_case(
    model: Model,
    case: str | None,
    grid: _Grid,
    header_r: int,
    force_h: _Header,
    problems: _Problems,
) -> str | None:
    names = model.load_names
    if case is None:
        if len(names) == 1:
            return names[0]
        problems.add(
            f"the table has one force column ('{force_h.text}') and no load case column; say which load case or "
            f"combination it holds with --case NAME (the model has {', '.join(repr(n) for n in names)})",
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


def _unit_text(cell: Cell) -> str | None:
    """The force unit written alone in a cell ('kN', '[kN]', '(kip)'), else None."""
    text = _text(cell).strip("()[] ")
    if not text:
        return None
    try:
        return lookup_unit(text, Dimension.FORCE).symbol
    except ValueError:
        return None


def _apply_units_row(
    grid: _Grid, start: int, member_index: int, columns: list[_ValueColumn], problems: _Problems
) -> int:
    """Detect a row of units right under the header; record them on the columns. Returns the first data row."""
    if start >= len(grid.rows):
        return start
    member_cell = grid.cell(start, member_index)
    cells = [grid.cell(start, v.index) for v in columns]
    if not (_blank(member_cell) or _unit_text(member_cell) or _text(member_cell) in ("-", "[-]")):
        return start
    if all(_blank(c) for c in cells) or not all(_blank(c) or _unit_text(c) for c in cells):
        return start
    for k, (v, c) in enumerate(zip(columns, cells, strict=True)):
        unit = _unit_text(c)
        if unit is None:
            continue
        if v.unit is not None and v.unit != unit:
            problems.add(
                f"the header says {v.unit} but the units row says {unit}",
                grid.where(start, v.index, v.header),
            )
            continue
        columns[k] = _ValueColumn(v.index, v.header, v.case, unit)
    return start + 1


def _check_unheaded_data(
    grid: _Grid, start: int, headers: list[_Header], used: set[int], problems: _Problems
) -> None:
    headed = {h.index for h in headers if h.text}
    reported: set[int] = set()
    hint = (
        " (a decimal comma in a comma-separated file splits a number in two: quote such values "
        "or separate the fields with ';')"
        if grid.delimiter == ","
        else ""
    )
    for r in range(start, len(grid.rows)):
        for c, cell in enumerate(grid.rows[r]):
            if c in headed or c in used or c in reported or _blank(cell):
                continue
            reported.add(c)
            problems.add(
                f"column {c + 1} has values but no header; give it a load case name or remove it{hint}",
                grid.where(r, c),
            )


class _RowReader:
    """Reads data rows into claims, matching labels once each and catching duplicate claims."""

    def __init__(
        self,
        grid: _Grid,
        model: Model,
        problems: _Problems,
        member_h: _Header,
        case_h: _Header | None,
        tc_h: _Header | None,
        unit_h: _Header | None,
        columns: list[_ValueColumn],
        case_filter: str | None,
    ) -> None:
        self.grid = grid
        self.problems = problems
        self.member_h = member_h
        self.case_h = case_h
        self.tc_h = tc_h
        self.unit_h = unit_h
        self.columns = columns
        self.case_filter = case_filter if case_h is not None else None
        self.matcher = _LabelMatcher(model)
        self.values: list[ClaimedValue] = []
        self.unmatched: list[UnmatchedLabel] = []
        self.long_cases: list[str] = []
        self.all_cases: list[str] = []
        self._long_seen: set[str] = set()
        self._claimed: dict[tuple[str, str], tuple[int, str]] = {}  # (target, case) -> (row, label)

    def read_row(self, r: int) -> None:
        grid = self.grid
        row = grid.rows[r]
        if all(_blank(c) for c in row):
            return
        label_cell = grid.cell(r, self.member_h.index)
        where_label = grid.where(r, self.member_h.index, self.member_h.text)
        present = [v for v in self.columns if not _blank(grid.cell(r, v.index))]
        if isinstance(label_cell, _Unusable):
            self.problems.add(f"the member label {label_cell.reason}", where_label)
            return
        label = _text(label_cell)
        if not label:
            if present:
                self.problems.add("this row has a force but no member label", where_label)
            return
        if not present:
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
                f"the member label '{label}' is a missing value or spreadsheet error, not a label",
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
        columns = [(v.index, v.case or "", (v.case or "").casefold(), v.unit, v.header) for v in self.columns]
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
                number = cell if type(cell) is float else (
                    plain_number(cell, decimal_comma=decimal_comma) if type(cell) is str else None)
                if number is None:
                    break  # anything but a plain number: the general reader words it
                value = number
                if (member, folded) in claimed:
                    break
                cells.append((index, case, folded, unit, header, value, cell))
            else:
                for index, case, folded, unit, header, value, cell in cells:
                    claimed[(member, folded)] = (r, label)
                    values.append(ClaimedValue(label, member, None, case, value + 0.0, False, unit,
                                               grid.where(r, index, header), _text(cell)))
                continue
            self.read_row(r)

    def _case_of_row(self, r: int) -> str | None:
        if self.case_h is None:
            return ""
        cell = self.grid.cell(r, self.case_h.index)
        where = self.grid.where(r, self.case_h.index, self.case_h.text)
        if isinstance(cell, _Unusable):
            self.problems.add(f"the load case {cell.reason}", where)
            return None
        name = _text(cell)
        if not name:
            self.problems.add("this row has a force but no load case", where)
            return None
        if is_nan_text(name):
            self.problems.add(
                f"the load case '{name}' is a missing value or spreadsheet error, not a case name",
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
        cell = self.grid.cell(r, self.tc_h.index)
        text = _text(cell).strip("() ").casefold()
        if not text:
            return None
        if text in ("t", "tension", "tens"):
            return "T"
        if text in ("c", "compression", "comp"):
            return "C"
        self.problems.add(
            f"'{_text(cell)}' is not T or C", self.grid.where(r, self.tc_h.index, self.tc_h.text)
        )
        return None

    def _unit_of_row(self, r: int) -> str | None:
        if self.unit_h is None:
            return None
        cell = self.grid.cell(r, self.unit_h.index)
        if _blank(cell):
            return None
        try:
            return lookup_unit(_text(cell).strip("()[] "), Dimension.FORCE).symbol
        except ValueError as exc:
            self.problems.add(
                f"unit: {exc}", self.grid.where(r, self.unit_h.index, self.unit_h.text)
            )
            return None

    def _read_value(
        self,
        r: int,
        label: str,
        match: _Match,
        column: _ValueColumn,
        case_name: str,
        tc: str | None,
        row_unit: str | None,
    ) -> None:
        grid = self.grid
        cell = grid.cell(r, column.index)
        where = grid.where(r, column.index, column.header)
        if isinstance(cell, _Unusable):
            self.problems.add(f"the force cell {cell.reason}", where)
            return
        if isinstance(cell, float):
            value, sign_fixed, cell_unit = cell, False, None
        else:
            assert isinstance(cell, str)
            try:
                value, sign_fixed, cell_unit = parse_force_cell(
                    cell, decimal_comma=grid.decimal_comma
                )
            except ValueError as exc:
                self.problems.add(str(exc), where)
                return
        if tc is not None:
            if sign_fixed and (value > 0) != (tc == "T") and value != 0:
                self.problems.add(
                    f"force '{_text(cell)}' says {'T' if value > 0 else 'C'} but the T/C column says {tc}",
                    where,
                )
                return
            if not sign_fixed and value < 0 and tc == "T":
                self.problems.add(
                    f"force '{_text(cell)}' is negative but the T/C column says T (tension)", where
                )
                return
            value, sign_fixed = (abs(value) if tc == "T" else -abs(value)), True
        unit = None
        for source_unit in (cell_unit, column.unit, row_unit):
            if source_unit is None:
                continue
            if unit is not None and source_unit != unit:
                self.problems.add(
                    f"force '{_text(cell)}' is in {unit} but its column or row says {source_unit}",
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
                    _text(cell),
                )
            )


# -- labels -------------------------------------------------------------------------------------
@dataclass(frozen=True)
class _Match:
    kind: str  # "member", "reaction", "unknown", "ambiguous"
    member: str | None = None
    reaction: tuple[str, str] | None = None
    candidates: tuple[str, ...] = ()

    @property
    def reaction_label(self) -> str:
        return f"{self.reaction[0]}.{self.reaction[1]}" if self.reaction else ""


def member_ids_for(model: Model, labels: Sequence[str]) -> list[str]:
    """Member ids for labels written as a claims table would write them ('u2u3', 'U2-L3', 'L3 U2').

    A label that names no single member is returned as written, for the caller to report.
    """
    matcher = _LabelMatcher(model)
    out = []
    for label in labels:
        found = matcher.match(label)
        out.append(found.member if found.kind == "member" and found.member is not None else label)
    return out


class _LabelMatcher:
    """Matches table labels to member ids, joint pairs and reaction components of one model."""

    def __init__(self, model: Model) -> None:
        self._ids = set(model.member_ids)
        self._ids_folded: dict[str, list[str]] = defaultdict(list)
        for mid in model.member_ids:
            self._ids_folded[mid.casefold()].append(mid)
        self._joints_folded: dict[str, list[str]] = defaultdict(list)
        for jid in model.joint_ids:
            self._joints_folded[normalize_text(jid).casefold()].append(jid)
        self._pairs = {frozenset((m.start, m.end)): m.id for m in model.members}
        self._reactions = {(r.joint, r.axis) for r in model.reactions}
        # A supported joint's unrestrained global directions (axis-aligned supports only): a claim
        # there is matched, so that 0 agrees and anything else is said to have no reaction to act on.
        inclined = {r.joint for r in model.reactions if r.axis == "n"}
        self._free_directions = {(r.joint, axis) for r in model.reactions if r.joint not in inclined
                                 for axis in AXES[: model.dim]} - self._reactions
        self._model = model
        self._pool: dict[str, str] | None = None
        self._cache: dict[str, _Match] = {}
        self._suggested = 0

    def match(self, label: str) -> _Match:
        found = self._cache.get(label)
        if found is None:
            found = self._match(label)
            self._cache[label] = found
        return found

    def _match(self, label: str) -> _Match:
        if label in self._ids:
            return _Match("member", member=label)
        folded = normalize_text(label).casefold()
        members: dict[str, None] = dict.fromkeys(self._ids_folded.get(folded, []))
        members.update(dict.fromkeys(self._pair_readings(folded)))
        reactions = dict.fromkeys(self._reaction_readings(folded))
        total = len(members) + len(reactions)
        if total == 1:
            if members:
                return _Match("member", member=next(iter(members)))
            return _Match("reaction", reaction=next(iter(reactions)))
        if total > 1:
            return _Match(
                "ambiguous", candidates=tuple(members) + tuple(f"{j}.{a}" for j, a in reactions)
            )
        return _Match("unknown", candidates=self._suggest(folded))

    def _pair_readings(self, folded: str) -> list[str]:
        found: list[str] = []
        n = len(folded)
        for i in range(1, n):
            left = folded[:i]
            if left not in self._joints_folded:
                continue
            j = i
            while j < n and folded[j] in LABEL_SEPARATORS:
                j += 1
            right = folded[j:]
            if not right or right not in self._joints_folded:
                continue
            for a in self._joints_folded[left]:
                for b in self._joints_folded[right]:
                    mid = self._pairs.get(frozenset((a, b)))
                    if mid is not None and mid not in found:
                        found.append(mid)
        return found

    def _reaction_readings(self, folded: str) -> list[tuple[str, str]]:
        if not self._reactions:
            return []
        bodies = [(folded, False)]
        prefixed = _REACTION_PREFIX.match(folded)
        if prefixed:
            bodies.append((prefixed.group("body"), True))
        found: list[tuple[str, str]] = []
        for body, has_prefix in bodies:
            readings: list[tuple[str, str]] = []
            tail = _AXIS_TAIL.search(body)
            if (
                tail
                and tail.start() > 0
                and (has_prefix or tail.group("sep") or tail.group("paren"))
            ):
                readings.append(
                    (body[: tail.start()].strip(), tail.group("paren") or tail.group("bare"))
                )
            head = _AXIS_HEAD.match(body)
            if head and has_prefix:
                readings.append((head.group("joint").strip(), head.group("axis")))
            for joint_text, axis in readings:
                for jid in self._joints_folded.get(joint_text, []):
                    if ((jid, axis) in self._reactions or (jid, axis) in self._free_directions) and (jid, axis) not in found:
                        found.append((jid, axis))
        return found

    def _suggest(self, folded: str) -> tuple[str, ...]:
        if self._suggested >= MAX_SUGGESTED_LABELS:
            return ()
        self._suggested += 1
        pool = self._suggestion_pool()
        query = re.sub(r"[\s\-_/\\|:,]+", "-", folded)
        keys: Sequence[str] = list(pool)
        if len(keys) > SUGGESTION_POOL_LIMIT:
            # Large models: compare only with keys that start alike and are of similar length,
            # the likeliest slips of a hand-typed label, so each suggestion stays cheap.
            keys = [k for k in keys if k[:1] == query[:1] and abs(len(k) - len(query)) <= 1]
            keys = keys[:SUGGESTION_POOL_LIMIT]
        close = difflib.get_close_matches(query, keys, n=8, cutoff=0.5)
        result: list[str] = []
        for key in close:
            name = pool[key]
            if name not in result:
                result.append(name)
        return tuple(result[:3])

    def _suggestion_pool(self) -> dict[str, str]:
        if self._pool is None:
            pool: dict[str, str] = {}
            for m in self._model.members:
                pool.setdefault(m.id.casefold(), m.id)
            for m in self._model.members:
                for a, b in ((m.start, m.end), (m.end, m.start)):
                    pool.setdefault(f"{a}-{b}".casefold(), m.id)
            for joint, axis in self._reactions:
                pool.setdefault(f"{joint}.{axis}".casefold(), f"{joint}.{axis}")
                pool.setdefault(f"r{joint}{axis}".casefold(), f"{joint}.{axis}")
            self._pool = pool
        return self._pool
