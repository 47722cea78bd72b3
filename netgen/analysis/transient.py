"""Transient: TR-BDF2 (Bank et al. 1985; Hosea & Shampine 1996) with error control and breakpoints.

Each step of size h has a trapezoidal stage to t + γh and a BDF2 stage to t + h, γ = 2 − √2.
Both stages solve with the same matrix C + d·h·J (d = γ/2), so a linear network needs one LU
factorisation per step size and switch state. The local error estimate is Hosea and Shampine's,
filtered through that matrix so algebraic unknowns do not inflate it.
"""
from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from ..assemble import System
from ..errors import SolveError

GAMMA = 2.0 - math.sqrt(2.0)
D = GAMMA / 2.0  # = (1 − γ)/(2 − γ)
A2 = 1.0 / (GAMMA * (2.0 - GAMMA))
B2 = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
K_ERR = (-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA))

# Absolute error floors per kind of unknown (ARCHITECTURE.md, default accuracy).
ATOL = {"T": 1e-3, "V": 1e-6, "I": 1e-6, "Q": 1e-6}
RTOL = 1e-4


@dataclass
class Waveforms:
    time: np.ndarray
    x: np.ndarray  # (len(time), n)
    xdot: np.ndarray
    steps: int
    rejected: int
    factorizations: int
    left_rows: np.ndarray | None = None  # True where a sample is the limit from before a corner
    partial: bool = False
    message: str = ""


class _Factors:
    """LU of C + d·h·J. Linear systems: cached by (h, switch state). Nonlinear ones: the last
    factorisation is reused (simplified Newton) until Newton asks for a fresh Jacobian."""

    def __init__(self, sys: System):
        self.sys = sys
        self.cache: dict = {}
        self.count = 0
        self.last_key = None
        self.last_lu = None

    def get(self, h, state, x=None, fresh=False):
        key = (h, state)
        if self.sys.linear and key in self.cache:
            return self.cache[key]
        if not self.sys.linear and not fresh and key == self.last_key:
            return self.last_lu
        M = (self.sys.C + (D * h) * self.sys.J(x, state)).tocsc()
        with warnings.catch_warnings():
            warnings.simplefilter("error", sp.linalg.MatrixRankWarning)
            try:
                lu = spla.splu(M, permc_spec="COLAMD")
            except (RuntimeError, sp.linalg.MatrixRankWarning):
                lu = None
        self.count += 1
        if self.sys.linear:
            if len(self.cache) > 16:
                self.cache.clear()
            self.cache[key] = lu
        self.last_key, self.last_lu = key, lu
        return lu


def _stage(sys, fac, h, state, rhs, t, x_guess, left, weights):
    """Solve C·y + d·h·F(y, t) = rhs for y. Returns (y, ok)."""
    C = sys.C
    y = x_guess.copy()
    if sys.linear:
        lu = fac.get(h, state)
        if lu is None:
            return y, False
        # Linear: (C + dhG) y = rhs + dh·b(t)
        y = lu.solve(rhs + D * h * sys.b(t, left))
        return y, bool(np.all(np.isfinite(y)))
    lu = fac.get(h, state, y)
    fresh = False
    for it in range(16):
        if lu is None:
            return y, False
        r = C @ y + D * h * sys.F(y, t, state, left) - rhs
        dy = lu.solve(-r)
        if not np.all(np.isfinite(dy)):
            return y, False
        y = y + dy
        if np.max(np.abs(dy) / weights) < 1e-3:
            return y, True
        if it >= 2 and not fresh:
            lu = fac.get(h, state, y, fresh=True)  # slow convergence: take a fresh Jacobian once
            fresh = True
    return y, False


