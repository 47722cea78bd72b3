"""Plates (and links) whose conductivity follows temperature: the hand-written equivalent, the
Kirchhoff-transform closed form of a slab, the outside simulator, the exact Jacobian, and the
heat capacity that must stay constant."""
from __future__ import annotations

import numpy as np
import pytest

import netgen
from conftest import jacobian_by_differences
from netgen.cli import main
from netgen.solve.assembly import assemble
from netgen.solve.steady import solve_dc
from netgen.spice.crosscheck import crosscheck
from netgen.spice.netlist import write_netlist

# Invented values: a plate whose conductivity rises 0.4 % per kelvin above 300 K.
K_OF_T = "120 W/(m*K) * (1 + 0.004 * (T - 300 K) / 1 K)"
ROWS, COLS, CAP = 3, 4, 2700 * 900 * 5e-3 * 5e-3 * 2e-3  # ρ·c·W·H·t of one cell, J/K
SURROUNDINGS = """fixed sp.left 400 K
link clamp sp.bottom sink 0.5 K/W * (1 + 0.002 * (T - 300 K) / 1 K)
fixed sink 290 K
heat h sp.r2c3 step(0 W, 6 W, 2 s)
steady
transient until 20 s
"""


def plate(k: str = K_OF_T) -> str:
    return (f"plate sp {ROWS} by {COLS} {{ cell 5 mm  thickness 2 mm  density 2700 kg/m^3\n"
            f"    specific heat 900 J/(kg*K)  conductivity {k}  start 300 K }}\n" + SURROUNDINGS)


def hand_written() -> str:
    """The plate written out as masses and temperature-dependent links, with the plate's names:
    t·H/W = 2 mm between cells, twice that from a cell to an edge (half a cell)."""
    cells = [(i, j) for i in range(1, ROWS + 1) for j in range(1, COLS + 1)]
    out = [f"mass sp.r{i}c{j} {CAP!r} J/K start 300 K" for i, j in cells]
    out += [f"link sp.r{i}c{j}_r{i}c{j + 1} sp.r{i}c{j} sp.r{i}c{j + 1} 2 mm * {K_OF_T}" for i, j in cells if j < COLS]
    out += [f"link sp.r{i}c{j}_r{i + 1}c{j} sp.r{i}c{j} sp.r{i + 1}c{j} 2 mm * {K_OF_T}" for i, j in cells if i < ROWS]
    out += [f"link sp.r{i}c1_left sp.r{i}c1 sp.left 4 mm * {K_OF_T}" for i in range(1, ROWS + 1)]
    out += [f"link sp.r{ROWS}c{j}_bottom sp.r{ROWS}c{j} sp.bottom 4 mm * {K_OF_T}" for j in range(1, COLS + 1)]
    return "\n".join(out) + "\n" + SURROUNDINGS


def run_all(text: str):
    """Every node temperature and every link's heat flow, steady and transient."""
    d = netgen.load(text)
    signals = [f"T({n})" for n in d.nodes] + [f"Q({e.name})" for e in d.elements if e.statement == "link"]
    return netgen.load(text + "record " + " ".join(signals) + "\n").run(), signals


def test_plate_agrees_with_its_hand_written_masses_and_links():
    ours, signals = run_all(plate())
    theirs, _ = run_all(hand_written())
    assert len(signals) == ROWS * COLS + 3 + (ROWS * (COLS - 1) + (ROWS - 1) * COLS + ROWS + COLS + 1)
    for s in signals:
        assert ours.steady[s] == pytest.approx(theirs.steady[s], rel=1e-9, abs=1e-12), s
    np.testing.assert_allclose(ours.time, theirs.time, rtol=1e-12)
    for s in signals:
        np.testing.assert_allclose(ours[s], theirs[s], rtol=1e-9, atol=1e-12, err_msg=s)
    # ... and the temperature dependence is in both: a plate of constant 120 W/(m*K) is cooler
    # in the middle by kelvins, not by round-off.
    constant, _ = run_all(plate("120 W/(m*K)"))
    assert abs(constant.steady["T(sp.r2c3)"] - ours.steady["T(sp.r2c3)"]) > 1.0


