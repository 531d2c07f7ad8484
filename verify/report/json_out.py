"""JSON renderings (DESIGN.md section 4 output contract).

`dumps` returns the whole text; `iter_dumps` yields the same text in pieces, for outputs too
large to hold twice (a 10^6-member `check --json` is hundreds of megabytes): lists given as
iterators (the member rows) are encoded item by item as they are drawn, so memory does not grow
with the output. Both give exactly the bytes of `json.dumps(..., indent=2, ensure_ascii=False)`;
the pieces are encoded here because the standard library's indenting encoder is pure Python and
took most of a 10^5-member check (bench/run.py).
"""

from __future__ import annotations

import json.encoder
import math
import re
from collections.abc import Callable, Iterable, Iterator, Sequence
from json.encoder import encode_basestring  # the C string encoder json.dumps uses
from typing import Any, TextIO

import numpy as np
import orjson

from verify import __version__
from verify.analysis.pipeline import Analysis
from verify.compare.diagnose import ROW_KEYS
from verify.compare.rows import Labels, Numbers, Rows, Written
from verify.forking import write_in_turn
from verify.io.files import sha256_file
from verify.model import Model
from verify.report.cautions import CAUTION, ELASTIC_CAUTION
from verify.report.names import ROW_UNIT, public_convention


def dumps(data: dict[str, Any]) -> str:
    """The JSON text of `data` (lists may be given as iterators, see iter_dumps)."""
    return "".join(iter_dumps(data))


# The C encoder behind json.dumps (absent from the type stubs, and from interpreters without the
# accelerator, where the general path is used).
C_MAKE_ENCODER: Callable[..., Any] | None = getattr(json.encoder, "c_make_encoder", None)
CHUNK_ITEMS = 2_000  # list items joined into one piece: few writes, little held at once
INDENT = "  "


def _scalar(value: Any) -> str | None:
    """The JSON text of a scalar (as json.dumps writes it; NaN and infinities as null), None for
    containers."""
    kind = type(value)
    if kind is str:
        return encode_basestring(value)
    if kind is float:
        return float.__repr__(value) if math.isfinite(value) else "null"
    if value is None:
        return "null"
    if kind is bool:
        return "true" if value else "false"
    if kind is int:
        return int.__repr__(value)
    if isinstance(value, np.generic):
        return _scalar(value.item())
    if isinstance(value, float):  # a float subclass
        return _scalar(float(value))
    if isinstance(value, int) and not isinstance(value, bool):
        return int.__repr__(int(value))
    if isinstance(value, str):
        return _scalar(str(value))
    return None


def _key(key: Any) -> str:
    """Object keys as json.dumps turns them into strings."""
    if isinstance(key, str):
        return encode_basestring(key)
    if isinstance(key, (bool, int, float)) or key is None:
        return encode_basestring(_scalar(key) or "")
    raise TypeError(f"keys must be str, int, float, bool or None, not {type(key).__name__}")


def _encode(value: Any, level: int) -> str:
    """One value at nesting `level`, in json.dumps' indented layout."""
    text = _scalar(value)
    if text is not None:
        return text
    return "".join(_texts(_pieces(value, level)))


def _pieces(value: Any, level: int) -> Iterator[str | RowChunks]:
    """The text of `value` in pieces; an iterator that is not a list or tuple is drawn lazily."""
    text = _scalar(value)
    if text is not None:
        yield text
        return
    inner = "\n" + INDENT * (level + 1)
    if isinstance(value, dict):
        if not value:
            yield "{}"
            return
        yield (
            "{"
            + inner
            + ("," + inner).join(f"{_key(k)}: {_encode(v, level + 1)}" for k, v in value.items())
            + "\n"
            + INDENT * level
            + "}"
        )
        return
    if isinstance(value, (list, tuple)):
        if not value:
            yield "[]"
            return
        yield "[" + inner + ("," + inner).join(_encode(v, level + 1) for v in value)
        yield "\n" + INDENT * level + "]"
        return
    if isinstance(value, FlatObjects):
        yield from _flat_list(value, level)
        return
    if isinstance(value, RowTable):
        yield from _row_table(value, level)
        return
    if isinstance(value, Iterator):
        yield from _lazy_list(value, level)
        return
    raise TypeError(f"Object of type {type(value).__name__} is not JSON serializable")


