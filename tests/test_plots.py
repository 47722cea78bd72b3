"""Plots and the HTML report: files written, limits and units on the axes, the curve in the pixels."""
import re
import sys
import xml.etree.ElementTree as ET

import numpy as np
import pytest

import netgen
from netgen.cli import main

try:
    import matplotlib  # noqa: F401
    HAVE_MPL = True
except ImportError:
    HAVE_MPL = False
needs_mpl = pytest.mark.skipif(not HAVE_MPL, reason="matplotlib (the plot extra) is not installed")

# A block warmed by a heat step at t = 0: T = 25 °C + 2 K·(1 − exp(−t / 4 s)).
WARM = """design "Warm-up"
let P = 1 W
mass m 2 J/K start 25 degC
fixed r 25 degC
heat h m P
link l m r 0.5 W/K
transient until 20 s step 0.1 s
record T(m) Q(l)
expect max T(m) < 28 degC
expect min Q(l) > 0.8 W between 5 s and 10 s
expect T(m) - T(r) at 4 s = 1.26 K within 0.05 K
"""


@pytest.fixture
def warm(tmp_path):
    f = tmp_path / "warm.etn"
    f.write_text(WARM)
    return f


@needs_mpl
def test_run_plot_writes_png_and_svg(warm, tmp_path, capsys):
    out = tmp_path / "plots"
    assert main(["run", str(warm), "--plot", str(out)]) == 1  # Q(l) is 0.72 W at 5 s: the `between` check fails
    assert "wrote 3 plots (PNG and SVG)" in capsys.readouterr().out
    names = sorted(p.name for p in out.iterdir())
    assert names == ["Q_l.png", "Q_l.svg", "T_m.png", "T_m.svg", "expect_line11.png", "expect_line11.svg"]
    for p in out.glob("*.png"):
        assert p.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n" and p.stat().st_size > 5000
    for p in out.glob("*.svg"):
        assert ET.parse(p).getroot().tag.endswith("svg")


@needs_mpl
def test_verify_report_is_self_contained(warm, tmp_path, capsys):
    main(["verify", str(warm), "--update-baseline"])
    page = tmp_path / "report.html"
    assert main(["verify", str(warm), "--report", str(page)]) == 1
    html = page.read_text()
    assert html.startswith("<!DOCTYPE html>") and len(html) > 20000
    assert len(re.findall(r'<img alt="[^"]*" src="data:image/png;base64,', html)) == 3
    assert not re.search(r'(src|href)="(https?:|//)', html) and "<script" not in html and "<link" not in html
    assert "Steady state" not in html  # the design has no steady analysis
    assert "expect min Q(l) &gt; 0.8 W between 5 s and 10 s" in html and "baseline ok" not in html


@needs_mpl
def test_axes_units_limits_and_baseline(warm, capsys):
    from netgen.outputs import plots
    from netgen.regression.baseline import read

    main(["verify", str(warm), "--update-baseline"])
    res = netgen.load(warm).run()
    base = read(warm.parent / "baselines" / "warm.json")
    series = {s.title: s for s in plots.series_for(res, base)}
    assert list(series) == ["T(m)", "Q(l)", "T(m) - T(r)"]
    t = series["T(m)"]
    assert t.celsius and t.base_values is not None and [lim.label for lim in t.limits] == ["max < 28 °C"]
    assert series["Q(l)"].limits[0].label.endswith("(FAIL)")
    diff = series["T(m) - T(r)"]
    assert not diff.celsius and diff.limits[0].within == pytest.approx(0.05)
    ax = plots.figure(t).axes[0]
    assert ax.get_ylabel() == "temperature (°C)" and ax.get_xlabel() == "time (s)"
    assert plots.figure(diff).axes[0].get_ylabel() == "temperature difference (K)"
    kelvin = netgen.load(WARM.replace("25 degC", "298.15 K").replace("28 degC", "301.15 K")).run()
    assert plots.figure(plots.series_for(kelvin)[0]).axes[0].get_ylabel() == "temperature (K)"


@needs_mpl
def test_png_pixels_follow_the_curve(warm, tmp_path):
    """The curve's colour lies along T = 25 °C + 2 K·(1 − exp(−t/4 s)) (the RC step response)."""
    from matplotlib.colors import to_rgb
    from matplotlib.image import imread

    from netgen.outputs import plots

    res = netgen.load(warm).run()
    ser = plots.series_for(res)[0]
    fig = plots.figure(ser, "Warm-up")
    png = tmp_path / "T.png"
    png.write_bytes(plots.png_bytes(fig))
    img = imread(png)[:, :, :3]
    height = img.shape[0]
    ax = fig.axes[0]
    colour = np.array(to_rgb(plots.CURVE))
    near = np.linalg.norm(img - colour, axis=2) < 0.08
    tt = np.linspace(1.0, 19.0, 40)
    expected = 25.0 + 2.0 * (1 - np.exp(-tt / 4.0))
    px = ax.transData.transform(np.column_stack([tt, expected]))
    hits = 0
    for x, y in px:
        col, row = int(round(x)), int(round(height - y))
        hits += near[row - 2: row + 3, col - 1: col + 2].any()
    assert hits == len(tt)
    # And the other way: every curve-coloured pixel inside the axes (but outside the legend, which
    # shows a piece of the line) lies within a few pixels of the expected path.
    (x0, y0), (x1, y1) = ax.transAxes.transform([(0, 0), (1, 1)])
    legend = ax.get_legend().get_window_extent()
    rows, cols = np.nonzero(near)
    x, y = cols.astype(float), height - rows.astype(float)
    inside = (x > x0 + 3) & (x < x1 - 3) & (y > y0 + 3) & (y < y1 - 3)
    inside &= ~((x >= legend.x0 - 2) & (x <= legend.x1 + 2) & (y >= legend.y0 - 2) & (y <= legend.y1 + 2))
    t_dense = np.linspace(0.0, 20.0, 4000)
    path = ax.transData.transform(np.column_stack([t_dense, 25.0 + 2.0 * (1 - np.exp(-t_dense / 4.0))]))
    pts = np.column_stack([x[inside], y[inside]])
    dist = np.min(np.linalg.norm(pts[:, None, :] - path[None, ::4, :], axis=2), axis=1)
    assert len(pts) > 200 and dist.max() < 4, dist.max()


@pytest.mark.parametrize("args", [["run", "{f}", "--plot", "{d}"], ["run", "{f}", "--report", "{d}/r.html"],
                                  ["verify", "{f}", "--report", "{d}/r.html"]], ids=["run-plot", "run-report", "verify-report"])
def test_without_matplotlib_a_clear_message_and_exit_2(warm, tmp_path, args, monkeypatch, capsys):
    argv = [a.format(f=warm, d=tmp_path / "out") for a in args]
    # As if matplotlib were not installed: every import of it or of a module of it fails (None in
    # sys.modules), also where earlier tests in this process imported it. Restored afterwards.
    for name in [m for m in sys.modules if m == "matplotlib" or m.startswith("matplotlib.")] + ["matplotlib"]:
        monkeypatch.setitem(sys.modules, name, None)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "need matplotlib, which is not installed" in err and 'pip install -e ".[plot]"' in err
    assert "Traceback" not in err and not (tmp_path / "out").exists()
