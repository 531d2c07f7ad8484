"""The compared member claims as arrays, and the test every explanation must pass.

One entry per member claim that was judged against a recomputed force. An explainer proposes
other recomputed values (the forces of a slightly different model, or the claims re-read in
another row order) and asks :meth:`ClaimsFrame.agrees` which claims they make agree, with the
very tolerance the comparison used: an explanation never loosens the test.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from typing import overload

import numpy as np

from verify.compare.tolerances import allowance
from verify.model import Model


@dataclass(frozen=True)
class ClaimsFrame:
    """Judged member claims (case units, tension positive, the table's convention applied).

    `row` is the position of each claim's row in the review, `member` and `column` its member
    and load-column positions, `computed` the reference force, `atol` and `rounding` the
    absolute allowances the comparison used, `where` where the claim was written.
    """

    model: Model
    load_names: tuple[str, ...]
    row: np.ndarray
    member: np.ndarray
    column: np.ndarray
    claimed: np.ndarray
    computed: np.ndarray
    atol: np.ndarray
    rounding: np.ndarray
    rtol: float
    where: Sequence[str]
    written: Sequence[str]  # the cell as written (for copied-value detection)

    def __len__(self) -> int:
        return len(self.claimed)

    def allowed(self, computed: np.ndarray, claimed: np.ndarray | None = None) -> np.ndarray:
        y = self.claimed if claimed is None else claimed
        return allowance(self.rtol, y, computed, self.atol, self.rounding)

    def agrees(self, computed: np.ndarray, claimed: np.ndarray | None = None) -> np.ndarray:
        """Which claims agree with `computed` (same tolerance as the comparison)."""
        y = self.claimed if claimed is None else claimed
        with np.errstate(invalid="ignore"):
            return np.isfinite(computed) & (np.abs(y - computed) <= self.allowed(computed, y))

    def column_positions(self) -> tuple[np.ndarray, np.ndarray]:
        """The load columns that hold claims, and each claim's position among them (for solving a
        variant model for those columns only)."""
        columns, where = np.unique(self.column, return_inverse=True)
        return columns, where.ravel()

    def member_ids(self, mask: np.ndarray) -> tuple[str, ...]:
        ids = self.model.member_ids
        return tuple(dict.fromkeys(ids[int(m)] for m in self.member[mask]))

    def columns_of(self, mask: np.ndarray) -> tuple[str, ...]:
        return tuple(self.load_names[int(k)] for k in sorted(set(self.column[mask].tolist())))

    def locations(self, mask: np.ndarray, limit: int = 12) -> tuple[str, ...]:
        picked = np.flatnonzero(mask)[:limit]
        return tuple(self.where[int(i)] for i in picked)


class Picked(Sequence[str]):
    """`read(index[k])` for each k, made when asked: where and how each claim of a frame was
    written, which only the few claims a cause names ever need (a frame holds every compared
    claim, 10^6 of them on a large table)."""

    def __init__(self, read: Callable[[int], str], index: np.ndarray) -> None:
        self.read, self.at = read, index

    def __len__(self) -> int:
        return int(self.at.size)

    @overload
    def __getitem__(self, k: int) -> str: ...
    @overload
    def __getitem__(self, k: slice) -> Sequence[str]: ...
    def __getitem__(self, k: int | slice) -> str | Sequence[str]:
        if isinstance(k, slice):
            return [self.read(i) for i in self.at[k].tolist()]
        return self.read(int(self.at[k]))

    def __iter__(self) -> Iterator[str]:
        return map(self.read, self.at.tolist())
