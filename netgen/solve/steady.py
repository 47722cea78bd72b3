"""Steady state: damped Newton, then source stepping, then gmin stepping; also the transient's start."""
from __future__ import annotations

import numpy as np
import scipy.sparse as sp

from netgen.solve.assembly import TEMP, WATT, System
from netgen.solve.factor import lu
from netgen.model.errors import SolveError

MAX_ITER = 60


def _guess(sys: System, t: float) -> np.ndarray:
    x = np.zeros(sys.n)
    b = sys.b(t)
    temps = [b[k] for k in sys.branch_index.values() if sys.kinds[k] == WATT]  # reservoir temperatures
    t0 = float(np.mean(temps)) if temps else 300.0
    x[np.array(sys.kinds) == TEMP] = t0
    for i, _, v in sys.start_nodes:
        if i < sys.n and sys.kinds[i] == TEMP:
            x[i] = v
    return x


def _weights(sys: System, x: np.ndarray) -> np.ndarray:
    return 1e-9 + 1e-9 * np.abs(x)


def newton(residual, jacobian, x0, weights, max_iter=MAX_ITER, constant_jacobian=False, limit=None, reach=None):
    """Damped Newton on residual(x) = 0. Returns (x, converged, worst_index).

    `reach(x)` is how far each unknown may move in one iteration (default 100 units for every one).

    With `constant_jacobian` (a linear problem) the Jacobian is factorised once and reused.
    `limit(x, x_new)` -> (x_new, limited) is the kinds' limiting of their own unknowns (diode
    junctions); a limited update is taken whole, as circuit simulators do, and is never the last.
    """
    x = x0.copy()
    r = residual(x)
    norm = np.linalg.norm(r)
    worst = int(np.argmax(np.abs(r))) if len(r) else 0
    factors = None
    for _ in range(max_iter):
        if factors is None or not constant_jacobian:
            factors = lu(jacobian(x))
        if factors is None:
            return x, False, worst
        dx = factors.solve(-r)
        if not np.all(np.isfinite(dx)):
            return x, False, worst
        lam = 1.0
        # Temperatures and voltages should not leap in one iteration; scale big steps down.
        big = (np.max(np.abs(dx) / (100.0 if reach is None else reach(x)))) if len(dx) else 0.0
        if big > 1.0 and not constant_jacobian:
            lam = 1.0 / big
        if limit is not None:
            xl, hit = limit(x, x + lam * dx)
            rl = residual(xl) if hit else None
            if hit and np.all(np.isfinite(rl)):
                x, r, norm = xl, rl, np.linalg.norm(rl)
                worst = int(np.argmax(np.abs(r)))
                continue
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
    """F(x, t) = 0 with C ignored, optionally with start values imposed (the transient's start).

    A start value that fixes one unknown against the reference (a mass's temperature, a
    capacitor's voltage to ground, an inductor's current) pins that unknown and drops its own
    equation, whose flow is whatever holding the value takes; so a plate whose every cell has a
    start leaves only its junctions to solve. A capacitor start between two floating nodes is a
    constraint with a multiplier of its own, bordering the system.
    """

    def __init__(self, sys: System, t: float = 0.0, impose: bool = False, gmin: float = 0.0, pin: bool = True,
                 dyn: dict | None = None):
        self.sys, self.t = sys, t
        self.state = sys.switch_state(t, dyn)
        self.dyn = dyn
        n = sys.n
        pins: dict[int, float] = {}
        border: list[tuple[int, int, float]] = []
        if impose:
            for a, b, v in sys.start_nodes:
                if pin and b >= n and a < n and a not in pins:
                    pins[a] = v
                elif pin and a >= n and b < n and b not in pins:
                    pins[b] = -v
                else:
                    border.append((a, b, v))
            for k, v in sys.start_branches:
                if pin and k not in pins:
                    pins[k] = v
                else:
                    border.append((k, n, v))
        self.pinned = np.array(sorted(pins), dtype=np.int64)
        self.pin_values = np.array([pins[i] for i in self.pinned.tolist()], dtype=float)
        mask = np.ones(n, dtype=bool)
        mask[self.pinned] = False
        self.free = np.flatnonzero(mask)
        nf, m = len(self.free), len(border)
        self.m = m
        self.all_free = nf == n
        pos = np.full(n + 1, -1, dtype=np.int64)
        pos[self.free] = np.arange(nf)
        r, c, v = [], [], []
        for j, (a, b, _) in enumerate(border):
            for node, sgn in ((a, 1.0), (b, -1.0)):
                if node < n:
                    r.append(nf + j)
                    c.append(node)
                    v.append(sgn)
        # Border rows read x (full), border columns act on the free rows.
        self.B = sp.csr_matrix((v, (r, c)), shape=(nf + m, n)) if m else None
        rows_free = [pos[node] for j, (a, b, _) in enumerate(border) for node in (a, b) if node < n and pos[node] >= 0]
        cols = [nf + j for j, (a, b, _) in enumerate(border) for node in (a, b) if node < n and pos[node] >= 0]
        vals = [-sgn for j, (a, b, _) in enumerate(border) for node, sgn in ((a, 1.0), (b, -1.0))
                if node < n and pos[node] >= 0]
        self.E = sp.csc_matrix((vals, (rows_free, cols)), shape=(nf + m, nf + m))
        self.rhs_extra = np.array([val for (_, _, val) in border])
        kinds = np.array(sys.kinds)
        self.gmin = gmin * ((kinds == "T") | (kinds == "V"))[self.free] if gmin > 0 else None
        self.scale = 1.0

    def full(self, z: np.ndarray) -> np.ndarray:
        """The unknowns of the System from the problem's own (free unknowns, then multipliers)."""
        x = np.empty(self.sys.n)
        x[self.free] = z[: len(self.free)]
        x[self.pinned] = self.scale * self.pin_values
        return x

    def start(self, x0: np.ndarray) -> np.ndarray:
        return np.concatenate([x0[self.free], np.zeros(self.m)])

    def limit(self, z_old, z_new):
        """The kinds' limits (diode junctions) on a new iterate of the problem's own unknowns."""
        x_new, hit = self.sys.limit(self.full(z_old), self.full(z_new))
        if not hit:
            return z_new, False
        out = z_new.copy()
        out[: len(self.free)] = x_new[self.free]
        return out, True

    def residual(self, z):
        sys, nf = self.sys, len(self.free)
        x = self.full(z)
        F = sys.G(self.state) @ x + sys.f(x) - self.scale * sys.b(self.t)
        if not self.all_free:
            F = F[self.free]
        if self.gmin is not None:
            F = F + self.gmin * z[:nf]
        if self.m:
            F = np.concatenate([F, np.zeros(self.m)])
            F[nf:] = (self.B @ x)[nf:] - self.scale * self.rhs_extra
        return F + self.E @ z

    def jacobian(self, z):
        sys, nf, m = self.sys, len(self.free), self.m
        J = sys.J(self.full(z), self.state)
        if not self.all_free:
            J = J.tocsr()[self.free][:, self.free]
        if self.gmin is not None:
            J = J + sp.diags(self.gmin)
        if m:
            J = sp.bmat([[J, None], [self.B[nf:][:, self.free], sp.csc_matrix((m, m))]])
        return (J + self.E).tocsc()


