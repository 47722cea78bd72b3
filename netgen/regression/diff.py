"""Per-signal tolerances and the comparison of a run's waveforms with a stored baseline."""
from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
from netgen.model.signals import kind_of, signal_unit

DEFAULT_RTOL = 1e-3  # of the signal's range in the baseline
# Absolute floors by kind: a few mK for temperatures (they sit near 300 K, so a share of their
# value would be far too loose), and the solver's own floors for the rest.
ATOL = {"T": 5e-3, "V": 1e-6, "I": 1e-6, "Q": 1e-6, "P": 1e-6}


@dataclass(frozen=True)
class Tolerance:
    """Allowed deviation of one signal: `atol + rtol · range` (range: max − min in the baseline)."""

    atol: float
    rtol: float

    def allowed(self, scale: float) -> float:
        return self.atol + self.rtol * scale

    def as_dict(self) -> dict:
        return {"atol": self.atol, "rtol": self.rtol}


unit_of = signal_unit


def default_tolerance(signal: str, rtol: float | None = None) -> Tolerance:
    """The default for a signal's kind; `rtol` replaces the default relative part."""
    return Tolerance(ATOL.get(kind_of(signal), 1e-9), DEFAULT_RTOL if rtol is None else rtol)


@dataclass
class SignalDiff:
    """The largest deviation of one signal from its baseline, relative to what is allowed."""

    signal: str
    deviation: float  # new − baseline at the worst point (signed)
    allowed: float
    time: float | None  # None: the steady state
    unit: str
    range: float = 0.0  # the signal's own range in the baseline (what `rtol` is a share of)

    @property
    def share(self) -> float:
        """How much of its own range the signal moved (inf for a signal with no range)."""
        if not np.isfinite(self.deviation):
            return float("inf")
        return abs(self.deviation) / self.range if self.range > 0 else float("inf") if self.deviation else 0.0

    @property
    def ratio(self) -> float:
        if not np.isfinite(self.deviation):
            return float("inf")
        return abs(self.deviation) / self.allowed if self.allowed > 0 else float("inf")

    @property
    def passed(self) -> bool:
        return bool(abs(self.deviation) <= self.allowed)

    @property
    def where(self) -> str:
        return "in the steady state" if self.time is None else f"at t = {self.time:.6g} s"


@dataclass
class Comparison:
    """The outcome of comparing one run with its baseline."""

    diffs: list[SignalDiff] = field(default_factory=list)
    missing: list[str] = field(default_factory=list)  # in the baseline, not recorded by the run
    new: list[str] = field(default_factory=list)  # recorded by the run, not in the baseline
    problems: list[str] = field(default_factory=list)  # what could not be compared

    @property
    def passed(self) -> bool:
        return not self.missing and not self.problems and all(d.passed for d in self.diffs)

    @property
    def worst(self) -> SignalDiff | None:
        return max(self.diffs, key=lambda d: d.ratio, default=None)

    @property
    def beyond(self) -> list[SignalDiff]:
        """Every signal beyond its tolerance, worst first by the share of its own range it moved
        (a heat flow that moved 2 % and a temperature that moved 5 % of their ranges: the
        temperature first, whatever their tolerances)."""
        return sorted((d for d in self.diffs if not d.passed), key=lambda d: (-d.share, -d.ratio))

    def summary(self) -> str:
        """One line: what failed, or how close the worst signal came."""
        w = self.worst
        if self.problems or self.missing:
            parts = list(self.problems)
            if self.missing:
                parts.append("not recorded any more: " + ", ".join(self.missing))
            return "; ".join(parts)
        if w is None:
            return "nothing to compare"
        size = f"{w.deviation:+.4g} {w.unit}".rstrip()
        if not w.passed:
            bad = self.beyond
            each = "; ".join(_moved(d) for d in bad)
            if len(bad) == 1:
                return each
            return f"{len(bad)} signals beyond their tolerance, the largest share of its range first: {each}"
        if w.ratio < 1e-3:
            return "every signal within 0.1 % of its tolerance"
        return f"closest is {w.signal}, at {100 * w.ratio:.2g} % of its tolerance {w.where}"


def _moved(d: SignalDiff) -> str:
    size = f"{d.deviation:+.4g} {d.unit}".rstrip()
    share = (f"{100 * d.share:.3g} % of its range, " if np.isfinite(d.share) and d.range > 0 else "")
    return (f"{d.signal} is off by {size} {d.where} ({share}allowed ±{d.allowed:.3g} {d.unit}, "
            f"{d.ratio:.3g} times that)").replace("  ", " ")


def _spread(values) -> float:
    v = np.asarray(list(values), dtype=float)
    v = v[np.isfinite(v)]
    return float(v.max() - v.min()) if len(v) else 0.0


