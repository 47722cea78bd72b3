"""`resistor NAME A B VALUE [heats NODE] [tempco ALPHA at NODE ref TEMP]`: Ohm's law, with its
Joule heat sent to a thermal node and its resistance following a node's temperature if asked."""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netgen.elements.base import EnergyTerm, Equations, TwoTerminal, electrical_power, ix
from netgen.model import units as U
from netgen.model.calculus import evaluate_with
from netgen.model.design import THERMAL
from netgen.model.expr import Const, Func, Var

FLOOR = 1e-6  # the tempco factor never falls below this: a resistance never reaches zero


@dataclass
class Tempco:
    """R = R0·(1 + alpha·(T(node) − ref))."""

    alpha: float
    node: str
    ref: float


# The equations, once: current from a to b, and the Joule heat u·i.
_U = Var("Va") - Var("Vb")
_R = Var("R0") * Func("max", (1.0 + Var("alpha") * (Var("Tt") - Var("ref")), Const(FLOOR)))
CURRENT = _U / _R
JOULE = _U * CURRENT


@dataclass
class Resistor(TwoTerminal):
    resistance: float = 0.0
    heats: str | None = None
    tempco: Tempco | None = None

    statement = "resistor"
    noun = "resistors"
    signals = ("I", "P")

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        res = r.const(t.children[3], U.RESISTANCE, "a resistance", positive=True)
        at = r.attrs(t.children[4], ("heats", "tempco"), "resistor")
        heats = r.node(at["heats"].children[0], THERMAL) if "heats" in at else None
        tc = None
        if "tempco" in at:
            alpha_t, node_tok, ref_t = at["tempco"].children
            alpha = r.const(alpha_t, U.PER_KELVIN, "a temperature coefficient")
            tc = Tempco(alpha, r.node(node_tok, THERMAL),
                        r.const(ref_t, U.TEMPERATURE, "a reference temperature", positive=True))
        r.design.elements.append(Resistor(name, loc, a=a, b=b, resistance=res, heats=heats, tempco=tc))

    @property
    def plain(self) -> bool:
        return self.heats is None and self.tempco is None

    @classmethod
    def stamp(cls, batch, st) -> None:
        plain = [e for e in batch if e.plain]
        st.G.conductance(st.nodes(plain, "a"), st.nodes(plain, "b"), 1.0 / st.values(plain, "resistance"))
        hot = [e for e in batch if not e.plain]
        if not hot:
            return
        n = st.n
        a, b = st.nodes(hot, "a"), st.nodes(hot, "b")
        t = ix([st.node_index[e.tempco.node] if e.tempco else n for e in hot])
        h = ix([st.node_index[e.heats] if e.heats else n for e in hot])
        st.equations(Equations(
            [(a, CURRENT), (b, -CURRENT), (h, -JOULE)],
            {"Va": a, "Vb": b, "Tt": t},
            {"R0": st.values(hot, "resistance"),
             "alpha": [e.tempco.alpha if e.tempco else 0.0 for e in hot],
             "ref": [e.tempco.ref if e.tempco else 0.0 for e in hot]}))

    def current(self, p) -> np.ndarray:
        tc = self.tempco
        values = {"Va": p.node(self.a), "Vb": p.node(self.b), "R0": self.resistance,
                  "Tt": p.node(tc.node) if tc else 0.0, "alpha": tc.alpha if tc else 0.0,
                  "ref": tc.ref if tc else 0.0}
        return np.broadcast_to(evaluate_with(CURRENT, values), (p.X.shape[0],))

    def signal(self, kind, side, p):
        i = self.current(p)
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        # With `heats` its Joule heat stays inside the network (it warms a node); without, it leaves.
        return [] if self.heats else [EnergyTerm("lost", f"P({self.name})")]

    def netlist(self, w, s) -> None:
        a, b = w.node(self.a), w.node(self.b)
        if self.plain:
            w.add(f"r_{s}", a, b, w.num(self.resistance))
            w.row(f"r_{s}", f"resistor {self.name}")
            return
        tc = self.tempco
        values = {"Va": w.v(a), "Vb": w.v(b), "R0": self.resistance, "Tt": w.v(w.node(tc.node)) if tc else 0.0,
                  "alpha": tc.alpha if tc else 0.0, "ref": tc.ref if tc else 0.0}
        w.add(f"bres_{s}", a, b, f"I={w.expr(CURRENT, values)}")
        w.row(f"bres_{s}", f"resistor {self.name}: current through R(T)")
        if self.heats:
            w.add(f"bjoule_{s}", 0, w.node(self.heats), f"I={w.expr(JOULE, values)}")
            w.row(f"bjoule_{s}", f"resistor {self.name}: Joule heat into {self.heats}, W")
