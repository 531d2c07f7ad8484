"""Two processes writing one output in turn (verify.forking.write_in_turn, json_out.write_dumps).

The yardstick for the bytes is the same output made by one process: the pieces' concatenation
in order, and for JSON the standard library's encoder (json.dumps(indent=2, ensure_ascii=False))
plus the new line the command line ends with. A child that fails to make a piece, or dies
without a word, and a reader that goes away are each planted.
"""

from __future__ import annotations

import json
import os

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from verify import forking
from verify.report import json_out

needs_fork = pytest.mark.skipif(not hasattr(os, "fork"), reason="no fork on this platform")


def _piece(k: int) -> bytes:
    return f"<{k}:{'x' * (k % 7)}>".encode()


def _written(tmp_path, text, count: int) -> tuple[bool, bytes]:
    path = tmp_path / "out.txt"
    with open(path, "wb") as out:
        done = forking.write_in_turn(text, count, out.fileno())
    return done, path.read_bytes()


@needs_fork
@settings(max_examples=15, deadline=None)
@given(st.integers(2, 40))
def test_pieces_reach_the_file_in_order(tmp_path_factory, count):
    done, data = _written(tmp_path_factory.mktemp("turn"), _piece, count)
    assert done
    assert data == b"".join(_piece(k) for k in range(count))


@needs_fork
def test_a_piece_the_child_cannot_make_is_made_here_with_the_rest(tmp_path):
    parent = os.getpid()

    def text(k: int) -> bytes:
        if k == 5 and os.getpid() != parent:
            raise MemoryError("planted in the child")
        return _piece(k)

    done, data = _written(tmp_path, text, 12)
    assert done and data == b"".join(_piece(k) for k in range(12))


@needs_fork
def test_a_child_killed_without_a_word_is_an_output_error(tmp_path):
    parent = os.getpid()

    def text(k: int) -> bytes:
        if k == 3 and os.getpid() != parent:
            os._exit(9)  # no answer at all, as a child killed by the system
        return _piece(k)

    with pytest.raises(OSError, match="ended early"):
        _written(tmp_path, text, 8)


@needs_fork
def test_nothing_is_written_where_no_child_may_start(tmp_path, monkeypatch):
    monkeypatch.setenv(forking.SERIAL_ENV, "1")
    assert _written(tmp_path, _piece, 8) == (False, b"")
    monkeypatch.delenv(forking.SERIAL_ENV)
    assert _written(tmp_path, _piece, 1) == (False, b"")  # one piece: nothing to share


@needs_fork
def test_a_reader_that_goes_away_is_a_closed_pipe_not_a_hang(tmp_path):
    read, write = os.pipe()
    os.close(read)
    with pytest.raises(OSError):
        forking.write_in_turn(lambda k: b"x" * 100_000, 6, write)
    os.close(write)


@needs_fork
def test_a_pipe_read_as_it_fills_gets_every_piece(tmp_path):
    """Pieces larger than a pipe holds, read by another process as they come (a reader thread
    here would keep the writing child from starting)."""
    read, write = os.pipe()
    big = [b"%d" % k * 30_000 for k in range(9)]
    pid = os.fork()
    if pid == 0:  # the reader
        os.close(write)
        with open(tmp_path / "piped", "wb") as out:
            out.write(os.fdopen(read, "rb").read())
        os._exit(0)
    os.close(read)
    assert forking.write_in_turn(big.__getitem__, len(big), write)
    os.close(write)
    os.waitpid(pid, 0)
    assert (tmp_path / "piped").read_bytes() == b"".join(big)


def _reference(rows, fields):
    objects = [{key: row[at] for key, at in fields} for row in rows]
    return json.dumps({"members": objects, "after": 1}, indent=2, ensure_ascii=False) + "\n"


@needs_fork
@pytest.mark.parametrize("count", [0, 1, 5, 6, 7, 31])
def test_write_dumps_gives_the_standard_encoders_text(tmp_path, monkeypatch, count):
    """Chunks of three rows, shared from two chunks on: every parity of the chunk count, labels
    that need escaping and some that are not ASCII."""
    monkeypatch.setattr(json_out, "CHUNK_ITEMS", 3)
    monkeypatch.setattr(json_out, "PARALLEL_MIN_CHUNKS", 2)
    rows = [(f"M{k}" + ('"é' if k % 4 == 1 else ""), k / 7, k % 3 == 0) for k in range(count)]
    fields = [("id", 0), ("claimed", 1), ("flag", 2)]
    path = tmp_path / "out.json"
    with open(path, "w", encoding="utf-8") as out:
        json_out.write_dumps({"members": json_out.RowTable(rows, fields), "after": 1}, out)
    assert path.read_text(encoding="utf-8") == _reference(rows, fields)


def test_write_dumps_without_a_file_writes_in_one_process(monkeypatch):
    import io

    monkeypatch.setattr(json_out, "CHUNK_ITEMS", 2)
    monkeypatch.setattr(json_out, "PARALLEL_MIN_CHUNKS", 2)
    rows = [(f"M{k}", float(k)) for k in range(9)]
    fields = [("id", 0), ("claimed", 1)]
    out = io.StringIO()  # no file descriptor: the chunks are written here, in order
    json_out.write_dumps({"members": json_out.RowTable(rows, fields), "after": 1}, out)
    assert out.getvalue() == _reference(rows, fields)
