"""The language reference cannot drift: every code block in grammar/language.md is read here.

Blocks are of three kinds, told apart by what they hold:
- maths (`·`, `−`, `½`, ...): the module's equations, not .etn text;
- synopses, with placeholders in capitals and optional parts in `[...]`: each placeholder is
  replaced by a name (`x`; a name stands for any value too), `AGG`, `CMP` and `SIGNAL` by one of
  theirs, and every combination of the optional parts is parsed with the grammar;
- examples: parsed, then loaded as they stand, or with the few lines listed in COMPLETIONS that
  make a fragment a whole design.
Where the text states an outcome beside an example, OUTCOMES and the tests after it assert it,
each with the words of the reference it checks (so a reworded sentence fails here first).
"""
from __future__ import annotations

import itertools
import math
import re
import textwrap
from dataclasses import dataclass
from pathlib import Path

import pytest

import netgen
from netgen.language.elaborate import Elaborator
from netgen.model.errors import NetgenError

ROOT = Path(__file__).resolve().parents[1]
REFERENCE = ROOT / "grammar" / "language.md"
MATH = set("·−½²⁴√≤≥")


@dataclass(frozen=True)
class Block:
    line: int  # of language.md where the block starts
    text: str

    @property
    def kind(self) -> str:
        if any(c in MATH for c in self.text):
            return "math"
        words = re.findall(r"[A-Za-z_][A-Za-z0-9_]*", self.text)
        if "[" in self.text or "..." in self.text or any(len(w) > 1 and w.isupper() for w in words):
            return "synopsis"
        return "example"

    @property
    def id(self) -> str:
        first = self.text.strip().splitlines()[0]
        return f"L{self.line}-" + re.sub(r"[^A-Za-z0-9]+", "-", first)[:40].strip("-")


def code_blocks(markdown: str) -> list[Block]:
    """Indented code blocks (four spaces more than the text, after a blank line; also inside
    list items) and fenced blocks marked etn or nothing."""
    lines = markdown.split("\n")
    out: list[Block] = []
    i = 0
    while i < len(lines):
        line = lines[i]
        fence = re.match(r"\s*```(\w*)\s*$", line)
        if fence:
            j = i + 1
            while j < len(lines) and not re.match(r"\s*```\s*$", lines[j]):
                j += 1
            if fence.group(1) in ("", "etn"):
                out.append(Block(i + 2, textwrap.dedent("\n".join(lines[i + 1:j]))))
            i = j + 1
            continue
        if line.startswith("    ") and line.strip() and i > 0 and not lines[i - 1].strip():
            j = i
            while j < len(lines) and (lines[j].startswith("    ") or not lines[j].strip()):
                j += 1
            while not lines[j - 1].strip():
                j -= 1
            out.append(Block(i + 1, textwrap.dedent("\n".join(lines[i:j]))))
            i = j
            continue
        i += 1
    return out


BLOCKS = code_blocks(REFERENCE.read_text(encoding="utf-8"))
EXAMPLES = [b for b in BLOCKS if b.kind == "example"]
SYNOPSES = [b for b in BLOCKS if b.kind == "synopsis"]


def parse(text: str):
    """The syntax tree, or the located error `netgen check` would print."""
    return Elaborator(text, "language.md", {}).parse(text)


# ---- synopses ----------------------------------------------------------------------------------
PLACEHOLDERS = {"AGG": "max", "CMP": "<", "SIGNAL": "T(x)", "COMPARISON": "x < x", "EXTREME": "min", "CONDITION": "T(x) < x"}


