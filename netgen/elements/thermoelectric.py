"""`thermoelectric NAME { pins P N  sides A B  ... }`: a module that couples the two domains.

Current I from pin p to pin n moves heat from side a to side b. With S, R, K the module's
Seebeck coefficient, resistance and thermal conductance (constants, or a material's expressions
of the mean side temperature T = (Ta + Tb)/2), its equations, written once below, are

    V(p) − V(n) = R·I + S·(Tb − Ta)                 (Ohm's law and the Seebeck voltage)
    Q(a) = S·Ta·I − R·I²/2 + K·(Ta − Tb)            (heat taken from side a: Peltier, Joule, conduction)
    Q(b) = S·Tb·I + R·I²/2 + K·(Ta − Tb)            (heat given to side b)

The solver's residual and exact Jacobian, the `Q(NAME.a)` and `Q(NAME.b)` signals and the
netlist's behavioural sources are all made from these three expressions.
"""
from __future__ import annotations

import difflib
from collections import defaultdict
from dataclasses import dataclass

import numpy as np

from netgen.elements.base import MEAN, TA, TB, Equations, Kind
from netgen.model import units as U
from netgen.model.calculus import evaluate_with, split_scale, substitute
from netgen.model.design import ELECTRICAL, THERMAL
from netgen.model.expr import Binary, Const, Expr, Var, evaluate

CURRENT = Var("I")


def equations(S: Expr, R: Expr, K: Expr) -> tuple[Expr, Expr, Expr]:
    """(V(p) − V(n), heat taken from side a, heat given to side b) of a module with S, R, K."""
    volt = R * CURRENT + S * (TB - TA)
    heat_a = S * TA * CURRENT - 0.5 * R * CURRENT * CURRENT + K * (TA - TB)
    heat_b = S * TB * CURRENT + 0.5 * R * CURRENT * CURRENT + K * (TA - TB)
    return volt, heat_a, heat_b


