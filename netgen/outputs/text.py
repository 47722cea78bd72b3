"""Results and designs as readable text: the printed tables, check lines and the progress line. Units only here."""
from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np

from netgen.checks.results import Results
from netgen.elements import Thermoelectric
from netgen.model.design import ELECTRICAL, THERMAL, Design
from netgen.model.signals import kind_of, signal_unit
from netgen.model.errors import NetgenError

ZERO_C = 273.15


def describe(d: Design) -> str:
    """What `netgen check` prints: counts of nodes and elements by kind."""
    thermal = sum(1 for n in d.nodes.values() if n.domain == THERMAL)
    electrical = sum(1 for n in d.nodes.values() if n.domain == ELECTRICAL)
    masses = sum(1 for n in d.nodes.values() if n.capacity is not None)
    kinds: dict[str, int] = {}
    for e in d.elements:
        k = type(e).__name__.lower()
        kinds[k] = kinds.get(k, 0) + 1
    lines = [f"{d.file}: ok" + (f" — {d.title}" if d.title else "")]
    lines.append(f"  nodes: {len(d.nodes)} ({thermal} thermal, {masses} with heat capacity; {electrical} electrical)")
    lines.append(f"  elements: {len(d.elements)}" + (" (" + ", ".join(f"{v} {k}" for k, v in sorted(kinds.items())) + ")" if kinds else ""))
    an = [type(a).__name__.lower() for a in d.analyses] or ["none (run solves the steady state)"]
    lines.append(f"  analyses: {', '.join(an)}")
    if d.expectations:
        lines.append(f"  expectations: {len(d.expectations)}")
    modules = d.of_kind(Thermoelectric)
    if modules:
        temps = _start_temperatures(d)
        lines.append("  thermoelectric modules (at the mean side temperature of the start state):")
        for m in modules:
            Tm = 0.5 * (temps.get(m.a, 300.0) + temps.get(m.b, 300.0))
            S, R, K = (float(v) for v in m.values_at(Tm))
            Z = S * S / (R * K)
            lines.append(f"    {m.name} ({m.form}): S = {S:.5g} V/K, R = {R:.5g} ohm, K = {K:.5g} W/K, "
                         f"Z = {Z:.4g} 1/K, Z·T = {Z * Tm:.3f} at {Tm:.2f} K")
    return "\n".join(lines)


def _start_temperatures(d: Design) -> dict[str, float]:
    """Temperatures of the transient's start (or the steady state); {} when that cannot be solved."""
    # The solvers (and scipy with them) only for designs with modules: `netgen check` of any
    # other design starts without them.
    from netgen.solve.assembly import assemble
    from netgen.solve.steady import solve_dc

    try:
        sys_ = assemble(d)
        x = solve_dc(sys_, 0.0, impose=d.transient is not None)
    except (NetgenError, ValueError, ArithmeticError):
        return {}
    return {n.name: float(x[sys_.node_index[n.name]]) for n in d.nodes.values() if n.domain == THERMAL}


_unit = signal_unit


def fmt(signal: str, v: float, celsius: bool) -> str:
    if not math.isfinite(v):
        return str(v)
    if abs(v) < 1e-20:
        v = 0.0  # round-off around zero (an open circuit's current) reads as zero
    if celsius and kind_of(signal) == "T":
        return f"{v:.4f} K ({v - ZERO_C:.3f} °C)"
    return f"{v:.6g} {_unit(signal)}"


def _value(v: float, unit: str, celsius: bool) -> str:
    if celsius and unit == "K" and math.isfinite(v):
        return f"{v - ZERO_C:.4g} °C"
    return f"{v:.6g}" + (f" {unit}" if unit != "1" else "")


def print_results(res: Results, out=None) -> None:
    out = out or sys.stdout
    d = res.design
    title = d.title or Path(d.file).name
    print(f"{title}", file=out)
    if res.steady is not None:
        print("\nsteady state", file=out)
        width = max(len(s) for s in res.steady) if res.steady else 6
        for s, v in res.steady.items():
            print(f"  {s:<{width}}  {fmt(s, v, d.celsius)}", file=out)
    if res.time is not None:
        st = res.stats
        print(f"\ntransient to {res.time[-1]:g} s ({st.get('steps', 0)} steps, {st.get('rejected', 0)} rejected)", file=out)
        names = [s for s in res.signals if s in res.waveforms]
        width = max([len(s) for s in names] + [6])
        print(f"  {'signal':<{width}}  {'min':>24}  {'max':>24}  {'final':>24}", file=out)
        for s in names:
            w = res.waveforms[s]
            cells = [fmt(s, float(f(w)), d.celsius) for f in (np.min, np.max, lambda a: a[-1])]
            print(f"  {s:<{width}}  {cells[0]:>24}  {cells[1]:>24}  {cells[2]:>24}", file=out)
    if res.figures:
        print_figures(res, out)
    if res.modes is not None:
        print_modes(res, out)
    if res.checks:
        print("\nexpectations", file=out)
        for c in res.checks:
            print(f"  {check_text(c)}", file=out)
        failed = sum(not c.passed for c in res.checks)
        print(f"  {len(res.checks) - failed} passed, {failed} failed", file=out)


