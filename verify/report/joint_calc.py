"""The joint-by-joint hand calc for one load column, as records rendered two ways: plain text
(terminal, `solve --show joints`, Markdown) and HTML with the equations set as equations.

The records only restate what the method of joints solved (verify/analysis/joints.py): for each
step the joint, the equilibrium sums with the values of forces found earlier substituted, and
the forces the step finds.
"""

from __future__ import annotations

from html import escape
from typing import NamedTuple

import numpy as np

from verify.analysis.cut_sheets import ReactionsSheet
from verify.analysis.joints import JointSolution
from verify.model import Model
from verify.report.numbers import fmt, fmt_ratio, tc

AXIS_NAMES = ("x", "y", "z")
MAX_SIMULTANEOUS_LISTED = 40  # forces listed for a step that solves many at once


class Term(NamedTuple):
    coefficient: float
    name: str  # a member id, or a reaction label such as 'L0.y'
    reaction: bool
    known: float | None  # the value found in an earlier step, substituted


class Equation(NamedTuple):
    label: str  # 'ΣFx' at a joint; 'ΣM about joint L0 = 0' for the whole truss
    terms: tuple[Term, ...]
    load: float | None  # the applied load's part (None: no load in this sum)
    overall: bool = False  # a sum over the whole truss (the reactions step)


class Found(NamedTuple):
    name: str
    reaction: bool
    value: float


class Step(NamedTuple):
    number: int
    title: str
    equations: tuple[Equation, ...]
    found: tuple[Found, ...]
    listed_all: bool = True


class JointCalc(NamedTuple):
    load_name: str
    unit: str
    steps: tuple[Step, ...]
    residual_text: str


def joint_calc(
    model: Model,
    solution: JointSolution,
    load_name: str,
    *,
    reactions: ReactionsSheet | None = None,
) -> JointCalc:
    """The records of the joint-by-joint calc for one load column.

    `reactions`: the overall-equilibrium records (the section route's `calc_sheets`), whose
    equations the first step shows; without them the step gives the reactions found.
    """
    d = model.dim
    b = len(model.members)
    k = solution.forces.column(load_name)
    t = np.concatenate([solution.forces.member_forces[:, k], solution.forces.reactions[:, k]])
    F = model.load_matrix()[:, k]
    names = model.member_ids + [r.label for r in model.reactions]

    def found(columns: tuple[int, ...]) -> tuple[Found, ...]:
        return tuple(Found(names[c], c >= b, float(t[c])) for c in columns)

    steps: list[Step] = []
    solved: set[int] = set()
    # Members at each joint a step shows, in member order, found once (a scan of every member
    # per step made large reports quadratic in the truss size; a report shows the first steps).
    stepped = [model.joint_index[s.joints[0]] for s in solution.steps if s.kind == "joint"]
    ends = model.ends_index
    at_joint: dict[int, list[int]] = {j: [] for j in stepped}
    touching = np.flatnonzero(np.isin(ends[:, 0], stepped) | np.isin(ends[:, 1], stepped))
    for i, start, end in zip(touching.tolist(), *ends[touching].T.tolist(), strict=True):
        if start in at_joint:
            at_joint[start].append(i)
        if end in at_joint:
            at_joint[end].append(i)
    for n, step in enumerate(solution.steps, 1):
        if step.kind == "reactions":
            equations: list[Equation] = []
            if (
                reactions is not None
                and reactions.possible
                and reactions.pivot == solution.moment_joint
            ):
                for row in reactions.rows:
                    terms = tuple(Term(c, label, True, None) for label, c in row.coefficients)
                    label = row.title.split(" (")[0]
                    equations.append(Equation(label, terms, row.load_total, overall=True))
            title = (
                f"reactions from overall equilibrium (moments about joint {solution.moment_joint})"
            )
            steps.append(Step(n, title, tuple(equations), found(step.unknowns)))
        elif step.kind == "simultaneous":
            shown = ", ".join(step.joints[:12]) + (" ..." if len(step.joints) > 12 else "")
            title = (
                f"no joint with at most {d} unknowns remains; the remaining "
                f"{len(step.unknowns)} forces at joints {shown} are solved simultaneously"
            )
            listed = step.unknowns[:MAX_SIMULTANEOUS_LISTED]
            steps.append(Step(n, title, (), found(listed), len(listed) == len(step.unknowns)))
        else:
            joint = step.joints[0]
            j = model.joint_index[joint]
            cols = at_joint.get(j, []) + [
                b + i for i, r in enumerate(model.reactions) if r.joint == joint
            ]
            plural = "s" if len(step.unknowns) > 1 else ""
            title = f"joint {joint} — unknown{plural} " + ", ".join(
                (names[c] if c < b else f"R_{names[c]}") for c in step.unknowns
            )
            if step.partial:
                title += " (the others here wait for later steps)"
            sums: list[Equation] = []
            for axis in range(d):
                summed: list[Term] = []
                for c in cols:
                    if c < b:
                        u = model.unit_vectors[c]
                        coefficient = float(u[axis] if model.ends_index[c, 0] == j else -u[axis])
                    else:
                        coefficient = float(model.reactions[c - b].direction[axis])
                    if abs(coefficient) < 1e-12:
                        continue
                    known = float(t[c]) if c in solved else None
                    summed.append(Term(coefficient, names[c], c >= b, known))
                load = float(F[j * d + axis])
                sums.append(
                    Equation(f"ΣF{AXIS_NAMES[axis]}", tuple(summed), load if load else None)
                )
            steps.append(Step(n, title, tuple(sums), found(step.unknowns)))
        solved.update(step.unknowns)
    unit = model.units.force.symbol
    return JointCalc(load_name, unit, tuple(steps), _residual(solution.max_residual, t, unit))


