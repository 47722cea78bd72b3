"""`link NAME A B VALUE`: a thermal conductance (or resistance) between two thermal nodes."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import TwoTerminal
from netgen.model import units as U
from netgen.model.design import THERMAL


@dataclass
class Link(TwoTerminal):
    """Thermal conductance between nodes a and b, W/K."""

    conductance: float = 0.0

    statement = "link"
    noun = "links"
    signals = ("Q",)

    @staticmethod
    def read(r, t) -> None:
        name_tok, a, b, value = t.children
        name = r.element_name(name_tok)
        na, nb = r.node(a, THERMAL), r.node(b, THERMAL)
        typed = r.typed(value)
        r.need_dim(value, typed, (U.THERMAL_CONDUCTANCE, U.THERMAL_RESISTANCE), "a link")
        v = r.const(value, typed.dim, "a link value", positive=True)
        g = v if typed.dim == U.THERMAL_CONDUCTANCE else 1.0 / v
        r.design.elements.append(Link(name, r.loc(name_tok), a=na, b=nb, conductance=g))

    @classmethod
    def stamp(cls, batch, st) -> None:
        st.G.conductance(st.nodes(batch, "a"), st.nodes(batch, "b"), st.values(batch, "conductance"))

    def signal(self, kind, side, p):
        return self.conductance * p.across(self.a, self.b)  # Q: heat from a to b

    def thermal_conductance(self):
        return self.a, self.b, self.conductance

    def netlist(self, w, s) -> None:
        w.add(f"rlink_{s}", w.node(self.a), w.node(self.b), w.num(1.0 / self.conductance))
        w.row(f"rlink_{s}", f"link {self.name}: thermal resistance, K/W")
