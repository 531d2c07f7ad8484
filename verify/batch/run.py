"""The folder job: find the cases, skip the unchanged, check the rest, write the outputs.

Outputs, in the output folder (default `FOLDER/truss-verify-batch/`, skipped when cases are
searched): `summary.csv` (or `--summary`), `index.html`, `reports/<case>.html`, and the state
file of `verify.batch.state`. Every output is written atomically and never over a file the batch
reads (case files, their tables, claims, the manifest).

The batch's status is the most serious of its cases', in the order of `STATUS_ORDER`:
discrepancies (1) first, since a nightly audit must never lose a wrong claim behind another
case's trouble; then cannot-verify (3), a truss whose claims went unchecked; then a fault in the
tool (70); then bad input (2), which says something about the files rather than the calculation;
0 only when every case agrees.
"""

from __future__ import annotations

import multiprocessing
import re
from collections.abc import Callable, Iterable, Iterator
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, replace
from pathlib import Path

from verify.batch.jobs import Job, find_jobs
from verify.batch.state import STATE_FILE, load_state, render_state, unchanged_result
from verify.batch.summary import render_index_html, render_summary_csv
from verify.batch.worker import BAD_INPUT, EXIT_FAULT, FAULT, CaseResult, check_job
from verify.errors import EXIT_AGREES, EXIT_BAD_INPUT, EXIT_CANNOT_VERIFY, EXIT_DISCREPANCIES
from verify.forking import fork_allowed
from verify.report.atomic import OutputError, write_atomic

OUTPUT_FOLDER = "truss-verify-batch"
REPORTS_FOLDER = "reports"
STATUS_ORDER = (EXIT_DISCREPANCIES, EXIT_CANNOT_VERIFY, EXIT_FAULT, EXIT_BAD_INPUT, EXIT_AGREES)
STATUSES = ("agrees", "discrepancies", "cannot-verify", BAD_INPUT, FAULT)

# A runner checks jobs and yields their results as they finish, in any order.
Runner = Callable[[list[Job]], Iterable[CaseResult]]
Progress = Callable[[CaseResult, int, int], None]


@dataclass(frozen=True)
class BatchOutcome:
    pairs: tuple[tuple[Job, CaseResult], ...]  # in the order the jobs were found
    exit_code: int
    counts: dict[str, int]
    summary: Path
    index: Path
    manifest: Path | None


def batch_exit(codes: Iterable[int]) -> int:
    """The most serious status of the cases (STATUS_ORDER), 0 for an empty batch."""
    present = set(codes)
    return next((code for code in STATUS_ORDER if code in present), EXIT_AGREES)


def status_line(counts: dict[str, int], code: int) -> str:
    total = sum(counts.values())
    words = {
        EXIT_AGREES: "every claim checked agrees",
        EXIT_DISCREPANCIES: "discrepancies found",
        EXIT_CANNOT_VERIFY: "some trusses cannot be verified",
        EXIT_FAULT: "a fault in the tool stopped some checks",
        EXIT_BAD_INPUT: "some cases have bad input",
    }
    return f"{total} case{'s' if total != 1 else ''}: {words[code]} (exit status {code})"


# -- runners -------------------------------------------------------------------------------------
def _warm_imports() -> None:
    """Import the pipeline once in the parent: forked workers then start with it loaded, and
    each pays no import at its first case (sympy, for the report's exact values, took 0.5-0.8 s)."""
    import sympy  # noqa: F401

    import verify.analysis.pipeline  # noqa: F401
    import verify.analysis.sections  # noqa: F401
    import verify.compare.diagnose  # noqa: F401
    import verify.io.case  # noqa: F401
    import verify.io.claims  # noqa: F401
    import verify.options  # noqa: F401
    import verify.report.document  # noqa: F401
    import verify.report.section_calc  # noqa: F401


def _start_method() -> str:
    """fork when verify.forking allows it: a worker then starts with the pipeline imported (about
    0.5 s per process otherwise); a process running other threads (a notebook, a Dask client)
    could deadlock a forked child on a lock one of them held."""
    methods = multiprocessing.get_all_start_methods()
    if "fork" in methods and fork_allowed():
        return "fork"
    return "forkserver" if "forkserver" in methods else "spawn"


def local_runner(workers: int) -> Runner:
    """Check jobs in a pool of `workers` processes (in this process when 1)."""

    def run(jobs: list[Job]) -> Iterator[CaseResult]:
        if workers <= 1 or len(jobs) <= 1:
            for job in jobs:
                yield check_job(job)
            return
        _warm_imports()
        context = multiprocessing.get_context(_start_method())
        with ProcessPoolExecutor(max_workers=min(workers, len(jobs)), mp_context=context) as pool:
            futures = {pool.submit(check_job, job): job for job in jobs}
            for future in as_completed(futures):
                try:
                    yield future.result()
                except BrokenProcessPool:
                    yield CaseResult(
                        futures[future].name,
                        FAULT,
                        reason=(
                            "the worker process stopped (killed, or out of memory) while this "
                            "case or one beside it was checked; check it alone with `truss-verify "
                            "check`"
                        ),
                    )

    return run


