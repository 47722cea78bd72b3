"""`radiation` and `convection`: reading, physics against outside values, the simulator, bad inputs.

Check numbers are those of shared/design/CHECKS.md. Circuit values are chosen for the test; the
reference values come from the formulas or from scipy, never from netgen.
"""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen
from netgen.cli import main
from netgen.elements import Convection, Radiation
from netgen.spice.crosscheck import crosscheck
from netgen.spice.netlist import write_netlist

SIGMA = 5.670374419e-8  # W/(m²·K⁴), Stefan–Boltzmann constant, CODATA 2018 (CHECKS 14)


def run(text):
    return netgen.load(text).run()


def element(design, name):
    return next(e for e in design.elements if e.name == name)


# ---- reading ----------------------------------------------------------------------------------
def test_lines_read_into_si_values():
    d = netgen.load("""
fixed room 300 K
mass box 5 J/K
radiation r box room emissivity 90 % area 2500 mm^2 view 0.5
radiation bare box room { area 0.01 m^2
    emissivity 0.3 }
convection c box room coefficient 12 W/(m^2*K) area 0.02 m^2 exponent 0.25
convection plain box room coefficient 12 W/(m^2*K) area 0.02 m^2
""")
    r, bare, c, plain = (element(d, n) for n in ("r", "bare", "c", "plain"))
    assert isinstance(r, Radiation) and (r.a, r.b) == ("box", "room")
    assert (r.emissivity, r.area, r.view) == (pytest.approx(0.9), pytest.approx(2.5e-3), 0.5)
    assert (bare.emissivity, bare.area, bare.view) == (0.3, 0.01, 1.0)  # view defaults to 1
    assert isinstance(c, Convection) and (c.coefficient, c.area, c.exponent) == (12.0, 0.02, 0.25)
    assert plain.exponent is None and plain.linear and not c.linear


def test_keywords_stay_usable_as_node_names():
    """Attribute words are keywords only where an attribute is expected (grammar: contextual)."""
    d = netgen.load("""
fixed view 300 K
mass area 5 J/K
radiation emissivity area view emissivity 0.5 area 1 m^2 view 1
convection exponent area view coefficient 1 W/(m^2*K) area 1 m^2 exponent 0
""")
    r = element(d, "emissivity")
    assert (r.a, r.b, r.emissivity, r.area) == ("area", "view", 0.5, 1.0)
    assert element(d, "exponent").exponent == 0.0


def test_reference_example_reads_and_solves():
    """The invented example of grammar/language.md reads and reaches a steady state."""
    res = run("""
fixed room 25 degC
mass case 40 J/K
heat board case 3 W
radiation glow case room emissivity 0.85 area 0.012 m^2
convection air case room { coefficient 4 W/(m^2*K)  area 0.012 m^2  exponent 0.25 }
record T(case) Q(glow) Q(air)
""")
    assert res.steady["T(case)"] > 298.15
    # First law at the node: all the heat put in leaves through the two paths.
    assert res.steady["Q(glow)"] + res.steady["Q(air)"] == pytest.approx(3.0, rel=1e-9)


# ---- CHECKS 14: radiation exchange, Q = ε·σ·A·F·(T₁⁴ − T₂⁴); a heated body settles at
# T⁴ = T_env⁴ + P/(ε·σ·A·F) (Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, ch. 13,
# radiation exchange; CODATA 2018 for σ)
@pytest.mark.parametrize("eps, area, view, power, t_env", [
    (0.9, 0.01, None, 5.0, 300.0),
    (0.2, 4e-4, 0.35, 0.5, 250.0),
    (1.0, 1.0, 1.0, 2000.0, 77.0),
], ids=["painted-plate", "small-polished-part-view", "black-square-metre-cold"])
def test_checks_14_heated_body_settles_at_the_radiation_balance(eps, area, view, power, t_env):
    view_attr = f" view {view}" if view is not None else ""
    res = run(f"""
fixed env {t_env} K
mass body 1 J/K
heat p body {power} W
radiation r body env emissivity {eps} area {area} m^2{view_attr}
steady
record T(body) Q(r)
""")
    k = eps * SIGMA * area * (1.0 if view is None else view)
    expected = (t_env**4 + power / k) ** 0.25
    assert res.steady["T(body)"] == pytest.approx(expected, rel=1e-10, abs=1e-7)
    assert res.steady["Q(r)"] == pytest.approx(power, rel=1e-9)  # all of P leaves by radiation