def test_plate_links_share_one_block_of_equations():
    """Cell-to-cell links and the half-cell links to the edges differ only in a constant factor,
    so one compiled block holds them all; the clamp (another law) has its own."""
    sys = assemble(netgen.load(plate()))
    n_plate = ROWS * (COLS - 1) + (ROWS - 1) * COLS + ROWS + COLS
    assert sorted(b.size for b in sys.blocks) == [1, n_plate]
    assert sys.G0.nnz > 0  # the constant parts (none of the links) are still stamped linearly


def _strip(n: int, k: str, t1: float, t2: float, length: float = 48e-3) -> dict:
    """A 1-by-N strip of total length `length`, 10 mm wide and 3 mm thick, between two reservoirs."""
    text = (f"plate sp 1 by {n} cell {length / n!r} m by 10 mm  thickness 3 mm  density 8900 kg/m^3  "
            f"specific heat 385 J/(kg*K)  conductivity {k}\n"
            f"fixed sp.left {t1} K\nfixed sp.right {t2} K\nsteady\n"
            "record Q(sp.left) Q(sp.right) Q(sp.r1c1_left) "
            + " ".join(f"T(sp.r1c{j})" for j in range(1, n + 1)) + "\n")
    return netgen.load(text).run().steady


# ---- Steady conduction through a slab whose conductivity is linear in temperature,
# k = k0·(1 + β·(T − T0)): with the Kirchhoff transform U(T) = ∫ k dT the heat flow is
# q = (A/L)·k0·[(T1 − T2) + β/2·((T1 − T0)² − (T2 − T0)²)], and U is linear in x
# (Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, ch. 3, variable conductivity;
# Carslaw & Jaeger, Conduction of Heat in Solids, §1.8). A link with k at the mean of its ends
# carries k(T̄)·ΔT = ∫ k dT exactly when k is linear (the midpoint rule), so the strip of N cells
# is exact at any N: measured, Q and the cell temperatures agree to round-off (≤ 3e-16).
@pytest.mark.parametrize("n", [1, 2, 7, 24])
def test_strip_with_linear_conductivity_matches_the_kirchhoff_closed_form(n):
    k0, beta, t0, t1, t2 = 80.0, 0.006, 300.0, 500.0, 300.0
    area, length = 3e-3 * 10e-3, 48e-3
    s = _strip(n, f"{k0} W/(m*K) * (1 + {beta} * (T - {t0} K) / 1 K)", t1, t2, length)
    q = area / length * k0 * ((t1 - t2) + beta / 2 * ((t1 - t0) ** 2 - (t2 - t0) ** 2))
    assert s["Q(sp.left)"] == pytest.approx(q, rel=1e-12)
    assert s["Q(sp.right)"] == pytest.approx(-q, rel=1e-12)
    assert s["Q(sp.r1c1_left)"] == pytest.approx(-q, rel=1e-12)  # the link's own Q: cell → edge
    U = lambda T: k0 * ((T - t0) + beta / 2 * (T - t0) ** 2)
    for j in range(1, n + 1):
        u = U(t1) + (U(t2) - U(t1)) * (j - 0.5) / n  # U at the cell centre, linear in x
        exact = t0 + (np.sqrt(1 + 2 * beta * u / k0) - 1) / beta
        assert s[f"T(sp.r1c{j})"] == pytest.approx(exact, abs=1e-9)
    # A constant conductivity at the mean temperature would be wrong here by β·((T1+T2)/2 − T0)…
    assert q / (area / length * k0 * (t1 - t2)) == pytest.approx(1 + beta * ((t1 + t2) / 2 - t0))


