"""The check, wired once: the command line, the Python API and the batch worker all call `check`.

`check(case, claims, options)` reads the case and the claims, refuses a claims table none of
whose labels match the case, reads the claimed displacements when given, analyses, compares,
and returns a complete `CheckResult`. It prints nothing and writes nothing: the callers decide
what to show and where outputs go.

`CheckOptions` holds every option of `truss-verify check` that changes the result (not the
output paths), with the command's names, and validates itself when it is made: a value out of
range raises `OptionError` (exit status 2) before any file is read, so `review(rtol=5.0)` is
refused exactly as `check --relative-tolerance 5` is. Bad files raise `InputError`.

The verdict's exit status is decided here too (`exit_status`): it belongs to the callers that
exit, not to the comparison.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path

from verify.analysis.pipeline import EarlyRoutes, analyse
from verify.compare.diagnose import Review, SignMode, Verdict, compare_claims
from verify.compare.tolerances import ATOL_FRACTION, RTOL, Tolerance
from verify.errors import (
    EXIT_AGREES,
    EXIT_CANNOT_VERIFY,
    EXIT_DISCREPANCIES,
    InputError,
    OptionError,
    Problem,
    shown,
)
from verify.io.case import read_case
from verify.io.claims import ClaimsTable, read_claims
from verify.model import Model
from verify.options import check_options

CASE_FILE = "case.toml"  # what a case folder (as bundled in cases/) holds
UNMATCHED_SHOWN = 5  # labels quoted when none matches: enough to see which truss the table is for

_EXIT_STATUS = {
    Verdict.AGREES: EXIT_AGREES,
    Verdict.DISCREPANCIES: EXIT_DISCREPANCIES,
    Verdict.CANNOT_VERIFY: EXIT_CANNOT_VERIFY,
}

# Options that name something in the claims file (a sheet, a header, a load column, pages): text.
_TEXT_OPTIONS = ("sheet", "pages", "member_column", "case_column", "force_column", "load_case")


def exit_status(verdict: Verdict) -> int:
    """The exit status `check` leaves with for a verdict: 0 agrees, 1 discrepancies, 3 cannot
    verify."""
    return _EXIT_STATUS[verdict]


@dataclass(frozen=True, kw_only=True)
class CheckOptions:
    """Every option of a check, clean once made (OptionError otherwise).

    `sign` becomes a `SignMode`, `unit` "auto" becomes None, numbers become floats. `spelt` maps
    an option to the name the user typed ("--relative-tolerance" for "rtol"), for messages only.
    """

    sign: str = SignMode.AUTO
    unit: str | None = None  # None or "auto": read from the table or inferred
    sheet: str | None = None
    pages: str | None = None
    rtol: float = RTOL
    atol_fraction: float = ATOL_FRACTION
    member_column: str | None = None
    case_column: str | None = None
    force_column: str | None = None
    load_case: str | None = None
    assume_equal_EA: float | None = None
    displacements: str | Path | None = None
    tables_anywhere: bool = False
    spelt: tuple[tuple[str, str], ...] = field(default=(), compare=False, repr=False)

    def __post_init__(self) -> None:
        names = dict(self.spelt)
        for name in _TEXT_OPTIONS:
            value = getattr(self, name)
            if value is not None and not isinstance(value, str):
                raise OptionError(
                    f"{names.get(name, name)}={shown(value)}: must be text (a name as the file "
                    "writes it)"
                )
        if self.displacements is not None and not isinstance(self.displacements, (str, Path)):
            raise OptionError(
                f"{names.get('displacements', 'displacements')}={shown(self.displacements)}: "
                "must be a file path"
            )
        clean = check_options(
            sign=self.sign,
            unit=self.unit,
            rtol=self.rtol,
            atol_fraction=self.atol_fraction,
            assume_equal_EA=self.assume_equal_EA,
            names=names,
        )
        # Frozen: the clean values replace the given ones once, here, before anyone reads them.
        object.__setattr__(self, "sign", clean.sign)
        object.__setattr__(self, "unit", clean.unit)
        object.__setattr__(self, "rtol", clean.tolerance.rtol)
        object.__setattr__(self, "atol_fraction", clean.tolerance.atol_fraction)
        object.__setattr__(self, "assume_equal_EA", clean.assume_equal_EA)
        object.__setattr__(self, "tables_anywhere", bool(self.tables_anywhere))

    @property
    def tolerance(self) -> Tolerance:
        return Tolerance(rtol=self.rtol, atol_fraction=self.atol_fraction)


@dataclass(frozen=True)
class CheckResult:
    """A finished check: the review (displacements attached when given) and what it read."""

    review: Review
    model: Model
    claims: ClaimsTable
    displacement_file: tuple[str, str] | None  # (path, SHA-256) of the claimed displacements
    inputs: tuple[str, ...]  # every file read, as given and as resolved: no output may replace one

    @property
    def exit_code(self) -> int:
        return exit_status(self.review.verdict)


def case_file(case_path: str | Path) -> str:
    """The case file itself: a case folder stands for the case.toml inside it."""
    path = Path(case_path)
    if path.is_dir():
        inside = path / CASE_FILE
        if not inside.is_file():
            raise InputError(
                [Problem(str(case_path), f"a folder without a {CASE_FILE}; name the case file")]
            )
        return str(inside)
    return str(case_path)


def check(
    case_path: str | Path,
    claims_path: str | Path,
    options: CheckOptions | None = None,
    *,
    progress: Callable[[str], None] | None = None,
) -> CheckResult:
    """Check the claims against the case; InputError for a file that cannot be read as one.

    `progress`, when given, is called with the name of each step as it starts (the caller
    decides whether and where to show it; this module never prints)."""
    say = progress or _quiet
    options = options or CheckOptions()
    say("reading the case")
    model = read_case(case_file(case_path), tables_outside=options.tables_anywhere)
    # The routes that need only the model start now (in a second process on a large truss)
    # and run while the claims are read; a large square A is factored first, and its sigma
    # figure estimated in a child meanwhile (a bad claims table is then refused after that).
    early = EarlyRoutes(
        model, factor_now=True, assume_equal_EA=options.assume_equal_EA, progress=say
    )
    try:
        return _check(case_path, claims_path, options, say, model, early)
    finally:
        early.cancel()


def _check(
    case_path: str | Path,
    claims_path: str | Path,
    options: CheckOptions,
    say: Callable[[str], None],
    model: Model,
    early: EarlyRoutes,
) -> CheckResult:
    say(f"reading the claims ({len(model.members):,} members)")
    claims = read_claims(
        str(claims_path),
        model,
        sheet=options.sheet,
        member_column=options.member_column,
        case_column=options.case_column,
        force_column=options.force_column,
        case=options.load_case,
        pages=options.pages,
    )
    # The count, not the values: those are one object per claim, made only when asked for.
    if not claims.count and claims.unmatched:
        # Nothing to compare: most likely the wrong table, which a verdict would hide.
        labels = ", ".join(f"'{u.label}'" for u in claims.unmatched[:UNMATCHED_SHOWN])
        raise InputError(
            [
                Problem(
                    str(claims_path),
                    f"no label matches a member or reaction of {case_path} "
                    f"(e.g. {labels}); is this the claims table for this case?",
                )
            ]
        )
    displacement_claims = None
    if options.displacements is not None:
        from verify.io.displacements import read_displacements

        displacement_claims = read_displacements(str(options.displacements), model)
    say("analysing the truss")
    analysis = analyse(
        model,
        assume_equal_EA=options.assume_equal_EA,
        displacements=displacement_claims is not None,
        early=early,
    )
    say("comparing the claims")
    review = compare_claims(
        analysis,
        claims,
        sign=SignMode(options.sign),
        unit=options.unit,
        tolerance=options.tolerance,
    )
    displacement_file = None
    if displacement_claims is not None:
        from verify.compare.displacements import attach_displacements, compare_displacements

        review = attach_displacements(
            review,
            compare_displacements(analysis, displacement_claims, tolerance=options.tolerance),
        )
        displacement_file = (displacement_claims.source, displacement_claims.sha256)
    read = [str(case_path), model.source, str(claims_path), *model.tables]
    if options.displacements is not None:
        read.append(str(options.displacements))
    return CheckResult(review, model, claims, displacement_file, tuple(dict.fromkeys(read)))


def _quiet(step: str) -> None:
    """No progress wanted."""


__all__ = ["CheckOptions", "CheckResult", "case_file", "check", "exit_status"]
