"""`switch NAME A B closed T1 .. T2[, ...] [on R] [off R]`: a resistance that is `on` while
closed and `off` otherwise; its state changes only at the listed times.

`switch NAME A B [opens when CONDITION] [closes when CONDITION] [on R] [off R]`: a switch that
acts on conditions of signals (`Q(tec.a) < 0 W`, `T(body) < T(bath)`, several joined by `and`).
With `opens when` alone it starts closed and opens once, the first time its condition becomes
true; with `closes when` alone it starts open and closes once. With both it toggles: it starts
closed if its closing condition holds at the start (open otherwise), then closes whenever the
closing condition becomes true and opens whenever the opening one does. That is an on-off
thermostat with hysteresis: `closes when T(x) > 5 degC  opens when T(x) < 3 degC`. The
transient locates each event on its steps (netgen/solve/events.py)."""
from __future__ import annotations

from dataclasses import dataclass, field

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
import numpy as np

from netgen.model import units as U
from netgen.model.expr import Binary, Const, Func, SignalRef, Unary, Var, evaluate


@dataclass
class Switch(TwoTerminal):
    """Closed (r_on) during the listed intervals, open (r_off) otherwise."""

    intervals: list[tuple[float, float]] = field(default_factory=list)
    r_on: float = 1e-3
    r_off: float = 1e9
    # Conditions: each a list of (lhs, "<" or ">" ..., rhs) expression trees of signals, all true at once.
    opens_when: list | None = None
    closes_when: list | None = None
    written: dict = field(default_factory=dict)  # "opens"/"closes" → the condition as written

    statement = "switch"
    noun = "switches"
    signals = ("I", "P")

    @property
    def conditional(self) -> bool:
        return self.opens_when is not None or self.closes_when is not None

    @property
    def starts_closed(self) -> bool:
        """A conditional switch's state before its conditions are looked at: closed when only
        `opens when` can change it, open otherwise (the start of the run may change it at once)."""
        return self.closes_when is None

    def closed_at(self, t: float, left: bool = False) -> bool:
        """Closed on [t1, t2): the state just after `t`; with `left`, on (t1, t2], the state just before.
        A conditional switch: its starting state (the run's events say the rest)."""
        if self.conditional:
            return self.starts_closed
        if left:
            return any(t1 < t <= t2 for t1, t2 in self.intervals)
        return any(t1 <= t < t2 for t1, t2 in self.intervals)

    def conductance(self, closed: bool) -> float:
        return 1.0 / (self.r_on if closed else self.r_off)

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        at = r.attrs(t.children[3], ("closed", "opens", "closes", "on", "off"), "switch")
        when = {key: read_condition(r, at[key].children[0]) for key in ("opens", "closes") if key in at}
        if "closed" not in at and not when:
            raise r.err(t, f"switch `{name}` needs `closed T1 .. T2`, or `opens when` / `closes when` a condition",
                        "e.g. `closed 1 s .. 2 s, 5 s .. 6 s` or `opens when Q(tec.a) < 0 W`")
        if "closed" in at and when:
            raise r.err(at["closed"], f"switch `{name}` is given both times (`closed`) and conditions",
                        "a switch follows either its times or its conditions")
        intervals = []
        for iv in at["closed"].children if "closed" in at else ():
            t1 = r.const(iv.children[0], U.TIME, "a switch time", nonneg=True)
            t2 = r.const(iv.children[1], U.TIME, "a switch time", nonneg=True)
            if t2 <= t1:
                raise r.err(iv, f"the interval {t1:g} s .. {t2:g} s is empty or reversed",
                            "write the earlier time first")
            intervals.append((t1, t2))
        intervals.sort()
        for (x1, x2), (y1, y2) in zip(intervals, intervals[1:]):
            if y1 < x2:
                raise r.err(at["closed"], "the closed intervals of a switch overlap")
        r_on = r.const(at["on"].children[0], U.RESISTANCE, "an on resistance", positive=True) if "on" in at else 1e-3
        r_off = r.const(at["off"].children[0], U.RESISTANCE, "an off resistance", positive=True) if "off" in at else 1e9
        r.design.elements.append(Switch(
            name, loc, a=a, b=b, intervals=intervals, r_on=r_on, r_off=r_off,
            opens_when=when["opens"][0] if "opens" in when else None,
            closes_when=when["closes"][0] if "closes" in when else None,
            written={k: v[1] for k, v in when.items()}))

    @classmethod
    def stamp(cls, batch, st) -> None:
        # Their conductances change with time: the System fills them in by switch state.
        st.switches += list(zip(batch, st.nodes(batch, "a").tolist(), st.nodes(batch, "b").tolist()))

    def switch_times(self) -> list[float]:
        return [t for iv in self.intervals for t in iv]

    def signal(self, kind, side, p):
        closed = p.timeline.get(self.name, self.closed_at)  # a conditional switch: as the run's events say
        i = p.each(lambda t, left: self.conductance(closed(t, left))) * p.across(self.a, self.b)
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        return [EnergyTerm("lost", f"P({self.name})")]

    def netlist(self, w, s) -> None:
        if self.conditional:
            return conditional_netlist(self, w, s)
        ctl = f"x_{s}_ctl"
        w.internal_node(ctl, self.name, lambda value: float(self.closed_at(0.0)))
        pts = [(0.0, float(self.closed_at(0.0)))]
        for t1, t2 in self.intervals:
            pts += [(t1, 0.0), (t1, 1.0), (t2, 1.0), (t2, 0.0)]
        pts = [pts[0]] + [p for p in pts[1:] if p[0] > 0]
        w.add(f"vsw_{s}", ctl, 0, f"DC {w.num(pts[0][1])} {w.pwl(pts)}")
        w.add(f"s_{s}", w.node(self.a), w.node(self.b), ctl, 0, f"msw_{s}")
        w.models.append(f".model msw_{s} SW(RON={w.num(self.r_on)} ROFF={w.num(self.r_off)} VT=0.5 VH=0)")
        w.notes.add("switch")
        w.row(f"s_{s}", f"switch {self.name}: closed while V({ctl}) > 0.5")
        w.row(f"vsw_{s}", f"switch {self.name}: control, 1 = closed")
        w.row(f"msw_{s}", f"switch {self.name}: model with its on and off resistances")


