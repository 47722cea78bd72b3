"""The solver against outside values: textbook closed forms and scipy as an independent integrator.

Each test names its source (the numbering is that of shared/design/CHECKS.md). Circuit values
are chosen for the test; the reference values come from the formulas, never from netgen.
"""
import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import fsolve

import netgen


def run(text, **overrides):
    return netgen.load(text, overrides or None).run()


# ---- CHECKS 1: lumped capacitance cooling (Incropera & DeWitt, ch. 5) -----------------------
def test_lumped_cooling_is_exponential():
    """θ(t)/θ₀ = exp(−t/(R·C)), Incropera & DeWitt, lumped capacitance method."""
    res = run("""
mass block 12 J/K start 360 K
fixed bath 300 K
link path block bath 2.5 K/W
transient until 150 s step 1 s
record T(block) Q(path)
""")
    t = res.time
    theta = res["T(block)"] - 300.0
    exact = 60.0 * np.exp(-t / (2.5 * 12.0))
    assert np.max(np.abs(theta - exact)) < 60.0 * 1e-3 * 0.5  # well under 1e-3 of θ₀
    # The heat through the link is θ/R (same source, Fourier's law for a lumped resistance).
    assert np.allclose(res["Q(path)"], theta / 2.5, rtol=1e-9, atol=1e-12)
    # Temperatures near 300 K need an absolute floor: mid-run error below 1 mK (ARCHITECTURE.md).
    mid = (t > 20) & (t < 100)
    assert np.max(np.abs(theta[mid] - exact[mid])) < 2e-3


# ---- CHECKS 2: series RLC step response (Nilsson & Riedel, natural and step response) --------
RLC = """
ground g
source vin in g step(0 V, 2 V, 1 ms)
resistor r in a 5 ohm
inductor l a b 10 mH
capacitor c b g 100 uF
transient until 20 ms step 20 us
record I(l) V(b) I(c)
"""


def test_rlc_step_current_matches_closed_form():
    """i(t) = V/(ω_d·L)·e^(−αt)·sin(ω_d t), α = R/2L, ω₀ = 1/√(LC); Nilsson & Riedel."""
    res = run(RLC)
    R, L, C, V, t0 = 5.0, 10e-3, 100e-6, 2.0, 1e-3
    alpha, w0 = R / (2 * L), 1 / math.sqrt(L * C)
    wd = math.sqrt(w0**2 - alpha**2)
    t = res.time
    tau = np.clip(t - t0, 0, None)
    exact = V / (wd * L) * np.exp(-alpha * tau) * np.sin(wd * tau)
    peak = V / (wd * L)
    assert np.max(np.abs(res["I(l)"] - exact)) < 1e-3 * peak
    # Nothing moves before the step: the breakpoint at 1 ms is honoured exactly.
    assert np.all(np.abs(res["I(l)"][t < t0]) < 1e-12)
    assert t0 in t


def test_rlc_overshoot_of_capacitor_voltage():
    """Overshoot exp(−πζ/√(1−ζ²)), ζ = α/ω₀; Nilsson & Riedel (CHECKS 2, 10)."""
    res = run(RLC)
    R, L, C, V = 5.0, 10e-3, 100e-6, 2.0
    zeta = (R / (2 * L)) * math.sqrt(L * C)
    expected = V * (1 + math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2)))
    assert res["V(b)"].max() == pytest.approx(expected, rel=2e-4)
    # The capacitor current equals the inductor current in a series loop (KCL).
    assert np.max(np.abs(res["I(c)"] - res["I(l)"])) < 1e-3 * V / (R)


def test_overdamped_does_not_overshoot():
    """An overdamped second-order system does not overshoot (CHECKS 10, common practice)."""
    res = run(RLC.replace("5 ohm", "50 ohm"))
    assert res["V(b)"].max() <= 2.0 * (1 + 1e-6)


# ---- CHECKS 3: ideal cooler with fixed sides (CRC Handbook of Thermoelectrics; Goldsmid) ------
COOLER = """
fixed cold 280 K
fixed hot 305 K
ground g
source drive p g 2.5 A
thermoelectric m pins p g sides cold hot { seebeck 48 mV/K  resistance 1.6 ohm  conductance 0.55 W/K }
steady
record Q(m.a) Q(m.b) V(p) Q(cold) Q(hot) P(m) I(m) I(drive) P(drive)
"""


