"""Switches that act on conditions: the event functions the transient watches, and where on a
step they cross zero.

A condition is one comparison of signals, or several joined by `and`. Each comparison
`lhs < rhs` (or `>`) becomes a margin that is positive exactly when it holds (rhs − lhs, or
lhs − rhs); a conjunction holds when its smallest margin is positive, so the event function of
a clause is that minimum, continuous in the state. A switch watches one clause at a time: while
closed the one that opens it, while open the one that closes it. An event is that function
going from not positive to positive within a step.

The event time is located by root-finding on the step's interpolant, the published practice
of event location (Shampine & Thompson, "Event location for ordinary differential equations",
Comput. Math. Appl. 39 (2000) 43-54): TR-BDF2's step has the states at t, t + γh and t + h, and
the quadratic through them is the step's continuous extension, of the method's own order. The
integrator then takes the step again to land exactly on the event time, changes the switch and
restarts from a consistent state there, as it does at a corner.
"""
from __future__ import annotations

import math

import numpy as np

from netgen.model.errors import SolveError
from netgen.model.expr import SignalRef, evaluate


def _refs(e) -> list[str]:
    return list(dict.fromkeys(n.text for n in e.walk() if isinstance(n, SignalRef)))


class Watch:
    """The event functions of the switches that act on conditions, evaluated from states."""

    def __init__(self, sys, signal_eval):
        self.sys = sys
        self.sig = signal_eval
        self.which = [k for k, s in enumerate(sys.switches) if s.conditional]
        self.texts = {k: _refs_of(sys.switches[k]) for k in self.which}

    def __bool__(self) -> bool:
        return bool(self.which)

    def initial(self) -> dict[int, bool]:
        return {k: self.sys.switches[k].starts_closed for k in self.which}

    def margin(self, k: int, closed: bool, X: np.ndarray, Xdot: np.ndarray, t: np.ndarray) -> np.ndarray:
        """The event function of switch k in its state `closed` at each row of X (−inf: no
        clause to watch in that state)."""
        s = self.sys.switches[k]
        clause = s.opens_when if closed else s.closes_when
        if clause is None:
            return np.full(len(t), -np.inf)
        values = {text: np.asarray(self.sig(text, X, Xdot, t), dtype=float) for text in self.texts[k]}
        out = np.full(len(t), np.inf)
        for lhs, cmp, rhs in clause:
            a = np.broadcast_to(evaluate(lhs, t, signals=values), t.shape)
            b = np.broadcast_to(evaluate(rhs, t, signals=values), t.shape)
            out = np.minimum(out, (b - a) if cmp.startswith("<") else (a - b))
        return out

    def margins(self, states: dict[int, bool], x, xdot, t) -> dict[int, float]:
        X, Xd, T = x[None, :], xdot[None, :], np.array([t])
        return {k: float(self.margin(k, states[k], X, Xd, T)[0]) for k in self.which}

    def locate(self, states, t, h, x, y1, x_new, gamma) -> tuple[float, int] | None:
        """The earliest event in the step from t to t + h, on the quadratic through the states
        at t, t + γh and t + h: (time, switch) or None."""
        from scipy.optimize import brentq  # here: scipy.optimize is a third of a run's imports, and few runs need it

        best = None
        for k in self.which:
            f = lambda s: self._at(k, states[k], s, t, h, x, y1, x_new, gamma)
            g0, g1 = f(0.0), f(1.0)
            if not (g0 <= 0.0 < g1):
                continue
            s = brentq(f, 0.0, 1.0, xtol=1e-12, rtol=4 * np.finfo(float).eps, maxiter=200)
            # Land where the condition holds: on the root or just past it.
            while f(s) <= 0.0 and s < 1.0:
                s = min(1.0, s + 1e-12 + 1e-12 * s)
            if best is None or s < best[0]:
                best = (s, k)
        return None if best is None else (t + best[0] * h, best[1])

    def _at(self, k, closed, s, t, h, x, y1, x_new, gamma) -> float:
        l0 = (s - gamma) * (s - 1.0) / gamma
        l1 = s * (s - 1.0) / (gamma * (gamma - 1.0))
        l2 = s * (s - gamma) / (1.0 - gamma)
        d0 = (2 * s - gamma - 1.0) / gamma
        d1 = (2 * s - 1.0) / (gamma * (gamma - 1.0))
        d2 = (2 * s - gamma) / (1.0 - gamma)
        xs = l0 * x + l1 * y1 + l2 * x_new
        xd = (d0 * x + d1 * y1 + d2 * x_new) / h
        return float(self.margin(k, closed, xs[None, :], xd[None, :], np.array([t + s * h]))[0])

    def check_gap(self, k: int, closed: bool, x, xdot, t: float) -> None:
        """After switch k changed, the clause it now watches must not hold already: a switch
        whose two conditions hold at once would toggle without end."""
        g = float(self.margin(k, closed, x[None, :], xdot[None, :], np.array([t]))[0])
        if g > 0 and math.isfinite(g):
            s = self.sys.switches[k]
            raise SolveError(
                f"switch `{s.name}` {'closes' if closed else 'opens'} at t = {t:.6g} s, and at once its "
                f"condition to {'open' if closed else 'close'} holds too: it would switch without end", s.loc,
                "leave a gap between the two conditions (a thermostat's hysteresis), e.g. "
                "`closes when T(x) > 5 degC  opens when T(x) < 3 degC`")


def _refs_of(s) -> list[str]:
    out: list[str] = []
    for clause in (s.opens_when, s.closes_when):
        for lhs, _, rhs in clause or ():
            out += _refs(lhs) + _refs(rhs)
    return list(dict.fromkeys(out))


def timeline(sys, initial: dict[int, bool], events: list[dict]) -> dict:
    """Switch name → closed(t, left) for the switches that act on conditions, from a run's
    events: the state after the last event before t (at t itself, the state after it; with
    `left`, the one before)."""
    out = {}
    for k, closed0 in initial.items():
        name = sys.switches[k].name
        mine = [(e["time"], e["what"] == "closes") for e in events if e["element"] == name]

        def closed(t, left=False, mine=mine, closed0=closed0):
            state = closed0
            for te, c in mine:
                if te < t or (te == t and not left):
                    state = c
            return state
        out[name] = closed
    return out
