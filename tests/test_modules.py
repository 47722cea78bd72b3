"""Thermoelectric module data in the forms engineers have (LANGUAGE.md forms 2 and 3).

Sources: CHECKS.md 4 and 7 (ideal cooler limits, CRC Handbook of Thermoelectrics, and the
ratings inversion derived from them), 5 and 6 (best COP; matched-load generator), 8
(bismuth-telluride figures, from memory, used as a range).
"""
import math

import pytest
from scipy.optimize import fsolve

import designs
import netgen

RATED = """
let Th = 300 K
fixed hot Th
fixed cold Th - {dt}
ground g
source drive p g {i}
thermoelectric m pins p g sides cold hot {{ rated imax 6 A vmax 15.4 V dtmax 68 K at 300 K }}
steady
record Q(m.a) V(p) Q(m.b)
"""


def test_rated_module_at_imax_and_dtmax_absorbs_nothing():
    """CHECKS 4 + 7: at I_max with the cold side at Th − ΔT_max, Qc = 0 and V = V_max."""
    st = netgen.load(RATED.format(dt="68 K", i="6 A")).run().steady
    assert st["Q(m.a)"] == pytest.approx(0.0, abs=1e-9)
    assert st["V(p)"] == pytest.approx(15.4, rel=1e-12)


def test_rated_module_resolves_to_the_ideal_inversion():
    """S = V/Th, R = V·(Th−DT)/(Th·I), K = V·I·(Th−DT)/(2·Th·DT) (LANGUAGE.md form 3)."""
    d = netgen.load(RATED.format(dt="0 K", i="1 A"))
    m = d.element("m")
    assert m.seebeck == pytest.approx(15.4 / 300)
    assert m.resistance == pytest.approx(15.4 * 232 / (300 * 6))
    assert m.conductance == pytest.approx(15.4 * 6 * 232 / (2 * 300 * 68))
    # I_max = S·Tc/R and ΔT_max = ½·Z·Tc² come back exactly (CHECKS 4).
    Tc = 300 - 68
    assert m.seebeck * Tc / m.resistance == pytest.approx(6.0)
    Z = m.seebeck**2 / (m.resistance * m.conductance)
    assert 0.5 * Z * Tc**2 == pytest.approx(68.0)


def test_cop_at_optimum_current_matches_formula_and_sweep():
    """CHECKS 5: I_opt = S·ΔT/(R(√(1+Z·Tm) − 1)) and COP_max; a sweep of --set runs finds it."""
    text = designs.cooler()
    S, R, K, Tc, Th = (designs.COOLER_S, designs.COOLER_R, designs.COOLER_K, designs.COOLER_TC,
                       designs.COOLER_TH)
    Z, Tm, dT = S * S / (R * K), 290.0, 20.0
    root = math.sqrt(1 + Z * Tm)
    i_opt = S * dT / (R * (root - 1))
    cop_max = (Tc / dT) * (root - Th / Tc) / (root + 1)

    def cop(i):
        st = netgen.load(text, {"I": f"{i} A"}).run().steady
        return st["Q(m.a)"] / st["P(m)"]

    assert cop(i_opt) == pytest.approx(cop_max, rel=1e-9)
    currents = [i_opt * f for f in (0.6, 0.8, 0.9, 1.0, 1.1, 1.25, 1.5)]
    best = max(currents, key=cop)
    assert best == pytest.approx(i_opt)


def test_generator_matched_load_power():
    """CHECKS 6: open-circuit V = S·ΔT; R_L = R gives P_max = (S·ΔT)²/(4R)."""
    text = designs.generator()
    S, R, dT = designs.GENERATOR_S, designs.GENERATOR_R, designs.GENERATOR_DT
    # With the module's sides as given (A hot, B cold), V(p) − V(g) = I·R + S·(Tb − Ta).
    st = netgen.load(text, {"RL": "1 Gohm"}).run().steady
    assert abs(st["V(p)"]) == pytest.approx(S * dT, rel=1e-6)
    pmax = (S * dT) ** 2 / (4 * R)
    assert netgen.load(text, {"RL": "1.5 ohm"}).run().steady["P(load)"] == pytest.approx(pmax, rel=1e-9)
    loads = [0.5, 1.0, 1.25, 1.5, 1.75, 2.5, 4.0]
    powers = [netgen.load(text, {"RL": f"{r} ohm"}).run().steady["P(load)"] for r in loads]
    assert loads[powers.index(max(powers))] == 1.5


BITE = """
material bite {{ seebeck 200 uV/K  resistivity 1e-5 ohm*m  conductivity 1.5 W/(m*K) }}
fixed hot 310 K
fixed cold 290 K
ground g
source drive p g 1 A
thermoelectric m pins p g sides cold hot {{ couples 127 material bite leg {area} {length} }}
steady
"""


