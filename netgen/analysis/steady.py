"""Steady state: damped Newton, then source stepping, then gmin stepping; also the transient's start."""
from __future__ import annotations

import warnings

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..assemble import TEMP, System
from ..errors import SolveError

MAX_ITER = 60


def _guess(sys: System, t: float) -> np.ndarray:
    x = np.zeros(sys.n)
    temps = [sys.b(t)[sys.branch_index[name]] for name in sys.branch_index if sys.names[sys.branch_index[name]].startswith("Q(")]
    t0 = float(np.mean(temps)) if temps else 300.0
    for i, k in enumerate(sys.kinds):
        if k == TEMP:
            x[i] = t0
    for i, _, v in sys.start_nodes:
        if sys.kinds[i] == TEMP:
            x[i] = v
    return x


def _weights(sys: System, x: np.ndarray) -> np.ndarray:
    return 1e-9 + 1e-9 * np.abs(x)


def _lu(A: sp.csc_matrix):
    with warnings.catch_warnings():
        warnings.simplefilter("error", sp.linalg.MatrixRankWarning)
        try:
            return spla.splu(A.tocsc(), permc_spec="COLAMD")
        except (RuntimeError, sp.linalg.MatrixRankWarning):
            return None


def newton(residual, jacobian, x0, weights, max_iter=MAX_ITER):
    """Damped Newton on residual(x) = 0. Returns (x, converged, worst_index)."""
    x = x0.copy()
    r = residual(x)
    norm = np.linalg.norm(r)
    worst = int(np.argmax(np.abs(r))) if len(r) else 0
    for _ in range(max_iter):
        lu = _lu(jacobian(x))
        if lu is None:
            return x, False, worst
        dx = lu.solve(-r)
        if not np.all(np.isfinite(dx)):
            return x, False, worst
        lam = 1.0
        # Temperatures and voltages should not leap in one iteration; scale big steps down.
        big = np.max(np.abs(dx))
        if big > 100.0:
            lam = 100.0 / big
        while True:
            xn = x + lam * dx
            rn = residual(xn)
            nn = np.linalg.norm(rn)
            if np.isfinite(nn) and (nn <= norm * (1 - 1e-4 * lam) or nn < 1e-12 or lam < 1e-3):
                break
            lam *= 0.5
        x, r, norm = xn, rn, nn
        step = np.max(np.abs(lam * dx) / weights(x)) if len(x) else 0.0
        worst = int(np.argmax(np.abs(r))) if len(r) else 0
        if step <= 1.0 and np.all(np.isfinite(x)):
            return x, True, worst
    return x, False, worst


class DCProblem:
    """F(x, t) = 0 with C ignored, optionally with start values imposed (the transient's start)."""

    def __init__(self, sys: System, t: float = 0.0, impose: bool = False, gmin: float = 0.0):
        self.sys, self.t = sys, t
        self.state = sys.switch_state(t)
        n = sys.n
        extra = sys.start_nodes if impose else []
        m = len(extra)
        self.m = m
        self.keep = np.ones(n)
        fixed_rows = {}
        if impose:
            for k, value in sys.start_branches:
                self.keep[k] = 0.0
                fixed_rows[k] = value
        self.fixed_rows = fixed_rows
        r, c, v = [], [], []
        for j, (a, b, _) in enumerate(extra):
            for node, sgn in ((a, 1.0), (b, -1.0)):
                if node < n:
                    r += [node, n + j]
                    c += [n + j, node]
                    v += [-sgn, sgn]
        for k in fixed_rows:
            r.append(k)
            c.append(k)
            v.append(1.0)
        if gmin > 0:
            for i, kind in enumerate(sys.kinds):
                if kind in ("T", "V"):
                    r.append(i)
                    c.append(i)
                    v.append(gmin)
        self.E = sp.coo_matrix((v, (r, c)), shape=(n + m, n + m)).tocsc()
        self.rhs_extra = np.array([val for (_, _, val) in extra])
        self.Kr = sp.diags(np.append(self.keep, np.ones(m)))
        self.scale = 1.0

    def residual(self, z):
        sys, n = self.sys, self.sys.n
        x = z[:n]
        F = (sys.G(self.state) @ x + sys.f(x) - self.scale * sys.b(self.t)) * self.keep
        out = np.concatenate([F, -self.scale * self.rhs_extra]) if self.m else F
        out = out + self.E @ z
        for k, value in self.fixed_rows.items():
            out[k] -= self.scale * value
        return out

    def jacobian(self, z):
        n, m = self.sys.n, self.m
        J = self.sys.J(z[:n], self.state)
        J = sp.bmat([[J, None], [None, sp.csc_matrix((m, m))]]) if m else J
        return (self.Kr @ J + self.E).tocsc()


def check_physical(sys: System, x: np.ndarray, when: str) -> None:
    """Temperatures at or below absolute zero mean the network asks the impossible."""
    cold = [i for i, k in enumerate(sys.kinds) if k == TEMP and not x[i] > 0]
    if cold:
        names = ", ".join(sys.names[i] for i in cold[:4]) + (" ..." if len(cold) > 4 else "")
        raise SolveError(
            f"{when} puts {names} at or below absolute zero ({x[cold[0]]:.6g} K)", None,
            "more heat is taken out there than can flow in: check the signs of heat inputs and "
            "module currents, and the links to a reservoir")


def solve_dc(sys: System, t: float = 0.0, impose: bool = False) -> np.ndarray:
    """The steady state at time t (with `impose`, every start value held). Raises SolveError."""
    x = _solve_dc(sys, t, impose)
    check_physical(sys, x, "the start of the transient" if impose else "the steady state")
    return x


def _solve_dc(sys: System, t: float, impose: bool) -> np.ndarray:
    if sys.n == 0:
        return np.zeros(0)
    prob = DCProblem(sys, t, impose)
    z0 = np.concatenate([_guess(sys, t), np.zeros(prob.m)])
    w = lambda z: np.concatenate([_weights(sys, z[: sys.n]), 1e-9 + 1e-9 * np.abs(z[sys.n:])])
    z, ok, worst = newton(prob.residual, prob.jacobian, z0, w)
    if ok:
        return z[: sys.n]
    # Source stepping: scale every source from a tenth up, following the solution.
    z = z0.copy()
    ok = True
    for s in np.linspace(0.1, 1.0, 10):
        prob.scale = s
        z, ok, worst = newton(prob.residual, prob.jacobian, z, w)
        if not ok:
            break
    prob.scale = 1.0
    if ok:
        return z[: sys.n]
    # gmin stepping: a shunt from every node to its reference, shrunk to zero.
    z = z0.copy()
    for gmin in [1e-2, 1e-3, 1e-4, 1e-6, 1e-8, 1e-10, 0.0]:
        p = DCProblem(sys, t, impose, gmin)
        z, ok, worst = newton(p.residual, p.jacobian, z, w)
        if not ok:
            break
    if ok:
        return z[: sys.n]
    name = sys.names[worst] if worst < sys.n else "a start value"
    raise SolveError(
        "the steady state did not converge (Newton, then source stepping, then gmin stepping)",
        None,
        f"the equation of {name} is the worst; check for a module driven past its limits, "
        "a node with no path to a reservoir or ground, or a shorted source",
    )
