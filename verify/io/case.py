"""Read a case file (TOML, optionally naming CSV tables) into a validated :class:`Model`.

Every problem in the file is collected and raised together as one :class:`InputError`, each
located by file and line and naming the field, the value and what was expected.
"""

from __future__ import annotations

import csv
import io
import re
import tomllib
from collections.abc import Iterator, Sequence
from dataclasses import dataclass, field
from functools import cached_property, partial
from itertools import repeat
from pathlib import Path
from typing import Any, cast

import numpy as np

from verify.errors import (
    InputError,
    Problem,
    ProblemList,
    did_you_mean,
    has_controls,
    quoted,
    shown,
)
from verify.io.case_columns import LabelKeys, plain_columns
from verify.io.expressions import RESERVED, ExpressionError, Value, evaluate
from verify.io.files import (
    CASE_FILE_MAX_BYTES,
    TABLE_MAX_BYTES,
    UnreadableFile,
    inside_folder,
    read_regular_file,
)
from verify.io.loadforms import (
    STANDARD_GRAVITY,
    describe_vector,
    gravity,
    member_span,
    pressure_normal,
    tributary_loads,
)
from verify.io.locate import LineLocator
from verify.io.numbers import parse_number
from verify.model import (
    BulkJoints,
    BulkLoads,
    BulkMembers,
    Combination,
    ExactValues,
    Joint,
    LoadCase,
    Member,
    Model,
    Reaction,
    Units,
)
from verify.units import Dimension, Unit, lookup_unit

TOP_KEYS = (
    "title",
    "units",
    "joints",
    "members",
    "supports",
    "loads",
    "combinations",
    "stiffness",
    "notes",
    "parameters",
    "chords",
)
UNIT_KEYS = ("length", "force", "area", "modulus")
MEMBER_KEYS = ("ends", "EA", "A", "E")
STIFFNESS_KEYS = ("EA", "A", "E")
AXES = ("x", "y", "z")

# Area and modulus units for members given as A and E. Factors to m^2 and Pa.
AREA_UNITS = {"m2": 1.0, "cm2": 1e-4, "mm2": 1e-6, "in2": 0.0254**2, "ft2": 0.3048**2}
MODULUS_UNITS = {
    "Pa": 1.0,
    "kPa": 1e3,
    "MPa": 1e6,
    "GPa": 1e9,
    "N/mm2": 1e6,
    "kN/m2": 1e3,
    "psi": 4.4482216152605 / 0.0254**2,
    "ksi": 4448.2216152605 / 0.0254**2,
}

# Coincident joints / zero lengths: relative to the model's extent (common practice: coordinates
# agreeing to 1e-9 of the span are the same point in any drawing).
COINCIDENT_RTOL = 1e-9

# Sane ranges, in the case's own units. Beyond them float arithmetic stops being trustworthy long
# before the numbers stop being finite: a factor of 1e308 overflowed every force to inf and the
# claims "agreed" with nothing, coordinates of 1e155 squared past the float range and read as
# "unstable", and at 1e9 the section cuts lost every lever arm to rounding. 10^7 covers a 10 km
# span drawn in mm; 10^12 force units, the weight of a large ship in N; combination factors are
# of order 1 (0.9 to 1.6 in practice), so 1000 only catches slips.
COORDINATE_LIMIT = 1e7
LOAD_LIMIT = 1e12
FACTOR_LIMIT = 1e3
EA_LIMIT = 1e18
LABEL_MAX_CHARS = 200  # ids and case names a reader can see in a table column
SUGGESTED_JOINTS = 20  # unknown joint ids given a 'did you mean'; the rest are listed plainly
# Exact (sympy) values cost ~0.1-1 ms each: a hand-written case holds dozens of expressions; past
# this many a file is generated data, and its expressions keep their decimals only.
EXACT_BUDGET = 2000
_DECIMAL_COMMA = re.compile(r"^[+-]?\d+,\d+$")  # "12,5": said as a decimal comma, not as arithmetic
PARAMETERS_MAX = 200
# CSV tables of fewer rows go to the careful row-by-row reader: importing pandas for the bulk
# reader costs 0.15-0.25 s, as long as the careful reader takes for about 10^4 members (measured
# on the benchmark's 10^4-member Pratt truss and grid: 0.12 s careful, 0.18-0.20 s bulk).
BULK_MIN_ROWS = 20_000


class _Origins:
    """(kind, id) -> (file, line) of the CSV row that defined a joint or member.

    Tables read in bulk are registered whole (file, ids in row order; row k on line k + 2) and
    indexed only when a problem asks where an item was defined: a clean table never pays for it.
    """

    def __init__(self) -> None:
        self._known: dict[tuple[str, str], tuple[str, int]] = {}
        self._tables: list[tuple[str, str, list[str]]] = []

    def __setitem__(self, key: tuple[str, str], value: tuple[str, int]) -> None:
        self._known[key] = value

    def register(self, kind: str, file: str, ids: list[str]) -> None:
        self._tables.append((kind, file, ids))

    def get(
        self, key: tuple[str, str], default: tuple[str, int] | None = None
    ) -> tuple[str, int] | None:
        if key not in self._known and self._tables:
            for kind, file, ids in self._tables:
                for k, ident in enumerate(ids):
                    self._known.setdefault((kind, ident), (file, k + 2))
            self._tables.clear()
        return self._known.get(key, default)


@dataclass
class _Bulk:
    """Joint and member tables read in bulk, kept as the arrays and indexes the Model would build
    again."""

    joint_ids: list[str] | None = None
    xyz: Any = None  # joints x dim
    ends: Any = None  # members x 2, positions in joint_ids
    joint_index: dict[str, int] | None = None  # joint id -> position in joint_ids
    member_index: dict[str, int] | None = None  # member id -> row of the members table
    id_array: Any = None  # joint_ids as a numpy array of objects, once made
    keys: LabelKeys | None = None  # joint_ids as byte keys (None: not made, or they cannot be)
    keys_made: bool = False

    def id_strings(self, positions: Any) -> list[str]:
        """The ids at `positions` in joint_ids, as the very strings of joint_ids."""
        if self.id_array is None:
            self.id_array = np.array(self.joint_ids, dtype=object)
        return cast("list[str]", self.id_array[positions].tolist())

    def label_keys(self) -> LabelKeys | None:
        """The joint ids as numbers made from their bytes, once (None: they cannot be)."""
        if not self.keys_made:
            assert self.joint_ids is not None
            self.keys, self.keys_made = LabelKeys.of(self.joint_ids), True
        return self.keys

    def positions(self, labels: Any) -> Any:
        """The position of each label in joint_ids (-1: none), looked up in joint_index."""
        assert self.joint_index is not None
        return np.fromiter(
            map(self.joint_index.get, labels, repeat(-1)), dtype=np.int64, count=len(labels)
        )


@dataclass
class _Ctx:
    file: str
    lines: LineLocator
    problems: ProblemList
    # Where each joint / member was defined when it came from a CSV table: (file, line).
    origins: _Origins = field(default_factory=_Origins)
    # Ids declared even if their data failed to parse: references to them are not "undefined".
    declared_joints: set[str] = field(default_factory=set)
    bulk: _Bulk = field(default_factory=_Bulk)
    needs_area_units: list[tuple[str, tuple[str, ...]]] = field(
        default_factory=list
    )  # (what, path)
    joints_unreadable: bool = (
        False  # the joints table could not be read: references to joints are not news
    )
    # Unknown joints given a 'did you mean' (each compares against every joint id: 0.1 s at
    # 5x10^4 joints, so a table of 10^4 mistyped ids took a quarter of an hour)
    suggested: int = 0
    tables_outside: bool = False  # the user allowed tables outside the case's folder
    length_unit: str = ""  # symbols for messages, once [units] is read
    force_unit: str = ""
    tables: dict[str, tuple[str, str] | None] = field(
        default_factory=dict
    )  # name -> (path, text), read once
    parameters: dict[str, Value] = field(default_factory=dict)  # [parameters], in file order
    exact_left: int = EXACT_BUDGET
    exact_coords: dict[str, tuple[object, ...]] = field(default_factory=dict)
    exact_loads: dict[tuple[str, str], tuple[object, ...]] = field(default_factory=dict)
    conversions: list[str] = field(default_factory=list)
    joints: Sequence[Joint] = ()  # as the joints table gives them (suggestions in its order)

    def add(self, message: str, *path: str, line: int | None = None) -> None:
        self.problems.add(message, line=line if line is not None else self.lines.line(*path))

    def add_at(self, kind: str, ident: str, message: str, *path: str) -> None:
        """A problem about a joint or member, located where that item was defined."""
        origin = self.origins.get((kind, ident))
        if origin is not None and origin[0] != self.file:
            self.problems.problems.append(Problem(origin[0], message, origin[1]))
        else:
            self.add(message, *path)


def read_case(path: str | Path, *, tables_outside: bool = False) -> Model:
    """Read, validate and freeze the case at `path`. Raises InputError listing every problem.

    CSV tables the case names must lie inside the case's folder (links followed), unless
    `tables_outside`: a case file from elsewhere must not make the run read /etc/passwd.
    """
    path = Path(path)
    name = str(path)
    try:
        raw = read_regular_file(path, limit=CASE_FILE_MAX_BYTES)
    except FileNotFoundError:
        raise InputError([Problem(name, "file not found")]) from None
    except UnreadableFile as exc:
        raise InputError([Problem(name, str(exc))]) from None
    if (
        raw[:4] == b"PK\x03\x04"
        or raw[:8] == b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
        or path.suffix.lower() in (".csv", ".xlsx", ".xls")
    ):
        raise InputError(
            [
                Problem(
                    name,
                    "this looks like a table (CSV or a spreadsheet), not a case file: the case is "
                    "a TOML file (title, [units], [joints], [members], [supports], [loads]; see "
                    "the README); a claimed-forces table goes after --claims",
                )
            ]
        ) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputError(
            [Problem(name, f"not UTF-8 text (byte {exc.start}); save the case file as UTF-8")]
        ) from None
    try:
        data = tomllib.loads(text)
    except RecursionError:
        raise InputError(
            [
                Problem(
                    name,
                    "not a usable case file: values nested too deeply; a case needs tables of "
                    "arrays, at most two levels down",
                )
            ]
        ) from None
    except tomllib.TOMLDecodeError as exc:
        found = re.search(r"\(at line (\d+), column (\d+)\)", str(exc))
        line = int(found.group(1)) if found else None
        message = re.sub(r"\s*\(at line \d+, column \d+\)", "", str(exc))
        column = f" (column {found.group(2)})" if found else ""
        raise InputError([Problem(name, f"not valid TOML{column}: {message}", line)]) from None
    except ValueError:  # tomllib converts integers itself; Python refuses more than 4300 digits
        raise InputError(
            [
                Problem(
                    name,
                    "not a usable case file: an integer with thousands of digits; numbers in a "
                    "case have at most 17 significant figures",
                )
            ]
        ) from None
    return build_model(
        data, source=name, text=text, base_dir=path.parent, tables_outside=tables_outside
    )


