"""What the outputs add to the words the results carry: units beside values, methods as phrases.

The names themselves are chosen where they are made, so one word means one thing inside the code
and in every output: finding kind and row status `stiffness-dependent` and severity
`cannot-verify` (verify/compare/findings.py), the structure's `conditioning_ratio`,
`extent_ratio` and methods `full-rank-count` / `sparse-screen` (verify/analysis/stability.py),
the convention's `evidence` and `claims_unit` (Convention.as_dict in verify/compare/diagnose.py).
None of them is a trade term that means something else ("slenderness" is KL/r to an engineer,
"not elastic" sounds like yielding, a "support" is a bearing).
"""

from __future__ import annotations

from typing import Any

# How the stability figures were obtained, as a phrase for prose (terminal, HTML, Markdown).
METHOD_PHRASES: dict[str, str] = {
    "full-rank-count": "full rank count",
    "sparse-screen": "sparse screen: counts are lower bounds",
}


def method_phrase(method: str) -> str:
    return METHOD_PHRASES.get(method, method)


def public_convention(convention: dict[str, Any], force_unit: str) -> dict[str, Any]:
    """The claims table's convention; `claims_unit` is the unit the table was written in, and
    `values_unit` the unit of every claimed value in this output (converted at the door)."""
    return {**convention, "values_unit": force_unit}


# The key each compared row adds beside its values: their unit.
ROW_UNIT = "unit"
