"""Waveform plots (matplotlib, Agg): each recorded signal with its expectation limits and baseline."""
from __future__ import annotations

import io
import re
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from netgen.model.errors import NetgenError
from netgen.model.expr import SignalRef, evaluate
from netgen.outputs.text import ZERO_C
from netgen.outputs.files import write_atomic
from netgen.checks.results import Results, series
from netgen.model.signals import kind_of, signal_unit

CURVE = "#1f4e9c"  # this run
BASELINE = "#8c8c8c"  # the stored baseline, dashed
LIMITS = ("#c23b22", "#e08a00", "#7b3fa0", "#2a8c82", "#8a5a2b")  # expectation limits, in turn
_QUANTITY = {"T": "temperature", "V": "voltage", "I": "current", "Q": "heat flow", "P": "power"}
_BY_UNIT = {"K": "temperature difference", "V": "voltage", "A": "current", "W": "power", "1": "ratio"}
SIZE, DPI = (8.0, 3.4), 110


def require() -> None:
    """Fail with an input error (exit 2) naming the fix when matplotlib is not installed."""
    try:
        import matplotlib  # noqa: F401
        from matplotlib.backends.backend_agg import FigureCanvasAgg  # noqa: F401
    except ImportError:
        raise NetgenError("plots and reports need matplotlib, which is not installed", None,
                          'install the plot extra (from a checkout: python -m pip install -e ".[plot]"), '
                          "or python -m pip install matplotlib") from None


@dataclass
class Limit:
    """One expectation drawn on a plot, in SI."""

    agg: str
    cmp: str
    value: float
    label: str
    passed: bool
    within: float | None = None  # absolute, for `=`
    between: tuple[float, float] | None = None
    at_time: float | None = None


@dataclass
class Series:
    """What one plot shows: a signal or an expectation's expression, with limits and baseline."""

    name: str  # the file name stem
    title: str
    unit: str  # SI unit of the values
    celsius: bool  # show an absolute temperature in °C
    time: np.ndarray
    values: np.ndarray
    limits: list[Limit] = field(default_factory=list)
    base_time: np.ndarray | None = None
    base_values: np.ndarray | None = None
    kind: str = "signal"  # or "expression"


def slug(text: str) -> str:
    return re.sub(r"_+", "_", re.sub(r"[^A-Za-z0-9.]+", "_", text)).strip("_") or "signal"


def expression_text(expect_text: str) -> str:
    """`expect max T(a) - T(b) < 2 K between ...` → `T(a) - T(b)`."""
    body = expect_text.split("#", 1)[0].strip()
    body = re.sub(r"^expect\s+", "", body)
    body = re.sub(r"^(max|min|final|mean|steady)\s+", "", body)
    body = re.split(r"<=|>=|<|>|=", body, maxsplit=1)[0]
    return re.split(r"\s+at\s+", body, maxsplit=1)[0].strip()


def _limit_label(e, celsius: bool, passed: bool) -> str:
    def show(v):
        return f"{v - ZERO_C:.4g} °C" if celsius else f"{v:.4g} {e.unit if e.unit != '1' else ''}".rstrip()

    agg = f"at {e.at_time:g} s" if e.agg == "at" else e.agg
    text = f"{agg} {e.cmp} {show(e.limit)}"
    if e.cmp == "=":
        tol = e.within if e.within >= 0 else -e.within * abs(e.limit)
        text += f" ± {tol:.3g}" + ("" if e.unit == "1" else (" K" if celsius else f" {e.unit}"))
    if e.between:
        text += f", {e.between[0]:g}..{e.between[1]:g} s"
    return text + ("" if passed else "  (FAIL)")


