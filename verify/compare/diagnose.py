"""Compare a claims table with the recomputed forces and explain every difference.

Order of reasoning (each step only sees what the earlier ones left unexplained):
1. map claims columns to load cases and combinations;
2. settle the table's convention (sign, unit scale): stated by the reviewer, or inferred from the
   data; a stated convention the data contradict is one finding, not N member errors;
3. per member and load column: agrees, or sign flip, swapped pair, zero-force member, unit slip,
   value mismatch; for indeterminate trusses, a difference that is a state of self-stress is
   "not elastic" rather than wrong;
4. independently, the equilibrium of the claimed forces at every joint they fully describe.
"""

from __future__ import annotations

import dataclasses
import re
import shlex
from collections import Counter
from collections.abc import Callable
from dataclasses import dataclass, field, replace
from enum import StrEnum
from functools import partial
from types import SimpleNamespace
from typing import TYPE_CHECKING, Any

import numpy as np

from verify.analysis.forces import ForceResult
from verify.analysis.pipeline import ROUTE_RTOL, Analysis
from verify.analysis.stability import Classification
from verify.compare.balance import JointImbalance, checkable_joints, claims_balance
from verify.compare.causes import (
    CauseReport,
    ClaimsFrame,
    explain_bracing,
    explain_copies,
    explain_model,
    explain_moved_member,
    explain_release,
    explain_shifted_rows,
)
from verify.compare.causes.frame import Picked
from verify.compare.causes.members import WrittenForce
from verify.compare.causes.search import CLEAR_MAJORITY as CAUSE_MAJORITY
from verify.compare.causes.search import MIN_EXPLAINED as CAUSE_MIN_EXPLAINED
from verify.compare.causes.self_check import check_combinations
from verify.compare.convention import (
    MIN_MEMBERS_FOR_TABLE,
    MIN_SHARE,
    Fit,
    best_fit,
    columns_reversed,
    describe_factor,
    force_unit_for,
    matching_factor,
    possible_factors,
)
from verify.compare.findings import Finding, RowStatus, Severity, ordered, worded
from verify.compare.implied import ImpliedLoads, implied_loads
from verify.compare.rows import Labels, Numbers, Row, Rows, Written
from verify.compare.tolerances import Tolerance, allowance
from verify.formatting import fmt, toml_key
from verify.io.claims import ClaimedValue, ClaimsTable
from verify.io.claims.rounding import rounding_allowance
from verify.io.claims.table import ClaimArrays
from verify.model import Model
from verify.units import Dimension, factor, lookup_unit

if TYPE_CHECKING:  # displacements imports this module's Review
    from verify.compare.displacements import DisplacementCheck


class SignMode(StrEnum):
    TENSION_POSITIVE = "tension-positive"
    COMPRESSION_POSITIVE = "compression-positive"
    AUTO = "auto"


class Verdict(StrEnum):
    AGREES = "agrees"
    DISCREPANCIES = "discrepancies"
    CANNOT_VERIFY = "cannot-verify"


@dataclass(frozen=True)
class Convention:
    sign: str  # "tension-positive" | "compression-positive"
    scale: float  # claims (in the unit they state or are assumed to use) x scale = case units
    inferred: bool
    unit: str  # the unit the claims were read in (stated, from headers/cells, or assumed)
    unit_source: str  # "option" (--unit), "table" (headers or cells) or "assumed" (the case's unit)
    support: str  # how strongly the data support the convention, in words
    scale_reason: str = ""  # the unit slip the scale undoes, when the data showed one
    column_readings: tuple[str, ...] = ()  # unitless columns read in their own scale, in words
    stated_sign: str = ""  # the convention the reviewer declared (--sign), "" when left to the data

    @property
    def sign_words(self) -> str:
        """The convention used, and where it came from."""
        if self.stated_sign and self.stated_sign != self.sign:
            return f"{self.sign} (the data's: --sign said {self.stated_sign})"
        return (
            f"{self.sign} "
            "("
            f"{'inferred from the data' if self.inferred or not self.stated_sign else 'as stated'}"
            ")"
        )

    def as_dict(self) -> dict[str, Any]:
        return {
            "sign": self.sign,
            "scale": self.scale,
            "inferred": self.inferred,
            "claims_unit": self.unit,
            "unit_source": self.unit_source,
            "scale_reason": self.scale_reason,
            "evidence": self.support,
            "column_readings": list(self.column_readings),
            "stated_sign": self.stated_sign or None,
        }


# Each key of Row.as_dict with the position of its field in the tuple, in the dict's order: for
# writers that read the rows column by column (verify/report/json_out.py: RowTable).
ROW_KEYS: tuple[tuple[str, int], ...] = tuple(
    (key, Row._fields.index("global_" if key == "global" else key))
    for key in Row("", "", "", None, "", None, None, None, None, None, "").as_dict()
)


@dataclass(frozen=True)
class Review:
    verdict: Verdict
    analysis: Analysis
    claims: ClaimsTable
    convention: Convention
    tolerance: Tolerance
    rows: Rows  # a sequence of Row, kept as columns (verify.compare.rows)
    findings: tuple[Finding, ...]
    checked_cases: tuple[str, ...]
    checked_members: int
    imbalances: tuple[JointImbalance, ...] = ()
    notes: tuple[str, ...] = field(default=())
    displacements: DisplacementCheck | None = None
    implied: ImpliedLoads | None = None  # the loads the claims balance, where they differ


# -- column mapping ------------------------------------------------------------------------------
def _norm(name: str) -> str:
    return re.sub(r"[^0-9a-z]", "", name.casefold())


def map_columns(columns: list[str], load_names: list[str]) -> dict[str, str | None]:
    """Claims column -> load name (exact, then case-insensitive, then ignoring punctuation)."""
    out: dict[str, str | None] = {}
    for column in columns:
        if column in load_names:
            out[column] = column
            continue
        if column == "" and len(load_names) == 1:
            out[column] = load_names[0]
            continue
        folded = [n for n in load_names if n.casefold() == column.casefold()]
        loose = [n for n in load_names if _norm(n) == _norm(column)]
        out[column] = folded[0] if len(folded) == 1 else loose[0] if len(loose) == 1 else None
    return out


# -- the comparison ------------------------------------------------------------------------------
def compare_claims(
    analysis: Analysis,
    claims: ClaimsTable,
    *,
    sign: SignMode = SignMode.AUTO,
    unit: str | None = None,
    tolerance: Tolerance | None = None,
) -> Review:
    """Rows and findings for every claim; `unit` None means auto (from the table, else inferred).

    The comparison is the list of STEPS, each reading and extending one Comparison.
    """
    c = Comparison(
        analysis=analysis,
        claims=claims,
        sign=sign,
        unit=unit,
        tolerance=tolerance,
        review=None,
        **dict.fromkeys(SHARED),
    )
    for step in STEPS:
        step(c)
        for name in RELEASED_AFTER.get(step.__name__, ()):
            delattr(c, name)
    review: Review = c.review
    return review


class Comparison(SimpleNamespace):
    """The state the steps of the comparison share: the claims as arrays, the rows, the findings
    so far, the disagreements not yet explained. Internal to this module; each step binds the
    names it reads at its top and stores back the ones it changes at its end."""

    analysis: Analysis
    claims: ClaimsTable
    model: Model
    tol: Tolerance
    findings: list[Finding]
    notes: list[str]
    rows: Rows
    frame: ClaimsFrame | None


# Names the steps share (None until the step that sets them has run).
SHARED = (
    "atol_all",
    "by_case",
    "case_unit",
    "checked_cases",
    "claimed_matrix",
    "column_of_claim",
    "column_readings",
    "columns",
    "comparable",
    "computed_arr",
    "conv",
    "convention",
    "diffs",
    "effective_sign",
    "explained",
    "findings",
    "fixed_all",
    "flagged",
    "frame",
    "as_written",
    "frame_claims",
    "frame_row_at",
    "imbalances",
    "implied",
    "indeterminate",
    "is_member_claim",
    "judged",
    "k_of",
    "load_names",
    "mapping",
    "arrays",
    "member_idx",
    "member_pos",
    "model",
    "named_factor",
    "named_ratio",
    "notes",
    "raw",
    "reaction_claims",
    "ref",
    "rounding_matrix",
    "rounding_of_row",
    "rounding_unit",
    "rows",
    "scale_fit",
    "scale_of",
    "seen",
    "sign_fit",
    "slip_ratios",
    "stab",
    "table_factors",
    "tol",
    "unit_label",
    "unit_source",
    "unit_stated",
    "values",
)


def _start(c: Comparison) -> None:
    analysis, claims, tolerance = c.analysis, c.claims, c.tolerance
    tol = tolerance or Tolerance()
    model = analysis.model
    findings: list[Finding] = []
    notes: list[str] = []
    case_unit = model.units.force
    load_names = model.load_names
    # The claims as columns, settled by the reader (values, units, rounding): never re-read here.
    arrays = claims.arrays_for(model.member_index, case_unit)
    columns = list(arrays.names)
    mapping = map_columns(columns, load_names)
    ref = analysis.reference
    stab = analysis.stability
    indeterminate = analysis.global_ is None and analysis.elastic is not None
    c.case_unit, c.columns, c.findings, c.indeterminate, c.load_names = (
        case_unit,
        columns,
        findings,
        indeterminate,
        load_names,
    )
    c.mapping, c.model, c.notes, c.ref, c.stab = mapping, model, notes, ref, stab
    c.tol, c.arrays = tol, arrays


def _structure(c: Comparison) -> None:
    analysis, findings, ref, stab = c.analysis, c.findings, c.ref, c.stab
    # Structure-level findings.
    if stab.classification is Classification.UNSTABLE:
        modes = "; ".join(
            f"mechanism {k + 1} moves joints {', '.join(m.joints[:6])}"
            for k, m in enumerate(stab.mechanism_modes[:3])
        )
        findings.append(
            Finding(
                "mechanism",
                (),
                f"the truss is unstable: {stab.mechanisms}{'' if stab.exact_counts else '+'} "
                f"mechanism(s) (rank {stab.rank} of {stab.dim * stab.joints} joint equations; "
                f"Maxwell count b + r - {stab.dim}j = {stab.maxwell}). {modes}. No force can be "
                "recomputed.",
                Severity.CANNOT_VERIFY,
            )
        )
    elif stab.classification is Classification.STABLE_INDETERMINATE:
        members_ss = sorted({m for mode in stab.self_stress_modes for m in mode.members})
        if ref is None:
            findings.append(
                Finding(
                    "indeterminate",
                    tuple(members_ss[:50]),
                    f"statically indeterminate to degree {stab.self_stress} and member stiffness "
                    "(EA) is not given for every member: statics cannot tell how the force is "
                    "shared among the redundant members, so only the equilibrium of the claimed "
                    "forces is checked.",
                    Severity.CANNOT_VERIFY,
                )
            )
        else:
            findings.append(
                Finding(
                    "indeterminate",
                    tuple(members_ss[:50]),
                    f"statically indeterminate to degree {stab.self_stress}: "
                    "claims are compared with the elastic (direct stiffness) solution for the "
                    "given EA"
                    + (
                        " — equal EA was ASSUMED for every member"
                        if getattr(analysis.elastic, "equal_EA_assumed", False)
                        else ""
                    ),
                    Severity.INFO,
                )
            )
    if stab.ill_conditioned:
        findings.append(
            Finding(
                "ill-conditioned",
                (),
                f"near-mechanism geometry: sigma_min/sigma_max = {stab.conditioning_ratio:.2e}, "
                f"scaled by the extent ratio^2 = {stab.scaled_conditioning:.2e}; "
                "small changes of geometry change the forces a lot",
                Severity.INFO,
            )
        )
    if analysis.route_disagreement > ROUTE_RTOL:
        findings.append(
            Finding(
                "ill-conditioned",
                (),
                "the method of joints, the section cuts and the global solve disagree by "
                f"{analysis.route_disagreement:.2e} of the largest force (more than round-off, "
                f"{ROUTE_RTOL:g}): suspect a nearly unstable geometry or a modelling problem",
                Severity.INFO,
            )
        )


