"""Design → a plain SPICE3 netlist in which kelvin are volts and watts are amperes."""
from __future__ import annotations

import textwrap
from collections import defaultdict
from dataclasses import dataclass, field

import numpy as np

from netgen.model.calculus import substitute
from netgen.model.design import ELECTRICAL, THERMAL, Design
from netgen.model.expr import Binary, Const, Expr, Func, Shape, Time, Unary, Var, Wave, evaluate
from netgen.spice.ac import excite
from netgen.spice.starts import Starts, starts_of

EDGE = 1e-3  # a jump becomes a linear edge this many output steps wide
SAMPLES = 1000  # evenly spaced points of a sampled PWL over the run, besides its corners
MAX_PRODUCT = 8  # integer powers up to this are written as products (ngspice's `^` takes |base|)
# Node values are ~300 K: reltol 1e-6 is 0.3 mK there, vntol 1 uK / 1 uV for values near zero.
# Under `uic` ngspice takes its first step (about TSTEP/100) without its error check; a source
# with a corner this share of the run after the start makes that first step a tenth of it at
# most, and from there the step grows under error control (at most doubling each step).
FIRST_STEP = 1e-8
OPTIONS = ".options reltol=1e-9 abstol=1e-12 vntol=1e-9 chgtol=1e-14 method=gear"


def num(x: float) -> str:
    """A plain SI number that reads back to the same float (no scale suffixes)."""
    return repr(float(x))


def _factor(x: float) -> str:
    """A number to sit inside an expression: negative ones in parentheses."""
    return num(x) if x >= 0 else f"({num(x)})"


def _unique(names, prefix: str) -> dict[str, str]:
    """Our name → prefix + lower-case name, `.` as `__`. SPICE ignores case, so of names equal
    after that, one already spelt so keeps it (else the first in sorted order); the others
    take _2, _3 ... in sorted order, skipping any name already in use."""
    groups: dict[str, list[str]] = defaultdict(list)
    base = lambda n: n.replace(".", "__").lower()
    for n in sorted(set(names), key=lambda n: (base(n) != n, n)):
        groups[prefix + base(n)].append(n)
    taken, out = set(groups), {}
    for base, members in groups.items():
        out[members[0]] = base
        k = 1
        for n in members[1:]:
            k += 1
            while f"{base}_{k}" in taken:
                k += 1
            out[n] = f"{base}_{k}"
            taken.add(out[n])
    return out


@dataclass
class Names:
    """How our names appear in the netlist. `signals` maps our signal text to the simulator's
    vector (with a leading `-` where the signs differ); `rows` is the header's name table."""

    nodes: dict[str, str]
    stems: dict[str, str]
    signals: dict[str, str] = field(default_factory=dict)
    rows: list[tuple[str, str]] = field(default_factory=list)
    edge: float = 0.0  # the widest edge a jump became, s (0 until the netlist is written)


def names(d: Design) -> Names:
    """The deterministic name map of a design (nodes, and element stems after the kind tag)."""
    thermal = [n.name for n in d.nodes.values() if n.domain == THERMAL]
    electrical = [n.name for n in d.nodes.values() if n.domain == ELECTRICAL and n.name not in d.grounds]
    nodes = {**_unique(thermal, "t_"), **_unique(electrical, "e_"), **{g: "0" for g in d.grounds}}
    return Names(nodes, _unique([e.name for e in d.elements], ""))


def bexpr(e: Expr, var: dict[str, str] | None = None) -> str:
    """An Expr of `time` (or of variables given as B-source text in `var`, such as a material's
    `T`) as a SPICE3 B-source expression, fully parenthesised."""
    rec = lambda x: bexpr(x, var)
    if isinstance(e, Const):
        return _factor(e.v)
    if isinstance(e, Time):
        return "time"
    if isinstance(e, Var):
        return (var or {})[e.name]
    if isinstance(e, Unary):
        return f"(-{rec(e.a)})"
    if isinstance(e, Binary):
        if e.op == "^":
            return _power(rec(e.a), e.b, var)
        return f"({rec(e.a)}{e.op}{rec(e.b)})"
    if isinstance(e, Func):
        args = [rec(a) for a in e.args]
        if e.name in ("min", "max"):  # SPICE3 has no min/max: (x+y ∓ |x−y|)/2
            sign = "-" if e.name == "min" else "+"
            out = args[0]
            for y in args[1:]:
                out = f"(0.5*({out}+{y}{sign}abs({out}-{y})))"
            return out
        return f"{'ln' if e.name == 'log' else e.name}({args[0]})"  # our log is the natural one
    raise TypeError(f"{type(e).__name__} has no B-source form")  # shapes are sampled instead


