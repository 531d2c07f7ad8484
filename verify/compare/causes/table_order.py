"""Causes that live in the table, not the model: rows shifted against their labels, values copied.

Both read the claims in the table's own order (the frame keeps it: claims are judged in the order
they were read, row by row).
"""

from __future__ import annotations

import re
from typing import NamedTuple

import numpy as np

from verify.compare.causes.frame import ClaimsFrame
from verify.compare.tolerances import allowance

CLEAR_MISS = (
    2.0  # as in verify.compare.causes.search: a claim clearly wrong misses by this many allowances
)

SHIFTS = (1, -1, 2, -2, 3, -3)
MIN_COPY_FIGURES = 3  # "110" equals another row's "110" by chance in a table rounded to 2 figures
COPY_REACH = 3  # rows either side a value is copied from (a slip of the eye or the mouse)
MIN_RUN = 3  # disagreeing rows in a run: two are a swapped pair, one a copied value at most


class Shift(NamedTuple):
    column: int
    offset: int  # the value written on row i belongs to the member of row i + offset
    positions: np.ndarray  # frame positions of the rows in the run, in table order
    explained: np.ndarray  # mask over the frame


class Copy(NamedTuple):
    position: int  # the frame position of the copied (wrong) claim
    source: int  # the frame position of the claim it repeats


def shifted_runs(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray) -> list[Shift]:
    """Runs of rows whose values match the recomputed force of the member k rows away."""
    out: list[Shift] = []
    computed = frame.computed + base
    for k in np.unique(frame.column[pending]).tolist():
        order = np.flatnonzero(frame.column == k)  # table order
        n = len(order)
        if n < 3:
            continue
        # A run is taken only when at least half of its rows are pending, so it is at most twice
        # as long as the column's pending rows: only rows that near a pending row are tested
        # (None: every row), and a run reaching untested rows is longer than any that is taken.
        near = _near(np.flatnonzero(pending[order]), n)
        tested = np.flatnonzero(near) if near is not None else None
        taken = np.zeros(n, dtype=bool)
        for offset in SHIFTS:
            # value written on row i is the force of the member on row i + offset
            ok = np.zeros(n, dtype=bool)
            lo, hi = max(0, -offset), min(n, n - offset)
            if hi - lo < MIN_RUN:
                continue
            if tested is None:
                own = order[lo:hi]  # slices: no index arrays made per offset
                other = order[lo + offset : hi + offset]
                at: slice | np.ndarray = slice(lo, hi)
            else:
                at = tested[(tested >= lo) & (tested < hi)]
                own, other = order[at], order[at + offset]
            y = frame.claimed[own]
            c = computed[other]
            allowed = allowance(frame.rtol, y, c, frame.atol[other], frame.rounding[own])
            ok[at] = np.abs(y - c) <= allowed
            ok &= ~taken
            # maximal runs of consecutive rows that read shifted; count the disagreeing ones
            edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
            for start, stop in zip(edges[::2].tolist(), edges[1::2].tolist(), strict=True):
                if stop - start < MIN_RUN:
                    continue
                if near is not None and (
                    (start > lo and not near[start - 1]) or (stop < hi and not near[stop])
                ):
                    continue  # it goes on into rows not tested: too long to be taken
                run = order[start:stop]
                hits = pending[run]
                # a run must hold disagreeing rows and not merely equal neighbours
                if hits.sum() >= MIN_RUN and hits.sum() * 2 >= len(run):
                    mask = np.zeros(len(frame), dtype=bool)
                    mask[run[hits]] = True
                    out.append(Shift(int(k), offset, run, mask))
                    taken[start:stop] = True
    return out


def _near(marks: np.ndarray, n: int) -> np.ndarray | None:
    """Of n rows, those within reach of a marked (pending) one, reach being one more than twice
    the marks: a run taken holds at least half pending rows, so it and the rows either side of
    it lie within reach. None when that is most rows (every row is then tested)."""
    reach = 2 * marks.size + 1
    if marks.size * (2 * reach + 1) > n // 8:
        return None
    rows = (marks[:, None] + np.arange(-reach, reach + 1)).ravel()
    near = np.zeros(n, dtype=bool)
    near[rows[(rows >= 0) & (rows < n)]] = True
    return near


