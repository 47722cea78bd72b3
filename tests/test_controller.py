"""`controller`: PID control of a declared source, with limits and anti-windup (issue 12, item 1).

Outside checks: integral action leaves no steady error (Åström & Murray, *Feedback Systems*,
2008, ch. 10, "PID control"); the closed loop of a first-order plant under PI control has the
characteristic polynomial C·s² + (G − kp)·s − ki (the textbook loop algebra, same chapter); the
limited loop against an independent scipy `solve_ivp` model of the same equations written by
hand here; the exported netlist against ngspice.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen
from netgen.cli import main
from netgen.model.errors import NetgenError
from netgen.spice.crosscheck import crosscheck
from netgen.spice.netlist import write_netlist

COOLER = """\
design "Held cooler"
mass  die    0.45 J/K  start 24 degC
mass  sink   38 J/K    start 24 degC
fixed room   24 degC
link  fins   sink  room   2.2 W/K
heat  chip   die   0.3 W
ground gnd
source   drive   p  gnd  0 A
resistor harness p  q    40 mohm
thermoelectric tec1 pins q gnd sides die sink {
    seebeck 52 mV/K  resistance 1.8 ohm
    conductance 0.6 W/K
}
controller hold T(die) at -5 degC by drive { proportional 0.8 A/K  integral 0.05 A/(K*s)  output 0 A .. 3 A }
steady
transient until 300 s step 0.5 s
record T(die) U(hold) U(hold.integral) I(drive)
"""

# A block on a wall to a room, warmed by a heater held by a PI controller (negative gains: a
# heater). The setpoint steps to 380 K, beyond reach (50 W through 1 W/K reaches 350 K), then
# down to 330 K, within reach.
C, G, T0, KP, KI, PMAX = 100.0, 1.0, 300.0, -5.0, -0.1, 50.0
HEATER = f"""\
mass block {C} J/K start {T0} K
fixed room {T0} K
link wall block room {G} W/K
heat warm block 0 W
controller keep T(block) at step({T0} K, 380 K, 10 s) + step(0 K, -50 K, 400 s) by warm {{
    proportional {KP} W/K  integral {KI} W/(K*s)  output 0 W .. {PMAX} W
}}
transient until 800 s step 1 s tolerance 1e-6
record T(block) U(keep) U(keep.integral) U(keep.demand)
"""


def test_a_pi_controller_holds_its_sensor_exactly_at_the_setpoint():
    """Integral action: the steady error is zero whatever the plant (Åström & Murray, ch. 10)."""
    r = netgen.load(COOLER).run()
    assert r.steady["T(die)"] == pytest.approx(273.15 - 5, abs=1e-9)
    assert r.steady["U(hold)"] == pytest.approx(r.steady["I(drive)"], abs=1e-12)
    assert 0 < r.steady["U(hold)"] < 3  # within its range: the integral alone holds it
    # ... and the transient settles there: within 1 mK at the end of 300 s
    assert r.waveforms["T(die)"][-1] == pytest.approx(268.15, abs=1e-3)
    assert r.waveforms["U(hold.integral)"][0] == 0.0  # it starts empty


def test_the_output_is_printed_in_the_source_unit(capsys):
    from netgen.outputs.text import print_results
    print_results(netgen.load(COOLER).run())
    out = capsys.readouterr().out
    lines = [ln.split() for ln in out.splitlines() if ln.strip().startswith("U(hold) ")]
    assert lines[0] == ["U(hold)", "1.5743", "A"]  # the steady state
    assert lines[1][-1] == "A" and lines[1][-2] == "1.5743"  # the transient's final value


def test_the_closed_loop_poles_are_the_textbook_ones():
    """Plant C·T' = u − G·(T − T0), u = kp·e + ki·∫e: C·s² + (G − kp)·s − ki = 0 (e = T − r)."""
    text = HEATER.replace("transient until 800 s step 1 s tolerance 1e-6", "modes").replace(
        f"output 0 W .. {PMAX} W", "").replace(f"step({T0} K, 380 K, 10 s) + step(0 K, -50 K, 400 s)", "320 K")
    r = netgen.load(text).run()
    want = np.sort_complex(np.roots([C, G - KP, -KI]))
    got = [complex(m.real, s * m.imag) for m in r.modes for s in ((1, -1) if m.imag else (1,))]
    assert np.allclose(np.sort_complex(np.array(got)), want, rtol=1e-9, atol=0)


