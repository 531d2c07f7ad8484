"""The unit-load (virtual work) deflection hand calc as plain text (terminal and reports).

Renders `verify.analysis.virtual_work.VirtualWorkCalc`: one row per member, the sum and the
deflection.
"""

from __future__ import annotations

import numpy as np

from verify.analysis.stiffness import EQUAL_EA_NOTE
from verify.analysis.virtual_work import DISPLAY_ZERO_RTOL, VirtualWorkCalc
from verify.model import Model


def _fmt(x: float) -> str:
    if x == 0.0:
        return "0"
    return f"{x:.6g}"


def _small_unit(value: float, length_unit: str) -> str:
    """' = -2.848 mm' beside a deflection in m (or in inches beside feet): how tables write them."""
    small = {"m": ("mm", 1000.0), "ft": ("in", 12.0), "cm": ("mm", 10.0)}.get(length_unit)
    return f" = {_fmt(round(value * small[1], 10))} {small[0]}" if small else ""


def render_virtual_work(calc: VirtualWorkCalc, model: Model) -> str:
    """The hand calc as plain text: one row per member, the sum and the deflection."""
    lu = model.units.length.symbol
    fu = model.units.force.symbol
    dir_text = "(" + ", ".join(_fmt(c) for c in calc.direction) + ")"
    header = ["member", f"N ({fu})", "n (-)", f"L ({lu})", f"EA ({fu})", f"n N L / EA ({lu})"]
    values = np.array(
        [[r.real_force, r.unit_force, r.length, r.EA, r.term] for r in calc.rows]
    ).reshape(-1, 5)
    # Round-off left by the solves (e.g. -3.6e-15 for a zero-force member) would distract a checker.
    scale = np.abs(values).max(axis=0) if len(values) else np.zeros(5)
    values = np.where(np.abs(values) <= DISPLAY_ZERO_RTOL * scale, 0.0, values)
    body = [
        [r.member, *(_fmt(float(v)) for v in row)] for r, row in zip(calc.rows, values, strict=True)
    ]
    widths = [
        max(len(h), *(len(row[k]) for row in body)) if body else len(h)
        for k, h in enumerate(header)
    ]

    def line(cells: list[str]) -> str:
        return "  ".join(
            c.ljust(w) if k == 0 else c.rjust(w)
            for k, (c, w) in enumerate(zip(cells, widths, strict=True))
        )

    out = [
        f"Unit-load (virtual work) deflection of joint '{calc.joint}' along {dir_text}",
        "1 x Delta = sum n N L / (EA)   (N: real forces, n: forces from a unit load at the "
        "joint; tension +)",
        f"unit-load forces n: {calc.unit_load_route}",
        "",
        line(header),
        line(["-" * w for w in widths]),
        *(line(row) for row in body),
        line(["-" * w for w in widths]),
        line(["sum", "", "", "", "", _fmt(calc.deflection)]),
        "",
        f"Delta = {_fmt(calc.deflection)} {lu}{_small_unit(calc.deflection, lu)} along {dir_text}"
        + (" (negative: the joint moves opposite to the unit load)" if calc.deflection < 0 else ""),
    ]
    if calc.equal_EA_assumed:
        out.append(EQUAL_EA_NOTE)
    out += [f"note: {n}" for n in calc.notes if n != EQUAL_EA_NOTE]
    return "\n".join(out)
