"""`truss-verify batch` against checking the same cases one after another.

Writes a job folder of invented Pratt and Howe trusses (tests/jobfolder.py: claims from the
tool's own solve, one case in five with a value planted wrong), then times, as whole processes:

- `truss-verify batch FOLDER --jobs J --recheck` (every case checked, a report each);
- the same with `--jobs 1` (the batch without parallelism);
- `truss-verify check CASE --claims CLAIMS --report R.html`, once per case, one after another:
  what a script looping over the folder does today;
- a rerun of the batch with nothing changed (every case skipped by its hashes);

and, in this process, `verify.batch.worker.check_job` per case: the library's own work. It prints

- batch vs one after another (target: at least 1.7x on 2 cores);
- the parallel speed-up alone (jobs 1 vs jobs J);
- per-case overhead: (whole-process CPU time - library CPU time) / cases, inside one batch
  (jobs 1) and for fresh `check` processes (their start-up), and the ratio of the two (target:
  well below 1). CPU time, because wall time on a shared 2-core machine moves with other work.

Wall and CPU figures are both printed; with other work on the cores, the wall-clock parallel
speed-up falls toward the cores actually free ("cores used").

Usage::

    .venv/bin/python bench/batch.py               # 200 cases, 2 jobs (several minutes)
    .venv/bin/python bench/batch.py --cases 20    # a quick look on a shared machine
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT / "tests"))  # the job-folder generator the tests use

from jobfolder import write_job_folder  # noqa: E402

from verify.batch.jobs import find_jobs  # noqa: E402
from verify.batch.worker import check_job  # noqa: E402

TOOL = str(Path(sys.executable).with_name("truss-verify"))
BATCH_TARGET = 1.7


def children_cpu() -> float:
    usage = resource.getrusage(resource.RUSAGE_CHILDREN)
    return usage.ru_utime + usage.ru_stime


def wall(cmd: list[str]) -> tuple[float, int, float]:
    """Wall time, exit status and CPU time of a whole process with every process it waited for
    (a batch's pool workers included): CPU time hardly moves when other work shares the cores."""
    cpu = children_cpu()
    start = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
    return time.perf_counter() - start, done.returncode, children_cpu() - cpu


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--cases", type=int, default=200)
    parser.add_argument("--jobs", type=int, default=2)
    args = parser.parse_args()
    out = ROOT / "bench" / "out"
    out.mkdir(parents=True, exist_ok=True)
    work = Path(tempfile.mkdtemp(prefix="batch-", dir=out))
    try:
        run(work, args.cases, args.jobs)
    finally:
        shutil.rmtree(work, ignore_errors=True)


def run(work: Path, cases: int, jobs: int) -> None:
    folder = work / "job"
    expected = write_job_folder(folder, cases)
    print(
        f"{cases} cases ({sum(v == 'discrepancies' for v in expected.values())} with a planted "
        "error), "
        f"{jobs} jobs, {len(os.sched_getaffinity(0))} cores; load average {os.getloadavg()[0]:.2f}"
    )

    batch_j, code, batch_j_cpu = wall(
        [TOOL, "batch", str(folder), "--jobs", str(jobs), "--recheck", "--out", str(work / "out-j")]
    )
    assert code == 1, f"batch exit status {code}, expected 1 (planted discrepancies)"
    batch_1, _, batch_1_cpu = wall(
        [TOOL, "batch", str(folder), "--jobs", "1", "--recheck", "--out", str(work / "out-1")]
    )
    rerun, _, _ = wall(
        [TOOL, "batch", str(folder), "--jobs", str(jobs), "--out", str(work / "out-j")]
    )

    found, _ = find_jobs(folder)
    check_job(found[0])  # warm: the first check imports sympy and friends
    library = library_cpu = 0.0
    for job in found:
        start, cpu = time.perf_counter(), time.process_time()
        check_job(job)
        library += time.perf_counter() - start
        library_cpu += time.process_time() - cpu

    one_by_one = one_by_one_cpu = 0.0
    for job in found:
        seconds, _, cpu = wall(
            [
                TOOL,
                "check",
                str(job.case),
                "--claims",
                str(job.claims),
                "--report",
                str(work / "one.html"),
            ]
        )
        one_by_one += seconds
        one_by_one_cpu += cpu

    print("                                      wall s     CPU s")
    for label, w, c in (
        ("library work, in one process", library, library_cpu),
        ("check one after another (fresh)", one_by_one, one_by_one_cpu),
        ("batch --jobs 1", batch_1, batch_1_cpu),
        (f"batch --jobs {jobs}", batch_j, batch_j_cpu),
    ):
        print(f"{label:36s} {w:8.2f}  {c:8.2f}")
    print(f"{'batch rerun, nothing changed':36s} {rerun:8.2f}")
    print(
        f"batch vs one after another:   wall {one_by_one / batch_j:6.2f}x   CPU "
        f"{one_by_one_cpu / batch_j_cpu:6.2f}x  (target >= {BATCH_TARGET})"
    )
    print(
        f"parallel speed-up (jobs 1 vs {jobs}): wall {batch_1 / batch_j:6.2f}x   (cores used: "
        f"{batch_j_cpu / batch_j:.2f})"
    )
    over_batch, over_fresh = (
        (batch_1_cpu - library_cpu) / cases,
        (one_by_one_cpu - library_cpu) / cases,
    )
    print(
        f"per-case overhead (CPU): in a batch {over_batch * 1000:.1f} ms, fresh process "
        f"{over_fresh * 1000:.1f} ms, ratio {over_batch / over_fresh:.3f} (target: well below 1)"
    )
    print(f"load average at end {os.getloadavg()[0]:.2f}")


if __name__ == "__main__":
    main()
