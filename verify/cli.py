"""Command line: parses arguments, wires the pipeline, prints, and sets the exit status.

The only module that prints or exits. Exit status: 0 agrees, 1 discrepancies, 2 bad input or
usage, 3 the truss cannot be verified (unstable, or indeterminate without stiffness).
"""

from __future__ import annotations

import errno
import gc
import os
import sys
import traceback
from collections.abc import Callable
from typing import Any, cast

import click

from verify import __version__
from verify.analysis.pipeline import Analysis, analyse
from verify.analysis.stability import Classification
from verify.errors import EXIT_BAD_INPUT, EXIT_CANNOT_VERIFY, InputError, escape_controls
from verify.io.case import read_case
from verify.model import Model
from verify.report import json_out, text
from verify.report.cautions import CAUTION

MAX_PRINTED_CUTS = 100  # a calc sheet per cut; beyond this a print-out stops being readable


def _say_bad_input(error: InputError | str, as_json: bool = False) -> None:
    """The message on stderr; with --json also one JSON object on stdout, so a script reading
    stdout sees why there is no result."""
    click.echo(
        error.render() if isinstance(error, InputError) else escape_controls(error, keep="\n"),
        err=True,
    )
    if as_json:
        problems = (
            [
                {"file": p.file, "line": p.line, "where": p.where, "message": p.message}
                for p in error.problems
            ]
            if isinstance(error, InputError)
            else [{"file": None, "line": None, "where": None, "message": error}]
        )
        click.echo(
            json_out.dumps(
                {
                    "tool": {"name": "truss-verify", "version": __version__},
                    "error": "bad-input",
                    "problems": problems,
                }
            )
        )


def _fail_input(error: InputError | str, as_json: bool = False) -> None:
    _say_bad_input(error, as_json)
    sys.exit(EXIT_BAD_INPUT)


def _load(case: str, as_json: bool = False, tables_anywhere: bool = False) -> Model:
    from verify.service import case_file

    try:  # a case folder, as bundled in cases/, stands for its case.toml
        return read_case(case_file(case), tables_outside=tables_anywhere)
    except InputError as error:
        _fail_input(error, as_json)
        raise  # unreachable; keeps type checkers honest


def _check_load_name(model: Model, load_name: str | None, case: str) -> None:
    """--case names a load case or combination of the model, else one message and exit 2."""
    if load_name is None or load_name in model.load_names:
        return
    from verify.errors import did_you_mean

    click.echo(
        f"--case: '{load_name}' is not a load case or combination of "
        f"{case}.{did_you_mean(load_name, model.load_names)}",
        err=True,
    )
    sys.exit(EXIT_BAD_INPUT)


def _positive_finite(
    ctx: click.Context, param: click.Parameter, value: float | None
) -> float | None:
    from verify.errors import OptionError
    from verify.options import check_assume_equal_ea

    try:
        return check_assume_equal_ea(value, name="--assume-equal-ea")
    except OptionError as exc:
        raise click.BadParameter(str(exc)) from None


_TABLES_ANYWHERE = click.option(
    "--tables-anywhere",
    is_flag=True,
    help="Let the case file name CSV tables outside its own folder (by default they must sit "
    "beside it).",
)


@click.group(context_settings={"help_option_names": ["-h", "--help"], "max_content_width": 100})
@click.version_option(__version__, prog_name="truss-verify")
def main() -> None:
    """Check somebody else's truss calculation.

    Reads a case file (TOML: units, joints, members, supports, load cases, combinations),
    recomputes every member force and reaction by the method of joints, the method of sections
    and a global matrix solve, classifies the truss (stable or not, determinate or not) and
    compares the claimed forces, explaining every difference.

    Exit status: 0 claims agree, 1 discrepancies, 2 bad input, 3 cannot verify.

    Caution: statics of an idealised pin-jointed model only; a qualified engineer must review
    the results under the governing local codes.
    """
    # A run builds millions of small immutable objects and frees them at exit; the cyclic
    # collector's repeated full scans cost more than a third of a 10^5-member check. Few, large
    # generations keep it for real cycles only.
    gc.set_threshold(200_000, 50, 1000)


