"""The console entry point, run before any numerical library is loaded."""

import os


def run() -> None:
    """Set the process's BLAS threads, then run the command line (verify.cli.run).

    A check of a large model runs the section route in a second process while the main one
    screens stability and solves; OpenBLAS's own threads in the main process then wait on a core
    the other process holds (10^5-member Pratt, bench/run.py: 1.55 -> 1.37 s; the grids 0.1-0.5 s
    less), and starting its thread pool costs about 30 ms of every run. The sparse factorisations
    gain nothing from it; only a dense SVD of a model near DENSE_DETAIL_LIMIT is slower single
    threaded (1,500 joint equations: 1.9 -> 2.6 s). A thread count the user set is kept.
    OpenBLAS reads the variable once, when it loads, so it must be set before numpy is imported.
    """
    os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")
    from verify.cli import run as run_command

    run_command()