def test_checks_14_linearised_conductance_is_4_eps_sigma_a_f_t3():
    """d/dT of ε·σ·A·F·T⁴ at 300 K (CHECKS 14), the scale crosscheck uses for tolerances."""
    r = element(netgen.load("fixed e 300 K\nmass m 1 J/K\nradiation r m e emissivity 0.5 area 2 m^2 view 0.25\n"), "r")
    assert r.thermal_conductance() == ("m", "e", pytest.approx(4 * 0.5 * SIGMA * 2 * 0.25 * 300.0**3, rel=1e-12))


# ---- CHECKS 11: the same radiative cooling written directly as an ODE and integrated by scipy
# (scipy.integrate.solve_ivp, Radau, rtol 1e-10, atol 1e-10)
def test_checks_11_radiative_cooling_matches_solve_ivp():
    C, T0, T_env, eps, area, view, P = 10.0, 500.0, 300.0, 0.9, 0.01, 0.8, 1.5
    res = run(f"""
fixed env {T_env} K
mass body {C} J/K start {T0} K
heat p body {P} W
radiation r body env emissivity {eps} area {area} m^2 view {view}
transient until 1200 s step 5 s tolerance 1e-7
record T(body) Q(r)
""")
    k = eps * SIGMA * area * view
    t = res.time
    ref = solve_ivp(lambda _, y: [(P - k * (y[0]**4 - T_env**4)) / C], (0.0, t[-1]), [T0],
                    method="Radau", rtol=1e-10, atol=1e-10, t_eval=t).y[0]
    assert ref[-1] < T0 - 150  # it really cools, through most of the way to its balance
    assert np.max(np.abs(res["T(body)"] - ref)) < 1e-3  # 1 mK over the whole run
    assert np.allclose(res["Q(r)"], k * (res["T(body)"]**4 - T_env**4), rtol=1e-12, atol=0)


# ---- first law, and heat flowing from hot to cold (CHECKS 9: closed masses, first and second law)
def test_two_closed_masses_conserve_energy_and_approach_each_other():
    Ca, Cb = 5.0, 20.0
    res = run(f"""
mass hot {Ca} J/K start 600 K
mass cold {Cb} J/K start 300 K
radiation r hot cold emissivity 0.8 area 0.001 m^2
transient until 6000 s step 20 s
record T(hot) T(cold) Q(r)
audit energy within 0.01 %
audit entropy
""")
    audits = [c for c in res.checks if c.text.startswith("audit")]
    assert len(audits) == 2 and all(c.passed for c in audits), [(c.text, c.measured, c.detail) for c in audits]
    ta, tb = res["T(hot)"], res["T(cold)"]
    energy = Ca * ta + Cb * tb
    assert np.max(np.abs(energy - energy[0])) < 1e-6 * energy[0]
    gap = ta - tb
    assert gap[0] == pytest.approx(300.0)
    # Heat flows only from the hotter to the colder: the gap closes without ever reversing...
    assert np.all(np.diff(gap) <= 1e-9) and np.all(gap >= -1e-6) and np.all(res["Q(r)"] >= -1e-9)
    # ...and both end at the mean weighted by heat capacity, (5·600 + 20·300)/25 = 360 K.
    assert ta[-1] == pytest.approx(360.0, abs=2e-3) and tb[-1] == pytest.approx(360.0, abs=2e-3)
    assert 50.0 < gap[np.searchsorted(res.time, 300.0)] < 200.0  # on the way there at 300 s


# ---- CHECKS 15: natural convection with h ∝ ΔT^N: steady ΔT = (P/(H·A))^(1/(1+N))
# (Incropera & DeWitt, ch. 9, the simplified correlations for air)
@pytest.mark.parametrize("h, area, n, power", [
    (4.0, 0.02, 0.25, 1.5),
    (1.3, 0.5, 1 / 3, 20.0),
    (8.0, 0.01, 0.25, -0.3),
], ids=["laminar", "turbulent", "laminar-heat-taken-out"])
def test_checks_15_natural_convection_steady_difference(h, area, n, power):
    res = run(f"""
fixed air 293.15 K
mass body 1 J/K
heat p body {power} W
convection c body air coefficient {h} W/(m^2*K) area {area} m^2 exponent {n!r}
steady
record T(body) Q(c)
""")
    expected = math.copysign((abs(power) / (h * area)) ** (1 / (1 + n)), power)
    assert res.steady["T(body)"] - 293.15 == pytest.approx(expected, rel=1e-9)
    assert res.steady["Q(c)"] == pytest.approx(power, rel=1e-9)