def _power(base: str, b: Expr, var) -> str:
    if isinstance(b, Const) and b.v == int(b.v) and abs(b.v) <= MAX_PRODUCT:
        n = int(b.v)
        if n == 0:
            return "1"
        prod = "(" + "*".join([base] * abs(n)) + ")"
        return prod if n > 0 else f"(1/{prod})"
    return f"({base}^{bexpr(b, var)})"


class _Writer:
    """Collects element lines, the name table and the header notes while walking the design."""

    def __init__(self, d: Design, nm: Names | None = None, offset: float = 0.0):
        self.d = d
        self.names = names(d) if nm is None else nm
        # Thermal node voltage = temperature - offset (0: kelvin; 273.15: degrees Celsius, part.py).
        self.offset = offset
        self.thermal = {self.names.nodes[n.name] for n in d.nodes.values() if n.domain == THERMAL}
        self.mass_ref: dict[str, tuple[str, float]] = {}  # mass → (the node its capacitor returns to, its voltage)
        tr = d.transient
        self.until = tr.until if tr else self._horizon()
        self.step = (tr.step if tr and tr.step else self.until / 500)
        self.edge = EDGE * self.step
        self.elements = {e.name: e for e in d.elements}
        self.lines: list[str] = []
        self.models: list[str] = []
        self.notes: set[str] = set()
        # netlist node → (the element it belongs to, its value from a lookup of our unknowns by name)
        self.internal: dict[str, tuple[str, object]] = {}
        self.ics: list[tuple[int, tuple[str, ...]]] = []  # (line index, our names whose value is IC=)
        self.events: list | None = None  # our run's switch events, where known (Starts.events)
        self.switch_notes: list[str] = []  # what a switch acting on a condition became

    def _horizon(self) -> float:
        """Without a transient, time shapes are still written out, to twice their last event."""
        ends = [_span(x) for e in self.d.elements for w in e.waves().values() for x in w.expr.walk()
                if isinstance(x, Shape)]
        return 2 * max(ends) if ends and max(ends) > 0 else 1.0

    num = staticmethod(num)

    def node(self, name: str) -> str:
        return self.names.nodes[name]

    def v(self, spice_node: str) -> str:
        """A netlist node's voltage in a B-source expression (node 0 is 0); a thermal node's as
        its absolute temperature, K."""
        if spice_node == "0":
            return "0"
        if self.offset and spice_node in self.thermal:
            return f"(V({spice_node})+{num(self.offset)})"
        return f"V({spice_node})"

    def expr(self, e: Expr, values: dict) -> str:
        """An element's equation as B-source text: numbers in `values` are folded into the
        tree, strings (`V(t_a)`, `I(vte_m)`) stand for the variables they name."""
        e = substitute(e, {k: Const(float(v)) for k, v in values.items() if not isinstance(v, str)})
        return bexpr(e, {k: v for k, v in values.items() if isinstance(v, str)})

    def signal(self, ours: str, vector: str) -> None:
        """Our signal `ours` is the simulator's vector `vector` (with a leading `-` where the signs differ)."""
        self.names.signals[ours] = vector

    def internal_node(self, node: str, owner: str, value) -> None:
        """A node of the netlist that is none of ours; `value(lookup)` gives it from a state."""
        self.internal[node] = (owner, value)

    def row(self, spice: str, ours: str) -> None:
        self.names.rows.append((spice, ours))

    def add(self, *parts, ic: tuple[str, ...] = ()) -> None:
        """One element line; `ic` names the node(s) or branch whose start value it gets as IC=."""
        if ic:
            self.ics.append((len(self.lines), ic))
        self.lines.append(" ".join(str(p) for p in parts))

    # ---- time-varying values ----------------------------------------------------------
    def source(self, kind: str, tag: str, stem: str, np_: str, nn: str, w: Wave) -> str:
        """Write a source (kind "V" or "I") of wave `w`: independent, or a B source for an
        expression of time with no shapes in it. Returns its name."""
        if kind == "V" and self.offset and np_ in self.thermal:
            w = shifted(w, self.offset)  # a reservoir's temperature, K → the node's voltage
        e = w.expr
        if not w.constant and not any(isinstance(x, Shape) for x in e.walk()):
            name = f"b{tag or kind.lower()}_{stem}"
            self.add(name, np_, nn, f"{kind}={bexpr(e)}")
            return name
        name = f"{kind.lower()}{tag}_{stem}"
        self.add(name, np_, nn, self.value(w))
        return name

    def value(self, w: Wave) -> str:
        v0 = w.at(0.0)
        head = f"DC {num(v0)}"
        e = w.expr
        if w.constant:
            return head
        if isinstance(e, Shape) and e.name == "pulse":
            return f"{head} {self.pulse(*e.args)}"
        if isinstance(e, Shape) and e.name == "sine":
            off, amp, freq = e.args  # SPICE's SIN reads a zero frequency as 1/TSTOP: keep it DC
            return head if freq == 0 or amp == 0 else f"{head} SIN({num(off)} {num(amp)} {num(freq)})"
        if isinstance(e, Shape):
            pts = _shape_points(e)
        else:
            self.notes.add("sampled")
            pts = self._samples(w)
        pts = [(0.0, v0)] + [(t, v) for t, v in pts if t > 0]
        if all(v == v0 for _, v in pts):
            return head
        return f"{head} {self.pwl(pts)}"

    def _samples(self, w: Wave) -> list[tuple[float, float]]:
        """A shape inside an expression: its corners (both sides) and a dense grid between."""
        cs = np.array(w.corners(self.until))
        grid = np.union1d(np.linspace(0.0, self.until, SAMPLES + 1), cs)
        right = np.broadcast_to(evaluate(w.expr, grid), grid.shape)
        left = np.broadcast_to(evaluate(w.expr, cs, left=True), cs.shape) if len(cs) else []
        before = dict(zip(cs.tolist(), np.asarray(left).tolist()))
        pts = []
        for t, v in zip(grid.tolist(), right.tolist()):
            if t in before:
                pts.append((t, before[t]))
            pts.append((t, v))
        return pts

    def pwl(self, pts: list[tuple[float, float]]) -> str:
        """PWL through the points; a repeated time (a jump) becomes an edge centred on it whose
        ends sit on the segments either side, so the integral (heat, charge) stays the ideal
        jump's to second order in the edge width."""
        runs: list[tuple[float, float, float]] = []  # (time, value before, value after)
        for t, v in pts:
            if runs and runs[-1][0] == t:
                runs[-1] = (t, runs[-1][1], v)
            else:
                runs.append((t, v, v))
        out: list[tuple[float, float]] = []
        for i, (t, v1, v2) in enumerate(runs):
            if v1 == v2 or i == 0:
                out.append((t, v2))
                continue
            self.notes.add("edge")
            tp, _, vp = runs[i - 1]
            tn, vn, _ = runs[i + 1] if i + 1 < len(runs) else (np.inf, v2, v2)
            h = min(self.edge / 2, (t - tp) / 3, (tn - t) / 3)
            after = v2 if tn == np.inf else v2 + (vn - v2) * h / (tn - t)
            out += [(t - h, v1 - (v1 - vp) * h / (t - tp)), (t + h, after)]
        text = [f"{num(t)} {num(v)}" for t, v in _thin(out)]
        rows = [" ".join(text[i:i + 4]) for i in range(0, len(text), 4)]
        return "PWL(" + "\n+ ".join(rows) + ")"

    def pulse(self, low, high, delay, rise, fall, width, period) -> str:
        """PULSE in our argument order. SPICE reads a zero rise, fall or width as TSTEP or TSTOP,
        so instantaneous edges get the tiny edge, centred where the delay leaves room."""
        e = self.edge
        td = delay - e / 2 if rise == 0 and delay >= e / 2 else delay
        tr = rise if rise > 0 else e
        tf = fall if fall > 0 else e
        top_end = delay + rise + width - (e / 2 if fall == 0 else 0.0)
        pw = max(top_end - (td + tr), e * 1e-3)
        per = period if period > 0 else 2 * (delay + rise + width + fall + self.until)
        if rise == 0 or fall == 0:
            self.notes.add("edge")
        return "PULSE(" + " ".join(num(x) for x in (low, high, td, tr, tf, pw, per)) + ")"

    # ---- elements ------------------------------------------------------------------------
    def write(self) -> None:
        d, nm = self.d, self.names
        for n in d.nodes.values():
            if n.capacity is not None:
                name = "cmass_" + nm.nodes[n.name][2:]
                ref = self.mass_ref.get(n.name, ("0", 0.0))[0]
                self.add(name, nm.nodes[n.name], ref, num(n.capacity), ic=(n.name,))
                self.row(name, f"mass {n.name}: heat capacity, J/K")
        for e in d.elements:
            e.netlist(self, nm.stems[e.name])

    # ---- states ------------------------------------------------------------------------------
    def node_values(self, state: dict[str, float]) -> dict[str, float]:
        """Every netlist node's value in a state of our unknowns by name, internal nodes included."""
        value = lambda name: float(state.get(name, 0.0))  # a ground is absent: 0
        out = {self.node(n): value(_signal(self.d, n)) - (self.offset if self.node(n) in self.thermal else 0.0)
               for n in self.d.nodes if n not in self.d.grounds}
        for node, (_, fn) in self.internal.items():
            out[node] = float(fn(value))
        return out

    def fill_ic(self, state: dict[str, float]) -> None:
        """IC= on every capacitor, mass and inductor, from the transient's initial state."""
        def value(name):
            if name in self.d.nodes:
                off = self.offset if self.d.nodes[name].domain == THERMAL else 0.0
                off += self.mass_ref.get(name, ("0", 0.0))[1]
                return float(state.get(_signal(self.d, name), 0.0)) - off
            e = self.elements[name]
            return float(state[f"{e.branch}({name})"])
        for i, names_ in self.ics:
            v = value(names_[0]) - value(names_[1]) if len(names_) == 2 else value(names_[0])
            self.lines[i] += f" IC={num(v)}"