@main.command(short_help="Classify the truss: stable or not, determinate or not.")
@click.argument("case", type=click.Path())
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of text.")
@_TABLES_ANYWHERE
def stability(case: str, as_json: bool, tables_anywhere: bool) -> None:
    """Classify CASE: Maxwell's count, rank of the equilibrium matrix, mechanisms, self-stress."""
    model = _load(case, as_json, tables_anywhere)
    analysis = _stability_only(model)
    if as_json:
        click.echo(json_out.dumps(json_out.stability_json(model, analysis)))
    else:
        click.echo(text.render_stability(model, analysis.stability))
        click.echo(f"Caution: {CAUTION}")
    sys.exit(
        EXIT_CANNOT_VERIFY if analysis.stability.classification is Classification.UNSTABLE else 0
    )


def _stability_only(model: Model) -> Analysis:
    from verify.analysis.stability import solve_stability

    return Analysis(model, solve_stability(model))


@main.command(short_help="Recompute every member force and reaction (joints, sections, global).")
@click.argument("case", type=click.Path())
@click.option(
    "--json",
    "as_json",
    is_flag=True,
    help="Print one JSON object (forces, reactions) instead of text.",
)
@click.option(
    "--show",
    type=click.Choice(["forces", "joints", "sections", "all"]),
    default="forces",
    show_default=True,
    help="What to print: the force tables, the joint-by-joint hand calc, the section cuts, or all.",
)
@click.option(
    "--case",
    "load_name",
    default=None,
    help="Load case or combination to print (default: every one).",
)
@click.option(
    "--assume-equal-ea",
    type=float,
    default=None,
    metavar="EA",
    callback=_positive_finite,
    help="For an indeterminate truss without stiffness data: assume this EA for every member "
    "(said in every output).",
)
@click.option(
    "--all-rows",
    is_flag=True,
    help="List every member even in very large trusses (default: the 5000 largest forces).",
)
@_TABLES_ANYWHERE
def solve(
    case: str,
    as_json: bool,
    show: str,
    load_name: str | None,
    assume_equal_ea: float | None,
    all_rows: bool,
    tables_anywhere: bool,
) -> None:
    """Recompute every member force (tension positive, T/C) and reaction of CASE."""
    model = _load(case, as_json, tables_anywhere)
    _check_load_name(model, load_name, case)  # before the analysis: a typo costs nothing
    analysis = analyse(model, assume_equal_EA=assume_equal_ea)
    if as_json:
        click.echo(json_out.dumps(json_out.solve_json(model, analysis)))
        sys.exit(0 if analysis.reference is not None else EXIT_CANNOT_VERIFY)
    if analysis.reference is None:
        click.echo(text.render_stability(model, analysis.stability))
        for note in analysis.notes:
            click.echo(f"note: {note}")
        click.echo(
            "No forces recomputed: "
            + (
                "the truss is unstable."
                if not analysis.stability.is_stable
                else "statically indeterminate without member stiffness (give EA, or "
                "--assume-equal-ea)."
            )
        )
        click.echo(f"Caution: {CAUTION}")
        sys.exit(EXIT_CANNOT_VERIFY)
    click.echo(text.render_stability(model, analysis.stability))
    click.echo("")
    if (
        model.conversions
    ):  # loads stated as line loads, self-weight, angles, normals: what they became
        click.echo("Loads converted to joint loads:")
        for note in model.conversions:
            click.echo(f"  {escape_controls(note)}")
        click.echo("")
    names = [load_name] if load_name else model.load_names
    if show in ("forces", "all"):
        click.echo(text.render_solution(model, analysis, all_rows=all_rows, load_names=names))
    if show in ("joints", "sections", "all") and analysis.joints is None:
        click.echo(
            "The method of joints and section cuts give the forces of statically determinate "
            "trusses only; "
            "this truss is indeterminate, so its forces come from the direct stiffness method "
            "above.\n"
        )
    if show in ("joints", "all") and analysis.joints is not None:
        sheets = analysis.sections.calc_sheets(model) if analysis.sections is not None else None
        for name in names:
            step = sheets.reactions(name) if sheets is not None else None
            click.echo(text.render_joint_calc(model, analysis.joints, name, reactions=step))
            click.echo("")
    if show in ("sections", "all") and analysis.sections is not None:
        from verify.report.section_calc import render_cut_sheet, render_reactions

        cuts = analysis.sections.cuts
        book = analysis.sections.calc_sheets(model)
        for name in names:
            click.echo(render_reactions(model, book.reactions(name)))
            for sheet in book.group(cuts[:MAX_PRINTED_CUTS], name):
                click.echo(render_cut_sheet(model, sheet))
            if len(cuts) > MAX_PRINTED_CUTS:
                click.echo(
                    f"... {len(cuts) - MAX_PRINTED_CUTS} more cuts not printed; "
                    "`truss-verify cut CASE --members A,B,C` prints the calc for any section.\n"
                )
    click.echo(f"Caution: {CAUTION}")