@dataclass
class Thermoelectric(Kind):
    """Module: pins p, n (electrical), sides a, b (thermal); I from p to n moves heat a → b.

    `seebeck`, `resistance`, `conductance` are the lumped S, R, K. When they depend on
    temperature (a material with expressions of T), `props` holds them as expressions of the
    mean side temperature `T`, and the floats hold their values at 300 K for reports only.
    """

    p: str = ""
    n: str = ""
    a: str = ""
    b: str = ""
    seebeck: float = 0.0
    resistance: float = 0.0
    conductance: float = 0.0
    props: tuple | None = None
    form: str = "lumped"  # lumped | couples | rated
    hottest: float | None = None  # highest allowed side temperature, K
    rated_hot: float | None = None  # the hot side its ratings are given at (`rated ... at TEMP`), K

    statement = "thermoelectric"
    attributes = ("pins", "sides", "seebeck", "resistance", "conductance", "couples", "rated", "hottest")
    noun = "thermoelectric modules"
    branch = "I"
    signals = ("I", "P")
    sides = ("a", "b")
    recorded = "I"

    @property
    def terminals(self):
        return (self.p, self.n, self.a, self.b)

    def branches(self):
        return [(self.p, self.n, "pins"), (self.a, self.b, "sides")]

    def values_at(self, T):
        """S, R, K at mean side temperature T (float or array)."""
        if self.props is None:
            return self.seebeck, self.resistance, self.conductance
        return tuple(evaluate(e, T=T) for e in self.props)

    def own(self) -> tuple[Expr, Expr, Expr]:
        """S, R, K as expressions of Ta and Tb."""
        if self.props is None:
            return Const(self.seebeck), Const(self.resistance), Const(self.conductance)
        return tuple(substitute(e, {"T": MEAN}) for e in self.props)

    # ---- reading ---------------------------------------------------------------------
    @staticmethod
    def read(r, t) -> None:
        name_tok, attrs = t.children
        name = r.element_name(name_tok)
        at = r.attrs(attrs, Thermoelectric.attributes, "thermoelectric")
        for key, example in (("pins", "pins P N"), ("sides", "sides A B")):
            if key not in at:
                raise r.err(name_tok, f"thermoelectric `{name}` needs `{example}`")
        lumped = [k for k in ("seebeck", "resistance", "conductance") if k in at]
        forms = [f for f, present in (("lumped", bool(lumped)), ("couples", "couples" in at),
                                      ("rated", "rated" in at)) if present]
        if len(forms) != 1:
            raise r.err(name_tok, f"thermoelectric `{name}` needs exactly one way to give its values"
                        + (f", not {' and '.join(forms)}" if forms else ""),
                        "either `seebeck S resistance R conductance K`, or `couples N material M leg AREA "
                        "LENGTH`, or `rated imax I vmax V dtmax DT at TEMP`")
        p, n = (r.node(x, ELECTRICAL) for x in at["pins"].children)
        a, b = (r.node(x, THERMAL) for x in at["sides"].children)
        e = Thermoelectric(name, r.loc(name_tok), p=p, n=n, a=a, b=b, form=forms[0])
        if forms[0] == "lumped":
            missing = [k for k in ("seebeck", "resistance", "conductance") if k not in at]
            if missing:
                raise r.err(name_tok, f"thermoelectric `{name}` needs {', '.join('`' + m + '`' for m in missing)}",
                            "give the module's lumped values: seebeck S  resistance R  conductance K")
            e.seebeck = r.const(at["seebeck"].children[0], U.SEEBECK, "a Seebeck coefficient")
            e.resistance = r.const(at["resistance"].children[0], U.RESISTANCE, "a module resistance", positive=True)
            e.conductance = r.const(at["conductance"].children[0], U.THERMAL_CONDUCTANCE, "a module conductance",
                                    positive=True)
        elif forms[0] == "rated":
            i_t, v_t, dt_t, th_t = at["rated"].children
            imax = r.const(i_t, U.CURRENT, "imax", positive=True)
            vmax = r.const(v_t, U.VOLTAGE, "vmax", positive=True)
            dtmax = r.difference(dt_t, "dtmax", positive=True)
            th = r.const(th_t, U.TEMPERATURE, "the rating temperature", positive=True)
            if dtmax >= th:
                raise r.err(dt_t, "dtmax must be smaller than the hot-side rating temperature")
            # LANGUAGE.md form 3, the ideal-equation inversion of the ratings.
            e.seebeck = vmax / th
            e.resistance = vmax * (th - dtmax) / (th * imax)
            e.conductance = vmax * imax * (th - dtmax) / (2 * th * dtmax)
            e.rated_hot = th
        else:
            _read_couples(r, e, at)
        if "hottest" in at:
            e.hottest = r.const(at["hottest"].children[0], U.TEMPERATURE, "the hottest allowed side temperature",
                                positive=True)
        r.design.elements.append(e)

    # ---- equations ---------------------------------------------------------------------
    @classmethod
    def stamp(cls, batch, st) -> None:
        p, q = st.nodes(batch, "p"), st.nodes(batch, "n")
        a, b, k = st.nodes(batch, "a"), st.nodes(batch, "b"), st.branches(batch)
        st.G.branch(p, q, k)  # the current leaves p and enters n; row k holds V(p) − V(n) − ...
        # Modules share compiled equations: lumped ones with S, R, K as parameters, those of
        # one material with its expressions, each scaled by the module's own factors.
        groups: dict = defaultdict(list)
        for i, e in enumerate(batch):
            key = "lumped" if e.props is None else tuple(split_scale(x)[1] for x in e.props)
            groups[key].append(i)
        for key, members in groups.items():
            m = np.array(members)
            if key == "lumped":
                S, R, K = Var("S"), Var("R"), Var("K")
                params = {"S": st.values([batch[i] for i in members], "seebeck"),
                          "R": st.values([batch[i] for i in members], "resistance"),
                          "K": st.values([batch[i] for i in members], "conductance")}
            else:
                S, R, K = (Var(f) * substitute(x, {"T": MEAN}) for f, x in zip(("fS", "fR", "fK"), key))
                factors = np.array([[split_scale(x)[0] for x in batch[i].props] for i in members]).T
                params = dict(zip(("fS", "fR", "fK"), factors))
            volt, heat_a, heat_b = equations(S, R, K)
            st.equations(Equations([(k[m], -volt), (a[m], heat_a), (b[m], -heat_b)],
                                   {"Ta": a[m], "Tb": b[m], "I": k[m]}, params))

    def signal(self, kind, side, p):
        i = p.branch(self.name)
        if kind == "I":
            return i
        if kind == "P":
            return p.across(self.p, self.n) * i
        _, heat_a, heat_b = equations(*self.own())
        heat = heat_a if side == "a" else heat_b
        return np.broadcast_to(evaluate_with(heat, {"Ta": p.node(self.a), "Tb": p.node(self.b), "I": i}),
                               (p.X.shape[0],))

    def thermal_conductance(self):
        return self.a, self.b, self.conductance

    # ---- netlist ---------------------------------------------------------------------------
    def netlist(self, w, s) -> None:
        pn, nn, ta, tb = (w.node(x) for x in (self.p, self.n, self.a, self.b))
        m, sense = f"x_{s}_m", f"vte_{s}"
        w.internal_node(m, self.name, lambda value: value(f"V({self.n})"))  # the sense holds 0 V
        values = {"Ta": w.v(ta), "Tb": w.v(tb), "I": f"I({sense})"}
        volt, heat_a, heat_b = (w.expr(x, values) for x in equations(*self.own()))
        w.add(f"bte_{s}", pn, m, f"V={volt}")
        w.add(sense, m, nn, "DC 0")
        w.add(f"bteqa_{s}", ta, 0, f"I={heat_a}")
        w.add(f"bteqb_{s}", 0, tb, f"I={heat_b}")
        for name, what in ((f"bte_{s}", "V(p) - V(n) = R*I + S*(T_b - T_a)"),
                           (sense, f"0 V sense: I({self.name}) from {self.p} to {self.n}"),
                           (f"bteqa_{s}", f"Q({self.name}.a): heat taken from {self.a}"),
                           (f"bteqb_{s}", f"Q({self.name}.b): heat given to {self.b}")):
            w.row(name, f"thermoelectric {self.name}: {what}")
        w.signal(f"I({self.name})", f"I({sense})")