def test_checks_11_convection_through_zero_difference_matches_solve_ivp():
    """A body starting below the air, heated, warms through ΔT = 0 (where the law has a zero
    slope) to above it; scipy.integrate.solve_ivp (Radau, rtol 1e-10, atol 1e-10) on the ODE."""
    C, T0, T_air, h, area, n, P = 20.0, 280.0, 300.0, 5.0, 0.04, 0.25, 2.0
    res = run(f"""
fixed air {T_air} K
mass body {C} J/K start {T0} K
heat p body {P} W
convection c body air coefficient {h} W/(m^2*K) area {area} m^2 exponent {n}
transient until 2000 s step 5 s tolerance 1e-7
record T(body) Q(c)
""")
    t = res.time

    def rhs(_, y):
        dt = y[0] - T_air
        return [(P - h * area * dt * abs(dt) ** n) / C]

    ref = solve_ivp(rhs, (0.0, t[-1]), [T0], method="Radau", rtol=1e-10, atol=1e-10, t_eval=t).y[0]
    assert ref[0] < T_air < ref[-1]
    assert np.max(np.abs(res["T(body)"] - ref)) < 1e-3


def test_linear_convection_is_a_link_of_h_times_a():
    """Newton's law of cooling, Q = H·A·ΔT: the same network as a link of conductance H·A."""
    body = """
fixed air 300 K
mass body 3 J/K start 350 K
heat p body step(0 W, 4 W, 20 s)
transient until 120 s step 1 s
record T(body) Q(c)
"""
    conv = run(body + "convection c body air coefficient 25 W/(m^2*K) area 0.004 m^2\n")
    link = run(body + "link c body air 0.1 W/K\n")
    zero = run(body + "convection c body air coefficient 25 W/(m^2*K) area 0.004 m^2 exponent 0\n")
    for res in (conv, zero):
        assert np.array_equal(res.time, link.time)
        for s in ("T(body)", "Q(c)"):
            assert np.allclose(res[s], link[s], rtol=1e-12, atol=1e-12), s


# ---- the netlist ---------------------------------------------------------------------------------
def test_netlist_lines():
    text = write_netlist(netgen.load("""
fixed air 300 K
mass body 3 J/K
heat p body 1 W
radiation r body air emissivity 0.5 area 0.01 m^2
convection c body air coefficient 10 W/(m^2*K) area 0.01 m^2 exponent 0.25
convection lin body air coefficient 10 W/(m^2*K) area 0.02 m^2
steady
"""))
    lines = {ln.split()[0]: ln for ln in text.splitlines() if ln and not ln.startswith(("*", "."))}
    rad, conv, lin = lines["brad_r"], lines["bconv_c"], lines["rconv_lin"]
    assert rad.split()[1:3] == ["t_body", "t_air"] and "I=" in rad
    assert "^" not in rad and "V(t_body)*V(t_body)*V(t_body)*V(t_body)" in rad  # T⁴ as a product
    # ngspice's `^` takes |base|: the non-integer power is only ever taken of a base >= 0.
    assert "^1.25" in conv and "abs(" in conv
    assert lin.split()[1:] == ["t_body", "t_air", repr(1 / (10 * 0.02))]


# ---- CHECKS 12: the exported netlist run by ngspice matches netgen ------------------------------
RADIATING = """
fixed env 300 K
mass body 10 J/K start 420 K
mass shield 4 J/K start 300 K
heat p body step(2 W, 6 W, 50 s)
radiation r body env emissivity 0.8 area 0.01 m^2 view 0.9
radiation rs body shield emissivity 90 % area 5000 mm^2
link l shield env 0.05 W/K
steady
transient until 300 s step 1 s
record T(body) T(shield) Q(r) Q(rs)
"""
CONVECTING = """
fixed air 300 K
mass body 10 J/K start 285 K
heat p body step(2 W, 6 W, 100 s)
convection c body air coefficient 8 W/(m^2*K) area 0.02 m^2 exponent 0.25
convection lin body air coefficient 5 W/(m^2*K) area 0.01 m^2
steady
transient until 400 s step 1 s
record T(body) Q(c) Q(lin)
"""


@pytest.mark.parametrize("text", [RADIATING, CONVECTING], ids=["radiation", "convection"])
def test_checks_12_crosscheck_agrees(ngspice, text):
    rep = crosscheck(netgen.load(text), ngspice)
    assert rep.passed, rep.table()
    assert rep.steady and rep.transient


def _scale_line(tag: str, factor: float):
    """A deliberately wrong netlist: the B source `tag` carries `factor` times its heat."""
    def edit(text: str) -> str:
        line = next(ln for ln in text.splitlines() if ln.startswith(tag + " "))
        head, expr = line.split(" I=", 1)
        return text.replace(line, f"{head} I=({factor}*{expr})")
    return edit


