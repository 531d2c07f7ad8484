"""Work in a forked child process: the one place that decides whether forking is safe.

Eight parts of the tool start processes: the section route and the joints' walk of a large
truss (verify.analysis.pipeline), the sigma figure of a large 3D truss's LU and the direct
stiffness solve of a large indeterminate truss while its claims are read (verify.analysis.run
.AnalysisRun.start_conditioning, .start_elastic), the stability screen's unit-stiffness
factorisation of a large truss with more unknown forces than joint equations, made beside the
elastic solve (verify.analysis.run), the time-boxed MMD factorisation of the stiffness solve
(verify.analysis.stiffness), the LU pivot ratio of the factor an analysis run keeps where it
cannot be read in place (verify.analysis.stability: scipy's reading makes copies of the factors
that would stay with it), the writing of a large JSON output's member rows
(verify.report.json_out.write_dumps) and the batch's process pool (verify.batch.run). All of
them ask :func:`fork_allowed`, so one rule holds everywhere:

- no ``os.fork`` (Windows): no fork;
- ``TRUSS_VERIFY_SERIAL`` set to any value: no fork (every result is then computed in this
  process, the same results; the tests check both);
- another thread running (a notebook kernel, a web server, a Dask client): no fork, since a
  forked child can deadlock on a lock one of those threads held at the moment of the fork.

:class:`Forked` runs one function in a child and sends its result back pickled through a pipe;
:func:`write_in_turn` has a child write every other piece of one output.
"""

from __future__ import annotations

import errno
import gc
import io
import os
import pickle
import select
import signal
import sys
import threading
from collections.abc import Callable
from typing import Any, BinaryIO, Generic, TypeVar

import numpy as np

SERIAL_ENV = "TRUSS_VERIFY_SERIAL"  # set to any value to keep every computation in one process

T = TypeVar("T")


def fork_allowed() -> bool:
    """True when this process may fork (see the module docstring for the rule)."""
    return hasattr(os, "fork") and not os.environ.get(SERIAL_ENV) and threading.active_count() == 1


PR_SET_PDEATHSIG = 1  # prctl(2) option: a signal for this process when its parent ends


def _end_with(parent: int) -> None:
    """Have this (child) process killed when `parent` ends, on Linux: a parent killed by a
    signal (SIGTERM from a job scheduler) runs no clean-up, and its child would otherwise work
    on to the end of its route, up to seconds at 10^6 members. Elsewhere nothing is set."""
    if not sys.platform.startswith("linux"):
        return
    try:
        import ctypes

        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(PR_SET_PDEATHSIG, signal.SIGKILL)
    except (OSError, AttributeError):
        return
    if os.getppid() != parent:  # the parent ended before the request was made
        os._exit(1)


_frozen = 0  # children alive for which the heap is frozen (see _freeze)


def _freeze() -> None:
    """Freeze the heap before a fork: frozen objects are left alone by the cyclic collector, so
    neither process's collections touch (and so copy) the pages the two share. Counted: the heap
    is thawed only when the last child alive has ended (two may run at once)."""
    global _frozen
    gc.freeze()
    _frozen += 1


def _thaw() -> None:
    global _frozen
    _frozen = max(0, _frozen - 1)
    if _frozen == 0:
        gc.unfreeze()


def _fork(*pipe_ends: int) -> int | None:
    """os.fork() with the heap frozen (_freeze); None when it fails, the heap thawed again and
    the pipes made for the child closed."""
    _freeze()
    try:
        return os.fork()
    except OSError:
        _thaw()
        for end in pipe_ends:
            os.close(end)
        return None


PIPE_SIZE = 1 << 20  # a large answer crosses in 1 MiB turns, not the default 64 KiB


def _widen(fd: int) -> None:
    """Give the pipe of `fd` PIPE_SIZE bytes where the system allows it (Linux); else as is."""
    try:
        import fcntl

        fcntl.fcntl(fd, fcntl.F_SETPIPE_SZ, PIPE_SIZE)
    except (ImportError, AttributeError, OSError):
        pass


class ForkTimeout(Exception):
    """The child had not answered within the time asked; it has been stopped."""


class ForkFailed(Exception):
    """The child ended without a result (it raised, or was killed); the message says why."""


