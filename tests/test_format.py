"""`netgen format`: one canonical layout, idempotent and meaning-preserving (the formatted file
elaborates to the same Design), on every example, every statement of the grammar, the
reference's examples and random designs; `--check` and `--diff`; errors and atomic writes."""
from __future__ import annotations

import dataclasses
import random
import re
import shutil
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from pygments.token import Token as T

import netgen
from netgen.cli import main
from netgen.language import load_text
from netgen.language.layout import format_text
from netgen.model.design import Loc
from netgen.model.errors import NetgenError
from netgen.outputs.highlight import EtnLexer
from test_crosscheck import networks
from test_reference import EXAMPLES as REFERENCE_EXAMPLES

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"
EXAMPLE_FILES = sorted((ROOT / "examples").rglob("*.etn"))
DESIGNS = sorted((ROOT / "examples").glob("*.etn"))  # whole designs; parts/ is a library


# ---- comparing Designs -------------------------------------------------------------------------
def shape(obj):
    """A Design (or any part of it) as plain nested values, without what records where and how
    the text stood: locations (`Loc`), the file name, an expectation's `text` (its line as
    written) and the fields a dataclass leaves out of its own equality (a signal's spelling)."""
    if isinstance(obj, Loc):
        return None
    if dataclasses.is_dataclass(obj) and not isinstance(obj, type):
        skip = {"file", "text"} if type(obj).__name__ in ("Design", "Expectation") else set()
        return (type(obj).__name__,) + tuple((f.name, shape(getattr(obj, f.name)))
                                             for f in dataclasses.fields(obj) if f.name not in skip and f.compare)
    if isinstance(obj, dict):
        return tuple((shape(k), shape(v)) for k, v in obj.items())
    if isinstance(obj, (list, tuple)):
        return tuple(shape(x) for x in obj)
    if isinstance(obj, float) and obj != obj:
        return "nan"
    return obj


def outcome(text: str, filename: str = "<text>"):
    """What reading `text` gives: the Design's shape, or the messages of its errors."""
    try:
        return shape(load_text(text, filename))
    except NetgenError as e:
        return ("error", tuple(x.message for x in getattr(e, "errors", [e])))


def assert_formats_well(text: str, filename: str = "<text>", loads: bool = True) -> str:
    once = format_text(text, filename)
    assert format_text(once, filename) == once, "formatting twice changed the text"
    if loads:
        assert outcome(once, filename) == outcome(text, filename)
    return once


# ---- the examples, every statement, the reference ----------------------------------------------
@pytest.mark.parametrize("path", EXAMPLE_FILES, ids=[str(p.relative_to(ROOT / "examples")) for p in EXAMPLE_FILES])
def test_examples_format_idempotently(path):
    assert_formats_well(path.read_text(encoding="utf-8"), str(path), loads=False)


@pytest.mark.parametrize("path", DESIGNS, ids=[p.name for p in DESIGNS])
def test_formatted_examples_elaborate_to_the_same_design(path, tmp_path):
    """The whole examples folder formatted (the parts library too, which a design includes),
    then each design read from there."""
    for p in EXAMPLE_FILES:
        target = tmp_path / p.relative_to(ROOT / "examples")
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_text(format_text(p.read_text(encoding="utf-8"), str(p)), encoding="utf-8")
    before, after = netgen.load(path), netgen.load(tmp_path / path.name)
    assert shape(after) == shape(before)
    assert [e.text for e in after.expectations] == [format_text(e.text).strip() for e in before.expectations]


def test_every_statement_in_its_canonical_layout():
    """tests/data/format_all.etn writes each statement of the grammar untidily (tabs, runs of
    spaces, `4.7mH`, odd indentation, comments); format_all.expected.etn is its layout."""
    source = DATA / "format_all.etn"
    got = assert_formats_well(source.read_text(encoding="utf-8"), str(source))
    assert got == (DATA / "format_all.expected.etn").read_text(encoding="utf-8")
    assert outcome(got, str(source))[0] == "Design"  # it is a whole design, so the comparison meant something


@pytest.mark.parametrize("block", REFERENCE_EXAMPLES, ids=[b.id for b in REFERENCE_EXAMPLES])
def test_reference_examples_format_idempotently(block):
    assert_formats_well(block.text + "\n", loads=False)


