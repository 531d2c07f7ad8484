"""A small Python API for notebooks and scripts.

    >>> from verify.api import review, solve
    >>> r = review("cases/canal-footbridge/case.toml", "cases/canal-footbridge/claims.csv")
    >>> r.verdict, r.findings, r.members  # str, DataFrame, DataFrame
    >>> r  # renders in Jupyter: verdict, findings, table, diagram

Results are frozen; `.members`, `.forces`, `.reactions` and `.findings` build pandas DataFrames on
demand (pandas is imported only then). Forces are in the case's units, tension positive.
"""

from __future__ import annotations

from dataclasses import dataclass
from html import escape
from pathlib import Path
from typing import TYPE_CHECKING, Any

from verify.analysis.pipeline import Analysis, analyse
from verify.compare.diagnose import Review
from verify.compare.tolerances import ATOL_FRACTION, RTOL
from verify.io.case import read_case
from verify.model import Model
from verify.service import CheckOptions, check, exit_status

if TYPE_CHECKING:  # pandas is imported lazily at run time
    import pandas as pd

NOTEBOOK_ROWS = 60  # rows of the member table shown in a notebook; the DataFrame has them all


def _forces_frame(analysis: Analysis) -> pd.DataFrame:
    import pandas as pd

    model = analysis.model
    ref = analysis.reference
    if ref is None:
        return pd.DataFrame(
            index=pd.Index(model.member_ids, name="member"), columns=model.load_names, dtype=float
        )
    return pd.DataFrame(
        ref.member_forces,
        index=pd.Index(model.member_ids, name="member"),
        columns=list(model.load_names),
    )


def _reactions_frame(analysis: Analysis) -> pd.DataFrame:
    import pandas as pd

    model = analysis.model
    labels = pd.Index([r.label for r in model.reactions], name="reaction")
    ref = analysis.reference
    if ref is None:
        return pd.DataFrame(index=labels, columns=model.load_names, dtype=float)
    return pd.DataFrame(ref.reactions, index=labels, columns=list(model.load_names))


@dataclass(frozen=True)
class SolveResult:
    """Recomputed forces of a case, without claims."""

    model: Model
    analysis: Analysis

    @property
    def verdict(self) -> str:
        """The stability classification: stable-determinate, stable-indeterminate or unstable."""
        return self.analysis.stability.classification.value

    @property
    def forces(self) -> pd.DataFrame:
        """Member forces: one row per member, one column per load case and combination."""
        return _forces_frame(self.analysis)

    @property
    def members(self) -> pd.DataFrame:
        """The member table: ends, length, then the force in every load column."""
        import pandas as pd

        model = self.model
        table = pd.DataFrame(
            {
                "start": [m.start for m in model.members],
                "end": [m.end for m in model.members],
                "length": model.lengths.astype(float),
            },
            index=pd.Index(model.member_ids, name="member"),
        )
        return table.join(self.forces)

    @property
    def reactions(self) -> pd.DataFrame:
        return _reactions_frame(self.analysis)

    def _repr_html_(self) -> str:
        from verify.report.diagram import render_diagram

        s = self.analysis.stability
        ref = self.analysis.reference
        name = self.model.load_names[0] if self.model.load_names else None
        forces = ref.member_forces[:, 0] if ref is not None and name is not None else None
        head = (
            f"<h3>{escape(self.model.title or self.model.source)}</h3>"
            f"<p><strong>{escape(s.classification.value)}</strong>: {s.joints} joints, {s.members} "
            "members, "
            f"{s.reactions} reaction components; Maxwell b + r − {s.dim}j = {s.maxwell}; rank "
            f"{s.rank}, "
            f"mechanisms {s.mechanisms}, self-stress {s.self_stress}. Forces in "
            f"{escape(self.model.units.force.symbol)}, "
            "tension positive.</p>"
        )
        table = _frame_html(self.members)
        drawing = render_diagram(
            self.model,
            forces=forces,
            load_name=name,
            caption=f"Load column '{name}' (the first); band width shows tension or compression.",
        )
        return head + table + drawing


