"""Benchmark truss-verify against a floor measured in the same run.

For each family (2D Pratt, 3D double-layer grid without top chords; bench/generate.py) and each
size of about 10^2, 10^3, 10^4, 10^5 members, this writes the case (CSV tables), makes a claims
table from the floor's solution with one member's value wrong, then times as whole processes,
stdout to /dev/null, exactly as a user runs them:

- the floor, ``python bench/floor.py CASE`` (read + assemble + SuperLU solve), and the floor
  with the claims table read and compared (``--claims``);
- ``truss-verify stability CASE``, ``truss-verify solve CASE``,
  ``truss-verify check CASE --claims CLAIMS`` (and ``solve --show sections`` when the section
  route exists),

each the median of --repeats runs (one run at 5x10^4 members and above, or once a run takes
longer than --slow seconds). Ratios are tool / floor; check is divided by the floor with claims.
Start-up is measured too: the bare import of the libraries the tool needs against each command
on a 21-member truss. Then, in a child process per case, every pipeline stage is timed in one
interpreter (read_case, assemble_equilibrium, solve_stability, solve_joints, solve_global,
solve_sections if importable, rendering, read_claims, compare_claims), and each stage's growth
exponent k (time ~ members^k) between neighbouring sizes is printed, flagged where it is clearly
above n log n (k > 1.25 and above the floor's own k + 0.15) and the stage takes > 0.1 s.

    .venv/bin/python bench/run.py              # 10^2 .. 10^5 members (about 10 minutes)
    .venv/bin/python bench/run.py --quick      # up to 10^4 members
    .venv/bin/python bench/run.py --max-members 3e4 --families grid --repeats 5

Results are also written to bench/out/results-<time>.json.
"""

from __future__ import annotations

import argparse
import compileall
import importlib.util
import json
import math
import os
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

HERE = Path(__file__).resolve().parent
ROOT = HERE.parent
sys.path.insert(0, str(HERE))

import generate  # noqa: E402  (bench/ is not a package; its sibling is imported by path)

PYTHON = sys.executable
TOOL = str(Path(PYTHON).with_name("truss-verify"))
BARE_IMPORT = "import numpy, scipy.sparse.linalg, pandas, click, tabulate"
TARGETS = (1e2, 1e3, 1e4, 1e5, 1e6)  # 1e6 only when --max-members or --sizes asks for it
SMALL_MEMBERS = 20  # the start-up case: a 5-panel Pratt truss, 21 members
LARGE = 5e4  # at and above this member count, time each command once unless --repeats-large
FAST_K = 1.25  # growth exponent clearly above n log n (1.1 between 10^4 and 10^5)
MIN_FLAG_SECONDS = 0.1  # smaller stage times are too noisy to judge growth


@dataclass
class Timing:
    seconds: float | None  # median of the runs, None when every run failed or timed out
    runs: list[float] = field(default_factory=list)
    peak_mb: float | None = None
    error: str | None = None
    cpu: float | None = (
        None  # median user + system CPU seconds: steadier than wall time on a busy machine
    )


def run_once(
    cmd: list[str], timeout: float, ok_codes: tuple[int, ...]
) -> tuple[float, float, float, str | None]:
    """Wall time, CPU time and peak RSS (MB) of one process, stdout to /dev/null; error text if it
    failed."""
    with tempfile.TemporaryFile() as err:
        start = time.perf_counter()
        proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=err, cwd=ROOT)
        timer = threading.Timer(timeout, proc.kill)  # kills only this child, by its own handle
        timer.start()
        try:
            _, status, usage = os.wait4(proc.pid, 0)
        finally:
            timer.cancel()
        elapsed = time.perf_counter() - start
        proc.returncode = os.waitstatus_to_exitcode(status)
        peak = usage.ru_maxrss / 1024.0  # Linux reports kilobytes
        cpu = usage.ru_utime + usage.ru_stime
        if elapsed >= timeout:
            return elapsed, cpu, peak, f"timed out after {timeout:.0f} s"
        if proc.returncode not in ok_codes:
            err.seek(0)
            tail = err.read().decode("utf-8", "replace").strip().splitlines()[-3:]
            return elapsed, cpu, peak, f"exit status {proc.returncode}: {' | '.join(tail)}"
    return elapsed, cpu, peak, None


