"""What every element kind provides, and the tools its stamp, signals and netlist lines use.

An element kind is a dataclass (the data of one element, SI values, its source location) whose
class also carries everything else about the kind:

- `statement` and `read(reader, tree)`: how the reader makes elements from a statement;
- `branch`: the kind of branch unknown each element adds (`"I"` or `"Q"`), or None;
- `stamp(batch, stamp)`: the linear part of a whole batch into G and C as index arrays, the
  sources, and the nonlinear equations as one `Equations` block (vectorised, never a loop over
  elements inside Newton);
- `signals` and `signal(kind, side, probe)`: the derived signals `I`, `P`, `Q`;
- `branches()`, `carries_dc`, `defines_voltage`: what the structural checks need;
- `energy()`, `entropy()`: the element's terms in `audit energy` and `audit entropy`;
- `netlist(writer, stem)`: its lines for the outside circuit simulator.

The assembler, the signal evaluator, the checks and the netlist writer loop over the registry
in `netgen.elements`; none of them names a kind.
"""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import ClassVar

import numpy as np

from netgen.model.calculus import compiled, derivative
from netgen.model.design import THERMAL, Element
from netgen.model.expr import Const, Expr, Var, Wave

# The temperatures of an element's two ends in its equations, and their mean.
TA, TB = Var("Ta"), Var("Tb")
MEAN = 0.5 * (TA + TB)

THERMAL_REF = "<absolute zero>"  # the other end of masses, reservoirs and heat inputs
_I = np.int64


def ix(values) -> np.ndarray:
    """Index values as one flat int64 array."""
    return np.asarray(values, dtype=_I).reshape(-1)


@dataclass(frozen=True)
class EnergyTerm:
    """One term of the first-law balance. `role` "supplied" and "lost" integrate the signal (a
    power, times `sign`); "stored" takes ½·`k`·s² of the signal s at the end less at the start."""

    role: str
    signal: str
    sign: float = 1.0
    k: float = 0.0


class Kind(Element):
    """The base of every element kind; the defaults suit an element that has none of a feature."""

    statement: ClassVar[str] = ""  # the grammar rule this kind reads (several kinds may share one)
    noun: ClassVar[str] = "element"  # plain name in messages, e.g. "capacitors"
    branch: ClassVar[str | None] = None  # "I" (a current) or "Q" (a heat flow) unknown, or none
    signals: ClassVar[tuple[str, ...]] = ()  # of I, P, Q: the signals `SIGNAL(name)` it has
    sides: ClassVar[tuple[str, ...]] = ()  # `Q(name.side)` it has
    carries_dc: ClassVar[bool] = True  # a steady current or heat flow can pass it
    defines_voltage: ClassVar[bool] = False  # it fixes the voltage across it (loops of these are singular)
    recorded: ClassVar[str | None] = None  # the signal recorded when a design records nothing
    given: ClassVar[str | None] = None  # the signal that is only its own given value (a heat input's Q)
    reservoir: ClassVar[bool] = False  # it holds its node at a temperature (the surroundings, for entropy)
    attributes: ClassVar[tuple[str, ...]] = ()  # what may stand in its `{ ... }`, for hints on a typo there

    @staticmethod
    def read(reader, tree) -> None:  # pragma: no cover - every registered kind has its own
        raise NotImplementedError

    @classmethod
    def stamp(cls, batch: list, st: "Stamp") -> None:  # pragma: no cover - every kind has its own
        raise NotImplementedError

    def branches(self) -> list[tuple[str, str, str]]:
        """(node, node, label) for each branch this element puts between two nodes."""
        t = self.terminals
        return [(t[0], t[1], type(self).__name__)] if len(t) == 2 else []

    def signal(self, kind: str, side: str | None, p: "Probe") -> np.ndarray:  # pragma: no cover
        raise KeyError(kind)

    def energy(self) -> list[EnergyTerm]:
        return []

    def entropy(self) -> list[tuple[str, str]]:
        """(heat-flow signal into the network, temperature signal where it enters)."""
        return []

    def waves(self) -> dict[str, Wave]:
        """Values that vary in time, by the attribute that holds them."""
        return {}

    def unknowns(self) -> list[tuple[str, str]]:
        """(name, kind) of each unknown it adds besides a branch (a controller's states)."""
        return []

    def resolve(self, design) -> list:
        """Checks that need the whole file read (what a statement names further down), as
        located NetgenErrors."""
        return []

    def thermal_conductance(self) -> tuple[str, str, float] | None:
        """(node, node, W/K) near the operating point, for scaling comparison tolerances."""
        return None

    def netlist(self, w, stem: str) -> None:  # pragma: no cover - every kind has its own
        raise NotImplementedError


