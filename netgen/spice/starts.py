"""The states a netlist carries, solved by us: the steady state as the simulator's first guess,
the transient's start as its initial conditions."""
from __future__ import annotations

from dataclasses import dataclass

from netgen.model.design import Design
from netgen.model.errors import NetgenError
from netgen.solve.assembly import assemble
from netgen.solve.steady import solve_dc


@dataclass
class Starts:
    """Our unknowns by name (`T(x)`, `V(x)`, `I(e)`, `Q(f)`) in the states a netlist needs."""

    want_op: bool  # the netlist asks for an operating point (`.op`)
    guess: dict[str, float] | None = None  # the steady state, when it could be solved
    initial: dict[str, float] | None = None  # the transient's start, when there is a transient
    events: list | None = None  # our run's switch events, when it was run (a switch acting on a condition)


def starts_of(design: Design) -> Starts:
    """Solve what the netlist of `design` carries. A steady state that does not solve only
    leaves the simulator without a first guess; a transient start that does not solve raises."""
    sys = assemble(design)
    tr = design.transient
    out = Starts(want_op=design.steady is not None or tr is None)  # with no analysis we solve the steady state
    if out.want_op:
        try:
            out.guess = dict(zip(sys.names, solve_dc(sys, 0.0).tolist()))
        except NetgenError:
            pass
    if tr:
        out.initial = dict(zip(sys.names, solve_dc(sys, 0.0, impose=True).tolist()))  # as our transient starts
    return out
