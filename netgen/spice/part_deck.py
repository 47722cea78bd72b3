"""A part in a deck of its own: the design's part `.include`d by a small deck that only places it
and runs the transient, compared with our solution through the cross-check's comparison.

This is how the part is measured (`benchmarks/part_accuracy.py`) and tested: each thermal node
that is not a reservoir is a pin (so every temperature is read at the deck's level), the drive
stays inside, and the deck sets only the options given."""
from __future__ import annotations

import dataclasses
import tempfile
from pathlib import Path

import numpy as np

from netgen.analyses import run
from netgen.elements.fixed import Fixed
from netgen.model.design import THERMAL, Design
from netgen.model.signals import parse as parse_signal
from netgen.spice.crosscheck import COMPARE_TOLERANCE, compare
from netgen.spice.crosscheck_report import Report, Tolerances
from netgen.spice.netlist import Names, num
from netgen.spice.part import Part, part
from netgen.spice.raw import Plot
from netgen.spice.simulator import DEFAULT_SIMULATOR, TIMEOUT, simulate

LIBRARY = "part.lib"


def thermal_pins(design: Design) -> list[str]:
    """Every thermal node that no reservoir holds."""
    fixed = {e.node for e in design.elements if isinstance(e, Fixed)}
    return [n.name for n in design.nodes.values() if n.domain == THERMAL and n.name not in fixed]


def deck(design: Design, p: Part, options: str = "", subckt: str = "dut") -> str:
    """A deck that includes `part.lib`, places the part with pin i on node `n{i}`, sets
    `options` (e.g. `.options reltol=1e-5`, or nothing for the simulator's defaults) and runs
    the design's transient from the part's IC= values."""
    tr = design.transient
    step = tr.step if tr.step else tr.until / 500
    return "\n".join(["* a deck that only places the part", f".include {LIBRARY}",
                      "x1 " + " ".join(f"n{i}" for i in range(len(p.pins))) + f" {subckt}",
                      *([options] if options else []), f".tran {num(step)} {num(tr.until)} uic", ".end"]) + "\n"


def crosscheck_part(design: Design, options: str = "", tol: Tolerances | None = None, kelvin: bool = False,
                    simulator: str = DEFAULT_SIMULATOR, timeout: float = TIMEOUT) -> Report:
    """The design as a part in a deck of its own, run by the simulator and compared with our
    solution over the transient, temperature by temperature."""
    pins = thermal_pins(design)
    p = part(design, "dut", pins, kelvin=kelvin)
    with tempfile.TemporaryDirectory(prefix="netgen-part-") as tmp:
        (Path(tmp) / LIBRARY).write_text(p.text, encoding="utf-8")
        theirs = simulate(deck(design, p, options), simulator, Path(tmp), timeout=timeout)
    plots = [_absolute(plot, len(pins), p.offset) for plot in theirs.plots]
    nm = Names(p.names.nodes, p.names.stems, {f"T({n})": f"V(n{i})" for i, n in enumerate(pins)})
    tr = design.transient
    tr = dataclasses.replace(tr, tolerance=min(tr.tolerance or COMPARE_TOLERANCE, COMPARE_TOLERANCE))
    ours = run(dataclasses.replace(design, records=[parse_signal(f"T({n})") for n in pins], expectations=[],
                                   audits=[], analyses=[tr]))
    return compare(ours, nm, plots, tol or Tolerances(), theirs.command)


def _absolute(plot: Plot, pins: int, offset: float) -> Plot:
    """The deck's pin voltages as kelvin (the part's thermal pins are temperature − offset)."""
    data = np.array(plot.data, dtype=plot.data.dtype)
    for i in range(pins):
        name = f"v(n{i})"
        if name in plot:
            data[:, plot.names.index(name)] += offset
    return dataclasses.replace(plot, data=data)
