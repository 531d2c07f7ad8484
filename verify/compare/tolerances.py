"""Tolerances for "agrees" (shared/REFERENCES.md 5.1).

A claimed value agrees with the recomputed one when
``|claimed - computed| <= max(rtol * max(|claimed|, |computed|), atol, rounding)``:

- RTOL = 1 %: a value rounded to 3 significant figures is within 0.5 % (arithmetic); intermediate
  rounding in a careful hand calc reaches about 1 % (common practice; Beer & Johnston, *Vector
  Mechanics for Engineers: Statics*, "Numerical accuracy": better than 0.2 % is seldom meaningful).
- ATOL_FRACTION = 1e-3 of the largest recomputed member force in that load column, so a member
  that is zero in theory and claimed as 0.001 x the largest force is not an error (common practice).
- rounding: half a unit in the last decimal the claimant wrote, so honest rounding to fixed
  decimals (e.g. "0.3" for 0.25) is never flagged.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

# The rounding allowances are settled by the claims reader (verify/io/claims/rounding.py); their
# names stay importable from here, where the tolerances are explained.
from verify.io.claims.rounding import (
    MAX_DECIMALS,
    SIGNIFICANT_MAX,
    SIGNIFICANT_MIN,
    SIGNIFICANT_MIN_VALUES,
    SIGNIFICANT_WIDENED_MIN,
    decimals_as_written,
    rounding_allowance,
    rounding_allowances,
    significant_digits_many,
    significant_figure_allowances,
    written_decimals,
)

__all__ = [
    "ATOL_FRACTION",
    "MAX_DECIMALS",
    "RTOL",
    "SIGNIFICANT_MAX",
    "SIGNIFICANT_MIN",
    "SIGNIFICANT_MIN_VALUES",
    "SIGNIFICANT_WIDENED_MIN",
    "Tolerance",
    "decimals_as_written",
    "rounding_allowance",
    "rounding_allowances",
    "significant_digits_many",
    "significant_figure_allowances",
    "written_decimals",
]

RTOL = 0.01
ATOL_FRACTION = 1e-3


@dataclass(frozen=True)
class Tolerance:
    rtol: float = RTOL
    atol_fraction: float = ATOL_FRACTION
    # Columns the claims reader judged rounded to a step (0.5, 5 ...), each allowed half its step;
    # the words go into the tolerance line of the reports.
    widened: tuple[str, ...] = ()

    def allowed(self, claimed: float, computed: float, atol: float, rounding: float = 0.0) -> float:
        return max(self.rtol * max(abs(claimed), abs(computed)), atol, rounding)

    def agrees(self, claimed: float, computed: float, atol: float, rounding: float = 0.0) -> bool:
        return abs(claimed - computed) <= self.allowed(claimed, computed, atol, rounding)


def allowance(rtol: float, claimed: Any, computed: Any, atol: Any, rounding: Any = 0.0) -> Any:
    """Tolerance.allowed for whole arrays (numpy broadcasting): max(rtol * max(|claimed|,
    |computed|), atol, rounding) per claim."""
    if (
        isinstance(claimed, np.ndarray)
        and isinstance(computed, np.ndarray)
        and claimed.dtype == computed.dtype == np.float64
        and claimed.ndim > 0
        and np.broadcast_shapes(
            claimed.shape, computed.shape, np.shape(rtol), np.shape(atol), np.shape(rounding)
        )
        == claimed.shape
    ):
        # The same operations in the same order in one array (the convention search calls this
        # 35 times over up to 2x10^6 claims: four temporary arrays fewer each time).
        out = np.abs(claimed)
        np.maximum(out, np.abs(computed), out=out)
        np.multiply(out, rtol, out=out)
        np.maximum(out, atol, out=out)
        np.maximum(out, rounding, out=out)
        return out
    return np.maximum(
        np.maximum(rtol * np.maximum(np.abs(claimed), np.abs(computed)), atol), rounding
    )
