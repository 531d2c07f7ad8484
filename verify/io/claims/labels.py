"""Label matching: table labels -> member ids, joint pairs and reaction components of one model.

Member labels are matched by id, or by joint pair in either order with or without a separator
(``B-C``, ``C-B``, ``BC``, ``B/C``), case-insensitively; an exact id always wins. Reaction claims
are rows labelled like ``RA.y``, ``R_A_y``, ``A.y``, ``RAy``, ``A (y)``, matched against the
model's reaction components. Unknown and ambiguous labels are returned as data.
"""

from __future__ import annotations

import difflib
import re
from collections import defaultdict
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cached_property

import numpy as np

from verify.io.values import NORMALIZE_TABLE, normalize_text
from verify.model import Model

MAX_LABEL_CHARS = 100  # longer text is refused by the row reader; it is never matched here
MAX_SUGGESTED_LABELS = 50  # unknown labels that get "nearest label" suggestions
SUGGESTION_POOL_LIMIT = 20_000  # above this, suggestions look only at similar-looking labels
# Characters that may separate the two joints of a member label, after normalize_text().
LABEL_SEPARATORS = frozenset(" -_/\\|:,.")
AXES = ("x", "y", "z", "n")
_REACTION_PREFIX = re.compile(r"^(?:reaction|reac|rxn|r)[\s_.\-:]*(?P<body>.+)$")
_AXIS_TAIL = re.compile(r"(?P<sep>[\s_.\-:,]*)(?:\(\s*(?P<paren>[xyzn])\s*\)|(?P<bare>[xyzn]))$")
_AXIS_HEAD = re.compile(r"^(?P<axis>[xyz])[\s_.\-:,]+(?P<joint>.+)$")


@dataclass(frozen=True)
class Match:
    kind: str  # "member", "reaction", "unknown", "ambiguous"
    member: str | None = None
    reaction: tuple[str, str] | None = None
    candidates: tuple[str, ...] = ()

    @property
    def reaction_label(self) -> str:
        return f"{self.reaction[0]}.{self.reaction[1]}" if self.reaction else ""


def _folded_all(ids: Sequence[str], *, normalize: bool = False) -> list[str]:
    """casefold (after normalize_text, when asked) of every id, over the ids joined by a
    character none holds and split back: per id the same (translate maps no character to or
    from the separator, casefold and strip neither make nor remove one), and about ten times
    quicker than a call per id for 10^5 ids."""
    joined = "\n".join(ids)
    if ids and joined.count("\n") == len(ids) - 1:
        if normalize:
            return [k.strip() for k in joined.translate(NORMALIZE_TABLE).casefold().split("\n")]
        return joined.casefold().split("\n")
    if normalize:
        return [normalize_text(i).casefold() for i in ids]
    return [i.casefold() for i in ids]


# The characters of a number (PLAIN_NUMBER's, in any order): a label of these only is looked up
# among the ids before any folding (LabelMatcher.names).
_NUMBER_CHARS = re.compile(r"[0-9+\-.eE]+")
# Bytes an id folded to the characters of a number may hold: those characters, and ASCII spaces
# (outer ones are stripped; inner ones make no number, but allowing them only answers "may").
_NUMBER_LIKE_BYTES = np.zeros(256, dtype=bool)
_NUMBER_LIKE_BYTES[list(b"0123456789+-.e \t\n\r\x0b\x0c\x1c\x1d\x1e\x1f")] = True


def _characters(text: str) -> set[str]:
    """The set of characters in `text` (for ASCII text counted by numpy, quicker than set())."""
    if not text.isascii():
        return set(text)
    present = np.zeros(128, dtype=bool)
    present[np.frombuffer(text.encode("ascii"), dtype=np.uint8)] = True  # (bincount: twice as long)
    return {chr(c) for c in np.flatnonzero(present).tolist()}


def _joined_folded(ids: Sequence[str]) -> str:
    """The ids joined by line breaks and case-folded (lower() for ASCII text: the same)."""
    joined = "\n".join(ids)
    return joined.lower() if joined.isascii() else joined.casefold()