def build_model(
    data: dict[str, Any],
    *,
    source: str = "<case>",
    text: str = "",
    base_dir: Path | None = None,
    tables_outside: bool = False,
) -> Model:
    """Validate parsed case data and freeze it into a Model."""
    ctx = _Ctx(source, LineLocator(text), ProblemList(source), tables_outside=tables_outside)
    base = base_dir or Path(".")

    for key in data:
        if key not in TOP_KEYS:
            ctx.add(
                f"unknown key '{key}'; expected one of "
                f"{', '.join(TOP_KEYS)}.{did_you_mean(key, TOP_KEYS)}",
                key,
            )

    title = data.get("title", "")
    if not isinstance(title, str):
        ctx.add("title must be a string", "title")
        title = str(title)
    elif has_controls(title):
        ctx.add(
            f"title {shown(title)} holds a control character; write plain text on one line", "title"
        )

    units = _read_units(ctx, data.get("units"))
    if units is not None:
        ctx.length_unit, ctx.force_unit = units.length.symbol, units.force.symbol
    _read_parameters(ctx, data.get("parameters"))
    joints = _read_joints(ctx, data.get("joints"), base)
    ctx.joints = joints
    dim = _dimension(ctx, joints)
    bulk = ctx.bulk
    joint_ids = (
        set(bulk.joint_ids)  # the ids of a table read in bulk: no attribute read per joint
        if bulk.joint_ids is not None and len(bulk.joint_ids) == len(joints)
        else {j.id for j in joints}
    )
    area_unit, modulus_unit = _stiffness_units(ctx, data.get("units"))
    defaults = _read_stiffness_defaults(ctx, data.get("stiffness"), units, area_unit, modulus_unit)
    members = _read_members(
        ctx, data.get("members"), base, joint_ids, units, area_unit, modulus_unit, defaults
    )
    if ctx.needs_area_units:
        (what, path), more = ctx.needs_area_units[0], len(ctx.needs_area_units) - 1
        ctx.add(
            f'{what}: A and E need [units] area (e.g. "mm2") and modulus (e.g. "GPa")'
            + (f"; {more} more member{'s give' if more > 1 else ' gives'} A and E" if more else ""),
            *path,
        )
    reactions = _read_supports(ctx, data.get("supports"), base, joint_ids, dim)
    geometry = _Geometry(joints, members, dim, units)
    chords = _read_chords(ctx, data.get("chords"), geometry)
    cases = _read_loads(ctx, data.get("loads"), base, joint_ids, dim, geometry, chords)
    combos = _read_combinations(ctx, data.get("combinations"), [c.name for c in cases])

    if not joints and not ctx.joints_unreadable:
        ctx.add("the model has no joints; add a [joints] table", "joints")
    if not members and not ctx.joints_unreadable:
        ctx.add("the model has no members; add a [members] table", "members")
    _check_geometry(ctx, joints, members, dim)
    # Every joint at a member end (both tables read in bulk, the common large case): no joint or
    # load to name below, found from the end positions instead of a set of 2x10^6 ids.
    every_joint_used = (
        bulk.xyz is not None
        and bulk.ends is not None
        and len(bulk.xyz) == len(joints)
        and len(bulk.ends) == len(members)
        and len(members) > 0
        and bool(np.bincount(bulk.ends.ravel(), minlength=len(joints)).all())
    )
    connected = set() if every_joint_used else {m.start for m in members} | {m.end for m in members}
    for case in [] if every_joint_used else cases:
        for joint in case.loads:
            if joint in joint_ids and joint not in connected and members:
                ctx.add(
                    f"load case '{case.name}' loads joint '{joint}', which no member connects; a "
                    "load there cannot reach the supports",
                    "loads",
                    case.name,
                    joint,
                )
    for item in [] if every_joint_used else joints:
        if item.id not in connected and members:
            ctx.add(
                f"joint '{item.id}' is not connected to any member; remove it or add its members",
                "joints",
                item.id,
            )
    ctx.problems.raise_if_any()
    assert units is not None and dim is not None
    arrays = None
    if (
        bulk.xyz is not None
        and bulk.ends is not None
        and len(bulk.xyz) == len(joints)
        and len(bulk.ends) == len(members)
    ):
        arrays = (bulk.xyz, bulk.ends)
    # The indexes the bulk readers made, where their table gave every joint or every member.
    joint_index = (
        bulk.joint_index if bulk.xyz is not None and len(bulk.xyz) == len(joints) else None
    )
    member_index = (
        bulk.member_index
        if bulk.member_index is not None and len(bulk.member_index) == len(members)
        else None
    )
    tables = tuple(path for path, _ in (t for t in ctx.tables.values() if t is not None))
    exact = (
        ExactValues(dict(ctx.exact_coords), dict(ctx.exact_loads))
        if ctx.exact_coords or ctx.exact_loads
        else None
    )
    return Model(
        title=title,
        units=units,
        dim=dim,
        joints=joints if isinstance(joints, BulkJoints) else tuple(joints),
        members=members if isinstance(members, BulkMembers) else tuple(members),
        reactions=tuple(reactions),
        cases=tuple(cases),
        combinations=tuple(combos),
        source=source,
        arrays=arrays,
        indexes=(joint_index, member_index),
        tables=tables,
        conversions=tuple(ctx.conversions),
        exact=exact,
    )


# -- units --------------------------------------------------------------------------------------
def _read_units(ctx: _Ctx, table: Any) -> Units | None:
    if table is None:
        ctx.add(
            'missing [units] table; declare length and force units, e.g. length = "m", force = '
            '"kN"',
            line=1,
        )
        return None
    if not isinstance(table, dict):
        ctx.add("[units] must be a table with length and force", "units")
        return None
    for key in table:
        if key not in UNIT_KEYS:
            ctx.add(
                f"unknown key '{key}' in [units]; expected "
                f"{', '.join(UNIT_KEYS)}.{did_you_mean(key, UNIT_KEYS)}",
                "units",
                key,
            )
    found: dict[str, Unit] = {}
    for key, dimension in (("length", Dimension.LENGTH), ("force", Dimension.FORCE)):
        if key not in table:
            ctx.add(f"[units] has no '{key}' unit", "units")
            continue
        try:
            found[key] = lookup_unit(str(table[key]), dimension)
        except ValueError as exc:
            ctx.add(f"units.{key}: {exc}", "units", key)
    if len(found) == 2:
        return Units(length=found["length"], force=found["force"])
    return None


def _stiffness_units(ctx: _Ctx, table: Any) -> tuple[float | None, float | None]:
    if not isinstance(table, dict):
        return None, None
    result: list[float | None] = []
    for key, options in (("area", AREA_UNITS), ("modulus", MODULUS_UNITS)):
        value = table.get(key)
        if value is None:
            result.append(None)
        elif isinstance(value, str) and value.replace("²", "2") in options:  # "mm²" is "mm2"
            result.append(options[value.replace("²", "2")])
        else:
            ctx.add(
                f"units.{key}: unknown unit '{value}'; accepted: "
                f"{', '.join(options)}.{did_you_mean(str(value), list(options))}",
                "units",
                key,
            )
            result.append(None)
    return result[0], result[1]


# -- CSV tables ---------------------------------------------------------------------------------
def _table_text(ctx: _Ctx, base: Path, name: str, where: tuple[str, ...]) -> tuple[str, str] | None:
    """(path, text) of a CSV table the case names, read once; None, with the problem said once,
    when it is missing, outside the case's folder, not a regular file, too large or not text.

    Line endings become "\\n" (CR-only files from old spreadsheets included), so that the csv
    module and pandas count the same lines.
    """
    if name in ctx.tables:
        return ctx.tables[name]
    ctx.tables[name] = None
    path = (base / name) if not Path(name).is_absolute() else Path(name)
    field_name = ".".join(str(w) for w in where)
    problem: str | None = None
    text = ""
    if not ctx.tables_outside and not inside_folder(path, base):
        problem = (
            f"{field_name} names the table {quoted(name)}, which is outside the case's folder "
            f"{base}; tables stay beside the case file. Move it there, or pass --tables-anywhere"
        )
    else:
        try:
            text = read_regular_file(path, limit=TABLE_MAX_BYTES).decode("utf-8-sig")
        except FileNotFoundError:
            problem = (
                f"{field_name} names the table {quoted(name)}, which does not exist (looked in "
                f"{base})"
            )
        except UnreadableFile as exc:
            problem = f"{field_name}: table {quoted(name)}: {exc}"
        except UnicodeDecodeError as exc:
            problem = (
                f"{field_name}: table {quoted(name)} is not UTF-8 text (byte {exc.start}); save it "
                "as UTF-8 CSV"
            )
        else:
            if "\x00" in text:
                problem = (
                    f"{field_name}: table {quoted(name)} holds NUL bytes (byte "
                    f"{text.index(chr(0))}); it is not a text table"
                )
    if problem is not None:
        ctx.add(problem, *where)
        ctx.joints_unreadable = ctx.joints_unreadable or where == ("joints",)
        return None
    if "\r" in text:  # one scan of a table that has none (the usual), not two replaces
        text = text.replace("\r\n", "\n").replace("\r", "\n")
    ctx.tables[name] = (str(path), text)
    return ctx.tables[name]


def _csv_rows(
    ctx: _Ctx, base: Path, name: str, where: tuple[str, ...], required: tuple[str, ...]
) -> Iterator[tuple[str, int, dict[str, str]]]:
    """Yield (file, line, row) from a CSV table named in the case file; headers are lower-cased."""
    found = _table_text(ctx, base, name, where)
    if found is None:
        return
    file, text = found
    first = text.split("\n", 1)[0]
    # Spreadsheets in many locales save CSV with ';' (or tabs) between fields.
    delimiter = next((d for d in (";", "\t") if d in first and "," not in first), ",")
    reader = csv.reader(io.StringIO(text), delimiter=delimiter)
    try:
        try:
            header = [h.strip().lower() for h in next(reader)]
        except StopIteration:
            ctx.problems.problems.append(
                Problem(file, "the table is empty; expected a header row", 1)
            )
            return
        missing = [r for r in required if r not in header]
        if missing:
            ctx.problems.problems.append(
                Problem(
                    file,
                    f"header lacks column(s) {', '.join(missing)}; found "
                    f"{shown(', '.join(header), limit=120)}",
                    1,
                )
            )
            if where == ("joints",):
                ctx.joints_unreadable = True
            return
        rows = 0
        for row in reader:
            line = reader.line_num
            if not row or all(not c.strip() for c in row):
                continue
            rows += 1
            if len(row) != len(header):
                ctx.problems.problems.append(
                    Problem(file, f"row has {len(row)} fields, the header has {len(header)}", line)
                )
                continue
            yield file, line, {h: c.strip() for h, c in zip(header, row, strict=True)}
    except csv.Error as exc:  # an unclosed quote, a field beyond the csv module's size limit
        ctx.problems.problems.append(
            Problem(
                file,
                f"not readable as CSV from here on ({exc}); a table has one row per line, fields "
                "separated by commas",
                reader.line_num,
            )
        )
        if where == ("joints",):
            ctx.joints_unreadable = True
        return
    if not rows:
        ctx.problems.problems.append(
            Problem(
                file,
                f"the table has a header ({shown(', '.join(header), limit=120)}) but no rows",
                1,
            )
        )


_PADDING = (" ,", ", ", " \n", "\n ", " \r", "\t")
_ODD_CHARACTERS = re.compile("[\x00-\x08\x0b-\x1f\x7f-\x9f\u2028\u2029]")
# The bytes of a plain table: printable ASCII but the space and the quote, and line breaks. A
# table of these alone has no control character, no padded cell and no quoted field, which one
# bytes.translate finds out (one pass in C, instead of a regular expression and six searches).
_PLAIN_BYTES = bytes(range(0x21, 0x7F)).replace(b'"', b"") + b"\n"


def _plain_table(text: str) -> bool:
    """Whether `text` holds only _PLAIN_BYTES (then _ODD_CHARACTERS and _PADDING find nothing)."""
    return text.isascii() and not text.encode("ascii").translate(None, _PLAIN_BYTES)


