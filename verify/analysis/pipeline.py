"""Run every analysis a model supports and gather the results in one immutable object.

This is the only place that decides which routes apply: the joint and global routes need a
stable, determinate truss; the stiffness route needs stiffness and an indeterminate truss.
"""

from __future__ import annotations

import gc
import os
import pickle
import signal
import threading
from collections.abc import Callable
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any

import numpy as np

from verify.analysis.forces import ForceResult
from verify.analysis.global_solve import solve_global
from verify.analysis.joints import JointSolution, solve_joints
from verify.analysis.stability import Classification, StabilityResult, solve_stability
from verify.model import Model

if TYPE_CHECKING:  # imported lazily at run time: both pull in heavier modules
    from verify.analysis.sections import SectionSolution
    from verify.analysis.stiffness import ElasticSolution

ROUTE_RTOL = 1e-6  # routes must agree to this fraction of the largest force (round-off only)
PARALLEL_MIN_MEMBERS = 20_000  # below this a second process costs more than it saves
SERIAL_ENV = "TRUSS_VERIFY_SERIAL"  # set to any value to keep every route in one process


@dataclass(frozen=True)
class Analysis:
    model: Model
    stability: StabilityResult
    joints: JointSolution | None = None
    global_: ForceResult | None = None
    sections: SectionSolution | None = None
    elastic: ElasticSolution | None = None
    notes: tuple[str, ...] = field(default=())
    route_disagreement: float = 0.0  # largest |difference| between routes / largest force
    assumed_EA: float | None = None  # set when the reviewer asked to assume equal EA

    @property
    def reference(self) -> ForceResult | None:
        """The forces claims are judged against: global statics, else the elastic solve."""
        if self.global_ is not None:
            return self.global_
        elastic = self.elastic
        return getattr(elastic, "forces", None)


def analyse(
    model: Model,
    *,
    sections: bool = True,
    assume_equal_EA: float | None = None,
    displacements: bool = False,
) -> Analysis:
    """Stability first; then every route the classification allows.

    `displacements` asks for the direct stiffness solve of a determinate truss too (joint
    displacements need stiffness even where statics gives the forces).
    """
    # The section route needs only the loads and the overall reactions: on large trusses it
    # starts in a second process before the stability screen and is dropped if the truss turns
    # out not to be stable and determinate.
    child = None
    if sections and len(model.members) >= PARALLEL_MIN_MEMBERS:
        from verify.analysis.joints import solve_reactions
        from verify.analysis.sections import solve_sections

        model.load_matrix()
        solve_reactions(model)  # both routes use these: computed once, before the fork
        child = _Child.start(solve_sections, model)
    try:
        return _routes(
            model,
            child,
            sections=sections,
            assume_equal_EA=assume_equal_EA,
            displacements=displacements,
        )
    finally:
        if child is not None:
            child.cancel()  # an error or an interruption on the way: no child or frozen heap left behind


def _routes(
    model: Model,
    child: _Child | None,
    *,
    sections: bool,
    assume_equal_EA: float | None,
    displacements: bool,
) -> Analysis:
    stability = solve_stability(model)
    notes: list[str] = []
    if stability.classification is not Classification.STABLE_DETERMINATE and child is not None:
        child.cancel()
    if stability.classification is Classification.UNSTABLE:
        return Analysis(model, stability, notes=("unstable: no forces can be recomputed",))
    if stability.classification is Classification.STABLE_INDETERMINATE:
        elastic = None
        if model.has_stiffness or assume_equal_EA is not None:
            elastic = _stiffness_or_note(model, assume_equal_EA, notes)
        else:
            missing = model.members_without_stiffness()
            notes.append(
                f"statically indeterminate (degree {stability.self_stress}) and {len(missing)} member(s) lack EA "
                f"({', '.join(missing[:10])}{' ...' if len(missing) > 10 else ''}): the forces cannot be recomputed; "
                "only the equilibrium of claimed forces can be checked"
            )
        return Analysis(
            model, stability, elastic=elastic, notes=tuple(notes), assumed_EA=assume_equal_EA
        )
    joints = solve_joints(model)
    global_ = solve_global(model)
    section_solution = None
    if child is not None:
        section_solution = child.result()
    elif sections:
        from verify.analysis.sections import solve_sections

        section_solution = solve_sections(model)
    disagreement = route_disagreement(
        global_, joints.forces, getattr(section_solution, "forces", None)
    )
    elastic = None
    if displacements and (model.has_stiffness or assume_equal_EA is not None):
        elastic = _stiffness_or_note(model, assume_equal_EA, notes)
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
    )


class _Child:
    """route(model) computed in a forked process, or in this one when forking is not possible.

    The child sends its result back pickled through a pipe. If forking is unavailable, disabled
    (TRUSS_VERIFY_SERIAL) or the child fails, `result()` runs the route in this process.
    """

    def __init__(
        self, route: Callable[[Model], Any], model: Model, pid: int | None, read_fd: int | None
    ) -> None:
        self.route, self.model, self.pid, self.read_fd = route, model, pid, read_fd

    @classmethod
    def start(cls, route: Callable[[Model], Any], model: Model) -> _Child:
        # Forking a process that runs other threads (a notebook kernel, a web server) can
        # deadlock the child on a lock another thread held: stay in one process there.
        if not hasattr(os, "fork") or os.environ.get(SERIAL_ENV) or threading.active_count() > 1:
            return cls(route, model, None, None)
        read_fd, write_fd = os.pipe()
        # Frozen objects are left alone by the cyclic collector, so neither process's collections
        # touch (and so copy) the pages the two share after the fork.
        gc.freeze()
        try:
            pid = os.fork()
        except OSError:
            gc.unfreeze()
            os.close(read_fd)
            os.close(write_fd)
            return cls(route, model, None, None)
        if pid == 0:  # the child: compute, send, and leave without running the parent's exit hooks
            status = 1
            try:
                os.close(read_fd)
                payload = pickle.dumps(route(model), protocol=pickle.HIGHEST_PROTOCOL)
                with os.fdopen(write_fd, "wb") as pipe:
                    pipe.write(payload)
                status = 0
            finally:
                os._exit(status)
        os.close(write_fd)
        return cls(route, model, pid, read_fd)

    def result(self) -> Any:
        if self.pid is None or self.read_fd is None:
            return self.route(self.model)
        with os.fdopen(self.read_fd, "rb") as pipe:
            payload = pipe.read()
        _, status = os.waitpid(self.pid, 0)
        self._done()
        if status != 0 or not payload:
            return self.route(self.model)
        return pickle.loads(payload)

    def cancel(self) -> None:
        """The result is not wanted: stop the child and release what it holds."""
        if self.pid is None or self.read_fd is None:
            return
        try:
            os.kill(self.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
        os.close(self.read_fd)
        os.waitpid(self.pid, 0)
        self._done()

    def _done(self) -> None:
        self.pid = self.read_fd = None
        gc.unfreeze()


def _stiffness_or_note(
    model: Model, assume_equal_EA: float | None, notes: list[str]
) -> ElasticSolution | None:
    from verify.analysis.stiffness import solve_stiffness

    try:
        return solve_stiffness(model, assume_equal_EA=assume_equal_EA)
    except ValueError as exc:  # missing EA or a singular stiffness matrix: said, not raised
        notes.append(f"direct stiffness solve not possible: {exc}")
        return None


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