def _labels(c: Comparison) -> None:
    claims, findings, mapping = c.claims, c.findings, c.mapping
    # Unknown labels and columns.
    for u in claims.unmatched:
        hint = f"; nearest: {', '.join(u.candidates)}" if u.candidates else ""
        what = (
            "matches several members"
            if u.reason == "ambiguous"
            else "is not a member or reaction of the model"
        )
        findings.append(
            Finding(
                "unknown-label", (u.label,), f"'{u.label}' ({u.where}) {what}{hint}", Severity.ERROR
            )
        )
    for conflict in claims.sign_conflicts:  # settled by the reader: a minus against its T/C letter
        findings.append(
            Finding(
                "sign-flip",
                (conflict.member,),
                f"'{conflict.text}' ({conflict.where}) has a minus that contradicts "
                f"its letter in a table written {conflict.convention}; read by the letter",
                Severity.ERROR,
                case=mapping.get(conflict.column),
                locations=(conflict.where,),
            )
        )


def _units(c: Comparison) -> None:
    case_unit, claims, notes, tol = c.case_unit, c.claims, c.notes, c.tol
    unit = c.unit
    # Units: per value, the unit it states (cell or header), else the option, else the case unit.
    option_unit = lookup_unit(unit, Dimension.FORCE) if unit else None
    arrays = c.arrays
    stated_units = {u for u in arrays.units if u}
    # The reader gave each stated unit's factor; a value without one is in the option's unit or
    # the case's.
    assumed = factor(option_unit or case_unit, case_unit)
    conv = np.where(np.isnan(arrays.unit_factor), assumed, arrays.unit_factor)
    raw = arrays.value
    fixed_all = arrays.sign_fixed
    member_pos = arrays.member
    # Allowances for how each value was written (decimals shown, a column's significant figures or
    # step), in the claim's unit from the reader; here in the case's.
    rounding_unit = arrays.rounding * np.abs(conv)
    # Each claim's column as its position in arrays.names (names are unique): compared as
    # integers, not as an object array of names (a Python comparison per claim).
    column_of_claim = arrays.column
    is_member_claim = member_pos >= 0
    tol = replace(tol, widened=tuple(r.describe() for r in claims.resolutions))
    if option_unit is not None and stated_units and stated_units != {option_unit.symbol}:
        notes.append(
            f"--unit {option_unit.symbol} was given, but the table states "
            f"{', '.join(sorted(stated_units))} in its "
            "headers or cells; the table's own units were used"
        )
    unit_stated = bool(stated_units) or option_unit is not None
    unit_label = (
        ", ".join(sorted(stated_units))
        if stated_units
        else (option_unit.symbol if option_unit else case_unit.symbol)
    )
    unit_source = "table" if stated_units else ("option" if option_unit else "assumed")
    column_readings: list[str] = []  # columns read in their own unit scale (below)
    # The unit the table is read in: the factors it can really be off by are those to other units.
    stated_counts = Counter(
        {
            u: int(n)
            for u, n in zip(
                arrays.units, np.bincount(arrays.unit, minlength=len(arrays.units)), strict=True
            )
            if u
        }
    )
    reference_unit = (
        lookup_unit(stated_counts.most_common(1)[0][0], Dimension.FORCE)
        if stated_counts
        else option_unit or case_unit
    )
    table_factors = possible_factors(reference_unit)
    slip_ratios = possible_factors(reference_unit, ratios=True)

    def named_factor(f: float) -> str:
        """'x1000 (values in MN, read as kN)': the unit the numbers are really in, when one is."""
        unit_in = force_unit_for(f, reference_unit)
        return (
            f"x{fmt(f, 6)} (values in {unit_in}, read as {reference_unit.symbol})"
            if unit_in
            else describe_factor(f)
        )

    def named_ratio(r: float) -> str:
        """For one claim: 'x1000 (written in N where kN is meant)'."""
        unit_in = force_unit_for(1.0 / r, reference_unit)
        return (
            f"x{fmt(r, 6)} (written in {unit_in} where {reference_unit.symbol} is meant)"
            if unit_in
            else describe_factor(r)
        )

    c.column_of_claim, c.column_readings, c.conv, c.fixed_all, c.is_member_claim = (
        column_of_claim,
        column_readings,
        conv,
        fixed_all,
        is_member_claim,
    )
    c.member_pos, c.named_factor, c.named_ratio, c.raw, c.rounding_unit = (
        member_pos,
        named_factor,
        named_ratio,
        raw,
        rounding_unit,
    )
    c.slip_ratios, c.table_factors, c.tol, c.unit_label, c.unit_source = (
        slip_ratios,
        table_factors,
        tol,
        unit_label,
        unit_source,
    )
    c.unit_stated = unit_stated


def _gather(c: Comparison) -> None:
    load_names, mapping, model, ref, stab = (
        c.load_names,
        c.mapping,
        c.model,
        c.ref,
        c.stab,
    )
    # Gather comparable member claims.
    member_idx = _member_claims(c.arrays, mapping)
    comparable = ref is not None and stab.classification is not Classification.UNSTABLE
    scale_of: dict[str, float] = {}
    if ref is not None:
        F = model.load_matrix()
        d = model.dim
        for k, name in enumerate(load_names):
            # Largest member force or reaction: a truss whose members are all idle (a load
            # straight over a support) still has a yardstick for "near zero".
            forces = np.concatenate([ref.member_forces[:, k], ref.reactions[:, k]])
            largest = float(np.nanmax(np.abs(forces))) if forces.size else 0.0
            # ... but on a long truss the chords carry hundreds of times the panel load, and a
            # thousandth of them would let a wrong web member agree: the yardstick is capped so
            # that the near-zero allowance stays within a hundredth of the largest joint load.
            loads = np.linalg.norm(F[:, k].reshape(-1, d), axis=1) if F.size else np.zeros(0)
            largest_load = float(loads.max()) if loads.size else 0.0
            cap = (
                NEAR_ZERO_LOAD_SHARE * largest_load / (c.tol.atol_fraction or 1.0)
                if largest_load > 0
                else largest
            )
            scale_of[name] = min(largest, cap)
    c.comparable, c.member_idx, c.scale_of = comparable, member_idx, scale_of


def _case_mismatch(c: Comparison) -> None:
    columns = c.columns
    comparable, conv, findings, fixed_all = c.comparable, c.conv, c.findings, c.fixed_all
    load_names, mapping, member_pos, raw, ref = c.load_names, c.mapping, c.member_pos, c.raw, c.ref
    rounding_unit, scale_of, tol = c.rounding_unit, c.scale_of, c.tol
    # Case mismatch: a column that fits another load column much better than its own.
    remap: dict[str, str] = {}
    if comparable and ref is not None:
        column_of = c.column_of_claim
        names = list(c.arrays.names)
        for column in columns:
            idx = np.nonzero((column_of == names.index(column)) & (member_pos >= 0))[0]
            if len(idx) < MIN_MEMBERS_FOR_TABLE:
                continue
            vals = raw[idx] * conv[idx]
            fixed, rounding, members = fixed_all[idx], rounding_unit[idx], member_pos[idx]
            named: str | None = mapping.get(column)

            def share(
                k: int,
                vals: np.ndarray = vals,
                fixed: np.ndarray = fixed,
                rounding: np.ndarray = rounding,
                members: np.ndarray = members,
            ) -> float:
                comp = ref.member_forces[members, k]
                atol_arr = np.full(vals.size, tol.atol_fraction * (scale_of[load_names[k]] or 1.0))
                best, _ = best_fit(vals, fixed, comp, tol.rtol, atol_arr, rounding, factors=())
                return best.share

            held = _column_holds(share, load_names, named)
            if held is None:
                continue
            top, scores = held
            named_score = scores.get(named, 0.0) if named else 0.0
            if named is None:
                # Only the name differs ("DL" for "dead"): worth saying, not an error.
                findings.append(
                    Finding(
                        "case-mismatch",
                        (),
                        f"claims column '{column}' names no load case or combination of the "
                        f"model; its values fit '{top}' ({scores[top]:.0%} of members agree), "
                        f"so it is compared with '{top}'",
                        Severity.INFO,
                        case=top,
                        locations=_column_where(c.arrays, column),
                    )
                )
            else:
                # A column holding another load column's forces is a cause a checker names.
                findings.append(
                    Finding(
                        "likely-cause",
                        (),
                        f"claims column '{column}' is labelled as '{named}' but fits '{top}' "
                        f"({scores[top]:.0%} of members agree, against {named_score:.0%} for "
                        f"'{named}'); compared with '{top}'",
                        Severity.ERROR,
                        case=top,
                        locations=_column_where(c.arrays, column),
                        variant=f"the column labelled '{named}' holding the forces of '{top}'",
                    )
                )
            remap[column] = top
    for column, target in mapping.items():
        if target is None and column not in remap:
            findings.append(
                Finding(
                    "case-mismatch",
                    (),
                    f"claims column '{column}' names no load case or combination of the model "
                    f"(known: {', '.join(load_names)}); its claims are not checked"
                    + _unnamed_combination(c, column),
                    Severity.ERROR,
                    locations=_column_where(c.arrays, column),
                )
            )
    mapping.update(remap)
    c.member_idx = _member_claims(c.arrays, mapping)


COMBINATION_SHARE = 0.95  # members a fitted combination must explain to be named
FACTOR_STEP = 0.05  # load factors are written to this step (1.35, 1.5, 0.9: common practice)


def _unnamed_combination(c: Comparison, column: str) -> str:
    """For a claims column naming no load of the model: the combination of the model's load
    cases its values are, as a sentence with the case-file line that would have it checked, or
    "". Factors by least squares over the column's member claims, rounded to FACTOR_STEP, then
    held to the claims with the comparison's own allowance (the combination's largest force
    over all members setting its absolute part); named when at least two cases take part with
    factors of the same sign, the claims' distinct non-zero rows outnumber the cases by two (so
    the fit could have failed), and COMBINATION_SHARE of the members agree. All factors
    negative is a column written in the other sign, which the sign diagnoses say."""
    ref, cases = c.ref, len(c.model.cases)
    names = list(c.arrays.names)
    if ref is None or cases < 2 or column not in names:
        return ""
    idx = np.flatnonzero((c.column_of_claim == names.index(column)) & (c.member_pos >= 0))
    claimed = c.raw[idx] * c.conv[idx]
    X = ref.member_forces[c.member_pos[idx], :cases]
    rows = np.column_stack([X, claimed])
    distinct = np.unique(np.round(rows[np.abs(rows).max(axis=1) > 0], 9), axis=0)
    if len(distinct) < cases + 2 or np.linalg.matrix_rank(X) < cases:
        return ""  # too few rows to tell a fit from a coincidence, or cases in proportion
    factors = np.round(np.linalg.lstsq(X, claimed, rcond=None)[0] / FACTOR_STEP) * FACTOR_STEP
    if np.count_nonzero(factors) < 2 or (factors <= 0).all():
        return ""
    fitted = X @ factors
    scale = float(np.abs(ref.member_forces[:, :cases] @ factors).max()) or 1.0
    atol = c.tol.atol_fraction * scale
    agree = np.abs(fitted - claimed) <= allowance(
        c.tol.rtol, claimed, fitted, atol, c.rounding_unit[idx]
    )
    if agree.mean() < COMBINATION_SHARE:
        return ""
    terms = [(f, c.model.cases[k].name) for k, f in enumerate(factors.tolist()) if f != 0]
    words = " ".join(
        f"{'-' if f < 0 else '+' if n else ''}{' ' if n else ''}{abs(f) if f < 0 and n else f:g}"
        f" x {name}"
        for n, (f, name) in enumerate(terms)
    )
    line = ", ".join(f"{toml_key(name)} = {f:g}" for f, name in terms)
    return (
        f"; its values are {words} ({int(agree.sum())} of {len(idx)} members agree): to check "
        f"them, add under [combinations] in the case file {toml_key(column)} = {{ {line} }}"
    )


