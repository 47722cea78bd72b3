"""Design → a SPICE library file: one `.subckt` with named pins that a user's deck `.include`s.

Temperatures inside the part are in degrees Celsius by default (a thermal node's voltage is its
temperature in degC; 25 V is 25 degC), so that a simulator's tolerances, which are relative to
the node values, act on values of tens of volts rather than ~300 V; heat flows stay amperes =
watts. The elements that need absolute temperature (thermoelectric, radiation, tempco, links
whose conductance follows T) read `V(node)+273.15`. `kelvin=True` keeps absolute kelvin.
"""
from __future__ import annotations

import dataclasses
import difflib
import textwrap
from dataclasses import dataclass

from netgen.elements.fixed import Fixed
from netgen.model.design import ELECTRICAL, THERMAL, Design, Loc
from netgen.model.errors import NetgenError
from netgen.spice.netlist import Names, _header, _signal, _unique, _Writer, names, num
from netgen.spice.starts import Starts, starts_of

CELSIUS = 273.15  # K at 0 degC
LEAK = 1e9  # ohm from a former ground pin to the deck's ground: a DC path when nothing else gives one


@dataclass
class Part:
    """The library text and what a reader of the part's results needs."""

    text: str
    names: Names
    pins: list[str]  # the netlist nodes of the pins, in order
    offset: float  # a thermal pin's voltage = temperature - offset


def option_loc(option: str, items: list[str], i: int) -> Loc:
    """The place of item `i` of `OPTION a,b,c` on the command line, for a located error."""
    text = f"{option} {','.join(items)}"
    return Loc("command line", 1, len(option) + 2 + sum(len(x) + 1 for x in items[:i]), text)


def _unknown(option: str, items: list[str], i: int, what: str, known: list[str]) -> NetgenError:
    close = difflib.get_close_matches(items[i], known, n=1)
    hint = f"did you mean `{close[0]}`?" if close else f"the design's {what}s: " + ", ".join(sorted(known)[:12]) + (
        ", ..." if len(known) > 12 else "")
    return NetgenError(f"{option}: the design has no {what} `{items[i]}`", option_loc(option, items, i), hint)


def check_names(design: Design, pins: list[str], without: list[str]) -> None:
    """Every pin a node of the design and every `--without` name an element, once each."""
    elements = [e.name for e in design.elements]
    for i, w in enumerate(without):
        if w not in elements:
            raise _unknown("--without", without, i, "element", elements)
        if w in without[:i]:
            raise NetgenError(f"--without: `{w}` is named twice", option_loc("--without", without, i), "name each element once")
    if not pins:
        raise NetgenError("--pins: no pins given", None, "e.g. --pins p,gnd,die")
    grounds = [p for p in pins if p in design.grounds]
    for i, p in enumerate(pins):
        if p not in design.nodes:
            raise _unknown("--pins", pins, i, "node", list(design.nodes))
        if p in pins[:i]:
            raise NetgenError(f"--pins: `{p}` is named twice", option_loc("--pins", pins, i), "name each pin once")
        if p in grounds[1:]:
            raise NetgenError(f"--pins: `{p}` and `{grounds[0]}` are both ground, one node of the design",
                              option_loc("--pins", pins, i), f"give one of them as the pin")


def part(design: Design, subckt: str, pins: list[str], without: list[str] = (), kelvin: bool = False,
         starts: Starts | None = None) -> Part:
    """The library text of `design` as `.subckt SUBCKT PINS...`. `without` names elements left
    out; a pin on a `fixed` node leaves its reservoir out; a pin on a `ground` node makes the
    ground a node of its own (with a 1 GOhm leak to the deck's ground). Start values (our
    transient's start, or the steady state without a transient) are the capacitors' IC=."""
    check_names(design, list(pins), list(without))
    if not subckt or not subckt.replace("_", "a").isalnum() or not subckt[0].isalpha():
        raise NetgenError(f"--subckt: `{subckt}` is not a plain name", None,
                          "a letter, then letters, digits or _ (e.g. --subckt cooler)")
    starts = starts_of(design) if starts is None else starts
    state = starts.initial if starts.initial is not None else starts.guess
    pinned = set(pins)
    dropped = set(without) | {e.name for e in design.elements if isinstance(e, Fixed) and e.node in pinned}
    d = dataclasses.replace(design, elements=[e for e in design.elements if e.name not in dropped])
    nm = _names(d, pins)
    offset = 0.0 if kelvin else CELSIUS
    w = _Writer(d, nm, offset)
    refs = _references(d, w, state, offset)
    nm.signals = {_signal(d, n): f"V({s})" for n, s in nm.nodes.items() if s != "0"}
    w.write()
    nm.edge = w.edge
    if state is not None:
        w.fill_ic(state)
    pin_nodes = [nm.nodes[p] for p in pins]
    leaks = [f"rleak_{nm.nodes[p][2:]} {nm.nodes[p]} 0 {num(LEAK)}" for p in pins if p in d.grounds]
    head = _part_header(d, w, subckt, pins, pin_nodes, sorted(dropped), offset, state is not None)
    body = [f".subckt {subckt} {' '.join(pin_nodes)}", *refs, *w.lines, *leaks, *w.models, f".ends {subckt}"]
    return Part("\n".join(head + body) + "\n", nm, pin_nodes, offset)


