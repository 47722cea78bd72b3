"""The Design model: nodes, elements, analyses and records in SI, each with its source location."""
from __future__ import annotations

from dataclasses import dataclass, field

from netgen.model.expr import Expr, Wave

THERMAL = "thermal"
ELECTRICAL = "electrical"


@dataclass(frozen=True)
class Loc:
    """Where an item was written: file, 1-based line and column, and the line's text."""

    file: str
    line: int
    col: int
    text: str = ""

    def __str__(self) -> str:
        return f"{self.file}:{self.line}:{self.col}"


@dataclass
class Node:
    """A thermal or electrical node. Masses carry `capacity` (J/K) and maybe `start` (K)."""

    name: str
    domain: str
    loc: Loc
    capacity: float | None = None
    start: float | None = None


@dataclass
class Element:
    """Base of all elements: a unique name and where it was written."""

    name: str
    loc: Loc

    @property
    def terminals(self) -> tuple[str, ...]:
        return ()


@dataclass
class TwoTerminal(Element):
    a: str = ""
    b: str = ""

    @property
    def terminals(self):
        return (self.a, self.b)


@dataclass
class Link(TwoTerminal):
    """Thermal conductance between nodes a and b, W/K."""

    conductance: float = 0.0


@dataclass
class Heat(Element):
    """Heat input into `node`, W (may vary in time)."""

    node: str = ""
    power: Wave | None = None

    @property
    def terminals(self):
        return (self.node,)


@dataclass
class Fixed(Element):
    """A reservoir: `node` held at `temperature` (K, may vary in time). Named after its node."""

    node: str = ""
    temperature: Wave | None = None

    @property
    def terminals(self):
        return (self.node,)


@dataclass
class Tempco:
    """R = R0·(1 + alpha·(T(node) − ref))."""

    alpha: float
    node: str
    ref: float


@dataclass
class Resistor(TwoTerminal):
    resistance: float = 0.0
    heats: str | None = None
    tempco: Tempco | None = None


@dataclass
class Capacitor(TwoTerminal):
    capacitance: float = 0.0
    start: float | None = None


@dataclass
class Inductor(TwoTerminal):
    inductance: float = 0.0
    start: float | None = None


@dataclass
class VoltageSource(TwoTerminal):
    """V(a) − V(b) = value; its current is the current it delivers out of a."""

    value: Wave | None = None


@dataclass
class CurrentSource(TwoTerminal):
    """Delivers `value` amperes out of a (into node a), returning at b."""

    value: Wave | None = None


@dataclass
class Switch(TwoTerminal):
    """Closed (r_on) during the listed intervals, open (r_off) otherwise."""

    intervals: list[tuple[float, float]] = field(default_factory=list)
    r_on: float = 1e-3
    r_off: float = 1e9

    def closed_at(self, t: float) -> bool:
        """Closed on [t1, t2): the state just after `t`."""
        return any(t1 <= t < t2 for t1, t2 in self.intervals)


@dataclass
class Material:
    """Thermoelectric material: Seebeck coefficient (V/K), resistivity (ohm·m), thermal
    conductivity (W/(m·K)), each an expression of the temperature `T` in K."""

    name: str
    loc: Loc
    seebeck: Expr
    resistivity: Expr
    conductivity: Expr


@dataclass
class Thermoelectric(Element):
    """Module: pins p, n (electrical), sides a, b (thermal); I from p to n moves heat a → b.

    `seebeck`, `resistance`, `conductance` are the lumped S, R, K. When they depend on
    temperature (a material with expressions of T), `props` holds them as expressions of the
    mean side temperature `T`, and the floats hold their values at 300 K for reports only.
    """

    p: str = ""
    n: str = ""
    a: str = ""
    b: str = ""
    seebeck: float = 0.0
    resistance: float = 0.0
    conductance: float = 0.0
    props: tuple | None = None
    form: str = "lumped"  # lumped | couples | rated
    hottest: float | None = None  # highest allowed side temperature, K

    @property
    def terminals(self):
        return (self.p, self.n, self.a, self.b)

    def values_at(self, T):
        """S, R, K at mean side temperature T (float or array)."""
        if self.props is None:
            return self.seebeck, self.resistance, self.conductance
        from netgen.model.expr import evaluate

        return tuple(evaluate(e, T=T) for e in self.props)


@dataclass
class Steady:
    loc: Loc


@dataclass
class Transient:
    until: float
    loc: Loc
    step: float | None = None
    tolerance: float | None = None


@dataclass
class Modes:
    loc: Loc


SIGNAL_UNITS = {"T": "K", "V": "V", "I": "A", "Q": "W", "P": "W"}


def signal_unit(signal: str) -> str:
    """The SI unit of a signal written as text, e.g. `K` for `T(die)`; "" for anything else."""
    return SIGNAL_UNITS.get(signal[:1], "")


@dataclass
class Signal:
    """A result signal as written, e.g. T(die), V(a, b), Q(tec1.a)."""

    kind: str  # T V I Q P
    args: tuple[str, ...]
    loc: Loc
    written: str = ""  # as it stands in the file, e.g. `V(a,b)`: the column heading

    @property
    def text(self) -> str:
        return self.written or f"{self.kind}({', '.join(self.args)})"


@dataclass
class Expectation:
    """`expect ...`: `agg` is max/min/final/mean/steady, or "at" with `at_time`."""

    agg: str
    expr: Expr
    cmp: str
    limit: float
    unit: str
    text: str
    loc: Loc
    within: float | None = None
    between: tuple[float, float] | None = None
    at_time: float | None = None
    celsius: bool = False


@dataclass
class Audit:
    kind: str  # energy | entropy
    loc: Loc
    within: float | None = None


@dataclass
class BaselineTolerance:
    """`baseline [SIGNAL ...] within TOL [and TOL]`: how far `netgen verify` lets the recorded
    signals move from their baseline. `atol` is in the SI unit `unit`; `rtol` is a share of the
    signal's range. `signals` empty means every recorded signal in `unit` (or all, for `rtol`)."""

    signals: tuple[str, ...]
    loc: Loc
    atol: float | None = None
    unit: str | None = None
    rtol: float | None = None


@dataclass
class Design:
    """Everything a description says, in SI. Every later stage reads only this."""

    file: str
    title: str | None = None
    nodes: dict[str, Node] = field(default_factory=dict)
    elements: list[Element] = field(default_factory=list)
    grounds: dict[str, Loc] = field(default_factory=dict)
    analyses: list = field(default_factory=list)
    records: list[Signal] = field(default_factory=list)
    expectations: list[Expectation] = field(default_factory=list)
    audits: list[Audit] = field(default_factory=list)
    params: dict[str, tuple[float, str]] = field(default_factory=dict)
    materials: dict[str, Material] = field(default_factory=dict)
    baseline_tolerances: list[BaselineTolerance] = field(default_factory=list)
    celsius: bool = False  # the text wrote temperatures in degC: show °C beside K

    def element(self, name: str) -> Element | None:
        for e in self.elements:
            if e.name == name:
                return e
        return None

    def of_kind(self, kind: type) -> list:
        return [e for e in self.elements if isinstance(e, kind)]

    @property
    def steady(self) -> Steady | None:
        return next((a for a in self.analyses if isinstance(a, Steady)), None)

    @property
    def transient(self) -> Transient | None:
        return next((a for a in self.analyses if isinstance(a, Transient)), None)

    def run(self):
        """Solve this design's analyses and return its Results."""
        from netgen.analyses import run_design  # the one place the model hands itself on

        return run_design(self)