class Forked(Generic[T]):
    """`function(*args)` computed in a forked process, or in this one when forking is not allowed.

    `result()` waits for the child's answer (or computes it here when no child was started);
    `cancel()` stops a child whose result is no longer wanted. Either must be called once, so
    that no child process is left behind.
    """

    def __init__(
        self,
        function: Callable[..., T],
        args: tuple[Any, ...],
        pid: int | None,
        read_fd: int | None,
        shared: tuple[object, ...] = (),
    ) -> None:
        self.function, self.args, self.pid, self.read_fd = function, args, pid, read_fd
        self.shared = shared
        # The process that started the child: only it may wait for it or stop it (a child that
        # inherits this object, its sibling's, must never kill or read that sibling).
        self.owner = os.getpid()

    @property
    def forked(self) -> bool:
        return self.pid is not None

    @classmethod
    def start(
        cls, function: Callable[..., T], *args: Any, shared: tuple[object, ...] = ()
    ) -> Forked[T]:
        """`function(*args)` started in a child. `shared`: objects of this process the answer
        may hold (the model's id tuples): sent as references to this process's own, not
        pickled (the 1.25x10^6 ids of a 10^6-member truss were most of the section route's
        answer time). They must not be changed meanwhile."""
        if not fork_allowed():
            return cls(function, args, None, None)
        read_fd, write_fd = os.pipe()
        _widen(write_fd)
        parent = os.getpid()
        pid = _fork(read_fd, write_fd)
        if pid is None:
            return cls(function, args, None, None)
        if pid == 0:  # the child: compute, send, and leave without running the parent's exit hooks
            status = 1
            try:
                os.close(read_fd)
                _end_with(parent)
                try:
                    answer: tuple[bool, Any] = (True, function(*args))
                except Exception as exc:  # noqa: BLE001 - any failure is reported to the parent
                    answer = (False, f"{type(exc).__name__}: {exc}")
                with os.fdopen(write_fd, "wb") as pipe:
                    _send(answer, pipe, shared)
                status = 0
            finally:
                os._exit(status)
        os.close(write_fd)
        return cls(function, args, pid, read_fd, shared)

    def result(self, timeout: float | None = None) -> T:
        """The function's result. From a child: ForkTimeout when it has not begun to answer
        within `timeout` seconds (it is then stopped), ForkFailed when it ended without one."""
        if self.pid is None or self.read_fd is None or os.getpid() != self.owner:
            return self.function(*self.args)
        if timeout is not None:
            ready, _, _ = select.select([self.read_fd], [], [], timeout)
            if not ready:
                self.cancel()
                raise ForkTimeout(f"no answer within {timeout:g} s")
        try:
            # The file object owns the descriptor from here (it closes it, whatever happens).
            fd, self.read_fd = self.read_fd, None
            with os.fdopen(fd, "rb") as pipe:
                received = _receive(pipe)
            _, status = os.waitpid(self.pid, 0)
        except BaseException:  # interrupted while waiting (Ctrl-C): the child stopped, reaped
            self.cancel()
            raise
        self._done()
        if status != 0 or received is None:
            raise ForkFailed(
                "the child process ended without an answer (killed, or out of memory?)"
            )
        ok, value = _Unpickler(io.BytesIO(received[0]), self.shared, received[1]).load()
        if not ok:
            raise ForkFailed(str(value))
        return value

    def cancel(self) -> None:
        """The result is not wanted: stop the child and release what it holds."""
        if self.pid is None:
            return
        if os.getpid() != self.owner:  # a copy inherited by another child: not ours to stop
            self.pid = self.read_fd = None
            return
        try:
            os.kill(self.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        if self.read_fd is not None:
            os.close(self.read_fd)
            self.read_fd = None
        try:
            os.waitpid(self.pid, 0)
        except ChildProcessError:  # reaped already
            pass
        self._done()

    def _done(self) -> None:
        self.pid = self.read_fd = None
        _thaw()


def write_in_turn(text: Callable[[int], bytes], count: int, fd: int) -> bool:
    """Write text(0), text(1), ..., text(count - 1) to the file `fd` in that order, the even
    ones made by this process and the odd ones by a forked child, each making its next piece
    while the other writes. The two pass the turn to write through a pair of pipes, so the
    pieces reach the file in order with no copy between the processes.

    False when no child may be started (nothing is written then). A piece the child fails to
    make is made here, and the rest with it. OSError when the file cannot be written or the
    child ends without a word (killed): the output is then incomplete."""
    if count < 2 or not fork_allowed():
        return False
    to_child_r, to_child_w = os.pipe()  # the child's turn
    to_parent_r, to_parent_w = os.pipe()  # this process's turn, or the child's giving up
    parent = os.getpid()
    pid = _fork(to_child_r, to_child_w, to_parent_r, to_parent_w)
    if pid is None:
        return False
    if pid == 0:
        status = 1
        try:
            os.close(to_child_w)
            os.close(to_parent_r)
            _end_with(parent)
            _odd_pieces(text, count, fd, to_child_r, to_parent_w)
            status = 0
        finally:
            os._exit(status)
    os.close(to_child_r)
    os.close(to_parent_w)
    try:
        _even_pieces(text, count, fd, to_parent_r, to_child_w)
    except BaseException:
        try:
            os.kill(pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        raise
    finally:
        os.close(to_child_w)
        os.close(to_parent_r)
        os.waitpid(pid, 0)
        _thaw()
    return True


_TURN, _GIVE_UP = b"t", b"g"  # the child wrote its piece; the child could not make it


def _odd_pieces(text: Callable[[int], bytes], count: int, fd: int, turn: int, back: int) -> None:
    """The child's part of write_in_turn."""
    for k in range(1, count, 2):
        try:
            piece = text(k)
        except Exception:  # noqa: BLE001 - the other process makes it (and says what failed)
            piece = None
        if os.read(turn, 1) != _TURN:
            return  # the other process ended or gave up: write nothing more
        if piece is None:
            os.write(back, _GIVE_UP)
            return
        _write_all(fd, piece)
        os.write(back, _TURN)


def _even_pieces(text: Callable[[int], bytes], count: int, fd: int, turn: int, back: int) -> None:
    """This process's part of write_in_turn: the even pieces, and any the child gave up."""

    def child_wrote() -> bool:
        answer = os.read(turn, 1)
        if answer not in (_TURN, _GIVE_UP):
            raise OSError(errno.EPIPE, "the second process writing the output ended early")
        return answer == _TURN

    for k in range(0, count, 2):
        piece = text(k)
        if k and not child_wrote():
            for j in range(k - 1, count):  # the child's piece, this one, and every later one
                _write_all(fd, piece if j == k else text(j))
            return
        _write_all(fd, piece)
        if k + 1 < count:
            os.write(back, _TURN)
    if count % 2 == 0 and not child_wrote():
        _write_all(fd, text(count - 1))


def _write_all(fd: int, data: bytes) -> None:
    view = memoryview(data)
    while view:
        view = view[os.write(fd, view) :]


# An answer goes through the pipe as: the length of a small header (8 bytes), the header (the
# pickle's length and each out-of-band buffer's), the pickle, then the buffers. Protocol 5 hands
# the contents of NumPy arrays over as buffers instead of copying them into the pickle, and the
# parent reads each straight into an array of its own that the unpickled array then uses: no
# whole-answer bytes object on either side (the section route's answer at 10^6 members is
# about 116 MB).
_LENGTH = 8


class _Pickler(pickle.Pickler):
    """Pickles the objects of `shared` as their place in it (the parent holds the same ones)."""

    def __init__(self, file: BinaryIO, shared: tuple[object, ...], **options: Any) -> None:
        super().__init__(file, protocol=5, **options)
        self._places = {id(item): k for k, item in enumerate(shared)}
        self._shared = shared

    def persistent_id(self, obj: Any) -> int | None:
        k = self._places.get(id(obj))
        return k if k is not None and self._shared[k] is obj else None


class _Unpickler(pickle.Unpickler):
    def __init__(
        self, file: BinaryIO, shared: tuple[object, ...], buffers: list[memoryview]
    ) -> None:
        super().__init__(file, buffers=buffers)
        self._shared = shared

    def persistent_load(self, pid: Any) -> object:
        return self._shared[pid]


def _dumps(answer: tuple[bool, Any], shared: tuple[object, ...], **options: Any) -> bytes:
    out = io.BytesIO()
    _Pickler(out, shared, **options).dump(answer)
    return out.getvalue()


def _send(answer: tuple[bool, Any], pipe: BinaryIO, shared: tuple[object, ...] = ()) -> None:
    buffers: list[pickle.PickleBuffer] = []
    payload = _dumps(answer, shared, buffer_callback=buffers.append)
    try:
        raw = [buffer.raw() for buffer in buffers]
    except BufferError:  # a buffer that is not contiguous (NumPy never offers one): all in-band
        payload, raw = _dumps(answer, shared), []
    header = pickle.dumps((len(payload), [view.nbytes for view in raw]), protocol=5)
    pipe.write(len(header).to_bytes(_LENGTH, "little"))
    pipe.write(header)
    pipe.write(payload)
    for view in raw:
        pipe.write(view)


def _receive(pipe: io.BufferedReader) -> tuple[bytes, list[memoryview]] | None:
    """The pickle and its buffers, or None when the answer stops short (the child died)."""
    size = pipe.read(_LENGTH)
    if len(size) < _LENGTH:
        return None
    header = pipe.read(int.from_bytes(size, "little"))
    try:
        payload_size, sizes = pickle.loads(header)
    except Exception:  # noqa: BLE001 - a header cut short: no answer
        return None
    payload = pipe.read(payload_size)
    if len(payload) < payload_size:
        return None
    buffers = []
    for nbytes in sizes:
        # Aligned for any item type (NumPy allocates it); the unpickled array is a view of it.
        view = np.empty(nbytes, dtype=np.uint8).data
        if pipe.readinto(view) != nbytes:
            return None
        buffers.append(view)
    return payload, buffers
