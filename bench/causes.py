"""What the likely-cause search adds to `check`, against the floor measured in the same run.

For each family (2D Pratt, 3D double-layer grid; bench/generate.py) at about 10^4 (and, unless
--quick, 10^5) members, this writes the case, then a claims table from the floor's solution with
3 % of the claims wrong (each multiplied by a random factor between 1.1 and 1.5: scattered errors,
the case the search must reject quickly), and measures

- whole processes, median of --repeats runs: the floor with the claims compared
  (``bench/floor.py CASE --claims``) and ``truss-verify check CASE --claims CLAIMS``;
- in one interpreter, median of --repeats runs: ``compare_claims`` as shipped, and with the three
  cause explainers replaced by ones that explain nothing (the comparison without the search).

It prints the search's share of the whole `check` process (target: at most 20 % at 10^4) and
both ratios to the floor. Usage::

    .venv/bin/python bench/causes.py            # 10^4 and 10^5 members
    .venv/bin/python bench/causes.py --quick    # 10^4 only
"""

from __future__ import annotations

import argparse
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

import floor  # noqa: E402  (bench/ is not a package)
import generate  # noqa: E402

PYTHON = sys.executable
TOOL = str(Path(PYTHON).with_name("truss-verify"))
WRONG_SHARE = 0.03


def write_scattered_claims(case: Path, out: Path, rng: np.random.Generator) -> int:
    A, F, names, member_ids, dim = floor.assemble(floor.read_tables(case))
    t = floor.solve(A, F, dim)[: len(member_ids)].copy()
    wrong = rng.choice(t.size, int(WRONG_SHARE * t.size), replace=False)
    flat = t.reshape(-1)
    flat[wrong] *= rng.uniform(1.1, 1.5, wrong.size)
    table = pd.DataFrame(t, columns=names)
    table.insert(0, "member", member_ids)
    table.to_csv(out, index=False, float_format="%.6g")
    return int(wrong.size)


def wall(cmd: list[str], repeats: int) -> float:
    times = []
    for _ in range(repeats):
        start = time.perf_counter()
        subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        times.append(time.perf_counter() - start)
    return statistics.median(times)


def in_process(case: Path, claims: Path, repeats: int) -> tuple[float, float, str]:
    import numpy as np

    import verify.compare.diagnose as diagnose
    from verify.analysis.pipeline import analyse
    from verify.compare.causes import CauseReport
    from verify.io.case import read_case
    from verify.io.claims import read_claims

    model = read_case(case)
    analysis = analyse(model)
    table = read_claims(claims, model)

    def timed() -> tuple[float, str]:
        runs = []
        verdict = ""
        for _ in range(repeats):
            start = time.perf_counter()
            review = diagnose.compare_claims(analysis, table)
            runs.append(time.perf_counter() - start)
            verdict = (
                f"{review.verdict.value}, "
                f"{sum(1 for f in review.findings if f.kind == 'likely-cause')} cause(s)"
            )
        return statistics.median(runs), verdict

    with_search, verdict = timed()
    saved = diagnose.explain_shifted_rows, diagnose.explain_model, diagnose.explain_copies

    def nothing(frame, pending, analysis):  # type: ignore[no-untyped-def]
        return CauseReport(np.zeros(len(frame), dtype=bool), [], [])

    diagnose.explain_shifted_rows = diagnose.explain_model = diagnose.explain_copies = nothing
    try:
        without, _ = timed()
    finally:
        diagnose.explain_shifted_rows, diagnose.explain_model, diagnose.explain_copies = saved
    return with_search, without, verdict


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--quick", action="store_true", help="10^4 members only")
    parser.add_argument("--repeats", type=int, default=3)
    args = parser.parse_args(argv)
    rng = np.random.default_rng(20261203)
    sizes = (1e4,) if args.quick else (1e4, 1e5)
    print(
        f"{'case':<24} {'members':>8} {'wrong':>6} {'floor':>7} {'check':>7} {'ratio':>6} "
        f"{'search':>7} {'share':>6}  verdict"
    )
    with tempfile.TemporaryDirectory() as tmp:
        for family in ("pratt", "grid"):
            for size in sizes:
                truss = generate.build(family, size)
                folder = Path(tmp) / truss.name
                case = generate.write_case(truss, folder)
                claims = folder / "claims.csv"
                wrong = write_scattered_claims(case, claims, rng)
                repeats = args.repeats if size < 5e4 else 1
                floor_s = wall(
                    [PYTHON, str(HERE / "floor.py"), str(case), "--claims", str(claims)], repeats
                )
                check_s = wall([TOOL, "check", str(case), "--claims", str(claims)], repeats)
                with_search, without, verdict = in_process(case, claims, repeats)
                added = max(with_search - without, 0.0)
                print(
                    f"{truss.name:<24} {truss.members:>8} {wrong:>6} {floor_s:>6.2f}s "
                    f"{check_s:>6.2f}s "
                    f"{check_s / floor_s:>5.2f}x {added:>6.2f}s {added / check_s:>6.1%}  {verdict}"
                )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
