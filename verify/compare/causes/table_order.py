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
        taken = np.zeros(n, dtype=bool)
        for offset in SHIFTS:
            # value written on row i is the force of the member on row i + offset
            ok = np.zeros(n, dtype=bool)
            lo, hi = max(0, -offset), min(n, n - offset)
            if hi - lo < MIN_RUN:
                continue
            own = order[lo:hi]  # slices: no index arrays made per offset
            other = order[lo + offset : hi + offset]
            y = frame.claimed[own]
            c = computed[other]
            allowed = allowance(frame.rtol, y, c, frame.atol[other], frame.rounding[own])
            ok[lo:hi] = np.abs(y - c) <= allowed
            ok &= ~taken
            # maximal runs of consecutive rows that read shifted; count the disagreeing ones
            edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
            for start, stop in zip(edges[::2].tolist(), edges[1::2].tolist(), strict=True):
                if stop - start < MIN_RUN:
                    continue
                run = order[start:stop]
                hits = pending[run]
                # a run must hold disagreeing rows and not merely equal neighbours
                if hits.sum() >= MIN_RUN and hits.sum() * 2 >= len(run):
                    mask = np.zeros(len(frame), dtype=bool)
                    mask[run[hits]] = True
                    out.append(Shift(int(k), offset, run, mask))
                    taken[start:stop] = True
    return out


def copied_values(frame: ClaimsFrame, pending: np.ndarray, base: np.ndarray) -> list[Copy]:
    """A disagreeing claim written exactly as a nearby row of its column whose claim agrees.

    Only nearby rows: an equal value far away in the table is as likely a coincidence (a wrong value
    that happens to equal some other member's force) as a copy."""
    agreed = frame.agrees(frame.computed + base)
    # Only claims clearly wrong: a value just outside its allowance is a rounding question, and in
    # a table rounded to two figures many rows repeat one another honestly.
    clear = np.abs(frame.claimed - frame.computed - base) > CLEAR_MISS * frame.allowed(
        frame.computed + base
    )
    # a claim that is its own member's force with the sign reversed is a sign flip, however many
    # mirror members carry the same size
    flipped = frame.agrees(frame.computed + base, -frame.claimed)
    candidates = pending & clear & ~flipped
    # The text of a cell is read only for the candidates and the rows they may repeat (a frame
    # holds every compared claim; its texts are made when asked).
    at = np.flatnonzero(candidates)
    candidates[at] = [
        bool(t.strip()) and significant_figures(t) >= MIN_COPY_FIGURES
        for t in map(frame.written.__getitem__, at.tolist())
    ]
    candidates &= frame.claimed != 0  # zeros repeat honestly on every idle member
    out: list[Copy] = []
    if not candidates.any():
        return out
    for k in np.unique(frame.column[candidates]).tolist():
        order = np.flatnonzero(frame.column == k)  # table order
        n = len(order)
        found = np.full(n, -1, dtype=np.int64)
        # nearest rows first: offsets 1, -1, 2, -2, ... within COPY_REACH
        for offset in [o for d in range(1, COPY_REACH + 1) for o in (-d, d)]:
            lo, hi = max(0, -offset), min(n, n - offset)
            if hi <= lo:
                continue
            here, there = order[lo:hi], order[lo + offset : hi + offset]
            same_value = (
                candidates[here]
                & agreed[there]
                & (frame.claimed[there] == frame.claimed[here])
                & (found[lo:hi] < 0)
            )
            for p in np.flatnonzero(same_value).tolist():  # and written alike
                if frame.written[int(there[p])].strip() == frame.written[int(here[p])].strip():
                    found[lo + p] = there[p]
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
