"""The review report: one self-contained HTML file (or Markdown) for the review memo.

Content, in order: header (verdict, date, tool, input hashes, units, convention, tolerances,
stability), the truss diagram (HTML only), the findings (most serious first), the member table per
load case and combination, the hand-calc appendix and the cautions.

The HTML needs no network and no JavaScript: inline CSS only, a Content-Security-Policy that
forbids every fetch and script, and every text taken from the inputs escaped (labels come from
other people's spreadsheets). Same review and `generated` date give byte-identical output.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Mapping
from dataclasses import dataclass, field
from html import escape
from pathlib import Path
from typing import Any

import numpy as np

from verify import __version__
from verify.compare.diagnose import Review, Row
from verify.compare.findings import Finding
from verify.compare.rows import Rows
from verify.io.files import sha256_file
from verify.model import Model
from verify.report.calc_sheet_html import FREE_BODY_CSS, reactions_html, sheet_html
from verify.report.cautions import CAUTION, ELASTIC_CAUTION, SHORT_CAUTION
from verify.report.deflection import deflection_table, unit_load_calcs
from verify.report.diagram import (
    OUTLINE_SUPPORTS,
    STATUS_STYLES,
    RowStatuses,
    legend_html,
    render_diagram,
    status_category,
    used_categories,
    worst_status,
)
from verify.report.handcalc_html import Block, appendix_blocks
from verify.report.joint_calc import render_html as joint_calc_html
from verify.report.names import method_phrase
from verify.report.numbers import (
    difference_text,
    fmt,
    fmt_percent,
    fmt_ratio,
    roundoff_text,
    tc,
)
from verify.report.tables import Table
from verify.report.written import table_place, written_at

NOT_CAPACITY = (
    "This figure compares claimed with recomputed forces; it is not a capacity check and says "
    "nothing about whether a member is strong enough."
)
LARGE_MODEL_MEMBERS = 2000  # above this: appendix for one load column, steps capped, one diagram
ROW_STATUSES_FROM = LARGE_MODEL_MEMBERS  # a load column of more rows: its statuses read by codes
MAX_APPENDIX_STEPS_LARGE = 60  # joint steps shown per load column for a large model
APPENDIX_ALL_MEMBERS = 100  # up to this size every free body is in the appendix
MAX_FLAGGED_SHEETS = 40  # above it: the free bodies of at most this many flagged members ...
SAMPLE_SHEETS = 6  # ... and a sample of this many cuts
MAX_APPENDIX_COLUMNS = 6  # load columns with a hand calc in a small model's appendix
MAX_DIAGRAMS = 4  # load columns drawn
MAX_TABLE_ROWS = 3000  # rows per load column in the member table; problems are always listed first
MAX_FINDING_MEMBERS = 25  # member names quoted per finding
EXACT_MAX_MEMBERS = 400  # exact fractions only for models up to this size (cost and length)

MEMBER_COLUMNS = (
    "member",
    "claimed",
    "joints",
    "sections",
    "global",
    "T/C",
    "difference",
    "status",
    "claim as written",
)
NUMERIC_COLUMNS = frozenset(
    (
        "claimed",
        "joints",
        "sections",
        "global",
        "elastic",
        "difference",
        "recomputed",
        "decimal",
        "Rx",
        "Ry",
        "Rz",
        "computed",
        "case load",
        "claims balance",
        "N",
        "n",
        "L",
        "EA",
        "n·N·L/EA",
    )
)


def with_unit(name: str, unit: str) -> str:
    """A column heading with its unit: 'claimed (kN)'; columns of words or T/C keep their name."""
    return f"{name} ({unit})" if name in NUMERIC_COLUMNS else name


def base_name(header: str) -> str:
    """The column's name without its unit: 'claimed (kN)' -> 'claimed'."""
    return header.split(" (", 1)[0]


@dataclass(frozen=True)
class InputFile:
    role: str
    path: str
    sha256: str | None
    note: str = ""


# -- content gathered once, rendered twice ------------------------------------------------------
def input_files(
    review: Review, displacement_file: tuple[str, str] | None = None
) -> list[InputFile]:
    """The case file, every CSV table it names, the claims file and the claimed displacements
    (path, SHA-256 of the bytes read), each with its SHA-256."""
    model = review.analysis.model
    case_digest = sha256_file(model.source)
    out = [
        InputFile(
            "case file",
            model.source,
            case_digest,
            "" if case_digest else "not readable now (model built in memory or file moved)",
        )
    ]
    # The tables the case reader found (Model.tables): the case file is not parsed again here.
    for path in model.tables:
        digest = sha256_file(path)
        out.append(
            InputFile(
                f"table '{Path(path).name}'",
                str(path),
                digest,
                "" if digest else "not readable now",
            )
        )
    claims = review.claims
    out.append(
        InputFile(
            "claims" + table_place(claims.sheet),
            claims.source,
            claims.sha256 or None,
        )
    )
    if displacement_file is not None:
        out.append(
            InputFile("claimed displacements", displacement_file[0], displacement_file[1] or None)
        )
    return out


def _verdict_text(review: Review) -> tuple[str, str]:
    from verify.report.review_text import verdict_line

    word = {"agrees": "AGREES", "discrepancies": "DISCREPANCIES", "cannot-verify": "CANNOT VERIFY"}[
        review.verdict.value
    ]
    line = verdict_line(review)
    return word, line.split(" — ", 1)[1] if " — " in line else line


