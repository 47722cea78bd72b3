"""The printed cross-check table: one row per signal, deviations with their units."""
from __future__ import annotations

import math
import textwrap

from netgen.spice.crosscheck import Report, Row
from netgen.model.design import signal_unit

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


def render(rep: Report) -> str:
    """The whole report as text: steady rows, transient rows, notes, and the verdict."""
    out = [f"crosscheck {rep.file}: netgen against {' '.join(rep.command)}"]
    if rep.steady:
        out += ["", "steady state (.op)"]
        body = []
        for r in rep.steady:
            u = _unit(r.signal)
            body.append([r.signal, r.source, f"{r.ours:.9g} {u}" if not r.missing else "-",
                         f"{r.theirs:.9g} {u}" if not r.missing else "-",
                         quantity(r.dev, u) if not r.missing else "-", _rel(r),
                         quantity(r.tol, u) if not r.missing else "-", r.status])
        out += _grid(["signal", "simulator", "netgen", "simulator value", "|dev|", "rel", "tolerance", "result"], body)
    if rep.transient:
        a, b = rep.span or (math.nan, math.nan)
        out += ["", f"transient: {rep.points[0]} of our points in {a:.6g} .. {b:.6g} s, "
                    f"{rep.points[1]} simulator points interpolated onto them"]
        body = []
        for r in rep.transient:
            u = _unit(r.signal)
            if r.missing:
                body.append([r.signal, r.source, "-", "-", "-", "-", "-", r.status])
                continue
            body.append([r.signal, r.source, quantity(r.dev, u), _rel(r),
                         "-" if r.at is None else f"{r.at:.6g} s", quantity(r.tol, u),
                         "-" if r.near is None else quantity(r.near, u), r.status])
        out += _grid(["signal", "simulator", "worst |dev|", "rel", "at", "tolerance", "excused", "result"], body)
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
