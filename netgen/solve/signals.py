"""Signals from solved states: node temperatures and voltages directly, everything else from
the element kind's own `signal` (so each derived signal is written once, in its kind's module)."""
from __future__ import annotations

import numpy as np

from netgen.elements.base import Probe
from netgen.model.design import ELECTRICAL, THERMAL, Design
from netgen.model.signals import Signal, as_signal
from netgen.solve import produced
from netgen.solve.assembly import System


def default_signals(d: Design) -> list[str]:
    """LANGUAGE.md: all node temperatures and voltages, and the currents of inductors,
    sources and thermoelectric elements (the kinds whose `recorded` signal is `I`)."""
    out = [f"T({n.name})" for n in d.nodes.values() if n.domain == THERMAL and n.owner is None]
    out += [f"V({n.name})" for n in d.nodes.values() if n.domain == ELECTRICAL and n.name not in d.grounds]
    out += [f"{e.recorded}({e.name})" for e in d.elements if e.recorded]
    return out


def signal_texts(d: Design) -> list[str]:
    """The recorded signals' column headings, or the default signals when nothing is recorded."""
    return [s.text for s in d.records] if d.records else default_signals(d)


class SignalEval:
    """Computes any signal of the language from states x (k×n), their derivatives and times."""

    def __init__(self, d: Design, sys: System):
        self.d, self.sys = d, sys
        self._elements = {e.name: e for e in d.elements}

    def __call__(self, signal: Signal | str, X, Xdot, t, left: bool = False) -> np.ndarray:
        """`left` (one flag or one per sample) takes the limit from before at source corners."""
        s = as_signal(signal)
        sys = self.sys
        p = Probe(X, Xdot, t, left, sys.node_index, sys.branch_index, sys.n, sys.timeline)
        if s.kind == "V" and len(s.args) == 1 and s.args[0] in sys.branch_index:
            return p.branch(s.args[0])  # an element's own voltage unknown (a diode's junction)
        if s.kind in ("S", "E"):
            return self._so_far(s.kind, X, Xdot, t, left)
        if s.kind in ("T", "V"):
            v = p.node(s.args[0])
            return v - p.node(s.args[1]) if len(s.args) == 2 else v
        if s.kind == "U":  # a controller's unknown, by its own name
            if s.canonical not in sys.branch_index:
                raise KeyError(s.text)
            return p.branch(s.canonical)
        name, side = s.element_and_side(self._elements.__contains__)
        e = self._elements.get(name)
        if e is None or s.kind not in e.signals + (("Q",) if side in e.sides else ()):
            raise KeyError(s.text)
        return e.signal(s.kind, side, p)

    def _so_far(self, kind: str, X, Xdot, t, left) -> np.ndarray:
        """`S(total)` and `E(total)`: the entropy produced and the energy stored from the first
        state to each (produced.py); 0 in a single state such as the steady one."""
        names = produced.entropy_inputs(self.d) if kind == "S" else produced.stored_inputs(self.d)
        values = {name: np.asarray(self(name, X, Xdot, t, left), dtype=float) for name in names}
        if np.atleast_1d(t).size < 2:
            return np.zeros(X.shape[0])
        if kind == "S":
            return produced.entropy_so_far(self.d, t, values)
        return np.broadcast_to(produced.energy_so_far(self.d, values), (X.shape[0],)).astype(float)
