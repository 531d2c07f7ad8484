"""A job folder of invented trusses for the batch tests and bench/batch.py.

Each case folder holds a parallel-chord Pratt or Howe truss (panels, panel size, depth and loads
varied by a seeded generator) and a claims table made from the tool's own solve, written to four
significant figures as a consultant's table would be. One case in every `wrong_every` has one
member's claim planted 30 % high, so it must come back `discrepancies`; the rest must agree.
"""

from __future__ import annotations

import random
from pathlib import Path

from trussgen import howe, make_model, pratt, write_case

from verify.analysis.pipeline import analyse

PLANTED_FACTOR = 1.3  # far outside the 1 % tolerance, and no unit factor or sign flip imitates it


def write_job_folder(
    root: Path, count: int, *, seed: int = 14, wrong_every: int = 5
) -> dict[str, str]:
    """Write `count` case folders under `root`; returns {case name: the verdict planted}."""
    rng = random.Random(seed)
    expected: dict[str, str] = {}
    for number in range(count):
        pattern = pratt if number % 2 == 0 else howe
        panels = rng.choice((4, 6, 8, 10))
        case = pattern(
            panels,
            d=rng.choice((2.5, 3.0, 4.0)),
            h=rng.choice((2.0, 3.0)),
            load=float(rng.randint(5, 40)),
            case="dead",
        )
        name = f"{pattern.__name__}-{number:03d}"
        folder = root / name
        folder.mkdir(parents=True)
        write_case(folder, case)
        analysis = analyse(make_model(case))
        assert analysis.reference is not None  # the generator makes stable determinate trusses
        forces = analysis.reference.member_forces[:, 0]
        ids = list(analysis.model.member_ids)
        wrong = (
            number % wrong_every == wrong_every - 2
        )  # an odd period plants in Pratt and Howe alike
        if wrong:
            loaded = [i for i, f in enumerate(forces) if abs(f) > 1e-6]
            forces = forces.copy()
            forces[rng.choice(loaded)] *= PLANTED_FACTOR
        lines = ["member,dead (kN)"] + [f"{m},{f:.4g}" for m, f in zip(ids, forces, strict=True)]
        (folder / "claims.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
        expected[name] = "discrepancies" if wrong else "agrees"
    return expected
