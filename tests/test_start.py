"""The console entry point sets the BLAS threads before numpy loads, and keeps a user's choice."""

import os
import subprocess
import sys

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