def _column_holds(
    share: Callable[[int], float], load_names: list[str], named: str | None
) -> tuple[str, dict[str, float]] | None:
    """The load whose forces a claims column holds instead of the one it names (`named`, None
    for a name that is no load), with the share of its claims each load explains (`share(k)`,
    a pass over the column): a load explaining 90 % of them when the named one explains under
    half. The named load is scored first: when it explains half, the others are not scored."""
    scores: dict[str, float] = {}
    settled = bool(named) and load_names.count(str(named)) == 1
    for k in sorted(range(len(load_names)), key=lambda k: load_names[k] != named):
        scores[load_names[k]] = share(k)
        if settled and load_names[k] == named and scores[load_names[k]] >= 0.5:
            return None
    scores = {load: scores[load] for load in load_names}  # in the loads' order
    top = max(scores, key=lambda n: scores[n])
    named_score = scores.get(named, 0.0) if named else 0.0
    if top != named and scores[top] >= 0.9 and named_score < 0.5:
        return top, scores
    return None


def _balances_as_well(
    c: Comparison, idx: np.ndarray, written_sign: np.ndarray, sign: int, factor: float
) -> bool:
    """Whether the claims `idx` read with `sign` and `factor` balance the case's loads at as many
    joints as read as written: statics decides a reading of the table (a unit or a sign).

    A true slip of unit or sign leaves the claims balancing the loads once read so, and not as
    written. A model mistake can make many claims agree once scaled by coincidence (a load left
    out of a long span: every member beyond it scales with one reaction, 1.25 kN x 9.807 reads
    as 12.25 kN), yet those claims balance the loads worse once scaled. On an indeterminate
    truss a large self-stress can mimic a flipped or scaled table, so there the reading must
    balance strictly better. `written_sign` brings each claim to tension positive as the table
    was declared (-1 for a table stated compression-positive; 1 where T/C marks fix the sign).
    """
    model, load_names = c.model, c.load_names
    fixed = c.fixed_all[idx]
    load_pos = _load_of_column(c.arrays, c.mapping, load_names)[c.arrays.column[idx]]
    base = c.raw[idx] * c.conv[idx] * written_sign

    def unbalanced(sign_k: float, factor_k: float) -> int:
        matrix = np.full((len(model.members), len(load_names)), np.nan)
        matrix[c.member_pos[idx], load_pos] = base * np.where(fixed, 1.0, sign_k) * factor_k
        return len(claims_balance(c.analysis, matrix, {}, load_names, c.tol))

    read, written = unbalanced(sign, factor), unbalanced(1, 1.0)
    return read < written if c.indeterminate else read <= written


def _column_readings(c: Comparison) -> None:
    case_unit, column_of_claim = c.case_unit, c.column_of_claim
    column_readings, columns, comparable, conv = c.column_readings, c.columns, c.comparable, c.conv
    findings, fixed_all, is_member_claim = c.findings, c.fixed_all, c.is_member_claim
    load_names, mapping, member_idx, member_pos, raw = (
        c.load_names,
        c.mapping,
        c.member_idx,
        c.member_pos,
        c.raw,
    )
    ref, rounding_unit, scale_of, table_factors, tol = (
        c.ref,
        c.rounding_unit,
        c.scale_of,
        c.table_factors,
        c.tol,
    )
    # Columns read differently from the rest of the table (one column in N beside kN columns, or
    # written with the opposite sign): each is brought to the table's common reading and said once
    # per column, instead of one unit-scale or sign-flip finding per member (or false swaps).
    if comparable and ref is not None and len(columns) > 1:
        column_fit: dict[str, tuple[int, float, Fit, Fit, np.ndarray]] = {}
        for column in columns:
            target = mapping.get(column)
            idx = member_idx[column_of_claim[member_idx] == columns.index(column)]
            if target is None or len(idx) < MIN_MEMBERS_FOR_TABLE:
                continue
            k = load_names.index(target)
            comp = ref.member_forces[member_pos[idx], k]
            atol_arr = np.full(len(idx), tol.atol_fraction * (scale_of[target] or 1.0))
            best, identity = best_fit(
                raw[idx] * conv[idx],
                fixed_all[idx],
                comp,
                tol.rtol,
                atol_arr,
                rounding_unit[idx],
                factors=table_factors,
            )
            if (
                best.informative >= MIN_MEMBERS_FOR_TABLE
                and best.share >= MIN_SHARE
                and best.agree > identity.agree
                and _balances_as_well(c, idx, np.ones(len(idx)), best.sign, best.factor)
            ):
                column_fit[column] = (best.sign, best.factor, best, identity, idx)
            elif identity.share >= MIN_SHARE:
                column_fit[column] = (1, 1.0, identity, identity, idx)
        weight: dict[tuple[int, float], int] = {}
        for col_sign, col_factor, best, _, _ in column_fit.values():
            key = (col_sign, round(col_factor, 9))
            weight[key] = weight.get(key, 0) + best.agree  # claims the reading explains
        if len(weight) > 1:
            common = max(weight, key=lambda key: (weight[key], key == (1, 1.0)))
            for column, (col_sign, col_factor, best, identity, idx) in column_fit.items():
                rel_sign, rel_factor = col_sign * common[0], col_factor / common[1]
                if rel_sign == 1 and abs(rel_factor - 1.0) < 1e-9:
                    continue
                in_column = column_of_claim == columns.index(column)
                stated = {c.arrays.units[u] for u in np.unique(c.arrays.unit[idx])}
                told = (
                    f"its header states {', '.join(sorted(str(u) for u in stated))}"
                    if stated != {None}
                    else "it states no unit"
                )
                if abs(rel_factor - 1.0) >= 1e-9:
                    conv[in_column] *= rel_factor
                    rounding_unit[in_column] *= rel_factor
                    in_unit = force_unit_for(
                        float(col_factor * np.median(conv[idx] / rel_factor)), case_unit
                    )
                    reading = (
                        f"in {in_unit}" if in_unit else describe_factor(col_factor)
                    ) + f" (x{fmt(rel_factor, 6)} against the rest of the table)"
                    column_readings.append(f"column '{column}' read {reading}")
                    findings.append(
                        Finding(
                            "unit-scale",
                            (),
                            f"claims column '{column}' reads {reading}, and {told}: "
                            f"{best.agree} of {best.informative} members agree when it is read so "
                            f"({identity.agree} as written). The table mixes scales: confirm the "
                            "column's unit",
                            Severity.ERROR,
                            case=mapping.get(column),
                            locations=_column_where(c.arrays, column),
                        )
                    )
                if rel_sign == -1 and _reversed_load_case(c, column):
                    # the case's loads reversed (its combinations show it): a likely cause, not a
                    # convention
                    continue
                if rel_sign == -1:
                    flipped = in_column & ~fixed_all & is_member_claim
                    conv[flipped] *= -1.0  # T/C marks and reactions keep their own sign
                    column_readings.append(f"column '{column}' read with its signs reversed")
                    findings.append(
                        Finding(
                            "table-sign-convention",
                            (),
                            f"claims column '{column}' is written with the opposite sign "
                            f"convention to the rest of the table: {best.agree} of "
                            f"{best.informative} members agree with every sign in it reversed "
                            f"({identity.agree} as written); it is read reversed: confirm which "
                            "convention each column uses",
                            Severity.ERROR,
                            case=mapping.get(column),
                            locations=_column_where(c.arrays, column),
                        )
                    )


def _table_convention(c: Comparison) -> None:
    case_unit, column_readings, comparable, conv, findings = (
        c.case_unit,
        c.column_readings,
        c.comparable,
        c.conv,
        c.findings,
    )
    fixed_all, load_names, mapping, member_idx = (
        c.fixed_all,
        c.load_names,
        c.mapping,
        c.member_idx,
    )
    member_pos, named_factor, raw = c.member_pos, c.named_factor, c.raw
    ref, rounding_unit, scale_of, sign = c.ref, c.rounding_unit, c.scale_of, c.sign
    table_factors, tol, unit_label, unit_source, unit_stated = (
        c.table_factors,
        c.tol,
        c.unit_label,
        c.unit_source,
        c.unit_stated,
    )
    # Table convention.
    sign_fit, scale_fit, inferred = 1, 1.0, sign is SignMode.AUTO
    all_fixed = bool(member_idx.size) and bool(fixed_all[member_idx].all())
    support = "no recomputed forces to compare with"
    stated_sign = {SignMode.TENSION_POSITIVE: 1, SignMode.COMPRESSION_POSITIVE: -1}.get(sign, 1)
    if comparable and member_idx.size:
        idx = member_idx
        fixed = fixed_all[idx]
        vals = raw[idx] * conv[idx] * np.where(fixed, 1.0, float(stated_sign))
        load_pos = _load_of_column(c.arrays, mapping, load_names)[c.arrays.column[idx]]
        comp = ref.member_forces[member_pos[idx], load_pos]
        scale_arr = np.array([scale_of.get(name, 0.0) for name in load_names])
        atol_arr = tol.atol_fraction * scale_arr[load_pos]
        best, identity = best_fit(
            vals, fixed, comp, tol.rtol, atol_arr, rounding_unit[idx], factors=table_factors
        )
        n = best.informative
        support = (
            f"{identity.agree} of {n} non-zero claims on members that carry force agree as read"
        )
        table_level = (
            n >= MIN_MEMBERS_FOR_TABLE and best.share >= MIN_SHARE and best.agree > identity.agree
        )
        if not table_level and n >= MIN_MEMBERS_FOR_TABLE and not all_fixed:
            # Under half the table agrees either way, but whole load columns agree reversed:
            # the table's convention, with other columns off for reasons of their own.
            by_columns = columns_reversed(
                vals,
                fixed,
                comp,
                tol.rtol,
                atol_arr,
                rounding_unit[idx],
                c.arrays.column[idx],
                min_claims=MIN_MEMBERS_FOR_TABLE,
            )
            if by_columns is not None and by_columns.agree > identity.agree:
                best, table_level = by_columns, True
        if table_level:
            table_level = _balances_as_well(
                c, idx, np.where(fixed, 1.0, float(stated_sign)), best.sign, best.factor
            )
        if table_level:
            sign_fit, scale_fit = best.sign, best.factor
            support = (
                f"{best.agree} of {n} non-zero claims on members that carry force agree "
                f"when read this way ({identity.agree} as written)"
            )
            involved: tuple[str, ...] = ()  # the whole table: no member named
            severity = Severity.INFO if sign is SignMode.AUTO else Severity.ERROR
            if best.sign == -1 and not all_fixed:
                told = (
                    "no sign convention was stated"
                    if sign is SignMode.AUTO
                    else f"the table was declared {sign.value}"
                )
                findings.append(
                    Finding(
                        "table-sign-convention",
                        involved,
                        f"{told}, but the data show the opposite convention: "
                        f"{'compression' if stated_sign == 1 else 'tension'} is written positive "
                        f"throughout ({best.agree} of {n} members agree when every sign is "
                        f"reversed, {identity.agree} as written)",
                        severity,
                    )
                )
            if best.factor != 1.0:
                sev = Severity.ERROR if unit_stated else Severity.INFO
                told = (
                    f"the table states {unit_label}"
                    if unit_stated
                    else f"no unit was stated (assumed {case_unit.symbol})"
                )
                findings.append(
                    Finding(
                        "unit-scale",
                        (),
                        f"{told}, but every value is off by a unit factor "
                        f"{named_factor(best.factor)}: {best.agree} of {n} members agree once "
                        f"scaled ({identity.agree} as written)",
                        sev,
                    )
                )
        elif sign is not SignMode.AUTO:
            inferred = False
        if all_fixed:
            support = "signs settled by T/C suffixes; " + support
    effective_sign = stated_sign * sign_fit
    convention = Convention(
        sign="tension-positive" if effective_sign == 1 else "compression-positive",
        scale=float(scale_fit * (conv[0] if _one_factor(conv) else 1.0)),
        inferred=inferred or scale_fit != 1.0,
        unit=unit_label,
        unit_source=unit_source,
        scale_reason="" if scale_fit == 1.0 else named_factor(scale_fit),
        support=support,
        column_readings=tuple(column_readings),
        stated_sign="" if sign is SignMode.AUTO else sign.value,
    )
    c.convention, c.effective_sign, c.scale_fit = convention, effective_sign, scale_fit
    c.sign_fit = sign_fit


