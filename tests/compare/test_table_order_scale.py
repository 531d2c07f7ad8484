"""Shifted runs and copied values (verify.compare.causes.table_order) tested only near the pending
claims give exactly the answers of the former functions (copied below), which tested every claim
of the frame: random frames with runs shifted by one to three rows, values copied from nearby
rows, equal neighbours, sign flips, zeros and NaN forces, few or many pending claims."""

from __future__ import annotations

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from verify.compare.causes.frame import ClaimsFrame
from verify.compare.causes.table_order import (
    CLEAR_MISS,
    COPY_REACH,
    MIN_COPY_FIGURES,
    MIN_RUN,
    SHIFTS,
    Copy,
    Shift,
    copied_values,
    shifted_runs,
    significant_figures,
)
from verify.compare.tolerances import allowance


def former_shifted_runs(frame, pending, base):
    out = []
    computed = frame.computed + base
    for k in np.unique(frame.column[pending]).tolist():
        order = np.flatnonzero(frame.column == k)
        n = len(order)
        if n < 3:
            continue
        taken = np.zeros(n, dtype=bool)
        for offset in SHIFTS:
            ok = np.zeros(n, dtype=bool)
            lo, hi = max(0, -offset), min(n, n - offset)
            if hi - lo < MIN_RUN:
                continue
            own = order[lo:hi]
            other = order[lo + offset : hi + offset]
            y = frame.claimed[own]
            c = computed[other]
            allowed = allowance(frame.rtol, y, c, frame.atol[other], frame.rounding[own])
            ok[lo:hi] = np.abs(y - c) <= allowed
            ok &= ~taken
            edges = np.flatnonzero(np.diff(np.concatenate([[0], ok.astype(np.int8), [0]])))
            for start, stop in zip(edges[::2].tolist(), edges[1::2].tolist(), strict=True):
                if stop - start < MIN_RUN:
                    continue
                run = order[start:stop]
                hits = pending[run]
                if hits.sum() >= MIN_RUN and hits.sum() * 2 >= len(run):
                    mask = np.zeros(len(frame), dtype=bool)
                    mask[run[hits]] = True
                    out.append(Shift(int(k), offset, run, mask))
                    taken[start:stop] = True
    return out


def former_copied_values(frame, pending, base):
    agreed = frame.agrees(frame.computed + base)
    clear = np.abs(frame.claimed - frame.computed - base) > CLEAR_MISS * frame.allowed(
        frame.computed + base
    )
    flipped = frame.agrees(frame.computed + base, -frame.claimed)
    candidates = pending & clear & ~flipped
    at = np.flatnonzero(candidates)
    candidates[at] = [
        bool(t.strip()) and significant_figures(t) >= MIN_COPY_FIGURES
        for t in map(frame.written.__getitem__, at.tolist())
    ]
    candidates &= frame.claimed != 0
    out = []
    if not candidates.any():
        return out
    for k in np.unique(frame.column[candidates]).tolist():
        order = np.flatnonzero(frame.column == k)
        n = len(order)
        found = np.full(n, -1, dtype=np.int64)
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
            for p in np.flatnonzero(same_value).tolist():
                if frame.written[int(there[p])].strip() == frame.written[int(here[p])].strip():
                    found[lo + p] = there[p]
        for pos in np.flatnonzero(found >= 0).tolist():
            out.append(Copy(int(order[pos]), int(found[pos])))
    return sorted(out)