def check_text(c) -> str:
    """One expectation or audit as printed: mark, line, text, measured value, limit, detail."""
    mark = "pass" if c.passed else "FAIL"
    where = f"{c.loc.line}: " if c.loc is not None else ""
    detail = f" ({c.detail})" if c.detail else ""
    return (f"{mark}  {where}{c.text}   measured {_value(c.measured, c.unit, c.celsius)}, "
            f"limit {_value(c.limit, c.unit, c.celsius)}{detail}")


def print_figures(res: Results, out) -> None:
    print(f"\nmodules at the {res.figures_at}", file=out)
    for f in res.figures:
        head = f"  {f['module']}: {f['mode']}, I = {f['current']:.4g} A, Z·T = {f['ZT']:.3f}"
        if f["mode"] == "cooling":
            best = f" (ideal best {f['cop_max']:.3f} at {f['current_best_cop']:.3g} A)" if "cop_max" in f else ""
            print(f"{head}, cooling {f['cooling_power']:.4g} W, COP {f['cop']:.3f}{best}; "
                  f"ideal limits I_max {f['current_max']:.3g} A, ΔT_max {f['dt_max']:.3g} K", file=out)
        elif f["mode"] == "generating":
            print(f"{head}, delivers {f['electrical_power']:.4g} W at efficiency {100 * f['efficiency']:.2f} % "
                  f"(ideal best {100 * f['efficiency_max']:.2f} %; matched load would give "
                  f"{f['power_matched']:.4g} W)", file=out)
        else:
            print(f"{head}, electrical power {f['power']:.4g} W", file=out)
    for c in res.cautions:
        print(f"  caution: {c}", file=out)


def print_modes(res: Results, out) -> None:
    print(f"\nmodes of the linearised system ({len(res.modes)})", file=out)
    print(f"  {'eigenvalue (1/s)':>28}  {'decay time':>12}  {'frequency':>12}  {'damping':>8}  takes part most", file=out)
    # An eigenvalue this small against the fastest is round-off around zero: a conserved mode.
    tiny = 1e-9 * max((abs(complex(m.real, m.imag)) for m in res.modes), default=0.0)
    for m in res.modes:
        conserved = abs(m.real) <= tiny
        real = 0.0 if conserved else m.real
        lam = f"{real:.5g}" + (f" ± {m.imag:.5g}j" if m.oscillatory else "")
        decay = ("conserved" if conserved else f"{m.decay_time:.4g} s" if math.isfinite(m.decay_time)
                 else "grows" if m.real > 0 else "none")
        freq = f"{m.frequency:.4g} Hz" if m.oscillatory else "-"
        who = ", ".join(f"{n} {100 * s:.0f} %" for n, s in m.nodes)
        print(f"  {lam:>28}  {decay:>12}  {freq:>12}  {m.damping:>8.3f}  {who}", file=out)
    osc = [m for m in res.modes if m.oscillatory]
    if osc:
        m = min(osc, key=lambda m: m.damping)
        print(f"  oscillatory: the least damped pair rings at {m.frequency:.4g} Hz with damping ratio "
              f"{m.damping:.3f}; temperatures in it can overshoot their final values", file=out)
    celsius = res.design.celsius
    for f in res.forecast:
        final = f"{f.final - ZERO_C:.2f} °C" if celsius else f"{f.final:.4g} K"
        print(f"  linear estimate: {f.unknown} passes its final value ({final}) at {f.crossing_time:.3g} s "
              f"and overshoots it by {f.overshoot:.3g} K at {f.overshoot_time:.3g} s before settling", file=out)


class Progress:
    """A one-line progress report on a terminal for transients longer than about a second."""

    def __init__(self, until: float, stream=None):
        self.until, self.stream = until, stream or sys.stderr
        self.start = time.monotonic()
        self.last = 0.0
        self.shown = False

    def __call__(self, t: float, steps: int) -> None:
        now = time.monotonic()
        elapsed = now - self.start
        if elapsed < 1.0 or now - self.last < 0.2:
            return
        self.last = now
        frac = min(1.0, t / self.until) if self.until > 0 else 1.0
        eta = elapsed * (1 - frac) / frac if frac > 0 else float("nan")
        self.stream.write(f"\r  t = {t:.4g} s of {self.until:g} s ({100 * frac:.0f} %), {steps} steps, "
                          f"{elapsed:.1f} s elapsed, about {eta:.0f} s left   ")
        self.stream.flush()
        self.shown = True

    def done(self) -> None:
        if self.shown:
            self.stream.write("\n")
            self.stream.flush()
