"""The console entry point, run before any numerical library is loaded."""

import os
import sys

M_TRIM_THRESHOLD, M_MMAP_THRESHOLD = -1, -3  # mallopt(3) parameters (glibc's malloc.h)
MMAP_THRESHOLD = 32 << 20  # glibc's largest: blocks up to 32 MiB come from the heap
TRIM_THRESHOLD = 1 << 30  # free memory kept at the heap's top before it is handed back


def run() -> None:
    """Set the process's BLAS threads, NumPy's huge-page request and malloc's reuse of freed
    memory (_keep_freed_memory), then run the command line (verify.cli.run).

    A check of a large model runs the section route in a second process while the main one
    screens stability and solves; OpenBLAS's own threads in the main process then wait on a core
    the other process holds (10^5-member Pratt, bench/run.py: 1.55 -> 1.37 s; the grids 0.1-0.5 s
    less), and starting its thread pool costs about 30 ms of every run. The sparse factorisations
    gain nothing from it; only a dense SVD of a model near DENSE_DETAIL_LIMIT is slower single
    threaded (1,500 joint equations: 1.9 -> 2.6 s). A thread count the user set is kept.
    OpenBLAS reads the variable once, when it loads, so it must be set before numpy is imported.
    """
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    # NumPy asks the kernel for transparent huge pages for every large array, each cleared whole
    # (2 MB) when first touched. On the machines the benchmark runs on that cost more than the
    # small pages do: a 10^6-member check spent 2.9 s in the kernel with them, mostly clearing
    # pages, and 1.5 s without (wall 0.91x; the 10^5 grid 0.98x). Read once, when NumPy loads;
    # a value the user set is kept.
    os.environ.setdefault("NUMPY_MADVISE_HUGEPAGE", "0")
    _keep_freed_memory()
    from verify.cli import run as run_command

    run_command()


def _keep_freed_memory() -> None:
    """Have glibc's malloc reuse the memory of freed arrays instead of handing it back to the
    kernel and asking for it again: a large check makes and drops arrays of 8-16 MB by the
    hundred, and every page of a block the kernel hands out afresh costs a page fault on first
    touch, which is slow on virtual machines. By default a freed block above 128 KiB (raised as
    larger ones are freed) is unmapped, and free memory above 128 KiB at the heap's top is given
    back. Measured on the 10^6-member Pratt truss, paired (bench/README.md): system time 1.52 ->
    1.25 s, wall 0.97x, the same peak memory. Linux with glibc only (elsewhere nothing is done),
    and not over a choice the user made through glibc's own variables. The process ends with
    the command, so the memory kept is never a lasting cost (the library, imported by a
    long-lived program, sets nothing)."""
    if not sys.platform.startswith("linux") or any(
        name in os.environ
        for name in ("MALLOC_MMAP_THRESHOLD_", "MALLOC_TRIM_THRESHOLD_", "GLIBC_TUNABLES")
    ):
        return
    try:
        import ctypes

        mallopt = ctypes.CDLL(None).mallopt
    except (OSError, AttributeError):
        return
    mallopt.argtypes, mallopt.restype = [ctypes.c_int, ctypes.c_int], ctypes.c_int
    mallopt(M_MMAP_THRESHOLD, MMAP_THRESHOLD)
    mallopt(M_TRIM_THRESHOLD, TRIM_THRESHOLD)
