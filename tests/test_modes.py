"""Modes of the linearised system (CHECKS 13, derived from the element equations in LANGUAGE.md)."""
import math

import numpy as np
import pytest

import netgen

LOOP = """
fixed bath 300 K
mass body {C} J/K start 300 K
ground n
thermoelectric m pins p n sides body bath {{ seebeck {S} V/K  resistance {R} ohm  conductance {K} W/K }}
inductor coil n x {L} H start 0 A
resistor ext x p {Rx} ohm
modes
"""


@pytest.mark.parametrize("C, S, R, K, L, Rx", [
    (0.4, 0.055, 1.6, 0.6, 2.2, 0.05),   # underdamped: S²T0/(CL) large
    (5.0, 0.02, 1.0, 0.5, 0.01, 0.5),    # overdamped
])
def test_loop_modes_equal_the_2x2_jacobian(C, S, R, K, L, Rx):
    """State (θ, I): J = [[−K/C, −S·T0/C], [S/L, −(R+R_ext)/L]] (CHECKS 13)."""
    res = netgen.load(LOOP.format(C=C, S=S, R=R, K=K, L=L, Rx=Rx)).run()
    T0 = 300.0
    J = np.array([[-K / C, -S * T0 / C], [S / L, -(R + Rx) / L]])
    expected = sorted(np.linalg.eigvals(J), key=lambda z: (abs(z.real), abs(z.imag)))
    got = res.modes
    complex_pair = abs(expected[0].imag) > 0
    assert len(got) == (1 if complex_pair else 2)
    for m, lam in zip(got, expected):
        assert m.real == pytest.approx(lam.real, rel=1e-9)
        assert m.imag == pytest.approx(abs(lam.imag), rel=1e-9, abs=1e-12)
        assert m.damping == pytest.approx(-lam.real / abs(lam), rel=1e-9)
        assert m.decay_time == pytest.approx(-1 / lam.real, rel=1e-9)
    # Complex eigenvalues ⇔ oscillation (discriminant of the characteristic polynomial).
    disc = (K / C - (R + Rx) / L) ** 2 - 4 * S * S * T0 / (C * L)
    assert complex_pair == (disc < 0)
    assert got[0].oscillatory == complex_pair


def test_single_mass_mode_is_rc_time_constant():
    """One mass on a link: λ = −1/(R·C) (Incropera & DeWitt, lumped capacitance)."""
    res = netgen.load("mass m 3 J/K\nfixed r 300 K\nlink l m r 2 K/W\nmodes\n").run()
    assert len(res.modes) == 1
    assert res.modes[0].decay_time == pytest.approx(6.0, rel=1e-12)
    assert res.modes[0].nodes[0][0] == "T(m)"


def test_forecast_predicts_the_dip_below_the_bath():
    """The linear estimate from the modes against the transient (common practice: for a small
    swing the linearised loop, CHECKS 13, is the first-order truth). A 0.2 K start offset keeps
    the nonlinear Peltier term negligible, so crossing time and overshoot agree to 1 %."""
    text = """
fixed bath 300 K
mass body 0.4 J/K start 300.2 K
ground n
thermoelectric m pins p n sides body bath { seebeck 55 mV/K  resistance 1.6 ohm  conductance 0.6 W/K }
inductor coil n x 2.2 H start 0 A
resistor ext x p 50 mohm
modes
transient until 10 s step 0.002 s tolerance 1e-7
record T(body)
"""
    res = netgen.load(text).run()
    (f,) = res.forecast
    assert f.unknown == "T(body)"
    theta = res["T(body)"] - 300.0
    t = res.time
    k = int(np.argmin(theta))
    assert f.overshoot == pytest.approx(-theta[k], rel=1e-2)
    assert f.overshoot_time == pytest.approx(t[k], rel=1e-2)
    first = int(np.flatnonzero(theta < 0)[0])
    assert f.crossing_time == pytest.approx(t[first], abs=0.01)


def test_overdamped_loop_has_no_forecast():
    res = netgen.load(LOOP.format(C=5.0, S=0.02, R=1.0, K=0.5, L=0.01, Rx=0.5)).run()
    assert res.forecast == [] and not any(m.oscillatory for m in res.modes)


def test_coil_example_forecast_matches_its_transient():
    """The example's own dip (demo values): the linear estimate within 5 % of the transient."""
    from pathlib import Path

    res = netgen.load(Path(__file__).resolve().parents[1] / "examples" / "coil_swing.etn").run()
    (f,) = [x for x in res.forecast if x.unknown == "T(body)"]
    dip = -(res["T(body)"] - 298.15).min()
    assert f.overshoot == pytest.approx(dip, rel=0.05)