# ---- the layout's rules, one by one -------------------------------------------------------------
@pytest.mark.parametrize("before, after", [
    ("mass  die\t0.45 J/K   start 24 degC", "mass die 0.45 J/K start 24 degC"),
    ("heat h n 0.3W", "heat h n 0.3 W"),  # a quantity's number and unit one space apart
    ("let x = 4.7  mohm", "let x = 4.7 mohm"),  # the unit as written: mohm stays mohm
    ("let x = 25°C", "let x = 25 °C"),
    ("let x=a+b*c/d-e", "let x = a + b * c / d - e"),
    ("let x = - 25 degC", "let x = -25 degC"),  # unary minus: no space
    ("let x = a - - b", "let x = a - -b"),
    ("let x = ( a+b ) ^ 2", "let x = (a + b)^2"),
    ("let x = 2 mm ^ 2", "let x = 2 mm ^ 2"),  # `2 mm^2` would be a unit power: the spaces stay
    ("let x = 2 mm^2", "let x = 2 mm^2"),
    ("let x = 2^ -1", "let x = 2^-1"),
    ("let x = sqrt ( 4 m^2 )", "let x = sqrt(4 m^2)"),
    ("let x = max( a ,b,c )", "let x = max(a, b, c)"),
    ("record T( a ) V(a,b)", "record T(a) V(a, b)"),
    ("expect max(T(a) - T(b)) < 1 K", "expect max (T(a) - T(b)) < 1 K"),  # `max` is the aggregate here
    ("expect T(a) at 2 s<3 K", "expect T(a) at 2 s < 3 K"),
    ("switch s a b closed 1 s..2 s,3 s .. 4 s", "switch s a b closed 1 s .. 2 s, 3 s .. 4 s"),
    ("use p u1( a,b ) with x=1 K , y = 2 K", "use p u1(a, b) with x = 1 K, y = 2 K"),
    ("part p ( a ){\n  mass m 1 J/K\n}", "part p(a) {\n    mass m 1 J/K\n}"),
    ("  ground g", "ground g"),
    ("ground g   ", "ground g"),
    ("ground g  #  keep   this  ", "ground g  #  keep   this"),  # a comment's text is kept as written
    ("ground g\r\nground h\r\n", "ground g\nground h"),
    ("ground g\n\n\n", "ground g"),
    ("\nground g", "\nground g"),
    ("mass a 1 J/K # one\nmass bb 1 J/K # two\n\nmass c 1 J/K # three",
     "mass a 1 J/K   # one\nmass bb 1 J/K  # two\n\nmass c 1 J/K  # three"),
    ("thermoelectric t pins p n sides a b {\n# lumped\n      seebeck 1 V/K\n  }",
     "thermoelectric t pins p n sides a b {\n    # lumped\n    seebeck 1 V/K\n}"),
    ("part p(a) {\n  thermoelectric t pins a n sides c d {\nseebeck 1 V/K\n}\n  }",
     "part p(a) {\n    thermoelectric t pins a n sides c d {\n        seebeck 1 V/K\n    }\n}"),
    ("design   \"a   b\"", "design \"a   b\""),
    ("", ""),
])
def test_layout_rule(before, after):
    assert format_text(before) == (after + "\n" if after else "")


def test_format_needs_only_a_file_that_parses():
    """A design with an error past the grammar (here an unknown name) is still laid out."""
    assert format_text("mass a 1 J/K\nlink l a b  nowhere\n") == "mass a 1 J/K\nlink l a b nowhere\n"


def test_a_layout_that_would_change_the_meaning_is_refused(monkeypatch):
    """The safety net: the result is parsed again and compared with the original's tree. A
    layout rule that glued `2 mm` and `^ 2` into the unit `mm^2` would be caught there."""
    from netgen.language import layout

    monkeypatch.setattr(layout, "_code", lambda tokens, marks: "".join(t.text for t in tokens).replace(" ", ""))
    with pytest.raises(NetgenError, match="would change what this file means"):
        layout.format_text("let x = 2 mm ^ 2\n")


def test_names_that_are_keywords_elsewhere_stay_names():
    text = "fixed start 300 K\nmass step 1 J/K start 301 K\nlink on start step 1 W/K\n"
    assert assert_formats_well(text) == text


# ---- random designs -------------------------------------------------------------------------
def _hypothesis_draw(data):
    """The `draw` tests/test_crosscheck.py's generator asks for, answered by hypothesis."""
    def draw(spec):
        what, *args = spec
        if what == "int":
            return data.draw(st.integers(*args))
        if what == "pick":
            return data.draw(st.sampled_from(args[0]))
        if what == "bool":
            return data.draw(st.booleans())
        return data.draw(st.permutations(args[0]))
    return draw


