"""Large thermal blocks: CPU per step solve of a plate's TR-BDF2 matrix C + d·h·G with SuperLU
(the ordering netgen uses) against conjugate gradients preconditioned by smoothed-aggregation
algebraic multigrid (pyamg; `pip install ".[bench]"`); with `--orderings`, SuperLU under three
fill-reducing orderings: minimum degree on A + Aᵀ (netgen's), COLAMD, and nested dissection by
METIS (pymetis, also in the bench extra; the matrix permuted symmetrically, then factored in that
order).

    python benchmarks/solvers.py 100 200 300 500
    python benchmarks/solvers.py --orderings 100 200 300 500

The plate is benchmarks/grids.py's (0.5 J/K cells, 2 W/K links, the left column to a held edge
through 4 W/K), h = 1 s. Ten right-hand sides of C·x for temperatures near 298 K; CG starts from
the LU solution × 0.999 (a warm start, as a step's previous state would give) and stops at the
relative residual `tol`. CPU seconds (time.process_time).
"""
from __future__ import annotations

import math
import sys
import time

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

D = (2.0 - math.sqrt(2.0)) / 2.0


def plate(n: int, c: float = 0.5, g: float = 2.0, edge: float = 4.0):
    idx = np.arange(n * n).reshape(n, n)
    a = np.concatenate([idx[:, :-1].ravel(), idx[:-1, :].ravel()])
    b = np.concatenate([idx[:, 1:].ravel(), idx[1:, :].ravel()])
    off = sp.coo_matrix((np.full(len(a), -g), (a, b)), shape=(n * n, n * n))
    off = off + off.T
    diag = -np.asarray(off.sum(axis=1)).ravel()
    diag[idx[:, 0]] += edge
    return sp.diags(np.full(n * n, c)).tocsr(), (off + sp.diags(diag)).tocsr()


def measure(n: int) -> str:
    try:
        import pyamg
    except ImportError:
        raise SystemExit("pyamg is not installed: pip install '.[bench]'") from None
    C, G = plate(n)
    M = (C + D * 1.0 * G).tocsc()
    rng = np.random.default_rng(0)
    rhs = [C @ (298.0 + rng.random(n * n)) for _ in range(10)]
    t = time.process_time()
    lu = spla.splu(M, permc_spec="MMD_AT_PLUS_A")
    factor = time.process_time() - t
    t = time.process_time()
    xs = [lu.solve(r) for r in rhs]
    solve = (time.process_time() - t) / len(rhs)
    t = time.process_time()
    ml = pyamg.smoothed_aggregation_solver(M.tocsr(), symmetry="hermitian")
    setup = time.process_time() - t
    cells = []
    for tol in (1e-8, 1e-10):
        t = time.process_time()
        got = [ml.solve(r, x0=x * 0.999, tol=tol, accel="cg") for r, x in zip(rhs, xs)]
        per = (time.process_time() - t) / len(rhs)
        diff = max(float(np.max(np.abs(a - b))) for a, b in zip(got, xs))
        cells.append(f"{per * 1e3:.1f} ms (tol {tol:g}, {diff:.1e} K from LU)")
    fill = (lu.L.nnz + lu.U.nnz) / (n * n)
    return (f"| {n}² | {n * n} | {factor:.3f} | {solve * 1e3:.1f} ms | {fill:.0f} | {setup:.3f} | "
            + " | ".join(cells) + " |")


def orderings(n: int) -> str:
    try:
        import pymetis
    except ImportError:
        raise SystemExit("pymetis is not installed: pip install '.[bench]'") from None
    C, G = plate(n)
    M = (C + D * 1.0 * G).tocsc()
    rhs = C @ (298.0 + np.random.default_rng(0).random(n * n))
    cells = []
    for name in ("MMD_AT_PLUS_A", "COLAMD", "METIS"):
        t = time.process_time()
        if name == "METIS":
            S = M.tocsr().copy()
            S.setdiag(0)
            S.eliminate_zeros()
            S.sort_indices()
            p = np.asarray(pymetis.nested_dissection(pymetis.CSRAdjacency(S.indptr, S.indices))[0])
            lu = spla.splu(M[p][:, p].tocsc(), permc_spec="NATURAL")
            b = rhs[p]
        else:
            lu, b = spla.splu(M, permc_spec=name), rhs
        factor = time.process_time() - t
        t = time.process_time()
        for _ in range(20):
            lu.solve(b)
        solve = (time.process_time() - t) / 20
        cells.append(f"{factor:.3f} s, {(lu.L.nnz + lu.U.nnz) / (n * n):.1f}, {solve * 1e3:.2f} ms")
    return f"| {n}² | {n * n} | " + " | ".join(cells) + " |"


if __name__ == "__main__":
    if sys.argv[1:2] == ["--orderings"]:
        print("| plate | unknowns | minimum degree on A + Aᵀ: factor, fill per unknown, solve "
              "| COLAMD | nested dissection (METIS) |")
        print("|---|---|---|---|---|")
        for size in map(int, sys.argv[2:] or ["100", "200", "300"]):
            print(orderings(size), flush=True)
        raise SystemExit(0)
    print("| plate | unknowns | SuperLU factor s | SuperLU solve | fill per unknown | AMG set-up s "
          "| CG + AMG solve, tol 1e-8 | CG + AMG solve, tol 1e-10 |")
    print("|---|---|---|---|---|---|---|---|")
    for size in map(int, sys.argv[1:] or ["100", "200", "300"]):
        print(measure(size), flush=True)