def _one_factor(conv: np.ndarray) -> bool:
    """Whether every claim has the same unit factor (rounded to 12 decimals), as
    `len(set(np.round(conv, 12))) == 1` tells, compared as an array instead of a set of 2x10^6
    numpy scalars (as in the set: a NaN equals nothing but itself alone, 0.0 equals -0.0)."""
    rounded = np.round(conv, 12)
    return len(conv) == 1 or (len(conv) > 1 and bool((rounded == rounded[0]).all()))


# The statuses _rows gives, by code (the causes and reasons below set others by word).
STATUS_WORDS = tuple(
    s.value
    for s in (
        RowStatus.AGREES,
        RowStatus.TABLE_SIGN_CONVENTION,
        RowStatus.UNIT_SCALE,
        RowStatus.VALUE_MISMATCH,
        RowStatus.NOT_VERIFIABLE,
    )
)
_CODE = {word: n for n, word in enumerate(STATUS_WORDS)}


def _rows(c: Comparison) -> None:
    analysis, case_unit, comparable, conv = (
        c.analysis,
        c.case_unit,
        c.comparable,
        c.conv,
    )
    effective_sign, findings, fixed_all, load_names, mapping = (
        c.effective_sign,
        c.findings,
        c.fixed_all,
        c.load_names,
        c.mapping,
    )
    member_pos, model, raw, ref = c.member_pos, c.model, c.raw, c.ref
    rounding_unit, scale_fit, scale_of, sign, sign_fit = (
        c.rounding_unit,
        c.scale_fit,
        c.scale_of,
        c.sign,
        c.sign_fit,
    )
    tol, unit_stated = c.tol, c.unit_stated
    # Per-claim rows.
    claimed_matrix = np.full((len(model.members), len(load_names)), np.nan)
    reaction_claims: dict[tuple[int, int], float] = {}
    flagged: dict[str, set[str]] = {}
    diffs: list[
        tuple[int, ClaimedValue, float, float, float]
    ] = []  # (row index, claim, value, computed, allowed)
    rounding_of_row: dict[
        int, float
    ] = {}  # the rounding allowance of each disagreeing member claim
    # Member claims are judged all at once (arrays); the loop below only words the reactions.
    arrays = c.arrays
    n_claims = len(arrays)
    k_of = _load_of_column(arrays, mapping, load_names)[arrays.column]
    is_reaction = member_pos < 0
    judged = (member_pos >= 0) & (k_of >= 0) & ~is_reaction
    signs = np.where(fixed_all, 1.0, float(effective_sign))
    values = raw * signs * conv * scale_fit
    mp, kk = np.where(judged, member_pos, 0), np.where(k_of >= 0, k_of, 0)

    def route(
        forces: np.ndarray | None, mp: np.ndarray = mp, kk: np.ndarray = kk
    ) -> tuple[np.ndarray, np.ndarray]:
        """A route's force for every claim, and where it has one (a judged claim, finite)."""
        if forces is None or n_claims == 0:
            return np.zeros(n_claims), np.zeros(n_claims, dtype=bool)
        picked = forces[mp, kk]
        return picked, judged & np.isfinite(picked)

    joints_a = route(analysis.joints.forces.member_forces if analysis.joints is not None else None)
    sections_a = route(
        analysis.sections.forces.member_forces if analysis.sections is not None else None
    )
    global_a = route(analysis.global_.member_forces if analysis.global_ is not None else None)
    elastic_a = route(
        analysis.elastic.forces.member_forces if analysis.elastic is not None else None
    )
    reference_forces = (
        ref.member_forces
        if ref is not None
        else np.zeros((len(model.members), max(len(load_names), 1)))
    )
    computed_arr = reference_forces[mp, kk] if n_claims else np.zeros(0)
    scale_arr = np.array([scale_of.get(name, 0.0) for name in load_names] or [0.0])
    atol_all = tol.atol_fraction * scale_arr[kk]
    del mp, kk, signs
    allowed_all = allowance(tol.rtol, values, computed_arr, atol_all, rounding_unit * scale_fit)
    agree_all = np.abs(values - computed_arr) <= allowed_all
    big = np.abs(computed_arr) > atol_all
    # Statuses as codes into STATUS_WORDS (agrees, table-sign-convention, unit-scale, ...).
    convention_status = np.zeros(n_claims, dtype=np.int64)
    if sign_fit == -1 and sign is not SignMode.AUTO:
        convention_status[~fixed_all & big] = _CODE[RowStatus.TABLE_SIGN_CONVENTION]
    elif scale_fit != 1.0 and unit_stated:
        convention_status[big] = _CODE[RowStatus.UNIT_SCALE]
    judged_rows = np.flatnonzero(judged)
    claimed_matrix[member_pos[judged_rows], k_of[judged_rows]] = values[judged_rows]
    rounding_matrix = np.zeros_like(claimed_matrix)
    rounding_matrix[member_pos[judged_rows], k_of[judged_rows]] = np.abs(
        rounding_unit[judged_rows] * scale_fit
    )
    # Which members have a claim in which load column (for the missing claims and the count).
    seen = np.zeros((len(model.members), max(len(load_names), 1)), dtype=bool)
    seen[member_pos[judged_rows], k_of[judged_rows]] = True
    # The rows, in table order: one per reaction claim and per member claim on a load column,
    # kept as columns (verify.compare.rows): member rows are made all at once, a claim object
    # only for a claim that disagrees (diffs), and reactions (few) are worded one by one.
    mapped_of_column = [mapping.get(name) for name in arrays.names]
    on_a_load = np.array([m is not None for m in mapped_of_column] or [False])[arrays.column]
    reaction_at = np.zeros(n_claims, dtype=bool)
    reaction_at[list(arrays.reaction)] = True
    gives_row = on_a_load & (judged | reaction_at)
    row_of = np.cumsum(gives_row) - 1
    claim_of_row = np.flatnonzero(gives_row)  # rows follow the claims in table order
    # The recomputed value of a member claim: the global solve's, else the elastic one's.
    has_global, has_elastic = global_a[1], elastic_a[1]
    has_computed = has_global | has_elastic
    compared = judged & has_computed & comparable
    text_l, where_l = arrays.text, arrays.where

    def as_written(i: int) -> str:
        raw_i = float(raw[i])  # read for the few claims without their cell (built in memory)
        return text_l[i] or (
            f"{abs(raw_i):g} {'T' if raw_i > 0 else 'C'}"
            if fixed_all[i] and raw_i
            else f"{raw_i:g}"
        )

    # When every claim gives a row (the common table), a column this function alone holds is
    # the rows' own column, not a copy (2x10^5 claims: 1.6 MB a column, at the comparison's peak
    # of memory); the masks are copied all the same, as a row set anew writes into its column.
    every = claim_of_row.size == n_claims

    def own(column: np.ndarray) -> np.ndarray:
        return column if every else column[claim_of_row]

    def numbers(route_a: tuple[np.ndarray, np.ndarray]) -> Numbers:
        return Numbers(own(route_a[0]), route_a[1][claim_of_row])

    recomputed = np.where(has_global, global_a[0], elastic_a[0])
    with np.errstate(invalid="ignore"):
        difference = values - recomputed
    del recomputed
    status = np.where(
        compared,
        np.where(agree_all, convention_status, _CODE[RowStatus.VALUE_MISMATCH]),
        _CODE[RowStatus.NOT_VERIFIABLE],
    )
    del convention_status
    member_row = judged[claim_of_row]
    rows = Rows(
        (
            Labels(np.where(member_row, member_pos[claim_of_row], 0), model.member_ids),
            Labels(np.where(member_row, 0, 1), ("member", "reaction")),
            Labels(np.maximum(k_of[claim_of_row], 0), load_names or [""]),
            Numbers(values[claim_of_row]),
            Written(claim_of_row, as_written, text_l, where_l),
            numbers(joints_a),
            numbers(sections_a),
            numbers(global_a),
            numbers(elastic_a),
            Numbers(own(difference), compared[claim_of_row]),
            Labels(own(status), STATUS_WORDS),
        )
    )
    del joints_a, sections_a, global_a, elastic_a, difference, status, member_row
    # The judged member claims the causes read (ClaimsFrame): claim and row positions.
    frame_claims = np.flatnonzero(compared)
    frame_row_at = row_of[frame_claims]
    for i in np.flatnonzero(compared & ~agree_all).tolist():
        r = int(row_of[i])
        diffs.append(
            (r, arrays.claim(i), float(values[i]), float(computed_arr[i]), float(allowed_all[i]))
        )
        rounding_of_row[r] = float(rounding_unit[i]) * abs(scale_fit)
    for i in np.flatnonzero(gives_row & reaction_at).tolist():
        name = mapped_of_column[int(arrays.column[i])]
        assert name is not None
        k = load_names.index(name)
        written = f"{as_written(i)} at {where_l[i]}"
        joint, axis = arrays.reaction[i]
        rounding = float(rounding_unit[i]) * scale_fit
        # Reactions are global components: the table sign convention for T/C does not apply.
        value = float(raw[i]) * conv[i] * scale_fit
        matches = [n for n, r in enumerate(model.reactions) if r.joint == joint and r.axis == axis]
        computed = None
        if ref is not None and matches:
            computed = float(ref.reactions[matches[0], k])
            reaction_claims[(matches[0], k)] = value
        elif ref is not None:
            computed = (
                0.0  # the support does not restrain this direction: no reaction acts along it
            )
        reaction_status = (
            "not-verifiable"
            if computed is None
            else (
                "agrees"
                if tol.agrees(
                    value, computed, tol.atol_fraction * scale_of.get(name, 0.0), rounding
                )
                else "value-mismatch"
            )
        )
        rows[int(row_of[i])] = Row(
            f"{joint}.{axis}",
            "reaction",
            name,
            value,
            written,
            None,
            None,
            computed,
            None,
            None if computed is None else value - computed,
            reaction_status,
        )
        if reaction_status == "value-mismatch" and computed is not None:
            why = (
                ""
                if matches
                else f": the support at {joint} does not restrain {axis}, "
                "so it has no reaction along it"
            )
            findings.append(
                Finding(
                    "value-mismatch",
                    (f"{joint}.{axis}",),
                    f"reaction {joint}.{axis} in '{name}': claimed "
                    f"{fmt(value)}, recomputed {fmt(computed)} {case_unit.symbol}{why} "
                    f"[written {written}]",
                    Severity.ERROR,
                    case=name,
                    locations=(where_l[i],),
                )
            )
    c.atol_all, c.claimed_matrix, c.computed_arr, c.diffs, c.flagged = (
        atol_all,
        claimed_matrix,
        computed_arr,
        diffs,
        flagged,
    )
    c.frame_claims, c.frame_row_at, c.judged, c.k_of = frame_claims, frame_row_at, judged, k_of
    c.as_written = as_written
    c.reaction_claims, c.rounding_matrix, c.rounding_of_row, c.rows, c.seen = (
        reaction_claims,
        rounding_matrix,
        rounding_of_row,
        rows,
        seen,
    )
    c.values = values