def series_for(res: Results, base=None) -> list[Series]:
    """One Series per recorded signal, then one per expectation on an expression of signals."""
    d = res.design
    if res.time is None:
        return []
    out: dict[str, Series] = {}
    for s in res.signals:
        if s in res.waveforms:
            bt = bv = None
            if base is not None and base.time is not None and s in base.signals:
                bt, bv = base.time, base.signals[s]
            out[s] = Series(slug(s), s, signal_unit(s), d.celsius and kind_of(s) == "T",
                            res.time, np.asarray(res.waveforms[s], dtype=float), [], bt, bv)
    checks = {id(e): c for e, c in zip(d.expectations, res.checks)}
    for e in d.expectations:
        if e.agg == "steady" or e.agg == "window" or e.agg.startswith("time of"):
            continue  # not a point of the transient: shown in the steady-state table
        c = checks.get(id(e))
        key = e.expr.text if isinstance(e.expr, SignalRef) else expression_text(e.text)
        if key not in out:
            try:
                y = series(e.expr, res.time, res.waveforms)
            except KeyError:
                continue
            bt = bv = None
            if base is not None and base.time is not None:
                try:
                    bv = series(e.expr, base.time, base.signals)
                    bt = base.time
                except KeyError:
                    pass
            if isinstance(e.expr, SignalRef):  # a signal the design does not record
                out[key] = Series(slug(key), key, signal_unit(key), d.celsius and kind_of(key) == "T",
                                  res.time, np.asarray(y, dtype=float), [], bt, bv)
            else:
                out[key] = Series(f"expect_line{e.loc.line}" if e.loc else slug(key), key, e.unit, e.celsius,
                                  res.time, np.asarray(y, dtype=float), [], bt, bv, "expression")
        ser = out[key]
        tol = None
        if e.cmp == "=":
            tol = e.within if e.within >= 0 else -e.within * abs(e.limit)
        ser.limits.append(Limit(e.agg, e.cmp, e.limit, _limit_label(e, ser.celsius, c.passed if c else True),
                                c.passed if c else True, tol, e.between, e.at_time))
    return list(out.values())


