"""`controller NAME SIGNAL at SETPOINT by SOURCE { proportional KP  integral KI  derivative KD
output LO .. HI  tracking TT  filter TF }`: a PID controller that sets a declared source's value.

The error is e = SIGNAL − SETPOINT (positive when the signal is above its setpoint), and the
controller's demand, before its limits, is

    demand = BIAS + KP·e + integral + (KD·e − derivative)/TF

where BIAS is the driven source's own declared value (the output at zero error with an empty
integral), `integral` and `derivative` are states of their own:

    integral'     = KI·e − (demand − output)/TT           (back-calculation: Åström & Murray,
    TF·derivative' = KD·e − derivative                     Feedback Systems, ch. 10, §10.4-10.5)

and output = min(max(demand, LO), HI). The source's value is `output`. While the output is held
at a limit the tracking term pulls the integral back towards the value that alone gives the
limit: with the default TT = KP/KI (the integral time) the integral relaxes to exactly
`limit − BIAS`, whatever the error, and never grows past it. Everything is a row of the DAE: the
integral and the derivative filter are states (a C term), the demand and the output algebraic
rows, and the limits a piecewise-linear term with its exact (one-sided) Jacobian, so the steady
state, the transient and the modes all see the controller. A transient starts with the integral
at `start` (default 0: an empty integral), the derivative filter settled.
"""
from __future__ import annotations

from dataclasses import dataclass

from netgen.elements.base import Equations, Kind, ix
from netgen.model import units as U
from netgen.model.design import Loc
from netgen.model.errors import NetgenError
from netgen.model.expr import Const, Func, Var, Wave

# The output: the demand held between its limits.
OUTPUT = Func("min", (Func("max", (Var("demand"), Var("lo"))), Var("hi")))

SENSED = {"T": U.TEMPERATURE, "V": U.VOLTAGE}
DRIVEN = {"VoltageSource": U.VOLTAGE, "CurrentSource": U.CURRENT, "Heat": U.POWER}


@dataclass
class Gain:
    """A gain as written: its SI value, its dimension and where it stands."""

    value: float
    dim: U.Dim
    loc: Loc


def labels(name: str) -> dict[str, str]:
    """The controller's unknowns by role, as signal texts."""
    return {"output": f"U({name})", "demand": f"U({name}.demand)",
            "integral": f"U({name}.integral)", "derivative": f"U({name}.derivative)"}


