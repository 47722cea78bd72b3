"""Analyses behind one interface, and the run that walks their table: Design → Results.

Each analysis says when a design wants it, solves, and leaves its states (for signals that
expectations and audits read later), its part of the Results and its statistics. The run
assembles once, walks `ANALYSES` in order, then evaluates expectations, figures of merit,
cautions and audits from what the analyses left. A new analysis is one class and one entry.
"""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from netgen.checks.audits import energy_audit, entropy_audit, inflow, needed_signals
from netgen.checks.merit import cautions, figures, module_signals
from netgen.checks.switching import opening_cautions
from netgen.checks.results import Check, Results, evaluate_expectation, refs
from netgen.elements import Thermoelectric
from netgen.model.design import Design, Modes, Response
from netgen.model.errors import NetgenError
from netgen.solve.assembly import System, assemble
from netgen.solve import factor
from netgen.solve.events import Watch, timeline
from netgen.solve.kept import NotKept, extremes, traced
from netgen.solve.modes import forecast, modes
from netgen.solve.response import response
from netgen.solve.signals import SignalEval, signal_texts
from netgen.solve.steady import solve_dc
from netgen.solve.transient import integrate


@dataclass
class Run:
    """What the analyses share while a design runs: its system, its signal evaluator, the
    signals to report, the Results being filled and, by analysis, the solved states
    (X, Xdot, t, left) that signals are computed from."""

    design: Design
    sys: System
    sig: SignalEval
    wanted: list[str]
    res: Results
    progress: object = None
    states: dict[str, tuple] = field(default_factory=dict)
    keep_all: bool = False  # store every unknown of a long transient (solve/kept.py)

    def signal(self, analysis: str, text: str):
        res = self.res
        if analysis == "steady" and res.steady is not None and text in res.steady:
            return res.steady[text]
        return self.sig(text, *self.states[analysis])


class SteadyAnalysis:
    """The steady state at t = 0: asked for by `steady`, by a design with no analysis at all, and by
    `expect steady ...`."""

    name = "steady"

    def wanted(self, d: Design) -> bool:
        return d.steady is not None or d.transient is None or any(e.agg == "steady" for e in d.expectations)

    def solve(self, r: Run) -> None:
        d = r.design
        try:
            xs = solve_dc(r.sys, 0.0)
        except NetgenError as e:
            e.loc = e.loc or (d.steady.loc if d.steady else None)
            raise
        X = xs[None, :]
        r.states["steady"] = (X, np.zeros_like(X), np.array([0.0]), False)
        r.res.steady = {s: float(r.sig(s, X, np.zeros_like(X), np.array([0.0]))[0]) for s in r.wanted}


class TransientAnalysis:
    """`transient until T`: TR-BDF2 from the consistent start with `start` values held."""

    name = "transient"

    def wanted(self, d: Design) -> bool:
        return d.transient is not None

    def solve(self, r: Run) -> None:
        tr, sys, sig, res = r.design.transient, r.sys, r.sig, r.res
        try:
            watch = Watch(sys, sig)
            x0, dyn, events = self._start(sys, watch)
            extra = [ref.text for e in r.design.expectations for ref in refs(e.expr)]
            keep = None if r.keep_all else _needed(r, x0, r.wanted + extra)
            wf = integrate(sys, x0, tr.until, tr.step, tr.tolerance, r.progress, watch, dyn, events, keep)
            if watch:
                sys.timeline = timeline(sys, watch.initial(), wf.events)
                res.events = wf.events
        except NetgenError as e:
            e.loc = e.loc or tr.loc
            part = getattr(e, "partial", None)
            if part is not None and len(part.time) > 1:
                # Keep what was computed: the caller may write it, marked as partial.
                res.time = part.time
                res.waveforms = {s: sig(s, part.x, part.xdot, part.time, part.left_rows) for s in r.wanted}
                res.stats = {"steps": part.steps, "rejected": part.rejected, "partial": True,
                             "stopped": e.message}
                e.results = res
            raise
        r.states["transient"] = (wf.x, wf.xdot, wf.time, wf.left_rows)
        res.time = wf.time
        res.waveforms = {s: sig(s, wf.x, wf.xdot, wf.time, wf.left_rows) for s in dict.fromkeys(r.wanted + extra)}
        res.initial = {name: float(v) for name, v in zip(sys.names, x0)}
        res.stats = {"steps": wf.steps, "rejected": wf.rejected, "factorizations": wf.factorizations,
                     "solves": wf.solves, "linear_solver": factor.DESCRIPTION}

    @staticmethod
    def _start(sys: System, watch):
        """The transient's start, with the start values held; a switch that acts on a condition
        which already holds there changes at once (an event at 0 s) and the start is solved again."""
        dyn = watch.initial() if watch else {}
        x0 = solve_dc(sys, 0.0, impose=True, dyn=dyn)
        events = []
        if watch:
            flips = [k for k, g in watch.margins(dyn, x0, np.zeros_like(x0), 0.0).items() if g > 0]
            for k in flips:
                dyn[k] = not dyn[k]
                events.append({"element": sys.switches[k].name, "what": "closes" if dyn[k] else "opens", "time": 0.0})
            if flips:
                x0 = solve_dc(sys, 0.0, impose=True, dyn=dyn)
                for k in flips:
                    watch.check_gap(k, dyn[k], x0, np.zeros_like(x0), 0.0)
        return x0, dyn, events


