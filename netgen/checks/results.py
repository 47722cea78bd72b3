"""Results: the steady table, the waveforms, the checks; and the evaluation of expectations."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from netgen.checks import windows as W
from netgen.model.design import Design, Expectation, Signal
from netgen.model.expr import Binary, SignalRef, evaluate

_trapz = getattr(np, "trapezoid", None) or np.trapz


@dataclass
class Check:
    """One evaluated expectation."""

    text: str
    measured: float
    limit: float
    unit: str
    passed: bool
    loc: object = None
    detail: str = ""
    celsius: bool = False  # the limit was written in degC: show it so
    compare: str = ""  # an audit's comparison, printed before its limit: "≤" or "≥"


@dataclass
class Results:
    """What a run produced: steady values and waveforms by signal name, and checks."""

    design: Design
    signals: list[str]
    steady: dict[str, float] | None = None
    time: np.ndarray | None = None
    waveforms: dict[str, np.ndarray] = field(default_factory=dict)
    checks: list[Check] = field(default_factory=list)
    stats: dict = field(default_factory=dict)
    initial: dict[str, float] = field(default_factory=dict)
    modes: list | None = None  # analysis.modes.Mode, slowest first
    forecast: list = field(default_factory=list)  # analysis.modes.Forecast: linear estimates of swings
    figures: list[dict] = field(default_factory=list)  # per module, see merit.figures
    figures_at: str = ""
    cautions: list[str] = field(default_factory=list)
    responses: list = field(default_factory=list)  # solve.response.Response, in the file's order
    windows: list[dict] = field(default_factory=list)  # {"line", "start", "end", "duration"} per window
    events: list[dict] = field(default_factory=list)  # {"element", "what", "time"}: switches acting on conditions

    def __getitem__(self, signal: str) -> np.ndarray:
        return self.waveforms[signal]

    def __repr__(self) -> str:
        parts = []
        if self.steady is not None:
            parts.append("steady")
        if self.time is not None:
            parts.append(f"transient of {len(self.time)} points to {float(self.time[-1]):g} s")
        if self.modes is not None:
            parts.append(f"{len(self.modes)} modes")
        passed = sum(c.passed for c in self.checks)
        checks = f", {passed} of {len(self.checks)} checks pass" if self.checks else ""
        n = len(self.signals)
        return f"<Results {self.design.file}: {', '.join(parts) or 'nothing solved'}, {n} signal{'s' * (n != 1)}{checks}>"

    def to_frame(self):
        """The recorded signals as a table: over the transient (a `time` column, then one column
        per signal) if there is one, else the steady state as one row. A pandas DataFrame when
        pandas is installed, else a dict of numpy arrays by column.

        Example:
            >>> res = netgen.load("examples/detector_cooler.etn").run()
            >>> res.to_frame()["T(die)"][-1]     # the die's temperature at the end, in K
        """
        if self.time is not None:
            data = {"time": np.asarray(self.time, dtype=float)}
            data.update({s: np.asarray(self.waveforms[s], dtype=float) for s in self.signals if s in self.waveforms})
        else:
            data = {s: np.array([float(v)]) for s, v in (self.steady or {}).items()}
        try:
            import pandas
        except ImportError:
            return data
        return pandas.DataFrame(data)

    @property
    def passed(self) -> bool:
        return all(c.passed for c in self.checks)


def refs(expr) -> list[SignalRef]:
    return [n for n in expr.walk() if isinstance(n, SignalRef)]


def series(expr, t: np.ndarray, signals) -> np.ndarray:
    """An expression of signals over the times t, undefined (NaN) where a denominator is zero to
    round-off (below 1e-9 of its own largest size): a ratio such as P(load) / Q(teg.a) before a
    ramp starts is 0/0 there, not ±5e30."""
    y = np.array(np.broadcast_to(evaluate(expr, t, signals=signals), t.shape), dtype=float)
    for node in expr.walk():
        if isinstance(node, Binary) and node.op == "/" and node.b.uses_signals:
            den = np.abs(np.broadcast_to(evaluate(node.b, t, signals=signals), t.shape))
            y[den <= 1e-9 * np.max(den, initial=0.0)] = np.nan
    return y


def evaluate_expectation(e: Expectation, res: Results, signal_of) -> Check:
    """Aggregate a signal expression and compare with its limit."""
    names = {r.text for r in refs(e.expr)}
    if e.agg == "steady":
        if res.steady is None:
            return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "the design has no `steady` analysis")
        values = {n: np.atleast_1d(np.asarray(signal_of("steady", n), dtype=float)).ravel()[:1] for n in names}
        measured = float(np.atleast_1d(evaluate(e.expr, 0.0, signals=values)).ravel()[0])
    else:
        if res.time is None:
            return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "the design has no `transient` analysis")
        t = res.time
        values = {n: signal_of("transient", n) for n in names}
        if e.agg == "window":
            return _window(e, res, t, values)
        y = series(e.expr, t, values)
        if e.agg.startswith("time of"):
            mask = ~np.isnan(y)
            if e.between:
                mask &= (t >= e.between[0]) & (t <= e.between[1])
            measured = float(W.extreme(t, y, e.agg[-3:], mask)[0])
            if not np.isfinite(measured):
                return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "no samples in the interval")
        elif e.agg == "at":
            measured = float(np.interp(e.at_time, t, y))
        else:
            mask = np.ones_like(t, dtype=bool)
            if e.between:
                mask = (t >= e.between[0]) & (t <= e.between[1])
            mask &= ~np.isnan(y)  # where a ratio is 0/0 it says nothing
            seg, tt = y[mask], t[mask]
            if len(seg) == 0:
                return Check(e.text, float("nan"), e.limit, e.unit, False, e.loc, "no samples in the interval")
            if e.agg == "max":
                measured = float(seg.max())
            elif e.agg == "min":
                measured = float(seg.min())
            elif e.agg == "final":
                measured = float(seg[-1])
            else:  # mean over time, trapezoidal
                span = tt[-1] - tt[0]
                measured = float(_trapz(seg, tt) / span) if span > 0 else float(seg[0])
    return _compare(e, measured)


def _compare(e: Expectation, measured: float, detail: str = "") -> Check:
    lim = e.limit
    if e.cmp == "=":
        tol = e.within if e.within >= 0 else -e.within * abs(lim)
        ok = abs(measured - lim) <= tol
    else:
        ok = {"<": measured < lim, "<=": measured <= lim, ">": measured > lim, ">=": measured >= lim}[e.cmp]
    return Check(e.text, measured, lim, e.unit, bool(ok), e.loc, detail, celsius=e.celsius)


def _window(e: Expectation, res: Results, t, values) -> Check:
    """`expect window ... lasts CMP D`: every window is kept in the Results; the longest is judged."""
    margins = [np.nan_to_num(series(m, t, values), nan=-1.0) for m in e.margins]  # 0/0: does not hold
    found = W.windows(t, margins)
    line = e.loc.line if e.loc is not None else None
    res.windows += [{"line": line, "start": float(w.start), "end": float(w.end), "duration": float(w.duration)}
                    for w in found]
    longest = max((w.duration for w in found), default=0.0)
    many = len(found)
    detail = ("no window" if not many else f"the longest of {many} windows" if many > 1 else "one window")
    return _compare(e, longest, detail)


__all__ = ["Results", "Check", "evaluate_expectation", "Signal"]
