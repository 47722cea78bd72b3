"""The HTML report: one self-contained page (plots inlined as PNG) of verified or run designs."""
from __future__ import annotations

import base64
import datetime
import html
import math
from pathlib import Path

from netgen import __version__
from netgen.model.signals import signal_unit
from netgen.outputs import plots
from netgen.outputs.text import ZERO_C, _value, fmt, humidity_line, scales
from netgen.regression.verify import Outcome

STYLE = """
body { font: 15px/1.45 system-ui, -apple-system, "Segoe UI", Roboto, sans-serif; color: #222;
       max-width: 1000px; margin: 2em auto; padding: 0 1em; }
h1 { font-size: 1.5em; margin-bottom: 0.2em; }
h2 { font-size: 1.25em; margin-top: 2.2em; border-bottom: 1px solid #ccc; padding-bottom: 0.2em; }
h3 { font-size: 1.02em; margin: 1.4em 0 0.4em; }
.meta { color: #666; font-size: 0.9em; margin: 0.2em 0; }
table { border-collapse: collapse; margin: 0.4em 0 0.8em; font-size: 0.92em; }
th, td { border-bottom: 1px solid #e2e2e2; padding: 0.25em 0.7em 0.25em 0; text-align: left;
         vertical-align: top; }
th { color: #555; font-weight: 600; }
td.num { font-variant-numeric: tabular-nums; white-space: nowrap; }
.pass { color: #18794e; font-weight: 600; }
.FAIL, .error { color: #b42318; font-weight: 600; }
.none { color: #777; }
.badge { display: inline-block; min-width: 3.2em; text-align: center; border-radius: 3px;
         padding: 0 0.35em; margin-right: 0.4em; font-size: 0.85em; color: #fff; }
.badge.pass { background: #18794e; } .badge.FAIL, .badge.error { background: #b42318; }
figure { margin: 0.6em 0 1.2em; }
figure img { width: 100%; max-width: 880px; height: auto; border: 1px solid #eee; }
pre { background: #f6f6f6; padding: 0.6em; overflow-x: auto; font-size: 0.88em; }
a { color: #1f4e9c; }
"""


def _e(x) -> str:
    return html.escape(str(x), quote=True)


def _table(head: list[str], rows: list[list[str]]) -> str:
    """`rows` hold ready HTML; a cell starting with a marker class is given that class."""
    out = ["<table><tr>" + "".join(f"<th>{_e(h)}</th>" for h in head) + "</tr>"]
    for r in rows:
        out.append("<tr>" + "".join(r) + "</tr>")
    return "\n".join(out) + "</table>"


def _td(text: str, cls: str = "") -> str:
    return f'<td class="{cls}">{_e(text)}</td>' if cls else f"<td>{_e(text)}</td>"


def _checks(o: Outcome) -> str:
    if not o.checks:
        return '<p class="none">The design states no expectations or audits.</p>'
    rows = []
    for c in o.checks:
        mark = "pass" if c.passed else "FAIL"
        rows.append([_td(mark, mark), _td(c.loc.line if c.loc else ""), _td(c.text),
                     _td(_value(c.measured, c.unit, c.celsius), "num"), _td(_value(c.limit, c.unit, c.celsius), "num"),
                     _td(c.detail)])
    return _table(["", "line", "check", "measured", "limit", "detail"], rows)


def _baseline(o: Outcome) -> str:
    if o.update is not None:
        head = f"<p>Baseline {_e(o.update)}: <code>{_e(o.baseline_file)}</code>.</p>"
        if o.comparison is None:
            return head
    elif o.comparison is None:
        return f'<p class="none">No baseline (looked for <code>{_e(o.baseline_file)}</code>).</p>'
    else:
        mark = "pass" if o.comparison.passed else "FAIL"
        b = o.baseline
        head = (f'<p><span class="{mark}">{mark}</span> — {_e(o.comparison.summary())}.</p>'
                f'<p class="meta">{_e(o.baseline_file)}, written by netgen {_e(b.netgen)}'
                + (f", settings {_e(' '.join(f'{k}={v}' for k, v in b.settings.items()))}" if b.settings else "")
                + "</p>")
    c = o.comparison
    parts = [head] + [f'<p class="FAIL">{_e(p)}</p>' for p in c.problems]
    if c.missing:
        parts.append(f'<p class="FAIL">In the baseline but not recorded: {_e(", ".join(c.missing))}</p>')
    if c.new:
        parts.append(f'<p class="meta">Not in the baseline yet: {_e(", ".join(c.new))}</p>')
    rows = []
    for d in sorted(c.diffs, key=lambda d: -d.ratio):
        mark = "pass" if d.passed else "FAIL"
        share = ("—" if not math.isfinite(d.ratio) else "< 0.1 %" if d.ratio < 1e-3
                 else f"{100 * d.ratio:.3g} %" if d.ratio < 10 else f"{d.ratio:.3g} ×")
        rows.append([_td(mark, mark), _td(d.signal), _td(f"{d.deviation:+.4g} {d.unit}", "num"),
                     _td(d.where.replace("at t = ", "")), _td(f"±{d.allowed:.3g} {d.unit}", "num"), _td(share, "num")])
    if rows:
        parts.append(_table(["", "signal", "largest deviation", "at", "allowed", "of allowed"], rows))
    return "\n".join(parts)


