"""The structural checks' connectivity (solve/topology._Connectivity, a union-find) gives the
components networkx gives (an independent library: `Graph` and `connected_components`), the
same sets in the same order, on random graphs with isolated nodes, self-loops, repeated edges
and nodes first met on an edge; and the notes on nodes with one connection, counted against
networkx's degree."""
from __future__ import annotations

import random
from pathlib import Path

import networkx as nx
import pytest

import netgen
from netgen.solve.topology import _Connectivity, graph, unused_warnings


@pytest.mark.parametrize("seed", range(20))
def test_components_as_networkx_gives_them(seed):
    rng = random.Random(seed)
    n = rng.randint(1, 60)
    names = [f"n{i}" for i in range(n)]
    rng.shuffle(names)
    declared = names[: rng.randint(0, n)]
    edges = [(rng.choice(names), rng.choice(names)) for _ in range(rng.randint(0, 2 * n))]
    ours = _Connectivity(declared)
    ref = nx.Graph()
    ref.add_nodes_from(declared)
    for a, b in edges:
        ours.add_edge(a, b)
        ref.add_edge(a, b)
    assert ours.components() == list(nx.connected_components(ref))


def test_a_chain_is_one_component():
    """Can fail: a union-find that lost a join would give more than one."""
    c = _Connectivity([f"c{i}" for i in range(1000)])
    c.add_edges_from((f"c{i + 1}", f"c{i}") for i in range(999))
    assert c.components() == [{f"c{i}" for i in range(1000)}]


@pytest.mark.parametrize("seed", range(20))
def test_the_loop_rule_as_networkx_judges_it(seed):
    """The check for loops of voltage-defining branches: an edge closes a loop where networkx
    finds its ends already joined (has_edge or has_path), and only then."""
    rng = random.Random(seed)
    names = [f"n{i}" for i in range(rng.randint(1, 12))]
    ref, ours = nx.Graph(), _Connectivity(())
    for _ in range(rng.randint(0, 30)):
        a, b = rng.choice(names), rng.choice(names)
        loop = a == b or ref.has_edge(a, b) or (a in ref and b in ref and nx.has_path(ref, a, b))
        assert (a == b or ours.joined(a, b)) == loop
        if not loop:
            ref.add_edge(a, b)
            ours.add_edge(a, b)


EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


@pytest.mark.parametrize("path", sorted(EXAMPLES.glob("*.etn")), ids=lambda p: p.name)  # parts/: a library
def test_one_connection_notes_as_networkx_counts_them(path):
    """`unused_warnings` counts connections itself; networkx's degree in the design's graph
    (topology.graph, a MultiGraph: a self-loop counts twice, as it does there) is the reference."""
    d = netgen.load(path)
    g = graph(d)
    want = [f"{n.loc}: note: node `{n.name}` has one connection" for n in d.nodes.values()
            if n.name not in d.grounds and n.capacity is None and g.degree(n.name) == 1]
    assert unused_warnings(d) == want


def test_one_connection_notes_can_appear():
    """Can fail: a dangling node is named."""
    d = netgen.load("fixed s 300 K\nmass a 1 J/K\nlink l a s 1 W/K\nlink m a x 1 W/K\n")
    assert [w.split(": note: ")[1] for w in unused_warnings(d)] == ["node `x` has one connection"]