def _frame(c: Comparison) -> None:
    atol_all, comparable, computed_arr, frame_claims, frame_row_at = (
        c.atol_all,
        c.comparable,
        c.computed_arr,
        c.frame_claims,
        c.frame_row_at,
    )
    k_of, load_names, member_pos, model = c.k_of, c.load_names, c.member_pos, c.model
    ref, rounding_unit, scale_fit, tol, values = (
        c.ref,
        c.rounding_unit,
        c.scale_fit,
        c.tol,
        c.values,
    )
    # Explain the mismatches: a column left unfilled, a different model (it must explain a clear
    # majority and break nothing: the strictest test, so it goes first), rows shifted (before
    # swapped pairs, which a shifted run imitates on a symmetric truss), swapped pairs, values
    # copied (last: a mirror member carries the same value honestly); then single causes.
    explained: set[int] = set()
    frame: ClaimsFrame | None = None
    if frame_claims.size and ref is not None and comparable:
        claim_at = frame_claims
        # Every claim judged (the common table): the frame reads the comparison's own columns,
        # not copies of them (none is written after this step; 1.6 MB each per 2x10^5 claims).
        every = frame_claims.size == values.size

        def picked(column: np.ndarray) -> np.ndarray:
            return column if every else column[claim_at]

        frame = ClaimsFrame(
            model,
            tuple(load_names),
            frame_row_at,
            picked(member_pos),
            picked(k_of),
            picked(values),
            picked(computed_arr),
            picked(atol_all),
            rounding_unit[claim_at] * abs(scale_fit),
            tol.rtol,
            # where and how each claim was written, read only for the few a cause names
            Picked(c.arrays.where.__getitem__, claim_at),
            Picked(c.as_written, claim_at),
        )
    c.explained, c.frame = explained, frame


def _unfilled_columns(c: Comparison) -> None:
    case_unit, diffs, explained, findings, indeterminate = (
        c.case_unit,
        c.diffs,
        c.explained,
        c.findings,
        c.indeterminate,
    )
    rows = c.rows
    by_case: dict[str, list[tuple[int, ClaimedValue, float, float, float]]] = {}
    for item in diffs:
        by_case.setdefault(rows[item[0]].case, []).append(item)
    # A load column claimed as nothing but zeros (a template column never filled in) is one
    # finding, not one per member.
    for name, items in by_case.items():
        if indeterminate or len(items) < MIN_MEMBERS_FOR_TABLE:
            continue
        claimed = rows.field("claimed")
        assert isinstance(claimed, Numbers)
        in_column = _member_rows(rows) & _field_is(rows, "case", name) & claimed.present
        if (claimed.values[in_column] != 0).any():
            continue
        largest = max(abs(item[3]) for item in items)
        explained.update(item[0] for item in items)
        findings.append(
            Finding(
                "value-mismatch",
                tuple(m for item in items if (m := item[1].member) is not None),
                f"every member claim in '{name}' is 0, but the recomputed forces reach "
                f"{fmt(largest)} {case_unit.symbol}: the column looks unfilled (a template, or a "
                f"load case not yet calculated); its {len(items)} claim(s) on members that carry "
                "force are marked value-mismatch",
                Severity.ERROR,
                case=name,
            )
        )
    c.by_case = by_case


def _model_causes(c: Comparison) -> None:
    # Likely causes, 1 of 3: a slightly different model (verify.compare.causes); on an
    # indeterminate truss, the changes that scale forces whatever the stiffness. First a member
    # the claims name by two joints the case does not join: its rows are otherwise read as
    # values copied from rows that happen to carry the same force.
    labels = tuple(u.label for u in c.claims.unmatched if u.reason == "unknown")
    if labels:
        written = _written_under_unknown_labels(c)
        _apply_cause(c, partial(explain_moved_member, labels=labels, written=written))
    _apply_cause(c, explain_model)


def _written_under_unknown_labels(c: Comparison) -> dict[str, list[WrittenForce]]:
    """The values written under labels the model does not have, per label, read as the member
    claims are (the table's unit and sign convention): what a member drawn between the joints a
    label names is held to. None when a column was read in a scale or sign of its own (which
    column such a value follows is not known)."""
    if c.column_readings:
        return {}
    option_unit = lookup_unit(c.unit, Dimension.FORCE) if c.unit else None
    out: dict[str, list[WrittenForce]] = {}
    for v in c.claims.unknown_values:
        name = c.mapping.get(v.column, map_columns([v.column], c.load_names)[v.column])
        if name is None:
            continue
        unit = lookup_unit(v.unit, Dimension.FORCE) if v.unit else option_unit or c.case_unit
        scale = factor(unit, c.case_unit) * c.scale_fit
        sign = 1.0 if v.sign_fixed else float(c.effective_sign)
        out.setdefault(v.label, []).append(
            WrittenForce(
                c.load_names.index(name),
                v.value * sign * scale,
                c.tol.atol_fraction * c.scale_of.get(name, 0.0),
                rounding_allowance(v.value, scale),
                v.text,
            )
        )
    return out


def _shifted_and_swapped(c: Comparison) -> None:
    analysis, by_case, case_unit, explained, findings = (
        c.analysis,
        c.by_case,
        c.case_unit,
        c.explained,
        c.findings,
    )
    indeterminate, rows, scale_of, tol = c.indeterminate, c.rows, c.scale_of, c.tol
    # Likely causes, 2 of 3: rows shifted against their labels.
    _apply_cause(c, explain_shifted_rows)
    for name, items in by_case.items():
        if indeterminate and analysis.assumed_EA is not None:
            # against an assumed EA the elastic forces are no evidence of which value is whose
            continue
        # Candidates by sorting: only members whose recomputed force lies near a claim can have
        # swapped with it (n log n instead of every pair: a 600-error column took seconds).
        atol = tol.atol_fraction * scale_of.get(name, 0.0)
        claimed_x = np.array([item[2] for item in items])
        computed_c = np.array([item[3] for item in items])
        by_force = np.argsort(computed_c, kind="stable")
        sorted_c = computed_c[by_force]
        # Each claim's rounding as the reader settled it, in case units (the raw value's own
        # decimals are in the table's unit: kN decimals read as N, or N as kN, mis-sized it).
        own_rounding = np.array([c.rounding_of_row.get(item[0], 0.0) for item in items])
        window = (
            np.maximum(np.maximum(2.0 * tol.rtol * np.abs(claimed_x), atol), own_rounding) * 1.01
        )
        low = np.searchsorted(sorted_c, claimed_x - window, side="left")
        high = np.searchsorted(sorted_c, claimed_x + window, side="right")

        def close(
            x: np.ndarray | float,
            other: np.ndarray | float,
            rounding: np.ndarray | float,
            atol: float = atol,
        ) -> np.ndarray:
            return np.abs(x - other) <= allowance(tol.rtol, x, other, atol, rounding)

        taken = np.zeros(len(items), dtype=bool)
        for a in range(len(items)):
            if taken[a] or low[a] == high[a]:
                continue
            candidates = np.sort(by_force[low[a] : high[a]])
            candidates = candidates[(candidates > a) & ~taken[candidates]]
            if not candidates.size:
                continue
            # a's claim is b's force, b's claim is a's force, and the two forces differ
            fits = (
                close(claimed_x[a], computed_c[candidates], own_rounding[a])
                & close(claimed_x[candidates], computed_c[a], own_rounding[candidates])
                & ~close(computed_c[a], computed_c[candidates], 0.0)
            )
            partners = [
                b
                for b in candidates[fits].tolist()
                if items[b][0] not in explained
                and (not indeterminate or _swap_restores_balance(c, name, items[a], items[b]))
            ]
            if items[a][0] in explained or not partners:
                continue
            b = partners[0]
            ra, va, xa, ca, _ = items[a]
            rb, vb, xb, cb, _ = items[b]
            taken[[a, b]] = True
            explained.update((ra, rb))
            for r in (ra, rb):
                rows.set_status(r, "swapped-labels")
            findings.append(
                Finding(
                    "swapped-labels",
                    (va.member, vb.member),
                    f"in '{name}' the claims for {va.member} ({fmt(xa)} {case_unit.symbol}) "
                    f"and {vb.member} ({fmt(xb)} {case_unit.symbol}) match each other's "
                    f"recomputed forces ({fmt(cb)} {case_unit.symbol} and {fmt(ca)} "
                    f"{case_unit.symbol}): the labels look swapped",
                    Severity.ERROR,
                    case=name,
                    locations=(va.where, vb.where),
                )
            )


def _swaps_across_columns(c: Comparison) -> None:
    findings = c.findings
    # The same two rows swapped in several load columns: one finding for the pair, not one per
    # column.
    by_pair: dict[frozenset[str], list[Finding]] = {}
    for f in findings:
        if f.kind == "swapped-labels":
            by_pair.setdefault(frozenset(f.members), []).append(f)
    for group in by_pair.values():
        if len(group) < 2:
            continue
        first = group[0]
        cases = ", ".join(f"'{f.case}'" for f in group)
        findings = [f for f in findings if f not in group]
        findings.append(
            Finding(
                "swapped-labels",
                first.members,
                f"the claims for {first.members[0]} and {first.members[1]} match each other's "
                f"recomputed forces in {len(group)} load columns ({cases}): the two rows look "
                "swapped",
                Severity.ERROR,
                locations=tuple(loc for f in group for loc in f.locations),
            )
        )
    c.findings = findings


