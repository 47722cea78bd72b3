"""Element stamps to sparse MNA matrices for both domains, with the nonlinear residual and its Jacobian.

The system is the DAE  C·x' + F(x, t) = 0  with  F = G(t)·x + f(x) − b(t), where G(t) is the
constant linear part plus switch conductances, f holds the nonlinear thermoelectric and
electro-thermal terms, and b(t) the sources. Each row of F is the sum of the flows (heat or
charge) leaving a node, or a branch equation.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from .design import (
    ELECTRICAL, THERMAL, Capacitor, CurrentSource, Design, Fixed, Heat, Inductor, Link, Resistor,
    Switch, Thermoelectric, VoltageSource,
)
from .expr import Wave

# Kinds of unknowns, for error weights and reporting.
TEMP, VOLT, AMP, WATT = "T", "V", "I", "Q"


class _Triplets:
    """COO triplets; entries touching the reference (index n) are dropped on build."""

    def __init__(self):
        self.r, self.c, self.v = [], [], []

    def add(self, i, j, v):
        self.r.append(i)
        self.c.append(j)
        self.v.append(v)

    def conductance(self, i, j, g):
        self.add(i, i, g)
        self.add(j, j, g)
        self.add(i, j, -g)
        self.add(j, i, -g)

    def build(self, n) -> sp.csc_matrix:
        r, c, v = (np.asarray(a) for a in (self.r, self.c, self.v))
        keep = (r < n) & (c < n) if len(r) else np.zeros(0, bool)
        return sp.coo_matrix((v[keep].astype(float), (r[keep], c[keep])), shape=(n, n)).tocsc()


@dataclass
class System:
    """The assembled equations of one Design; every solver reads only this."""

    names: list[str]
    kinds: list[str]
    G0: sp.csc_matrix
    C: sp.csc_matrix
    n: int
    node_index: dict[str, int]
    branch_index: dict[str, int]
    b_const: np.ndarray
    waves: list[tuple[int, float, Wave]]
    switches: list[Switch]
    sw_rows: np.ndarray
    sw_cols: np.ndarray
    sw_sign: np.ndarray
    sw_which: np.ndarray
    te: dict = field(default_factory=dict)
    nres: dict = field(default_factory=dict)
    tev: list = field(default_factory=list)  # (element, a, b, k) with temperature-dependent S, R, K
    start_nodes: list[tuple[int, int, float]] = field(default_factory=list)
    start_branches: list[tuple[int, float]] = field(default_factory=list)
    corners_of: list = field(default_factory=list)

    # ---- linear, time-dependent part ----------------------------------------------
    @property
    def linear(self) -> bool:
        return len(self.te["k"]) == 0 and len(self.nres["a"]) == 0 and not self.tev

    def switch_state(self, t: float) -> tuple[bool, ...]:
        return tuple(s.closed_at(t) for s in self.switches)

    def G(self, state: tuple[bool, ...] = ()) -> sp.csc_matrix:
        if not self.switches:
            return self.G0
        g = np.array([1.0 / (s.r_on if on else s.r_off) for s, on in zip(self.switches, state)])
        data = self.sw_sign * g[self.sw_which]
        return self.G0 + sp.coo_matrix((data, (self.sw_rows, self.sw_cols)), shape=(self.n, self.n)).tocsc()

    def b(self, t: float, left: bool = False) -> np.ndarray:
        out = self.b_const.copy()
        for row, sign, w in self.waves:
            v = w.at(t, left)
            if not math.isfinite(v):
                from .errors import SolveError

                raise SolveError(f"the source value on {self.names[row]} is not a finite number at t = {t:.6g} s",
                                 None, "check the expression for a division by zero or a log of zero")
            out[row] += sign * v
        return out

    def corners(self, t_end: float) -> list[float]:
        pts: set[float] = set()
        for w in self.corners_of:
            pts.update(w.corners(t_end))
        for s in self.switches:
            for t1, t2 in s.intervals:
                pts.update(p for p in (t1, t2) if 0 < p < t_end)
        return sorted(pts)

    # ---- nonlinear part ---------------------------------------------------------------
    def f(self, x: np.ndarray) -> np.ndarray:
        """Nonlinear flows leaving each row's node."""
        out = np.zeros(self.n + 1)
        xe = np.append(x, 0.0)
        te = self.te
        if len(te["k"]):
            Ta, Tb, I = xe[te["a"]], xe[te["b"]], xe[te["k"]]
            S, R = te["S"], te["R"]
            np.add.at(out, te["a"], S * Ta * I - 0.5 * R * I * I)
            np.add.at(out, te["b"], -(S * Tb * I + 0.5 * R * I * I))
        nr = self.nres
        if len(nr["a"]):
            u = xe[nr["a"]] - xe[nr["b"]]
            g, _ = self._res_g(xe)
            i = u * g
            np.add.at(out, nr["a"], i)
            np.add.at(out, nr["b"], -i)
            np.add.at(out, nr["h"], -u * i)
        for e, a, b, k in self.tev:
            Ta, Tb, I = xe[a], xe[b], xe[k]
            S, R, K = e.values_at(0.5 * (Ta + Tb))
            out[k] += -I * R - S * (Tb - Ta)
            out[a] += S * Ta * I - 0.5 * I * I * R + K * (Ta - Tb)
            out[b] -= S * Tb * I + 0.5 * I * I * R + K * (Ta - Tb)
        return out[: self.n]

    def _res_g(self, xe):
        nr = self.nres
        T = xe[nr["t"]]
        factor = 1.0 + nr["alpha"] * (T - nr["ref"])
        factor = np.maximum(factor, 1e-6)  # a resistance never reaches zero or below
        R = nr["R0"] * factor
        g = 1.0 / R
        dg = -nr["alpha"] * nr["R0"] * g * g
        dg = np.where(factor > 1e-6, dg, 0.0)
        return g, dg

    def jf(self, x: np.ndarray) -> sp.csc_matrix:
        """Jacobian of f, analytic, at positions fixed by the assembly."""
        xe = np.append(x, 0.0)
        rows, cols, vals = [], [], []
        te = self.te
        if len(te["k"]):
            a, b, k = te["a"], te["b"], te["k"]
            Ta, Tb, I = xe[a], xe[b], xe[k]
            S, R = te["S"], te["R"]
            rows += [a, a, b, b]
            cols += [a, k, b, k]
            vals += [S * I, S * Ta - R * I, -S * I, -(S * Tb + R * I)]
        nr = self.nres
        if len(nr["a"]):
            a, b, t, h = nr["a"], nr["b"], nr["t"], nr["h"]
            u = xe[a] - xe[b]
            g, dg = self._res_g(xe)
            for row, sgn in ((a, 1.0), (b, -1.0)):
                rows += [row, row, row]
                cols += [a, b, t]
                vals += [sgn * g, -sgn * g, sgn * u * dg]
            rows += [h, h, h]
            cols += [a, b, t]
            vals += [-2 * u * g, 2 * u * g, -u * u * dg]
        for e, a, b, k in self.tev:
            Ta, Tb, I = xe[a], xe[b], xe[k]
            Tm, dT = 0.5 * (Ta + Tb), 1e-3
            S, R, K = e.values_at(Tm)
            hi, lo = e.values_at(Tm + dT), e.values_at(Tm - dT)
            dS, dR, dK = ((h - l) / (2 * dT) for h, l in zip(hi, lo))  # d/dTm, central difference
            common_k = -0.5 * I * dR - 0.5 * dS * (Tb - Ta)
            fa_m = 0.5 * dS * Ta * I - 0.25 * I * I * dR + 0.5 * dK * (Ta - Tb)
            fb_m = 0.5 * dS * Tb * I + 0.25 * I * I * dR + 0.5 * dK * (Ta - Tb)
            entries = [
                (k, k, -R), (k, a, common_k + S), (k, b, common_k - S),
                (a, k, S * Ta - I * R), (a, a, S * I + K + fa_m), (a, b, -K + fa_m),
                (b, k, -(S * Tb + I * R)), (b, a, -(K + fb_m)), (b, b, -(S * I - K + fb_m)),
            ]
            rows.append(np.array([r for r, _, _ in entries]))
            cols.append(np.array([c for _, c, _ in entries]))
            vals.append(np.array([v for _, _, v in entries], dtype=float))
        if not rows:
            return sp.csc_matrix((self.n, self.n))
        r, c, v = np.concatenate(rows), np.concatenate(cols), np.concatenate(vals)
        keep = (r < self.n) & (c < self.n)
        return sp.coo_matrix((v[keep], (r[keep], c[keep])), shape=(self.n, self.n)).tocsc()

    # ---- whole residual ------------------------------------------------------------------
    def F(self, x, t, state, left=False):
        return self.G(state) @ x + self.f(x) - self.b(t, left)

    def J(self, x, state):
        if self.linear:
            return self.G(state)
        return self.G(state) + self.jf(x)

    @property
    def algebraic_rows(self) -> np.ndarray:
        return np.diff(self.C.tocsr().indptr) == 0


