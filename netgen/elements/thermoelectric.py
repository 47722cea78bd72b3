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

from netgen.elements import legs
from netgen.elements.base import MEAN, TA, TB, Equations, Kind
from netgen.model import units as U
from netgen.model.calculus import evaluate_with, split_scale, substitute
from netgen.model.design import ELECTRICAL, THERMAL, Node
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
    segments: int = 1  # slices per leg (legs.py); more than 1 only in the material form

    statement = "thermoelectric"
    attributes = ("pins", "sides", "seebeck", "resistance", "conductance", "couples", "rated", "hottest",
                  "segments")
    noun = "thermoelectric modules"
    branch = "I"
    signals = ("I", "P")
    sides = ("a", "b")
    recorded = "I"

    @property
    def terminals(self):
        return (self.p, self.n, self.a, self.b)

    def branches(self):
        return [(self.p, self.n, "pins")] + [(x, y, "sides") for x, y, _ in self.pieces()]

    def pieces(self) -> list[tuple[str, str, tuple | None]]:
        """(side-A node, side-B node, S R K expressions of T or None) of each slice of the
        module: the whole module, or its `segments` slices (legs.py)."""
        if self.segments == 1:
            return [(self.a, self.b, self.props)]
        props = legs.slice_props(self.props, self.segments)
        return [(x, y, props) for x, y in legs.slices(self)]

    def values_at(self, T):
        """S, R, K at mean side temperature T (float or array)."""
        if self.props is None:
            return self.seebeck, self.resistance, self.conductance
        return tuple(evaluate(e, T=T) for e in self.props)

    def own(self, props=False) -> tuple[Expr, Expr, Expr]:
        """S, R, K as expressions of Ta and Tb: of the whole module, or of one slice's `props`."""
        props = self.props if props is False else props
        if props is None:
            return Const(self.seebeck), Const(self.resistance), Const(self.conductance)
        return tuple(substitute(e, {"T": MEAN}) for e in props)

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
        if "segments" in at:
            _read_segments(r, e, at["segments"].children[0])
        if "hottest" in at:
            e.hottest = r.const(at["hottest"].children[0], U.TEMPERATURE, "the hottest allowed side temperature",
                                positive=True)
        r.design.elements.append(e)

    # ---- equations ---------------------------------------------------------------------
    @classmethod
    def stamp(cls, batch, st) -> None:
        p, q = st.nodes(batch, "p"), st.nodes(batch, "n")
        k = st.branches(batch)
        st.G.branch(p, q, k)  # the current leaves p and enters n; row k holds V(p) − V(n) − ...
        # Modules (or their slices) share compiled equations: lumped ones with S, R, K as
        # parameters, those of one material with its expressions, each scaled by its own factors.
        ni = st.node_index
        groups: dict = defaultdict(list)
        for i, e in enumerate(batch):
            for x, y, props in e.pieces():
                key = "lumped" if props is None else tuple(split_scale(v)[1] for v in props)
                groups[key].append((k[i], ni[x], ni[y], props, e))
        for key, members in groups.items():
            kk, a, b = (np.array([m[j] for m in members], dtype=np.int64) for j in range(3))
            if key == "lumped":
                S, R, K = Var("S"), Var("R"), Var("K")
                params = {"S": st.values([m[4] for m in members], "seebeck"),
                          "R": st.values([m[4] for m in members], "resistance"),
                          "K": st.values([m[4] for m in members], "conductance")}
            else:
                S, R, K = (Var(f) * substitute(x, {"T": MEAN}) for f, x in zip(("fS", "fR", "fK"), key))
                factors = np.array([[split_scale(v)[0] for v in m[3]] for m in members]).T
                params = dict(zip(("fS", "fR", "fK"), factors))
            volt, heat_a, heat_b = equations(S, R, K)
            st.equations(Equations([(kk, -volt), (a, heat_a), (b, -heat_b)], {"Ta": a, "Tb": b, "I": kk}, params))

    def signal(self, kind, side, p):
        i = p.branch(self.name)
        if kind == "I":
            return i
        if kind == "P":
            return p.across(self.p, self.n) * i
        x, y, props = self.pieces()[0 if side == "a" else -1]
        _, heat_a, heat_b = equations(*self.own(props))
        heat = heat_a if side == "a" else heat_b
        return np.broadcast_to(evaluate_with(heat, {"Ta": p.node(x), "Tb": p.node(y), "I": i}),
                               (p.X.shape[0],))

    def thermal_conductance(self):
        return self.a, self.b, self.conductance

    # ---- netlist ---------------------------------------------------------------------------
    def netlist(self, w, s) -> None:
        pn, nn = w.node(self.p), w.node(self.n)
        m, sense = f"x_{s}_m", f"vte_{s}"
        w.internal_node(m, self.name, lambda value: value(f"V({self.n})"))  # the sense holds 0 V
        pieces = self.pieces()
        many = len(pieces) > 1
        # A segmented module: its slices' voltages in series, p → x_S_e1 → ... → m.
        ends = [pn] + [f"x_{s}_e{j}" for j in range(1, len(pieces))] + [m]
        trees = [equations(*self.own(props)) for _, _, props in pieces]
        for j in range(1, len(pieces)):
            w.internal_node(ends[j], self.name, self._chain_value(pieces[j:], trees[j:]))
        heats = []
        for j, ((x, y, _), eqs) in enumerate(zip(pieces, trees), 1):
            ta, tb = w.node(x), w.node(y)
            values = {"Ta": w.v(ta), "Tb": w.v(tb), "I": f"I({sense})"}
            volt, heat_a, heat_b = (w.expr(z, values) for z in eqs)
            tag, where = (f"{s}_{j}", f" slice {j}") if many else (s, "")
            w.add(f"bte_{tag}", ends[j - 1], ends[j], f"V={volt}")
            w.row(f"bte_{tag}", f"thermoelectric {self.name}{where}: "
                  + ("V = R*I + S*(T_b - T_a)" if many else "V(p) - V(n) = R*I + S*(T_b - T_a)"))
            side_a = f"Q({self.name}.a): " if j == 1 else ""
            side_b = f"Q({self.name}.b): " if j == len(pieces) else ""
            heats += [(f"bteqa_{tag}", ta, 0, f"I={heat_a}", f"thermoelectric {self.name}{where}: {side_a}heat taken from {x}"),
                      (f"bteqb_{tag}", 0, tb, f"I={heat_b}", f"thermoelectric {self.name}{where}: {side_b}heat given to {y}")]
        w.add(sense, m, nn, "DC 0")
        w.row(sense, f"thermoelectric {self.name}: 0 V sense: I({self.name}) from {self.p} to {self.n}")
        for name, na, nb, value, what in heats:
            w.add(name, na, nb, value)
            w.row(name, what)
        w.signal(f"I({self.name})", f"I({sense})")

    def _chain_value(self, rest, trees):
        """The voltage of the series node before slices `rest`: V(n) plus their voltages."""
        def value(lookup):
            i = lookup(f"I({self.name})")
            return lookup(f"V({self.n})") + sum(
                float(evaluate_with(volt, {"Ta": lookup(f"T({x})"), "Tb": lookup(f"T({y})"), "I": i}))
                for (x, y, _), (volt, _, _) in zip(rest, trees))
        return value