def read_between(r, t, statement: str, allowed: tuple[str, ...], required: tuple[str, ...], hint: str):
    """`STATEMENT NAME A B ATTRIBUTES` between two thermal nodes: the element's name, its nodes and
    its attributes, with a located error naming the required ones that are missing."""
    name_tok, a, b, attrs = t.children
    name = r.element_name(name_tok)
    na, nb = r.node(a, THERMAL), r.node(b, THERMAL)
    at = r.attrs(attrs, allowed, statement)
    missing = [k for k in required if k not in at]
    if missing:
        raise r.err(name_tok, f"{statement} `{name}` needs " + " and ".join(f"`{m}`" for m in missing), hint)
    return name, r.loc(name_tok), na, nb, at


@dataclass
class TwoTerminal(Kind):
    a: str = ""
    b: str = ""

    @property
    def terminals(self):
        return (self.a, self.b)


class Triplets:
    """COO triplets collected as arrays; entries touching the reference (index n) are dropped."""

    def __init__(self):
        self.r: list[np.ndarray] = []
        self.c: list[np.ndarray] = []
        self.v: list[np.ndarray] = []

    def add(self, i, j, v):
        i, j = ix(i), ix(j)
        self.r.append(i)
        self.c.append(j)
        self.v.append(np.broadcast_to(np.asarray(v, dtype=float), i.shape))

    def conductance(self, i, j, g):
        """g between nodes i and j (arrays of one length, or scalars)."""
        i, j = ix(i), ix(j)
        g = np.broadcast_to(np.asarray(g, dtype=float), i.shape)
        self.add(np.concatenate([i, j, i, j]), np.concatenate([i, j, j, i]), np.concatenate([g, g, -g, -g]))

    def branch(self, a, b, k, sign: float = 1.0):
        """A branch current k leaving node a and entering b, with the branch row reading
        sign·(V(a) − V(b)): the incidence part every branch element shares."""
        a, b, k = ix(a), ix(b), ix(k)
        self.add(np.concatenate([a, b, k, k]), np.concatenate([k, k, a, b]),
                 np.repeat([sign, -sign, 1.0, -1.0], len(k)))

    def arrays(self, n) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        if not self.r:
            return np.zeros(0, _I), np.zeros(0, _I), np.zeros(0)
        r, c, v = np.concatenate(self.r), np.concatenate(self.c), np.concatenate(self.v)
        keep = (r < n) & (c < n)
        return r[keep], c[keep], v[keep]


class Equations:
    """Nonlinear terms of a batch of elements that share one set of equations.

    `terms` pairs an array of rows (one per element) with an expression of the named unknowns
    (`unknowns`: an index array per name) and per-element parameters (`params`: an array per
    name); each value is added to its row of f. The Jacobian is the exact derivative of each
    expression, at positions fixed here, and everything is compiled once into numpy functions.
    """

    def __init__(self, terms: list[tuple[np.ndarray, Expr]], unknowns: dict[str, np.ndarray],
                 params: dict[str, np.ndarray] | None = None):
        self.size = len(next(iter(unknowns.values())))
        self.unknowns = {k: ix(v) for k, v in unknowns.items()}
        self.params = {k: np.asarray(v, dtype=float) for k, v in (params or {}).items()}
        self.f_rows = np.concatenate([ix(r) for r, _ in terms])
        self._f = [compiled(e) for _, e in terms]
        jr, jc, self._j = [], [], []
        for rows, e in terms:
            for name, cols in self.unknowns.items():
                de = derivative(e, name)
                if isinstance(de, Const) and de.v == 0:
                    continue
                jr.append(ix(rows))
                jc.append(cols)
                self._j.append(compiled(de))
        self.j_rows = np.concatenate(jr) if jr else np.zeros(0, _I)
        self.j_cols = np.concatenate(jc) if jc else np.zeros(0, _I)

    def evaluate(self, xe: np.ndarray, jacobian: bool):
        """Values of f in the order of `f_rows` and, with `jacobian`, of the Jacobian in the
        order of (`j_rows`, `j_cols`). `xe` is the state with the reference (0) appended."""
        env = {k: xe[v] for k, v in self.unknowns.items()}
        env.update(self.params)
        shape = (self.size,)
        with np.errstate(all="ignore"):
            f = np.concatenate([np.broadcast_to(fn(env), shape) for fn in self._f])
            if not jacobian:
                return f, None
            j = [np.broadcast_to(fn(env), shape) for fn in self._j]
        return f, (np.concatenate(j) if j else np.zeros(0))


