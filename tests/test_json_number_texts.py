"""The JSON writer's number texts made a chunk at a time (json_out._NumberTexts: every number
column of a chunk in one float_texts call, orjson's bytes mended in place) against the writer
they replace (a copy below: per column, texts shared with equal numbers of earlier columns, the
two odd decades mended per text) and against repr, on random bit patterns, NaN payloads,
infinities, absent values, columns equal bit for bit, and columns with no finite value."""

from __future__ import annotations

import math

import numpy as np
import orjson
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from verify.compare.rows import Numbers
from verify.report import json_out


def former_float_texts(values: np.ndarray) -> np.ndarray:
    """json_out.float_texts before this change (finite values only), kept as the reference."""
    flat = np.ascontiguousarray(values, dtype=np.float64).ravel()
    texts = np.empty(flat.size, dtype=object)
    if not flat.size:
        return texts
    texts[:] = orjson.dumps(flat, option=orjson.OPT_SERIALIZE_NUMPY).decode()[1:-1].split(",")
    size = np.abs(flat)
    short = (size >= 1e-9) & (size < 1e-5)
    if short.any():
        texts[short] = [t[:-1] + "0" + t[-1] for t in texts[short].tolist()]
    odd = (size >= 1e-5) & (size < 1e-4)
    if odd.any():
        texts[odd] = repr(flat[odd].tolist())[1:-1].split(", ")
    return texts


def former_numbers(columns: list[Numbers], start: int, stop: int) -> list[list[str]]:
    """The former per-column writer of json_out._column_writer for Numbers, for one chunk."""
    written: list[tuple[np.ndarray, np.ndarray, np.ndarray]] = []
    out = []
    for column in columns:
        chunk = column.values[start:stop]
        finite = column.present[start:stop] & np.isfinite(chunk)
        texts = np.empty(chunk.size, dtype=object)
        texts[~finite] = "null"
        todo = finite.copy()
        sign = np.signbit(chunk)
        for before, finite_before, texts_before in written:
            same = todo & finite_before & (chunk == before) & (sign == np.signbit(before))
            if same.any():
                texts[same] = texts_before[same]
                todo &= ~same
        if todo.any():
            texts[todo] = former_float_texts(chunk[todo])
        written.append((chunk, finite, texts))
        out.append(texts.tolist())
    return out


def new_numbers(columns: list[Numbers], start: int, stop: int) -> list[list[str]]:
    block = json_out._NumberTexts(columns)
    out = []
    for j in range(len(columns)):
        texts = block.texts(j, start, stop)
        out.append([texts] * (stop - start) if isinstance(texts, str) else list(texts))
    return out


def expected_text(value: float, present: bool) -> str:
    return repr(value) if present and math.isfinite(value) else "null"


def random_columns(rng: np.random.Generator, n: int) -> list[Numbers]:
    bits = rng.integers(0, 2**64, size=n, dtype=np.uint64)
    wild = bits.view(np.float64).copy()  # every kind of float, NaN payloads and infinities too
    small = rng.normal(size=n) * 10.0 ** rng.integers(-11, -3, size=n)  # the odd decades
    forces = rng.normal(scale=300.0, size=n)
    forces[::7] = 0.0
    forces[::11] = -0.0
    near = np.where(rng.random(n) < 0.5, forces, forces * (1 + 1e-15))
    absent = rng.random(n) < 0.2
    return [
        Numbers(forces.copy()),
        Numbers(wild),
        Numbers(near, ~absent),
        Numbers(forces.copy()),  # equal to the first bit for bit: shares its texts
        Numbers(np.zeros(n), np.zeros(n, dtype=bool)),  # nothing present: null
        Numbers(np.full(n, np.nan)),  # present but NaN: null
        Numbers(small),
        Numbers(np.where(absent, 7.0, small), ~absent),  # absent values that are not NaN
    ]


def test_chunks_of_random_columns_as_the_former_writer_and_repr_write_them() -> None:
    rng = np.random.default_rng(21)
    n = 3 * json_out.CHUNK_ITEMS + 5
    columns = random_columns(rng, n)
    for start in range(0, n, json_out.CHUNK_ITEMS):
        stop = min(start + json_out.CHUNK_ITEMS, n)
        got = new_numbers(columns, start, stop)
        assert got == former_numbers(columns, start, stop)
        for column, texts in zip(columns, got, strict=True):
            values = column.values[start:stop].tolist()
            present = column.present[start:stop].tolist()
            assert texts == list(map(expected_text, values, present))


def test_a_column_without_finite_values_is_one_fixed_text() -> None:
    columns = [Numbers(np.arange(5.0)), Numbers(np.zeros(5), np.zeros(5, dtype=bool))]
    block = json_out._NumberTexts(columns)
    assert block.texts(1, 0, 5) == "null"
    assert block.texts(0, 0, 5) == ["0.0", "1.0", "2.0", "3.0", "4.0"]


@settings(max_examples=200, deadline=None)
@given(
    hnp.arrays(np.float64, st.integers(1, 40), elements=st.floats(width=64)),
    st.data(),
)
def test_drawn_columns_as_the_former_writer_writes_them(values, data) -> None:
    n = values.size
    present = data.draw(hnp.arrays(np.bool_, n))
    other = data.draw(hnp.arrays(np.float64, n, elements=st.floats(width=64)))
    mixed = np.where(data.draw(hnp.arrays(np.bool_, n)), values, other)
    columns = [Numbers(values), Numbers(mixed, present), Numbers(values.copy(), present)]
    assert new_numbers(columns, 0, n) == former_numbers(columns, 0, n)


@given(st.lists(st.floats(width=64), max_size=60))
def test_float_texts_write_null_for_nan_and_infinities(values: list[float]) -> None:
    texts = json_out.float_texts(np.array(values, dtype=np.float64))
    assert texts == [repr(v) if math.isfinite(v) else "null" for v in values]


def test_an_unexpected_layout_falls_back_to_repr(monkeypatch) -> None:
    # orjson's layout of the two odd decades is checked before its bytes are mended
    assert json_out._mended(b"[1.5,2.0]", np.array([0]), np.array([], dtype=np.int64)) is None
    assert json_out._mended(b"[1.5e-7,2.0]", np.array([], dtype=np.int64), np.array([0])) is None
    assert json_out._mended(b"[2.5e-7,-0.000025]", np.array([0]), np.array([1])) == (
        b"[2.5e-07,-2.5e-05]"
    )
    monkeypatch.setattr(json_out, "_mended", lambda raw, short, odd: None)
    values = np.array([2.5e-7, -2.5e-5, 1.0, np.nan, -np.inf])
    assert json_out.float_texts(values) == ["2.5e-07", "-2.5e-05", "1.0", "null", "null"]
