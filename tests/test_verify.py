"""`netgen verify`: expectations, baselines and their tolerances, JUnit XML, exit codes."""
import json
import shutil
import xml.etree.ElementTree as ET
from pathlib import Path

import numpy as np
import pytest

from netgen.cli import main
from netgen.regression.diff import Tolerance, default_tolerance, resample

# A block warmed by a heat step: T rises by P/G = 2 K with time constant C/G = 4 s.
BLOCK = """design "Warm-up of a small block"
let P = 1 W
mass m 2 J/K start 300 K
fixed r 300 K
heat h m step(0 W, P, 1 s)
link l m r 0.5 W/K
transient until 20 s step 0.1 s
record T(m) Q(l)
expect final T(m) > 301 K
expect max T(m) < 303 K
audit energy
"""

FAILING = """mass m 1 J/K
fixed r 300 K
heat h m 1 W
link l m r 2 W/K
steady
expect steady T(m) < 300.2 K
"""


def verify(capsys, *args):
    code = main(["verify", *map(str, args)])
    out = capsys.readouterr()
    return code, out.out, out.err


@pytest.fixture
def block(tmp_path):
    f = tmp_path / "block.etn"
    f.write_text(BLOCK)
    return f


@pytest.mark.parametrize("text, code, fragments", [
    (BLOCK, 0, ["pass ", "3 of 3 checks pass", "no baseline", "total: 1 design, 1 passed, 0 failed"]),
    (FAILING, 1, ["FAIL ", "1 of 1 checks FAIL", "FAIL  6: expect steady T(m) < 300.2 K",
                  "measured 300.5 K", "0 passed, 1 failed"]),
], ids=["passes", "fails"])
def test_expectations_decide_the_exit_code(tmp_path, capsys, text, code, fragments):
    f = tmp_path / "d.etn"
    f.write_text(text)
    got, out, _ = verify(capsys, f)
    assert got == code, out
    for frag in fragments:
        assert frag in out


def test_directory_sorted_and_bad_input_exits_2(tmp_path, capsys):
    (tmp_path / "b.etn").write_text(BLOCK)
    (tmp_path / "a.etn").write_text(FAILING)
    (tmp_path / "c.etn").write_text("mass m 1 J/K\nlnk l m r 1 W/K\n")
    code, out, _ = verify(capsys, tmp_path)
    assert code == 2
    lines = [ln for ln in out.splitlines() if not ln.startswith(" ")]
    assert [ln.split()[:2] for ln in lines[:3]] == [
        ["FAIL", f"{tmp_path / 'a.etn'}:"], ["pass", f"{tmp_path / 'b.etn'}:"], ["error", str(tmp_path / "c.etn")]]
    assert "c.etn:2:1: error:" in out and "did you mean `link`" in out
    assert "3 designs, 1 passed, 1 failed, 1 with input errors" in out


@pytest.mark.parametrize("args, fragment", [
    (["nowhere.etn"], "cannot find"),
    (["--rtol", "lots"], "expected a fraction"),
    (["--set", "P"], "expected NAME=VALUE"),
    (["--set", "Q=1W"], "no parameter `Q`"),
], ids=["missing-file", "bad-rtol", "bad-set", "unknown-parameter"])
def test_input_errors_exit_2(block, capsys, monkeypatch, args, fragment):
    monkeypatch.chdir(block.parent)
    code, out, err = verify(capsys, *(args if args[0] == "nowhere.etn" else [block, *args]))
    assert code == 2
    assert fragment in out + err and "Traceback" not in out + err


def test_missing_baseline_passes_and_nothing_is_written(block, capsys):
    code, out, _ = verify(capsys, block)
    assert code == 0 and "no baseline" in out and "1 without a baseline" in out
    assert not (block.parent / "baselines").exists()


def test_baseline_round_trip(block, capsys):
    code, out, _ = verify(capsys, block, "--update-baseline")
    path = block.parent / "baselines" / "block.json"
    assert code == 0 and "baseline new" in out and path.is_file()
    stored = json.loads(path.read_text())
    assert stored["netgen"] and stored["format"] == "netgen baseline 1"
    assert stored["tolerances"]["T(m)"] == {"atol": 0.005, "rtol": 0.001}
    assert len(stored["signals"]["T(m)"]) == len(stored["time"])
    text = path.read_text()

    code, out, _ = verify(capsys, block)
    assert code == 0 and "baseline ok" in out

    # 2 % more heat: 2 % more rise (40 mK against 7 mK allowed) and 2 % more heat through the
    # link (20 mW against 1 mW), both largest at the end.
    code, out, _ = verify(capsys, block, "--set", "P=1.02W")
    assert code == 1
    # Every signal beyond its tolerance is named (issue 14), the larger share of its range first.
    assert "FAIL  baseline: 2 signals beyond their tolerance" in out and "at t = 20 s" in out
    assert "Q(l) is off by +0.0198" in out and "T(m) is off by +0.0396" in out
    assert "baseline was made with no --set, this run with --set P=1.02W" in out
    assert path.read_text() == text  # never written without --update-baseline

    code, out, _ = verify(capsys, block, "--set", "P=1.00001W")
    assert code == 0, out

    code, out, _ = verify(capsys, block, "--update-baseline")
    assert "baseline unchanged" in out and path.read_text() == text