def timed(
    cmd: list[str], *, repeats: int, timeout: float, slow: float, ok_codes: tuple[int, ...] = (0,)
) -> Timing:
    runs: list[float] = []
    cpus: list[float] = []
    peaks: list[float] = []
    for _ in range(repeats):
        elapsed, cpu, peak, error = run_once(cmd, timeout, ok_codes)
        if error:
            return Timing(
                statistics.median(runs) if runs else None,
                runs,
                max(peaks, default=None),
                error,
                statistics.median(cpus) if cpus else None,
            )
        runs.append(elapsed)
        cpus.append(cpu)
        peaks.append(peak)
        if elapsed > slow:
            break
    return Timing(statistics.median(runs), runs, max(peaks), None, statistics.median(cpus))


def sections_available() -> bool:
    return importlib.util.find_spec("verify.analysis.sections") is not None


# -- stages inside one process (run as a child: python bench/run.py --stages CASE CLAIMS) --------
STAGES = (
    "import verify",
    "floor in-process",
    "read_case",
    "assemble_equilibrium",
    "solve_stability",
    "solve_joints",
    "solve_global",
    "solve_sections",
    "render solve text",
    "read_claims",
    "compare_claims",
    "render check text",
)
SKIPPABLE = (
    "solve_joints",
    "solve_global",
    "solve_sections",
)  # routes the later stages can do without


def stages_child(case: str, claims: str, skip: frozenset[str] = frozenset()) -> int:
    """Print one JSON line per stage as it finishes, so a timeout still leaves the earlier ones."""

    def emit(stage: str, seconds: float, **extra: object) -> None:
        print(json.dumps({"stage": stage, "seconds": seconds, **extra}), flush=True)

    clock = time.perf_counter
    t = clock()
    from verify.analysis.global_solve import solve_global
    from verify.analysis.joints import solve_joints
    from verify.analysis.pipeline import Analysis, route_disagreement
    from verify.analysis.run import AnalysisRun
    from verify.analysis.stability import solve_stability
    from verify.compare.diagnose import compare_claims
    from verify.io.case import read_case
    from verify.io.claims import read_claims
    from verify.report import text
    from verify.report.review_text import render_review

    emit("import verify", clock() - t)
    import floor

    t = clock()
    tables = floor.read_tables(Path(case))
    A, F, _, _, dim = floor.assemble(tables)
    ea = floor.stiffness_of(Path(case))
    if ea is None:
        floor.solve(A, F, dim)
    else:
        floor.solve_elastic(A, F, floor.member_lengths(tables), ea)
    emit("floor in-process", clock() - t)
    t = clock()
    model = read_case(case)
    emit("read_case", clock() - t)
    t = clock()
    run = AnalysisRun(model)  # shared by the stages, as analyse() shares it between routes
    run.equilibrium_matrix()
    emit("assemble_equilibrium", clock() - t)
    t = clock()
    stability = solve_stability(model, run=run)
    emit(
        "solve_stability",
        clock() - t,
        method=stability.method,
        classification=stability.classification.value,
    )
    joints = global_ = sections = None
    if "solve_joints" not in skip:
        t = clock()
        joints = solve_joints(model, run)
        emit("solve_joints", clock() - t, stalled=joints.stalled)
    if "solve_global" not in skip:
        t = clock()
        global_ = solve_global(model, run)
        emit("solve_global", clock() - t)
    if sections_available() and "solve_sections" not in skip:
        from verify.analysis.sections import solve_sections

        t = clock()
        sections = solve_sections(model)
        emit("solve_sections", clock() - t)
    t = clock()
    reference = global_ or (joints.forces if joints else None)
    disagreement = (
        route_disagreement(
            reference, getattr(joints, "forces", None), getattr(sections, "forces", None)
        )
        if reference
        else 0.0
    )
    analysis = Analysis(
        model,
        stability,
        joints=joints,
        global_=global_ or reference,
        sections=sections,
        route_disagreement=disagreement,
        shared=run,
    )
    text.render_stability(model, stability)
    if reference is not None:
        text.render_solution(model, analysis)
    emit("render solve text", clock() - t)
    t = clock()
    table = read_claims(claims, model)
    emit("read_claims", clock() - t)
    t = clock()
    review = compare_claims(analysis, table)
    emit("compare_claims", clock() - t, verdict=review.verdict.value)
    t = clock()
    render_review(review)
    emit("render check text", clock() - t)
    return 0


