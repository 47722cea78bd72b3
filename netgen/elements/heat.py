"""`heat NAME NODE VALUE`: a heat input into a thermal node, W, that may vary in time."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import THERMAL_REF, EnergyTerm, Kind
from netgen.model import units as U
from netgen.model.design import THERMAL
from netgen.model.expr import Wave


@dataclass
class Heat(Kind):
    """Heat input into `node`, W (may vary in time)."""

    node: str = ""
    power: Wave | None = None

    statement = "heat"
    noun = "heat inputs"
    signals = ("Q",)
    given = "Q"

    @property
    def terminals(self):
        return (self.node,)

    @staticmethod
    def read(r, t) -> None:
        name_tok, node_tok, value = t.children
        name = r.element_name(name_tok)
        node = r.node(node_tok, THERMAL)
        wave, _ = r.wave(value, U.POWER, "a heat input")
        r.design.elements.append(Heat(name, r.loc(name_tok), node=node, power=wave))

    @classmethod
    def stamp(cls, batch, st) -> None:
        st.source(st.nodes(batch, "node"), 1.0, [e.power for e in batch])

    def branches(self):
        return [(self.node, THERMAL_REF, "Heat")]

    def signal(self, kind, side, p):
        return p.wave(self.power)

    def energy(self):
        return [EnergyTerm("supplied", f"Q({self.name})")]

    def entropy(self):
        return [(f"Q({self.name})", f"T({self.node})")]

    def waves(self):
        return {"power": self.power}

    def netlist(self, w, s) -> None:
        name = w.source("I", "heat", s, "0", w.node(self.node), self.power)  # pushes into the node
        w.row(name, f"heat {self.name}: heat input, W")
