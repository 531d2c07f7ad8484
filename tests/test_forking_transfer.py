"""verify.forking sends a child's answer with its NumPy arrays out of band (pickle protocol 5):
what comes back equals what the child made, value for value and bit for bit, with the same
sharing between objects, for arrays of every layout the analyses return; an answer cut short is
no answer."""

from __future__ import annotations

import io
import os
import pickle
import signal

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra import numpy as hnp

from verify import forking

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")


def _round_trip(answer):
    pipe = io.BytesIO()
    forking._send(answer, pipe)
    received = forking._receive(io.BufferedReader(io.BytesIO(pipe.getvalue())))
    assert received is not None
    return pickle.loads(received[0], buffers=received[1])


@settings(max_examples=150, deadline=None)
@given(
    hnp.arrays(
        dtype=st.sampled_from([np.float64, np.int32, np.int64, np.int8, np.bool_, np.float32]),
        shape=hnp.array_shapes(min_dims=1, max_dims=3, min_side=0, max_side=6),
    ),
    st.sampled_from(["C", "F", "strided"]),
)
def test_arrays_come_back_bit_for_bit(array: np.ndarray, layout: str) -> None:
    if layout == "F":
        array = np.asfortranarray(array)
    elif layout == "strided":
        array = array[::2]
    ok, back = _round_trip((True, {"a": array, "again": array, "t": (1, "x", 2.5)}))
    assert ok is True and back["t"] == (1, "x", 2.5)
    assert back["a"].dtype == array.dtype and back["a"].shape == array.shape
    assert back["a"].tobytes() == array.tobytes()  # every bit, NaNs and -0.0 included
    assert back["again"] is back["a"]  # one array referred to twice stays one array
    assert back["a"].flags.writeable


def test_an_answer_cut_short_is_no_answer() -> None:
    pipe = io.BytesIO()
    forking._send((True, np.arange(1000.0)), pipe)
    whole = pipe.getvalue()
    for cut in (0, 3, 12, len(whole) - 1):
        assert forking._receive(io.BufferedReader(io.BytesIO(whole[:cut]))) is None


@needs_fork
def test_a_child_answer_with_arrays_equals_the_function_here(monkeypatch) -> None:
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    rng = np.random.default_rng(3)
    forces = rng.standard_normal((2000, 3))
    forces[5, 1] = np.nan
    shared = np.asfortranarray(forces)

    def make():
        return {"forces": shared, "same": shared, "ids": np.arange(7, dtype=np.int32)}

    child = forking.Forked.start(make)
    assert child.forked
    back = child.result()
    assert back["forces"].tobytes() == shared.tobytes() and back["same"] is back["forces"]
    assert back["forces"].flags.f_contiguous
    assert back["ids"].tolist() == list(range(7))


@needs_fork
def test_a_child_killed_while_answering_is_fork_failed(monkeypatch) -> None:
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)

    def dies():
        os.kill(os.getpid(), signal.SIGKILL)

    child = forking.Forked.start(dies)
    with pytest.raises(forking.ForkFailed, match="without an answer"):
        child.result()


def _shared_ids(n: int) -> tuple[str, ...]:
    return tuple(f"M{k}" for k in range(n))


@needs_fork
def test_shared_objects_come_back_as_this_process_own(monkeypatch) -> None:
    """An object named as shared is sent as a reference: the answer holds this process's own
    object (the same identity), wherever it is referred to; an equal object that was not named
    comes back as an equal copy."""
    monkeypatch.delenv(forking.SERIAL_ENV, raising=False)
    ids = _shared_ids(5000)
    equal = tuple(list(ids))  # equal to ids, another object, not named
    child = forking.Forked.start(
        lambda: {"names": ids, "again": [ids], "copy": equal, "n": len(ids)}, shared=(ids,)
    )
    assert child.pid is not None
    back = child.result()
    assert back["names"] is ids and back["again"][0] is ids
    assert back["copy"] == equal and back["copy"] is not equal and back["n"] == 5000


def test_a_shared_object_is_not_pickled() -> None:
    ids = _shared_ids(20000)
    alone = forking._dumps((True, ids), (ids,))
    assert len(alone) < 100 < len(pickle.dumps(ids, protocol=5)) // 1000