def figure(ser: Series, design_title: str = ""):
    """A matplotlib Figure (Agg canvas) of one series."""
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    shift = ZERO_C if ser.celsius else 0.0
    fig = Figure(figsize=SIZE, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    ax.plot(ser.time, ser.values - shift, color=CURVE, lw=2.0, label="this run", zorder=3)
    if ser.base_time is not None:  # on top, dashed: where the two agree the run shows through
        ax.plot(ser.base_time, ser.base_values - shift, color=BASELINE, lw=1.2, ls=(0, (4, 3)),
                label="baseline", zorder=5)
    t0, t1 = float(ser.time[0]), float(ser.time[-1])
    for k, lim in enumerate(ser.limits):
        _draw_limit(ax, ser, lim, LIMITS[k % len(LIMITS)], shift)
    unit = "°C" if ser.celsius else ser.unit
    quantity = _QUANTITY.get(ser.title[0]) if ser.kind == "signal" else _BY_UNIT.get(ser.unit, "value")
    if ser.celsius:
        quantity = "temperature"
    ax.set_xlabel("time (s)")
    ax.set_ylabel(f"{quantity} ({unit})" if unit and unit != "1" else quantity)
    ax.set_title(ser.title, loc="left", fontsize=10)
    if design_title:
        ax.set_title(design_title, loc="right", fontsize=8, color="0.4")
    ax.grid(True, color="0.9", lw=0.8)
    ax.set_xlim(t0, t1)
    ax.ticklabel_format(axis="y", useOffset=False)
    if ser.limits or ser.base_time is not None:
        ax.legend(fontsize=8, loc="best", framealpha=0.85)
    return fig


def _span(lim: Limit, t0: float, t1: float) -> tuple[float, float]:
    """The times a limit applies to, at least 2 % of the plot wide so a short one stays visible."""
    if lim.agg == "at":
        a = b = lim.at_time
    elif lim.agg == "final":
        a = b = t1
    else:
        a, b = lim.between if lim.between else (t0, t1)
    wide = 0.02 * (t1 - t0)
    if b - a < wide:
        mid = min(max(0.5 * (a + b), t0 + 0.5 * wide), t1 - 0.5 * wide)
        a, b = mid - 0.5 * wide, mid + 0.5 * wide
    return a, b


def _measured_point(ser: Series, lim: Limit) -> tuple[float, float] | None:
    """Where a max, min, final or at check took its value (None for mean)."""
    t, y = ser.time, ser.values
    if lim.agg == "at":
        return lim.at_time, float(np.interp(lim.at_time, t, y))
    mask = (t >= lim.between[0]) & (t <= lim.between[1]) if lim.between else np.ones(len(t), bool)
    if not mask.any() or lim.agg not in ("max", "min", "final"):
        return None
    idx = np.flatnonzero(mask)
    k = idx[-1] if lim.agg == "final" else idx[np.argmax(y[idx])] if lim.agg == "max" else idx[np.argmin(y[idx])]
    return float(t[k]), float(y[k])


def _draw_limit(ax, ser: Series, lim: Limit, colour: str, shift: float) -> None:
    """A limit as a line over the times it applies to; a band for `=`; a failed one dotted, with
    a ring where the check measured its value."""
    t0, t1 = float(ser.time[0]), float(ser.time[-1])
    v = lim.value - shift
    a, b = _span(lim, t0, t1)
    if lim.between and lim.between[1] - lim.between[0] < 0.5 * (t1 - t0):
        ax.axvspan(lim.between[0], lim.between[1], color=colour, alpha=0.08, lw=0, zorder=0)
    if lim.within is not None:
        ax.fill_between([a, b], v - lim.within, v + lim.within, color=colour, alpha=0.15, lw=0, zorder=1)
    ax.plot([a, b], [v, v], color=colour, lw=1.4, ls="-" if lim.passed else (0, (1, 1)), label=lim.label, zorder=4)
    if lim.agg in ("at", "final"):
        ax.plot([lim.at_time if lim.agg == "at" else t1], [v], marker="o", ms=4, color=colour, zorder=4, clip_on=False)
    point = None if lim.passed else _measured_point(ser, lim)
    if point is not None:
        ax.plot([point[0]], [point[1] - shift], marker="o", ms=9, mfc="none", mec=colour, mew=1.6, zorder=6, clip_on=False)


def png_bytes(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=DPI, metadata={"Software": None})
    return buf.getvalue()


def svg_text(fig) -> str:
    import matplotlib

    buf = io.StringIO()
    with matplotlib.rc_context({"svg.hashsalt": "netgen"}):
        fig.savefig(buf, format="svg", metadata={"Date": None})
    return buf.getvalue()


def write_plots(res: Results, out_dir: Path, base=None) -> list[Path]:
    """NAME.png and NAME.svg in `out_dir` for every series."""
    require()
    out_dir = Path(out_dir)
    written, used = [], set()
    title = res.design.title or Path(res.design.file).name
    for ser in series_for(res, base):
        name = ser.name
        while name in used:
            name += "_"
        used.add(name)
        fig = figure(ser, title)
        png = out_dir / f"{name}.png"
        write_atomic(png, png_bytes(fig))
        svg = out_dir / f"{name}.svg"
        write_atomic(svg, svg_text(fig))
        written += [png, svg]
    for resp in res.responses:
        name = "response_" + slug(f"{resp.signal}_{resp.input}")
        while name in used:
            name += "_"
        used.add(name)
        fig = bode_figure(resp, title)
        png, svg = out_dir / f"{name}.png", out_dir / f"{name}.svg"
        write_atomic(png, png_bytes(fig))
        write_atomic(svg, svg_text(fig))
        written += [png, svg]
    return written


def bode_figure(resp, title: str):
    """Magnitude (log-log) over phase (degrees), against frequency in Hz."""
    from matplotlib.figure import Figure

    fig = Figure(figsize=(SIZE[0], 2 * SIZE[1]))
    top, bottom = fig.subplots(2, 1, sharex=True)
    top.loglog(resp.frequency, resp.magnitude, color=CURVE, lw=1.6)
    top.set_ylabel(f"|{resp.label}| ({resp.unit})")
    top.set_title(f"{title}: response of {resp.signal} to {resp.input}", fontsize=10)
    bottom.semilogx(resp.frequency, resp.phase, color=CURVE, lw=1.6)
    bottom.set_ylabel("phase (°)")
    bottom.set_xlabel("frequency (Hz)")
    for ax in (top, bottom):
        ax.grid(True, which="both", color="#dddddd", lw=0.6)
    fig.tight_layout()
    return fig

