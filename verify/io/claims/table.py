"""What a claims table is once read: plain values with the place each was written."""

from __future__ import annotations

import operator
from array import array
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from itertools import repeat
from operator import eq
from typing import NamedTuple, cast, overload

import numpy as np
import orjson

from verify.units import Unit


class MemberIndex:
    """The model's member ids by position, looked up by label: a dict, not a pandas Index, so
    reading a claims table does not import pandas (about 0.25 s, half a small check's start-up);
    a lookup of 10^5 labels takes about as long either way."""

    def __init__(self, ids: Sequence[str], position: Mapping[str, int] | None = None) -> None:
        """`position`: the id -> position map of the same ids when one exists (the model's
        member_index), used instead of building another (0.35 s and ~80 MB for 10^6 ids)."""
        self._ids = list(ids)
        self._position = (
            position if position is not None else {mid: k for k, mid in enumerate(self._ids)}
        )

    def __len__(self) -> int:
        return len(self._ids)

    def get_loc(self, label: str) -> int:
        """The position of a member id (KeyError when no member has it)."""
        return self._position[label]

    def get_indexer(self, labels: Sequence[object]) -> np.ndarray:
        """The position of each label, -1 where it is not a member id as the model writes it."""
        # The dict's keys are ids (text); a cell of another type (a number, None, an unusable
        # cell: all hashable) is equal to none of them, so a plain lookup gives it -1 too.
        get = cast("Callable[[object, int], int]", self._position.get)
        n = min(len(labels), len(self._ids))
        # A table listing the members in the model's order (the common export) names member k
        # in row k: those rows are found by one comparison each, the rest looked up.
        same = np.fromiter(map(eq, labels[:n], self._ids[:n]), dtype=bool, count=n)
        if n == len(labels) and same.all():
            return np.arange(n, dtype=np.int64)
        out = np.full(len(labels), -1, dtype=np.int64)
        out[:n][same] = np.flatnonzero(same)
        rest = np.concatenate([np.flatnonzero(~same), np.arange(n, len(labels))]).tolist()
        if rest:
            out[rest] = np.fromiter(
                map(get, (labels[i] for i in rest), repeat(-1)), dtype=np.int64, count=len(rest)
            )
        return out

    def ids_between(self, start: int, stop: int) -> list[str]:
        """The member ids at positions start..stop (a list of its own)."""
        return self._ids[start:stop]

    def joined_in_order(self, joined: str) -> np.ndarray | None:
        """get_indexer of the labels joined by line breaks in `joined` (none holding one), when
        they are the first member ids in order (positions 0, 1, ...); else None."""
        n = joined.count("\n") + 1
        if n > len(self._ids) or joined != "\n".join(self._ids[:n]):
            return None  # an id holding a break gives more breaks than labels: never equal
        return np.arange(n, dtype=np.int64)

    def tolist(self) -> list[str]:
        return list(self._ids)


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
class SignConflict:
    """A cell whose sign and T/C letter disagree under the table's convention ('121.4 T' in a
    table that writes compression positive). Its claim is read by the letter; the conflict is
    reported on that member rather than refusing the table."""

    label: str
    member: str
    column: str
    where: str
    text: str
    convention: str  # "tension-positive" or "compression-positive": the table's, as read


@dataclass(frozen=True)
class Resolution:
    """How finely a column was written, judged from its values: every value a multiple of
    `step` (0.5 kN, 5 kN). Half the step widens the tolerance of that column's claims (in the
    column's own unit). Significant figures are judged by the comparison (compare/tolerances.py)."""

    column: str
    step: float  # every member value of the column is a multiple of this, in the column's unit
    unit: str | None

    def describe(self) -> str:
        unit = f" {self.unit}" if self.unit else ""
        return (
            f"column '{self.column}' written to steps of {self.step:g}{unit}, so "
            f"+-{self.step / 2:g}{unit} allowed"
        )


class _TextsWhenRead(Sequence[str]):
    """A list of texts, each made when it is read (`_made`); `_given` holds the texts of the
    claims that came with theirs made. Indexed, sliced and compared like the list it stands for."""

    __slots__ = ("_given",)
    _given: dict[int, str]

    def _made(self, i: int) -> str:
        raise NotImplementedError

    @overload
    def __getitem__(self, i: int) -> str: ...

    @overload
    def __getitem__(self, i: slice) -> list[str]: ...

    def __getitem__(self, i: int | slice) -> str | list[str]:
        if type(i) is not int:
            if isinstance(i, slice):
                return [self[k] for k in range(*i.indices(len(self)))]
            i = operator.index(i)
        if i < 0:
            i += len(self)
        given = self._given.get(i) if self._given else None
        return given if given is not None else self._made(i)

    def __eq__(self, other: object) -> bool:
        if isinstance(other, type(self) | list | tuple):
            return len(self) == len(other) and all(a == b for a, b in zip(self, other, strict=True))
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]  # compared by content, like the list it stands for

    def __repr__(self) -> str:
        return f"{type(self).__name__}({list(self)!r})"