def _line_variants(line: str) -> list[str]:
    if re.fullmatch(r"\s*\.\.\.[\w ]+\.\.\.\s*", line):  # `...statements...`
        return [""]
    line = re.sub(r",\s*\.\.\.(?=\))", "", line)  # (PORT1, PORT2, ...)
    line = re.sub(r"\s*\.\.\.(?=\])", "", line)  # [SIGNAL ...], [, T3 .. T4 ...]
    n = len(re.findall(r"\[[^\[\]]*\]", line))
    out = []
    for mask in itertools.product([False, True], repeat=n):
        keep = iter(mask)
        v = re.sub(r"\[([^\[\]]*)\]", lambda m: m.group(1) if next(keep) else "", line)
        out.append(re.sub(r"\b[A-Z][A-Z0-9_]*\b", lambda m: PLACEHOLDERS.get(m.group(), "x"), v))
    return out


def synopsis_variants(text: str) -> list[str]:
    """The block with its placeholders filled, once for each combination of optional parts
    (lines combined by index, so every line is seen with all and with none of its options)."""
    per_line = [_line_variants(line) for line in text.splitlines()]
    n = max(len(v) for v in per_line)
    return ["\n".join(v[min(k, len(v) - 1)] for v in per_line) + "\n" for k in range(n)]


def test_the_reference_has_blocks_of_each_kind():
    """The extraction itself: it finds the blocks the reference is made of."""
    kinds = [b.kind for b in BLOCKS]
    assert kinds.count("example") >= 3 and kinds.count("synopsis") >= 12 and kinds.count("math") >= 1
    assert all(b.text.strip() for b in BLOCKS)


@pytest.mark.parametrize("block", SYNOPSES, ids=[b.id for b in SYNOPSES])
def test_synopsis_parses_with_every_option(block):
    for text in synopsis_variants(block.text):
        try:
            parse(text)
        except NetgenError as e:
            pytest.fail(f"language.md line {block.line}: the synopsis does not parse as\n{text}\n{e.render()}")


def test_synopsis_filling():
    assert synopsis_variants("audit energy [within TOL]") == ["audit energy \n", "audit energy within x\n"]
    assert synopsis_variants("switch NAME A B closed T1 .. T2 [, T3 .. T4 ...]")[-1] == \
        "switch x x x closed x .. x , x .. x\n"
    assert synopsis_variants("part NAME(P1, ...) {\n    ...statements...\n}") == ["part x(x) {\n\n}\n"]


# ---- examples ----------------------------------------------------------------------------------
# What makes a fragment a whole design, by the example's first line: the fewest lines that give
# its nodes a ground, a reservoir and the signals it names.
COMPLETIONS = {
    "thermoelectric tec1 pins q gnd sides die sink {": "ground gnd\nfixed sink 25 degC\n",
    "expect max T(die) < 30 degC": textwrap.dedent("""\
        fixed bath 20 degC
        mass die 1 J/K
        link a die bath 1 W/K
        mass body 1 J/K start 30 degC
        link b body bath 1 W/K
        ground gnd
        source s bus gnd 1 V
        resistor load bus gnd 10 ohm
        steady
        transient until 400 s step 1 s
        """),
    "humidity 50 % at 20 degC": "fixed room 20 degC\nmass plate 1 J/K\nlink l plate room 1 W/K\n",
    "expect window T(body) < T(bath) and Q(tec.a) > 0 W lasts > 0.5 s": textwrap.dedent("""\
        fixed bath 25 degC
        mass body 0.4 J/K start 55 degC
        ground p
        thermoelectric tec pins p n sides body bath { seebeck 55 mV/K resistance 1.6 ohm conductance 0.6 W/K }
        inductor coil n x 2.2 H start 0 A
        resistor leads x p 50 mohm
        transient until 6 s step 0.01 s
        """),
}


def _whole(block: Block) -> str:
    first = block.text.strip().splitlines()[0].strip()
    return COMPLETIONS.get(first, "") + block.text + "\n"


@pytest.mark.parametrize("block", EXAMPLES, ids=[b.id for b in EXAMPLES])
def test_example_parses_and_loads(block):
    parse(block.text + "\n")
    try:
        netgen.load(_whole(block))
    except NetgenError as e:
        pytest.fail(f"language.md line {block.line}: the example does not load (add what it needs to "
                    f"COMPLETIONS if it is a fragment)\n{e.render()}")


