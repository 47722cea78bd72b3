"""The package's layers import one way (DEVELOPERS.md, layout): no module imports another in a
cycle, hidden inside a function or not, and the model imports nothing of the solvers."""
from __future__ import annotations

import ast
from pathlib import Path

import networkx as nx
import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "netgen"


def _module(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def _imports(path: Path) -> set[str]:
    """Every netgen module `path` imports, at the top or inside a function (absolute or relative)."""
    me = _module(path)
    package = me if path.name == "__init__.py" else me.rpartition(".")[0]
    out = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            out |= {a.name for a in node.names if a.name.split(".")[0] == "netgen"}
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                up = package.split(".")[: len(package.split(".")) - (node.level - 1)]
                base = ".".join(up + ([base] if base else []))
            if base.split(".")[0] != "netgen":
                continue
            for a in node.names:  # `from netgen.spice import raw` imports the module netgen.spice.raw
                out.add(f"{base}.{a.name}" if (PACKAGE.parent / f"{base}.{a.name}".replace(".", "/")).with_suffix(".py").exists()
                        or (PACKAGE.parent / f"{base}.{a.name}".replace(".", "/") / "__init__.py").exists() else base)
    return out - {me}


def _graph() -> nx.DiGraph:
    g = nx.DiGraph()
    for path in PACKAGE.rglob("*.py"):
        g.add_node(_module(path))
        for target in _imports(path):
            if target != "netgen":  # the package top only re-exports; everything may name __version__
                g.add_edge(_module(path), target)
    return g


def test_the_graph_sees_imports():
    """The test itself: it finds the imports it is meant to judge."""
    g = _graph()
    assert g.has_edge("netgen.analyses", "netgen.solve.transient")
    assert g.has_edge("netgen.elements.link", "netgen.elements.base")
    assert g.number_of_nodes() > 40


def test_no_module_imports_another_in_a_cycle():
    cycles = list(nx.simple_cycles(_graph()))
    assert not cycles, "import cycles: " + "; ".join(" -> ".join(c + c[:1]) for c in cycles[:10])


LAYERS = ["model", "elements", "language", "solve", "checks", "analyses", "regression", "studies", "outputs", "spice",
          "cli"]


def _layer(module: str) -> int:
    part = module.split(".")[1] if "." in module else ""
    return LAYERS.index(part) if part in LAYERS else len(LAYERS)


@pytest.mark.parametrize("low", ["model", "elements", "solve", "checks"])
def test_lower_layers_import_nothing_above_them(low):
    """model < elements < language | solve < checks < analyses < regression, outputs, spice < cli."""
    g = _graph()
    # language and solve are side by side, as are regression, outputs and spice; each may not
    # import the other of its pair except where listed here.
    side_by_side = {("solve", "language"), ("language", "solve")}
    bad = [(a, b) for a, b in g.edges if a.split(".")[1:2] == [low] and _layer(b) > _layer(a)
           and (a.split(".")[1], b.split(".")[1]) not in side_by_side]
    assert not bad, bad