def _read_couples(r, e: Thermoelectric, at) -> None:
    """`couples N material M leg AREA LENGTH`: S, R, K of N couples of two legs of a material."""
    n_t, mat_tok, area_t, len_t = at["couples"].children
    couples = r.const(n_t, U.NONE, "the number of couples", positive=True)
    mat = r.design.materials.get(str(mat_tok))
    if mat is None:
        close = difflib.get_close_matches(str(mat_tok), list(r.design.materials), n=1)
        raise r.err(mat_tok, f"unknown material `{mat_tok}`",
                    f"did you mean `{close[0]}`?" if close else "define it first with `material NAME { ... }`")
    area = r.const(area_t, U.AREA, "a leg area", positive=True)
    length = r.const(len_t, U.LENGTH, "a leg length", positive=True)
    props = (Binary("*", Const(2 * couples), mat.seebeck),
             Binary("*", Const(2 * couples * length / area), mat.resistivity),
             Binary("*", Const(2 * couples * area / length), mat.conductivity))
    values = [float(evaluate(x, T=300.0)) for x in props]
    if any(not isinstance(x, Const) and x.uses_vars for x in (mat.seebeck, mat.resistivity, mat.conductivity)):
        e.props = props
    e.seebeck, e.resistance, e.conductance = values
    if e.resistance <= 0 or e.conductance <= 0:
        raise r.err(mat_tok, f"material `{mat.name}` gives a module resistance or conductance that is not positive")