@dataclass(frozen=True)
class ReviewResult:
    """A claims table checked against the recomputed forces."""

    review: Review
    displacement_file: tuple[str, str] | None = (
        None  # (path, SHA-256) of claimed displacements checked
    )

    @property
    def model(self) -> Model:
        return self.review.analysis.model

    @property
    def verdict(self) -> str:
        """agrees, discrepancies or cannot-verify."""
        return self.review.verdict.value

    @property
    def exit_code(self) -> int:
        """As `check` exits: 0 agrees, 1 discrepancies, 3 cannot verify."""
        return exit_status(self.review.verdict)

    @property
    def members(self) -> pd.DataFrame:
        """The member table: one row per member and load column (claimed, each route,
        difference, status)."""
        return self._rows("member")

    @property
    def reactions(self) -> pd.DataFrame:
        return self._rows("reaction")

    @property
    def forces(self) -> pd.DataFrame:
        """Recomputed member forces: one row per member, one column per load case and
        combination."""
        return _forces_frame(self.review.analysis)

    @property
    def findings(self) -> pd.DataFrame:
        import pandas as pd

        columns = [
            "severity",
            "kind",
            "title",
            "case",
            "members",
            "detail",
            "variant",
            "explains",
            "unexplained",
            "factor",
            "joints",
            "locations",
            "next_step",
        ]
        records = [
            {
                "severity": f.severity.value,
                "kind": str(f.kind),
                "title": f.title,
                "case": f.case,
                "members": ", ".join(f.members),
                "detail": f.detail,
                "variant": f.variant,
                "explains": f.explains,
                "unexplained": f.unexplained,
                "factor": f.factor,
                "joints": ", ".join(f.joints),
                "locations": "; ".join(f.locations),
                "next_step": f.next_step,
            }
            for f in self.review.findings
        ]
        return pd.DataFrame.from_records(records, columns=columns)

    def _rows(self, kind: str) -> pd.DataFrame:
        import pandas as pd

        columns = [
            "id",
            "case",
            "claimed",
            "joints",
            "sections",
            "global",
            "elastic",
            "difference",
            "status",
            "written",
        ]
        # Plain strings, as --json writes them (the statuses are StrEnum values).
        records = [
            {k: v for k, v in row.as_dict().items() if k in columns} | {"status": str(row.status)}
            for row in self.review.rows
            if row.kind == kind
        ]
        return pd.DataFrame.from_records(records, columns=columns).rename(columns={"id": kind})

    def report(self, fmt: str = "html", *, generated: str | None = None) -> str:
        """The full review report (as `check --report` writes it)."""
        from verify.report.document import render_document

        return render_document(
            self.review, fmt=fmt, generated=generated, displacement_file=self.displacement_file
        )

    def _repr_html_(self) -> str:
        from verify.report.document import diagrams_html, finding_sentence
        from verify.report.review_text import verdict_line

        parts = [
            f"<h3>{escape(self.model.title or self.model.source)}</h3>",
            f"<p><strong>{escape(verdict_line(self.review))}</strong></p>",
        ]
        if self.review.findings:
            parts.append(
                "<ol>"
                + "".join(
                    f"<li><strong>{escape(f.title)}</strong>"
                    f"{escape(' (' + f.case + ')' if f.case else '')}: "
                    f"{escape(finding_sentence(f))}</li>"
                    for f in self.review.findings
                )
                + "</ol>"
            )
        else:
            parts.append("<p>No findings.</p>")
        members = self.members
        problems = members[~members["status"].isin(["agrees", "missing-claim"])]
        shown = members if len(members) <= NOTEBOOK_ROWS else problems.head(NOTEBOOK_ROWS)
        if len(shown) < len(members):
            parts.append(
                f"<p>Member table: {len(shown)} of {len(members)} rows (the problems; "
                "<code>.members</code> has all).</p>"
            )
        parts.append(_frame_html(shown))
        parts.extend(diagrams_html(self.review))
        return "\n".join(parts)


def _frame_html(frame: Any) -> str:
    if len(frame) > NOTEBOOK_ROWS:
        note = f"<p>First {NOTEBOOK_ROWS} of {len(frame)} rows.</p>"
        frame = frame.head(NOTEBOOK_ROWS)
    else:
        note = ""
    return str(frame.to_html(escape=True, float_format=lambda v: f"{v:.4g}", na_rep="—")) + note


def solve(
    case_path: str | Path, *, assume_equal_EA: float | None = None, tables_anywhere: bool = False
) -> SolveResult:
    """Read the case and recompute every member force and reaction."""
    from verify.options import check_assume_equal_ea

    ea = check_assume_equal_ea(assume_equal_EA)
    model = read_case(case_path, tables_outside=tables_anywhere)
    return SolveResult(model, analyse(model, assume_equal_EA=ea))


def review(
    case_path: str | Path,
    claims_path: str | Path,
    *,
    sign: str = "auto",
    unit: str | None = None,
    sheet: str | None = None,
    pages: str | None = None,
    rtol: float = RTOL,
    atol_fraction: float = ATOL_FRACTION,
    member_column: str | None = None,
    case_column: str | None = None,
    force_column: str | None = None,
    case: str | None = None,
    assume_equal_EA: float | None = None,
    displacements: str | Path | None = None,
    tables_anywhere: bool = False,
) -> ReviewResult:
    """Check the claims file against the case, as `truss-verify check` does (the same service).

    The options are `check`'s, with the same meanings: `sign` is tension-positive,
    compression-positive or auto; `unit` None (or "auto") reads it from the table or infers it;
    `rtol` and `atol_fraction` are `--relative-tolerance` and `--absolute-tolerance`; `case` is
    `--case`; `displacements` a file of claimed joint displacements. `case_path` may name a case
    folder. Every bad input raises verify.errors.InputError, the one type to catch: a file that
    cannot be read, a claims table none of whose labels match the case, and an option out of range
    (verify.errors.OptionError, a kind of InputError). The command line refuses the same inputs
    with exit status 2.
    """
    options = CheckOptions(
        sign=sign,
        unit=unit,
        sheet=sheet,
        pages=pages,
        rtol=rtol,
        atol_fraction=atol_fraction,
        member_column=member_column,
        case_column=case_column,
        force_column=force_column,
        load_case=case,
        assume_equal_EA=assume_equal_EA,
        displacements=displacements,
        tables_anywhere=tables_anywhere,
        spelt=(("load_case", "case"),),
    )
    result = check(case_path, claims_path, options)
    return ReviewResult(result.review, displacement_file=result.displacement_file)


__all__ = ["ReviewResult", "SolveResult", "review", "solve"]
