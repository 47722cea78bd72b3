"""Transient: TR-BDF2 (Bank et al. 1985; Hosea & Shampine 1996) with error control and breakpoints.

Each step of size h has a trapezoidal stage to t + γh and a BDF2 stage to t + h, γ = 2 − √2.
Both stages solve with the same matrix C + d·h·J (d = γ/2), so a linear network needs one LU
factorisation per step size and switch state, then back-substitutions only. A nonlinear one
keeps its factorisation across Newton iterations and steps (modified Newton) and takes a fresh
Jacobian only when Newton converges slowly. The local error estimate is Hosea and Shampine's,
filtered through that matrix so algebraic unknowns do not inflate it.
"""
from __future__ import annotations

import math
from collections import OrderedDict
from dataclasses import dataclass

import numpy as np

from netgen.solve.assembly import System
from netgen.model.errors import SolveError
from netgen.solve import estimate
from netgen.solve.factor import lu

GAMMA = 2.0 - math.sqrt(2.0)
D = GAMMA / 2.0  # = (1 − γ)/(2 − γ)
A2 = 1.0 / (GAMMA * (2.0 - GAMMA))
B2 = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
K_ERR = (-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA))

# Absolute error floors per kind of unknown (ARCHITECTURE.md, default accuracy).
ATOL = {"T": 1e-3, "V": 1e-6, "I": 1e-6, "Q": 1e-6}
RTOL = 1e-4
KEEP_FACTORS = 4  # factorisations kept for reuse, the most recent ones ...
KEEP_NONZEROS = 6_000_000  # ... while together they hold no more entries than this (~70 MB)
SLOW = 0.5  # Newton contracting slower than this per iteration asks for a fresh Jacobian
NEWTON_TOL = 1e-3  # Newton's error, in units of the step's error weights
# Steps (accepted and rejected) one run may take: five times the points a transient may report
# (language/elaborate.py MAX_POINTS), so a run that must creep stops with a message, not memory.
MAX_STEPS = 5_000_000


class Columns:
    """Samples × unknowns, of which only some columns are stored; `[:, i]` of another raises.

    The transient keeps derivatives only of the unknowns a signal can need them of (node
    voltages and branch currents, for capacitor currents), not of every temperature of a mesh.
    """

    def __init__(self, data: np.ndarray, cols: np.ndarray, n: int):
        self.data, self.n = data, n
        self.pos = {int(c): k for k, c in enumerate(cols)}
        self.shape = (data.shape[0], n)

    def __getitem__(self, key):
        rows, col = key
        if col not in self.pos:
            raise KeyError(f"the derivative of unknown {col} was not kept")
        return self.data[rows, self.pos[col]]

    def __len__(self):
        return self.shape[0]


class _Rows:
    """Rows of n floats appended one at a time into one preallocated block. Untouched pages
    of a large `np.empty` are never committed, so a generous capacity costs no memory."""

    def __init__(self, n: int, capacity: int):
        self.buf = np.empty((max(capacity, 4), n))
        self.k = 0

    def append(self, row) -> None:
        if self.k == len(self.buf):
            bigger = np.empty((int(len(self.buf) * 1.5) + 4, self.buf.shape[1]))
            bigger[: self.k] = self.buf
            self.buf = bigger
        self.buf[self.k] = row
        self.k += 1

    def set(self, i: int, row) -> None:
        self.buf[i] = row

    def get(self, i: int) -> np.ndarray:
        return self.buf[i]

    def array(self) -> np.ndarray:
        return self.buf[: self.k]


@dataclass
class Waveforms:
    time: np.ndarray
    x: np.ndarray  # (len(time), n)
    xdot: Columns | np.ndarray
    steps: int
    rejected: int
    factorizations: int
    left_rows: np.ndarray | None = None  # True where a sample is the limit from before a corner
    partial: bool = False
    message: str = ""
    solves: int = 0  # back-substitutions
    newton: int = 0  # Newton iterations (nonlinear networks)


