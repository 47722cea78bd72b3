"""The Python API of studies (`netgen.sweep`, `netgen.tolerance`), `Results.to_frame`, short
reprs, `py.typed`; `--json` on check, run and verify; `verify -j N` in the serial order.

Source of the values checked: CHECKS.md 1 (Incropera & DeWitt, lumped capacitance) and 6 (Ioffe;
CRC Handbook of Thermoelectrics: P_load = (S·ΔT)²·R_L/(R + R_L)²).
"""
import importlib.resources
import json
import math
import re

import numpy as np
import pytest

import designs
import netgen
from netgen.cli import main

GENERATOR = designs.generator("record P(load)\nexpect steady P(load) > 0.9 W")
S, R, DT = designs.GENERATOR_S, designs.GENERATOR_R, designs.GENERATOR_DT

COOLING = """
let R = 2 K/W spread normal 5 %
mass m 5 J/K start 350 K
fixed amb 300 K
link l m amb R
transient until 10 s
record T(m)
expect final T(m) < 318.5 K
"""


def _p_load(rl):
    return (S * DT) ** 2 * rl / (R + rl) ** 2


def _column(table, name):
    return np.asarray(table[name], dtype=float)


def test_sweep_from_python_with_numbers_and_quantities():
    seen = []
    t = netgen.sweep(GENERATOR, {"RL": (0.5, "3 ohm", 6)}, best=("max", "P(load)"),
                     progress=lambda done, total, failed: seen.append((done, total, failed)))
    assert _column(t, "RL") == pytest.approx(np.linspace(0.5, 3.0, 6))
    assert _column(t, "P(load)") == pytest.approx([_p_load(x) for x in np.linspace(0.5, 3, 6)], rel=1e-9)
    assert _column(t, "pass@10") == pytest.approx([float(_p_load(x) > 0.9) for x in np.linspace(0.5, 3, 6)])
    best = t["best"] if isinstance(t, dict) else t.attrs["best"]
    assert best["parameters"]["RL"] == pytest.approx(R, rel=1e-3)
    assert seen[-1] == (6, 6, 0) and len(seen) == 6


def test_tolerance_from_python_is_reproducible():
    a = netgen.tolerance(COOLING, 6, seed=5)
    b = netgen.tolerance(COOLING, 6, seed=5, jobs=2)
    assert list(a["run"]) == list(range(6))
    assert _column(a, "R") == pytest.approx(_column(b, "R"), rel=0, abs=0)
    # CHECKS 1: each run's end temperature from its own drawn R.
    expected = [300 + 50 * math.exp(-10 / (5 * r)) for r in _column(a, "R")]
    assert _column(a, "final T(m)") == pytest.approx(expected, abs=2e-3)
    y = (a["yield"] if isinstance(a, dict) else a.attrs["yield"])[0]
    assert y["yield"] == np.mean(np.array(expected) < 318.5)


def test_api_errors_are_netgen_errors():
    with pytest.raises(netgen.NetgenError, match="vary RL"):
        netgen.sweep(GENERATOR, {"RL": (1,)})
    with pytest.raises(netgen.NetgenError, match="no parameter has a spread"):
        netgen.tolerance(GENERATOR, 3)


def test_results_to_frame_and_short_reprs():
    d = netgen.load(COOLING)
    assert repr(d) == "<Design <text>: 2 nodes, 2 elements, transient>"
    res = d.run()
    assert re.fullmatch(r"<Results <text>: transient of \d+ points to 10 s, 1 signal, 1 of 1 checks pass>", repr(res))
    f = res.to_frame()
    assert list(f.keys())[:2] == ["time", "T(m)"]
    assert float(np.asarray(f["T(m)"])[-1]) == pytest.approx(300 + 50 * math.exp(-1.0), abs=2e-3)
    steady = netgen.load(GENERATOR).run().to_frame()
    assert float(np.asarray(steady["P(load)"])[0]) == pytest.approx(_p_load(1.0), rel=1e-9)


def test_the_package_says_it_is_typed():
    assert (importlib.resources.files("netgen") / "py.typed").is_file()


def _main(capsys, *args):
    try:
        code = main([str(a) for a in args])
    except SystemExit as e:
        code = e.code
    out = capsys.readouterr()
    return code, out.out, out.err


def test_json_on_check_and_run(tmp_path, capsys):
    f = tmp_path / "g.etn"
    f.write_text(GENERATOR)
    code, out, _ = _main(capsys, "check", f, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["parameters"]["RL"] == {"value": 1.0, "unit": "ohm"}
    assert {"name": "load", "kind": "resistor", "line": 7} in doc["elements"]
    code, out, _ = _main(capsys, "run", f, "--json")
    doc = json.loads(out)
    assert code == 0 and doc["passed"] is True
    assert doc["steady"]["P(load)"] == pytest.approx(_p_load(1.0), rel=1e-9)


def _designs(tmp_path):
    paths = []
    for k, rl in enumerate(["0.5 ohm", "1.5 ohm", "2 ohm", "9 ohm"]):
        p = tmp_path / f"d{k}.etn"
        p.write_text(GENERATOR.replace("let RL = 1 ohm", f"let RL = {rl}"))
        paths.append(p)
    return paths


def test_verify_in_parallel_prints_in_the_serial_order(tmp_path, capsys):
    _designs(tmp_path)
    serial = _main(capsys, "verify", tmp_path)
    parallel = _main(capsys, "verify", tmp_path, "-j", 2)

    def plain(text):
        return re.sub(r"\[\d+\.\d s\]", "[time]", text)

    assert serial[0] == parallel[0] == 1  # 0.5 ohm and 9 ohm give less than 0.9 W
    assert plain(serial[1]) == plain(parallel[1])
    assert plain(serial[1]).index("d0.etn") < plain(serial[1]).index("d3.etn")


def test_verify_json(tmp_path, capsys):
    _designs(tmp_path)
    code, out, _ = _main(capsys, "verify", tmp_path, "--json", "-j", 2)
    doc = json.loads(out)
    assert code == 1 and doc["exit"] == 1
    assert [d["file"].rsplit("/", 1)[-1] for d in doc["designs"]] == ["d0.etn", "d1.etn", "d2.etn", "d3.etn"]
    assert [d["status"] for d in doc["designs"]] == ["FAIL", "pass", "pass", "FAIL"]
    assert doc["designs"][1]["expectations"][0]["measured"] == pytest.approx(_p_load(1.5), rel=1e-9)


def test_a_cluster_without_dask_is_an_input_error(tmp_path, capsys, monkeypatch):
    """Without the cluster extra: a clear message naming it, exit 2, no traceback."""
    import sys

    monkeypatch.setitem(sys.modules, "distributed", None)  # `import distributed` now fails
    f = tmp_path / "cool.etn"
    f.write_text(COOLING)
    code, _, err = _main(capsys, "tolerance", f, "--runs", 2, "--cluster", "local", "--out", tmp_path)
    assert code == 2
    assert "needs Dask distributed" in err and ".[cluster]" in err and "Traceback" not in err
