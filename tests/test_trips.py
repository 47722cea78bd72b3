"""Trips a new user met (issue 14): each message says what is actually wrong."""
import numpy as np
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


# ---- absolute temperatures and differences (netgen/language/affine.py) ----------------------
# The rule is the affine one of thermometry: T(a) - T(b) is a difference, T(a) + 5 K a temperature,
# T(a) + T(b) neither. 1 degC is 274.15 K, so a degC value where a difference is meant would pass
# or fail for the wrong reason.
SINK = ("fixed air 25 degC\nmass sink 10 J/K start 40 degC\nlink l sink air 1 W/K\nheat h sink 5 W\n"
        "transient until 60 s\n")


@pytest.mark.parametrize("line, at, words", [
    ("expect max T(sink) - 25 degC < 3 degC", "3 degC", "the limit is an absolute temperature"),
    ("expect max T(sink) - T(air) > 2 degC", "2 degC", "the limit is an absolute temperature"),
    ("expect max T(sink, air) > 2 degC", "2 degC", "the limit is an absolute temperature"),
    ("expect T(sink) - T(air) at 1 s = 15 K within 1 degC", "1 degC", "a tolerance is a temperature difference"),
    ("expect max T(sink) + T(air) < 400 K", "T(sink)", "adds up to 2 absolute temperatures"),
    ("expect max T(sink) + 25 degC < 400 K", "T(sink)", "adds up to 2 absolute temperatures"),
    ("expect max 2 W/K * 25 degC < 3 W", "2 W/K", "written in degC is multiplied"),
    ("expect max T(sink) < 30 degC - 25 degC", "30 degC", "the limit is a difference of two temperatures"),
])
def test_degc_where_a_difference_is_meant_is_refused_with_its_place(tmp_path, capsys, line, at, words):
    code, out = _run(tmp_path, capsys, SINK + line + "\n")
    assert code == 2
    assert f"d.etn:6:{line.index(at) + 1}: error" in out and words in out and "hint:" in out


def test_differences_against_kelvin_limits_are_read_right(tmp_path, capsys):
    """T(sink) - 25 degC is a difference: with 40 degC - 25 degC = 15 K at the start, its max is
    15 K (the sink cools towards 25 degC + 5 W / (1 W/K) = 30 degC, a 5 K difference)."""
    lines = ["expect max T(sink) - 25 degC = 15 K within 0.01 K",
             "expect final T(sink) - T(air) < 6 K",
             "expect final (T(sink) + T(air)) / 2 < 30 degC",  # a mean of two temperatures is one
             "expect final (T(sink) - T(air)) * 1 W/K < 6 W",
             "expect final Q(l) / T(sink) < 1 W/K"]  # an absolute temperature read in kelvin
    code, out = _run(tmp_path, capsys, SINK + "\n".join(lines) + "\n", cmd="run")
    assert code == 0, out
    assert "5 passed, 0 failed" in out


def test_rated_dtmax_in_degc_is_refused(tmp_path, capsys):
    text = "ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b rated imax 6 A vmax 15 V dtmax 68 degC at 300 K\n"
    code, out = _run(tmp_path, capsys, text)
    assert code == 2 and "dtmax is a temperature difference" in out


# ---- the remaining trips of issue 14 ------------------------------------------------------------
def test_readme_installs_extras_from_a_checkout():
    """netgen-etn is not on a package index: `pip install "netgen-etn[plot]"` cannot work from a
    checkout. Every extra the README installs is one pyproject.toml declares, from `.`."""
    import re
    from pathlib import Path

    root = Path(__file__).resolve().parents[1]
    readme = (root / "README.md").read_text(encoding="utf-8")
    table = (root / "pyproject.toml").read_text().split("[project.optional-dependencies]")[1].split("\n[")[0]
    extras = re.findall(r"^(\w+) = \[", table, re.M)  # no tomllib before Python 3.11
    assert "netgen-etn[" not in readme
    named = re.findall(r'pip install (?:-e )?"\.\[(\w+)\]"', readme)
    assert "plot" in named and set(named) <= set(extras)


def test_ratio_before_a_ramp_is_undefined_not_huge():
    """P(r1) / P(r2) is R1/R2 = 2 once current flows (Joule's law, the same current in both) and
    0/0 before the ramp starts at 1 s: masked there, so neither the expectation nor the plot
    meets a value like 5e30."""
    import netgen
    from netgen.outputs.plots import series_for

    text = ("ground g\nsource v a g ramp(0 V, 1 V, 1 s, 2 s)\nresistor r1 a b 2 ohm\nresistor r2 b g 1 ohm\n"
            "transient until 3 s step 0.05 s\nexpect max P(r1) / P(r2) < 2.001\nexpect min P(r1) / P(r2) > 1.999\n")
    res = netgen.load(text).run()
    assert [c.passed for c in res.checks] == [True, True]
    (ratio,) = [s for s in series_for(res) if s.kind == "expression"]
    finite = ratio.values[np.isfinite(ratio.values)]
    assert np.isnan(ratio.values[res.time < 1.0]).all() and np.allclose(finite, 2.0, rtol=1e-6)


