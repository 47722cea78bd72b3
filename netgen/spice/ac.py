"""The frequency response in the netlist and back: an AC excitation of 1 on the first
`response`'s input, the `.ac` sweep over the same band, and the comparison of the simulator's
complex results with ours at the simulator's own frequencies."""
from __future__ import annotations

import math
import re

import numpy as np

from netgen.model.design import Response
from netgen.model.errors import NetgenError
from netgen.solve.assembly import assemble
from netgen.solve.response import default_band, input_vector, signal_response, states
from netgen.solve.signals import SignalEval
from netgen.solve.steady import solve_dc
from netgen.spice.crosscheck_report import Row

PER_DECADE = 20  # at least, in the sweep
RTOL = 1e-4  # of the largest magnitude over the band (both solve the same linear equations)


def asked(d) -> list[Response]:
    return [a for a in d.analyses if isinstance(a, Response)]


def excited(d) -> list[Response]:
    """The responses the netlist's one excitation serves: those to the first response's input."""
    rs = asked(d)
    return [a for a in rs if a.input == rs[0].input] if rs else []


def band(d, x0=None) -> tuple[float, float, int]:
    """(F1, F2, points) of the first response, its default band solved here when not given."""
    a = asked(d)[0]
    if a.f_from is not None:
        f1, f2 = a.f_from, a.f_to
    else:
        sys = assemble(d)
        f1, f2 = default_band(sys, solve_dc(sys, 0.0) if x0 is None else x0)
    return f1, f2, a.points or 0


def excite(d, w) -> list[str]:
    """Put `AC 1` on the first response's input (a parallel current source for a current or heat
    input, the value's own source line for a voltage), and return the `.ac` line."""
    rs = asked(d)
    if not rs:
        return []
    a = rs[0]
    e = w.elements[a.input]
    kind = type(e).__name__
    s = w.names.stems[e.name]
    if kind == "CurrentSource" and not e.controller:
        w.add(f"iac_{s}", w.node(e.b), w.node(e.a), "DC 0 AC 1")
        w.row(f"iac_{s}", f"response: the excitation of source {e.name}, A")
    elif kind == "Heat" and not e.controller:
        w.add(f"iac_{s}", "0", w.node(e.node), "DC 0 AC 1")
        w.row(f"iac_{s}", f"response: the excitation of heat input {e.name}, W")
    else:
        ctl = getattr(e, "controller", None)
        names = [f"vbias_{w.names.stems[ctl]}"] if ctl else [f"v_{s}", f"vfix_{s}"]
        hit = [i for i, line in enumerate(w.lines) if line.split(" ", 1)[0] in names]
        if not hit:
            raise NetgenError(f"the netlist cannot excite `{a.input}` for the response: its value varies in time "
                              "as an expression, written as a behavioural source", a.input_loc,
                              "give the input a constant value or a shape (step, ramp, pulse, sine, table)")
        w.lines[hit[0]] = re.sub(r"(DC \S+)", r"\1 AC 1", w.lines[hit[0]], count=1)  # DC value, AC, then its shape
    f1, f2, n = band(d)
    decades = math.log10(f2 / f1)
    k = max(PER_DECADE, math.ceil((n - 1) / decades)) if decades > 0 else PER_DECADE
    return [f".ac dec {k} {w.num(f1)} {w.num(f2)}"]


def compare(d, nm, plot, x0: np.ndarray) -> list[Row]:
    """One row per excited response: the worst |ΔH| over the simulator's frequencies, against
    RTOL of the largest |H| (ours linearised at our steady state x0)."""
    sys = assemble(d)
    sig = SignalEval(d, sys)
    f = np.real(plot["frequency"])
    omega = 2 * np.pi * f
    theirs_x = np.empty((len(f), sys.n), dtype=complex)
    for j, name in enumerate(sys.names):
        how = nm.signals.get(name, name)
        sign = -1.0 if how.startswith("-") else 1.0
        key = how.lstrip("-")
        theirs_x[:, j] = sign * plot[key] if key in plot else np.nan
    rows = []
    for a in excited(d):
        e = next(x for x in d.elements if x.name == a.input)
        text = a.signal.text
        ours = signal_response(sig, text, x0, states(sys, x0, input_vector(sys, e, d), omega), omega)
        row = Row(f"{text} / {a.input}", "derived" if text not in nm.signals else nm.signals[text].lower())
        if np.isnan(theirs_x).any():
            row.missing = "the simulator wrote no complex values for some unknowns"
            rows.append(row)
            continue
        theirs = signal_response(sig, text, x0, theirs_x, omega)
        dev = np.abs(ours - theirs)
        i = int(np.argmax(dev))
        row.tol = RTOL * float(np.max(np.abs(ours))) + 1e-300
        row.dev, row.at = float(dev[i]), float(f[i])
        row.ours, row.theirs = float(abs(ours[i])), float(abs(theirs[i]))
        row.rel = row.dev / abs(ours[i]) if abs(ours[i]) > 0 else math.nan
        row.passed = bool(np.all(dev <= row.tol))
        rows.append(row)
    return rows