def _clean_frame(
    ctx: _Ctx,
    base: Path,
    name: str,
    where: tuple[str, ...],
    required: tuple[str, ...],
    numeric: tuple[str, ...],
) -> tuple[str, Any] | None:
    """A CSV table read in bulk with pandas when it is clean, else None (the row-by-row reader
    then finds and words every problem). Clean means: the required columns, no blank or short
    rows, no required cell empty, and every cell of the `numeric` columns a finite number
    (returned as float64 columns; every other column holds Python strings). Row k is on line
    k + 2.
    """
    found = _table_text(ctx, base, name, where)
    if found is None:
        return None
    path, text = found
    breaks = text.count("\n")
    if breaks < BULK_MIN_ROWS:
        return None  # a small table: the careful reader is quicker than importing pandas
    plain = _plain_table(text)
    if not plain and _ODD_CHARACTERS.search(text):
        return None  # control characters in a label: the careful reader refuses them by name
    import pandas as pd

    try:
        first = text.split("\n", 1)[0]
        header = next(csv.reader([first]))
        names = [h.strip().lower() for h in header]
        # Numeric columns are parsed by pandas' C parser; anything it cannot read as a number
        # leaves the column as text, which sends the table to the careful reader below. Text
        # columns as Python strings (object), which pandas makes quicker than its str dtype;
        # plain ASCII handed over as bytes, which its parser reads quicker still.
        as_text = {h: object for h, n in zip(header, names, strict=True) if n not in numeric}
        source = io.BytesIO(text.encode("ascii")) if plain else io.StringIO(text)
        frame = pd.read_csv(source, dtype=as_text, keep_default_na=False, skip_blank_lines=False)
    except Exception:  # noqa: BLE001 - any trouble: the careful reader explains it
        return None
    frame.columns = [str(c).strip().lower() for c in frame.columns]
    if any(r not in frame.columns for r in required) or frame.columns.duplicated().any():
        return None
    if len(set(names)) != len(names):
        return None  # a name twice: pandas renames the second ("id.1"), the careful reader not
    if not isinstance(frame.index, pd.RangeIndex) or len(frame.columns) != len(header):
        return None  # rows longer than the header: pandas would take a column as the index
    # Lines as str.splitlines counts them: _table_text made every line end "\n", and the control
    # characters splitlines also breaks at sent the table to the careful reader above.
    if breaks + (not text.endswith("\n")) != len(frame) + 1:
        return None  # quoted line breaks or blank lines: line numbers would not follow rows
    if '"' not in text and text.count(",") != (len(header) - 1) * (len(frame) + 1):
        # A short row (pandas fills its missing cells with "" and says nothing; the careful
        # reader refuses it by line), where no comma can hide in quotes. Long rows fail above.
        return None
    if not plain and (
        text.startswith((" ", "\t"))
        or text.endswith((" ", "\t"))
        or any(p in text for p in _PADDING)
        or '"' in text
        or not text.isascii()
    ):
        # A padded cell somewhere (rare; inside quotes, or a no-break space from a spreadsheet):
        # strip the text columns as the careful reader does; numbers are read either way.
        for column in frame.columns:
            if column not in numeric:
                frame[column] = frame[column].str.strip()
    for column in numeric:
        if column not in frame.columns:
            continue
        if frame[column].dtype.kind not in "iuf":
            return None
        values = frame[column].to_numpy(dtype=float)
        if not np.isfinite(values).all():
            return None
        frame[column] = values
    for column in required:
        # An empty cell, or a short row's missing one (pandas gives ""): compared as objects,
        # which numpy does at C speed (the .str accessor makes a Python call per cell).
        if column not in numeric and (frame[column].to_numpy() == "").any():
            return None
    return path, frame


def _number(
    ctx: _Ctx,
    value: Any,
    what: str,
    *path: str,
    file: str | None = None,
    line: int | None = None,
    limit: float | None = None,
    unit: str = "",
) -> float | None:
    """A finite number, within +-`limit` when given; else None with the problem said.

    Text in a TOML value (never a CSV cell: tables hold numbers) may be arithmetic; see
    verify/io/expressions.py."""
    found = _value(ctx, value, what, *path, file=file, line=line, limit=limit, unit=unit)
    return None if found is None else found.number


def _value(
    ctx: _Ctx,
    value: Any,
    what: str,
    *path: str,
    file: str | None = None,
    line: int | None = None,
    limit: float | None = None,
    unit: str = "",
    exact: bool = False,
) -> Value | None:
    """`_number` with the exact value beside the float: for arithmetic where it is rational or a
    surd, and for plain numbers when `exact` (the decimal as written), while the budget lasts."""
    result: Value | None = None
    try:
        number = parse_number(value)
    except ValueError as exc:
        message = f"{what}: {exc}; expected a finite number"
        if isinstance(value, str) and file is None and not _DECIMAL_COMMA.match(value.strip()):
            try:
                result = evaluate(value, ctx.parameters, exact=ctx.exact_left > 0)
                ctx.exact_left -= 1
            except ExpressionError as why:
                message = (
                    f"{what}: {quoted(value)} is not a number; expected a finite number or "
                    f"arithmetic ({why})"
                )
    else:
        exact_value = None
        if exact and ctx.exact_left > 0:
            import sympy

            ctx.exact_left -= 1
            exact_value = sympy.Rational(repr(number))
        result = Value(number, exact_value)
    if result is not None:
        if limit is None or abs(result.number) <= limit:
            return result
        message = (
            f"{what}: {result.number:g} is beyond the sane range of "
            f"+-{limit:g}{' ' + unit if unit else ''}; check the units (or a slipped exponent)"
        )
    _say(ctx, message, path, file, line)
    return None


# -- parameters ---------------------------------------------------------------------------------
def _read_parameters(ctx: _Ctx, table: Any) -> None:
    """[parameters]: name = number or arithmetic over the names above it, in file order."""
    if table is None:
        return
    if not isinstance(table, dict):
        ctx.add(
            '[parameters] must be a table of names, e.g. span = 24.0, panel = "span / 6"',
            "parameters",
        )
        return
    if len(table) > PARAMETERS_MAX:
        ctx.add(f"[parameters] holds {len(table)} names; at most {PARAMETERS_MAX}", "parameters")
        return
    for name, value in table.items():
        if not (name.isidentifier() and name.isascii()) or name in RESERVED:
            rule = (
                f"is a reserved word ({', '.join(RESERVED)})"
                if name in RESERVED
                else "is not a plain name (letters, digits and _, not starting with a digit)"
            )
            ctx.add(f"parameter {quoted(name)} {rule}", "parameters", name)
            continue
        found = _value(
            ctx, value, f"parameter '{name}'", "parameters", name, limit=EA_LIMIT, exact=True
        )
        if found is not None:
            ctx.parameters[name] = found


def _label(
    ctx: _Ctx, label: str, what: str, *path: str, file: str | None = None, line: int | None = None
) -> bool:
    """Whether `label` can name a joint, member or load column: not empty, one line of plain text,
    short enough to read in a table column. Says why not."""
    if not label.strip():
        rule = "is empty; give it a name"
    elif has_controls(label):
        rule = "holds a control character (a line break, tab, ESC, NUL ...); write plain text"
    elif len(label) > LABEL_MAX_CHARS:
        rule = f"is {len(label)} characters long; at most {LABEL_MAX_CHARS}"
    else:
        return True
    _say(
        ctx,
        f"{what} {quoted(label)} {rule}" if label.strip() else f"{what} {rule}",
        path,
        file,
        line,
    )
    return False


def _plain_label(label: str) -> bool:
    return bool(label.strip()) and not has_controls(label) and len(label) <= LABEL_MAX_CHARS


def _within(values: Any, limit: float) -> bool:
    return bool((np.abs(values) <= limit).all())


# -- joints -------------------------------------------------------------------------------------
def _read_joints(ctx: _Ctx, table: Any, base: Path) -> Sequence[Joint]:
    joints: list[Joint] = []
    if table is None:
        return joints
    if isinstance(table, str):
        fast = _fast_joints(ctx, base, table)
        if fast is not None:
            return fast
        seen: dict[str, int] = {}
        said = len(ctx.problems.problems)
        for file, line, row in _csv_rows(ctx, base, table, ("joints",), ("id", "x", "y")):
            jid = row["id"]
            if not _label(ctx, jid, "joint id", file=file, line=line):
                continue
            if jid in seen:
                ctx.problems.problems.append(
                    Problem(file, f"duplicate joint id '{jid}' (first on line {seen[jid]})", line)
                )
                continue
            seen[jid] = line
            ctx.declared_joints.add(jid)
            ctx.origins[("joint", jid)] = (file, line)
            axes = ("x", "y", "z") if row.get("z", "") != "" else ("x", "y")
            coords = [
                _number(
                    ctx,
                    row[a],
                    f"joint '{jid}' {a}",
                    file=file,
                    line=line,
                    limit=COORDINATE_LIMIT,
                    unit=ctx.length_unit,
                )
                for a in axes
            ]
            given = [c for c in coords if c is not None]
            if len(given) == len(coords):
                joints.append(Joint(jid, tuple(float(c) for c in given)))
        if not joints and len(ctx.problems.problems) > said:
            ctx.joints_unreadable = (
                True  # nothing usable, and the table's own problems say why: spare the echoes
            )
        return joints
    if not isinstance(table, dict):
        ctx.add("[joints] must be a table (id = [x, y]) or the name of a CSV file", "joints")
        return joints
    for jid, value in table.items():
        ctx.declared_joints.add(str(jid))
        if not _label(ctx, jid, "joint id", "joints", jid):
            continue
        if not isinstance(value, list) or len(value) not in (2, 3):
            ctx.add(
                f"joint '{jid}': expected [x, y] or [x, y, z], got {shown(value)}", "joints", jid
            )
            continue
        values = [
            _value(
                ctx,
                v,
                f"joint '{jid}' coordinate {k + 1}",
                "joints",
                jid,
                limit=COORDINATE_LIMIT,
                unit=ctx.length_unit,
            )
            for k, v in enumerate(value)
        ]
        known = [v for v in values if v is not None]
        if len(known) == len(values):
            joints.append(Joint(str(jid), tuple(v.number for v in known)))
            if any(
                isinstance(raw, str) and v.exact is not None
                for raw, v in zip(value, known, strict=True)
            ):
                ctx.exact_coords[str(jid)] = tuple(v.exact for v in known)
    return joints


def _fast_joints(ctx: _Ctx, base: Path, name: str) -> Sequence[Joint] | None:
    found = _clean_frame(ctx, base, name, ("joints",), ("id", "x", "y"), ("x", "y"))
    if found is None:
        return None
    file, frame = found
    ids = frame["id"].tolist()
    if max(map(len, ids), default=0) > LABEL_MAX_CHARS:
        return None  # an id too long to read in a table column: the careful reader says which
    # The Model's joint index, made once here: fewer keys than rows means a repeated id.
    index = dict(zip(ids, range(len(ids)), strict=True))
    if len(index) != len(ids):
        return None
    axes = ["x", "y"]
    if "z" in frame.columns and (frame["z"] != "").any():
        if not _plain_numbers(frame["z"]):
            return None  # mixed 2D/3D rows or a bad z: the careful reader words it
        axes.append("z")
    xyz = frame[axes].astype(float).to_numpy()
    if not np.isfinite(xyz).all() or not _within(xyz, COORDINATE_LIMIT):
        return None
    # Not added to ctx.declared_joints: every id of a bulk table is a usable joint, so a
    # reference to one never asks whether it was declared (a set of 5x10^5 ids spared).
    ctx.origins.register("joint", file, ids)
    ctx.bulk.joint_ids, ctx.bulk.xyz, ctx.bulk.joint_index = ids, xyz, index
    return BulkJoints(ids, xyz)  # each Joint made only if the joints are read one by one


