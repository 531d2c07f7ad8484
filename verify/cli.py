"""Command line: parses arguments, wires the pipeline, prints, and sets the exit status.

The only module that prints or exits. Exit status: 0 agrees, 1 discrepancies, 2 bad input or
usage, 3 the truss cannot be verified (unstable, or indeterminate without stiffness).
"""

from __future__ import annotations

import sys
from pathlib import Path

import click

from verify import __version__
from verify.analysis.pipeline import Analysis, analyse
from verify.analysis.stability import Classification
from verify.errors import EXIT_BAD_INPUT, EXIT_CANNOT_VERIFY, InputError
from verify.io.case import read_case
from verify.model import Model
from verify.report import json_out, text
from verify.report.cautions import CAUTION


def _fail_input(error: InputError) -> None:
    click.echo(error.render(), err=True)
    sys.exit(EXIT_BAD_INPUT)


def _load(case: str) -> Model:
    try:
        return read_case(case)
    except InputError as error:
        _fail_input(error)
        raise  # unreachable; keeps type checkers honest


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


@main.command()
@click.argument("case", type=click.Path(dir_okay=False))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object instead of text.")
def stability(case: str, as_json: bool) -> None:
    """Classify CASE: Maxwell's count, rank of the equilibrium matrix, mechanisms, self-stress."""
    model = _load(case)
    analysis = _stability_only(model)
    if as_json:
        click.echo(json_out.dumps(json_out.stability_json(model, analysis)))
    else:
        click.echo(text.render_stability(model, analysis.stability))
    sys.exit(EXIT_CANNOT_VERIFY if analysis.stability.classification is Classification.UNSTABLE else 0)


def _stability_only(model: Model) -> Analysis:
    from verify.analysis.stability import solve_stability

    return Analysis(model, solve_stability(model))


@main.command()
@click.argument("case", type=click.Path(dir_okay=False))
@click.option("--json", "as_json", is_flag=True, help="Print one JSON object (forces, reactions) instead of text.")
@click.option("--show", type=click.Choice(["forces", "joints", "sections", "all"]), default="forces", show_default=True,
              help="What to print: the force tables, the joint-by-joint hand calc, the section cuts, or all.")
@click.option("--case", "load_name", default=None, help="Load case or combination for the hand calc (default: every one).")
@click.option("--assume-equal-ea", type=float, default=None, metavar="EA",
              help="For an indeterminate truss without stiffness data: assume this EA for every member (said in every output).")
def solve(case: str, as_json: bool, show: str, load_name: str | None, assume_equal_ea: float | None) -> None:
    """Recompute every member force (tension positive, T/C) and reaction of CASE."""
    model = _load(case)
    analysis = analyse(model, assume_equal_EA=assume_equal_ea)
    if load_name is not None and load_name not in model.load_names:
        from verify.errors import did_you_mean

        click.echo(f"--case: '{load_name}' is not a load case or combination of {case}.{did_you_mean(load_name, model.load_names)}", err=True)
        sys.exit(EXIT_BAD_INPUT)
    if as_json:
        click.echo(json_out.dumps(json_out.solve_json(model, analysis)))
        sys.exit(0 if analysis.reference is not None else EXIT_CANNOT_VERIFY)
    if analysis.reference is None:
        click.echo(text.render_stability(model, analysis.stability))
        for note in analysis.notes:
            click.echo(f"note: {note}")
        click.echo("No forces recomputed: " + ("the truss is unstable." if not analysis.stability.is_stable
                   else "statically indeterminate without member stiffness (give EA, or --assume-equal-ea)."))
        sys.exit(EXIT_CANNOT_VERIFY)
    click.echo(text.render_stability(model, analysis.stability))
    click.echo("")
    names = [load_name] if load_name else model.load_names
    if show in ("forces", "all"):
        click.echo(text.render_solution(model, analysis))
    if show in ("joints", "all") and analysis.joints is not None:
        for name in names:
            click.echo(text.render_joint_calc(model, analysis.joints, name))
            click.echo("")
    if show in ("sections", "all") and analysis.sections is not None:
        from verify.report.section_calc import render_cut, render_reactions

        for name in names:
            click.echo(render_reactions(model, name))
            for cut in analysis.sections.cuts:  # type: ignore[attr-defined]
                click.echo(render_cut(model, cut, name))
                click.echo("")
    click.echo(f"Caution: {CAUTION}")


if __name__ == "__main__":  # pragma: no cover
    main()