def read_condition(r, tree) -> tuple[list, str]:
    """`A < B and C > D ...` → ([(lhs, cmp, rhs), ...], the text as written). Each side is an
    expression of signals; both sides of a comparison share a unit, and an absolute temperature
    in `degC` is compared only with one (a difference of temperatures is in K)."""
    out = []
    for comp in tree.children:
        lhs_t, cmp_tok, rhs_t = comp.children
        cmp = str(cmp_tok)
        if cmp == "=":
            raise r.err(cmp_tok, "a condition compares with `<`, `<=`, `>` or `>=`, not `=`",
                        "a signal is rarely exactly equal to a value: write e.g. `T(x) > 5 degC`")
        lhs, rhs = r.typed(lhs_t, signals_ok=True), r.typed(rhs_t, signals_ok=True)
        if lhs.dim != rhs.dim:
            raise r.err(rhs_t, f"the two sides are in {U.unit_name(lhs.dim)} and {U.unit_name(rhs.dim)}",
                        "compare quantities of one kind, e.g. `Q(tec.a) < 0 W`")
        if not any(isinstance(n, SignalRef) for side in (lhs, rhs) for n in side.expr.walk()):
            raise r.err(comp, "a condition needs a signal, e.g. `T(x) > 5 degC`")
        for this, other, other_t in ((lhs, rhs, rhs_t), (rhs, lhs, lhs_t)):
            if this.celsius and isinstance(this.expr, Const) and _absolute(other.expr) == 0:
                raise r.err(other_t, "compared with an absolute temperature (`degC`), this is a temperature "
                            "difference", "differences are in K: write e.g. `T(a) - T(b) > 1 K`")
        out.append((lhs.expr, cmp, rhs.expr))
    text = r.loc(tree).text
    return out, " and ".join(f"{_span(r, c.children[0], c.children[2])}" for c in tree.children) or text


