"""Switches that act on conditions (issue 12, item 3), against outside values.

- The body–module–coil loop of examples/coil_swing.etn with a switch that `opens when Q(tec.a) <
  0 W`: an independent model written by hand from the physics of LANGUAGE.md (the module's
  equations, Kirchhoff's voltage law round the loop, the body's heat balance), integrated with
  scipy's solve_ivp and its own event location, gives the time Q crosses zero; netgen's event
  must be within 1 ms of it. Afterwards the loop is open (1 Gohm), so the body relaxes to the bath
  as the lumped-capacitance closed form θ(t) = θ₀·exp(−K·(t − t₀)/C) (Incropera & DeWitt, ch. 5).
- An on-off thermostat with hysteresis: a heater switched on below 3 °C and off above 5 °C on a
  mass linked to a 0 °C bath. Each phase is the lumped-capacitance first-order response
  (Incropera & DeWitt, ch. 5), so the heating time from 3 to 5 °C is (C/K)·ln((θ∞ − 3)/(θ∞ − 5))
  with θ∞ = P/K, and the cooling time from 5 to 3 °C is (C/K)·ln(5/3).
"""
import json
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen
from netgen.cli import main
from netgen.model.errors import NetgenError, SolveError

# The loop (values of examples/coil_swing.etn, used here as test inputs, not as check values).
C, K, S, R, L, R_LEADS, R_ON = 0.4, 0.6, 55e-3, 1.6, 2.2, 50e-3, 1e-3
T_BATH = 298.15

LOOP = """
fixed bath 25 degC
mass  body 0.4 J/K start 55 degC
ground p
thermoelectric tec pins p n sides body bath { seebeck 55 mV/K  resistance 1.6 ohm  conductance 0.6 W/K }
inductor coil n x 2.2 H start 0 A
resistor leads x y 50 mohm
switch cut y p opens when Q(tec.a) < 0 W
transient until 6 s step 0.01 s
record T(body) I(coil) Q(tec.a)
"""


def loop_by_hand():
    """(t0, θ(t0)): the time Q(tec.a) first falls through zero, by solve_ivp on the loop's ODEs.

    Heat taken from the body (side a): Q = S·Ta·I − R·I²/2 + K·(Ta − Tb); the body: C·dTa/dt = −Q.
    Round the loop (module p→n, coil n→x, leads x→y, switch y→p): 0 = R·I + S·(Tb − Ta) +
    L·dI/dt + (R_leads + R_on)·I."""
    def q(ta, i):
        return S * ta * i - 0.5 * R * i * i + K * (ta - T_BATH)

    def rhs(t, y):
        ta, i = y
        return [-q(ta, i) / C, (S * (ta - T_BATH) - (R + R_LEADS + R_ON) * i) / L]

    crossing = lambda t, y: q(*y)
    crossing.terminal, crossing.direction = True, -1
    sol = solve_ivp(rhs, (0.0, 6.0), [T_BATH + 30.0, 0.0], method="LSODA", rtol=1e-11, atol=1e-12,
                    events=crossing)
    t0 = float(sol.t_events[0][0])
    return t0, float(sol.y_events[0][0][0]) - T_BATH


def test_the_loop_opens_when_the_module_stops_taking_heat_out_of_the_body():
    res = netgen.load(LOOP).run()
    t0_ref, theta0_ref = loop_by_hand()
    [ev] = res.events
    assert ev["element"] == "cut" and ev["what"] == "opens"
    assert abs(ev["time"] - t0_ref) < 1e-3  # measured: a few microseconds
    t, theta = res.time, res["T(body)"] - T_BATH
    # At the event the body is at its coldest, below the bath.
    k0 = int(np.searchsorted(t, ev["time"]))
    assert theta[k0] == pytest.approx(theta0_ref, abs=2e-3)
    assert theta0_ref < -1.0
    # Afterwards: below the bath throughout, relaxing as the closed form from where it was.
    after = t > ev["time"]
    theta0 = theta[k0]
    exact = theta0 * np.exp(-K * (t[after] - ev["time"]) / C)
    assert np.max(np.abs(theta[after] - exact)) < 2e-3
    assert np.max(theta[after]) < 0
    # The coil's current was forced through the open switch: the caution says so.
    assert any("switch `cut` opens at t = " in c for c in res.cautions)


HEATER = """
fixed bath 0 degC
mass m 20 J/K start 4 degC
link wall m bath 0.5 W/K
ground g
source supply v g 10 V
switch stat v h closes when T(m) < 3 degC  opens when T(m) > 5 degC
resistor heater h g 20 ohm heats m
transient until 400 s step 1 s
record T(m) I(stat)
"""