def test_cooler_heat_and_voltage_match_ideal_equations():
    """Qc = S·I·Tc − ½I²R − K·ΔT, Qh = S·I·Th + ½I²R − K·ΔT, V = I·R + S·ΔT (CRC Handbook)."""
    st = run(COOLER).steady
    S, R, K, I, Tc, Th = 48e-3, 1.6, 0.55, 2.5, 280.0, 305.0
    dT = Th - Tc
    Qc = S * I * Tc - 0.5 * I**2 * R - K * dT
    Qh = S * I * Th + 0.5 * I**2 * R - K * dT
    V = I * R + S * dT
    assert st["Q(m.a)"] == pytest.approx(Qc, rel=1e-9)
    assert st["Q(m.b)"] == pytest.approx(Qh, rel=1e-9)
    assert st["V(p)"] == pytest.approx(V, rel=1e-9)
    # The cold reservoir supplies Qc; the hot one absorbs Qh.
    assert st["Q(cold)"] == pytest.approx(Qc, rel=1e-9)
    assert st["Q(hot)"] == pytest.approx(-Qh, rel=1e-9)
    # First law: electrical power taken by the module = Qh − Qc; COP = Qc/(V·I).
    assert st["P(m)"] == pytest.approx(Qh - Qc, rel=1e-9)
    assert st["P(m)"] == pytest.approx(V * I, rel=1e-9)
    assert st["P(drive)"] == pytest.approx(-V * I, rel=1e-9)
    assert st["I(m)"] == pytest.approx(I) and st["I(drive)"] == pytest.approx(I)


def test_reversed_current_heats_side_a():
    """Sign convention (LANGUAGE.md): negative I carries Peltier heat from B to A."""
    st = run(COOLER.replace("2.5 A", "-2.5 A")).steady
    S, R, K, I, Tc, Th = 48e-3, 1.6, 0.55, -2.5, 280.0, 305.0
    assert st["Q(m.a)"] == pytest.approx(S * I * Tc - 0.5 * I**2 * R - K * (Th - Tc), rel=1e-9)
    assert st["Q(m.a)"] < 0


def test_language_example_steady_state():
    """The steady state of LANGUAGE.md's example, solved here by scipy's fsolve on the element
    equations written out by hand (LANGUAGE.md says: die about −5.3 °C, sink about 27.5 °C)."""
    st = run("""
let ambient = 24 degC
mass  die    0.45 J/K
mass  sink   38 J/K
fixed room   ambient
link  fins   sink  room   2.2 W/K
heat  chip   die   0.3 W
ground gnd
source   drive   p  gnd  1.6 A
resistor harness p  q    40 mohm
thermoelectric tec1 pins q gnd sides die sink {
    seebeck 52 mV/K  resistance 1.8 ohm
    conductance 0.6 W/K
}
steady
""").steady
    S, R, K, I, P, G, Ta = 52e-3, 1.8, 0.6, 1.6, 0.3, 2.2, 297.15

    def eqs(T):
        Tc, Th = T
        qc = S * Tc * I - 0.5 * I * I * R + K * (Tc - Th)
        qh = S * Th * I + 0.5 * I * I * R + K * (Tc - Th)
        return [P - qc, qh - G * (Th - Ta)]

    Tc, Th = fsolve(eqs, [290.0, 300.0], xtol=1e-13)
    assert st["T(die)"] == pytest.approx(Tc, abs=1e-7)
    assert st["T(sink)"] == pytest.approx(Th, abs=1e-7)
    assert st["T(die)"] - 273.15 == pytest.approx(-5.3, abs=0.05)
    assert st["T(sink)"] - 273.15 == pytest.approx(27.5, abs=0.05)


