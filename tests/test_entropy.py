"""Entropy and energy as signals (`S(total)`, `E(total)`), and the audits that read the same
terms: electrical dissipation in the entropy, each mass's own energy balance, the printed sign."""
from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import solve_ivp

import netgen
from netgen.analyses import audit_waveforms
from netgen.checks.audits import energy_audit, entropy_audit, inflow, needed_signals
from netgen.cli import main
from netgen.solve.assembly import assemble
from netgen.solve.signals import SignalEval
from netgen.solve.steady import solve_dc
from netgen.solve.transient import integrate

# A body on a module closed through a coil and a resistor (values chosen for the test).
S, R, K, C, L, RX, T_BATH, T_START = 0.055, 1.6, 0.6, 0.4, 2.2, 0.05, 298.15, 328.15
LOOP = f"""
fixed bath {T_BATH} K
mass body {C} J/K start {T_START} K
ground p
thermoelectric tec pins p n sides body bath {{ seebeck {S} V/K resistance {R} ohm conductance {K} W/K }}
inductor coil n x {L} H start 0 A
resistor leads x p {RX} ohm
transient until 15 s step 0.01 s tolerance 1e-7
record T(body) I(coil) S(total) E(total)
"""


def loop_reference(times):
    """CHECKS 11 (scipy solve_ivp, Radau, tight tolerances) on the loop written directly as ODEs
    from the module's equations (CHECKS 3, Goldsmid): C·dT/dt = −Q_a, L·dI/dt = S·(T − T_bath) −
    (R + R_leads)·I, with the entropy produced as a third state, summed where it arises (second
    law, common practice): inside the module Q_b/T_bath − Q_a/T, and in the leads, whose heat goes
    to the surroundings at the bath temperature, R_leads·I²/T_bath."""
    def rhs(t, y):
        Ta, I, _ = y
        qa = S * Ta * I - 0.5 * R * I * I + K * (Ta - T_BATH)
        qb = S * T_BATH * I + 0.5 * R * I * I + K * (Ta - T_BATH)
        return [-qa / C, (S * (Ta - T_BATH) - (R + RX) * I) / L, qb / T_BATH - qa / Ta + RX * I * I / T_BATH]

    sol = solve_ivp(rhs, (0, times[-1]), [T_START, 0.0, 0.0], method="Radau", rtol=1e-12,
                    atol=[1e-10, 1e-13, 1e-16], t_eval=times)
    assert sol.success
    return sol.y


@pytest.fixture(scope="module")
def loop():
    res = netgen.run(netgen.load(LOOP))
    return res, loop_reference(res.time)


def test_entropy_produced_matches_an_independent_integral(loop):
    """Measured: 4.9e-5 relative at the end and over the whole run (the issue asks 1e-4)."""
    res, (_, _, s_ref) = loop
    ours = res["S(total)"]
    assert ours[0] == 0.0
    assert np.max(np.abs(ours - s_ref)) < 1e-4 * s_ref[-1]
    # Without the leads' dissipation (R·I²/T_bath) the total would be 0.5 % lower: it is in.
    leads = RX * np.trapezoid(res["I(coil)"] ** 2, res.time) / T_BATH
    assert leads > 20 * 1e-4 * s_ref[-1]


def test_entropy_produced_never_decreases(loop):
    """Second law. Near equilibrium the trapezoid rule's error in ∫Q/T outweighs the true
    production (measured: −1.7e-14 J/K per step near 11 s, 9e-12 of the total); such steps,
    within `audit entropy`'s margin, add nothing, so the signal never goes down."""
    res, _ = loop
    ours = res["S(total)"]
    assert np.all(np.diff(ours) >= 0)
    assert ours[-1] > 0


def test_energy_stored_is_the_masses_and_coils(loop):
    """E(total) = C·(T − T_start) + ½·L·I² (first law, common practice), at every point."""
    res, _ = loop
    expected = C * (res["T(body)"] - T_START) + 0.5 * L * res["I(coil)"] ** 2
    assert np.allclose(res["E(total)"], expected, rtol=0, atol=1e-12)


def test_dissipation_without_a_reservoir_lands_at_300_K():
    """RC discharge (Nilsson & Riedel, natural response of an RC circuit): the resistor
    dissipates ½·C·V0² in all; with no reservoir it lands in surroundings at 300 K, so the
    entropy produced approaches ½·C·V0²/300 K, here after 20 time constants."""
    res = netgen.run(netgen.load("""
ground g
capacitor c a g 2 mF start 10 V
resistor r a g 50 ohm
transient until 2 s step 1 ms tolerance 1e-7
record V(a) S(total) E(total)
audit entropy
"""))
    assert res["S(total)"][-1] == pytest.approx(0.5 * 2e-3 * 100 / 300.0, rel=1e-4)
    assert res["E(total)"][-1] == pytest.approx(-0.5 * 2e-3 * 100, rel=1e-6)
    assert res.passed