def stage_times(
    case: Path, claims: Path, timeout: float
) -> tuple[dict[str, float], dict[str, object], list[str], str | None]:
    """Stage times; a route stage that times out is recorded and skipped in a fresh child."""
    times: dict[str, float] = {}
    extra: dict[str, object] = {}
    timed_out: list[str] = []
    for _ in range(len(SKIPPABLE) + 1):
        cmd = [
            PYTHON,
            str(HERE / "run.py"),
            "--stages",
            str(case),
            str(claims),
            "--skip-stages",
            ",".join(timed_out),
        ]
        error: str | None = None
        try:
            proc = subprocess.run(cmd, capture_output=True, text=True, timeout=timeout, cwd=ROOT)
            out = proc.stdout
            if proc.returncode != 0:
                error = " ".join(proc.stderr.strip().splitlines()[-1:])
        except subprocess.TimeoutExpired as exc:  # subprocess.run kills only the child it started
            out = exc.stdout.decode() if isinstance(exc.stdout, bytes) else (exc.stdout or "")
            error = f"timed out after {timeout:.0f} s"
        done: list[str] = []
        for line in out.splitlines():
            if line.startswith("{"):
                record = json.loads(line)
                name = record.pop("stage")
                done.append(name)
                times.setdefault(name, record.pop("seconds"))
                extra.update(record)
        if error is None or not error.startswith("timed out"):
            return times, extra, timed_out, error
        pending = [
            s
            for s in STAGES
            if s not in done
            and s not in timed_out
            and (s != "solve_sections" or sections_available())
        ]
        if not pending or pending[0] not in SKIPPABLE:
            return times, extra, timed_out, f"{error} in {pending[0] if pending else '?'}"
        timed_out.append(pending[0])
    return times, extra, timed_out, None


# -- the run ------------------------------------------------------------------------------------
def fmt_s(t: Timing | None, *, full: bool = False) -> str:
    """Seconds; a failure shows its first words in tables and the whole error where `full`."""
    if t is None:
        return "—"
    error = t.error if full or not t.error else t.error.split(":")[0]
    if t.seconds is None and t.error and t.error.startswith("timed out after"):
        return ">" + t.error.removeprefix("timed out after ").removesuffix(" s") + " (timed out)"
    if t.seconds is None and t.error and t.error.startswith("skipped"):
        return t.error if full else "skipped"
    if t.seconds is None:
        return f"failed ({error})"
    return f"{t.seconds:.3f}" + (f" [{error}]" if error else "")


def ratio(a: Timing | None, b: Timing | None) -> float | None:
    if a is None or b is None or a.seconds is None or b.seconds is None or b.seconds <= 0:
        return None
    return a.seconds / b.seconds


def cpu_ratio(a: Timing | None, b: Timing | None) -> str:
    if a is None or b is None or not a.cpu or not b.cpu or a.seconds is None:
        return "—"
    return f"{a.cpu / b.cpu:.1f}x"


def peak_ratio(a: Timing | None, b: Timing | None) -> str:
    """Peak memory of a command and its ratio to the floor's (target <= 1.5x)."""
    if a is None or b is None or not a.peak_mb or not b.peak_mb:
        return "—"
    return f"{a.peak_mb:.0f} ({a.peak_mb / b.peak_mb:.1f}x)"


def with_ratio(a: Timing | None, b: Timing | None) -> str:
    r = ratio(a, b)
    return fmt_s(a) + (f" ({r:.1f}x)" if r is not None else "")


def table(headers: list[str], rows: list[list[Any]]) -> str:
    try:
        from tabulate import tabulate
    except ImportError:  # the tool's environment has it; keep the bench usable without
        return "\n".join("  ".join(str(c) for c in row) for row in [headers, *rows])
    return tabulate(rows, headers=headers, disable_numparse=True)


