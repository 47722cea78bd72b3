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
from netgen.solve.kept import States

GAMMA = 2.0 - math.sqrt(2.0)
D = GAMMA / 2.0  # = (1 − γ)/(2 − γ)
A2 = 1.0 / (GAMMA * (2.0 - GAMMA))
B2 = (1.0 - GAMMA) ** 2 / (GAMMA * (2.0 - GAMMA))
K_ERR = (-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA))

# Absolute error floors per kind of unknown (ARCHITECTURE.md, default accuracy).
ATOL = {"T": 1e-3, "V": 1e-6, "I": 1e-6, "Q": 1e-6, "U": 1e-6}
RTOL = 1e-4
KEEP_FACTORS = 4  # factorisations kept for reuse, the most recent ones ...
KEEP_NONZEROS = 6_000_000  # ... while together they hold no more entries than this (~70 MB)
SLOW = 0.5  # Newton contracting slower than this per iteration asks for a fresh Jacobian
NEWTON_TOL = 1e-3  # Newton's error, in units of the step's error weights
# An update that no longer shrinks under a fresh Jacobian is rounding noise (a floating part of a
# network held by an open switch's 1 nS moves by 1e-7 V per update whatever Newton does); it is
# taken as converged when it is this small against the error weights, which the step's own error
# control allows in full.
STALLED = 0.1
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
    x: np.ndarray  # (len(time), n), or a solve/kept.py `Kept` holding only some columns
    xdot: Columns | np.ndarray
    steps: int
    rejected: int
    factorizations: int
    left_rows: np.ndarray | None = None  # True where a sample is the limit from before a corner
    partial: bool = False
    message: str = ""
    solves: int = 0  # back-substitutions
    newton: int = 0  # Newton iterations (nonlinear networks)
    events: list = None  # {"element", "what", "time"} of the switches that act on conditions


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


def _stage(sys, fac, h, state, rhs, t, x_guess, left, weights, stats, floor=None):
    """Solve C·y + d·h·F(y, t) = rhs for y. Returns (y, ok).

    `weights` are the step's error weights from its start; with `floor` = (atol, rtol, offset)
    they grow with the iterate too (atol + rtol·max(|x|, |y|), as circuit simulators weigh
    Newton's updates): an update is judged against the size of the value it updates, so a
    voltage that leaps from millivolts to megavolts (a coil's current forced through an open
    switch) converges instead of asking for nanovolts of a 10⁷ V value, below rounding."""
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
        y_next = y + dy
        if sys.limits:  # the kinds' limits of their own unknowns (diode junctions, Nagel 1975)
            y_next, hit = sys.limit(y, y_next)
            if hit:  # a fresh Jacobian where the junction now is
                y, prev, rate = y_next, None, None
                lu = fac.get(h, state, y, fresh=True)
                continue
        y = y_next
        w = weights if floor is None else np.maximum(weights, floor[0] + floor[1] * np.abs(y - floor[2]))
        size = float(np.max(np.abs(dy) / w)) if len(dy) else 0.0
        if prev is not None:
            rate = size / prev if prev > 0 else 0.0
        # Converged when this update is small, or when the contraction rate says that what is
        # left after it, rate/(1 − rate)·|update|, is (Hairer & Wanner, Solving ODEs II, IV.8):
        # a weakly nonlinear network is then done after a single iteration.
        if size < NEWTON_TOL or (rate is not None and rate < 0.5 and rate / (1 - rate) * size < NEWTON_TOL):
            return y, True
        if fresh and rate is not None and rate > 0.9 and size < STALLED:
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