def header_facts(review: Review, generated: str) -> list[tuple[str, str]]:
    model = review.analysis.model
    s = review.analysis.stability
    c = review.convention
    t = review.tolerance
    d = s.dim
    facts = [
        ("Generated", f"{generated} by truss-verify {__version__}"),
        (
            "Units (case)",
            f"length {model.units.length.symbol}, force {model.units.force.symbol}; forces "
            "tension positive",
        ),
        (
            "Claims read in",
            f"{c.unit} ({_unit_source(c.unit_source)})"
            + "".join(f"; {r}" for r in c.column_readings),
        ),
        (
            "Sign convention of the claims",
            f"{c.sign_words}; {c.support}",
        ),
        (
            "Tolerance",
            f"agrees when |claimed − recomputed| ≤ the largest of {fmt_percent(t.rtol)} of the "
            f"larger value, {fmt_ratio(t.atol_fraction)} × the largest recomputed force of the "
            "load column, and half a unit in the last decimal the claim was written with",
        ),
        (
            "Structure",
            f"{s.classification.value}, {d}D: {s.joints} joints, {s.members} members, "
            f"{s.reactions} reaction components",
        ),
        (
            "Maxwell's rule",
            f"b + r − {d}j = {s.members} + {s.reactions} − {d}×{s.joints} = {s.maxwell}",
        ),
        (
            "Rank of the equilibrium matrix",
            f"{s.rank} of {d * s.joints} joint equations ({method_phrase(s.method)}); "
            f"mechanisms: {s.mechanisms}{'' if s.exact_counts else ' (at least)'}, "
            f"states of self-stress: {s.self_stress}",
        ),
    ]
    if s.conditioning_ratio is not None:
        facts.append(
            (
                "Conditioning",
                f"σmin/σmax = {fmt_ratio(s.conditioning_ratio)}; scaled by the square of the "
                f"extent ratio (model size over median member length, {fmt(s.extent_ratio, 3)}²) = "
                f"{fmt_ratio(s.scaled_conditioning)}" + _conditioning_word(s),
            )
        )
    elif s.scaled_conditioning is not None:
        facts.append(
            (
                "Conditioning",
                f"LU pivot ratio min/max = {fmt_ratio(s.scaled_conditioning)}"
                + (" — near-mechanism" if s.ill_conditioned else ""),
            )
        )
    routes = _routes(review)
    if routes:
        facts.append(("Methods compared", routes))
    checked = ", ".join(f"'{n}'" for n in review.checked_cases) or "none"
    facts.append(
        (
            "Checked",
            f"{review.checked_members} of {len(model.members)} members; load columns {checked} "
            f"of {len(model.load_names)} ({', '.join(model.load_names)})",
        )
    )
    return facts


def _conditioning_word(s: object) -> str:
    """Said only of a stable truss: a mechanism has no conditioning to call sound."""
    if getattr(s, "ill_conditioned", False):
        return " — near-mechanism"
    return " — well conditioned" if getattr(s, "is_stable", False) else ""


def _unit_source(source: str) -> str:
    return {
        "option": "stated with --unit",
        "table": "stated in the table",
        "assumed": "not stated: the case's unit is assumed",
        "inferred": "inferred from the data",
    }.get(source, source)


def _routes(review: Review) -> str:
    analysis = review.analysis
    if analysis.global_ is not None:
        used = ["method of joints", "global solve"] + (
            ["section cuts"] if analysis.sections is not None else []
        )
        return f"{', '.join(used)} {roundoff_text(analysis.route_disagreement)}" + (
            " — beyond round-off, check the geometry" if analysis.route_disagreement > 1e-6 else ""
        )
    if analysis.elastic is not None:
        assumed = (
            " (equal EA ASSUMED for every member)"
            if getattr(analysis.elastic, "equal_EA_assumed", False)
            else ""
        )
        return (
            f"direct stiffness method{assumed}: statics alone do not fix the forces of an "
            "indeterminate truss. " + ELASTIC_CAUTION
        )
    return ""


def notes(review: Review) -> list[str]:
    analysis = review.analysis
    out = list(review.notes) + list(analysis.notes) + list(analysis.stability.notes)
    if analysis.joints is not None:
        out.extend(analysis.joints.notes)
    # loads the case states as line loads, self-weight, angles or normals: the joint loads they
    # became
    out.extend(f"load converted: {text}" for text in analysis.model.conversions)
    return list(dict.fromkeys(out))


def finding_sentence(f: Finding) -> str:
    """One plain sentence: the finding's detail and the members involved."""
    detail = f.detail.rstrip()
    if not detail.endswith("."):
        detail += "."
    if f.members and f.kind != "missing-claim":
        shown = ", ".join(f.members[:MAX_FINDING_MEMBERS])
        more = (
            f" and {len(f.members) - MAX_FINDING_MEMBERS} more"
            if len(f.members) > MAX_FINDING_MEMBERS
            else ""
        )
        # A displacement finding lists the joints that move, not members.
        noun = "Joints" if f.kind.startswith("displacement") else "Members"
        detail += f" {noun}: {shown}{more}."
    where = written_at(f)
    if where:
        detail += f" Written at: {where}."
    if f.next_step:
        detail += f" Next step: {f.next_step}"
    return detail


def _load_label(review: Review, name: str) -> str:
    model = review.analysis.model
    combos = {c.name: c for c in model.combinations}
    if name in combos:
        terms = " + ".join(f"{fmt(f)} × {case}" for case, f in combos[name].factors.items())
        return f"Combination '{name}' = {terms}"
    return f"Load case '{name}'"


@dataclass
class _CaseRows:
    """The review's rows sorted out by load column in one pass over the columns of words (a
    10^6-member review has 2x10^6 rows: a Row is made only for a row a table shows)."""

    rows: Rows
    members: dict[str, np.ndarray] = field(default_factory=dict)  # row positions, table order
    reactions: dict[str, np.ndarray] = field(default_factory=dict)
    flagged: dict[str, list[str]] = field(default_factory=dict)  # ids with a finding, in order