def growth(n1: int, t1: float | None, n2: int, t2: float | None) -> float | None:
    if not t1 or not t2 or t1 <= 0 or t2 <= 0:
        return None
    return math.log(t2 / t1) / math.log(n2 / n1)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(
        description="Benchmark truss-verify against a floor measured in the same run."
    )
    parser.add_argument(
        "--max-members",
        type=float,
        default=1e5,
        help="largest target size (default 1e5; 1e6 takes minutes per command)",
    )
    parser.add_argument("--quick", action="store_true", help="sizes up to 1e4 members only")
    parser.add_argument(
        "--sizes",
        default=None,
        help="comma-separated target member counts instead of 1e2,1e3,1e4,1e5 (still capped)",
    )
    parser.add_argument(
        "--families", default=",".join(generate.FAMILIES), help="comma-separated: pratt,grid"
    )
    parser.add_argument(
        "--repeats", type=int, default=3, help="runs per command; the median is reported"
    )
    parser.add_argument(
        "--repeats-large", type=int, default=1, help=f"runs per command at >= {LARGE:.0e} members"
    )
    parser.add_argument(
        "--slow",
        type=float,
        default=30.0,
        help="stop repeating a command once one run takes this long (s)",
    )
    parser.add_argument(
        "--timeout", type=float, default=300.0, help="kill a command after this many seconds"
    )
    parser.add_argument(
        "--sections-timeout",
        type=float,
        default=60.0,
        help="kill `solve --show sections` after this many seconds; larger sizes of that family "
        "are then skipped",
    )
    parser.add_argument("--no-stages", action="store_true", help="skip the per-stage timings")
    parser.add_argument(
        "--blas-threads",
        type=int,
        default=None,
        help="set OPENBLAS_NUM_THREADS/OMP_NUM_THREADS for every timed process (default: as the "
        "user has it)",
    )
    parser.add_argument(
        "--out",
        type=Path,
        default=HERE / "out",
        help="where cases and results go (default bench/out)",
    )
    parser.add_argument("--stages", nargs=2, metavar=("CASE", "CLAIMS"), help=argparse.SUPPRESS)
    parser.add_argument("--skip-stages", default="", help=argparse.SUPPRESS)
    args = parser.parse_args(argv)
    if args.stages:
        return stages_child(
            args.stages[0],
            args.stages[1],
            skip=frozenset(x for x in args.skip_stages.split(",") if x),
        )

    # Byte-compile the package first: where PYTHONDONTWRITEBYTECODE is set (as on the machines
    # this project is developed on), every timed run would otherwise compile each module changed
    # since its last .pyc. Measured on the 21-member demo: check --json 1.22x the bare import with
    # bytecode, 1.55x without; a user's install has bytecode.
    compileall.compile_dir(str(ROOT / "verify"), quiet=1)
    if args.blas_threads is not None:
        # Inherited by every child; a threaded BLAS on a busy 2-core machine can be several times
        # slower.
        for var in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS", "MKL_NUM_THREADS"):
            os.environ[var] = str(args.blas_threads)
    limit = min(args.max_members, 1e4) if args.quick else args.max_members
    wanted = [float(x) for x in args.sizes.split(",")] if args.sizes else list(TARGETS)
    targets = sorted(t for t in wanted if t <= limit * 1.0001)
    families = [f.strip() for f in args.families.split(",") if f.strip()]
    for f in families:
        if f not in generate.FAMILIES:
            parser.error(f"unknown family {f!r}; expected {', '.join(generate.FAMILIES)}")
    with_sections = sections_available()
    args.out.mkdir(parents=True, exist_ok=True)
    results: dict[str, Any] = {
        "python": PYTHON,
        "started": time.strftime("%Y-%m-%d %H:%M:%S"),
        "cpus": os.cpu_count(),
        "sections_route": with_sections,
    }
    print(
        f"truss-verify benchmark, {time.strftime('%Y-%m-%d %H:%M')}, {os.cpu_count()} CPUs, load "
        "average "
        f"{os.getloadavg()[0]:.2f}; BLAS threads "
        f"{os.environ.get('OPENBLAS_NUM_THREADS', 'default')}; section route "
        f"{'present' if with_sections else 'absent'}",
        flush=True,
    )

    # Start-up: a 21-member truss against the bare import of the libraries it needs.
    small_dir = args.out / "cases" / "startup"
    small = generate.write_case(generate.build("pratt", SMALL_MEMBERS), small_dir)
    small_claims = small_dir / "claims.csv"
    subprocess.run(
        [PYTHON, str(HERE / "floor.py"), str(small), "--write-claims", str(small_claims)],
        check=True,
        stdout=subprocess.DEVNULL,
        cwd=ROOT,
    )
    reps = max(args.repeats, 5)
    bare = timed([PYTHON, "-c", BARE_IMPORT], repeats=reps, timeout=60, slow=args.slow)
    startup = {
        "stability": timed(
            [TOOL, "stability", str(small)], repeats=reps, timeout=60, slow=args.slow
        ),
        "solve": timed([TOOL, "solve", str(small)], repeats=reps, timeout=60, slow=args.slow),
        "check": timed(
            [TOOL, "check", str(small), "--claims", str(small_claims)],
            repeats=reps,
            timeout=60,
            slow=args.slow,
            ok_codes=(0, 1),
        ),
    }
    print(f'\nStart-up (median of {reps}): bare `python -c "{BARE_IMPORT}"` {fmt_s(bare)} s')
    print(
        table(
            ["21-member Pratt", "s", "x bare import (target <= 1.5)", "cpu s", "cpu x bare import"],
            [
                [
                    k,
                    fmt_s(v),
                    f"{ratio(v, bare):.2f}" if ratio(v, bare) else "—",
                    f"{v.cpu or 0:.3f}",
                    cpu_ratio(v, bare),
                ]
                for k, v in startup.items()
            ],
        ),
        flush=True,
    )
    results["startup"] = {
        "bare_import": bare.__dict__,
        **{k: v.__dict__ for k, v in startup.items()},
    }

    sections_gave_up: set[str] = (
        set()
    )  # families whose `--show sections` timed out at a smaller size
    rows: list[list[Any]] = []
    cpu_rows: list[list[Any]] = []
    records: list[dict[str, Any]] = []
    for family in families:
        for target in targets:
            truss = generate.build(family, target)
            directory = args.out / "cases" / truss.name
            case = generate.write_case(truss, directory)
            claims = directory / "claims.csv"
            subprocess.run(
                [PYTHON, str(HERE / "floor.py"), str(case), "--write-claims", str(claims)],
                check=True,
                stdout=subprocess.DEVNULL,
                cwd=ROOT,
            )
            repeats = args.repeats_large if truss.members >= LARGE else args.repeats
            kw = dict(repeats=repeats, timeout=args.timeout, slow=args.slow)
            print(
                f"\n{truss.name}: {len(truss.joint_ids)} joints, {truss.members} members, "
                f"{repeats} run(s) each ...",
                flush=True,
            )
            # Untimed first run: confirms the truss is stable and determinate, and warms the page
            # cache.
            check_run = subprocess.run(
                [TOOL, "stability", str(case), "--json"],
                capture_output=True,
                text=True,
                timeout=args.timeout,
                cwd=ROOT,
            )
            try:
                structure = json.loads(check_run.stdout)["structure"]
                classification = structure["classification"]
            except (ValueError, KeyError):
                last = (check_run.stderr.strip().splitlines() or [""])[-1]
                classification = f"unknown (`stability --json` exit {check_run.returncode}: {last})"
            expected = (
                "stable-indeterminate" if family in generate.INDETERMINATE else "stable-determinate"
            )
            if classification != expected:
                print(
                    f"  WARNING: truss-verify stability says {classification}; expected {expected}"
                )
            t: dict[str, Timing] = {}
            t["floor"] = timed([PYTHON, str(HERE / "floor.py"), str(case)], **kw)
            t["floor+claims"] = timed(
                [PYTHON, str(HERE / "floor.py"), str(case), "--claims", str(claims)], **kw
            )
            t["stability"] = timed([TOOL, "stability", str(case)], **kw)
            t["solve"] = timed([TOOL, "solve", str(case)], **kw)
            t["check"] = timed(
                [TOOL, "check", str(case), "--claims", str(claims)], ok_codes=(1,), **kw
            )
            t["check --json"] = timed(
                [TOOL, "check", str(case), "--claims", str(claims), "--json"], ok_codes=(1,), **kw
            )
            t["check --report"] = timed(
                [
                    TOOL,
                    "check",
                    str(case),
                    "--claims",
                    str(claims),
                    "--report",
                    str(directory / "report.html"),
                ],
                ok_codes=(1,),
                **kw,
            )
            if with_sections and family in sections_gave_up:
                t["sections"] = Timing(None, error="skipped: timed out at a smaller size")
            elif with_sections:
                t["sections"] = timed(
                    [TOOL, "solve", str(case), "--show", "sections"],
                    repeats=repeats,
                    timeout=args.sections_timeout,
                    slow=min(args.slow, args.sections_timeout / 3),
                )
                if t["sections"].error and t["sections"].error.startswith("timed out"):
                    sections_gave_up.add(family)
            for name, timing in t.items():
                print(
                    f"  {name:13s} {fmt_s(timing, full=True)} s   cpu {timing.cpu or 0:.3f} s   "
                    f"peak {timing.peak_mb or 0:.0f} MB   runs "
                    f"{[round(x, 3) for x in timing.runs]}",
                    flush=True,
                )
            stages: dict[str, float] = {}
            stage_info: dict[str, object] = {}
            timed_out: list[str] = []
            if not args.no_stages:
                stages, stage_info, timed_out, stage_error = stage_times(case, claims, args.timeout)
                slowest = max(stages.items(), key=lambda kv: kv[1]) if stages else ("—", 0.0)
                print(
                    "  stages: "
                    + ", ".join(f"{k} {v:.3f}" for k, v in stages.items())
                    + "".join(f", {k} > {args.timeout:.0f} (timed out, skipped)" for k in timed_out)
                    + (f"  [{stage_error}]" if stage_error else "")
                    + f"\n  slowest stage: {timed_out[0] if timed_out else slowest[0]}",
                    flush=True,
                )
            row = [
                family,
                truss.members,
                fmt_s(t["floor"]),
                with_ratio(t["stability"], t["floor"]),
                with_ratio(t["solve"], t["floor"]),
                fmt_s(t["floor+claims"]),
                with_ratio(t["check"], t["floor+claims"]),
                with_ratio(t["check --json"], t["floor+claims"]),
                with_ratio(t["check --report"], t["floor+claims"]),
                peak_ratio(t["check --json"], t["floor+claims"]),
            ]
            if with_sections:
                row.append(with_ratio(t["sections"], t["floor"]))
            rows.append(row)
            cpu_rows.append(
                [
                    family,
                    truss.members,
                    f"{t['floor'].cpu or 0:.3f}",
                    cpu_ratio(t["stability"], t["floor"]),
                    cpu_ratio(t["solve"], t["floor"]),
                    cpu_ratio(t["check"], t["floor+claims"]),
                ]
            )
            records.append(
                {
                    "family": family,
                    "members": truss.members,
                    "joints": len(truss.joint_ids),
                    "parameter": truss.parameter,
                    "classification": classification,
                    "timings": {k: v.__dict__ for k, v in t.items()},
                    "stages": stages,
                    "stage_info": stage_info,
                    "stages_timed_out": timed_out,
                    "stage_timeout": args.timeout,
                }
            )

    headers = [
        "family",
        "members",
        "floor s",
        "stability s (ratio)",
        "solve s (ratio)",
        "floor+claims s",
        "check s (ratio)",
        "check --json s (ratio)",
        "check --report s (ratio)",
        "check --json peak MB (x floor+claims)",
    ]
    if with_sections:
        headers.append("solve --show sections s (ratio)")
    print(
        "\nWhole-process times (median), ratio = tool / floor (check: / floor+claims); targets: "
        "check --json <= 2x and peak memory <= 1.5x from 10^4 members up, check --report <= 2.5x"
    )
    print(table(headers, rows))
    print(
        "\nThe same as CPU time (user + system) ratios, less disturbed by other load on the machine"
    )
    print(table(["family", "members", "floor cpu s", "stability", "solve", "check"], cpu_rows))
    print(
        f"\nStart-up: bare import {fmt_s(bare)} s; 21-member case: "
        + ", ".join(f"{k} {fmt_s(v)} s ({ratio(v, bare) or 0:.2f}x)" for k, v in startup.items())
        + "; target <= 1.5x"
    )

    if not args.no_stages and records:
        names: list[str] = []
        for rec in records:
            names += [
                s
                for s in STAGES
                if s not in names and (s in rec["stages"] or s in rec["stages_timed_out"])
            ]
        print("\nStages inside one process (s); the slowest per size marked *")
        stage_rows = []
        for rec in records:
            st: dict[str, float] = rec["stages"]
            late: list[str] = rec["stages_timed_out"]
            top = late[0] if late else (max(st, key=st.__getitem__) if st else None)
            stage_rows.append(
                [rec["family"], rec["members"]]
                + [
                    (
                        f">{args.timeout:.0f}"
                        if s in late
                        else "—"
                        if s not in st
                        else f"{st[s]:.3f}"
                    )
                    + ("*" if s == top else "")
                    for s in names
                ]
            )
        print(table(["family", "members", *names], stage_rows))

        print(
            "\nGrowth exponent k (time ~ members^k) between neighbouring sizes; n log n is k ~ "
            f"1.1. Flag '!': k > {FAST_K} and > floor k + 0.15 and time > {MIN_FLAG_SECONDS} s"
        )
        growth_rows = []
        flags: list[str] = []
        for a, b in zip(records, records[1:], strict=False):
            if a["family"] != b["family"]:
                continue
            na, nb = int(a["members"]), int(b["members"])
            ta, tb = a["timings"], b["timings"]
            stage_a, stage_b = a["stages"], b["stages"]
            k_floor = growth(
                na, stage_a.get("floor in-process"), nb, stage_b.get("floor in-process")
            )
            cells = [f"{a['family']} {na}->{nb}", f"{k_floor:.2f}" if k_floor is not None else "—"]
            for s in names:
                if s == "floor in-process":
                    continue
                t1, t2 = stage_a.get(s), stage_b.get(s)
                bound = s in b["stages_timed_out"]
                if bound:
                    t2 = float(b["stage_timeout"])
                k = growth(na, t1, nb, t2)
                flag = (
                    k is not None
                    and k > FAST_K
                    and k > (k_floor or 0) + 0.15
                    and (t2 or 0) > MIN_FLAG_SECONDS
                )
                cells.append(
                    "—"
                    if k is None
                    else (">" if bound else "") + f"{k:.2f}" + ("!" if flag else "")
                )
                if flag:
                    flags.append(
                        f"{a['family']} {s}: k {'>' if bound else '='} {k:.2f} from {na} to {nb} "
                        f"members ({t1:.3f} -> {'>' if bound else ''}{t2:.3f} s)"
                    )
            for c in ("stability", "solve", "check"):
                k = growth(na, ta[c]["seconds"], nb, tb[c]["seconds"])
                cells.append("—" if k is None else f"{k:.2f}")
            growth_rows.append(cells)
        print(
            table(
                [
                    "family, members",
                    "floor in-process",
                    *[s for s in names if s != "floor in-process"],
                    "stability (whole)",
                    "solve (whole)",
                    "check (whole)",
                ],
                growth_rows,
            )
        )
        if flags:
            print("\nStages growing faster than n log n:\n  " + "\n  ".join(flags))

    print(
        f"\nLoad average at the end: {os.getloadavg()[0]:.2f} (more than the CPU count means other "
        "work disturbed the wall times)"
    )
    results["cases"] = records
    path = args.out / f"results-{time.strftime('%Y%m%d-%H%M%S')}.json"
    path.write_text(json.dumps(results, indent=1, default=str), encoding="utf-8")
    print(f"\nResults: {path}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