# -- outputs -------------------------------------------------------------------------------------
def _slug(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9._-]+", "-", name).strip("-.")[:100] or "case"


def report_names(jobs: list[Job]) -> dict[str, str]:
    """Each job's report path relative to the output folder, unique even on a case-blind disk."""
    taken: set[str] = set()
    names = {}
    for job in jobs:
        stem = base = _slug(job.name)
        n = 1
        while stem.casefold() in taken:
            n += 1
            stem = f"{base}-{n}"
        taken.add(stem.casefold())
        names[job.name] = f"{REPORTS_FOLDER}/{stem}.html"
    return names


def _prepare_output(output: Path, summary: Path, inputs: list[str]) -> None:
    """Refuse, before any case runs, outputs the batch could not write or must not write."""
    if not summary.name.lower().endswith(".csv"):
        raise OutputError(
            f"--summary: '{summary}' must end in .csv (the summary is comma-separated text)"
        )
    if summary.resolve().parent != output.resolve() and not summary.resolve().parent.is_dir():
        raise OutputError(f"--summary: the folder {summary.resolve().parent} does not exist")
    if output.exists() and not output.is_dir():
        raise OutputError(f"{output}: the output folder is a file; name a folder with --out")
    for path in (summary, output / "index.html"):
        if any(_same(path, source) for source in inputs):
            raise OutputError(f"{path}: refusing to write the batch's output over an input file")
    try:
        (output / REPORTS_FOLDER).mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise OutputError(
            f"{output}: cannot make the output folder ({exc.strerror or exc})"
        ) from None


def _same(a: Path, b: str) -> bool:
    try:
        return a.samefile(b)
    except OSError:
        return a.resolve() == Path(b).resolve()


def run_batch(
    target: str | Path,
    *,
    runner: Runner,
    output: str | Path | None = None,
    summary: str | Path | None = None,
    recheck: bool = False,
    on_result: Progress | None = None,
) -> BatchOutcome:
    """Check every case of `target` (a folder or a manifest CSV) and write the outputs.

    Raises InputError when the folder or manifest cannot be read at all and OutputError when an
    output cannot or must not be written; a bad case is a row of the summary, never an error."""
    target = Path(target)
    home = target.parent if target.is_file() else target
    out = Path(output) if output is not None else home / OUTPUT_FOLDER
    jobs, manifest = find_jobs(target, output=out)
    summary_path = Path(summary) if summary is not None else out / "summary.csv"
    inputs = [p for job in jobs for p in job.paths] + ([str(manifest)] if manifest else [])
    _prepare_output(out, summary_path, inputs)
    reports = report_names(jobs)
    remembered = {} if recheck else load_state(out / STATE_FILE)
    results: dict[str, CaseResult] = {}
    pending = []
    for job in jobs:
        previous = unchanged_result(job, remembered, out)
        if previous is not None and previous.report_file == reports[job.name]:
            results[job.name] = previous
        else:
            pending.append(job)
    total = len(jobs)
    if on_result is not None:
        for done, result in enumerate(results.values(), start=1):
            on_result(result, done, total)
    try:
        for result in runner(pending):
            result = _write_report(result, out, reports[result.name], inputs)
            results[result.name] = result
            if on_result is not None:
                on_result(result, len(results), total)
    finally:  # an interrupted run still remembers what it finished, so the rerun skips it
        finished = [(job, results[job.name]) for job in jobs if job.name in results]
        write_atomic(out / STATE_FILE, render_state(finished), inputs=inputs)
    pairs = tuple((job, results[job.name]) for job in jobs)
    counts = {status: sum(1 for _, r in pairs if r.status == status) for status in STATUSES}
    code = batch_exit(r.exit_code for _, r in pairs)
    inputs += [p for _, r in pairs for p, _ in r.inputs]
    write_atomic(summary_path, render_summary_csv(list(pairs)), inputs=inputs)
    index = out / "index.html"
    title = f"truss-verify batch: {manifest.name if manifest else home.resolve().name}"
    write_atomic(
        index,
        render_index_html(
            list(pairs), title=title, counts=counts, status_line=status_line(counts, code)
        ),
        inputs=inputs,
    )
    return BatchOutcome(pairs, code, counts, summary_path, index, manifest)


def _write_report(result: CaseResult, out: Path, name: str, inputs: list[str]) -> CaseResult:
    if result.report is None:
        return result
    try:
        write_atomic(out / name, result.report, inputs=[*inputs, *(p for p, _ in result.inputs)])
    except (OutputError, OSError) as exc:
        return replace(result, report=None, reason=f"report not written: {exc}")
    return replace(result, report=None, report_file=name)