def case_rows(review: Review) -> _CaseRows:
    """The review's rows by load column, made once by each renderer and handed to its parts."""
    rows = Rows.as_columns(review.rows)
    grouped = _CaseRows(rows)
    cases, case_words = rows.words("case")
    statuses, status_words = rows.words("status")
    ids, id_words = rows.words("id")
    flagging = np.array(
        [status_category(s) not in ("agrees", "missing") for s in status_words] or [False]
    )
    for kind, into in (("member", grouped.members), ("reaction", grouped.reactions)):
        at = np.flatnonzero(rows.holds("kind", kind))
        for code in first_seen(cases[at], len(case_words)):  # load columns as their rows come
            into[case_words[code]] = at[cases[at] == code]
    for case, at in grouped.members.items():
        bad = at[flagging[statuses[at]]]
        if bad.size:
            grouped.flagged[case] = list(dict.fromkeys(id_words[i] for i in ids[bad].tolist()))
    return grouped


FIRST_SEEN_BY_COUNT = 64  # up to this many codes, each code's first row is found by a scan


def first_seen(codes: np.ndarray, count: int) -> list[int]:
    """`list(dict.fromkeys(codes.tolist()))` (each code of range(count) present, in the order
    of its first row) without a Python int per row: two load columns of a 10^6-member review
    are found by a count and a scan each."""
    if count > FIRST_SEEN_BY_COUNT or not codes.size:
        return list(dict.fromkeys(codes.tolist()))
    present = np.flatnonzero(np.bincount(codes, minlength=count)).tolist()
    first = [int(np.argmax(codes == code)) for code in present]
    return [code for _, code in sorted(zip(first, present, strict=True))]


def member_tables(review: Review, grouped: _CaseRows) -> list[Table]:
    """Per load column: claimed and recomputed members, then reactions; recomputed only where
    unclaimed."""
    model = review.analysis.model
    unit = model.units.force.symbol
    recomputed_name = "global" if review.analysis.global_ is not None else "elastic"
    header = tuple(with_unit(recomputed_name if h == "global" else h, unit) for h in MEMBER_COLUMNS)
    tables: list[Table] = []
    member_index = model.member_index
    ids, id_words = grouped.rows.words("id")
    if id_words == model.member_ids:  # the comparison's own labels: codes are member positions
        position_of = np.arange(max(len(id_words), 1))
    else:
        position_of = np.array([member_index.get(w, -1) for w in id_words] or [0], np.int64)
    for k, name in enumerate(model.load_names):
        label = _load_label(review, name)
        at = grouped.members.get(name, np.empty(0, dtype=np.int64))
        positions = position_of[ids[at]]
        if (np.diff(positions) < 0).any():  # usually in member order
            at = at[np.argsort(positions, kind="stable")]
        reactions = grouped.rows.take(grouped.reactions.get(name, ()))
        if at.size or reactions:
            shown, note = _cap(grouped.rows, at)
            cells = tuple(_member_cells(r) for r in shown)
            tables.append(
                Table(
                    f"{label}: members",
                    f"Forces in {unit}, tension positive; T/C of the recomputed force.",
                    header,
                    cells,
                    tuple(r.status for r in shown),
                    note,
                )
            )
            if reactions:
                rcells = tuple(
                    (
                        r.id,
                        fmt(r.claimed),
                        fmt(r.global_ if r.global_ is not None else r.elastic),
                        difference_text(
                            r.difference,
                            r.claimed,
                            r.written,
                            max(
                                abs(v)
                                for v in (r.claimed, r.global_, r.elastic, 0.0)
                                if v is not None
                            ),
                        ),
                        r.status,
                        r.written,
                    )
                    for r in reactions
                )
                tables.append(
                    Table(
                        f"{label}: reactions",
                        f"Reaction components in {unit}, along the global axes.",
                        tuple(
                            with_unit(h, unit)
                            for h in (
                                "reaction",
                                "claimed",
                                "recomputed",
                                "difference",
                                "status",
                                "claim as written",
                            )
                        ),
                        rcells,
                        tuple(r.status for r in reactions),
                    )
                )
            continue
        ref = review.analysis.reference
        if ref is None:
            continue
        cells_list = []
        for i, member in enumerate(model.members[:MAX_TABLE_ROWS]):
            cells_list.append((member.id,) + _route_cells(review, i, k))
        note = (
            f"{len(model.members) - MAX_TABLE_ROWS} further members are not listed; "
            "`truss-verify solve --json` gives them all."
            if len(model.members) > MAX_TABLE_ROWS
            else ""
        )
        tables.append(
            Table(
                f"{label}: recomputed only",
                f"No claims in this load column. Forces in {unit}, tension positive.",
                tuple(
                    with_unit(h, unit)
                    for h in ("member", "joints", "sections", recomputed_name, "T/C")
                ),
                tuple(cells_list),
                ("",) * len(cells_list),
                note,
            )
        )
    return tables


def _cap(rows: Rows, at: np.ndarray) -> tuple[list[Row], str]:
    """The rows at positions `at` that a member table shows, and what it leaves out."""
    if at.size <= MAX_TABLE_ROWS:
        return rows.take(at), ""
    # Problems first, then the rows that agree or have no claim, shown in table order.
    fine = rows.holds("status", "agrees", "missing-claim")[at]
    problems = np.flatnonzero(~fine)
    chosen = problems[:MAX_TABLE_ROWS]
    if chosen.size < MAX_TABLE_ROWS:
        rest = np.flatnonzero(fine)[: MAX_TABLE_ROWS - chosen.size]
        chosen = np.concatenate([chosen, rest])
    shown = rows.take(at[np.sort(chosen)])
    return shown, (
        f"{at.size - len(shown)} rows that agree or have no claim are not listed (large model); "
        "`truss-verify check --csv` writes the full table."
    )


def _route_value(route: Any, i: int, k: int) -> float | None:
    """A route's force: `route` is a ForceResult or a solution holding one as `.forces`."""
    if route is None:
        return None
    forces: Any = getattr(route, "forces", route)
    value = float(forces.member_forces[i, k])
    return value if math.isfinite(value) else None


