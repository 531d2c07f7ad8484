"""The validated, immutable truss model that every analysis trusts.

One internal convention, stated once: **numbers are kept in the case's declared units** (lengths in
``units.length``, forces in ``units.force``, EA in force units) and **member forces are
tension-positive**. Claimed tables are converted to the case's force unit at the input boundary;
reports convert nothing else.

Build a model with :func:`verify.io.case.read_case` (files) or :func:`build_model` (Python data);
both validate once and freeze the result.
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator, Mapping, Sequence
from dataclasses import InitVar, dataclass, field
from functools import partial
from itertools import chain, repeat
from operator import itemgetter
from types import MappingProxyType
from typing import NamedTuple, TypeVar, overload

import numpy as np

from verify.units import Unit


# Joints and members are named tuples, not dataclasses: a 10^5-member case builds 10^5 of each,
# and a tuple costs a third of a frozen dataclass to make (bench/run.py, read_case stage).
class Joint(NamedTuple):
    id: str
    coords: tuple[float, ...]


_T = TypeVar("_T")


class Member(NamedTuple):
    id: str
    start: str
    end: str
    EA: float | None = None  # axial stiffness in force units; None when not given


@dataclass(frozen=True)
class Reaction:
    """One reaction component: a force at `joint` acting along the unit vector `direction`.

    `axis` is 'x', 'y', 'z' for a restrained global direction, or 'n' for an inclined roller.
    """

    joint: str
    direction: tuple[float, ...]
    axis: str

    @property
    def label(self) -> str:
        return f"{self.joint}.{self.axis}"


class BulkLoads(Mapping[str, tuple[float, ...]]):
    """One load case's rows of a loads table read in bulk, read like the dict joint id -> force
    vector it stands for (rows in table order, each joint once), made only when first read: the
    Model's load matrix reads the positions and vectors as they are, and a check reads no load
    by joint (10^6 members: 5x10^5 vector tuples with their floats never made)."""

    __slots__ = ("joint_ids", "positions", "vectors", "_dict")

    def __init__(self, joint_ids: list[str], positions: np.ndarray, vectors: np.ndarray) -> None:
        # positions: row -> position in joint_ids; vectors: rows x dim.
        self.joint_ids, self.positions, self.vectors = joint_ids, positions, vectors
        self._dict: dict[str, tuple[float, ...]] | None = None

    def _made(self) -> dict[str, tuple[float, ...]]:
        if self._dict is None:
            vectors = self.vectors
            # One list per axis zipped: no list per row to turn into a tuple.
            rows = zip(*(vectors[:, a].tolist() for a in range(vectors.shape[1])), strict=True)
            names = np.array(self.joint_ids, dtype=object)[self.positions].tolist()
            self._dict = dict(zip(names, rows, strict=True))
        return self._dict

    def __getitem__(self, joint: str) -> tuple[float, ...]:
        return self._made()[joint]

    def __iter__(self) -> Iterator[str]:
        return iter(self._made())

    def __len__(self) -> int:
        return len(self.positions)

    def __contains__(self, joint: object) -> bool:
        return joint in self._made()

    def __eq__(self, other: object) -> bool:
        if isinstance(other, Mapping):
            return self._made() == dict(other.items())
        return NotImplemented

    __hash__ = None  # type: ignore[assignment]  # unhashable, like the dict it stands for

    def __repr__(self) -> str:
        return repr(self._made())

    def __reduce__(self) -> tuple[type, tuple[dict[str, tuple[float, ...]]]]:
        return dict, (self._made(),)


@dataclass(frozen=True)
class LoadCase:
    name: str
    loads: Mapping[str, tuple[float, ...]]  # joint id -> force vector


@dataclass(frozen=True)
class Combination:
    name: str
    factors: Mapping[str, float]  # load case name -> factor


@dataclass(frozen=True)
class ExactValues:
    """Exact forms (sympy expressions) of numbers the case file wrote as arithmetic, where the
    result is rational or a surd ("4.5 * tan(30)" is 3*sqrt(3)/2): the floats of the model are
    these rounded once, and hand calcs may start from them instead of the decimals.

    coords: joint -> its coordinates (None for a coordinate written as a plain number);
    loads: (load case, joint) -> its load vector, for loads given by arithmetic or converted
    from a stated form (magnitude and angle, normal to a member, line load, self-weight).
    """

    coords: Mapping[str, tuple[object, ...]] = field(default_factory=dict)
    loads: Mapping[tuple[str, str], tuple[object, ...]] = field(default_factory=dict)


@dataclass(frozen=True)
class Units:
    length: Unit
    force: Unit


# Items of a bulk table made one at a time before all are made at once (about 1 us each alone,
# against 0.3 us each made together).
SINGLE_READS = 1000


class _Made(Sequence[_T]):
    """Joints or members of tables read in bulk, read like the tuple they stand for.

    Their number and their ids are known without making an item; an item read by position is
    made alone, and the whole tuple once, when they are iterated or read many times (a check of
    a large Pratt truss reads a few joints and members by position, not the 1.5x10^6 named tuples
    with their coordinate tuples and floats of its 10^6 members). Equal to the same items as a
    tuple or as another of these, hashed like that tuple, pickled as it.
    """

    __slots__ = ("_ids", "_all", "_reads")

    def __init__(self, ids: list[str]) -> None:
        self._ids = ids
        self._all: tuple[_T, ...] | None = None
        self._reads = 0  # items made one at a time so far

    def _make(self) -> tuple[_T, ...]:
        raise NotImplementedError

    def _item(self, index: int) -> _T:
        raise NotImplementedError

    def _items(self) -> tuple[_T, ...]:
        if self._all is None:
            self._all = self._make()
        return self._all

    def ids(self) -> list[str]:
        """The items' ids in order (the list itself: read it, do not change it)."""
        return self._ids

    def __len__(self) -> int:
        return len(self._ids)

    @overload
    def __getitem__(self, index: int) -> _T: ...

    @overload
    def __getitem__(self, index: slice) -> tuple[_T, ...]: ...

    def __getitem__(self, index: int | slice) -> _T | tuple[_T, ...]:
        if self._all is None and not isinstance(index, slice) and self._reads < SINGLE_READS:
            # A few items read by position (a finding's joint, a special step's joint): made
            # alone. Past SINGLE_READS of them, a loop is reading them: all are made once.
            self._reads += 1
            return self._item(range(len(self._ids))[index])  # IndexError as a tuple says it
        return self._items()[index]

    def __iter__(self) -> Iterator[_T]:
        return iter(self._items())

    def __contains__(self, item: object) -> bool:
        return item in self._items()

    def __eq__(self, other: object) -> bool:
        if isinstance(other, _Made | tuple):
            return self._items() == tuple(other)
        return NotImplemented

    def __hash__(self) -> int:
        return hash(self._items())

    def __repr__(self) -> str:
        return repr(self._items())

    def __reduce__(self) -> tuple[type, tuple[tuple[_T, ...]]]:
        return tuple, (self._items(),)


