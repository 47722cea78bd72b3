"""`radiation NAME A B emissivity E area AREA [view F]`: net radiant heat between two thermal nodes.

The grey-body exchange of a surface of area AREA and emissivity E with surroundings seen
through the view factor F (default 1), the heat from A to B, written once below:

    Q = E·σ·AREA·F·(T_A⁴ − T_B⁴)

σ = 5.670374419e-8 W/(m²·K⁴), the Stefan–Boltzmann constant (CODATA 2018, exact since the SI
of 2019). The solver's residual and exact Jacobian, the `Q(NAME)` signal and the netlist's
behavioural source are all made from this one expression.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netgen.elements.base import TA, TB, Equations, TwoTerminal, read_between
from netgen.model import units as U
from netgen.model.calculus import evaluate_with
from netgen.model.expr import Var

SIGMA = 5.670374419e-8  # W/(m²·K⁴), Stefan–Boltzmann constant, CODATA 2018
T_SCALE = 300.0  # K: where `thermal_conductance` linearises the exchange

# Heat from a to b; `eps`, `area` and `view` are the element's own values.
HEAT = SIGMA * Var("eps") * Var("area") * Var("view") * (TA**4 - TB**4)


def fraction(r, tree, what: str, example: str) -> float:
    """A plain number in (0, 1] (a value given in % is fine), read with located errors."""
    typed = r.typed(tree)
    if not typed.dim.dimensionless:
        raise r.err(tree, f"{what} is a plain number, not a value in {U.unit_name(typed.dim)}",
                    f"write a fraction between 0 and 1, e.g. `{example}`")
    v = r.const(tree, U.NONE, what)
    if not 0.0 < v <= 1.0:
        raise r.err(tree, f"{what} must be more than 0 and at most 1, not {v:g}",
                    f"it is a fraction of a black body's exchange, e.g. `{example}`")
    return v


@dataclass
class Radiation(TwoTerminal):
    """Radiant exchange between thermal nodes a and b: emissivity, area (m²), view factor."""

    emissivity: float = 1.0
    area: float = 0.0
    view: float = 1.0

    statement = "radiation"
    attributes = ("emissivity", "area", "view")
    noun = "radiation elements"
    signals = ("Q",)

    @staticmethod
    def read(r, t) -> None:
        name, loc, na, nb, at = read_between(
            r, t, "radiation", Radiation.attributes, ("emissivity", "area"),
            "give the radiating surface: `emissivity 0.9  area 0.01 m^2` (and `view F`, default 1)")
        eps = fraction(r, at["emissivity"].children[0], "an emissivity", "emissivity 0.9")
        area = r.const(at["area"].children[0], U.AREA, "a radiating area", positive=True)
        view = fraction(r, at["view"].children[0], "a view factor", "view 0.5") if "view" in at else 1.0
        r.design.elements.append(Radiation(name, loc, a=na, b=nb, emissivity=eps, area=area,
                                           view=view))

    def values(self, ta, tb) -> dict:
        return {"Ta": ta, "Tb": tb, "eps": self.emissivity, "area": self.area, "view": self.view}

    @classmethod
    def stamp(cls, batch, st) -> None:
        a, b = st.nodes(batch, "a"), st.nodes(batch, "b")
        st.equations(Equations(
            [(a, HEAT), (b, -HEAT)], {"Ta": a, "Tb": b},
            {"eps": st.values(batch, "emissivity"), "area": st.values(batch, "area"),
             "view": st.values(batch, "view")}))

    def signal(self, kind, side, p):
        heat = evaluate_with(HEAT, self.values(p.node(self.a), p.node(self.b)))
        return np.broadcast_to(heat, (p.X.shape[0],))  # Q: heat from a to b

    def thermal_conductance(self):
        # dQ/dT_A = 4·E·σ·AREA·F·T³, at 300 K: a scale for tolerances, not a model.
        return self.a, self.b, 4 * self.emissivity * SIGMA * self.area * self.view * T_SCALE**3

    def netlist(self, w, s) -> None:
        a, b = w.node(self.a), w.node(self.b)
        w.add(f"brad_{s}", a, b, f"I={w.expr(HEAT, self.values(w.v(a), w.v(b)))}")
        w.row(f"brad_{s}", f"radiation {self.name}: E*sigma*A*F*(T_a^4 - T_b^4), W")
