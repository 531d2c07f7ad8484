"""The joint loads the claimed forces balance, set beside the case's loads.

At a joint where every member has a claim, equilibrium ``A t + f = 0`` read backwards gives the
external force the claims balance: ``f_implied = -(A t_claimed)`` at that joint. At a support the
reactions take part: claimed reactions are used as written; an unclaimed reaction takes whatever
the joint needs along its direction (it cannot be told from a load there), so only the load along
the free directions is determined. Equilibrium only: this works for indeterminate trusses too.

The out-of-balance joints of :func:`verify.compare.balance.claims_balance` are exactly the joints
where the implied load differs from the case's, by the residual: ``f_implied = f_case - residual``.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from verify.compare.balance import JointImbalance
from verify.model import Model


class ImpliedLoad(NamedTuple):
    joint: str
    case: str
    load: tuple[float, ...]  # the case's load at the joint (global components, case units)
    implied: tuple[float, ...]  # the load the claims balance there
    supported: bool  # a support joint: components along unclaimed reactions are not determined

    @property
    def difference(self) -> tuple[float, ...]:
        return tuple(i - c for i, c in zip(self.implied, self.load, strict=True))

    def as_dict(self) -> dict[str, object]:
        return {
            "joint": self.joint,
            "case": self.case,
            "load": list(self.load),
            "implied": list(self.implied),
            "difference": list(self.difference),
            "support": self.supported,
        }


class ImpliedLoads(NamedTuple):
    differing: tuple[ImpliedLoad, ...]  # joints where the claims balance another load
    checked: dict[str, int]  # per load column: joints where every member has a claim
    undetermined: dict[str, int]  # per load column: joints touching a member without a claim

    def by_case(self) -> dict[str, dict[str, list[float]]]:
        """{case: {joint: implied load}} for the joints that differ (the JSON contract)."""
        out: dict[str, dict[str, list[float]]] = {}
        for item in self.differing:
            out.setdefault(item.case, {})[item.joint] = [float(x) for x in item.implied]
        return out


def implied_loads(
    model: Model,
    imbalances: list[JointImbalance] | tuple[JointImbalance, ...],
    checked: dict[str, int],
) -> ImpliedLoads:
    F = model.load_matrix()
    d = model.dim
    names = model.load_names
    supported = {r.joint for r in model.reactions}
    out = []
    for b in imbalances:
        j = model.joint_index[b.joint]
        load = F[j * d : (j + 1) * d, names.index(b.case)]
        implied = load - np.asarray(b.residual)
        out.append(
            ImpliedLoad(
                b.joint,
                b.case,
                tuple(float(x) for x in load),
                tuple(float(x) for x in implied),
                b.joint in supported,
            )
        )
    connected = int((np.bincount(model.ends_index.ravel(), minlength=len(model.joints)) > 0).sum())
    undetermined = {name: connected - count for name, count in checked.items()}
    return ImpliedLoads(tuple(out), dict(checked), undetermined)