@main.command(short_help="Print the method-of-sections calc sheet for one cut.")
@click.argument("case", type=click.Path())
@click.option(
    "--members",
    "member_list",
    required=True,
    metavar="ID,ID,...",
    help="The members the section passes through, comma-separated (e.g. U1U2,U1L2,L1L2).",
)
@click.option(
    "--case", "load_name", default=None, help="Load case or combination (default: every one)."
)
@click.option(
    "--decimals-only",
    is_flag=True,
    help="Skip the exact values (fractions and roots) beside the decimals.",
)
@_TABLES_ANYWHERE
def cut(
    case: str, member_list: str, load_name: str | None, decimals_only: bool, tables_anywhere: bool
) -> None:
    """Print the method-of-sections calc sheet for a cut through the given members of CASE.

    Shows the free body kept, the members cut, the reactions (from overall equilibrium) and loads
    on the kept side, the equilibrium equation with lever arms and the moment point (Ritter's
    method) or the force sum normal to parallel members, and the forces with T/C.
    """
    from verify.analysis.cut_sheets import requested_sheets
    from verify.report.section_calc import render_cut_sheet, render_reactions

    model = _load(case, tables_anywhere=tables_anywhere)
    _check_load_name(model, load_name, case)
    from verify.analysis.stability import solve_stability

    stability = solve_stability(model)
    if not stability.is_stable:
        click.echo(text.render_stability(model, stability))
        click.echo("No section can be solved: the truss is unstable.")
        sys.exit(EXIT_CANNOT_VERIFY)
    from verify.io.claims import member_ids_for

    ids = member_ids_for(model, [m.strip() for m in member_list.split(",") if m.strip()])
    names = [load_name] if load_name else model.load_names
    try:
        sheets = requested_sheets(model, ids, names, exact=not decimals_only)
    except ValueError as exc:
        click.echo(f"--members: {exc}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    for reactions, sheet in sheets:
        if reactions is not None:
            click.echo(render_reactions(model, reactions))
        click.echo(render_cut_sheet(model, sheet))
    click.echo(f"Caution: {CAUTION}")


def _run_check(
    case: str,
    claims_path: str,
    *,
    as_json: bool,
    report: str | None,
    csv_path: str | None,
    all_rows: bool,
    spelt: dict[str, str] | None = None,
    **given: Any,
) -> int:
    """Parse, call the check service, write and print; the exit status. `given`: CheckOptions'
    fields."""
    from verify.report.atomic import OutputError, write_atomic
    from verify.report.review_text import render_review
    from verify.service import CheckOptions, check

    # Output paths are the command's business, not the check's: refused before any file is read.
    if report and not report.lower().endswith((".html", ".htm", ".md")):
        _say_bad_input(
            f"--report: '{report}' must end in .html or .md (the report's format follows the "
            "extension)",
            as_json,
        )
        return EXIT_BAD_INPUT
    if csv_path and not csv_path.lower().endswith((".csv", ".txt")):
        # (and so can never be the --report file, which ends in .html or .md)
        _say_bad_input(
            f"--csv: '{csv_path}' must end in .csv or .txt (the file is comma-separated text, "
            "not a workbook)",
            as_json,
        )
        return EXIT_BAD_INPUT
    names = {**_CHECK_SPELLING, **(spelt or {})}
    show = _progress_printer(as_json)
    try:
        result = check(
            case,
            claims_path,
            CheckOptions(**given, spelt=tuple(names.items())),
            progress=show,
        )
    except InputError as error:  # OptionError among them
        _say_bad_input(error, as_json)
        return EXIT_BAD_INPUT
    review = result.review
    try:
        if csv_path:
            from verify.report.table_csv import render_csv

            write_atomic(csv_path, render_csv(review), inputs=list(result.inputs))
        if report:
            from verify.report.document import render_document

            if show is not None:
                show("writing the report")

            write_atomic(
                report,
                render_document(
                    review,
                    fmt="md" if report.lower().endswith(".md") else "html",
                    displacement_file=result.displacement_file,
                ),
                inputs=list(result.inputs),
            )
    except (OutputError, OSError) as exc:
        _say_bad_input(str(exc), as_json)
        return EXIT_BAD_INPUT
    if as_json:
        # Written in pieces as they are encoded: a 10^6-member object is hundreds of megabytes.
        # Straight to the stream: click.echo searches each piece for terminal colour codes to
        # strip, which JSON cannot hold (it escapes every control character), 0.2 s at 10^6.
        json_out.write_dumps(
            json_out.check_json(review, displacement_file=result.displacement_file), sys.stdout
        )
    else:
        # Claims labels may carry ESC or BEL: shown escaped, never sent raw to a terminal.
        click.echo(
            _colour(
                escape_controls(render_review(review, all_rows=all_rows), keep="\n\t"),
                review.verdict.value,
            )
        )
    # Kept until the process ends (run() leaves with os._exit): freeing a 10^6-member check
    # object by object took ~0.4 s; the next check in the same process replaces it.
    _LAST_CHECK[:] = [result]
    return result.exit_code


_LAST_CHECK: list[Any] = []


PROGRESS_AFTER_S = 2.0  # a run shorter than this shows no progress at all


def _progress_printer(as_json: bool) -> Any:
    """Progress lines on stderr for long runs, only when stderr is a terminal and the output is
    not JSON; None otherwise (nothing in pipes). A step is shown once the run has taken
    PROGRESS_AFTER_S, so short checks stay silent."""
    if as_json or not sys.stderr.isatty():
        return None
    import time

    start = time.monotonic()

    def show(step: str) -> None:
        if time.monotonic() - start >= PROGRESS_AFTER_S:
            click.echo(f"truss-verify: {step} ...", err=True)

    return show


# The options as the command spells them, for messages (CheckOptions names its fields in Python).
_CHECK_SPELLING = {
    "sign": "--sign",
    "unit": "--unit",
    "sheet": "--sheet",
    "pages": "--pages",
    "rtol": "--relative-tolerance",
    "atol_fraction": "--absolute-tolerance",
    "member_column": "--member-column",
    "case_column": "--case-column",
    "force_column": "--force-column",
    "load_case": "--case",
    "assume_equal_EA": "--assume-equal-ea",
    "displacements": "--displacements",
}


def _colour(text: str, verdict: str) -> str:
    """Colour the verdict line on a terminal only; NO_COLOR (no-color.org) turns it off."""
    import os

    if os.environ.get("NO_COLOR") or not sys.stdout.isatty():
        return text
    first, _, rest = text.partition("\n")
    colour = {"agrees": "green", "discrepancies": "red"}.get(verdict, "yellow")
    return click.style(first, fg=colour, bold=True) + "\n" + rest


_CHECK_OPTIONS = [
    click.option(
        "--json",
        "as_json",
        is_flag=True,
        help="Print one JSON object (verdict, structure, convention, members, findings).",
    ),
    click.option(
        "--sign",
        type=click.Choice([m for m in ("tension-positive", "compression-positive", "auto")]),
        default="auto",
        show_default=True,
        help="Sign convention of the claimed table; T/C suffixes always settle the sign of their "
        "value.",
    ),
    click.option(
        "--unit",
        default="auto",
        show_default=True,
        metavar="UNIT|auto",
        help="Force unit of the claimed table (N, kN, MN, lbf, kip, kgf, tonne-force); units in "
        "headers or cells win.",
    ),
    click.option(
        "--sheet",
        default=None,
        help="Worksheet of an .xlsx claims file (default: the sheet whose rows name the model's"
        " members).",
    ),
    click.option(
        "--pages",
        default=None,
        metavar="12-14",
        help="Pages of a PDF claims file to search for the table (default: all).",
    ),
    click.option(
        "--report",
        default=None,
        metavar="PATH.html|PATH.md",
        help="Write the review report (HTML or Markdown), atomically.",
    ),
    click.option(
        "--csv",
        "csv_path",
        default=None,
        metavar="PATH",
        help="Write the member table as CSV (spreadsheet-safe), atomically.",
    ),
    click.option(
        "--relative-tolerance",
        "rtol",
        type=float,
        default=0.01,
        show_default=True,
        help="A claim agrees within this fraction of the larger value (0.01 = 1 %).",
    ),
    click.option(
        "--absolute-tolerance",
        "atol_fraction",
        type=float,
        default=1e-3,
        show_default=True,
        help="A claim also agrees within this fraction of the largest recomputed force of its "
        "load column.",
    ),
    # The first names of these two options, kept so that scripts written for them still run.
    click.option("--rtol", "rtol_alias", type=float, default=None, hidden=True),
    click.option("--atol-fraction", "atol_fraction_alias", type=float, default=None, hidden=True),
    click.option(
        "--member-column",
        default=None,
        help="Header of the member-label column, when not found automatically.",
    ),
    click.option(
        "--case-column", default=None, help="Header of the load-case column of a long table."
    ),
    click.option(
        "--force-column", default=None, help="Header of the force column of a long table."
    ),
    click.option(
        "--case",
        "load_name",
        default=None,
        help="Load case or combination of a single-column table.",
    ),
    click.option(
        "--assume-equal-ea",
        type=float,
        default=None,
        metavar="EA",
        callback=_positive_finite,
        help="Indeterminate truss without stiffness data: assume this EA for every member (said "
        "in every output).",
    ),
    click.option(
        "--all-rows",
        is_flag=True,
        help="List every row in the terminal table, including members without a claim.",
    ),
    click.option(
        "--displacements",
        default=None,
        type=click.Path(dir_okay=False),
        metavar="FILE",
        help="Claimed joint displacements (CSV: joint, direction, case, value with its length unit "
        "in the header or cells, e.g. 'deflection (mm)'); checked by the direct stiffness method "
        "and confirmed by the unit-load method.",
    ),
    _TABLES_ANYWHERE,
]


def _with_check_options(func: Callable[..., None]) -> Callable[..., None]:
    for option in reversed(_CHECK_OPTIONS):
        func = option(func)
    return func


@main.command(
    short_help="Compare claimed forces with recomputed ones and explain every difference."
)
@click.argument("case", type=click.Path())
@click.option(
    "--claims",
    "claims_path",
    required=True,
    type=click.Path(dir_okay=False),
    help="Claimed forces: CSV, .xlsx, or a PDF with a text layer (calc pages).",
)
@_with_check_options
def check(case: str, claims_path: str, **options: Any) -> None:
    """Compare the claimed member forces in --claims with those recomputed for CASE.

    Prints a verdict, the findings (sign convention, unit slip, swapped labels, sign flips,
    zero-force members, missing claims, unknown labels, load-case mix-ups, equilibrium of the
    claims, real errors) and the member table. Exit status: 0 agrees, 1 discrepancies, 2 bad
    input, 3 cannot verify.
    """
    spelt = {}
    for alias, name, typed in (
        ("rtol_alias", "rtol", "--rtol"),
        ("atol_fraction_alias", "atol_fraction", "--atol-fraction"),
    ):
        value = options.pop(alias)
        if value is not None:
            options[name] = value
            spelt[name] = typed  # a message names the option as the user typed it
    options["load_case"] = options.pop("load_name")
    options["assume_equal_EA"] = options.pop("assume_equal_ea")
    sys.exit(_run_check(case, claims_path, spelt=spelt, **options))


@main.command(short_help="Write a starter case file for a common truss pattern.")
@click.argument("pattern", metavar="PATTERN")
@click.option(
    "--span",
    type=float,
    required=True,
    help="Span (2D), or the width of a tower face or of a grid, in --length-unit.",
)
@click.option(
    "--depth",
    type=float,
    required=True,
    help="Depth of a parallel-chord truss, rise of a roof truss, height of a tower, depth of a "
    "grid.",
)
@click.option(
    "--panels",
    type=int,
    default=None,
    help="Panels (bays) along the span, up a tower, or cells a side of a grid; roof patterns "
    "have their own.",
)
@click.option(
    "--loaded-chord",
    type=click.Choice(["top", "bottom"]),
    default="top",
    show_default=True,
    help="Chord whose panel points carry the loads (2D patterns).",
)
@click.option(
    "--panel-load",
    type=float,
    default=None,
    metavar="P",
    help="Downward load at every loaded panel point not over a support (default 10 if no "
    "--line-load).",
)
@click.option(
    "--line-load",
    type=float,
    default=None,
    metavar="W",
    help="Downward load per unit of plan length on the loaded chord, to panel points by "
    "tributary length.",
)
@click.option(
    "--length-unit", default="m", show_default=True, help="Length unit written in the case file."
)
@click.option(
    "--force-unit", default="kN", show_default=True, help="Force unit written in the case file."
)
@click.option(
    "--out",
    "out_dir",
    required=True,
    type=click.Path(file_okay=False),
    help="Folder to write case.toml into (made if missing).",
)
@click.option("--replace", "overwrite", is_flag=True, help="Replace an existing case.toml.")
def starter(
    pattern: str,
    span: float,
    depth: float,
    panels: int | None,
    loaded_chord: str,
    panel_load: float | None,
    line_load: float | None,
    length_unit: str,
    force_unit: str,
    out_dir: str,
    overwrite: bool,
) -> None:
    """Write OUT/case.toml for PATTERN: pratt, howe, warren, warren-verticals, k, king-post,
    queen-post, fink, fan, scissors, bowstring, tower-3, tower-4, grid.

    The file is an ordinary case file (joints, members, chords, a pin and a roller, one load
    case) with the joint naming rule in its comments; edit it, then run `truss-verify solve`.
    """
    from pathlib import Path

    from verify.errors import did_you_mean
    from verify.io.case import build_model
    from verify.report.atomic import OutputError, write_atomic
    from verify.starter import PATTERNS, PatternError, build_starter, render_case
    from verify.units import Dimension, lookup_unit

    if pattern not in PATTERNS:
        _fail_input(
            f"unknown pattern '{pattern}'; the patterns are "
            f"{', '.join(PATTERNS)}.{did_you_mean(pattern, PATTERNS)}"
        )
    try:
        lookup_unit(length_unit, Dimension.LENGTH)
        lookup_unit(force_unit, Dimension.FORCE)
        made = build_starter(
            pattern,
            span=span,
            depth=depth,
            panels=panels,
            loaded_chord=loaded_chord,
            panel_load=panel_load,
            line_load=line_load,
            units=(length_unit, force_unit),
        )
    except (PatternError, ValueError) as exc:
        _fail_input(str(exc))
        raise  # unreachable
    text = render_case(made)
    import tomllib

    try:  # the file must read back as a valid case before it is written
        build_model(tomllib.loads(text), source="<starter>", text=text)
    except InputError as error:
        _fail_input(error)
    target = Path(out_dir) / "case.toml"
    if target.exists() and not overwrite:
        _fail_input(f"{target} exists; pass --replace to replace it")
    try:
        target.parent.mkdir(parents=True, exist_ok=True)
        write_atomic(target, text)
    except (OutputError, OSError) as exc:
        _fail_input(str(exc))
    click.echo(f"wrote {target}: {made.title}; next: truss-verify solve {target}")


@main.command(short_help="Check the bundled demo case (a footbridge with planted errors).")
@click.option("--json", "as_json", is_flag=True, help="Print the review as JSON.")
@click.option(
    "--report", default=None, metavar="PATH.html|PATH.md", help="Also write the review report."
)
def demo(as_json: bool, report: str | None) -> None:
    """Check the bundled demo: a footbridge truss and a consultant's table with planted errors."""
    from importlib.resources import as_file, files

    demo_dir = files("verify") / "data" / "demo"
    with (
        as_file(demo_dir / "case.toml") as case_path,
        as_file(demo_dir / "claims.csv") as claims_path,
    ):
        if not as_json:
            click.echo(f"Demo: truss-verify check {case_path} --claims {claims_path}\n")
        code = _run_check(
            str(case_path),
            str(claims_path),
            as_json=as_json,
            report=report,
            csv_path=None,
            all_rows=False,
        )
    if not as_json:
        click.echo(
            f"\n(The demo table has planted errors; 'check' itself would exit with status {code}.)"
        )
    sys.exit(0 if code in (0, 1) else code)


@main.command(short_help="Check every case in a folder, in parallel, and write one summary.")
@click.argument("folder", type=click.Path())
@click.option(
    "--jobs",
    type=click.IntRange(min=1),
    default=None,
    metavar="N",
    help="Worker processes on this machine (default: every core available).",
)
@click.option(
    "--scheduler",
    default=None,
    metavar="ADDRESS",
    help="Run the cases on a Dask distributed scheduler (e.g. tcp://10.0.0.5:8786) instead of "
    "local processes; needs pip install 'truss-verify[cluster]' and the case files at the same "
    "paths on every worker.",
)
@click.option(
    "--summary",
    "summary_path",
    default=None,
    metavar="FILE.csv",
    help="Where to write the summary CSV (default: OUT/summary.csv).",
)
@click.option(
    "--out",
    "output",
    default=None,
    metavar="DIR",
    help="Folder for the reports, index.html and the rerun state (default: "
    "FOLDER/truss-verify-batch).",
)
@click.option(
    "--recheck",
    is_flag=True,
    help="Check every case, even those whose inputs are unchanged since the last run.",
)
def batch(
    folder: str,
    jobs: int | None,
    scheduler: str | None,
    summary_path: str | None,
    output: str | None,
    recheck: bool,
) -> None:
    """Check every case in FOLDER and write a summary CSV, an HTML index and one report per case.

    FOLDER holds case folders (each a case.toml and one claims table: claims.csv, claims.xlsx or
    claims.pdf), at any depth; or a manifest.csv listing case, claims and options per row (FOLDER
    may also name the manifest itself). Columns: case, claims (required), name, sign, unit,
    sheet, pages, rtol, atol_fraction, member_column, case_column, force_column, load_case,
    assume_equal_ea, displacements. A rerun skips cases whose inputs have not changed. Progress
    goes to stderr.

    Exit status, the most serious case first: 1 discrepancies, 3 cannot verify, 70 a fault in
    the tool, 2 bad input (a case, a manifest row, or the command itself); 0 every case agrees.
    """
    from verify.batch.cluster import DaskRunner, SchedulerError
    from verify.batch.run import local_runner, run_batch, status_line
    from verify.report.atomic import OutputError

    if scheduler is not None and jobs is not None:
        _fail_input(
            "--jobs sets local processes; with --scheduler the cluster's workers run the cases, "
            "so give one or the other"
        )

    quiet: list[
        bool
    ] = []  # set once stderr is gone (`2>&1 | head`): the summary still owes every case

    def progress(result: Any, done: int, total: int) -> None:
        said = "unchanged since the last run" if result.unchanged else f"{result.seconds:.2f} s"
        what = result.status + (
            f", {result.findings} finding{'s' if result.findings != 1 else ''}"
            if result.findings
            else ""
        )
        why = f": {result.reason.splitlines()[-1]}" if result.reason else ""
        if not quiet:
            try:
                click.echo(
                    escape_controls(f"[{done}/{total}] {result.name}: {what} ({said}){why}"),
                    err=True,
                )
            except OSError:
                quiet.append(True)

    try:
        if scheduler is not None:
            with DaskRunner(scheduler) as runner:
                outcome = run_batch(
                    folder,
                    runner=runner,
                    output=output,
                    summary=summary_path,
                    recheck=recheck,
                    on_result=progress,
                )
        else:
            outcome = run_batch(
                folder,
                runner=local_runner(jobs or _cores()),
                output=output,
                summary=summary_path,
                recheck=recheck,
                on_result=progress,
            )
    except InputError as error:
        _fail_input(error)
    except (SchedulerError, OutputError) as error:
        _fail_input(str(error))
    click.echo(status_line(outcome.counts, outcome.exit_code))
    click.echo(f"summary: {outcome.summary}\nindex:   {outcome.index}")
    click.echo(f"Caution: {CAUTION}")
    sys.exit(outcome.exit_code)


def _cores() -> int:
    """The cores this process may use (a container or `taskset` may allow fewer than the machine
    has)."""
    affinity = getattr(os, "sched_getaffinity", None)
    return len(affinity(0)) if affinity is not None else (os.cpu_count() or 1)


EXIT_INTERRUPTED = 130  # 128 + SIGINT, as shells report Ctrl-C
EXIT_PIPE_CLOSED = 141  # 128 + SIGPIPE, as shells report a reader that went away (`| head`)
EXIT_INTERNAL = 70  # EX_SOFTWARE (sysexits.h): a fault in the tool, never a verdict


def _fill_closed_streams() -> None:
    """Point a closed stdout or stderr (`>&-`) at the null device.

    Python then starts with sys.stdout None, and the first write or flush failed with status 1,
    which means "discrepancies". A run whose output the caller discarded still owes a true exit
    status, so the output goes where the caller sent it: nowhere.
    """
    for fd, name in ((1, "stdout"), (2, "stderr")):
        try:
            os.fstat(fd)
        except OSError:
            null = os.open(os.devnull, os.O_WRONLY)  # takes the lowest free descriptor
            if null != fd:
                os.dup2(null, fd)
                os.close(null)
        if getattr(sys, name) is None:
            setattr(
                sys, name, open(fd, "w", encoding="utf-8", errors="backslashreplace", closefd=False)
            )  # lives as long as the process


def run(argv: list[str] | None = None) -> None:
    """The console entry point: run the command, flush the output, and leave at once.

    Freeing the millions of small objects of a 10^5-member run one by one at interpreter exit
    took about 0.2 s (bench/run.py) and serves nothing: reports are written atomically before a
    command returns and no exit hooks are registered. Statuses 0-3 keep their meaning (see
    main); an interruption, a closed or full output and a fault in the tool get statuses of
    their own, never 1 ("discrepancies").
    """
    _fill_closed_streams()
    try:
        returned = main.main(args=argv, prog_name="truss-verify", standalone_mode=False)
        code: Any = returned if isinstance(returned, int) else 0  # --help and --version end here
    except SystemExit as exc:
        code = exc.code
    except click.exceptions.Abort:  # Ctrl-C or end of input
        sys.stderr.write("Interrupted.\n")
        code = EXIT_INTERRUPTED
    except click.ClickException as exc:  # a usage error: click's own message, status 2
        exc.show()
        code = exc.exit_code
    except OSError as exc:  # the output cannot be written (a full disk, a closed terminal)
        sys.stderr.write(f"truss-verify: cannot write the output ({exc.strerror or exc})\n")
        code = EXIT_PIPE_CLOSED if exc.errno == errno.EPIPE else EXIT_BAD_INPUT
    except Exception:  # noqa: BLE001 - a fault in the tool: say so plainly, keep the trace for the report
        sys.stderr.write(
            "truss-verify: internal error (a fault in the tool, not in your input); please "
            "report it "
            "with the command and input files:\n" + traceback.format_exc()
        )
        code = EXIT_INTERNAL
    pacified = cast(type, getattr(click.utils, "PacifyFlushWrapper", type(None)))
    if isinstance(sys.stdout, pacified):
        # click met a closed pipe and chose status 1, which here means "discrepancies".
        code = EXIT_PIPE_CLOSED
    if code is None:
        code = 0
    elif not isinstance(code, int):
        sys.stderr.write(f"{code}\n")
        code = 1
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (
            OSError,
            ValueError,
            AttributeError,
        ):  # a closed pipe (e.g. `| head`): nothing more to deliver
            pass
    os._exit(code)


if __name__ == "__main__":  # pragma: no cover
    run()
