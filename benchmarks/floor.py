"""The floors netgen is measured against, on the matrices `netgen matrices` writes (numpy/scipy only).

    python floor.py trap  DIR STEPS H   # the one-solve floor: trapezoidal rule, one LU, one solve a step
    python floor.py loop  DIR STEPS H   # the same-method floor: TR-BDF2 at a fixed step, one LU, two solves
    python floor.py ivp   DIR STEPS H   # scipy.integrate.solve_ivp, BDF, sparse Jacobian

DIR holds G.mtx, C.mtx, b.mtx (constant sources) and x0.npy (netgen's initial state). Prints
one JSON line: the timed part in CPU seconds (time.process_time) and what it did; the caller
reads peak memory.
"""
from __future__ import annotations

import json
import math
import sys
import time
from pathlib import Path

import numpy as np
import scipy.io
import scipy.sparse as sp
import scipy.sparse.linalg as spla

GAMMA = 2.0 - math.sqrt(2.0)
D = GAMMA / 2.0
A2 = 1.0 / (GAMMA * (2.0 - GAMMA))
B2 = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
K_ERR = (-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA))


def read(d: Path):
    G = scipy.io.mmread(d / "G.mtx").tocsc()
    C = scipy.io.mmread(d / "C.mtx").tocsc()
    b = np.asarray(scipy.io.mmread(d / "b.mtx")).ravel()
    x0 = np.load(d / "x0.npy")
    return G, C, b, x0


def trap(d: Path, steps: int, h: float) -> dict:
    """The one-solve floor: the trapezoidal rule at a fixed step, one factorisation of C + h/2·G,
    one back-substitution a step, every state stored (no error estimate)."""
    G, C, b, x = read(d)
    n = len(x)
    t0 = time.process_time()
    lu = spla.splu((C + (h / 2) * G).tocsc(), permc_spec="MMD_AT_PLUS_A")
    R = (C - (h / 2) * G).tocsr()
    hb = h * b
    out = np.empty((steps + 1, n))
    out[0] = x
    for k in range(steps):
        x = lu.solve(R @ x + hb)
        out[k + 1] = x
    t1 = time.process_time()
    return {"seconds": t1 - t0, "steps": steps, "solves": steps, "factorizations": 1,
            "final_max": float(out[-1].max())}


def loop(d: Path, steps: int, h: float) -> dict:
    """Fixed-step TR-BDF2 with the back-substitutions netgen needs where its steps pass on the
    unfiltered error estimate (trapezoidal stage, BDF2 stage; netgen/solve/estimate.py), storing
    every state; one factorisation."""
    G, C, b, x = read(d)
    n = len(x)
    t0 = time.process_time()
    M = (C + (D * h) * G).tocsc()
    lu = spla.splu(M, permc_spec="MMD_AT_PLUS_A")
    alg = np.diff(C.tocsr().indptr) == 0
    z = b - G @ x
    z[alg] = 0.0
    out = np.empty((steps + 1, n))
    out[0] = x
    w = np.full(n, 1e-3)  # netgen's floor for temperatures; informative only, the step is fixed
    worst = 0.0
    xd = None
    dhb = D * h * b
    for k in range(steps):
        y1 = lu.solve(C @ x + D * h * z + dhb)
        xn = lu.solve(C @ (A2 * y1 - B2 * x) + dhb)
        xd_new = (xn - A2 * y1 + B2 * x) / (D * h)
        if xd is not None:
            xd1 = (2.0 / (GAMMA * h)) * (y1 - x) - xd
            est = 2.0 * K_ERR * h * (xd / GAMMA - xd1 / (GAMMA * (1 - GAMMA)) + xd_new / (1 - GAMMA))
            worst = max(worst, float(np.sqrt(np.mean((est / w) ** 2))))
        x, xd, z = xn, xd_new, C @ xd_new
        out[k + 1] = x
    t1 = time.process_time()
    return {"seconds": t1 - t0, "steps": steps, "solves": 2 * steps, "factorizations": 1,
            "final_max": float(out[-1].max()), "worst_error_norm": worst}


def ivp(d: Path, steps: int, h: float) -> dict:
    """solve_ivp BDF on the same network as an ODE: the algebraic unknowns (junctions, the
    reservoir's heat) eliminated, temperatures taken as their change from the start so that
    rtol 1e-4 and atol 1 mK mean what netgen's tolerances mean."""
    from scipy.integrate import solve_ivp

    G, C, b, x0 = read(d)
    t0 = time.process_time()
    c = C.diagonal()
    if (C - sp.diags(c)).count_nonzero():
        raise SystemExit("solve_ivp floor: C is not diagonal")
    dif = np.flatnonzero(c != 0)
    alg = np.flatnonzero(c == 0)
    Gd, Gda = G[dif][:, dif], G[dif][:, alg]
    Gad, Gaa = G[alg][:, dif], G[alg][:, alg]
    lua = spla.splu(Gaa.tocsc())
    X = sp.csc_matrix(lua.solve(Gad.toarray()))  # x_a = −X·x_d + Gaa⁻¹·b_a
    ya = lua.solve(b[alg])
    Cinv = sp.diags(1.0 / c[dif])
    A = (-Cinv @ (Gd - Gda @ X)).tocsc()
    f0 = Cinv @ (b[dif] - Gda @ ya)
    y0 = x0[dif]
    base = A @ y0 + f0  # θ = x_d − x_d(0):  θ' = A·θ + base

    sol = solve_ivp(lambda t, th: A @ th + base, (0.0, steps * h), np.zeros(len(dif)), method="BDF",
                    jac=A, rtol=1e-4, atol=1e-3, max_step=h, t_eval=np.arange(steps + 1) * h)
    t1 = time.process_time()
    return {"seconds": t1 - t0, "steps": int(sol.t.size), "nfev": int(sol.nfev), "njev": int(sol.njev),
            "factorizations": int(sol.nlu), "status": int(sol.status),
            "final_max": float((sol.y[:, -1] + y0).max())}


if __name__ == "__main__":
    kind, where, steps, h = sys.argv[1], Path(sys.argv[2]), int(sys.argv[3]), float(sys.argv[4])
    print(json.dumps({"trap": trap, "loop": loop, "ivp": ivp}[kind](where, steps, h)))
