"""Element stamps to sparse MNA matrices for both domains, with the nonlinear residual and its Jacobian.

The system is the DAE  C·x' + F(x, t) = 0  with  F = G(t)·x + f(x) − b(t), where G(t) is the
constant linear part plus switch conductances, f holds the nonlinear thermoelectric and
electro-thermal terms, and b(t) the sources. Each row of F is the sum of the flows (heat or
charge) leaving a node, or a branch equation.

Elements are stamped by kind, with numpy over index arrays, never one entry at a time. Every
entry any matrix can have (C, G, the switches, the Jacobian of f) has a fixed place in one CSC
pattern computed here, so the solvers' matrices C·α + β·J(x) are filled by a `bincount` into
that pattern: no sparse additions or format conversions inside Newton or the time-step loop.
"""
from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field

import numpy as np
import scipy.sparse as sp

from netgen.model.design import (
    ELECTRICAL, THERMAL, Capacitor, CurrentSource, Design, Fixed, Heat, Inductor, Link, Resistor,
    Switch, Thermoelectric, VoltageSource,
)
from netgen.model.expr import Binary, Const, Wave, evaluate

# Kinds of unknowns, for error weights and reporting.
TEMP, VOLT, AMP, WATT = "T", "V", "I", "Q"

_I = np.int64


def _ix(values) -> np.ndarray:
    return np.asarray(values, dtype=_I).reshape(-1)


class _Triplets:
    """COO triplets collected as arrays; entries touching the reference (index n) are dropped."""

    def __init__(self):
        self.r: list[np.ndarray] = []
        self.c: list[np.ndarray] = []
        self.v: list[np.ndarray] = []

    def add(self, i, j, v):
        i, j = _ix(i), _ix(j)
        self.r.append(i)
        self.c.append(j)
        self.v.append(np.broadcast_to(np.asarray(v, dtype=float), i.shape))

    def conductance(self, i, j, g):
        """g between nodes i and j (arrays of one length, or scalars)."""
        i, j = _ix(i), _ix(j)
        g = np.broadcast_to(np.asarray(g, dtype=float), i.shape)
        self.add(np.concatenate([i, j, i, j]), np.concatenate([i, j, j, i]), np.concatenate([g, g, -g, -g]))

    def arrays(self, n) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        if not self.r:
            return np.zeros(0, _I), np.zeros(0, _I), np.zeros(0)
        r, c, v = np.concatenate(self.r), np.concatenate(self.c), np.concatenate(self.v)
        keep = (r < n) & (c < n)
        return r[keep], c[keep], v[keep]

    def build(self, n) -> sp.csc_matrix:
        r, c, v = self.arrays(n)
        return sp.coo_matrix((v, (r, c)), shape=(n, n)).tocsc()


class _Pattern:
    """One CSC sparsity pattern; `place(r, c)` gives each entry's index into its data array."""

    def __init__(self, n: int, rows: np.ndarray, cols: np.ndarray):
        self.n = n
        key = cols.astype(_I) * max(n, 1) + rows.astype(_I)
        self.keys = np.unique(key)
        col_of = self.keys // max(n, 1)
        self.indices = (self.keys % max(n, 1)).astype(np.int32)
        self.indptr = np.concatenate([[0], np.cumsum(np.bincount(col_of, minlength=n))]).astype(np.int32)
        self.nnz = len(self.keys)

    def place(self, rows, cols) -> np.ndarray:
        return np.searchsorted(self.keys, _ix(cols) * max(self.n, 1) + _ix(rows))

    def matrix(self, data: np.ndarray) -> sp.csc_matrix:
        return sp.csc_matrix((data, self.indices.copy(), self.indptr.copy()), shape=(self.n, self.n))


def _split_scale(e):
    """`c * expr` → (c, expr); anything else → (1, expr). Modules of one material share the expr."""
    if isinstance(e, Binary) and e.op == "*" and isinstance(e.a, Const):
        return e.a.v, e.b
    return 1.0, e


