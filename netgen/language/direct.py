"""Plain `link` and `mass` lines read straight into the Design, without a syntax tree.

A mesh written out as statements is almost all `mass NAME VALUE start VALUE` and
`link NAME A B VALUE` lines whose values are numbers with units, and most of them repeat one
value text (`2 W/K`, read once: expressions.read_quantity keeps it). Building lark's tree for
each such line and then reading the tree back took two thirds of the reading. Here the line's
match (plain_lines.LineReader) is read directly, but only in the common case: a value that is
a quantity of the right kind, finite and positive; names not already taken or used in the
other domain; room under the statement limit. Anything else returns False before changing
anything, and the line is read through its tree as before, so every message, location and
result is the tree reader's own (tests/test_fastpaths.py compares the two on every line).
"""
from __future__ import annotations

import math

from netgen.elements import Link
from netgen.model import units as U
from netgen.model.design import THERMAL, Loc, Node
from netgen.language.expressions import read_quantity
from netgen.language import parts

_LINK = (U.THERMAL_CONDUCTANCE, U.THERMAL_RESISTANCE)


def _quantity(m, group: str, quantity_group: str, dims: tuple):
    """(value, dim, celsius) of a quantity of one of `dims` that is finite and positive, or None."""
    if m.group(quantity_group) is None:  # a parameter name: read through the tree
        return None
    try:
        v, dim, celsius = read_quantity(m.group(group))
    except U.UnitError:
        return None
    if dim not in dims or not math.isfinite(v) or v <= 0:
        return None
    return v, dim, celsius


def _free(r, name: str) -> bool:
    """The node `name` (qualified) does not exist or is thermal."""
    n = r.design.nodes.get(name)
    return n is None or n.domain == THERMAL


def _node(r, name: str, lineno: int, col: int, line: str) -> None:
    if name not in r.design.nodes:
        r.design.nodes[name] = Node(name, THERMAL, Loc(r.file, lineno, col, line))


def read(r, line: str, m, lineno: int) -> bool:
    """Read the plain line `line` (its match `m`, at 1-based `lineno`) into the Design of the
    reader `r`; False, with nothing changed, where it must be read through its tree."""
    if r.size + 1 > parts.MAX_STATEMENTS:  # read at each call: tests lower it
        return False
    kw = m.group("kw")
    if kw == "link":
        name = r.prefix + m.group("n0")
        a, b = r.qualify(m.group("n1")), r.qualify(m.group("n2"))
        q = _quantity(m, "v", "vq", _LINK)
        if q is None or name in r.element_locs or not _free(r, a) or not _free(r, b):
            return False
        v, dim, _ = q
        loc = Loc(r.file, lineno, m.start("n0") + 1, line)
        r.size += 1
        r.element_locs[name] = loc
        _node(r, a, lineno, m.start("n1") + 1, line)
        _node(r, b, lineno, m.start("n2") + 1, line)
        g = 1.0 / v if dim == U.THERMAL_RESISTANCE else v
        r.design.elements.append(Link(name, loc, a=a, b=b, conductance=g, law=None))
        return True
    if kw == "mass":
        name = r.qualify(m.group("n0"))
        n = r.design.nodes.get(name)
        if n is not None and (n.domain != THERMAL or n.capacity is not None):
            return False
        cap = _quantity(m, "v", "vq", (U.HEAT_CAPACITY,))
        if cap is None:
            return False
        start = None
        if m.group("sk") is not None:
            start = _quantity(m, "s", "sq", (U.TEMPERATURE,))
            if start is None:
                return False
        r.size += 1
        loc = Loc(r.file, lineno, m.start("n0") + 1, line)
        if n is None:
            n = r.design.nodes[name] = Node(name, THERMAL, loc)
        n.capacity, n.loc = cap[0], loc
        if start is not None:
            n.start = start[0]
            if start[2]:
                r.design.celsius = True
        return True
    return False
