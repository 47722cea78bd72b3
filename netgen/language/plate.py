"""The `plate` statement: a rectangular plate laid out as a grid of masses and links, cells and edges named.

    plate NAME ROWS by COLS  cell W [by H]  thickness T  density RHO  specific heat CP  conductivity K  [start TEMP]
    plate NAME ROWS by COLS  capacity C  conductance G [by G2]  [start TEMP]

Cell `NAME.rIcJ` (row I from the top, column J from the left, both from 1) is a mass; each cell
is linked to its four neighbours (`NAME.rIcJ_rIcJ+1` along a row, `NAME.rIcJ_rI+1cJ` down a
column). The edges `NAME.left`, `NAME.right`, `NAME.top` and `NAME.bottom` are thermal nodes on
the plate's boundary, joined to the cells along them through half a cell (`NAME.rIc1_left` ...);
an edge exists only when another statement names it, since an edge node left on its own would
tie the cells along it together as if a bar were clamped there.

The conductivity K (or the conductances G, G2) may be an expression of the temperature `T`, as
a material's properties may: each link then follows the mean temperature of its two ends. The
heat capacity (C, or RHO and CP) stays constant, since the solver's C matrix is.

The plate expands into ordinary `Node`s and `Link`s in the Design, so every later stage (the
checks, the assembler, the signals, the netlist) sees the hand-written equivalent.
"""
from __future__ import annotations

import difflib
import re
from dataclasses import dataclass

from netgen.model import units as U
from netgen.model.design import THERMAL, Loc, Node
from netgen.model.expr import Expr, evaluate, times
from netgen.elements import Link
from netgen.elements.link import REPORT_T, law_at, read_law
from netgen.model.errors import NetgenError
from netgen.language.parts import TooLarge

EDGES = ("left", "right", "top", "bottom")
MAX_CELLS = 4_000_000  # 4e6 cells is several GB of model; more is surely a typing slip
MATERIAL = ("cell", "thickness", "density", "specific_heat", "conductivity")
PER_CELL = ("capacity", "conductance")
HEAT_CAPACITY = ("density", "specific_heat", "capacity")  # constant: the solver's C matrix is
_WORDS = {"specific_heat": "specific heat"}
_CELL = re.compile(r"r([0-9]+)c([0-9]+)")


@dataclass
class Layout:
    """One elaborated plate: what the edges need once the whole file is read."""

    name: str
    rows: int
    cols: int
    g_row: float  # between neighbours in a row (column to column), W/K
    g_col: float  # between neighbours in a column (row to row), W/K
    loc: Loc
    law_row: Expr | None = None  # g_row as an expression of `T` (then g_row is its value at 300 K)
    law_col: Expr | None = None

    def cell(self, i: int, j: int) -> str:
        return f"{self.name}.r{i}c{j}"

    def edge_cells(self, edge: str) -> list[tuple[int, int]]:
        if edge in ("left", "right"):
            j = 1 if edge == "left" else self.cols
            return [(i, j) for i in range(1, self.rows + 1)]
        i = 1 if edge == "top" else self.rows
        return [(i, j) for j in range(1, self.cols + 1)]


def layouts(el) -> list[Layout]:
    """The plates read so far by an Elaborator (kept on it, since a plate lives as long as its read)."""
    found = getattr(el, "plates", None)
    if found is None:
        found = []
        el.plates = found
    return found


def _attrs(el, tree) -> dict:
    out: dict = {}
    for a in tree.children if tree is not None else ():
        key = a.data[len("plate_"):]
        if key in out:
            raise el.err(a, f"`{_WORDS.get(key, key)}` is given twice")
        out[key] = a
    return out


def _count(el, tree, what: str) -> int:
    dim = el.typed(tree).dim
    if not dim.dimensionless:
        raise el.err(tree, f"{what} is a plain number, not in {U.unit_name(dim)}",
                     "e.g. `plate spreader 20 by 30 ...`")
    v = el.const(tree, U.NONE, what, positive=True)
    if v != int(v):
        raise el.err(tree, f"{what} must be a whole number, not {v:g}")
    return int(v)


def _constant(el, key: str, tree, dim, what: str) -> float:
    """A positive constant attribute, with a plain word for one written as an expression of `T`."""
    if "T" not in el.params:  # a parameter `T` keeps its meaning here
        rd = el.reader()
        rd.variables = {"T": U.TEMPERATURE}
        if rd.read(tree).expr.uses_vars:
            word = _WORDS.get(key, key)
            if key in HEAT_CAPACITY:
                raise el.err(tree, f"a plate's heat capacity is constant: `{word}` may not depend on the "
                             "temperature `T`",
                             "the solver's heat capacities are constants (its C matrix does not change with "
                             "temperature), so only the conductivity (or `conductance`) may follow `T`; give "
                             "the value at the plate's working temperature")
            raise el.err(tree, f"`{word}` may not depend on the temperature `T`",
                         "only a plate's conductivity (or `conductance`) may follow `T`")
    return el.const(tree, dim, what, positive=True)


