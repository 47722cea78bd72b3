"""Signals from solved states, and Results: the steady table, the waveforms, expectations."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from netgen.solve.assembly import System
from netgen.model.design import (
    ELECTRICAL, THERMAL, Capacitor, CurrentSource, Design, Expectation, Fixed, Heat, Inductor,
    Link, Resistor, Signal, Switch, Thermoelectric, VoltageSource,
)
from netgen.model.expr import SignalRef, evaluate

_trapz = getattr(np, "trapezoid", None) or np.trapz


def default_signals(d: Design) -> list[str]:
    """LANGUAGE.md: all node temperatures and voltages, and the currents of inductors,
    sources and thermoelectric elements."""
    out = [f"T({n.name})" for n in d.nodes.values() if n.domain == THERMAL]
    out += [f"V({n.name})" for n in d.nodes.values() if n.domain == ELECTRICAL and n.name not in d.grounds]
    out += [f"I({e.name})" for e in d.elements if isinstance(e, (Inductor, VoltageSource, CurrentSource, Thermoelectric))]
    return out


class SignalEval:
    """Computes any signal of the language from states x (k×n), their derivatives and times."""

    def __init__(self, d: Design, sys: System):
        self.d, self.sys = d, sys

    def _node(self, X, name):
        i = self.sys.node_index[name]
        return X[:, i] if i < self.sys.n else np.zeros(X.shape[0])

    def __call__(self, text: str, X, Xdot, t, left: bool = False) -> np.ndarray:
        """`left` (one flag or one per sample) takes the limit from before at source corners."""
        kind, inner = text[0], text[2:-1]
        args = [a.strip() for a in inner.split(",")]
        d, sys = self.d, self.sys
        if kind in ("T", "V"):
            v = self._node(X, args[0])
            return v - self._node(X, args[1]) if len(args) == 2 else v
        name = args[0]
        if kind == "Q" and "." in name and d.element(name) is None:
            base, side = name.rsplit(".", 1)
            e = d.element(base)
            I = X[:, sys.branch_index[e.name]]
            Ta, Tb = self._node(X, e.a), self._node(X, e.b)
            S, R, K = e.values_at(0.5 * (Ta + Tb))
            cond = K * (Ta - Tb)
            if side == "a":
                return S * Ta * I - 0.5 * I * I * R + cond
            return S * Tb * I + 0.5 * I * I * R + cond
        e = d.element(name)
        if kind == "Q":
            if isinstance(e, Link):
                return e.conductance * (self._node(X, e.a) - self._node(X, e.b))
            if isinstance(e, Heat):
                return np.array([e.power.at(float(tt), lf) for tt, lf in _pairs(t, left)])
            if isinstance(e, Fixed):
                return X[:, sys.branch_index[e.name]]
        current = self._current(e, X, Xdot, t, left)
        if kind == "I":
            return current
        if kind == "P":
            u = self._node(X, e.a if not isinstance(e, Thermoelectric) else e.p) - \
                self._node(X, e.b if not isinstance(e, Thermoelectric) else e.n)
            if isinstance(e, (VoltageSource, CurrentSource)):
                return -u * current  # a source delivering power takes negative power
            return u * current
        raise KeyError(text)

    def _current(self, e, X, Xdot, t, left=False):
        sys = self.sys
        if isinstance(e, (Inductor, VoltageSource, Thermoelectric)):
            return X[:, sys.branch_index[e.name]]
        if isinstance(e, CurrentSource):
            return np.array([e.value.at(float(tt), lf) for tt, lf in _pairs(t, left)])
        u = self._node(X, e.a) - self._node(X, e.b)
        if isinstance(e, Resistor):
            r = np.full(X.shape[0], e.resistance)
            if e.tempco is not None:
                T = self._node(X, e.tempco.node)
                r = e.resistance * np.maximum(1 + e.tempco.alpha * (T - e.tempco.ref), 1e-6)
            return u / r
        if isinstance(e, Capacitor):
            ud = self._node(Xdot, e.a) - self._node(Xdot, e.b)
            return e.capacitance * ud
        if isinstance(e, Switch):
            g = np.array([1.0 / (e.r_on if _closed(e, float(tt), lf) else e.r_off) for tt, lf in _pairs(t, left)])
            return g * u
        raise KeyError(e.name)


def _pairs(t, left):
    """(time, from-the-left flag) for every sample; `left` is one flag or one per sample."""
    t = np.atleast_1d(t)
    flags = np.broadcast_to(np.asarray(left, dtype=bool), t.shape)
    return zip(t.tolist(), flags.tolist())


def _closed(sw: Switch, t: float, left: bool) -> bool:
    """Closed on [t1, t2); from the left, on (t1, t2]."""
    if not left:
        return sw.closed_at(t)
    return any(t1 < t <= t2 for t1, t2 in sw.intervals)


@dataclass
class Check:
    """One evaluated expectation."""

    text: str
    measured: float
    limit: float
    unit: str
    passed: bool
    loc: object = None
    detail: str = ""
    celsius: bool = False  # the limit was written in degC: show it so


@dataclass
class Results:
    """What a run produced: steady values and waveforms by signal name, and checks."""

    design: Design
    signals: list[str]
    steady: dict[str, float] | None = None
    time: np.ndarray | None = None
    waveforms: dict[str, np.ndarray] = field(default_factory=dict)
    checks: list[Check] = field(default_factory=list)
    stats: dict = field(default_factory=dict)
    initial: dict[str, float] = field(default_factory=dict)
    modes: list | None = None  # analysis.modes.Mode, slowest first
    forecast: list = field(default_factory=list)  # analysis.modes.Forecast: linear estimates of swings
    figures: list[dict] = field(default_factory=list)  # per module, see merit.figures
    figures_at: str = ""
    cautions: list[str] = field(default_factory=list)

    def __getitem__(self, signal: str) -> np.ndarray:
        return self.waveforms[signal]

    @property
    def passed(self) -> bool:
        return all(c.passed for c in self.checks)


def signal_texts(d: Design) -> list[str]:
    return [s.text for s in d.records] if d.records else default_signals(d)


def refs(expr) -> list[SignalRef]:
    return [n for n in expr.walk() if isinstance(n, SignalRef)]


def evaluate_expectation(e: Expectation, res: Results, signal_of) -> Check:
    """Aggregate a signal expression and compare with its limit."""
    names = {r.text for r in refs(e.expr)}
    if e.agg == "steady":
        if res.steady is None:
            return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "the design has no `steady` analysis")
        values = {n: np.atleast_1d(np.asarray(signal_of("steady", n), dtype=float)).ravel()[:1] for n in names}
        measured = float(np.atleast_1d(evaluate(e.expr, 0.0, signals=values)).ravel()[0])
    else:
        if res.time is None:
            return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "the design has no `transient` analysis")
        t = res.time
        values = {n: signal_of("transient", n) for n in names}
        series = np.broadcast_to(evaluate(e.expr, t, signals=values), t.shape).astype(float)
        if e.agg == "at":
            measured = float(np.interp(e.at_time, t, series))
        else:
            mask = np.ones_like(t, dtype=bool)
            if e.between:
                mask = (t >= e.between[0]) & (t <= e.between[1])
            seg, tt = series[mask], t[mask]
            if len(seg) == 0:
                return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "no samples in the interval")
            if e.agg == "max":
                measured = float(seg.max())
            elif e.agg == "min":
                measured = float(seg.min())
            elif e.agg == "final":
                measured = float(seg[-1])
            else:  # mean over time, trapezoidal
                span = tt[-1] - tt[0]
                measured = float(_trapz(seg, tt) / span) if span > 0 else float(seg[0])
    lim = e.limit
    if e.cmp == "=":
        tol = e.within if e.within >= 0 else -e.within * abs(lim)
        ok = abs(measured - lim) <= tol
    else:
        ok = {"<": measured < lim, "<=": measured <= lim, ">": measured > lim, ">=": measured >= lim}[e.cmp]
    return Check(e.text, measured, lim, e.unit, bool(ok), e.loc, celsius=e.celsius)


__all__ = ["Results", "SignalEval", "Check", "default_signals", "signal_texts", "evaluate_expectation", "Signal"]
