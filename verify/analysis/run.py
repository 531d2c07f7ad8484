"""One analysis run of one model: what the analyses share, made once, and what compare may ask.

The model is immutable; the things several analyses need and that cost a factorisation or a
solve to make (the equilibrium matrix, its sparse LU, the reactions from overall equilibrium,
the elastic solve) belong to the run. `analyse()` makes one run per model and hands it to every
route, and the returned `Analysis` carries it, so the comparison asks the same run for what it
needs instead of calling solvers itself:

- ``equilibrium_matrix()`` and ``equilibrium_lu()``: A and its LU (influence lines, balance);
- ``variant(model)``: a run of a changed model (a support released, a dimension scaled), whose
  ``member_forces(columns)`` and ``elastic_forces(columns, EA)`` re-analyse it;
- ``elastic(EA)``: the direct stiffness solve, made once;
- ``members_fixed_by_statics(EA)``: which members of an indeterminate truss carry a force
  independent of the stiffnesses;
- ``unit_load_deflection(...)``: the unit-load hand calc of one joint displacement.

A run is used by one thread at a time: it fills its cache as it is asked.

Code that is handed only the model (the section calc sheets of the reports, per cut) reaches the
run of that model's analysis through `AnalysisRun.of(model)` while the `Analysis` is alive; the
model itself keeps nothing.
"""

from __future__ import annotations

import sys
import weakref
from collections.abc import Callable, Sequence
from typing import TYPE_CHECKING, TypeVar

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from verify.analysis.equilibrium import assemble_equilibrium
from verify.analysis.lu_factors import splu_checked, stored_entries, u_diagonal
from verify.forking import Forked, ForkFailed
from verify.model import Model

# The solvers below import this module (they take a run), so the run imports them when asked.
if TYPE_CHECKING:
    from verify.analysis.stability import StabilityResult
    from verify.analysis.stiffness import ElasticSolution
    from verify.analysis.virtual_work import VirtualWorkCalc

OverallReactions = tuple[np.ndarray, np.ndarray, str]  # reactions, moment point, its joint
T = TypeVar("T")


def lu_ordering(model: Model) -> str:
    """The column ordering for the LU of A (shared/PERFORMANCE.md: COLAMD's fill-in explodes on
    3D equilibrium matrices, MMD_ATA kept a 10^5-member grid under a second)."""
    return "COLAMD" if model.dim == 2 else "MMD_ATA"


def pivot_ratio(lu: spla.SuperLU) -> float:
    """min |U_ii| / max |U_ii| of a sparse LU (0 for an empty or zero diagonal); U's diagonal read
    from the factor's own storage where it can be (verify.analysis.lu_factors)."""
    return ratio_of_pivots(u_diagonal(lu))


def ratio_of_pivots(diagonal: np.ndarray) -> float:
    """min |U_ii| / max |U_ii| of U's diagonal (0 for an empty or zero diagonal)."""
    diag = np.abs(diagonal)
    return float(diag.min() / diag.max()) if diag.size and diag.max() > 0 else 0.0


# Factor entries from which the stability screen's sigma figure (18 triangular solves) is worth a
# child process while the claims are read: the 10^6-member 3D grid's factors hold 109 million
# (4 s of solves, taken off the main process), the 10^5 grid's 9.7 million (0.3 s) and the 10^6
# Pratt truss's 3.9 million (0.45 s), where a third process slowed the reading of the claims
# more than it saved (measured: 1.4 -> 2.1 s).
SIGMA_CHILD_MIN_ENTRIES = 20_000_000


def _answer(child: Forked[T] | None, here: Callable[[], T]) -> T:
    """The answer of a child started for it, else (none started, or it could not answer: out of
    memory?) `here()`, computed in this process."""
    if child is not None:
        try:
            return child.result()
        except ForkFailed:
            pass
        finally:
            child.cancel()
    return here()


def _elastic_answer(
    run: AnalysisRun, assume_equal_EA: float | None
) -> ElasticSolution | ValueError:
    """The direct stiffness solve, or the ValueError it raised (as a value: a child process
    sends it back as its answer)."""
    from verify.analysis.stiffness import solve_stiffness

    try:
        return solve_stiffness(run.model, assume_equal_EA=assume_equal_EA, run=run)
    except ValueError as exc:
        return exc


