"""The cross-check's report: its tolerances, one row per signal, the jumps, and the printed table."""
from __future__ import annotations

import dataclasses
import math
import textwrap
from dataclasses import dataclass, field

from netgen.model.signals import signal_unit

DEFAULT_RTOL = 1e-3


@dataclass
class Jump:
    """An instant where a value jumps; the netlist writes an edge of finite width there."""

    time: float
    what: str  # e.g. "source drive", "switch key closes"


@dataclass(frozen=True)
class Tolerances:
    """How far the two results may differ. Transient temperatures: `kelvin` plus rtol times the
    temperature's swing (they sit near 300 K, so a part relative to their value would be far
    too loose). Voltages, currents, heat flows: |Δ| ≤ floor·(largest |value| of that kind) +
    rtol·|y(t)| + `absolute`, and heat flows also `flow_kelvin` times the largest conductance
    at a node. Steady: both solve the same equations to convergence, so the same form with the
    much smaller `steady_*` values. `scaled(f)` scales them all."""

    rtol: float = DEFAULT_RTOL  # our solver's default local tolerance is 1e-4; errors accumulate
    kelvin: float = 5e-3  # a few mK: both solvers keep temperatures to about a millikelvin
    # A heat flow through links inherits the temperatures' errors: the simulator's are up to
    # about 0.1-1 mK (its step control is relative to ~300 V), times the conductances there.
    flow_kelvin: float = 1e-3
    floor: float = 1e-3  # of the largest |value| of the signal's kind over the run
    absolute: float = 1e-6  # V, A, W: netgen's own error floors at its default tolerance
    steady_rtol: float = 1e-6
    steady_kelvin: float = 1e-6
    steady_floor: float = 1e-6  # of the largest |value| of the signal's kind in the steady state
    tiny: float = 1e-9  # SI units: the simulator puts gmin (1e-12 S) across nodes at ~300 V, 0.3 nA

    def scaled(self, f: float) -> "Tolerances":
        return Tolerances(*(getattr(self, k.name) * f for k in dataclasses.fields(self)))

    @classmethod
    def from_rtol(cls, rtol: float | None) -> "Tolerances":
        """`--rtol R` scales every tolerance by R / 1e-3, the default relative part."""
        return cls() if rtol is None else cls().scaled(rtol / DEFAULT_RTOL)


@dataclass
class Row:
    """One signal's comparison. `dev`, `rel`, `at`, `tol` describe the worst point (largest
    |Δ|/tolerance) away from the excused instants (jumps, corners the simulator stepped over);
    `near` is the largest |Δ| at those."""

    signal: str
    source: str  # how the simulator's value was obtained
    dev: float = 0.0
    rel: float = 0.0
    at: float | None = None
    tol: float = 0.0
    ours: float = math.nan
    theirs: float = math.nan
    near: float | None = None
    passed: bool = True
    missing: str = ""  # why it could not be compared

    @property
    def status(self) -> str:
        return "n/a" if self.missing else ("pass" if self.passed else "FAIL")


@dataclass
class Report:
    """The comparison of one design: steady rows, transient rows, the jumps, and notes."""

    file: str
    command: list[str]
    steady: list[Row] = field(default_factory=list)
    transient: list[Row] = field(default_factory=list)
    response: list[Row] = field(default_factory=list)  # one per response, over the .ac sweep
    jumps: list[Jump] = field(default_factory=list)
    window: float = 0.0  # half-width of the window around each jump, s
    notes: list[str] = field(default_factory=list)
    span: tuple[float, float] | None = None
    missed: list[float] = field(default_factory=list)  # source corners the simulator stepped over
    points: tuple[int, int] = (0, 0)  # ours, the simulator's

    @property
    def rows(self) -> list[Row]:
        return self.steady + self.transient + self.response

    @property
    def passed(self) -> bool:
        return all(r.passed for r in self.rows)

    @property
    def failed(self) -> list[str]:
        return list(dict.fromkeys(r.signal for r in self.rows if not r.passed))

    def table(self, everything: bool = False) -> str:
        return render(self, everything)


# ---- the printed table ---------------------------------------------------------------------
PREFIXES = [(1e9, "G"), (1e6, "M"), (1e3, "k"), (1.0, ""), (1e-3, "m"), (1e-6, "u"), (1e-9, "n"),
            (1e-12, "p"), (1e-15, "f")]