def check_physical(sys: System, x: np.ndarray, when: str) -> None:
    """Temperatures at or below absolute zero mean the network asks the impossible."""
    cold = np.flatnonzero((np.array(sys.kinds) == TEMP) & ~(x > 0))
    if len(cold):
        names = ", ".join(sys.names[i] for i in cold[:4]) + (" ..." if len(cold) > 4 else "")
        raise SolveError(
            f"{when} puts {names} at or below absolute zero ({x[cold[0]]:.6g} K)", None,
            "more heat is taken out there than can flow in: check the signs of heat inputs and "
            "module currents, and the links to a reservoir")


def solve_dc(sys: System, t: float = 0.0, impose: bool = False, pin: bool = True, dyn: dict | None = None) -> np.ndarray:
    """The steady state at time t (with `impose`, every start value held). Raises SolveError.

    `pin=False` imposes every start value as a bordering constraint instead of pinning
    unknowns: the general form, slower on large meshes, kept to check the pinned one against.
    """
    x = _solve_dc(sys, t, impose, pin, dyn)
    check_physical(sys, x, "the start of the transient" if impose else "the steady state")
    return x


def _solve_dc(sys: System, t: float, impose: bool, pin: bool, dyn: dict | None = None) -> np.ndarray:
    if sys.n == 0:
        return np.zeros(0)
    prob = DCProblem(sys, t, impose, pin=pin, dyn=dyn)
    x_guess = _guess(sys, t)
    z0 = prob.start(x_guess)
    nf = len(prob.free)
    if nf + prob.m == 0:
        return prob.full(z0)
    w = lambda z: np.concatenate([_weights(sys, z[:nf]), 1e-9 + 1e-9 * np.abs(z[nf:])])
    linear = sys.linear
    lim = (lambda p: p.limit) if sys.limits else (lambda p: None)
    # An iteration may move a temperature by 100 K, anything else by 100 units or its own size
    # again: a current of 1e5 A is reached in a dozen doublings, not a thousand steps of 100 A.
    temp = np.concatenate([np.array(sys.kinds)[prob.free] == TEMP, np.zeros(prob.m, dtype=bool)])
    reach = lambda z: np.where(temp, 100.0, 100.0 + np.abs(z))
    z, ok, worst = newton(prob.residual, prob.jacobian, z0, w, constant_jacobian=linear, limit=lim(prob),
                          reach=reach)
    if ok:
        return prob.full(z)
    # Source stepping: scale every source from a tenth up, following the solution.
    z = z0.copy()
    ok = True
    for s in np.linspace(0.1, 1.0, 10):
        prob.scale = s
        z, ok, worst = newton(prob.residual, prob.jacobian, z, w, constant_jacobian=linear, limit=lim(prob),
                              reach=reach)
        if not ok:
            break
    prob.scale = 1.0
    if ok:
        return prob.full(z)
    # gmin stepping: a shunt from every node to its reference, shrunk to zero.
    z = z0.copy()
    p = prob
    for gmin in [1e-2, 1e-3, 1e-4, 1e-6, 1e-8, 1e-10, 0.0]:
        p = DCProblem(sys, t, impose, gmin, pin, dyn)
        z, ok, worst = newton(p.residual, p.jacobian, z, w, constant_jacobian=linear, limit=lim(p), reach=reach)
        if not ok:
            break
    if ok:
        return p.full(z)
    worst_unknown = p.free[worst] if worst < nf else None
    name = sys.names[worst_unknown] if worst_unknown is not None else "a start value"
    raise SolveError(
        "the steady state did not converge (Newton, then source stepping, then gmin stepping)",
        None,
        f"the equation of {name} is the worst; check for a module driven past its limits, "
        "a node with no path to a reservoir or ground, or a shorted source",
    )