def _residual(residual: float, forces: np.ndarray, unit: str) -> str:
    """The out-of-balance check in words: round-off is said to be round-off, not printed as
    3.0e-14."""
    finite = forces[np.isfinite(forces)]
    largest = float(np.abs(finite).max(initial=0.0))
    if residual <= 1e-9 * (largest or 1.0):
        return f"0 {unit} (round-off, below {fmt_ratio(1e-9 * (largest or 1.0))} {unit})"
    return f"{fmt_ratio(residual)} {unit}"


def _found_value(f: Found) -> str:
    return fmt(f.value) if f.reaction else tc(f.value)


# -- plain text -----------------------------------------------------------------------------------
def _text_name(term: Term | Found) -> str:
    return f"R_{term.name}" if term.reaction else term.name


def _text_term(term: Term) -> str:
    sign = "-" if term.coefficient < 0 else "+"
    if term.known is not None:  # a force found earlier: its name and value, to trace each term
        return f"{sign} {fmt(abs(term.coefficient))}·({_text_name(term)} = {fmt(term.known)})"
    return f"{sign} {fmt(abs(term.coefficient), 4)}·{_text_name(term)}"


def render_text(calc: JointCalc) -> str:
    out = [
        f"Method of joints — {calc.load_name} (forces in {calc.unit}, tension positive; each "
        "equation sums forces on the joint)"
    ]
    for step in calc.steps:
        out.append(f"\nStep {step.number}: {step.title}")
        for eq in step.equations:
            parts = [_text_term(t) for t in eq.terms]
            if eq.load is not None:
                parts.append(f"{'+' if eq.load >= 0 else '-'} {fmt(abs(eq.load))}")
            if eq.overall:
                out.append(f"  {eq.label}: {' '.join(parts)} = 0")
            else:
                out.append(f"  {eq.label} = 0: {' '.join(parts) if parts else '0'} = 0")
        results = ", ".join(f"{_text_name(f)} = {_found_value(f)}" for f in step.found)
        out.append("  => " + results)
    out.append(
        f"\nCheck: largest out-of-balance force over all joint equations = {calc.residual_text}"
    )
    return "\n".join(out)


# -- HTML -----------------------------------------------------------------------------------------
def _html_name(name: str, reaction: bool) -> str:
    return f"{'R' if reaction else 'N'}<sub>{escape(name)}</sub>"


def _html_label(label: str) -> str:
    """'ΣFx' -> ΣF with x set below; the whole truss's sums keep their words ('ΣM about ...')."""
    label = label.removesuffix(" = 0")
    if label.startswith("ΣF") and len(label) == 3:
        return f"ΣF<sub>{escape(label[2])}</sub>"
    return escape(label)


def _html_term(term: Term, first: bool) -> str:
    sign = "−" if term.coefficient < 0 else ("" if first else "+")
    name = _html_name(term.name, term.reaction)
    if term.known is not None:
        body = f"{escape(fmt(abs(term.coefficient)))}·({name} = {escape(fmt(term.known))})"
    else:
        body = f"{escape(fmt(abs(term.coefficient), 4))}·{name}"
    return f"{sign} {body}".strip()


def render_html(calc: JointCalc) -> str:
    """Each step as a small block: the joint, its sums with earlier forces substituted, and
    what it finds (N: member force, tension positive; R: reaction)."""
    out = [
        f"<p>Forces in {escape(calc.unit)}; N is a member force (tension positive), R a "
        "reaction; each sum is taken over the forces on the joint, with forces found in earlier "
        "steps substituted.</p>"
    ]
    for step in calc.steps:
        out.append('<div class="eq jstep">')
        out.append(f'<p class="head"><strong>Step {step.number}</strong>: {escape(step.title)}</p>')
        for eq in step.equations:
            parts = [_html_term(t, n == 0) for n, t in enumerate(eq.terms)]
            if eq.load is not None:
                parts.append(f"{'−' if eq.load < 0 else '+'} {escape(fmt(abs(eq.load)))}")
            body = " ".join(parts) if parts else "0"
            out.append(f'<p class="sum">{_html_label(eq.label)}: {body} = 0</p>')
        results = ", ".join(
            f"{_html_name(f.name, f.reaction)} = {escape(_found_value(f))}" for f in step.found
        )
        more = "" if step.listed_all else " …"
        out.append(f'<p class="result">⇒ {results}{more}</p></div>')
    out.append(
        "<p>Check: largest out-of-balance force over all joint equations = "
        f"{escape(calc.residual_text)}</p>"
    )
    return "".join(out)