def shifted(w: Wave, k: float) -> Wave:
    """The wave less `k`: shapes keep their form (a step stays a step), other expressions
    get `- k`."""
    e = w.expr
    if isinstance(e, Const):
        return Wave(Const(e.v - k), w.unit)
    if isinstance(e, Shape):
        a = list(e.args)
        values = {"step": (0, 1), "ramp": (0, 1), "pulse": (0, 1), "sine": (0,),
                  "table": tuple(range(1, len(a), 2))}[e.name]
        for i in values:
            a[i] -= k
        return Wave(Shape(e.name, tuple(a)), w.unit)
    return Wave(Binary("-", e, Const(k)), w.unit)


def _thin(pts: list[tuple[float, float]]) -> list[tuple[float, float]]:
    """Drop points that lie on the line through their neighbours (flat runs of a sampled PWL)."""
    out = pts[:1]
    for (t1, v1), (t2, v2) in zip(pts[1:-1], pts[2:]):
        t0, v0 = out[-1]
        line = v0 + (v2 - v0) * (t1 - t0) / (t2 - t0)
        if abs(line - v1) > 1e-12 * max(abs(v0), abs(v1), abs(v2)):
            out.append((t1, v1))
    return out + pts[-1:] if len(pts) > 1 else out


def _span(e: Shape) -> float:
    """When a shape's last change (or first period) is over."""
    a = e.args
    if e.name == "step":
        return a[2]
    if e.name == "ramp":
        return a[3]
    if e.name == "table":
        return a[-2]
    if e.name == "pulse":
        return a[2] + a[3] + a[4] + a[5] + max(a[6], 0.0)
    return 1.0 / a[2] if a[2] else 0.0


