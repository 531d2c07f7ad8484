"""The JSON writer's float texts (verify.report.json_out.float_texts) against Python's own
float.__repr__, which json.dumps writes for a finite float: every range, the layout switches at
1e-4 and 1e16, subnormals, signed zero and random bit patterns."""

from __future__ import annotations

import json

import numpy as np
from hypothesis import given
from hypothesis import strategies as st

from verify.report.json_out import dumps, float_texts

finite = st.floats(allow_nan=False, allow_infinity=False)


@given(st.lists(finite, max_size=60))
def test_float_texts_are_repr(values: list[float]) -> None:
    assert list(float_texts(np.array(values, dtype=np.float64))) == [repr(v) for v in values]


def test_layout_switches_and_extremes() -> None:
    edges = []
    for edge in (1e-4, 1e16, 1e-5, 1e15, 1e17, 1.0, 0.1):
        edges += [edge, np.nextafter(edge, 0.0), np.nextafter(edge, np.inf)]
    tiny = np.finfo(np.float64).tiny
    edges += [0.0, -0.0, 5e-324, tiny, np.nextafter(tiny, 0.0), np.finfo(np.float64).max]
    values = np.array(edges + [-v for v in edges], dtype=np.float64)
    assert list(float_texts(values)) == [repr(float(v)) for v in values]


def test_random_bit_patterns() -> None:
    bits = np.random.default_rng(12).integers(0, 2**64, size=200_000, dtype=np.uint64)
    values = bits.view(np.float64)
    values = values[np.isfinite(values)]
    assert list(float_texts(values)) == [repr(v) for v in values.tolist()]
    # forces of a realistic size: many digits after the point, both signs
    forces = np.random.default_rng(13).normal(scale=300.0, size=100_000)
    assert list(float_texts(forces)) == [repr(v) for v in forces.tolist()]


def test_strided_and_empty_input() -> None:
    values = np.arange(12, dtype=np.float64).reshape(3, 4)[:, 1] / 7.0
    assert list(float_texts(values)) == [repr(v) for v in values.tolist()]
    assert float_texts(np.array([], dtype=np.float64)) == []


def test_document_reads_back_as_json_dumps() -> None:
    values = [1e-7, -2.5e-5, 12.125, 1e16, -0.0, 333.3333333333333]
    data = {"values": values, "text": "ok"}
    assert dumps(data) == json.dumps(data, indent=2, ensure_ascii=False)


def test_every_decade() -> None:
    rng = np.random.default_rng(14)
    with np.errstate(over="ignore"):
        values = np.concatenate([rng.uniform(1, 10, 50) * 10.0**e for e in range(-323, 309)])
    values = values[np.isfinite(values)]
    values = np.concatenate([values, -values])
    assert list(float_texts(values)) == [repr(v) for v in values.tolist()]