def _consistent(sys, fac, state, x, t, t_end, weights, stats, floor, stored):
    """The state just after a corner at t: a backward-Euler step of negligible length eps from x.
    Returns (x_plus, ok, eps). The stored quantities (a coil's current, a mass's temperature) may
    not move in it; when one does (a coil forced through an open switch decays in L/R_off, often
    nanoseconds), the step is taken again a thousand times shorter."""
    # A stored quantity is a row of C·x (a capacitor's charge, a coil's flux, a mass's heat), not
    # an unknown: both nodes of a floating capacitor may jump together while its charge holds.
    C = sys.C
    for eps in (t_end * 1e-10, t_end * 1e-13):
        x_plus, ok = _stage(sys, fac, eps / D, state, C @ x, t, x, False, weights, stats, floor)
        if ok and not np.any((np.abs(C @ (x_plus - x)) > abs(C) @ weights)[stored]):
            break
    return x_plus, ok, eps


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
              tolerance: float | None = None, progress=None, watch=None, dyn=None, events=None,
              keep=None) -> Waveforms:
    """Integrate C·x' + F(x, t) = 0 from x0 at t = 0 to t_end.

    `watch` (solve/events.py) holds the switches that act on conditions, `dyn` their states at
    the start (switch index → closed) and `events` those already taken at the start; each later
    event is located on the step where its condition becomes true, the step is taken again to
    land on it, and the run restarts there from a consistent state with the switch changed.
    `keep` (indices of unknowns) lets a long run store only those columns (solve/kept.py); with
    None every unknown is stored."""
    dyn = dict(dyn or {})
    events = list(events or [])
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
    stored = np.diff(C.tocsr().indptr) > 0  # rows of C·x: the stored quantities (continuous in time)
    Cx = _product(C)
    fac = _Factors(sys)
    stats = {"newton": 0}

    capacity = int(min(t_end / hmax, 1e7)) + 3 * len(corners) + 64
    xs, xds = States(sys.names, capacity, keep), _Rows(len(keep_d), capacity)
    times, left_rows = [0.0], [False]
    xs.append(x0)
    xds.append(np.zeros(len(keep_d)))
    t, x = 0.0, x0.copy()
    state = sys.switch_state(0.0, dyn)
    z = -sys.F(x, t, state)  # C·x' at the start (right-hand limit of every source)
    z[alg] = 0.0
    h = min(hmax, t_end * 1e-4, corners[0])
    h_min = t_end * 1e-14
    xdot_at_t = None  # x' at t, known after a step of a linear network (solve/estimate.py)
    steps = rejected = 0
    ci = 0
    pending = None  # (time, switch index) of a located event the next steps land on
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
        if pending is not None and pending[0] - t <= t_end * 1e-13:
            # An event this close to the last point is at that point: change the switch there.
            x, z = _fire(sys, fac, watch, dyn, events, pending[1], t, x, t_end, atol, rtol, offset, stats, stored,
                         times, xs, xds, left_rows, keep_d)
            pending = None
            xdot_at_t = None  # the switch changed: the next step filters its estimate
            continue
        if pending is not None:
            next_corner = min(next_corner, pending[0])
        h = min(h, hmax)
        lands = t + h >= next_corner * (1 - 1e-9)
        if lands:
            h = next_corner - t
        mid_state = sys.switch_state(t + 0.5 * h, dyn)
        # Newton's error weights, from the step's start (a linear network's stages need none).
        weights = None if sys.linear else atol + rtol * np.abs(x - offset)
        floor = (atol, rtol, offset)
        # Stage 1, trapezoidal to t + γh.
        hg = GAMMA * h
        rhs1 = Cx(x) + D * h * z  # (γh/2)·z = d·h·z
        y1, ok = _stage(sys, fac, h, mid_state, rhs1, t + hg, x, False, weights, stats, floor)
        if ok:
            # Stage 2, BDF2 to t + h.
            rhs2 = Cx(A2 * y1 - B2 * x)
            t_new = t + h
            guess = x if sys.linear else 2 * y1 - x  # a linear stage is solved, not iterated
            x_new, ok = _stage(sys, fac, h, mid_state, rhs2, t_new, guess, lands, weights, stats, floor)
        if not ok:
            rejected += 1
            h *= 0.25
            if h < h_min:
                return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                                "the step size collapsed (Newton failed)", sys, x, y1 - x)
            continue
        xdot = (x_new - A2 * y1 + B2 * x) / (D * h)
        z_new = Cx(xdot)
        w = atol + rtol * np.maximum(np.abs(x - offset), np.abs(x_new - offset))
        err = math.inf
        if xdot_at_t is not None:  # linear: the filter solve only where this estimate rejects
            est = estimate.unfiltered(h, xdot_at_t, x, y1, xdot)
            err = estimate.norm(est, w)
        if err > 1.0:
            z1 = (2.0 / hg) * Cx(y1 - x) - z
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
        if watch and not (pending is not None and lands and next_corner == pending[0]):
            found = watch.locate(dyn, t, h, x, y1, x_new, GAMMA)
            if found is not None and found[0] < t_new * (1 - 1e-14):
                pending = found  # take the step again, to land on the event
                h = found[0] - t
                continue
            if found is not None:
                pending = (t_new, found[1])
                lands = True
                next_corner = t_new
        if x_new.min(where=is_temp, initial=np.inf) <= 0:
            return _partial(times, xs, xds, keep_d, steps, rejected, fac, t,
                            "a temperature would fall to absolute zero", sys, x,
                            np.where(is_temp & (x_new <= 0), 1.0, 0.0), "first at",
                            "more heat is taken out there than can flow in: check the signs of heat inputs and "
                            "module currents, and the links to a reservoir")
        # Accept.
        x_start = x
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
        fire = pending is not None and lands and next_corner == pending[0]
        if fire:
            dyn[pending[1]] = not dyn[pending[1]]
            sw = sys.switches[pending[1]]
            events.append({"element": sw.name, "what": "closes" if dyn[pending[1]] else "opens", "time": t})
        if lands and t < t_end * (1 - 1e-12):
            # A corner: sources may jump and switches change, so the unknowns without storage
            # (and the current through a closing switch) must jump too. A backward-Euler step of
            # negligible length finds that consistent state; the stored ones barely move.
            state = sys.switch_state(t, dyn)
            if weights is None:
                weights = atol + rtol * np.abs(x_start - offset)
            x, z = _restart(sys, fac, state, x, t, t_end, weights, stats, floor, stored,
                            (times, xs, xds, left_rows, keep_d))
            if fire:
                watch.check_gap(pending[1], dyn[pending[1]], x, np.zeros(n), t)
            xdot_at_t = None  # sources may have jumped: the next step filters its estimate
        else:
            z = z_new
        if fire:
            pending = None
        h = h_next
        if progress is not None:
            progress(t, steps)
    if xds.k > 1:
        xds.set(0, xds.get(1))
    return Waveforms(np.array(times), xs.array(), Columns(xds.array(), keep_d, n), steps, rejected, fac.count,
                     left_rows=np.array(left_rows), solves=fac.solves, newton=stats["newton"], events=events)


