"""Results and designs as readable text: the printed tables, check lines and the progress line. Units only here."""
from __future__ import annotations

import math
import re
import sys
import time
from pathlib import Path

import numpy as np

from netgen.checks.dewpoint import dew_point
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
        k = re.sub(r"(?<=[a-z])(?=[A-Z])", " ", type(e).__name__).lower()  # CurrentSource: current source
        kinds[k] = kinds.get(k, 0) + 1
    lines = [f"{d.file}: ok" + (f" — {d.title}" if d.title else "")]
    # A segmented leg's joints are nodes of the network, but not ones the user wrote.
    joints = sum(e.segments - 1 for e in d.of_kind(Thermoelectric))
    inside = f", {joints} of them joints inside segmented legs" if joints else ""
    lines.append(f"  nodes: {len(d.nodes)} ({thermal} thermal{inside}, {masses} with heat capacity; "
                 f"{electrical} electrical)")
    lines.append(f"  elements: {len(d.elements)}" + (" (" + ", ".join(f"{v} {k}" for k, v in sorted(kinds.items())) + ")" if kinds else ""))
    an = [type(a).__name__.lower() for a in d.analyses] or ["none (run solves the steady state)"]
    lines.append(f"  analyses: {', '.join(an)}")
    if d.expectations:
        lines.append(f"  expectations: {len(d.expectations)}")
    if d.humidity is not None:
        lines.append(f"  humidity: {humidity_line(d)}")
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


def unit_in(d, signal: str) -> str:
    """A signal's unit in design `d`: a controller's `U(...)` takes its driven source's."""
    unit = _unit(signal)
    if unit or kind_of(signal) != "U":
        return unit
    name = signal[signal.index("(") + 1: -1].strip()
    units = {e.name: getattr(e, "unit", "") for e in d.elements}
    return units.get(name) or units.get(name.rsplit(".", 1)[0], "")


ROUND_OFF = 1e-9  # a value this small beside the largest of its unit is round-off around zero


def scales(values: dict[str, float]) -> dict[str, float]:
    """The largest size of each unit's values (signal name -> value): what round-off is measured against."""
    out: dict[str, float] = {}
    for s, v in values.items():
        if math.isfinite(v):
            u = _unit(s)
            out[u] = max(out.get(u, 0.0), abs(v))
    return out


def fmt(signal: str, v: float, celsius: bool, scale: float = 0.0, unit: str | None = None) -> str:
    """A value with its unit; one below ROUND_OFF of `scale` (the largest value of its unit in
    the same table) prints as 0: `-1.1e-14 V` beside 5 V is round-off, not a voltage."""
    if not math.isfinite(v):
        return str(v)
    if abs(v) < 1e-20 or (kind_of(signal) != "T" and abs(v) <= ROUND_OFF * scale):
        v = 0.0  # round-off around zero (an open circuit's current) reads as zero
    if celsius and kind_of(signal) == "T":
        return f"{v:.4f} K ({v - ZERO_C:.3f} °C)"
    return f"{v:.6g} {_unit(signal) if unit is None else unit}".rstrip()


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
        big = scales(res.steady)
        for s, v in res.steady.items():
            print(f"  {s:<{width}}  {fmt(s, v, d.celsius, big.get(_unit(s), 0.0), unit_in(d, s))}", file=out)
    if res.time is not None:
        st = res.stats
        print(f"\ntransient to {res.time[-1]:g} s ({st.get('steps', 0)} steps, {st.get('rejected', 0)} rejected)", file=out)
        names = [s for s in res.signals if s in res.waveforms]
        width = max([len(s) for s in names] + [6])
        print(f"  {'signal':<{width}}  {'min':>24}  {'max':>24}  {'final':>24}", file=out)
        big = scales({s: float(np.max(np.abs(res.waveforms[s]))) for s in names})
        for s in names:
            w = res.waveforms[s]
            cells = [fmt(s, float(f(w)), d.celsius, big.get(_unit(s), 0.0), unit_in(d, s))
                     for f in (np.min, np.max, lambda a: a[-1])]
            print(f"  {s:<{width}}  {cells[0]:>24}  {cells[1]:>24}  {cells[2]:>24}", file=out)
        for ev in res.events:
            print(f"  event: switch `{ev['element']}` {ev['what']} at t = {ev['time']:.9g} s", file=out)
    if res.figures:
        print_figures(res, out)
    if res.design.humidity is not None:
        print(f"{'' if res.figures else chr(10)}  {humidity_line(res.design)}", file=out)
    print_cautions(res, out)
    if res.modes is not None:
        print_modes(res, out)
    for resp in res.responses:
        print_response(resp, out)
    if res.checks:
        print("\nexpectations", file=out)
        for c in res.checks:
            print(f"  {check_text(c)}", file=out)
        failed = sum(not c.passed for c in res.checks)
        print(f"  {len(res.checks) - failed} passed, {failed} failed", file=out)
    if res.windows:
        print_windows(res, out)


def print_windows(res: Results, out) -> None:
    """Each window of each `expect window`: its start, end and duration."""
    print("\nwindows", file=out)
    for w in res.windows:
        print(f"  line {w['line']}: from {w['start']:.6g} s to {w['end']:.6g} s, lasting {w['duration']:.6g} s",
              file=out)


