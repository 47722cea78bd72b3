"""Putting the simulator's points on our time grid, and how much a signal moves across an edge."""
from __future__ import annotations

import numpy as np


class Onto:
    """Puts the simulator's values on our times t: a monotone cubic (PCHIP) through its points,
    piece by piece between the corners of the sources.

    A straight line between its points is off by h²/8·|y''| where the simulator steps far (a
    reservoir's sine is only a source to it: half a millikelvin; a module's heat, quadratic in
    a current that falls linearly, 10 mW). One cubic reaching across a corner bends a ramp's kink
    into millikelvins, so each piece between corners has its own. PCHIP, unlike a spline or
    Akima's cubic, never overshoots next to an edge (Akima's made 28 V of a 0.5 V step). The
    pieces are computed together (Fritsch and Butland's slopes, as scipy's PchipInterpolator),
    so a long pulse train with thousands of corners stays cheap.

    Where the simulator stepped over a corner (ngspice does not land on a periodic PULSE's
    corners after its first periods), its value between those two points is not known: which
    of our times fall there is `unsure`, the corners are `missed`, and `movement` says how much
    a signal moves over the simulator's points around them."""

    def __init__(self, ts: np.ndarray, t: np.ndarray, cuts: list[float], corners: list[float]):
        self.ts, self.tq = ts, np.clip(t, ts[0], ts[-1])
        n = len(ts)
        cs = np.asarray(cuts, dtype=float)
        # Piece i runs from cut i-1 to cut i; a simulator point on a cut ends one piece and
        # starts the next, so it is listed in both. "On" allows for rounding: ngspice puts a
        # PULSE corner at 15.343000000000002 s where the shape's own arithmetic says 15.343.
        on = 1e-12 * (ts[-1] - ts[0])  # ngspice steps 1e-8 past a corner: far more than this
        lo = np.concatenate([[0], np.searchsorted(ts, cs - on, "left")])
        hi = np.concatenate([np.searchsorted(ts, cs + on, "right") - 1, [n - 1]])
        size = np.maximum(hi - lo + 1, 0)
        self.idx = np.repeat(lo, size) + np.arange(size.sum()) - np.repeat(np.cumsum(size) - size, size)
        self.piece = np.repeat(np.arange(len(size)), size)
        self.first = np.concatenate([[0], np.cumsum(size)[:-1]])  # position of each piece's first point
        self.size = size
        # Each of our times: its piece, and the interval in that piece it falls in.
        q = np.searchsorted(cs, self.tq, "right")
        start, count = self.first[q], size[q]
        x = ts[self.idx]
        pos = np.searchsorted(x, self.tq, "right") - 1
        self.pos = np.clip(pos, start, start + np.maximum(count - 2, 0))
        self.ok = count >= 2  # a piece with one point (or none) is read as a straight line
        k = np.clip(np.searchsorted(ts, self.tq, side="right") - 1, 0, max(n - 2, 0))
        self.k, self.k1 = k, np.clip(k + 1, 0, n - 1)  # ts[k] <= t <= ts[k + 1]
        self.unsure = np.zeros(len(t), dtype=bool)
        self.missed: list[float] = []
        cc = np.asarray(sorted(corners), dtype=float)  # the cuts that are corners of a source
        if len(cc) and n >= 2:
            j = np.clip(np.searchsorted(cc, ts[k], side="right"), 0, len(cc) - 1)
            gap = 1e-6 * (ts[self.k1] - ts[k])  # a point that close is on the corner
            self.unsure = (cc[j] > ts[k] + gap) & (cc[j] < ts[self.k1] - gap)
            self.missed = sorted(set(cc[j][self.unsure].tolist()))

    def __call__(self, ys: np.ndarray) -> np.ndarray:
        line = np.interp(self.tq, self.ts, ys)
        if len(self.idx) < 2 or not np.all(np.isfinite(ys)):
            return line
        x, y = self.ts[self.idx], ys[self.idx]
        d = _slopes(x, y, self.piece)
        p, p1 = self.pos, np.minimum(self.pos + 1, len(x) - 1)
        h = x[p1] - x[p]
        safe = np.where(h > 0, h, 1.0)
        s = (self.tq - x[p]) / safe
        # Cubic Hermite on [x_p, x_p+1]. Between a cut and a piece's first or last point (s
        # outside [0, 1]) the straight line between the simulator's neighbouring points is
        # read: an end slope continued there is wild when the point sits on an edge.
        h00, h10, h01, h11 = 2 * s**3 - 3 * s**2 + 1, s**3 - 2 * s**2 + s, -2 * s**3 + 3 * s**2, s**3 - s**2
        cubic = h00 * y[p] + h10 * h * d[p] + h01 * y[p1] + h11 * h * d[p1]
        return np.where(self.ok & (h > 0) & (s >= 0) & (s <= 1), cubic, line)

    def movement(self, ys: np.ndarray) -> np.ndarray:
        """Per time of ours that is `unsure`: the range of the simulator's values over the two
        points either side of it (the corner it skipped lies between); elsewhere zero."""
        n = len(self.ts)
        around = [np.clip(self.k + o, 0, n - 1) for o in (-1, 0, 1, 2)]
        span = np.max([ys[i] for i in around], axis=0) - np.min([ys[i] for i in around], axis=0)
        return np.where(self.unsure, span, 0.0)


