"""`link NAME A B VALUE`: a thermal conductance (or resistance) between two thermal nodes.

VALUE is a constant, or an expression of the temperature `T` taken as the mean of the link's
two ends, T = (T_A + T_B)/2 (a conductivity that follows temperature, as in a `plate` of such a
material). A constant link is stamped into G; a temperature-dependent one is the equation

    Q = G(T)·(T_A − T_B),   T = (T_A + T_B)/2        (heat from A to B)

written once below, from which the solver's residual and exact Jacobian, the `Q(NAME)` signal
and the netlist's behavioural source are all made.
"""
from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass

import numpy as np

from netgen.elements.base import MEAN, TA, TB, Equations, TwoTerminal
from netgen.model import units as U
from netgen.model.calculus import evaluate_with, split_scale, substitute
from netgen.model.design import THERMAL
from netgen.model.expr import Expr, Var, evaluate, over

REPORT_T = 300.0  # K: where a temperature-dependent value is shown, checked and used for tolerances


def flow(g: Expr) -> Expr:
    """Heat from A to B through the conductance `g`, an expression of `T` (the mean of the ends)."""
    return substitute(g, {"T": MEAN}) * (TA - TB)


def read_law(r, tree, dims, what: str, hint: str):
    """A value (a `Typed`) of one of `dims` that may be an expression of the temperature `T`, as
    a material's properties may, but not of `time`. `r` is the reader (an Elaborator)."""
    rd = r.reader()
    rd.variables = {"T": U.TEMPERATURE}
    typed = rd.read(tree)
    if rd.celsius_seen:
        r.design.celsius = True
    if typed.expr.uses_vars and "T" in r.params:
        at = r.param_locs.get("T")
        raise r.err(tree, f"`T` in {what} is the temperature, but a parameter `T` is also defined"
                    + (f" (line {at.line})" if at else ""), "rename the parameter")
    r.need_dim(tree, typed, dims, what)
    if typed.expr.uses_time:
        raise r.err(tree, f"{what} may depend on the temperature `T`, not on `time`", hint)
    return typed


def law_at(r, tree, law: Expr, what: str) -> float:
    """The value of a temperature-dependent conductance at 300 K, which must be positive."""
    v = float(evaluate(law, T=REPORT_T))
    if not v > 0 or v == float("inf"):
        raise r.err(tree, f"{what} must be positive, but is {v:g} W/K at T = {REPORT_T:g} K",
                    "it must stay positive over the temperatures the network reaches")
    return v


@dataclass
class Link(TwoTerminal):
    """Thermal conductance between nodes a and b, W/K. With `law` (an expression of `T`, W/K)
    the conductance follows the mean temperature of a and b, and `conductance` holds its value
    at 300 K for reports and tolerances only."""

    conductance: float = 0.0
    law: Expr | None = None

    statement = "link"
    noun = "links"
    signals = ("Q",)

    @staticmethod
    def read(r, t) -> None:
        name_tok, a, b, value = t.children
        name = r.element_name(name_tok)
        na, nb = r.node(a, THERMAL), r.node(b, THERMAL)
        typed = read_law(r, value, (U.THERMAL_CONDUCTANCE, U.THERMAL_RESISTANCE), "a link",
                         "e.g. `link fin a b 2 W/K * (1 + 0.003 * (T - 300 K) / 1 K)`")
        resistance = typed.dim == U.THERMAL_RESISTANCE
        law = None
        if typed.expr.uses_vars:
            law = over(1.0, typed.expr) if resistance else typed.expr
            g = law_at(r, value, law, "a link's conductance")
        else:
            v = r.checked(value, typed, "a link value", positive=True)  # read once, above
            g = 1.0 / v if resistance else v
        r.design.elements.append(Link(name, r.loc(name_tok), a=na, b=nb, conductance=g, law=law))

    @classmethod
    def stamp(cls, batch, st) -> None:
        fixed = [e for e in batch if e.law is None]
        st.G.conductance(st.nodes(fixed, "a"), st.nodes(fixed, "b"), st.values(fixed, "conductance"))
        # Temperature-dependent links share compiled equations: one block per law, each link's
        # constant factor (its size) a parameter.
        groups: dict = defaultdict(lambda: ([], []))
        shapes: dict = {}  # id(law) → split, since a plate's links share one law object
        for e in batch:
            if e.law is None:
                continue
            got = shapes.get(id(e.law))
            if got is None:
                got = shapes[id(e.law)] = split_scale(e.law)
            members, factors = groups[got[1]]
            members.append(e)
            factors.append(got[0])
        for shape, (members, factors) in groups.items():
            a, b = st.nodes(members, "a"), st.nodes(members, "b")
            q = Var("g") * flow(shape)
            st.equations(Equations([(a, q), (b, -q)], {"Ta": a, "Tb": b}, {"g": factors}))

    def signal(self, kind, side, p):
        if self.law is None:
            return self.conductance * p.across(self.a, self.b)  # Q: heat from a to b
        q = evaluate_with(flow(self.law), {"Ta": p.node(self.a), "Tb": p.node(self.b)})
        return np.broadcast_to(q, (p.X.shape[0],))

    def thermal_conductance(self):
        return self.a, self.b, self.conductance

    def netlist(self, w, s) -> None:
        a, b = w.node(self.a), w.node(self.b)
        if self.law is None:
            w.add(f"rlink_{s}", a, b, w.num(1.0 / self.conductance))
            w.row(f"rlink_{s}", f"link {self.name}: thermal resistance, K/W")
            return
        w.add(f"blink_{s}", a, b, f"I={w.expr(flow(self.law), {'Ta': w.v(a), 'Tb': w.v(b)})}")
        w.row(f"blink_{s}", f"link {self.name}: heat G(T)*(T_a - T_b), T the mean of its ends, W")
