"""Benchmark trusses: scalable, statically determinate families written as case files with CSV
tables.

Families (shared/PERFORMANCE.md, "Test structures"):

- ``pratt``: a 2D parallel-chord Pratt truss with 3-4-5 panels (panel 3, depth 4), end verticals,
  pinned at L0 and on a roller at LN. N panels give 4N + 1 members, 2N + 2 joints and 3 reaction
  components, so Maxwell's count b + r - 2j is zero.
- ``grid``: a 3D square-on-square-offset double-layer grid *without top chords*. The bottom
  layer is an (n+1) x (n+1) square grid with chords; the top layer has one joint over the centre
  of every bottom cell, tied to the cell's four corners by diagonals and to nothing else. Every
  bottom perimeter joint is restrained vertically, and three horizontal components (x, y at one
  corner, y at the next) stop the in-plane rigid-body motions: b = 6n^2 + 2n, r = 4n + 3,
  j = 2n^2 + 2n + 1, so b + r - 3j = 0. The full grid has 2n(n - 1) states of self-stress, one
  per top chord; removing exactly those leaves it determinate (rank checked with a dense SVD for
  n = 2..6 while writing this file, and by ``truss-verify stability`` in every benchmark run).

Two statically indeterminate families, checked against the elastic (direct stiffness) forces
with EA = 2x10^5 kN for every member (a ``[stiffness]`` table in the case file):

- ``pratt-x``: the Pratt truss with both diagonals in every panel (X-bracing), continuous over a
  support every SPAN_PANELS panels: 5N + 1 members, N + N / SPAN_PANELS - 1 states of self-stress.
  The intermediate supports keep it well conditioned at any length (one simply supported span of
  20,000 panels is so flexible that no two stiffness solves agree on its forces).
- ``grid-full``: the double-layer grid *with* its top chords: 8n^2 members, 2n(n - 1) states of
  self-stress.

Every case has two load cases: ``dead`` (10 kN down at every loaded joint) and ``wind`` (2 kN
horizontal at every top joint), so multi-column paths are exercised.

Run ``python bench/generate.py --family grid --members 1e4 --out DIR`` to write one case.
"""

from __future__ import annotations

import argparse
import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np

FAMILIES = ("pratt", "grid", "pratt-x", "grid-full")
INDETERMINATE = ("pratt-x", "grid-full")  # checked against the elastic forces
EA = 2.0e5  # kN, every member of the indeterminate families
SPAN_PANELS = 10  # pratt-x: a support under the bottom chord every this many panels
PANEL = 3.0  # Pratt panel length and depth: a 3-4-5 triangle keeps direction cosines rational
DEPTH = 4.0
GRID_DEPTH = 0.7  # grid depth over a unit bottom cell
DEAD = 10.0
WIND = 2.0


@dataclass(frozen=True)
class Truss:
    """Plain arrays of one benchmark truss (positions are 0-based; ids are what files show)."""

    family: str
    parameter: int  # panels (pratt) or cells per side (grid)
    joint_ids: list[str]
    xyz: np.ndarray  # joints x dim
    ends: np.ndarray  # members x 2, joint positions
    supports: list[tuple[int, str]]  # (joint position, "x y" ...)
    loads: dict[str, np.ndarray]  # case -> joints x dim
    ea: float | None = None  # EA of every member (indeterminate families), else none given

    @property
    def dim(self) -> int:
        return int(self.xyz.shape[1])

    @property
    def members(self) -> int:
        return int(self.ends.shape[0])

    @property
    def member_ids(self) -> list[str]:
        return [f"M{k + 1}" for k in range(self.members)]

    @property
    def name(self) -> str:
        return f"{self.family}-{self.members}"