def copied_values(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray) -> list[Copy]:
    """A disagreeing claim written exactly as a nearby row of its column whose claim agrees.

    Only nearby rows: an equal value far away in the table is as likely a coincidence (a wrong value
    that happens to equal some other member's force) as a copy. Only the pending claims and the
    rows they may repeat are tested (the test of each claim is its own: the same answers as
    testing every claim of the frame, which holds 2x10^6 of them on a large table)."""
    rtol, claimed = frame.rtol, frame.claimed

    def agrees(at: np.ndarray, y: np.ndarray | None = None) -> np.ndarray:
        """frame.agrees(frame.computed + base, y) at the claims `at`."""
        c = frame.computed[at] + base[at]
        y = claimed[at] if y is None else y
        allowed = allowance(rtol, y, c, frame.atol[at], frame.rounding[at])
        with np.errstate(invalid="ignore"):
            return np.isfinite(c) & (np.abs(y - c) <= allowed)

    at = np.flatnonzero(pending)
    # Only claims clearly wrong: a value just outside its allowance is a rounding question, and in
    # a table rounded to two figures many rows repeat one another honestly.
    computed = frame.computed[at] + base[at]
    y = claimed[at]
    allowed = allowance(rtol, y, computed, frame.atol[at], frame.rounding[at])
    clear = np.abs(y - frame.computed[at] - base[at]) > CLEAR_MISS * allowed
    # a claim that is its own member's force with the sign reversed is a sign flip, however many
    # mirror members carry the same size
    flipped = agrees(at, -y)
    at = at[clear & ~flipped]
    # The text of a cell is read only for the candidates and the rows they may repeat (a frame
    # holds every compared claim; its texts are made when asked).
    written = [
        bool(t.strip()) and significant_figures(t) >= MIN_COPY_FIGURES
        for t in map(frame.written.__getitem__, at.tolist())
    ]
    at = at[np.array(written, dtype=bool)] if at.size else at
    at = at[claimed[at] != 0]  # zeros repeat honestly on every idle member
    out: list[Copy] = []
    if not at.size:
        return out
    candidates = np.zeros(len(frame), dtype=bool)
    candidates[at] = True
    for k in np.unique(frame.column[at]).tolist():
        order = np.flatnonzero(frame.column == k)  # table order
        n = len(order)
        found = np.full(n, -1, dtype=np.int64)
        marked = np.flatnonzero(candidates[order])
        # nearest rows first: offsets 1, -1, 2, -2, ... within COPY_REACH
        for offset in [o for d in range(1, COPY_REACH + 1) for o in (-d, d)]:
            lo, hi = max(0, -offset), min(n, n - offset)
            if hi <= lo:
                continue
            p = marked[(marked >= lo) & (marked < hi)]
            here, there = order[p], order[p + offset]
            same_value = agrees(there) & (claimed[there] == claimed[here]) & (found[p] < 0)
            for q in np.flatnonzero(same_value).tolist():  # and written alike
                if frame.written[int(there[q])].strip() == frame.written[int(here[q])].strip():
                    found[p[q]] = there[q]
        for pos in np.flatnonzero(found >= 0).tolist():
            out.append(Copy(int(order[pos]), int(found[pos])))
    return sorted(out)


def significant_figures(text: str) -> int:
    """Significant figures of a number as written ("12.50 T" 4, "-110" 2, "0.045" 2)."""
    number = re.search(r"\d[\d,.\s]*", text[:64])
    if number is None:
        return 0
    digits = number.group(0)
    decimal = "." in digits
    digits = re.sub(r"\D", "", digits).lstrip("0")
    return len(digits if decimal else digits.rstrip("0"))
