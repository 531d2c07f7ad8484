"""The review's rows kept as columns: a sequence of `Row` tuples made only when one is read.

A 10^6-member check has two million rows. Made as tuples of Python floats and strings they took
a quarter of the comparison's time, as much again to be freed, and most of its memory; the JSON
writer then turned them back into columns. Here every field is one column: numbers as float
arrays with a mask of the values present (None where absent), repeated words (kind, case,
status, member id) as codes into a list of labels, and the text "as written" composed from the
claims' own cells when it is read. Readers that iterate or index get the same `Row` tuples as
before; the JSON writer reads the columns (`Rows.columns`).
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from functools import partial
from itertools import chain
from operator import itemgetter
from typing import Any, NamedTuple, Protocol, overload

import numpy as np

CHUNK = 4_096  # rows made at a time when the sequence is iterated
INDEXED = 256  # label lists up to this long are looked up when a row is set


class Row(NamedTuple):
    """One compared value. A named tuple: a 10^5-member check makes 2x10^5 of them."""

    id: str
    kind: str  # "member" | "reaction"
    case: str
    claimed: float | None  # in case units, tension-positive, convention applied
    written: str  # as written (value and where)
    joints: float | None
    sections: float | None
    global_: float | None
    elastic: float | None
    difference: float | None
    status: str

    @property
    def recomputed(self) -> float | None:
        for value in (self.global_, self.elastic):
            if value is not None:
                return value
        return None

    def as_dict(self) -> dict[str, Any]:
        return {
            "id": self.id,
            "kind": self.kind,
            "case": self.case,
            "claimed": self.claimed,
            "joints": self.joints,
            "sections": self.sections,
            "global": self.global_,
            "elastic": self.elastic,
            "difference": self.difference,
            "status": self.status,
            "written": self.written,
        }


_make_row = partial(tuple.__new__, Row)  # in C: Row(...) runs Python code per row


class Column(Protocol):
    def __len__(self) -> int: ...
    def get(self, i: int) -> Any: ...
    def set(self, i: int, value: Any) -> None: ...
    def chunk(self, start: int, stop: int) -> list[Any]: ...
    def take(self, positions: np.ndarray) -> list[Any]: ...


class Numbers:
    """Floats, None where `present` is False (a NaN that is present stays a NaN)."""

    def __init__(self, values: np.ndarray, present: np.ndarray | None = None) -> None:
        self.values = np.asarray(values, dtype=float)
        self.present = (
            np.ones(self.values.size, dtype=bool) if present is None else np.asarray(present)
        )

    def __len__(self) -> int:
        return int(self.values.size)

    def get(self, i: int) -> float | None:
        return float(self.values[i]) if self.present[i] else None

    def set(self, i: int, value: Any) -> None:
        self.present[i] = value is not None
        self.values[i] = np.nan if value is None else value

    def chunk(self, start: int, stop: int) -> list[Any]:
        return self._read(self.values[start:stop], self.present[start:stop])

    def take(self, positions: np.ndarray) -> list[Any]:
        """`[self.get(i) for i in positions]`, read at once."""
        return self._read(self.values[positions], self.present[positions])

    @staticmethod
    def _read(values: np.ndarray, present: np.ndarray) -> list[Any]:
        out: list[Any] = values.tolist()
        if not present.all():
            for k in np.flatnonzero(~present).tolist():
                out[k] = None
        return out


class Labels:
    """Words from a short list (or member ids), one code per row."""

    def __init__(self, codes: np.ndarray, labels: Sequence[str]) -> None:
        # Four bytes a code: enough for any list of labels, half a 10^6-row column's memory.
        self.codes = np.asarray(codes, dtype=np.int32)
        self.labels = list(labels)
        self._code_of: dict[str, int] | None = None

    def __len__(self) -> int:
        return int(self.codes.size)

    def code(self, label: str) -> int:
        """The code of `label`, added to the labels when new."""
        if self._code_of is None:
            # A long list (member ids) is not indexed: a label set anew is appended, and a row
            # reads the same text whichever code holds it.
            self._code_of = {}
            for n, known in enumerate(self.labels if len(self.labels) <= INDEXED else ()):
                self._code_of.setdefault(known, n)
        found = self._code_of.get(label)
        if found is None:
            found = self._code_of[label] = len(self.labels)
            self.labels.append(label)
        return found

    def get(self, i: int) -> str:
        return self.labels[int(self.codes[i])]

    __getitem__ = get  # a column reads as a sequence of its words

    def set(self, i: int, value: Any) -> None:
        if self.labels[int(self.codes[i])] != value:
            self.codes[i] = self.code(value)

    def chunk(self, start: int, stop: int) -> list[Any]:
        return list(map(self.labels.__getitem__, self.codes[start:stop].tolist()))

    def take(self, positions: np.ndarray) -> list[Any]:
        return list(map(self.labels.__getitem__, self.codes[positions].tolist()))

    def equals(self, label: str) -> np.ndarray:
        """Which rows hold `label`."""
        codes = [n for n, known in enumerate(self.labels) if known == label]
        return np.isin(self.codes, codes)


class Written:
    """The cell as written and where, "<cell> at <where>", composed from the claims' columns when
    read (`spelled(i)` is the cell of claim i); "" for a row without a claim (claim -1)."""

    def __init__(
        self,
        claim: np.ndarray,
        spelled: Callable[[int], str],
        cells: Sequence[str],
        where: Sequence[str],
    ) -> None:
        self.claim = np.asarray(claim, dtype=np.int64)
        self.spelled, self.cells, self.where = spelled, cells, where
        self.set_texts: dict[int, str] = {}

    def __len__(self) -> int:
        return int(self.claim.size)

    def get(self, i: int) -> str:
        if i in self.set_texts:
            return self.set_texts[i]
        k = int(self.claim[i])
        return f"{self.spelled(k)} at {self.where[k]}" if k >= 0 else ""

    def set(self, i: int, value: Any) -> None:
        if self.get(i) != value:
            self.set_texts[i] = value

    def parts(
        self, start: int, stop: int
    ) -> tuple[list[str], list[str | list[str]], list[str | list[str]]] | None:
        """The cells of rows start..stop and their places as pieces to lay side by side (a text
        shared by every row, or a list with one text per row), when every row has a claim whose
        cell was kept and none was set anew: the JSON writer writes them without joining a
        string per row. Third, the place pieces that may hold any text (not the row numbers,
        which are digits): the ones a writer must look at for characters to escape."""
        claims = self.claim[start:stop]
        if (claims < 0).any() or any(start <= i < stop for i in self.set_texts):
            return None
        cells = _picked(self.cells, claims)
        if not all(cells):
            return None
        split = getattr(self.where, "split", None)  # Places: row numbers and column texts
        places = split(claims) if split is not None else None
        if places is not None:
            before, _numbers, after = places  # the numbers: str of an int each
            return cells, list(places), [before, after]
        where: list[str | list[str]] = [_picked(self.where, claims)]
        return cells, where, where

    def chunk(self, start: int, stop: int) -> list[Any]:
        out = self._texts(self.claim[start:stop])
        for i, text in self.set_texts.items():
            if start <= i < stop:
                out[i - start] = text
        return out

    def take(self, positions: np.ndarray) -> list[Any]:
        """`[self.get(i) for i in positions]`, the cells picked at once."""
        out = self._texts(self.claim[positions])
        if self.set_texts:
            for k, i in enumerate(positions.tolist()):
                if i in self.set_texts:
                    out[k] = self.set_texts[i]
        return out

    def _texts(self, claims: np.ndarray) -> list[str]:
        """The text of each of these claims ("" for -1), as composed when none was set anew."""
        n = claims.size
        has = claims >= 0
        picked = claims[has].tolist()
        cells = _picked(self.cells, claims[has])
        where = _picked(self.where, claims[has])
        if not all(cells):  # a claim built in memory without its cell: spelled from its value
            cells = [cell or self.spelled(k) for cell, k in zip(cells, picked, strict=True)]
        texts = list(map("{} at {}".format, cells, where))
        if len(texts) == n:
            return texts
        out = [""] * n
        for k, text in zip(np.flatnonzero(has).tolist(), texts, strict=True):
            out[k] = text
        return out


def _picked(texts: Sequence[str], claims: np.ndarray) -> list[str]:
    """`[texts[k] for k in claims]`: texts kept as one text (verify.io.claims.table.CellTexts)
    are cut from it all at once, a list is read by one itemgetter."""
    take = getattr(texts, "take", None)
    if take is not None:
        return list(take(claims))
    picked = claims.tolist()
    if len(picked) > 1:
        return list(itemgetter(*picked)(texts))
    return [texts[k] for k in picked]


class Plain:
    """Any values, as a list."""

    def __init__(self, values: list[Any]) -> None:
        self.values = values

    def __len__(self) -> int:
        return len(self.values)

    def get(self, i: int) -> Any:
        return self.values[i]

    def set(self, i: int, value: Any) -> None:
        self.values[i] = value

    def chunk(self, start: int, stop: int) -> list[Any]:
        return self.values[start:stop]

    def take(self, positions: np.ndarray) -> list[Any]:
        return [self.values[i] for i in positions.tolist()]


class Rows(Sequence[Row]):
    """The rows of a review as columns, one per field of `Row` in its order."""

    def __init__(self, columns: Sequence[Column]) -> None:
        assert len(columns) == len(Row._fields)
        self.columns = tuple(columns)
        self._n = len(self.columns[0])
        self._tuples: list[Row] | None = None  # made by the first iteration, for the next ones
        # words(name) as made, until a row is set: a report asks for the ids a dozen times, and
        # a 10^6-member review's ids (member and reaction labels joined) took 30 ms each time
        self._words: dict[str, tuple[np.ndarray, list[str]]] = {}

    @classmethod
    def as_columns(cls, rows: Sequence[Row]) -> Rows:
        """`rows` as columns: themselves when they are, else made from the tuples."""
        return rows if isinstance(rows, Rows) else cls.of(list(rows))

    @classmethod
    def of(cls, rows: Sequence[Row]) -> Rows:
        """Rows from tuples (the displacement rows, a few)."""
        fields = list(zip(*rows, strict=True)) if rows else [() for _ in Row._fields]
        return cls([Plain(list(values)) for values in fields])

    def __len__(self) -> int:
        return self._n

    @overload
    def __getitem__(self, i: int) -> Row: ...
    @overload
    def __getitem__(self, i: slice) -> Sequence[Row]: ...
    def __getitem__(self, i: int | slice) -> Row | Sequence[Row]:
        if isinstance(i, slice):
            return tuple(self)[i]
        if i < 0:
            i += self._n
        if not 0 <= i < self._n:
            raise IndexError("row index out of range")
        return _make_row([column.get(i) for column in self.columns])

    def __setitem__(self, i: int, row: Row) -> None:
        self._tuples = None
        self._words.clear()
        for column, value in zip(self.columns, row, strict=True):
            column.set(i, value)

    def set_status(self, i: int, status: str) -> None:
        self._tuples = None
        self._words.clear()
        self.columns[-1].set(i, status)

    def field(self, name: str) -> Column:
        return self.columns[Row._fields.index(name)]

    def words(self, name: str) -> tuple[np.ndarray, list[str]]:
        """A field of words as (a code per row, the words, each once): readers that group the
        rows (the report's rows by load column) work on the codes, making no Row per row. The
        same arrays are returned until a row is set (callers read them, never write)."""
        made = self._words.get(name)
        if made is None:
            made = self._words[name] = self._made_words(name)
        return made

    def _made_words(self, name: str) -> tuple[np.ndarray, list[str]]:
        column = self.field(name)
        if isinstance(column, Labels):
            if len(set(column.labels)) == len(column.labels):
                return column.codes, column.labels
            # rows joined from two lists of words: one code per word (a dict, not list.index:
            # the ids of 10^5 members joined twice)
            code_of: dict[str, int] = {}
            first = np.fromiter(
                (code_of.setdefault(w, len(code_of)) for w in column.labels),
                np.int64,
                len(column.labels),
            )
            return first[column.codes], list(code_of)
        values = column.chunk(0, len(column))
        labels = list(dict.fromkeys(values))
        code_of = {label: n for n, label in enumerate(labels)}
        return np.fromiter(map(code_of.__getitem__, values), np.int64, len(values)), labels

    def holds(self, name: str, *words: str) -> np.ndarray:
        """Per row, whether its field `name` is one of `words`."""
        codes, labels = self.words(name)
        return np.isin(codes, [n for n, w in enumerate(labels) if w in words])

    def where(self, name: str, word: str) -> np.ndarray:
        """The positions of the rows whose field `name` is `word`, in order."""
        return np.flatnonzero(self.holds(name, word))

    def take(self, positions: Sequence[int] | np.ndarray) -> list[Row]:
        """The rows at these positions (a few thousand of a million), as indexing gives them."""
        picked = np.asarray(positions, dtype=np.int64)
        if self._tuples is not None:
            return [self._tuples[i] for i in picked.tolist()]
        picked = np.where(picked < 0, picked + self._n, picked)
        if picked.size and not (0 <= picked.min() and picked.max() < self._n):
            raise IndexError("row index out of range")
        # column by column (a 10^6-member report shows 6000 rows: 23 us each made alone)
        return list(map(_make_row, zip(*(c.take(picked) for c in self.columns), strict=True)))

    def __iter__(self) -> Iterator[Row]:
        # The text and HTML reports read the rows several times: the tuples are made once, on the
        # first reading (the JSON writer reads the columns and never makes them).
        if self._tuples is None:
            self._tuples = list(chain.from_iterable(map(self._chunk, range(0, self._n, CHUNK))))
        return iter(self._tuples)

    def _chunk(self, start: int) -> Iterator[Row]:
        stop = min(start + CHUNK, self._n)
        return map(_make_row, zip(*(c.chunk(start, stop) for c in self.columns), strict=True))

    def extended(self, other: Rows) -> Rows:
        """These rows and then `other`'s, column by column."""
        return Rows([_joined(a, b) for a, b in zip(self.columns, other.columns, strict=True)])

    def __add__(self, other: Sequence[Row]) -> Rows:
        return self.extended(other if isinstance(other, Rows) else Rows.of(other))

    def __eq__(self, other: object) -> bool:
        if not isinstance(other, Sequence):
            return NotImplemented
        return len(self) == len(other) and all(a == b for a, b in zip(self, other, strict=True))

    __hash__ = None  # type: ignore[assignment]  # mutable (statuses are set), as a list

    def __reduce__(self) -> tuple[Any, ...]:
        # pickled as the tuples (a column may read the claims through a local function)
        return (Rows.of, (tuple(self),))

    def __repr__(self) -> str:
        return f"Rows({len(self)} rows)"


def _joined(a: Column, b: Column) -> Column:
    """Column `a` followed by column `b`: kept in their form when both have it."""
    if isinstance(a, Numbers) and isinstance(b, Numbers):
        return Numbers(np.concatenate([a.values, b.values]), np.concatenate([a.present, b.present]))
    if isinstance(a, Labels) and isinstance(b, Labels):
        if a.labels == b.labels or not len(b):
            return Labels(np.concatenate([a.codes, b.codes]), a.labels)
        return Labels(np.concatenate([a.codes, b.codes + len(a.labels)]), a.labels + b.labels)
    if isinstance(a, Written) and isinstance(b, Written) and not (b.claim >= 0).any():
        joined = Written(np.concatenate([a.claim, b.claim]), a.spelled, a.cells, a.where)
        joined.set_texts = {**a.set_texts, **{len(a) + i: t for i, t in b.set_texts.items()}}
        return joined
    return Plain(a.chunk(0, len(a)) + b.chunk(0, len(b)))