def _route_cells(review: Review, i: int, k: int) -> tuple[str, ...]:
    a = review.analysis
    joints = _route_value(a.joints, i, k)
    sections = _route_value(a.sections, i, k)
    reference = a.reference
    value = _route_value(reference, i, k)
    zero = _zero_tol(review, k)
    sections_text = (
        fmt(_clean_zero(sections, zero))
        if sections is not None
        else ("not reached" if a.sections is not None else "—")
    )
    return (
        fmt(_clean_zero(joints, zero)),
        sections_text,
        fmt(_clean_zero(value, zero)),
        tc(value, zero_tol=zero),
    )


def _zero_tol(review: Review, k: int) -> float:
    ref = review.analysis.reference
    if ref is None or not ref.member_forces.size:
        return 0.0
    column = ref.member_forces[:, k]
    largest = float(np.nanmax(np.abs(column))) if np.isfinite(column).any() else 0.0
    return 1e-9 * (largest or 1.0)


def _clean_zero(value: float | None, zero: float) -> float | None:
    return 0.0 if value is not None and abs(value) <= zero else value


def _member_cells(row: Row) -> tuple[str, ...]:
    recomputed = row.recomputed
    sections = (
        fmt(row.sections)
        if row.sections is not None
        else ("not reached" if row.joints is not None else "—")
    )
    scale = max(abs(v) for v in (row.joints, row.global_, row.elastic, 0.0) if v is not None)
    zero = 1e-9 * (scale or 1.0)
    return (
        row.id,
        fmt(row.claimed),
        fmt(_clean_zero(row.joints, zero)),
        sections,
        fmt(_clean_zero(row.global_ if row.global_ is not None else row.elastic, zero)),
        tc(recomputed, zero_tol=zero) if recomputed is not None else "—",
        difference_text(
            row.difference, row.claimed, row.written, max(scale, abs(row.claimed or 0.0))
        ),
        row.status,
        row.written,
    )


def diagram_columns(review: Review, grouped: _CaseRows) -> list[str]:
    """Load columns to draw: those with problems first, then the other checked ones; at most
    MAX_DIAGRAMS."""
    model = review.analysis.model
    checked = [n for n in model.load_names if n in review.checked_cases]
    if not checked:
        return model.load_names[:1]
    bad = grouped.flagged
    limit = 1 if len(model.members) > LARGE_MODEL_MEMBERS else MAX_DIAGRAMS
    ordered = [n for n in checked if n in bad] + [n for n in checked if n not in bad]
    keep = set(ordered[:limit])
    return [n for n in checked if n in keep]


def member_statuses(
    grouped: _CaseRows, load_name: str, index: Mapping[str, int] | None = None
) -> Mapping[str, str]:
    """Member id -> the status drawn for one load column (the most serious of its claims).
    `index`, when given, maps each id word of the rows to its code (the model's member index
    when the rows' id words are the model's ids)."""
    at = grouped.members.get(load_name, np.empty(0, dtype=np.int64))
    ids, id_words = grouped.rows.words("id")
    statuses, status_words = grouped.rows.words("status")
    if at.size > ROW_STATUSES_FROM and np.bincount(ids[at]).max() == 1:
        # one claim per member: read from the codes, no dict of every member
        return RowStatuses(ids[at], id_words, statuses[at], status_words, index)
    pairs = zip(
        map(id_words.__getitem__, ids[at].tolist()),
        map(status_words.__getitem__, statuses[at].tolist()),
        strict=True,
    )
    if not at.size or np.bincount(ids[at]).max() == 1:  # one claim per member: its status
        return dict(pairs)
    by_member: dict[str, list[str]] = {}
    for member, status in pairs:
        by_member.setdefault(member, []).append(status)
    out = {}
    for member, seen in by_member.items():
        category = worst_status(seen)
        out[member] = next(s for s in seen if status_category(s) == category)
    return out


def appendix_columns(review: Review) -> list[str]:
    model = review.analysis.model
    checked = [n for n in model.load_names if n in review.checked_cases] or model.load_names[:1]
    if len(model.members) > LARGE_MODEL_MEMBERS:
        return checked[:1]
    return checked[:MAX_APPENDIX_COLUMNS]


def appendix_members(
    review: Review, grouped: _CaseRows, load_name: str, book: Any = None
) -> list[str] | None:
    """Members whose section cuts the appendix shows in one load column (None: every cut).

    Up to APPENDIX_ALL_MEMBERS members every free body is shown: a hand calc a checker can read
    in full (about half a printed page per free body). Above, the flagged members (a finding in
    this column, at most MAX_FLAGGED_SHEETS) and an evenly spread sample of SAMPLE_SHEETS cuts:
    the report stays a few MB at any size, and `cut` or `solve --show sections` print the rest.
    """
    model = review.analysis.model
    if len(model.members) <= APPENDIX_ALL_MEMBERS:
        return None
    flagged = grouped.flagged.get(load_name, [])[:MAX_FLAGGED_SHEETS]
    sample = book.sample(SAMPLE_SHEETS) if book is not None else []
    return list(dict.fromkeys(flagged + sample))


