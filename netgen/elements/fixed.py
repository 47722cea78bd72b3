"""`fixed NODE VALUE`: a reservoir that holds a thermal node at a temperature (which may vary)."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import THERMAL_REF, EnergyTerm, Kind
from netgen.model import units as U
from netgen.model.design import THERMAL
from netgen.model.expr import Wave


@dataclass
class Fixed(Kind):
    """A reservoir: `node` held at `temperature` (K, may vary in time). Named after its node;
    its branch unknown Q is the heat it gives to the node."""

    node: str = ""
    temperature: Wave | None = None

    statement = "fixed"
    noun = "reservoirs"
    branch = "Q"
    signals = ("Q",)
    reservoir = True

    @property
    def terminals(self):
        return (self.node,)

    @staticmethod
    def read(r, t) -> None:
        name_tok, value = t.children
        name = r.node(name_tok, THERMAL)
        wave, _ = r.wave(value, U.TEMPERATURE, "a reservoir temperature")
        if wave.constant:  # one that varies in time is checked over the run (solve/topology.py)
            r.above_absolute_zero(value, wave.at(0.0), "a reservoir temperature")
        if any(isinstance(e, Fixed) and e.node == name for e in r.design.elements):
            raise r.err(name_tok, f"node `{name}` is already fixed")
        r.design.elements.append(Fixed(name, r.loc(name_tok), node=name, temperature=wave))

    @classmethod
    def stamp(cls, batch, st) -> None:
        i, k = st.nodes(batch, "node"), st.branches(batch)
        st.G.add(i, k, -1.0)
        st.G.add(k, i, 1.0)
        st.source(k, 1.0, [e.temperature for e in batch])

    def branches(self):
        return [(self.node, THERMAL_REF, "Fixed")]

    def signal(self, kind, side, p):
        return p.branch(self.name)

    def energy(self):
        return [EnergyTerm("supplied", f"Q({self.name})")]

    def entropy(self):
        return [(f"Q({self.name})", f"T({self.node})")]

    def waves(self):
        return {"temperature": self.temperature}

    def netlist(self, w, s) -> None:
        name = w.source("V", "fix", s, w.node(self.node), "0", self.temperature)
        w.row(name, f"fixed {self.name}: reservoir temperature, K")
        w.signal(f"Q({self.name})", f"-I({name})")  # SPICE's branch current enters at +