def _shape_points(e: Shape) -> list[tuple[float, float]]:
    """A step, ramp or table as points; a repeated time is a jump (value before, then after)."""
    a = e.args
    if e.name == "step":
        return [(a[2], a[0]), (a[2], a[1])]
    if e.name == "ramp":
        return [(a[2], a[0]), (a[2] if a[3] <= a[2] else a[3], a[1])]
    return list(zip(a[0::2], a[1::2]))


def _notes(notes: set[str], edge: float) -> list[str]:
    text = {
        "edge": f"a jump in time (step, table, pulse edge) is a linear edge at most {num(edge)} s wide, "
                "centred on the jump so that the heat or charge it carries is the same",
        "switch": "switches are S elements driven by a 0/1 control source whose edges are not "
                  "instantaneous either; the switch changes state as the control crosses 0.5, "
                  "at the closing or opening time",
        "diode": "a diode is a D model (IS, N, RS) at the simulator's nominal 27 degC, its gmin "
                 "(1e-12 S) across the junction as in netgen; one `at` a thermal node is a B source "
                 "with V_T = k*V(node)/q; a 0 V source in series reads its current",
        "sampled": "a shape inside an expression is written as a PWL sampled at the shape's corners "
                   f"(both sides of a jump) and on an even grid of {SAMPLES + 1} points over the run "
                   "(points on a straight line left out); between samples it is linear",
    }
    return [line for k in ("edge", "switch", "diode", "sampled") if k in notes
            for line in textwrap.wrap(f"Note: {text[k]}.", 92, initial_indent="* ", subsequent_indent="*   ")]


