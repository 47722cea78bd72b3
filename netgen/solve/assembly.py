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

from netgen.elements import KINDS
from netgen.elements.base import Equations, Stamp, Triplets, ix as _ix
from netgen.model.design import ELECTRICAL, THERMAL, Design
from netgen.model.errors import SolveError
from netgen.model.expr import Wave

# Kinds of unknowns, for error weights and reporting.
TEMP, VOLT, AMP, WATT = "T", "V", "I", "Q"

_I = np.int64


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
    switches: list  # the Switch elements, in the order of their conductances
    sw_rows: np.ndarray
    sw_cols: np.ndarray
    sw_sign: np.ndarray
    sw_which: np.ndarray
    blocks: list[Equations] = field(default_factory=list)  # the nonlinear equations, by kind
    start_nodes: list[tuple[int, int, float]] = field(default_factory=list)
    start_branches: list[tuple[int, float]] = field(default_factory=list)
    corners_of: list = field(default_factory=list)
    limits: list = field(default_factory=list)  # the kinds' limiters of Newton's updates (diode junctions)
    timeline: dict = field(default_factory=dict)  # switch name → closed(t, left), from a run's events

    def __post_init__(self):
        n = self.n
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
        # Nonlinear terms: the rows of f's values and the (row, col) of the Jacobian's, in the
        # order the blocks give them.
        blocks = self.blocks
        self._f_rows = np.concatenate([b.f_rows for b in blocks]) if blocks else np.zeros(0, _I)
        jr = np.concatenate([b.j_rows for b in blocks]) if blocks else np.zeros(0, _I)
        jc = np.concatenate([b.j_cols for b in blocks]) if blocks else np.zeros(0, _I)
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
        return not self.blocks

    def switch_state(self, t: float, dyn: dict | None = None) -> tuple[bool, ...]:
        """Each switch's state at t; `dyn` holds the states of switches that act on conditions
        (their index → closed), which the transient keeps as their events come."""
        if not dyn:
            return tuple(s.closed_at(t) for s in self.switches)
        return tuple(dyn[k] if k in dyn else s.closed_at(t) for k, s in enumerate(self.switches))

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
        order of the blocks' (row, column) lists (before dropping entries on the reference)."""
        xe = np.append(x, 0.0)
        out = [b.evaluate(xe, jacobian) for b in self.blocks]
        fvals = np.concatenate([f for f, _ in out]) if out else np.zeros(0)
        if not jacobian:
            return fvals, None
        return fvals, (np.concatenate([j for _, j in out]) if out else np.zeros(0))

    def f(self, x: np.ndarray) -> np.ndarray:
        """Nonlinear flows leaving each row's node."""
        if self.linear:
            return np.zeros(self.n)
        fvals, _ = self._nonlinear(x, False)
        return np.bincount(self._f_rows, fvals, minlength=self.n + 1)[: self.n]

    def _jf_data(self, x) -> np.ndarray:
        _, jv = self._nonlinear(x, True)
        return np.bincount(self._j_pos, jv[self._j_keep], minlength=self._pat.nnz)

    def jf(self, x: np.ndarray) -> sp.csc_matrix:
        """Jacobian of f, analytic, at positions fixed by the assembly."""
        if self.linear:
            return sp.csc_matrix((self.n, self.n))
        return self._pat.matrix(self._jf_data(x))

    def limit(self, x_old: np.ndarray, x_new: np.ndarray) -> tuple[np.ndarray, bool]:
        """Newton's new iterate with the kinds' limits applied (junction voltages, Nagel 1975),
        and whether any applied; a limited iterate is no converged one."""
        hit = False
        for lim in self.limits:
            x_new, h = lim.apply(x_old, x_new)
            hit |= h
        return x_new, hit

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


def assemble(d: Design) -> System:
    """Stamp every element of the design into one System, kind by kind from the registry."""
    thermal = [nd for nd in d.nodes.values() if nd.domain == THERMAL]
    electrical = [nd for nd in d.nodes.values() if nd.domain == ELECTRICAL and nd.name not in d.grounds]
    names = [f"T({nd.name})" for nd in thermal] + [f"V({nd.name})" for nd in electrical]
    kinds = [TEMP] * len(thermal) + [VOLT] * len(electrical)
    node_index: dict[str, int] = {nd.name: i for i, nd in enumerate(thermal + electrical)}
    by_kind: dict[type, list] = defaultdict(list)
    branch_index: dict[str, int] = {}
    for e in d.elements:
        by_kind[type(e)].append(e)
        if e.branch is not None:
            branch_index[e.name] = len(names)
            names.append(f"{e.branch}({e.name})")
            kinds.append({"I": AMP, "Q": WATT, "V": VOLT}[e.branch])
        for label, kind in e.unknowns():
            branch_index[label] = len(names)
            names.append(label)
            kinds.append(kind)
    unknown = set(by_kind) - set(KINDS)
    if unknown:  # pragma: no cover - the reader makes registered kinds only
        raise TypeError(f"unregistered element kinds: {sorted(k.__name__ for k in unknown)}")
    n = len(names)
    for gname in d.grounds:
        node_index[gname] = n  # the reference: one past the last unknown

    st = Stamp(n, node_index, branch_index)
    masses = [nd for nd in thermal if nd.capacity is not None]
    st.C.add([node_index[nd.name] for nd in masses], [node_index[nd.name] for nd in masses],
             [nd.capacity for nd in masses])
    st.start_nodes += [(node_index[nd.name], n, nd.start) for nd in thermal if nd.start is not None]
    for kind in KINDS:
        if by_kind.get(kind):
            kind.stamp(by_kind[kind], st)

    # Switches: the four entries of each conductance, filled in by state at solve time.
    sw = st.switches
    a, b = _ix([x[1] for x in sw]), _ix([x[2] for x in sw])
    w = np.arange(len(sw), dtype=_I)
    sw_r, sw_c = np.concatenate([a, b, a, b]), np.concatenate([a, b, b, a])
    sw_s, sw_w = np.repeat([1.0, 1.0, -1.0, -1.0], len(w)), np.tile(w, 4)
    keep = (sw_r < n) & (sw_c < n)
    return System(
        names=names, kinds=kinds, G0=_build(st.G, n), C=_build(st.C, n), n=n,
        node_index=node_index, branch_index=branch_index, b_const=st.b_const[:n].copy(),
        waves=[(r, s, w) for r, s, w in st.waves if r < n],
        switches=[x[0] for x in sw],
        sw_rows=sw_r[keep], sw_cols=sw_c[keep], sw_sign=sw_s[keep], sw_which=sw_w[keep],
        blocks=st.blocks, start_nodes=st.start_nodes, start_branches=st.start_branches,
        corners_of=st.corners_of, limits=st.limits,
    )


def _build(t: Triplets, n: int) -> sp.csc_matrix:
    r, c, v = t.arrays(n)
    return sp.coo_matrix((v, (r, c)), shape=(n, n)).tocsc()