@pytest.mark.parametrize("text, tag, failed", [
    (RADIATING, "brad_r", "T(body)"),
    (CONVECTING, "bconv_c", "T(body)"),
], ids=["radiation", "convection"])
def test_checks_12_a_wrong_netlist_is_caught(ngspice, text, tag, failed):
    rep = crosscheck(netgen.load(text), ngspice, edit=_scale_line(tag, 1.05))
    assert not rep.passed and failed in rep.failed, rep.table()


# ---- bad inputs: located errors, exit code 2 -------------------------------------------------------
HEAD = "fixed env 300 K\nmass m 1 J/K\n"
BAD = [
    ("emissivity above 1", "radiation r m env emissivity 1.2 area 1 m^2\n", 3, 30,
     "an emissivity must be more than 0 and at most 1, not 1.2"),
    ("emissivity zero", "radiation r m env emissivity 0 area 1 m^2\n", 3, 30,
     "an emissivity must be more than 0 and at most 1, not 0"),
    ("emissivity with unit", "radiation r m env emissivity 0.5 K area 1 m^2\n", 3, 30,
     "an emissivity is a plain number, not a value in K"),
    ("view above 1", "radiation r m env emissivity 0.5 area 1 m^2 view 150 %\n", 3, 50,
     "a view factor must be more than 0 and at most 1, not 1.5"),
    ("radiation missing area", "radiation r m env emissivity 0.5\n", 3, 11,
     "radiation `r` needs `area`"),
    ("radiation missing both", "radiation r m env\n", 3, 11, "radiation `r` needs `emissivity` and `area`"),
    ("radiation area unit", "radiation r m env emissivity 0.5 area 1 m\n", 3, 39,
     "a radiating area needs a unit of m^2, not m"),
    ("radiation negative area", "radiation r m env emissivity 0.5 area -1 m^2\n", 3, 39,
     "a radiating area must be positive, not -1 m^2"),
    ("radiation electrical node", "ground g\nradiation r g env emissivity 0.5 area 1 m^2\n", 4, 13,
     "node `g` is electrical"),
    ("convection missing area", "convection c m env coefficient 1 W/(m^2*K)\n", 3, 12,
     "convection `c` needs `area`"),
    ("convection coefficient unit", "convection c m env coefficient 1 W/K area 1 m^2\n", 3, 32,
     "a convection coefficient needs a unit of W/(m^2*K), not W/K"),
    ("convection bare coefficient", "convection c m env coefficient 1 area 1 m^2\n", 3, 32,
     "a convection coefficient needs a unit of W/(m^2*K), not no unit"),
    ("convection negative exponent", "convection c m env coefficient 1 W/(m^2*K) area 1 m^2 exponent -0.25\n",
     3, 64, "a convection exponent may not be negative"),
    ("convection view", "convection c m env coefficient 1 W/(m^2*K) area 1 m^2 view 1\n", 3, 55,
     "`view` is not an attribute of `convection`"),
    ("Q of a resistor", "ground g\nresistor x a g 1 ohm\nrecord Q(x)\n", 5, 8,
     "`Q(x)` needs an element that carries heat: `link`, `heat`, `fixed`, `radiation`, `convection`"),
]


@pytest.mark.parametrize("name, text, line, col, fragment", BAD, ids=[c[0] for c in BAD])
def test_bad_input_is_located(tmp_path, monkeypatch, capsys, name, text, line, col, fragment):
    (tmp_path / "case.etn").write_text(HEAD + text)
    monkeypatch.chdir(tmp_path)
    code = main(["check", "case.etn"])  # the command itself, in this process
    err = capsys.readouterr().err
    assert code == 2, err
    assert "Traceback" not in err
    assert f"case.etn:{line}:{col}: error: " in err, err
    assert fragment in err, err
    assert "^" in err


@pytest.mark.parametrize("text, hint", [
    ("radiation r m env emissivity 1.2 area 1 m^2\n", "hint: it is a fraction of a black body's exchange"),
    ("radiation r m env emissivity 0.5\n", "hint: give the radiating surface: `emissivity 0.9  area 0.01 m^2`"),
    ("convection c m env area 1 m^2\n", "hint: give the surface: `coefficient 10 W/(m^2*K)  area 0.01 m^2`"),
], ids=["emissivity", "radiation-missing", "convection-missing"])
def test_bad_inputs_come_with_hints(tmp_path, monkeypatch, capsys, text, hint):
    (tmp_path / "case.etn").write_text(HEAD + text)
    monkeypatch.chdir(tmp_path)
    assert main(["check", "case.etn"]) == 2
    assert hint in capsys.readouterr().err
