"""JSON renderings (DESIGN.md section 4 output contract)."""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

from verify import __version__
from verify.analysis.pipeline import Analysis
from verify.model import Model
from verify.report.cautions import CAUTION


def _clean(value: Any) -> Any:
    """JSON has no NaN: a value a route could not obtain becomes null."""
    if isinstance(value, np.generic):
        value = value.item()  # numpy scalars (bool_, float64, int64) are not JSON types
    if isinstance(value, float):
        return None if not math.isfinite(value) else value
    if isinstance(value, dict):
        return {k: _clean(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_clean(v) for v in value]
    return value


def dumps(data: dict[str, Any]) -> str:
    return json.dumps(_clean(data), indent=2, ensure_ascii=False, allow_nan=False)


def stability_json(model: Model, analysis: Analysis) -> dict[str, Any]:
    return {
        "tool": {"name": "truss-verify", "version": __version__},
        "case": {"title": model.title, "file": model.source,
                 "units": {"length": model.units.length.symbol, "force": model.units.force.symbol}},
        "structure": analysis.stability.as_dict(),
        "caution": CAUTION,
    }


def solve_json(model: Model, analysis: Analysis) -> dict[str, Any]:
    data = stability_json(model, analysis)
    ref = analysis.reference
    if ref is None:
        data["forces"] = {}
        data["reactions"] = {}
        data["notes"] = list(analysis.notes)
        return data
    data["forces"] = {
        name: {m: float(ref.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
        for k, name in enumerate(model.load_names)
    }
    data["reactions"] = {name: ref.reaction_vectors(model, name) for name in model.load_names}
    routes: dict[str, Any] = {}
    if analysis.joints is not None:
        routes["joints"] = {
            name: {m: float(analysis.joints.forces.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
            for k, name in enumerate(model.load_names)
        }
        routes["joint_order"] = analysis.joints.order
    sections = analysis.sections
    if sections is not None:
        sf = sections.forces  # type: ignore[attr-defined]
        routes["sections"] = {
            name: {m: float(sf.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
            for k, name in enumerate(model.load_names)
        }
        routes["section_coverage"] = sections.coverage  # type: ignore[attr-defined]
    data["routes"] = routes
    data["route_disagreement"] = analysis.route_disagreement
    data["route"] = ref.route
    elastic = analysis.elastic
    if elastic is not None:
        disp = elastic.displacements  # type: ignore[attr-defined]
        d = model.dim
        data["displacements"] = {
            name: {j.id: [float(x) for x in disp[i * d:(i + 1) * d, k]] for i, j in enumerate(model.joints)}
            for k, name in enumerate(model.load_names)
        }
        data["equal_EA_assumed"] = bool(elastic.equal_EA_assumed)  # type: ignore[attr-defined]
    data["notes"] = list(analysis.notes)
    return data


def check_json(review: Any) -> dict[str, Any]:
    """The DESIGN.md section 4 `check --json` object (extra fields allowed, none renamed)."""
    from verify.report.document import sha256_file

    model = review.analysis.model
    return {
        "verdict": review.verdict.value,
        "structure": review.analysis.stability.as_dict(),
        "convention": review.convention.as_dict(),
        "members": [row.as_dict() for row in review.rows],
        "findings": [f.as_dict() for f in review.findings],
        "summary": {
            "members_checked": review.checked_members,
            "members_total": len(model.members),
            "cases_checked": list(review.checked_cases),
            "cases_total": list(model.load_names),
        },
        "tolerance": {"rtol": review.tolerance.rtol, "atol_fraction": review.tolerance.atol_fraction},
        "imbalances": [
            {"joint": b.joint, "case": b.case, "residual": list(b.residual), "size": b.size}
            for b in review.imbalances
        ],
        "implied_loads": review.implied.by_case() if review.implied is not None else {},
        "implied_load_table": [item.as_dict() for item in review.implied.differing] if review.implied is not None else [],
        "units": {"length": model.units.length.symbol, "force": model.units.force.symbol},
        "inputs": {"case": model.source, "case_sha256": sha256_file(model.source), "claims": review.claims.source,
                   "claims_sha256": review.claims.sha256},
        "tool": {"name": "truss-verify", "version": __version__},
        "notes": list(review.notes),
        "caution": CAUTION,
    }
