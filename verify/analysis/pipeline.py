"""Run every analysis a model supports and gather the results in one immutable object.

This is the only place that decides which routes apply: the joint and global routes need a
stable, determinate truss; the stiffness route needs stiffness and an indeterminate truss.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import InitVar, dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from verify.analysis.forces import ForceResult
from verify.analysis.global_solve import solve_global
from verify.analysis.joints import JointSolution, JointWalk, solve_joints, walk_joints
from verify.analysis.run import AnalysisRun
from verify.analysis.stability import (
    DENSE_DOF_LIMIT,
    Classification,
    StabilityResult,
    unit_stiffness_screened,
)
from verify.forking import Forked, ForkFailed
from verify.model import Model

if TYPE_CHECKING:  # imported lazily at run time: both pull in heavier modules
    from verify.analysis.sections import SectionSolution
    from verify.analysis.stiffness import ElasticSolution

ROUTE_RTOL = 1e-6  # routes must agree to this fraction of the largest force (round-off only)
PARALLEL_MIN_MEMBERS = 20_000  # below this a second process costs more than it saves


@dataclass(frozen=True)
class Analysis:
    """Every result of one model's analysis, and the run that made them (`run`: the equilibrium
    matrix, its LU and the solves the comparison asks for; verify.analysis.run)."""

    model: Model
    stability: StabilityResult
    joints: JointSolution | None = None
    global_: ForceResult | None = None
    sections: SectionSolution | None = None
    elastic: ElasticSolution | None = None
    notes: tuple[str, ...] = field(default=())
    route_disagreement: float = 0.0  # largest |difference| between routes / largest force
    assumed_EA: float | None = None  # set when the reviewer asked to assume equal EA
    # The run that made these results; a fresh one of `model` when not given.
    shared: InitVar[AnalysisRun | None] = None
    run: AnalysisRun = field(init=False, repr=False, compare=False)

    def __post_init__(self, shared: AnalysisRun | None) -> None:
        object.__setattr__(self, "run", shared if shared is not None else AnalysisRun(self.model))

    @property
    def reference(self) -> ForceResult | None:
        """The forces claims are judged against: global statics, else the elastic solve."""
        if self.global_ is not None:
            return self.global_
        elastic = self.elastic
        return getattr(elastic, "forces", None)


def _large(model: Model) -> bool:
    return len(model.members) >= PARALLEL_MIN_MEMBERS


class EarlyRoutes:
    """The method of sections and the joint-by-joint walk of the method of joints, which need
    only the model and its overall reactions, started one after the other in a second process
    on a large truss as soon as the model is read. The caller reads the claims meanwhile and
    then hands this to `analyse`, which takes their results after screening stability and
    solving globally in this process (DEVELOPERS.md: what else was tried in the child, and why
    not)."""

    def __init__(
        self,
        model: Model,
        *,
        sections: bool = True,
        factor_now: bool = False,
        assume_equal_EA: float | None = None,
        progress: Callable[[str], None] | None = None,
    ) -> None:
        """`factor_now`: the caller has other work to do before `analyse` (the claims to read):
        a large square A is then factored at once and the stability screen's sigma figure is
        estimated in a child process meanwhile (AnalysisRun.start_conditioning), the step
        named to `progress` first; on a large truss with more unknown forces than joint
        equations and its stiffness (or `assume_equal_EA`, as analyse will be asked), the
        direct stiffness solve starts in a child process instead (AnalysisRun.start_elastic)."""
        self.model, self.sections = model, sections
        self.run = AnalysisRun(model)
        self.run.register()  # the reports' calc sheets, handed the model, find it (AnalysisRun.of)
        self.child: Forked[tuple[SectionSolution, JointWalk]] | None = None
        self._answer: tuple[SectionSolution | None, JointWalk | None] = (None, None)
        try:
            self._start(factor_now, assume_equal_EA, progress)
        except BaseException:  # an interruption or error after a fork: no child left behind
            self.cancel()
            raise

    def _start(
        self,
        factor_now: bool,
        assume_equal_EA: float | None,
        progress: Callable[[str], None] | None,
    ) -> None:
        model = self.model
        # Only a square A can be stable and determinate (more columns: indeterminate or
        # unstable; fewer: unstable), and only then are the section route's forces used.
        square = len(model.members) + len(model.reactions) == model.dofs
        if self.sections and _large(model) and square:
            self.run.overall_reactions()  # both routes start from these: solved once, here
            shared = (self.run.id_tuple("members"), self.run.id_tuple("joints"))
            self.child = Forked.start(_sections_and_walk, model, self.run, shared=shared)
        # In 3D only: a plane truss's factors are too small for the child to pay
        # (verify.analysis.run.SIGMA_CHILD_MIN_ENTRIES), and its LU is made where it was.
        if factor_now and model.dim == 3 and _large(model) and square and not _dense_screen(model):
            if progress is not None:
                progress(f"factoring the equilibrium matrix ({model.dofs:,} joint equations)")
            self.run.start_conditioning()
        elif (
            factor_now
            and _large(model)
            and unit_stiffness_screened(model)
            and (model.has_stiffness or assume_equal_EA is not None)
        ):
            # Only the solve: the screen starts after the claims are read (analyse), so that the
            # solve's time-boxed MMD child never shares two cores with two other busy processes
            # (its box is wall-clock time: a trip would change the ordering, and the digits).
            if progress is not None:
                progress(f"solving by direct stiffness ({model.dofs:,} joint equations)")
            self.run.start_elastic(assume_equal_EA)

    def collect(self) -> tuple[SectionSolution | None, JointWalk | None]:
        """The child's answer (both None when it failed: each is then made here)."""
        if self.child is not None:
            try:
                self._answer = self.child.result()
            except ForkFailed:
                pass
            self.child = None
        return self._answer

    def joints(self) -> JointSolution:
        """The method of joints, from the child's walk when it made one."""
        return solve_joints(self.model, self.run, self.collect()[1])

    def section_route(self) -> SectionSolution | None:
        """The method of sections (from the child when it made it), or None when not asked."""
        made = self.collect()[0]
        if made is not None or not self.sections:
            return made
        from verify.analysis.sections import solve_sections

        return solve_sections(self.model)

    def cancel(self) -> None:
        """No child or frozen heap left behind (an error, an interruption, a verdict reached)."""
        # Dropped, never asked again: a stopped child's result() would make the routes here.
        child, self.child = self.child, None
        try:
            if child is not None:
                child.cancel()
        finally:
            self.run.stop_children()


