"""Cross-check: our results against an outside simulator's, signal by signal, on our time grid."""
from __future__ import annotations

import dataclasses
import math
from pathlib import Path
from typing import Callable

import numpy as np

from netgen.solve.assembly import System, assemble
from netgen.analyses import run
from netgen.checks.results import Results
from netgen.model.design import Design, Modes, Response
from netgen.model.signals import kind_of, parse as parse_signal
from netgen.solve.events import timeline
from netgen.solve.signals import SignalEval, signal_texts
from netgen.solve.steady import solve_dc
from netgen.spice.resample import Onto, cuts, near, spread
from netgen.spice.ac import compare as compare_ac, excited
from netgen.spice.approximations import inputs, jumps, notes
from netgen.spice.crosscheck_report import Report, Row, Tolerances
from netgen.spice.netlist import Names, netlist
from netgen.spice.starts import starts_of
from netgen.spice.raw import Plot, find_plot
from netgen.spice.reduce import OPTIONS as REDUCED_OPTIONS, prepare
from netgen.spice.simulator import DEFAULT_SIMULATOR, TIMEOUT, SimulatorError, simulate

# Around a jump the netlist's edge differs from the ideal jump; in a part of the circuit about
# as fast as the edge is wide, that difference decays over a few of its time constants, so the
# window is ten edge widths either side (still a hundredth of an output step).
WINDOW = 10.0
# The simulator's transient must cover the run: to its end (to rounding), and from no later than
# this share of it (under `uic` its first point is after t = 0: about a hundredth of its step).
SPAN_SLACK, LATE_START = 1e-6, 0.05
# A part in a deck (part_deck.py) is compared with our transient solved at this local tolerance
# (or the design's own, if tighter). The flat cross-check keeps the design's own: at 1e-5 our
# solver stalled on one of the random networks (tests/test_crosscheck.py, seed 88).
COMPARE_TOLERANCE = 1e-5
# A reduced network (`--reduce N`) is held to this over the transient, K (the steady state is exact).
REDUCED_KELVIN = 0.1


# ---- running both ------------------------------------------------------------------------------
def crosscheck(design: Design, simulator: str = DEFAULT_SIMULATOR, tol: Tolerances | None = None,
               keep: Path | None = None, edit: Callable[[str], str] | None = None,
               env: dict[str, str] | None = None, timeout: float = TIMEOUT, reduce: int | None = None) -> Report:
    """Export `design`, run the simulator on it, solve it ourselves and compare. `edit` may
    rewrite the netlist text before it is run (to prove that a wrong netlist is caught);
    `keep` is a directory for the netlist, the raw file and the simulator's output; the
    simulator is ended after `timeout` seconds."""
    tol = tol or Tolerances()
    comparison = for_comparison(design)
    if reduce is None:
        ours = run(comparison)
        starts = starts_of(design)
        starts.events = ours.events  # a switch acting on a condition changes at our times there
        text, nm = netlist(design, starts)
    else:  # the reduced netlist against our full solution, on the nodes both have
        reduced, r, starts = prepare(design, reduce)
        text, nm = netlist(reduced, starts, clock=False, options=REDUCED_OPTIONS)
        comparison = dataclasses.replace(comparison, records=[s for s in comparison.records if s.text in nm.signals])
        tol = dataclasses.replace(tol, kelvin=max(tol.kelvin, REDUCED_KELVIN), flow_kelvin=max(tol.flow_kelvin, REDUCED_KELVIN))
        ours = run(comparison)
    if edit is not None:
        text = edit(text)
    theirs = simulate(text, simulator, keep, env, timeout)
    rep = compare(ours, nm, theirs.plots, tol, theirs.command)
    if reduce is not None:
        rep.notes.append(f"reduced: the netlist's linear thermal network is a model of {r.states} states "
                         f"({len(r.ports)} kept nodes, {r.states - len(r.ports)} modes) in place of {len(r.internal)} "
                         f"inner nodes, compared with netgen's full solution on the kept nodes; temperatures "
                         f"are held to {REDUCED_KELVIN} K over the transient (heat flows to that times the "
                         "largest conductance at a node), the steady state as tightly as ever.")
    return rep


def for_comparison(d: Design) -> Design:
    """The design with every unknown recorded besides its own records, and nothing that is
    ours alone to evaluate (expectations, audits, modes): the analyses are unchanged."""
    texts = signal_texts(d)
    sys = assemble(d)
    records = [parse_signal(t) for t in texts]
    records += [parse_signal(n) for n in sys.names if n not in texts]
    return dataclasses.replace(d, records=records, expectations=[], audits=[],
                               analyses=[a for a in d.analyses if not isinstance(a, Modes)])


