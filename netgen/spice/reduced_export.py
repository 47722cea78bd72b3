"""`netgen export --reduce N`: the netlist or part with the reduced network (reduce.py), its header
saying the reduction and the worst deviation found against the full model (a cross-check run)."""
from __future__ import annotations

from netgen.model.design import Design
from netgen.spice.crosscheck import crosscheck
from netgen.spice.netlist import netlist
from netgen.spice.part import check_names, part
from netgen.spice.reduce import OPTIONS, header_lines, insert_header, prepare
from netgen.spice.simulator import SimulatorError


def export_reduced(design: Design, n_states: int, subckt: str | None = None, pins=(), without=(),
                   kelvin: bool = False, simulator: str = "ngspice") -> str:
    """`netgen export --reduce N`: the flat netlist, or the part, with the reduced network, and in
    its header the reduction and the worst deviation found against the full model (the reduced
    flat netlist in the simulator against netgen's full solution of the design's transient)."""
    if subckt is not None:
        check_names(design, list(pins), list(without))
    reduced, r, starts = prepare(design, n_states, pins)
    if subckt is not None:
        text = part(reduced, subckt, list(pins), list(without), kelvin, starts).text
    else:
        text = netlist(reduced, starts, clock=False, options=OPTIONS)[0]
    if design.transient is None:
        found = "The design has no transient: the steady state is exact, and no deviation was measured."
    else:
        try:
            rep = crosscheck(design, simulator, reduce=n_states)
            temps = [row for row in rep.transient if row.signal.startswith("T(") and not row.missing]
            worst = max(temps, key=lambda row: row.dev)
            found = (f"Worst deviation found against the full model on the design's own transient (this "
                     f"reduced network, flat, in {simulator}, against netgen's full solution): "
                     f"{worst.dev * 1e3:.3g} mK in {worst.signal} at {worst.at:.4g} s.")
        except SimulatorError as e:
            found = f"The deviation against the full model was not measured: {e.message}."
    return insert_header(text, header_lines(r, found), after=1 if subckt is None else 1)
