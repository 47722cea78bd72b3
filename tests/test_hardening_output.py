"""Output paths, a lying outside simulator, and smaller holes (issue 17, items 4, 5 and 7).
Each case ends fast with a clear message and the documented exit code, never a traceback, a
hang, a leftover process, a leftover file or a pass that compared nothing."""
from __future__ import annotations

import os
import re
import signal
import stat
import struct
import subprocess
import sys
import threading
import time
import warnings
from pathlib import Path

import numpy as np
import pytest

import netgen
from conftest import deadline
import netgen.language
import netgen.regression.verify
from netgen.cli import main
from netgen.outputs import files
from netgen.outputs.files import write_outputs
from netgen.spice.crosscheck import Tolerances, compare, for_comparison
from netgen.spice.netlist import netlist
from netgen.spice.raw import Plot, RawError, read_raw
from netgen.spice.simulator import SimulatorError

# A mass cooling through a link to a reservoir: both analyses, solved in a blink.
SMALL = """design "small"
fixed room 300 K
mass m 2 J/K start 350 K
link l m room 0.5 W/K
steady
transient until 10 s step 0.5 s
record T(m) Q(room)
"""


@pytest.fixture
def small(tmp_path, monkeypatch):
    """SMALL as small.etn in the current folder, beside a file `afile` and a folder `adir`."""
    (tmp_path / "small.etn").write_text(SMALL)
    (tmp_path / "afile").write_text("not a folder\n")
    (tmp_path / "adir").mkdir()
    monkeypatch.chdir(tmp_path)
    return tmp_path


def _no_work(monkeypatch):
    """Reading a design fails the test: output paths must be refused before any work."""
    def refuse(*a, **k):
        raise AssertionError("the design was read before the output path was checked")

    monkeypatch.setattr(netgen.language, "load", refuse)
    monkeypatch.setattr(netgen.regression.verify, "load", refuse)


# ---- item 4: output paths, checked before any work --------------------------------------------
BAD_PATHS = [
    ("run --out file", ["run", "small.etn", "--quiet", "--out", "afile"], "`afile` is a file, not a folder"),
    ("run --out inside a file", ["run", "small.etn", "--quiet", "--out", "afile/sub"], "`afile` is a file, so nothing"),
    ("run --out empty", ["run", "small.etn", "--quiet", "--out", ""], 'the folder name is empty'),
    ("run --plot file", ["run", "small.etn", "--quiet", "--plot", "afile"], "`afile` is a file, not a folder"),
    ("run --report inside a file", ["run", "small.etn", "--quiet", "--report", "afile/r.html"], "`afile` is a file"),
    ("run --report folder", ["run", "small.etn", "--quiet", "--report", "adir"], "`adir` is a folder, not a file"),
    ("export -o inside a file", ["export", "small.etn", "-o", "afile/x.cir"], "`afile` is a file"),
    ("export -o empty", ["export", "small.etn", "-o", ""], "the file name is empty"),
    ("export -o folder", ["export", "small.etn", "-o", "adir"], "`adir` is a folder, not a file"),
    ("matrices -o file", ["matrices", "small.etn", "-o", "afile"], "`afile` is a file, not a folder"),
    ("verify --baseline file", ["verify", "small.etn", "--baseline", "afile"], "`afile` is a file, not a folder"),
    ("verify --update-baseline inside a file", ["verify", "small.etn", "--baseline", "afile/b", "--update-baseline"],
     "`afile` is a file"),
    ("verify --junit inside a file", ["verify", "small.etn", "--junit", "afile/x.xml"], "`afile` is a file"),
    ("verify --report inside a file", ["verify", "small.etn", "--report", "afile/x.html"], "`afile` is a file"),
    ("crosscheck --keep file", ["crosscheck", "small.etn", "--keep", "afile"], "`afile` is a file, not a folder"),
    ("crosscheck --keep inside a file", ["crosscheck", "small.etn", "--keep", "afile/k"], "`afile` is a file"),
]


@pytest.mark.parametrize("argv, fragment", [c[1:] for c in BAD_PATHS], ids=[c[0] for c in BAD_PATHS])
def test_bad_output_path_is_refused_before_any_work(small, monkeypatch, capsys, argv, fragment):
    _no_work(monkeypatch)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert err.startswith("error: ") and fragment in err, err
    assert "hint: " in err
    assert (small / "afile").read_text() == "not a folder\n"