def _switch_notes(w) -> list[str]:
    return [line for note in w.switch_notes
            for line in textwrap.wrap(f"Note: {note}.", 92, initial_indent="* ", subsequent_indent="*   ")]


def _printable(text: str) -> str:
    """One line of text with its control characters (and other line breaks) written as escapes
    (`\\x1b`), so that a title cannot end the title line, start a statement, or reach a
    terminal as a control sequence."""
    return "".join(ch if ch.isprintable() or ch == " " else ascii(ch)[1:-1] for ch in text)


def _header(d: Design, w: _Writer) -> list[str]:
    """Title, the analogy, notes on what is approximated, the name table and the signal map."""
    nm = w.names
    out = [_printable(d.title or d.file), "* Written by netgen from " + _printable(d.file),
           "* Analogy: temperature = voltage (K), heat flow = current (W), heat capacity =",
           "* capacitance (J/K), thermal resistance = resistance (K/W). Both domains share node 0:",
           "* absolute zero for the thermal side, ground for the electrical side; they are coupled",
           "* only through the controlled (B) sources. Values are plain SI numbers.",
           *_notes(w.notes, w.edge), *_switch_notes(w), "*", "* Names (netlist name: ours):"]
    grounds = ", ".join(d.grounds)
    out.append("*   0: absolute zero" + (f"; ground {grounds}" if grounds else ""))
    out += [f"*   {spice}: {_signal(d, name)}" for name, spice in nm.nodes.items() if spice != "0"]
    out += [f"*   {node}: internal node of {owner}" for node, (owner, _) in w.internal.items()]
    out += [f"*   {spice}: {ours}" for spice, ours in nm.rows]
    out.append("* Signals (ours = simulator vector):")
    return out + [f"*   {sig} = {vec}" for sig, vec in nm.signals.items()] + ["*"]


def _signal(d: Design, node: str) -> str:
    return f"{'T' if d.nodes[node].domain == THERMAL else 'V'}({node})"


def write_netlist(design: Design, starts: Starts | None = None) -> str:
    """The design as SPICE3 netlist text: elements, name table, `.ic`, `.op`/`.tran`, `.end`."""
    return netlist(design, starts)[0]


def netlist(design: Design, starts: Starts | None = None, clock: bool = True,
            options: str = OPTIONS) -> tuple[str, Names]:
    """The netlist text and the name map it was written with (for reading results back).

    `starts` holds our solved states that the netlist carries: the steady state as the
    simulator's first guess, the transient's start as its initial conditions. Without it they
    are solved here (`starts_of`)."""
    starts = starts_of(design) if starts is None else starts
    w = _Writer(design)
    w.events = starts.events
    nm = w.names
    nm.signals = {_signal(design, n): f"V({s})" for n, s in nm.nodes.items() if s != "0"}
    w.write()
    ac = excite(design, w)  # the first `response`'s input gets AC 1, and the sweep its band
    nm.edge = w.edge
    tr = design.transient
    tail = [options]
    if starts.want_op:
        guess = w.node_values(starts.guess) if starts.guess is not None else {}
        # Temperatures only: from 0 V a thermal node is at absolute zero, far from any answer.
        # With electrical and internal nodes set as well, ngspice's .op was seen to return a
        # state that is no solution (a coil with 0 A and 0.2 V across it) or a root below 0 K
        # (netgen crosscheck, random networks: 4 in 200; none with temperatures only).
        thermal = {nm.nodes[n.name] for n in design.nodes.values() if n.domain == THERMAL}
        tail += [f".nodeset V({n})={num(v)}" for n, v in guess.items() if n in thermal] + [".op"]
    if tr:
        first = FIRST_STEP * tr.until
        if clock:
            w.lines.append(f"vclock_start x_clock_start 0 PWL(0 0 {num(first)} 0)")
            w.internal_node("x_clock_start", "the start (a 0 V source whose corner keeps the first step small)",
                            lambda value: 0.0)
            w.row("vclock_start", "start clock: 0 V, its one corner keeps the simulator's first step small")
        w.fill_ic(starts.initial)
        tail += [f".ic V({n})={num(v)}" for n, v in w.node_values(starts.initial).items()]
        tail.append(f".tran {num(w.step)} {num(tr.until)} uic")
    tail += ac
    lines = _header(design, w) + w.lines + w.models + tail + [".end"]
    return "\n".join(lines) + "\n", nm
