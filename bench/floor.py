"""The floor: the least work that answers "what are the member forces of this case?".

Reads the same case file as the tool (tomllib for the TOML, pandas' C parser for the CSV tables),
maps labels to positions, assembles the sparse equilibrium matrix A (COO -> CSC, vectorised),
and solves A t = -f with SuperLU: MMD_ATA ordering in 3D, COLAMD in 2D (shared/PERFORMANCE.md:
the default ordering lets fill-in explode on 3D grids). A case with a `[stiffness]` EA (the
indeterminate families) is solved by direct stiffness instead: K = A_m diag(EA/L) A_m^T on the
free joint directions, SuperLU with COLAMD (the ordering PERFORMANCE.md found consistent on
indeterminate grids), and t = EA/L times each member's extension. Nothing else: no validation, no
stability screen, no report. Only cases whose tables are CSV files named by the case file
(the benchmark's own cases) are supported.

    python bench/floor.py CASE                    # solve; prints one summary line
    python bench/floor.py CASE --claims FILE      # also read a wide claims CSV and compare it
    python bench/floor.py CASE --write-claims OUT # write the solution as a claims CSV with one
                                                  # member's 'dead' value changed

Timed as a whole process by bench/run.py, so its imports are part of the floor.
"""

from __future__ import annotations

import argparse
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import scipy.sparse as sp
import scipy.sparse.linalg as spla

PERTURB_FACTOR = 1.25  # the one wrong claim: 25 % high, far outside any agreement tolerance
AGREE_RTOL = 0.01  # the tool's default --rtol
AGREE_ATOL_FRACTION = 1e-3  # the tool's default --atol-fraction


def stiffness_of(case: Path) -> float | None:
    """The `[stiffness]` EA every member shares, when the case gives one."""
    with case.open("rb") as fh:
        table = tomllib.load(fh).get("stiffness")
    return float(table["EA"]) if isinstance(table, dict) and "EA" in table else None


def read_tables(case: Path) -> dict[str, pd.DataFrame]:
    with case.open("rb") as fh:
        spec = tomllib.load(fh)
    base = case.parent
    tables = {}
    for key in ("joints", "members", "supports", "loads"):
        name = spec.get(key)
        if not isinstance(name, str):
            raise SystemExit(f"{case}: the floor reads only CSV tables; '{key}' is not a file name")
        tables[key] = pd.read_csv(
            base / name, dtype={"id": str, "start": str, "end": str, "joint": str, "case": str}
        )
    return tables


def assemble(
    tables: dict[str, pd.DataFrame],
) -> tuple[sp.csc_matrix, np.ndarray, list[str], pd.Index, int]:
    """A (dofs x members+reactions), F (dofs x cases), case names, member ids, dim."""
    joints = tables["joints"]
    dim = 3 if "z" in joints.columns else 2
    xyz = joints[list("xyz"[:dim])].to_numpy(float)
    jindex = pd.Index(joints["id"])
    members = tables["members"]
    s = jindex.get_indexer(members["start"])
    e = jindex.get_indexer(members["end"])
    b = len(members)
    delta = xyz[e] - xyz[s]
    u = delta / np.linalg.norm(delta, axis=1)[:, None]
    comp = np.arange(dim)

    sup = tables["supports"]
    dirs = sup["directions"].str.split()
    sup_joint = jindex.get_indexer(sup["joint"].repeat(dirs.str.len()))
    sup_axis = np.array(["xyz".index(a) for a in dirs.explode()], dtype=np.int64)
    r = sup_axis.size

    rows = np.concatenate(
        [
            (s[:, None] * dim + comp).ravel(),
            (e[:, None] * dim + comp).ravel(),
            sup_joint * dim + sup_axis,
        ]
    )
    cols = np.concatenate(
        [np.repeat(np.arange(b), dim), np.repeat(np.arange(b), dim), b + np.arange(r)]
    )
    vals = np.concatenate([u.ravel(), -u.ravel(), np.ones(r)])
    A = sp.coo_matrix((vals, (rows, cols)), shape=(len(joints) * dim, b + r)).tocsc()

    loads = tables["loads"]
    names = list(dict.fromkeys(loads["case"]))
    F = np.zeros((len(joints) * dim, len(names)))
    lj = jindex.get_indexer(loads["joint"])
    lc = pd.Index(names).get_indexer(loads["case"])
    for k, axis in enumerate(("fx", "fy", "fz")[:dim]):
        np.add.at(F, (lj * dim + k, lc), loads[axis].to_numpy(float))
    return A, F, names, pd.Index(members["id"]), dim