def test_default_baseline_folder_is_checked_before_the_first_run(small, monkeypatch, capsys):
    """`verify --update-baseline` writes baselines/NAME.json beside each design."""
    (small / "baselines").write_text("a file where the folder goes\n")
    _no_work(monkeypatch)
    assert main(["verify", "small.etn", "--update-baseline"]) == 2
    assert "`baselines` is a file, not a folder" in capsys.readouterr().err


def test_unwritable_folder_is_refused_before_any_work(small, monkeypatch, capsys):
    """Tests run as root, whom chmod does not stop: the permission check is made to say no."""
    _no_work(monkeypatch)
    real = os.access
    monkeypatch.setattr(os, "access", lambda p, mode, **k: False if Path(p) == Path(".") else real(p, mode, **k))
    assert main(["run", "small.etn", "--quiet", "--out", "results"]) == 2
    err = capsys.readouterr().err
    assert "--out results: cannot write in `.` (permission denied)" in err and "Traceback" not in err


def _deny(*a, **k):
    raise PermissionError(13, "Permission denied", a[0] if a else None)


@pytest.mark.parametrize("argv, patch", [
    (["export", "small.etn", "-o", "out.cir"], "mkstemp"),
    (["run", "small.etn", "--quiet", "--out", "results"], "mkstemp"),
    (["matrices", "small.etn", "-o", "mm"], "mkdir"),
    (["verify", "small.etn", "--junit", "junit.xml"], "mkstemp"),
], ids=["export", "run", "matrices", "verify-junit"])
def test_oserror_on_writing_is_an_input_error(small, monkeypatch, capsys, argv, patch):
    """A write that fails after the checks (a full disk, a folder made read-only meanwhile)."""
    if patch == "mkstemp":
        monkeypatch.setattr(files.tempfile, "mkstemp", _deny)
    else:
        monkeypatch.setattr(Path, "mkdir", _deny)
    assert main(argv) == 2
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert re.search(r"error: cannot write `[^`]+`.*: Permission denied", err), err
    assert not [p for p in small.rglob(".*") if p.is_file()]  # no temporary left


def _pair(folder: Path) -> dict[str, str]:
    return {p.name: p.read_text() for p in sorted(folder.iterdir())}


@pytest.mark.parametrize("failure", [OSError(28, "No space left on device"), KeyboardInterrupt()],
                         ids=["disk-full", "interrupted"])
def test_results_are_written_as_a_pair(tmp_path, monkeypatch, failure):
    """transient.csv and summary.json: both new or both old, never one of each, no temporaries."""
    out = tmp_path / "out"
    res = netgen.load(SMALL).run()
    write_outputs(res, out)
    old = _pair(out)
    assert set(old) == {"transient.csv", "summary.json"}
    res2 = netgen.load(SMALL.replace("350 K", "320 K")).run()
    real = os.replace

    def failing(src, dst, *a, **k):
        if Path(dst).name == "summary.json":
            raise failure
        return real(src, dst, *a, **k)

    monkeypatch.setattr(os, "replace", failing)
    with pytest.raises(netgen.NetgenError if isinstance(failure, OSError) else KeyboardInterrupt) as e:
        write_outputs(res2, out)
    if isinstance(failure, OSError):
        assert "cannot write" in e.value.message and "No space left on device" in e.value.message
    assert _pair(out) == old  # the old pair intact, nothing else beside it
    monkeypatch.setattr(os, "replace", real)
    write_outputs(res2, out)
    new = _pair(out)
    assert set(new) == set(old) and new["transient.csv"] != old["transient.csv"] and new["summary.json"] != old["summary.json"]


# ---- item 5: a simulator that lies ----------------------------------------------------------------
def _script(folder: Path, body: str, name: str = "fake-sim") -> Path:
    """A stand-in simulator: a small shell script (the runner itself never uses a shell)."""
    path = folder / name
    path.write_text("#!/bin/sh\n" + body)
    path.chmod(path.stat().st_mode | stat.S_IEXEC)
    return path


