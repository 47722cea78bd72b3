"""Cross-check: our results against an outside simulator's, signal by signal, on our time grid."""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np
from scipy.interpolate import Akima1DInterpolator

from ..assemble import System, assemble
from ..design import Design, Fixed, Heat, Modes, Signal, Switch, VoltageSource, CurrentSource
from ..expr import Shape, Wave
from ..results import Results, SignalEval, signal_texts
from .netlist import Names, netlist
from .raw import Plot, find_plot
from .runner import DEFAULT_SIMULATOR, SimulatorError, simulate

DEFAULT_RTOL = 1e-3


@dataclass(frozen=True)
class Tolerances:
    """How far the two results may differ. Transient: |Δ| ≤ floor + rtol·|y(t)|, where the floor
    is `kelvin` plus rtol times the temperature's swing for temperatures (they sit near 300 K,
    so a part relative to their value would be far too loose), and `floor` times the signal's
    largest size for voltages, currents and heat flows. Steady: both solve the same equations
    to convergence, so the same form with the `steady_*` values. `scaled(f)` scales them all."""

    rtol: float = DEFAULT_RTOL  # our solver's default local tolerance is 1e-4; errors accumulate
    kelvin: float = 5e-3  # a few mK: both solvers keep temperatures to about a millikelvin
    floor: float = 1e-3  # of the signal's largest |value| over the run
    steady_rtol: float = 1e-6
    steady_kelvin: float = 1e-6
    steady_floor: float = 1e-6  # of the largest |value| of the signal's kind in the steady state
    tiny: float = 1e-12  # in SI units: what the simulators' absolute tolerances leave

    def scaled(self, f: float) -> "Tolerances":
        return Tolerances(*(getattr(self, k.name) * f for k in dataclasses.fields(self)))

    @classmethod
    def from_rtol(cls, rtol: float | None) -> "Tolerances":
        """`--rtol R` scales every tolerance by R / 1e-3, the default relative part."""
        return cls() if rtol is None else cls().scaled(rtol / DEFAULT_RTOL)


@dataclass
class Row:
    """One signal's comparison. `dev`, `rel`, `at`, `tol` describe the worst point (largest
    |Δ|/tolerance) outside the windows around jumps; `near` is the largest |Δ| inside them."""

    signal: str
    source: str  # how the simulator's value was obtained
    dev: float = 0.0
    rel: float = 0.0
    at: float | None = None
    tol: float = 0.0
    ours: float = math.nan
    theirs: float = math.nan
    near: float | None = None
    passed: bool = True
    missing: str = ""  # why it could not be compared

    @property
    def status(self) -> str:
        return "n/a" if self.missing else ("pass" if self.passed else "FAIL")


@dataclass
class Jump:
    """An instant where a value jumps; the netlist writes an edge of finite width there."""

    time: float
    what: str  # e.g. "source drive", "switch key closes"


@dataclass
class Report:
    """The comparison of one design: steady rows, transient rows, the jumps, and notes."""

    file: str
    command: list[str]
    steady: list[Row] = field(default_factory=list)
    transient: list[Row] = field(default_factory=list)
    jumps: list[Jump] = field(default_factory=list)
    window: float = 0.0  # half-width of the window around each jump, s
    notes: list[str] = field(default_factory=list)
    span: tuple[float, float] | None = None
    points: tuple[int, int] = (0, 0)  # ours, the simulator's

    @property
    def rows(self) -> list[Row]:
        return self.steady + self.transient

    @property
    def passed(self) -> bool:
        return all(r.passed for r in self.rows)

    @property
    def failed(self) -> list[str]:
        return list(dict.fromkeys(r.signal for r in self.rows if not r.passed))

    def table(self) -> str:
        from .table import render

        return render(self)


# ---- running both ------------------------------------------------------------------------------
def crosscheck(design: Design, simulator: str = DEFAULT_SIMULATOR, tol: Tolerances | None = None,
               keep: Path | None = None, edit: Callable[[str], str] | None = None,
               env: dict[str, str] | None = None) -> Report:
    """Export `design`, run the simulator on it, solve it ourselves and compare. `edit` may
    rewrite the netlist text before it is run (to prove that a wrong netlist is caught);
    `keep` is a directory for the netlist, the raw file and the simulator's output."""
    text, nm = netlist(design)
    if edit is not None:
        text = edit(text)
    run = simulate(text, simulator, keep, env)
    ours = for_comparison(design).run()
    return compare(ours, nm, run.plots, tol or Tolerances(), run.command)