def test_every_completion_is_used():
    firsts = {b.text.strip().splitlines()[0].strip() for b in EXAMPLES}
    assert set(COMPLETIONS) <= firsts


def _example(first_line: str) -> Block:
    return next(b for b in EXAMPLES if b.text.strip().startswith(first_line))


def _said(words: str) -> None:
    """The reference still says this (white space and line breaks aside)."""
    flat = " ".join(REFERENCE.read_text(encoding="utf-8").split())
    assert " ".join(words.split()) in flat, f"language.md no longer says: {words}"


def test_module_example_values():
    _said("seebeck 52 mV/K resistance 1.8 ohm")
    d = netgen.load(_whole(_example("thermoelectric tec1")))
    tec = d.element("tec1")
    assert (tec.seebeck, tec.resistance, tec.conductance) == pytest.approx((52e-3, 1.8, 0.6))


def test_radiation_and_convection_example_carries_the_heat_from_a_to_b():
    """'Each carries heat from A to B, its `Q(NAME)`': in the steady state the case sheds its
    3 W through both, each positive (A = case is the warmer)."""
    _said("Each carries heat from A to B, its `Q(NAME)`.")
    res = netgen.load(_whole(_example("fixed room 25 degC")) + "record Q(glow) Q(air)\n").run()
    glow, air = res.steady["Q(glow)"], res.steady["Q(air)"]
    assert glow > 0 and air > 0
    assert glow + air == pytest.approx(3.0, rel=1e-9)


def test_expect_examples_read_as_the_reference_says():
    d = netgen.load(_whole(_example("expect max T(die)")))
    got = [(e.agg, e.cmp) for e in d.expectations]
    assert got == [("max", "<"), ("at", "="), ("min", "<"), ("steady", ">"), ("min", ">")]
    assert d.expectations[1].at_time == 60 and d.expectations[1].within == pytest.approx(0.5)
    assert d.expectations[4].between == (300, 303)


def test_window_examples_pass_on_the_coil_loop():
    """The body of examples/coil_swing.etn is colder than its bath from 1.26 s to its lowest
    point at 2.006 s (tests/test_windows.py checks both against solve_ivp)."""
    _said("`lasts CMP DURATION` judges the longest window; with no window the measured duration is 0 s.")
    res = netgen.load(_whole(_example("expect window T(body)"))).run()
    assert [c.passed for c in res.checks] == [True, True]
    assert len(res.windows) == 1 and res.windows[0]["line"] == 8


def test_expect_steady_solves_without_a_steady_line():
    """Issue 14: the reference said `expect steady` solves the steady state while the tool refused.
    The load's steady value is V²/R = (1 V)²/10 ohm = 0.1 W (Joule's law), with or without a
    `steady` line."""
    _said("or `steady`, the value in the steady state: `expect steady` solves the steady state as a "
          "`steady` line does, so it needs no `steady` line of its own.")
    text = _whole(_example("expect max T(die)"))
    without = text.replace("steady\ntransient", "transient")
    assert without != text
    for t in (text, without):
        res = netgen.load(t).run()
        (c,) = [c for c in res.checks if c.text.startswith("expect steady")]
        assert c.measured == pytest.approx(0.1, rel=1e-9)


def test_expectations_and_audits_need_their_analysis():
    _said("An expectation other than `expect steady` on a design without a `transient` is an error when the "
          "file is read, and so are an `at TIME` after the end of the transient and a `between` interval that "
          "starts after it")
    _said("An audit needs a `transient`: without one it is an error when the file is read.")
    base = "fixed room 25 degC\nmass m 1 J/K start 30 degC\nlink l m room 1 W/K\n"
    for tail, words in [("steady\nexpect max T(m) < 400 K\n", "reads the `transient` analysis"),
                        ("steady\naudit energy\n", "`audit energy` needs a `transient`"),
                        ("transient until 10 s\nexpect T(m) at 20 s < 400 K\n", "after the end of the transient"),
                        ("transient until 10 s\nexpect max T(m) < 400 K between 11 s and 12 s\n",
                         "starts after the end of the transient")]:
        with pytest.raises(NetgenError, match=re.escape(words)):
            netgen.load(base + tail)