def appendix(review: Review, grouped: _CaseRows) -> tuple[list[tuple[str, list[Block]]], str]:
    model = review.analysis.model
    large = len(model.members) > LARGE_MODEL_MEMBERS
    columns = appendix_columns(review)
    solution = review.analysis.sections
    book = solution.calc_sheets(model) if solution is not None else None  # once for every column
    sections = []
    for name in columns:
        blocks = appendix_blocks(
            review.analysis,
            name,
            book=book,
            members=appendix_members(review, grouped, name, book),
            max_steps=MAX_APPENDIX_STEPS_LARGE if large else None,
            exact=len(model.members) <= EXACT_MAX_MEMBERS,
        )
        sections.append((_load_label(review, name), blocks))
    checked = [n for n in model.load_names if n in review.checked_cases]
    notes = []
    source = Path(model.source).name if model.source else "CASE"
    if large:
        notes.append(
            f"Large model ({len(model.members)} members): the hand calc is shown for the first "
            f"load column only and at most {MAX_APPENDIX_STEPS_LARGE} joint steps; "
            f"`truss-verify solve {source} --show all` prints the rest."
        )
    elif len(checked) > len(columns):
        notes.append(
            f"The hand calc is shown for the first {len(columns)} checked load columns; "
            f"`truss-verify solve {source} --show all` prints every one."
        )
    if len(model.members) > APPENDIX_ALL_MEMBERS and review.analysis.sections is not None:
        notes.append(
            f"Section cuts are shown for the members with a finding (at most "
            f"{MAX_FLAGGED_SHEETS}) and a sample of {SAMPLE_SHEETS} cuts spread over the "
            f"truss, not for all {len(model.members)} members; "
            f"`truss-verify cut {source} --members A,B,C` prints the calc sheet of any section "
            f"and `truss-verify solve {source} --show sections` every cut."
        )
    return sections, " ".join(notes)


def _generated(generated: str | None) -> str:
    return generated if generated is not None else _dt.date.today().isoformat()


# -- HTML ----------------------------------------------------------------------------------------
CSS = """
body{font-family:'DejaVu Sans',Verdana,Arial,sans-serif;color:#1a1a1a;background:#fff;\
margin:0 auto;max-width:1180px;padding:16px 24px;line-height:1.45;font-size:15px}
h1{font-size:1.55em;margin:.2em 0}h2{font-size:1.25em;border-bottom:2px solid #1a1a1a;\
padding-bottom:2px;margin-top:1.6em}
h3{font-size:1.05em;margin-top:1.2em}h4{font-size:1em;margin:1em 0 .3em}
.verdict{font-size:1.3em;font-weight:bold;padding:8px 12px;border:3px solid #1a1a1a;\
display:inline-block;margin:.4em 0}
.verdict.discrepancies{border-width:5px}.verdict.cannot-verify{border-style:dashed}
table{border-collapse:collapse;margin:.4em 0 1em}td,th{border:1px solid #bbb;padding:3px 7px;\
vertical-align:top}
th{background:#eee;text-align:left;white-space:nowrap}td.num{text-align:right;\
font-variant-numeric:tabular-nums;white-space:nowrap}
table.members td,table.calc td{white-space:nowrap}
table.facts th{width:16em;white-space:normal}\
table.inputs td.hash{font-family:'DejaVu Sans Mono',monospace;font-size:.85em;word-break:break-all}
table.legend{border:none}table.legend td{border:none;padding:1px 6px}\
table.legend caption{text-align:left;font-weight:bold}
figure.truss{margin:0}.view{margin:.6em 0}.view-name{font-weight:bold}figcaption{font-style:italic;\
margin:.2em 0}
pre{background:#f6f6f6;border:1px solid #ddd;padding:8px;overflow-x:auto;font-size:.85em;\
line-height:1.35;white-space:pre-wrap}
.sev{font-weight:bold;font-size:.85em;margin-right:.4em;white-space:nowrap}
.sev.error{text-transform:uppercase}.sev.cannot-verify{text-transform:uppercase;\
text-decoration:underline}
li.finding{margin:.35em 0}.caution{border:2px solid #1a1a1a;padding:8px 12px;background:#fafafa}
td.st{white-space:nowrap}.mark{display:inline-block;min-width:1.3em;text-align:center;\
font-weight:bold;border-radius:50%;border:2px solid;margin-right:4px;background:#fff}
@media print{
@page{margin:12mm}
body{max-width:none;padding:0;font-size:9pt;line-height:1.3}
h2{break-after:avoid}h3,h4{break-after:avoid}
section.major{break-before:page}
tr,li.finding,figure.truss .view,pre{break-inside:avoid}thead{display:table-header-group}
svg{max-width:100%;height:auto}figure.truss svg{max-height:240mm}
table.members,table.calc{font-size:8pt}td,th{padding:1px 4px}
.caution{background:none}th{background:none;border-bottom:1.5px solid #1a1a1a}
}
"""

CSP = (
    "default-src 'none'; style-src 'unsafe-inline'; img-src data:; form-action 'none'; "
    "base-uri 'none'"
)


def _e(text: object) -> str:
    return escape(str(text), quote=True)


def _status_cell(status: str) -> str:
    if not status:
        return "<td></td>"
    style = STATUS_STYLES[status_category(status)]
    if not style.marker:  # agreement: plain words, no colour, no mark
        return f'<td class="st">{_e(status)}</td>'
    return (
        '<td class="st flagged"><span class="mark" '
        f'style="border-color:{style.colour}">{_e(style.marker)}</span>'
        f"{_e(status)}</td>"
    )


def _html_table(
    header: tuple[str, ...],
    rows: tuple[tuple[str, ...], ...],
    statuses: tuple[str, ...] | None = None,
    css: str = "",
) -> str:
    numeric = {h for h in header if base_name(h) in NUMERIC_COLUMNS}
    out = [
        f'<table class="{css}"><thead><tr>'
        + "".join(f"<th>{_e(h)}</th>" for h in header)
        + "</tr></thead><tbody>"
    ]
    for n, row in enumerate(rows):
        cells = []
        for h, cell in zip(header, row, strict=True):
            if h == "status" and statuses is not None:
                cells.append(_status_cell(statuses[n]))
            elif h in numeric:
                cells.append(f'<td class="num">{_e(cell)}</td>')
            elif h == "claim as written":
                cells.append(f'<td class="written">{_e(cell)}</td>')
            else:
                cells.append(f"<td>{_e(cell)}</td>")
        out.append("<tr>" + "".join(cells) + "</tr>")
    out.append("</tbody></table>")
    return "".join(out)


