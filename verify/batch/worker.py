"""One case checked in-process: the same library calls as `truss-verify check`, no new process.

`check_job` runs in a worker process of the local pool or on a Dask worker. It never raises for
a case: bad input becomes a `bad-input` result with the message `check` would print, and a fault
in the tool becomes a `fault` result with the error's last line, so one case never stops the
others. The review report comes back as text; the coordinator writes every output itself, so
outputs land in one place whichever machine did the work.
"""

from __future__ import annotations

import time
import traceback
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

from verify.batch.jobs import Job
from verify.errors import (
    EXIT_AGREES,
    EXIT_BAD_INPUT,
    EXIT_CANNOT_VERIFY,
    EXIT_DISCREPANCIES,
    InputError,
)
from verify.io.files import sha256_file

EXIT_FAULT = 70  # as `check` exits on a fault in the tool (EX_SOFTWARE)
BAD_INPUT = "bad-input"
FAULT = "fault"
STATUS_EXIT = {
    "agrees": EXIT_AGREES,
    "discrepancies": EXIT_DISCREPANCIES,
    "cannot-verify": EXIT_CANNOT_VERIFY,
    BAD_INPUT: EXIT_BAD_INPUT,
    FAULT: EXIT_FAULT,
}


@dataclass(frozen=True)
class CaseResult:
    """What the summary says about one case, plus the report text (not kept in the state file)."""

    name: str
    status: str  # agrees | discrepancies | cannot-verify | bad-input | fault
    findings: int = 0
    most_serious: str = ""  # "Sign flip (dead): ..." for the first finding, most serious first
    reason: str = ""  # why a case could not be checked, or a note on its outputs
    seconds: float = 0.0
    inputs: tuple[tuple[str, str], ...] = ()  # (path, sha256) of every file the check read
    report: str | None = None  # the HTML review report
    report_file: str = ""  # where the coordinator wrote it, relative to the output folder
    unchanged: bool = False  # taken from the previous run: no input changed

    @property
    def exit_code(self) -> int:
        return STATUS_EXIT[self.status]

    def without_report(self) -> CaseResult:
        return replace(self, report=None)


def sha256_of(path: str) -> str:
    # "" for a file gone or unreadable: never equal to a real digest, so the case is rechecked.
    return sha256_file(Path(path)) or ""


def check_job(job: Job) -> CaseResult:
    """Check one job; never raises for the case's own sake (see the module docstring)."""
    start = time.perf_counter()
    if job.problem is not None:
        return CaseResult(job.name, BAD_INPUT, reason=job.problem)
    try:
        result = _review(job)
    except InputError as error:  # OptionError included: one type for every bad input
        result = CaseResult(job.name, BAD_INPUT, reason=error.render())
    except MemoryError:
        result = CaseResult(job.name, FAULT, reason="out of memory while checking this case")
    except Exception as error:  # noqa: BLE001 - a fault in the tool must not stop the other cases
        last = traceback.format_exception_only(type(error), error)[-1].strip()
        result = CaseResult(
            job.name,
            FAULT,
            reason=f"internal error (a fault in the tool; please report it): {last}",
        )
    return replace(result, seconds=time.perf_counter() - start)


# The manifest's column names where they differ from CheckOptions' fields; messages use the
# column's.
_MANIFEST_FIELDS = {"assume_equal_ea": "assume_equal_EA"}


def _review(job: Job) -> CaseResult:
    from verify.report.document import finding_sentence, render_document
    from verify.service import CheckOptions, check

    assert job.case is not None and job.claims is not None  # a job without them carries a problem
    # Manifest cells are text or numbers as read; CheckOptions checks each one's type and range.
    given: dict[str, Any] = {_MANIFEST_FIELDS.get(name, name): value for name, value in job.options}
    spelt = tuple((field, column) for column, field in _MANIFEST_FIELDS.items())
    result = check(
        job.case, job.claims, CheckOptions(**given, displacements=job.displacements, spelt=spelt)
    )
    review = result.review
    first = review.findings[0] if review.findings else None
    most_serious = (
        ""
        if first is None
        else (f"{first.title}{f' ({first.case})' if first.case else ''}: {finding_sentence(first)}")
    )
    read = dict.fromkeys(str(Path(p).resolve()) for p in result.inputs)
    return CaseResult(
        job.name,
        review.verdict.value,
        findings=len(review.findings),
        most_serious=most_serious,
        inputs=tuple((p, sha256_of(p)) for p in read),
        report=render_document(review, fmt="html", displacement_file=result.displacement_file),
    )
