"""`convection NAME A B coefficient H area AREA [exponent N]`: heat carried from a surface to a fluid.

With ΔT = T_A − T_B, the heat from A to B is Newton's law of cooling, H·AREA·ΔT, a linear
conductance H·AREA (stamped into G like a link). With an exponent it is

    Q = H·AREA·ΔT·(|ΔT| / 1 K)^N

H then being the coefficient at a difference of 1 K: natural convection, where the coefficient
itself grows as ΔT^N (N = 1/4 for laminar flow, 1/3 for turbulent: the simplified correlations
for air in Incropera & DeWitt, ch. 9). That expression is written once below as

    Q = H·AREA·(max(ΔT, 0)^(1+N) − max(−ΔT, 0)^(1+N))

the same value, whose exact slope (1+N)·H·AREA·|ΔT|^N stays finite at ΔT = 0 (the product
form's slope there is 0·∞), and whose powers take a base that is never negative, as ngspice's
`^` (which takes |base|) needs. The solver, the `Q(NAME)` signal and the netlist's
behavioural source all use it.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netgen.elements.base import TA, TB, Equations, TwoTerminal, read_between
from netgen.model import units as U
from netgen.model.calculus import evaluate_with
from netgen.model.expr import Const, Func, Var

COEFFICIENT = U.HEAT_TRANSFER_COEFFICIENT  # W/(m²·K)
COEFFICIENT_UNIT = U.unit_name(COEFFICIENT)

_DT = TA - TB
_UP = Var("N") + 1.0
# Heat from a to b; `h`, `area` and `N` are the element's own values (SI, ΔT in units of 1 K).
HEAT = Var("h") * Var("area") * (Func("max", (_DT, Const(0.0))) ** _UP - Func("max", (-_DT, Const(0.0))) ** _UP)


def _coefficient(r, tree) -> float:
    """H in W/(m²·K), positive, with messages that name that unit."""
    typed = r.typed(tree)
    if typed.dim != COEFFICIENT:
        got = "no unit" if typed.dim.dimensionless else U.unit_name(typed.dim)
        raise r.err(tree, f"a convection coefficient needs a unit of {COEFFICIENT_UNIT}, not {got}",
                    f"write e.g. `coefficient 10 {COEFFICIENT_UNIT}`")
    h = r.const(tree, COEFFICIENT, "a convection coefficient")
    if h <= 0:
        raise r.err(tree, f"a convection coefficient must be positive, not {h:g} {COEFFICIENT_UNIT}")
    return h


@dataclass
class Convection(TwoTerminal):
    """Convection from thermal node a to b: coefficient (W/(m²·K)), area (m²), exponent or None."""

    coefficient: float = 0.0
    area: float = 0.0
    exponent: float | None = None

    statement = "convection"
    attributes = ("coefficient", "area", "exponent")
    noun = "convection elements"
    signals = ("Q",)

    @staticmethod
    def read(r, t) -> None:
        name, loc, na, nb, at = read_between(
            r, t, "convection", Convection.attributes, ("coefficient", "area"),
            f"give the surface: `coefficient 10 {COEFFICIENT_UNIT}  area 0.01 m^2` (and `exponent N`)")
        h = _coefficient(r, at["coefficient"].children[0])
        area = r.const(at["area"].children[0], U.AREA, "a convection area", positive=True)
        n = None
        if "exponent" in at:
            tree = at["exponent"].children[0]
            if not r.typed(tree).dim.dimensionless:
                raise r.err(tree, "a convection exponent is a plain number", "write e.g. `exponent 0.25`")
            n = r.const(tree, U.NONE, "a convection exponent", nonneg=True)
        r.design.elements.append(Convection(name, loc, a=na, b=nb, coefficient=h, area=area,
                                            exponent=n))

    @property
    def linear(self) -> bool:
        return not self.exponent  # no exponent, or 0

    @property
    def conductance(self) -> float:
        """H·AREA, W/K: the conductance when linear, and at a difference of 1 K otherwise."""
        return self.coefficient * self.area

    def values(self, ta, tb) -> dict:
        return {"Ta": ta, "Tb": tb, "h": self.coefficient, "area": self.area, "N": self.exponent or 0.0}

    @classmethod
    def stamp(cls, batch, st) -> None:
        lin = [e for e in batch if e.linear]
        st.G.conductance(st.nodes(lin, "a"), st.nodes(lin, "b"), [e.conductance for e in lin])
        nl = [e for e in batch if not e.linear]
        if not nl:
            return
        a, b = st.nodes(nl, "a"), st.nodes(nl, "b")
        st.equations(Equations(
            [(a, HEAT), (b, -HEAT)], {"Ta": a, "Tb": b},
            {"h": st.values(nl, "coefficient"), "area": st.values(nl, "area"), "N": st.values(nl, "exponent")}))

    def signal(self, kind, side, p):
        ta, tb = p.node(self.a), p.node(self.b)
        heat = self.conductance * (ta - tb) if self.linear else evaluate_with(HEAT, self.values(ta, tb))
        return np.broadcast_to(heat, (p.X.shape[0],))  # Q: heat from a to b

    def thermal_conductance(self):
        # Linear: H·AREA. With an exponent the slope (1+N)·H·AREA·|ΔT|^N depends on ΔT; H·AREA,
        # its value at 1 K without the factor 1+N, serves as the scale for tolerances.
        return self.a, self.b, self.conductance

    def netlist(self, w, s) -> None:
        a, b = w.node(self.a), w.node(self.b)
        if self.linear:
            w.add(f"rconv_{s}", a, b, w.num(1.0 / self.conductance))
            w.row(f"rconv_{s}", f"convection {self.name}: thermal resistance 1/(H*A), K/W")
            return
        w.add(f"bconv_{s}", a, b, f"I={w.expr(HEAT, self.values(w.v(a), w.v(b)))}")
        w.row(f"bconv_{s}", f"convection {self.name}: H*A*dT*|dT|^N, dT = T_a - T_b, W")