# ---- CHECKS 9: two equal closed masses (first and second law; common practice) ---------------
def test_two_closed_masses_end_at_mean_and_entropy_grows():
    """Equal masses joined by a link end at the mean; Σ C·ln T never decreases."""
    res = run("""
mass a 5 J/K start 350 K
mass b 5 J/K start 290 K
link joint a b 0.4 W/K
transient until 200 s step 1 s
record T(a) T(b)
""")
    Ta, Tb = res["T(a)"], res["T(b)"]
    assert Ta[-1] == pytest.approx(320.0, abs=1e-3)
    assert Tb[-1] == pytest.approx(320.0, abs=1e-3)
    # Energy is conserved at every instant (no reservoir): C·Ta + C·Tb stays 5·640 J.
    assert np.max(np.abs(Ta + Tb - 640.0)) < 1e-6
    entropy = 5 * np.log(Ta) + 5 * np.log(Tb)
    assert np.all(np.diff(entropy) >= -1e-12)
    # The difference decays as exp(−2·G·t/C) (two equal lumped masses); the default error
    # control (1 mK plus 1e-4 of the change, per step) keeps it within 20 mK of a 60 K swing.
    exact = 60.0 * np.exp(-2 * 0.4 * res.time / 5.0)
    assert np.max(np.abs((Ta - Tb) - exact)) < 0.02
    # A tighter tolerance brings it to a few tenths of a millikelvin.
    res = run("""
mass a 5 J/K start 350 K
mass b 5 J/K start 290 K
link joint a b 0.4 W/K
transient until 200 s step 1 s tolerance 1e-6
record T(a) T(b)
""")
    exact = 60.0 * np.exp(-2 * 0.4 * res.time / 5.0)
    assert np.max(np.abs((res["T(a)"] - res["T(b)"]) - exact)) < 1e-3


# ---- CHECKS 11: a nonlinear thermoelectric network against solve_ivp --------------------------
NONLINEAR = """
mass body 2.0 J/K start 300 K
mass sink 15 J/K start 300 K
fixed amb 300 K
link fins sink amb 1.2 W/K
heat load body step(0 W, 0.8 W, 5 s)
ground g
source drv y g sine(0.3 V, 0.5 V, 0.02 Hz)
resistor rx y x 0.4 ohm
inductor l1 x p 2 H
thermoelectric m pins p g sides body sink { seebeck 40 mV/K  resistance 1.1 ohm  conductance 0.35 W/K }
transient until 120 s step 0.25 s
record T(body) T(sink) I(l1)
"""


def _nonlinear_reference(t_eval):
    """NONLINEAR written by hand as an ODE in (T_body, T_sink, I) and integrated by scipy's
    Radau, in two pieces so the heat step at 5 s is not smeared (CHECKS 11)."""
    C1, C2, G2, Ta = 2.0, 15.0, 1.2, 300.0
    S, R, K, L, Rx = 40e-3, 1.1, 0.35, 2.0, 0.4

    def rhs(t, y, P):
        T1, T2, I = y
        v = 0.3 + 0.5 * math.sin(2 * math.pi * 0.02 * t)
        qa = S * T1 * I - 0.5 * I * I * R + K * (T1 - T2)
        qb = S * T2 * I + 0.5 * I * I * R + K * (T1 - T2)
        return [(P - qa) / C1, (qb - G2 * (T2 - Ta)) / C2, (v - Rx * I - I * R - S * (T2 - T1)) / L]

    # The start: temperatures imposed, the inductor current at its steady value v(0)/(R + Rx).
    y0 = [300.0, 300.0, 0.3 / (R + Rx)]
    first = solve_ivp(rhs, (0, 5), y0, method="Radau", rtol=1e-12, atol=1e-12, dense_output=True, args=(0.0,))
    second = solve_ivp(rhs, (5, 120), first.y[:, -1], method="Radau", rtol=1e-12, atol=1e-12,
                       dense_output=True, args=(0.8,))
    assert first.success and second.success
    t = np.asarray(t_eval)
    return np.where(t < 5, first.sol(np.minimum(t, 5)), second.sol(np.maximum(t, 5)))


def test_nonlinear_network_matches_solve_ivp():
    """The same network written directly as an ODE and integrated by scipy (CHECKS 11)."""
    res = run(NONLINEAR)
    ref = _nonlinear_reference(res.time)
    assert res["I(l1)"][0] == pytest.approx(0.3 / 1.5, rel=1e-9)
    assert np.max(np.abs(res["T(body)"] - ref[0])) < 1e-3
    assert np.max(np.abs(res["T(sink)"] - ref[1])) < 1e-3
    assert np.max(np.abs(res["I(l1)"] - ref[2])) < 1e-3 * np.max(np.abs(ref[2]))


def test_tighter_tolerance_gets_closer_to_reference():
    """`tolerance` tightens the error control: the error against solve_ivp drops."""
    errs = []
    for tol in ("1e-3", "1e-6"):
        res = run(NONLINEAR.replace("step 0.25 s", f"tolerance {tol}"))
        errs.append(np.max(np.abs(res["T(body)"] - _nonlinear_reference(res.time)[0])))
    assert errs[1] < errs[0] / 5
    assert errs[1] < 3e-4


