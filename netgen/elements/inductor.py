"""`inductor NAME A B VALUE [start I]`: an inductance, its current a branch unknown."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
from netgen.model import units as U


@dataclass
class Inductor(TwoTerminal):
    inductance: float = 0.0
    start: float | None = None

    statement = "inductor"
    noun = "inductors"
    branch = "I"
    signals = ("I", "P")
    defines_voltage = True
    recorded = "I"

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        ind = r.const(t.children[3], U.INDUCTANCE, "an inductance", positive=True)
        at = r.attrs(t.children[4], ("start",), "inductor")
        start = r.const(at["start"].children[0], U.CURRENT, "a start current") if "start" in at else None
        r.design.elements.append(Inductor(name, loc, a=a, b=b, inductance=ind, start=start))

    @classmethod
    def stamp(cls, batch, st) -> None:
        a, b, k = st.nodes(batch, "a"), st.nodes(batch, "b"), st.branches(batch)
        st.G.branch(a, b, k)  # V(a) − V(b) − L·dI/dt = 0
        st.C.add(k, k, -st.values(batch, "inductance"))
        st.start_branches += [(int(ki), e.start) for ki, e in zip(k, batch) if e.start is not None]

    def signal(self, kind, side, p):
        i = p.branch(self.name)
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        return [EnergyTerm("stored", f"I({self.name})", k=self.inductance)]

    def netlist(self, w, s) -> None:
        w.add(f"l_{s}", w.node(self.a), w.node(self.b), w.num(self.inductance), ic=(self.name,))
        w.row(f"l_{s}", f"inductor {self.name}")
        w.signal(f"I({self.name})", f"I(l_{s})")
