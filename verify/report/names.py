"""The words every output shows for names the analysis and comparison use inside.

One table, applied at the report boundary (terminal, JSON, CSV, HTML, Markdown), so a user meets
one word for one thing. The words are plain terms of the trade: "slenderness" means KL/r to an
engineer, "not elastic" sounds like yielding, a "support" is a bearing, so none of them names
something else here.
"""

from __future__ import annotations

from typing import Any

# Finding kinds and member statuses.
KIND_WORDS: dict[str, str] = {
    "not-elastic": "stiffness-dependent",  # equilibrium holds; only the elastic distribution differs
}
# Finding severities.
SEVERITY_WORDS: dict[str, str] = {
    "blocker": "cannot-verify",  # the same word as the verdict it forces
}
# How the stability figures were obtained.
METHOD_WORDS: dict[str, str] = {
    "dense-svd": "full-rank-count",
    "sparse-lu": "sparse-screen",
    "sparse-kkt": "sparse-least-squares",
}
METHOD_PHRASES: dict[str, str] = {
    "dense-svd": "full rank count",
    "sparse-lu": "sparse screen: counts are lower bounds",
}
# Keys of the JSON "structure" object (DESIGN.md section 4 keys keep their names).
STRUCTURE_KEYS: dict[str, str] = {
    "sigma_ratio": "conditioning_ratio",
    "slenderness": "extent_ratio",
}
# Keys of the JSON "convention" object.
CONVENTION_KEYS: dict[str, str] = {
    "support": "evidence",
    "unit": "claims_unit",
}


def kind_word(kind: str) -> str:
    return KIND_WORDS.get(kind, kind)


def severity_word(severity: str) -> str:
    return SEVERITY_WORDS.get(severity, severity)


def method_word(method: str) -> str:
    return METHOD_WORDS.get(method, method)


def method_phrase(method: str) -> str:
    return METHOD_PHRASES.get(method, method_word(method))


def public_structure(structure: dict[str, Any]) -> dict[str, Any]:
    out = {STRUCTURE_KEYS.get(k, k): v for k, v in structure.items()}
    if "method" in out:
        out["method"] = method_word(str(out["method"]))
    return out


def public_convention(convention: dict[str, Any], force_unit: str) -> dict[str, Any]:
    """The claims table's convention; `claims_unit` is the unit the table was written in, and
    `values_unit` the unit of every claimed value in this output (converted at the door)."""
    out = {CONVENTION_KEYS.get(k, k): v for k, v in convention.items()}
    out["values_unit"] = force_unit
    return out


def public_finding(finding: dict[str, Any]) -> dict[str, Any]:
    out = dict(finding)
    out["kind"] = kind_word(str(out["kind"]))
    out["severity"] = severity_word(str(out["severity"]))
    return out


def public_row(row: dict[str, Any], unit: str) -> dict[str, Any]:
    out = dict(row)
    out["status"] = kind_word(str(out["status"]))
    out["unit"] = unit
    return out