class _Factors:
    """LU of C + d·h·J. Linear systems: kept by (h, switch state), the last few. Nonlinear ones:
    the last factorisation is reused (modified Newton) until Newton asks for a fresh Jacobian."""

    def __init__(self, sys: System):
        self.sys = sys
        self.cache: OrderedDict = OrderedDict()
        self.count = 0
        self.solves = 0
        self.last_key = None
        self.last_lu = None

    def get(self, h, state, x=None, fresh=False):
        key = (h, state)
        if self.sys.linear and key in self.cache:
            self.cache.move_to_end(key)
            return self.cache[key]
        if not self.sys.linear and not fresh and key == self.last_key:
            return self.last_lu
        factors = lu(self.sys.matrix(1.0, D * h, x, state))
        self.count += 1
        if self.sys.linear:
            self.cache[key] = factors
            # A factorisation of a 300 × 300 plate is ~60 MB: on large networks keep only the
            # latest, since an earlier step size rarely comes back.
            while len(self.cache) > 1 and (len(self.cache) > KEEP_FACTORS or sum(
                    f.nnz for f in self.cache.values() if f is not None) > KEEP_NONZEROS):
                self.cache.popitem(last=False)
        self.last_key, self.last_lu = key, factors
        return factors

    def solve(self, lu, rhs):
        self.solves += 1
        return lu.solve(rhs)


def _stage(sys, fac, h, state, rhs, t, x_guess, left, weights, stats):
    """Solve C·y + d·h·F(y, t) = rhs for y. Returns (y, ok)."""
    if sys.linear:
        lu = fac.get(h, state)
        if lu is None:
            return x_guess.copy(), False
        # Linear: (C + dhG) y = rhs + dh·b(t)
        y = fac.solve(lu, rhs + D * h * sys.b(t, left))
        return y, bool(np.all(np.isfinite(y)))
    C = sys.C
    y = x_guess.copy()
    lu = fac.get(h, state, y)
    fresh = False
    prev = None
    # The contraction rate is measured afresh in every stage: one carried over from an earlier
    # stage once let a stage stop after a single update with a 0.1 W heat imbalance left.
    rate = None
    for it in range(16):
        if lu is None:
            return y, False
        r = C @ y + D * h * sys.F(y, t, state, left) - rhs
        dy = fac.solve(lu, -r)
        stats["newton"] += 1
        if not np.all(np.isfinite(dy)):
            return y, False
        y = y + dy
        size = float(np.max(np.abs(dy) / weights)) if len(dy) else 0.0
        if prev is not None:
            rate = size / prev if prev > 0 else 0.0
        # Converged when this update is small, or when the contraction rate says that what is
        # left after it, rate/(1 − rate)·|update|, is (Hairer & Wanner, Solving ODEs II, IV.8):
        # a weakly nonlinear network is then done after a single iteration.
        if size < NEWTON_TOL or (rate is not None and rate < 0.5 and rate / (1 - rate) * size < NEWTON_TOL):
            return y, True
        # Modified Newton contracts linearly; when it does so slowly (or not at all), a fresh
        # Jacobian at the current iterate restores Newton's pace. Once per stage is enough.
        slow = prev is not None and size > SLOW * prev
        if (slow or it >= 2) and not fresh:
            lu = fac.get(h, state, y, fresh=True)
            fresh = True
            prev, rate = None, None
            continue
        prev = size
    return y, False


def _usable_corners(corners: list[float], t_end: float) -> list[float]:
    """Corners a step can land on: ones closer than 1e-12 of the run to the start, to the end or
    to each other are merged (a jump at 1e-65 s is a jump at the start)."""
    tiny = t_end * 1e-12
    out: list[float] = []
    for c in sorted(corners):
        if c <= tiny or c >= t_end - tiny or (out and c - out[-1] <= tiny):
            continue
        out.append(c)
    return out + [t_end]


