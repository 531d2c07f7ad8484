"""The console entry point sets the BLAS threads before numpy loads, and keeps a user's choice."""

import os
import subprocess
import sys

import pytest

# Prints the variable as the command line (replaced here by a stub) receives it.
_PROBE = """
import os
import verify.cli
verify.cli.run = lambda: print(os.environ.get("OPENBLAS_NUM_THREADS"))
from verify.start import run
run()
"""


def _probe(env: dict[str, str]) -> str:
    done = subprocess.run(
        [sys.executable, "-c", _PROBE], env=env, capture_output=True, text=True, check=True
    )
    return done.stdout.strip()


def test_single_blas_thread_unless_the_user_chose():
    env = {k: v for k, v in os.environ.items() if k != "OPENBLAS_NUM_THREADS"}
    assert _probe(env) == "1"
    assert _probe({**env, "OPENBLAS_NUM_THREADS": "2"}) == "2"


def test_start_module_loads_no_numerical_library():
    # OpenBLAS reads the variable once, when numpy loads it: the entry module must not load it.
    code = "import sys, verify.start; print('numpy' in sys.modules, 'scipy' in sys.modules)"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert done.stdout.split() == ["False", "False"]


# The command line replaced by a stub before the entry point imports it, so that numpy is first
# loaded after the entry point has set its variables: prints whether numpy asks for huge pages.
_HUGEPAGE_PROBE = """
import sys, types
def report():
    import numpy
    print(numpy._core.multiarray._set_madvise_hugepage(True))
sys.modules["verify.cli"] = types.SimpleNamespace(run=report)
from verify.start import run
run()
"""


def _huge_pages(env: dict[str, str]) -> str:
    done = subprocess.run(
        [sys.executable, "-c", _HUGEPAGE_PROBE],
        env=env,
        capture_output=True,
        text=True,
        check=True,
    )
    return done.stdout.strip()


def test_no_huge_page_requests_unless_the_user_chose():
    env = {k: v for k, v in os.environ.items() if k != "NUMPY_MADVISE_HUGEPAGE"}
    assert _huge_pages(env) == "False"
    assert _huge_pages({**env, "NUMPY_MADVISE_HUGEPAGE": "1"}) == "True"


# The command line replaced by a stub: prints how many bytes a 16 MiB malloc() added to the
# memory glibc maps block by block (mallinfo2's hblkhd).
_MALLOC_PROBE = """
import ctypes, sys, types
class Info(ctypes.Structure):
    _fields_ = [(n, ctypes.c_size_t) for n in (
        "arena", "ordblks", "smblks", "hblks", "hblkhd", "usmblks", "fsmblks", "uordblks",
        "fordblks", "keepcost")]
def report():
    libc = ctypes.CDLL(None)
    libc.mallinfo2.restype = Info
    libc.malloc.restype = ctypes.c_void_p
    libc.malloc.argtypes = [ctypes.c_size_t]
    before = libc.mallinfo2().hblkhd
    block = libc.malloc(16 << 20)
    print(libc.mallinfo2().hblkhd - before)
    libc.free(ctypes.c_void_p(block))
sys.modules["verify.cli"] = types.SimpleNamespace(run=report)
from verify.start import run
run()
"""


def _glibc_mallinfo2() -> bool:
    """Whether this process's C library is glibc with mallinfo2 (2.33 and later)."""
    if not sys.platform.startswith("linux"):
        return False
    import ctypes

    try:
        return hasattr(ctypes.CDLL(None), "mallinfo2")
    except OSError:
        return False


@pytest.mark.skipif(not _glibc_mallinfo2(), reason="glibc's malloc (mallinfo2) only")
def test_freed_blocks_are_kept_for_reuse_unless_the_user_chose():
    """mallopt (glibc, man mallopt): with the mmap threshold at 32 MiB a 16 MiB block comes from
    the heap, so its memory is reused once freed; by default (128 KiB) it is mapped on its own
    and handed back when freed. A glibc variable the user set leaves malloc as it is."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("MALLOC_")}
    env.pop("GLIBC_TUNABLES", None)
    run = subprocess.run(
        [sys.executable, "-c", _MALLOC_PROBE], env=env, capture_output=True, text=True, check=True
    )
    assert int(run.stdout) == 0
    chosen = subprocess.run(
        [sys.executable, "-c", _MALLOC_PROBE],
        env={**env, "MALLOC_TRIM_THRESHOLD_": "131072"},
        capture_output=True,
        text=True,
        check=True,
    )
    assert int(chosen.stdout) >= 16 << 20


def test_the_malloc_settings_asked_for_and_when_not(monkeypatch):
    """On any machine: the entry asks mallopt for the mmap threshold (32 MiB) and the trim
    threshold (1 GiB), as glibc's malloc.h numbers them, on Linux only and not over a glibc
    variable the user set; the time-boxed MMD child asks for glibc's defaults (128 KiB) again, only
    after they were changed (a stand-in C library records the calls)."""
    import ctypes

    from verify import malloc_reuse

    calls: list[tuple[int, int]] = []

    class Library:
        def __init__(self, name):
            self.mallopt = self

        def __call__(self, parameter, value):
            calls.append((parameter, value))
            return 1

    monkeypatch.setattr(ctypes, "CDLL", Library)
    monkeypatch.setattr(malloc_reuse, "_kept", False)
    for name in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_", "GLIBC_TUNABLES"):
        monkeypatch.delenv(name, raising=False)
    monkeypatch.setattr(sys, "platform", "linux")
    malloc_reuse.defaults_in_child()
    assert calls == []  # nothing was changed: nothing to undo
    malloc_reuse.keep_freed_memory()
    assert calls == [(-3, 32 << 20), (-1, 1 << 30)]
    malloc_reuse.defaults_in_child()
    assert calls[2:] == [(-3, 128 << 10), (-1, 128 << 10)]
    calls.clear()
    monkeypatch.setenv("GLIBC_TUNABLES", "glibc.malloc.trim_threshold=0")
    malloc_reuse.keep_freed_memory()
    monkeypatch.delenv("GLIBC_TUNABLES")
    monkeypatch.setattr(sys, "platform", "darwin")
    malloc_reuse.keep_freed_memory()
    assert calls == []