def test_between_without_reported_points_fails():
    _said("a `between` interval with no reported points fails.")
    # A mass that starts where it stays: the solver reports every `step`, at 0 s, 1 s, 2 s, ...
    res = netgen.load("fixed room 25 degC\nmass m 1 J/K start 25 degC\nlink l m room 1 W/K\n"
                      "transient until 10 s step 1 s\nexpect max T(m) < 400 K between 2.2 s and 2.3 s\n").run()
    times = res.time[(res.time >= 2.2) & (res.time <= 2.3)]
    assert len(times) == 0 and not res.passed


# ---- outcomes stated inline -------------------------------------------------------------------
def _value(expr: str) -> float:
    return netgen.load(f"let x = {expr}\nfixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\n").params["x"][0]


OUTCOMES = [  # (the reference's words, an expression, its value in SI)
    ("`25 degC` is 298.15 K", "25 degC", 298.15),
    ("`-25 degC` is 248.15 K", "-25 degC", 248.15),
    ("`-2^2` is −4", "-2^2", -4.0),
    ("`2 mm^2` is two square millimetres", "2 mm^2", 2e-6),
    ("`(2 mm)^2` is four", "(2 mm)^2", 4e-6),
    ("`sqrt(4 m^2)` is 2 m", "sqrt(4 m^2)", 2.0),
    ("`mohm` is a milliohm", "1 mohm", 1e-3),
    ("`Mohm` a megohm", "1 Mohm", 1e6),
    ("`mK` a millikelvin", "1 mK", 1e-3),
    ("`uV/K` a microvolt per kelvin", "1 uV/K", 1e-6),
    ("`mm` a millimetre", "1 mm", 1e-3),
    ("`4.7 mH`, `4.7mH`", "4.7mH", 4.7e-3),
    ("`4.7 mH`, `4.7mH`", "4.7 mH", 4.7e-3),
    ("`12`, `1.5`, `.5`, `2e-3`, `1.5E+6`", ".5", 0.5),
    ("`12`, `1.5`, `.5`, `2e-3`, `1.5E+6`", "1.5E+6", 1.5e6),
    ("`%`, `ppm` | 0.01 and 1e-6", "3 %", 0.03),
    ("`pi` | the constant π", "pi", math.pi),
    ("`u` or `µ` (or Greek `μ`) 1e-6", "1 µV - 1 μV", 0.0),
]


@pytest.mark.parametrize("words, expr, value", OUTCOMES, ids=[o[1] for o in OUTCOMES])
def test_stated_value(words, expr, value):
    _said(words)
    assert _value(expr) == pytest.approx(value, rel=1e-12, abs=1e-15)


def test_stated_defaults():
    _said("| `switch` resistances | `on 1 mohm`, `off 1 Gohm` |")
    _said("| `radiation ... view` | 1 |")
    d = netgen.load("fixed room 25 degC\nmass case 40 J/K\nradiation glow case room emissivity 0.85 area 0.012 m^2\n"
                    "ground g\nsource v a g 1 V\nswitch s a g closed 1 s .. 2 s\n")
    assert (d.element("s").r_on, d.element("s").r_off) == (1e-3, 1e9)
    assert d.element("glow").view == 1.0


def test_a_python_number_override_is_in_si():
    _said('`{"ambient": 303.15}` is 303.15 K')
    d = netgen.load("let ambient = 25 degC\nfixed r ambient\nmass m 1 J/K\nlink l m r 1 W/K\n", {"ambient": 303.15})
    assert d.params["ambient"][0] == pytest.approx(303.15)