@dataclass
class Controller(Kind):
    sensed: tuple[str, ...] = ()  # the signal's kind then its node(s): ("T", "die")
    setpoint: Wave | None = None
    source: str = ""
    source_loc: Loc | None = None
    gains: dict | None = None  # "proportional" / "integral" / "derivative" → Gain
    limits: tuple[float, float] | None = None
    limits_loc: Loc | None = None
    tracking: float | None = None
    filter: float | None = None
    start: float = 0.0  # the integral at the start of a transient
    # Filled in once the whole file is read (`resolve`):
    bias: Wave | None = None
    unit: str = ""

    statement = "controller"
    noun = "controllers"
    signals = ("U",)
    attributes = ("proportional", "integral", "derivative", "output", "tracking", "filter", "start")

    @property
    def terminals(self):
        return tuple(self.sensed[1:])

    def branches(self):
        return []

    # ---- reading ---------------------------------------------------------------------
    @staticmethod
    def read(r, t) -> None:
        name_tok, sig, set_t, src_tok, attrs = t.children
        name = r.element_name(name_tok)
        kind = str(sig.children[0])
        names = tuple(r.qualify(str(c)) for c in sig.children[1:] if c is not None)
        if kind not in SENSED:
            raise r.err(sig, f"a controller senses a temperature or a voltage, not `{kind}(...)`",
                        "write e.g. `T(die)` or `V(out)`")
        r.pending_signals.append((kind, names, sig))
        setpoint, _ = r.wave(set_t, SENSED[kind], "a setpoint")
        at = r.attrs(attrs, Controller.attributes, "controller")
        gains = {}
        for key in ("proportional", "integral", "derivative"):
            if key in at:
                tree = at[key].children[0]
                g = r.typed(tree)
                if not isinstance(g.expr, Const):
                    raise r.err(tree, f"a {key} gain must be constant")
                gains[key] = Gain(g.value, g.dim, r.loc(tree))
        if not gains:
            raise r.err(name_tok, f"controller `{name}` has no gain",
                        "give at least one of `proportional`, `integral`, `derivative`, e.g. `proportional 0.8 A/K`")
        limits = limits_loc = None
        if "output" in at:
            iv = at["output"].children[0]
            lo_t, hi_t = iv.children
            lo, hi = r.typed(lo_t), r.typed(hi_t)
            for tree, v in ((lo_t, lo), (hi_t, hi)):
                if not isinstance(v.expr, Const):
                    raise r.err(tree, "an output limit must be constant")
            if lo.dim != hi.dim:
                raise r.err(hi_t, f"the limits are in {U.unit_name(lo.dim)} and {U.unit_name(hi.dim)}",
                            "give both in the driven source's unit, e.g. `output 0 A .. 3 A`")
            if hi.value <= lo.value:
                raise r.err(iv, f"the output range {lo.value:g} .. {hi.value:g} is empty or reversed",
                            "write the lower limit first")
            limits, limits_loc = (lo.value, hi.value), r.loc(iv)
            gains["output"] = Gain(lo.value, lo.dim, r.loc(lo_t))  # its unit is checked with the gains
        start = 0.0
        if "start" in at:
            if "integral" not in gains:
                raise r.err(at["start"], "`start` is the integral's start value, and there is no integral",
                            "give `integral KI`, or drop `start`")
            tree = at["start"].children[0]
            g = r.typed(tree)
            if not isinstance(g.expr, Const):
                raise r.err(tree, "the integral's start value must be constant")
            gains["start"] = Gain(g.value, g.dim, r.loc(tree))  # its unit is checked with the gains
            start = g.value
        times = {}
        for key in ("tracking", "filter"):
            if key in at:
                times[key] = r.const(at[key].children[0], U.TIME, f"a {key} time", positive=True)
        if "tracking" in times and (limits is None or "integral" not in gains):
            raise r.err(at["tracking"], "`tracking` acts only on an integral held at an output limit",
                        "give `integral` and `output LO .. HI`, or drop `tracking`")
        if "filter" in times and "derivative" not in gains:
            raise r.err(at["filter"], "`filter` smooths the derivative term, and there is none",
                        "give `derivative KD`, or drop `filter`")
        kp = gains.get("proportional")
        if "integral" in gains and limits is not None and "tracking" not in times and (kp is None or kp.value == 0):
            raise r.err(name_tok, "with an integral, output limits and no proportional gain, the tracking time "
                        "has no default", "give it, e.g. `tracking 10 s`")
        if "derivative" in gains and "filter" not in times and (kp is None or kp.value == 0):
            raise r.err(name_tok, "with a derivative and no proportional gain, the derivative filter time has no "
                        "default", "give it, e.g. `filter 1 s`")
        r.design.elements.append(Controller(
            name, r.loc(name_tok), sensed=(kind, *names), setpoint=setpoint, source=r.prefix + str(src_tok),
            source_loc=r.loc(src_tok), gains=gains, limits=limits, limits_loc=limits_loc,
            tracking=times.get("tracking"), filter=times.get("filter"), start=start))

    def resolve(self, design) -> list[NetgenError]:
        """Once the file is read: the driven source exists, is driven once, and the gains'
        units fit it. Marks the source as driven and takes its value as the bias."""
        src = next((e for e in design.elements if e.name == self.source), None)
        if src is None or type(src).__name__ not in DRIVEN:
            what = "no element" if src is None else f"{type(src).noun[:-1]} `{self.source}`"
            return [NetgenError(f"a controller drives a `source` or a `heat` input; `{self.source}` is {what}" if src
                                else f"unknown source `{self.source}`", self.source_loc,
                                "declare it, e.g. `source drive p 0 0 A`, and name it after `by`")]
        if getattr(src, "controller", None):
            return [NetgenError(f"source `{self.source}` is already driven by controller `{src.controller}`",
                                self.source_loc, "a source takes one controller; drive another source")]
        src.controller = self.name
        out = DRIVEN[type(src).__name__]
        sig = SENSED[self.sensed[0]]
        want = {"proportional": out / sig, "integral": out / (sig * U.TIME), "derivative": out * U.TIME / sig,
                "output": out, "start": out}
        errors = []
        for key, g in self.gains.items():
            if g.dim != want[key]:
                what = {"output": "an output limit", "start": "the integral's start value"}.get(key, f"the {key} gain")
                have = "no unit" if g.dim.dimensionless else U.unit_name(g.dim)
                rule = {"proportional": "the source's unit per the signal's",
                        "integral": "the source's unit per the signal's, per second",
                        "derivative": "the source's unit times seconds per the signal's"}.get(key, "the source's unit")
                errors.append(NetgenError(
                    f"{what} of controller `{self.name}` needs {U.unit_name(want[key])}, not {have}", g.loc,
                    f"`{self.source}` is in {U.unit_name(out)} and {self.sensed[0]}(...) in {U.unit_name(sig)}: "
                    f"{rule}"))
        self.bias = src.waves()["power" if type(src).__name__ == "Heat" else "value"]
        self.unit = U.unit_name(out)
        return errors

    # ---- the equations -------------------------------------------------------------------
    def gain(self, key: str) -> float:
        g = self.gains.get(key)
        return g.value if g else 0.0

    @property
    def tracking_time(self) -> float | None:
        if self.limits is None or "integral" not in self.gains:
            return None
        return self.tracking if self.tracking is not None else abs(self.gain("proportional") / self.gain("integral"))

    @property
    def filter_time(self) -> float | None:
        if "derivative" not in self.gains:
            return None
        return self.filter if self.filter is not None else abs(self.gain("derivative") / self.gain("proportional")) / 10

    def unknowns(self) -> list[tuple[str, str]]:
        lab = labels(self.name)
        out = [(lab["output"], "U"), (lab["demand"], "U")]
        if "integral" in self.gains:
            out.append((lab["integral"], "U"))
        if "derivative" in self.gains:
            out.append((lab["derivative"], "U"))
        return out

    @classmethod
    def stamp(cls, batch, st) -> None:
        ni, bi, n = st.node_index, st.branch_index, st.n
        limited = []
        for e in batch:
            lab = labels(e.name)
            u, v = bi[lab["output"]], bi[lab["demand"]]
            si = ni[e.sensed[1]]
            sj = ni[e.sensed[2]] if len(e.sensed) == 3 else n
            kp, ki, kd = e.gain("proportional"), e.gain("integral"), e.gain("derivative")
            # demand − kp·s − integral − (kd/tf)·s + derivative/tf = bias − (kp + kd/tf)·setpoint
            tf = e.filter_time
            k_s = kp + (kd / tf if tf else 0.0)
            st.G.add([v, v, v], [v, si, sj], [1.0, -k_s, k_s])
            st.source([v], 1.0, [e.bias])
            if k_s:
                st.source([v], -k_s, [e.setpoint])
            if ki:
                z = bi[lab["integral"]]
                st.G.add([v], [z], [-1.0])
                st.C.add([z], [z], [1.0])
                st.G.add([z, z], [si, sj], [-ki, ki])
                st.source([z], -ki, [e.setpoint])
                st.start_branches.append((z, e.start))  # a transient starts from this integral
                tt = e.tracking_time
                if tt:
                    st.G.add([z, z], [v, u], [1.0 / tt, -1.0 / tt])
            if tf:
                dd = bi[lab["derivative"]]
                st.G.add([v], [dd], [1.0 / tf])
                st.C.add([dd], [dd], [tf])
                st.G.add([dd, dd, dd], [dd, si, sj], [1.0, -kd, kd])
                st.source([dd], -kd, [e.setpoint])
            # output = demand, or the demand between the limits
            st.G.add([u], [u], [1.0])
            if e.limits is None:
                st.G.add([u], [v], [-1.0])
            else:
                limited.append(e)
        if limited:
            rows = ix([bi[labels(e.name)["output"]] for e in limited])
            st.equations(Equations([(rows, -OUTPUT)],
                                   {"demand": [bi[labels(e.name)["demand"]] for e in limited]},
                                   {"lo": [e.limits[0] for e in limited], "hi": [e.limits[1] for e in limited]}))

    # ---- signals and the netlist ------------------------------------------------------------
    def signal(self, kind, side, p):
        return p.branch(f"U({self.name}{'.' + side if side else ''})")

    def waves(self):
        return {"setpoint": self.setpoint}

    def netlist(self, w, s) -> None:
        lab = labels(self.name)
        node = {role: f"x_{s}_{role[:3]}" for role in lab}
        for role, text in lab.items():
            if (role == "integral" and "integral" not in self.gains) or (role == "derivative" and "derivative" not in self.gains):
                continue
            w.internal_node(node[role], self.name, lambda value, text=text: value(text))
            w.signal(text, f"V({node[role]})")
        sensed = w.v(w.node(self.sensed[1]))
        if len(self.sensed) == 3:
            sensed = f"({sensed}-{w.v(w.node(self.sensed[2]))})"
        setp = w.source("V", "set", s, f"x_{s}_set", "0", self.setpoint)
        w.internal_node(f"x_{s}_set", self.name, lambda value: self.setpoint.at(0.0))
        w.row(setp, f"controller {self.name}: setpoint, {U.unit_name(SENSED[self.sensed[0]])}")
        err = f"({sensed}-V(x_{s}_set))"
        bias = w.source("V", "bias", s, f"x_{s}_bia", "0", self.bias)
        w.internal_node(f"x_{s}_bia", self.name, lambda value: self.bias.at(0.0))
        w.row(bias, f"controller {self.name}: bias (the source's own value), {self.unit}")
        kp, ki, kd = self.gain("proportional"), self.gain("integral"), self.gain("derivative")
        tf, tt = self.filter_time, self.tracking_time
        terms = [f"V(x_{s}_bia)", f"{w.num(kp)}*{err}"]
        if ki:
            terms.append(f"V({node['integral']})")
            track = f"-(V({node['demand']})-V({node['output']}))/{w.num(tt)}" if tt else ""
            w.add(f"c_{s}_int", node["integral"], 0, "1")
            w.add(f"b_{s}_int", 0, node["integral"], f"I={w.num(ki)}*{err}{track}")
            w.row(f"c_{s}_int", f"controller {self.name}: integrator, 1 F")
            w.row(f"b_{s}_int", f"controller {self.name}: integrator input, {self.unit}/s")
        if tf:
            terms.append(f"({w.num(kd)}*{err}-V({node['derivative']}))/{w.num(tf)}")
            w.add(f"c_{s}_der", node["derivative"], 0, w.num(tf))
            w.add(f"b_{s}_der", 0, node["derivative"], f"I={w.num(kd)}*{err}-V({node['derivative']})")
            w.row(f"c_{s}_der", f"controller {self.name}: derivative filter, {w.num(tf)} F")
            w.row(f"b_{s}_der", f"controller {self.name}: derivative filter input")
        w.add(f"b_{s}_dem", node["demand"], 0, "V=" + "+".join(terms))
        w.row(f"b_{s}_dem", f"controller {self.name}: demand before the limits, {self.unit}")
        if self.limits is None:
            out = f"V={w.v(node['demand'])}"
        else:
            out = "V=" + w.expr(OUTPUT, {"demand": f"V({node['demand']})", "lo": self.limits[0], "hi": self.limits[1]})
        w.add(f"b_{s}_out", node["output"], 0, out)
        w.row(f"b_{s}_out", f"controller {self.name}: output, {self.unit}")