def _steady(o: Outcome) -> str:
    res = o.results
    if res.steady is None:
        return ""
    base = (o.baseline.steady or {}) if o.baseline is not None else {}
    cel = res.design.celsius
    rows = []
    for s, v in res.steady.items():
        row = [_td(s), _td(fmt(s, v, cel), "num")]
        if base:
            row.append(_td(fmt(s, base[s], cel) if s in base else "—", "num"))
        rows.append(row)
    head = ["signal", "value"] + (["baseline"] if base else [])
    return "<h3>Steady state</h3>\n" + _table(head, rows)


def _ranges(o: Outcome) -> str:
    """The transient's min, max and final value of each reported signal, as `netgen run` prints."""
    res = o.results
    if res.time is None:
        return ""
    names = [s for s in res.signals if s in res.waveforms]
    big = scales({s: float(max(abs(res.waveforms[s].min()), abs(res.waveforms[s].max()))) for s in names})
    cel = res.design.celsius
    rows = []
    for s in names:
        w = res.waveforms[s]
        scale = big.get(signal_unit(s), 0.0)
        rows.append([_td(s)] + [_td(fmt(s, float(v), cel, scale), "num") for v in (w.min(), w.max(), w[-1])])
    return (f"<h3>Range of each signal over the transient (to {res.time[-1]:g} s)</h3>\n"
            + _table(["signal", "min", "max", "final"], rows))


def _modules(o: Outcome) -> str:
    """Each module's figures of merit beside its ideal limits, the air's dew point, every caution."""
    res = o.results
    parts = []
    rows = []
    for f in res.figures:
        if f["mode"] == "cooling":
            merit = f"COP {f['cop']:.3f}" + (f" (ideal best {f['cop_max']:.3f})" if "cop_max" in f else "")
            what = f"cooling {f['cooling_power']:.4g} W"
            limits = f"I_max {f['current_max']:.3g} A, ΔT_max {f['dt_max']:.3g} K at this cold side"
            if "dt_max_rated" in f:
                limits += f", {f['dt_max_rated']:.3g} K from a {f['rated_hot'] - ZERO_C:.4g} °C hot side"
        elif f["mode"] == "generating":
            merit = f"efficiency {100 * f['efficiency']:.2f} % (ideal best {100 * f['efficiency_max']:.2f} %)"
            what = f"delivers {f['electrical_power']:.4g} W"
            limits = f"matched load {f['power_matched']:.4g} W"
        else:
            merit, what, limits = "—", f"electrical power {f['power']:.4g} W", "—"
        rows.append([_td(f["module"]), _td(f["mode"]), _td(f"{f['current']:.4g} A", "num"), _td(f"{f['ZT']:.3f}", "num"),
                     _td(what), _td(merit), _td(limits)])
    if rows:
        parts.append(f"<h3>Modules at the {_e(res.figures_at)}</h3>\n"
                     + _table(["module", "mode", "current", "Z·T", "heat or power", "figure of merit", "ideal limits"],
                              rows))
    if res.design.humidity is not None:
        parts.append(f'<p class="meta">{_e(humidity_line(res.design))}</p>')
    if res.cautions:
        parts.append("<h3>Cautions</h3>\n<ul>" + "".join(f'<li class="FAIL">{_e(c)}</li>' for c in res.cautions)
                     + "</ul>")
    return "\n".join(parts)


