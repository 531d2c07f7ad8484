"""What the last run of a job folder checked: each case's input hashes and its summary row.

A case is skipped on a rerun when its fingerprint is unchanged: the tool's version, the job's
files and options, and the SHA-256 of every file the last check read (case file, the CSV tables
it names, claims table, displacements), and its report is still there. Only checked cases
(agrees, discrepancies, cannot-verify) are remembered: a bad case is always tried again, since
the file that made it bad (a table the case names, for one) may not be among those hashed.
A missing or unreadable state file means every case is checked.
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import asdict
from pathlib import Path
from typing import Any

from verify import __version__
from verify.batch.jobs import Job
from verify.batch.worker import BAD_INPUT, FAULT, CaseResult, sha256_of

STATE_FILE = ".truss-verify-batch.json"
STATE_FORMAT = 1


def fingerprint(job: Job, inputs: tuple[tuple[str, str], ...]) -> str:
    facts = {
        "tool": __version__,
        "case": job.case,
        "claims": job.claims,
        "displacements": job.displacements,
        "options": [list(o) for o in job.options],
        "inputs": [list(i) for i in inputs],
    }
    return hashlib.sha256(json.dumps(facts, sort_keys=True).encode()).hexdigest()


def load_state(path: Path) -> dict[str, Any]:
    """The remembered cases by name; {} when there is no usable state file."""
    try:
        data = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    if (
        not isinstance(data, dict)
        or data.get("format") != STATE_FORMAT
        or not isinstance(data.get("cases"), dict)
    ):
        return {}
    return data["cases"]


def unchanged_result(job: Job, remembered: dict[str, Any], output: Path) -> CaseResult | None:
    """The last run's result for `job` when nothing it read has changed, else None."""
    entry = remembered.get(job.name)
    if not isinstance(entry, dict):
        return None
    try:
        row = dict(entry["row"])
        inputs = tuple((str(p), str(d)) for p, d in row.pop("inputs"))
        previous = CaseResult(**row, inputs=inputs)
    except (KeyError, TypeError, ValueError):
        return None
    if previous.status in (BAD_INPUT, FAULT) or not inputs:
        return None
    now = tuple((p, sha256_of(p)) for p, _ in inputs)
    if entry.get("fingerprint") != fingerprint(job, now):
        return None
    if not previous.report_file or not (output / previous.report_file).is_file():
        return None
    return CaseResult(**{**asdict(previous), "inputs": inputs, "unchanged": True})


def render_state(pairs: list[tuple[Job, CaseResult]]) -> str:
    cases = {}
    for job, result in pairs:
        if result.status in (BAD_INPUT, FAULT):
            continue
        row = asdict(result.without_report())
        row.pop("report")
        row["unchanged"] = False
        cases[job.name] = {"fingerprint": fingerprint(job, result.inputs), "row": row}
    return (
        json.dumps(
            {"format": STATE_FORMAT, "tool": __version__, "cases": cases}, indent=1, sort_keys=True
        )
        + "\n"
    )
