"""`source NAME A B VALUE`: a voltage source (V(a) − V(b) = value) or a current source (value
delivered out of a), chosen by the value's unit; the value may vary in time. A source driven by a
`controller` takes the controller's output instead (its own value is then the controller's bias)."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
from netgen.elements.controller import output_node
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
    controller: str | None = None  # the controller that drives it, if any

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
        free = [e.controller is None for e in batch]
        st.source(k[free], 1.0, [e.value for e in batch if e.controller is None])
        driven = [e for e in batch if e.controller]
        st.G.add(st.branches(driven), [st.branch_index[f"U({e.controller})"] for e in driven], -1.0)

    def signal(self, kind, side, p):
        i = p.branch(self.name)
        return i if kind == "I" else electrical_power(self, p, i, sign=-1.0)

    def energy(self):
        return [EnergyTerm("supplied", f"P({self.name})", sign=-1.0)]  # it takes negative power

    def waves(self):
        return {"value": self.value}

    def netlist(self, w, s) -> None:
        if self.controller:
            name = f"e_{s}"
            w.add(name, w.node(self.a), w.node(self.b), output_node(w, self.controller), 0, "1")
        else:
            name = w.source("V", "", s, w.node(self.a), w.node(self.b), self.value)
        w.row(name, f"source {self.name}: V({self.a}) - V({self.b}), V")
        w.signal(f"I({self.name})", f"-I({name})")  # ours leaves at a, SPICE's enters there


@dataclass
class CurrentSource(TwoTerminal):
    """Delivers `value` amperes out of a (into node a), returning at b."""

    value: Wave | None = None
    controller: str | None = None  # the controller that drives it, if any

    statement = "source"
    noun = "current sources"
    signals = ("I", "P")
    carries_dc = False
    recorded = "I"
    read = staticmethod(read)

    @classmethod
    def stamp(cls, batch, st) -> None:
        free = [e for e in batch if e.controller is None]
        ws = [e.value for e in free]
        st.source(st.nodes(free, "a"), 1.0, ws)
        st.source(st.nodes(free, "b"), -1.0, ws)
        driven = [e for e in batch if e.controller]
        u = [st.branch_index[f"U({e.controller})"] for e in driven]
        st.G.add(st.nodes(driven, "a"), u, -1.0)  # its current enters node a: −u leaves it
        st.G.add(st.nodes(driven, "b"), u, 1.0)

    @property
    def given(self):
        return None if self.controller else "I"

    def signal(self, kind, side, p):
        i = p.branch(f"U({self.controller})") if self.controller else p.wave(self.value)
        return i if kind == "I" else electrical_power(self, p, i, sign=-1.0)

    def energy(self):
        return [EnergyTerm("supplied", f"P({self.name})", sign=-1.0)]

    def waves(self):
        return {"value": self.value}

    def netlist(self, w, s) -> None:
        if self.controller:
            name = f"g_{s}"
            w.add(name, w.node(self.b), w.node(self.a), output_node(w, self.controller), 0, "1")
        else:
            name = w.source("I", "", s, w.node(self.b), w.node(self.a), self.value)  # out of a
        w.row(name, f"source {self.name}: current out of {self.a}, A")
