"""What the netlist cannot say exactly (jumps, switches, sampled shapes), and the notes that say so."""
from __future__ import annotations

from netgen.model.design import Design
from netgen.model.signals import kind_of
from netgen.elements import Switch
from netgen.model.expr import Shape, Wave
from netgen.solve.signals import signal_texts
from netgen.spice.netlist import Names
from netgen.spice.crosscheck_report import Jump, Report


def inputs(d: Design) -> set[str]:
    """Signals that are our own source values in both results (a heat input's power, a current
    source's current): the simulator writes no vector for them, so there is nothing to compare."""
    return {f"{e.given}({e.name})" for e in d.elements if e.given}


def _waves(d: Design) -> list[tuple[str, Wave]]:
    out = [(f"{e.statement} {e.name}", w) for e in d.elements for w in e.waves().values()]
    return [(what, w) for what, w in out if not w.constant]


def jumps(d: Design, events: list | None = None) -> list[Jump]:
    """Every instant in the run where a source value jumps or a switch changes state (`events`:
    our run's, of the switches that act on conditions, which the netlist writes at those times)."""
    until = d.transient.until if d.transient else 0.0
    out: list[Jump] = []
    for what, w in _waves(d):
        bare = isinstance(w.expr, Shape)
        times = {t for x in w.expr.walk() if isinstance(x, Shape) for t in shape_jumps(x, until)}
        # At t = 0 the netlist starts from the value after the jump, except that a bare PULSE
        # cannot: SPICE starts it low, so its edge starts there.
        out += [Jump(t, what) for t in times if t > 0 or (bare and w.expr.name == "pulse")]
    for sw in d.of_kind(Switch):
        for t1, t2 in sw.intervals:
            out += [Jump(t1, f"switch {sw.name} closes"), Jump(t2, f"switch {sw.name} opens")]
    out += [Jump(e["time"], f"switch {e['element']} {e['what']}") for e in events or ()]
    return sorted((j for j in out if 0.0 <= j.time <= until), key=lambda j: (j.time, j.what))


def shape_jumps(e: Shape, until: float) -> list[float]:
    """The instants where a shape's value jumps, from its arguments (LANGUAGE.md, shapes).
    Computed, not found by comparing values either side: a periodic pulse's later edges
    land a rounding error away from where the shape's own arithmetic puts them."""
    a = e.args
    if e.name == "step":
        return [a[2]] if a[0] != a[1] else []
    if e.name == "ramp":
        return [a[2]] if a[3] <= a[2] and a[0] != a[1] else []
    if e.name == "table":
        ts, vs = a[0::2], a[1::2]
        return [ts[i] for i in range(1, len(ts)) if ts[i] == ts[i - 1] and vs[i] != vs[i - 1]]
    if e.name != "pulse" or a[0] == a[1]:
        return []
    low, high, delay, rise, fall, width, period = a
    offsets = ([0.0] if rise == 0 else []) + ([rise + width] if fall == 0 else [])
    out, k = [], 0
    while offsets and delay + k * period <= until and (period > 0 or k == 0):
        out += [delay + k * period + o for o in offsets]
        k += 1
    return out


def sampled(d: Design) -> list[str]:
    """Sources whose value is a shape inside an expression, which the netlist samples."""
    return [what for what, w in _waves(d)
            if not isinstance(w.expr, Shape) and any(isinstance(x, Shape) for x in w.expr.walk())]


def notes(d: Design, nm: Names, rep: Report) -> list[str]:
    """Plain statements of where the netlist is not exact and what the comparison does there."""
    out = []
    if rep.jumps:
        by: dict[str, list[float]] = {}
        for j in rep.jumps:
            by.setdefault(j.what, []).append(j.time)
        where = "; ".join(f"{what} at {_times(ts)}" for what, ts in by.items())
        out.append(f"jumps: {where}. The netlist writes each as a linear edge at most {_g(nm.edge)} s wide "
                   f"(switches: their control's edge). Within ±{_g(rep.window)} s of these instants a signal "
                   "may differ by as much as it moves there in either result (column `excused`); "
                   "everywhere else the tolerance is unchanged.")
    if rep.missed:
        out.append(f"the simulator stepped over {len(rep.missed)} source corners (at {_times(rep.missed)}) "
                   "without landing on them (ngspice does not, on a periodic PULSE after its first periods); "
                   "between its two points around each, a signal may differ by as much as it moves over "
                   "them (column `excused`).")
    for what in sampled(d):
        out.append(f"{what}: a shape inside an expression, written as a sampled PWL (linear between "
                   "samples); the tolerance is not widened for it.")
    given = [s for s in inputs(d) if s in set(signal_texts(d))]
    if given:
        out.append(f"not compared: {', '.join(sorted(given))}: source values, the same in both by construction.")
    if any(r.source == "derived" for r in rep.rows):
        out.append("`derived`: computed with netgen's own formula from the simulator's node values and "
                   "branch currents (the netlist has no vector for it).")
    if rep.span and rep.span[0] > 0:
        early = [r.signal for r in rep.transient if not r.passed and r.at is not None and r.at <= 5 * rep.span[0]]
        if early:
            out.append(f"{', '.join(early)} differ most within the simulator's first steps (its first point is "
                       f"t = {_g(rep.span[0])} s): under `uic` it takes its first step without error control, "
                       "so a part of the circuit faster than that step, set off its equilibrium by `start` "
                       "values, is not followed there.")
    cold = [r.signal for r in rep.steady if kind_of(r.signal) == "T" and r.theirs < 0]
    if cold:
        out.append(f"the simulator's steady state puts {', '.join(cold)} below absolute zero: its Newton "
                   "iteration found another root of the same equations, not a physical state.")
    missing = sorted({r.missing for r in rep.rows if r.missing})
    out += [f"not compared: {m}." for m in missing]
    return out


def _times(ts: list[float], most: int = 6) -> str:
    shown = ", ".join(f"{_g(t)} s" for t in ts[:most])
    return shown + (f" and {len(ts) - most} more" if len(ts) > most else "")


def _g(x: float) -> str:
    return f"{x:.6g}"
