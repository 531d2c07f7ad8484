"""The console entry point, run before any numerical library is loaded."""

import os

from verify.malloc_reuse import keep_freed_memory


def run() -> None:
    """Set the process's BLAS threads, NumPy's huge-page request and malloc's reuse of freed
    memory (verify.malloc_reuse), then run the command line (verify.cli.run).

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
    keep_freed_memory()
    from verify.cli import run as run_command

    run_command()