def test_rtol_loosens_all_or_one_signal(block, capsys):
    verify(capsys, block, "--update-baseline")
    code, out, _ = verify(capsys, block, "--set", "P=1.02W", "--rtol", "5%")
    assert code == 0, out
    code, out, _ = verify(capsys, block, "--set", "P=1.02W", "--rtol", "Q(l)=5%")
    assert code == 1 and "FAIL  baseline: T(m) is off by" in out
    code, _, err = verify(capsys, block, "--rtol", "T(x)=1%")
    assert code == 2 and "T(x)" in err


def test_tolerances_are_stored_and_kept(block, capsys):
    verify(capsys, block, "--update-baseline", "--rtol", "T(m)=3%")
    path = block.parent / "baselines" / "block.json"
    assert json.loads(path.read_text())["tolerances"]["T(m)"]["rtol"] == pytest.approx(0.03)
    code, out, _ = verify(capsys, block, "--set", "P=1.02W", "--rtol", "Q(l)=5%")
    assert code == 0, out  # T(m) now allows 5 mK + 3 % of 2 K
    code, out, _ = verify(capsys, block, "--set", "P=1.02W", "--update-baseline")
    assert code == 0 and "baseline changed" in out and "Q(l) is off by" in out
    assert json.loads(path.read_text())["tolerances"]["T(m)"]["rtol"] == pytest.approx(0.03)


def test_baseline_directory_option(tmp_path, block, capsys):
    store = tmp_path / "store"
    verify(capsys, block, "--update-baseline", "--baseline", store)
    assert (store / "block.json").is_file()
    other = tmp_path / "sub"
    other.mkdir()
    (other / "block.etn").write_text(BLOCK)
    code, _, err = verify(capsys, block, other / "block.etn", "--baseline", store)
    assert code == 2 and "would share the baseline" in err


def test_damaged_baseline_is_an_input_error(block, capsys):
    path = block.parent / "baselines" / "block.json"
    path.parent.mkdir()
    path.write_text("{not json")
    code, out, _ = verify(capsys, block)
    assert code == 2 and "cannot read baseline" in out and "block.json" in out
    code, out, _ = verify(capsys, block, "--update-baseline")
    assert code == 0 and json.loads(path.read_text())["format"] == "netgen baseline 1"


def test_changed_grid_is_reported(block, capsys):
    verify(capsys, block, "--update-baseline")
    block.write_text(BLOCK.replace("until 20 s", "until 10 s"))
    code, out, _ = verify(capsys, block)
    assert code == 1 and "this run covers 0 .. 10 s, the baseline 0 .. 20 s" in out


def test_junit_counts_cases(tmp_path, block, capsys):
    fail = tmp_path / "failing.etn"
    fail.write_text(FAILING)
    verify(capsys, block, "--update-baseline")
    xml = tmp_path / "report.xml"
    code, out, _ = verify(capsys, block, fail, "--junit", xml)
    assert code == 1 and f"wrote {xml}" in out
    root = ET.parse(xml).getroot()
    assert root.tag == "testsuites"
    # block: 2 expectations + 1 audit + the baseline; failing: 1 expectation + the baseline.
    assert (root.get("tests"), root.get("failures"), root.get("skipped"), root.get("errors")) == ("6", "1", "1", "0")
    suites = root.findall("testsuite")
    assert [len(s.findall("testcase")) for s in suites] == [4, 2]
    names = [c.get("name") for c in suites[0].findall("testcase")]
    assert names == ["line 9: expect final T(m) > 301 K", "line 10: expect max T(m) < 303 K",
                     "line 11: audit energy", "baseline"]
    failed = suites[1].find("testcase/failure")
    assert "measured 300.5 K" in failed.get("message")
    assert suites[1].find("testcase[@name='baseline']/skipped") is not None