def for_comparison(d: Design) -> Design:
    """The design with every unknown recorded besides its own records, and nothing that is
    ours alone to evaluate (expectations, audits, modes): the analyses are unchanged."""
    texts = signal_texts(d)
    sys = assemble(d)
    records = [Signal(t[0], tuple(a.strip() for a in t[2:-1].split(",")), None) for t in texts]
    records += [Signal(n[0], (n[2:-1],), None) for n in sys.names if n not in texts]
    return dataclasses.replace(d, records=records, expectations=[], audits=[],
                               analyses=[a for a in d.analyses if not isinstance(a, Modes)])


def compare(ours: Results, nm: Names, plots: list[Plot], tol: Tolerances,
            command: list[str] | None = None) -> Report:
    """Compare our Results with the simulator's plots (read back through the signal map)."""
    d = ours.design
    sys = assemble(d)
    rep = Report(d.file, command or [])
    if ours.steady is not None:
        op = find_plot(plots, "Operating Point")
        if op is None:
            raise SimulatorError("the simulator wrote no operating point (.op) results")
        rep.steady = _steady(d, sys, nm, ours, op, tol)
    if ours.time is not None:
        tran = find_plot(plots, "Transient Analysis")
        if tran is None:
            raise SimulatorError("the simulator wrote no transient (.tran) results")
        rep.jumps = jumps(d)
        rep.window = nm.edge
        rep.transient = _transient(d, sys, nm, ours, tran, tol, rep)
    rep.notes = notes(d, nm, rep)
    return rep


# ---- reading the simulator's results as our state ------------------------------------------
def _vector(plot: Plot, how: str) -> np.ndarray:
    """`how` from the signal map, e.g. `V(t_die)` or `-I(vfix_room)`; NaN if not written."""
    sign = -1.0 if how.startswith("-") else 1.0
    name = how.lstrip("-")
    if name not in plot:
        return np.full(plot.data.shape[0], np.nan)
    return sign * np.real(plot[name])


def _state(sys: System, nm: Names, plot: Plot) -> tuple[np.ndarray, list[str]]:
    """The simulator's results as our unknowns (k × n), and the vectors it did not write."""
    X = np.empty((plot.data.shape[0], sys.n))
    missing = []
    for j, name in enumerate(sys.names):
        X[:, j] = _vector(plot, nm.signals[name])
        if np.isnan(X[:, j]).all():
            missing.append(nm.signals[name].lstrip("-").lower())
    return X, missing


def _source(signal: str, nm: Names) -> str:
    """The simulator's vector a signal comes from, or how it is computed from them."""
    how = nm.signals.get(signal)
    if how is None:
        return "derived"  # computed with our formula from the simulator's node values and currents
    return ("-" if how.startswith("-") else "") + how.lstrip("-").lower()


def _relative(dev: float, y: float, tol: float) -> float:
    """|Δ|/|y|; NaN where y itself is within the tolerance of zero and the ratio says nothing."""
    return dev / abs(y) if abs(y) > tol else math.nan


def inputs(d: Design) -> set[str]:
    """Signals that are our own source values in both results (a heat input's power, a current
    source's current): the simulator writes no vector for them, so there is nothing to compare."""
    return {f"Q({e.name})" for e in d.of_kind(Heat)} | {f"I({e.name})" for e in d.of_kind(CurrentSource)}


def _kind(signal: str) -> str:
    return "T" if signal.startswith("T(") else ("Q" if signal[0] in "QP" else signal[0])