def _product(C):
    """v ↦ C·v; a product of arrays where C is diagonal (masses and grounded capacitors, coils on
    their own rows), bit for bit what the sparse product gives there without its overhead."""
    d = C.diagonal()
    if C.count_nonzero() == np.count_nonzero(d):
        return lambda v: d * v
    return lambda v: C @ v


def _fire(sys, fac, watch, dyn, events, k, t, x, t_end, atol, rtol, offset, stats, stored,
          times, xs, xds, left_rows, keep_d):
    """Change switch k at the last stored point t and restart from a consistent state there.
    Returns (x, z) after the change."""
    dyn[k] = not dyn[k]
    events.append({"element": sys.switches[k].name, "what": "closes" if dyn[k] else "opens", "time": t})
    state = sys.switch_state(t, dyn)
    weights = atol + rtol * np.abs(x - offset)
    x, z = _restart(sys, fac, state, x, t, t_end, weights, stats, (atol, rtol, offset), stored,
                    (times, xs, xds, left_rows, keep_d))
    watch.check_gap(k, dyn[k], x, np.zeros(len(x)), t)
    return x, z


def _restart(sys, fac, state, x, t, t_end, weights, stats, floor, stored, rows):
    """The consistent state just after a corner or an event at t, stored as a second point at t
    when it differs from the one before (`rows`: the run's times, states, derivatives, left-limit
    flags and kept derivative columns). Returns (x, z) to go on from."""
    times, xs, xds, left_rows, keep_d = rows
    x_plus, ok, eps = _consistent(sys, fac, state, x, t, t_end, weights, stats, floor, stored)
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
    z[sys.algebraic_rows] = 0.0
    return x, z


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
    n = xs.n
    err.partial = Waveforms(np.array(times), xs.array(), Columns(xds.array(), keep_d, n),
                            steps, rejected, fac.count, left_rows=np.zeros(len(times), dtype=bool),
                            partial=True, message=err.message, solves=fac.solves)
    raise err
