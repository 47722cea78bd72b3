"""Bad inputs, table-driven: each one exits 2 from `netgen check` with file:line:col, the line,
a caret and a message; none prints a traceback (issue: robustness)."""
import pytest

from netgen.cli import main

# (id, text, line, column, a fragment of the message)
CASES = [
    ('unknown statement', 'mass m 1 J/K\nlnk l m r 1 W/K\n', 2, 1, 'unexpected `lnk`'),
    ('unknown unit', 'mass m 1 J/Kg\n', 1, 12, 'unknown unit `Kg`'),
    ('case of unit', 'ground g\nresistor r a g 5 mOhm\n', 2, 18, 'unknown unit `mOhm`'),
    ('bare number for capacity', 'mass m 12\n', 1, 8, 'a heat capacity needs a unit: J/K'),
    ('wrong unit capacity', 'mass m 12 W\n', 1, 8, 'a heat capacity needs a unit of J/K, not W'),
    ('degC in compound', 'let x = 1 W/degC\n', 1, 13, '`degC` may not appear inside a compound unit'),
    ('divide by zero', 'let x = 1 K / 0\n', 1, 15, 'division by zero'),
    ('add different units', 'let x = 1 K + 2 W\n', 1, 9, 'cannot add W to K'),
    ('unknown name', 'fixed r ambient\n', 1, 9, 'unknown name `ambient`'),
    ('unknown function', 'let x = sqr(4)\n', 1, 9, 'unknown function `sqr`'),
    ('param redefined', 'let a = 1 K\nlet a = 2 K\n', 2, 5, 'parameter `a` is already defined at line 1'),
    ('param is unit', 'let mA = 2\n', 1, 5, '`mA` is a unit symbol and cannot name a parameter'),
    ('reserved name', 'let time = 2 s\n', 1, 5, '`time` is a reserved name'),
    ('node both domains', 'ground g\nresistor r a g 1 ohm\nmass a 1 J/K\n', 3, 6, 'node `a` is electrical (first used at line 2) but is used he'),
    ('element redefined', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nlink l m r 2 W/K\n', 4, 6, 'element `l` is already defined at line 3'),
    ('mass twice', 'fixed r 300 K\nmass m 1 J/K\nmass m 2 J/K\nlink l m r 1 W/K\n', 3, 6, 'mass `m` is already defined at line 2'),
    ('no ground', 'resistor r a b 1 ohm\nsource v a b 1 V\n', 1, 12, 'electrical nodes `a`, `b` have no path to a ground'),
    ('island no reservoir steady', 'mass m 1 J/K\nmass n 1 J/K\nlink l m n 1 W/K\nsteady\n', 4, 1, 'thermal nodes `m`, `n` have no reservoir, so `steady` has no'),
    ('island unstarted mass', 'mass m 1 J/K start 300 K\nmass n 1 J/K\nlink l m n 1 W/K\ntransient until 1 s\n', 2, 6, 'thermal nodes `m`, `n` have no reservoir, so every mass need'),
    ('junction only', 'link l a b 1 W/K\n', 1, 8, 'thermal nodes `a`, `b` have neither a reservoir nor a heat c'),
    ('voltage loop', 'ground g\nsource v1 a g 1 V\nsource v2 a g 2 V\n', 3, 8, '`v2` closes a loop of voltage sources and inductors'),
    ('inductor loop', 'ground g\nsource v1 a g 1 V\ninductor l a g 1 mH\n', 3, 10, '`l` closes a loop of voltage sources and inductors'),
    ('capacitor cut set', 'ground g\ncapacitor c a g 1 uF\nsource i a g 1 mA\nsteady\n', 2, 11, 'electrical node `a` is reached only through capacitors and c'),
    ('current cut set', 'ground g\nsource i a g 1 mA\nresistor r a b 1 ohm\nsource j b g 1 mA\ncapacitor c b g 1 uF\nsteady\n', 2, 8, 'electrical nodes `a`, `b` are reached only through capacitor'),
    ('negative capacity', 'mass m -1 J/K\n', 1, 8, 'a heat capacity must be positive, not -1 J/K'),
    ('zero resistance', 'ground g\nresistor r a g 0 ohm\n', 2, 16, 'a resistance must be positive, not 0 ohm'),
    ('zero link', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 0 W/K\n', 3, 12, 'a link value must be positive, not 0 W/K'),
    ('time varying resistance', 'ground g\nresistor r a g step(1 ohm, 2 ohm, 1 s)\n', 2, 16, 'a resistance must be constant'),
    ('switch reversed', 'ground g\nsource v a g 1 V\nswitch s a b closed 2 s .. 1 s\nresistor r b g 1 ohm\n', 3, 21, 'the interval 2 s .. 1 s is empty or reversed'),
    ('switch empty', 'ground g\nsource v a g 1 V\nswitch s a b closed 1 s .. 1 s\nresistor r b g 1 ohm\n', 3, 21, 'the interval 1 s .. 1 s is empty or reversed'),
    ('switch overlap', 'ground g\nsource v a g 1 V\nswitch s a b closed 1 s .. 3 s, 2 s .. 4 s\nresistor r b g 1 ohm\n', 3, 14, 'the closed intervals of a switch overlap'),
    ('switch no closed', 'ground g\nsource v a g 1 V\nswitch s a b on 1 ohm\nresistor r b g 1 ohm\n', 3, 1, 'switch `s` needs `closed T1 .. T2`'),
    ('transient no until', 'fixed r 300 K\ntransient 10 s\n', 2, 11, 'unexpected `10 s`'),
    ('step longer than run', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\ntransient until 1 s step 2 s\n', 4, 21, 'the step (2 s) is longer than the run (1 s)'),
    ('negative end time', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\ntransient until -1 s\n', 4, 17, 'the end time must be positive, not -1 s'),
    ('te missing pins', 'thermoelectric t sides a b { seebeck 1 mV/K resistance 1 ohm conductance 1 W/K }\n', 1, 16, 'thermoelectric `t` needs `pins P N`'),
    ('te missing values', 'ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b { seebeck 1 mV/K }\n', 4, 16, 'thermoelectric `t` needs `resistance`, `conductance`'),
    ('te two forms', 'ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b { seebeck 1 mV/K resistance 1 ohm conductance 1 W/K rated imax 1 A vmax 1 V dtmax 1 K at 300 K }\n', 4, 16, 'thermoelectric `t` needs exactly one way to give its values,'),
    ('te unknown material', 'ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b { couples 10 material bite leg 1 mm^2 1 mm }\n', 4, 59, 'unknown material `bite`'),
    ('unknown attribute', 'fixed r 300 K\nmass m 1 J/K heats r\n', 2, 14, '`heats` is not an attribute of `mass`'),
    ('attribute twice', 'fixed r 300 K\nmass m 1 J/K start 300 K start 310 K\n', 2, 26, '`start` is given twice'),
    ('record unknown node', 'fixed r 300 K\nrecord T(q)\n', 2, 8, 'unknown node `q`'),
    ('record wrong domain', 'fixed r 300 K\nground g\nresistor x a g 1 ohm\nrecord V(r)\n', 4, 8, '`r` is a thermal node'),
    ('record I of link', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nrecord I(l)\n', 4, 8, '`I(l)` needs an electrical element; `l` is thermal'),
    ('record unknown signal', 'fixed r 300 K\nrecord X(r)\n', 2, 8, 'unknown signal `X(...)`'),
    ('expect unit mismatch', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nsteady\nexpect steady T(m) < 3 W\n', 5, 22, 'the limit is in W but the signal is in K'),
    ('expect = without within', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nsteady\nexpect steady T(m) = 3 K\n', 5, 20, '`=` needs `within TOL`'),
    ('expect at after end', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\ntransient until 10 s\nexpect T(m) at 20 s < 3 K\n', 5, 1, '`at 20 s` is after the end of the transient (10 s)'),
    ('expect without transient', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nsteady\nexpect max T(m) < 3 K\n', 5, 1, 'this expectation reads the `transient` analysis, which the f'),
    ('within with <', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nsteady\nexpect steady T(m) < 3 K within 1 K\n', 5, 33, '`within` only goes with `=`, not with `<`'),
    ('audit without transient', 'fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nsteady\naudit entropy\n', 5, 1, '`audit entropy` needs a `transient`'),
    ('unclosed brace', 'ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b {\n seebeck 1 mV/K\n', 5, 16, 'unexpected end of the file'),
    ('unclosed paren', 'let x = (1 K + 2 K\n', 1, 19, 'unexpected end of the line'),
    ('shape arg count', 'ground g\nsource v a g step(0 V, 1 V)\nresistor r a g 1 ohm\n', 2, 14, '`step` takes 3 arguments, not 2'),
    ('shape mixed units', 'ground g\nsource v a g step(0 V, 1 A, 1 s)\nresistor r a g 1 ohm\n', 2, 14, 'the two values of `step` need one unit, not V and A'),
    ('table decreasing', 'ground g\nsource v a g table(0 s, 0 V, 2 s, 1 V, 1 s, 2 V)\nresistor r a g 1 ohm\n', 2, 14, 'the times of a `table` must not decrease'),
    ('sine frequency unit', 'ground g\nsource v a g sine(0 V, 1 V, 2 s)\nresistor r a g 1 ohm\n', 2, 14, 'the frequency needs a unit of Hz, not s'),
    ('nonfinite', 'let x = 1e999 K\nfixed r x\n', 1, 9, '`x` is not a finite number'),
    ('log of zero', 'let x = log(0)\n', 1, 9, '`log` of a number that is not positive'),
    ('sqrt negative', 'fixed r 300 K\nmass m sqrt(-1 J^2/K^2)\n', 2, 8, 'a heat capacity is not a finite number'),
    ('exponent with unit', 'let x = 2 ^ (1 K)\n', 1, 14, 'an exponent must be a plain number, not K'),
    ('unknown part', 'use stage s(a, b)\n', 1, 5, 'unknown part `stage`'),
    ('part ports', 'part p(a, b) {\n  link l a b 1 W/K\n}\nuse p s(x)\n', 4, 7, 'part `p` has 2 ports (a, b), but 1 node is given'),
    ('recursive part', 'part p(a) {\n  use p q(a)\n}\nuse p s(x)\n', 2, 7, 'part `p` uses itself'),
    ('include non etn', 'include "notes.txt"\n', 1, 9, '`notes.txt` is not a .etn file'),
    ('include missing', 'include "missing.etn"\n', 1, 9, 'cannot read `missing.etn`: No such file or directory'),
    ('design twice', 'design "a"\ndesign "b"\n', 2, 1, '`design` is given twice'),
    ('stray character', 'fixed r 300 K $\n', 1, 15, 'unexpected character `$`'),
    ('empty file', '', 1, 1, 'the design has no nodes'),
    ('only comments', '# nothing here\n\n', 1, 1, 'the design has no nodes'),
    ('signal in let', 'fixed r 300 K\nlet x = T(r)\n', 2, 9, 'signal `T(...)` is only allowed in `expect` and `record`'),
    ('string where value', 'fixed r "hot"\n', 1, 9, 'unexpected `"hot"`'),
    ('missing value', 'fixed r\n', 1, 8, 'unexpected end of the line'),
    ('tempco unit', 'fixed h 300 K\nground g\nresistor r a g 1 ohm tempco 3 K at h ref 300 K\n', 3, 29, 'a temperature coefficient needs a unit of 1/K, not K'),
    ('heats electrical node', 'ground g\nresistor r a g 1 ohm heats g\n', 2, 28, 'node `g` is electrical (first used at line 1) but is used he'),
    ('ambiguous Q name', 'fixed room 300 K\nmass m 1 J/K\nlink room m room 1 W/K\n', 3, 6, '`room` names both an element and a reservoir node, so `Q(roo'),
    ('rated dtmax too big', 'ground g\nfixed a 300 K\nfixed b 300 K\nthermoelectric t pins p g sides a b { rated imax 1 A vmax 1 V dtmax 400 K at 300 K }\n', 4, 69, 'dtmax must be smaller than the hot-side rating temperature'),
    ('material missing property', 'material m { seebeck 1 mV/K }\n', 1, 10, 'material `m` needs `resistivity`, `conductivity`'),
    ('material with time', 'material m { seebeck 1 mV/K * time / 1 s resistivity 1 ohm*m conductivity 1 W/(m*K) }\n', 1, 22, 'a Seebeck coefficient may depend on the temperature `T`, not'),
    # A degC value is an absolute temperature (1 degC = 274.15 K): against a difference it made a
    # wrong pass (measured 5.6 K read as -267.6 degC < 1 degC).
    ('degC limit on a difference', 'fixed air 20 degC\nmass s 10 J/K start 25 degC\nlink l s air 1 W/K\n'
     'transient until 9 s\nexpect max T(s) - T(air) < 1 degC\n', 5, 28, 'the expression is a temperature difference'),
    ('degC tolerance', 'fixed air 20 degC\nmass s 10 J/K start 25 degC\nlink l s air 1 W/K\n'
     'transient until 9 s\nexpect final T(s) = 21 degC within 0.5 degC\n', 5, 36, 'a tolerance is a temperature difference'),
    ('with wrong unit', 'part p(a) {\n  let G = 1 W/K\n  fixed a 300 K\n}\nuse p s(x) with G = 1 K\n', 2, 7, '`with G = ...` is in K, but `G` is in W/K'),
]


@pytest.mark.parametrize("name, text, line, col, fragment", CASES, ids=[c[0] for c in CASES])
def test_bad_input_is_located(tmp_path, monkeypatch, capsys, name, text, line, col, fragment):
    (tmp_path / "notes.txt").write_text("not a description")
    (tmp_path / "case.etn").write_text(text)
    monkeypatch.chdir(tmp_path)
    code = main(["check", "case.etn"])  # the command itself, in this process (tests/test_cli.py runs it as one)
    err = capsys.readouterr().err
    assert code == 2, err
    assert "Traceback" not in err
    assert f"case.etn:{line}:{col}: error: " in err, err
    assert fragment in err, err
    if text.strip() and not text.lstrip().startswith("#"):
        assert "^" in err  # the caret under the place


def test_there_are_at_least_forty_cases():
    assert len(CASES) >= 40


def test_several_errors_are_all_reported(tmp_path, monkeypatch, capsys):
    """Each bad statement gets its own located error, not only the first."""
    (tmp_path / "many.etn").write_text("mass a 1 W\nmass b -2 J/K\nfixed r 300 K\nlink l a r 1 V\nlink q b r 1 W/K\n")
    monkeypatch.chdir(tmp_path)
    assert main(["check", "many.etn"]) == 2
    err = capsys.readouterr().err
    assert "many.etn:1:8: error:" in err and "many.etn:2:8: error:" in err and "many.etn:4:12: error:" in err
    assert "3 errors" in err


def test_node_with_one_connection_gets_a_note(tmp_path, monkeypatch, capsys):
    """Legal but often a typo: a link that ends at a node nothing else touches."""
    (tmp_path / "one.etn").write_text("fixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\nlink d m x 1 W/K\n")
    monkeypatch.chdir(tmp_path)
    assert main(["check", "one.etn"]) == 0
    err = capsys.readouterr().err
    assert "one.etn:4:10: note: node `x` has one connection" in err
    assert "`m`" not in err and "`r`" not in err
