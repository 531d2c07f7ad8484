"""Finding kinds, their severity and their wording, in one table."""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum


class Severity(StrEnum):
    ERROR = "error"  # the claims disagree: the verdict becomes "discrepancies"
    CANNOT_VERIFY = "cannot-verify"  # the verdict becomes "cannot-verify", the same word
    INFO = "info"  # worth knowing, never changes the verdict by itself


class FindingKind(StrEnum):
    """Every finding kind (the JSON `kind`); a StrEnum, so each compares equal to its string."""

    MECHANISM = "mechanism"
    LIKELY_CAUSE = "likely-cause"
    INCONSISTENT_COMBINATION = "inconsistent-combination"
    EQUILIBRIUM_RESIDUAL = "equilibrium-residual"
    VALUE_MISMATCH = "value-mismatch"
    CASE_MISMATCH = "case-mismatch"
    TABLE_SIGN_CONVENTION = "table-sign-convention"
    UNIT_SCALE = "unit-scale"
    SWAPPED_LABELS = "swapped-labels"
    SIGN_FLIP = "sign-flip"
    ZERO_FORCE_CLAIMED = "zero-force-claimed"
    UNKNOWN_LABEL = "unknown-label"
    STIFFNESS_DEPENDENT = "stiffness-dependent"  # balanced; only the elastic share differs
    ILL_CONDITIONED = "ill-conditioned"
    INDETERMINATE = "indeterminate"
    MISSING_CLAIM = "missing-claim"
    DISPLACEMENT_MISMATCH = "displacement-mismatch"


class RowStatus(StrEnum):
    """Every status a compared row can take (the JSON `status` of members and reactions)."""

    AGREES = "agrees"
    VALUE_MISMATCH = "value-mismatch"
    LIKELY_CAUSE = (
        "likely-cause"  # explained by a likely-cause finding (a different model or table slip)
    )
    TENSION_ONLY = (
        "tension-only"  # the statics of the truss without its slack diagonals (information)
    )
    SIGN_FLIP = "sign-flip"
    TABLE_SIGN_CONVENTION = "table-sign-convention"
    UNIT_SCALE = "unit-scale"
    SWAPPED_LABELS = "swapped-labels"
    ZERO_FORCE_CLAIMED = "zero-force-claimed"
    STIFFNESS_DEPENDENT = "stiffness-dependent"  # balanced; only the elastic share differs
    NOT_VERIFIABLE = "not-verifiable"
    MISSING_CLAIM = "missing-claim"
    DISPLACEMENT_MISMATCH = "displacement-mismatch"


@dataclass(frozen=True)
class Kind:
    name: str
    title: str  # a plain heading for reports
    rank: int  # lower is more serious, for ordering findings


KINDS: dict[str, Kind] = {
    k.name: k
    for k in (  # the heading and rank of every FindingKind
        Kind("mechanism", "The truss is unstable (mechanism)", 0),
        Kind("likely-cause", "A different model explains the claims", 0),
        Kind(
            "inconsistent-combination",
            "Combination column contradicts the table's own load-case columns",
            1,
        ),
        Kind("equilibrium-residual", "Claimed forces do not balance", 1),
        Kind("value-mismatch", "Claimed value differs", 2),
        Kind("case-mismatch", "Claims column fits another load case", 3),
        Kind("table-sign-convention", "Whole table in the opposite sign convention", 4),
        Kind("unit-scale", "Values off by a unit factor", 5),
        Kind("swapped-labels", "Two member labels swapped", 6),
        Kind("sign-flip", "Single sign reversed (T/C)", 7),
        Kind("zero-force-claimed", "Force claimed for a zero-force member", 8),
        Kind("unknown-label", "Label not in the model", 9),
        Kind(
            "stiffness-dependent",
            "Equilibrium holds; distribution differs from the elastic solution",
            10,
        ),
        Kind("ill-conditioned", "Near-unstable geometry", 11),
        Kind("indeterminate", "Statically indeterminate", 12),
        Kind("missing-claim", "No claim for some members", 13),
        Kind("displacement-mismatch", "Claimed joint displacement differs", 2),
    )
}


@dataclass(frozen=True)
class Finding:
    kind: str
    members: tuple[str, ...]
    detail: str
    severity: Severity
    case: str | None = None
    # Fields a script or test reads instead of the prose (None / empty when they do not apply).
    variant: str | None = None  # likely-cause: the model change, in plain words
    explains: int | None = None  # likely-cause: how many disagreeing claims the change makes agree
    unexplained: int | None = None  # likely-cause: disagreeing claims in the same columns it leaves
    factor: float | None = None  # a fitted factor (load, combination, dimension scale)
    joints: tuple[str, ...] = ()  # joints the finding is about (loads moved, supports)
    locations: tuple[
        str, ...
    ] = ()  # where each claim concerned was written ("row 9, column 'dead'")
    next_step: str | None = None  # the command that prints the hand calc for the members concerned
    claimed: float | None = (
        None  # one claim's value (case units, tension positive), where it applies
    )
    recomputed: float | None = None  # the force it was compared with

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"unknown finding kind {self.kind!r}")
        object.__setattr__(self, "kind", FindingKind(self.kind))

    @property
    def title(self) -> str:
        return KINDS[self.kind].title

    def as_dict(self) -> dict[str, object]:
        out: dict[str, object] = {
            "kind": str(self.kind),
            "members": list(self.members),
            "detail": self.detail,
            "severity": self.severity.value,
        }
        if self.case is not None:
            out["case"] = self.case
        for key in (
            "variant",
            "explains",
            "unexplained",
            "factor",
            "next_step",
            "claimed",
            "recomputed",
        ):
            value = getattr(self, key)
            if value is not None:
                out[key] = value
        if self.joints:
            out["joints"] = list(self.joints)
        if self.locations:
            out["locations"] = list(self.locations)
        return out


# The wording of the findings about one member's claim, in one table: the fields are filled in
# by `worded`; numbers arrive formatted, each with its unit.
TEMPLATES: dict[str, str] = {
    "zero-force-claimed": "{member} in '{case}': claimed {claimed}, but it is a zero-force member "
    "under this loading [written {written}]",
    "sign-flip": "{member} in '{case}': claimed {claimed} but recomputed {recomputed} ({sense}): "
    "{how} is reversed [written {written}]",
    "unit-scale": "{member} in '{case}': claimed {claimed}, recomputed {recomputed}; the ratio "
    "{ratio} is a unit factor {factor}{reversed} [written {written}]",
    "value-mismatch": "{member} in '{case}': claimed {claimed}, recomputed {recomputed} "
    "(difference {difference}, {percent} %; allowed {allowed}) [written {written}]",
}


def worded(kind: str, **fields: object) -> str:
    """The detail of a finding about one member's claim, from TEMPLATES."""
    return TEMPLATES[kind].format(**fields)


def ordered(findings: list[Finding]) -> list[Finding]:
    """Most serious first: cannot-verify, errors, then information; within a level by kind, then
    by how many claims a finding explains."""
    level = {Severity.CANNOT_VERIFY: 0, Severity.ERROR: 1, Severity.INFO: 2}
    # Within a kind, the finding that explains most claims first (causes: the biggest first).
    return sorted(
        findings, key=lambda f: (level[f.severity], KINDS[f.kind].rank, -(f.explains or 0))
    )
