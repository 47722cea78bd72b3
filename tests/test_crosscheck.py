"""`netgen crosscheck`: the raw reader, the simulator runner, the comparison, and an outside
simulator's answers against closed forms and against netgen on random networks."""
from __future__ import annotations

import math
import os
import stat
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import netgen
from netgen.cli import main
from netgen.spice.compare import Tolerances, compare, crosscheck, for_comparison, jumps
from netgen.spice.netlist import netlist
from netgen.spice.raw import Plot, RawError, find_plot, read_raw
from netgen.spice.runner import SimulatorError, simulate

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.etn"))
COOLER = next(p for p in EXAMPLES if p.name == "detector_cooler.etn")


def _script(tmp_path: Path, body: str, name: str = "fake-sim") -> Path:
    """A stand-in simulator: a small shell script (the runner itself never uses a shell)."""
    path = tmp_path / name
    path.write_text("#!/bin/sh\n" + body)
    path.chmod(path.stat().st_mode | stat.S_IEXEC)
    return path


# ---- the raw reader, on files the simulator writes during the test -----------------------------
SMALL = """raw reader test
v1 in 0 DC 5 PULSE(0 5 1e-3 1e-6 1e-6 1 2) AC 1
r1 in out 1000
r2 out 0 3000
c1 out 0 1e-6
.options reltol=1e-9
.op
.tran 1e-5 4e-3
.ac lin 3 100 300
.end
"""


def _small_raw(exe: str, tmp_path: Path, ascii: bool) -> list[Plot]:
    env = {k: v for k, v in os.environ.items() if k != "SPICE_ASCIIRAWFILE"}
    if ascii:
        env["SPICE_ASCIIRAWFILE"] = "1"  # ngspice then writes the ASCII form
    run = simulate(SMALL, exe, tmp_path / ("ascii" if ascii else "binary"), env)
    head = run.raw.read_bytes()[:4000]
    assert (b"Values:" in head) == ascii and (b"Binary:" in head) == (not ascii)
    return run.plots


@pytest.fixture(scope="module")
def small_plots(ngspice, tmp_path_factory):
    tmp = tmp_path_factory.mktemp("raw")
    return {form: _small_raw(ngspice, tmp, form == "ascii") for form in ("binary", "ascii")}


@pytest.mark.parametrize("form", ["binary", "ascii"])
def test_raw_plots_and_vectors(small_plots, form):
    plots = small_plots[form]
    assert [p.name.split()[0] for p in plots] == ["Operating", "Transient", "AC"]
    op, tran, ac = (find_plot(plots, n) for n in ("Operating Point", "Transient Analysis", "AC Analysis"))
    assert {"v(in)", "v(out)", "i(v1)"} <= set(op.names) and "V(OUT)" in op  # names ignore case
    assert op.data.shape == (1, len(op.names))
    # The divider: 5 V * 3000 / (1000 + 3000), and 1.25 mA drawn from the source.
    assert op["v(out)"][0] == pytest.approx(3.75, rel=1e-12)
    assert op["i(v1)"][0] == pytest.approx(-5 / 4000, rel=1e-9)
    t = tran["time"]
    assert tran.names[0] == "time" and len(t) == tran.data.shape[0] > 50 and np.all(np.diff(t) > 0)
    assert t[0] == 0.0 and t[-1] == pytest.approx(4e-3)
    # Before the pulse (at 1 ms) the input is 0; two time constants (2·0.75 ms) after it the
    # output has risen to 3.75·(1 − e^-2): the reader returns the waveform, not just numbers.
    assert np.abs(tran["v(in)"][t < 0.9e-3]).max() < 1e-9
    tau = 0.75e-3
    assert np.interp(1e-3 + 2 * tau, t, tran["v(out)"]) == pytest.approx(3.75 * (1 - math.exp(-2)), rel=1e-3)
    with pytest.raises(KeyError):
        tran["v(nowhere)"]