def _read_segments(r, e: Thermoelectric, tree) -> None:
    """`segments N`: each leg of a material-form module cut into N slices (legs.py), with the
    internal thermal nodes NAME.joint1 .. NAME.joint{N-1} added to the design."""
    if e.form != "couples":
        raise r.err(tree, f"`segments` needs the material form of thermoelectric `{e.name}`",
                    "slices take the material's properties at their own temperature: write "
                    "`couples N material M leg AREA LENGTH  segments 20`")
    n = r.const(tree, U.NONE, "the number of segments", positive=True)
    if n != int(n) or n > legs.MAX_SEGMENTS:
        raise r.err(tree, f"the number of segments must be a whole number from 1 to {legs.MAX_SEGMENTS}, not {n:g}",
                    "for example `segments 20`")
    e.segments = int(n)
    if e.segments > 1 and e.props is None:  # constant properties: sliced all the same
        e.props = tuple(Const(v) for v in (e.seebeck, e.resistance, e.conductance))
    for name in legs.joint_names(e.name, e.segments):
        if name in r.design.nodes:
            raise r.err(tree, f"node `{name}` is already used; the slices of `{e.name}` need it as their joint",
                        f"rename the node or the module `{e.name}`")
        r.design.nodes[name] = Node(name, THERMAL, e.loc, owner=e.name)


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
