"""Columns of a plain CSV table cut from its bytes with numpy, for the case reader's largest tables.

A plain table (printable ASCII but the space and the quote, and line breaks: see
``case._plain_table``) has no quoting, padding or escapes, so its cells are exactly the texts
between commas and line breaks. Cutting them here, instead of parsing with pandas, makes no Python
string for a cell nobody needs as one: a member's end joints are matched to the joints table as
numbers made from their bytes (at 10^6 members pandas made 2x10^6 strings and a dict looked each
up: about 0.9 s, against about 0.15 s here).

Everything here declines (returns None) on anything it does not read exactly as the csv module
would; the caller then reads the table the usual way, which words every problem.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from verify.io.cells import joined_spans

# _LOW_BYTES[n]: the mask keeping the first n bytes of a little-endian 8-byte word.
_LOW_BYTES = np.array([(1 << (8 * n)) - 1 for n in range(9)], dtype=np.uint64)
# Mixes a label's 8-byte words into one key when labels are longer than 8 bytes (odd, so the
# multiplication modulo 2^64 loses nothing); equal keys are then confirmed word by word.
_MIX = np.uint64(0x9E3779B97F4A7C15)


@dataclass(frozen=True)
class PlainColumns:
    """The cells of a plain comma-separated table, as byte spans of its text.

    Cell (row r, column c) is ``data[start:stop]`` with start the byte after the line break or
    comma before it, stop the comma or line break after it. Row r is on line r + 2.
    """

    data: np.ndarray  # the table's bytes (uint8), ending with a line break and 8 zero bytes
    names: list[str]  # the header's names, stripped and lower-cased
    line_starts: np.ndarray  # rows: offset of each data line
    line_ends: np.ndarray  # rows: offset of the line break ending it
    commas: np.ndarray  # rows x (columns - 1): offsets of the commas on each line

    @property
    def rows(self) -> int:
        return len(self.line_starts)

    def span(self, column: int) -> tuple[np.ndarray, np.ndarray]:
        """(starts, stops) of the cells of one column."""
        last = len(self.names) - 1
        starts = self.line_starts if column == 0 else self.commas[:, column - 1] + 1
        stops = self.line_ends if column == last else self.commas[:, column]
        return starts, stops

    def texts(self, column: int) -> list[str]:
        """The cells of one column as strings (one join and one split, no call per cell)."""
        return joined_spans(self.data, *self.span(column)).split("\n")

    def numbered(self, column: int) -> tuple[np.ndarray, list[str]]:
        """The cells of one column numbered by text, in order of first appearance (as
        pandas.factorize numbers strings): (a code per row, the text of each code)."""
        import pandas as pd

        starts, stops = self.span(column)
        words = _label_words(self.data, starts, stops, max(1, -(-int((stops - starts).max()) // 8)))
        codes, _ = pd.factorize(_keys(words), sort=False)
        first = np.unique(codes, return_index=True)[1]
        if words.shape[1] > 1 and not (words == words[first[codes]]).all():
            # Two texts share a key (mixed from several words): number them as strings.
            codes, _ = pd.factorize(np.array(self.texts(column), dtype=object), sort=False)
            first = np.unique(codes, return_index=True)[1]
        data = self.data
        names = [data[starts[k] : stops[k]].tobytes().decode("ascii") for k in first.tolist()]
        return np.asarray(codes, dtype=np.int64), names


def plain_columns(text: str) -> PlainColumns | None:
    """The table `text` cut into columns, or None unless every data line has as many cells as the
    header (a blank line has none) and the table has at least one data line. `text` must be a
    plain table (ASCII, no quotes, no spaces; lines end "\\n")."""
    data = text.encode("ascii")
    if not data.endswith(b"\n"):
        data += b"\n"
    head = data.index(b"\n")
    names = [h.strip().lower() for h in data[:head].decode("ascii").split(",")]
    if head + 1 >= len(data):
        return None  # a header and no rows
    array = np.frombuffer(data + bytes(8), dtype=np.uint8)
    body = array[head + 1 : len(data)]
    line_ends = np.flatnonzero(body == 10) + (head + 1)
    commas = np.flatnonzero(body == 44) + (head + 1)
    rows, per_line = len(line_ends), len(names) - 1
    if len(commas) != rows * per_line:
        return None
    # The commas before each line's end must be exactly per_line times its number: then every
    # line holds per_line of them (a blank line or a short or long row fails here).
    if per_line and not np.array_equal(
        np.searchsorted(commas, line_ends), np.arange(1, rows + 1) * per_line
    ):
        return None
    line_starts = np.empty(rows, dtype=np.int64)
    line_starts[0] = head + 1
    line_starts[1:] = line_ends[:-1] + 1
    if (line_starts == line_ends).any():
        return None  # a blank line (the csv module skips it: rows would not follow lines)
    return PlainColumns(array, names, line_starts, line_ends, commas.reshape(rows, per_line))


def _label_words(data: np.ndarray, starts: np.ndarray, stops: np.ndarray, words: int) -> Any:
    """rows x `words` uint64: each cell's bytes, zero-padded to 8 x `words` bytes.

    Word w of a cell is the 8 bytes from start + 8w read as one little-endian number (a view of
    the bytes with a stride of one byte, so one fancy index reads them all), its bytes past the
    cell's end masked off. `data` ends with at least 8 zero bytes, so no read runs past it.
    """
    eight = np.ndarray(shape=(len(data) - 7,), dtype="<u8", buffer=data, strides=(1,))
    out = np.empty((len(starts), words), dtype=np.uint64)
    lengths = stops - starts
    for w in range(words):
        kept = np.clip(lengths - 8 * w, 0, 8)
        # A word past a cell's end is masked to zero whatever is read: read it in bounds.
        at = starts + 8 * w if w == 0 else np.minimum(starts + 8 * w, len(eight) - 1)
        out[:, w] = eight[at] & _LOW_BYTES[kept]
    return out


def _keys(words: np.ndarray) -> np.ndarray:
    """One uint64 key per row of words (the word itself when there is one)."""
    key = words[:, 0].copy()
    for k in range(1, words.shape[1]):
        key *= _MIX
        key ^= words[:, k]
    return key


class LabelKeys:
    """Positions of labels in a list of unique ids, found from their bytes (no string per label).

    Made from the ids (ASCII text without NUL); None from `of` when they are not that, or when two
    ids share a key (then the caller looks labels up as strings)."""

    def __init__(self, words: np.ndarray, index: Any) -> None:
        self._words, self._index = words, index

    @classmethod
    def of(cls, ids: list[str]) -> LabelKeys | None:
        import pandas as pd

        if not ids:
            return None
        longest = max(map(len, ids))
        width = 8 * max(1, -(-longest // 8))
        try:
            packed = np.array(ids, dtype=f"S{width}")
        except UnicodeEncodeError:
            return None
        words = packed.view(np.uint64).reshape(len(ids), width // 8)
        # A NUL ending an id would read as padding: such ids (and empty ones) stay strings.
        if "\x00" in "".join(ids) or (packed == b"").any():
            return None
        index = pd.Index(_keys(words))
        if not index.is_unique:
            return None
        return cls(words, index)

    def positions(self, columns: PlainColumns, column: int) -> np.ndarray:
        """The position of each cell of `column` among the ids (-1: not one of them)."""
        starts, stops = columns.span(column)
        words = self._words.shape[1]
        found = np.full(len(starts), -1, dtype=np.int64)
        fits = (stops - starts) <= 8 * words  # a longer label is no id
        cells = np.flatnonzero(fits) if not fits.all() else None
        if cells is not None:
            starts, stops = starts[cells], stops[cells]
        mine = _label_words(columns.data, starts, stops, words)
        at = self._index.get_indexer(_keys(mine))
        if words > 1:  # keys mixed from several words: confirm each match word by word
            hit = at >= 0
            same = (self._words[at[hit]] == mine[hit]).all(axis=1)
            at[np.flatnonzero(hit)[~same]] = -1
        if cells is None:
            return np.asarray(at, dtype=np.int64)
        found[cells] = at
        return found