def quantity(v: float, unit: str, digits: int = 3) -> str:
    """A value with an SI prefix, e.g. 0.00123 K → `1.23 mK`."""
    if v is None or not math.isfinite(v):
        return "-" if v is None else str(v)
    if v == 0:
        return f"0 {unit}"
    for scale, p in PREFIXES:
        if abs(v) >= scale:
            return f"{v / scale:.{digits}g} {p}{unit}"
    return f"{v:.{digits}g} {unit}"


_unit = signal_unit


def _rel(r: Row) -> str:
    return "-" if r.missing or math.isnan(r.rel) else f"{r.rel:.2g}"


def _grid(head: list[str], body: list[list[str]]) -> list[str]:
    widths = [max(len(x) for x in col) for col in zip(head, *body)]
    line = lambda cells: "  " + "  ".join(c.ljust(w) for c, w in zip(cells, widths)).rstrip()
    return [line(head)] + [line(b) for b in body]


SHOWN = 20  # rows of a table printed unless every row is asked for (`--all`)


def _worst(rows: list[Row], everything: bool) -> tuple[list[Row], str | None]:
    """All rows in their order when few or when asked; else the SHOWN worst (by |dev| over its
    tolerance, failures and missing values first) and a line that counts the rest."""
    if everything or len(rows) <= SHOWN:
        return rows, None
    score = lambda r: (bool(r.missing) or not r.passed, r.dev / r.tol if r.tol > 0 else math.inf)
    shown = sorted(rows, key=score, reverse=True)[:SHOWN]
    rest = len(rows) - SHOWN
    bad = sum(1 for r in rows if r not in shown and (r.missing or not r.passed))
    what = f"{bad} of them failed" if bad else "all within tolerance"
    return shown, f"  ... the {SHOWN} worst of {len(rows)} rows shown; {rest} more, {what} (--all prints every row)"


def render(rep: Report, everything: bool = False) -> str:
    """The whole report as text: steady rows, transient rows, notes, and the verdict. With
    many signals, the worst rows of each table and a count of the rest (`everything`: all)."""
    out = [f"crosscheck {rep.file}: netgen against {' '.join(rep.command)}"]
    if rep.steady:
        out += ["", "steady state (.op)"]
        body = []
        steady, more_steady = _worst(rep.steady, everything)
        for r in steady:
            u = _unit(r.signal)
            body.append([r.signal, r.source, f"{r.ours:.9g} {u}" if not r.missing else "-",
                         f"{r.theirs:.9g} {u}" if not r.missing else "-",
                         quantity(r.dev, u) if not r.missing else "-", _rel(r),
                         quantity(r.tol, u) if not r.missing else "-", r.status])
        out += _grid(["signal", "simulator", "netgen", "simulator value", "|dev|", "rel", "tolerance", "result"], body)
        out += [more_steady] if more_steady else []
    if rep.transient:
        a, b = rep.span or (math.nan, math.nan)
        out += ["", f"transient: {rep.points[0]} of our points in {a:.6g} .. {b:.6g} s, "
                    f"{rep.points[1]} simulator points interpolated onto them"]
        body = []
        transient, more = _worst(rep.transient, everything)
        for r in transient:
            u = _unit(r.signal)
            if r.missing:
                body.append([r.signal, r.source, "-", "-", "-", "-", "-", r.status])
                continue
            body.append([r.signal, r.source, quantity(r.dev, u), _rel(r),
                         "-" if r.at is None else f"{r.at:.6g} s", quantity(r.tol, u),
                         "-" if r.near is None else quantity(r.near, u), r.status])
        out += _grid(["signal", "simulator", "worst |dev|", "rel", "at", "tolerance", "excused", "result"], body)
        out += [more] if more else []
    if rep.response:
        out += ["", "frequency response (.ac): the worst |difference| of the complex ratio over the sweep"]
        body = [[r.signal, r.source, "-" if r.missing else f"{r.dev:.3g}", _rel(r),
                 "-" if r.at is None else f"{r.at:.6g} Hz", "-" if r.missing else f"{r.tol:.3g}", r.status]
                for r in rep.response]
        out += _grid(["response", "simulator", "worst |dev|", "rel", "at", "tolerance", "result"], body)
    if rep.notes:
        out += ["", "notes:"]
        for n in rep.notes:
            out += textwrap.wrap(n, 96, initial_indent="  - ", subsequent_indent="    ")
    compared = [r for r in rep.rows if not r.missing]
    out.append("")
    if rep.passed:
        out.append(f"agree: {len(compared)} comparisons within tolerance")
    else:
        out.append(f"MISMATCH in {', '.join(rep.failed)}")
    return "\n".join(out)