def scramble(text: str, rng: random.Random) -> str:
    """The same tokens (as the Pygments lexer sees them) with other white space: runs of spaces
    and tabs where there was a space, sometimes a space where there was none (after `(`, inside
    a quantity, ...), indentation and trailing blanks, CRLF line ends. Adding white space between
    two tokens never changes what they are, so the meaning stays."""
    out = []
    for line in text.split("\n"):
        pieces = [(tt, v) for _, tt, v in EtnLexer().get_tokens_unprocessed(line)]
        words = []
        for k, (tt, v) in enumerate(pieces):
            if tt in T.Text.Whitespace:
                words.append(rng.choice([" ", "  ", "\t", " \t  "]))
            else:
                if words and k and pieces[k - 1][0] not in T.Text.Whitespace and tt not in T.Comment:
                    words.append(rng.choice(["", "", " "]))
                words.append(v)
        body = "".join(words)
        out.append(rng.choice(["", " ", "\t", "      "]) + body + rng.choice(["", "", " ", "\t"]) if body else body)
    return rng.choice(["\n", "\r\n"]).join(out)


@settings(max_examples=40, deadline=None, derandomize=True, suppress_health_check=[HealthCheck.too_slow])
@given(st.data(), st.integers(0, 2**32 - 1))
def test_random_networks(data, seed):
    """Random networks of both domains from the cross-check's generator, whitespace scrambled:
    the layout does not depend on the white space, and the Design does not depend on the layout."""
    text = networks(_hypothesis_draw(data))
    messy = scramble(text, random.Random(seed))
    tidy = assert_formats_well(messy)
    assert tidy == format_text(text)
    assert outcome(tidy) == outcome(text)


QUANTITIES = ["2 K", "3mm", "1.5 W/K", "25 degC", "0.5", "2 mm^2", "4 m^2", ".5 s", "1e-3 A", "7 %", "2 1/K"]


def _expressions():
    atoms = st.sampled_from(QUANTITIES + ["a", "b", "pi"])
    return st.recursive(atoms, lambda inner: st.one_of(
        st.tuples(inner, st.sampled_from("+-*/"), inner).map(lambda t: f"{t[0]} {t[1]} {t[2]}"),
        inner.map(lambda e: f"-{e}"),
        inner.map(lambda e: f"({e})"),
        st.tuples(inner, st.sampled_from(["2", "-1", "0.5"])).map(lambda t: f"({t[0]})^{t[1]}"),
        st.tuples(st.sampled_from(["sqrt", "abs", "exp"]), inner).map(lambda t: f"{t[0]}({t[1]})"),
        st.tuples(st.sampled_from(["min", "max"]), inner, inner).map(lambda t: f"{t[0]}({t[1]}, {t[2]})"),
    ), max_leaves=8)


@settings(max_examples=150, deadline=None, derandomize=True)
@given(_expressions(), st.integers(0, 2**32 - 1))
def test_random_expressions(expr, seed):
    """Expressions of every operator, unary minus, powers, calls and quantities, whitespace
    scrambled: the same parameter value, or the same error, after formatting."""
    text = f"let a = 2 K\nlet b = 3 mm\nlet x = {expr}\nfixed r 300 K\nmass m 1 J/K\nlink l m r 1 W/K\n"
    messy = scramble(text, random.Random(seed))
    tidy = assert_formats_well(messy)
    assert tidy == format_text(text)


# ---- the command -------------------------------------------------------------------------------
@pytest.fixture
def files(tmp_path):
    """An untidy design, a tidy one and a parts file in a folder of their own."""
    untidy = tmp_path / "untidy.etn"
    shutil.copy(ROOT / "examples" / "detector_cooler.etn", untidy)
    tidy = tmp_path / "tidy.etn"
    tidy.write_text(format_text((ROOT / "examples" / "pipe_generator.etn").read_text(encoding="utf-8")), encoding="utf-8")
    return untidy, tidy


def test_check_names_the_files_that_would_change_and_exits_1(files, capsys):
    untidy, tidy = files
    before = untidy.read_bytes(), tidy.read_bytes()
    assert main(["format", "--check", str(untidy), str(tidy)]) == 1
    out = capsys.readouterr().out
    assert f"would change: {untidy}" in out and str(tidy) not in out
    assert "1 of 2 files would change" in out
    assert (untidy.read_bytes(), tidy.read_bytes()) == before  # --check writes nothing


def test_check_of_tidy_files_exits_0(files, capsys):
    _, tidy = files
    assert main(["format", "--check", str(tidy)]) == 0
    assert capsys.readouterr().out == "0 of 1 file would change\n"