def integrate(sys: System, x0: np.ndarray, t_end: float, max_step: float | None = None,
              tolerance: float | None = None, progress=None) -> Waveforms:
    """Integrate C·x' + F(x, t) = 0 from x0 at t = 0 to t_end."""
    n = sys.n
    rtol = RTOL if tolerance is None else tolerance
    scale = rtol / RTOL
    atol = np.array([ATOL[k] * scale for k in sys.kinds])
    hmax = max_step if max_step else t_end / 200.0
    corners = _usable_corners(sys.corners(t_end), t_end)
    alg = sys.algebraic_rows
    # The relative part of the error weight applies to temperatures' change from the start,
    # not to their absolute value: 1e-4 of 300 K would allow 30 mK per step.
    kinds = np.array(sys.kinds)
    is_temp = kinds == "T"
    offset = np.where(is_temp, x0, 0.0)
    # Derivatives are kept only where a signal reads them: node voltages and branch currents.
    keep_d = np.flatnonzero((kinds == "V") | (kinds == "I"))
    C = sys.C
    fac = _Factors(sys)
    stats = {"newton": 0}

    capacity = int(min(t_end / hmax, 1e7)) + 3 * len(corners) + 64
    xs, xds = _Rows(n, capacity), _Rows(len(keep_d), capacity)
    times, left_rows = [0.0], [False]
    xs.append(x0)
    xds.append(np.zeros(len(keep_d)))
    t, x = 0.0, x0.copy()
    state = sys.switch_state(0.0)
    z = -sys.F(x, t, state)  # C·x' at the start (right-hand limit of every source)
    z[alg] = 0.0
    h = min(hmax, t_end * 1e-4, corners[0])
    h_min = t_end * 1e-14
    xdot_at_t = None  # x' at t, known after a step of a linear network (solve/estimate.py)
    steps = rejected = 0
    ci = 0
    while t < t_end * (1 - 1e-12):
        if steps + rejected >= MAX_STEPS:
            return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                            f"it took {MAX_STEPS:,} steps, the most a transient may take, and covered "
                            f"{t / t_end:.3g} of the run",
                            hint="the run is long for how fast the design changes (a fast `sine` or `pulse`, a "
                            "short time constant): shorten it, or loosen `tolerance`")
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
        y1, ok = _stage(sys, fac, h, mid_state, rhs1, t + hg, x, False, weights, stats)
        if ok:
            # Stage 2, BDF2 to t + h.
            rhs2 = C @ (A2 * y1 - B2 * x)
            t_new = t + h
            x_new, ok = _stage(sys, fac, h, mid_state, rhs2, t_new, 2 * y1 - x, lands, weights, stats)
        if not ok:
            rejected += 1
            h *= 0.25
            if h < h_min:
                return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                                "the step size collapsed (Newton failed)", sys, x, y1 - x)
            continue
        xdot = (x_new - A2 * y1 + B2 * x) / (D * h)
        z_new = C @ xdot
        w = atol + rtol * np.maximum(np.abs(x - offset), np.abs(x_new - offset))
        err = math.inf
        if xdot_at_t is not None:  # linear: the filter solve only where this estimate rejects
            est = estimate.unfiltered(h, xdot_at_t, x, y1, xdot)
            err = estimate.norm(est, w)
        if err > 1.0:
            z1 = (2.0 / hg) * (C @ (y1 - x)) - z
            est_rhs = 2.0 * K_ERR * h * (z / GAMMA - z1 / (GAMMA * (1 - GAMMA)) + z_new / (1 - GAMMA))
            lu = fac.get(h, mid_state, x_new)
            est = fac.solve(lu, est_rhs) if lu is not None else est_rhs
            err = estimate.norm(est, w)
        if not math.isfinite(err):
            err = 1e10
        if err > 1.0:
            rejected += 1
            h *= max(0.1, 0.9 * err ** (-1.0 / 3.0))
            if h < h_min:
                return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                                "the step size collapsed (error control)", sys, x, est / w)
            continue
        if np.any(x_new[is_temp] <= 0):
            return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                            "a temperature would fall to absolute zero", sys, x,
                            np.where(is_temp & (x_new <= 0), 1.0, 0.0), "first at",
                            "more heat is taken out there than can flow in: check the signs of heat inputs and "
                            "module currents, and the links to a reservoir")
        # Accept.
        steps += 1
        xdot_at_t = xdot if sys.linear else None
        t, x = t_new if not lands else next_corner, x_new
        times.append(t)
        xs.append(x)
        xds.append(xdot[keep_d])
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
            x_plus, ok = _stage(sys, fac, eps / D, state, C @ x, t, x, False, weights, stats)
            if ok and np.max(np.abs(x_plus - x) / weights) > 1e-6:
                left_rows[-1] = True
                times.append(t)
                xs.append(x_plus)
                # The derivative just after the corner; across every capacitor and inductor the
                # stored quantity moved by O(eps), so these differences are the right-hand slopes.
                xds.append(((x_plus - x) / eps)[keep_d])
                left_rows.append(False)
                x = x_plus
            z = -sys.F(x, t, state)
            z[alg] = 0.0
            xdot_at_t = None  # sources may have jumped: the next step filters its estimate
        else:
            z = z_new
        h = h_next
        if progress is not None:
            progress(t, steps)
    if xds.k > 1:
        xds.set(0, xds.get(1))
    return Waveforms(np.array(times), xs.array(), Columns(xds.array(), keep_d, n), steps, rejected, fac.count,
                     left_rows=np.array(left_rows), solves=fac.solves, newton=stats["newton"])


def _partial(times, xs, xds, keep_d, steps, rejected, fac, t, why, sys=None, x=None, est=None,
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
    n = xs.buf.shape[1]
    err.partial = Waveforms(np.array(times), xs.array(), Columns(xds.array(), keep_d, n),
                            steps, rejected, fac.count, left_rows=np.zeros(len(times), dtype=bool),
                            partial=True, message=err.message, solves=fac.solves)
    raise err