def made_frame(rng: np.random.Generator, n: int, slips: int, columns: int = 2):
    """A frame of n claims over `columns` load columns (rows interleaved as a table is read),
    mostly agreeing, with runs shifted, values copied and other slips planted."""
    column = np.arange(n) % columns
    computed = np.round(rng.normal(scale=100.0, size=n), 2)
    computed[rng.random(n) < 0.1] = 0.0  # idle members: equal neighbours
    computed[rng.integers(0, n, size=int(rng.integers(0, 4)))] = np.nan  # pending, unexplained
    claimed = np.round(np.nan_to_num(computed), 2)
    for _ in range(slips):
        kind = rng.integers(0, 4)
        k = int(rng.integers(0, columns))
        order = np.flatnonzero(column == k)
        if order.size < 8:
            continue
        start = int(rng.integers(0, order.size - 6))
        length = int(rng.integers(2, 7))
        rows = order[start : start + length]
        if kind == 0:  # a run shifted by one to three rows
            offset = int(rng.choice(SHIFTS))
            src = np.clip(np.arange(start, start + len(rows)) + offset, 0, order.size - 1)
            claimed[rows] = np.nan_to_num(computed[order[src]])
        elif kind == 1:  # a value copied from a nearby row
            src = order[min(order.size - 1, start + int(rng.integers(1, COPY_REACH + 1)))]
            claimed[rows[0]] = claimed[src]
        elif kind == 2:  # a sign flipped
            claimed[rows[0]] = -claimed[rows[0]]
        else:  # anything
            claimed[rows] = np.round(rng.normal(scale=100.0, size=len(rows)), 2)
    atol = np.full(n, 0.05)
    rounding = np.full(n, 0.005)
    written = [f"{v:.2f}" for v in claimed]
    frame = ClaimsFrame(
        model=None,  # type: ignore[arg-type]  # not read by these functions
        load_names=tuple(f"LC{k}" for k in range(columns)),
        row=np.arange(n),
        member=np.arange(n) // columns,
        column=column,
        claimed=claimed,
        computed=computed,
        atol=atol,
        rounding=rounding,
        rtol=0.01,
        where=[f"row {k}" for k in range(n)],
        written=written,
    )
    pending = ~frame.agrees(frame.computed)
    return frame, pending


def same_shifts(a: list[Shift], b: list[Shift]) -> bool:
    return len(a) == len(b) and all(
        x.column == y.column
        and x.offset == y.offset
        and np.array_equal(x.positions, y.positions)
        and np.array_equal(x.explained, y.explained)
        for x, y in zip(a, b, strict=True)
    )


@settings(max_examples=150, deadline=None)
@given(
    st.integers(0, 2**32 - 1),
    st.integers(20, 6_000),
    st.integers(0, 4) | st.integers(0, 40),
    st.integers(1, 3),
)
def test_as_the_former_functions_on_random_frames(seed, n, slips, columns):
    rng = np.random.default_rng(seed)
    frame, pending = made_frame(rng, n, slips, columns)
    base = np.zeros(n) if seed % 2 else rng.normal(scale=0.01, size=n)
    assert same_shifts(
        shifted_runs(frame, pending, base), former_shifted_runs(frame, pending, base)
    )
    assert copied_values(frame, pending, base) == former_copied_values(frame, pending, base)


def test_a_long_table_with_a_few_slips_finds_them_as_before():
    rng = np.random.default_rng(4)
    found = 0
    for _ in range(5):
        frame, pending = made_frame(rng, 60_000, 6)
        zero = np.zeros(len(frame))
        shifts = shifted_runs(frame, pending, zero)
        copies = copied_values(frame, pending, zero)
        assert same_shifts(shifts, former_shifted_runs(frame, pending, zero))
        assert copies == former_copied_values(frame, pending, zero)
        found += len(shifts) + len(copies)
    assert found > 0  # the planted slips are found, not only agreed upon


def test_a_shifted_run_with_agreeing_rows_inside_is_found_whole():
    """A run of eight shifted rows of which three agree anyway (equal forces side by side): the
    rows tested must reach past them (a run is taken with half its rows pending)."""
    n = 400
    rng = np.random.default_rng(9)
    frame, _ = made_frame(rng, n, 0, columns=1)
    computed = np.round(rng.normal(scale=100.0, size=n), 2)
    s = 200
    computed[s : s + 9] = [10.0, 20.0, 30.0, 40.0, 40.0, 40.0, 40.0, 50.0, 60.0]
    claimed = computed.copy()
    claimed[s : s + 8] = computed[s + 1 : s + 9]  # each row holds the force of the row below
    frame = ClaimsFrame(
        **{**frame.__dict__, "computed": computed, "claimed": claimed},
    )
    pending = ~frame.agrees(frame.computed)
    assert pending.sum() == 5
    shifts = shifted_runs(frame, pending, np.zeros(n))
    assert same_shifts(shifts, former_shifted_runs(frame, pending, np.zeros(n)))
    assert [(x.offset, x.positions.tolist()) for x in shifts] == [(1, list(range(s, s + 8)))]
