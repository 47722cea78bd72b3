"""Highlighting: the Pygments lexer (netgen/outputs/highlight.py) and the TextMate grammar
(editors/etn.tmLanguage.json) read every example, the reference's blocks and the formatter's
output without an error token, agree with each other character by character (the TextMate
grammar run by a TextMate tokeniser on Oniguruma, as editors run it), and follow the grammar's
words and quantities. One file's token stream is kept as a snapshot."""
from __future__ import annotations

import json
import logging
import os
import re
import subprocess
import sys
from pathlib import Path

import pytest
from lark import Token, Tree
from pygments.lexers import get_lexer_by_name, get_lexer_for_filename
from pygments.token import Error, Token as T

from netgen.language.grammar import grammar_text, parser
from netgen.language.layout import format_text
from netgen.outputs import highlight
from netgen.outputs.highlight import EtnLexer
from test_reference import EXAMPLES as REFERENCE_EXAMPLES, SYNOPSES, synopsis_variants

ROOT = Path(__file__).resolve().parents[1]
DATA = Path(__file__).resolve().parent / "data"
SAMPLE = DATA / "highlight_sample.etn"
TEXTMATE = ROOT / "editors" / "etn.tmLanguage.json"
EXAMPLE_FILES = sorted((ROOT / "examples").rglob("*.etn"))


def _sources() -> dict[str, str]:
    out = {f"examples/{p.relative_to(ROOT / 'examples')}": p.read_text(encoding="utf-8") for p in EXAMPLE_FILES}
    out["sample"] = SAMPLE.read_text(encoding="utf-8")
    for b in REFERENCE_EXAMPLES:
        out[f"language.md:{b.id}"] = b.text + "\n"
    for b in SYNOPSES:
        out[f"language.md:{b.id}"] = synopsis_variants(b.text)[-1]
    return out


SOURCES = _sources()
FORMATTED = {f"formatted {k}": format_text(v) for k, v in SOURCES.items() if k.startswith("examples/")}
ALL = {**SOURCES, **FORMATTED}


def _stream(text: str) -> list[tuple]:
    return [(tt, v) for tt, v in EtnLexer().get_tokens(text) if tt not in T.Text.Whitespace]


@pytest.mark.parametrize("name", ALL)
def test_no_error_tokens(name):
    bad = [(tt, v) for tt, v in EtnLexer().get_tokens(ALL[name]) if tt in Error]
    assert not bad, f"{name}: error tokens {bad[:10]}"


def _snapshot(text: str) -> str:
    return "".join(f"{str(tt).removeprefix('Token.')}\t{v!r}\n" for tt, v in _stream(text))


def test_snapshot_of_a_highlighted_file():
    """tests/data/highlight_sample.tokens is the token stream of highlight_sample.etn; after a
    deliberate change to the lexer, write it again with
    `python -c "import sys; sys.path.insert(0, 'tests'); import test_highlight as t; t.write_snapshot()"`."""
    expected = (DATA / "highlight_sample.tokens").read_text(encoding="utf-8")
    assert _snapshot(SAMPLE.read_text(encoding="utf-8")) == expected


def write_snapshot() -> None:
    (DATA / "highlight_sample.tokens").write_text(_snapshot(SAMPLE.read_text(encoding="utf-8")), encoding="utf-8")


def test_snapshot_as_html():
    """What a web page gets: the spans Pygments' HTML formatter writes for a few lines."""
    from pygments import highlight as render
    from pygments.formatters import HtmlFormatter

    html = render('expect max T(die) < 30 degC  # cold\n', EtnLexer(), HtmlFormatter(nowrap=True))
    html = re.sub(r'<span class="w">([^<]*)</span>', r"\1", html)  # white space has a class in newer Pygments
    assert html == ('<span class="k">expect</span> <span class="kp">max</span> <span class="nb">T</span>'
                    '<span class="p">(</span><span class="nv">die</span><span class="p">)</span> '
                    '<span class="o">&lt;</span> <span class="m">30</span> <span class="kt">degC</span>  '
                    '<span class="c1"># cold</span>\n')