def _raw_ascii(plots: list[Plot]) -> str:
    """Plots in the ASCII Berkeley raw format, as a simulator writes them."""
    out = []
    for p in plots:
        out += ["Title: fake", f"Plotname: {p.name}", "Flags: real",
                f"No. Variables: {len(p.names)}", f"No. Points: {p.data.shape[0]}", "Variables:"]
        out += [f"\t{i}\t{n}\t{'time' if n == 'time' else 'voltage'}" for i, n in enumerate(p.names)]
        out.append("Values:")
        for k, row in enumerate(p.data):
            out.append(f"{k}\t{float(row[0])!r}")
            out += [f"\t{float(v)!r}" for v in row[1:]]
    return "\n".join(out) + "\n"


@pytest.fixture(scope="module")
def honest():
    """SMALL's own results as the simulator's plots: what a simulator that agrees writes."""
    d = netgen.load(SMALL)
    ours, nm = for_comparison(d).run(), netlist(d)[1]
    vecs = {how.lstrip("-").lower(): (-1.0 if how.startswith("-") else 1.0, sig) for sig, how in nm.signals.items()}
    op = Plot("Operating Point", "real", list(vecs), [""] * len(vecs),
              np.array([[s * ours.steady[sig] for s, sig in vecs.values()]]))
    keep = np.append(np.diff(ours.time) > 0, True)
    cols = [ours.time[keep]] + [s * ours.waveforms[sig][keep] for s, sig in vecs.values()]
    tran = Plot("Transient Analysis", "real", ["time", *vecs], [""] * (len(vecs) + 1), np.array(cols).T)
    return ours, nm, op, tran


def _copy(p: Plot, data=None, names=None) -> Plot:
    return Plot(p.name, p.flags, list(names or p.names), list(p.kinds), (p.data if data is None else data).copy())


