"""The Design model: nodes, elements, analyses and records in SI, each with its source location."""
from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from typing import ClassVar

from netgen.model.expr import Expr
from netgen.model.signals import SIGNAL_UNITS, Signal, signal_unit  # noqa: F401 - part of the model

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
    owner: str | None = None  # the element whose internal node it is (a module's joints), not recorded by default


@dataclass
class Element:
    """Base of all elements: a unique name and where it was written."""

    name: str
    loc: Loc

    @property
    def terminals(self) -> tuple[str, ...]:
        return ()


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


@dataclass
class Response:
    """`response SIGNAL to INPUT [from F1 to F2] [points N]`: frequencies in Hz (None: chosen
    from the modes), N log-spaced points (None: the default)."""

    signal: Signal
    input: str
    loc: Loc
    input_loc: Loc | None = None
    f_from: float | None = None
    f_to: float | None = None
    points: int | None = None


@dataclass
class Expectation:
    """`expect ...`: `agg` is max/min/final/mean/steady, "at" with `at_time`, "window" (a
    condition whose `margins` are each positive where one comparison holds; `expr` is their
    `min` and the limit a duration), or "time of min" / "time of max" (the limit a time)."""

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
    margins: tuple = ()


@dataclass
class Humidity:
    """`humidity RH at TEMP`: the air around the design, for the dew-point caution."""

    relative: float  # 0..1
    air: float  # K
    loc: Loc


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
class Spread:
    """`let NAME = VALUE spread normal|uniform SHARE`: how a tolerance study draws the value, as a
    share of the nominal value (σ for normal, the half-width for uniform)."""

    law: str
    share: float
    loc: Loc


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
    humidity: Humidity | None = None
    spreads: dict[str, Spread] = field(default_factory=dict)  # by parameter name, for tolerance studies

    def __repr__(self) -> str:
        n, e = len(self.nodes), len(self.elements)
        analyses = "+".join(type(a).__name__.lower() for a in self.analyses) or "no analysis"
        title = f" {self.title!r}" if self.title else ""
        return f"<Design {self.file}{title}: {n} node{'s' * (n != 1)}, {e} element{'s' * (e != 1)}, {analyses}>"

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

    # Set by `netgen/__init__.py` to `netgen.run`: the model itself knows no solver.
    runner: ClassVar[Callable | None] = None

    def run(self, keep_all: bool = False):
        """Solve this design's analyses and return its Results: the same as `netgen.run(design)`."""
        if Design.runner is None:
            raise RuntimeError("use netgen.run(design), or import netgen.analyses, which hands the model its runner")
        return Design.runner(self, keep_all=keep_all)