def _plain_numbers(column: Any) -> bool:
    """Every cell converts to a finite number ('12,5', 'nan', 'inf', '1e400' do not).

    A loose bulk test: anything it lets through is a number; anything odd sends the whole table
    to the careful reader, which applies the strict rule and words the problem.
    """
    import pandas as pd

    values = pd.to_numeric(column, errors="coerce").to_numpy(dtype=float)
    return bool(np.isfinite(values).all())


def _dimension(ctx: _Ctx, joints: Sequence[Joint]) -> int | None:
    if not joints:
        return None
    if ctx.bulk.xyz is not None and len(ctx.bulk.xyz) == len(joints):
        return int(ctx.bulk.xyz.shape[1])  # one table read in bulk: one width for every joint
    dims = {len(j.coords) for j in joints}
    if len(dims) == 1:
        return dims.pop()
    two = [j.id for j in joints if len(j.coords) == 2]
    three = [j.id for j in joints if len(j.coords) == 3]
    minority = two if len(two) <= len(three) else three
    for jid in minority[:10]:
        ctx.add_at(
            "joint",
            jid,
            f"joint '{jid}' has {'2' if jid in two else '3'} coordinates but most joints have "
            f"{'3' if jid in two else '2'}; a model is all 2D or all 3D",
            "joints",
            jid,
        )
    return 3 if len(three) >= len(two) else 2


# -- members ------------------------------------------------------------------------------------
def _joint_ref(
    ctx: _Ctx,
    value: Any,
    joint_ids: set[str],
    what: str,
    *path: str,
    file: str | None = None,
    line: int | None = None,
) -> str | None:
    if isinstance(value, bool) or isinstance(value, float):
        message = f'{what}: joint id {value!r} must be written as a string, e.g. "{value}"'
    elif isinstance(value, (str, int)):
        jid = str(value)
        if jid in joint_ids:
            return jid
        if jid in ctx.declared_joints or ctx.joints_unreadable:
            return None  # defined but unusable, or the joints table unreadable: said once already
        hint = ""
        if ctx.suggested < SUGGESTED_JOINTS:
            ctx.suggested += 1
            # The candidates in table order, not the set's (which changes from run to run): the
            # same suggestions, in the same order, every time.
            bulk_ids = ctx.bulk.joint_ids
            in_bulk = bulk_ids is not None and len(bulk_ids) == len(ctx.joints)
            order = bulk_ids if bulk_ids is not None and in_bulk else [j.id for j in ctx.joints]
            candidates = [j for j in order if j in joint_ids]
            if len(candidates) != len(joint_ids):
                candidates = sorted(joint_ids)  # (ids not from this case's joints: one order)
            hint = did_you_mean(jid, candidates)
        message = f"{what} names joint '{shown(jid)}', which is not defined.{hint}"
    else:
        message = f"{what}: expected a joint id, got {shown(value)}"
    if file is not None and file != ctx.file:
        ctx.problems.problems.append(Problem(file, message, line))
    else:
        ctx.add(message, *path, line=line)
    return None


def _fast_members(
    ctx: _Ctx, base: Path, name: str, joint_ids: set[str], default_ea: float | None
) -> Sequence[Member] | None:
    plain = _plain_members(ctx, base, name, default_ea)
    if plain is not None:
        return plain
    found = _clean_frame(ctx, base, name, ("members",), ("id", "start", "end"), ())
    if found is None:
        return None

    file, frame = found
    ids = frame["id"].tolist()
    if max(map(len, ids), default=0) > LABEL_MAX_CHARS:
        return None  # an id too long to read in a table column: the careful reader says which
    # The Model's member index, made once here: fewer keys than rows means a repeated id.
    index = dict(zip(ids, range(len(ids)), strict=True))
    if len(index) != len(ids):
        return None
    ends = None
    if ctx.bulk.joint_index is not None and len(ctx.bulk.joint_index) == len(joint_ids):
        ends = np.column_stack(
            [
                ctx.bulk.positions(frame["start"].to_numpy()),
                ctx.bulk.positions(frame["end"].to_numpy()),
            ]
        )
        if (ends < 0).any():
            return None
        # The joint tables' own id strings at the member ends (equal texts): the members table's
        # copies, two per member, are freed with the frame (about 100 MB per 10^6 members).
        starts, stops = ctx.bulk.id_strings(ends[:, 0]), ctx.bulk.id_strings(ends[:, 1])
    elif frame["start"].isin(joint_ids).all() and frame["end"].isin(joint_ids).all():
        starts, stops = frame["start"].tolist(), frame["end"].tolist()
    else:
        return None
    eas: Any = repeat(default_ea, len(ids))
    if "ea" in frame.columns and (frame["ea"] != "").any():
        eas = [default_ea] * len(ids)
        given = frame["ea"] != ""
        if not _plain_numbers(frame.loc[given, "ea"]):
            return None
        values = frame.loc[given, "ea"].astype(float)
        if not (np.isfinite(values) & (values > 0) & (values <= EA_LIMIT)).all():
            return None
        for k, value in zip(np.nonzero(given.to_numpy())[0].tolist(), values.tolist(), strict=True):
            eas[k] = value
    ctx.origins.register("member", file, ids)
    ctx.bulk.ends, ctx.bulk.member_index = ends, index
    return list(map(partial(tuple.__new__, Member), zip(ids, starts, stops, eas, strict=True)))


def _plain_members(
    ctx: _Ctx, base: Path, name: str, default_ea: float | None
) -> Sequence[Member] | None:
    """The members of a large plain table without an EA column, cut from its bytes
    (case_columns): the ids as strings, the ends as positions in the joints table read in bulk.
    None when the table is anything else, or any cell is empty, an id repeated or an end not a
    joint: the pandas reader (or the careful one) then takes it."""
    bulk = ctx.bulk
    if bulk.joint_ids is None or bulk.joint_index is None or bulk.xyz is None:
        return None
    found = _table_text(ctx, base, name, ("members",))
    if found is None:
        return None
    file, text = found
    if text.count("\n") < BULK_MIN_ROWS or not _plain_table(text):
        return None
    table = plain_columns(text)
    if table is None:
        return None
    names = table.names
    if len(set(names)) != len(names) or "ea" in names:
        return None
    if any(r not in names for r in ("id", "start", "end")):
        return None
    columns = [names.index(r) for r in ("id", "start", "end")]
    for column in columns:
        starts, stops = table.span(column)
        if (starts == stops).any():
            return None  # an empty cell
    keys = bulk.label_keys()
    if keys is None:
        return None
    ends = np.column_stack([keys.positions(table, columns[1]), keys.positions(table, columns[2])])
    if (ends < 0).any():
        return None
    starts, stops = table.span(columns[0])
    if int((stops - starts).max()) > LABEL_MAX_CHARS:
        return None  # an id too long to read in a table column: the careful reader says which
    ids = table.texts(columns[0])
    # The Model's member index, made once here: fewer keys than rows means a repeated id.
    index = dict(zip(ids, range(len(ids)), strict=True))
    if len(index) != len(ids):
        return None
    ctx.origins.register("member", file, ids)
    bulk.ends, bulk.member_index = ends, index
    return BulkMembers(ids, bulk.joint_ids, ends, default_ea)  # each Member made only if read


def _ea_from(
    ctx: _Ctx,
    spec: dict[str, Any],
    what: str,
    units: Units | None,
    area_unit: float | None,
    modulus_unit: float | None,
    *path: str,
) -> float | None:
    if "EA" in spec and ("A" in spec or "E" in spec):
        ctx.add(
            f"{what}: give EA, or A and E, not both (they may disagree: which one did the calc "
            "use?)",
            *path,
        )
        return None
    if "EA" in spec:
        ea = _number(ctx, spec["EA"], f"{what} EA", *path, limit=EA_LIMIT, unit=ctx.force_unit)
        if ea is not None and ea <= 0:
            ctx.add(f"{what}: EA must be positive, got {ea}", *path)
            return None
        return ea
    if "A" in spec or "E" in spec:
        if "A" not in spec or "E" not in spec:
            ctx.add(f"{what}: give both A and E (or EA)", *path)
            return None
        if area_unit is None or modulus_unit is None:
            # Said once, where it first happens, with a count: every member giving A and E has it.
            ctx.needs_area_units.append((what, path))
            return None
        a = _number(ctx, spec["A"], f"{what} A", *path, limit=EA_LIMIT)
        e = _number(ctx, spec["E"], f"{what} E", *path, limit=EA_LIMIT)
        if a is None or e is None or units is None:
            return None
        if a <= 0 or e <= 0:
            ctx.add(f"{what}: A and E must be positive", *path)
            return None
        ea = a * area_unit * e * modulus_unit / units.force.to_si
        if not ea <= EA_LIMIT:
            ctx.add(
                f"{what}: A x E = {ea:g} {units.force.symbol} is beyond the sane range of "
                f"{EA_LIMIT:g}; check the units",
                *path,
            )
            return None
        return ea
    return None


def _read_stiffness_defaults(
    ctx: _Ctx, table: Any, units: Units | None, area_unit: float | None, modulus_unit: float | None
) -> float | None:
    if table is None:
        return None
    if not isinstance(table, dict):
        ctx.add(
            "[stiffness] must be a table with EA, or A and E, applied to members without their own",
            "stiffness",
        )
        return None
    for key in table:
        if key not in STIFFNESS_KEYS:
            ctx.add(
                f"unknown key '{key}' in [stiffness]; expected EA, or A and "
                f"E.{did_you_mean(key, STIFFNESS_KEYS)}",
                "stiffness",
                key,
            )
    return _ea_from(ctx, table, "[stiffness]", units, area_unit, modulus_unit, "stiffness")


def _read_members(
    ctx: _Ctx,
    table: Any,
    base: Path,
    joint_ids: set[str],
    units: Units | None,
    area_unit: float | None,
    modulus_unit: float | None,
    default_ea: float | None,
) -> Sequence[Member]:
    members: list[Member] = []
    if table is None:
        return members
    if isinstance(table, str):
        fast = _fast_members(ctx, base, table, joint_ids, default_ea)
        if fast is not None:
            return fast
        seen: dict[str, int] = {}
        for file, line, row in _csv_rows(ctx, base, table, ("members",), ("id", "start", "end")):
            mid = row["id"]
            if not _label(ctx, mid, "member id", file=file, line=line):
                continue
            if mid in seen:
                ctx.problems.problems.append(
                    Problem(file, f"duplicate member id '{mid}' (first on line {seen[mid]})", line)
                )
                continue
            seen[mid] = line
            ctx.origins[("member", mid)] = (file, line)
            start = _joint_ref(
                ctx, row["start"], joint_ids, f"member '{mid}' start", file=file, line=line
            )
            end = _joint_ref(
                ctx, row["end"], joint_ids, f"member '{mid}' end", file=file, line=line
            )
            ea: float | None = default_ea
            if row.get("ea"):
                ea = _number(
                    ctx,
                    row["ea"],
                    f"member '{mid}' EA",
                    file=file,
                    line=line,
                    limit=EA_LIMIT,
                    unit=ctx.force_unit,
                )
                if ea is not None and ea <= 0:
                    ctx.problems.problems.append(
                        Problem(file, f"member '{mid}': EA must be positive, got {ea}", line)
                    )
                    ea = None
            if start and end:
                members.append(Member(mid, start, end, ea))
        return members
    if not isinstance(table, dict):
        ctx.add(
            "[members] must be a table (id = [joint, joint]) or the name of a CSV file", "members"
        )
        return members
    for mid, value in table.items():
        what = f"member '{mid}'"
        if not _label(ctx, mid, "member id", "members", mid):
            continue
        ea = default_ea
        if isinstance(value, dict):
            for key in value:
                if key not in MEMBER_KEYS:
                    ctx.add(
                        f"{what}: unknown key '{key}'; expected "
                        f"{', '.join(MEMBER_KEYS)}.{did_you_mean(key, MEMBER_KEYS)}",
                        "members",
                        mid,
                    )
            own = _ea_from(ctx, value, what, units, area_unit, modulus_unit, "members", mid)
            ea = own if own is not None else default_ea
            ends = value.get("ends")
        else:
            ends = value
        if not isinstance(ends, list) or len(ends) != 2:
            ctx.add(
                f'{what}: expected two joint ids, e.g. ["A", "B"], got {shown(ends)}',
                "members",
                mid,
            )
            continue
        start = _joint_ref(ctx, ends[0], joint_ids, what, "members", mid)
        end = _joint_ref(ctx, ends[1], joint_ids, what, "members", mid)
        if start and end:
            members.append(Member(str(mid), start, end, ea))
    return members