def _lie(how: str, op: Plot, tran: Plot) -> list[Plot]:
    d = tran.data.copy()
    if how == "nan-time":
        d[len(d) // 2, 0] = np.nan
    elif how == "time-backwards":
        d[[3, 4], 0] = d[[4, 3], 0]
    elif how == "all-nan":
        d[:, 1:] = np.nan
        return [_copy(op, np.full_like(op.data, np.nan)), _copy(tran, d)]
    elif how == "other-names":  # numbers, but for vectors the netlist does not have
        return [_copy(op, names=[f"v(x{i})" for i in range(len(op.names))]),
                _copy(tran, names=["time"] + [f"v(x{i})" for i in range(len(tran.names) - 1)])]
    elif how == "ends-early":
        d = d[d[:, 0] <= 4.0]
    return [op, _copy(tran, d)]


def _fake_with(folder: Path, plots: list[Plot], before: str = "") -> Path:
    raw = folder / "fake.raw"
    raw.write_text(_raw_ascii(plots))
    return _script(folder, f"{before}cp '{raw}' \"$3\"\n")


def test_a_fake_simulator_that_agrees_passes(small, honest, capsys):
    """The stand-in is a fair one: with honest plots the cross-check agrees (exit 0)."""
    _, _, op, tran = honest
    fake = _fake_with(small, [op, tran])
    assert main(["crosscheck", "small.etn", "--simulator", str(fake)]) == 0
    assert "agree:" in capsys.readouterr().out


LIES = [
    ("nan-time", "not a number: time = nan"),
    ("time-backwards", "the raw file's times go back"),
    ("all-nan", "not a number"),
    ("other-names", "the simulator's results hold no values for T(m), Q(room)"),
    ("ends-early", "before the end of the run (10 s)"),
]


@pytest.mark.parametrize("how, fragment", LIES, ids=[c[0] for c in LIES])
def test_a_lying_raw_file_is_the_simulators_failure(small, honest, capsys, how, fragment):
    _, _, op, tran = honest
    fake = _fake_with(small, _lie(how, op, tran))
    assert main(["crosscheck", "small.etn", "--simulator", str(fake)]) == 3
    captured = capsys.readouterr()
    assert "agree" not in captured.out and "Traceback" not in captured.err
    assert fragment in captured.err, captured.err


def test_compare_says_agree_only_on_everything(honest):
    """The Python API too: plots with none of the netlist's vectors compare nothing."""
    ours, nm, op, tran = honest
    assert compare(ours, nm, [op, tran], Tolerances()).passed
    with pytest.raises(SimulatorError, match="hold no values for"):
        compare(ours, nm, _lie("other-names", op, tran), Tolerances())
    with pytest.raises(SimulatorError, match=r"transient ends at 3\.69133 s, before the end of the run \(10 s\): 14 of our 27 points"):
        compare(ours, nm, _lie("ends-early", op, tran), Tolerances())
    with pytest.raises(SimulatorError, match="no point"):
        compare(ours, nm, [_copy(op, op.data[:0]), tran], Tolerances())


HEAD = "Title: t\nPlotname: Transient Analysis\nFlags: real\nNo. Variables: 2\nNo. Points: {n}\n" \
       "Variables:\n\t0\ttime\ttime\n\t1\tv(a)\tvoltage\n"
DAMAGED = [
    ("negative points binary", HEAD.format(n=-5).encode() + b"Binary:\n" + struct.pack("<4d", 0, 1, 1, 2),
     "-5 points"),
    ("negative points ascii", HEAD.format(n=-5).encode() + b"Values:\n0\t0.0\n\t1.0\n", "-5 points"),
    ("no variables", b"Title: t\nPlotname: p\nFlags: real\nNo. Variables: 0\nNo. Points: 1\nVariables:\nValues:\n0\n",
     "0 variables"),
    ("nameless variable", HEAD.format(n=1).replace("\t1\tv(a)\tvoltage", "\t1").encode() + b"Values:\n0\t0.0\n\t1.0\n",
     "has no name"),
    ("nan time", HEAD.format(n=2).encode() + b"Values:\n0\t0.0\n\t1.0\n1\tnan\n\t2.0\n", "time = nan at point 1"),
    ("infinite value", HEAD.format(n=2).encode() + b"Values:\n0\t0.0\n\t1.0\n1\t1.0\n\tinf\n", "v(a) = inf at point 1"),
    ("times go back", HEAD.format(n=3).encode() + b"Values:\n0\t0.0\n\t1.0\n1\t2.0\n\t1.0\n2\t1.0\n\t1.0\n",
     "1.0 s at point 2 comes after 2.0 s"),
]


@pytest.mark.parametrize("data, fragment", [c[1:] for c in DAMAGED], ids=[c[0] for c in DAMAGED])
def test_raw_reader_checks_header_and_values(data, fragment):
    with deadline(5), pytest.raises(RawError) as e:
        read_raw(data)
    assert fragment in e.value.message


def _pid_of(path: Path, wait: float = 10.0) -> int:
    end = time.monotonic() + wait
    while time.monotonic() < end:
        if path.exists() and path.read_text().strip():
            return int(path.read_text())
        time.sleep(0.02)
    raise AssertionError(f"the fake simulator never wrote {path}")


def _gone(pid: int, wait: float = 5.0) -> bool:
    """The process has ended (a zombie waiting for its parent counts as ended)."""
    end = time.monotonic() + wait
    while time.monotonic() < end:
        try:
            state = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()[0]
        except (FileNotFoundError, ProcessLookupError):
            return True
        if state in ("Z", "X"):
            return True
        time.sleep(0.02)
    return False


@pytest.fixture
def private_tmp(tmp_path, monkeypatch):
    """The temporary folder the simulator's files go in, to see that nothing is left there."""
    folder = tmp_path / "tmp"
    folder.mkdir()
    monkeypatch.setattr("tempfile.tempdir", str(folder))
    return folder


def test_a_child_left_holding_the_output_does_not_hold_the_crosscheck(small, honest, capsys, private_tmp):
    """The simulator exits, but a child it started keeps its output open: no waiting for it,
    and the child is ended with the rest of the simulator's process group."""
    _, _, op, tran = honest
    pidfile = small / "child.pid"
    fake = _fake_with(small, [op, tran], before=f"sleep 30 &\necho $! > '{pidfile}'\n")
    start = time.monotonic()
    assert main(["crosscheck", "small.etn", "--simulator", str(fake), "--timeout", "8"]) == 0
    assert time.monotonic() - start < 6
    assert _gone(_pid_of(pidfile))
    assert list(private_tmp.iterdir()) == []


def test_timeout_ends_the_simulator_and_everything_it_started(small, capsys, private_tmp):
    pidfile = small / "child.pid"
    fake = _script(small, f"sleep 30 &\necho $! > '{pidfile}'\nwait\n")
    start = time.monotonic()
    assert main(["crosscheck", "small.etn", "--simulator", str(fake), "--timeout", "1"]) == 3
    assert time.monotonic() - start < 6
    err = capsys.readouterr().err
    assert "did not finish within 1 s" in err and "--timeout SECONDS" in err
    assert _gone(_pid_of(pidfile))
    assert list(private_tmp.iterdir()) == []


def test_timeout_must_be_positive(small, capsys):
    with pytest.raises(SystemExit) as e:
        main(["crosscheck", "small.etn", "--timeout", "0"])
    assert e.value.code == 2 and "must be greater than zero" in capsys.readouterr().err


def test_ctrl_c_ends_the_simulators_group_and_removes_the_folder(small, capsys, private_tmp):
    pidfile = small / "child.pid"
    fake = _script(small, f"sleep 30 &\necho $! > '{pidfile}'\nwait\n")

    def interrupt():
        _pid_of(pidfile)
        os.kill(os.getpid(), signal.SIGINT)

    t = threading.Thread(target=interrupt, daemon=True)
    t.start()
    with deadline(20):
        assert main(["crosscheck", "small.etn", "--simulator", str(fake)]) == 130
    t.join()
    assert "interrupted" in capsys.readouterr().err
    assert _gone(_pid_of(pidfile))
    assert list(private_tmp.iterdir()) == []


def test_a_killed_crosscheck_leaves_no_folder_and_no_process(small):
    """SIGTERM ends the process at once by default: here it first ends the simulator's group and
    removes the temporary folder, then still ends by SIGTERM. (A process of its own: the signal
    ends it.)"""
    pidfile = small / "child.pid"
    fake = _script(small, f"sleep 30 &\necho $! > '{pidfile}'\nwait\n")
    folder = small / "tmp"
    folder.mkdir()
    code = "import sys\nfrom netgen.cli import main\nsys.exit(main(sys.argv[1:]))\n"
    p = subprocess.Popen([sys.executable, "-c", code, "crosscheck", "small.etn", "--simulator", str(fake)],
                         cwd=small, env=dict(os.environ, TMPDIR=str(folder)),
                         stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    try:
        child = _pid_of(pidfile, 30)
        p.send_signal(signal.SIGTERM)
        p.wait(20)
    finally:
        if p.poll() is None:
            p.kill()
            p.wait()
    assert p.returncode == -signal.SIGTERM, p.stderr.read().decode()
    p.stderr.close()
    assert _gone(child)
    assert list(folder.iterdir()) == []


# ---- item 7: smaller holes ----------------------------------------------------------------------
RUNAWAY = """fixed amb 25 degC
mass body 2 J/K start 25 degC
link mount body amb 0.05 W/K
ground g
source s a g 20 A
resistor r a g 10 ohm heats body tempco 3900 ppm/K at body ref 25 degC
transient until 100 s
"""


def test_a_runaway_prints_no_numpy_warning(small, capsys):
    """Self-heating past the link's conductance grows without bound until the step collapses:
    the solver's own message, without numpy's RuntimeWarnings printed on the way."""
    (small / "runaway.etn").write_text(RUNAWAY)
    with warnings.catch_warnings(record=True) as seen:
        warnings.simplefilter("always")
        assert main(["run", "runaway.etn", "--quiet"]) == 2
    assert [str(w.message) for w in seen if issubclass(w.category, RuntimeWarning)] == []
    err = capsys.readouterr().err
    assert "the transient stopped at" in err and "RuntimeWarning" not in err


def _check(folder: Path, text: str, capsys, *extra) -> tuple[int, str]:
    (folder / "case.etn").write_text(text)
    code = main(["check", "case.etn", *extra])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    return code, err


def test_an_island_without_ground_is_said_once_and_never_reached_through_nothing(small, capsys):
    code, err = _check(small, "resistor r a b 1 ohm\nsource v a b 1 V\nsteady\n", capsys)
    assert code == 2
    assert "nothing ()" not in err and "2 errors" not in err
    assert "case.etn:1:12: error: electrical nodes `a`, `b` have no path to a ground" in err


@pytest.mark.parametrize("start", ["2 mA", "1 mA"], ids=["other-current", "same-current"])
def test_an_inductor_start_against_a_current_source_is_named(small, capsys, start):
    """At the transient's start the inductor's `start` holds its current, as the source does:
    the node between them has no equation left (both currents the same or not)."""
    code, err = _check(small, f"ground g\nsource i a g 1 mA\ninductor l a g 1 mH start {start}\n"
                              "transient until 1 ms\n", capsys)
    assert code == 2
    assert "case.etn:3:10: error: electrical node `a` is reached only through current sources and inductors " \
           "with a `start` (`i`, `l`)" in err
    assert "the `start` of `l` holds its current" in err and "hint: drop the `start` of `l`" in err


def test_a_plain_number_that_must_be_positive_has_no_unit_1(small, capsys):
    code, err = _check(small, "ground g\nfixed a 300 K\nfixed b 300 K\nmaterial bite { seebeck 200 uV/K "
                              "resistivity 10 uohm*m conductivity 1.5 W/(m*K) }\n"
                              "thermoelectric t pins p g sides a b { couples 0 material bite leg 1 mm^2 1 mm }\n",
                       capsys)
    assert code == 2
    assert "error: the number of couples must be positive, not 0\n" in err and "not 0 1" not in err


@pytest.mark.parametrize("line, col, shown", [
    ("mass m " + "1" * 10_000_000 + " J/Q", 10_000_011, "Q"),
    ("mass m 1 J/K " + "x" * 10_000_000, 14, "x"),
    ("let a = 1 K" + " " * 10_000_000 + "@", 10_000_012, "@"),
], ids=["caret-at-the-end", "caret-at-the-start", "caret-after-blanks"])
def test_a_huge_bad_line_is_shown_around_the_caret(small, capsys, line, col, shown):
    code, err = _check(small, line + "\n", capsys)
    assert code == 2 and len(err) < 1500, len(err)
    lines = err.splitlines()
    assert lines[0].startswith(f"case.etn:1:{col}: error: ")
    echoed, caret = lines[1], lines[2]
    assert caret.strip() == "^" and echoed[len(caret) - 1] == shown
    assert "..." in echoed


def test_a_huge_name_in_a_message_is_shortened(small, capsys):
    code, err = _check(small, "fixed r 300 K\nrecord T(" + "y" * 1_000_000 + ")\n", capsys)
    assert code == 2 and len(err) < 1500
    assert "unknown node `yyyy" in err and "(1000000 characters)" in err


def test_a_parameter_set_twice_is_refused(small, capsys):
    code, err = _check(small, "let P = 1 W\nfixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nheat h m P\n", capsys,
                       "--set", "P=2 W", "--set", "P = 3 W")
    assert code == 2
    assert "error: --set P is given twice (P=2 W, then P=3 W)" in err


AMBIENT = "let ambient = 300 K\nfixed r ambient\nmass m 1 J/K start 300 K\nlink l m r 1 W/K\ntransient until 2 s\n"


@pytest.mark.parametrize("text, extra, where, fragment", [
    (AMBIENT, ["--set", "ambient=-300 K"], "2:9", "a reservoir temperature must be above absolute zero, not -300 K"),
    (AMBIENT, ["--set", "ambient=-273.15 degC"], "2:9", "a reservoir temperature must be above absolute zero, not 0 K"),
    (AMBIENT.replace("fixed r ambient", "fixed r -5 K"), [], "2:9",
     "a reservoir temperature must be above absolute zero, not -5 K"),
    (AMBIENT.replace("fixed r ambient", "fixed r step(300 K, -5 K, 1 s)"), [], "2:7",
     "reservoir `r` falls to -5 K at t = 1 s"),
    (AMBIENT.replace("start 300 K", "start ambient"), ["--set", "ambient=-300 K"], "3:20",
     "a start temperature must be positive, not -300 K"),
], ids=["override", "override-0K", "in-file", "in-time", "override-start"])
def test_a_temperature_at_or_below_absolute_zero_is_refused(small, capsys, text, extra, where, fragment):
    code, err = _check(small, text, capsys, *extra)
    assert code == 2
    assert f"case.etn:{where}: error: {fragment}" in err, err
    if extra:
        assert f"note: in effect: --set {extra[1]}" in err


def test_control_characters_of_a_title_are_escaped_in_the_netlist(small, capsys):
    (small / "t.etn").write_text(SMALL.replace('"small"', '"evil\x1b[2J\x07 \x00 \u009b title"'))
    assert main(["export", "t.etn"]) == 0
    title = capsys.readouterr().out.splitlines()[0]
    assert title.isprintable()
    assert title == "evil\\x1b[2J\\x07 \\x00 \\x9b title"