def _dense_screen(model: Model) -> bool:
    """True when solve_stability (default limits) takes the dense SVD, which needs no LU."""
    return model.dofs <= DENSE_DOF_LIMIT


def _sections_and_walk(model: Model, run: AnalysisRun) -> tuple[SectionSolution, JointWalk]:
    from verify.analysis.sections import solve_sections

    return solve_sections(model), walk_joints(model, run)


def analyse(
    model: Model,
    *,
    sections: bool = True,
    assume_equal_EA: float | None = None,
    displacements: bool = False,
    early: EarlyRoutes | None = None,
) -> Analysis:
    """Stability first; then every route the classification allows.

    `displacements` asks for the direct stiffness solve of a determinate truss too (joint
    displacements need stiffness even where statics gives the forces). `early`: the routes
    started for this model while its claims were read (else they start here).
    """
    # On a large truss the section route runs in a second process from before the stability
    # screen; it is dropped if the truss turns out not to be stable and determinate.
    if early is None or early.model is not model or early.sections != sections:
        early = EarlyRoutes(model, sections=sections)
    run = early.run
    elastic: ElasticSolution | ValueError | None = None
    try:
        if early.child is None and _large(model) and unit_stiffness_screened(model):
            elastic = _early_elastic(run, assume_equal_EA)
        return _routes(
            early,
            elastic,
            sections=sections,
            assume_equal_EA=assume_equal_EA,
            displacements=displacements,
        )
    finally:
        # An error or an interruption on the way: no child or frozen heap left behind.
        early.cancel()
        run.stop_children()


def _early_elastic(
    run: AnalysisRun, assume_equal_EA: float | None
) -> ElasticSolution | ValueError | None:
    """The elastic solve of a large truss with more unknown forces than joint equations, made
    while a child process factorises the stability screen's unit-stiffness matrix: the screen
    and the solve each factor a matrix of the truss's size (on the 10^5-member 3D grid with top
    chords about 2 s each), and a stable verdict asks for the solve anyway. None when the solve
    is not asked for (no stiffness) or no child could be started; a ValueError is the solve's
    answer for the note (missing or singular stiffness). An unstable verdict drops it."""
    model = run.model
    if not (model.has_stiffness or assume_equal_EA is not None):
        return None
    if not run.start_unit_stiffness_screen():
        return None
    try:
        return run.elastic(assume_equal_EA)
    except ValueError as exc:
        return exc