def test_round_off_prints_as_zero_beside_its_unit_scale():
    from netgen.outputs.text import fmt

    assert fmt("V(x)", -1.10298e-14, False, 5.0) == "0 V"
    assert fmt("V(x)", -1.10298e-6, False, 5.0) == "-1.10298e-06 V"  # small, but not round-off
    assert fmt("V(x)", -1.10298e-14, False, 0.0) == "-1.10298e-14 V"  # nothing to compare with


def test_bridge_prints_no_round_off(tmp_path, capsys):
    """A balanced bridge: V(b) - V(c) is exactly 0 V (equal dividers), which round-off must not turn
    into a voltage of 1e-14 V in the printed table."""
    text = ("ground g\nsource v a g 5 V\nresistor r1 a b 1 kohm\nresistor r2 b g 3 kohm\nresistor r3 a c 2 kohm\n"
            "resistor r4 c g 6 kohm\nresistor bridge b c 1 ohm\nrecord V(b) V(c) I(bridge) P(bridge)\nsteady\n")
    code, out = _run(tmp_path, capsys, text, cmd="run")
    assert code == 0 and "e-1" not in out, out
    assert out.split("I(bridge)")[1].split()[:2] == ["0", "A"]


def test_modes_header_counts_the_rows_and_repeated_eigenvalues(tmp_path, capsys):
    """Two equal masses on equal links to a reservoir: two eigenvalues of -G/C = -1 1/s each
    (closed form); both are listed, and the header counts them."""
    text = ("fixed r 300 K\nmass a 1 J/K start 310 K\nmass b 1 J/K start 310 K\nlink la a r 1 W/K\n"
            "link lb b r 1 W/K\ntransient until 1 s\nmodes\n")
    code, out = _run(tmp_path, capsys, text, cmd="run")
    assert code == 0 and "modes of the linearised system: 2 eigenvalues\n" in out
    rows = out.split("takes part most\n")[1].splitlines()[:2]
    assert all(r.split()[0] == "-1" for r in rows)


@pytest.mark.parametrize("text", [
    "ground g\nsource i a g 1 mA\ncapacitor c a g 1 uF\nsteady\n",
    "ground g\nresistor r a b 1 ohm\ncapacitor c a g 1 uF\nsource i b g 1 mA\nsteady\n",
    "resistor r a b 1 ohm\nsource v a b 1 V\nsteady\n",
    "ground g\nfixed h 300 K\nfixed c 290 K\nthermoelectric t pins p n sides h c { seebeck 1 mV/K resistance 1 ohm "
    "conductance 1 W/K }\ncapacitor k p g 1 uF\nsteady\n",
])
def test_missing_ground_names_what_reaches_the_nodes(tmp_path, capsys, text):
    code, out = _run(tmp_path, capsys, text)
    assert code == 2 and "nothing" not in out and "()" not in out
    assert "have no path to a ground" in out or "reached only through capacitors" in out


def test_a_wrong_unit_is_named_in_plain_units(tmp_path, capsys):
    """A gain written in A/W where A/K is needed: the message names `A/W`, not its base units."""
    text = ("ground g\nfixed bath 300 K\nmass body 1 J/K\nlink k body bath 1 W/K\nsource drive p g 1 A\n"
            "resistor r p g 1 ohm\ncontroller hold T(body) at 290 K by drive { proportional 0.5 A/W }\n"
            "transient until 1 s\n")
    code, out = _run(tmp_path, capsys, text)
    assert code == 2 and "needs A/K, not A/W" in out and "kg" not in out


def test_an_unknown_parameter_lists_the_designs_parameters(tmp_path, capsys):
    """`--set` of a name that is far from every parameter: the hint lists the ones there are."""
    path = tmp_path / "d.etn"
    path.write_text("let ambient = 24 degC\nlet leak = 2 W/K\nfixed room ambient\nmass m 1 J/K\n"
                    "link k m room leak\nsteady\n")
    code = main(["check", str(path), "--set", "I_drive=2 A"])
    err = capsys.readouterr().err
    assert code == 2 and "this design's: ambient, leak" in err