def _any_number_like(ids: Sequence[str], folded_join: str | None = None) -> bool:
    """Whether some id, after normalize_text and casefold, may consist of the characters of a
    number only: per id, no byte of the folded ids outside _NUMBER_LIKE_BYTES (a non-ASCII
    folded text answers True: its stripping is not judged here). `folded_join`: the ids'
    _joined_folded, when made already."""
    if not ids:
        return False
    if folded_join is not None and folded_join.isascii():
        # (ASCII case-folding keeps every byte's place and every line break)
        joined = folded = folded_join
    else:
        joined = "\n".join(ids)
    if joined.count("\n") != len(ids) - 1:
        return True
    if joined.isascii():
        # NORMALIZE_TABLE maps non-ASCII dashes and spaces only, and casefold is lower() here.
        folded = joined.lower() if joined is not folded_join else joined
    else:
        folded = joined.translate(NORMALIZE_TABLE).casefold()
        if not folded.isascii():
            return True
    raw = np.frombuffer(folded.encode("ascii") + b"\n", dtype=np.uint8)
    starts = np.concatenate([[0], np.flatnonzero(raw == ord("\n"))[:-1] + 1])
    other = ~_NUMBER_LIKE_BYTES[raw]  # the breaks between ids count as allowed
    # Some id without another byte (logical_or keeps the bytes as bools: an add widened each).
    return not bool(np.logical_or.reduceat(other, starts).all())


def member_ids_for(model: Model, labels: Sequence[str]) -> list[str]:
    """Member ids for labels written as a claims table would write them ('u2u3', 'U2-L3', 'L3 U2').

    A label that names no single member is returned as written, for the caller to report.
    """
    matcher = LabelMatcher(model)
    out = []
    for label in labels:
        found = matcher.match(label)
        out.append(found.member if found.kind == "member" and found.member is not None else label)
    return out