def _conductance(el, tree, dim, what: str, example: str) -> tuple[float, Expr | None]:
    """A conductivity or conductance, constant or an expression of `T`: (value, law or None)."""
    typed = read_law(el, tree, (dim,), what, example)
    if not typed.expr.uses_vars:
        return el.const(tree, dim, what, positive=True), None
    return float(evaluate(typed.expr, T=REPORT_T)), typed.expr  # the caller checks it, scaled, at 300 K


def elaborate(el, t) -> None:
    """Expand a `plate` statement into masses and links on the Elaborator's Design."""
    name_tok, rows_t, cols_t, attrs_t = t.children
    el.element_name(name_tok)  # reserves the name: no element, part instance or plate may reuse it
    name = el.prefix + str(name_tok)
    loc = el.loc(name_tok)
    rows = _count(el, rows_t, "the number of rows")
    cols = _count(el, cols_t, "the number of columns")
    if rows * cols > MAX_CELLS:
        raise el.err(rows_t, f"a plate of {rows} by {cols} cells is too large (at most {MAX_CELLS:,} cells)",
                     "use larger cells")
    el.cells += rows * cols
    if el.cells > MAX_CELLS:  # in all: a part holding a plate may be used many times
        raise TooLarge(f"plate `{name}` brings the design's plates to {el.cells:,} cells, more than {MAX_CELLS:,} "
                       "in all", el.loc(rows_t), "use larger cells, or fewer copies of the part that holds the plate")
    at = _attrs(el, attrs_t)
    material = [k for k in MATERIAL if k in at]
    per_cell = [k for k in PER_CELL if k in at]
    example = ("e.g. `cell 2 mm  thickness 1.5 mm  density 2700 kg/m^3  specific heat 900 J/(kg*K)  "
               "conductivity 200 W/(m*K)`, or `capacity 0.1 J/K  conductance 0.3 W/K`")
    if material and per_cell:
        raise el.err(at[per_cell[0]], f"plate `{name}` is given both by its material ({', '.join(material)}) "
                     f"and per cell ({', '.join(per_cell)})", "give one of the two")
    if per_cell:
        missing = [k for k in PER_CELL if k not in at]
        if missing:
            raise el.err(name_tok, f"plate `{name}` needs `{missing[0]}` too", example)
        cap = _constant(el, "capacity", at["capacity"].children[0], U.HEAT_CAPACITY, "a cell's heat capacity")
        g1_t, g2_t = at["conductance"].children
        eg = "e.g. `conductance 0.3 W/K * (1 - 0.001 * (T - 300 K) / 1 K)`"
        g_row, law_row = _conductance(el, g1_t, U.THERMAL_CONDUCTANCE, "a conductance between cells", eg)
        g_col, law_col = _conductance(el, g2_t, U.THERMAL_CONDUCTANCE, "a conductance between cells", eg) \
            if g2_t is not None else (g_row, law_row)
        tree_row, tree_col = g1_t, g2_t if g2_t is not None else g1_t
    elif material:
        missing = [_WORDS.get(k, k) for k in MATERIAL if k not in at]
        if missing:
            raise el.err(name_tok, f"plate `{name}` needs {', '.join('`' + m + '`' for m in missing)}", example)
        w_t, h_t = at["cell"].children
        width = _constant(el, "cell", w_t, U.LENGTH, "a cell width")
        height = _constant(el, "cell", h_t, U.LENGTH, "a cell height") if h_t is not None else width
        thick = _constant(el, "thickness", at["thickness"].children[0], U.LENGTH, "a thickness")
        rho = _constant(el, "density", at["density"].children[0], U.DENSITY, "a density")
        cp = _constant(el, "specific_heat", at["specific_heat"].children[0], U.SPECIFIC_HEAT, "a specific heat")
        k_t = at["conductivity"].children[0]
        k, law = _conductance(el, k_t, U.CONDUCTIVITY, "a thermal conductivity",
                              "e.g. `conductivity 200 W/(m*K) * (1 - 0.0005 * (T - 300 K) / 1 K)`")
        cap = rho * cp * width * height * thick
        s_row, s_col = thick * height / width, thick * width / height
        g_row = k * s_row  # across the face between two cells side by side
        g_col = k * s_col
        law_row = times(s_row, law) if law is not None else None
        law_col = times(s_col, law) if law is not None else None
        tree_row = tree_col = k_t
    else:
        raise el.err(name_tok, f"plate `{name}` needs its material or its per-cell values", example)
    if law_row is not None:
        g_row = law_at(el, tree_row, law_row, "the conductance between cells side by side")
    if law_col is not None:
        g_col = law_at(el, tree_col, law_col, "the conductance between cells one above the other")
    start = None
    if "start" in at:
        start = _constant(el, "start", at["start"].children[0], U.TEMPERATURE, "a start temperature")

    lay = Layout(name, rows, cols, g_row, g_col, loc, law_row, law_col)
    _cells(el, lay, cap, start)
    _links(el, lay)
    layouts(el).append(lay)


