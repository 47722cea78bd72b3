"""Trips a new user met (issue 14): each message says what is actually wrong."""
import pytest

from netgen.cli import main

TE = "ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b {\n"


def _run(tmp_path, capsys, text, *args, cmd="check"):
    f = tmp_path / "d.etn"
    f.write_text(text)
    code = main([cmd, str(f), *args])
    cap = capsys.readouterr()
    return code, cap.out + cap.err


def test_degc_in_compound_after_a_number(tmp_path, capsys):
    code, out = _run(tmp_path, capsys, "fixed r 300 K\nmass m 1 J/K\nlink l m r 0.35 degC/W\n")
    assert code == 2
    assert "`degC` may not appear inside a compound unit" in out and "did you mean `W`" not in out


def test_missing_brace_before_a_statement(tmp_path, capsys):
    text = TE + " seebeck 1 mV/K resistance 1 ohm conductance 1 W/K\nsource v p g 1 V\ntransient until 1 s\n"
    code, out = _run(tmp_path, capsys, text)
    assert code == 2
    assert "a `}` is probably missing" in out and "the `{` at line 4 is not closed" in out
    assert "did you mean `source`" not in out


def test_missing_brace_at_end_of_file(tmp_path, capsys):
    code, out = _run(tmp_path, capsys, TE + " seebeck 1 mV/K\n")
    assert code == 2 and "a `}` is probably missing" in out and "line 4" in out


@pytest.mark.parametrize("body", [" seebek 1 mV/K\n", "  seebek 1 mV/K\n resistance 1 ohm\n"])
def test_typo_inside_module_braces(tmp_path, capsys, body):
    code, out = _run(tmp_path, capsys, TE + body + "}\n")
    assert code == 2
    assert "`seebek` is not an attribute of `thermoelectric`" in out and "did you mean `seebeck`?" in out
    assert "a statement starts with" not in out


def test_set_without_unit(tmp_path, capsys):
    text = "let I_max = 1 A\nground g\nsource i a g I_max\nresistor r a g 1 ohm\nsteady\n"
    code, out = _run(tmp_path, capsys, text, "--set", "I_max=2", cmd="run")
    assert code == 2
    assert "has no unit" in out and "give it a unit: A" in out and "is in 1" not in out


def test_an_electrical_node(tmp_path, capsys):
    code, out = _run(tmp_path, capsys, "ground g\nresistor x a g 1 ohm\nfixed r 300 K\nrecord T(a)\n")
    assert code == 2 and "`a` is an electrical node" in out


def test_one_node_singular(tmp_path, capsys):
    text = "part p(x, y) {\n  mass m 1 J/K start 300 K\n  link l x y 1 W/K\n}\nmass a 1 J/K start 300 K\nuse p q(a)\n"
    code, out = _run(tmp_path, capsys, text)
    assert code == 2 and "but 1 node is given" in out and "1 nodes" not in out


def test_min_and_h_time_units(tmp_path, capsys):
    text = ("fixed r 300 K\nmass m 1 J/K start 290 K\nlink l m r 1 W/K\nlet tau = 0.5 h\nlet q = 3 W/h\n"
            "transient until 2 min\nexpect min T(m) > 1 K\nexpect final T(m) = min(310 K, 300 K) within 1 K\n")
    code, out = _run(tmp_path, capsys, text, cmd="run")
    assert code == 0, out
    assert "transient to 120 s" in out


def test_min_h_values():
    import netgen
    d = netgen.load("let a = 2 min\nlet b = 1.5 h\nfixed r 300 K\n")
    assert d.params["a"][0] == 120.0 and d.params["b"][0] == 5400.0


def test_conserved_mode(tmp_path, capsys):
    text = ("mass a 1.7 J/K start 300 K\nmass b 2.3 J/K start 310 K\nmass c 0.37 J/K start 305 K\n"
            "link l a b 3.3 W/K\nlink k b c 0.71 W/K\nmodes\ntransient until 1 s\n")
    code, out = _run(tmp_path, capsys, text, cmd="run")
    assert code == 0, out
    assert "conserved" in out and "grows" not in out and "e+16" not in out