def test_a_thermostat_with_hysteresis_holds_between_its_two_temperatures():
    res = netgen.load(HEATER).run()
    ev = res.events
    # Starts at 4 °C, inside the band, so it starts open: first it cools to 3 °C, then toggles.
    assert [e["what"] for e in ev[:4]] == ["closes", "opens", "closes", "opens"]
    assert all(e["element"] == "stat" for e in ev)
    cm, kw = 20.0, 0.5
    p = 10.0 ** 2 * 20.0 / (20.0 + 1e-3) ** 2  # the heater's power behind the closed switch
    first = (cm / kw) * math.log(4.0 / 3.0)
    heat = (cm / kw) * math.log((p / kw - 3.0) / (p / kw - 5.0))
    cool = (cm / kw) * math.log(5.0 / 3.0)
    times = [e["time"] for e in ev]
    assert times[0] == pytest.approx(first, abs=1e-3)
    for a, b in zip(times[0::2], times[1::2]):
        assert b - a == pytest.approx(heat, abs=2e-3)
    for a, b in zip(times[1::2], times[2::2]):
        assert b - a == pytest.approx(cool, abs=2e-3)
    T = res["T(m)"] - 273.15
    assert T.min() > 3.0 - 2e-3 and T.max() < 5.0 + 2e-3
    # The switch carries the heater's current only while closed.
    i = res["I(stat)"]
    t = res.time
    mid_heat = 0.5 * (times[0] + times[1])
    assert np.interp(mid_heat, t, i) == pytest.approx(0.5, rel=1e-4)
    assert abs(np.interp(0.5 * (times[1] + times[2]), t, i)) < 1e-7


def test_events_in_summary_json_and_the_printed_output(tmp_path, capsys):
    path = tmp_path / "loop.etn"
    path.write_text(LOOP)
    assert main(["run", str(path), "--out", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert "switch `cut` opens at t = " in out
    summary = json.loads((tmp_path / "out" / "summary.json").read_text())
    [ev] = summary["events"]
    assert set(ev) == {"element", "what", "time"}
    assert ev["element"] == "cut" and ev["what"] == "opens" and 1.5 < ev["time"] < 2.5


def test_a_condition_true_at_the_start_acts_at_once():
    res = netgen.load(LOOP.replace("Q(tec.a) < 0 W", "T(body) > T(bath)")).run()
    assert res.events == [{"element": "cut", "what": "opens", "time": 0.0}]
    assert np.max(np.abs(res["I(coil)"])) < 1e-6


def test_conditions_that_hold_at_once_are_refused_at_the_switch():
    with pytest.raises(SolveError, match="switch without end"):
        netgen.load(HEATER.replace("opens when T(m) > 5 degC", "opens when T(m) > 2 degC")).run()


@pytest.mark.parametrize("line, message", [
    ("switch s v h opens when T(m) = 3 degC", "not `=`"),
    ("switch s v h opens when T(m) < 3 V", "two sides are in"),
    ("switch s v h opens when T(m) - T(bath) < 3 degC", "temperature difference"),
    ("switch s v h opens when 3 K < 4 K", "needs a signal"),
    ("switch s v h opens when T(nowhere) < 3 degC", "unknown node"),
    ("switch s v h closed 0 s .. 1 s opens when T(m) < 3 degC", "both times"),
    ("switch s v h on 1 ohm", "needs `closed"),
])
def test_reading_errors(line, message):
    text = "fixed bath 0 degC\nmass m 1 J/K\nlink w m bath 1 W/K\nground g\nresistor r h g 1 ohm\n" \
           "source v v g 1 V\n" + line + "\n"
    with pytest.raises(NetgenError, match=message):
        netgen.load(text)


def test_crosscheck_of_the_thermostat(ngspice, tmp_path, capsys):
    """ngspice with the switch changing at netgen's event times: the rest of the circuit agrees."""
    path = tmp_path / "heater.etn"
    path.write_text(HEATER.replace("until 400 s step 1 s", "until 100 s step 0.5 s"))
    assert main(["crosscheck", str(path)]) == 0
    assert "agree" in capsys.readouterr().out


def test_the_exported_thermostat_switches_in_ngspice_near_our_events(ngspice):
    """On its own the netlist's switch is an S element driven by a B source of T(m), its hysteresis
    holding the state (3 °C and 5 °C exactly); ngspice changes it at its own steps, so its
    switching instants are compared with ours to within two output steps."""
    from netgen.spice.netlist import netlist
    from netgen.spice.raw import find_plot
    from netgen.spice.simulator import simulate

    d = netgen.load(HEATER.replace("until 400 s step 1 s", "until 100 s step 0.1 s"))
    ours = [e["time"] for e in d.run().events]
    text, _ = netlist(d)
    assert "bsw_stat" in text and "VT=-277.15 VH=1.0" in text
    plot = find_plot(simulate(text, ngspice).plots, "Transient Analysis")
    t = np.real(plot["time"])
    i = -np.real(plot["I(v_supply)"])
    on = i > 0.25
    theirs = t[1:][on[1:] != on[:-1]]
    assert len(theirs) == len(ours)
    assert np.max(np.abs(theirs - np.array(ours))) < 0.2
