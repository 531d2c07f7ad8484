"""JSON renderings (DESIGN.md section 4 output contract)."""

from __future__ import annotations

import json
import math
from typing import Any

import numpy as np

from verify import __version__
from verify.analysis.pipeline import Analysis
from verify.model import Model
from verify.report.cautions import CAUTION, ELASTIC_CAUTION
from verify.report.names import public_convention, public_row


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


def value_units(model: Model) -> dict[str, str]:
    """The unit of every family of values an output carries, by the key that holds them."""
    force, length = model.units.force.symbol, model.units.length.symbol
    return {
        "length": length,
        "force": force,
        "coordinates": length,
        "forces": force,  # member forces, tension positive
        "reactions": force,
        "routes": force,
        "members": force,  # claimed, joints, sections, global, elastic, difference (per row: "unit")
        "displacements": length,
        "implied_loads": force,
        "implied_load_table": force,
        "imbalances": force,
        "EA": force,
        "mechanism_modes": "relative (largest motion 1)",
        "self_stress_modes": "relative (largest force 1)",
        "tolerance": "fractions (0.01 = 1 %)",
    }


def stability_json(model: Model, analysis: Analysis) -> dict[str, Any]:
    return {
        "tool": {"name": "truss-verify", "version": __version__},
        "case": {
            "title": model.title,
            "file": model.source,
            "units": {"length": model.units.length.symbol, "force": model.units.force.symbol},
            # loads stated as line loads, self-weight, angles or normals, and the joint loads they became
            "load_conversions": list(model.conversions),
        },
        "units": value_units(model),
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
            name: {
                m: float(analysis.joints.forces.member_forces[i, k])
                for i, m in enumerate(model.member_ids)
            }
            for k, name in enumerate(model.load_names)
        }
        routes["joint_order"] = analysis.joints.order
    sections = analysis.sections
    if sections is not None:
        sf = sections.forces
        routes["sections"] = {
            name: {m: float(sf.member_forces[i, k]) for i, m in enumerate(model.member_ids)}
            for k, name in enumerate(model.load_names)
        }
        routes["section_coverage"] = sections.coverage
    data["routes"] = routes
    data["route_disagreement"] = analysis.route_disagreement
    data["route"] = ref.route
    elastic = analysis.elastic
    if elastic is not None:
        disp = elastic.displacements
        d = model.dim
        data["displacements"] = {
            name: {
                j.id: [float(x) for x in disp[i * d : (i + 1) * d, k]]
                for i, j in enumerate(model.joints)
            }
            for k, name in enumerate(model.load_names)
        }
        data["equal_EA_assumed"] = bool(elastic.equal_EA_assumed)
        data["elastic_caution"] = ELASTIC_CAUTION
    data["notes"] = list(analysis.notes)
    return data


def check_json(review: Any, *, displacement_file: tuple[str, str] | None = None) -> dict[str, Any]:
    """The DESIGN.md section 4 `check --json` object (extra fields allowed, contract keys kept).

    `displacement_file` is (path, SHA-256) of the claimed displacements, when they were checked.
    """
    from verify.report.document import sha256_file

    model = review.analysis.model
    force, length = model.units.force.symbol, model.units.length.symbol
    inputs = {
        "case": model.source,
        "case_sha256": sha256_file(model.source),
        "claims": review.claims.source,
        "claims_sha256": review.claims.sha256,
    }
    if displacement_file is not None:
        inputs["displacements"], inputs["displacements_sha256"] = displacement_file
    return {
        "verdict": review.verdict.value,
        "structure": review.analysis.stability.as_dict(),
        "convention": public_convention(review.convention.as_dict(), force),
        "members": [
            public_row(row.as_dict(), length if row.kind == "displacement" else force)
            for row in review.rows
        ],
        "findings": [f.as_dict() for f in review.findings],
        "summary": {
            "members_checked": review.checked_members,
            "members_total": len(model.members),
            "cases_checked": list(review.checked_cases),
            "cases_total": list(model.load_names),
        },
        "tolerance": {
            "relative": review.tolerance.rtol,
            "fraction_of_largest_force": review.tolerance.atol_fraction,
        },
        "imbalances": [
            {"joint": b.joint, "case": b.case, "residual": list(b.residual), "size": b.size}
            for b in review.imbalances
        ],
        "implied_loads": review.implied.by_case() if review.implied is not None else {},
        "implied_load_table": [item.as_dict() for item in review.implied.differing]
        if review.implied is not None
        else [],
        "units": value_units(model),
        "load_conversions": list(model.conversions),
        "inputs": inputs,
        "tool": {"name": "truss-verify", "version": __version__},
        "notes": list(review.notes),
        "caution": CAUTION,
        **(
            {"elastic_caution": ELASTIC_CAUTION}
            if review.analysis.elastic is not None
            and (review.analysis.global_ is None or review.displacements is not None)
            else {}
        ),
    }