class ModesAnalysis:
    """`modes`: the linearised system's modes at the transient's start (or the steady state),
    and, when some ring, a linear forecast of each ringing temperature."""

    name = "modes"

    def wanted(self, d: Design) -> bool:
        return any(isinstance(a, Modes) for a in d.analyses)

    def solve(self, r: Run) -> None:
        d, sys, res = r.design, r.sys, r.res
        loc = next(a for a in d.analyses if isinstance(a, Modes)).loc
        if d.transient is not None:
            x_lin = np.array([res.initial[n] for n in sys.names])
        else:
            x_lin = r.states["steady"][0][0] if "steady" in r.states else solve_dc(sys, 0.0, impose=True)
        try:
            res.modes = modes(sys, x_lin)
        except ValueError as e:
            raise NetgenError(str(e), loc, "drop `modes` for a mesh this large") from None
        if any(m.oscillatory for m in res.modes):
            # Where it rings: the steady state with the sources as they stand at the end.
            t_last = d.transient.until if d.transient is not None else 0.0
            try:
                x_final = solve_dc(sys, t_last)
            except NetgenError:
                x_final = None
            if x_final is not None:
                slowest = max(m.decay_time for m in res.modes if m.oscillatory)
                span = t_last if t_last > 0 else 6 * slowest
                res.forecast = forecast(sys, x_lin, x_final, min(span, 12 * slowest))


class ResponseAnalysis:
    """`response SIGNAL to INPUT ...`: the small-signal transfer function at the steady state."""

    name = "response"

    def wanted(self, d: Design) -> bool:
        return any(isinstance(a, Response) for a in d.analyses)

    def solve(self, r: Run) -> None:
        d, sys = r.design, r.sys
        asked = [a for a in d.analyses if isinstance(a, Response)]
        try:
            x0 = r.states["steady"][0][0] if "steady" in r.states else solve_dc(sys, 0.0)
        except NetgenError as e:
            e.loc = e.loc or asked[0].loc
            raise
        r.res.responses = [response(d, sys, r.sig, x0, a) for a in asked]


def _needed(r: Run, x0, texts: list[str]):
    """The unknowns whose states a long transient keeps (solve/kept.py): those of the signals it
    reports, its expectations and its figures of merit read, and the node voltages and switch
    nodes the switching cautions read; None (all of them) when it has an audit, which weighs
    every mass's heat at every point."""
    d, sys = r.design, r.sys
    if d.audits:
        return None
    cols = traced(r.sig, texts + module_signals(d), x0)
    if sys.switches:
        cols.update(np.flatnonzero(np.array(sys.kinds) == "V").tolist())
        cols.update(sys.node_index[a] for s in sys.switches for a in (s.a, s.b) if sys.node_index[a] < sys.n)
    if len(cols) == sys.n:  # everything is read (every node recorded): nothing to cut
        return None
    return np.array(sorted(cols), dtype=np.intp)


# In the order they run: modes and responses linearise about what the others found.
ANALYSES = (SteadyAnalysis(), TransientAnalysis(), ModesAnalysis(), ResponseAnalysis())