def _hand_model():
    """The same loop, written out here: C·T' = u − G·(T − T0); e = T − r(t);
    demand v = kp·e + z; u = clip(v, 0, PMAX); z' = ki·e − (v − u)/Tt with Tt = kp/ki."""
    tt = KP / KI

    def r(t):
        return T0 + (80.0 if t >= 10 else 0.0) - (50.0 if t >= 400 else 0.0)

    def rhs(t, y):
        T, z = y
        e = T - r(t)
        v = KP * e + z
        u = min(max(v, 0.0), PMAX)
        return [(u - G * (T - T0)) / C, KI * e - (v - u) / tt]

    sols = []
    y = [T0, 0.0]
    for a, b in ((0, 10), (10, 400), (400, 800)):  # restarted at the steps, where r jumps
        s = solve_ivp(rhs, (a, b), y, method="LSODA", rtol=1e-10, atol=1e-10, dense_output=True)
        sols.append(s)
        y = s.y[:, -1]
    return sols, r, tt


def test_limits_and_anti_windup_against_an_independent_model():
    """A setpoint beyond reach: the output sits at its limit and the integral stops growing
    (held at limit − bias = 50 W, where without anti-windup it would grow by ki·e·t, about
    1200 W over the 390 s); when the setpoint comes back within reach the output leaves the
    limit at once. Checked against scipy's LSODA on the hand-written loop."""
    res = netgen.load(HEATER).run()
    t = res.time
    sols, r, tt = _hand_model()
    T_ref = np.empty_like(t)
    z_ref = np.empty_like(t)
    for s in sols:
        inside = (t >= s.t[0]) & (t <= s.t[-1])
        T_ref[inside], z_ref[inside] = s.sol(t[inside])
    T, z, u = res.waveforms["T(block)"], res.waveforms["U(keep.integral)"], res.waveforms["U(keep)"]
    assert np.max(np.abs(T - T_ref)) < 2e-3  # K, over a swing of 50 K
    assert np.max(np.abs(z - z_ref)) < 2e-3  # W
    held = (t > 60) & (t < 400)
    assert np.all(u[held] == PMAX)
    assert np.all(z[(t > 10) & (t < 400)] <= PMAX + 1e-6)  # the integral never passes the limit
    late = (t > 300) & (t < 400)
    # It has stopped growing: it relaxes towards 50 W (time constant Tt = kp/ki = 50 s) and adds
    # under 0.2 W over these 100 s, where ki·e alone (3 W/s at e = −30 K) would add 300 W.
    assert np.ptp(z[late]) < 0.2 and np.all(np.diff(z[late]) >= 0)
    # No windup: after the step down the output leaves the limit within a few seconds.
    first_free = t[(t > 400) & (u < PMAX)][0]
    assert first_free < 405
    assert T[-1] == pytest.approx(330.0, abs=0.05)


