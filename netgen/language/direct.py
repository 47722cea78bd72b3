"""Plain `link` and `mass` lines read straight into the Design, without a syntax tree.

A mesh written out as statements is almost all `mass NAME VALUE start VALUE` and
`link NAME A B VALUE` lines whose values are numbers with units, and most of them repeat one
value text (`2 W/K`: read and judged once per kind here, as a link's conductance, a capacity or
a start temperature). Building lark's tree for each such line and then reading the tree back
took two thirds of the reading. Here the line's match (plain_lines.LineReader, the one the
parse found) is read directly, but only in the common case: a value that is a quantity of the
right kind, finite and positive; names not already taken or used in the other domain; room
under the statement limit. Anything else returns False before changing anything, and the line
is read through its tree as before, so every message, location and result is the tree
reader's own (tests/test_direct.py compares the two).
"""
from __future__ import annotations

import math

from netgen.elements import Link
from netgen.model import units as U
from netgen.model.design import THERMAL, Loc, Node
from netgen.language.expressions import read_quantity
from netgen.language import parts

_LINK = (U.THERMAL_CONDUCTANCE, U.THERMAL_RESISTANCE)
_CAPACITY = (U.HEAT_CAPACITY,)
_START = (U.TEMPERATURE,)
_MAX_KEPT = 4096  # value texts kept per kind (a mesh repeats a few; a file of all-different ones clears it)


def _checked(text: str, dims: tuple):
    """(value, dim, celsius) of the quantity `text` if it is of one of `dims`, finite and positive;
    else None."""
    try:
        v, dim, celsius = read_quantity(text)
    except U.UnitError:
        return None
    if dim not in dims or not math.isfinite(v) or v <= 0:
        return None
    return v, dim, celsius


def _conductance(text: str):
    """The conductance (W/K) of a link's value text, or None."""
    q = _checked(text, _LINK)
    return None if q is None else 1.0 / q[0] if q[1] == U.THERMAL_RESISTANCE else q[0]


def _capacity(text: str):
    return _checked(text, _CAPACITY)


def _start(text: str):
    return _checked(text, _START)


_LINKS: dict = {}  # value text → conductance (W/K), or None: read through the tree
_CAPACITIES: dict = {}  # value text → (J/K, dim, celsius) or None
_STARTS: dict = {}  # value text → (K, dim, celsius) or None
_NOT_KEPT = object()


def _kept(cache: dict, text: str, judge):
    """judge(text), kept by value text: a mesh's few value texts are read and judged once each."""
    value = cache.get(text, _NOT_KEPT)
    if value is not _NOT_KEPT:
        return value
    if len(cache) >= _MAX_KEPT:
        cache.clear()
    value = cache[text] = judge(text)
    return value


def read(r, line: str, m, lineno: int) -> bool:
    """Read the plain line `line` (its match `m`, at 1-based `lineno`) into the Design of the
    reader `r`; False, with nothing changed, where it must be read through its tree."""
    if r.size + 1 > parts.MAX_STATEMENTS:  # read at each call: tests lower it
        return False
    nodes = r.design.nodes
    ports, prefix = r.ports, r.prefix
    kw = m.group("kw")
    if kw == "link":
        n0, n1, n2, v, vq = m.group("n0", "n1", "n2", "v", "vq")
        if vq is None:  # a parameter name: read through the tree
            return False
        g = _kept(_LINKS, v, _conductance)
        if g is None:
            return False
        name = prefix + n0
        a = ports.get(n1) or prefix + n1  # Elaborator.qualify
        b = ports.get(n2) or prefix + n2
        na, nb = nodes.get(a), nodes.get(b)
        if (name in r.element_locs or (na is not None and na.domain != THERMAL)
                or (nb is not None and nb.domain != THERMAL)):
            return False
        loc = Loc(r.file, lineno, m.start("n0") + 1, line)
        r.size += 1
        r.element_locs[name] = loc
        if na is None:
            nodes[a] = Node(a, THERMAL, Loc(r.file, lineno, m.start("n1") + 1, line))
        if nb is None and b not in nodes:
            nodes[b] = Node(b, THERMAL, Loc(r.file, lineno, m.start("n2") + 1, line))
        r.design.elements.append(Link(name, loc, a=a, b=b, conductance=g, law=None))
        return True
    if kw == "mass":
        n0, v, vq, sk, s, sq = m.group("n0", "v", "vq", "sk", "s", "sq")
        name = ports.get(n0) or prefix + n0
        n = nodes.get(name)
        if n is not None and (n.domain != THERMAL or n.capacity is not None):
            return False
        if vq is None:
            return False
        cap = _kept(_CAPACITIES, v, _capacity)
        if cap is None:
            return False
        start = None
        if sk is not None:
            if sq is None:
                return False
            start = _kept(_STARTS, s, _start)
            if start is None:
                return False
        r.size += 1
        loc = Loc(r.file, lineno, m.start("n0") + 1, line)
        if n is None:
            n = nodes[name] = Node(name, THERMAL, loc)
        n.capacity, n.loc = cap[0], loc
        if start is not None:
            n.start = start[0]
            if start[2]:
                r.design.celsius = True
        return True
    return False