class BulkJoints(_Made[Joint]):
    """Joints of a table read in bulk: ids and coordinates (joints x dim)."""

    __slots__ = ("xyz",)

    def __init__(self, ids: list[str], xyz: np.ndarray) -> None:
        super().__init__(ids)
        self.xyz = xyz

    def _item(self, index: int) -> Joint:
        return tuple.__new__(Joint, (self._ids[index], tuple(self.xyz[index].tolist())))

    def _make(self) -> tuple[Joint, ...]:
        # tuple.__new__ straight (Joint._make is Python code per joint); the coordinates zipped
        # from one list per axis (no list per joint to turn into a tuple).
        coords = zip(*(self.xyz[:, a].tolist() for a in range(self.xyz.shape[1])), strict=True)
        return tuple(map(partial(tuple.__new__, Joint), zip(self._ids, coords, strict=True)))


class BulkMembers(_Made[Member]):
    """Members of a table read in bulk: ids, end positions in `joint_ids` (members x 2) and one
    EA for every member (None: not given)."""

    __slots__ = ("joint_ids", "ends", "ea")

    def __init__(
        self, ids: list[str], joint_ids: list[str], ends: np.ndarray, ea: float | None
    ) -> None:
        super().__init__(ids)
        self.joint_ids, self.ends, self.ea = joint_ids, ends, ea

    def _item(self, index: int) -> Member:
        start, end = self.ends[index].tolist()
        row = (self._ids[index], self.joint_ids[start], self.joint_ids[end], self.ea)
        return tuple.__new__(Member, row)

    def _make(self) -> tuple[Member, ...]:
        # The ends as the joints' own id strings (found by position), not copies.
        names = np.array(self.joint_ids, dtype=object)
        starts, stops = names[self.ends[:, 0]].tolist(), names[self.ends[:, 1]].tolist()
        rows = zip(self._ids, starts, stops, repeat(self.ea, len(self._ids)), strict=True)
        return tuple(map(partial(tuple.__new__, Member), rows))