# ---- The same closed form with a quadratic k = k0·(1 + β·θ + γ·θ²), θ = T − T0:
# q = (A/L)·[U(T1) − U(T2)], U = k0·(θ + β·θ²/2 + γ·θ³/3) (same sources). Now the midpoint
# rule misses k''·ΔT³/24 per link, so the strip converges at second order: measured relative
# errors −3.1e-3, −1.0e-3, −2.9e-4, −7.7e-5, −2.0e-5 at N = 3, 6, 12, 24, 48, each doubling
# dividing the error by 3.09, 3.47, 3.71, 3.85 (3.92 at N = 96), tending to 4.
def test_strip_with_quadratic_conductivity_converges_at_second_order():
    k0, beta, gamma, t0, t1, t2 = 80.0, 0.006, 2e-5, 300.0, 500.0, 300.0
    area, length = 3e-3 * 10e-3, 48e-3
    k = f"{k0} W/(m*K) * (1 + {beta} * (T - {t0} K) / 1 K + {gamma} * (T - {t0} K)^2 / 1 K^2)"
    U = lambda T: k0 * ((T - t0) + beta / 2 * (T - t0) ** 2 + gamma / 3 * (T - t0) ** 3)
    q = area / length * (U(t1) - U(t2))
    errors = []
    for n in (3, 6, 12, 24, 48):
        s = _strip(n, k, t1, t2, length)
        errors.append(s["Q(sp.left)"] / q - 1)
        # The error is exactly the midpoint rule's, summed over the chain of links (half-cell
        # links at the ends): q·L/A = ΔU − k0·γ/12·Σ ΔT³, each ΔT the drop across one link.
        temps = [t1] + [s[f"T(sp.r1c{j})"] for j in range(1, n + 1)] + [t2]
        drops = np.diff(temps)
        assert s["Q(sp.left)"] == pytest.approx(area / length * (U(t1) - U(t2) - k0 * gamma / 12 * np.sum(-drops ** 3)),
                                                rel=1e-12)
    assert all(e < 0 for e in errors) and abs(errors[-1]) < 2.5e-5
    ratios = [a / b for a, b in zip(errors, errors[1:])]
    assert ratios == sorted(ratios) and ratios[0] > 3.0 and 3.8 < ratios[-1] < 4.0


# ---- The outside simulator, ngspice, solving the exported netlist (B sources with I= written
# from the same expression trees) agrees with our solution, steady and transient.
def test_temperature_dependent_plate_passes_the_crosscheck(ngspice):
    d = netgen.load(plate())
    text = write_netlist(d)
    assert text.count("\nblink_") == ROWS * (COLS - 1) + (ROWS - 1) * COLS + ROWS + COLS + 1
    assert "\nrlink_" not in text
    rep = crosscheck(d, ngspice)
    assert rep.passed, rep.table()


def test_a_netlist_that_misses_the_temperature_dependence_is_caught(ngspice):
    """The cross-check is tight enough to see β 10 % off in the plate's links."""
    wrong = lambda text: text.replace("(0.004*(", "(0.0044*(")
    d = netgen.load(plate())
    assert wrong(write_netlist(d)) != write_netlist(d)
    rep = crosscheck(d, ngspice, edit=wrong)
    assert not rep.passed and "T(sp.r2c3)" in rep.failed, rep.table()


# ---- The assembled Jacobian is the exact derivative of f: central differences of F agree.
def test_assembled_jacobian_matches_finite_differences():
    sys = assemble(netgen.load(plate()))
    x = solve_dc(sys, 0.0, impose=True) + np.random.default_rng(3).normal(0, 5.0, sys.n)
    state = sys.switch_state(0.0)
    J = sys.J(x, state).toarray()
    np.testing.assert_allclose(J, jacobian_by_differences(sys, x, state), rtol=1e-6, atol=1e-7)
    # The temperature dependence is in J: it differs from the conductances at 300 K.
    assert np.abs(J - sys.G0.toarray()).max() > 1e-3


# ---- Reading: what may and may not follow T, with the error where it was written.
def _check(tmp_path, capsys, text: str) -> tuple[int, str]:
    path = tmp_path / "bad.etn"
    path.write_text(text)
    code = main(["check", str(path)])
    return code, capsys.readouterr().err