def pratt(panels: int) -> Truss:
    """Parallel-chord Pratt truss: diagonals fall toward mid-span, end verticals included."""
    if panels < 2:
        raise ValueError(f"pratt needs at least 2 panels, got {panels}")
    n = panels
    xs = np.arange(n + 1) * PANEL
    xyz = np.vstack(
        [np.column_stack([xs, np.zeros(n + 1)]), np.column_stack([xs, np.full(n + 1, DEPTH)])]
    )
    ids = [f"L{i}" for i in range(n + 1)] + [f"U{i}" for i in range(n + 1)]
    low = np.arange(n + 1)
    up = low + n + 1
    i = np.arange(n)
    left = i < n / 2
    diag = np.where(
        left[:, None], np.column_stack([up[i], low[i + 1]]), np.column_stack([low[i], up[i + 1]])
    )
    ends = np.vstack(
        [
            np.column_stack([low[:-1], low[1:]]),
            np.column_stack([up[:-1], up[1:]]),
            np.column_stack([low, up]),
            diag,
        ]
    )
    dead = np.zeros_like(xyz)
    dead[low[1:-1], 1] = -DEAD
    wind = np.zeros_like(xyz)
    wind[up, 0] = WIND
    supports = [(int(low[0]), "x y"), (int(low[-1]), "y")]
    return Truss(
        "pratt", n, ids, xyz, ends.astype(np.int64), supports, {"dead": dead, "wind": wind}
    )


def pratt_x(panels: int) -> Truss:
    """The Pratt truss with the second diagonal in every panel: indeterminate to degree N."""
    base = pratt(panels)
    n = panels
    low, up, i = np.arange(n + 1), np.arange(n + 1) + n + 1, np.arange(n)
    left = i < n / 2
    other = np.where(
        left[:, None], np.column_stack([low[i], up[i + 1]]), np.column_stack([up[i], low[i + 1]])
    )
    ends = np.vstack([base.ends, other.astype(np.int64)])
    inner = [(int(low[j]), "y") for j in range(SPAN_PANELS, n, SPAN_PANELS)]
    supports = [base.supports[0], *inner, base.supports[-1]]
    return Truss("pratt-x", n, base.joint_ids, base.xyz, ends, supports, base.loads, EA)


def grid_full(cells: int) -> Truss:
    """The double-layer grid with its top chords: indeterminate to degree 2n(n - 1)."""
    base = grid(cells)
    n = cells
    top = ((n + 1) ** 2 + np.arange(n * n)).reshape(n, n)
    chords = np.vstack(
        [
            np.column_stack([top[:-1, :].ravel(), top[1:, :].ravel()]),
            np.column_stack([top[:, :-1].ravel(), top[:, 1:].ravel()]),
        ]
    )
    ends = np.vstack([base.ends, chords.astype(np.int64)])
    return Truss("grid-full", n, base.joint_ids, base.xyz, ends, base.supports, base.loads, EA)


def grid(cells: int) -> Truss:
    """Double-layer grid without top chords (see the module docstring), n x n cells."""
    if cells < 2:
        raise ValueError(f"grid needs at least 2 cells per side, got {cells}")
    n = cells
    bi, bj = (a.ravel() for a in np.meshgrid(np.arange(n + 1), np.arange(n + 1), indexing="ij"))
    bottom = np.arange((n + 1) ** 2).reshape(n + 1, n + 1)
    ti, tj = (a.ravel() for a in np.meshgrid(np.arange(n), np.arange(n), indexing="ij"))
    top = (n + 1) ** 2 + np.arange(n * n)
    xyz = np.vstack(
        [
            np.column_stack([bi, bj, np.zeros(bi.size)]).astype(float),
            np.column_stack([ti + 0.5, tj + 0.5, np.full(ti.size, GRID_DEPTH)]),
        ]
    )
    ids = [f"B{i}_{j}" for i, j in zip(bi, bj, strict=True)] + [
        f"T{i}_{j}" for i, j in zip(ti, tj, strict=True)
    ]
    chords_x = np.column_stack([bottom[:-1, :].ravel(), bottom[1:, :].ravel()])
    chords_y = np.column_stack([bottom[:, :-1].ravel(), bottom[:, 1:].ravel()])
    diagonals = [
        np.column_stack([top, bottom[ti + a, tj + c]]) for a, c in ((0, 0), (1, 0), (0, 1), (1, 1))
    ]
    ends = np.vstack([chords_x, chords_y, *diagonals])
    perimeter = bottom.ravel()[(bi == 0) | (bi == n) | (bj == 0) | (bj == n)]
    directions = {int(k): ["z"] for k in perimeter}
    directions[int(bottom[0, 0])] = ["x", "y", "z"]
    directions[int(bottom[n, 0])] = ["y", "z"]
    supports = [(k, " ".join(v)) for k, v in sorted(directions.items())]
    dead = np.zeros_like(xyz)
    dead[top, 2] = -DEAD
    wind = np.zeros_like(xyz)
    wind[top, 0] = WIND
    return Truss("grid", n, ids, xyz, ends.astype(np.int64), supports, {"dead": dead, "wind": wind})


