"""The batch's summary: a CSV safe to open in a spreadsheet, and an HTML index of the reports.

One row per case, in the order the jobs were found (never the order they finished, so two runs
of the same folder give the same file). Text cells go through the report CSV's formula guard: a
case named "=HYPERLINK(...)" stays text.
"""

from __future__ import annotations

import csv
import io
from html import escape as _escape_html
from urllib.parse import quote

from verify.batch.jobs import Job
from verify.batch.worker import CaseResult
from verify.errors import escape_controls
from verify.report.cautions import CAUTION
from verify.report.table_csv import neutralise

SUMMARY_COLUMNS = (
    "case",
    "status",
    "exit",
    "findings",
    "most_serious",
    "reason",
    "report",
    "seconds",
    "checked",
    "case_file",
    "claims_file",
    "origin",
)
TIME_COLUMN = "seconds"  # the one column two runs of the same folder may differ in


def _cells(job: Job, result: CaseResult) -> list[object]:
    text = [result.name, result.status]
    cells: list[object] = [neutralise(t) for t in text]
    cells += [result.exit_code, result.findings]
    cells += [neutralise(t) for t in (result.most_serious, result.reason, result.report_file)]
    cells.append(f"{result.seconds:.3f}")
    cells.append("unchanged" if result.unchanged else "this run")
    cells += [neutralise(t or "") for t in (job.case, job.claims, job.origin)]
    return cells


def render_summary_csv(pairs: list[tuple[Job, CaseResult]]) -> str:
    out = io.StringIO()
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(SUMMARY_COLUMNS)
    for job, result in pairs:
        writer.writerow(_cells(job, result))
    writer.writerow([])
    writer.writerow(["caution", CAUTION])
    return out.getvalue()


def escape(text: str) -> str:
    """HTML-escaped, control characters (from a folder or case name) shown as escapes."""
    return _escape_html(escape_controls(text))


_CSS = """
body{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;color:#1a1a1a;margin:0 auto;
max-width:1180px;padding:16px 24px;font-size:15px}
table{border-collapse:collapse}td,th{border:1px solid #bbb;padding:3px 7px;vertical-align:top}
th{background:#eee;text-align:left}
td.num{text-align:right;font-variant-numeric:tabular-nums}td.agrees{color:#00734f}td.discrepancies{color:#b34700;font-weight:bold}
td.cannot-verify{color:#8a5d00;font-weight:bold}td.bad-input,td.fault{color:#8b0000;font-weight:bold}
"""


def render_index_html(
    pairs: list[tuple[Job, CaseResult]], *, title: str, counts: dict[str, int], status_line: str
) -> str:
    """A self-contained page (no scripts, no network) linking each case's report."""
    rows = []
    for job, result in pairs:
        link = (
            f'<a href="{escape(quote(result.report_file))}">{escape(result.name)}</a>'
            if result.report_file
            else escape(result.name)
        )
        detail = result.reason if result.reason and not result.most_serious else result.most_serious
        if result.reason and result.most_serious:
            detail += f" ({result.reason})"
        rows.append(
            f'<tr><td>{link}</td><td class="{escape(result.status)}">{escape(result.status)}</td>'
            f'<td class="num">{result.findings}</td><td>{escape(detail)}</td>'
            f'<td class="num">{result.seconds:.2f}</td>'
            f"<td>{'unchanged' if result.unchanged else 'this run'}</td>"
            f"<td>{escape(job.origin)}</td></tr>"
        )
    tally = ", ".join(f"{n} {escape(status)}" for status, n in counts.items() if n)
    return (
        '<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
        f"<title>{escape(title)}</title><style>{_CSS}</style></head><body>\n"
        f"<h1>{escape(title)}</h1>\n<p><strong>{escape(status_line)}</strong></p>\n<p>{tally}.</p>\n"
        "<table><thead><tr><th>case (report)</th><th>status</th><th>findings</th><th>most serious "
        "finding, or why "
        "not checked</th><th>seconds</th><th>checked</th><th>from</th></tr></thead><tbody>\n"
        + "\n".join(rows)
        + f"\n</tbody></table>\n<p><em>Caution: {escape(CAUTION)}</em></p>\n</body></html>\n"
    )