@pytest.mark.parametrize("form", ["binary", "ascii"])
def test_raw_complex_ac(small_plots, form):
    """AC results are complex: |H| of the divider with C across R2 is k/√(1 + (ωRC)²),
    k = 3/4, R = 1000 ‖ 3000 (any circuits text)."""
    ac = find_plot(small_plots[form], "AC Analysis")
    assert ac.complex and np.iscomplexobj(ac.data)
    f = np.real(ac["frequency"])
    assert f == pytest.approx([100.0, 200.0, 300.0])
    rc = 750.0 * 1e-6
    assert np.abs(ac["v(out)"]) == pytest.approx(0.75 / np.sqrt(1 + (2 * np.pi * f * rc) ** 2), rel=1e-9)


def test_raw_binary_and_ascii_agree(small_plots):
    for b, a in zip(small_plots["binary"], small_plots["ascii"]):
        assert (b.name, b.names) == (a.name, a.names)
        # ASCII keeps 16 significant digits.
        assert np.allclose(a.data, b.data, rtol=1e-14, atol=1e-300)


def test_raw_reader_rejects_damaged_files(ngspice, tmp_path):
    run = simulate(SMALL, ngspice, tmp_path)
    data = run.raw.read_bytes()
    assert len(read_raw(data)) == 3  # bytes are read like a path
    with pytest.raises(RawError, match="truncated"):
        read_raw(data[: data.index(b"Binary:") + 20])
    with pytest.raises(RawError, match="header"):
        read_raw(b"Title: x\nPlotname: y\n")
    head = data[: data.index(b"Binary:")].replace(b"No. Variables: 3", b"No. Variables: 4")
    with pytest.raises(RawError, match="variables"):
        read_raw(head + data[data.index(b"Binary:"):])
    text = b"Title: t\nPlotname: p\nFlags: real\nNo. Variables: 2\nNo. Points: 1\nVariables:\n\t0\ttime\ttime\n\t1\tv(a)\tvoltage\nValues:\n0\t0.0\n\tnot-a-number\n"
    with pytest.raises(RawError, match="not a number"):
        read_raw(text)
    assert read_raw(b"") == []


# ---- the runner -----------------------------------------------------------------------------
def test_runner_missing_simulator():
    with pytest.raises(SimulatorError, match="`/nonexistent/sim` was not found") as e:
        simulate("* nothing\n.end\n", "/nonexistent/sim")
    assert "--simulator" in e.value.render()


def test_runner_argument_list_and_files(tmp_path):
    """The simulator gets `-b -r out.raw netlist.cir` as separate arguments (no shell), in the
    directory that holds the netlist."""
    fake = _script(tmp_path, 'for a in "$@"; do echo "$a"; done > args.txt\n'
                             "printf 'Title: t\\nPlotname: Operating Point\\nFlags: real\\n"
                             "No. Variables: 1\\nNo. Points: 1\\nVariables:\\n\\t0\\tv(a)\\tvoltage\\n"
                             "Values:\\n0\\t1.5\\n' > \"$3\"\n")
    work = tmp_path / "run dir; echo not-a-shell"
    run = simulate("* text\n.end\n", str(fake), work)
    assert (work / "args.txt").read_text().split("\n")[:4] == ["-b", "-r", "out.raw", "netlist.cir"]
    assert run.command == [str(fake), "-b", "-r", "out.raw", "netlist.cir"]
    assert (work / "netlist.cir").read_text() == "* text\n.end\n"
    assert run.plots[0]["v(a)"][0] == 1.5
    assert not (tmp_path / "not-a-shell").exists()


def test_runner_failure_shows_the_simulators_words(tmp_path):
    fake = _script(tmp_path, 'echo "Circuit: whatever"\necho "Error: unknown subckt: x1" >&2\nexit 1\n')
    with pytest.raises(SimulatorError) as e:
        simulate("* x\n.end\n", str(fake), tmp_path / "w")
    text = e.value.render()
    assert "failed (exit code 1): Error: unknown subckt: x1" in text
    assert "the simulator said:" in text and "    Error: unknown subckt: x1" in text
    quiet = _script(tmp_path, "exit 0\n", "quiet-sim")
    with pytest.raises(SimulatorError, match="wrote no results"):
        simulate("* x\n.end\n", str(quiet), tmp_path / "q")