@dataclass
class _TevGroup:
    """Thermoelectric modules whose S, R, K are one material's expressions of T times a factor each."""

    exprs: tuple  # (S(T), R(T), K(T))
    a: np.ndarray
    b: np.ndarray
    k: np.ndarray
    factors: np.ndarray  # (3, m)

    def values(self, Tm):
        return tuple(f * np.broadcast_to(np.asarray(evaluate(e, T=Tm), dtype=float), Tm.shape)
                     for f, e in zip(self.factors, self.exprs))


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
    tev_groups: list = field(default_factory=list)

    def __post_init__(self):
        n = self.n
        for key in ("a", "b", "k"):
            self.te.setdefault(key, np.zeros(0, _I))
        for key in ("S", "R"):
            self.te.setdefault(key, np.zeros(0))
        for key in ("a", "b", "t", "h"):
            self.nres.setdefault(key, np.zeros(0, _I))
        for key in ("alpha", "ref", "R0"):
            self.nres.setdefault(key, np.zeros(0))
        # Sources: each distinct expression is evaluated once per call and scattered to its rows.
        self._distinct: list[Wave] = []
        groups: dict = {}
        rows, signs, which = [], [], []
        for row, sign, w in self.waves:
            j = groups.setdefault(w.expr, len(groups))
            if j == len(self._distinct):
                self._distinct.append(w)
            rows.append(row)
            signs.append(sign)
            which.append(j)
        self._w_rows, self._w_signs, self._w_which = _ix(rows), np.asarray(signs, float), _ix(which)
        # Nonlinear terms: the rows of f's values and the (row, col) of the Jacobian's, in a fixed order.
        te, nr = self.te, self.nres
        tg = self.tev_groups
        f_rows = [te["a"], te["b"], nr["a"], nr["b"], nr["h"]]
        f_rows += [g.k for g in tg] + [g.a for g in tg] + [g.b for g in tg]
        self._f_rows = np.concatenate([_ix(r) for r in f_rows])
        a, b, k = te["a"], te["b"], te["k"]
        jr = [a, a, b, b]
        jc = [a, k, b, k]
        a, b, t, h = nr["a"], nr["b"], nr["t"], nr["h"]
        jr += [a, a, a, b, b, b, h, h, h]
        jc += [a, b, t, a, b, t, a, b, t]
        for g in tg:
            a, b, k = g.a, g.b, g.k
            jr += [k, k, k, a, a, a, b, b, b]
            jc += [k, a, b, k, a, b, k, a, b]
        jr = np.concatenate([_ix(r) for r in jr]) if jr else np.zeros(0, _I)
        jc = np.concatenate([_ix(c) for c in jc]) if jc else np.zeros(0, _I)
        self._j_keep = (jr < n) & (jc < n)
        jr, jc = jr[self._j_keep], jc[self._j_keep]
        # One pattern for C, G, the switches and the Jacobian of f.
        Cc, Gc = self.C.tocoo(), self.G0.tocoo()
        self._pat = _Pattern(n, np.concatenate([Cc.row, Gc.row, self.sw_rows, jr]).astype(_I),
                             np.concatenate([Cc.col, Gc.col, self.sw_cols, jc]).astype(_I))
        p = self._pat
        self._C_data = np.bincount(p.place(Cc.row, Cc.col), Cc.data, minlength=p.nnz)
        self._G_data = np.bincount(p.place(Gc.row, Gc.col), Gc.data, minlength=p.nnz)
        self._sw_pos = p.place(self.sw_rows, self.sw_cols)
        self._j_pos = p.place(jr, jc)
        self._G_cache: dict = {}

    # ---- linear, time-dependent part ----------------------------------------------
    @property
    def linear(self) -> bool:
        return len(self.te["k"]) == 0 and len(self.nres["a"]) == 0 and not self.tev

    def switch_state(self, t: float) -> tuple[bool, ...]:
        return tuple(s.closed_at(t) for s in self.switches)

    def _g_data(self, state) -> np.ndarray:
        """Data of G(state) in the common pattern."""
        if not self.switches:
            return self._G_data
        got = self._G_cache.get(state)
        if got is None:
            g = np.array([1.0 / (s.r_on if on else s.r_off) for s, on in zip(self.switches, state)])
            got = self._G_data + np.bincount(self._sw_pos, self.sw_sign * g[self.sw_which], minlength=self._pat.nnz)
            if len(self._G_cache) > 64:
                self._G_cache.clear()
            self._G_cache[state] = got
        return got

    def G(self, state: tuple[bool, ...] = ()) -> sp.csc_matrix:
        if not self.switches:
            return self.G0
        key = ("matrix", state)
        got = self._G_cache.get(key)
        if got is None:
            g = np.array([1.0 / (s.r_on if on else s.r_off) for s, on in zip(self.switches, state)])
            sw = sp.coo_matrix((self.sw_sign * g[self.sw_which], (self.sw_rows, self.sw_cols)), shape=(self.n, self.n))
            got = (self.G0 + sw).tocsc()
            self._G_cache[key] = got
        return got

    def b(self, t: float, left: bool = False) -> np.ndarray:
        out = self.b_const.copy()
        if not self._distinct:
            return out
        vals = np.array([w.at(t, left) for w in self._distinct])
        if not np.all(np.isfinite(vals)):
            from netgen.model.errors import SolveError

            bad = self._w_rows[self._w_which == int(np.flatnonzero(~np.isfinite(vals))[0])][0]
            raise SolveError(f"the source value on {self.names[bad]} is not a finite number at t = {t:.6g} s",
                             None, "check the expression for a division by zero or a log of zero")
        np.add.at(out, self._w_rows, self._w_signs * vals[self._w_which])
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
    def _nonlinear(self, x: np.ndarray, jacobian: bool):
        """Values of f in the order of `_f_rows` and, with `jacobian`, of its Jacobian in the
        order fixed in __post_init__ (before dropping entries on the reference)."""
        xe = np.append(x, 0.0)
        fv, jv = [], []
        te = self.te
        Ta, Tb, I = xe[te["a"]], xe[te["b"]], xe[te["k"]]
        S, R = te["S"], te["R"]
        fv += [S * Ta * I - 0.5 * R * I * I, -(S * Tb * I + 0.5 * R * I * I)]
        if jacobian:
            jv += [S * I, S * Ta - R * I, -S * I, -(S * Tb + R * I)]
        nr = self.nres
        u = xe[nr["a"]] - xe[nr["b"]]
        g, dg = self._res_g(xe)
        i = u * g
        fv += [i, -i, -u * i]
        if jacobian:
            jv += [g, -g, u * dg, -g, g, -u * dg, -2 * u * g, 2 * u * g, -u * u * dg]
        tev_f = []
        for grp in self.tev_groups:
            Ta, Tb, I = xe[grp.a], xe[grp.b], xe[grp.k]
            Tm = 0.5 * (Ta + Tb)
            S, R, K = grp.values(Tm)
            tev_f.append((-I * R - S * (Tb - Ta), S * Ta * I - 0.5 * I * I * R + K * (Ta - Tb),
                          -(S * Tb * I + 0.5 * I * I * R + K * (Ta - Tb))))
            if jacobian:
                dT = 1e-3
                hi, lo = grp.values(Tm + dT), grp.values(Tm - dT)
                dS, dR, dK = ((h - l) / (2 * dT) for h, l in zip(hi, lo))  # d/dTm, central difference
                common_k = -0.5 * I * dR - 0.5 * dS * (Tb - Ta)
                fa_m = 0.5 * dS * Ta * I - 0.25 * I * I * dR + 0.5 * dK * (Ta - Tb)
                fb_m = 0.5 * dS * Tb * I + 0.25 * I * I * dR + 0.5 * dK * (Ta - Tb)
                jv += [-R, common_k + S, common_k - S,
                       S * Ta - I * R, S * I + K + fa_m, -K + fa_m,
                       -(S * Tb + I * R), -(K + fb_m), -(S * I - K + fb_m)]
        # f's order: all groups' k rows, then their a rows, then their b rows.
        fv += [t[0] for t in tev_f] + [t[1] for t in tev_f] + [t[2] for t in tev_f]
        fvals = np.concatenate(fv) if fv else np.zeros(0)
        if not jacobian:
            return fvals, None
        return fvals, (np.concatenate(jv) if jv else np.zeros(0))

    def f(self, x: np.ndarray) -> np.ndarray:
        """Nonlinear flows leaving each row's node."""
        if self.linear:
            return np.zeros(self.n)
        fvals, _ = self._nonlinear(x, False)
        return np.bincount(self._f_rows, fvals, minlength=self.n + 1)[: self.n]

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

    def _jf_data(self, x) -> np.ndarray:
        _, jv = self._nonlinear(x, True)
        return np.bincount(self._j_pos, jv[self._j_keep], minlength=self._pat.nnz)

    def jf(self, x: np.ndarray) -> sp.csc_matrix:
        """Jacobian of f, analytic, at positions fixed by the assembly."""
        if self.linear:
            return sp.csc_matrix((self.n, self.n))
        return self._pat.matrix(self._jf_data(x))

    # ---- whole residual ------------------------------------------------------------------
    def F(self, x, t, state, left=False):
        return self.G(state) @ x + self.f(x) - self.b(t, left)

    def J(self, x, state):
        if self.linear:
            return self.G(state)
        return self._pat.matrix(self._g_data(state) + self._jf_data(x))

    def matrix(self, c: float, d: float, x, state) -> sp.csc_matrix:
        """c·C + d·J(x, state), filled into the common pattern."""
        data = d * self._g_data(state)
        if c:
            data = data + c * self._C_data
        if not self.linear:
            data = data + d * self._jf_data(x)
        return self._pat.matrix(data)

    @property
    def algebraic_rows(self) -> np.ndarray:
        return np.diff(self.C.tocsr().indptr) == 0