def compare(ours: Results, nm: Names, plots: list[Plot], tol: Tolerances,
            command: list[str] | None = None) -> Report:
    """Compare our Results with the simulator's plots (read back through the signal map)."""
    d = ours.design
    sys = assemble(d)
    sys.timeline = timeline(sys, {k: s.starts_closed for k, s in enumerate(sys.switches) if s.conditional},
                            ours.events)  # switches acting on conditions, as our run found them
    rep = Report(d.file, command or [])
    if ours.steady is not None:
        op = find_plot(plots, "Operating Point")
        if op is None:
            raise SimulatorError("the simulator wrote no operating point (.op) results")
        if op.data.shape[0] == 0:
            raise SimulatorError("the simulator's operating point (.op) results hold no point")
        rep.steady = _steady(d, sys, nm, ours, op, tol)
    if ours.time is not None:
        tran = find_plot(plots, "Transient Analysis")
        if tran is None:
            raise SimulatorError("the simulator wrote no transient (.tran) results")
        rep.jumps = jumps(d, ours.events)
        rep.window = WINDOW * nm.edge
        rep.transient = _transient(d, sys, nm, ours, tran, tol, rep)
    if ours.responses:
        ac = find_plot(plots, "AC Analysis")
        if ac is None:
            raise SimulatorError("the simulator wrote no frequency response (.ac) results")
        rep.response = compare_ac(d, nm, ac, solve_dc(sys, 0.0))
    _compared_all(rep, ours)
    rep.notes = notes(d, nm, rep)
    others = sorted({a.input for a in d.analyses if isinstance(a, Response)} - {a.input for a in excited(d)})
    if others:
        rep.notes.append("responses to " + ", ".join(f"`{x}`" for x in others) + " are not compared: the netlist "
                         "excites one input (the first response's)")
    return rep


def _compared_all(rep: Report, ours: Results) -> None:
    """`agree` is said only of everything there was to compare: every signal found in the
    simulator's results, and our transient over the whole run. Less is the simulator's failure
    (a SimulatorError, exit 3), never a pass: a raw file with no usable values, or one that
    stops early, must not agree by comparing nothing."""
    missing = [r for r in rep.rows if r.missing]
    if missing:
        names = ", ".join(dict.fromkeys(r.signal for r in missing))
        why = "; ".join(dict.fromkeys(r.missing for r in missing))
        raise SimulatorError(f"the simulator's results hold no values for {names} ({why}): "
                             f"{len(rep.rows) - len(missing)} of {len(rep.rows)} comparisons could be made",
                             hint="look at its raw file and output with --keep DIR")
    if ours.time is None:
        return
    until = ours.design.transient.until
    first, last = rep.span
    n = len(ours.time)
    if last < until * (1 - SPAN_SLACK):
        raise SimulatorError(f"the simulator's transient ends at {last:.6g} s, before the end of the run "
                             f"({until:.6g} s): {rep.points[0]} of our {n} points could be compared",
                             hint="look at its raw file and output with --keep DIR")
    if first > LATE_START * until:
        raise SimulatorError(f"the simulator's transient starts at {first:.6g} s, {first / until:.0%} into the "
                             f"run: {rep.points[0]} of our {n} points could be compared",
                             hint="look at its raw file and output with --keep DIR")


# ---- reading the simulator's results as our state ------------------------------------------
def _vector(plot: Plot, how: str) -> np.ndarray:
    """`how` from the signal map, e.g. `V(t_die)` or `-I(vfix_room)`; NaN if not written."""
    sign = -1.0 if how.startswith("-") else 1.0
    name = how.lstrip("-")
    if name not in plot:
        return np.full(plot.data.shape[0], np.nan)
    return sign * np.real(plot[name])


def _state(sys: System, nm: Names, plot: Plot) -> tuple[np.ndarray, list[str]]:
    """The simulator's results as our unknowns (k × n), and the vectors it did not write."""
    X = np.empty((plot.data.shape[0], sys.n))
    missing = []
    for j, name in enumerate(sys.names):
        how = nm.signals.get(name, name)
        X[:, j] = _vector(plot, how)
        if np.isnan(X[:, j]).all():
            missing.append(how.lstrip("-").lower())
    return X, missing


def _source(signal: str, nm: Names) -> str:
    """The simulator's vector a signal comes from, or how it is computed from them."""
    how = nm.signals.get(signal)
    if how is None:
        return "derived"  # computed with our formula from the simulator's node values and currents
    return ("-" if how.startswith("-") else "") + how.lstrip("-").lower()


def _relative(dev: float, y: float, tol: float) -> float:
    """|Δ|/|y|; NaN where y itself is within the tolerance of zero and the ratio says nothing."""
    return dev / abs(y) if abs(y) > tol else math.nan


def _kind(signal: str) -> str:
    kind = kind_of(signal)
    return "Q" if kind in ("Q", "P") else kind  # heat flows and powers share one scale: both W