def member_lengths(tables: dict[str, pd.DataFrame]) -> np.ndarray:
    joints = tables["joints"]
    dim = 3 if "z" in joints.columns else 2
    xyz = joints[list("xyz"[:dim])].to_numpy(float)
    jindex = pd.Index(joints["id"])
    members = tables["members"]
    delta = xyz[jindex.get_indexer(members["end"])] - xyz[jindex.get_indexer(members["start"])]
    return np.linalg.norm(delta, axis=1)


def solve_elastic(A: sp.csc_matrix, F: np.ndarray, lengths: np.ndarray, ea: float) -> np.ndarray:
    """Member forces (tension positive) by direct stiffness, every member's EA the same."""
    b = lengths.size
    A_m = A[:, :b]
    restrained = np.asarray(abs(A[:, b:]).sum(axis=1)).ravel() != 0  # rows with a reaction
    k = ea / lengths
    K = (A_m @ sp.diags(k) @ A_m.T).tocsc()
    free = np.flatnonzero(~restrained)
    lu = spla.splu(K[free][:, free].tocsc(), permc_spec="COLAMD")
    U = np.zeros_like(F)
    U[free] = lu.solve(F[free])
    # A_m^T U is minus each member's extension along its direction from start to end.
    return -(k[:, None] * (A_m.T @ U))


def solve(A: sp.csc_matrix, F: np.ndarray, dim: int) -> np.ndarray:
    lu = spla.splu(A, permc_spec="MMD_ATA" if dim == 3 else "COLAMD")
    return lu.solve(-F)


def compare(claims_path: Path, t: np.ndarray, names: list[str], member_ids: pd.Index) -> int:
    """Read a wide claims CSV (member, one column per case) and count claims that disagree."""
    claims = pd.read_csv(claims_path, dtype={"member": str})
    pos = member_ids.get_indexer(claims["member"])
    b = len(member_ids)
    wrong = 0
    for k, name in enumerate(names):
        computed = t[:b, k]
        claimed = claims[name].to_numpy(float)
        atol = AGREE_ATOL_FRACTION * np.abs(computed).max()
        diff = np.abs(claimed - computed[pos])
        wrong += int((diff > AGREE_RTOL * np.abs(computed[pos]) + atol).sum())
    return wrong


def write_claims(out: Path, t: np.ndarray, names: list[str], member_ids: pd.Index) -> str:
    """Claims = the floor's own solution, except the largest 'dead' force, which is 25 % high."""
    b = len(member_ids)
    forces = t[:b].copy()
    k = names.index("dead") if "dead" in names else 0
    wrong = int(np.argmax(np.abs(forces[:, k])))
    forces[wrong, k] *= PERTURB_FACTOR
    table = pd.DataFrame(forces, columns=names)
    table.insert(0, "member", member_ids)
    table.to_csv(out, index=False, float_format="%.10g")
    return str(member_ids[wrong])


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("case", type=Path)
    parser.add_argument("--claims", type=Path, help="wide claims CSV to compare with the solution")
    parser.add_argument(
        "--write-claims", type=Path, help="write the solution as claims, one member perturbed"
    )
    args = parser.parse_args(argv)
    tables = read_tables(args.case)
    A, F, names, member_ids, dim = assemble(tables)
    ea = stiffness_of(args.case)
    t = solve(A, F, dim) if ea is None else solve_elastic(A, F, member_lengths(tables), ea)
    line = (
        f"{args.case}: {len(member_ids)} members, max |force| "
        f"{np.abs(t[: len(member_ids)]).max():.6g}"
    )
    if args.claims is not None:
        line += f", {compare(args.claims, t, names, member_ids)} claim(s) disagree"
    if args.write_claims is not None:
        line += (
            f", claims written to {args.write_claims} with member "
            f"{write_claims(args.write_claims, t, names, member_ids)} wrong"
        )
    print(line)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
