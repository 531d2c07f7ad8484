"""Which cases a job folder holds: case folders found on disk, or the rows of a manifest CSV.

A case folder holds `case.toml` and one claims table named `claims.*` (`claims.csv`,
`claims.xlsx`, `claims.pdf`, as the bundled cases/ do). Folders are found at any depth; hidden
folders and the batch's own output folder are skipped.

A manifest is a CSV file (`manifest.csv` in the folder, or named instead of the folder) with a
header row and one row per case. Columns (header words in any letter case; `-` or a space may
stand for `_`):

    case            required: the case file, or a folder holding case.toml
    claims          required: the claims table (CSV, .xlsx or PDF)
    name            the case's name in the summary and its report's file name (default: `case`)
    sign            tension-positive | compression-positive | auto           (as `check --sign`)
    unit            the claims' force unit, or auto                           (`check --unit`)
    sheet, pages    the worksheet of an .xlsx, the pages of a PDF             (`--sheet`, `--pages`)
    rtol, atol_fraction                                   (`--rtol`, `--atol-fraction`)
    member_column, case_column, force_column                                 (the `check` options)
    load_case       the load case of a single-column table                    (`check --case`)
    assume_equal_ea one EA for every member of an indeterminate truss        (`--assume-equal-ea`)
    displacements   a claimed joint-displacement table                        (`--displacements`)

Paths are relative to the manifest's folder. An empty cell leaves the option at its default.
A row that cannot run (no case named, a number that is not one) becomes a job with a `problem`:
the summary reports it with its reason and the other rows run. A manifest that cannot be read at
all (no header with `case` and `claims`, an unknown column) raises InputError: nothing would run
as its author meant.
"""

from __future__ import annotations

import csv
import math
import os
from dataclasses import dataclass
from pathlib import Path

from verify.errors import InputError, Problem, ProblemList, did_you_mean, escape_controls, quoted
from verify.io.files import CASE_FILE_MAX_BYTES, UnreadableFile, read_regular_file

CASE_FILE = "case.toml"
MANIFEST_FILE = "manifest.csv"
# The claims table of a case folder: `claims` with a suffix the claims reader reads.
CLAIMS_SUFFIXES = (".csv", ".txt", ".tsv", ".xlsx", ".xlsm", ".pdf")

TEXT_OPTIONS = (
    "sign",
    "unit",
    "sheet",
    "pages",
    "member_column",
    "case_column",
    "force_column",
    "load_case",
)
NUMBER_OPTIONS = ("rtol", "atol_fraction", "assume_equal_ea")
PATH_COLUMNS = ("case", "claims", "displacements")
MANIFEST_COLUMNS = ("name", *PATH_COLUMNS, *TEXT_OPTIONS, *NUMBER_OPTIONS)

Option = tuple[str, str | float]


@dataclass(frozen=True)
class Job:
    """One case to check. Plain, picklable data: it travels to worker processes and Dask workers.

    Paths are absolute, so a worker with another working folder reads the same files."""

    name: str  # as the summary shows it; unique within a batch
    origin: str  # where the job was defined: "roof/T1" (a folder) or "manifest.csv row 5"
    case: str | None
    claims: str | None
    displacements: str | None = None
    options: tuple[Option, ...] = ()  # (name, value) pairs, sorted, only those given
    problem: str | None = None  # why the job cannot run; it is then reported, never run

    @property
    def paths(self) -> tuple[str, ...]:
        """The input files the job names (the case's own tables are known once it is read)."""
        return tuple(p for p in (self.case, self.claims, self.displacements) if p)


def find_jobs(target: str | Path, *, output: Path | None = None) -> tuple[list[Job], Path | None]:
    """The jobs of a folder or manifest, in a stable order, and the manifest used (if any).

    Raises InputError when `target` holds no case at all or its manifest cannot be read."""
    target = Path(target)
    if target.is_file():
        return read_manifest(target), target
    if not target.is_dir():
        raise InputError([Problem(str(target), "no such folder or manifest file")])
    manifest = target / MANIFEST_FILE
    if manifest.is_file():
        return read_manifest(manifest), manifest
    jobs = _case_folders(target, output)
    if not jobs:
        raise InputError(
            [
                Problem(
                    str(target),
                    f"no case folders found (a folder holding {CASE_FILE} and a claims table such "
                    f"as claims.csv) and no {MANIFEST_FILE}",
                )
            ]
        )
    return jobs, None


# -- case folders --------------------------------------------------------------------------------
def _case_folders(root: Path, output: Path | None) -> list[Job]:
    skip = output.resolve() if output is not None else None
    jobs: list[Job] = []
    for folder, subfolders, files in os.walk(root):
        here = Path(folder)
        # Sorted in place so the walk, and so the summary, has the same order on every machine.
        subfolders[:] = sorted(
            d for d in subfolders if not d.startswith(".") and (here / d).resolve() != skip
        )
        name = here.relative_to(root).as_posix()
        name = root.resolve().name if name == "." else name
        claims = _claims_files(here, files)
        if CASE_FILE not in files:
            if claims:
                jobs.append(
                    Job(
                        name,
                        name,
                        None,
                        None,
                        problem=f"a claims table ({claims[0].name}) without a {CASE_FILE} beside "
                        "it",
                    )
                )
            continue
        case = str((here / CASE_FILE).resolve())
        if len(claims) != 1:
            problem = (
                f"no claims table beside {CASE_FILE} (name it claims.csv, claims.xlsx or "
                "claims.pdf)"
                if not claims
                else f"several claims tables ({', '.join(p.name for p in claims)}); keep one, or "
                f"list the case in a {MANIFEST_FILE}"
            )
            jobs.append(Job(name, name, case, None, problem=problem))
            continue
        jobs.append(Job(name, name, case, str(claims[0].resolve())))
    return jobs