def _html_blocks(model: Model, blocks: list[Block], level: int, prefix: str) -> list[str]:
    """Appendix blocks in HTML; `prefix` makes the ids of the drawings' arrowheads unique."""
    out = []
    for n, block in enumerate(blocks):
        out.append(f"<h{level}>{_e(block.heading)}</h{level}>")
        if block.kind == "sheet" and block.sheet is not None:
            out.append(sheet_html(model, block.sheet, f"{prefix}-{n}"))
        elif block.kind == "reactions" and block.reactions is not None:
            out.append(reactions_html(model, block.reactions))
        elif block.kind == "joints" and block.joints is not None:
            text = block.text.split("\n\n… ", 1)  # a note of steps left out (large models)
            out.append(joint_calc_html(block.joints))
            if len(text) > 1:
                out.append(f"<p>… {_e(text[1])}</p>")
        elif block.kind in ("pre", "reactions", "sheet", "joints"):
            out.append(f"<pre>{_e(block.text)}</pre>")
        elif block.kind == "table":
            if block.text:
                out.append(f"<p>{_e(block.text)}</p>")
            out.append(_html_table(block.header, block.rows))
        else:
            out.append(f"<p>{_e(block.text)}</p>")
    return out


def render_html(
    review: Review,
    *,
    generated: str | None = None,
    displacement_file: tuple[str, str] | None = None,
) -> str:
    model = review.analysis.model
    grouped = case_rows(review)  # the rows by load column, for every part below
    date = _generated(generated)
    word, summary = _verdict_text(review)
    title = model.title or Path(model.source).name or "truss"
    out = [
        "<!DOCTYPE html>",
        '<html lang="en">',
        "<head>",
        '<meta charset="utf-8">',
        f'<meta http-equiv="Content-Security-Policy" content="{CSP}">',
        '<meta name="viewport" content="width=device-width, initial-scale=1">',
        f"<title>Truss review: {_e(title)}</title>",
        f"<style>{CSS}{FREE_BODY_CSS}</style>",
        "</head>",
        "<body>",
    ]
    out.append('<header id="summary">')
    out.append(f"<h1>Truss review: {_e(title)}</h1>")
    out.append(f'<div class="verdict {_e(review.verdict.value)}">Verdict: {_e(word)}</div>')
    out.append(f"<p>{_e(summary)}</p>")
    out.append(f'<p class="caution">{_e(SHORT_CAUTION)}</p>')
    out.append(
        '<table class="facts"><tbody>'
        + "".join(
            f"<tr><th>{_e(k)}</th><td>{_e(v)}</td></tr>" for k, v in header_facts(review, date)
        )
        + "</tbody></table>"
    )
    out.append("</header>")

    out.append('<section id="findings"><h2>Findings</h2>')
    if review.findings:
        out.append('<ol class="findings">')
        for f in review.findings:
            case = f" ({_e(f.case)})" if f.case else ""
            out.append(
                f'<li class="finding {_e(f.kind)}"><span class="sev {_e(f.severity.value)}">'
                f"[{_e(f.severity.value)}]</span> "
                f"<strong>{_e(f.title)}</strong>{case}: {_e(finding_sentence(f))}</li>"
            )
        out.append("</ol>")
    else:
        out.append("<p>No findings: every claim checked agrees within tolerance.</p>")
    out.append("</section>")

    out.append('<section id="inputs"><h2>Input files</h2>')
    files = input_files(review, displacement_file)
    out.append(
        "<table "
        'class="inputs"><thead><tr><th>input</th><th>file</th><th>SHA-256</th></tr></thead><tbody>'
        + "".join(
            f"<tr><td>{_e(f.role)}</td><td>{_e(f.path)}</td><td "
            f'class="hash">{_e(f.sha256 or f.note)}</td></tr>'
            for f in files
        )
        + "</tbody></table>"
    )
    extra = notes(review)
    if extra:
        out.append("<h3>Notes</h3><ul>" + "".join(f"<li>{_e(n)}</li>" for n in extra) + "</ul>")
    out.append("</section>")

    out.append('<section id="diagram" class="major"><h2>Diagram</h2>')
    out.extend(diagrams_html(review, grouped))
    out.append("</section>")

    loads_table = implied_table(review)
    if loads_table is not None:
        out.append(
            "<section "
            f'id="implied-loads"><h2>{_e(loads_table.title)}</h2><p>{_e(loads_table.intro)}</p>'
        )
        out.append(
            _html_table(loads_table.header, loads_table.rows, loads_table.statuses, css="members")
        )
        if loads_table.note:
            out.append(f"<p>{_e(loads_table.note)}</p>")
        out.append("</section>")

    out.append('<section id="members" class="major"><h2>Member table</h2>')
    for table in member_tables(review, grouped):
        out.append(f"<h3>{_e(table.title)}</h3><p>{_e(table.intro)}</p>")
        out.append(_html_table(table.header, table.rows, table.statuses, css="members"))
        if table.note:
            out.append(f"<p><em>{_e(table.note)}</em></p>")
    out.append("</section>")

    out.extend(_deflection_html(review))

    sections, note = appendix(review, grouped)
    out.append('<section id="appendix" class="major"><h2>Appendix: hand calculation</h2>')
    out.append(
        "<p>Reactions, then the joint-by-joint sequence a hand calculation follows, then the "
        "section cuts, with the equations and the values substituted. Σ sums the forces (F) or "
        "moments (M) named; a member force N acts along the member, tension positive.</p>"
    )
    if note:
        out.append(f"<p><em>{_e(note)}</em></p>")
    for k, (label, blocks) in enumerate(sections):
        out.append(f"<h3>{_e(label)}</h3>")
        out.extend(_html_blocks(model, blocks, 4, f"fb{k}"))
    out.append("</section>")

    out.append(
        f'<section id="cautions"><h2>Cautions</h2><p class="caution">{_e(CAUTION)}</p></section>'
    )
    out.append(
        f"<footer><p>truss-verify {_e(__version__)} — report generated {_e(date)}.</p></footer>"
    )
    out.append("</body></html>")
    return "\n".join(out) + "\n"