MATERIAL_PLATE = ("plate sp 2 by 2 cell 5 mm  thickness 2 mm  density {rho}  specific heat {cp}  "
                  "conductivity 120 W/(m*K)\nfixed sp.left 300 K\n")
RHO, CP, WARMER = "2700 kg/m^3", "900 J/(kg*K)", " * (1 + 1e-4 * (T - 300 K) / 1 K)"


@pytest.mark.parametrize("line, word", [
    (MATERIAL_PLATE.format(rho=RHO + WARMER, cp=CP), "density"),
    (MATERIAL_PLATE.format(rho=RHO, cp=CP + WARMER), "specific heat"),
    ("plate sp 2 by 2 capacity 0.1 J/K" + WARMER + " conductance 0.3 W/K\nfixed sp.left 300 K\n", "capacity"),
], ids=["density", "specific-heat", "capacity"])
def test_temperature_dependent_heat_capacity_is_refused_where_it_is_written(tmp_path, capsys, line, word):
    code, err = _check(tmp_path, capsys, line)
    assert code == 2
    value = RHO if word == "density" else CP if word == "specific heat" else "0.1 J/K"
    col = line.index(value) + 1
    assert f"bad.etn:1:{col}: error: a plate's heat capacity is constant: `{word}` may not depend on the " \
           "temperature `T`" in err
    assert "C matrix" in err and "only the conductivity (or `conductance`) may follow `T`" in err


@pytest.mark.parametrize("text, message", [
    ("plate sp 2 by 2 cell 5 mm  thickness 2 mm * T / 300 K  density 2700 kg/m^3  specific heat 900 J/(kg*K)  "
     "conductivity 120 W/(m*K)\n", "`thickness` may not depend on the temperature `T`"),
    ("fixed a 300 K\nfixed b 310 K\nlink l a b 2 W/K * (1 + time / 1 s)\n",
     "a link may depend on the temperature `T`, not on `time`"),
    ("fixed a 300 K\nfixed b 310 K\nlink l a b 2 W/K * (1 - 0.01 * (T - 150 K) / 1 K)\n",
     "a link's conductance must be positive, but is -1 W/K at T = 300 K"),
    ("let T = 2 W/K\nfixed a 300 K\nfixed b 310 K\nlink l a b T * (1 + 0.001 * (T - 300 K) / 1 K)\n",
     "`T` in a link is the temperature, but a parameter `T` is also defined (line 1)"),
    ("fixed a 300 K\nfixed b 310 K\nlink l a b T\n", "a link needs a unit of W/K or K/W, not K"),
    ("plate sp 2 by 2 capacity 0.1 J/K conductance 0.3 W/K by 0.2 W/K * (T - 400 K) / 1 K\nfixed sp.top 300 K\n",
     "the conductance between cells one above the other must be positive, but is -20 W/K at T = 300 K"),
], ids=["thickness", "time", "negative-at-300K", "parameter-T", "bare-T", "negative-G2"])
def test_temperature_dependent_values_are_checked(tmp_path, capsys, text, message):
    code, err = _check(tmp_path, capsys, text)
    assert code == 2 and message in err, err


def test_temperature_dependent_link_statement_reads_its_law():
    """`T` in a link is the mean of its ends: K/W laws become conductances, Q follows G(T̄)·ΔT."""
    res = netgen.load("fixed a 400 K\nfixed b 300 K\n"
                      "link g a b 2 W/K * (1 + 0.004 * (T - 300 K) / 1 K)\n"
                      "link r a b 0.5 K/W * (1 + 0.004 * (T - 300 K) / 1 K)\n"
                      "steady\nrecord Q(g) Q(r) Q(a)\n").run().steady
    assert res["Q(g)"] == pytest.approx(2 * 1.2 * 100, rel=1e-12)  # T̄ = 350 K
    assert res["Q(r)"] == pytest.approx(100 / (0.5 * 1.2), rel=1e-12)
    assert res["Q(a)"] == pytest.approx(res["Q(g)"] + res["Q(r)"], rel=1e-12)
