"""Solver failures are explained, partial results are kept, and files are never half-written."""
import json
import os

import pytest

import netgen
from netgen.outputs import files
from netgen.cli import main
from netgen.model.errors import SolveError

COOLING = """
fixed hot 300 K
mass x 1 J/K start 300 K
link l hot x 0.1 W/K
heat h x {heat}
transient until 20 s
record T(x)
"""


def test_impossible_steady_state_names_the_node():
    """G·(T − 300 K) = −100 W with G = 0.1 W/K needs T = −700 K: no physical steady state."""
    d = netgen.load("fixed hot 300 K\nlink l hot x 0.1 W/K\nheat h x -100 W\nsteady\n")
    with pytest.raises(SolveError) as e:
        d.run()
    assert "T(x)" in e.value.message and "absolute zero" in e.value.message
    assert "-700" in e.value.message


def test_transient_failure_keeps_partial_results(tmp_path, capsys):
    """Heat drawn faster than it can flow in: the run stops when T would reach 0 K, and what was
    computed up to then is written as *.partial.*, never over a complete earlier result."""
    f = tmp_path / "d.etn"
    f.write_text(COOLING.format(heat="0 W"))
    assert main(["run", str(f), "--out", str(tmp_path / "out")]) == 0
    good = (tmp_path / "out" / "transient.csv").read_text()
    f.write_text(COOLING.format(heat="step(0 W, -100 W, 1 s)"))
    assert main(["run", str(f), "--out", str(tmp_path / "out")]) == 2
    err = capsys.readouterr().err
    assert "d.etn:6:1: error: the transient stopped at t =" in err
    assert "first at T(x)" in err
    assert (tmp_path / "out" / "transient.csv").read_text() == good
    partial = (tmp_path / "out" / "transient.partial.csv").read_text().splitlines()
    assert partial[0] == "time,T(x)" and len(partial) > 3
    # The temperature falls as the heat is drawn: T(t) = 300 − (100/G)(1 − e^(−G(t−1)/C)) (lumped
    # capacitance with a constant sink, Incropera & DeWitt ch. 5); check the last partial row.
    t, T = map(float, partial[-1].split(","))
    import math

    assert T == pytest.approx(300 - 1000 * (1 - math.exp(-0.1 * (t - 1))), abs=0.05)
    summary = json.loads((tmp_path / "out" / "summary.partial.json").read_text())
    assert summary["partial"] is True


def test_non_finite_source_value_is_reported():
    d = netgen.load("fixed f 300 K\nlink l f n 1 W/K\nheat h n 1 W * (time / 1 s)^-2\ntransient until 10 s\n")
    with pytest.raises(SolveError, match="not a finite number at t = 0 s"):
        d.run()


def test_crash_while_writing_leaves_the_earlier_file(tmp_path, monkeypatch):
    """A failure in the middle of writing (injected) leaves the earlier file as it was."""
    target = tmp_path / "summary.json"
    files.write_atomic(target, '{"old": true}\n')

    class Boom(RuntimeError):
        pass

    real_fdopen = os.fdopen

    def failing_fdopen(fd, *args, **kwargs):
        f = real_fdopen(fd, *args, **kwargs)

        class Half:
            def __enter__(self):
                return self

            def __exit__(self, *exc):
                f.close()
                return False

            def write(self, text):
                f.write(text[: len(text) // 2])
                raise Boom("disk went away")

        return Half()

    monkeypatch.setattr(files.os, "fdopen", failing_fdopen)
    with pytest.raises(Boom):
        files.write_atomic(target, '{"new": "a much longer text that is cut in half"}\n')
    assert target.read_text() == '{"old": true}\n'
    assert [p.name for p in tmp_path.iterdir()] == ["summary.json"]  # no temporary left behind