# -- supports -----------------------------------------------------------------------------------
def _read_supports(
    ctx: _Ctx, table: Any, base: Path, joint_ids: set[str], dim: int | None
) -> list[Reaction]:
    reactions: list[Reaction] = []
    if table is None:
        ctx.add('missing [supports] table; a truss needs supports (e.g. A = ["x", "y"])', line=1)
        return reactions
    axes = AXES[: dim or 3]
    entries: list[
        tuple[str, Any, tuple[str, ...], str | None, int | None]
    ] = []  # joint, spec, path, file, line
    if isinstance(table, str):
        for csv_file, csv_line, row in _csv_rows(ctx, base, table, ("supports",), ("joint",)):
            if row.get("directions", "").strip().lower() in SUPPORT_WORDS:
                spec: Any = row["directions"]
            elif row.get("directions"):
                spec = row["directions"].replace(",", " ").split()
            else:
                spec = {"direction": [row.get(k, "") for k in ("nx", "ny", "nz")[: dim or 3]]}
            entries.append((row["joint"], spec, (), csv_file, csv_line))
    elif isinstance(table, dict):
        entries = [(str(k), v, ("supports", str(k)), None, None) for k, v in table.items()]
    else:
        ctx.add(
            '[supports] must be a table (joint = ["x", "y"]) or the name of a CSV file', "supports"
        )
        return reactions
    for jid, spec, path, file, line in entries:
        if _joint_ref(ctx, jid, joint_ids, "support", *path, file=file, line=line) is None:
            continue
        if isinstance(spec, list):
            seen: set[str] = set()
            for axis in spec:
                if isinstance(axis, str) and axis.strip().lower() in axes:
                    axis = axis.strip().lower()  # "Y" and " y" name the y axis too
                if axis not in axes:
                    _say(
                        ctx,
                        f"support at '{jid}': direction {quoted(axis)} is not one of "
                        f"{', '.join(axes)}",
                        path,
                        file,
                        line,
                    )
                elif axis in seen:
                    _say(
                        ctx,
                        f"support at '{jid}': direction '{axis}' is listed twice",
                        path,
                        file,
                        line,
                    )
                else:
                    seen.add(axis)
                    vec = tuple(1.0 if a == axis else 0.0 for a in axes)
                    reactions.append(Reaction(jid, vec, axis))
            if not spec:
                _say(ctx, f"support at '{jid}' restrains no direction", path, file, line)
        elif isinstance(spec, str) or (isinstance(spec, dict) and "type" in spec):
            reactions.extend(_support_by_word(ctx, jid, spec, axes, dim, path, file, line))
        elif isinstance(spec, dict):
            for key in spec:
                if key != "direction":
                    _say(
                        ctx,
                        f"support at '{jid}': unknown key '{key}'; expected 'direction' (an "
                        "inclined roller) or a list of axes, "
                        'or type = "pinned" / "roller"',
                        path,
                        file,
                        line,
                    )
            found = _reaction_along(
                ctx, jid, spec.get("direction"), "direction", dim, axes, path, file, line
            )
            if found is not None:
                reactions.append(found)
        else:
            _say(
                ctx,
                f'support at \'{jid}\': expected a list of restrained axes (e.g. ["x", "y"]) or {{ '
                f"direction = [...] }}, got {shown(spec)}",
                path,
                file,
                line,
            )
    return reactions


SUPPORT_WORDS = ("pinned", "roller")
ROLLER_KEYS = ("type", "normal", "rolls", "direction")


def _support_by_word(
    ctx: _Ctx,
    jid: str,
    spec: Any,
    axes: tuple[str, ...],
    dim: int | None,
    path: tuple[str, ...],
    file: str | None,
    line: int | None,
) -> list[Reaction]:
    """`"pinned"` (every direction), `"roller"` (level: the vertical, y in 2D and z in 3D), or
    { type = "roller", normal = [...] } (reaction along the surface normal), rolls = [...] (2D:
    the direction it rolls in; the reaction is square to it), direction = [...] (as normal)."""
    options = spec if isinstance(spec, dict) else {"type": spec}
    word = options.get("type")
    kind = word.strip().lower() if isinstance(word, str) else None
    if kind not in SUPPORT_WORDS:
        hint = did_you_mean(str(word), SUPPORT_WORDS) if isinstance(word, str) else ""
        _say(
            ctx,
            f"support at '{jid}': {quoted(word)} is not a support type; expected \"pinned\" or "
            '"roller" '
            f"(or a list of restrained axes).{hint}",
            path,
            file,
            line,
        )
        return []
    unknown = [k for k in options if k not in ROLLER_KEYS]
    for key in unknown:
        _say(
            ctx,
            f"support at '{jid}': unknown key '{key}'; expected "
            f"{', '.join(ROLLER_KEYS)}.{did_you_mean(key, ROLLER_KEYS)}",
            path,
            file,
            line,
        )
    given = [k for k in ("normal", "rolls", "direction") if k in options]
    if kind == "pinned":
        if given:
            _say(
                ctx,
                f"support at '{jid}': a pinned support restrains every direction; '{given[0]}' "
                "belongs to a roller",
                path,
                file,
                line,
            )
            return []
        return [Reaction(jid, tuple(1.0 if a == b else 0.0 for b in axes), a) for a in axes]
    if len(given) > 1:
        _say(
            ctx,
            f"support at '{jid}': give one of normal, rolls, direction, not {' and '.join(given)}",
            path,
            file,
            line,
        )
        return []
    if not given:
        vertical = axes[-1]
        return [Reaction(jid, tuple(1.0 if a == vertical else 0.0 for a in axes), vertical)]
    key = given[0]
    if key == "rolls":
        if dim == 3:
            _say(
                ctx,
                f"support at '{jid}': 'rolls' names the one direction a 2D roller moves in; in 3D "
                "give the surface normal (normal = [...]) or the restrained axes",
                path,
                file,
                line,
            )
            return []
        along = _reaction_along(ctx, jid, options["rolls"], "rolls", dim, axes, path, file, line)
        if along is None:
            return []
        # Square to the rolling direction, turned counter-clockwise: rolls = [1, 0] gives +y.
        rx, ry = along.direction
        normal = (-ry + 0.0, rx + 0.0)
        named = [a for k, a in enumerate(axes) if abs(normal[k] - 1.0) < 1e-12]
        return [Reaction(jid, normal, named[0] if named else "n")]
    found = _reaction_along(ctx, jid, options[key], key, dim, axes, path, file, line)
    return [found] if found is not None else []


def _reaction_along(
    ctx: _Ctx,
    jid: str,
    vec_raw: Any,
    key: str,
    dim: int | None,
    axes: tuple[str, ...],
    path: tuple[str, ...],
    file: str | None,
    line: int | None,
) -> Reaction | None:
    """A reaction along the stated vector (normalised); a global axis keeps its name x/y/z."""
    if not isinstance(vec_raw, list) or (dim and len(vec_raw) != dim):
        _say(
            ctx,
            f"support at '{jid}': {key} must be a list of {dim or '2 or 3'} numbers, got "
            f"{shown(vec_raw)}",
            path,
            file,
            line,
        )
        return None
    nums = [
        _number(ctx, v, f"support at '{jid}' {key}", *path, file=file, line=line) for v in vec_raw
    ]
    if any(v is None for v in nums):
        return None
    arr = np.array(nums, dtype=float)
    largest = float(np.abs(arr).max())
    if largest == 0.0:
        _say(ctx, f"support at '{jid}': {key} is the zero vector", path, file, line)
        return None
    # Scaled by the largest component first: the norm of [1e160, 1e160] overflows, and
    # that of [1e-200, 0] underflows, yet both name a plain direction.
    arr = arr / largest
    unit = arr / float(np.linalg.norm(arr))
    # A direction along a global axis is that axis: label it x/y/z, not 'n'.
    along = [a for k, a in enumerate(axes) if abs(unit[k] - 1.0) < 1e-12]
    return Reaction(jid, tuple(float(v) for v in unit), along[0] if along else "n")


def _say(
    ctx: _Ctx, message: str, path: tuple[str, ...], file: str | None, line: int | None
) -> None:
    if file is not None and file != ctx.file:
        ctx.problems.problems.append(Problem(file, message, line))
    else:
        ctx.add(message, *path, line=line)


# -- loads --------------------------------------------------------------------------------------
def _vector(
    ctx: _Ctx,
    value: Any,
    dim: int | None,
    what: str,
    path: tuple[str, ...],
    file: str | None = None,
    line: int | None = None,
    exact_key: tuple[str, str] | None = None,
) -> tuple[float, ...] | None:
    if not isinstance(value, list) or (dim is not None and len(value) != dim):
        _say(
            ctx,
            f"{what}: expected a force vector of {dim or '2 or 3'} numbers, got {shown(value)}",
            path,
            file,
            line,
        )
        return None
    nums = [
        _value(ctx, v, what, *path, file=file, line=line, limit=LOAD_LIMIT, unit=ctx.force_unit)
        for v in value
    ]
    known = [v for v in nums if v is not None]
    if len(known) < len(nums):
        return None
    if exact_key is not None and any(
        isinstance(raw, str) and v.exact is not None for raw, v in zip(value, known, strict=True)
    ):
        ctx.exact_loads[exact_key] = tuple(
            v.exact if v.exact is not None else _rational(v.number) for v in known
        )
    return tuple(v.number for v in known)


def _rational(number: float) -> Any:
    import sympy

    return sympy.Rational(repr(number))


def _zero_or_blank(cell: str) -> bool:
    """Whether a CSV cell is blank or the number zero."""
    if not cell.strip():
        return True
    try:
        return parse_number(cell) == 0
    except ValueError:
        return False


def _fast_loads(
    ctx: _Ctx,
    cases: dict[str, dict[str, tuple[float, ...]]],
    frame: Any,
    fixed_case: str | None,
    joint_ids: set[str],
    axes: tuple[str, ...],
    unused: tuple[str, ...] = (),
) -> bool:
    """Add the rows of a clean loads frame to `cases` when every joint is known, no joint is
    loaded twice in a case, every case name is a plain label, every load finite and within
    LOAD_LIMIT and every `unused` column (fz of a 2D case) zero where the table has it; else add
    nothing and say False (the row-by-row reader words the problem)."""
    if any(a in frame.columns and (frame[a].to_numpy() != 0).any() for a in unused):
        return False
    import pandas as pd

    keys = frame["case"] if not fixed_case else None
    joints = frame["joint"].to_numpy()
    codes, names = (
        pd.factorize(keys, sort=False) if keys is not None else (np.zeros(len(joints), int), [])
    )
    vectors = frame[list(axes)].astype(float).to_numpy()
    names_list = [str(n) for n in names]
    if ctx.bulk.joint_index is not None and len(ctx.bulk.joint_index) == len(joint_ids):
        position = ctx.bulk.positions(joints)
        return _add_bulk_loads(
            ctx,
            cases,
            position,
            codes if keys is not None else None,
            names_list,
            fixed_case,
            vectors,
        )
    if not (
        frame["joint"].isin(joint_ids).all()
        and not frame.duplicated(subset=["joint"] + (["case"] if keys is not None else [])).any()
    ):
        return False
    if not _plain_vectors(vectors, names_list):
        return False
    joint_list = joints.tolist()
    _bulk_loads(
        cases, codes if keys is not None else None, names_list, fixed_case, joint_list, vectors
    )
    return True


