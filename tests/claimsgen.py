"""Claims tables built in memory from recomputed forces, for the comparison tests."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from verify.analysis.pipeline import Analysis
from verify.io.claims import ClaimedValue, ClaimsTable, UnmatchedLabel


def table(
    values: Mapping[str, Mapping[str, float]],
    *,
    fixed: bool = False,
    unit: str | None = None,
    unknown: tuple[str, ...] = (),
) -> ClaimsTable:
    """{column: {member id: value}} as a ClaimsTable (labels already matched)."""
    out = []
    row = 1
    for column, members in values.items():
        for member, value in members.items():
            row += 1
            out.append(
                ClaimedValue(
                    member,
                    member,
                    None,
                    column,
                    float(value),
                    fixed,
                    unit,
                    f"row {row}, column '{column}'",
                )
            )
    missing = tuple(UnmatchedLabel(label, "row 99", "unknown", ()) for label in unknown)
    return ClaimsTable("<memory>", None, "0" * 64, tuple(out), missing, tuple(values), unit)


def true_claims(
    analysis: Analysis, columns: list[str] | None = None
) -> dict[str, dict[str, float]]:
    ref = analysis.reference
    assert ref is not None
    model = analysis.model
    names = columns or list(model.load_names)
    return {
        name: {
            m: float(ref.member_forces[i, ref.column(name)]) for i, m in enumerate(model.member_ids)
        }
        for name in names
    }


def round_sig(value: float, figures: int = 3) -> float:
    if value == 0 or not np.isfinite(value):
        return 0.0
    return float(f"{value:.{figures - 1}e}")