def _modes(o: Outcome) -> str:
    res = o.results
    if res.modes is None:
        return ""
    rows = []
    tiny = 1e-9 * max((abs(complex(m.real, m.imag)) for m in res.modes), default=0.0)
    for m in res.modes:
        conserved = abs(m.real) <= tiny
        lam = f"{0.0 if conserved else m.real:.5g}" + (f" ± {m.imag:.5g}j" if m.oscillatory else "")
        decay = ("conserved" if conserved else f"{m.decay_time:.4g} s" if math.isfinite(m.decay_time)
                 else "grows" if m.real > 0 else "none")
        rows.append([_td(lam, "num"), _td(decay, "num"), _td(f"{m.frequency:.4g} Hz" if m.oscillatory else "—", "num"),
                     _td(f"{m.damping:.3f}", "num"), _td(", ".join(f"{n} {100 * s:.0f} %" for n, s in m.nodes))])
    out = "<h3>Modes of the linearised system</h3>\n" + _table(
        ["eigenvalue (1/s)", "decay time", "frequency", "damping", "takes part most"], rows)
    for f in res.forecast:
        out += (f'<p class="meta">Linear estimate: {_e(f.unknown)} passes its final value at {f.crossing_time:.3g} s '
                f"and overshoots it by {f.overshoot:.3g} K at {f.overshoot_time:.3g} s.</p>")
    return out


def _windows(o: Outcome) -> str:
    ws = o.results.windows
    if not ws:
        return ""
    rows = [[_td(w["line"]), _td(f"{w['start']:.6g} s", "num"), _td(f"{w['end']:.6g} s", "num"),
             _td(f"{w['duration']:.6g} s", "num")] for w in ws]
    return "<h3>Windows</h3>\n" + _table(["line", "start", "end", "duration"], rows)


def _figures(o: Outcome) -> str:
    res = o.results
    title = res.design.title or Path(res.design.file).name
    out = []
    for ser in plots.series_for(res, o.baseline):
        png = base64.b64encode(plots.png_bytes(plots.figure(ser, title))).decode("ascii")
        out.append(f'<figure><img alt="{_e(ser.title)} over time" src="data:image/png;base64,{png}"></figure>')
    if not out:
        return ""
    return f"<h3>Transient to {res.time[-1]:g} s</h3>\n" + "\n".join(out)


def _section(i: int, o: Outcome) -> str:
    status = o.status
    if o.results is not None and o.results.design.title:
        name = o.results.design.title
    else:
        name = Path(o.path).name
    parts = [f'<section id="design{i}">',
             f'<h2><span class="badge {status}">{_e(status)}</span>{_e(name)}</h2>',
             f'<p class="meta">{_e(o.path)}'
             + (f" · {_e(' '.join(f'--set {k}={v}' for k, v in o.settings.items()))}" if o.settings else "")
             + (f" · {o.elapsed:.1f} s" if o.elapsed else "") + "</p>"]
    if o.error is not None:
        parts.append(f"<pre>{_e(o.error)}</pre>")
    else:
        parts += ["<h3>Checks</h3>", _checks(o), _windows(o), "<h3>Baseline</h3>", _baseline(o), _steady(o),
                  _ranges(o), _modules(o), _modes(o), _figures(o)]
    parts.append("</section>")
    return "\n".join(p for p in parts if p)


def _overview(outcomes: list[Outcome]) -> str:
    rows = []
    for i, o in enumerate(outcomes):
        n = len(o.checks)
        failed = sum(not c.passed for c in o.checks)
        checks = "—" if o.error else f"{n - failed} of {n} pass"
        if o.error:
            base = "—"
        elif o.update:
            base = o.update
        elif o.comparison is None:
            base = "no baseline"
        else:
            base = "ok" if o.comparison.passed else "FAIL"
        rows.append([_td(o.status, o.status), f'<td><a href="#design{i}">{_e(o.path)}</a></td>',
                     _td(checks), _td(base), _td(f"{o.elapsed:.1f} s", "num")])
    return _table(["", "design", "checks", "baseline", "time"], rows)


def html_report(outcomes: list[Outcome], heading: str = "netgen report") -> str:
    """The page: an overview table, then per design its checks, baseline, steady state and plots."""
    plots.require()
    n = len(outcomes)
    count = {k: sum(o.status == k for o in outcomes) for k in ("pass", "FAIL", "error")}
    stamp = datetime.datetime.now().astimezone().strftime("%Y-%m-%d %H:%M %Z")
    summary = f"{n} design{'s' * (n != 1)}: {count['pass']} passed, {count['FAIL']} failed"
    if count["error"]:
        summary += f", {count['error']} with input errors"
    body = [f"<h1>{_e(heading)}</h1>",
            f'<p class="meta">netgen {_e(__version__)} · {_e(stamp)} · {_e(summary)}</p>',
            _overview(outcomes) if n > 1 else ""]
    body += [_section(i, o) for i, o in enumerate(outcomes)]
    return ("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n"
            f"<title>{_e(heading)}: {_e(summary)}</title>\n<style>{STYLE}</style>\n</head>\n<body>\n"
            + "\n".join(body) + "\n</body>\n</html>\n")
