"""Runs a Design's analyses in order: assemble, steady, transient, expectations → Results."""
from __future__ import annotations

import numpy as np

from netgen.solve.modes import forecast, modes
from netgen.solve.steady import solve_dc
from netgen.solve.transient import integrate
from netgen.solve.assembly import assemble
from netgen.model.design import Design, Modes, Thermoelectric
from netgen.checks.merit import cautions, figures
from netgen.model.errors import NetgenError
from netgen.checks.audits import energy_audit, entropy_audit, needed_signals
from netgen.checks.results import Check, Results, SignalEval, evaluate_expectation, refs, signal_texts


def run_design(d: Design, progress=None) -> Results:
    """Solve every analysis of `d`. With none declared, the steady state is solved."""
    sys = assemble(d)
    sig = SignalEval(d, sys)
    wanted = signal_texts(d)
    extra = [r.text for e in d.expectations for r in refs(e.expr)]
    res = Results(design=d, signals=wanted)
    states: dict[str, tuple] = {}
    want_steady = d.steady is not None or d.transient is None or any(e.agg == "steady" for e in d.expectations)
    if want_steady:
        try:
            xs = solve_dc(sys, 0.0)
        except NetgenError as e:
            e.loc = e.loc or (d.steady.loc if d.steady else None)
            raise
        X = xs[None, :]
        states["steady"] = (X, np.zeros_like(X), np.array([0.0]), False)
        res.steady = {s: float(sig(s, X, np.zeros_like(X), np.array([0.0]))[0]) for s in wanted}
    if d.transient is not None:
        tr = d.transient
        try:
            x0 = solve_dc(sys, 0.0, impose=True)
            wf = integrate(sys, x0, tr.until, tr.step, tr.tolerance, progress)
        except NetgenError as e:
            e.loc = e.loc or tr.loc
            part = getattr(e, "partial", None)
            if part is not None and len(part.time) > 1:
                # Keep what was computed: the caller may write it, marked as partial.
                res.time = part.time
                res.waveforms = {s: sig(s, part.x, part.xdot, part.time, part.left_rows) for s in wanted}
                res.stats = {"steps": part.steps, "rejected": part.rejected, "partial": True,
                             "stopped": e.message}
                e.results = res
            raise
        states["transient"] = (wf.x, wf.xdot, wf.time, wf.left_rows)
        res.time = wf.time
        res.waveforms = {s: sig(s, wf.x, wf.xdot, wf.time, wf.left_rows) for s in dict.fromkeys(wanted + extra)}
        res.initial = {name: float(v) for name, v in zip(sys.names, x0)}
        res.stats = {"steps": wf.steps, "rejected": wf.rejected, "factorizations": wf.factorizations}

    want_modes = next((a for a in d.analyses if isinstance(a, Modes)), None)
    if want_modes is not None:
        # The linearisation point: the transient's start when there is one, else the steady state.
        if d.transient is not None:
            x_lin = np.array([res.initial[n] for n in sys.names])
        else:
            x_lin = states["steady"][0][0] if "steady" in states else solve_dc(sys, 0.0, impose=True)
        try:
            res.modes = modes(sys, x_lin)
        except ValueError as e:
            raise NetgenError(str(e), want_modes.loc, "drop `modes` for a mesh this large") from None
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

    def signal_of(analysis, text):
        if analysis == "steady" and res.steady is not None and text in res.steady:
            return res.steady[text]
        return sig(text, *states[analysis])

    res.checks = [evaluate_expectation(e, res, signal_of) for e in d.expectations]
    if d.of_kind(Thermoelectric):
        where = "transient" if "transient" in states else "steady"  # the driven state, when there is one

        def final(text):
            v = signal_of(where, text)
            return float(np.atleast_1d(v)[-1])

        def every(text):
            return np.concatenate([np.atleast_1d(signal_of(a, text)) for a in states])

        res.figures = figures(d, final)
        res.figures_at = "steady state" if where == "steady" else "end of the transient"
        res.cautions = cautions(d, every)
    res.checks += [_audit(d, a, states.get("transient"), sig) for a in d.audits]
    return res


def _audit(d: Design, a, transient, sig) -> Check:
    text = f"audit {a.kind}" + (f" within {100 * a.within:g} %" if a.within is not None else "")
    if transient is None:
        return Check(text, float("nan"), float("nan"), "", False, a.loc, "an audit needs a `transient`")
    X, Xd, t, left_rows = transient
    names = needed_signals(d)
    # Each stored sample is consistent with its own side of a corner (a corner is stored twice
    # when the state jumps there), so one evaluation serves as both limits.
    right = left = {s: sig(s, X, Xd, t, left_rows) for s in names}
    if a.kind == "energy":
        r = energy_audit(d, t, right, left, a.within)
        return Check(text, 100 * r.measured, 100 * r.limit, "%", r.passed, a.loc, r.detail)
    r = entropy_audit(d, t, right, left)
    return Check(text, r.measured, r.limit, "1", r.passed, a.loc, r.detail)