def _routes(
    routes: EarlyRoutes,
    early: ElasticSolution | ValueError | None,
    *,
    sections: bool,
    assume_equal_EA: float | None,
    displacements: bool,
) -> Analysis:
    run = routes.run
    model = run.model
    # While a child estimates the sigma figure the verdict waits for, the three routes are
    # finished (the global solve with the LU already made, the joints' and the sections'
    # answers): used only if the verdict is stable and determinate (10^6-member grid: 1.1 s of
    # a 2.4 s wait).
    ahead = _determinate_routes(routes) if run.conditioning_started else None
    stability = run.stability()
    notes: list[str] = []
    if stability.classification is not Classification.STABLE_DETERMINATE:
        routes.cancel()
    if stability.classification is Classification.UNSTABLE:
        return Analysis(
            model, stability, notes=("unstable: no forces can be recomputed",), shared=run
        )
    if stability.classification is Classification.STABLE_INDETERMINATE:
        elastic = None
        if isinstance(early, ValueError):
            notes.append(_no_stiffness_note(early))
        elif model.has_stiffness or assume_equal_EA is not None:
            elastic = _stiffness_or_note(run, assume_equal_EA, notes)
        else:
            missing = model.members_without_stiffness()
            notes.append(
                f"statically indeterminate (degree {stability.self_stress}) and {len(missing)} "
                "member(s) lack EA "
                f"({', '.join(missing[:10])}{' ...' if len(missing) > 10 else ''}): the forces "
                "cannot be recomputed; only the equilibrium of claimed forces can be checked"
            )
        return Analysis(
            model,
            stability,
            elastic=elastic,
            notes=tuple(notes),
            assumed_EA=assume_equal_EA,
            shared=run,
        )
    global_, joints, section_solution, disagreement = ahead or _determinate_routes(routes)
    elastic = None
    if displacements and (model.has_stiffness or assume_equal_EA is not None):
        elastic = _stiffness_or_note(run, assume_equal_EA, notes)
    return Analysis(
        model,
        stability,
        joints=joints,
        global_=global_,
        sections=section_solution,
        elastic=elastic,
        notes=tuple(notes),
        route_disagreement=disagreement,
        assumed_EA=assume_equal_EA,
        shared=run,
    )


def _determinate_routes(
    routes: EarlyRoutes,
) -> tuple[ForceResult, JointSolution, SectionSolution | None, float]:
    """The global solve, the method of joints and the method of sections of a truss whose A is
    square and factored, and how far they disagree."""
    global_ = solve_global(routes.model, routes.run)
    joints = routes.joints()
    section_solution = routes.section_route()
    disagreement = route_disagreement(
        global_, joints.forces, getattr(section_solution, "forces", None)
    )
    return global_, joints, section_solution, disagreement


def _stiffness_or_note(
    run: AnalysisRun, assume_equal_EA: float | None, notes: list[str]
) -> ElasticSolution | None:
    try:
        return run.elastic(assume_equal_EA)
    except ValueError as exc:  # missing EA or a singular stiffness matrix: said, not raised
        notes.append(_no_stiffness_note(exc))
        return None


def _no_stiffness_note(exc: ValueError) -> str:
    return f"direct stiffness solve not possible: {exc}"


def force_scale(reference: ForceResult) -> float:
    """The largest member force or reaction: the yardstick for relative differences."""
    values = [np.abs(reference.member_forces), np.abs(reference.reactions)]
    finite = [float(np.nanmax(v)) for v in values if v.size and np.isfinite(v).any()]
    return max(finite, default=0.0)


def route_disagreement(reference: ForceResult, *others: ForceResult | None) -> float:
    scale = force_scale(reference)
    worst = 0.0
    for other in others:
        if other is None:
            continue
        diff = np.abs(other.member_forces - reference.member_forces)
        if np.isfinite(diff).any():
            worst = max(worst, float(np.nanmax(diff)) / (scale or 1.0))
    return worst