class Places(_TextsWhenRead):
    """Where each claim was written ("row 9, column 'dead'"), made when asked: one string per
    claim would hold about 80 bytes each (160 MB for 2x10^6 claims) for the few that a finding
    quotes; here a claim keeps its row number and value column, and the claims read one by one
    their own text. Indexed like the list it stands for (the comparison indexes it per claim)."""

    __slots__ = ("_numbers", "_parts", "_slot")

    def __init__(
        self,
        numbers: array[int],
        slot: array[int],
        parts: Sequence[tuple[str, str]],
        given: dict[int, str],
    ) -> None:
        self._numbers = numbers  # the row number (file, sheet) of each claim
        self._slot = slot  # the claim's value column: an entry of `parts`
        self._parts = tuple(parts)  # (before, after) the row number, per value column
        self._given = given  # claim position -> place, for claims that came with theirs

    def __len__(self) -> int:
        return len(self._numbers)

    def _made(self, i: int) -> str:
        before, after = self._parts[self._slot[i]]
        return f"{before}{self._numbers[i]}{after}"

    def split(
        self, positions: np.ndarray
    ) -> tuple[str | list[str], list[str], str | list[str]] | None:
        """The places of these claims in three parts, text before the row number, the number,
        text after it: each of the outer parts one text when the claims share their value column.
        A writer lays the parts side by side (the JSON of 10^6 claims) instead of making a string
        per claim. None when some claim came with its own place."""
        picked = np.asarray(positions, dtype=np.int64)
        if self._given and not self._given.keys().isdisjoint(picked.tolist()):
            return None
        numbers = int_items_as_array(self._numbers)[picked]
        slots = int_items_as_array(self._slot)[picked]
        # orjson writes an int as str() does, four times faster for a column
        raw = orjson.dumps(numbers.astype(np.int64), option=orjson.OPT_SERIALIZE_NUMPY)
        texts = raw[1:-1].decode().split(",") if numbers.size else []
        if slots.size and (slots == slots[0]).all():
            before, after = self._parts[int(slots[0])]
            return before, texts, after
        befores, afters = [b for b, _ in self._parts], [a for _, a in self._parts]
        codes = slots.tolist()
        return (
            list(map(befores.__getitem__, codes)),
            texts,
            list(map(afters.__getitem__, codes)),
        )


class CellTexts(_TextsWhenRead):
    """Each claim's cell as written, cut from one text when asked: the cells of the plain rows
    read in bulk are spans of their columns joined into one text (a string per cell held to the
    end was 60 bytes each, and pinned the memory of the many strings made and freed beside them
    while splitting rows); the claims read one by one keep their own text in `given`."""

    __slots__ = ("_start", "_stop", "_text")

    def __init__(
        self, text: str, start: np.ndarray, stop: np.ndarray, given: dict[int, str]
    ) -> None:
        self._text = text  # the cells' columns, joined
        self._start = compact_ints(start)  # where each claim's cell starts in `text`
        self._stop = compact_ints(stop)  # and where it ends (one past)
        self._given = given  # claim position -> cell, for claims that came with theirs

    def __len__(self) -> int:
        return len(self._start)

    def _made(self, i: int) -> str:
        return self._text[self._start[i] : self._stop[i]]

    def placed(
        self, at: np.ndarray, n: int, given_at: np.ndarray, given: Sequence[str]
    ) -> CellTexts:
        """These cells put at positions `at` of `n` claims, the `given` texts at `given_at`."""
        start = np.zeros(n, dtype=np.int64)
        stop = np.zeros(n, dtype=np.int64)
        start[at] = int_items_as_array(self._start)
        stop[at] = int_items_as_array(self._stop)
        return CellTexts(self._text, start, stop, dict(zip(given_at.tolist(), given, strict=True)))

    def take(self, positions: np.ndarray) -> list[str]:
        """The cells of these claims, as `[self[i] for i in positions]` gives them."""
        picked = np.asarray(positions, dtype=np.int64)
        starts = int_items_as_array(self._start)[picked].tolist()
        stops = int_items_as_array(self._stop)[picked].tolist()
        out = list(map(self._text.__getitem__, map(slice, starts, stops)))
        given = self._given
        if given and not given.keys().isdisjoint(at := picked.tolist()):
            for k, i in enumerate(at):
                if i in given:
                    out[k] = given[i]
        return out


_INT_CODES = (("b", np.int8), ("h", np.int16), ("i", np.int32), ("q", np.int64))


def compact_ints(values: np.ndarray) -> array[int]:
    """A compact array of Python-int items (indexed without numpy's scalars), in the fewest
    bytes per item that hold every value (a column slot in one, a row number in four)."""
    values = np.asarray(values, dtype=np.int64)
    low, high = (int(values.min()), int(values.max())) if values.size else (0, 0)
    for code, dtype in _INT_CODES:
        info = np.iinfo(dtype)
        if info.min <= low and high <= info.max and array(code).itemsize == info.bits // 8:
            out = array(code)
            out.frombytes(np.ascontiguousarray(values, dtype=dtype).tobytes())
            return out
    raise AssertionError("int64 holds every value")  # pragma: no cover