@dataclass
class Stamp:
    """What the kinds stamp into while the System is assembled."""

    n: int
    node_index: dict[str, int]
    branch_index: dict[str, int]
    G: Triplets = field(default_factory=Triplets)
    C: Triplets = field(default_factory=Triplets)
    b_const: np.ndarray = None
    waves: list[tuple[int, float, Wave]] = field(default_factory=list)
    corners_of: list[Wave] = field(default_factory=list)
    blocks: list[Equations] = field(default_factory=list)
    switches: list = field(default_factory=list)
    limits: list = field(default_factory=list)  # Newton's limiters of a kind's own unknowns (`apply(x_old, x_new)`)
    start_nodes: list[tuple[int, int, float]] = field(default_factory=list)
    start_branches: list[tuple[int, float]] = field(default_factory=list)

    def __post_init__(self):
        if self.b_const is None:
            self.b_const = np.zeros(self.n + 1)

    def nodes(self, batch, attr: str) -> np.ndarray:
        """The unknown index of each element's node `attr` (n for a ground)."""
        ni = self.node_index
        return np.fromiter((ni[getattr(e, attr)] for e in batch), _I, len(batch))

    def branches(self, batch) -> np.ndarray:
        bi = self.branch_index
        return np.fromiter((bi[e.name] for e in batch), _I, len(batch))

    @staticmethod
    def values(batch, attr: str) -> np.ndarray:
        return np.fromiter((getattr(e, attr) for e in batch), float, len(batch))

    def source(self, rows, sign: float, ws: list[Wave]) -> None:
        """Waves into b(t) at `rows`: constants once, the rest evaluated at every time."""
        for row, w in zip(ix(rows).tolist(), ws):
            if w.constant:
                self.b_const[row] += sign * w.at(0.0)
            else:
                self.waves.append((row, sign, w))
                self.corners_of.append(w)

    def equations(self, block: Equations) -> None:
        if block.size:
            self.blocks.append(block)


@dataclass
class Probe:
    """What an element's signals read from solved states: rows of states `X`, their time
    derivatives `Xdot`, the times `t`, and the from-the-left flags `left` (one or one per row)."""

    X: np.ndarray
    Xdot: np.ndarray
    t: np.ndarray
    left: object
    node_index: dict[str, int]
    branch_index: dict[str, int]
    n: int
    timeline: dict = field(default_factory=dict)  # switch name → closed(t, left), of switches that act on conditions

    def node(self, name: str) -> np.ndarray:
        i = self.node_index[name]
        return self.X[:, i] if i < self.n else np.zeros(self.X.shape[0])

    def across(self, a: str, b: str) -> np.ndarray:
        return self.node(a) - self.node(b)

    def rate_across(self, a: str, b: str) -> np.ndarray:
        ia, ib = self.node_index[a], self.node_index[b]
        da = self.Xdot[:, ia] if ia < self.n else 0.0
        db = self.Xdot[:, ib] if ib < self.n else 0.0
        return np.broadcast_to(da - db, (self.X.shape[0],))

    def branch(self, name: str) -> np.ndarray:
        return self.X[:, self.branch_index[name]]

    def samples(self):
        """(time, from-the-left flag) for every row."""
        t = np.atleast_1d(self.t)
        flags = np.broadcast_to(np.asarray(self.left, dtype=bool), t.shape)
        return zip(t.tolist(), flags.tolist())

    def each(self, fn: Callable[[float, bool], float]) -> np.ndarray:
        return np.array([fn(float(tt), lf) for tt, lf in self.samples()])

    def wave(self, w: Wave) -> np.ndarray:
        return self.each(w.at)


def electrical_power(e: TwoTerminal, p: Probe, current: np.ndarray, sign: float = 1.0) -> np.ndarray:
    """P = V(a, b)·I; a source delivering power takes negative power (`sign` −1)."""
    return sign * p.across(e.a, e.b) * current
