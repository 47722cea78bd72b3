"""The networkx graph of both domains and the structural checks that name nodes and elements."""
from __future__ import annotations

import numpy as np

from netgen.elements import THERMAL_REF, Fixed
from netgen.model.design import ELECTRICAL, THERMAL, Design, Loc
from netgen.model.expr import evaluate
from netgen.model.errors import NetgenError, NetgenErrors



def _branches(d: Design):
    """(node, node, element, kind) for every branch: each element's own (two-terminal elements,
    module pins and sides, reservoirs and heat inputs to the thermal reference), and masses."""
    for e in d.elements:
        for a, b, label in e.branches():
            yield a, b, e.name, label
    for n in d.nodes.values():
        if n.capacity is not None:
            yield n.name, THERMAL_REF, n.name, "mass"


def graph(d: Design):
    """Nodes of both domains and the thermal reference; an edge per branch, labelled with its
    element and kind: a networkx MultiGraph (networkx imported here, as only this needs it)."""
    import networkx as nx

    g = nx.MultiGraph()
    for n in d.nodes.values():
        g.add_node(n.name, domain=n.domain)
    g.add_node(THERMAL_REF, domain=THERMAL)
    for a, b, name, kind in _branches(d):
        g.add_edge(a, b, element=name, kind=kind)
    return g


class _Connectivity:
    """Which nodes are joined, by union-find over their names: the components come out as
    networkx's Graph and connected_components gave them (the same sets, in the order of each
    one's first node), in a fraction of the time on a large mesh, and without importing
    networkx (a sixth of a run's imports)."""

    def __init__(self, names):
        self.parent = {n: n for n in names}

    def _root(self, x: str) -> str:
        parent = self.parent
        while True:
            p = parent[x]
            if p == x:
                return x
            parent[x] = x = parent[p]  # path halving

    def add_edge(self, a: str, b: str) -> None:
        parent = self.parent
        if a not in parent:
            parent[a] = a
        if b not in parent:
            parent[b] = b
        ra, rb = self._root(a), self._root(b)
        if ra != rb:
            parent[rb] = ra

    def joined(self, a: str, b: str) -> bool:
        """A path joins `a` and `b`."""
        return a in self.parent and b in self.parent and self._root(a) == self._root(b)

    def add_edges_from(self, pairs) -> None:
        for a, b in pairs:
            self.add_edge(a, b)

    def components(self) -> list[set]:
        out: dict = {}
        root = self._root
        for n in self.parent:
            r = root(n)
            c = out.get(r)
            if c is None:
                out[r] = {n}
            else:
                c.add(n)
        return list(out.values())


def _domain_graph(d: Design, domain: str, dc: bool, held=(), branches=None) -> _Connectivity:
    """Connectivity of one domain; with `dc`, only branches that carry a steady current, and
    not the elements in `held` (whose current is held at a start value). `branches`: each
    element with its `branches()`, when the caller has them already."""
    g = _Connectivity(n.name for n in d.nodes.values() if n.domain == domain)
    if not g.parent:  # no node of this domain: no branch of it either (a thermal mesh's electrical passes)
        return g
    nodes = d.nodes
    for e, bs in (branches if branches is not None else ((e, e.branches()) for e in d.elements)):
        if dc and (not e.carries_dc or e.name in held):
            continue
        for a, b, _ in bs:
            if b != THERMAL_REF and nodes[a].domain == domain:
                g.add_edge(a, b)
    return g


def _names(nodes) -> str:
    nodes = sorted(nodes)
    shown = ", ".join(f"`{n}`" for n in nodes[:6])
    return shown + (f" and {len(nodes) - 6} more" if len(nodes) > 6 else "")


def _nodes(domain: str, comp, one: str, many: str) -> str:
    """`thermal node `a` has` or `thermal nodes `a`, `b` have`."""
    if len(comp) == 1:
        return f"{domain} node {_names(comp)} {one}"
    return f"{domain} nodes {_names(comp)} {many}"