# ---- steady state --------------------------------------------------------------------------------
def _steady(d, sys, nm, ours: Results, op: Plot, tol: Tolerances) -> list[Row]:
    X, missing = _state(sys, nm, op)
    sig = SignalEval(d, sys)
    zero = np.zeros_like(X)
    sizes: dict[str, float] = {}
    for s, v in ours.steady.items():
        sizes[_kind(s)] = max(sizes.get(_kind(s), 0.0), abs(v))
    temps = [v for s, v in ours.steady.items() if _kind(s) == "T"]
    spread = max(temps) - min(temps) if temps else 0.0  # the temperature differences, K
    rows = []
    for s, y in ours.steady.items():
        if s in inputs(d):
            continue
        row = Row(s, _source(s, nm))
        theirs = float(sig(s, X, zero, np.array([0.0]))[0])
        if not math.isfinite(theirs):
            row.missing = "the simulator wrote no " + ", ".join(missing)
            rows.append(row)
            continue
        if _kind(s) == "T":  # relative to the temperature differences, not to ~300 K
            row.tol = tol.steady_kelvin + tol.steady_rtol * spread
        else:
            row.tol = tol.steady_floor * sizes[_kind(s)] + tol.steady_rtol * abs(y) + tol.tiny
        row.dev = abs(theirs - y)
        row.rel = _relative(row.dev, y, row.tol)
        row.ours, row.theirs = y, theirs
        row.passed = row.dev <= row.tol
        rows.append(row)
    return rows


# ---- transient -------------------------------------------------------------------------------------
def _transient(d, sys, nm, ours: Results, plot: Plot, tol: Tolerances, rep: Report) -> list[Row]:
    ts = np.real(plot["time"]) if "time" in plot else None
    if ts is None or len(ts) == 0:
        raise SimulatorError("the simulator's transient results have no time vector or no points")
    X, missing = _state(sys, nm, plot)
    keep = np.append(np.diff(ts) > 0, True)  # repeated times would make the derivative infinite
    ts, X = ts[keep], X[keep]
    Xd = np.gradient(X, ts, axis=0) if len(ts) > 1 else np.zeros_like(X)  # for capacitor currents
    sig = SignalEval(d, sys)
    t = ours.time
    inside = (t >= ts[0]) & (t <= ts[-1])  # under `uic` the simulator starts after t = 0
    rep.span, rep.points = (float(ts[0]), float(ts[-1])), (int(inside.sum()), len(ts))
    near = np.zeros_like(t, dtype=bool)
    for j in rep.jumps:
        near |= np.abs(t - j.time) <= rep.window
    rows = []
    for s, y in ours.waveforms.items():
        if s in inputs(d):
            continue
        row = Row(s, _source(s, nm))
        ysim = sig(s, X, Xd, ts)
        if np.isnan(ysim).all():
            row.missing = "the simulator wrote no " + ", ".join(missing)
            rows.append(row)
            continue
        theirs = _interpolate(ts, ysim, t)
        dev = np.abs(theirs - y)
        if _kind(s) == "T":  # relative to the temperature's swing, not to ~300 K
            limit = np.full_like(y, tol.kelvin + tol.rtol * float(np.ptp(y)))
        else:
            limit = tol.floor * float(np.abs(y).max()) + tol.rtol * np.abs(y) + tol.tiny
        spread = _spread(t, y, ts, ysim, rep) if rep.jumps else np.zeros_like(t)
        allowed = limit + spread  # spread is zero away from the jumps
        ok = dev <= allowed
        row.passed = bool(ok[inside].all())
        close = inside & near
        if close.any():
            row.near = float(dev[close].max())
        if not row.passed:  # show the point that is furthest beyond what it is allowed
            pick = inside & ~ok
            i = int(np.flatnonzero(pick)[np.argmax((dev / allowed)[pick])])
        elif (inside & ~near).any():
            pick = inside & ~near
            i = int(np.flatnonzero(pick)[np.argmax((dev / limit)[pick])])
        elif close.any():
            i = int(np.flatnonzero(close)[np.argmax(dev[close])])
        else:
            rows.append(row)
            continue
        row.dev, row.at, row.tol = float(dev[i]), float(t[i]), float(allowed[i])
        row.ours, row.theirs = float(y[i]), float(theirs[i])
        row.rel = _relative(row.dev, float(y[i]), row.tol)
        rows.append(row)
    return rows


def _interpolate(ts: np.ndarray, ys: np.ndarray, t: np.ndarray) -> np.ndarray:
    """The simulator's values at our times. Where the simulator steps far (a reservoir's sine
    is only a source to it), a straight line between its points is off by h²/8·|y''|, up to
    half a millikelvin; Akima's local cubic removes that without ringing at edges and kinks,
    which a global spline does."""
    tq = np.clip(t, ts[0], ts[-1])
    if len(ts) < 5 or not np.all(np.isfinite(ys)):
        return np.interp(tq, ts, ys)
    return Akima1DInterpolator(ts, ys)(tq)


