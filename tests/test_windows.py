"""Windows and times of extremes (netgen/checks/windows.py) against closed forms and an
independent integration of the same physics with scipy's solve_ivp."""
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen
from netgen.checks import windows as W
from netgen.cli import main
from netgen.model.errors import NetgenError


def test_edges_on_the_local_cubic_not_at_the_samples():
    """sin t > 1/2 holds on (π/6, 5π/6) (closed form). Sampled every 0.1 s the nearest points
    are up to 50 ms away; the cubic through four samples puts the edges within 1e-4 s."""
    t = np.arange(0.0, 3.0, 0.1)
    (w,) = W.windows(t, [np.sin(t) - 0.5])
    assert w.start == pytest.approx(math.pi / 6, abs=1e-4)
    assert w.end == pytest.approx(5 * math.pi / 6, abs=1e-4)


def test_two_conditions_intersect_and_several_windows_are_kept():
    t = np.linspace(0.0, 4 * math.pi, 400)
    found = W.windows(t, [np.sin(t), np.cos(t)])  # both positive: (0, π/2) and (2π, 5π/2)
    assert len(found) == 2
    assert found[0].start == 0.0 and found[0].end == pytest.approx(math.pi / 2, abs=1e-6)
    assert found[1].start == pytest.approx(2 * math.pi, abs=1e-6)
    assert found[1].end == pytest.approx(2.5 * math.pi, abs=1e-6)


def test_time_of_extreme_is_the_zero_of_the_derivative():
    """cos(t - 1.2345) has its maximum at 1.2345 (closed form), 35 ms from the nearest of the
    samples 0.1 s apart; the cubic's error in the derivative is O(h^3)."""
    t = np.arange(0.0, 3.0, 0.1)
    when, value = W.extreme(t, np.cos(t - 1.2345), "max")
    assert when == pytest.approx(1.2345, abs=1e-4) and value == pytest.approx(1.0, abs=1e-4)


def test_no_cubic_across_a_corner():
    """A repeated time (a source corner) splits the series: a step from -1 to +1 at t = 1 puts
    the edge at the corner itself, not somewhere a cubic through the jump would put it."""
    t = np.array([0.0, 0.5, 1.0, 1.0, 1.5, 2.0])
    y = np.array([-1.0, -1.0, -1.0, 1.0, 1.0, 1.0])
    (w,) = W.windows(t, [y])
    assert (w.start, w.end) == (1.0, 2.0)


# The body-module-coil loop of examples/coil_swing.etn (invented values).
C, S, R, K, L, R_EXT = 0.4, 55e-3, 1.6, 0.6, 2.2, 50e-3
T_BATH, T_START = 298.15, 328.15
LOOP = f"""
fixed bath 25 degC
mass body {C} J/K start 55 degC
ground p
thermoelectric tec pins p n sides body bath {{ seebeck 55 mV/K resistance 1.6 ohm conductance 0.6 W/K }}
inductor coil n x 2.2 H start 0 A
resistor leads x p 50 mohm
transient until 6 s step 0.01 s
expect window T(body) < T(bath) and Q(tec.a) > 0 W lasts > 0.7 s
expect time of min T(body) = 2.006 s within 1 ms
"""


def _independent():
    """The same loop written by hand from the element equations (LANGUAGE.md, thermoelectric
    coupling): Q_A = S·T_A·I − ½·I²·R + K·(T_A − T_B) leaves the body, C·dT/dt = −Q_A; around the
    loop V(P) − V(N) = I·R + S·(T_B − T_A) is taken up by the coil and the leads, so
    L·dI/dt = S·(T_A − T_B) − (R + R_ext)·I. Integrated by scipy (Radau, rtol 1e-11) with events:
    the window opens where T falls through the bath temperature and closes where Q_A falls
    through zero, which is also the body's lowest point (dT/dt = −Q_A/C)."""
    def q_a(T, i):
        return S * T * i - 0.5 * i * i * R + K * (T - T_BATH)

    def rhs(_t, y):
        T, i = y
        return [-q_a(T, i) / C, (S * (T - T_BATH) - (R + R_EXT) * i) / L]

    below = lambda _t, y: y[0] - T_BATH  # noqa: E731
    below.direction = -1
    turns = lambda _t, y: q_a(*y)  # noqa: E731
    turns.direction = -1
    sol = solve_ivp(rhs, (0.0, 6.0), [T_START, 0.0], method="Radau", rtol=1e-11, atol=1e-12,
                    events=[below, turns])
    return sol.t_events[0][0], sol.t_events[1][0]


def test_window_and_lowest_point_agree_with_solve_ivp(tmp_path, capsys):
    """Measured: netgen's window 1.264146-2.006130 s and lowest point 2.006139 s against
    solve_ivp's 1.264161-2.006154 s: within 25 µs, where the reported points are 10 ms apart."""
    opens, closes = _independent()
    f = tmp_path / "loop.etn"
    f.write_text(LOOP)
    code = main(["run", str(f), "--out", str(tmp_path / "out"), "--quiet"])
    out = capsys.readouterr().out
    assert code == 0, out
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    (w,) = summary["windows"]
    assert set(w) == {"line", "start", "end", "duration"} and w["line"] == 9
    assert w["start"] == pytest.approx(opens, abs=1e-3)
    assert w["end"] == pytest.approx(closes, abs=1e-3)
    assert w["duration"] == pytest.approx(closes - opens, abs=1e-3)
    lowest = summary["expectations"][1]["measured"]
    assert lowest == pytest.approx(closes, abs=1e-3)
    assert f"line 9: from {w['start']:.6g} s to {w['end']:.6g} s, lasting {w['duration']:.6g} s" in out


@pytest.mark.parametrize("line, words", [
    ("expect window T(body) = T(bath) lasts > 1 s", "not `=`"),
    ("expect window T(body) < 30 degC lasts = 1 s", "`lasts` compares with"),
    ("expect window T(body) < 30 degC lasts > 1 K", "a window's duration needs a unit of s"),
    ("expect window T(body, bath) < 2 degC lasts > 1 s", "the other is a temperature difference"),
    ("expect window 1 K < 2 K lasts > 1 s", "names no signal"),
    ("expect time of mean T(body) < 1 s", "`time of` takes `min` or `max`"),
    ("expect time of min T(body) = 1 s", "`=` needs `within TOL`"),
    ("expect time of min T(body) < 1 K", "needs a unit of s"),
])
def test_window_and_time_mistakes_are_located(line, words):
    text = LOOP.split("expect")[0] + line + "\n"
    with pytest.raises(NetgenError) as e:
        netgen.load(text)
    assert words in e.value.render() and e.value.loc.line == 9
