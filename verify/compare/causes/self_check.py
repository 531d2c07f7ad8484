"""The claims against themselves: each combination column against the table's own case columns.

Superposition holds for the claimed table as for the truss: a member's claimed ULS force must be
the factored sum of its claimed case forces (ULS = 1.35 x claimed dead + 1.5 x claimed traffic).
This needs no recomputed force at all, so it also speaks where the truss cannot be solved. Where
the column is consistent with other factors, those factors are named (least squares on the
table's own columns, then the plainest round values that fit).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Sequence

import numpy as np

from verify.compare.causes.variants import nice_factors
from verify.compare.findings import Finding, Severity
from verify.formatting import fmt
from verify.model import Model

SHOWN = 12
MIN_OWN_ROWS = 6  # rows needed before the table's own factors are named
OTHER_FACTORS_SHARE = 0.3  # of a column's rows contradicting the case file's factors
OWN_FACTOR_ODD_SHARE = (
    0.1  # rows that may contradict the factors a combination column was made with
)


def check_combinations(
    model: Model,
    member: np.ndarray,
    column: np.ndarray,
    claimed: np.ndarray,
    rounding: np.ndarray,
    rtol: float,
    where: Sequence[str],
) -> list[Finding]:
    """One finding per combination column that contradicts the table's own load-case columns.

    Arrays are per member claim: member and load-column positions, value (case units, tension
    positive), rounding allowance, and where it was written.
    """
    n_cases = len(model.cases)
    names = model.load_names
    if len(names) == n_cases:
        return []  # no combination column: nothing to check (the table below is per claim)
    b = len(model.members)
    out: list[Finding] = []
    table = np.full((b, len(names)), np.nan)
    allowance = np.zeros((b, len(names)))
    # Per member and column, the claim (the last one, when a member is claimed twice) and
    # where it was written (read only for the members a finding names).
    key = np.asarray(member, dtype=np.int64) * len(names) + np.asarray(column, dtype=np.int64)
    _, from_end = np.unique(key[::-1], return_index=True)
    last = len(key) - 1 - from_end  # numpy does not promise which of repeated indices is kept
    table[member[last], column[last]] = claimed[last]
    allowance[member[last], column[last]] = rounding[last]
    claim_at = np.full((b, len(names)), -1, dtype=np.int64)
    claim_at[member[last], column[last]] = last
    C = model.combination_matrix()
    for k in range(n_cases, len(names)):
        cases = np.flatnonzero(C[:, k])
        if not cases.size:
            continue
        rows = np.isfinite(table[:, k]) & np.isfinite(table[:, cases]).all(axis=1)
        if rows.sum() < 2:
            continue
        parts = table[rows][:, cases]
        combo = table[rows, k]
        slack = allowance[rows, k] + np.abs(C[cases, k]) @ allowance[rows][:, cases].T

        def contradicting(
            factors: np.ndarray,
            parts: np.ndarray = parts,
            combo: np.ndarray = combo,
            slack: np.ndarray = slack,
        ) -> np.ndarray:
            predicted = parts @ factors
            return np.abs(combo - predicted) > np.maximum(
                rtol * np.maximum(np.abs(combo), np.abs(predicted)), slack + 1e-12
            )

        defined = C[cases, k]
        wrong = contradicting(defined)
        if not wrong.any():
            continue
        ids = [model.members[int(m)].id for m in np.flatnonzero(rows)]
        bad = [ids[i] for i in np.flatnonzero(wrong)]
        words = _terms(defined, [model.cases[c].name for c in cases])
        shown = ", ".join(bad[:SHOWN]) + (
            f" and {len(bad) - SHOWN} more" if len(bad) > SHOWN else ""
        )
        text = (
            f"in the claimed table, '{names[k]}' is not {words} of the table's own load-case "
            f"columns for {len(bad)} of {int(rows.sum())} members ({shown})"
        )
        # Other factors are named only when the case file's leave a good part of the column
        # contradicting: a few rows are slips of their own, and with load cases of similar shape
        # many factor pairs fit a column that is a few rows out.
        many = wrong.sum() > max(_odd_rows(len(combo)), OTHER_FACTORS_SHARE * len(combo))
        own = _own_factors(parts, combo, defined, contradicting) if many else None
        if own is not None and not np.allclose(own, defined, rtol=0, atol=1e-9):
            fitted = _terms(own, [model.cases[c].name for c in cases])
            odd = [ids[i] for i in np.flatnonzero(contradicting(own))]
            besides = (
                (
                    f" (except {', '.join(odd[:SHOWN])}: "
                    f"{'it contradicts' if len(odd) == 1 else 'they contradict'} the table either "
                    "way)"
                )
                if odd
                else " throughout"
            )
            text += (
                f"; the column is {fitted} of them{besides}: the table combines with other factors"
            )
        else:
            text += ": those rows contradict the table's own load-case values"
        members = np.flatnonzero(rows)[wrong]
        out.append(
            Finding(
                "inconsistent-combination",
                tuple(bad),
                text,
                Severity.ERROR,
                case=names[k],
                locations=tuple(where[int(claim_at[m, k])] for m in members[:SHOWN]),
            )
        )
    return out


def _terms(factors: np.ndarray, names: list[str]) -> str:
    text = (
        " + ".join(
            f"{fmt(float(f), 3)} × {n}" for f, n in zip(factors, names, strict=True) if f != 0
        )
        or "0"
    )
    return text.replace("+ -", "- ")


def _odd_rows(n: int) -> int:
    """Rows that may contradict the factors a column was made with (a copied or mistyped value)."""
    return max(1, int(OWN_FACTOR_ODD_SHARE * n))


def _own_factors(
    parts: np.ndarray,
    combo: np.ndarray,
    defined: np.ndarray,
    contradicting: Callable[[np.ndarray], np.ndarray],
) -> np.ndarray | None:
    """Round factors with which the combination column is consistent with its own cases, if any.

    Each factor is tried as the case file's, then as round values near the fit, plainest first,
    every combination of them (a column made with 1.5 x traffic and the case file's 1.35 x dead is
    found as such); a few rows may contradict the table either way.
    """
    k = parts.shape[1]
    if parts.shape[0] < max(MIN_OWN_ROWS, 3 * k):
        return None  # too few rows to tell factors from rounding
    allowed_odd = _odd_rows(len(combo))
    keep = np.ones(len(combo), dtype=bool)
    for _ in range(allowed_odd + 1):
        fitted = np.linalg.lstsq(parts[keep], combo[keep], rcond=None)[0]
        choices = [
            list(dict.fromkeys([float(d)] + nice_factors(float(f))))[:5]
            for f, d in zip(fitted, defined, strict=True)
        ]
        for combo_index in sorted(itertools.product(*(range(len(c)) for c in choices)), key=sum):
            picked = np.array([choices[i][j] for i, j in enumerate(combo_index)])
            if contradicting(picked).sum() <= allowed_odd:
                return picked
        residual = np.where(keep, np.abs(combo - parts @ fitted), -1.0)
        keep[int(np.argmax(residual))] = False
    return None