def integrate(sys: System, x0: np.ndarray, t_end: float, max_step: float | None = None,
              tolerance: float | None = None, progress=None) -> Waveforms:
    """Integrate C·x' + F(x, t) = 0 from x0 at t = 0 to t_end."""
    n = sys.n
    rtol = RTOL if tolerance is None else tolerance
    scale = rtol / RTOL
    atol = np.array([ATOL[k] * scale for k in sys.kinds])
    hmax = max_step if max_step else t_end / 200.0
    corners = sys.corners(t_end) + [t_end]
    alg = sys.algebraic_rows
    # The relative part of the error weight applies to temperatures' change from the start,
    # not to their absolute value: 1e-4 of 300 K would allow 30 mK per step.
    is_temp = np.array([k == "T" for k in sys.kinds], dtype=bool)
    offset = np.where(is_temp, x0, 0.0)
    C = sys.C
    fac = _Factors(sys)

    times, xs, xds, left_rows = [0.0], [x0.copy()], [np.zeros(n)], [False]
    t, x = 0.0, x0.copy()
    state = sys.switch_state(0.0)
    z = -sys.F(x, t, state)  # C·x' at the start (right-hand limit of every source)
    z[alg] = 0.0
    h = min(hmax, t_end * 1e-4, corners[0])
    h_min = t_end * 1e-14
    steps = rejected = 0
    ci = 0
    while t < t_end * (1 - 1e-12):
        while ci < len(corners) and corners[ci] <= t * (1 + 1e-13) + 1e-300:
            ci += 1
        next_corner = corners[ci] if ci < len(corners) else t_end
        h = min(h, hmax)
        lands = t + h >= next_corner * (1 - 1e-9)
        if lands:
            h = next_corner - t
        mid_state = sys.switch_state(t + 0.5 * h)
        weights = atol + rtol * np.abs(x - offset)
        # Stage 1, trapezoidal to t + γh.
        hg = GAMMA * h
        rhs1 = C @ x + D * h * z  # (γh/2)·z = d·h·z
        y1, ok = _stage(sys, fac, h, mid_state, rhs1, t + hg, x, False, weights)
        if ok:
            # Stage 2, BDF2 to t + h.
            rhs2 = C @ (A2 * y1 - B2 * x)
            t_new = t + h
            x_new, ok = _stage(sys, fac, h, mid_state, rhs2, t_new, 2 * y1 - x, lands, weights)
        if not ok:
            rejected += 1
            h *= 0.25
            if h < h_min:
                return _partial(times, xs, xds, steps, rejected, fac, t, "the step size collapsed (Newton failed)",
                                sys, x, y1 - x)
            continue
        z1 = (2.0 / hg) * (C @ (y1 - x)) - z
        z_new = (C @ (x_new - A2 * y1 + B2 * x)) / (D * h)
        est_rhs = 2.0 * K_ERR * h * (z / GAMMA - z1 / (GAMMA * (1 - GAMMA)) + z_new / (1 - GAMMA))
        lu = fac.get(h, mid_state, x_new)
        est = lu.solve(est_rhs) if lu is not None else est_rhs
        w = atol + rtol * np.maximum(np.abs(x - offset), np.abs(x_new - offset))
        err = float(np.sqrt(np.mean((est / w) ** 2))) if n else 0.0
        if not math.isfinite(err):
            err = 1e10
        if err > 1.0:
            rejected += 1
            h *= max(0.1, 0.9 * err ** (-1.0 / 3.0))
            if h < h_min:
                return _partial(times, xs, xds, steps, rejected, fac, t, "the step size collapsed (error control)",
                                sys, x, est / w)
            continue
        if np.any(x_new[is_temp] <= 0):
            return _partial(times, xs, xds, steps, rejected, fac, t,
                            "a temperature would fall to absolute zero", sys, x,
                            np.where(is_temp & (x_new <= 0), 1.0, 0.0), "first at", "more heat is taken out there than "
                            "can flow in: check the signs of heat inputs and module currents, and the links to a reservoir")
        # Accept.
        steps += 1
        xdot = (x_new - A2 * y1 + B2 * x) / (D * h)
        t, x = t_new if not lands else next_corner, x_new
        times.append(t)
        xs.append(x.copy())
        xds.append(xdot)
        left_rows.append(False)
        factor = 0.9 * err ** (-1.0 / 3.0) if err > 0 else 5.0
        # Small increases are not worth a new factorisation: keep h unless it can grow by half.
        h_next = h if 1.0 <= factor < 1.5 else h * min(5.0, max(0.2, factor))
        if lands and t < t_end * (1 - 1e-12):
            # A corner: sources may jump and switches change, so the unknowns without storage
            # (and the current through a closing switch) must jump too. A backward-Euler step of
            # negligible length finds that consistent state; the stored ones barely move.
            state = sys.switch_state(t)
            eps = t_end * 1e-10
            x_plus, ok = _stage(sys, fac, eps / D, state, C @ x, t, x, False, weights)
            if ok and np.max(np.abs(x_plus - x) / weights) > 1e-6:
                left_rows[-1] = True
                times.append(t)
                xs.append(x_plus.copy())
                # The derivative just after the corner; across every capacitor and inductor the
                # stored quantity moved by O(eps), so these differences are the right-hand slopes.
                xds.append((x_plus - x) / eps)
                left_rows.append(False)
                x = x_plus
            z = -sys.F(x, t, state)
            z[alg] = 0.0
        else:
            z = z_new
        h = h_next
        if progress is not None:
            progress(t, steps)
    xds[0] = xds[1] if len(xds) > 1 else xds[0]
    return Waveforms(np.array(times), np.array(xs), np.array(xds), steps, rejected, fac.count,
                     left_rows=np.array(left_rows))


def _partial(times, xs, xds, steps, rejected, fac, t, why, sys=None, x=None, est=None,
             label="the unknowns changing fastest:", hint=None) -> Waveforms:
    """Stop with a SolveError that carries the waveforms computed so far."""
    worst = ""
    if sys is not None and est is not None and np.any(est != 0):
        order = [i for i in np.argsort(-np.abs(est))[:3] if est[i] != 0]
        worst = f"; {label} " + ", ".join(sys.names[i] for i in order)
    err = SolveError(
        f"the transient stopped at t = {t:.6g} s: {why}{worst}", None,
        hint or "look for a switch or source jump into a capacitor or inductor with no resistance, "
        "a module driven far past its limits, or loosen `tolerance`",
    )
    n = len(xs[0]) if xs else 0
    err.partial = Waveforms(np.array(times), np.array(xs).reshape(-1, n), np.array(xds).reshape(-1, n),
                            steps, rejected, fac.count, left_rows=np.zeros(len(times), dtype=bool),
                            partial=True, message=err.message)
    raise err