def _combination_factor(c: Comparison) -> None:
    by_case, explained, findings, indeterminate, model = (
        c.by_case,
        c.explained,
        c.findings,
        c.indeterminate,
        c.model,
    )
    ref, rows, scale_of, slip_ratios = c.ref, c.rows, c.scale_of, c.slip_ratios
    tol = c.tol
    # A column whose claims, nearly all, follow another combination of the load cases (a different
    # load or combination factor): one finding that names the combination the claims follow; the
    # claims that do not follow it keep their own findings.
    if not indeterminate and ref is not None:
        combinations = {combo.name for combo in model.combinations}
        for name, items in by_case.items():
            if name not in combinations:
                # a load case's own column follows a multiple of itself (a likely cause), never a
                # mix
                continue
            pending = [item for item in items if item[0] not in explained]
            failing = {
                model.member_index[item[1].member] for item in pending if item[1].member is not None
            }
            fit = _combination_fit(
                model, ref, rows, name, failing, tol, scale_of.get(name, 0.0), slip_ratios
            )
            if fit is None:
                continue
            fitted, defined, agree, n, follows = fit
            covered = [item for item in pending if model.member_index[item[1].member] in follows]
            if len(covered) < CAUSE_MIN_EXPLAINED or len(covered) < CAUSE_MAJORITY * len(pending):
                # a cause must explain a clear majority of the column's differences, never a few
                continue
            explained.update(item[0] for item in covered)
            what = (
                f"not {defined} as the case file combines '{name}': a different combination factor?"
            )
            for item in covered:
                rows.set_status(item[0], "likely-cause")
            left = len([item for item in pending if item not in covered])
            findings.append(
                Finding(
                    "likely-cause",
                    tuple(item[1].member for item in covered),
                    f"the claims in '{name}' follow {fitted} ({agree} of {n} claimed members agree "
                    f"with it), {what} Its {len(covered)} claim(s) that follow it are marked "
                    "likely-cause",
                    Severity.ERROR,
                    case=name,
                    variant=f"'{name}' as {fitted} instead of {defined}",
                    explains=len(covered),
                    unexplained=left,
                    locations=tuple(item[1].where for item in covered[:12]),
                )
            )


def _copies(c: Comparison) -> None:
    # Likely causes, 3 of 3: a value copied from another row.
    _apply_cause(c, explain_copies)


def _indeterminate(c: Comparison) -> None:
    analysis, case_unit, claimed_matrix, diffs, explained = (
        c.analysis,
        c.case_unit,
        c.claimed_matrix,
        c.diffs,
        c.explained,
    )
    findings, frame, indeterminate, load_names, model = (
        c.findings,
        c.frame,
        c.indeterminate,
        c.load_names,
        c.model,
    )
    reaction_claims, rounding_matrix, rows, tol = (
        c.reaction_claims,
        c.rounding_matrix,
        c.rows,
        c.tol,
    )
    if indeterminate:
        # Indeterminate: differences in members that carry a state of self-stress are judged by
        # equilibrium (another stiffness assumption is not an error). A member outside every
        # self-stress state has its force fixed by statics alone: it is judged member by member
        # below, and taken out of the equilibrium search with its recomputed value.
        settled = [item for item in diffs if item[0] in explained]  # swapped pairs already named
        # Tension-only bracing (the compression diagonals claimed as slack) is an idealisation,
        # said as information, when the truss without those diagonals gives the claims; then a
        # support released (a pin taken as a roller).
        if frame is not None:
            _apply_cause(c, explain_bracing)
            _apply_cause(c, explain_release)
            diffs = [item for item in diffs if item[0] not in explained]
        in_self_stress = _self_stress_members(analysis)
        fixed_by_statics = [
            item
            for item in diffs
            if in_self_stress is not None and not in_self_stress(item[1].member)
        ]
        loose = [
            item for item in diffs if item not in fixed_by_statics and item[0] not in explained
        ]
        balance_claims = claimed_matrix.copy()
        # Members judged elsewhere (fixed by statics, or a swapped pair already named) enter the
        # equilibrium search with their recomputed values, so their imbalance is not blamed twice.
        for r, v, _, computed, _ in fixed_by_statics + settled:
            balance_claims[model.member_index[v.member], load_names.index(rows[r].case)] = computed
        findings.extend(
            _explain_indeterminate(
                analysis,
                rows,
                loose,
                balance_claims,
                reaction_claims,
                load_names,
                tol,
                case_unit.symbol,
                rounding_matrix,
            )
        )
        diffs = fixed_by_statics
    c.diffs = diffs


def _member_reasons(c: Comparison) -> None:
    case_unit, diffs, explained, findings, named_ratio = (
        c.case_unit,
        c.diffs,
        c.explained,
        c.findings,
        c.named_ratio,
    )
    rounding_of_row, rows, scale_of, slip_ratios, tol = (
        c.rounding_of_row,
        c.rows,
        c.scale_of,
        c.slip_ratios,
        c.tol,
    )
    unit = case_unit.symbol
    for r, v, value, computed, allowed in diffs:
        if r in explained:
            continue
        member = v.member
        assert member is not None
        name = rows[r].case
        atol = tol.atol_fraction * scale_of.get(name, 0.0)
        common = {
            "member": member,
            "case": name,
            "claimed": f"{fmt(value)} {unit}",
            "recomputed": f"{fmt(computed)} {unit}",
            "written": rows[r].written,
        }
        next_step = (
            f"truss-verify solve {shlex.quote(c.model.source)} --show joints --case "
            f"{shlex.quote(name)}"
            if c.model.source
            else None
        )

        def finding(
            kind: str,
            detail: str,
            member: str = member,
            name: str = name,
            value: float = value,
            computed: float = computed,
            where: str = v.where,
            next_step: str | None = next_step,
        ) -> Finding:
            return Finding(
                kind,
                (member,),
                detail,
                Severity.ERROR,
                case=name,
                locations=(where,),
                next_step=next_step,
                claimed=value,
                recomputed=computed,
            )

        if abs(computed) <= atol:
            rows.set_status(r, "zero-force-claimed")
            findings.append(finding("zero-force-claimed", worded("zero-force-claimed", **common)))
            continue
        # A sign flip: opposite signs and the same size, within the relative tolerance or the
        # claim's own rounding (never the absolute allowance, and never a claimed zero: 0.00 for
        # -0.437 is a wrong value, not a reversed one).
        same_size = abs(abs(value) - abs(computed)) <= max(
            tol.rtol * abs(computed), rounding_of_row.get(r, 0.0)
        )
        if value * computed < 0 and same_size:
            rows.set_status(r, "sign-flip")
            findings.append(
                finding(
                    "sign-flip",
                    worded(
                        "sign-flip",
                        **common,
                        sense="tension" if computed > 0 else "compression",
                        how="the T/C mark" if v.sign_fixed else "the sign",
                    ),
                )
            )
            continue
        ratio = value / computed
        unit_factor = matching_factor(ratio, tol.rtol, slip_ratios)
        if unit_factor is not None:
            rows.set_status(r, "unit-scale")
            findings.append(
                finding(
                    "unit-scale",
                    worded(
                        "unit-scale",
                        **common,
                        ratio=f"{ratio:.5g}",
                        factor=named_ratio(unit_factor),
                        reversed="" if ratio > 0 else " with the sign also reversed",
                    ),
                )
            )
            continue
        pct = abs(value - computed) / max(abs(computed), 1e-300) * 100
        findings.append(
            finding(
                "value-mismatch",
                worded(
                    "value-mismatch",
                    **common,
                    difference=f"{'+' if value >= computed else '-'}{fmt(abs(value - computed))} "
                    f"{unit}",
                    percent=f"{pct:.1f}",
                    allowed=f"{fmt(allowed, 3)} {unit}",
                ),
            )
        )


def _flag(c: Comparison) -> None:
    findings, flagged, load_names = c.findings, c.flagged, c.load_names
    for f in findings:
        if f.severity is Severity.ERROR:
            for case_name in (
                [f.case] if f.case else load_names
            ):  # a finding without a case spans them all
                flagged.setdefault(case_name, set()).update(f.members)


def _self_check(c: Comparison) -> None:
    findings, flagged, judged, k_of = c.findings, c.flagged, c.judged, c.k_of
    member_pos, model, rounding_unit, scale_fit, tol = (
        c.member_pos,
        c.model,
        c.rounding_unit,
        c.scale_fit,
        c.tol,
    )
    values = c.values
    # The claims against themselves: combination columns against the table's own case columns. Where
    # every member it names is already an error in some column, it corroborates (information).
    own = np.flatnonzero(judged)
    anywhere = set().union(*flagged.values()) if flagged else set()
    for f in check_combinations(
        model,
        member_pos[own],
        k_of[own],
        values[own],
        rounding_unit[own] * abs(scale_fit),
        tol.rtol,
        Picked(c.arrays.where.__getitem__, own),
    ):
        if set(f.members) <= anywhere:
            f = dataclasses.replace(f, severity=Severity.INFO)
        findings.append(f)


def _missing_claims(c: Comparison) -> None:
    analysis, findings, load_names, model = c.analysis, c.findings, c.load_names, c.model
    rows, seen = c.rows, c.seen
    # Missing claims (informational), per load column that has claims; load columns missing the
    # same members share one finding.
    with_claims = seen.any(axis=0)
    checked_cases = tuple(n for k, n in enumerate(load_names) if with_claims[k])
    member_ids = model.member_ids
    missing_at = {name: np.flatnonzero(~seen[:, load_names.index(name)]) for name in checked_cases}
    groups: dict[tuple[str, ...], list[str]] = {}
    for name, at in missing_at.items():
        if at.size:
            groups.setdefault(tuple(member_ids[m] for m in at.tolist()), []).append(name)
    for missing_t, names_t in groups.items():
        shown_text = ", ".join(missing_t[:20]) + (
            f" and {len(missing_t) - 20} more" if len(missing_t) > 20 else ""
        )
        where = ", ".join(f"'{n}'" for n in names_t)
        findings.append(
            Finding(
                "missing-claim",
                missing_t,
                f"{where}: no claim for {len(missing_t)} of {len(model.members)} "
                f"members ({shown_text}); they are not checked",
                Severity.INFO,
                case=names_t[0] if len(names_t) == 1 else None,
            )
        )
    # One row per missing claim, after the claimed ones: column by column, case by case.
    members = [at for at in missing_at.values() if at.size]
    if members:
        m = np.concatenate(members)
        k = np.concatenate(
            [np.full(at.size, load_names.index(name)) for name, at in missing_at.items() if at.size]
        )

        def route(forces: np.ndarray | None) -> Numbers:
            if forces is None:
                return Numbers(np.zeros(m.size), np.zeros(m.size, dtype=bool))
            picked = forces[m, k]
            return Numbers(picked, np.isfinite(picked))

        def kept(forces: np.ndarray | None) -> Numbers:  # every value, finite or not
            column = route(forces)
            if forces is not None:
                column.present[:] = True
            return column

        added = Rows(
            (
                Labels(m, member_ids),
                Labels(np.zeros(m.size, dtype=np.int64), ("member",)),
                Labels(k, load_names),
                Numbers(np.zeros(m.size), np.zeros(m.size, dtype=bool)),
                Written(np.full(m.size, -1), str, (), ()),
                kept(analysis.joints.forces.member_forces if analysis.joints is not None else None),
                route(
                    analysis.sections.forces.member_forces
                    if analysis.sections is not None
                    else None
                ),
                kept(analysis.global_.member_forces if analysis.global_ is not None else None),
                kept(
                    analysis.elastic.forces.member_forces if analysis.elastic is not None else None
                ),
                Numbers(np.zeros(m.size), np.zeros(m.size, dtype=bool)),
                Labels(np.zeros(m.size, dtype=np.int64), ("missing-claim",)),
            )
        )
        rows = rows.extended(added)
    c.checked_cases, c.rows = checked_cases, rows