# ---- the comparison, without a simulator: our own results fed back as the simulator's ------------
def _as_plots(res, nm) -> list[Plot]:
    """Our results written as the simulator would: the op and the transient as raw-file plots."""
    d = res.design
    vecs = {how.lstrip("-").lower(): (-1.0 if how.startswith("-") else 1.0, sig) for sig, how in nm.signals.items()}
    out = []
    if res.steady is not None:
        names = list(vecs)
        data = np.array([[s * res.steady[sig] for s, sig in vecs.values()]])
        out.append(Plot("Operating Point", "real", names, [""] * len(names), data))
    if res.time is not None:
        keep = np.append(np.diff(res.time) > 0, True)  # one row per time, as a simulator writes
        cols = [res.time[keep]] + [s * res.waveforms[sig][keep] for s, sig in vecs.values()]
        out.append(Plot("Transient Analysis", "real", ["time", *vecs], [""] * (len(vecs) + 1), np.array(cols).T))
    assert d is not None
    return out


@pytest.fixture(scope="module")
def cooler_self():
    d = netgen.load(COOLER)
    ours = for_comparison(d).run()
    return ours, netlist(d)[1]


def test_compare_with_itself_agrees(cooler_self):
    ours, nm = cooler_self
    rep = compare(ours, nm, _as_plots(ours, nm), Tolerances())
    assert rep.passed and rep.steady and rep.transient
    assert max(r.dev for r in rep.rows) < 1e-9
    assert [j.time for j in rep.jumps] == [1.0]
    table = rep.table()
    assert "agree:" in table and "source drive at 1 s" in table and "I(drive)" in table  # named as not compared


def test_compare_names_the_signal_that_differs(cooler_self):
    ours, nm = cooler_self
    plots = _as_plots(ours, nm)
    tran = plots[1]
    col = tran.names.index("v(t_sink)")
    tran.data[:, col] += 0.05 * (tran.data[:, 0] > 100)  # 50 mK off after 100 s
    rep = compare(ours, nm, plots, Tolerances())
    assert rep.failed == ["T(sink)"]
    row = next(r for r in rep.transient if r.signal == "T(sink)")
    assert row.dev == pytest.approx(0.05) and row.at > 100
    assert "MISMATCH in T(sink)" in rep.table()
    # --rtol scales every tolerance: ten times looser still fails 50 mK on an 8 mK tolerance...
    assert not compare(ours, nm, plots, Tolerances.from_rtol(1e-2)).passed
    # ...and a hundred times looser (floor 0.5 K) lets it pass.
    assert compare(ours, nm, plots, Tolerances.from_rtol(1e-1)).passed


def test_compare_widens_only_around_jumps(cooler_self):
    """Near the drive's jump at 1 s a signal may differ by what it moves there; a spike of the
    same size anywhere else fails."""
    ours, nm = cooler_self
    for at, passes in ((1.0, True), (50.0, False)):
        plots = _as_plots(ours, nm)
        tran = plots[1]
        i = int(np.argmin(np.abs(tran.data[:, 0] - at)))
        tran.data[i, tran.names.index("v(e_p)")] += 0.5  # V(p) jumps by 1.47 V at 1 s
        rep = compare(ours, nm, plots, Tolerances())
        assert rep.passed == passes, rep.table()
        row = next(r for r in rep.transient if r.signal == "V(p)")
        assert (row.near is not None and row.near > 0.1) == passes


def test_jumps_of_every_kind():
    d = netgen.load("""
fixed f table(0 s, 300 K, 2 s, 300 K, 2 s, 301 K, 4 s, 303 K)
mass m 1 J/K start 300 K
link l f m 1 W/K
heat h m pulse(0 W, 1 W, 0 s, 0 s, 1 s, 2 s, 5 s)
heat r m ramp(0 W, 1 W, 1 s, 3 s)
ground g
source v a g 1 V
resistor ra a b 1 ohm
resistor rb b g 1 ohm
switch sw b g closed 6 s .. 7 s
transient until 8 s
""")
    got = [(j.time, j.what) for j in jumps(d)]
    # The ramp has corners but no jump; the pulse's fall is not instantaneous; its rise at 0 is.
    assert got == [(0.0, "heat h"), (2.0, "fixed f"), (5.0, "heat h"), (6.0, "switch sw closes"),
                   (7.0, "switch sw opens")]