def int_items_as_array(items: array[int]) -> np.ndarray:
    """The items of an array('b' / 'h' / 'i' / 'q') as a numpy array sharing its memory."""
    return np.frombuffer(items, dtype=np.dtype(f"i{items.itemsize}"))


class Labels(_TextsWhenRead):
    """Each claim's label as written, made when asked: a claim read in bulk is labelled by its
    member's id exactly as the model writes it (that is what made it plain), so it keeps only
    its member position; the claims read one by one keep their own label."""

    __slots__ = ("_ids", "_member")

    def __init__(self, member: array[int], ids: Sequence[str], given: dict[int, str]) -> None:
        self._member, self._ids, self._given = member, ids, given

    def __len__(self) -> int:
        return len(self._member)

    def _made(self, i: int) -> str:
        return self._ids[self._member[i]]


@dataclass(frozen=True)
class ClaimArrays:
    """Every claim of a table as columns (one entry per claim, in table order), settled once by
    the reader so the comparison reads arrays and never re-interprets a cell.

    Built in bulk for the plain numeric rows of a table; only rows that are not plain numbers pass
    through per-claim objects (ClaimedValue), and those are made lazily for whoever asks."""

    value: np.ndarray  # float: T/C applied (T positive, C negative); else the sign as written
    sign_fixed: np.ndarray  # bool: a T/C letter settled the sign
    member: np.ndarray  # int64: the model's member position; -1 for a reaction claim
    column: np.ndarray  # int64: position in `names`
    names: tuple[str, ...]  # the column / case names as written, in first-seen order
    unit: np.ndarray  # int64: position in `units`
    units: tuple[str | None, ...]  # canonical unit symbols stated in cells or headers (None: none)
    unit_factor: np.ndarray  # float: the stated unit to the case's force unit; nan if none stated
    rounding: np.ndarray  # float: allowance for how the value was written, in its own unit
    where: Sequence[str]  # "row 9, column 'dead'"
    text: Sequence[str]  # the cell exactly as written
    label: Sequence[str]  # as written in the table
    reaction: Mapping[int, tuple[str, str]]  # claim position -> (joint, axis) of a reaction claim
    member_ids: Sequence[str]  # the model's member ids, by position
    resolutions: tuple[Resolution, ...] = ()  # columns judged rounded to a step (0.5, 5 kN)

    def __len__(self) -> int:
        return int(self.value.size)

    def claim(self, i: int) -> ClaimedValue:
        """Claim `i` as one object, for the few places that quote a single claim."""
        pos = int(self.member[i])
        return ClaimedValue(
            self.label[i],
            self.member_ids[pos] if pos >= 0 else None,
            self.reaction.get(i),
            self.names[int(self.column[i])],
            float(self.value[i]),
            bool(self.sign_fixed[i]),
            self.units[int(self.unit[i])],
            self.where[i],
            self.text[i],
        )


class ClaimsTable:
    """A claims table once read. `values` (one ClaimedValue per claim) is made on first use when
    the reader gave `arrays`; `arrays` is made from `values` for a table built in memory."""

    def __init__(
        self,
        source: str,
        sheet: str | None,  # the sheet read, or for a PDF the pages ("pages 12-14")
        sha256: str,  # of the file bytes
        values: tuple[ClaimedValue, ...] | Callable[[], tuple[ClaimedValue, ...]],
        unmatched: tuple[UnmatchedLabel, ...],
        columns: tuple[str, ...],  # case/combination names as written, in table order
        header_unit: str | None,  # unit found in headers, if one applies to the whole table
        sign_conflicts: tuple[SignConflict, ...] = (),
        resolutions: tuple[Resolution, ...] = (),  # columns written coarser than their decimals
        arrays: ClaimArrays | None = None,
        count: int | None = None,  # the number of claims, when `values` is made lazily
        unknown_values: tuple[ClaimedValue, ...] = (),  # under labels the model does not have
    ) -> None:
        self.unknown_values = unknown_values
        self.source, self.sheet, self.sha256 = source, sheet, sha256
        self.unmatched, self.columns, self.header_unit = unmatched, columns, header_unit
        self.sign_conflicts, self.resolutions = sign_conflicts, resolutions
        self._values = values if isinstance(values, tuple) else None
        self._make_values = None if isinstance(values, tuple) else values
        self._arrays = arrays
        self._count = len(values) if isinstance(values, tuple) else (count or 0)

    @property
    def values(self) -> tuple[ClaimedValue, ...]:
        if self._values is None:
            assert self._make_values is not None
            self._values = self._make_values()
        return self._values

    @property
    def count(self) -> int:
        """How many claims the table holds (without making them)."""
        return self._count

    def arrays_for(self, member_index: Mapping[str, int], case_unit: Unit) -> ClaimArrays:
        """The claims as columns against a model (its member positions and force unit)."""
        if self._arrays is None:
            from verify.io.claims.resolution import claim_arrays

            self._arrays = claim_arrays(self.values, member_index, case_unit, self.resolutions)
        return self._arrays

    def resolution_of(self, column: str) -> Resolution | None:
        for found in self.resolutions:
            if found.column == column:
                return found
        return None
