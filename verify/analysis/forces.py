"""Force results shared by every route (joints, sections, global, stiffness)."""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from verify.model import Model


@dataclass(frozen=True)
class ForceResult:
    """Member forces (tension-positive) and reactions for every load column of the model.

    `member_forces` is members x load columns and `reactions` is reaction components x load
    columns, both in the case's force unit; columns follow ``model.load_names``. A NaN marks a
    value this route could not obtain.
    """

    route: str
    load_names: tuple[str, ...]
    member_forces: np.ndarray
    reactions: np.ndarray
    notes: tuple[str, ...] = field(default=())

    def column(self, load_name: str) -> int:
        return self.load_names.index(load_name)

    def reaction_vectors(self, model: Model, load_name: str) -> dict[str, list[float]]:
        """Reactions per supported joint as global vectors [rx, ry(, rz)]."""
        k = self.column(load_name)
        out: dict[str, np.ndarray] = {}
        for i, reaction in enumerate(model.reactions):
            vec = out.setdefault(reaction.joint, np.zeros(model.dim))
            vec += self.reactions[i, k] * np.asarray(reaction.direction)
        return {j: [float(x) for x in v] for j, v in out.items()}