def _balance(c: Comparison) -> None:
    case_unit, claimed_matrix, findings, flagged, load_names = (
        c.case_unit,
        c.claimed_matrix,
        c.findings,
        c.flagged,
        c.load_names,
    )
    model, notes, reaction_claims, ref, rounding_matrix = (
        c.model,
        c.notes,
        c.reaction_claims,
        c.ref,
        c.rounding_matrix,
    )
    stab, tol = c.stab, c.tol
    # Equilibrium of the claims themselves.
    imbalances = claims_balance(
        c.analysis, claimed_matrix, reaction_claims, load_names, tol, rounding_matrix
    )
    checkable = checkable_joints(model, claimed_matrix, load_names)
    implied = implied_loads(model, imbalances, checkable)
    for name, count in checkable.items():
        off = sum(1 for b in imbalances if b.case == name)
        if count == 0:
            notes.append(
                f"equilibrium of the claims in '{name}': no joint has a claim for every member "
                "meeting there, so the claims cannot be checked on their own"
            )
        elif off == 0:
            notes.append(
                f"equilibrium of the claims in '{name}': they balance at all {count} joints "
                "where every member has a claim"
            )
        else:
            worst = sorted((b for b in imbalances if b.case == name), key=lambda b: -b.size)[:8]
            joints = ", ".join(f"{b.joint} ({fmt(b.size, 3)} {case_unit.symbol})" for b in worst)
            notes.append(
                f"equilibrium of the claims in '{name}': out of balance at {off} of {count} "
                f"checkable joints: {joints}{' ...' if off > len(worst) else ''}"
            )
    if imbalances:
        # An imbalance is explained by a finding on one of its members or on a reaction at its
        # joint.
        reaction_labels: dict[str, set[str]] = {}
        for component in model.reactions:
            reaction_labels.setdefault(component.joint, set()).add(component.label)
        unexplained = [
            b
            for b in imbalances
            if not (
                (set(b.members) | reaction_labels.get(b.joint, set())) & flagged.get(b.case, set())
            )
        ]
        if unexplained or ref is None or stab.classification is Classification.UNSTABLE:
            listed = unexplained or list(imbalances)
            worst = sorted(listed, key=lambda b: -b.size)[:8]
            text = "; ".join(
                f"joint {b.joint} in '{b.case}' is out of balance by {fmt(b.size, 3)} "
                f"{case_unit.symbol}"
                for b in worst
            )
            findings.append(
                Finding(
                    "equilibrium-residual",
                    tuple(sorted({m for b in listed for m in b.members}))[:40],
                    f"the claimed forces stop balancing at {len(listed)} joint(s): {text}",
                    Severity.ERROR,
                )
            )
    c.imbalances, c.implied = imbalances, implied


def _finish(c: Comparison) -> None:
    analysis, checked_cases, claims, convention, findings = (
        c.analysis,
        c.checked_cases,
        c.claims,
        c.convention,
        c.findings,
    )
    imbalances, implied, notes, ref, rows = c.imbalances, c.implied, c.notes, c.ref, c.rows
    seen, stab, tol = c.seen, c.stab, c.tol
    checked_members = int(seen.any(axis=1).sum())
    findings = ordered(findings)
    verdict = _verdict(findings, stab.classification, ref is not None)
    if not seen.any() and not _field_is(rows, "kind", "reaction").any():
        notes.append("no claim could be matched to a member and load case of the model")
        if verdict is Verdict.AGREES:
            verdict = Verdict.CANNOT_VERIFY
    c.review = Review(
        verdict,
        analysis,
        claims,
        convention,
        tol,
        rows,
        tuple(findings),
        checked_cases,
        checked_members,
        tuple(imbalances),
        tuple(notes),
        implied=implied,
    )


# The comparison, step by step (each sees what the earlier ones left unexplained).
STEPS = (
    _start,
    _structure,
    _labels,
    _units,
    _gather,
    _case_mismatch,
    _column_readings,
    _table_convention,
    _rows,
    _frame,
    _unfilled_columns,
    _model_causes,
    _shifted_and_swapped,
    _swaps_across_columns,
    _combination_factor,
    _copies,
    _indeterminate,
    _member_reasons,
    _flag,
    _self_check,
    _missing_claims,
    _balance,
    _finish,
)

# Per-claim columns (1.6 MB each per 2x10^5 claims) let go after the last step that reads them
# (the steps and the helpers they call), so the later steps do not hold them at the comparison's
# peak of memory (the equilibrium of the claims, near its end).
RELEASED_AFTER: dict[str, tuple[str, ...]] = {
    "_table_convention": ("member_idx",),
    "_rows": ("conv",),
    "_indeterminate": ("frame", "frame_claims", "frame_row_at", "computed_arr", "atol_all"),
    "_self_check": ("values", "k_of", "judged", "rounding_unit"),
}


NEAR_ZERO_LOAD_SHARE = (
    0.01  # the near-zero allowance never exceeds this share of the largest joint load
)


