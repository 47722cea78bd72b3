"""`source NAME A B VALUE`: a voltage source (V(a) − V(b) = value) or a current source (value
delivered out of a), chosen by the value's unit; the value may vary in time."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
from netgen.model import units as U
from netgen.model.expr import Wave


def read(r, t) -> None:
    name, a, b, loc = r.two_pins(t)
    wave, dim = r.wave(t.children[3], (U.VOLTAGE, U.CURRENT), "a source")
    cls = VoltageSource if dim == U.VOLTAGE else CurrentSource
    r.design.elements.append(cls(name, loc, a=a, b=b, value=wave))


@dataclass
class VoltageSource(TwoTerminal):
    """V(a) − V(b) = value; its current is the current it delivers out of a."""

    value: Wave | None = None

    statement = "source"
    noun = "voltage sources"
    branch = "I"
    signals = ("I", "P")
    defines_voltage = True
    recorded = "I"
    read = staticmethod(read)

    @classmethod
    def stamp(cls, batch, st) -> None:
        k = st.branches(batch)
        st.G.branch(st.nodes(batch, "a"), st.nodes(batch, "b"), k, sign=-1.0)
        st.source(k, 1.0, [e.value for e in batch])

    def signal(self, kind, side, p):
        i = p.branch(self.name)
        return i if kind == "I" else electrical_power(self, p, i, sign=-1.0)

    def energy(self):
        return [EnergyTerm("supplied", f"P({self.name})", sign=-1.0)]  # it takes negative power

    def waves(self):
        return {"value": self.value}

    def netlist(self, w, s) -> None:
        name = w.source("V", "", s, w.node(self.a), w.node(self.b), self.value)
        w.row(name, f"source {self.name}: V({self.a}) - V({self.b}), V")
        w.signal(f"I({self.name})", f"-I({name})")  # ours leaves at a, SPICE's enters there


@dataclass
class CurrentSource(TwoTerminal):
    """Delivers `value` amperes out of a (into node a), returning at b."""

    value: Wave | None = None

    statement = "source"
    noun = "current sources"
    signals = ("I", "P")
    carries_dc = False
    recorded = "I"
    given = "I"
    read = staticmethod(read)

    @classmethod
    def stamp(cls, batch, st) -> None:
        ws = [e.value for e in batch]
        st.source(st.nodes(batch, "a"), 1.0, ws)
        st.source(st.nodes(batch, "b"), -1.0, ws)

    def signal(self, kind, side, p):
        i = p.wave(self.value)
        return i if kind == "I" else electrical_power(self, p, i, sign=-1.0)

    def energy(self):
        return [EnergyTerm("supplied", f"P({self.name})", sign=-1.0)]

    def waves(self):
        return {"value": self.value}

    def netlist(self, w, s) -> None:
        name = w.source("I", "", s, w.node(self.b), w.node(self.a), self.value)  # out of a
        w.row(name, f"source {self.name}: current out of {self.a}, A")