@pytest.mark.parametrize("text, message, col", [
    ("controller c T(m) at 300 K by s { proportional 0.8 A/K }", "needs V/K, not A/K", None),
    ("controller c T(m) at 300 K by s { integral 0.05 A/K }", "needs A/(s*K), not A/K", None),
    ("controller c T(m) at 300 K by s { proportional 1 A/K  derivative 2 A/K }", "needs s*A/K, not A/K", None),
    ("controller c T(m) at 300 K by s { proportional 1 A/K  output 0 V .. 2 V }", "an output limit", None),
    ("controller c T(m) at 300 K by nothing { proportional 1 A/K }", "unknown source `nothing`", None),
    ("controller c T(m) at 300 K by r { proportional 1 A/K }", "drives a `source` or a `heat` input", None),
    ("controller c T(m) at 300 K by s { }", "has no gain", None),
    ("controller c T(m) at 3 V by s { proportional 1 A/K }", "a setpoint needs a unit of K", None),
    ("controller c I(r) at 3 A by s { proportional 1 A/A }", "senses a temperature or a voltage", None),
    ("controller c T(m) at 300 K by s { proportional 1 A/K  output 2 A .. 1 A }", "empty or reversed", None),
    ("controller c T(m) at 300 K by s { integral 1 A/(K*s)  output 0 A .. 1 A }", "tracking time", None),
    ("controller c T(m) at 300 K by s { proportional 1 A/K  filter 1 s }", "`filter` smooths", None),
])
def test_reading_errors(text, message, col):
    base = "mass m 1 J/K\nfixed amb 300 K\nlink l m amb 1 W/K\nground g\nsource s p g 0 A\nresistor r p g 1 ohm\n"
    if "needs V/K" in message:  # a voltage source takes gains in V/K
        base = base.replace("source s p g 0 A\n", "source s p g 0 V\n")
    with pytest.raises(NetgenError) as e:
        netgen.load(base + text + "\n")
    assert message in str(e.value)
    assert e.value.loc is not None and e.value.loc.line == 7


def test_two_controllers_on_one_source_are_refused():
    text = ("mass m 1 J/K\nfixed amb 300 K\nlink l m amb 1 W/K\nheat h m 0 W\n"
            "controller a T(m) at 310 K by h { proportional -1 W/K }\n"
            "controller b T(m) at 320 K by h { proportional -2 W/K }\n")
    with pytest.raises(NetgenError) as e:
        netgen.load(text)
    assert "already driven by controller `a`" in str(e.value) and e.value.loc.line == 6


def test_a_wrong_gain_unit_is_a_located_error_from_the_command(tmp_path, capsys):
    f = tmp_path / "bad.etn"
    f.write_text(COOLER.replace("integral 0.05 A/(K*s)", "integral 0.05 A/K"))
    assert main(["run", str(f)]) == 2
    err = capsys.readouterr().err
    assert "bad.etn:14:" in err and "the integral gain of controller `hold` needs A/(s*K), not A/K" in err
    assert "^" in err and "hint:" in err


def test_the_netlist_has_behavioural_sources_and_a_capacitor_integrator():
    text = write_netlist(netgen.load(COOLER))
    assert "c_hold_int x_hold_int 0 1" in text
    assert "g_drive 0 e_p x_hold_out 0 1" in text
    assert "b_hold_out x_hold_out 0 V=" in text


# The heater's setpoint as ramps: with a jump (a 1 ms edge in the netlist) driving the output into
# its limit, ngspice stops at reltol 1e-9 ("timestep too small"), as was seen while writing this.
RAMPED = HEATER.replace(f"step({T0} K, 380 K, 10 s) + step(0 K, -50 K, 400 s)",
                        f"ramp({T0} K, 380 K, 10 s, 30 s) + ramp(0 K, -50 K, 400 s, 420 s)")
DERIVATIVE = RAMPED.replace(f"integral {KI} W/(K*s)", f"integral {KI} W/(K*s)  derivative -20 W*s/K")


@pytest.mark.parametrize("text, signals", [
    (COOLER, {"U(hold)", "U(hold.integral)", "U(hold.demand)", "I(tec1)"}),
    (RAMPED, {"U(keep)", "U(keep.integral)", "T(block)"}),
    (DERIVATIVE, {"U(keep)", "U(keep.derivative)"}),
], ids=["cooler", "heater-limits", "heater-derivative"])
def test_crosscheck_agrees(ngspice, text, signals):
    """ngspice's solution of the exported netlist (B sources, a 1 F integrator) agrees with ours."""
    rep = crosscheck(netgen.load(text), ngspice)
    assert rep.passed, rep.table()
    assert signals <= {r.signal for r in rep.rows if r.passed and not r.missing}
