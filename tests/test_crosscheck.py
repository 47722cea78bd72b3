"""`netgen crosscheck`: the raw reader, the simulator runner, the comparison, and an outside
simulator's answers against closed forms and against netgen on random networks."""
from __future__ import annotations

import math
import os
import random
import stat
from pathlib import Path

import numpy as np
import pytest

import netgen
from netgen.cli import main
from netgen.spice.crosscheck import Tolerances, compare, crosscheck, for_comparison, jumps
from netgen.spice.netlist import netlist
from netgen.spice.raw import Plot, RawError, find_plot, read_raw
from netgen.spice.simulator import SimulatorError, simulate

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
    assert sorted(p.name.split()[0] for p in plots) == ["AC", "Operating", "Transient"]  # ngspice runs .ac first
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
    ac = find_plot(small_plots["binary"], "AC")
    assert np.all(ac["frequency"].imag == 0)  # ngspice writes garbage there; the reader drops it


def test_raw_reader_rejects_damaged_files(ngspice, tmp_path):
    run = simulate(SMALL, ngspice, tmp_path)
    data = run.raw.read_bytes()
    assert len(read_raw(data)) == 3  # bytes are read like a path
    with pytest.raises(RawError, match="truncated"):
        read_raw(data[: data.index(b"Binary:") + 20])
    with pytest.raises(RawError, match="header"):
        read_raw(b"Title: x\nPlotname: y\n")
    head = data[: data.index(b"Binary:")].replace(b"No. Variables: 4", b"No. Variables: 5", 1)
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
    # --rtol scales every tolerance: 5 mK + 1e-3 of the sink's 3.5 K swing is 8.5 mK; ten times
    # that (--rtol 1e-2) is 85 mK and lets 50 mK pass.
    row_tol = next(r for r in rep.transient if r.signal == "T(sink)").tol
    assert row_tol == pytest.approx(5e-3 + 1e-3 * np.ptp(ours.waveforms["T(sink)"]))
    assert compare(ours, nm, plots, Tolerances.from_rtol(1e-2)).passed


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
        assert rep.failed == ([] if passes else ["V(p)"])


