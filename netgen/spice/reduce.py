"""A reduced model of a design's linear thermal network (masses and constant links) for the
netlist: `netgen export --reduce N`, `netgen crosscheck --reduce N`. `netgen run` never uses it.

The method is PACT, pole analysis via congruence transformations (K. J. Kerns and A. T. Yang,
"Stable and efficient reduction of large, multiport RC networks by pole analysis via congruence
transformations", IEEE Trans. CAD 16(7), 1997; the reference from memory): the network's nodes
are split into ports p (kept as nodes) and internal nodes i.

1. The static step: v_i = X v_p + y with X = −G_ii⁻¹ G_ip. This congruence makes the port
   block of G the exact Schur complement Ĝ = G_pp + G_pi X (the steady state is exact: the
   zeroth moment at s = 0, the Krylov block of G⁻¹ at s = 0) and decouples y in G.
2. The inner basis: rational Krylov blocks (G_ii + s C_ii)⁻¹ C_ii X (PRIMA, Odabasioglu,
   Celik & Pileggi, IEEE Trans. CAD 17(8), 1998, here with several expansion points: the
   moments at s = 0 and shifts up to ten over the output step), orthonormalised and
   diagonalised by Rayleigh-Ritz into k modes U (Uᵀ C_ii U = I, Uᵀ G_ii U = Λ); y ≈ U z.
   (The slowest eigenmodes alone, tried first, missed a heated cell's fast local response
   by 0.2 K.)

The reduced system, states x = (v_p, z), is G_r = diag(Ĝ, Λ), C_r = [[Ĉ, R], [Rᵀ, I]] with
Ĉ = C_pp + Xᵀ C_ii X (C is diagonal: masses only) and R = Xᵀ C_ii U. Both are congruences of
the symmetric positive semi-definite G and C, so G_r and C_r are symmetric positive
semi-definite too and the model is stable and passive (PACT's theorem; `check` tests it).

Realised with ordinary elements: each state s has a sensor (E copies V(s) onto a 1 F capacitor
through a 0 V source, so I(vred_sK) = dV(s)/dt), and each row of C_r ẋ + G_r x is one B source
drawing that current out of its node. At the operating point the capacitors are open, the
sensors carry nothing, and the ports see Ĝ exactly.
"""
from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg as sla
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from netgen.elements.link import Link
from netgen.model.design import THERMAL, Design, Element, Loc
from netgen.model.errors import NetgenError
from netgen.spice.netlist import num

# The reduced netlist's options: its sensors take derivatives of node values near 300 V, which
# at reltol=1e-9 amplified Newton's remaining error until ngspice's step collapsed ("timestep too
# small", a 100 x 100 plate); 1e-6 is 0.3 mK there.
OPTIONS = ".options reltol=1e-6 abstol=1e-12 vntol=1e-9 chgtol=1e-14 method=gear"


@dataclass
class Reduction:
    """The reduced network: ports (our node names), modes, the matrices, and the start."""

    ports: list[str]
    internal: list[str]
    G: np.ndarray  # reduced G_r, (m + k) × (m + k)
    C: np.ndarray  # reduced C_r
    X: np.ndarray  # internal ← ports, static (n_i × m)
    U: np.ndarray  # internal ← modes (n_i × k)
    Cii: np.ndarray  # the internal masses (diagonal), J/K
    links: list[str] = field(default_factory=list)  # the links it replaces

    @property
    def states(self) -> int:
        return self.G.shape[0]

    def modes(self, full_internal: np.ndarray, ports: np.ndarray) -> np.ndarray:
        """Modal coordinates z of an internal state given the ports' values (C-orthonormal projection)."""
        y = full_internal - self.X @ ports
        return self.U.T @ (self.Cii * y)

    def expand(self, xr: np.ndarray) -> np.ndarray:
        """Internal node values from the reduced states (x = (v_p, z))."""
        m = len(self.ports)
        return self.X @ xr[:m] + self.U @ xr[m:]


def kept_nodes(design: Design, pins=()) -> set[str]:
    """The thermal nodes that must stay nodes: touched by anything but a constant link,
    recorded, pinned."""
    keep = set(pins)
    for e in design.elements:
        if isinstance(e, Link) and e.law is None:
            continue
        keep.update(t for t in e.terminals if t in design.nodes)
    for s in design.records:
        if s.kind == "T":
            keep.update(s.args)
        elif s.kind == "Q" and isinstance(design.element(s.args[0]), Link):
            keep.update(design.element(s.args[0]).terminals)
    return {n for n in keep if n in design.nodes and design.nodes[n].domain == THERMAL}


