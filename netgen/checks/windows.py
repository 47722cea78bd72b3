"""Windows and times on the solution's interpolant: when a condition holds, and when an extreme falls.

The transient reports its accepted steps. Between them the solution is read on a local cubic:
the cubic through the four reported points around an interval (Lagrange form, non-uniform
times), which is fourth-order accurate like the solution it interpolates. A condition's edge is
the root of that cubic inside the interval where the sampled margin changes sign (bracketed,
found by Brent's method); the time of a minimum or maximum is the zero of the cubic's derivative
next to the reported extreme. Corners, where a source jumps and the transient stores two points
at one time, cut the series into smooth pieces, and no cubic reaches across one.

A window is a stretch of time in which every comparison of a condition holds. Several windows
may open and close during a run; all are reported, and `lasts` judges the longest one (a run with
no window measures 0 s).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass
class Window:
    start: float
    end: float

    @property
    def duration(self) -> float:
        return self.end - self.start


def pieces(t: np.ndarray) -> list[tuple[int, int]]:
    """[i, j) index ranges of the smooth pieces: a repeated time (a corner) starts a new piece."""
    cuts = np.flatnonzero(np.diff(t) <= 0) + 1
    bounds = [0, *cuts.tolist(), len(t)]
    return [(a, b) for a, b in zip(bounds, bounds[1:]) if b > a]


def _stencil(i: int, lo: int, hi: int) -> range:
    """Four points around the interval [i, i+1] inside the piece [lo, hi) (fewer if it is short)."""
    n = min(4, hi - lo)
    first = min(max(i - 1, lo), hi - n)
    return range(first, first + n)


def _cubic(t: np.ndarray, y: np.ndarray, idx: range) -> np.poly1d:
    """The interpolating polynomial through the points idx, in the variable (time − t[idx[0]])."""
    tt = t[list(idx)] - t[idx[0]]
    return np.poly1d(np.polyfit(tt, y[list(idx)], len(idx) - 1))


def _root(t, y, i, lo, hi) -> float:
    """The time in [t_i, t_i+1] where the local cubic crosses zero (y changes sign there)."""
    idx = _stencil(i, lo, hi)
    p, t0 = _cubic(t, y, idx), t[idx[0]]
    a, b = t[i] - t0, t[i + 1] - t0
    fa, fb = p(a), p(b)
    if fa == 0:
        return t[i]
    if fb == 0 or np.sign(fa) == np.sign(fb):
        # Round-off in the fit: the samples themselves bracket the root; fall back to a line.
        return t[i] + (t[i + 1] - t[i]) * y[i] / (y[i] - y[i + 1])
    from scipy.optimize import brentq  # here: scipy.optimize is a third of a run's imports, and few runs need it

    return t0 + brentq(p, a, b, xtol=1e-15 * max(1.0, abs(t[i + 1])), rtol=1e-14)


def holds(t: np.ndarray, margin: np.ndarray) -> list[Window]:
    """The stretches where margin > 0, with their edges on the local cubic."""
    out: list[Window] = []
    for lo, hi in pieces(t):
        y = margin[lo:hi]
        inside = y > 0
        start = t[lo] if inside[0] else None
        for k in range(lo, hi - 1):
            a, b = margin[k] > 0, margin[k + 1] > 0
            if a == b:
                continue
            edge = _root(t, margin, k, lo, hi)
            if b:
                start = edge
            else:
                out.append(Window(start, edge))
                start = None
        if start is not None:
            out.append(Window(start, t[hi - 1]))
    return _join(out)


def _join(ws: list[Window]) -> list[Window]:
    """Windows that touch across a corner are one."""
    out: list[Window] = []
    for w in ws:
        if out and w.start <= out[-1].end:
            out[-1] = Window(out[-1].start, max(out[-1].end, w.end))
        else:
            out.append(w)
    return out


def intersect(a: list[Window], b: list[Window]) -> list[Window]:
    out, i, j = [], 0, 0
    while i < len(a) and j < len(b):
        s, e = max(a[i].start, b[j].start), min(a[i].end, b[j].end)
        if e > s:
            out.append(Window(s, e))
        if a[i].end < b[j].end:
            i += 1
        else:
            j += 1
    return out


def windows(t: np.ndarray, margins: list[np.ndarray]) -> list[Window]:
    """Where every margin is positive (each comparison of a condition as `margin > 0`)."""
    result = None
    for m in margins:
        w = holds(t, m)
        result = w if result is None else intersect(result, w)
    return [w for w in (result or []) if w.duration > 0]


def extreme(t: np.ndarray, y: np.ndarray, which: str, mask: np.ndarray | None = None) -> tuple[float, float]:
    """(time, value) of the minimum or maximum of y on the local cubic around the reported one."""
    sign = 1.0 if which == "min" else -1.0
    cand = np.flatnonzero(mask) if mask is not None else np.arange(len(t))
    if len(cand) == 0:
        return float("nan"), float("nan")
    k = int(cand[np.argmin(sign * y[cand])])
    best_t, best_v = float(t[k]), float(y[k])
    lo, hi = next((a, b) for a, b in pieces(t) if a <= k < b)
    for i in (k - 1, k):  # the intervals on either side of the reported extreme
        if i < lo or i + 1 >= hi or (mask is not None and not (mask[i] and mask[i + 1])):
            continue
        idx = _stencil(i, lo, hi)
        p, t0 = _cubic(t, y, idx), t[idx[0]]
        for r in p.deriv().roots:
            if abs(r.imag) > 1e-12 * max(1.0, abs(r.real)):
                continue
            tr = float(r.real) + t0
            if t[i] <= tr <= t[i + 1] and sign * p(tr - t0) < sign * best_v:
                best_t, best_v = tr, float(p(tr - t0))
    return best_t, best_v