def _cells(el, lay: Layout, cap: float, start: float | None) -> None:
    nodes = el.design.nodes
    names = [lay.cell(i, j) for i in range(1, lay.rows + 1) for j in range(1, lay.cols + 1)]
    for nm in nodes.keys() & set(names):  # named before the plate: a heat input, a link ...
        n = nodes[nm]
        if n.domain != THERMAL:
            raise NetgenError(f"node `{nm}` is {n.domain} (first used at line {n.loc.line}) but is a cell of "
                              f"plate `{lay.name}`", lay.loc, "a node belongs to one domain")
        if n.capacity is not None:
            raise NetgenError(f"mass `{nm}` is already defined at line {n.loc.line}, and is a cell of "
                              f"plate `{lay.name}`", lay.loc, "rename the mass or the plate")
    for nm in names:
        n = nodes.get(nm)
        if n is None:
            nodes[nm] = Node(nm, THERMAL, lay.loc, cap, start)
        else:
            n.capacity, n.start, n.loc = cap, start, lay.loc


def _add_links(el, lay: Layout, triples: list[tuple[str, str, str]], g: float, law: Expr | None) -> None:
    taken = el.element_locs.keys() & {t[0] for t in triples}
    if taken:
        first = min(taken)
        raise NetgenError(f"element `{first}` is already defined at line {el.element_locs[first].line}, and is a "
                          f"link of plate `{lay.name}`", lay.loc, "rename the element or the plate")
    loc = lay.loc
    el.element_locs.update((t[0], loc) for t in triples)
    el.design.elements.extend(Link(nm, loc, a=a, b=b, conductance=g, law=law) for nm, a, b in triples)


def _links(el, lay: Layout) -> None:
    R, C, p = lay.rows, lay.cols, lay.name
    along = [(f"{p}.r{i}c{j}_r{i}c{j + 1}", f"{p}.r{i}c{j}", f"{p}.r{i}c{j + 1}")
             for i in range(1, R + 1) for j in range(1, C)]
    down = [(f"{p}.r{i}c{j}_r{i + 1}c{j}", f"{p}.r{i}c{j}", f"{p}.r{i + 1}c{j}")
            for i in range(1, R) for j in range(1, C + 1)]
    _add_links(el, lay, along, lay.g_row, lay.law_row)
    _add_links(el, lay, down, lay.g_col, lay.law_col)


def finish(el) -> None:
    """Once the whole file is read: join each edge that something attaches to, and reject names
    under a plate that are neither a cell nor an edge. Errors go to `el.errors`."""
    plates = {p.name: p for p in layouts(el)}
    if not plates:
        return
    nodes = el.design.nodes
    own = {id(p.loc) for p in plates.values()}  # the plates' own cells carry their plate's Loc
    for p in plates.values():
        for edge in EDGES:
            node = nodes.get(f"{p.name}.{edge}")
            if node is None:
                continue
            if node.domain != THERMAL:
                el.errors.append(NetgenError(f"`{node.name}` is an edge of plate `{p.name}`, a thermal node, but "
                                             "is used here as electrical", node.loc))
                continue
            across = edge in ("left", "right")
            g = 2.0 * (p.g_row if across else p.g_col)  # cell centre to the edge: half a cell
            law = p.law_row if across else p.law_col
            triples = [(f"{p.cell(i, j)}_{edge}", p.cell(i, j), node.name) for i, j in p.edge_cells(edge)]
            try:
                _add_links(el, p, triples, g, times(2.0, law) if law is not None else None)
            except NetgenError as e:
                el.errors.append(e)
    for n in nodes.values():
        if "." not in n.name or id(n.loc) in own:
            continue
        head = n.name
        while "." in head:
            head, _, _ = head.rpartition(".")
            p = plates.get(head)
            if p is None:
                continue
            rest = n.name[len(head) + 1:]
            if rest in EDGES:
                break
            m = _CELL.fullmatch(rest)
            if m and 1 <= int(m.group(1)) <= p.rows and 1 <= int(m.group(2)) <= p.cols:
                break
            cells = f"its cells are {head}.r1c1 to {head}.r{p.rows}c{p.cols} (row, then column)"
            if m:
                el.errors.append(NetgenError(
                    f"`{rest}` is outside plate `{p.name}`, which has {p.rows} rows and {p.cols} columns",
                    n.loc, cells))
                break
            close = difflib.get_close_matches(rest, list(EDGES) + ["r1c1", f"r{p.rows}c{p.cols}"], n=1)
            edges = ", ".join(f"{head}.{e}" for e in EDGES)
            el.errors.append(NetgenError(
                f"plate `{p.name}` has no cell or edge `{rest}`", n.loc,
                (f"did you mean `{head}.{close[0]}`? " if close else "") + f"{cells}; its edges are {edges}"))
            break