def run(d: Design, progress=None, keep_all: bool = False) -> Results:
    """Solve every analysis `d` asks for (with none declared, the steady state), then evaluate
    its expectations, figures of merit, cautions and audits. A long transient keeps the states of
    only the unknowns these read, unless `keep_all`."""
    # A runaway overflows to inf and NaN; the solvers see those as failed steps and say so in
    # their own words (a SolveError), so numpy's RuntimeWarnings are not printed on the way.
    with np.errstate(all="ignore"):
        return _run(d, progress, keep_all)


def _run(d: Design, progress=None, keep_all: bool = False) -> Results:
    sys = assemble(d)
    wanted = signal_texts(d)
    r = Run(d, sys, SignalEval(d, sys), wanted, Results(design=d, signals=wanted), progress, keep_all=keep_all)
    for analysis in ANALYSES:
        if analysis.wanted(d):
            analysis.solve(r)
    res = r.res
    res.checks = [evaluate_expectation(e, res, r.signal) for e in d.expectations]
    if any(isinstance(e, Thermoelectric) for e in d.elements):
        where = "transient" if "transient" in r.states else "steady"  # the driven state, when there is one
        res.figures = figures(d, lambda text: float(np.atleast_1d(r.signal(where, text))[-1]))
        res.figures_at = "steady state" if where == "steady" else "end of the transient"
    if any(isinstance(e, Thermoelectric) for e in d.elements) or d.humidity is not None:
        res.cautions = cautions(d, lambda text: np.concatenate([_values(r, a, text) for a in r.states]))
    if "transient" in r.states and sys.switches:
        X, _, t, left_rows = r.states["transient"]
        res.cautions += opening_cautions(d, sys, X, t, left_rows, res.events)
    res.checks += [_audit(d, a, r.states.get("transient"), r.sig) for a in d.audits]
    return res


def _values(r: Run, analysis: str, text: str) -> np.ndarray:
    """A signal's solved values, or, of a node a long transient did not keep, its extremes."""
    try:
        return np.atleast_1d(r.signal(analysis, text))
    except NotKept:
        return extremes(r.states[analysis][0], r.sys, text)


def _audit(d: Design, a, transient, sig) -> Check:
    text = f"audit {a.kind}" + (f" within {100 * a.within:g} %" if a.within is not None else "")
    if transient is None:
        return Check(text, float("nan"), float("nan"), "", False, a.loc, "an audit needs a `transient`")
    X, Xd, t, left_rows = transient
    names = needed_signals(d)
    # Each stored sample is consistent with its own side of a corner (a corner is stored twice
    # when the state jumps there), so one evaluation serves as both limits.
    right = left = audit_waveforms(d, names, transient, sig)
    if a.kind == "energy":
        result = energy_audit(d, t, right, left, a.within)
        return Check(text, 100 * result.measured, 100 * result.limit, "%", result.passed, a.loc, result.detail,
                     compare="≤")
    result = entropy_audit(d, t, right, left)
    return Check(text, result.measured, result.limit, "1", result.passed, a.loc, result.detail, compare="≥")


def audit_waveforms(d: Design, names, transient, sig) -> dict:
    """The audits' waveforms of solved states: the signals `names`, and the heat flowing into
    each mass from the system's own equations at each state, −(G·x + f(x) − b(t)) in its row
    (what C·dT/dt must equal)."""
    X, Xd, t, left_rows = transient
    out = {s: sig(s, X, Xd, t, left_rows) for s in names}
    sys = sig.sys
    masses = [n for n in d.nodes.values() if n.capacity is not None]
    if masses:
        rows = np.array([sys.node_index[n.name] for n in masses])
        flags = np.broadcast_to(np.asarray(left_rows, dtype=bool), t.shape)
        heat = np.array([-sys.F(X[k], float(t[k]), sys.switch_state(float(t[k])), bool(flags[k]))[rows]
                         for k in range(len(t))])
        for j, n in enumerate(masses):
            out[inflow(n.name)] = heat[:, j]
    return out


# `design.run()` is `netgen.run(design)`: the model knows no solver, so the runner is handed down here.
Design.runner = staticmethod(run)