def test_leg_geometry_module_resolves_to_handbook_zt():
    """CHECKS 8 (from memory, a range): bismuth telluride near 300 K gives Z·T ≈ 0.8."""
    d = netgen.load(BITE.format(area="1 mm^2", length="1.6 mm"))
    m = d.element("m")
    N, A, L = 127, 1e-6, 1.6e-3
    assert m.seebeck == pytest.approx(2 * N * 200e-6)
    assert m.resistance == pytest.approx(2 * N * 1e-5 * L / A)
    assert m.conductance == pytest.approx(2 * N * 1.5 * A / L)
    zt = m.seebeck**2 / (m.resistance * m.conductance) * 300
    assert 0.6 < zt < 1.1
    # Z does not depend on the leg shape; S does not either, R and K do.
    d2 = netgen.load(BITE.format(area="2 mm^2", length="1 mm"))
    m2 = d2.element("m")
    assert m2.seebeck**2 / (m2.resistance * m2.conductance) == pytest.approx(zt / 300)


def test_temperature_dependent_material_is_evaluated_at_mean_side_temperature():
    """S, R, K from α(T), ρ(T), κ(T) at Tm = (Ta + Tb)/2 (LANGUAGE.md); the reference solves the
    element equations by hand with scipy's fsolve."""
    text = """
material warm { seebeck 200 uV/K * (1 + 0.002 * (T - 300 K) / 1 K)
                resistivity 1e-5 ohm*m * (1 + 0.004 * (T - 300 K) / 1 K)
                conductivity 1.5 W/(m*K) }
fixed amb 300 K
mass cold 1 J/K
heat load cold 0.5 W
ground g
source drive p g 2 A
thermoelectric m pins p g sides cold amb { couples 31 material warm leg 1 mm^2 1.2 mm }
steady
record T(cold) V(p)
"""
    st = netgen.load(text).run().steady
    N, A, L, I, Th = 31, 1e-6, 1.2e-3, 2.0, 300.0

    def props(T):
        return (2 * N * 200e-6 * (1 + 0.002 * (T - 300)), 2 * N * 1e-5 * (1 + 0.004 * (T - 300)) * L / A,
                2 * N * 1.5 * A / L)

    def balance(x):
        Tc = x[0]
        S, R, K = props(0.5 * (Tc + Th))
        return [0.5 - (S * Tc * I - 0.5 * I * I * R + K * (Tc - Th))]

    Tc = fsolve(balance, [290.0], xtol=1e-13)[0]
    assert st["T(cold)"] == pytest.approx(Tc, abs=1e-8)
    S, R, K = props(0.5 * (Tc + Th))
    assert st["V(p)"] == pytest.approx(I * R + S * (Th - Tc), rel=1e-9)


def test_run_reports_cop_and_ideal_limits_for_a_cooler():
    """COP = Qc/(V·I) (CHECKS 3) beside COP_max and I_opt of CHECKS 5, at the solved temperatures."""
    res = netgen.load("""
fixed cold 285 K
fixed hot 305 K
ground g
source drive p g 2 A
thermoelectric m pins p g sides cold hot { seebeck 50 mV/K  resistance 2 ohm  conductance 0.5 W/K }
steady
""").run()
    (f,) = res.figures
    S, R, K, I, Tc, Th = 0.05, 2.0, 0.5, 2.0, 285.0, 305.0
    qc = S * I * Tc - 0.5 * I * I * R - K * (Th - Tc)
    V = I * R + S * (Th - Tc)
    assert f["mode"] == "cooling"
    assert f["cop"] == pytest.approx(qc / (V * I), rel=1e-9)
    Z, Tm, dT = S * S / (R * K), 295.0, 20.0
    root = math.sqrt(1 + Z * Tm)
    assert f["cop_max"] == pytest.approx((Tc / dT) * (root - Th / Tc) / (root + 1), rel=1e-12)
    assert f["current_best_cop"] == pytest.approx(S * dT / (R * (root - 1)), rel=1e-12)
    assert f["dt_max"] == pytest.approx(0.5 * Z * Tc * Tc, rel=1e-12)
    assert res.cautions == []


def test_run_reports_generator_efficiency_and_cautions():
    """η = P_load/Q_hot against η_max of CHECKS 6; a side above `hottest` and one below 0 °C
    are both cautioned (frost and overheating)."""
    res = netgen.load("""
fixed hot 400 K
fixed cold 270 K
ground g
thermoelectric m pins p g sides hot cold { seebeck 40 mV/K  resistance 1.5 ohm  conductance 0.4 W/K  hottest 120 degC }
resistor load p g 1.5 ohm
steady
""").run()
    (f,) = res.figures
    S, R, K, Th, Tc = 0.04, 1.5, 0.4, 400.0, 270.0
    I = S * (Th - Tc) / (2 * R)
    q_hot = S * Th * I - 0.5 * I * I * R + K * (Th - Tc)
    assert f["mode"] == "generating"
    assert f["efficiency"] == pytest.approx(I * I * R / q_hot, rel=1e-9)
    Z, Tm, dT = S * S / (R * K), 335.0, 130.0
    root = math.sqrt(1 + Z * Tm)
    assert f["efficiency_max"] == pytest.approx((dT / Th) * (root - 1) / (root + Tc / Th), rel=1e-12)
    assert f["efficiency"] <= f["efficiency_max"]
    assert any("above its stated limit" in c for c in res.cautions)
    assert any("below freezing" in c for c in res.cautions)