def reduce_network(design: Design, n_states: int, pins=()) -> Reduction:
    """PACT of the design's linear thermal network onto its kept nodes and at most
    `n_states − ports` modes."""
    recorded_links = {s.args[0] for s in design.records if s.kind == "Q"}
    links = [e for e in design.elements if isinstance(e, Link) and e.law is None and e.name not in recorded_links]
    thermal = [n for n in design.nodes.values() if n.domain == THERMAL]
    keep = kept_nodes(design, pins)
    in_network = {t for e in links for t in e.terminals}
    ports = [n.name for n in thermal if n.name in keep or n.name not in in_network]
    internal = [n.name for n in thermal if n.name not in keep and n.name in in_network]
    if len(ports) > n_states:
        raise NetgenError(f"--reduce {n_states}: the design has {len(ports)} thermal nodes that must stay nodes "
                          f"(they are touched by other elements, recorded or pins), more than {n_states} states",
                          None, f"give --reduce {len(ports)} or more, or record fewer temperatures")
    index = {name: i for i, name in enumerate(ports + internal)}
    n, m = len(index), len(ports)
    rows, cols, vals = [], [], []
    for e in links:
        a, b, g = index[e.a], index[e.b], e.conductance
        rows += [a, b, a, b]
        cols += [a, b, b, a]
        vals += [g, g, -g, -g]
    G = sp.csr_matrix((vals, (rows, cols)), shape=(n, n))
    c = np.array([design.nodes[name].capacity or 0.0 for name in ports + internal])
    Gpp, Gpi, Gii = G[:m, :m].toarray(), G[:m, m:], G[m:, m:].tocsc()
    cp, ci = c[:m], c[m:]
    k = min(n_states - m, len(internal))
    if not internal:
        return Reduction(ports, internal, Gpp, np.diag(cp), np.zeros((0, m)), np.zeros((0, 0)), ci,
                         [e.name for e in links])
    try:
        lu = spla.splu(Gii)
    except RuntimeError:
        raise NetgenError("--reduce: part of the thermal network touches no kept node (no element, reservoir "
                          "or record reaches it), so it has no steady state of its own", None,
                          "record a temperature in it, or give it a link to the rest") from None
    X = -lu.solve(Gpi.T.toarray())
    Ghat = Gpp + Gpi @ X
    U, lam = _krylov(Gii, ci, X, k, lu, _shifts(design, -(-k // max(m, 1))))
    k = U.shape[1]
    Chat = np.diag(cp) + X.T @ (ci[:, None] * X)
    R = X.T @ (ci[:, None] * U)
    Gr = sla.block_diag(Ghat, np.diag(lam))
    Cr = np.block([[Chat, R], [R.T, np.eye(k)]])
    Gr, Cr = (Gr + Gr.T) / 2, (Cr + Cr.T) / 2
    return Reduction(ports, internal, Gr, Cr, X, U, ci, [e.name for e in links])


def _shifts(design: Design, blocks: int) -> list[float]:
    """Where the inner response is matched (rates, 1/s): twice at s = 0 (the moments about the
    steady state, PRIMA's expansion point), then rates spaced evenly in log between one over
    the run and ten over the output step, so that fast local responses (a heated cell) are
    caught as well as the slow whole-plate ones."""
    tr = design.transient
    until = tr.until if tr else 1e3
    step = (tr.step if tr and tr.step else until / 500)
    out = [0.0, 0.0]
    rest = max(blocks - 2, 0)
    if rest:
        out += list(np.geomspace(1.0 / until, 10.0 / step, rest))
    return out[:max(blocks, 1)]


def _krylov(Gii, ci, X, k, lu, shifts):
    """A congruence basis of the inner nodes from rational Krylov blocks (PRIMA, Odabasioglu,
    Celik & Pileggi, IEEE Trans. CAD 17(8), 1998, with several expansion points): the inner
    response to the ports, (G + sC)⁻¹ C X, at each shift (at s = 0 repeated: the moments),
    orthonormalised and diagonalised by Rayleigh-Ritz, so Uᵀ C U = I, Uᵀ G U = Λ."""
    n = Gii.shape[0]
    if k <= 0:
        return np.zeros((n, 0)), np.zeros(0)
    C = sp.diags(ci).tocsc()
    drive = ci[:, None] * X
    blocks, last, lus = [], None, {0.0: lu}
    for s in shifts:
        if s not in lus:
            lus[s] = spla.splu((Gii + s * C).tocsc())
        src = drive if (s != 0.0 or last is None) else ci[:, None] * last
        v = lus[s].solve(np.asarray(src))
        if s == 0.0:
            last = v
        blocks.append(v)
    V = np.hstack(blocks)
    Q, sv, _ = np.linalg.svd(V, full_matrices=False)
    Q = Q[:, sv > 1e-12 * sv[0]][:, :k]
    Gs = Q.T @ (Gii @ Q)
    Cs = Q.T @ (ci[:, None] * Q)
    lam, W = sla.eigh((Gs + Gs.T) / 2, (Cs + Cs.T) / 2)
    return Q @ W, lam


def check(r: Reduction, rtol: float = 1e-9) -> tuple[float, float]:
    """The smallest eigenvalues of G_r and C_r relative to their largest (≥ −rtol: positive
    semi-definite), after checking symmetry; raises AssertionError if either fails."""
    out = []
    for A in (r.G, r.C):
        assert np.allclose(A, A.T, rtol=0, atol=rtol * np.abs(A).max()), "not symmetric"
        w = np.linalg.eigvalsh(A)
        out.append(float(w.min() / max(abs(w).max(), 1e-300)))
        assert out[-1] >= -rtol, "not positive semi-definite"
    return out[0], out[1]


@dataclass
class ReducedNetwork(Element):
    """The reduced network as one element of the netlist (never assembled by netgen)."""

    reduction: Reduction | None = None
    start: dict[str, float] | None = None  # our unknowns by name at the transient's start

    terminals = property(lambda self: tuple(self.reduction.ports))

    def waves(self):
        return {}

    def thermal_conductance(self):
        return None

    def netlist(self, w, s) -> None:
        r = self.reduction
        m = len(r.ports)
        nodes = [w.node(p) for p in r.ports] + [f"x_red_z{k + 1}" for k in range(r.states - m)]
        x0 = self._start(w.offset)
        for k, node in enumerate(nodes):
            a, b = f"x_red_a{k + 1}", f"x_red_b{k + 1}"
            w.add(f"ered_s{k + 1}", a, 0, node, 0, 1)
            w.add(f"vred_s{k + 1}", a, b, "DC 0")
            w.add(f"cred_s{k + 1}", b, 0, 1, f"IC={num(x0[k])}" if x0 is not None else "")
            if k >= m:
                z0 = float(x0[k]) if x0 is not None else 0.0
                w.internal_node(node, "the reduced network (a mode)", lambda value, z0=z0: z0)
        for k, node in enumerate(nodes):
            terms = [f"({num(r.C[k, j])}*I(vred_s{j + 1}))" for j in range(r.states) if r.C[k, j] != 0]
            terms += [f"({num(r.G[k, j])}*V({nodes[j]}))" for j in range(r.states) if r.G[k, j] != 0]
            w.add(f"bred_r{k + 1}", node, 0, "I=" + ("+".join(terms) if terms else "0"))
        w.row("bred_r...", f"reduced network: {m} ports, {r.states - m} modes, replacing {len(r.links)} links "
                           f"and {len(r.internal)} nodes (PACT)")

    def _start(self, offset: float):
        """The reduced states at the start: the ports' values (less the offset) and the modes'."""
        if self.start is None:
            return None
        r = self.reduction
        vp = np.array([self.start.get(f"T({p})", 0.0) for p in r.ports])
        vi = np.array([self.start.get(f"T({n})", 0.0) for n in r.internal])
        z = r.modes(vi, vp) if r.internal else np.zeros(0)
        return np.concatenate([vp - offset, z])


def reduced_design(design: Design, r: Reduction, start: dict[str, float] | None) -> Design:
    """The design with the reduced network in place of its links, internal nodes and masses."""
    gone, inner, ports = set(r.links), set(r.internal), set(r.ports)
    nodes = {k: (dataclasses.replace(v, capacity=None) if k in ports else v)
             for k, v in design.nodes.items() if k not in inner}
    el = ReducedNetwork("reduced", Loc(design.file, 0, 0), reduction=r, start=start)
    return dataclasses.replace(design, nodes=nodes, elements=[e for e in design.elements if e.name not in gone] + [el])


def prepare(design: Design, n_states: int, pins=()):
    """The reduced design, its reduction, and the full design's starts (which the netlist carries)."""
    from netgen.spice.starts import starts_of

    if n_states < 1:
        raise NetgenError(f"--reduce {n_states}: give a number of states of 1 or more", None, "e.g. --reduce 40")
    starts = starts_of(design)
    r = reduce_network(design, n_states, pins)
    state = starts.initial if starts.initial is not None else starts.guess
    return reduced_design(design, r, state), r, starts


def header_lines(r: Reduction, deviation: str) -> list[str]:
    """What the header says about the reduction."""
    import textwrap

    m = len(r.ports)
    text = (f"Reduced: the linear thermal network ({len(r.links)} links, {len(r.internal)} inner nodes) is "
            f"replaced by a model of {r.states} states, {m} kept nodes and {r.states - m} modes, by PACT "
            "(pole analysis via congruence transformations, Kerns and Yang, IEEE Trans. CAD 16(7), 1997) with "
            "an inner basis of rational Krylov blocks (PRIMA, Odabasioglu, Celik and Pileggi, IEEE Trans. CAD "
            "17(8), 1998; moments at s = 0 and shifts up to ten over the output step): the "
            "steady state is exact (the ports see the exact Schur complement of the network's conductances), "
            "the reduced G and C are congruences of the full ones, so symmetric positive semi-definite: "
            "stable and passive"
            + ". Each state has a sensor (ered/vred/cred: I(vred_sK) = dV/dt) and each row of "
            "C_r dx/dt + G_r x one B source (bred_rK). " + deviation)
    return textwrap.wrap(text, 92, initial_indent="* ", subsequent_indent="*   ")


def insert_header(text: str, lines: list[str], after: int = 2) -> str:
    """`lines` put into a netlist's header after its first `after` lines."""
    rows = text.split("\n")
    return "\n".join(rows[:after] + lines + rows[after:])

