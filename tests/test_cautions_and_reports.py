"""Dew point and its caution, ΔT_max from the rated hot side, what `run --report` shows, the
failing baseline's list of signals, and JUnit times and class names (issue 14)."""
import math
import os
import xml.etree.ElementTree as ET

import pytest

import netgen
from netgen.checks.dewpoint import dew_point
from netgen.checks.merit import dt_max_from_hot
from netgen.cli import main
from netgen.model.errors import NetgenError


@pytest.mark.parametrize("air_c, rh, dew_c", [
    (20.0, 0.50, 9.3),   # the value the issue quotes for the formula's source
    (25.0, 0.60, 16.7),  # from memory: psychrometric dew-point tables (e.g. ASHRAE Fundamentals), to 0.1 °C
    (30.0, 0.80, 26.2),  # from memory, same tables
    (10.0, 0.90, 8.4),   # from memory, same tables
])
def test_dew_point_against_tabulated_values(air_c, rh, dew_c):
    """Magnus formula with Alduchov & Eskridge (1996) a = 17.625, b = 243.04 °C against dew points
    tabulated to 0.1 °C (so agreement within 0.06 °C)."""
    assert dew_point(rh, air_c + 273.15) - 273.15 == pytest.approx(dew_c, abs=0.06)


def test_dew_point_is_the_air_temperature_at_saturation():
    for t in (-20.0, 0.0, 35.0):
        assert dew_point(1.0, t + 273.15) == pytest.approx(t + 273.15, abs=1e-9)


COOLED = """humidity 50 % at 20 degC
fixed room 20 degC
mass plate 5 J/K start 20 degC
link l plate room 0.5 W/K
ground g
source v p g {volts} V
thermoelectric tec pins p g sides plate room rated imax 6 A vmax 15 V dtmax 68 K at 27 degC
transient until 60 s
modes
"""


def test_a_surface_below_the_dew_point_is_named(tmp_path, capsys):
    f = tmp_path / "d.etn"
    f.write_text(COOLED.format(volts=4))
    assert main(["run", str(f), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "dew point 9.3 °C" in out
    assert "caution: `plate` goes down to" in out and "below the dew point of 9.3 °C" in out
    f.write_text(COOLED.format(volts=1))  # the plate stays near 15 °C: dry
    assert main(["run", str(f), "--quiet"]) == 0
    assert "below the dew point" not in capsys.readouterr().out


def test_dt_max_from_the_rated_hot_side_gives_back_the_rating():
    """A module given by its ratings (`rated ... dtmax 68 K at 27 degC`) is turned into S, R, K by
    the ideal equations; the ideal ΔT_max from that hot side must be the 68 K it was rated with
    (LANGUAGE.md form 3 inverted: Th − (√(1 + 2·Z·Th) − 1)/Z with Z = S²/(R·K))."""
    d = netgen.load(COOLED.format(volts=1))
    (m,) = [e for e in d.elements if e.name == "tec"]
    assert m.rated_hot == pytest.approx(300.15)
    assert dt_max_from_hot(m, 300.15) == pytest.approx(68.0, rel=1e-9)
    S, R, K = m.seebeck, m.resistance, m.conductance
    Z = S * S / (R * K)
    assert dt_max_from_hot(m, 330.0) == pytest.approx(330.0 - (math.sqrt(1 + 2 * Z * 330.0) - 1) / Z, rel=1e-12)


@pytest.mark.parametrize("line, words", [
    ("humidity 150 % at 20 degC", "at most 100 %"),
    ("humidity 50 % at 200 degC", "from -50 degC to 100 degC"),
    ("humidity 50 % at 20 W", "needs a unit of K"),
    ("humidity 0.5 K at 20 degC", "a relative humidity needs"),
])
def test_humidity_mistakes_are_located(line, words):
    with pytest.raises(NetgenError) as e:
        netgen.load(line + "\nfixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\n")
    assert words in e.value.render() and e.value.loc.line == 1


def test_report_holds_cautions_figures_modes_and_ranges(tmp_path, capsys):
    pytest.importorskip("matplotlib")
    f = tmp_path / "d.etn"
    f.write_text(COOLED.format(volts=4) + "expect window T(plate) < 10 degC lasts > 1 s\n")
    page = tmp_path / "r.html"
    assert main(["run", str(f), "--quiet", "--report", str(page)]) == 0
    html = page.read_text()
    for words in ("Cautions", "below the dew point of 9.3 °C", "COP", "68 K from a 27 °C hot side",
                  "Modes of the linearised system", "Range of each signal", "<th>min</th>", "<th>final</th>",
                  "dew point 9.3 °C", "<h3>Windows</h3>"):
        assert words in html, words


BLOCK = """let P = 1 W
mass m 2 J/K start 300 K
fixed r 300 K
heat h m step(0 W, P, 1 s)
link l m r 0.5 W/K
transient until 20 s step 0.1 s
record T(m) Q(l)
"""


TWO = """let P1 = 1 W
let P2 = 1 W
fixed r 300 K
mass a 2 J/K start 300 K
link la a r 0.5 W/K
heat ha a step(0 W, P1, 1 s)
mass b 2 J/K start 300 K
link lb b r 0.5 W/K
heat hb b step(0 W, P2, 1 s)
transient until 20 s step 0.1 s
record T(a) T(b)
"""


def test_failing_baseline_names_every_signal_worst_share_first(tmp_path, capsys):
    """Each mass rises by P/G·(1 − e^(−t/τ)), so 2 % more heat into `a` and 5 % more into `b` move
    T(a) by 2 % and T(b) by 5 % of their ranges. With T(b) allowed 4 % it is 1.3 times its
    tolerance and T(a) about 5 times its own: both are named, T(b) first (the larger share of its
    range), though T(a) is further beyond its tolerance."""
    f = tmp_path / "two.etn"
    f.write_text(TWO)
    assert main(["verify", str(f), "--update-baseline"]) == 0
    capsys.readouterr()
    code = main(["verify", str(f), "--set", "P1=1.02W", "--set", "P2=1.05W", "--rtol", "T(b)=4%"])
    out = capsys.readouterr().out
    assert code == 1
    line = next(x for x in out.splitlines() if "beyond their tolerance" in x)
    assert "2 signals beyond their tolerance" in line
    assert line.index("T(b) is off by") < line.index("T(a) is off by")
    assert "(5 % of its range" in line and "(2 % of its range" in line


def test_junit_cases_carry_time_and_a_path_class_name(tmp_path, capsys, monkeypatch):
    folder = tmp_path / "examples"
    folder.mkdir()
    f = folder / "warm_block.etn"
    f.write_text(BLOCK + "expect final T(m) > 301 K\nexpect max T(m) < 303 K\n")
    monkeypatch.chdir(tmp_path)
    xml = tmp_path / "out.xml"
    assert main(["verify", os.path.join("examples", "warm_block.etn"), "--junit", str(xml)]) == 0
    suite = ET.parse(xml).getroot().find("testsuite")
    cases = suite.findall("testcase")
    assert {c.get("classname") for c in cases} == {"examples.warm_block"}
    times = [float(c.get("time")) for c in cases]
    assert all(t > 0 for t in times[:2])  # the checks share the solve time
    assert sum(times) == pytest.approx(float(suite.get("time")), abs=2e-3)
    capsys.readouterr()
    xml2 = tmp_path / "abs.xml"
    assert main(["verify", str(f), "--junit", str(xml2)]) == 0  # absolute, under the working directory
    assert ET.parse(xml2).getroot().find("testsuite/testcase").get("classname") == "examples.warm_block"