def scales(base) -> dict[str, float]:
    """What each relative tolerance refers to: the signal's range (max − min) in the baseline.
    Without a transient there is no range: a temperature then takes the spread of the steady
    temperatures (a share of ~300 K would be far too loose), any other signal its own size."""
    steady = base.steady or {}
    if base.time is not None:
        return {s: _spread(np.append(w, [steady[s]] if s in steady else [])) for s, w in base.signals.items()}
    temps = _spread(v for s, v in steady.items() if kind_of(s) == "T")
    return {s: temps if kind_of(s) == "T" else abs(float(v)) for s, v in steady.items()}


def resample(tq: np.ndarray, t: np.ndarray, y: np.ndarray) -> np.ndarray:
    """`y(t)` at the times `tq`: a cubic spline through each stretch between corners, where linear
    interpolation would differ by h²/8·|y''| between two runs on different grids. `t` repeats a
    time where the values jump (a corner stored twice); a query time that repeats takes the value
    before the jump at its first copy and after it at its second, so two runs with the same corner
    compare side by side."""
    from scipy.interpolate import CubicSpline

    tq = np.asarray(tq, dtype=float)
    n = len(t)
    if n == 1:
        return np.full(tq.shape, float(y[0]))
    left = np.zeros(tq.shape, dtype=bool)
    left[:-1] = tq[:-1] == tq[1:]  # the first copy of a repeated query time
    j = np.where(left, np.searchsorted(t, tq, side="left"), np.searchsorted(t, tq, side="right"))
    j = np.clip(j, 1, n - 1)
    t0, t1, y0, y1 = t[j - 1], t[j], y[j - 1], y[j]
    h = t1 - t0
    w = np.divide(tq - t0, h, out=np.ones_like(tq), where=h > 0)
    out = y0 + np.clip(w, 0.0, 1.0) * (y1 - y0)
    stretch = np.concatenate([[0], np.cumsum(np.diff(t) == 0)])  # which stretch each sample is in
    for k in range(int(stretch[-1]) + 1):
        idx = np.flatnonzero(stretch == k)
        if len(idx) < 4 or not np.isfinite(y[idx]).all():
            continue  # too short for a spline: linear
        mask = (stretch[j - 1] == k) & (stretch[j] == k) & (h > 0)
        if mask.any():
            ts = t[idx]
            out[mask] = CubicSpline(ts, y[idx])(np.clip(tq[mask], ts[0], ts[-1]))
    return out


def compare(base, time: np.ndarray | None, waves: dict, steady: dict | None, signals: list[str],
            tolerances: dict[str, Tolerance]) -> Comparison:
    """Compare a run (its recorded `signals`) with a `baseline.Baseline`, on the baseline's grid."""
    out = Comparison()
    base_names = list(base.signals) if base.time is not None else list(base.steady or {})
    out.missing = [s for s in base_names if s not in signals]
    out.new = [s for s in signals if s not in base_names]
    if base.time is not None and time is None:
        out.problems.append("the baseline has a transient and this run has none")
    if base.steady is not None and steady is None:
        out.problems.append("the baseline has a steady state and this run has none")
    if base.time is None and time is not None:
        out.problems.append("this run has a transient and the baseline has none")
    grid = None
    if base.time is not None and time is not None:
        bt = base.time
        span = max(abs(float(bt[-1])), 1e-300)
        if abs(float(time[-1]) - float(bt[-1])) > 1e-9 * span or abs(float(time[0]) - float(bt[0])) > 1e-9 * span:
            out.problems.append(f"this run covers {time[0]:g} .. {time[-1]:g} s, "
                                f"the baseline {bt[0]:g} .. {bt[-1]:g} s")
        else:
            grid = bt
    scale = scales(base)
    for s in signals:
        if s not in base_names:
            continue
        bwave = base.signals.get(s) if base.time is not None else None
        bsteady = (base.steady or {}).get(s)
        allowed = tolerances[s].allowed(scale.get(s, 0.0))
        cands = []
        if grid is not None and s in waves:
            dev = resample(grid, time, np.asarray(waves[s], dtype=float)) - bwave
            bad = ~np.isfinite(dev)
            k = int(np.argmax(bad)) if bad.any() else int(np.argmax(np.abs(dev)))
            cands.append(SignalDiff(s, float(dev[k]), allowed, float(grid[k]), unit_of(s), scale.get(s, 0.0)))
        if bsteady is not None and steady is not None and s in steady:
            cands.append(SignalDiff(s, float(steady[s]) - float(bsteady), allowed, None, unit_of(s),
                                    scale.get(s, 0.0)))
        if cands:
            out.diffs.append(max(cands, key=lambda c: c.ratio))
    return out