def _plain_vectors(vectors: np.ndarray, names: list[str]) -> bool:
    """Every load finite and within LOAD_LIMIT, every case name a plain label."""
    return bool(
        np.isfinite(vectors).all()
        and _within(vectors, LOAD_LIMIT)
        and all(map(_plain_label, names))
    )


def _add_bulk_loads(
    ctx: _Ctx,
    cases: dict[str, dict[str, tuple[float, ...]]],
    position: np.ndarray,
    codes: np.ndarray | None,
    names: list[str],
    fixed_case: str | None,
    vectors: np.ndarray,
) -> bool:
    """_bulk_loads for rows whose joints are `position`s in the joints table read in bulk, when
    every joint is known (no -1), none is loaded twice in a case and _plain_vectors holds; else
    add nothing and say False."""
    if (position < 0).any():
        return False
    # A joint loaded twice in one case: a repeated (joint, case) pair of numbers.
    pairs = np.sort(position * max(len(names), 1) + (codes if codes is not None else 0))
    if (pairs[1:] == pairs[:-1]).any():
        return False
    if not _plain_vectors(vectors, names):
        return False
    assert ctx.bulk.joint_ids is not None
    # Each case's rows, in row order (a stable sort on the case numbers): a case new to `cases`
    # keeps them as they are (BulkLoads), one that already holds loads takes them as a dict.
    order = np.argsort(codes, kind="stable") if codes is not None else np.arange(len(position))
    counts = np.bincount(codes, minlength=len(names)) if codes is not None else [len(position)]
    start = 0
    for case, count in zip(names if codes is not None else [fixed_case], counts, strict=True):
        rows = order[start : start + int(count)]
        start += int(count)
        assert case is not None
        found = BulkLoads(ctx.bulk.joint_ids, position[rows], vectors[rows])
        if cases.get(case):
            cases[case].update(found)
        else:
            cases[case] = found  # type: ignore[assignment]  # read like the dict (a Mapping)
    return True


def _plain_loads(
    ctx: _Ctx,
    base: Path,
    name: str,
    where: tuple[str, ...],
    cases: dict[str, dict[str, tuple[float, ...]]],
    fixed_case: str | None,
    axes: tuple[str, ...],
    unused: tuple[str, ...] = (),
) -> bool:
    """A large plain loads table with joints known to the joints table read in bulk: the case
    and joint cells cut from its bytes (case_columns; the joints matched as numbers, the cases
    numbered by the same keys, a string made only for each case's name) and only the force
    columns parsed by pandas (with each `unused` one the table has, which must be all zero).
    False, adding nothing, on anything else (the pandas reader or the careful one then takes
    the table)."""
    bulk = ctx.bulk
    if bulk.joint_ids is None or bulk.joint_index is None or bulk.xyz is None:
        return False
    found = _table_text(ctx, base, name, where)
    if found is None:
        return False
    text = found[1]
    if text.count("\n") < BULK_MIN_ROWS or not _plain_table(text):
        return False
    table = plain_columns(text)
    if table is None or len(set(table.names)) != len(table.names):
        return False
    labels = ("joint",) + (() if fixed_case else ("case",))
    if any(r not in table.names for r in labels + axes):
        return False
    for label in labels:
        starts, stops = table.span(table.names.index(label))
        if (starts == stops).any():
            return False  # an empty cell
    keys = bulk.label_keys()
    if keys is None:
        return False
    position = keys.positions(table, table.names.index("joint"))
    codes: np.ndarray | None = None
    names: list[str] = []
    if not fixed_case:
        codes, names = table.numbered(table.names.index("case"))
    import pandas as pd

    checked = tuple(a for a in unused if a in table.names)
    try:
        source = io.BytesIO(text.encode("ascii"))
        numbers = pd.read_csv(
            source,
            usecols=[table.names.index(a) for a in axes + checked],
            keep_default_na=False,
            skip_blank_lines=False,
        )
    except Exception:  # noqa: BLE001 - any trouble: the other readers explain it
        return False
    if len(numbers) != table.rows or any(numbers[c].dtype.kind not in "iuf" for c in numbers):
        return False
    # The force columns in the order of `axes` (pandas keeps the table's order).
    in_table = sorted(axes + checked, key=table.names.index)
    found = numbers.to_numpy(dtype=float)
    if checked and (found[:, [in_table.index(a) for a in checked]] != 0).any():
        return False  # a z load in a 2D case: the careful reader refuses it by line
    vectors = found[:, [in_table.index(a) for a in axes]]
    return _add_bulk_loads(ctx, cases, position, codes, names, fixed_case, vectors)


def _bulk_loads(
    cases: dict[str, dict[str, tuple[float, ...]]],
    codes: Any,
    names: list[str],
    fixed_case: str | None,
    joints: list[str],
    vectors: np.ndarray,
) -> None:
    """The rows of a clean loads table added case by case, in the order the rows give: cases
    first seen first (`names`, numbered by `codes`, one per row), each case's joints in row order
    (as a loop over the rows would add them, without a dict lookup per row)."""

    def vectors_of(rows: np.ndarray) -> Iterator[tuple[float, ...]]:
        # One list per axis zipped: no list per row to turn into a tuple.
        return zip(*(rows[:, a].tolist() for a in range(rows.shape[1])), strict=True)

    if codes is None:
        assert fixed_case is not None
        cases.setdefault(fixed_case, {}).update(zip(joints, vectors_of(vectors), strict=True))
        return
    if len(names) > 50:  # many cases of a few rows each: one pass over the rows is quicker
        for k, joint, vector in zip(codes.tolist(), joints, vectors_of(vectors), strict=True):
            cases.setdefault(names[k], {})[joint] = vector
        return
    joint_array = np.array(joints, dtype=object)
    for k, case in enumerate(names):
        picked = codes == k
        cases.setdefault(case, {}).update(
            zip(joint_array[picked].tolist(), vectors_of(vectors[picked]), strict=True)
        )


# -- loads as engineers state them --------------------------------------------------------------
class _Geometry:
    """Lookups the stated load forms need: coordinates, members, units.

    Each lookup is made on first use: only chords and stated load forms need them, and a case of
    plain joint loads would spend about 2 s per 10^6 members building dicts it never reads."""

    def __init__(
        self,
        joints: Sequence[Joint],
        members: Sequence[Member],
        dim: int | None,
        units: Units | None,
    ) -> None:
        self._joints, self._members = joints, members
        self.dim = dim
        self.units = units

    @cached_property
    def coords(self) -> dict[str, tuple[float, ...]]:
        return {j.id: j.coords for j in self._joints}

    @cached_property
    def members(self) -> dict[str, Member]:
        coords = self.coords
        return {m.id: m for m in self._members if m.start in coords and m.end in coords}

    @cached_property
    def pairs(self) -> dict[frozenset[str], str]:
        return {frozenset((m.start, m.end)): m.id for m in self.members.values()}


LOAD_FORM_KEYS = ("magnitude", "angle", "direction", "normal_to")
LINE_KEYS = ("members", "chord", "w", "direction", "normal", "measured")
SELF_WEIGHT_KEYS = ("mass_per_length", "members", "chord", "direction")
MEASURED = ("along", "plan")
ANGLE_LIMIT = 360.0  # degrees either way: one turn; beyond it an angle is a slip
MASS_LIMIT = 1e9  # kg/m: far beyond any member (a solid steel bar 1 m square is 7,850 kg/m)
NOTE_JOINTS = 12  # joints listed in one conversion note; the rest are counted


class _Converted:
    """Joint loads converted from stated forms in one load case, summed per joint, then added to
    the case's plain joint loads (a joint may carry a point load and its share of a line load)."""

    def __init__(self) -> None:
        self.loads: dict[str, np.ndarray] = {}
        self.exact: dict[str, tuple[Any, ...] | None] = {}
        self.paths: dict[str, tuple[str, ...]] = {}

    def add(
        self, jid: str, vector: np.ndarray, exact: tuple[Any, ...] | None, path: tuple[str, ...]
    ) -> None:
        if jid in self.loads:
            self.loads[jid] = self.loads[jid] + vector
            before = self.exact.get(jid)
            self.exact[jid] = (
                tuple(a + b for a, b in zip(before, exact, strict=True))
                if before and exact
                else None
            )
        else:
            self.loads[jid], self.exact[jid] = np.asarray(vector, dtype=float), exact
        self.paths.setdefault(jid, path)

    def merge_into(self, ctx: _Ctx, case: str, loads: dict[str, tuple[float, ...]]) -> None:
        for jid, vector in self.loads.items():
            key = (case, jid)
            plain_exact = ctx.exact_loads.pop(key, None)
            if jid in loads:
                total = np.asarray(loads[jid]) + vector
                exact = self.exact[jid]
                if exact is not None:
                    base = plain_exact or tuple(_rational(v) for v in loads[jid])
                    exact = tuple(a + b for a, b in zip(base, exact, strict=True))
            else:
                total, exact = vector, self.exact[jid]
            if not (np.isfinite(total).all() and _within(total, LOAD_LIMIT)):
                ctx.add(
                    f"load case '{case}' at joint '{jid}': the loads stated there add up to "
                    f"{describe_vector(total)}, beyond the sane range of +-{LOAD_LIMIT:g} "
                    f"{ctx.force_unit}; check the units",
                    *self.paths[jid],
                )
                continue
            loads[jid] = tuple(float(v) for v in total)
            if exact is not None:
                ctx.exact_loads[key] = exact


def _read_chords(ctx: _Ctx, table: Any, geometry: _Geometry) -> dict[str, list[str]]:
    """[chords]: name = the joints along it in order; each neighbouring pair must be a member."""
    chords: dict[str, list[str]] = {}
    if table is None:
        return chords
    if not isinstance(table, dict):
        ctx.add(
            '[chords] must name chords by their joints in order, e.g. top = ["L0", "U1", "U2"]',
            "chords",
        )
        return chords
    for name, joints in table.items():
        if not _label(ctx, name, "chord name", "chords", name):
            continue
        if (
            not isinstance(joints, list)
            or len(joints) < 2
            or not all(isinstance(j, str) for j in joints)
        ):
            ctx.add(
                f"chord '{name}': expected the joint ids along it in order (at least two), got "
                f"{shown(joints)}",
                "chords",
                name,
            )
            continue
        members: list[str] = []
        for a, b in zip(joints, joints[1:], strict=False):
            found = geometry.pairs.get(frozenset((a, b)))
            if found is None:
                missing = [j for j in (a, b) if j not in geometry.coords]
                if missing and not ctx.joints_unreadable:
                    ctx.add(
                        f"chord '{name}' names joint '{shown(missing[0])}', which is not "
                        f"defined.{did_you_mean(missing[0], geometry.coords)}",
                        "chords",
                        name,
                    )
                elif not missing:
                    ctx.add(
                        f"chord '{name}': no member joins '{a}' and '{b}'; a chord runs along "
                        "members, joint to joint",
                        "chords",
                        name,
                    )
                members = []
                break
            members.append(found)
        if members:
            chords[str(name)] = members
    return chords


def _is_form(value: Any) -> bool:
    return isinstance(value, dict) or (
        isinstance(value, list) and bool(value) and all(isinstance(v, dict) for v in value)
    )