def assemble(d: Design) -> System:
    """Stamp every element of the design into one System."""
    thermal = [n for n in d.nodes.values() if n.domain == THERMAL]
    electrical = [n for n in d.nodes.values() if n.domain == ELECTRICAL and n.name not in d.grounds]
    names, kinds = [], []
    node_index: dict[str, int] = {}
    for n in thermal:
        node_index[n.name] = len(names)
        names.append(f"T({n.name})")
        kinds.append(TEMP)
    for n in electrical:
        node_index[n.name] = len(names)
        names.append(f"V({n.name})")
        kinds.append(VOLT)
    branch_index: dict[str, int] = {}
    for e in d.elements:
        if isinstance(e, (VoltageSource, Inductor, Thermoelectric)):
            branch_index[e.name] = len(names)
            names.append(f"I({e.name})")
            kinds.append(AMP)
        elif isinstance(e, Fixed):
            branch_index[e.name] = len(names)
            names.append(f"Q({e.name})")
            kinds.append(WATT)
    n = len(names)
    for gname in d.grounds:
        node_index[gname] = n  # the reference: one past the last unknown

    G, C = _Triplets(), _Triplets()
    b_const = np.zeros(n + 1)
    waves: list[tuple[int, float, Wave]] = []
    corners_of: list[Wave] = []

    def source_term(row, sign, wave: Wave):
        if wave.constant:
            b_const[row] += sign * wave.at(0.0)
        else:
            waves.append((row, sign, wave))
            corners_of.append(wave)

    for node in thermal:
        if node.capacity is not None:
            C.add(node_index[node.name], node_index[node.name], node.capacity)

    sw_r, sw_c, sw_s, sw_w, switches = [], [], [], [], []
    te = {k: [] for k in ("a", "b", "k", "S", "R")}
    tev: list = []
    nres = {k: [] for k in ("a", "b", "t", "h", "alpha", "ref", "R0")}
    starts_nodes: list[tuple[int, int, float]] = []
    starts_br: list[tuple[int, float]] = []
    for node in thermal:
        if node.start is not None:
            starts_nodes.append((node_index[node.name], n, node.start))

    for e in d.elements:
        if isinstance(e, Link):
            G.conductance(node_index[e.a], node_index[e.b], e.conductance)
        elif isinstance(e, Heat):
            source_term(node_index[e.node], 1.0, e.power)
        elif isinstance(e, Fixed):
            i, k = node_index[e.node], branch_index[e.name]
            G.add(i, k, -1.0)
            G.add(k, i, 1.0)
            source_term(k, 1.0, e.temperature)
        elif isinstance(e, Resistor):
            a, b = node_index[e.a], node_index[e.b]
            if e.heats is None and e.tempco is None:
                G.conductance(a, b, 1.0 / e.resistance)
            else:
                tc = e.tempco
                nres["a"].append(a)
                nres["b"].append(b)
                nres["t"].append(node_index[tc.node] if tc else n)
                nres["h"].append(node_index[e.heats] if e.heats else n)
                nres["alpha"].append(tc.alpha if tc else 0.0)
                nres["ref"].append(tc.ref if tc else 0.0)
                nres["R0"].append(e.resistance)
        elif isinstance(e, Capacitor):
            a, b = node_index[e.a], node_index[e.b]
            C.conductance(a, b, e.capacitance)
            if e.start is not None:
                starts_nodes.append((a, b, e.start))
        elif isinstance(e, Inductor):
            a, b, k = node_index[e.a], node_index[e.b], branch_index[e.name]
            G.add(a, k, 1.0)
            G.add(b, k, -1.0)
            G.add(k, a, 1.0)
            G.add(k, b, -1.0)
            C.add(k, k, -e.inductance)
            if e.start is not None:
                starts_br.append((k, e.start))
        elif isinstance(e, VoltageSource):
            a, b, k = node_index[e.a], node_index[e.b], branch_index[e.name]
            G.add(a, k, -1.0)
            G.add(b, k, 1.0)
            G.add(k, a, 1.0)
            G.add(k, b, -1.0)
            source_term(k, 1.0, e.value)
        elif isinstance(e, CurrentSource):
            a, b = node_index[e.a], node_index[e.b]
            source_term(a, 1.0, e.value)
            source_term(b, -1.0, e.value)
        elif isinstance(e, Switch):
            a, b = node_index[e.a], node_index[e.b]
            w = len(switches)
            switches.append(e)
            for (i, j, s) in ((a, a, 1.0), (b, b, 1.0), (a, b, -1.0), (b, a, -1.0)):
                if i < n and j < n:
                    sw_r.append(i)
                    sw_c.append(j)
                    sw_s.append(s)
                    sw_w.append(w)
        elif isinstance(e, Thermoelectric):
            p, q = node_index[e.p], node_index[e.n]
            a, b, k = node_index[e.a], node_index[e.b], branch_index[e.name]
            G.add(p, k, 1.0)
            G.add(q, k, -1.0)
            G.add(k, p, 1.0)
            G.add(k, q, -1.0)
            if e.props is not None:
                tev.append((e, a, b, k))
                continue
            G.add(k, k, -e.resistance)
            G.add(k, b, -e.seebeck)
            G.add(k, a, e.seebeck)
            G.conductance(a, b, e.conductance)
            te["a"].append(a)
            te["b"].append(b)
            te["k"].append(k)
            te["S"].append(e.seebeck)
            te["R"].append(e.resistance)
        else:  # pragma: no cover - every element kind of the Design is handled above
            raise TypeError(type(e).__name__)

    te_arr = {k: np.asarray(v, dtype=int if k in "abk" else float) for k, v in te.items()}
    nr_arr = {k: np.asarray(v, dtype=int if k in ("a", "b", "t", "h") else float) for k, v in nres.items()}
    return System(
        names=names, kinds=kinds, G0=G.build(n), C=C.build(n), n=n,
        node_index=node_index, branch_index=branch_index, b_const=b_const[:n].copy(),
        waves=[(r, s, w) for r, s, w in waves if r < n],
        switches=switches,
        sw_rows=np.asarray(sw_r, dtype=int), sw_cols=np.asarray(sw_c, dtype=int),
        sw_sign=np.asarray(sw_s, dtype=float), sw_which=np.asarray(sw_w, dtype=int),
        te=te_arr, nres=nr_arr, tev=tev, start_nodes=starts_nodes, start_branches=starts_br,
        corners_of=corners_of,
    )
