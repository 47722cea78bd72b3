"""The commands end to end: exit codes, located errors, written files."""
import csv
import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
COOLER = ROOT / "examples" / "detector_cooler.etn"


def netgen(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "netgen.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, timeout=120)


def test_check_prints_counts():
    r = netgen("check", COOLER)
    assert r.returncode == 0, r.stderr
    assert "nodes: 6" in r.stdout and "elements: 6" in r.stdout


def test_run_writes_csv_and_summary(tmp_path):
    r = netgen("run", COOLER, "--out", tmp_path)
    assert r.returncode == 0, r.stderr
    rows = list(csv.reader(open(tmp_path / "transient.csv")))
    assert rows[0][0] == "time" and "T(die)" in rows[0]
    assert float(rows[1][0]) == 0.0 and float(rows[-1][0]) == pytest.approx(300.0)
    summary = json.loads((tmp_path / "summary.json").read_text())
    # Sink steady temperature with the drive off at t = 0: room + chip heat through the
    # module conductance and the fins in series, 0.3 W × (1/2.2 W/K) (series resistances).
    assert summary["steady"]["T(sink)"] == pytest.approx(297.15 + 0.3 / 2.2, rel=1e-12)
    assert "T(die)" in summary["transient"]


def test_set_overrides_a_parameter(tmp_path):
    f = tmp_path / "p.etn"
    f.write_text("let P = 1 W\nmass m 1 J/K\nfixed r 300 K\nheat h m P\nlink l m r 2 W/K\nsteady\n")
    r = netgen("run", f, "--set", "P=3W", "--out", tmp_path)
    assert r.returncode == 0, r.stderr
    assert json.loads((tmp_path / "summary.json").read_text())["steady"]["T(m)"] == pytest.approx(301.5)
    bad = netgen("run", f, "--set", "P=3 K")
    assert bad.returncode == 2 and "P" in bad.stderr and "Traceback" not in bad.stderr
    unknown = netgen("run", f, "--set", "Q=3 W")
    assert unknown.returncode == 2 and "no parameter `Q`" in unknown.stderr


def test_failed_expectation_exits_1(tmp_path):
    f = tmp_path / "e.etn"
    f.write_text("mass m 1 J/K\nfixed r 300 K\nheat h m 1 W\nlink l m r 2 W/K\nsteady\n"
                 "expect steady T(m) < 300.2 K\n")
    r = netgen("run", f)
    assert r.returncode == 1
    assert "FAIL" in r.stdout and "300.5" in r.stdout


@pytest.mark.parametrize("text, line, col, fragment", [
    ("mass m 1 J/K\nlnk l m r 1 W/K\n", 2, 1, "did you mean `link`"),
    ("mass m 1 J/K\nfixed r 300 K\nlink l m r 1 W/Q\n", 3, 16, "unknown unit `Q`"),
    ("mass m 1 J/K start 20 degC\nlink l m r 1 W\nfixed r 300 K\n", 2, 12, "W/K or K/W"),
    ("ground g\nresistor r a g 1 ohm\nresistor q a b 1 mOhm\n", 3, 18, "did you mean `mohm`"),
    ("let x = 1 K\nlet x = 2 K\n", 2, 5, "already defined"),
    ("resistor r a b 1 ohm\n", 1, 12, "no path to a ground"),
    ("mass m 1 J/K\nlink l m n 1 W/K\nsteady\n", 3, 1, "no reservoir"),
    ("mass m 1 J/K\nfixed r 300 K\nlink l m r 1 W/K\nrecord T(q)\n", 4, 8, "unknown node `q`"),
    ("ground g\nresistor m a g 1 ohm\nmass a 1 J/K\n", 3, 6, "is electrical"),
])
def test_errors_are_located_and_exit_2(tmp_path, text, line, col, fragment):
    f = tmp_path / "bad.etn"
    f.write_text(text)
    r = netgen("check", f)
    assert r.returncode == 2
    assert f"bad.etn:{line}:{col}: error:" in r.stderr, r.stderr
    assert fragment in r.stderr
    assert "^" in r.stderr and "Traceback" not in r.stderr


def test_missing_file_and_bad_bytes(tmp_path):
    r = netgen("check", tmp_path / "none.etn")
    assert r.returncode == 2 and "cannot read" in r.stderr
    f = tmp_path / "latin.etn"
    f.write_bytes(b"mass m 1 J/K\n# caf\xe9\n")
    r = netgen("check", f)
    assert r.returncode == 2 and "latin.etn:2:6" in r.stderr and "UTF-8" in r.stderr


def test_matrices_are_matrix_market(tmp_path):
    import scipy.io

    r = netgen("matrices", COOLER, "-o", tmp_path)
    assert r.returncode == 0, r.stderr
    G = scipy.io.mmread(str(tmp_path / "G.mtx"))
    C = scipy.io.mmread(str(tmp_path / "C.mtx"))
    names = (tmp_path / "unknowns.txt").read_text().split("\n")
    assert G.shape == C.shape == (len([n for n in names if n]),) * 2
    i = [n.split("\t")[1] for n in names if n].index("T(die)")
    assert C.toarray()[i, i] == pytest.approx(0.45)


def test_no_command_is_usage_error():
    r = netgen()
    assert r.returncode == 2
    r = netgen("frobnicate", COOLER)
    assert r.returncode == 2 and "Traceback" not in r.stderr