def test_diff_prints_a_unified_diff_and_writes_nothing(files, capsys):
    untidy, tidy = files
    before = untidy.read_text(encoding="utf-8")
    assert main(["format", "--diff", str(untidy), str(tidy)]) == 0
    captured = capsys.readouterr()
    out = captured.out
    assert out.startswith(f"--- {untidy}\n+++ {untidy}\n@@ ")
    assert "\n-mass  die    0.45 J/K  start 24 degC\n" in out and "\n+mass die 0.45 J/K start 24 degC\n" in out
    assert str(tidy) not in out
    assert "1 of 2 files would change" in captured.err  # the summary stays off the diff
    assert untidy.read_text(encoding="utf-8") == before
    # The diff turns the file into the formatted text: apply its hunks.
    assert _apply(before, out) == format_text(before)


def _apply(text: str, diff: str) -> str:
    old = text.splitlines(keepends=True)
    new, at = [], 0
    for hunk in re.split(r"^@@ ", diff, flags=re.M)[1:]:
        head, _, body = hunk.partition("\n")
        start = int(re.match(r"-(\d+)", head).group(1)) - 1
        new += old[at:start]
        at = start
        for line in body.splitlines(keepends=True):
            if line.startswith(("-", " ")):
                at += 1
            if line.startswith(("+", " ")):
                new.append(line[1:])
    return "".join(new + old[at:])


def test_diff_of_a_file_without_a_last_newline(tmp_path, capsys):
    f = tmp_path / "short.etn"
    f.write_text("ground  g\nground h", encoding="utf-8")
    assert main(["format", "--diff", str(f)]) == 0
    assert capsys.readouterr().out.endswith("-ground  g\n-ground h\n\\ No newline at end of file\n"
                                            "+ground g\n+ground h\n")


def test_check_with_diff_exits_1(files, capsys):
    untidy, _ = files
    assert main(["format", "--check", "--diff", str(untidy)]) == 1
    captured = capsys.readouterr()
    assert captured.out.startswith("--- ") and f"would change: {untidy}" in captured.err


def test_format_writes_atomically_and_twice_changes_nothing(files, capsys):
    untidy, tidy = files
    expected = format_text(untidy.read_text(encoding="utf-8"))
    tidy_stat = tidy.stat()
    assert main(["format", str(untidy), str(tidy)]) == 0
    assert capsys.readouterr().out == f"formatted {untidy}\n1 of 2 files changed\n"
    assert untidy.read_text(encoding="utf-8") == expected
    assert tidy.stat().st_mtime_ns == tidy_stat.st_mtime_ns  # an unchanged file is not rewritten
    assert sorted(p.name for p in untidy.parent.iterdir()) == ["tidy.etn", "untidy.etn"]  # no temporary left
    assert main(["format", str(untidy)]) == 0
    assert capsys.readouterr().out == "0 of 1 file changed\n"


def test_a_file_that_does_not_parse_is_a_located_error_and_nothing_is_written(files, tmp_path, capsys):
    untidy, _ = files
    before = untidy.read_bytes()
    bad = tmp_path / "bad.etn"
    bad.write_text("mass  a 1 J/K\nlink x a b 2 W/K )\n", encoding="utf-8")
    assert main(["format", str(untidy), str(bad)]) == 2
    err = capsys.readouterr().err
    assert f"{bad}:2:18: error: unexpected `)`" in err
    assert untidy.read_bytes() == before and bad.read_text(encoding="utf-8").startswith("mass  a")


def test_unreadable_and_non_utf8_files_are_errors(tmp_path, capsys):
    latin = tmp_path / "latin.etn"
    latin.write_bytes(b"ground g\n# caf\xe9\n")
    assert main(["format", str(latin), str(tmp_path / "missing.etn")]) == 2
    err = capsys.readouterr().err
    assert f"{latin}:2:" in err and "not valid UTF-8" in err
    assert "No such file or directory" in err and "2 errors" in err


def test_format_needs_a_file(capsys):
    with pytest.raises(SystemExit) as e:
        main(["format"])
    assert e.value.code == 2


def test_the_canonical_layout_of_an_example_reads_well():
    """What a user sees: the detector cooler, formatted."""
    got = format_text((ROOT / "examples" / "detector_cooler.etn").read_text(encoding="utf-8"))
    assert got.splitlines()[2:5] == ["mass die 0.45 J/K start 24 degC", "mass sink 38 J/K start 24 degC",
                                     "fixed room ambient"]
    assert "    seebeck 52 mV/K resistance 1.8 ohm" in got.splitlines()