def test_interpolation_is_pchip_piece_by_piece():
    """The simulator's points on our grid: scipy's PchipInterpolator on each piece between
    corners, computed for all pieces at once; a corner the simulator stepped over is named."""
    from scipy.interpolate import PchipInterpolator

    from netgen.spice.resample import Onto

    rng = np.random.default_rng(2)
    for trial in range(200):
        ts = np.unique(np.concatenate([[0.0, 10.0], rng.uniform(0, 10, rng.integers(2, 14))]))
        ys = rng.normal(size=len(ts)) if trial % 2 else np.cumsum(rng.uniform(0, 1, len(ts)))
        t = np.sort(rng.uniform(0, 10, 60))
        c = float(ts[len(ts) // 2])
        got = Onto(ts, t, [c], [c])(ys)
        pchip = lambda xs, v, q: PchipInterpolator(xs, v)(q) if len(xs) > 2 else np.interp(q, xs, v)
        left, right = ts <= c, ts >= c
        want = np.where(t <= c, pchip(ts[left], ys[left], t), pchip(ts[right], ys[right], t))
        assert got == pytest.approx(want, abs=1e-12)
    # A ramp's kink at 3 s where the simulator has points at 2.5 s and 3.5 s only.
    ts = np.array([0.0, 1, 2, 2.5, 3.5, 4, 5, 6])
    onto = Onto(ts, np.array([2.8, 3.2, 4.5]), [3.0], [3.0])
    assert onto.missed == [3.0] and onto.unsure.tolist() == [True, True, False]
    assert onto.movement(np.maximum(ts - 3, 0)).tolist() == [1.0, 1.0, 0.0]


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
    assert main(["crosscheck", str(tmp_path / "missing.etn")]) == 2
    with pytest.raises(SystemExit) as e:  # argparse's own errors
        main(["crosscheck", str(COOLER), "--rtol", "-1"])
    assert e.value.code == 2 and "must be greater than zero" in capsys.readouterr().err


def test_keep_writes_the_files(ngspice, tmp_path, capsys):
    keep = tmp_path / "kept"
    assert main(["crosscheck", str(COOLER), "--keep", str(keep)]) == 0
    assert {p.name for p in keep.iterdir()} == {"netlist.cir", "out.raw", "simulator.log"}
    assert (keep / "netlist.cir").read_text() == netlist(netgen.load(COOLER))[0]
    assert len(read_raw(keep / "out.raw")) == 2


def _flip_peltier(text: str) -> str:
    """The deliberately wrong netlist: both Peltier terms of the module with the sign of S flipped."""
    out = text.replace("(0.052000000000000005*V(", "(-0.052000000000000005*V(")
    assert out.count("(-0.052") == 2
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
    import netgen.spice.crosscheck as cmp

    real = cmp.netlist
    monkeypatch.setattr(cmp, "netlist", lambda d, *more: (_flip_peltier(real(d, *more)[0]), real(d, *more)[1]))
    assert main(["crosscheck", str(COOLER)]) == 1
    out = capsys.readouterr().out
    assert "MISMATCH in T(die)" in out
    rows = [ln for ln in out.splitlines() if ln.lstrip().startswith("T(die) ")]
    assert rows[0].rstrip().endswith("pass")  # the steady state: the drive is off at t = 0
    assert rows[1].rstrip().endswith("FAIL")  # the transient


# ---- the simulator against closed forms (CHECKS.md 1, 2, 3) ------------------------------------
def _simulated(text_etn: str, exe: str, tmp_path: Path) -> tuple[dict[str, Plot], dict[str, str]]:
    d = netgen.load(text_etn)
    text, nm = netlist(d)
    run = simulate(text, exe, tmp_path)
    return {p.name.split()[0]: p for p in run.plots}, nm.signals


def _vec(plot: Plot, how: str) -> np.ndarray:
    return (-1.0 if how.startswith("-") else 1.0) * np.real(plot[how.lstrip("-")])


# ---- CHECKS 1: lumped mass cooling through a link to a reservoir, θ(t)/θ₀ = exp(−t/(R·C))
# (Incropera & DeWitt, Fundamentals of Heat and Mass Transfer, lumped capacitance method, ch. 5)
def test_checks_1_lumped_cooling_through_the_simulator(ngspice, tmp_path):
    R, C, T_res, theta0 = 2.0, 2.0, 300.0, 30.0  # K/W, J/K: τ = 4 s
    etn = f"""
fixed room {T_res} K
mass body {C} J/K start {T_res + theta0} K
link l body room {R} K/W
transient until 20 s step 0.05 s
"""
    plots, sig = _simulated(etn, ngspice, tmp_path)
    tr = plots["Transient"]
    t, T = np.real(tr["time"]), _vec(tr, sig["T(body)"])
    exact = T_res + theta0 * np.exp(-t / (R * C))
    # The simulator at the netlist's reltol 1e-9 keeps this within about 0.6 mK of 30 K.
    assert np.abs(T - exact).max() < 1e-3
    assert (T[-1] - T_res) / theta0 == pytest.approx(math.exp(-20 / (R * C)), abs=3e-5)
    assert crosscheck(netgen.load(etn), ngspice).passed  # and netgen agrees with it


# ---- CHECKS 2: series RLC driven by a voltage step, underdamped: i(t) = V/(ω_d·L)·e^(−αt)·sin(ω_d t),
# α = R/2L, ω₀ = 1/√(LC), ω_d = √(ω₀² − α²); capacitor overshoot exp(−πζ/√(1−ζ²))
# (Nilsson & Riedel, Electric Circuits, natural and step response of RLC circuits)
def test_checks_2_series_rlc_step_through_the_simulator(ngspice, tmp_path):
    V, R, L, C = 1.0, 2.0, 0.1, 0.01
    # With `start 0 A` and `start 0 V` held, the transient begins with the source on, the coil
    # carrying nothing and the capacitor empty: the textbook step response.
    etn = f"""
ground g
source v a g {V} V
resistor r a b {R} ohm
inductor l b c {L} H start 0 A
capacitor cap c g {C} F start 0 V
transient until 0.6 s step 1 ms
"""
    plots, sig = _simulated(etn, ngspice, tmp_path)
    tr = plots["Transient"]
    t, i, vc = np.real(tr["time"]), _vec(tr, sig["I(l)"]), _vec(tr, sig["V(c)"])
    a, w0 = R / (2 * L), 1 / math.sqrt(L * C)
    wd, zeta = math.sqrt(w0**2 - a**2), a / w0
    exact = V / (wd * L) * np.exp(-a * t) * np.sin(wd * t)
    assert np.abs(i - exact).max() < 1e-4 * np.abs(exact).max()
    assert vc.max() / V - 1 == pytest.approx(math.exp(-math.pi * zeta / math.sqrt(1 - zeta**2)), abs=1e-4)
    assert crosscheck(netgen.load(etn), ngspice).passed


# ---- CHECKS 3: ideal cooler, Qc = S·I·Tc − ½I²R − K·ΔT, Qh = S·I·Th + ½I²R − K·ΔT, V = I·R + S·ΔT
# (Rowe (ed.), CRC Handbook of Thermoelectrics (1995), thermoelectric refrigeration; Goldsmid,
# Introduction to Thermoelectricity)
@pytest.mark.parametrize("I", [0.4, 1.2, 3.0])
def test_checks_3_ideal_cooler_through_the_simulator(ngspice, tmp_path, I):
    S, R, K, Tc, Th = 0.052, 1.8, 0.6, 273.15, 303.15
    etn = f"""
fixed cold {Tc} K
fixed hot {Th} K
ground gnd
source drive p gnd {I} A
thermoelectric tec pins p gnd sides cold hot {{ seebeck {S} V/K  resistance {R} ohm  conductance {K} W/K }}
steady
"""
    plots, sig = _simulated(etn, ngspice, tmp_path)
    op = plots["Operating"]
    dT = Th - Tc
    Qc = S * I * Tc - 0.5 * I * I * R - K * dT
    Qh = S * I * Th + 0.5 * I * I * R - K * dT
    assert _vec(op, sig["I(tec)"])[0] == pytest.approx(I, rel=1e-9)  # the source pushes it into p, through the module to gnd
    assert _vec(op, sig["Q(cold)"])[0] == pytest.approx(Qc, rel=1e-9)  # what the cold side gives up
    assert -_vec(op, sig["Q(hot)"])[0] == pytest.approx(Qh, rel=1e-9)  # what the hot side takes
    assert _vec(op, sig["V(p)"])[0] == pytest.approx(I * R + S * dT, rel=1e-9)
    assert crosscheck(netgen.load(etn), ngspice).passed


# ---- random networks of both domains: netgen and the simulator agree (CHECKS.md 12) --------------
def _q(x: float) -> str:
    return f"{x:.3g}"


class S:
    """What the generators below ask a `draw` for: integers, a pick, a coin, a permutation."""

    integers = staticmethod(lambda a, b: ("int", a, b))
    sampled_from = staticmethod(lambda xs: ("pick", list(xs)))
    booleans = staticmethod(lambda: ("bool",))
    permutations = staticmethod(lambda xs: ("perm", list(xs)))


def _num(draw, lo: float, hi: float) -> str:
    """A value on a grid of 1/1000 of the range: plain numbers, as an engineer writes them.
    (Unrestricted floats find corners at 1e-65 s, which stop netgen's transient: reported.)"""
    return _q(lo + (hi - lo) * draw(S.integers(0, 1000)) / 1000)


def _wave(draw, unit: str, lo: float, hi: float):
    """A constant or one of the shapes, with values in [lo, hi] of `unit`, times in seconds."""
    v = lambda: _num(draw, lo, hi)
    t = lambda a, b: _num(draw, a, b)
    kind = draw(S.sampled_from(["const", "const", "step", "ramp", "sine", "pulse"]))
    if kind == "const":
        return f"{v()} {unit}"
    if kind == "step":
        return f"step({v()} {unit}, {v()} {unit}, {t(0.5, 15)} s)"
    if kind == "ramp":
        a = float(t(0, 10))
        return f"ramp({v()} {unit}, {v()} {unit}, {_q(a)} s, {_q(a + float(t(0.5, 8)))} s)"
    if kind == "sine":
        return f"sine({_q((lo + hi) / 2)} {unit}, {t(0, (hi - lo) / 4)} {unit}, {t(0.02, 0.3)} Hz)"
    rise = draw(S.sampled_from(["0", t(0.05, 1)]))
    return f"pulse({v()} {unit}, {v()} {unit}, {t(0, 4)} s, {rise} s, {t(0.05, 1)} s, {t(0.5, 3)} s, {t(5, 12)} s)"


def networks(draw) -> str:
    """A connected network of both domains: masses on a tree of links to one or two reservoirs,
    heat inputs, a resistor tree to ground with capacitors, coils (each behind its own resistor,
    so no loop of sources and coils), sources, resistors that heat masses, and 0-3 modules."""
    pick = lambda xs: draw(S.sampled_from(xs))
    num = lambda a, b: _num(draw, a, b)
    lines = ['design "random network"']
    reservoirs = [f"res{i}" for i in range(draw(S.integers(1, 2)))]
    masses = [f"m{i}" for i in range(draw(S.integers(1, 4)))]
    for r in reservoirs:
        temp = draw(S.sampled_from(["const", "const", "wave"]))
        lines.append(f"fixed {r} " + (f"{num(290, 310)} K" if temp == "const" else _wave(draw, "K", 290, 310)))
    for m in masses:
        start = f" start {num(285, 330)} K" if draw(S.booleans()) else ""
        lines.append(f"mass {m} {num(0.3, 5)} J/K{start}")
    thermal = reservoirs + masses
    order = reservoirs[:1] + draw(S.permutations(thermal[1:]))  # a spanning tree from a reservoir
    links = [(order[k], order[draw(S.integers(0, k - 1))]) for k in range(1, len(order))]
    links += [tuple(draw(S.permutations(thermal))[:2]) for _ in range(draw(S.integers(0, 2)))] if len(thermal) > 1 else []
    for k, (a, b) in enumerate(links):
        lines.append(f"link k{k} {a} {b} {num(0.2, 3)} W/K")
    for k in range(draw(S.integers(0, 2))):
        lines.append(f"heat h{k} {pick(masses)} {_wave(draw, 'W', 0, 3)}")
    lines.append("ground g")
    enodes = [f"e{i}" for i in range(draw(S.integers(1, 3)))]
    everywhere = ["g"] + enodes
    tree = ["g"] + draw(S.permutations(enodes))
    for k in range(1, len(tree)):
        heats = f" heats {pick(masses)}" if draw(S.integers(0, 3)) == 0 else ""
        lines.append(f"resistor r{k} {tree[k]} {tree[draw(S.integers(0, k - 1))]} {num(1, 50)} ohm{heats}")
    vnodes = draw(S.permutations(enodes))[: draw(S.integers(0, 1))]  # at most one voltage source
    # No capacitor on the voltage source's node: a jump of the source across a capacitor is an
    # infinite current, which netgen refuses (step size collapses) and no netlist can show.
    capable = [n for n in everywhere if n not in vnodes]
    for k in range(draw(S.integers(0, 2)) if len(capable) > 1 else 0):
        a, b = draw(S.permutations(capable))[:2]
        lines.append(f"capacitor c{k} {a} {b} {num(1, 100)} mF")
    for k in range(draw(S.integers(0, 2))):
        a, b = draw(S.permutations(everywhere))[:2]
        lines.append(f"inductor l{k} {a} x{k} {num(10, 1000)} mH")
        lines.append(f"resistor rl{k} x{k} {b} {num(1, 50)} ohm")
    for k, a in enumerate(vnodes):
        lines.append(f"source v{k} {a} g {_wave(draw, 'V', -3, 3)}")
    for k in range(draw(S.integers(0 if vnodes else 1, 2))):
        a, b = draw(S.permutations(everywhere))[:2]
        lines.append(f"source i{k} {a} {b} {_wave(draw, 'A', -0.5, 0.5)}")
    for k in range(draw(S.integers(0, 3))):
        p, n = draw(S.permutations(everywhere))[:2]
        a, b = draw(S.permutations(thermal))[:2] if len(thermal) > 1 else (thermal[0], thermal[0])
        if a == b:
            continue
        lines.append(f"thermoelectric te{k} pins {p} {n} sides {a} {b} "
                     f"{{ seebeck {num(-0.06, 0.06)} V/K resistance {num(0.5, 3)} ohm conductance {num(0.2, 1)} W/K }}")
    lines += ["steady", "transient until 20 s step 0.1 s"]
    return "\n".join(lines) + "\n"


def _seeded(seed: int):
    """A `draw` of the specs above from a seeded generator: network k is the same on every run,
    whatever ran before it (hypothesis's own draws were seen to differ with test order)."""
    rng = random.Random(seed)

    def draw(spec):
        what, *args = spec
        if what == "int":
            return rng.randint(*args)
        if what == "pick":
            return rng.choice(args[0])
        if what == "bool":
            return rng.random() < 0.5
        return rng.sample(args[0], len(args[0]))

    return draw


# Networks that disagree today, found when the draws were made independent of test order; the
# same four fail on the code before the element-kind layout, so they are known, not new. Strict:
# the day one passes, the mark must go.
KNOWN = {
    48: "sine drive of a coil loop: I(v0) off by 1.1x its tolerance near the end of the run",
    76: "two sine current sources into capacitors: V(e0) off by 1.4x its tolerance",
    94: "pulse voltage source with a sine current source: V(e0), I(v0) off by 1.2x their tolerance",
    97: "ngspice stops: timestep too small at a module-heated mass (t = 2.17 s)",
}


@pytest.mark.slow
@pytest.mark.parametrize("seed", [pytest.param(k, marks=pytest.mark.xfail(reason=KNOWN[k], strict=True))
                                  if k in KNOWN else k for k in range(100)])
def test_random_networks_agree(ngspice, seed):
    etn = networks(_seeded(seed))
    rep = crosscheck(netgen.load(etn), ngspice)
    assert rep.passed, f"{etn}\n{rep.table()}"


# ---- what the cross-check found, kept ------------------------------------------------------------
def test_pulse_is_high_at_the_end_of_its_rise_from_the_left():
    """Found by the property test: netgen took a pulse's value just before the end of a finite
    rise as `low`, so the transient's step landing there used the wrong source value and the
    row stored at that corner was wrong (here V = 25.3 ohm · low instead of · high)."""
    from netgen.model.expr import shape_value

    args = (-0.174, -0.116, 0.0, 0.163, 0.05, 0.61, 5.0)
    for t in (0.163, 5.163):  # the first period and a later one
        assert shape_value("pulse", args, t, left=True) == pytest.approx(-0.116)
        assert shape_value("pulse", args, t) == pytest.approx(-0.116)
    res = netgen.load("ground g\nresistor r e g 25.3 ohm\n"
                      f"source i e g pulse({args[0]} A, {args[1]} A, 0 s, 0.163 s, 0.05 s, 0.61 s, 5 s)\n"
                      "transient until 1 s step 0.1 s\n").run()
    at = np.isclose(res.time, 0.163)
    assert at.any() and np.allclose(res.waveforms["V(e)"][at], -0.116 * 25.3)


# Two networks from the property test whose `.op` ngspice got wrong while the netlist set every
# node with `.nodeset`: a coil carrying 0 A with 0.2 V across it, and a root at -2893 K.
NODESET_CASES = {
    "coil-left-open": """
fixed res0 291 K
fixed res1 sine(300 K, 0.01 K, 0.099 Hz)
mass m0 0.497 J/K
mass m1 0.502 J/K
mass m2 0.554 J/K start 287 K
link k0 m0 res0 0.323 W/K
link k1 m1 res0 1.94 W/K
link k2 m2 m1 1.6 W/K
link k3 res1 res0 0.528 W/K
ground g
resistor r1 e0 g 44.1 ohm
resistor r2 e1 e0 5.17 ohm heats m0
resistor r3 e2 e1 23 ohm
inductor l0 e0 x0 329 mH
resistor rl0 x0 e2 18.7 ohm
source i0 g e2 0.243 A
thermoelectric te0 pins e2 e0 sides res1 m2 { seebeck -0.0444 V/K resistance 2.88 ohm conductance 0.653 W/K }
steady
""",
    "root-below-zero": """
fixed res0 290 K
mass m0 0.3 J/K
mass m1 0.3 J/K
link k0 m0 res0 0.2 W/K
link k1 m1 res0 0.2 W/K
link k2 res0 m0 0.2 W/K
heat h0 m0 0.003 W
ground g
resistor r1 e0 g 1 ohm heats m0
source i0 g e0 -0.5 A
thermoelectric te0 pins g e0 sides res0 m0 { seebeck -0.0599 V/K resistance 0.5 ohm conductance 0.2 W/K }
steady
""",
}


@pytest.mark.parametrize("name", list(NODESET_CASES))
def test_steady_states_that_nodesets_misled(ngspice, name):
    rep = crosscheck(netgen.load(NODESET_CASES[name]), ngspice)
    assert rep.passed, rep.table()
    text = netlist(netgen.load(NODESET_CASES[name]))[0]
    assert all(line.startswith(".nodeset V(t_") for line in text.splitlines() if line.startswith(".nodeset"))


def test_simulators_first_step_is_kept_small(ngspice):
    """ngspice takes its first step under `uic` (TSTEP/100 = 1 ms) without error control, so a
    coil with L/R = 0.1 ms starting at 0 A was off there (32 mA at 1 ms). The netlist's start
    clock (`vclock_start`, a corner at 1e-8 of the run) makes that step tiny, and the step then
    grows under error control: the start is followed, and the two agree (outside check: ngspice)."""
    design = netgen.load("ground g\nsource v a g 5 V\nresistor r a b 10 ohm\n"
                         "inductor l b g 1 mH start 0 A\ntransient until 10 s step 0.1 s\n")
    assert "vclock_start x_clock_start 0 PWL(0 0 1e-07 0)" in netlist(design)[0]
    rep = crosscheck(design, ngspice)
    assert rep.passed, rep.table()
    assert rep.span[0] <= 1e-8


PLATE_CASES = {
    # A cold start next to a warm edge: 60 W into 0.5 J/K cells at t = 0 (the simulator's
    # unchecked first step was 58.9 mK off before the start clock).
    "cold start": "plate sp 20 by 20 capacity 0.5 J/K conductance 2 W/K start 25 degC\nfixed sp.left 40 degC\n"
                  "link b sp.right sink 3 W/K\nfixed sink 10 degC\nheat q sp.r10c10 2 W\n"
                  "transient until 100 s step 1 s\n",
    # The benchmark's plate: from 25 degC, 2 W into the centre.
    "benchmark": "plate sp 20 by 20 capacity 0.5 J/K conductance 2 W/K start 25 degC\nfixed sp.left 25 degC\n"
                 "heat q sp.r10c10 2 W\ntransient until 100 s step 1 s\nrecord T(sp.r10c10) T(sp.r1c20)\n",
}


@pytest.mark.parametrize("name", list(PLATE_CASES))
def test_a_linear_20_by_20_plate_passes(ngspice, name):
    """A plain linear plate is a correct netlist: the verdict must say so (outside check: ngspice)."""
    rep = crosscheck(netgen.load(PLATE_CASES[name]), ngspice)
    assert rep.passed, rep.table(everything=True)
    table = rep.table()
    rows = rep.transient
    assert len(rows) > 400
    assert f"the 20 worst of {len(rows)} rows shown; {len(rows) - 20} more, all within tolerance" in table
    assert len(table.splitlines()) < 80  # not 1,233 lines
    assert len(rep.table(everything=True).splitlines()) > len(rows)


def test_corner_at_a_tiny_time():
    """Found by the property test: a corner at 1e-65 s once collapsed the step size; corners that
    close to the start are now taken as at the start."""
    text = ("fixed f 290 K\nmass m 1 J/K\nlink k m f 1 W/K\nground g\n"
            "resistor r e g 1 ohm heats m\nsource i g e step(0 A, 0 A, 1e-65 s)\n"
            "transient until 20 s step 0.1 s\n")
    res = netgen.load(text).run()
    at_start = netgen.load(text.replace("1e-65 s", "0 s")).run()
    assert res.time[-1] == pytest.approx(20.0)
    # The steps are those of the same corner at t = 0, none collapsed towards 1e-65 s.
    assert np.array_equal(res.time, at_start.time) and res.stats == at_start.stats
    assert res.time[1] > 1e-6 and res.stats["rejected"] == 0


# Found by the property test: across the fall of i1's pulse (4.935 s to 5.043 s) netgen stores,
# at 5.035 s, Q(res0) = -3.219 W where the heat its links and the module take out of res0 add up
# to -3.120 W; the simulator agrees with the balance. netgen's Newton iteration there accepts a
# stage after one update, judging convergence by the contraction rate left from the previous
# stage (netgen/analysis/transient.py, `_stage`); starting each stage without it fixes this.
NEWTON_RATE_CASE = """
fixed res0 291 K
fixed res1 292 K
mass m0 0.77 J/K
link k0 res1 res0 1.08 W/K
link k1 m0 res0 2.46 W/K
heat h0 m0 sine(1.5 W, 0.0457 W, 0.0634 Hz)
ground g
resistor r1 e0 g 16.1 ohm
resistor r2 e1 e0 46.8 ohm
source i0 e1 g step(0 A, -0.246 A, 1.54 s)
source i1 e0 g pulse(0.368 A, -0.449 A, 4 s, 0 s, 0.108 s, 0.935 s, 10.3 s)
thermoelectric te0 pins e0 g sides res1 res0 { seebeck 0.00552 V/K resistance 1.05 ohm conductance 0.402 W/K }
steady
transient until 20 s step 0.1 s
"""


def test_reservoir_heat_balances_at_every_stored_point():
    """Found by the property test: every stored point satisfies the reservoir's heat balance
    (first law at the node), which a Newton stage accepted on a stale contraction rate broke."""
    d = netgen.load(NEWTON_RATE_CASE)
    res = for_comparison(d).run()
    S, R, K = 0.00552, 1.05, 0.402
    I, Tm = res.waveforms["I(te0)"], res.waveforms["T(m0)"]
    given_to_res0 = S * 291 * I + 0.5 * I * I * R + K * (292 - 291)  # Q_B of the module, B = res0
    balance = 1.08 * (291 - 292) + 2.46 * (291 - Tm) - given_to_res0  # LANGUAGE.md, Q(node) of a fixed node
    assert np.abs(res.waveforms["Q(res0)"] - balance).max() < 1e-6