def _slopes(x: np.ndarray, y: np.ndarray, piece: np.ndarray) -> np.ndarray:
    """PCHIP slopes at every point, each piece on its own (scipy's rules: a weighted harmonic
    mean of the neighbouring secants inside, zero at an extremum, a shape-preserving three-point
    formula at the ends, the secant where a piece has two points)."""
    n = len(x)
    h = np.diff(x)
    same = piece[1:] == piece[:-1]
    m = np.where(same & (h > 0), np.diff(y) / np.where(h > 0, h, 1.0), 0.0)  # secants
    d = np.zeros(n)
    inner = np.zeros(n, dtype=bool)
    inner[1:-1] = same[:-1] & same[1:]
    i = np.flatnonzero(inner)
    if len(i):
        h0, h1, m0, m1 = h[i - 1], h[i], m[i - 1], m[i]
        w1, w2 = 2 * h1 + h0, h1 + 2 * h0
        agree = (np.sign(m0) * np.sign(m1) > 0)
        with np.errstate(divide="ignore", invalid="ignore"):
            hm = (w1 + w2) / (w1 / m0 + w2 / m1)
        d[i] = np.where(agree, hm, 0.0)
    # A piece's ends: its first points (with the next interval) and its last (with the one before).
    starts = np.flatnonzero(np.concatenate([[True], ~same]) & np.concatenate([same, [False]]))
    ends = np.flatnonzero(np.concatenate([~same, [True]]) & np.concatenate([[False], same]))
    padded = np.concatenate([[False], [False], same, [False], [False]])  # same[j] is padded[j + 2]
    for e, ha, hb, ma, mb, two in (
            (starts, h[starts], _at(h, starts + 1), m[starts], _at(m, starts + 1), ~padded[starts + 3]),
            (ends, h[ends - 1], _at(h, ends - 2), m[ends - 1], _at(m, ends - 2), ~padded[ends])):
        with np.errstate(divide="ignore", invalid="ignore"):
            dd = ((2 * ha + hb) * ma - ha * mb) / (ha + hb)
        dd = np.where(np.sign(dd) != np.sign(ma), 0.0, dd)
        dd = np.where((np.sign(ma) != np.sign(mb)) & (np.abs(dd) > 3 * np.abs(ma)), 3 * ma, dd)
        d[e] = np.where(two, ma, dd)  # a piece of two points: its one secant
    return d


def _at(a: np.ndarray, i: np.ndarray) -> np.ndarray:
    return a[np.clip(i, 0, len(a) - 1)] if len(a) else np.zeros(len(i))


def cuts(corners: list[float], jumps: list[float], window: float, until: float) -> list[float]:
    """Where the cubic must not reach across: every corner, and both ends of a jump's window."""
    at_jump = set(jumps)
    out = {c for c in corners if c not in at_jump}
    for tj in at_jump:
        out.update((tj - window, tj + window))
    return sorted(c for c in out if 0.0 < c < until)


def near(t: np.ndarray, jumps: list[float], w: float) -> np.ndarray:
    """Which of our times lie within w of a jump."""
    if not jumps:
        return np.zeros(len(t), dtype=bool)
    js = np.sort(np.asarray(jumps, dtype=float))
    i = np.clip(np.searchsorted(js, t), 1, len(js)) if len(js) > 1 else np.ones(len(t), dtype=int)
    nearest = np.minimum(np.abs(t - js[np.clip(i - 1, 0, len(js) - 1)]), np.abs(t - js[np.clip(i, 0, len(js) - 1)]))
    return nearest <= w


def spread(t: np.ndarray, y: np.ndarray, ts: np.ndarray, ysim: np.ndarray, jumps: list[float],
           w: float) -> np.ndarray:
    """Per point of ours near a jump: how much the signal moves within that jump's window, in
    either result. Across an edge the two may differ by as much, and by no more."""
    out = np.zeros_like(t)
    for tj in jumps:
        lo, hi = tj - w, tj + w
        a, b = np.searchsorted(t, lo, "left"), np.searchsorted(t, hi, "right")
        if a == b:
            continue
        sa, sb = np.searchsorted(ts, lo, "left"), np.searchsorted(ts, hi, "right")
        vals = np.concatenate([y[a:b], ysim[sa:sb], np.interp([lo, hi], ts, ysim)])
        out[a:b] = np.maximum(out[a:b], np.ptp(vals))
    return out