def output_node(w, controller: str) -> str:
    """The netlist node that carries a controller's output (for the source it drives)."""
    return f"x_{w.names.stems[controller]}_out"


def _split(name: str) -> tuple[str, str | None]:
    base, _, role = name.rpartition(".")
    return (base, role) if base and role in ("demand", "integral", "derivative") else (name, None)


def _find(d, name: str):
    base, role = _split(name)
    e = next((e for e in d.elements if e.name == base and isinstance(e, Controller)), None)
    return e, role


def controller_signal(d, names: tuple[str, ...]) -> None:
    """Raise ValueError(message, hint) when `U(...)` does not name a controller's unknown."""
    if len(names) != 1:
        raise ValueError("`U(...)` takes one controller", None)
    e, role = _find(d, names[0])
    if e is None:
        ctl = [x.name for x in d.elements if isinstance(x, Controller)]
        raise ValueError(f"unknown controller `{_split(names[0])[0]}`",
                         f"controllers: {', '.join(ctl)}" if ctl else "U(NAME) reads a `controller`")
    if role is not None and labels(e.name)[role] not in (t for t, _ in e.unknowns()):
        raise ValueError(f"controller `{e.name}` has no {role} term", f"read U({e.name}) for its output")


def controlled_dim(d, names: tuple[str, ...], err) -> U.Dim:
    """The unit of `U(...)` in an expression: the driven source's, from the controller's gains."""
    e, _ = _find(d, names[0]) if len(names) == 1 else (None, None)
    if e is None:
        raise err(f"`U({', '.join(names)})` is not a controller read above this line",
                  "declare the controller before an expectation on its output")
    sig = SENSED[e.sensed[0]]
    g = next(iter(e.gains.items()))
    key, gain = g
    return {"proportional": gain.dim * sig, "integral": gain.dim * sig * U.TIME,
            "derivative": gain.dim * sig / U.TIME, "output": gain.dim, "start": gain.dim}[key]