def _vectors(values: Iterable[tuple[float, ...]], n: int, dim: int) -> np.ndarray:
    """n load vectors as an n x dim array."""
    vectors = list(values)
    if set(map(len, vectors)) == {dim}:
        # Read straight into one array (np.array over a list of tuples took 2.5x longer).
        return np.fromiter(chain.from_iterable(vectors), dtype=float, count=n * dim).reshape(n, dim)
    return np.array(vectors, dtype=float).reshape(n, dim)


def _frozen(a: np.ndarray) -> np.ndarray:
    a = np.ascontiguousarray(a)
    a.setflags(write=False)
    return a


@dataclass(frozen=True)
class Model:
    """A pin-jointed truss: joints, members, reaction components, load cases, combinations."""

    title: str
    units: Units
    dim: int
    joints: Sequence[Joint]
    members: Sequence[Member]
    reactions: tuple[Reaction, ...]
    cases: tuple[LoadCase, ...]
    combinations: tuple[Combination, ...] = ()
    source: str = ""
    # The CSV tables the case file named, as read: a run protects them from its outputs.
    tables: tuple[str, ...] = ()
    # Loads the case stated in engineers' forms (line loads, self-weight, magnitude and angle,
    # normal to a member), each as "file:line: what it was -> the joint loads it became".
    conversions: tuple[str, ...] = ()
    exact: ExactValues | None = field(default=None, repr=False, compare=False)
    # Derived arrays (positions are internal; user labels are the ids above).
    xyz: np.ndarray = field(init=False, repr=False, compare=False)
    ends_index: np.ndarray = field(init=False, repr=False, compare=False)
    lengths: np.ndarray = field(init=False, repr=False, compare=False)
    unit_vectors: np.ndarray = field(init=False, repr=False, compare=False)
    joint_index: Mapping[str, int] = field(init=False, repr=False, compare=False)
    member_index: Mapping[str, int] = field(init=False, repr=False, compare=False)
    # Applied joint loads, dofs x (cases + combinations), read-only: see load_matrix().
    applied_loads: np.ndarray = field(init=False, repr=False, compare=False)
    # Coordinates (joints x dim) and member end positions (members x 2) when the reader already
    # holds them as arrays (bulk CSV tables); they must describe `joints` and `members` exactly.
    arrays: InitVar[tuple[np.ndarray, np.ndarray] | None] = None
    # The joint and member indexes (id -> position) when the reader already made them (bulk CSV
    # tables; about 0.5 s per 10^6 members to make again); each must describe `joints` or
    # `members` exactly, None where the reader has none.
    indexes: InitVar[tuple[dict[str, int] | None, dict[str, int] | None] | None] = None

    def __post_init__(
        self,
        arrays: tuple[np.ndarray, np.ndarray] | None,
        indexes: tuple[dict[str, int] | None, dict[str, int] | None] | None,
    ) -> None:
        given_joints, given_members = indexes if indexes is not None else (None, None)
        joint_index = (
            given_joints
            if given_joints is not None
            else dict(zip(self._ids("joints"), range(len(self.joints)), strict=True))
        )
        member_index = (
            given_members
            if given_members is not None
            else dict(zip(self._ids("members"), range(len(self.members)), strict=True))
        )
        if arrays is not None:
            xyz, ends = np.asarray(arrays[0], dtype=float), np.asarray(arrays[1], dtype=np.int64)
        elif isinstance(self.joints, BulkJoints) and isinstance(self.members, BulkMembers):
            # The same tables as before (dataclasses.replace of another field): their arrays.
            xyz, ends = self.joints.xyz, self.members.ends
        else:
            xyz = np.array([j.coords for j in self.joints], dtype=float)
            ends = np.array(
                [(joint_index[m.start], joint_index[m.end]) for m in self.members], dtype=np.int64
            )
        xyz = xyz.reshape(len(self.joints), self.dim)
        ends = ends.reshape(len(self.members), 2)
        delta = xyz[ends[:, 1]] - xyz[ends[:, 0]] if len(self.members) else np.zeros((0, self.dim))
        lengths = np.linalg.norm(delta, axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            unit = delta / lengths[:, None] if len(self.members) else delta
        object.__setattr__(self, "xyz", _frozen(xyz))
        object.__setattr__(self, "ends_index", _frozen(ends))
        object.__setattr__(self, "lengths", _frozen(lengths))
        object.__setattr__(self, "unit_vectors", _frozen(unit))
        object.__setattr__(self, "joint_index", MappingProxyType(joint_index))
        object.__setattr__(self, "member_index", MappingProxyType(member_index))
        # Made once here, like the arrays above, so the model never changes after it is built
        # (what analyses share, such as the equilibrium matrix and its LU, belongs to the
        # analysis run: verify.analysis.run).
        object.__setattr__(self, "applied_loads", _frozen(self._assemble_loads(joint_index)))

    # -- convenience views ------------------------------------------------------------------
    @property
    def joint_ids(self) -> list[str]:
        return list(self._ids("joints"))

    @property
    def member_ids(self) -> list[str]:
        # A check asks for them several times (claims, stability, comparison): the ids are read
        # from the tuples once, and each caller gets its own list to change (copying 10^6 ids
        # took 5 ms, reading them from the tuples 25 ms).
        return list(self._ids("members"))

    def _ids(self, kind: str) -> list[str]:
        items = getattr(self, kind)
        if isinstance(items, _Made):
            return items.ids()
        key = f"_{kind}_ids"
        ids: list[str] | None = self.__dict__.get(key)
        if ids is None:
            ids = list(map(itemgetter(0), items))
            object.__setattr__(self, key, ids)  # a cache beside the fields; the model is frozen
        return ids

    @property
    def load_names(self) -> list[str]:
        """Every load case, then every combination: the columns of every result table."""
        return [c.name for c in self.cases] + [c.name for c in self.combinations]

    @property
    def dofs(self) -> int:
        return self.dim * len(self.joints)

    @property
    def has_stiffness(self) -> bool:
        if isinstance(self.members, BulkMembers):  # one EA for all: no member made to ask
            return self.members.ea is not None or not self.members
        return all(m.EA is not None for m in self.members)

    def member_EA(self) -> np.ndarray:
        """EA of every member in member order (NaN where not given), without making the members
        of a table read in bulk."""
        if isinstance(self.members, BulkMembers):
            ea = self.members.ea
            return np.full(len(self.members), np.nan if ea is None else float(ea))
        return np.array([np.nan if m.EA is None else m.EA for m in self.members], dtype=float)

    def members_without_stiffness(self) -> list[str]:
        if isinstance(self.members, BulkMembers):
            return [] if self.members.ea is not None else self.member_ids
        return [m.id for m in self.members if m.EA is None]

    def reaction_arrays(self) -> tuple[np.ndarray, np.ndarray]:
        """Each reaction component's joint (its position in `joints`) and direction (reactions x
        dim), in reaction order: made each time it is asked for (the model keeps nothing)."""
        joints = np.array([self.joint_index[r.joint] for r in self.reactions], dtype=np.int64)
        directions = np.array([r.direction for r in self.reactions], dtype=float)
        return joints, directions.reshape(len(self.reactions), self.dim)

    def load_matrix(self) -> np.ndarray:
        """Applied joint loads, dofs x (cases + combinations); combinations by superposition.

        Made when the model is built and returned read-only (copy it to modify).
        """
        return self.applied_loads

    def _assemble_loads(self, joint_index: dict[str, int]) -> np.ndarray:
        n_cases, dim = len(self.cases), self.dim
        F = np.zeros((self.dofs, n_cases + len(self.combinations)))
        for k, case in enumerate(self.cases):
            if not case.loads:
                continue
            n = len(case.loads)
            if isinstance(case.loads, BulkLoads) and case.loads.vectors.shape == (n, dim):
                # Rows of a bulk table: their joints' positions were found when it was read.
                index, vectors = case.loads.positions, case.loads.vectors
            else:
                # One vector per loaded joint, looked up in the plain dict (through its read-only
                # proxy, 5x10^5 lookups took 0.16 s instead of 0.10).
                get = joint_index.__getitem__
                index = np.fromiter(map(get, case.loads), dtype=np.int64, count=n)
                vectors = _vectors(case.loads.values(), n, dim)
            rows = (index[:, None] * dim + np.arange(dim)).ravel()
            np.add.at(F[:, k], rows, vectors.ravel())
        case_pos = {c.name: k for k, c in enumerate(self.cases)}
        for c, combo in enumerate(self.combinations):
            for name, factor in combo.factors.items():
                F[:, n_cases + c] += factor * F[:, case_pos[name]]
        return F

    def combination_matrix(self) -> np.ndarray:
        """Factors mapping case results to every column of load_names (cases x all)."""
        n = len(self.cases)
        C = np.zeros((n, n + len(self.combinations)))
        C[:, :n] = np.eye(n)
        case_pos = {c.name: k for k, c in enumerate(self.cases)}
        for c, combo in enumerate(self.combinations):
            for name, factor in combo.factors.items():
                C[case_pos[name], n + c] = factor
        return C
