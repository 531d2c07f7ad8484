"""Time reading a 10^5-row claims CSV (median of 5 reads in one process).

    .venv/bin/python bench/claims_read.py [ROWS]

Run from a checkout whose `verify` package is first on sys.path (PYTHONPATH selects another
checkout, to compare before and after a change).
"""

from __future__ import annotations

import statistics
import sys
import tempfile
import time
from pathlib import Path

from verify.io.case import build_model
from verify.io.claims import read_claims


def main() -> None:
    rows = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    joints = {f"J{k}": [float(k), float(k % 2)] for k in range(rows + 1)}
    members = {f"M{k}": [f"J{k}", f"J{k + 1}"] for k in range(rows)}
    model = build_model(
        {
            "units": {"length": "m", "force": "kN"},
            "joints": joints,
            "members": members,
            "supports": {"J0": ["x", "y"], f"J{rows}": ["y"]},
            "loads": {"dead": {"J1": [0.0, -1.0]}, "snow": {"J1": [0.0, -1.0]}},
        },
        source="bench.toml",
    )
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "claims.csv"
        path.write_text(
            "Member,dead (kN),snow (kN)\n"
            + "".join(f"M{k},{k * 0.37:.2f},{-k * 0.11:.1f}\n" for k in range(rows))
        )
        times = []
        for _ in range(5):
            start = time.perf_counter()
            table = read_claims(path, model)
            times.append(time.perf_counter() - start)
    print(
        f"{rows} rows, {len(table.values)} claims: median {statistics.median(times):.3f} s (min "
        f"{min(times):.3f} s)"
    )


if __name__ == "__main__":
    main()