def _note(ctx: _Ctx, path: tuple[str, ...], text: str, loads: dict[str, Any]) -> None:
    joints = list(loads.items())
    shown_loads = ", ".join(f"{j} {describe_vector(v)}" for j, v in joints[:NOTE_JOINTS])
    more = f" and {len(joints) - NOTE_JOINTS} more joints" if len(joints) > NOTE_JOINTS else ""
    line = ctx.lines.line(*path)
    where = f"{ctx.file}:{line}" if line is not None else ctx.file
    ctx.conversions.append(f"{where}: {text} -> joint loads {shown_loads}{more}")


def _unit_vector(
    ctx: _Ctx, raw: Any, dim: int | None, what: str, path: tuple[str, ...]
) -> tuple[np.ndarray, list[Value]] | None:
    if not isinstance(raw, list) or dim is None or len(raw) != dim:
        ctx.add(
            f"{what}: expected a direction of {dim or '2 or 3'} numbers, got {shown(raw)}", *path
        )
        return None
    found = [_value(ctx, v, what, *path, exact=True) for v in raw]
    values = [v for v in found if v is not None]
    if len(values) != len(found):
        return None
    arr = np.array([v.number for v in values], dtype=float)
    largest = float(np.abs(arr).max())
    if largest == 0.0:
        ctx.add(f"{what} is the zero vector", *path)
        return None
    arr = arr / largest
    return arr / float(np.linalg.norm(arr)), values


def _stated_joint_load(
    ctx: _Ctx, case: str, jid: str, spec: dict[str, Any], geometry: _Geometry, add_to: Any
) -> None:
    """{ magnitude, angle } | { magnitude, direction } | { magnitude, normal_to } at one joint."""
    path = ("loads", case, jid)
    what = f"load case '{case}' at joint '{jid}'"
    for key in spec:
        if key not in LOAD_FORM_KEYS:
            ctx.add(
                f"{what}: unknown key '{key}'; expected magnitude with one of angle, direction, "
                f"normal_to.{did_you_mean(key, LOAD_FORM_KEYS)}",
                *path,
            )
            return
    given = [k for k in ("angle", "direction", "normal_to") if k in spec]
    if "magnitude" not in spec or len(given) != 1:
        ctx.add(
            f"{what}: expected {{ magnitude = ..., angle = ... }} (degrees, counter-clockwise from "
            "+x), "
            '{ magnitude = ..., direction = [...] } or { magnitude = ..., normal_to = "member" }'
            + (f"; got both {' and '.join(given)}" if len(given) > 1 else ""),
            *path,
        )
        return
    magnitude = _value(
        ctx,
        spec["magnitude"],
        f"{what} magnitude",
        *path,
        limit=LOAD_LIMIT,
        unit=ctx.force_unit,
        exact=True,
    )
    dim = geometry.dim
    key = given[0]
    if magnitude is None or dim is None:
        return
    if key in ("angle", "normal_to") and dim != 2:
        ctx.add(f"{what}: '{key}' needs a 2D model (in 3D give direction = [x, y, z])", *path)
        return
    exact: tuple[Any, ...] | None = None
    unit = ctx.force_unit
    if key == "angle":
        angle = _value(
            ctx,
            spec["angle"],
            f"{what} angle",
            *path,
            limit=ANGLE_LIMIT,
            unit="degrees",
            exact=True,
        )
        if angle is None:
            return
        if magnitude.exact is not None and angle.exact is not None:
            import sympy

            turn = angle.exact * sympy.pi / 180
            exact = (magnitude.exact * sympy.cos(turn), magnitude.exact * sympy.sin(turn))
        radians = np.radians(angle.number)
        vector = magnitude.number * np.array([np.cos(radians), np.sin(radians)])
        text = f"{magnitude.number:g} {unit} at {angle.number:g} degrees"
    elif key == "direction":
        found = _unit_vector(ctx, spec["direction"], dim, f"{what} direction", path)
        if found is None:
            return
        unit_vec, parts = found
        if magnitude.exact is not None and all(p.exact is not None for p in parts):
            import sympy

            norm = sympy.sqrt(sum(p.exact**2 for p in parts))
            exact = tuple(magnitude.exact * p.exact / norm for p in parts)
        vector = magnitude.number * unit_vec
        text = f"{magnitude.number:g} {unit} along {describe_vector([p.number for p in parts])}"
    else:
        member_id = spec["normal_to"]
        member = geometry.members.get(member_id) if isinstance(member_id, str) else None
        if member is None:
            ctx.add(
                f"{what}: normal_to names member {quoted(member_id)}, which is not "
                f"defined.{did_you_mean(str(member_id), geometry.members)}",
                *path,
            )
            return
        vector = magnitude.number * pressure_normal(
            geometry.coords[member.start], geometry.coords[member.end]
        )
        side = "pressure on" if magnitude.number >= 0 else "suction, away from"
        text = (
            f"{magnitude.number:g} {unit} normal to member '{member.id}' ({side} its left side, "
            f"walking {member.start} to {member.end})"
        )
    if exact is not None:
        from verify.io.expressions import _is_surd

        if all(_is_surd(e) for e in exact):
            vector = np.array([float(e) for e in exact])
        else:
            exact = None
    add_to(jid, vector, exact, path)
    _note(ctx, path, f"load case '{case}' at joint '{jid}': {text}", {jid: vector})


def _members_of(
    ctx: _Ctx,
    spec: dict[str, Any],
    what: str,
    path: tuple[str, ...],
    geometry: _Geometry,
    chords: dict[str, list[str]],
    *,
    all_if_absent: bool,
) -> list[str] | None:
    if "members" in spec and "chord" in spec:
        ctx.add(f"{what}: give members or chord, not both", *path)
        return None
    if "chord" in spec:
        chord = spec["chord"]
        if not isinstance(chord, str) or chord not in chords:
            ctx.add(
                f"{what}: chord {quoted(chord)} is not defined in "
                f"[chords].{did_you_mean(str(chord), chords)}",
                *path,
            )
            return None
        return chords[chord]
    if "members" not in spec:
        if all_if_absent:
            return list(geometry.members)
        ctx.add(
            f'{what}: name the loaded members (members = [...]) or a chord (chord = "top", defined '
            "in [chords])",
            *path,
        )
        return None
    listed = spec["members"]
    if not isinstance(listed, list) or not listed:
        ctx.add(f"{what}: members must be a list of member ids, got {shown(listed)}", *path)
        return None
    unknown = [m for m in listed if not isinstance(m, str) or m not in geometry.members]
    if unknown:
        ctx.add(
            f"{what}: member {quoted(unknown[0])} is not "
            f"defined.{did_you_mean(str(unknown[0]), geometry.members)}",
            *path,
        )
        return None
    if len(set(listed)) != len(listed):
        ctx.add(f"{what}: a member is listed twice; each loaded member once", *path)
        return None
    return list(listed)


def _line_loads(
    ctx: _Ctx,
    case: str,
    key: str,
    raw: Any,
    geometry: _Geometry,
    chords: dict[str, list[str]],
    add_to: Any,
) -> None:
    """line = { members | chord, w, direction | normal, measured }: to panel points by tributary
    length."""
    path = ("loads", case, key)
    dim = geometry.dim
    for number, spec in enumerate(raw if isinstance(raw, list) else [raw], start=1):
        what = f"load case '{case}' line load" + (
            f" {number}" if isinstance(raw, list) and len(raw) > 1 else ""
        )
        bad = [k for k in spec if k not in LINE_KEYS]
        if bad:
            ctx.add(
                f"{what}: unknown key '{bad[0]}'; expected "
                f"{', '.join(LINE_KEYS)}.{did_you_mean(bad[0], LINE_KEYS)}",
                *path,
            )
            continue
        members = _members_of(ctx, spec, what, path, geometry, chords, all_if_absent=False)
        if "w" not in spec:
            ctx.add(
                f"{what}: give w, the force per length ({ctx.force_unit}/{ctx.length_unit})", *path
            )
            continue
        w = _value(
            ctx,
            spec["w"],
            f"{what} w",
            *path,
            limit=LOAD_LIMIT,
            unit=f"{ctx.force_unit}/{ctx.length_unit}",
        )
        measured = spec.get("measured", "along")
        if measured not in MEASURED:
            ctx.add(
                f'{what}: measured = {quoted(measured)}; expected "along" (the member\'s length) '
                'or "plan" '
                "(its horizontal projection)",
                *path,
            )
            continue
        normal = spec.get("normal", False)
        if not isinstance(normal, bool):
            ctx.add(f"{what}: normal must be true or false, got {shown(normal)}", *path)
            continue
        if normal and "direction" in spec:
            ctx.add(f"{what}: give direction or normal = true, not both", *path)
            continue
        if normal and dim != 2:
            ctx.add(
                f"{what}: normal = true needs a 2D model (in 3D give direction = [x, y, z])", *path
            )
            continue
        direction = gravity(dim) if dim else None
        if "direction" in spec:
            found = _unit_vector(ctx, spec["direction"], dim, f"{what} direction", path)
            direction = found[0] if found else None
        if members is None or w is None or dim is None or direction is None:
            continue
        segments, vectors = [], []
        for mid in members:
            m = geometry.members[mid]
            a, b = geometry.coords[m.start], geometry.coords[m.end]
            segments.append((m.start, m.end, member_span(a, b, measured)))
            vectors.append(w.number * (pressure_normal(a, b) if normal else direction))
        how = (
            "normal to each member (pressure positive)"
            if normal
            else f"along {describe_vector(direction)}"
        )
        on = (
            f"chord '{spec['chord']}'"
            if "chord" in spec
            else f"members {', '.join(members[:6])}" + (" ..." if len(members) > 6 else "")
        )
        text = (
            f"load case '{case}': line load {w.number:g} {ctx.force_unit}/{ctx.length_unit} {how} "
            f"on {on}, tributary lengths measured {measured}"
        )
        loads = tributary_loads(segments, vectors)
        for jid, vector in loads.items():
            add_to(jid, vector, None, path)
        _note(ctx, path, text, loads)


def _self_weight(
    ctx: _Ctx,
    case: str,
    key: str,
    raw: Any,
    geometry: _Geometry,
    chords: dict[str, list[str]],
    add_to: Any,
) -> None:
    """self_weight = { mass_per_length (kg/m), members | chord (default: every member),
    direction }."""
    path = ("loads", case, key)
    dim, units = geometry.dim, geometry.units
    for spec in raw if isinstance(raw, list) else [raw]:
        what = f"load case '{case}' self_weight"
        bad = [k for k in spec if k not in SELF_WEIGHT_KEYS]
        if bad:
            ctx.add(
                f"{what}: unknown key '{bad[0]}'; expected "
                f"{', '.join(SELF_WEIGHT_KEYS)}.{did_you_mean(bad[0], SELF_WEIGHT_KEYS)}",
                *path,
            )
            continue
        members = _members_of(ctx, spec, what, path, geometry, chords, all_if_absent=True)
        if "mass_per_length" not in spec:
            ctx.add(f"{what}: give mass_per_length in kg/m", *path)
            continue
        mass = _value(
            ctx,
            spec["mass_per_length"],
            f"{what} mass_per_length",
            *path,
            limit=MASS_LIMIT,
            unit="kg/m",
        )
        if mass is not None and mass.number < 0:
            ctx.add(
                f"{what}: mass_per_length must not be negative, got {mass.number:g} kg/m", *path
            )
            continue
        direction = gravity(dim) if dim else None
        if "direction" in spec:
            found = _unit_vector(ctx, spec["direction"], dim, f"{what} direction", path)
            direction = found[0] if found else None
        if members is None or mass is None or dim is None or direction is None or units is None:
            continue
        # kg/m x m x m/s^2 = N per metre of member, in the case's force per its length unit.
        per_length = mass.number * STANDARD_GRAVITY * units.length.to_si / units.force.to_si
        segments = []
        for mid in members:
            m = geometry.members[mid]
            segments.append(
                (
                    m.start,
                    m.end,
                    member_span(geometry.coords[m.start], geometry.coords[m.end], "along"),
                )
            )
        loads = tributary_loads(segments, [per_length * direction] * len(segments))
        for jid, vector in loads.items():
            add_to(jid, vector, None, path)
        on = (
            f"chord '{spec['chord']}'"
            if "chord" in spec
            else ("every member" if "members" not in spec else f"{len(members)} members")
        )
        _note(
            ctx,
            path,
            f"load case '{case}': self-weight {mass.number:g} kg/m x g = {STANDARD_GRAVITY} "
            f"m/s^2 on {on}, "
            "half of each member to each end",
            loads,
        )