def test_tolerances_scale_together():
    t = Tolerances.from_rtol(2e-3)
    assert t.rtol == pytest.approx(2e-3) and t.kelvin == pytest.approx(1e-2) and t.steady_rtol == pytest.approx(2e-6)
    assert Tolerances.from_rtol(None) == Tolerances()


# ---- the command ------------------------------------------------------------------------------
@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_examples_agree(ngspice, path, capsys):
    assert main(["crosscheck", str(path)]) == 0, capsys.readouterr().out
    out = capsys.readouterr().out
    assert "agree:" in out and "FAIL" not in out


def test_missing_simulator_exits_3(capsys):
    assert main(["crosscheck", str(COOLER), "--simulator", "/nonexistent"]) == 3
    err = capsys.readouterr().err
    assert "the circuit simulator `/nonexistent` was not found" in err and "apt-get install ngspice" in err


def test_failing_simulator_exits_3_with_its_text(tmp_path, capsys):
    fake = _script(tmp_path, 'echo "Error on line 7: the netlist upset me" >&2\nexit 1\n')
    assert main(["crosscheck", str(COOLER), "--simulator", str(fake)]) == 3
    err = capsys.readouterr().err
    assert "failed (exit code 1)" in err and "the netlist upset me" in err


def test_bad_input_exits_2(tmp_path, capsys):
    bad = tmp_path / "bad.etn"
    bad.write_text("mass m 1 kg\n")
    assert main(["crosscheck", str(bad)]) == 2
    assert main(["crosscheck", str(COOLER), "--rtol", "-1"]) == 2
    assert main(["crosscheck", str(tmp_path / "missing.etn")]) == 2


def test_keep_writes_the_files(ngspice, tmp_path, capsys):
    keep = tmp_path / "kept"
    assert main(["crosscheck", str(COOLER), "--keep", str(keep)]) == 0
    assert {p.name for p in keep.iterdir()} == {"netlist.cir", "out.raw", "simulator.log"}
    assert (keep / "netlist.cir").read_text() == netlist(netgen.load(COOLER))[0]
    assert len(read_raw(keep / "out.raw")) == 2


def _flip_peltier(text: str) -> str:
    """The deliberately wrong netlist: both Peltier terms of the module with the sign of S flipped."""
    out = text.replace("I=0.052000000000000005*V(", "I=-0.052000000000000005*V(")
    assert out.count("I=-0.052") == 2
    return out


def _scale_fins(text: str) -> str:
    """The deliberately wrong netlist: the fins' thermal resistance 10 % high."""
    line = next(ln for ln in text.splitlines() if ln.startswith("rlink_fins "))
    *head, value = line.split()
    return text.replace(line, " ".join(head + [repr(float(value) * 1.1)]))


@pytest.mark.parametrize("edit, signals", [
    (_flip_peltier, {"T(die)", "T(sink)", "V(p)", "V(q)", "Q(room)"}),
    (_scale_fins, {"T(sink)", "T(die)"}),
], ids=["flipped-peltier", "scaled-link"])
def test_wrong_netlist_is_a_mismatch(ngspice, edit, signals):
    rep = crosscheck(netgen.load(COOLER), ngspice, edit=edit)
    assert not rep.passed
    assert signals <= set(rep.failed), rep.table()
    table = rep.table()
    assert "MISMATCH in" in table
    for s in signals:
        assert any(line.split()[:1] == [s] and line.rstrip().endswith("FAIL") for line in table.splitlines()), s


def test_wrong_netlist_exits_1_naming_the_signal(ngspice, monkeypatch, capsys):
    import netgen.spice.compare as cmp

    real = cmp.netlist
    monkeypatch.setattr(cmp, "netlist", lambda d: (_flip_peltier(real(d)[0]), real(d)[1]))
    assert main(["crosscheck", str(COOLER)]) == 1
    out = capsys.readouterr().out
    assert "MISMATCH in T(die)" in out
    assert next(ln for ln in out.splitlines() if ln.lstrip().startswith("T(die)")).rstrip().endswith("FAIL")