# ---- the lexer follows the grammar -----------------------------------------------------------
def _grammar_words():
    g = grammar_text()
    statements_rule = re.search(r"^\?statement:(.*?)\n\n", g, re.S | re.M).group(1)
    rules = re.findall(r"[a-z_]+", statements_rule)
    statements = {re.search(rf'^{r}:\s*"([a-z]+)"', g, re.M).group(1) for r in rules}
    attributes = set(re.findall(r'^\s*[|:?a-z_ ]*?"([a-z]+)"[^\n]*->\s*(?:attr|plate)_', g, re.M))
    agg = set(re.findall(r'"([a-z]+)"', re.search(r"^AGG[^:]*:(.*)$", g, re.M).group(1)))
    audits = set(re.findall(r'"([a-z]+)"', re.search(r"^AUDIT_KIND[^:]*:(.*)$", g, re.M).group(1)))
    every = set(re.findall(r'"([a-z]+)"', g))
    return statements, attributes, agg, audits, every


def test_words_follow_the_grammar():
    statements, attributes, agg, audits, every = _grammar_words()
    assert statements == set(highlight.STATEMENTS)
    assert attributes == set(highlight.ATTRIBUTES)
    assert agg == set(highlight.AGGREGATES) and audits == set(highlight.AUDITS)
    known = set(highlight.STATEMENTS) | set(highlight.ATTRIBUTES) | set(highlight.CLAUSES)
    known |= set(highlight.RESERVED)  # `time` of `expect time of min` is the reserved name's word
    assert every <= known | agg | audits  # `heat` of `specific heat` is a statement's word too


def test_patterns_follow_the_grammar():
    p = parser()
    assert highlight.NAME == p.get_terminal("NAME").pattern.to_regexp().replace("(\\.", "(?:\\.")
    lark_quantity = re.compile(p.get_terminal("QUANTITY").pattern.to_regexp())
    ours = re.compile(rf"{highlight.NUMERAL}(?:[ \t]*{highlight.UNIT})?")
    corpus = ["4.7 mH", "4.7mH", "2e-3", ".5", "1.5E+6", "0.35 W/K", "25 degC", "25 °C", "25 degCx", "52 mV/K",
              "200 µV/K", "200 μV/K", "3 Ω", "1e-5 ohm*m", "1.5 W/(m*K)", "2700 kg/m^3", "900 J/(kg*K)", "5 1/K",
              "3900 ppm/K", "85 %", "12 mm^2", "2 mm^-1", "4 W/(m^2*K)", "127 material", "2 m*K/W", "1 Gohm",
              "3 s..4 s", "1 mohm", "7 Hz", "1 (m*K)", "1 xyz", "2 K^2*s"]
    for text in corpus:
        a, b = lark_quantity.match(text), ours.match(text)
        assert (a and a.group()) == (b and b.group()), text


def _lark_quantities(text: str) -> list[tuple[int, int]]:
    out = []
    stack = [s for s in parser().parse(text).children]
    while stack:
        t = stack.pop()
        if isinstance(t, Token) and t.type == "QUANTITY":
            out.append((t.start_pos, t.end_pos))
        elif isinstance(t, Tree):
            stack.extend(t.children)
    return sorted(out)


def _lexer_quantities(text: str) -> list[tuple[int, int]]:
    out = []
    for pos, tt, v in EtnLexer().get_tokens_unprocessed(text):
        if tt in T.Number:
            out.append([pos, pos + len(v)])
        elif tt in T.Keyword.Type:
            out[-1][1] = pos + len(v)
    return sorted(tuple(q) for q in out)


@pytest.mark.parametrize("name", ALL)
def test_quantities_as_the_grammar_reads_them(name):
    assert _lexer_quantities(ALL[name]) == _lark_quantities(ALL[name])