def _reversed_load_case(c: Comparison, column: str) -> bool:
    """Whether a load-case column read with every sign reversed is rather the case's loads reversed:
    a claimed combination holding the case then agrees better with the case reversed in it too
    (a sign convention is the table's, and leaves the combination columns as they are)."""
    model, mapping, ref = c.model, c.mapping, c.ref
    target = mapping.get(column)
    case_names = [case.name for case in model.cases]
    if ref is None or target not in case_names:
        return False
    case = case_names.index(target)
    C = model.combination_matrix()
    for other, name in mapping.items():
        if name is None or name == target or name not in model.load_names:
            continue
        k = model.load_names.index(name)
        if C[case, k] == 0:
            continue
        idx = c.member_idx[c.column_of_claim[c.member_idx] == c.columns.index(other)]
        if len(idx) < MIN_MEMBERS_FOR_TABLE:
            continue
        claimed = c.raw[idx] * c.conv[idx]
        as_defined = ref.member_forces[c.member_pos[idx], k]
        reversed_case = as_defined - 2.0 * C[case, k] * ref.member_forces[c.member_pos[idx], case]
        atol = c.tol.atol_fraction * (c.scale_of.get(name) or 1.0)
        if_reversed, as_is = (
            int(
                (np.abs(claimed - computed) <= allowance(c.tol.rtol, claimed, computed, atol)).sum()
            )
            for computed in (reversed_case, as_defined)
        )
        if if_reversed > max(as_is, len(idx) // 2):
            return True
    return False


def _swap_restores_balance(c: Comparison, name: str, first: tuple, second: tuple) -> bool:
    """On an indeterminate truss two claims may match each other's elastic forces by a state of
    self-stress; they are a swap only if exchanging them back makes their joints balance better.

    Only the rows of the two members' joints are formed (a swap candidate is tested thousands of
    times on a large table): the member part of A as CSR rows and the claimed column, made once."""
    model = c.model
    k = model.load_names.index(name)
    cached = getattr(c, "_swap_balance", None)
    if cached is None:
        A = c.analysis.run.equilibrium_matrix()[:, : len(model.members)]
        cached = (A.tocsr(), np.nan_to_num(c.claimed_matrix), model.load_matrix())
        c._swap_balance = cached
    A_rows, claimed, F = cached
    column = claimed[:, k]
    m1, m2 = model.member_index[first[1].member], model.member_index[second[1].member]
    joints = np.unique(np.concatenate([model.ends_index[m1], model.ends_index[m2]]))
    rows = (joints[:, None] * model.dim + np.arange(model.dim)).ravel()
    residual, change = F[rows, k].astype(float), np.zeros(rows.size)
    swap = {m1: column[m2] - column[m1], m2: column[m1] - column[m2]}
    for j, r in enumerate(rows.tolist()):  # a few rows, read from the CSR arrays directly
        lo, hi = A_rows.indptr[r], A_rows.indptr[r + 1]
        cols, vals = A_rows.indices[lo:hi], A_rows.data[lo:hi]
        residual[j] += float(vals @ column[cols])
        # Exchanging the two values changes the residual only through the two members' columns.
        change[j] = sum(
            float(v) * swap[m] for m, v in zip(cols.tolist(), vals, strict=True) if m in swap
        )
    as_written = float(np.linalg.norm(residual))
    return float(np.linalg.norm(residual + change)) < 0.5 * as_written


def _column_where(arrays: ClaimArrays, column: str) -> tuple[str, ...]:
    """Where a column's claims begin (the first claim of the column), for column-level findings."""
    if column not in arrays.names:
        return ()
    first = np.flatnonzero(arrays.column == arrays.names.index(column))
    return (arrays.where[int(first[0])],) if first.size else ()


def _member_claims(arrays: ClaimArrays, mapping: dict[str, str | None]) -> np.ndarray:
    """Positions of the member claims whose column maps to a load case or combination."""
    mapped = np.array([bool(mapping.get(name)) for name in arrays.names] or [False])
    return np.flatnonzero((arrays.member >= 0) & mapped[arrays.column])


def _load_of_column(
    arrays: ClaimArrays, mapping: dict[str, str | None], load_names: list[str]
) -> np.ndarray:
    """Per column name of the claims, the position of its load case (-1: none)."""
    return np.array(
        [load_names.index(m) if (m := mapping.get(name)) else -1 for name in arrays.names] or [-1],
        dtype=np.int64,
    )


def _apply_cause(
    c: Comparison, explainer: Callable[[ClaimsFrame, np.ndarray, Analysis], CauseReport]
) -> None:
    """Run one explainer of verify.compare.causes on the disagreeing rows not yet explained."""
    if c.frame is None:
        return
    open_rows = [item[0] for item in c.diffs if item[0] not in c.explained]
    pending_mask = np.isin(c.frame.row, np.array(open_rows, dtype=np.int64))
    if not pending_mask.any():
        return
    report = explainer(c.frame, pending_mask, c.analysis)
    for r in c.frame.row[report.explained].tolist():
        c.rows.set_status(r, report.status)
        c.explained.add(r)
    c.findings.extend(report.findings)
    c.notes.extend(report.notes)


def _self_stress_members(analysis: Analysis) -> Callable[[str], bool] | None:
    """Whether a member's force depends on the member stiffnesses (it takes part in some state
    of self-stress), asked by id (a label that is no member: False); None when that cannot be
    told (no stiffness solve). Asked of the few disagreeing claims only: a set of every such
    member's id cost 0.2 s on a 10^6-member continuous truss."""
    if analysis.elastic is None:
        return None
    index = analysis.model.member_index
    try:
        fixed = analysis.run.members_fixed_by_statics(analysis.assumed_EA)
    except ValueError:  # stiffness missing or singular: nothing to tell them apart with
        return None

    def depends(member: str) -> bool:
        at = index.get(member)
        return at is not None and not bool(fixed[at])

    return depends


def _combination_fit(
    model: Model,
    ref: ForceResult,
    rows: Rows,
    name: str,
    failing: set[int],
    tol: Tolerance,
    scale: float,
    unit_ratios: tuple[float, ...] | None = None,
) -> tuple[str, str, int, int, set[int]] | None:
    """(fitted combination, defined combination, members agreeing, members claimed, failing members
    that follow the fit) when several claims of load column `name` fail (member positions
    `failing`) and nearly all claims follow one other combination of the load cases.

    The factors come from a least-squares fit of the claims on the load cases' recomputed forces
    (superposition: a combination's forces are the factored sum of its cases' forces), refitted
    without the worst misfit (up to a tenth of the claims), so an unrelated error does not spoil it.
    A fit that is the defined combination times -1 or a unit factor is left to the sign and unit
    diagnoses, which say it better.
    """
    n_cases = len(model.cases)
    # The member rows of the column (a member row's id code is its member position).
    ids, claimed = rows.field("id"), rows.field("claimed")
    assert isinstance(ids, Labels) and isinstance(claimed, Numbers)
    in_column = _member_rows(rows) & _field_is(rows, "case", name) & claimed.present
    if len(failing) < MIN_MEMBERS_FOR_TABLE or int(in_column.sum()) < 4:
        return None  # too few failures to be a pattern, or too few claims to fit any factor
    pos = ids.codes[in_column]
    y = claimed.values[in_column]
    basis = ref.member_forces[pos, :n_cases]
    names = [c.name for c in model.cases]
    k = model.load_names.index(name)
    defined = np.zeros(n_cases)
    if k < n_cases:
        defined[k] = 1.0
    else:
        for case, factor in model.combinations[k - n_cases].factors.items():
            defined[names.index(case)] = factor
    atol = tol.atol_fraction * (scale or 1.0)

    def words(coefficients: np.ndarray) -> str:
        big = float(np.abs(coefficients).max()) or 1.0
        terms = [
            f"{fmt(float(c), 3)} × {n}"
            for c, n in zip(coefficients, names, strict=True)
            if abs(c) > 1e-3 * big
        ]
        return " + ".join(terms).replace("+ -", "- ") or "0"

    def agreeing(fitted: np.ndarray) -> np.ndarray:
        return np.abs(y - fitted) <= np.maximum(
            tol.rtol * np.maximum(np.abs(y), np.abs(fitted)), atol
        )

    # Load cases whose forces are proportional (the same pattern of loads) cannot be told apart:
    # fit on an independent set of cases, those of the defined combination first.
    chosen: list[int] = []
    # Only the cases the combination holds: a case added or left out is a likely cause of its own
    # (verify.compare.causes), and free factors on every case fit rounding noise with nonsense.
    for c in sorted(np.flatnonzero(defined).tolist(), key=lambda c: (-abs(defined[c]), c)):
        trial = basis[:, chosen + [c]]
        singular = np.linalg.svd(trial, compute_uv=False)
        if singular.size and singular.min() > 1e-9 * max(singular.max(), 1e-300):
            chosen.append(c)
    independent = all(c in chosen for c in np.flatnonzero(defined))
    named = basis @ defined
    keep = np.ones(len(y), dtype=bool)
    for _ in range(
        max(2, len(y) // 10)
    ):  # fit; drop the worst misfit and refit, a tenth of the claims at most
        if keep.sum() < 2 * len(chosen) + 2:
            return None
        if independent:
            factors = np.zeros(n_cases)
            factors[chosen] = np.linalg.lstsq(basis[keep][:, chosen], y[keep], rcond=None)[0]
            fitted = basis @ factors
        else:
            # Load cases with proportional forces (the same pattern of loads): the claims cannot
            # tell the cases apart, only how much of the defined combination they hold.
            nk = named[keep]
            alpha = float(nk @ y[keep]) / float(nk @ nk) if nk @ nk else 0.0
            factors = alpha * defined
            fitted = alpha * named
        if agreeing(fitted).sum() >= 0.9 * len(y):
            break
        # The largest residual of a least-squares fit marks the claim that pulls it most.
        keep[int(np.argmax(np.where(keep, np.abs(y - fitted), -1.0)))] = False
    # The factors a claimant uses are round numbers (1.35, 1.5, 1.6): a fit that lands between
    # them is rounding in the table (a combination made from rounded columns and rounded again),
    # not another factor. Snap to the nearest 0.05 and judge the claims with the round factors.
    round_factors = np.round(factors * 20.0) / 20.0
    if np.any(np.abs(factors - round_factors) > np.maximum(0.01, 0.005 * np.abs(factors))):
        return None
    factors = round_factors
    fitted = basis @ factors
    ratio = float(factors @ defined) / float(defined @ defined)
    if np.allclose(
        factors, ratio * defined, rtol=tol.rtol, atol=1e-3 * float(np.abs(defined).max())
    ):
        if (
            abs(abs(ratio) - 1.0) <= tol.rtol
            or matching_factor(ratio, tol.rtol, unit_ratios) is not None
        ):
            return (
                None  # the defined combination itself, reversed or in another unit: said elsewhere
            )
    fits = agreeing(fitted)
    follows = {int(p) for p, ok in zip(pos, fits, strict=True) if ok and int(p) in failing}
    if fits.sum() < 0.9 * len(y) or len(follows) < MIN_MEMBERS_FOR_TABLE:
        return None
    text = words(factors) if independent else f"{fmt(ratio, 3)} × ({words(defined)})"
    return text, words(defined), int(fits.sum()), len(y), follows


def _field_is(rows: Rows, name: str, label: str) -> np.ndarray:
    """Which rows hold `label` in the word column `name` (kind, case, status)."""
    column = rows.field(name)
    if isinstance(column, Labels):
        return column.equals(label)
    return np.array([value == label for value in column.chunk(0, len(rows))], dtype=bool)


def _member_rows(rows: Rows) -> np.ndarray:
    return _field_is(rows, "kind", "member")


def _verdict(
    findings: list[Finding], classification: Classification, has_reference: bool
) -> Verdict:
    if classification is Classification.UNSTABLE:
        return Verdict.CANNOT_VERIFY
    if any(f.severity is Severity.ERROR for f in findings):
        return Verdict.DISCREPANCIES
    if any(f.severity is Severity.CANNOT_VERIFY for f in findings):
        return Verdict.CANNOT_VERIFY
    return Verdict.AGREES


def _explain_indeterminate(
    analysis: Analysis,
    rows: Rows,
    diffs: list[tuple[int, ClaimedValue, float, float, float]],
    claimed: np.ndarray,
    reaction_claims: dict[tuple[int, int], float],
    load_names: list[str],
    tol: Tolerance,
    unit: str,
    rounding: np.ndarray | None = None,
) -> list[Finding]:
    """Split an indeterminate truss's differences into equilibrium errors and self-stress.

    Claims that balance at every joint differ from the elastic solution only by a state of
    self-stress: other stiffness assumptions, not an error ("stiffness-dependent"). Where they do
    not balance, the joint residuals are explained member by member: a wrong value in member m
    leaves residual e * a_m at its two joints (a_m its column of the equilibrium matrix), so the
    member whose column best fits the residual, and the size e, are found by least squares.
    """
    model = analysis.model
    out: list[Finding] = []
    imbalances = claims_balance(analysis, claimed, reaction_claims, load_names, tol, rounding)
    d = model.dim
    for name in load_names:
        k = load_names.index(name)
        case_rows = [item for item in diffs if rows[item[0]].case == name]
        unbalanced = [b for b in imbalances if b.case == name]
        blamed: dict[str, float] = {}
        if unbalanced:
            joints = [model.joint_index[b.joint] for b in unbalanced]
            residual = np.concatenate([np.asarray(b.residual) for b in unbalanced])
            candidates = sorted({m for b in unbalanced for m in b.members})
            # A member whose claim matches the elastic force is an unlikely culprit: look first
            # among those that differ.
            differing = {v.member for _, v, *_ in case_rows}
            if differing & set(candidates):
                candidates = [m for m in candidates if m in differing]
            size0 = float(np.linalg.norm(residual))
            for _ in range(min(10, len(candidates))):
                best = None
                for mid in candidates:
                    if mid in blamed:
                        continue
                    m = model.member_index[mid]
                    col = np.zeros(len(joints) * d)
                    for pos, j in enumerate(joints):
                        s_, e_ = model.ends_index[m]
                        u = model.unit_vectors[m]
                        if j == s_:
                            col[pos * d : (pos + 1) * d] = u
                        elif j == e_:
                            col[pos * d : (pos + 1) * d] = -u
                    norm = float(col @ col)
                    if norm == 0:
                        continue
                    e = float(col @ residual) / norm
                    left = float(np.linalg.norm(residual - e * col))
                    if best is None or left < best[2]:
                        best = (mid, e, left, col)
                if best is None or best[2] >= float(np.linalg.norm(residual)) * 0.9:
                    break
                blamed[best[0]] = best[1]
                residual = residual - best[1] * best[3]
                if float(np.linalg.norm(residual)) <= 0.05 * size0:
                    break
            where = ", ".join(b.joint for b in unbalanced[:8])
            out.append(
                Finding(
                    "equilibrium-residual",
                    tuple(sorted({m for b in unbalanced for m in b.members}))[:40],
                    f"in '{name}' the claimed forces do not balance at joint(s) {where} (largest "
                    f"out-of-balance {fmt(max(b.size for b in unbalanced), 3)} {unit}); this is an "
                    "error whatever the member stiffnesses",
                    Severity.ERROR,
                    case=name,
                )
            )
        for mid, e in blamed.items():
            m = model.member_index[mid]
            claim = float(claimed[m, k])
            needed = claim - e
            index = next((r for r, v, *_ in case_rows if v.member == mid), None)
            status, kind = "value-mismatch", "value-mismatch"
            if len(blamed) == 1:
                text = (
                    f"{mid} in '{name}': claimed {fmt(claim)} {unit}; equilibrium of its joints "
                    f"needs about {fmt(needed)} (all other claims kept)"
                )
            else:
                # Several members changed together: one way to restore balance, found greedily;
                # a self-stress can trade between them, so it is a lead, not a verdict.
                others = ", ".join(x for x in blamed if x != mid)
                text = (
                    f"{mid} in '{name}': claimed {fmt(claim)} {unit}; no single member explains "
                    f"the imbalance, and one combination that removes most of it sets {mid} to "
                    f"about {fmt(needed)} together with {others} (other combinations may balance "
                    "as well: check these claims first)"
                )
            if abs(claim + needed) <= tol.rtol * abs(claim) + 1e-12:
                status = kind = "sign-flip"
                text += ": the sign is reversed"
            elif needed and matching_factor(claim / needed, tol.rtol) is not None:
                status = kind = "unit-scale"
                text += (
                    ": off by a unit factor "
                    f"{describe_factor(matching_factor(claim / needed, tol.rtol) or 1.0)}"
                )
            if index is not None:
                rows.set_status(index, status)
            out.append(Finding(kind, (mid,), text, Severity.ERROR, case=name))
        rest = [(r, v) for r, v, *_ in case_rows if v.member not in blamed]
        if rest:
            for r, _ in rest:
                rows.set_status(r, "stiffness-dependent")
            size = max(abs(rows[r].difference or 0.0) for r, _ in rest)
            members = tuple(v.member for _, v in rest if v.member)
            unchecked = [b for b in range(len(model.members)) if not np.isfinite(claimed[b, k])]
            caveat = (
                f" ({len(unchecked)} member(s) without a claim: joints they meet could not be "
                "checked)"
                if unchecked
                else ""
            )
            rest_text = "apart from the member(s) named above, " if blamed else ""
            # Against an assumed EA, another distribution is no evidence of an error.
            assumed = analysis.assumed_EA is not None
            solution, meaning = (
                (
                    "for the equal EA assumed ",
                    "and with the real member sizes the elastic distribution "
                    "would differ too, so this is not evidence of an error",
                )
                if assumed
                else (
                    "",
                    "but they assume member stiffnesses other than the EA given (e.g. tension-only "
                    "bracing), an erection sequence or a lack of fit",
                )
            )
            out.append(
                Finding(
                    "stiffness-dependent",
                    members,
                    f"in '{name}' {len(rest)} claim(s) differ from the elastic solution "
                    f"{solution}(up to {fmt(size, 3)} {unit}); {rest_text}the difference is a "
                    f"state of self-stress: the claims satisfy equilibrium, {meaning}{caveat}",
                    Severity.INFO if assumed else Severity.ERROR,
                    case=name,
                )
            )
    return out
