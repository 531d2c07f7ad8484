"""Loads as engineers state them, turned into the joint loads the model holds.

Plain functions of geometry and numbers; the case reader parses, checks and words problems, and
records each conversion. Rules (each stated in the README's case-file section):

- **Direction of gravity**: -y in a 2D model, -z in a 3D model (common practice: y up in an
  elevation, z up in a space truss), unless a load states its own direction.
- **Normal to a member** (2D): for the member walked from its first joint to its second with unit
  vector (ux, uy), a positive magnitude is *pressure on its left side*, a force along
  (uy, -ux); a negative magnitude is suction, along (-uy, ux). For a rafter written from eaves
  to ridge on the left slope (rising to the right), positive pushes down onto the roof and
  negative lifts it, as wind pressure and suction are signed in the trade (common practice:
  pressure positive toward the surface).
- **Line load to panel points by tributary length**: each loaded member is a simple span between
  its two joints, so half of its total load goes to each end (common practice for pin-jointed
  models: the tributary length of a panel point is half of each loaded member meeting there).
  The length is the member's own length (``measured = "along"``, e.g. self-weight or load on a
  sloping surface) or its horizontal projection (``"plan"``, e.g. snow on a roof's plan area).
- **Self-weight**: mass per length in kg/m times the member's length in metres times standard
  gravity g_n = 9.80665 m/s^2 (NIST SP 811, 2008, exact), half to each end joint.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from verify.units import KGF_IN_N

STANDARD_GRAVITY = KGF_IN_N  # m/s^2: the kilogram-force's own g_n, exact (NIST SP 811, 2008)


def gravity(dim: int) -> np.ndarray:
    """The unit vector of gravity in a model of `dim` dimensions: -y in 2D, -z in 3D."""
    down = np.zeros(dim)
    down[dim - 1] = -1.0
    return down


def pressure_normal(start: Sequence[float], end: Sequence[float]) -> np.ndarray:
    """Unit normal of a 2D member along which a positive (pressure) load acts: (uy, -ux)."""
    delta = np.asarray(end, dtype=float) - np.asarray(start, dtype=float)
    ux, uy = delta / float(np.linalg.norm(delta))
    return np.array([uy, -ux])


def member_span(start: Sequence[float], end: Sequence[float], measured: str) -> float:
    """The length a line load acts over: the member's own ("along") or horizontal ("plan")."""
    delta = np.asarray(end, dtype=float) - np.asarray(start, dtype=float)
    if measured == "plan":
        delta = delta[:-1]  # drop the vertical component (y in 2D, z in 3D)
    return float(np.linalg.norm(delta))


def tributary_loads(
    segments: Sequence[tuple[str, str, float]], vectors: Sequence[np.ndarray]
) -> dict[str, np.ndarray]:
    """Joint loads from loaded members: (start, end, span) with the force per length as a vector;
    half of each member's total goes to each end. Joints keep their first appearance order."""
    loads: dict[str, np.ndarray] = {}
    for (start, end, span), vector in zip(segments, vectors, strict=True):
        half = 0.5 * span * np.asarray(vector, dtype=float)
        for joint in (start, end):
            loads[joint] = loads.get(joint, 0.0) + half
    return loads


def describe_vector(vector: Sequence[float] | np.ndarray) -> str:
    """A load vector as a note prints it: '[0, -3.75]' with up to 6 significant figures."""
    return "[" + ", ".join(f"{v:.6g}" if v != 0 else "0" for v in vector) + "]"