def _deflection_html(review: Review) -> list[str]:
    table = deflection_table(review)
    if table is None:
        return []
    out = [
        '<section id="deflections" '
        f'class="major"><h2>{_e(table.title)}</h2><p>{_e(table.intro)}</p>',
        _html_table(table.header, table.rows, table.statuses, css="members"),
    ]
    for calc in unit_load_calcs(review):
        out.append(f"<h3>{_e(calc.heading)}</h3><p>{_e(calc.intro)}</p>")
        out.append(_html_table(calc.header, calc.rows, css="calc"))
        out.append(f'<p class="result">{_e(calc.result)}</p>')
    out.append("</section>")
    return out


def _deflection_markdown(review: Review) -> list[str]:
    table = deflection_table(review)
    if table is None:
        return []
    out = ["", f"## {_m(table.title)}", "", _m(table.intro), ""]
    out.extend(_md_table(table.header, table.rows, table.statuses))
    for calc in unit_load_calcs(review):
        out += ["", f"### {_m(calc.heading)}", "", _m(calc.intro), ""]
        out.extend(_md_table(calc.header, calc.rows))
        out += ["", f"**{_m(calc.result)}**"]
    return out


def diagrams_html(review: Review, grouped: _CaseRows | None = None) -> list[str]:
    model = review.analysis.model
    ref = review.analysis.reference
    grouped = grouped if grouped is not None else case_rows(review)
    columns = diagram_columns(review, grouped)
    out = []
    outline = len(model.members) > LARGE_MODEL_MEMBERS
    if outline:
        out.append(
            f"<p><em>Large model ({len(model.members)} members): the drawing shows the outline "
            "of the truss, its supports (at most "
            f"{OUTLINE_SUPPORTS} spread along it where it has more, and those at the members "
            "with a finding) and only the members with a finding (no labels, no loads); one "
            "load column is drawn. The member table lists every problem; "
            f"`truss-verify solve {_e(Path(model.source).name)} --show forces` lists every "
            "force.</em></p>"
        )
    id_words = grouped.rows.words("id")[1]
    index = model.member_index if id_words == model.member_ids else None
    drawn = [
        (name, member_statuses(grouped, name, index) if name in review.checked_cases else None)
        for name in columns
    ]
    used: set[str] = set()
    for _, statuses in drawn:
        used |= used_categories(model, statuses)
    out.append(
        legend_html(with_status=any(st is not None for _, st in drawn), used=used, model=model)
    )
    for name, statuses in drawn:
        forces = ref.member_forces[:, ref.column(name)] if ref is not None else None
        caption = (
            f"{_load_label(review, name)}: members with a finding are coloured and marked; members "
            "whose claim agrees are drawn plain; band width shows tension or compression of the "
            "recomputed force. " + NOT_CAPACITY
            if statuses is not None
            else f"{_load_label(review, name)}: no claims checked. " + NOT_CAPACITY
        )
        if ref is None:
            caption += (
                " No force could be recomputed, so members are drawn without tension or "
                "compression."
            )
        out.append(f"<h3>{_e(_load_label(review, name))}</h3>")
        implied = implied_vector(review, name)
        if implied is not None:
            caption += (
                " Dashed orange arrows: the loads the claimed forces balance, at the joints where "
                "they differ from the case's loads (solid arrows)."
            )
        out.append(
            render_diagram(
                model,
                forces=forces,
                statuses=statuses,
                load_name=name,
                caption=caption,
                legend=False,
                implied=implied,
                outline=outline,
            )
        )
    return out


def implied_vector(review: Review, name: str) -> np.ndarray | None:
    """The loads the claims balance in load column `name`, at the joints where they differ
    (dofs)."""
    if review.implied is None:
        return None
    model = review.analysis.model
    items = [item for item in review.implied.differing if item.case == name]
    if not items:
        return None
    d = model.dim
    out = np.zeros(model.dofs)
    for item in items:
        j = model.joint_index[item.joint]
        out[j * d : (j + 1) * d] = item.implied
    return out


def implied_table(review: Review, limit: int = 200) -> Table | None:
    implied = review.implied
    if implied is None or not implied.differing:
        return None
    unit = review.analysis.model.units.force.symbol
    rows = [
        (
            item.joint + (" (support)" if item.supported else ""),
            item.case,
            _vec(item.load),
            _vec(item.implied),
            _vec(item.difference),
        )
        for item in implied.differing[:limit]
    ]
    undetermined = {n: k for n, k in implied.undetermined.items() if k}
    intro = (
        "Read backwards, joint equilibrium gives the external force the claimed forces balance at "
        f"every joint where each member has a claim ({unit}, global axes). Listed: the joints "
        "where it differs from the case's load. At a support, an unclaimed reaction takes up its "
        "own direction, so only the free directions tell."
    )
    if undetermined:
        intro += (
            " Not determined (a member there has no claim): "
            + ", ".join(f"{k} joint(s) in '{n}'" for n, k in undetermined.items())
            + "."
        )
    note = (
        f"{len(implied.differing) - limit} more joints in --json."
        if len(implied.differing) > limit
        else ""
    )
    return Table(
        "Loads the claims balance",
        intro,
        tuple(
            with_unit(h, unit)
            for h in ("joint", "load column", "case load", "claims balance", "difference")
        ),
        tuple(rows),
        tuple("" for _ in rows),
        note,
    )


def _vec(values: tuple[float, ...]) -> str:
    return "(" + ", ".join(fmt(v) for v in values) + ")"


# -- Markdown ------------------------------------------------------------------------------------
_MD_SPECIAL = str.maketrans({c: "\\" + c for c in "\\`*_[]#|"})


def _m(text: object) -> str:
    """Markdown-safe text: HTML-escaped (no raw HTML passes) and the emphasis/table marks
    escaped."""
    return escape(str(text), quote=False).translate(_MD_SPECIAL).replace("\n", " ")


