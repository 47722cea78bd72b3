"""`capacitor NAME A B VALUE [start V]`: an electrical capacitance, with a start voltage if given."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
from netgen.model import units as U


@dataclass
class Capacitor(TwoTerminal):
    capacitance: float = 0.0
    start: float | None = None

    statement = "capacitor"
    noun = "capacitors"
    signals = ("I", "P")
    carries_dc = False

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        c = r.const(t.children[3], U.CAPACITANCE, "a capacitance", positive=True)
        at = r.attrs(t.children[4], ("start",), "capacitor")
        start = r.const(at["start"].children[0], U.VOLTAGE, "a start voltage") if "start" in at else None
        r.design.elements.append(Capacitor(name, loc, a=a, b=b, capacitance=c, start=start))

    @classmethod
    def stamp(cls, batch, st) -> None:
        a, b = st.nodes(batch, "a"), st.nodes(batch, "b")
        st.C.conductance(a, b, st.values(batch, "capacitance"))
        st.start_nodes += [(int(ai), int(bi), e.start) for ai, bi, e in zip(a, b, batch) if e.start is not None]

    def signal(self, kind, side, p):
        i = self.capacitance * p.rate_across(self.a, self.b)
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        return [EnergyTerm("stored", f"V({self.a}, {self.b})", k=self.capacitance)]

    def netlist(self, w, s) -> None:
        w.add(f"c_{s}", w.node(self.a), w.node(self.b), w.num(self.capacitance), ic=(self.a, self.b))
        w.row(f"c_{s}", f"capacitor {self.name}")
