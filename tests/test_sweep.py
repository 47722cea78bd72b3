"""`netgen sweep`: the grid, its files, and the best point refined by Brent's bounded method.

Sources: CHECKS.md 5 (best COP of a cooler with both sides held: I_opt = S·ΔT/(R·(√(1+Z·Tm) − 1)),
COP_max; Rowe (ed.), CRC Handbook of Thermoelectrics) and 6 (a generator's matched load R_L = R
gives P_max = (S·ΔT)²/(4R); Ioffe; CRC Handbook of Thermoelectrics).
"""
import csv
import json
import math

import pytest

import designs
from netgen.cli import main

COOLER = designs.cooler("record Q(m.a) P(m)\nexpect steady Q(m.a) > 1 W")
GENERATOR = designs.generator()


def _write(tmp_path, text, name="design.etn"):
    path = tmp_path / name
    path.write_text(text)
    return path


def _main(*args):
    try:
        return main([str(a) for a in args])
    except SystemExit as e:
        return e.code


def test_best_cop_current_of_a_held_cooler(tmp_path, capsys):
    """CHECKS 5 (CRC Handbook of Thermoelectrics): the refined best current within 0.1 % of
    I_opt, and the COP there equal to COP_max."""
    S, R, K, Tc, Th = 0.05, 2.0, 0.5, 280.0, 300.0
    Z, Tm, dT = S * S / (R * K), 0.5 * (Tc + Th), Th - Tc
    root = math.sqrt(1 + Z * Tm)
    i_opt = S * dT / (R * (root - 1))
    cop_max = (Tc / dT) * (root - Th / Tc) / (root + 1)
    f = _write(tmp_path, COOLER)
    code = _main("sweep", f, "--vary", "I=0.5A..3A:11", "--best", "max", "COP(m)", "--out", tmp_path / "o", "--jobs", 2)
    out = capsys.readouterr().out
    assert code == 0
    best = json.loads((tmp_path / "o" / "sweep.json").read_text())["best"]
    assert best["parameters"]["I"] == pytest.approx(i_opt, rel=1e-3)
    assert best["value"] == pytest.approx(cop_max, rel=1e-6)
    assert best["refined"] is True
    assert f"best: I = {best['parameters']['I']:.6g} A, COP(m) = {best['value']:.6g}" in out
    with open(tmp_path / "o" / "sweep.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert list(rows[0])[:2] == ["I", "COP(m)"]
    assert [float(r["I"]) for r in rows] == pytest.approx([0.5 + 0.25 * k for k in range(11)])
    # CHECKS 3 (CRC Handbook): Qc = S·I·Tc − ½I²R − K·ΔT at each point of the grid.
    for r in rows:
        i = float(r["I"])
        assert float(r["Q(m.a)"]) == pytest.approx(S * i * Tc - 0.5 * i * i * R - K * dT, abs=1e-9)
        assert float(r["measured@10"]) == float(r["Q(m.a)"])
        assert r["pass@10"] == ("1.0" if float(r["Q(m.a)"]) > 1 else "0.0")


def test_best_load_of_a_generator_is_its_own_resistance(tmp_path, capsys):
    """CHECKS 6 (Ioffe; CRC Handbook of Thermoelectrics): P(load) is largest at R_L = R, where it
    is (S·ΔT)²/(4R)."""
    S, R, dT = 0.04, 1.5, 60.0
    f = _write(tmp_path, GENERATOR)
    code = _main("sweep", f, "--vary", "RL=0.2ohm..5ohm:9", "--best", "max", "P(load)", "--out", tmp_path, "--jobs", 1)
    assert code == 0
    best = json.loads((tmp_path / "sweep.json").read_text())["best"]
    assert best["parameters"]["RL"] == pytest.approx(R, rel=1e-3)
    assert best["value"] == pytest.approx((S * dT) ** 2 / (4 * R), rel=1e-6)
    assert "best: RL = " in capsys.readouterr().out


def test_a_grid_of_two_parameters_with_a_log_axis(tmp_path, capsys):
    """Two --vary make a grid (the last varying fastest); --log spaces values evenly in log."""
    f = _write(tmp_path, COOLER.replace("fixed hot 300 K", "let Th = 300 K\nfixed hot Th"))
    code = _main("sweep", f, "--vary", "I=1A..2A:3", "--vary", "Th=290K..310K:2", "--out", tmp_path,
                 "--jobs", 1, "--json")
    doc = json.loads(capsys.readouterr().out)
    assert code == 0
    assert [(r["I"], r["Th"]) for r in doc["rows"]] == [(1.0, 290.0), (1.0, 310.0), (1.5, 290.0), (1.5, 310.0),
                                                        (2.0, 290.0), (2.0, 310.0)]
    code = _main("sweep", f, "--vary", "I=0.1A..10A:3", "--log", "I", "--out", tmp_path, "--jobs", 1, "--json")
    doc = json.loads(capsys.readouterr().out)
    assert [r["I"] for r in doc["rows"]] == pytest.approx([0.1, 1.0, 10.0])


@pytest.mark.parametrize("args, message", [
    (["--vary", "I=1A"], "expected NAME=FROM..TO[:COUNT]"),
    (["--vary", "I=1A..2A:x"], "is not a whole number"),
    (["--vary", "J=1A..2A"], "the design has no parameter `J`"),
    (["--vary", "I=1K..2K"], "is in A"),
    (["--vary", "I=0A..2A", "--log", "I"], "log-spaced"),
    (["--vary", "I=1A..2A", "--log", "R"], "`R` is not varied"),
    (["--vary", "I=1A..2A", "--best", "max", "COP(n)"], "gives no column `COP(n)`"),
    (["--vary", "I=1A..2A", "--best", "most", "COP(m)"], "expected max or min"),
    (["--vary", "I=1A..2A", "--jobs", "0"], "--jobs 0"),
], ids=["shape", "count", "unknown", "unit", "log-zero", "log-unvaried", "best-column", "best-goal", "jobs"])
def test_sweep_input_errors_exit_2(tmp_path, capsys, args, message):
    f = _write(tmp_path, COOLER)
    assert _main("sweep", f, *args, "--out", tmp_path) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_a_failed_point_is_a_row_and_the_sweep_goes_on(tmp_path, capsys):
    """A negative heat capacity fails its run with a located error: that row says so, the others
    are there."""
    f = _write(tmp_path, "let C = 1 J/K\nmass m C start 310 K\nfixed amb 300 K\nlink l m amb 1 W/K\n"
                         "transient until 2 s\nrecord T(m)\n")
    assert _main("sweep", f, "--vary", "C=-1J/K..1J/K:3", "--out", tmp_path, "--jobs", 2) == 0
    with open(tmp_path / "sweep.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["C"] for r in rows] == ["-1.0", "0.0", "1.0"]
    assert rows[0]["error"] and rows[1]["error"] and not rows[2]["error"]
    # CHECKS 1 (Incropera & DeWitt, lumped capacitance): θ(t)/θ₀ = exp(−t/(R·C)) at t = 2 s.
    assert float(rows[2]["final T(m)"]) == pytest.approx(300 + 10 * math.exp(-2.0), abs=1e-3)
    assert "2 of 3 runs failed" in capsys.readouterr().err