# ---- switches and shapes against closed forms -------------------------------------------------
def test_switch_closing_charges_rc():
    """RC charging after a switch closes: v = V·(1 − e^(−(t−t1)/(R·C))) (any circuits text)."""
    res = run("""
ground g
source v1 s g 10 V
switch sw s a closed 2 ms .. 30 ms on 1 mohm off 1 Gohm
resistor r a b 1 kohm
capacitor c b g 1 uF start 0 V
transient until 8 ms step 10 us
record V(b)
""")
    t = res.time
    tau = 1e3 * 1e-6 + 0  # R·C; the switch adds 1 mohm, negligible
    exact = np.where(t < 2e-3, 0.0, 10.0 * (1 - np.exp(-(t - 2e-3) / tau)))
    assert np.max(np.abs(res["V(b)"] - exact)) < 1e-3 * 10.0
    assert 2e-3 in t


def test_current_table_into_capacitor_integrates_exactly():
    """v(t) = (1/C)∫i dt for a piecewise linear current (fundamental capacitor law)."""
    res = run("""
ground g
source i1 a g table(0 s, 0 A, 1 s, 2 mA, 3 s, 2 mA, 4 s, 0 A)
capacitor c a g 1 mF start 0 V
resistor leak a g 1 Gohm
transient until 5 s step 0.05 s
record V(a)
""")
    t = res.time
    q = np.interp(t, [0, 1, 3, 4, 5], [0, 1e-3, 5e-3, 6e-3, 6e-3])  # ∫i dt at the corners
    # Between corners the integral of a linear current is quadratic: compare at the corners.
    for tc, qc in zip([1.0, 3.0, 4.0, 5.0], [1e-3, 5e-3, 6e-3, 6e-3]):
        assert res["V(a)"][np.searchsorted(t, tc)] == pytest.approx(qc / 1e-3, rel=1e-4)
    assert q is not None


def test_pulse_source_on_resistor_follows_shape():
    """A resistive load follows the pulse exactly at the reported points (Ohm's law)."""
    res = run("""
ground g
source p1 a g pulse(0 V, 5 V, 1 ms, 0.1 ms, 0.2 ms, 2 ms, 5 ms)
resistor r a g 10 ohm
transient until 12 ms step 0.05 ms
record V(a) I(r)
""")
    t = res.time
    for tc in (1e-3, 1.1e-3, 3.1e-3, 3.3e-3, 6e-3, 6.1e-3):
        assert tc == pytest.approx(t[np.argmin(np.abs(t - tc))], abs=1e-12)
    tau = np.mod(t - 1e-3, 5e-3)
    exact = np.where(t < 1e-3, 0.0,
                     np.where(tau < 1e-4, 5 * tau / 1e-4,
                              np.where(tau < 2.1e-3, 5.0,
                                       np.where(tau < 2.3e-3, 5 - 5 * (tau - 2.1e-3) / 2e-4, 0.0))))
    assert np.max(np.abs(res["V(a)"] - exact)) < 1e-6
    assert np.allclose(res["I(r)"], res["V(a)"] / 10.0)


def test_sine_reservoir_drives_mass_like_first_order_filter():
    """A mass driven by a sinusoidal reservoir through a link: amplitude ratio 1/√(1+(ωRC)²)
    once the start transient has died (first-order low-pass, any control text)."""
    res = run("""
mass m 4 J/K start 300 K
fixed r sine(300 K, 10 K, 0.01 Hz)
link l m r 0.5 W/K
transient until 2000 s step 1 s
record T(m)
""")
    t, T = res.time, res["T(m)"]
    w, tau = 2 * math.pi * 0.01, 4 / 0.5
    late = t > 1500
    amp = (T[late].max() - T[late].min()) / 2
    assert amp == pytest.approx(10 / math.sqrt(1 + (w * tau) ** 2), rel=2e-3)


def test_time_expression_heat_input():
    """A heat input written with `time`: P = 0.5 W·time/10 s into a mass with no loss; the
    temperature is T0 + P0·t²/(2·τ·C) (integral of a ramp)."""
    res = run("""
mass m 2 J/K start 300 K
heat h m 0.5 W * time / 10 s
transient until 10 s step 0.1 s
record T(m) Q(h)
""")
    t = res.time
    assert np.max(np.abs(res["T(m)"] - (300 + 0.5 * t**2 / (2 * 10 * 2)))) < 1e-6
    assert np.allclose(res["Q(h)"], 0.5 * t / 10)
