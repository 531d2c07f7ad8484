"""glibc's malloc told to keep freed blocks for reuse (the console entry, verify.start), and
told back to its defaults in the time-boxed MMD child (verify.analysis.stiffness._mmd_solve).

A large check makes and drops arrays of 8-16 MB by the hundred, and every page of a block the
kernel hands out afresh costs a page fault on first touch, which is slow on virtual machines. By
default a freed block above 128 KiB (raised as larger ones are freed) is unmapped, and free
memory above 128 KiB at the heap's top is given back. Measured on the 10^6-member Pratt truss,
paired (bench/README.md): system time 1.52 -> 1.25 s, wall 0.97x, the same peak memory.

The time-boxed child is told back: the freed blocks it would reuse are pages it shares with its
parent, each copied on its first write. With them kept, the 10^6-member X-braced truss's MMD
ran past its box (1.5 s) and the solve fell back to COLAMD, other last digits; told back, it
finishes in 1.1 s as before. Every other child keeps them: telling back all of them made the
10^6 Pratt truss's check 1.11x slower (5 pairs).

Linux with glibc only (elsewhere nothing is done), and not over a choice the user made through
glibc's own variables. Imported before numpy (it imports nothing heavy).
"""

from __future__ import annotations

import os
import sys
from collections.abc import Callable

M_TRIM_THRESHOLD, M_MMAP_THRESHOLD = -1, -3  # mallopt(3) parameters (glibc's malloc.h)
MMAP_THRESHOLD = 32 << 20  # glibc's largest: blocks up to 32 MiB come from the heap
TRIM_THRESHOLD = 1 << 30  # free memory kept at the heap's top before it is handed back
DEFAULT_THRESHOLD = 128 << 10  # glibc's default for both (malloc.h)
USER_VARIABLES = ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_", "GLIBC_TUNABLES")

_kept = False  # whether keep_freed_memory told malloc so in this process (or its parent)


def _mallopt() -> Callable[[int, int], int] | None:
    try:
        import ctypes

        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return None
    mallopt.argtypes, mallopt.restype = [ctypes.c_int, ctypes.c_int], ctypes.c_int
    return mallopt


def keep_freed_memory() -> None:
    """Tell malloc to keep freed blocks up to 32 MiB, and 1 GiB at the heap's top, for reuse."""
    global _kept
    if not sys.platform.startswith("linux") or any(name in os.environ for name in USER_VARIABLES):
        return
    mallopt = _mallopt()
    if mallopt is None:
        return
    mallopt(M_MMAP_THRESHOLD, MMAP_THRESHOLD)
    mallopt(M_TRIM_THRESHOLD, TRIM_THRESHOLD)
    _kept = True


def defaults_in_child() -> None:
    """In a forked child of a process that kept freed memory: malloc's defaults again (nothing
    where they were not changed)."""
    global _kept
    if not _kept:
        return
    mallopt = _mallopt()
    if mallopt is not None:
        mallopt(M_MMAP_THRESHOLD, DEFAULT_THRESHOLD)
        mallopt(M_TRIM_THRESHOLD, DEFAULT_THRESHOLD)
    _kept = False