def check_design(d: Design) -> None:
    """Structural checks before any solve. Raises NetgenError naming nodes and elements."""
    errors: list[NetgenError] = []
    if not d.nodes:
        raise NetgenError("the design has no nodes", Loc(d.file, 1, 1), "add masses, links, resistors ...")
    fixed_nodes = {e.node for e in d.elements if isinstance(e, Fixed)}
    errors += _cold_reservoirs(d)

    # Electrical islands need a ground.
    branches = [(e, e.branches()) for e in d.elements]
    eg = _domain_graph(d, ELECTRICAL, dc=False, branches=branches)
    grounded = set()
    for comp in eg.components():
        if comp & set(d.grounds):
            grounded |= comp
        else:
            first = min((d.nodes[n] for n in comp), key=lambda n: (n.loc.line, n.loc.col))
            errors.append(NetgenError(
                f"{_nodes('electrical', comp, 'has', 'have')} no path to a ground", first.loc,
                "add `ground NODE` for one of them"))

    # Thermal islands: a reservoir, or a start for every mass; never only junctions.
    tg = _domain_graph(d, THERMAL, dc=False, branches=branches)
    needs_reference = d.steady is not None
    for comp in tg.components():
        if comp & fixed_nodes:
            continue
        first = min((d.nodes[n] for n in comp), key=lambda n: (n.loc.line, n.loc.col))
        masses = [d.nodes[n] for n in comp if d.nodes[n].capacity is not None]
        if not masses:
            errors.append(NetgenError(
                f"{_nodes('thermal', comp, 'has', 'have')} neither a reservoir nor a heat capacity", first.loc,
                "fix one of them with `fixed NODE TEMP` or give one a `mass`"))
            continue
        if needs_reference:
            errors.append(NetgenError(
                f"{_nodes('thermal', comp, 'has', 'have')} no reservoir, so `steady` has no answer", d.steady.loc,
                "add `fixed NODE TEMP` to one of them, or drop `steady` and give every mass a start"))
            continue
        unstarted = [m.name for m in masses if m.start is None]
        if unstarted:
            errors.append(NetgenError(
                f"{_nodes('thermal', comp, 'has', 'have')} no reservoir, so every mass needs a start; "
                f"{_names(unstarted)} has none", d.nodes[unstarted[0]].loc,
                "write `start TEMP` on the mass, or add `fixed NODE TEMP`"))

    # In a steady state capacitors carry no current, so every electrical node needs a path to a
    # ground through branches that do; nodes reached only through capacitors and current
    # sources (a cut set) make the steady equations singular. The transient's start holds each
    # capacitor with a `start` at its voltage, which gives such a path, and each inductor with
    # a `start` at its current, which takes one away: it then sets its current as a current
    # source does. Islands with no ground at all were reported above.
    islanded = set()
    passes = ([("steady", False)] if d.steady is not None or d.transient is None else [])
    passes += [("transient", True)] if d.transient is not None else []
    for analysis, started in passes:
        held = {e.name for e in d.elements if started and e.carries_dc and getattr(e, "start", None) is not None}
        g = _domain_graph(d, ELECTRICAL, dc=True, held=held, branches=branches)
        if started:
            g.add_edges_from((e.a, e.b) for e in d.elements
                             if getattr(e, "start", None) is not None and not e.carries_dc)
        for comp in g.components():
            if comp & set(d.grounds) or comp & islanded or not comp <= grounded:
                continue
            islanded |= comp
            cut = [e for e in d.elements if (not e.carries_dc or e.name in held) and len(e.terminals) == 2
                   and (e.a in comp) != (e.b in comp)]
            first = cut[0] if cut else min((d.nodes[n] for n in comp), key=lambda n: (n.loc.line, n.loc.col))
            when = "the start of the transient" if started else "the steady state"
            coils = [e.name for e in cut if e.name in held]
            if coils:  # an inductor's start current with nowhere to go but current sources
                kinds = " and ".join(sorted({e.noun for e in cut if e.name not in held}) + ["inductors with a `start`"])
                errors.append(NetgenError(
                    f"{_nodes('electrical', comp, 'is', 'are')} reached only through {kinds} "
                    f"({_names(e.name for e in cut)}), so {when} has no solution there: the `start` of "
                    f"{_names(coils)} holds {'its' if len(coils) == 1 else 'their'} current, and nothing else there "
                    "can take it up", next(e.loc for e in cut if e.name in held),
                    f"drop the `start` of {_names(coils)} (an inductor then starts at the current the circuit "
                    "gives it), or add a resistor from one of the nodes to ground"))
                continue
            kinds = " and ".join(sorted({e.noun for e in cut}))
            reached = (f"reached only through {kinds} ({_names(e.name for e in cut)})" if cut else
                       "connected to a ground only through elements that carry no steady current")
            startable = [e for e in cut if hasattr(e, "start")]
            hint = ("give the capacitor a `start` voltage, or add a resistor to ground (1 Gohm will do)"
                    if analysis == "transient" or startable
                    else "add a resistor from one of them to ground")
            errors.append(NetgenError(
                f"{_nodes('electrical', comp, 'is', 'are')} {reached}, so {when} "
                "has no solution there", first.loc, hint))

    # Loops of voltage-defining branches make the equations singular.
    vg = _Connectivity(())
    for e in d.elements:
        if e.defines_voltage:
            a = "<ground>" if e.a in d.grounds else e.a
            b = "<ground>" if e.b in d.grounds else e.b
            if a == b or vg.joined(a, b):
                errors.append(NetgenError(
                    f"`{e.name}` closes a loop of voltage sources and inductors", e.loc,
                    "put a resistor in the loop"))
                continue
            vg.add_edge(a, b)
    if errors:
        raise NetgenErrors(errors) if len(errors) > 1 else errors[0]