def parameter_for(family: str, members: float) -> int:
    """The family parameter whose truss has about `members` members."""
    if family == "pratt":
        return max(2, round((members - 1) / 4))
    if family == "grid":
        return max(2, round((-2 + math.sqrt(4 + 24 * members)) / 12))
    if family == "pratt-x":
        return max(2, round((members - 1) / 5))
    if family == "grid-full":
        return max(2, round(math.sqrt(members / 8)))
    raise ValueError(f"unknown family {family!r}; expected one of {', '.join(FAMILIES)}")


def build(family: str, members: float) -> Truss:
    p = parameter_for(family, members)
    return {"pratt": pratt, "grid": grid, "pratt-x": pratt_x, "grid-full": grid_full}[family](p)


def _fmt(values: np.ndarray) -> list[str]:
    # repr keeps every float exact, so the tool and the floor read identical numbers.
    return [repr(float(v)) for v in values]


def write_case(truss: Truss, directory: str | Path) -> Path:
    """Write case.toml plus joints/members/supports/loads CSV tables; returns the case path."""
    out = Path(directory)
    out.mkdir(parents=True, exist_ok=True)
    axes = "xyz"[: truss.dim]
    cols = [_fmt(truss.xyz[:, k]) for k in range(truss.dim)]
    lines = ["id," + ",".join(axes)]
    lines += [",".join(row) for row in zip(truss.joint_ids, *cols, strict=True)]
    (out / "joints.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    ids = truss.joint_ids
    lines = ["id,start,end"]
    lines += [
        f"{m},{ids[s]},{ids[e]}"
        for m, (s, e) in zip(truss.member_ids, truss.ends.tolist(), strict=True)
    ]
    (out / "members.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    lines = ["joint,directions"] + [f"{ids[j]},{axes_}" for j, axes_ in truss.supports]
    (out / "supports.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    lines = ["case,joint," + ",".join(f"f{a}" for a in axes)]
    for case, vectors in truss.loads.items():
        for j in np.nonzero(np.abs(vectors).sum(axis=1))[0]:
            lines.append(f"{case},{ids[j]}," + ",".join(_fmt(vectors[j])))
    (out / "loads.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    path = out / "case.toml"
    # The table names come before [units]: bare keys after a [table] header would belong to it.
    path.write_text(
        f'title = "Benchmark {truss.family}, {truss.members} members (parameter '
        f'{truss.parameter})"\n'
        'joints = "joints.csv"\nmembers = "members.csv"\nsupports = "supports.csv"\n'
        'loads = "loads.csv"\n\n'
        '[units]\nlength = "m"\nforce = "kN"\n'
        + (f"\n[stiffness]\nEA = {truss.ea!r}\n" if truss.ea is not None else ""),
        encoding="utf-8",
    )
    return path


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--family", choices=FAMILIES, required=True)
    parser.add_argument(
        "--members", type=float, required=True, help="approximate member count, e.g. 1e4"
    )
    parser.add_argument("--out", required=True, help="directory for case.toml and its CSV tables")
    args = parser.parse_args(argv)
    truss = build(args.family, args.members)
    path = write_case(truss, args.out)
    print(
        f"{path}: {truss.family}, parameter {truss.parameter}, {truss.members} members, "
        f"{len(truss.joint_ids)} joints"
    )
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
