"""A small check imports only what it uses: pandas (the bulk CSV reader), scipy.optimize (the
dimension search) and sympy (exact values) cost 0.1-0.5 s each to import, more than a small
truss takes to check. Each probe runs in a fresh interpreter and reads `sys.modules`."""

from __future__ import annotations

import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
HEAVY = ("pandas", "scipy.optimize", "sympy")


def modules_after(code: str) -> set[str]:
    """The heavy modules imported once `code` has run in a fresh interpreter."""
    probe = (
        f"{code}\nimport json, sys\nprint(json.dumps([m for m in {HEAVY!r} if m in sys.modules]))"
    )
    done = subprocess.run(
        [sys.executable, "-c", probe], cwd=ROOT, capture_output=True, text=True, check=True
    )
    return set(json.loads(done.stdout.strip().splitlines()[-1]))


def test_importing_the_readers_imports_no_heavy_library():
    assert modules_after("import verify.io.case, verify.io.claims, verify.service") == set()


@pytest.mark.parametrize("name", ["sign-bracket", "canal-footbridge"])
def test_checking_a_bundled_case_imports_no_heavy_library(name: str) -> None:
    """The footbridge's claims hold planted errors, so the likely-cause search (the dimension
    search among it) runs too."""
    case = ROOT / "cases" / name
    code = (
        "from verify import service\n"
        f"result = service.check({str(case)!r}, {str(case / 'claims.csv')!r})\n"
        "assert result.review.rows"
    )
    assert modules_after(code) == set()


TRIANGLE = {
    "case.toml": 'title = "csv tables"\njoints = "joints.csv"\nmembers = "members.csv"\n'
    'supports = "supports.csv"\nloads = "loads.csv"\n\n[units]\nlength = "m"\nforce = "kN"\n',
    "joints.csv": "id,x,y\nA,0,0\nB,4,0\nC,2,3\n",
    "members.csv": "id,start,end\nAB,A,B\nBC,B,C\nCA,C,A\n",
    "supports.csv": "joint,directions\nA,x y\nB,y\n",
    "loads.csv": "case,joint,fx,fy\ndead,C,0,-10\n",
}


def test_a_small_csv_case_is_read_without_pandas_and_in_bulk_with_it(write_files):
    """Below BULK_MIN_ROWS rows the careful reader reads the tables; the bulk reader uses pandas
    (the probe sees it then, so an empty answer is not an accident of the probe)."""
    case = write_files(TRIANGLE)
    read = f"from verify.io import case as c\nmodel = c.read_case({str(case)!r})\n"
    assert modules_after(read + "assert len(model.members) == 3") == set()
    bulk = "from verify.io import case as c\nc.BULK_MIN_ROWS = 0\n" + read
    assert modules_after(bulk + "assert len(model.members) == 3") == {"pandas"}