class FlatObjects(Iterator[dict[str, Any]]):
    """An iterator of flat objects (every value a string, number, bool or None): the member
    rows. Each is encoded by the standard library's C encoder, laid out by its separators."""

    def __init__(self, items: Iterable[dict[str, Any]]) -> None:
        self._items = iter(items)

    def __iter__(self) -> FlatObjects:
        return self

    def __next__(self) -> dict[str, Any]:
        return next(self._items)


class RowTable:
    """Rows of one shape (tuples of scalars) written as flat objects: `fields` pairs each key
    with the position it is read from, `appended` adds a key with one value per row (the unit).
    Encoded column by column: a few C-level maps per column instead of an encoder call per row
    took the JSON of a 10^5-member check from about 1.0 s to 0.4 s."""

    def __init__(
        self,
        rows: Sequence[tuple[Any, ...]],
        fields: Sequence[tuple[str, int]],
        appended: Sequence[tuple[str, Sequence[Any] | Labels]] = (),
    ) -> None:
        self.rows = rows
        self.fields = tuple(fields)
        self.appended = tuple(appended)

    def __len__(self) -> int:
        return len(self.rows)

    def __iter__(self) -> Iterator[dict[str, Any]]:
        """Each row as the object it is written as."""
        for n, row in enumerate(self.rows):
            item = {key: row[at] for key, at in self.fields}
            item.update((key, values[n]) for key, values in self.appended)
            yield item