def _claims_files(folder: Path, files: list[str]) -> list[Path]:
    # A spreadsheet program's lock file (~$claims.xlsx) and hidden copies are not tables.
    return [
        folder / f
        for f in sorted(files)
        if Path(f).stem.casefold() == "claims" and Path(f).suffix.lower() in CLAIMS_SUFFIXES
    ]


# -- manifest ------------------------------------------------------------------------------------
def _column_key(header: str) -> str:
    return header.strip().casefold().replace("-", "_").replace(" ", "_")


def read_manifest(path: Path) -> list[Job]:
    """The jobs of a manifest CSV, one per row; see the module docstring for the columns."""
    name = str(path)
    try:
        text = read_regular_file(path, limit=CASE_FILE_MAX_BYTES).decode("utf-8-sig")
    except FileNotFoundError:
        raise InputError([Problem(name, "file not found")]) from None
    except UnreadableFile as exc:
        raise InputError([Problem(name, str(exc))]) from None
    except UnicodeDecodeError as exc:
        raise InputError(
            [Problem(name, f"not UTF-8 text (byte {exc.start}); save the manifest as UTF-8 CSV")]
        ) from None
    lines = text.splitlines()
    first = next((line for line in lines if line.strip() and not line.startswith("#")), "")
    delimiter = ";" if first.count(";") > first.count(",") else ","
    rows = [
        (number, row)
        for number, row in enumerate(csv.reader(lines, delimiter=delimiter), start=1)
        if any(cell.strip() for cell in row) and not row[0].startswith("#")
    ]
    problems = ProblemList(name)
    if not rows:
        problems.add(
            "the manifest is empty; it needs a header row (case, claims, ...) and one row per case"
        )
        problems.raise_if_any()
    header_line, header = rows[0]
    keys = [_column_key(h) for h in header]
    for h, key in zip(header, keys, strict=True):
        if key and key not in MANIFEST_COLUMNS:
            problems.add(
                f"unknown column {quoted(h)}; the columns are "
                f"{', '.join(MANIFEST_COLUMNS)}.{did_you_mean(key, MANIFEST_COLUMNS)}",
                line=header_line,
            )
    for required in ("case", "claims"):
        if required not in keys:
            problems.add(
                f"no {required!r} column in the header row (found "
                f"{', '.join(quoted(h) for h in header)})",
                line=header_line,
            )
    repeated = sorted({k for k in keys if k and keys.count(k) > 1})
    if repeated:
        problems.add(
            f"column {', '.join(repeated)} given twice in the header row", line=header_line
        )
    if len(rows) == 1:
        problems.add("the manifest has a header row but no case rows", line=header_line)
    problems.raise_if_any()
    base = path.parent.resolve()
    jobs = [
        _manifest_job(
            path.name, number, dict(zip(keys, row, strict=False)), len(row) - len(keys), base
        )
        for number, row in rows[1:]
    ]
    return _unique_names(jobs)


def _manifest_job(
    manifest: str, number: int, cells: dict[str, str], extra_cells: int, base: Path
) -> Job:
    origin = f"{manifest} row {number}"
    values = {k: v.strip() for k, v in cells.items() if k and v.strip()}
    label = values.get("name") or values.get("case") or origin
    reasons: list[str] = []
    if extra_cells > 0:
        reasons.append(f"{extra_cells} more cell(s) than the header has columns")
    paths: dict[str, str | None] = {}
    for column in PATH_COLUMNS:
        given = values.get(column)
        if given is None:
            if column != "displacements":
                reasons.append(f"no {column} given")
            paths[column] = None
            continue
        resolved = (base / given).resolve()
        if column == "case" and resolved.is_dir():  # a case folder, as `check` accepts
            resolved = resolved / CASE_FILE
        paths[column] = str(resolved)
    options: list[Option] = [(k, values[k]) for k in TEXT_OPTIONS if k in values]
    for column in NUMBER_OPTIONS:
        if column in values:
            try:
                number_value = float(values[column])
            except ValueError:
                number_value = math.nan
            if not math.isfinite(number_value):
                reasons.append(f"{column} {quoted(values[column])} is not a number")
                continue
            options.append((column, number_value))
    return Job(
        escape_controls(label),
        origin,
        paths["case"],
        paths["claims"],
        paths["displacements"],
        tuple(sorted(options)),
        problem="; ".join(reasons) or None,
    )


def _unique_names(jobs: list[Job]) -> list[Job]:
    """Two rows of one name (the same case checked with two claims tables) are told apart by row."""
    counts: dict[str, int] = {}
    for job in jobs:
        counts[job.name] = counts.get(job.name, 0) + 1
    return [
        job
        if counts[job.name] == 1
        else Job(
            f"{job.name} ({job.origin})",
            job.origin,
            job.case,
            job.claims,
            job.displacements,
            job.options,
            job.problem,
        )
        for job in jobs
    ]