# ---- steady state --------------------------------------------------------------------------------
def _steady(d, sys, nm, ours: Results, op: Plot, tol: Tolerances) -> list[Row]:
    X, missing = _state(sys, nm, op)
    sig = SignalEval(d, sys)
    zero = np.zeros_like(X)
    sizes: dict[str, float] = {}
    for s, v in ours.steady.items():
        sizes[_kind(s)] = max(sizes.get(_kind(s), 0.0), abs(v))
    temps = [v for s, v in ours.steady.items() if _kind(s) == "T"]
    spread = max(temps) - min(temps) if temps else 0.0  # the temperature differences, K
    rows = []
    for s, y in ours.steady.items():
        if s in inputs(d):
            continue
        row = Row(s, _source(s, nm))
        theirs = float(sig(s, X, zero, np.array([0.0]))[0])
        if not math.isfinite(theirs):
            row.missing = "the simulator wrote no " + ", ".join(missing)
            rows.append(row)
            continue
        if _kind(s) == "T":  # relative to the temperature differences, not to ~300 K
            row.tol = tol.steady_kelvin + tol.steady_rtol * spread
        else:
            row.tol = tol.steady_floor * sizes[_kind(s)] + tol.steady_rtol * abs(y) + tol.tiny
        row.dev = abs(theirs - y)
        row.rel = _relative(row.dev, y, row.tol)
        row.ours, row.theirs = y, theirs
        row.passed = row.dev <= row.tol
        rows.append(row)
    return rows


# ---- transient -------------------------------------------------------------------------------------
def _transient(d, sys, nm, ours: Results, plot: Plot, tol: Tolerances, rep: Report) -> list[Row]:
    ts = np.real(plot["time"]) if "time" in plot else None
    if ts is None or len(ts) == 0:
        raise SimulatorError("the simulator's transient results have no time vector or no points")
    X, missing = _state(sys, nm, plot)
    keep = np.append(np.diff(ts) > 0, True)  # repeated times would make the derivative infinite
    ts, X = ts[keep], X[keep]
    Xd = np.gradient(X, ts, axis=0) if len(ts) > 1 else np.zeros_like(X)  # for capacitor currents
    sig = SignalEval(d, sys)
    t = ours.time
    inside = (t >= ts[0]) & (t <= ts[-1])  # under `uic` the simulator starts after t = 0
    rep.span, rep.points = (float(ts[0]), float(ts[-1])), (int(inside.sum()), len(ts))
    times = [j.time for j in rep.jumps]
    close_to = near(t, times, rep.window)
    corners = sys.corners(d.transient.until)
    onto = Onto(ts, t, cuts(corners, times, rep.window, d.transient.until), corners)
    rep.missed = [c for c in onto.missed if not any(abs(c - tj) <= rep.window for tj in times)]
    excused = (close_to | onto.unsure) & inside
    g_max = _conductance(d)
    # A node's error comes from the whole circuit: a node near 0 V in a 5 V circuit is off by
    # what the 5 V nodes are off by. So the floor follows the largest value of the same kind.
    sizes: dict[str, float] = {}
    for s, y in ours.waveforms.items():
        sizes[_kind(s)] = max(sizes.get(_kind(s), 0.0), float(np.abs(y).max()))
    rows = []
    for s, y in ours.waveforms.items():
        if s in inputs(d):
            continue
        row = Row(s, _source(s, nm))
        ysim = sig(s, X, Xd, ts)
        if np.isnan(ysim).all():
            row.missing = "the simulator wrote no " + ", ".join(missing)
            rows.append(row)
            continue
        theirs = onto(ysim)
        dev = np.abs(theirs - y)
        if _kind(s) == "T":  # relative to the temperature's swing, not to ~300 K
            limit = np.full_like(y, tol.kelvin + tol.rtol * float(np.ptp(y)))
        else:
            limit = tol.floor * sizes[_kind(s)] + tol.rtol * np.abs(y) + tol.absolute
            if kind_of(s) == "Q":
                limit = limit + tol.flow_kelvin * g_max
        # Zero except within a jump's window and between the points around a skipped corner.
        allowed = limit + np.maximum(spread(t, y, ts, ysim, times, rep.window), onto.movement(ysim))
        ok = dev <= allowed
        row.passed = bool(ok[inside].all())
        if excused.any():
            row.near = float(dev[excused].max())
        if not row.passed:  # show the point that is furthest beyond what it is allowed
            pick = inside & ~ok
            i = int(np.flatnonzero(pick)[np.argmax((dev / allowed)[pick])])
        elif (inside & ~excused).any():
            pick = inside & ~excused
            i = int(np.flatnonzero(pick)[np.argmax((dev / limit)[pick])])
        elif excused.any():
            i = int(np.flatnonzero(excused)[np.argmax(dev[excused])])
        else:
            rows.append(row)
            continue
        row.dev, row.at, row.tol = float(dev[i]), float(t[i]), float(allowed[i])
        row.ours, row.theirs = float(y[i]), float(theirs[i])
        row.rel = _relative(row.dev, float(y[i]), row.tol)
        rows.append(row)
    return rows


def _conductance(d: Design) -> float:
    """The largest total thermal conductance at one node (links and modules), W/K."""
    at: dict[str, float] = {}
    for e in d.elements:
        link = e.thermal_conductance()
        if link is None:
            continue
        a, b, g = link
        for n in (a, b):
            at[n] = at.get(n, 0.0) + g
    return max(at.values(), default=0.0)
