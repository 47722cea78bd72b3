"""The commands end to end: exit codes, located errors, written files. They run `main(argv)` in
this process; `test_the_installed_command_as_a_process` runs the real command, for packaging."""
import csv
import json
import shutil
import subprocess
import sys
from pathlib import Path
from typing import NamedTuple

import pytest

from netgen.cli import main

ROOT = Path(__file__).resolve().parents[1]
COOLER = ROOT / "examples" / "detector_cooler.etn"


class Ran(NamedTuple):
    returncode: int
    stdout: str
    stderr: str


@pytest.fixture
def netgen(capsys):
    """`netgen ARGS...` in-process: the exit code (argparse's own errors leave through SystemExit,
    as they do from the installed command) and what was printed to stdout and stderr."""
    def run(*args):
        try:
            code = main([str(a) for a in args])
        except SystemExit as e:
            code = e.code
        out = capsys.readouterr()
        return Ran(code, out.out, out.err)
    return run


def _installed_netgen() -> str:
    """The `netgen` script pip installed beside this Python (the project's entry point)."""
    exe = shutil.which("netgen", path=str(Path(sys.executable).parent)) or shutil.which("netgen")
    if exe is None:
        pytest.fail("no `netgen` command beside the Python running the tests: install the project "
                    "(python -m pip install -e \".[test]\")")
    return exe


def test_the_installed_command_as_a_process(tmp_path):
    """Packaging: the installed `netgen` entry point and `python -m netgen.cli` run as processes;
    exit codes 0 and 2, results on stdout, errors on stderr and nothing else on either. (The
    `python -m` runs are the ones that exit before reading a design: each full run costs a second.)"""
    def process(*argv):
        return subprocess.run([*map(str, argv)], capture_output=True, text=True, timeout=120)

    netgen_exe = _installed_netgen()
    ok = process(netgen_exe, "check", COOLER)
    assert ok.returncode == 0, ok.stderr
    assert "nodes: 6" in ok.stdout and "error" not in ok.stderr
    bad = tmp_path / "bad.etn"
    bad.write_text("mass m 1 J/K\nlnk l m r 1 W/K\n")
    r = process(netgen_exe, "check", bad)
    assert r.returncode == 2 and r.stdout == ""
    assert "bad.etn:2:1: error:" in r.stderr and "did you mean `link`" in r.stderr and "Traceback" not in r.stderr
    version = process(sys.executable, "-m", "netgen.cli", "--version")
    assert version.returncode == 0 and version.stdout.startswith("netgen ") and version.stderr == ""
    for exe in ([netgen_exe], [sys.executable, "-m", "netgen.cli"]):
        usage = process(*exe, "frobnicate", COOLER)
        assert usage.returncode == 2 and usage.stdout == "" and "invalid choice" in usage.stderr


def test_check_prints_counts(netgen):
    r = netgen("check", COOLER)
    assert r.returncode == 0, r.stderr
    assert "nodes: 6" in r.stdout and "elements: 6" in r.stdout
    # The kinds in the user's words, not the class names ("currentsource").
    assert "(1 current source, 1 fixed, 1 heat, 1 link, 1 resistor, 1 thermoelectric)" in r.stdout


def test_run_writes_csv_and_summary(netgen, tmp_path):
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


def test_set_overrides_a_parameter(netgen, tmp_path):
    f = tmp_path / "p.etn"
    f.write_text("let P = 1 W\nmass m 1 J/K\nfixed r 300 K\nheat h m P\nlink l m r 2 W/K\nsteady\n")
    r = netgen("run", f, "--set", "P=3W", "--out", tmp_path)
    assert r.returncode == 0, r.stderr
    assert json.loads((tmp_path / "summary.json").read_text())["steady"]["T(m)"] == pytest.approx(301.5)
    bad = netgen("run", f, "--set", "P=3 K")
    assert bad.returncode == 2 and "P" in bad.stderr and "Traceback" not in bad.stderr
    unknown = netgen("run", f, "--set", "Q=3 W")
    assert unknown.returncode == 2 and "no parameter `Q`" in unknown.stderr


def test_failed_expectation_exits_1(netgen, tmp_path):
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
def test_errors_are_located_and_exit_2(netgen, tmp_path, text, line, col, fragment):
    f = tmp_path / "bad.etn"
    f.write_text(text)
    r = netgen("check", f)
    assert r.returncode == 2
    assert f"bad.etn:{line}:{col}: error:" in r.stderr, r.stderr
    assert fragment in r.stderr
    assert "^" in r.stderr and "Traceback" not in r.stderr


def test_missing_file_and_bad_bytes(netgen, tmp_path):
    r = netgen("check", tmp_path / "none.etn")
    assert r.returncode == 2 and "cannot read" in r.stderr
    f = tmp_path / "latin.etn"
    f.write_bytes(b"mass m 1 J/K\n# caf\xe9\n")
    r = netgen("check", f)
    assert r.returncode == 2 and "latin.etn:2:6" in r.stderr and "UTF-8" in r.stderr


def test_matrices_are_matrix_market(netgen, tmp_path):
    import scipy.io

    r = netgen("matrices", COOLER, "-o", tmp_path)
    assert r.returncode == 0, r.stderr
    G = scipy.io.mmread(str(tmp_path / "G.mtx"))
    C = scipy.io.mmread(str(tmp_path / "C.mtx"))
    names = (tmp_path / "unknowns.txt").read_text().split("\n")
    assert G.shape == C.shape == (len([n for n in names if n]),) * 2
    i = [n.split("\t")[1] for n in names if n].index("T(die)")
    assert C.toarray()[i, i] == pytest.approx(0.45)


def test_no_command_is_usage_error(netgen):
    r = netgen()
    assert r.returncode == 2
    r = netgen("frobnicate", COOLER)
    assert r.returncode == 2 and "Traceback" not in r.stderr