def check_text(c) -> str:
    """One expectation or audit as printed: mark, line, text, measured value, limit, detail."""
    mark = "pass" if c.passed else "FAIL"
    where = f"{c.loc.line}: " if c.loc is not None else ""
    detail = f" ({c.detail})" if c.detail else ""
    return (f"{mark}  {where}{c.text}   measured {_value(c.measured, c.unit, c.celsius)}, "
            f"limit {c.compare + ' ' if c.compare else ''}{_value(c.limit, c.unit, c.celsius)}{detail}")


def print_figures(res: Results, out) -> None:
    print(f"\nmodules at the {res.figures_at}", file=out)
    for f in res.figures:
        head = f"  {f['module']}: {f['mode']}, I = {f['current']:.4g} A, Z·T = {f['ZT']:.3f}"
        if f["mode"] == "cooling":
            best = f" (ideal best {f['cop_max']:.3f} at {f['current_best_cop']:.3g} A)" if "cop_max" in f else ""
            rated = (f", {f['dt_max_rated']:.3g} K from a {f['rated_hot'] - ZERO_C:.4g} °C hot side"
                     if "dt_max_rated" in f else "")
            print(f"{head}, cooling {f['cooling_power']:.4g} W, COP {f['cop']:.3f}{best}; "
                  f"ideal limits I_max {f['current_max']:.3g} A, ΔT_max {f['dt_max']:.3g} K at this cold side"
                  f"{rated}", file=out)
        elif f["mode"] == "generating":
            print(f"{head}, delivers {f['electrical_power']:.4g} W at efficiency {100 * f['efficiency']:.2f} % "
                  f"(ideal best {100 * f['efficiency_max']:.2f} %; matched load would give "
                  f"{f['power_matched']:.4g} W)", file=out)
        else:
            print(f"{head}, electrical power {f['power']:.4g} W", file=out)


def print_cautions(res: Results, out) -> None:
    for c in res.cautions:
        print(f"  caution: {c}", file=out)


ROWS = 9  # printed rows of a response at most; the CSV has every point


def print_response(resp, out) -> None:
    """A response as a short table: about one row per decade, the ends always."""
    f = resp.frequency
    k = len(f)
    pick = sorted(set(np.linspace(0, k - 1, min(k, ROWS)).round().astype(int).tolist()))
    unit = resp.unit
    print(f"\nresponse of {resp.signal} to {resp.input} ({k} points, {f[0]:.4g} Hz to {f[-1]:.4g} Hz)", file=out)
    print(f"  {'frequency':>12}  {'|' + resp.label + '|':>28}  {'phase':>10}", file=out)
    mag, ph = resp.magnitude, resp.phase
    for i in pick:
        print(f"  {f[i]:>9.4g} Hz  {f'{mag[i]:.5g} {unit}':>28}  {ph[i]:>8.2f} °", file=out)


def humidity_line(d: Design) -> str:
    """`humidity ...` with the dew point it gives, or ""."""
    if d.humidity is None:
        return ""
    dew = dew_point(d.humidity.relative, d.humidity.air)
    return (f"air at {d.humidity.air - ZERO_C:.1f} °C and {100 * d.humidity.relative:g} % humidity: "
            f"dew point {dew - ZERO_C:.1f} °C")


def print_modes(res: Results, out) -> None:
    pairs = sum(m.oscillatory for m in res.modes)
    count = len(res.modes) + pairs
    shown = (f"{count} eigenvalue{'s' if count != 1 else ''}"
             + (f" on {len(res.modes)} line{'s' if len(res.modes) != 1 else ''}: a ringing pair shares one"
                if pairs else ""))
    print(f"\nmodes of the linearised system: {shown}", file=out)
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


class StatusLine:
    """One line on standard error, rewritten in place at most every 0.2 s, ended by `done()`."""

    def __init__(self, stream=None):
        self.stream = stream or sys.stderr
        self.start = time.monotonic()
        self.last = 0.0
        self.shown = False

    def due(self, settle: float = 0.0, force: bool = False) -> float | None:
        """The seconds elapsed when the line should be rewritten now, else None: not within
        `settle` seconds of the start, nor within 0.2 s of the last time unless `force`."""
        now = time.monotonic()
        elapsed = now - self.start
        if elapsed < settle or (now - self.last < 0.2 and not force):
            return None
        self.last = now
        return elapsed

    def show(self, text: str) -> None:
        self.stream.write(f"\r  {text}   ")
        self.stream.flush()
        self.shown = True

    def done(self) -> None:
        if self.shown:
            self.stream.write("\n")
            self.stream.flush()
            self.shown = False


class Progress(StatusLine):
    """A one-line progress report on a terminal for transients longer than about a second."""

    def __init__(self, until: float, stream=None):
        super().__init__(stream)
        self.until = until

    def __call__(self, t: float, steps: int) -> None:
        elapsed = self.due(settle=1.0)
        if elapsed is None:
            return
        frac = min(1.0, t / self.until) if self.until > 0 else 1.0
        eta = elapsed * (1 - frac) / frac if frac > 0 else float("nan")
        self.show(f"t = {t:.4g} s of {self.until:g} s ({100 * frac:.0f} %), {steps} steps, "
                  f"{elapsed:.1f} s elapsed, about {eta:.0f} s left")