def _span(r, first, last) -> str:
    """The source text from the start of `first` to the end of `last` (one line)."""
    line = r.lines[first.meta.line - 1] if first.meta.line == last.meta.end_line else ""
    return line[first.meta.column - 1: last.meta.end_column - 1].strip() if line else ""


def _absolute(e) -> int | None:
    """How many absolute temperatures a sum of signals adds up to (0: a difference); the rule of
    language/expressions.py `absolute_temperatures`, which this layer may not import."""
    if isinstance(e, SignalRef):
        return 1 if e.kind == "T" else None
    if isinstance(e, Const):
        return 0
    if isinstance(e, Unary):
        a = _absolute(e.a)
        return None if a is None else -a
    if isinstance(e, Binary) and e.op in ("+", "-"):
        a, b = _absolute(e.a), _absolute(e.b)
        return None if a is None or b is None else (a + b if e.op == "+" else a - b)
    if isinstance(e, Binary) and e.op in ("*", "/") and isinstance(e.b, Const):
        return 0 if _absolute(e.a) == 0 else None
    return None


BIG = 1e12  # a control threshold no signal reaches: a switch model's hysteresis made one-way (a latch)


def _margin(clause):
    """A clause's margin, positive exactly when it holds: the smallest of its comparisons'."""
    parts = [(rhs - lhs) if cmp.startswith("<") else (lhs - rhs) for lhs, cmp, rhs in clause]
    return parts[0] if len(parts) == 1 else Func("min", tuple(parts))


def _node_text(w, e) -> str | None:
    """An expression of signals as B-source text of node voltages, or None when it reads a
    signal that is no node's value (a heat flow, a current)."""
    refs = {}
    for n in e.walk():
        if isinstance(n, SignalRef):
            if n.kind not in ("T", "V"):
                return None
            v = [w.v(w.node(a)) for a in n.args]
            refs[n.text] = v[0] if len(v) == 1 else f"({v[0]}-{v[1]})"
    return w.expr(_as_vars(e, refs), refs)


def _value_at(e, value) -> float:
    """An expression of node signals in a state of our unknowns (`value(name)`)."""
    sig = {}
    for n in e.walk():
        if isinstance(n, SignalRef):
            v = [value(f"{n.kind}({a})") for a in n.args]
            sig[n.text] = np.array([v[0] - (v[1] if len(v) == 2 else 0.0)])
    return float(np.atleast_1d(evaluate(e, 0.0, signals=sig))[0])


def _as_vars(e, refs):
    """The expression with each signal reference as a variable named by its text."""
    if isinstance(e, SignalRef):
        return Var(e.text)
    if isinstance(e, Unary):
        return Unary(e.op, _as_vars(e.a, refs))
    if isinstance(e, Binary):
        return Binary(e.op, _as_vars(e.a, refs), _as_vars(e.b, refs))
    if isinstance(e, Func):
        return Func(e.name, tuple(_as_vars(x, refs) for x in e.args))
    return e


