"""`response SIGNAL to INPUT`: the small-signal frequency response (issue 12, item 5).

Outside checks: a heat capacity C on a thermal resistance R to a reservoir is a first-order low
pass, Z(jω) = R/(1 + jωRC): |Z| = R/√(1 + (ωRC)²), phase −atan(ωRC) (any circuits text, e.g.
Horowitz & Hill, *The Art of Electronics*, ch. 1, the RC low pass, by the thermal-electrical
analogy); the body–module–coil loop against its 2×2 closed form derived in
`test_the_loop_against_its_closed_form` from the module's equations in grammar/language.md; the
poles against `modes`; the exported `.ac` against ngspice.
"""
from __future__ import annotations

import csv
import math

import numpy as np
import pytest

import netgen
from netgen.cli import main
from netgen.model.errors import NetgenError
from netgen.spice.crosscheck import crosscheck
from netgen.spice.netlist import write_netlist

R, C = 2.5, 40.0  # K/W, J/K: RC = 100 s
LOWPASS = f"""\
mass m {C} J/K
fixed room 300 K
link wall m room {1 / R} W/K
heat q m 0.5 W
response T(m) to q from 0.0001 Hz to 1 Hz points 41
"""


def test_a_mass_on_a_link_is_a_first_order_low_pass():
    res = netgen.load(LOWPASS).run()
    (r,) = res.responses
    w = 2 * np.pi * r.frequency
    assert r.frequency[0] == pytest.approx(1e-4) and r.frequency[-1] == pytest.approx(1.0) and len(w) == 41
    assert np.allclose(r.magnitude, R / np.sqrt(1 + (w * R * C) ** 2), rtol=1e-6, atol=0)
    assert np.allclose(r.phase, -np.degrees(np.arctan(w * R * C)), rtol=0, atol=1e-6)
    assert r.unit == "K/W"


# The loop of examples/coil_swing.etn at rest (body at the bath's temperature, no current), with
# a heat input into the body.
S, RM, K, L, RX, CB, T0 = 0.055, 1.6, 0.6, 2.2, 0.05, 0.4, 298.15
LOOP = f"""\
fixed bath {T0} K
mass body {CB} J/K
heat push body 0 W
ground p
thermoelectric tec pins p n sides body bath {{ seebeck {S} V/K  resistance {RM} ohm  conductance {K} W/K }}
inductor coil n x {L} H
resistor leads x p {RX} ohm
modes
response T(body) to push from 0.01 Hz to 10 Hz points 61
response I(coil) to push from 0.01 Hz to 10 Hz points 61
"""


def test_the_loop_against_its_closed_form():
    """Linearised at rest (θ = T(body) − T0 = 0, I = 0; the Joule heat is second order):
        C·θ' = P − K·θ − S·T0·I          (heat taken from side A: S·T_A·I + K·(T_A − T_B))
        L·I' = S·θ − (R + R_x)·I         (around the loop: I·R − S·θ + L·I' + R_x·I = 0)
    so with D(s) = (C·s + K)(L·s + R + R_x) + S²·T0:
        θ/P = (L·s + R + R_x)/D(s),  I/P = S/D(s)."""
    res = netgen.load(LOOP).run()
    theta, current = res.responses
    s = 2j * np.pi * theta.frequency
    D = (CB * s + K) * (L * s + RM + RX) + S * S * T0
    for got, want, unit in ((theta, (L * s + RM + RX) / D, "K/W"), (current, S / D, "A/W")):
        assert np.allclose(got.magnitude, np.abs(want), rtol=1e-6, atol=0)
        assert np.allclose(got.phase, np.degrees(np.unwrap(np.angle(want))), rtol=0, atol=1e-5)
        assert got.unit == unit
    # The poles: the roots of D are the modes netgen finds at the same steady state.
    poles = np.roots([CB * L, CB * (RM + RX) + K * L, K * (RM + RX) + S * S * T0])
    got = [complex(m.real, sg * m.imag) for m in res.modes for sg in ((1, -1) if m.oscillatory else (1,))]
    assert np.allclose(np.sort_complex(np.array(got)), np.sort_complex(poles), rtol=1e-9, atol=0)