def test_steady_state_has_nothing_produced_so_far():
    res = netgen.run(netgen.load("fixed a 300 K\nmass m 1 J/K\nheat h m 1 W\nlink l m a 1 W/K\nsteady\n"
                                 "record S(total) E(total) T(m)\n"))
    assert res.steady["S(total)"] == 0.0 and res.steady["E(total)"] == 0.0


@pytest.mark.parametrize("text, message", [
    ("record S(body)", r"write S\(total\)"),
    ("record E(x, y)", r"write E\(total\)"),
], ids=["S-of-a-node", "E-of-two"])
def test_only_total_is_a_name_for_them(text, message):
    with pytest.raises(netgen.NetgenError, match=message):
        netgen.load(LOOP + text + "\n")


def test_entropy_in_csv_and_plot(tmp_path, capsys):
    path = tmp_path / "loop.etn"
    path.write_text(LOOP)
    assert main(["run", str(path), "--out", str(tmp_path / "out"), "--plot", str(tmp_path / "plots"), "--quiet"]) == 0
    header = (tmp_path / "out" / "transient.csv").read_text().splitlines()[0]
    assert "S(total)" in header and "E(total)" in header
    assert any("S" in p.name and p.suffix == ".png" for p in (tmp_path / "plots").iterdir())
    assert "S(total)" in capsys.readouterr().out


# ---- the audits ----------------------------------------------------------------------------------
TWO_BODIES = """
fixed room 300 K
mass big 1000 J/K start 300 K
mass small 1 J/K start 300 K
heat h big 100 W
link a big room 0.2 W/K
link b big small 0.05 W/K
transient until 60 s step 0.5 s
"""


def _audit_waveforms(text):
    d = netgen.load(text)
    sys = assemble(d)
    tr = d.transient
    wf = integrate(sys, solve_dc(sys, 0.0, impose=True), tr.until, tr.step, tr.tolerance, None)
    w = audit_waveforms(d, needed_signals(d), (wf.x, wf.xdot, wf.time, wf.left_rows), SignalEval(d, sys))
    return d, wf.time, w


def test_energy_audit_catches_one_small_body_off_by_one_percent():
    """First law per mass (common practice): C·ΔT of each mass is the heat that flowed into it.
    The small body's energy change doctored by 1 % is 3.4e-6 of all the run's energy terms (it
    would pass a whole-run balance), but 1 % of the heat through that body: it fails."""
    d, t, w = _audit_waveforms(TWO_BODIES)
    ok = energy_audit(d, t, w, w)
    assert ok.passed and ok.measured < 1e-4
    bad = dict(w)
    T = w["T(small)"]
    bad["T(small)"] = T[0] + 1.01 * (T - T[0])
    result = energy_audit(d, t, bad, bad)
    assert not result.passed
    assert result.measured == pytest.approx(0.01, rel=0.05)
    share = float(result.detail.split("imbalance ")[1].split(", ")[1].split(" %")[0])
    assert share < 0.005  # in % of all terms: what the whole-run balance alone would have judged
    assert "of the heat through mass `small`" in result.detail


def test_heat_into_a_mass_comes_from_the_equations_not_the_temperatures():
    d, t, w = _audit_waveforms(TWO_BODIES)
    q = w[inflow("small")]
    expected = 0.05 * (w["T(big)"] - w["T(small)"])  # the link's Fourier law, the only path in
    assert np.allclose(q, expected, rtol=1e-9, atol=1e-12)


def test_audit_lines_print_their_comparison(tmp_path, capsys):
    path = tmp_path / "loop.etn"
    path.write_text(LOOP + "audit energy\naudit entropy\n")
    assert main(["run", str(path), "--quiet"]) == 0
    out = capsys.readouterr().out
    energy = next(line for line in out.splitlines() if "audit energy" in line)
    entropy = next(line for line in out.splitlines() if "audit entropy" in line)
    assert "limit ≤ 0.5 %" in energy and "limit ≥ -0.002" in entropy


def test_entropy_audit_counts_the_leads():
    """The audit's total is the same S(total): module, reservoir and the leads' dissipation."""
    d, t, w = _audit_waveforms(LOOP)
    result = entropy_audit(d, t, w, w)
    total = float(result.detail.split("total production ")[1].split(" J/K")[0])
    s_ref = loop_reference(t)[2]
    assert result.passed and total == pytest.approx(s_ref[-1], rel=1e-4)