def _md_table(
    header: tuple[str, ...],
    rows: tuple[tuple[str, ...], ...],
    statuses: tuple[str, ...] | None = None,
) -> list[str]:
    out = [
        "| " + " | ".join(_m(h) for h in header) + " |",
        "|" + "|".join("---" for _ in header) + "|",
    ]
    for n, row in enumerate(rows):
        cells = []
        for h, cell in zip(header, row, strict=True):
            if h == "status" and statuses is not None and statuses[n]:
                marker = STATUS_STYLES[status_category(statuses[n])].marker
                cells.append(_m(f"{marker} {cell}" if marker else cell))
            else:
                cells.append(_m(cell))
        out.append("| " + " | ".join(cells) + " |")
    return out


def _fence(text: str) -> str:
    longest = max((len(run) for run in text.split("\n") for run in _backtick_runs(run)), default=0)
    fence = "`" * max(3, longest + 1)
    return f"{fence}text\n{text}\n{fence}"


def _backtick_runs(line: str) -> list[str]:
    runs, current = [], ""
    for ch in line:
        if ch == "`":
            current += ch
        elif current:
            runs.append(current)
            current = ""
    if current:
        runs.append(current)
    return runs


def render_markdown(
    review: Review,
    *,
    generated: str | None = None,
    displacement_file: tuple[str, str] | None = None,
) -> str:
    model = review.analysis.model
    grouped = case_rows(review)  # the rows by load column, for every part below
    date = _generated(generated)
    word, summary = _verdict_text(review)
    title = model.title or Path(model.source).name or "truss"
    out = [
        f"# Truss review: {_m(title)}",
        "",
        f"**Verdict: {_m(word)}** — {_m(summary)}",
        "",
        f"*{_m(SHORT_CAUTION)}*",
        "",
    ]
    out.extend(_md_table(("item", "value"), tuple((k, v) for k, v in header_facts(review, date))))
    out += ["", "## Input files", ""]
    out.extend(
        _md_table(
            ("input", "file", "SHA-256"),
            tuple(
                (f.role, f.path, f.sha256 or f.note) for f in input_files(review, displacement_file)
            ),
        )
    )
    extra = notes(review)
    if extra:
        out += ["", "### Notes", ""] + [f"- {_m(n)}" for n in extra]
    out += [
        "",
        "## Diagram",
        "",
        "The truss diagram is drawn only in the HTML report (`truss-verify check CASE --claims "
        "FILE --report review.html`); this Markdown version carries the rest of the content.",
        "",
    ]
    out += ["## Findings", ""]
    if review.findings:
        for n, f in enumerate(review.findings, 1):
            case = f" ({_m(f.case)})" if f.case else ""
            out.append(
                f"{n}. [{_m(f.severity.value)}] **{_m(f.title)}**{case}: {_m(finding_sentence(f))}"
            )
    else:
        out.append("No findings: every claim checked agrees within tolerance.")
    loads_table = implied_table(review)
    if loads_table is not None:
        out += ["", f"## {_m(loads_table.title)}", "", _m(loads_table.intro), ""]
        out.extend(_md_table(loads_table.header, loads_table.rows))
        if loads_table.note:
            out += ["", _m(loads_table.note)]
    legend = "; ".join(
        f"{s.marker} = {s.words}"
        for s in sorted(STATUS_STYLES.values(), key=lambda s: s.rank)
        if s.marker
    )
    out += [
        "",
        "## Member table",
        "",
        f"Status marks: {_m(legend)}; agreeing claims carry no mark.",
    ]
    for table in member_tables(review, grouped):
        out += ["", f"### {_m(table.title)}", "", _m(table.intro), ""]
        out.extend(_md_table(table.header, table.rows, table.statuses))
        if table.note:
            out += ["", f"*{_m(table.note)}*"]
    out.extend(_deflection_markdown(review))
    sections, note = appendix(review, grouped)
    out += [
        "",
        "## Appendix: hand calculation",
        "",
        "Reactions, then the joint-by-joint sequence a hand calculation follows, then the section "
        "cuts, with the equations and the values substituted. Σ sums the forces (F) or moments (M) "
        "named; a member force N acts along the member, tension positive.",
    ]
    if note:
        out += ["", f"*{_m(note)}*"]
    for label, blocks in sections:
        out += ["", f"### {_m(label)}"]
        for block in blocks:
            out += ["", f"#### {_m(block.heading)}", ""]
            if block.kind in ("pre", "sheet", "reactions", "joints"):
                out.append(_fence(block.text))
            elif block.kind == "table":
                if block.text:
                    out += [_m(block.text), ""]
                out.extend(_md_table(block.header, block.rows))
            else:
                out.append(_m(block.text))
    out += [
        "",
        "## Cautions",
        "",
        f"{_m(CAUTION)}",
        "",
        f"*truss-verify {_m(__version__)} — report generated {_m(date)}.*",
        "",
    ]
    return "\n".join(out)


def render_document(
    review: Review,
    *,
    fmt: str = "html",
    generated: str | None = None,
    displacement_file: tuple[str, str] | None = None,
) -> str:
    """The review report as HTML ("html") or Markdown ("md"); `generated` fixes the date shown.

    Control characters (from a claims label: ESC, BEL, CR ...) are written as visible escapes."""
    from verify.errors import escape_controls

    if fmt == "html":
        return escape_controls(
            render_html(review, generated=generated, displacement_file=displacement_file),
            keep="\n\t",
        )
    if fmt in ("md", "markdown"):
        return escape_controls(
            render_markdown(review, generated=generated, displacement_file=displacement_file),
            keep="\n\t",
        )
    raise ValueError(f"report format must be 'html' or 'md', got {fmt!r}")


__all__ = [
    "InputFile",
    "input_files",
    "render_document",
    "render_html",
    "render_markdown",
    "sha256_file",
]
