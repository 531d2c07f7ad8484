"""The crossing diagonals the tension-only explainer looks at: the sweep over members sorted by
their left end must find exactly the pairs an all-pairs test finds."""

from __future__ import annotations

import itertools

from verify.compare.causes.bracing import _cross, crossing_pairs
from verify.io.case import read_case


def x_braced_case(panels: int) -> str:
    """A parallel-chord truss with both diagonals in every panel, as a case file."""
    joints = "".join(f"L{k} = [{3 * k}, 0]\nU{k} = [{3 * k}, 4]\n" for k in range(panels + 1))
    members = []
    for k in range(panels):
        members += [f"L{k}", f"L{k + 1}"], [f"U{k}", f"U{k + 1}"]
        members += [f"L{k}", f"U{k + 1}"], [f"U{k}", f"L{k + 1}"]
    members += [[f"L{k}", f"U{k}"] for k in range(panels + 1)]
    listed = "".join(f'M{n} = ["{a}", "{b}"]\n' for n, (a, b) in enumerate(members))
    return (
        'title = "x-braced"\n\n[units]\nlength = "m"\nforce = "kN"\n\n'
        f"[joints]\n{joints}\n[members]\n{listed}\n"
        f'[supports]\nL0 = "pinned"\nL{panels} = "roller"\n\n[loads.dead]\nU1 = [0, -10]\n'
    )


def all_pairs(model) -> set[tuple[int, int]]:
    xy, ends = model.xyz, model.ends_index
    found = set()
    for a, b in itertools.combinations(range(len(model.members)), 2):
        if set(ends[a].tolist()) & set(ends[b].tolist()):
            continue
        if _cross(xy[ends[a, 0]], xy[ends[a, 1]], xy[ends[b, 0]], xy[ends[b, 1]]):
            found.add((min(a, b), max(a, b)))
    return found


def test_the_sweep_finds_every_crossing_pair_and_no_other(write_files):
    model = read_case(write_files({"case.toml": x_braced_case(12)}))
    pairs = crossing_pairs(model)
    assert len(pairs) == 12  # one crossing per panel
    assert {(min(a, b), max(a, b)) for a, b in pairs} == all_pairs(model)
    assert len(set(pairs)) == len(pairs)
