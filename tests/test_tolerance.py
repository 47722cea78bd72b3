"""`netgen tolerance` and `spread`: drawn parameters, yields, statistics, executors, interruption.

Source of the physics: CHECKS.md 1 (Incropera & DeWitt, lumped capacitance): a mass C at θ₀ above
a reservoir, through a link of resistance R, is at θ₀·exp(−t/(R·C)) above it at time t. With R
uniform on R₀·[0.9, 1.1] the mean temperature is the integral of that over the distribution
(integrated here by scipy.integrate.quad, independently of netgen); the yield of `T < LIMIT` is
the share of R below R* = −t/(C·ln((LIMIT − T_amb)/θ₀)).
"""
import csv
import json
import math
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest
from scipy.integrate import quad

import netgen
from conftest import deadline
from netgen.cli import main
from netgen.studies.stats import wilson_interval

R0, C, T0, TA, T_AT, LIMIT = 2.0, 5.0, 350.0, 300.0, 10.0, 318.5
COOLING = f"""
let R = {R0} K/W spread uniform 10 %
mass m {C} J/K start {T0} K
fixed amb {TA} K
link l m amb R
transient until {T_AT} s
record T(m)
expect T(m) at {T_AT} s < {LIMIT} K
"""


def _main(*args):
    try:
        return main([str(a) for a in args])
    except SystemExit as e:
        return e.code


def _closed(r):
    return TA + (T0 - TA) * math.exp(-T_AT / (r * C))


