"""One case checked in-process: the same library calls as `truss-verify check`, no new process.

`check_job` runs in a worker process of the local pool or on a Dask worker. It never raises for
a case: bad input becomes a `bad-input` result with the message `check` would print, and a fault
in the tool becomes a `fault` result with the error's last line, so one case never stops the
others. The review report comes back as text; the coordinator writes every output itself, so
outputs land in one place whichever machine did the work.
"""

from __future__ import annotations

import hashlib
import time
import traceback
from dataclasses import dataclass, replace
from pathlib import Path

from verify.batch.jobs import Job
from verify.errors import (
    EXIT_AGREES,
    EXIT_BAD_INPUT,
    EXIT_CANNOT_VERIFY,
    EXIT_DISCREPANCIES,
    InputError,
    OptionError,
)

EXIT_FAULT = 70  # as `check` exits on a fault in the tool (EX_SOFTWARE)
BAD_INPUT = "bad-input"
FAULT = "fault"
STATUS_EXIT = {"agrees": EXIT_AGREES, "discrepancies": EXIT_DISCREPANCIES, "cannot-verify": EXIT_CANNOT_VERIFY,
               BAD_INPUT: EXIT_BAD_INPUT, FAULT: EXIT_FAULT}


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
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return ""  # gone or unreadable: never equal to a real digest, so the case is rechecked


def check_job(job: Job) -> CaseResult:
    """Check one job; never raises for the case's own sake (see the module docstring)."""
    start = time.perf_counter()
    if job.problem is not None:
        return CaseResult(job.name, BAD_INPUT, reason=job.problem)
    try:
        result = _review(job)
    except (InputError, OptionError) as error:
        message = error.render() if isinstance(error, InputError) else str(error)
        result = CaseResult(job.name, BAD_INPUT, reason=message)
    except MemoryError:
        result = CaseResult(job.name, FAULT, reason="out of memory while checking this case")
    except Exception as error:  # noqa: BLE001 - a fault in the tool must not stop the other cases
        last = traceback.format_exception_only(type(error), error)[-1].strip()
        result = CaseResult(job.name, FAULT, reason=f"internal error (a fault in the tool; please report it): {last}")
    return replace(result, seconds=time.perf_counter() - start)


def _options(job: Job) -> dict[str, str | float]:
    return dict(job.options)


def _review(job: Job) -> CaseResult:
    from verify.analysis.pipeline import analyse
    from verify.compare.diagnose import compare_claims
    from verify.errors import Problem
    from verify.io.case import read_case
    from verify.io.claims import read_claims
    from verify.options import check_options
    from verify.report.document import finding_sentence, render_document

    assert job.case is not None and job.claims is not None  # a job without them carries a problem
    given = _options(job)
    options = check_options(sign=given.get("sign", "auto"), unit=given.get("unit"),
                            rtol=given.get("rtol", 0.01), atol_fraction=given.get("atol_fraction", 1e-3),
                            assume_equal_EA=given.get("assume_equal_ea"),
                            names={"atol_fraction": "atol_fraction", "assume_equal_EA": "assume_equal_ea"})
    model = read_case(job.case)

    def text(key: str) -> str | None:
        value = given.get(key)
        return None if value is None else str(value)

    claims = read_claims(job.claims, model, sheet=text("sheet"), member_column=text("member_column"),
                         case_column=text("case_column"), force_column=text("force_column"),
                         case=text("load_case"), pages=text("pages"))
    if not claims.values and claims.unmatched:
        labels = ", ".join(f"'{u.label}'" for u in claims.unmatched[:5])
        raise InputError([Problem(job.claims, f"no label matches a member or reaction of {job.case} (e.g. {labels}); "
                                              "is this the claims table for this case?")])
    displacement_claims = None
    if job.displacements:
        from verify.io.displacements import read_displacements

        displacement_claims = read_displacements(job.displacements, model)
    analysis = analyse(model, assume_equal_EA=options.assume_equal_EA, displacements=displacement_claims is not None)
    review = compare_claims(analysis, claims, sign=options.sign, unit=options.unit, tolerance=options.tolerance)
    if displacement_claims is not None:
        from verify.compare.displacements import attach_displacements, compare_displacements

        review = attach_displacements(review, compare_displacements(analysis, displacement_claims, tolerance=options.tolerance))
    first = review.findings[0] if review.findings else None
    most_serious = "" if first is None else (
        f"{first.title}{f' ({first.case})' if first.case else ''}: {finding_sentence(first)}")
    read = [job.case, *model.tables, job.claims, *([job.displacements] if job.displacements else [])]
    return CaseResult(job.name, review.verdict.value, findings=len(review.findings), most_serious=most_serious,
                      inputs=tuple((p, sha256_of(p)) for p in dict.fromkeys(str(Path(p).resolve()) for p in read)),
                      report=render_document(review, fmt="html"))
