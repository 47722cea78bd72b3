"""`heat NAME NODE VALUE`: a heat input into a thermal node, W, that may vary in time."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import THERMAL_REF, EnergyTerm, Kind
from netgen.elements.controller import output_node
from netgen.model import units as U
from netgen.model.design import THERMAL
from netgen.model.expr import Wave


@dataclass
class Heat(Kind):
    """Heat input into `node`, W (may vary in time)."""

    node: str = ""
    power: Wave | None = None
    controller: str | None = None  # the controller that drives it, if any

    statement = "heat"
    noun = "heat inputs"
    signals = ("Q",)

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
        free = [e for e in batch if e.controller is None]
        st.source(st.nodes(free, "node"), 1.0, [e.power for e in free])
        driven = [e for e in batch if e.controller]
        st.G.add(st.nodes(driven, "node"), [st.branch_index[f"U({e.controller})"] for e in driven], -1.0)

    @property
    def given(self):
        return None if self.controller else "Q"

    def branches(self):
        return [(self.node, THERMAL_REF, "Heat")]

    def signal(self, kind, side, p):
        return p.branch(f"U({self.controller})") if self.controller else p.wave(self.power)

    def energy(self):
        return [EnergyTerm("supplied", f"Q({self.name})")]

    def entropy(self):
        return [(f"Q({self.name})", f"T({self.node})")]

    def waves(self):
        return {"power": self.power}

    def netlist(self, w, s) -> None:
        if self.controller:
            name = f"gheat_{s}"
            w.add(name, "0", w.node(self.node), output_node(w, self.controller), 0, "1")
        else:
            name = w.source("I", "heat", s, "0", w.node(self.node), self.power)  # pushes into the node
        w.row(name, f"heat {self.name}: heat input, W")
