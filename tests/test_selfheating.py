"""Electro-thermal self-heating: a resistor with a temperature coefficient that heats its own mass.

Reference: the steady heat balance G·(T − Ta) = P(T) with R = R0·(1 + α·(T − Tref)) (LANGUAGE.md),
solved in closed form here: linear in T for a current drive, a quadratic for a voltage drive.
"""
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen

R0, ALPHA, TREF, G, TA, C = 10.0, 3900e-6, 298.15, 0.05, 298.15, 2.0

TEXT = """
fixed amb 25 degC
mass body 2 J/K start 25 degC
link mount body amb 0.05 W/K
ground g
source s a g {drive}
resistor r a g 10 ohm heats body tempco 3900 ppm/K at body ref 25 degC
steady
transient until 400 s step 1 s
record T(body) I(r) P(r)
"""


def test_voltage_driven_resistor_settles_at_quadratic_root():
    """G·(T − Ta)·R0·(1 + α(T − Tref)) = V², the positive root (quadratic formula)."""
    V = 3.0
    res = netgen.load(TEXT.format(drive="3 V")).run()
    a = G * R0 * ALPHA
    b = G * R0 * (1 - ALPHA * TREF) - G * R0 * ALPHA * TA
    c = -G * TA * R0 * (1 - ALPHA * TREF) - V * V
    T = (-b + math.sqrt(b * b - 4 * a * c)) / (2 * a)
    st = res.steady
    assert st["T(body)"] == pytest.approx(T, abs=1e-9)
    R = R0 * (1 + ALPHA * (T - TREF))
    assert st["I(r)"] == pytest.approx(V / R, rel=1e-10)
    assert st["P(r)"] == pytest.approx(G * (T - TA), rel=1e-9)
    # The transient from 25 °C approaches the same root; compare with scipy on the ODE.
    sol = solve_ivp(lambda t, y: [(V * V / (R0 * (1 + ALPHA * (y[0] - TREF))) - G * (y[0] - TA)) / C],
                    (0, 400), [TA], method="Radau", rtol=1e-11, atol=1e-11, t_eval=res.time)
    assert np.max(np.abs(res["T(body)"] - sol.y[0])) < 2e-3


def test_current_driven_resistor_settles_at_linear_root():
    """G·(T − Ta) = I²·R0·(1 + α(T − Tref)): T = (G·Ta + I²R0(1 − α·Tref)) / (G − I²R0·α)."""
    I = 0.25
    st = netgen.load(TEXT.format(drive="0.25 A")).run().steady
    T = (G * TA + I * I * R0 * (1 - ALPHA * TREF)) / (G - I * I * R0 * ALPHA)
    assert st["T(body)"] == pytest.approx(T, abs=1e-9)


def test_tempco_without_heating_uses_node_temperature():
    """R follows the temperature of the named node: 100 K above ref gives R0·(1 + 100·α)."""
    st = netgen.load("""
fixed hot 398.15 K
ground g
source s a g 1 V
resistor r a g 10 ohm tempco 3900 ppm/K at hot ref 298.15 K
steady
record I(r)
""").run().steady
    assert st["I(r)"] == pytest.approx(1 / (10 * (1 + 0.39)), rel=1e-12)