_KINDS = (Link, Heat, Fixed, Resistor, Capacitor, Inductor, VoltageSource, CurrentSource, Switch, Thermoelectric)


def assemble(d: Design) -> System:
    """Stamp every element of the design into one System."""
    thermal = [nd for nd in d.nodes.values() if nd.domain == THERMAL]
    electrical = [nd for nd in d.nodes.values() if nd.domain == ELECTRICAL and nd.name not in d.grounds]
    names = [f"T({nd.name})" for nd in thermal] + [f"V({nd.name})" for nd in electrical]
    kinds = [TEMP] * len(thermal) + [VOLT] * len(electrical)
    node_index: dict[str, int] = {nd.name: i for i, nd in enumerate(thermal + electrical)}
    by_kind: dict[type, list] = defaultdict(list)
    branch_index: dict[str, int] = {}
    for e in d.elements:
        if type(e) not in _KINDS:  # pragma: no cover - every element kind of the Design is stamped below
            raise TypeError(type(e).__name__)
        by_kind[type(e)].append(e)
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

    def idx(elems, attr):
        return np.fromiter((node_index[getattr(e, attr)] for e in elems), _I, len(elems))

    def br(elems):
        return np.fromiter((branch_index[e.name] for e in elems), _I, len(elems))

    def values(elems, attr):
        return np.fromiter((getattr(e, attr) for e in elems), float, len(elems))

    G, C = _Triplets(), _Triplets()
    b_const = np.zeros(n + 1)
    waves: list[tuple[int, float, Wave]] = []
    corners_of: list[Wave] = []

    def source_terms(rows, sign, ws):
        for row, w in zip(rows.tolist(), ws):
            if w.constant:
                b_const[row] += sign * w.at(0.0)
            else:
                waves.append((row, sign, w))
                corners_of.append(w)

    masses = [nd for nd in thermal if nd.capacity is not None]
    C.add([node_index[nd.name] for nd in masses], [node_index[nd.name] for nd in masses],
          [nd.capacity for nd in masses])
    starts_nodes = [(node_index[nd.name], n, nd.start) for nd in thermal if nd.start is not None]
    starts_br: list[tuple[int, float]] = []

    links = by_kind[Link]
    G.conductance(idx(links, "a"), idx(links, "b"), values(links, "conductance"))

    heats = by_kind[Heat]
    source_terms(idx(heats, "node"), 1.0, [e.power for e in heats])

    fixed = by_kind[Fixed]
    i, k = idx(fixed, "node"), br(fixed)
    G.add(i, k, -1.0)
    G.add(k, i, 1.0)
    source_terms(k, 1.0, [e.temperature for e in fixed])

    resistors = by_kind[Resistor]
    plain = [e for e in resistors if e.heats is None and e.tempco is None]
    G.conductance(idx(plain, "a"), idx(plain, "b"), 1.0 / values(plain, "resistance"))
    hot = [e for e in resistors if e.heats is not None or e.tempco is not None]
    nres = {
        "a": idx(hot, "a"), "b": idx(hot, "b"),
        "t": _ix([node_index[e.tempco.node] if e.tempco else n for e in hot]),
        "h": _ix([node_index[e.heats] if e.heats else n for e in hot]),
        "alpha": np.array([e.tempco.alpha if e.tempco else 0.0 for e in hot], dtype=float),
        "ref": np.array([e.tempco.ref if e.tempco else 0.0 for e in hot], dtype=float),
        "R0": values(hot, "resistance"),
    }

    caps = by_kind[Capacitor]
    a, b = idx(caps, "a"), idx(caps, "b")
    C.conductance(a, b, values(caps, "capacitance"))
    starts_nodes += [(int(ai), int(bi), e.start) for ai, bi, e in zip(a, b, caps) if e.start is not None]

    inductors = by_kind[Inductor]
    a, b, k = idx(inductors, "a"), idx(inductors, "b"), br(inductors)
    G.add(np.concatenate([a, b, k, k]), np.concatenate([k, k, a, b]),
          np.repeat([1.0, -1.0, 1.0, -1.0], len(k)))
    C.add(k, k, -values(inductors, "inductance"))
    starts_br += [(int(ki), e.start) for ki, e in zip(k, inductors) if e.start is not None]

    vsources = by_kind[VoltageSource]
    a, b, k = idx(vsources, "a"), idx(vsources, "b"), br(vsources)
    G.add(np.concatenate([a, b, k, k]), np.concatenate([k, k, a, b]),
          np.repeat([-1.0, 1.0, 1.0, -1.0], len(k)))
    source_terms(k, 1.0, [e.value for e in vsources])

    isources = by_kind[CurrentSource]
    source_terms(idx(isources, "a"), 1.0, [e.value for e in isources])
    source_terms(idx(isources, "b"), -1.0, [e.value for e in isources])

    switches = by_kind[Switch]
    a, b = idx(switches, "a"), idx(switches, "b")
    w = np.arange(len(switches), dtype=_I)
    sw_r, sw_c = np.concatenate([a, b, a, b]), np.concatenate([a, b, b, a])
    sw_s, sw_w = np.repeat([1.0, 1.0, -1.0, -1.0], len(w)), np.tile(w, 4)
    keep = (sw_r < n) & (sw_c < n)

    modules = by_kind[Thermoelectric]
    p, q = idx(modules, "p"), idx(modules, "n")
    a, b, k = idx(modules, "a"), idx(modules, "b"), br(modules)
    G.add(np.concatenate([p, q, k, k]), np.concatenate([k, k, p, q]),
          np.repeat([1.0, -1.0, 1.0, -1.0], len(k)))
    lumped = np.array([e.props is None for e in modules], dtype=bool)
    S, R, K = values(modules, "seebeck"), values(modules, "resistance"), values(modules, "conductance")
    al, bl, kl = a[lumped], b[lumped], k[lumped]
    G.add(np.concatenate([kl, kl, kl]), np.concatenate([kl, bl, al]),
          np.concatenate([-R[lumped], -S[lumped], S[lumped]]))
    G.conductance(al, bl, K[lumped])
    te = {"a": al, "b": bl, "k": kl, "S": S[lumped], "R": R[lumped]}
    tev = [(e, int(ai), int(bi), int(ki)) for e, ai, bi, ki, lp in zip(modules, a, b, k, lumped) if not lp]
    tev_groups = _group_tev(tev)

    return System(
        names=names, kinds=kinds, G0=G.build(n), C=C.build(n), n=n,
        node_index=node_index, branch_index=branch_index, b_const=b_const[:n].copy(),
        waves=[(r, s, w) for r, s, w in waves if r < n],
        switches=switches,
        sw_rows=sw_r[keep], sw_cols=sw_c[keep], sw_sign=sw_s[keep], sw_which=sw_w[keep],
        te=te, nres=nres, tev=tev, start_nodes=starts_nodes, start_branches=starts_br,
        corners_of=corners_of, tev_groups=tev_groups,
    )


def _group_tev(tev) -> list[_TevGroup]:
    """Modules with temperature-dependent values, grouped by the expressions they scale."""
    groups: dict[tuple, list] = defaultdict(list)
    for e, a, b, k in tev:
        parts = [_split_scale(x) for x in e.props]
        groups[tuple(expr for _, expr in parts)].append((a, b, k, [f for f, _ in parts]))
    out = []
    for exprs, members in groups.items():
        out.append(_TevGroup(exprs, _ix([m[0] for m in members]), _ix([m[1] for m in members]),
                             _ix([m[2] for m in members]), np.array([m[3] for m in members], dtype=float).T))
    return out