def test_mean_and_yield_of_a_mass_cooling_through_a_uniform_link(tmp_path, capsys):
    f = tmp_path / "cool.etn"
    f.write_text(COOLING)
    n = 120
    assert _main("tolerance", f, "--runs", n, "--seed", 7, "--jobs", 2, "--out", tmp_path) == 0
    doc = json.loads((tmp_path / "tolerance.json").read_text())
    with open(tmp_path / "tolerance.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert [int(r["run"]) for r in rows] == list(range(n))
    r = np.array([float(x["R"]) for x in rows])
    assert r.min() >= 0.9 * R0 and r.max() <= 1.1 * R0
    lo, hi = 0.9 * R0, 1.1 * R0
    mean_exact = quad(_closed, lo, hi)[0] / (hi - lo)
    st = doc["stats"]["measured@8"]
    assert abs(st["mean"] - mean_exact) < 3 * st["std"] / math.sqrt(n)
    # each run against its own closed form (CHECKS 1), so the mean's test is not loose by accident
    measured = np.array([float(x["measured@8"]) for x in rows])
    assert measured == pytest.approx([_closed(x) for x in r], abs=2e-3)
    # the yield: the share of the distribution below R*, within its binomial spread; and exactly
    # the runs whose drawn R is below R*.
    r_star = -T_AT / (C * math.log((LIMIT - TA) / (T0 - TA)))
    share = (r_star - lo) / (hi - lo)
    y = doc["yield"][0]
    assert y["line"] == 8 and y["expectation"].startswith("expect T(m) at")
    assert abs(y["yield"] - share) < 3 * math.sqrt(share * (1 - share) / n)
    assert y["yield"] == np.mean(r < r_star)
    assert (y["low"], y["high"]) == pytest.approx(wilson_interval(int(np.sum(r < r_star)), n))
    assert set(st) == {"mean", "std", "p1", "p50", "p99", "worst"}
    assert st["worst"]["value"] == max(measured) and st["worst"]["run"] == int(np.argmax(measured))
    out = capsys.readouterr().out
    assert f"line 8: expect T(m) at" in out and "yield" in out


def test_wilson_interval_against_published_values():
    """Wilson (1927) score interval; the figures for 0 of 10 and 81 of 263 are those of
    Newcombe, Statist. Med. 17 (1998) 857-872, table I (method 3): 0.0000-0.2775 and
    0.2553-0.3662 (from memory of the table: used to four places)."""
    assert wilson_interval(0, 10) == pytest.approx((0.0, 0.2775), abs=1e-4)
    assert wilson_interval(81, 263) == pytest.approx((0.2553, 0.3662), abs=1e-4)


def test_draws_do_not_depend_on_the_executor(tmp_path):
    """--jobs 1, --jobs 2 and --cluster local (Dask distributed) give the same tolerance.csv."""
    f = tmp_path / "cool.etn"
    f.write_text(COOLING.replace("transient until 10 s", "transient until 10 s step 0.5 s"))
    texts = []
    for where in (["--jobs", 1], ["--jobs", 2], ["--cluster", "local"]):
        out = tmp_path / str(where[1])
        with deadline(240):  # a cluster that never starts fails here rather than hanging CI
            assert _main("tolerance", f, "--runs", 8, "--seed", 3, *where, "--out", out, "--quiet") == 0
        texts.append((out / "tolerance.csv").read_text())
    assert texts[0] == texts[1] == texts[2]
    assert len(texts[0].splitlines()) == 9


def test_a_run_that_raises_is_a_row_and_the_study_goes_on(tmp_path, monkeypatch, capsys):
    import netgen.studies.columns as columns

    calls = []
    real = columns.run

    def flaky(design):
        calls.append(1)
        if len(calls) == 3:
            raise RuntimeError("a bug in one run")
        return real(design)

    monkeypatch.setattr(columns, "run", flaky)
    f = tmp_path / "cool.etn"
    f.write_text(COOLING)
    assert _main("tolerance", f, "--runs", 5, "--jobs", 1, "--out", tmp_path) == 0
    with open(tmp_path / "tolerance.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert [r["error"] for r in rows] == ["", "", "RuntimeError: a bug in one run", "", ""]
    assert rows[3]["measured@8"] and not rows[2]["measured@8"]
    doc = json.loads((tmp_path / "tolerance.json").read_text())
    assert doc["failed"] == 1 and doc["yield"][0]["runs"] == 5
    assert "1 of 5 runs failed" in capsys.readouterr().err


@pytest.mark.parametrize("jobs", [1, 2])
def test_an_interrupted_study_keeps_its_finished_rows(tmp_path, jobs):
    """Ctrl-C (SIGINT) part-way: exit 130, the finished runs in tolerance.csv, and how far it got."""
    f = tmp_path / "slow.etn"
    f.write_text(COOLING.replace("transient until 10 s", "transient until 10 s step 1 ms"))
    out = tmp_path / "out"
    p = subprocess.Popen([sys.executable, "-m", "netgen.cli", "tolerance", str(f), "--runs", "400", "--jobs", str(jobs),
                          "--out", str(out)], stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    partial = out / "tolerance.partial.jsonl"
    deadline = time.monotonic() + 120
    while time.monotonic() < deadline and not (partial.exists() and len(partial.read_text().splitlines()) >= 3):
        time.sleep(0.05)
    p.send_signal(signal.SIGINT)
    _, err = p.communicate(timeout=60)
    assert p.returncode == 130, err
    with open(out / "tolerance.csv") as fh:
        rows = list(csv.DictReader(fh))
    assert 3 <= len(rows) < 400
    assert all(r["measured@8"] for r in rows)
    assert f"interrupted: {len(rows)} of 400 runs finished" in err
    assert not partial.exists()


@pytest.mark.parametrize("text, message", [
    ("let R = 2 K/W spread gauss 10 %\n", "unknown spread `gauss`"),
    ("let R = 2 K/W spread normal 1 K\n", "needs a unit of 1"),
    ("let R = 2 K/W spread uniform 120 %\n", "100 % or more"),
    ("let R = 2 K/W spread normal -2 %\n", "spread"),
], ids=["law", "unit", "wide", "negative"])
def test_spread_errors_are_located(text, message):
    with pytest.raises(netgen.NetgenError) as e:
        netgen.load(text + "mass m 1 J/K\nfixed a 300 K\nlink l m a R\n")
    assert message in e.value.render() and e.value.loc.line == 1


def test_no_spread_is_an_input_error(tmp_path, capsys):
    f = tmp_path / "plain.etn"
    f.write_text(COOLING.replace(" spread uniform 10 %", ""))
    assert _main("tolerance", f, "--runs", 3, "--out", tmp_path) == 2
    assert "no parameter has a spread" in capsys.readouterr().err
