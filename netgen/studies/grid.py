"""The points of a sweep: `--vary NAME=FROM..TO[:COUNT]` read into axes, and their grid."""
from __future__ import annotations

import itertools
import re
from dataclasses import dataclass

import numpy as np

from netgen.model.errors import NetgenError

DEFAULT_COUNT = 11
MAX_POINTS = 100_000  # a grid larger than this is surely a typo in a COUNT
_VARY = re.compile(r"^\s*(?P<name>[A-Za-z_][A-Za-z0-9_]*)\s*=\s*(?P<low>.+?)\s*\.\.\s*(?P<high>.+?)\s*(?::\s*(?P<count>[^:]*))?$")
_HINT = "e.g. --vary I_drive=0.5A..3A:11 (FROM..TO, then :COUNT points, 11 if not given)"


@dataclass(frozen=True)
class Axis:
    """One varied parameter: `count` values from `low` to `high` in SI, log-spaced if `log`."""

    name: str
    low: float
    high: float
    count: int
    log: bool = False
    unit: str = ""

    def values(self) -> np.ndarray:
        if self.count == 1:
            return np.array([self.low])
        if self.log:
            return np.geomspace(self.low, self.high, self.count)
        return np.linspace(self.low, self.high, self.count)

    def describe(self) -> dict:
        return {"from": self.low, "to": self.high, "count": self.count, "log": self.log, "unit": self.unit,
                "values": [float(v) for v in self.values()]}


@dataclass(frozen=True)
class Vary:
    """`--vary` as written: the parameter, FROM and TO as text (read against the design later)."""

    spec: str
    name: str
    low: str
    high: str
    count: int


def read_vary(spec: str) -> Vary:
    """`NAME=FROM..TO[:COUNT]`, checked for its shape only (the values need the design)."""
    m = _VARY.match(spec)
    if not m:
        raise NetgenError(f"--vary {spec}: expected NAME=FROM..TO[:COUNT]", None, _HINT)
    count = DEFAULT_COUNT
    if m["count"] is not None:
        try:
            count = int(m["count"])
        except ValueError:
            raise NetgenError(f"--vary {spec}: the count `{m['count']}` is not a whole number", None, _HINT) from None
        if count < 1:
            raise NetgenError(f"--vary {spec}: the count must be at least 1, not {count}", None, _HINT)
    return Vary(spec, m["name"], m["low"], m["high"], count)


def axis(vary: Vary, low: float, high: float, log: bool, unit: str) -> Axis:
    """An axis from `vary` with FROM and TO read in SI; a log axis needs both of one sign, not 0."""
    if log and not (low * high > 0):
        raise NetgenError(f"--vary {vary.spec}: a log-spaced axis (--log {vary.name}) needs FROM and TO of one "
                          "sign and not zero", None, f"e.g. --vary {vary.name}=1{unit}..100{unit}")
    if vary.count > 1 and low == high:
        raise NetgenError(f"--vary {vary.spec}: FROM and TO are the same value", None, _HINT)
    return Axis(vary.name, low, high, vary.count, log, unit)


def points(axes: list[Axis]) -> list[dict[str, float]]:
    """Every combination of the axes' values, the last axis varying fastest."""
    total = int(np.prod([a.count for a in axes])) if axes else 0
    if total > MAX_POINTS:
        raise NetgenError(f"the grid has {total} points, more than the {MAX_POINTS} a sweep runs", None,
                          "use fewer points per --vary (the :COUNT after TO)")
    return [dict(zip([a.name for a in axes], (float(v) for v in combo)))
            for combo in itertools.product(*(a.values() for a in axes))]