def _read_loads(
    ctx: _Ctx,
    table: Any,
    base: Path,
    joint_ids: set[str],
    dim: int | None,
    geometry: _Geometry | None = None,
    chords: dict[str, list[str]] | None = None,
) -> list[LoadCase]:
    if table is None:
        ctx.add("missing [loads.<case>] table; add at least one load case", line=1)
        return []
    cases: dict[str, dict[str, tuple[float, ...]]] = {}

    def add(
        case: str,
        jid: Any,
        value: Any,
        path: tuple[str, ...],
        file: str | None = None,
        line: int | None = None,
    ) -> None:
        if not _label(ctx, case, "load case name", *path, file=file, line=line):
            return
        if (
            _joint_ref(ctx, jid, joint_ids, f"load case '{case}'", *path, file=file, line=line)
            is None
        ):
            return
        vec = _vector(
            ctx,
            value,
            dim,
            f"load case '{case}' at joint '{jid}'",
            path,
            file,
            line,
            exact_key=(case, str(jid)) if file is None else None,
        )
        if vec is None:
            return
        loads = cases.setdefault(case, {})
        if str(jid) in loads:
            _say(
                ctx,
                f"load case '{case}' loads joint '{jid}' twice; give one total vector",
                path,
                file,
                line,
            )
            return
        loads[str(jid)] = vec

    def from_csv(name: str, where: tuple[str, ...], fixed_case: str | None) -> None:
        axes = ("fx", "fy", "fz")[: dim or 2]
        # A 2D case's table may carry an fz column (an export of a 3D layout): zero or blank
        # there, never a load that would be dropped.
        unused = ("fz",) if dim == 2 else ()
        required = ("joint",) + axes + (() if fixed_case else ("case",))
        if _plain_loads(ctx, base, name, where, cases, fixed_case, axes, unused):
            return
        found = _clean_frame(ctx, base, name, where, required, axes + unused)
        if found is not None and _fast_loads(
            ctx, cases, found[1], fixed_case, joint_ids, axes, unused
        ):
            return
        for file, line, row in _csv_rows(ctx, base, name, where, required):
            case = fixed_case or row["case"]
            if not fixed_case and not _plain_label(case):
                add(
                    case, row["joint"], [row[a] for a in axes], where, file, line
                )  # says why, adds nothing
                continue
            cases.setdefault(case, {})
            if any(not _zero_or_blank(row.get(a, "")) for a in unused):
                _say(
                    ctx,
                    f"load case '{case}' at joint {quoted(row['joint'])}: field fz holds "
                    f"{quoted(row['fz'])}; expected 0 or a blank cell, as a 2D case has no z "
                    "loads",
                    where,
                    file,
                    line,
                )
                continue
            add(case, row["joint"], [row[a] for a in axes], where, file, line)

    if isinstance(table, str):
        from_csv(table, ("loads",), None)
    elif isinstance(table, dict):
        for case, loads in table.items():
            if not _label(ctx, case, "load case name", "loads", case):
                continue
            cases.setdefault(str(case), {})
            if isinstance(loads, str):
                from_csv(loads, ("loads", case), str(case))
            elif isinstance(loads, dict):
                stated = _Converted()
                for jid, value in loads.items():
                    if jid in ("line", "self_weight") and _is_form(value) and geometry is not None:
                        reader = _line_loads if jid == "line" else _self_weight
                        reader(ctx, str(case), jid, value, geometry, chords or {}, stated.add)
                    elif isinstance(value, dict) and geometry is not None:
                        if (
                            _joint_ref(
                                ctx, jid, joint_ids, f"load case '{case}'", "loads", case, jid
                            )
                            is not None
                        ):
                            _stated_joint_load(
                                ctx, str(case), str(jid), value, geometry, stated.add
                            )
                    else:
                        add(str(case), jid, value, ("loads", case, jid))
                stated.merge_into(ctx, str(case), cases.setdefault(str(case), {}))
            else:
                ctx.add(
                    f"load case '{case}': expected a table (joint = [fx, fy]) or a CSV file name",
                    "loads",
                    case,
                )
    else:
        ctx.add("[loads] must hold one table per load case, e.g. [loads.dead]", "loads")
    if isinstance(table, (str, dict)) and not cases:
        ctx.add("no load cases defined; add e.g. [loads.dead]", "loads")
    return [
        LoadCase(name, loads if isinstance(loads, BulkLoads) else dict(loads))
        for name, loads in cases.items()
    ]


def _read_combinations(ctx: _Ctx, table: Any, case_names: list[str]) -> list[Combination]:
    combos: list[Combination] = []
    if table is None:
        return combos
    if not isinstance(table, dict):
        ctx.add(
            '[combinations] must map a name to factors, e.g. "ULS-1" = { dead = 1.35 }',
            "combinations",
        )
        return combos
    for name, factors in table.items():
        if not _label(ctx, name, "combination name", "combinations", name):
            continue
        if str(name) in case_names:
            ctx.add(
                f"combination '{name}' has the same name as a load case; rename one",
                "combinations",
                name,
            )
        if not isinstance(factors, dict) or not factors:
            ctx.add(
                f"combination '{name}': expected factors per case, e.g. {{ dead = 1.35 }}, got "
                f"{shown(factors)}",
                "combinations",
                name,
            )
            continue
        clean: dict[str, float] = {}
        for case, value in factors.items():
            if case not in case_names:
                ctx.add(
                    f"combination '{name}' names load case '{case}', which is not "
                    f"defined.{did_you_mean(case, case_names)}",
                    "combinations",
                    name,
                )
                continue
            number = _number(
                ctx,
                value,
                f"combination '{name}' factor for '{case}'",
                "combinations",
                name,
                limit=FACTOR_LIMIT,
            )
            if number is not None:
                clean[case] = number
        combos.append(Combination(str(name), clean))
    return combos


# -- geometry -----------------------------------------------------------------------------------
def pair_order_of(low: np.ndarray, high: np.ndarray) -> np.ndarray:
    """np.lexsort((np.arange(n), high, low)): the rows by (low, high), ties in row order. For
    joint numbers (0 <= low, high < 2^31) one stable sort of the key low * 2^31 + high gives the
    same order as the lexicographic sort's passes over each key."""
    if (
        low.size
        and int(low.min()) >= 0
        and int(high.min()) >= 0
        and max(int(low.max()), int(high.max())) < 2**31
    ):
        key = low.astype(np.int64) << 31
        key |= high
        return np.argsort(key, kind="stable")
    return np.lexsort((np.arange(low.size), high, low))


def member_lengths(xyz: np.ndarray, starts: np.ndarray, stops: np.ndarray) -> np.ndarray:
    """np.linalg.norm(xyz[stops] - xyz[starts], axis=1), bit for bit (the squares summed in
    axis order, then the root), worked a column at a time: gathers from one axis's coordinates
    and no sum along a short axis (half the time at 10^6 members)."""
    squared: np.ndarray | None = None
    for axis in range(xyz.shape[1]):
        column = np.ascontiguousarray(xyz[:, axis])
        delta = column[stops] - column[starts]
        delta *= delta
        if squared is None:
            squared = delta
        else:
            squared += delta
    if squared is None:
        return np.zeros(len(starts))
    return np.sqrt(squared, out=squared)


def _check_geometry(
    ctx: _Ctx, joints: Sequence[Joint], members: Sequence[Member], dim: int | None
) -> None:
    if not joints or dim is None:
        return
    bulk = ctx.bulk
    if (
        bulk.xyz is not None
        and bulk.ends is not None
        and bulk.xyz.shape[1] == dim
        and len(members) == len(bulk.ends)
    ):
        # Both tables read in bulk: every joint has `dim` coordinates, every member end is known.
        usable, xyz, placed = joints, bulk.xyz, members
        starts, stops = bulk.ends[:, 0], bulk.ends[:, 1]
    else:
        usable = [j for j in joints if len(j.coords) == dim]
        xyz = np.array([j.coords for j in usable], dtype=float)
        position = {j.id: k for k, j in enumerate(usable)}
        placed = [m for m in members if m.start in position and m.end in position]
        starts = np.array([position[m.start] for m in placed], dtype=np.int64)
        stops = np.array([position[m.end] for m in placed], dtype=np.int64)
    extent = float(np.ptp(xyz, axis=0).max()) if len(usable) > 1 else 1.0
    tol = COINCIDENT_RTOL * max(extent, 1e-300)
    # Coincident joints: sort on a rounded key, then compare neighbours (n log n).
    keys = np.round(xyz / max(tol, 1e-300))
    order = np.lexsort(keys.T[::-1])
    close = (
        np.all(np.abs(xyz[order[1:]] - xyz[order[:-1]]) <= tol, axis=1)
        if len(order) > 1
        else np.zeros(0, bool)
    )
    for n in np.nonzero(close)[0]:
        a, b = int(order[n]), int(order[n + 1])
        first, second = sorted(
            (usable[a].id, usable[b].id),
            key=lambda jid: (ctx.origins.get(("joint", jid)) or ("", 0))[1],
        )
        ctx.add_at(
            "joint",
            second,
            f"joints '{first}' and '{second}' are at the same point {usable[a].coords}; merge them",
            "joints",
            second,
        )
    loops = starts == stops
    if placed:
        lengths = member_lengths(xyz, starts, stops)
        for n in np.nonzero(~(lengths > tol) & ~loops)[0]:
            m = placed[int(n)]
            ctx.add_at(
                "member",
                m.id,
                f"member '{m.id}' has zero length (joints '{m.start}' and '{m.end}' coincide)",
                "members",
                m.id,
            )
    # Read in bulk, the members with one joint at both ends are the loops (joint ids are unique).
    for m in (placed[k] for k in np.flatnonzero(loops).tolist()) if placed is members else members:
        if m.start == m.end:
            ctx.add_at(
                "member",
                m.id,
                f"member '{m.id}' starts and ends at joint '{m.start}'",
                "members",
                m.id,
            )
    # Two members on one joint pair: sort the (low, high) joint numbers and compare neighbours.
    keep = np.nonzero(~loops)[0]
    if keep.size:
        any_loop = bool(loops.any())
        distinct = [placed[k] for k in keep.tolist()] if any_loop else placed
        ends_kept = (starts[keep], stops[keep]) if any_loop else (starts, stops)
        low, high = np.minimum(*ends_kept), np.maximum(*ends_kept)
        pair_order = pair_order_of(low, high)
        low, high = low[pair_order], high[pair_order]
        same = (low[1:] == low[:-1]) & (high[1:] == high[:-1])
        first_of: dict[tuple[int, int], str] = {}
        for k in np.nonzero(same)[0].tolist():
            earlier, later = distinct[int(pair_order[k])], distinct[int(pair_order[k + 1])]
            key = (int(low[k]), int(high[k]))
            first = first_of.setdefault(key, earlier.id)
            ctx.add_at(
                "member",
                later.id,
                f"members '{first}' and '{later.id}' both join '{later.start}' and '{later.end}'; "
                "a pin-jointed model needs one member per joint pair",
                "members",
                later.id,
            )