class AnalysisRun:
    """The shared pieces of one model's analysis, each made when first asked for."""

    def __init__(self, model: Model) -> None:
        self.model = model
        self._equilibrium: sp.csc_matrix | None = None
        self._lu: spla.SuperLU | None = None
        self._lu_input: sp.csc_matrix | None = None  # lu_matrix() of a 3D A, until factored
        self._reactions: tuple[OverallReactions | None] | None = None  # a box: None is an answer
        self._stability: StabilityResult | None = None
        self._elastic: dict[float | None, ElasticSolution] = {}  # by assume_equal_EA
        # The stability screen's unit-stiffness pivot ratio, read in a child process
        # (start_unit_stiffness_screen) until the screen asks for it.
        self._screen: Forked[float] | None = None
        # The stability screen's sigma figure, estimated in a child process (start_conditioning)
        # until the screen asks for it.
        self._sigma: Forked[float] | None = None
        self._lu_error: str | None = None  # an exactly singular A's message: not factored twice
        self._pivot_ratio: float | None = None  # of the LU, read once (lu_pivot_ratio)
        # Direct stiffness solves started in a child (start_elastic), by assumed EA, until asked.
        self._elastic_children: dict[float | None, Forked[ElasticSolution | ValueError]] = {}
        self._id_tuples: dict[str, tuple[str, ...]] = {}

    @classmethod
    def of(cls, model: Model) -> AnalysisRun:
        """The run `analyse()` made for this very model while its Analysis is alive, else a new
        run (which shares nothing)."""
        run = _ANALYSED.get(id(model))
        return run if run is not None and run.model is model else cls(model)

    def register(self) -> None:
        """Make this run the one `of(model)` finds (analyse() does, for the reports)."""
        _ANALYSED[id(self.model)] = self

    # -- what the analyses share ----------------------------------------------------------------
    def id_tuple(self, kind: str) -> tuple[str, ...]:
        """The model's "joints" or "members" ids as one tuple, made once: the section route's
        records share it, and its child process's answer refers to this process's own
        (verify.forking) instead of sending 10^6 ids back."""
        ids = self._id_tuples.get(kind)
        if ids is None:
            ids = self._id_tuples[kind] = tuple(
                self.model.joint_ids if kind == "joints" else self.model.member_ids
            )
        return ids

    def equilibrium_matrix(self) -> sp.csc_matrix:
        """The sparse equilibrium matrix A (read it or slice it; never modify it in place)."""
        if self._equilibrium is None:
            if self.model.dim == 3:
                # Assembled once with the zero cosines the LU is made from, A from it.
                self._lu_input = assemble_equilibrium(self.model, member_zeros=True)
                self._equilibrium = self._lu_input.copy()
                self._equilibrium.eliminate_zeros()
                if self._lu_input.shape[0] != self._lu_input.shape[1]:
                    self._lu_input = None  # only a square A is factored
            else:
                self._equilibrium = assemble_equilibrium(self.model)
        return self._equilibrium

    def equilibrium_lu(self) -> spla.SuperLU:
        """The sparse LU of the square equilibrium matrix (RuntimeError when exactly singular)."""
        if self._lu_error is not None:
            # A new error each time: a kept one would hold, through its traceback, the matrix
            # the factorisation was given.
            raise RuntimeError(self._lu_error)
        if self._lu is None:
            try:
                self._lu = splu_checked(self.lu_matrix(), permc_spec=lu_ordering(self.model))
            except RuntimeError as exc:
                self._lu_error = str(exc)
                raise
            finally:
                self._lu_input = None  # made once: not kept beside its factors
        return self._lu

    def lu_matrix(self) -> sp.csc_matrix:
        """The matrix the LU of A is made from: A itself in 2D; in 3D, A with each member's zero
        direction cosines kept as stored entries (assemble_equilibrium(member_zeros=True)), the
        same numbers. MMD_ATA orders the columns by the pattern of A^T A, and on the
        pattern in which every member end touches all three directions of its joint it found
        far less fill on the double-layer grids (10^5 members: 10.2 -> 8.1 million entries,
        0.44 -> 0.33 s; 10^6: 150 -> 109 million, 13.7 -> 6.0 s); in 2D COLAMD found no less."""
        A = self.equilibrium_matrix()
        if self.model.dim != 3:
            return A
        if self._lu_input is None:
            self._lu_input = assemble_equilibrium(self.model, member_zeros=True)
        return self._lu_input

    def overall_reactions(self) -> OverallReactions | None:
        """Reactions from overall equilibrium (verify.analysis.joints.solve_reactions)."""
        if self._reactions is None:
            from verify.analysis.joints import overall_reactions

            self._reactions = (overall_reactions(self.model),)
        return self._reactions[0]

    def start_unit_stiffness_screen(self) -> bool:
        """Start the stability screen's factorisation of the unit-stiffness matrix in a child
        process, so that this one can do other work meanwhile (the pipeline: the elastic solve the
        screen's verdict will ask for). True when a child was started; the screen collects its
        answer (`unit_stiffness_ratio`), and `stop_children` stops it if nobody does."""
        from verify.analysis.stability import unit_stiffness_ratio

        if self._screen is not None:
            return True  # started already (the pipeline's early routes)
        child = Forked.start(unit_stiffness_ratio, self.model, self.equilibrium_matrix())
        if not child.forked:
            return False
        self._screen = child
        return True

    def unit_stiffness_ratio(self) -> float:
        """The unit-stiffness matrix's LU pivot ratio (verify.analysis.stability
        .unit_stiffness_ratio): from the child started for it, else computed here."""
        from verify.analysis.stability import unit_stiffness_ratio

        child, self._screen = self._screen, None
        return _answer(child, lambda: unit_stiffness_ratio(self.model, self.equilibrium_matrix()))

    def start_conditioning(self) -> bool:
        """Factor the square A now and, when its factors are large (SIGMA_CHILD_MIN_ENTRIES),
        start the stability screen's sigma figure (the power iterations' triangular solves of
        verify.analysis.stability.conditioning_estimate, about 4 s on the 10^6-member 3D grid)
        in a child process, which reads the factors this one made; this process reads the
        claims meanwhile. True when a child was started; the screen collects its answer
        (`conditioning`), and `stop_children` stops it if nobody does (a singular A: the screen
        asks for no figure)."""
        from verify.analysis.stability import conditioning_estimate

        A = self.equilibrium_matrix()
        if A.shape[0] != A.shape[1]:
            return False
        try:
            lu = self.equilibrium_lu()
        except RuntimeError:
            return False
        if (stored_entries(lu) or 0) < SIGMA_CHILD_MIN_ENTRIES:
            return False  # the solves take less than the child costs: made here, as asked
        from verify.analysis.stability import LU_PIVOT_SINGULAR

        if self.lu_pivot_ratio() < LU_PIVOT_SINGULAR:
            # The screen will find it singular: it asks for no figure, and the routes the
            # pipeline finishes while waiting for one would not be used.
            return False
        child = Forked.start(conditioning_estimate, A, lu)
        if not child.forked:
            return False
        self._sigma = child
        return True

    def lu_pivot_ratio(self) -> float:
        """min/max |U_ii| of the LU of A (verify.analysis.stability's screen of a square A),
        read once: the screen and start_conditioning both judge singularity by it."""
        if self._pivot_ratio is None:
            from verify.analysis.stability import kept_pivot_ratio

            self._pivot_ratio = kept_pivot_ratio(self.equilibrium_lu())
        return self._pivot_ratio

    @property
    def conditioning_started(self) -> bool:
        """True while a child started by start_conditioning has not been asked for its answer."""
        return self._sigma is not None

    def conditioning(self) -> float:
        """sigma_min / sigma_max of the square, non-singular A (verify.analysis.stability
        .conditioning_estimate): from the child started for it, else computed here."""
        from verify.analysis.stability import conditioning_estimate

        child, self._sigma = self._sigma, None
        return _answer(
            child, lambda: conditioning_estimate(self.equilibrium_matrix(), self.equilibrium_lu())
        )

    def stop_children(self) -> None:
        """Stop a child process whose answer was not asked for (an error on the way)."""
        for name in ("_screen", "_sigma"):
            child = getattr(self, name)
            setattr(self, name, None)
            if child is not None:
                child.cancel()
        children, self._elastic_children = self._elastic_children, {}
        for elastic in children.values():
            elastic.cancel()

    def stability(self) -> StabilityResult:
        if self._stability is None:
            from verify.analysis.stability import solve_stability

            self._stability = solve_stability(self.model, run=self)
        return self._stability

    # -- what the comparison asks for -----------------------------------------------------------
    def variant(self, model: Model) -> AnalysisRun:
        """A run of a changed model (the comparison's "what if the calc used this model")."""
        return AnalysisRun(model)

    def member_forces(self, columns: np.ndarray | Sequence[int]) -> np.ndarray | None:
        """Statics member forces (members x the given load columns) of a determinate truss; None
        when A is not square or is exactly singular (a mechanism)."""
        A = self.equilibrium_matrix()
        if A.shape[0] != A.shape[1]:
            return None
        try:
            lu = self.equilibrium_lu()
        except RuntimeError:
            return None
        F = np.asarray(self.model.load_matrix()[:, np.asarray(columns, dtype=np.int64)])
        t = np.asarray(lu.solve(-F)).reshape(A.shape[1], -1)
        return t[: len(self.model.members)]

    def elastic_forces(
        self, columns: np.ndarray | Sequence[int], assume_equal_EA: float | None
    ) -> np.ndarray | None:
        """Elastic member forces of a stable indeterminate truss for the given load columns; None
        when the truss is not that, or the stiffness is missing or singular."""
        from verify.analysis.stability import Classification

        if self.stability().classification is not Classification.STABLE_INDETERMINATE:
            return None
        try:
            elastic = self.elastic(assume_equal_EA)
        except ValueError:
            return None
        return np.asarray(elastic.forces.member_forces)[:, np.asarray(columns, dtype=np.int64)]

    def start_elastic(self, assume_equal_EA: float | None) -> bool:
        """Start the direct stiffness solve in a child process, so that this one reads the
        claims meanwhile (the pipeline's early routes: on the 10^6-member X-braced truss the
        solve is 2.6 s); `elastic` collects it. True when a child was started (or the solve is
        made already)."""
        if assume_equal_EA in self._elastic or assume_equal_EA in self._elastic_children:
            return True
        if not sys.platform.startswith("linux"):
            # The solve may start its own time-boxed child; only Linux stops that grandchild
            # when its parent is stopped (forking._end_with), so elsewhere it is made here.
            return False
        self.equilibrium_matrix()  # made here: the child, the screen and this process share it
        child = Forked.start(_elastic_answer, self, assume_equal_EA)
        if not child.forked:
            return False
        self._elastic_children[assume_equal_EA] = child
        return True

    def elastic(self, assume_equal_EA: float | None) -> ElasticSolution:
        """The direct stiffness solve (ValueError: stiffness missing, or a singular K), made once
        per assumed EA (or collected from the child start_elastic started): it depends on
        nothing else, and its arrays are read-only. A failure is not kept (the pipeline says it
        in a note and asks no more)."""
        if assume_equal_EA not in self._elastic:
            child = self._elastic_children.pop(assume_equal_EA, None)
            answer = _answer(child, lambda: _elastic_answer(self, assume_equal_EA))
            if isinstance(answer, ValueError):
                raise answer
            # Read-only again when it came through a child's pipe.
            self._elastic[assume_equal_EA] = answer.read_only()
        return self._elastic[assume_equal_EA]

    def members_fixed_by_statics(self, assume_equal_EA: float | None) -> np.ndarray:
        """Per member, True when it lies outside every state of self-stress, so that statics
        alone fixes its force (ValueError when the stiffness is missing or singular); read from
        the elastic solve, see verify.analysis.stiffness.SelfStressProbe."""
        return np.asarray(self.elastic(assume_equal_EA).fixed_by_statics)

    def unit_load_deflection(
        self,
        forces_real: np.ndarray,
        joint: str,
        direction: Sequence[float],
        assume_equal_EA: float | None,
    ) -> VirtualWorkCalc:
        """The unit-load calc of one joint's displacement (verify.analysis.virtual_work)."""
        from verify.analysis.virtual_work import unit_load_deflection

        return unit_load_deflection(
            self.model, forces_real, joint, direction, assume_equal_EA=assume_equal_EA
        )


# The run of each analysed model, by the model's identity. Weak: an entry lasts as long as the
# run does (its Analysis holds it), and the run holds the model, so an id is never reused while
# its entry exists.
_ANALYSED: weakref.WeakValueDictionary[int, AnalysisRun] = weakref.WeakValueDictionary()
