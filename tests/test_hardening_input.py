"""Hostile and careless inputs (issue 17, items 1, 2, 3 and 6): line breaks that only some
readers see, expressions nested too deeply to read, files that expand without end, endless or
blocking inputs, and the parser's cache. Each ends fast with a located error, never a
traceback, a hang or a wrong answer."""
import os
import re
import resource
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pytest

from conftest import deadline
from netgen.cli import main
from netgen.language import grammar

ROOT = Path(__file__).resolve().parents[1]
BASE = "fixed air 300 K\nmass hot 1 J/K\nlink l hot air 1 W/K\nheat h hot 1 W\nsteady\n"
# Every character str.splitlines() breaks at besides "\n" (and "\r\n", which stays a line end).
ODD_BREAKS = {"cr": "\r", "vt": "\x0b", "ff": "\x0c", "fs": "\x1c", "gs": "\x1d", "rs": "\x1e",
              "nel": "\x85", "ls": "\u2028", "ps": "\u2029"}


def check(capsys, *argv, seconds=10.0):
    t0 = time.monotonic()
    with deadline(seconds):
        code = main(list(argv))
    out = capsys.readouterr()
    assert "Traceback" not in out.err
    return code, out.out, out.err, time.monotonic() - t0


# ---- 1. line breaks ---------------------------------------------------------------------------
@pytest.mark.parametrize("ch", list(ODD_BREAKS.values()), ids=list(ODD_BREAKS))
def test_a_line_break_inside_a_comment_stays_in_the_comment(tmp_path, capsys, ch):
    """The silent wrong answer of the issue: `# note<U+2028>record T(hot)` recorded T(hot)."""
    f = tmp_path / "case.etn"
    f.write_text(BASE + f"# note{ch}record T(hot)\nrecord T(air)\n", newline="")
    code, out, err, _ = check(capsys, "run", str(f), "--quiet")
    assert code == 0, err
    assert "T(air)" in out and "T(hot)" not in out


@pytest.mark.parametrize("ch", list(ODD_BREAKS.values()), ids=list(ODD_BREAKS))
def test_carets_after_a_comment_with_a_line_break(tmp_path, capsys, ch):
    """Locations, the echoed line and the caret agree with the parser's lines."""
    f = tmp_path / "case.etn"
    f.write_text(f"# a{ch}b\nfixed r 300 K\nmass m 1 J/Kg\n", newline="")
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2
    assert "case.etn:3:12: error: unknown unit `Kg`" in err, err
    assert "\n    mass m 1 J/Kg\n               ^" in err, err


@pytest.mark.parametrize("ch", list(ODD_BREAKS.values()), ids=list(ODD_BREAKS))
def test_a_line_break_outside_a_comment_is_refused_where_it_is(tmp_path, capsys, ch):
    f = tmp_path / "case.etn"
    f.write_text(f"fixed air 300 K\nmass hot 1 J/K{ch}link l hot air 1 W/K\n", newline="")
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2
    assert "case.etn:2:15: error: " in err and "line break" in err, err
    assert "hint:" in err and "\\n" in err