def _cold_reservoirs(d: Design, samples: int = 1000) -> list[NetgenError]:
    """Reservoirs whose temperature varies in time must stay above absolute zero over the run:
    checked at its start, at every corner of their shapes (both sides) and on an even grid
    (a constant one is refused where it is read)."""
    until = d.transient.until if d.transient is not None else 0.0
    out = []
    for e in d.elements:
        if not isinstance(e, Fixed) or e.temperature is None or e.temperature.constant:
            continue
        t = np.unique(np.concatenate([np.linspace(0.0, until, samples + 1),
                                      [c for c in e.temperature.corners(until) if 0.0 <= c <= until]]))
        for left in (False, True):
            v = np.broadcast_to(np.asarray(evaluate(e.temperature.expr, t, left), dtype=float), t.shape)
            cold = np.flatnonzero(~(v > 0))
            if cold.size:
                i = int(cold[0])
                out.append(NetgenError(
                    f"reservoir `{e.name}` falls to {v[i]:g} K at t = {t[i]:g} s: a temperature must stay above "
                    "absolute zero", e.loc, "temperatures are absolute: write e.g. `300 K` or `25 degC`"))
                break
    return out


def unused_warnings(d: Design) -> list[str]:
    """Nodes with a single connection: legal, but often a typo. Grounds and masses are never
    named, so only the other nodes' connections are counted (none in a mesh of masses but its
    reservoirs), and a mass's own branch to the reference joins no such node."""
    degree = {n.name: 0 for n in d.nodes.values() if n.name not in d.grounds and n.capacity is None}
    if not degree:
        return []
    for e in d.elements:
        for a, b, _ in e.branches():
            if a in degree:
                degree[a] += 1
            if b in degree:
                degree[b] += 1
    return [f"{n.loc}: note: node `{n.name}` has one connection" for n in d.nodes.values() if degree.get(n.name) == 1]


__all__ = ["graph", "check_design", "unused_warnings", "THERMAL_REF"]