def _references(d: Design, w: _Writer, state, offset: float) -> list[str]:
    """Each mass's capacitor returns to a node held at the mass's start temperature (one per
    distinct value), so that the charge the simulator's step control is relative to is
    C·(T − T_start), the heat taken up since the start, not C·T."""
    if state is None:
        return []
    values: dict[float, str] = {}
    lines = []
    for n in d.nodes.values():
        if n.capacity is None:
            continue
        v = round(float(state.get(_signal(d, n.name), 0.0)) - offset, 9)
        if v not in values:
            values[v] = f"x_start{len(values) + 1}"
            lines.append(f"vstart{len(values)} {values[v]} 0 DC {num(v)}")
        w.mass_ref[n.name] = (values[v], v)
    return lines


def _names(d: Design, pins: list[str]) -> Names:
    """The flat netlist's names, except that a pinned ground (and every ground with it, since they
    are one node) is a node of its own."""
    nm = names(d)
    pinned = [p for p in pins if p in d.grounds]
    if pinned:
        electrical = [n.name for n in d.nodes.values() if n.domain == ELECTRICAL and n.name not in d.grounds]
        spelt = _unique(electrical + pinned, "e_")
        nm.nodes.update({k: v for k, v in spelt.items()})
        for g in d.grounds:
            nm.nodes[g] = spelt[pinned[0]]
    return nm


def num_short(x: float) -> str:
    return f"{x:.2g}"


def fastest(d: Design) -> tuple[float, str | None]:
    """The shortest C/G of a mass, G the conductances that meet it: the fastest thermal time
    constant, roughly."""
    g: dict[str, float] = {}
    for e in d.elements:
        link = e.thermal_conductance()
        if link is not None:
            for n in link[:2]:
                g[n] = g.get(n, 0.0) + link[2]
    taus = [(n.capacity / g[n.name], n.name) for n in d.nodes.values() if n.capacity and g.get(n.name)]
    return min(taus) if taus else (0.0, None)


def _part_header(d, w, subckt, pins, pin_nodes, dropped, offset, has_ic) -> list[str]:
    flat = _header(d, w)
    tau, fast = fastest(d)
    # The flat header's first two lines are the title and the analogy in kelvin: replaced here.
    names_at = flat.index("* Names (netlist name: ours):")
    notes = [line for line in flat[6:names_at] if line != "*"]
    unit = "degrees Celsius (25 V is 25 degC)" if offset else "kelvin (300 V is 300 K)"
    text = [
        f"Part `{subckt}` written by netgen from {d.file}"
        + (f" ({d.title})" if d.title else "") + ". Use it with `.include FILE` and an instance line "
        f"`X1 {' '.join(pins)} {subckt}` in your own deck, the pins in this order.",
        f"Analogy: a thermal node's voltage is its temperature in {unit}; heat flow = current "
        "(W = A), heat capacity = capacitance (J/K = F), thermal resistance = resistance (K/W = ohm). "
        + ("The elements that need absolute temperature (thermoelectric, radiation, tempco, "
           "conductances that follow T) add 273.15 to V(node) themselves. " if offset else "")
        + "Node 0 inside the part is the deck's ground; thermal masses and heat inputs return there. "
        "Thermal and electrical sides meet only in controlled (B) sources.",
        "Tolerances: set `.options reltol=1e-5` in your deck; nothing else is needed. Measured on "
        "netgen's examples as parts (worst temperature deviation from netgen's own solution over "
        "the transient, ngspice 39): 16-17 mK at reltol=1e-5, 64-99 mK at 1e-4, 0.20-0.27 K at "
        "the defaults. At the defaults the limit is the simulator's step, not the part: its steps "
        "grow to the deck's TMAX (by default the .tran step), too long for the part's fastest "
        "thermal time constant" + (f", here about {num_short(tau)} s (node {fast})" if fast else "")
        + "; `.tran TSTEP TSTOP 0 TMAX` with TMAX a tenth of that brought the examples to within "
        "15 mK at the defaults. Masses are capacitors to nodes held at their start temperatures "
        "(vstart...), so the simulator's step control, relative to the charge, follows the heat "
        "taken up since the start rather than the temperature itself.",
        "Start values: each heat capacity and capacitor carries IC= from netgen's start of the "
        "design's transient (its steady state if it has none). With `.tran ... uic` the "
        "simulator starts from them; without `uic` it solves its own operating point at t = 0 with "
        "the deck's drive, and IC= is ignored."
        if has_ic else "Start values: none (the design's start could not be solved).",
        "Floating pins: a pin on a `ground` node is a node of its own here, not the deck's ground, "
        f"so an H-bridge may drive both module pins; a {num(LEAK)} ohm resistor (rleak_...) joins it "
        "to the deck's ground so that the deck keeps a DC path when its drive floats (a current "
        "source across the pins); at 10 V it carries 10 nA.",
    ]
    out = [f"* {subckt}: netgen part"]
    for t in text:
        out += textwrap.wrap(t, 92, initial_indent="* ", subsequent_indent="*   ")
    out += notes
    if dropped:
        out += textwrap.wrap("Left out: " + ", ".join(f"`{x}`" for x in dropped) + " (--without, "
                             "and reservoirs whose node is a pin).", 92, initial_indent="* ", subsequent_indent="*   ")
    out += ["* Pins:"]
    for p, node in zip(pins, pin_nodes):
        kind = "thermal, degC" if d.nodes[p].domain == THERMAL and offset else (
            "thermal, K" if d.nodes[p].domain == THERMAL else "electrical, V")
        out.append(f"*   {node}: {p} ({kind})")
    zero = "*   0: the deck's ground" + (" (and 0 degC for the thermal nodes)" if offset else " (and absolute zero)")
    out += [zero if line.startswith("*   0: absolute zero") else line for line in flat[names_at:]]
    return out