def _row_table(table: RowTable, level: int) -> Iterator[str | RowChunks]:
    rows = table.rows
    keys = tuple(key for key, _ in table.fields) + tuple(key for key, _ in table.appended)
    if rows and not keys:  # empty objects: "{}", which the pieces below cannot write
        yield from _lazy_list(iter(table), level)
        return
    if not rows:
        yield "[]"
        return
    # Each object as json.dumps(indent=2) lays it out: "{", then per key a line with the key and
    # its value, then "}"; objects joined by "," and a new line. A chunk of rows is written by
    # interleaving the fixed pieces (keys, quotes, separators) with each column's value texts in
    # one list, joined once: no Python work per row but the values' own texts.
    inner = "\n" + INDENT * (level + 1)
    field = "\n" + INDENT * (level + 2)
    heads = ["{" + field + _key(keys[0]) + ": "] + [
        "," + field + _key(key) + ": " for key in keys[1:]
    ]
    close = "\n" + INDENT * (level + 1) + "}"
    between = close + "," + inner
    sources: list[Any] = (
        [rows.columns[at] for _, at in table.fields]
        if isinstance(rows, Rows)
        else [None] * len(table.fields)
    )
    sources += [values for _, values in table.appended]
    numbers = _NumberTexts([source for source in sources if isinstance(source, Numbers)])
    writers = [_column_writer(source, level + 2, numbers) for source in sources]

    def chunk(k: int) -> str:
        start = k * CHUNK_ITEMS
        stop = min(start + CHUNK_ITEMS, len(rows))
        if isinstance(rows, Rows):
            parts = [write(start, stop) for write in writers[: len(table.fields)]]
        else:
            columns = list(zip(*rows[start:stop], strict=True))
            parts = [[_column_text(columns[at], level + 2)] for _, at in table.fields]
        parts += [write(start, stop) for write in writers[len(table.fields) :]]
        # One row's pieces in order: fixed texts (merged when adjacent) and per-row lists.
        slots: list[str | list[str]] = []
        for head, column_parts in zip(heads, parts, strict=True):
            for piece in (head, *column_parts):
                if isinstance(piece, str) and slots and isinstance(slots[-1], str):
                    slots[-1] += piece
                else:
                    slots.append(piece)
        if isinstance(slots[-1], str):
            last = slots[-1] + close
            slots[-1] += between
        else:
            last = close
            slots.append(between)
        m, width = stop - start, len(slots)
        # every row's fixed texts laid down at once (a repeated list), then each column's texts
        flat = [slot if isinstance(slot, str) else "" for slot in slots] * m
        for j, slot in enumerate(slots):
            if not isinstance(slot, str):
                flat[j::width] = slot
        flat[-1] = last
        return ("[" if start == 0 else ",") + inner + "".join(flat)

    yield RowChunks(-(-len(rows) // CHUNK_ITEMS), chunk)
    yield "\n" + INDENT * level + "]"


class RowChunks:
    """A row table's rows as `count` pieces of text, CHUNK_ITEMS rows each: `text(k)` makes the
    k-th from the rows alone, whichever pieces were made before it, so that two processes can
    share the making (write_dumps). iter_dumps yields the pieces in order."""

    def __init__(self, count: int, text: Callable[[int], str]) -> None:
        self.count, self.text = count, text

    def __iter__(self) -> Iterator[str]:
        return map(self.text, range(self.count))


def _texts(pieces: Iterable[str | RowChunks]) -> Iterator[str]:
    """The pieces as text, row chunks made in order."""
    for piece in pieces:
        if isinstance(piece, RowChunks):
            yield from piece
        else:
            yield piece


LABELS_ENCODED = 4_096  # a word column with up to this many labels has each encoded once
# What json.dumps(ensure_ascii=False) escapes in a string: a string without any of these is
# written as itself between quotes.
NEEDS_ESCAPE = re.compile(r'[\x00-\x1f"\\]')


def _plain(*columns: list[str]) -> bool:
    """Whether every string of these columns is written as itself between quotes."""
    return all(map(_plain_text, map("".join, columns)))


_SPACE, _QUOTE, _BACKSLASH = 0x20, '"', "\\"


def _plain_text(text: str) -> bool:
    """`not NEEDS_ESCAPE.search(text)`: an ASCII text (the usual one) is looked at as bytes, a
    few times faster than the pattern (tests/test_json_scale_rows_s8.py holds the two equal)."""
    if not text.isascii():
        return not NEEDS_ESCAPE.search(text)
    if _QUOTE in text or _BACKSLASH in text:
        return False
    return not (np.frombuffer(text.encode("ascii"), dtype=np.uint8) < _SPACE).any()


def _column_writer(
    source: Any, level: int, numbers: _NumberTexts
) -> Callable[[int, int], list[str | list[str]]]:
    """The JSON pieces of rows start..stop of one column (verify.compare.rows), or of a list: a
    fixed text shared by every row, or a list with one text per row, in order.

    A column of one word in the chunk is one fixed text. Strings that need no escape are laid
    between quote pieces as they are (the written cell and where it is, without joining them
    first). Number columns are written by `numbers`, all of a chunk's at once."""
    if isinstance(source, Labels) and len(source.labels) <= LABELS_ENCODED:
        encoded = [_encode(label, level) for label in source.labels]
        label_codes = source.codes

        def words(start: int, stop: int) -> list[str | list[str]]:
            codes = label_codes[start:stop]
            if (codes == codes[0]).all():
                return [encoded[int(codes[0])]]
            return [list(map(encoded.__getitem__, codes.tolist()))]

        return words
    if isinstance(source, Labels):  # member ids
        # Every row's text is one of the labels: when none needs escaping, no chunk is looked at.
        every_plain = _plain(source.labels)

        def labels(start: int, stop: int) -> list[str | list[str]]:
            texts = source.chunk(start, stop)
            if every_plain or _plain(texts):
                return ['"', texts, '"']
            return [_column_text(texts, level)]

        return labels
    if isinstance(source, Written):

        def cells(start: int, stop: int) -> list[str | list[str]]:
            parts = source.parts(start, stop)
            if parts is not None:
                cells, where, unchecked = parts
                if _plain(cells, *[[p] if isinstance(p, str) else p for p in unchecked]):
                    return ['"', cells, " at ", *where, '"']
            return [_column_text(source.chunk(start, stop), level)]

        return cells
    if isinstance(source, Numbers):
        column = numbers.columns.index(source)

        def number_texts(start: int, stop: int) -> list[str | list[str]]:
            return [numbers.texts(column, start, stop)]

        return number_texts
    if source is None:  # a field of a sequence of tuples: transposed by the caller
        return lambda start, stop: []
    if hasattr(source, "chunk"):
        return lambda start, stop: [_column_text(source.chunk(start, stop), level)]
    return lambda start, stop: [_column_text(source[start:stop], level)]


class _NumberTexts:
    """The texts of the number columns of a RowTable, made for a whole chunk of rows at once
    (one float_texts call for every column of the chunk: its fixed costs paid once, not per
    column). A column whose values in the chunk are those of a column before it, bit for bit,
    shares its texts (the routes often agree to the last bit: the joints and the global solve
    on a 3D truss); a column with no finite value in the chunk is the one fixed text "null"."""

    def __init__(self, columns: list[Numbers]) -> None:
        self.columns = columns
        self._start = -1
        self._texts: list[str | list[str]] = []

    def texts(self, column: int, start: int, stop: int) -> str | list[str]:
        if start != self._start:
            self._texts = self._made(start, stop)
            self._start = start
        return self._texts[column]

    def _made(self, start: int, stop: int) -> list[str | list[str]]:
        chunks: list[np.ndarray] = []
        for column in self.columns:
            values, present = column.values[start:stop], column.present[start:stop]
            # absent (None), NaN or infinite: null (as json.dumps writes NaN; orjson writes null)
            chunks.append(values if present.all() else np.where(present, values, np.nan))
        shared: list[int] = []  # the column whose texts each column takes
        made: list[int] = []  # columns with texts of their own, in order
        for j, values in enumerate(chunks):
            if not np.isfinite(values).any():
                shared.append(j)  # "null" throughout
                continue
            bits = values.view(np.int64)
            same = [
                i
                for i in made
                if bits[0] == chunks[i].view(np.int64)[0]  # most columns differ at once
                and np.array_equal(bits, chunks[i].view(np.int64))
            ]
            shared.append(same[0] if same else j)
            if not same:
                made.append(j)
        texts: list[str | list[str]] = ["null"] * len(chunks)
        if made:
            every = float_texts(np.concatenate([chunks[j] for j in made]))
            m = stop - start
            for n, j in enumerate(made):
                texts[j] = every[n * m : (n + 1) * m]
        return [texts[i] for i in shared]


# orjson (3.11.7 on, pyproject.toml) and repr write the same shortest digits in the same layout
# but for two decades of small numbers: 1e-9 <= |v| < 1e-5, where orjson's exponent has one
# digit ("2.5e-7", repr "2.5e-07"; repr's exponent form starts at 1e16 above), and
# 1e-5 <= |v| < 1e-4, which orjson writes positionally ("0.000025", repr "2.5e-05").
ONE_DIGIT_EXPONENT = (1e-9, 1e-5)
POSITIONAL_DECADE = (ONE_DIGIT_EXPONENT[1], 1e-4)  # the next decade up
_E, _MINUS, _COMMA, _ZERO, _DOT = b"e-,0."
_POSITIONAL = b"0.0000"  # how orjson begins a number of the positional decade (after a sign)
_EXPONENT_05 = np.frombuffer(b"e-05", dtype=np.uint8)
_CUT = 0  # a byte no JSON number text holds: marks the bytes to drop


def float_texts(values: np.ndarray) -> list[str]:
    """json.dumps' text of each float64 of `values`: float.__repr__ of a finite one, "null" for
    NaN and infinities. orjson writes the texts (five times faster than repr) for the whole
    array in one call; the numbers of the two decades it lays out differently from repr are
    written again on their own and mended in those bytes (a zero put into one-digit exponents:
    round-off of zero-force members is common, a sixth of a Pratt truss's values; the
    positional decade rewritten in repr's exponent form), with no Python step per number but
    putting each mended text in its place. tests/test_json_float_texts.py and
    tests/test_json_scale_rows_s8.py hold every range to repr."""
    flat = np.ascontiguousarray(values, dtype=np.float64).ravel()
    if not flat.size:
        return []
    texts = _orjson_texts(flat)
    size = np.abs(flat)
    with np.errstate(invalid="ignore"):  # NaN compares False: written "null" by orjson
        mend = np.flatnonzero((size >= ONE_DIGIT_EXPONENT[0]) & (size < POSITIONAL_DECADE[1]))
    if mend.size:
        # Only these numbers are mended: mending the bytes of the whole array cost more than
        # its orjson call and split together. The two decades meet at 1e-5.
        short = size[mend] < ONE_DIGIT_EXPONENT[1]
        raw = orjson.dumps(flat[mend], option=orjson.OPT_SERIALIZE_NUMPY)
        mended = _mended(raw, np.flatnonzero(short), np.flatnonzero(~short))
        if mended is None:  # not orjson's usual layout: repr for every number
            return [repr(v) if math.isfinite(v) else "null" for v in flat.tolist()]
        for at, text in zip(mend.tolist(), mended[1:-1].decode().split(","), strict=True):
            texts[at] = text
    return texts


def _orjson_texts(flat: np.ndarray) -> list[str]:
    """orjson's text of each number of a float64 array, unmended ("null" for NaN, infinities)."""
    return orjson.dumps(flat, option=orjson.OPT_SERIALIZE_NUMPY)[1:-1].decode().split(",")


def _mended(raw: bytes, short: np.ndarray, odd: np.ndarray) -> bytes | None:
    """orjson's text of a list of numbers with the numbers at `short` given a two-digit
    exponent ("2.5e-7" -> "2.5e-07") and those at `odd` written in exponent form
    ("-0.000025" -> "-2.5e-05"); None when a number there is not laid out as expected."""
    text = np.frombuffer(raw, dtype=np.uint8)
    ends = np.append(np.flatnonzero(text == _COMMA), text.size - 1)  # after each number
    # a one-digit exponent: "e-" and a digit just before the number's end
    at = ends[short] - 1
    if not ((text[at - 2] == _E).all() and (text[at - 1] == _MINUS).all() and _digits(text[at])):
        return None
    places, pieces = [at], [np.full(at.size, _ZERO, dtype=np.uint8)]
    if odd.size:
        begin = np.where(odd == 0, 1, ends[odd - 1] + 1)
        begin += text[begin] == _MINUS
        stop = ends[odd]
        lead = begin[:, None] + np.arange(len(_POSITIONAL))
        if not (
            (text[lead] == np.frombuffer(_POSITIONAL, dtype=np.uint8)).all()
            and (stop > lead[:, -1] + 1).all()
            and _digits(text[lead[:, -1] + 1])
        ):
            return None
        text = text.copy()
        text[lead.ravel()] = _CUT  # "0.0000" dropped: the first digit leads
        dot = begin + len(_POSITIONAL) + 1  # after the first digit, when more follow
        dot = dot[dot < stop]
        places += [dot, np.repeat(stop, _EXPONENT_05.size)]
        pieces += [np.full(dot.size, _DOT, dtype=np.uint8), np.tile(_EXPONENT_05, stop.size)]
    # np.insert keeps the order of pieces given for one place ("e", "-", "0", "5")
    out = np.insert(text, np.concatenate(places), np.concatenate(pieces))
    if odd.size:
        out = out[out != _CUT]
    return out.tobytes()


def _digits(chars: np.ndarray) -> bool:
    return bool(((chars >= ord("0")) & (chars <= ord("9"))).all())


def _column_text(values: Sequence[Any], level: int) -> list[str]:
    """The JSON text of each value of one column; whole columns of strings, finite floats or
    nulls (the usual ones) in one map each."""
    kinds = set(map(type, values))
    if kinds == {str}:
        return list(map(encode_basestring, values))
    if kinds == {float} and all(map(math.isfinite, values)):
        return list(map(float.__repr__, values))
    if kinds == {type(None)}:
        return ["null"] * len(values)
    return [_encode(value, level) for value in values]


def _refuse(value: Any) -> Any:
    raise TypeError(type(value).__name__)  # not a plain JSON value: the general path encodes it


def _flat_list(items: FlatObjects, level: int) -> Iterator[str]:
    field = "\n" + INDENT * (level + 2)
    # Keys and values of one object sit on lines of their own at level + 2: exactly the layout
    # json.dumps(indent=2) gives, made by the C encoder through its separators (made once: the
    # JSONEncoder.encode wrapper would make one per row).
    if C_MAKE_ENCODER is None:  # an interpreter without the C accelerator
        yield from _lazy_list(items, level)
        return
    encoder = C_MAKE_ENCODER(
        None, _refuse, encode_basestring, None, ": ", "," + field, False, False, False
    )

    def encode(item: dict[str, Any]) -> str:
        return "".join(encoder(item, 0))

    close = "\n" + INDENT * (level + 1) + "}"

    def encoded() -> Iterator[str]:
        for item in items:
            try:
                text = encode(item)
                yield "{" + field + text[1:-1] + close if len(text) > 2 else "{}"
            except (ValueError, TypeError):  # NaN or infinity (null here), a numpy scalar
                yield _encode(item, level + 1)

    yield from _framed(encoded(), level)


def _lazy_list(items: Iterator[Any], level: int) -> Iterator[str]:
    def encoded() -> Iterator[str]:
        row_keys: tuple[Any, ...] | None = None
        template = ""
        for item in items:
            if type(item) is dict and item:
                # The member rows: flat objects with the same keys, filled into one template.
                # Only the values are encoded per row, strings and finite floats inline.
                keys = tuple(item)
                if keys != row_keys:
                    row_keys, template = keys, _template(keys, level + 1)
                yield template % tuple(
                    [
                        encode_basestring(v)
                        if type(v) is str
                        else float.__repr__(v)
                        if type(v) is float and v - v == 0.0
                        else _encode(v, level + 2)
                        for v in item.values()
                    ]
                )
            else:
                yield _encode(item, level + 1)

    yield from _framed(encoded(), level)


def _framed(encoded: Iterator[str], level: int) -> Iterator[str]:
    """A JSON list at `level` around already-encoded items, yielded CHUNK_ITEMS at a time."""
    inner = "\n" + INDENT * (level + 1)
    first = True
    batch: list[str] = []
    for text in encoded:
        batch.append(text)
        if len(batch) >= CHUNK_ITEMS:
            yield ("[" + inner if first else "," + inner) + ("," + inner).join(batch)
            first, batch = False, []
    if batch:
        yield ("[" + inner if first else "," + inner) + ("," + inner).join(batch)
        first = False
    yield "[]" if first else "\n" + INDENT * level + "]"


def _template(keys: tuple[Any, ...], level: int) -> str:
    """An object at `level` with these keys and a %s for each value."""
    inner = "\n" + INDENT * (level + 1)
    fields = ("," + inner).join(f"{_key(k).replace('%', '%%')}: %s" for k in keys)
    return "{" + inner + fields + "\n" + INDENT * level + "}"


def iter_dumps(data: dict[str, Any]) -> Iterator[str]:
    """The text of `dumps(data)` in pieces; values that are iterators are drawn one by one."""
    return _texts(_document(data))


def _document(data: dict[str, Any]) -> Iterator[str | RowChunks]:
    if not data:
        yield "{}"
        return
    inner = "\n" + INDENT
    for n, (key, value) in enumerate(data.items()):
        yield ("{" if n == 0 else ",") + inner + _key(key) + ": "
        yield from _pieces(value, 1)
    yield "\n}"


def write_dumps(data: dict[str, Any], stream: TextIO) -> None:
    """Write the text of `dumps(data)` and a new line to `stream`, as iter_dumps's pieces come.

    A large row table's chunks are made by this process and a forked one in turn, each writing
    its own to the stream's file in order (verify.forking.write_in_turn): making the texts is
    most of the writing (a 10^6-member check's member rows are 1,000 chunks of 2,000 rows), and
    by then the section route's process has ended, leaving a core free. Where no second process
    may be started, or the stream has no file of its own (a test's buffer), one process writes
    every chunk, the same bytes.
    """
    for piece in _document(data):
        if not isinstance(piece, RowChunks):
            stream.write(piece)
        elif piece.count < PARALLEL_MIN_CHUNKS or not _write_in_turn(piece, stream):
            for text in piece:
                stream.write(text)
    stream.write("\n")


PARALLEL_MIN_CHUNKS = 10  # 20,000 rows: below this a second process costs more than it saves


def _write_in_turn(chunks: RowChunks, stream: TextIO) -> bool:
    """The chunks written by two processes in turn to the stream's file; False (nothing
    written) when that cannot be done here."""
    try:
        fd = stream.fileno()
    except (AttributeError, OSError, ValueError):  # io.UnsupportedOperation is an OSError
        return False
    encoding, errors = stream.encoding or "utf-8", stream.errors or "strict"
    stream.flush()
    return write_in_turn(lambda k: chunks.text(k).encode(encoding, errors), chunks.count, fd)


def value_units(model: Model) -> dict[str, str]:
    """The unit of every family of values an output carries, by the key that holds them."""
    force, length = model.units.force.symbol, model.units.length.symbol
    return {
        "length": length,
        "force": force,
        "coordinates": length,
        "forces": force,  # member forces, tension positive
        "reactions": force,
        "routes": force,
        # claimed, joints, sections, global, elastic, difference (per row: "unit")
        "members": force,
        "displacements": length,
        "implied_loads": force,
        "implied_load_table": force,
        "imbalances": force,
        "EA": force,
        "mechanism_modes": "relative (largest motion 1)",
        "self_stress_modes": "relative (largest force 1)",
        "tolerance": "fractions (0.01 = 1 %)",
    }


def stability_json(model: Model, analysis: Analysis) -> dict[str, Any]:
    return {
        "tool": {"name": "truss-verify", "version": __version__},
        "case": {
            "title": model.title,
            "file": model.source,
            "units": {"length": model.units.length.symbol, "force": model.units.force.symbol},
            # loads stated as line loads, self-weight, angles or normals, and the joint loads they
            # became
            "load_conversions": list(model.conversions),
        },
        "units": value_units(model),
        "structure": analysis.stability.as_dict(),
        "caution": CAUTION,
    }


def solve_json(model: Model, analysis: Analysis) -> dict[str, Any]:
    data = stability_json(model, analysis)
    ref = analysis.reference
    if ref is None:
        data["forces"] = {}
        data["reactions"] = {}
        data["notes"] = list(analysis.notes)
        return data
    data["forces"] = {
        name: {m: float(ref.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
        for k, name in enumerate(model.load_names)
    }
    data["reactions"] = {name: ref.reaction_vectors(model, name) for name in model.load_names}
    routes: dict[str, Any] = {}
    if analysis.joints is not None:
        routes["joints"] = {
            name: {
                m: float(analysis.joints.forces.member_forces[i, k])
                for i, m in enumerate(model.member_ids)
            }
            for k, name in enumerate(model.load_names)
        }
        routes["joint_order"] = analysis.joints.order
    sections = analysis.sections
    if sections is not None:
        sf = sections.forces
        routes["sections"] = {
            name: {m: float(sf.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
            for k, name in enumerate(model.load_names)
        }
        routes["section_coverage"] = sections.coverage
    data["routes"] = routes
    data["route_disagreement"] = analysis.route_disagreement
    data["route"] = ref.route
    elastic = analysis.elastic
    if elastic is not None:
        disp = elastic.displacements
        d = model.dim
        data["displacements"] = {
            name: {
                j.id: [float(x) for x in disp[i * d : (i + 1) * d, k]]
                for i, j in enumerate(model.joints)
            }
            for k, name in enumerate(model.load_names)
        }
        data["equal_EA_assumed"] = bool(elastic.equal_EA_assumed)
        data["elastic_caution"] = ELASTIC_CAUTION
    data["notes"] = list(analysis.notes)
    return data


def _row_units(rows: Sequence[Any], length: str, force: str) -> Sequence[str] | Labels:
    """The unit of each row's values: the length unit for a displacement, else the force unit."""
    kind = rows.field("kind") if isinstance(rows, Rows) else None
    if isinstance(kind, Labels):
        return Labels(kind.codes, [length if k == "displacement" else force for k in kind.labels])
    return [length if row.kind == "displacement" else force for row in rows]


def check_json(review: Any, *, displacement_file: tuple[str, str] | None = None) -> dict[str, Any]:
    """The DESIGN.md section 4 `check --json` object (extra fields allowed, contract keys kept).

    `displacement_file` is (path, SHA-256) of the claimed displacements, when they were checked.
    """
    model = review.analysis.model
    force, length = model.units.force.symbol, model.units.length.symbol
    inputs = {
        "case": model.source,
        "case_sha256": sha256_file(model.source),
        "claims": review.claims.source,
        "claims_sha256": review.claims.sha256,
    }
    if displacement_file is not None:
        inputs["displacements"], inputs["displacements_sha256"] = displacement_file
    return {
        "verdict": review.verdict.value,
        "structure": review.analysis.stability.as_dict(),
        "convention": public_convention(review.convention.as_dict(), force),
        # A generator: iter_dumps writes the rows as it draws them (dumps accepts it too).
        "members": RowTable(
            review.rows, ROW_KEYS, [(ROW_UNIT, _row_units(review.rows, length, force))]
        ),
        "findings": [f.as_dict() for f in review.findings],
        "summary": {
            "members_checked": review.checked_members,
            "members_total": len(model.members),
            "cases_checked": list(review.checked_cases),
            "cases_total": list(model.load_names),
        },
        "tolerance": {
            "relative": review.tolerance.rtol,
            "fraction_of_largest_force": review.tolerance.atol_fraction,
        },
        "imbalances": [
            {"joint": b.joint, "case": b.case, "residual": list(b.residual), "size": b.size}
            for b in review.imbalances
        ],
        "implied_loads": review.implied.by_case() if review.implied is not None else {},
        "implied_load_table": [item.as_dict() for item in review.implied.differing]
        if review.implied is not None
        else [],
        "units": value_units(model),
        "load_conversions": list(model.conversions),
        "inputs": inputs,
        "tool": {"name": "truss-verify", "version": __version__},
        "notes": list(review.notes),
        "caution": CAUTION,
        **(
            {"elastic_caution": ELASTIC_CAUTION}
            if review.analysis.elastic is not None
            and (review.analysis.global_ is None or review.displacements is not None)
            else {}
        ),
    }