# ---- the TextMate grammar ------------------------------------------------------------------
SCOPES = {  # the lexer's token types and the TextMate grammar's scopes (the one for punctuation a prefix)
    T.Keyword: "keyword.other.statement.etn",
    T.Keyword.Pseudo: "keyword.other.clause.etn",
    T.Keyword.Type: "keyword.other.unit.etn",
    T.Name.Attribute: "entity.other.attribute-name.etn",
    T.Number: "constant.numeric.etn",
    T.Name.Builtin: "support.function.signal.etn",
    T.Name.Variable: "variable.parameter.signal.etn",
    T.Name.Function: "support.function.etn",
    T.Name.Builtin.Pseudo: "constant.language.etn",
    T.Name: "variable.other.etn",
    T.Operator: "keyword.operator.etn",
    T.Punctuation: "punctuation.",
    T.Comment.Single: "comment.line.number-sign.etn",
    T.String.Double: "string.quoted.double.etn",
}


@pytest.fixture(scope="module")
def textmate(tmp_path_factory):
    """The grammar in a TextMate tokeniser (textmate-grammar-python: vscode-textmate's rules on
    the Oniguruma engine). It makes a cache folder where it is imported, so that is a temporary one."""
    here = os.getcwd()
    os.chdir(tmp_path_factory.mktemp("textmate"))
    try:
        from textmate_grammar.parsers.base import LanguageParser
    finally:
        os.chdir(here)
    logging.getLogger("textmate_grammar").setLevel(logging.ERROR)
    return LanguageParser(json.loads(TEXTMATE.read_text(encoding="utf-8")))


def _lexer_scopes(text: str) -> list[str | None]:
    out: list[str | None] = []
    for _, tt, v in EtnLexer().get_tokens_unprocessed(text):
        out.extend([None if tt in T.Text.Whitespace else SCOPES[tt]] * len(v))
    return out


def _textmate_scopes(tm, text: str) -> list[str | None]:
    starts = [0]
    for line in text.split("\n"):
        starts.append(starts[-1] + len(line) + 1)
    out: list[str | None] = [None] * len(text)
    element = tm.parse_string(text)
    for (line, col), piece, scopes in element.flatten() if element is not None else []:
        for k in range(len(piece)):
            out[starts[line] + col + k] = scopes[-1] if len(scopes) > 1 else None
    return out


@pytest.mark.parametrize("name", ALL)
def test_textmate_grammar_agrees_with_the_lexer(textmate, name):
    text = ALL[name]
    ours, theirs = _lexer_scopes(text), _textmate_scopes(textmate, text)
    differ = [(i, text[i], a, b) for i, (a, b) in enumerate(zip(ours, theirs)) if not text[i].isspace()
              and not (a == b or (a == "punctuation." and b and b.startswith(a)))]
    assert not differ, f"{name}: (offset, character, lexer, TextMate) {differ[:10]}"


def test_textmate_grammar_names_are_our_own():
    g = json.loads(TEXTMATE.read_text(encoding="utf-8"))
    assert (g["name"], g["scopeName"], g["fileTypes"]) == ("etn", "source.etn", ["etn"])
    names = re.findall(r'"name": "([^"]+)"', TEXTMATE.read_text(encoding="utf-8"))
    assert all(n.endswith(".etn") for n in names if n != "etn")
    assert set(SCOPES.values()) - {"punctuation."} <= set(names)


# ---- Pygments finds it; `netgen run` does not load it -------------------------------------------
def test_pygments_finds_the_lexer():
    """Through the `pygments.lexers` entry point of the installed package."""
    assert type(get_lexer_by_name("etn")) is EtnLexer
    assert type(get_lexer_for_filename("cooler.etn")) is EtnLexer


def test_pygmentize_highlights_a_file():
    out = subprocess.run([sys.executable, "-m", "pygments", "-l", "etn", "-f", "html", str(SAMPLE)],
                         capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    assert '<span class="k">design</span>' in out.stdout and '<span class="kt">W/(m*K)</span>' in out.stdout


def test_netgen_run_does_not_import_the_lexer():
    code = ("import sys; from netgen.cli import main; "
            f"main(['run', '--quiet', {str(ROOT / 'examples' / 'detector_cooler.etn')!r}]); "
            f"main(['format', '--check', {str(ROOT / 'examples' / 'detector_cooler.etn')!r}]); "
            "print(sorted(m for m in sys.modules if m.startswith(('pygments', 'netgen.outputs.highlight'))))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip().splitlines()[-1] == "[]"