def test_a_line_break_in_a_title_is_refused(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_text('design "one\u2028two"\n' + BASE, newline="")
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2 and "case.etn:1:12: error: " in err and "line break" in err, err


def test_a_line_break_in_an_included_file(tmp_path, capsys):
    (tmp_path / "inc.etn").write_text("# x\u2028y\nmass m 1 J/Kg\n", newline="")
    f = tmp_path / "case.etn"
    f.write_text('fixed r 300 K\ninclude "inc.etn"\n')
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2
    assert "inc.etn:2:12: error: unknown unit `Kg`" in err and "\n    mass m 1 J/Kg\n" in err, err
    assert "included from" in err and "case.etn:2:1" in err


def test_crlf_files_still_read(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_bytes((BASE + "record T(hot)  # a comment\nexpect steady T(hot) > 300 K\n").replace("\n", "\r\n").encode())
    code, out, err, _ = check(capsys, "run", str(f), "--quiet")
    assert code == 0, err
    assert "T(hot)" in out and "\r" not in out
    f.write_bytes(b"fixed r 300 K\r\nmass m 1 J/Kg\r\n")
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2 and "case.etn:2:12:" in err and "\n    mass m 1 J/Kg\n" in err and "\r" not in err, err


# ---- 2. deep expressions ----------------------------------------------------------------------
DEEP = {
    "sum": "let x = " + " + ".join(["1 K"] * 1000) + "\n",
    "minus": "let x = " + "-" * 1000 + "1 K\n",
    "power": "let x = " + "^".join(["1"] * 1000) + "\n",
    "abs": "let x = " + "abs(" * 1000 + "1 K" + ")" * 1000 + "\n",
    "parts": "part p0(a) {\n" * 1000 + "}\n" * 1000,
}


@pytest.mark.parametrize("name", list(DEEP))
def test_deep_expressions_are_refused_with_the_numbers(tmp_path, capsys, name):
    f = tmp_path / "case.etn"
    f.write_text(BASE + DEEP[name])
    code, _, err, took = check(capsys, "check", str(f))
    assert code == 2, err
    assert re.search(r"case\.etn:\d+:\d+: error: ", err) and "^" in err, err
    if name != "parts":
        assert "case.etn:6:" in err, err
    assert "levels deep" in err and "at most 100" in err and "hint:" in err, err
    assert took < 5


def test_a_deep_override_is_refused(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_text(BASE + "let x = 1 K\n")
    code, _, err, _ = check(capsys, "check", str(f), "--set", "x=" + "-" * 1000 + "1 K")
    assert code == 2 and "levels deep" in err, err


def _lets(n: int, step: str) -> str:
    return ("fixed air 300 K\nmass hot 1 J/K\nlink l hot air 1 W/K\ntransient until 1 s\n"
            "let a0 = 1 W * sin(time / (1 s))\n" + "".join(f"let a{i} = {step.format(p=f'a{i - 1}')}\n" for i in range(1, n))
            + f"heat h hot a{n - 1} * 1e-12\n")


@pytest.mark.parametrize("name, text, line, fragment", [
    ("a chain of lets", _lets(600, "{p} + 1 mW"), 102, "nests 101 levels deep with the parameters it uses written out"),
    ("doubling lets", _lets(40, "{p} + {p}"), 16, "has 14,335 terms with the parameters it uses written out"),
], ids=["chain", "doubling"])
def test_values_that_grow_through_parameters(tmp_path, capsys, name, text, line, fragment):
    """A value that varies keeps the trees of the parameters it names: 600 chained `let`s gave a
    RecursionError when run, and 40 doubling ones (2^40 terms) ran without end."""
    f = tmp_path / "case.etn"
    f.write_text(text)
    for command in ("check", "run"):
        code, _, err, took = check(capsys, command, str(f), *(["--quiet"] if command == "run" else []))
        assert code == 2 and f"case.etn:{line}:11: error: this value " in err and fragment in err, err
        assert took < 5


def test_long_but_readable_expressions_still_work(tmp_path, capsys):
    f = tmp_path / "case.etn"
    terms = " + ".join(["0.01 W/K * (T / (300 K))"] * 80)
    f.write_text(BASE.replace("link l hot air 1 W/K", "link l hot air " + terms)
                 + "let y = " + "(" * 500 + "1 K" + ")" * 500 + "\n" + "record T(hot)\n")
    code, out, err, _ = check(capsys, "run", str(f), "--quiet")
    assert code == 0, err


# ---- 3. files that expand without end, endless and blocking inputs ------------------------------
def _bomb(levels: int) -> str:
    lines = ["fixed air 300 K", "part p0(a, b) {", "  link l a b 1 W/K", "}"]
    for k in range(1, levels + 1):
        lines += [f"part p{k}(a, b) {{", f"  use p{k - 1} x(a, b)", f"  use p{k - 1} y(a, b)", "}"]
    lines += [f"use p{levels} top(air, hot)", "mass hot 1 J/K", "steady"]
    return "\n".join(lines) + "\n"


def test_a_part_bomb_is_refused_fast(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_text(_bomb(40))
    code, _, err, took = check(capsys, "check", str(f))
    assert code == 2, err
    assert "case.etn:165:" in err and "3,298,534,883,326 statements" in err and "1,000,000" in err, err
    assert took < 5


def test_a_moderate_part_tree_still_reads(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_text(_bomb(6))
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 0, err


def test_a_transient_of_too_many_points_is_refused_at_check(tmp_path, capsys):
    f = tmp_path / "case.etn"
    f.write_text(BASE + "transient until 1e9 s step 1 fs\n")
    code, _, err, took = check(capsys, "check", str(f))
    assert code == 2, err
    assert "case.etn:6:" in err and "1e+24" in err and "1,000,000" in err and "hint:" in err, err
    code, _, err, took = check(capsys, "run", str(f), "--quiet")
    assert code == 2 and took < 5, err


@pytest.mark.parametrize("name", ["main", "include"])
def test_a_fifo_is_refused_and_does_not_block(tmp_path, capsys, name):
    os.mkfifo(tmp_path / "pipe.etn")
    f = tmp_path / "case.etn"
    f.write_text(BASE + 'include "pipe.etn"\n')
    target = tmp_path / "pipe.etn" if name == "main" else f
    code, _, err, took = check(capsys, "check", str(target), seconds=5)
    assert code == 2 and "pipe.etn" in err and "not a regular file" in err and "named pipe" in err, err
    if name == "include":
        assert "case.etn:6:9: error: " in err, err


def test_a_directory_still_reads_as_a_directory(tmp_path, capsys):
    (tmp_path / "d.etn").mkdir()
    code, _, err, _ = check(capsys, "check", str(tmp_path / "d.etn"))
    assert code == 2 and "Is a directory" in err


@pytest.mark.parametrize("name", ["main", "include"])
def test_a_file_over_64_mb_is_refused(tmp_path, capsys, name):
    big = tmp_path / "big.etn"
    with open(big, "wb") as fh:  # sparse: no disk space, no time
        fh.truncate(65 * 2**20)
    f = tmp_path / "case.etn"
    f.write_text(BASE + 'include "big.etn"\n')
    code, _, err, took = check(capsys, "check", str(big if name == "main" else f))
    assert code == 2 and "64 MB" in err and "big.etn" in err, err
    assert took < 5


def test_dev_zero_is_refused(tmp_path):
    """Before, `netgen check /dev/zero` read until memory ran out: run it as a process with its
    memory capped, so a regression fails here instead of taking the machine."""
    def cap():
        resource.setrlimit(resource.RLIMIT_AS, (4 * 2**30, 4 * 2**30))

    code = "import sys; from netgen.cli import main; sys.exit(main(['check', '/dev/zero']))"
    r = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60, preexec_fn=cap,
                       cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(ROOT), "OPENBLAS_NUM_THREADS": "1"})
    assert r.returncode == 2, r.stderr
    assert "/dev/zero" in r.stderr and "not a regular file" in r.stderr and "character device" in r.stderr
    assert "Traceback" not in r.stderr


# ---- 6. the parser's cache --------------------------------------------------------------------
def test_a_run_writes_nothing_into_the_temporary_folder(tmp_path, capsys, monkeypatch):
    """The parser's cache was a pickle at a predictable name in the shared temporary folder:
    anyone who could write there first ran code in the next netgen process."""
    shared = tmp_path / "shared-tmp"
    shared.mkdir()
    monkeypatch.setenv("TMPDIR", str(shared))
    monkeypatch.setattr(tempfile, "tempdir", str(shared))
    grammar.parser.cache_clear()  # build it again, as a new process would
    try:
        code, _, err, _ = check(capsys, "run", str(ROOT / "examples" / "detector_cooler.etn"), "--quiet",
                                seconds=60)
        assert code in (0, 1), err
        assert main(["check", str(ROOT / "examples" / "coil_swing.etn")]) == 0
        assert sorted(os.listdir(shared)) == []
        assert not grammar.parser().lark.options.cache
    finally:
        grammar.parser.cache_clear()


def test_a_transient_that_must_creep_stops_with_a_message(tmp_path, capsys, monkeypatch):
    """A fast sine over a long run needs more steps than any report: the solver stops at its
    step limit (solve/transient.py MAX_STEPS, lowered here) and says so, with the partial run."""
    from netgen.solve import transient

    monkeypatch.setattr(transient, "MAX_STEPS", 300)
    f = tmp_path / "case.etn"
    f.write_text(BASE.replace("heat h hot 1 W", "heat h hot 1 W + 0.5 W * sine(0, 1, 1 kHz)").replace("steady\n", "")
                 + "transient until 1e6 s\n")
    code, _, err, took = check(capsys, "run", str(f), "--quiet")
    assert code == 2 and "case.etn:5:1: error: the transient stopped at t = " in err, err
    assert "it took 300 steps, the most a transient may take" in err and "hint:" in err, err


def test_the_statement_limit_while_reading(tmp_path, capsys, monkeypatch):
    """Past the limit, reading stops with one located error (parts.MAX_STATEMENTS, lowered here)."""
    from netgen.language import elaborate, parts

    monkeypatch.setattr(elaborate, "MAX_STATEMENTS", 20)
    monkeypatch.setattr(parts, "MAX_STATEMENTS", 20)
    f = tmp_path / "case.etn"
    f.write_text("fixed air 300 K\n" + "".join(f"mass m{i} 1 J/K\nlink l{i} m{i} air 1 W/K\n" for i in range(20)))
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2 and err.count("error:") == 1, err
    assert "case.etn:21:1: error: the design expands to more than 20 statements here" in err, err
    f.write_text(_bomb(3))  # p3 reads 3·2^3 − 2 = 22 statements
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2 and "`use p3` here would expand to 22 statements, and a design may expand to at most 20" in err


def test_plates_count_their_cells_together(tmp_path, capsys, monkeypatch):
    from netgen.language import plate

    monkeypatch.setattr(plate, "MAX_CELLS", 100)
    f = tmp_path / "case.etn"
    f.write_text("fixed air 300 K\npart p(a) {\n  plate s 8 by 8 capacity 1 J/K conductance 1 W/K\n}\n"
                 "use p u1(air)\nuse p u2(air)\n")
    code, _, err, _ = check(capsys, "check", str(f))
    assert code == 2, err
    assert "case.etn:3:11: error: plate `u2.s` brings the design's plates to 128 cells, more than 100" in err, err