def test_derived_signals_follow_through_their_own_formula():
    """Q(wall) = (T(m) − T(room))/R: its response is the temperature's divided by R."""
    res = netgen.load(LOWPASS + "response Q(wall) to q from 0.0001 Hz to 1 Hz points 41\n").run()
    a, b = res.responses
    assert np.allclose(b.values, a.values / R, rtol=1e-6, atol=0)
    assert b.unit == "W/W"


def test_the_default_band_spans_the_modes():
    text = LOWPASS.replace(" from 0.0001 Hz to 1 Hz points 41", "")
    (r,) = netgen.load(text).run().responses
    corner = 1 / (2 * math.pi * R * C)  # 1.6 mHz
    assert r.frequency[0] <= corner / 10 and r.frequency[-1] >= corner * 10 and len(r.frequency) == 41


def test_run_prints_a_table_and_writes_response_csv(tmp_path, capsys):
    f = tmp_path / "lp.etn"
    f.write_text(LOWPASS + "response Q(wall) to q from 0.0001 Hz to 1 Hz points 41\n")
    assert main(["run", str(f), "--out", str(tmp_path / "out")]) == 0
    out = capsys.readouterr().out
    assert "response of T(m) to q (41 points" in out and "K/W" in out
    rows = list(csv.reader(open(tmp_path / "out" / "response.csv")))
    assert rows[0] == ["frequency", "|T(m) / q|", "phase(T(m) / q)", "|Q(wall) / q|", "phase(Q(wall) / q)"]
    assert len(rows) == 42
    f0, mag, ph = (float(x) for x in rows[1][:3])
    assert f0 == pytest.approx(1e-4) and mag == pytest.approx(R / math.hypot(1, 2 * math.pi * f0 * R * C), rel=1e-6)


def test_run_plots_a_bode_diagram(tmp_path, capsys):
    pytest.importorskip("matplotlib")
    f = tmp_path / "lp.etn"
    f.write_text(LOWPASS)
    assert main(["run", str(f), "--plot", str(tmp_path / "plots")]) == 0
    assert (tmp_path / "plots" / "response_T_m_q.png").stat().st_size > 1000


@pytest.mark.parametrize("line, message", [
    ("response T(m) to nothing", "unknown input `nothing`"),
    ("response T(m) to wall", "not an input"),
    ("response T(m) to q from 1 Hz to 0.1 Hz", "empty or reversed"),
    ("response T(m) to q from 1 s to 2 s", "a frequency needs a unit of Hz"),
    ("response T(m) to q points 1.5", "whole number"),
    ("response T(nowhere) to q", "unknown node `nowhere`"),
])
def test_reading_errors(line, message):
    with pytest.raises(NetgenError) as e:
        netgen.load(LOWPASS.replace("response T(m) to q from 0.0001 Hz to 1 Hz points 41\n", "") + line + "\n")
    assert message in str(e.value)
    assert e.value.loc is not None and e.value.loc.line == 5


def test_the_netlist_carries_an_ac_sweep():
    text = write_netlist(netgen.load(LOWPASS))
    assert "iac_q 0 t_m DC 0 AC 1" in text
    assert ".ac dec 20 0.0001 1.0" in text


ELECTRIC = """\
ground g
source vin a g 1 V
resistor r a b 1 kohm
capacitor c b g 1 uF
response V(b) to vin from 1 Hz to 100 kHz points 26
"""


def test_responses_to_a_second_input_are_named_as_not_compared(ngspice):
    text = LOWPASS + "fixed far 290 K\nlink wire m far 0.1 W/K\nresponse T(m) to far from 0.0001 Hz to 1 Hz points 11\n"
    rep = crosscheck(netgen.load(text), ngspice)
    assert rep.passed and len(rep.response) == 1
    assert any("`far` are not compared" in n for n in rep.notes)


@pytest.mark.parametrize("text", [LOWPASS, LOOP, ELECTRIC], ids=["low-pass", "loop", "electric-rc"])
def test_ngspice_ac_agrees(ngspice, text):
    """ngspice's .ac on the exported netlist against our response, at ngspice's frequencies."""
    rep = crosscheck(netgen.load(text), ngspice)
    assert rep.passed, rep.table()
    assert rep.response and all(r.passed and not r.missing for r in rep.response)