def _spread(t, y, ts, ysim, rep: Report) -> np.ndarray:
    """Per point of ours near a jump: how much the signal moves within that jump's window, in
    either result. Across an edge the two may differ by as much, and by no more."""
    out = np.zeros_like(t)
    w = rep.window
    for j in rep.jumps:
        lo, hi = j.time - w, j.time + w
        vals = np.concatenate([y[(t >= lo) & (t <= hi)], ysim[(ts >= lo) & (ts <= hi)],
                               _interpolate(ts, ysim, np.array([lo, hi]))])
        here = np.abs(t - j.time) <= w
        out[here] = np.maximum(out[here], np.ptp(vals))
    return out


# ---- what the netlist cannot say exactly -----------------------------------------------------------
def _waves(d: Design) -> list[tuple[str, Wave]]:
    out = []
    for e in d.elements:
        if isinstance(e, Fixed):
            out.append((f"fixed {e.name}", e.temperature))
        elif isinstance(e, Heat):
            out.append((f"heat {e.name}", e.power))
        elif isinstance(e, (VoltageSource, CurrentSource)):
            out.append((f"source {e.name}", e.value))
    return [(what, w) for what, w in out if not w.constant]


def jumps(d: Design) -> list[Jump]:
    """Every instant in the run where a source value jumps or a switch changes state."""
    until = d.transient.until if d.transient else 0.0
    out: list[Jump] = []
    for what, w in _waves(d):
        times = w.corners(until)
        e = w.expr
        if isinstance(e, Shape) and e.name == "pulse" and e.args[3] == 0 and e.args[2] == 0:
            times = [0.0] + times  # a PULSE's edge at t = 0 cannot be centred: it starts there
        for tk in times:
            if w.at(tk, left=True) != w.at(tk) or tk == 0.0:
                out.append(Jump(tk, what))
    for sw in d.of_kind(Switch):
        for t1, t2 in sw.intervals:
            out += [Jump(t1, f"switch {sw.name} closes"), Jump(t2, f"switch {sw.name} opens")]
    return sorted((j for j in out if 0.0 <= j.time <= until), key=lambda j: j.time)


def sampled(d: Design) -> list[str]:
    """Sources whose value is a shape inside an expression, which the netlist samples."""
    return [what for what, w in _waves(d)
            if not isinstance(w.expr, Shape) and any(isinstance(x, Shape) for x in w.expr.walk())]


def notes(d: Design, nm: Names, rep: Report) -> list[str]:
    """Plain statements of where the netlist is not exact and what the comparison does there."""
    out = []
    if rep.jumps:
        by: dict[str, list[float]] = {}
        for j in rep.jumps:
            by.setdefault(j.what, []).append(j.time)
        where = "; ".join(f"{what} at {_times(ts)}" for what, ts in by.items())
        out.append(f"jumps: {where}. The netlist writes each as a linear edge at most {_g(nm.edge)} s wide "
                   f"(switches: their control's edge). Within ±{_g(rep.window)} s of these instants a signal "
                   "may differ by as much as it moves there in either result (column `near jumps`); "
                   "everywhere else the tolerance is unchanged.")
    for what in sampled(d):
        out.append(f"{what}: a shape inside an expression, written as a sampled PWL (linear between "
                   "samples); the tolerance is not widened for it.")
    given = [s for s in inputs(d) if s in set(signal_texts(d))]
    if given:
        out.append(f"not compared: {', '.join(sorted(given))}: source values, the same in both by construction.")
    if any(r.source == "derived" for r in rep.rows):
        out.append("`derived`: computed with netgen's own formula from the simulator's node values and "
                   "branch currents (the netlist has no vector for it).")
    missing = sorted({r.missing for r in rep.rows if r.missing})
    out += [f"not compared: {m}." for m in missing]
    return out


def _times(ts: list[float], most: int = 6) -> str:
    shown = ", ".join(f"{_g(t)} s" for t in ts[:most])
    return shown + (f" and {len(ts) - most} more" if len(ts) > most else "")


def _g(x: float) -> str:
    return f"{x:.6g}"