def conditional_netlist(sw: Switch, w, s) -> None:
    """The closest a circuit simulator comes: an S element whose control is a B source of the
    condition's margin, its hysteresis making it a latch (one clause) or a thermostat (two clauses
    on one expression); otherwise a control that changes at the times our run found."""
    ctl = f"x_{s}_ctl"
    a, b = w.node(sw.a), w.node(sw.b)
    both = sw.opens_when is not None and sw.closes_when is not None
    band = _band(sw) if both else None
    if both:
        control = band[0] if band is not None else None
    elif sw.opens_when is not None:
        control = -_margin(sw.opens_when)
    else:
        control = _margin(sw.closes_when)
    # In `netgen crosscheck` (our run's events known) the switch changes at our times, so the rest
    # of the circuit is compared on the same switching; on its own, the netlist acts on the condition.
    text = _node_text(w, control) if control is not None and w.events is None else None
    words = " and ".join(f"{k} when {v}" for k, v in sw.written.items())
    if text is not None:
        if both:
            _, hi, lo = band
        elif sw.opens_when is not None:
            lo, hi = 0.0, BIG
        else:
            lo, hi = -BIG, 0.0
        w.add(f"bsw_{s}", ctl, 0, f"V={text}")
        w.internal_node(ctl, sw.name, lambda value: _value_at(control, value))
        vt, vh = 0.5 * (hi + lo), 0.5 * (hi - lo)
        w.models.append(f".model msw_{s} SW(RON={w.num(sw.r_on)} ROFF={w.num(sw.r_off)} VT={w.num(vt)} VH={w.num(vh)})")
        w.add(f"s_{s}", a, b, ctl, 0, f"msw_{s}", "ON" if sw.starts_closed else "OFF")
        w.switch_notes.append(f"switch {sw.name} ({words}) is an S element driven by a B source of its condition, "
                              "with the model's hysteresis holding its state; the simulator changes it at its own "
                              "time step, without locating the instant")
        w.row(f"bsw_{s}", f"switch {sw.name}: its condition, closed above {w.num(hi)}, open below {w.num(lo)}")
    else:
        pts = [(0.0, float(sw.starts_closed))]
        state = sw.starts_closed
        known = w.events is not None
        for ev in w.events or []:
            if ev["element"] != sw.name:
                continue
            new = ev["what"] == "closes"
            if ev["time"] == 0.0:
                pts = [(0.0, float(new))]
            else:
                pts += [(ev["time"], float(state)), (ev["time"], float(new))]
            state = new
        w.internal_node(ctl, sw.name, lambda value, v0=pts[0][1]: v0)
        w.add(f"vsw_{s}", ctl, 0, f"DC {w.num(pts[0][1])} {w.pwl(pts)}" if len(pts) > 1 else f"DC {w.num(pts[0][1])}")
        w.add(f"s_{s}", a, b, ctl, 0, f"msw_{s}")
        w.models.append(f".model msw_{s} SW(RON={w.num(sw.r_on)} ROFF={w.num(sw.r_off)} VT=0.5 VH=0)")
        w.notes.add("switch")
        why = ("written to change at the times netgen's run found (the cross-check compares the rest of the "
               "circuit on the same switching)" if known else
               "its condition reads signals the netlist cannot compute from its nodes, or two conditions on "
               "different expressions: it is written in its starting state (netgen crosscheck writes it with "
               "the times netgen's run finds)")
        w.switch_notes.append(f"switch {sw.name} ({words}) is {why}")
        w.row(f"vsw_{s}", f"switch {sw.name}: control, 1 = closed")
    w.row(f"s_{s}", f"switch {sw.name}")
    w.row(f"msw_{s}", f"switch {sw.name}: model with its on and off resistances")


def _band(sw: Switch):
    """A thermostat's two clauses as one expression e and two constants: (e, close above, open
    below) in terms of e's sign convention `e > 0`, or None when they are not of that form."""
    def single(clause):
        if len(clause) != 1:
            return None
        lhs, cmp, rhs = clause[0]
        if isinstance(rhs, Const) and not isinstance(lhs, Const):
            return lhs, (1.0 if cmp.startswith(">") else -1.0), rhs.v
        if isinstance(lhs, Const) and not isinstance(rhs, Const):
            return rhs, (-1.0 if cmp.startswith(">") else 1.0), lhs.v
        return None
    c, o = single(sw.closes_when), single(sw.opens_when)
    if c is None or o is None or c[0] != o[0]:
        return None
    e, sc, vc = c
    _, so, vo = o
    if sc == so:
        return None
    # Control u = sc·e: closes when u > sc·vc, opens when u < sc·vo (so·e > so·vo with so = −sc).
    hi, lo = sc * vc, sc * vo
    if not hi > lo:
        return None
    return (e if sc > 0 else -e), hi, lo