def test_junit_records_input_errors(tmp_path, capsys):
    bad = tmp_path / "bad.etn"
    bad.write_text("mass m 1 J/K\nlnk l m r 1 W/K\n")
    xml = tmp_path / "r.xml"
    code, _, _ = verify(capsys, bad, "--junit", xml)
    root = ET.parse(xml).getroot()
    assert code == 2 and root.get("errors") == "1" and root.get("tests") == "1"
    assert "bad.etn:2:1" in root.find(".//error").get("message")


def test_resampling_keeps_both_sides_of_a_corner():
    t = np.array([0.0, 1.0, 1.0, 2.0])
    y = np.array([0.0, 0.0, 5.0, 5.0])
    tq = np.array([0.5, 1.0, 1.0, 1.5, 2.0])
    assert resample(tq, t, y).tolist() == [0.0, 0.0, 5.0, 5.0, 5.0]


def test_resampling_a_smooth_run_on_another_grid_is_exact_to_far_below_the_tolerance():
    """exp(−t) from 60 uneven samples onto another grid: a cubic through each stretch is good to
    about 1e-6 of the range; straight lines between samples would be off by up to h²/8·|y''|."""
    rng = np.random.default_rng(1)
    t = np.sort(np.concatenate([[0.0, 5.0], rng.uniform(0, 5, 58)]))
    tq = np.linspace(0.0, 5.0, 301)
    err = np.abs(resample(tq, t, np.exp(-t)) - np.exp(-tq)).max()
    linear = np.abs(np.interp(tq, t, np.exp(-t)) - np.exp(-tq)).max()
    assert err < 2e-5 and linear > 20 * err


def test_default_tolerances_by_kind():
    assert default_tolerance("T(die)") == Tolerance(5e-3, 1e-3)
    assert default_tolerance("V(a, b)").atol == 1e-6
    assert default_tolerance("Q(tec.a)", rtol=0.01) == Tolerance(1e-6, 0.01)
    assert Tolerance(5e-3, 1e-3).allowed(2.0) == pytest.approx(7e-3)


def test_examples_verify_against_their_own_baselines(tmp_path, capsys):
    """What a user does first: write the examples' baselines, then verify them."""
    ex = tmp_path / "examples"
    shutil.copytree(Path(__file__).resolve().parents[1] / "examples", ex)
    code, out, _ = verify(capsys, ex, "--update-baseline")
    assert code == 0, out
    n = len(list(ex.glob("*.etn")))
    assert len(list((ex / "baselines").glob("*.json"))) == n
    code, out, _ = verify(capsys, ex)
    assert code == 0 and out.count("baseline ok") == n, out


def test_design_states_its_own_baseline_tolerances(tmp_path, capsys):
    """`baseline ... within`: a 2 % heat change moves T(m) by 40 mK and Q(l) by 20 mW
    (P/G rise and P through the link, lumped block); a design that allows 0.1 K on T(m) and 5 %
    of the range on everything passes, one that allows 10 mK on T(m) fails there."""
    f = tmp_path / "block.etn"
    f.write_text(BLOCK + "baseline within 5 %\nbaseline T(m) within 0.1 K\n")
    assert verify(capsys, f, "--update-baseline")[0] == 0
    stored = json.loads((tmp_path / "baselines" / "block.json").read_text())
    assert stored["tolerances"]["T(m)"] == {"atol": 0.1, "rtol": 0.05}
    assert stored["tolerances"]["Q(l)"]["rtol"] == 0.05
    code, out, _ = verify(capsys, f, "--set", "P=1.02W")
    assert code == 0, out
    f.write_text(BLOCK + "baseline T(m) within 10 mK and 0\nbaseline Q(l) within 1 W\n")
    code, out, _ = verify(capsys, f, "--set", "P=1.02W")
    assert code == 1 and "FAIL  baseline: T(m) is off by" in out
    # The command line's --rtol still wins over the design.
    code, out, _ = verify(capsys, f, "--set", "P=1.02W", "--rtol", "T(m)=0.05")
    assert code == 0, out


@pytest.mark.parametrize("line, fragment", [
    ("baseline T(m) within 1 V", "T(m) is not in V"),
    ("baseline within 1 %, 2 %", "unexpected"),
    ("baseline within 1 % and 2 %", "two relative tolerances"),
    ("baseline T(m) within 25 degC", "is absolute"),
    ("baseline T(q) within 1 K", "unknown node `q`"),
])
def test_bad_baseline_tolerances_are_located(tmp_path, capsys, line, fragment):
    f = tmp_path / "block.etn"
    f.write_text(BLOCK + line + "\n")
    code, out, err = verify(capsys, f)
    line_no = BLOCK.count("\n") + 1
    assert code == 2 and fragment in out + err and f"block.etn:{line_no}:" in out + err