class LabelMatcher:
    """Matches table labels to member ids, joint pairs and reaction components of one model."""

    def __init__(self, model: Model) -> None:
        self._member_ids = model.member_ids  # a list made per call: made once here
        # Looked up only (`in`): the model's own index, not a set of the same ids (0.05 s per
        # 10^6 members).
        self._ids: Mapping[str, int] = model.member_index
        self._pairs_made: dict[frozenset[str], str] | None = None  # made on first use (below)
        self._reactions = {(r.joint, r.axis) for r in model.reactions}
        # A supported joint's unrestrained global directions (axis-aligned supports only): a claim
        # there is matched, so that 0 agrees and anything else is said to have no reaction to act
        # on.
        inclined = {r.joint for r in model.reactions if r.axis == "n"}
        self._free_directions = {
            (r.joint, axis)
            for r in model.reactions
            if r.joint not in inclined
            for axis in AXES[: model.dim]
        } - self._reactions
        self._model = model
        self._pool: dict[str, str] | None = None
        self._cache: dict[str, Match] = {}
        self._suggested = 0

    @property
    def member_ids(self) -> list[str]:
        """The model's member ids in order (the matcher's own list: read, never changed)."""
        return self._member_ids

    @cached_property
    def _joint_ids(self) -> list[str]:
        return self._model.joint_ids  # a list made per call: made once here, when needed

    # The folded spellings are made on first use: a table that writes every member id as the
    # model does never needs them (0.2 s for 10^5 members).
    @cached_property
    def _fold_groups(self) -> tuple[dict[str, str], dict[str, list[str]]]:
        """The member id of each folded spelling, and the spellings several ids share (rare:
        one list per id would cost most of the claims reader's setup)."""
        ids = self._member_ids
        folds = _folded_all(ids)
        one = dict(zip(folds, ids, strict=True))
        shared: dict[str, list[str]] = {}
        if len(one) < len(ids):
            groups: dict[str, list[str]] = defaultdict(list)
            for fold, mid in zip(folds, ids, strict=True):
                groups[fold].append(mid)
            shared = {fold: group for fold, group in groups.items() if len(group) > 1}
        return one, shared

    def _ids_of_fold(self, folded: str) -> list[str]:
        """The member ids that read as `folded` once case is ignored, in model order."""
        one, shared = self._fold_groups
        if folded in shared:
            return shared[folded]
        return [one[folded]] if folded in one else []

    @cached_property
    def _joints_folded(self) -> dict[str, str | list[str]]:
        """The joint ids each folded spelling reads as (one id mostly; a list per spelling would
        be made for every joint, so one id is kept as text and only shared spellings list)."""
        ids = self._joint_ids
        keys = _folded_all(ids, normalize=True)
        folded: dict[str, str | list[str]] = dict(zip(keys, ids, strict=True))
        if len(folded) < len(ids):
            groups: dict[str, list[str]] = defaultdict(list)
            for key, jid in zip(keys, ids, strict=True):
                groups[key].append(jid)
            folded.update((key, group) for key, group in groups.items() if len(group) > 1)
        return folded

    def _joints_of(self, key: str) -> list[str]:
        found = self._joints_folded.get(key)
        if found is None:
            return []
        return [found] if isinstance(found, str) else found

    @cached_property
    def case_names(self) -> frozenset[str]:
        """The model's load case and combination names, folded (a long table's case cells)."""
        return frozenset(name.casefold() for name in self._model.load_names)

    def names(self, label: str) -> str:
        """The kind a label reads as ("member", "reaction", "unknown", "ambiguous"), without the
        suggestions an unknown label would get: for scanning every cell of a sheet."""
        found = self._cache.get(label)
        if found is not None:
            return found.kind
        if len(label) > MAX_LABEL_CHARS:
            return "unknown"
        if (
            label not in self._ids
            and _NUMBER_CHARS.fullmatch(label) is not None
            and not self._numbers_may_name
        ):
            # A cell written with the characters of a number only (most cells of a force table)
            # names nothing when no id reads that way: its folded text is itself lower-cased, so a
            # folded id equal to it, or a pair of folded joint ids making it up, would be such an
            # id too; and a reaction label starts with 'r' or ends with an axis letter or ')'. So
            # the scan of the first rows of a sheet need not fold every id of the model.
            return "unknown"
        if label not in self._ids and not self._may_name(label):
            return "unknown"
        if label not in self._ids and self._names_nothing(label):
            return "unknown"
        return self._match(label, suggest=False).kind

    def _names_nothing(self, label: str) -> bool:
        """True when `label` reads as no member id, member pair or reaction, judged by looking
        its folded text, and the joint spellings a pair or reaction reading would need, up in the
        ids joined (_key_joins) instead of folding every id of the model (a heading such as
        'member' of a model with joints 'B0_1' passes _may_name). False when it may name one, or
        when the ids are not plain enough to judge so: full matching decides then."""
        joins = self._key_joins
        if joins is None or "\n" in label:
            return False
        members, joints = joins
        folded = normalize_text(label).casefold()
        if f"\n{folded}\n" in members:
            return False

        def is_joint(key: str) -> bool:
            return bool(key) and f"\n{key}\n" in joints

        n = len(folded)
        for i in range(1, n):  # as _pair_readings splits it
            if not is_joint(folded[:i]):
                continue
            j = i
            while j < n and folded[j] in LABEL_SEPARATORS:
                j += 1
            if is_joint(folded[j:]):
                return False
        return not (
            self._reactions and any(is_joint(t) for t, _ in self._reaction_candidates(folded))
        )

    @cached_property
    def _key_joins(self) -> tuple[str, str] | None:
        """The member ids folded as _fold_groups folds them and the joint spellings as
        _joints_folded makes them, each set joined between line breaks; None unless the ids are
        ASCII without whitespace or line breaks (then normalising and stripping change nothing,
        and a spelling between breaks is one whole id)."""
        found = []
        for folded, ids in zip(
            self._folded_joins, (self._member_ids, self._joint_ids), strict=True
        ):
            if not ids or not folded.isascii() or folded.count("\n") != len(ids) - 1:
                return None
            if any(space in folded for space in " \t\r\x0b\x0c\x1c\x1d\x1e\x1f"):
                return None
            found.append(f"\n{folded}\n")
        return found[0], found[1]

    def _may_name(self, label: str) -> bool:
        """False when the label holds a character no reading could use (a heading such as
        'dead (kN)' in a table of ids like 'M12' and joints like 'L3'): its folded text is a
        folded member id, or joint spellings with separators between, or a joint spelling with
        a reaction prefix, separators, parentheses and an axis; none of those hold any other
        character (spaces aside, which the readings strip)."""
        extra = set(normalize_text(label).casefold()) - self._label_chars
        return not any(not ch.isspace() for ch in extra)

    @cached_property
    def _label_chars(self) -> frozenset[str]:
        """The characters a label's folded text may hold and still name something (see
        _may_name): the folded ids' own (minus signs and spaces as normalize_text makes them),
        the separators, and the letters and marks of a reaction label."""
        chars = set(LABEL_SEPARATORS) | set("reactionxyzn()_.-:, ")
        for folded in self._folded_joins:
            chars |= _characters(folded)
        return frozenset(chars)

    @cached_property
    def _folded_joins(self) -> tuple[str, str]:
        """The member ids and the joint ids, each _joined_folded (made once for _label_chars
        and _numbers_may_name: 0.1 s at 10^6 members)."""
        return _joined_folded(self._member_ids), _joined_folded(self._joint_ids)

    @cached_property
    def _numbers_may_name(self) -> bool:
        """Whether some member or joint id, folded as labels are, may be written with the
        characters of a number only (answered True whenever that is not plainly ruled out)."""
        members, joints = self._folded_joins
        return _any_number_like(self._member_ids, members) or _any_number_like(
            self._joint_ids, joints
        )

    def match(self, label: str) -> Match:
        found = self._cache.get(label)
        if found is None:
            found = self._match(label)
            self._cache[label] = found
        return found

    def _match(self, label: str, *, suggest: bool = True) -> Match:
        if label in self._ids:
            return Match("member", member=label)
        if len(label) > MAX_LABEL_CHARS:
            return Match("unknown")  # the pair readings would cost the square of its length
        folded = normalize_text(label).casefold()
        members: dict[str, None] = dict.fromkeys(self._ids_of_fold(folded))
        members.update(dict.fromkeys(self._pair_readings(folded)))
        reactions = dict.fromkeys(self._reaction_readings(folded))
        total = len(members) + len(reactions)
        if total == 1:
            if members:
                return Match("member", member=next(iter(members)))
            return Match("reaction", reaction=next(iter(reactions)))
        if total > 1:
            return Match(
                "ambiguous", candidates=tuple(members) + tuple(f"{j}.{a}" for j, a in reactions)
            )
        return Match("unknown", candidates=self._suggest(folded) if suggest else ())

    def _pairs(self) -> dict[frozenset[str], str]:
        """Members by their end joints; made only when a label reads as two joints (a table of
        member ids never needs it, and it costs a set per member)."""
        if self._pairs_made is None:
            self._pairs_made = {frozenset((m.start, m.end)): m.id for m in self._model.members}
        return self._pairs_made

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
            for a in self._joints_of(left):
                for b in self._joints_of(right):
                    mid = self._pairs().get(frozenset((a, b)))
                    if mid is not None and mid not in found:
                        found.append(mid)
        return found

    def _reaction_candidates(self, folded: str) -> list[tuple[str, str]]:
        """(joint spelling, axis) of each way `folded` may read as a reaction label."""
        bodies = [(folded, False)]
        prefixed = _REACTION_PREFIX.match(folded)
        if prefixed:
            bodies.append((prefixed.group("body"), True))
        readings: list[tuple[str, str]] = []
        for body, has_prefix in bodies:
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
        return readings

    def _reaction_readings(self, folded: str) -> list[tuple[str, str]]:
        if not self._reactions:
            return []
        found: list[tuple[str, str]] = []
        for joint_text, axis in self._reaction_candidates(folded):
            for jid in self._joints_of(joint_text):
                if ((jid, axis) in self._reactions or (jid, axis) in self._free_directions) and (
                    jid,
                    axis,
                ) not in found:
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
