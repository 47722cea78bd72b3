"""A Pygments lexer for .etn text, for highlighting in terminals, documentation and web pages.

Installed netgen registers it with Pygments (the `pygments.lexers` entry point in
pyproject.toml), so `pygmentize -l etn FILE.etn` and Sphinx or MkDocs code blocks marked `etn`
use it. Pygments is the optional `highlight` extra; nothing else in netgen imports this module.

The words and patterns follow grammar/etn.lark; `editors/etn.tmLanguage.json` is the same
lexer for editors. tests/test_highlight.py checks both against the grammar and each other.

Keywords in .etn are contextual (a node may be called `start`); a lexer sees no grammar, so a
statement word counts only at the start of a line, and an attribute word anywhere. A node named
like an attribute (`area`, `view`) is shown as one: colour only, never a wrong reading.
"""
from __future__ import annotations

from pygments.lexer import RegexLexer, bygroups
from pygments.token import Comment, Keyword, Name, Number, Operator, Punctuation, String, Text

# The statements (a line's first word), the attributes (after the positional parts), the words
# that join the parts of a statement, the aggregates after `expect` and the kinds after `audit`.
STATEMENTS = ("design", "let", "mass", "fixed", "link", "heat", "ground", "radiation", "convection",
              "resistor", "capacitor", "inductor", "source", "switch", "thermoelectric", "controller", "diode", "material",
              "part", "use", "include", "plate", "steady", "transient", "modes", "response", "record", "expect",
              "audit", "baseline", "humidity")
ATTRIBUTES = ("start", "heats", "tempco", "closed", "on", "off", "pins", "sides", "seebeck", "resistance",
              "conductance", "couples", "rated", "resistivity", "conductivity", "hottest", "segments", "step",
              "tolerance", "emissivity", "area", "view", "coefficient", "exponent", "cell", "thickness",
              "density", "specific", "capacity", "proportional", "integral", "derivative", "output", "tracking",
              "filter", "saturation", "emission", "series", "at", "opens", "closes")
CLAUSES = ("until", "within", "between", "and", "at", "ref", "material", "leg", "imax", "vmax", "dtmax",
           "by", "with", "to", "from", "points", "window", "lasts", "of", "when", "spread", "normal", "uniform")
AGGREGATES = ("max", "min", "final", "mean", "steady")
AUDITS = ("energy", "entropy")
FUNCTIONS = ("sqrt", "abs", "min", "max", "exp", "log", "sin", "cos", "step", "ramp", "pulse", "sine", "table")
RESERVED = ("pi", "time")
SIGNAL_KINDS = "TVIPQUSE"

NAME = r"[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)*"
END = r"(?![A-Za-z0-9_]|\.[A-Za-z_])"  # a whole word: not the start of a longer (or dotted) name
NUMERAL = r"(?:[0-9]+(?:\.[0-9]+)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?"
_WORD = r"(?:[fpnuµμmkMG]?(?:ohm|Hz|Ω|s|K|W|J|V|A|H|F|m|g)|min|h|ppm|%)(?![A-Za-z0-9_µμΩ])"
_POWER = r"(?:\^-?[0-9]+)?"
_GROUP = rf"\({_WORD}{_POWER}(?:[*/]{_WORD}{_POWER})*\)"
_FACTOR = rf"(?:{_WORD}|{_GROUP}){_POWER}"
UNIT = rf"(?:degC(?![A-Za-z0-9_])|°C|(?:1/)?{_FACTOR}(?:[*/]{_FACTOR})*)"
SIGNAL = (rf"([{SIGNAL_KINDS}])(\()([ \t]*)({NAME})([ \t]*)(?:(,)([ \t]*)({NAME})([ \t]*))?(\))")


def _words(words, end: str = END) -> str:
    """One of `words` as a whole word (longest first, so `sine` before `sin`)."""
    return "(?:" + "|".join(sorted(set(words), key=lambda w: (-len(w), w))) + ")" + end


_W = Text.Whitespace


class EtnLexer(RegexLexer):
    """Lexer for .etn device descriptions (netgen)."""

    name = "etn"
    aliases = ["etn"]
    filenames = ["*.etn"]
    mimetypes = ["text/x-etn"]

    tokens = {
        "root": [
            (r"\n", _W),
            (rf"^([ \t]*)(expect)([ \t]+)({_words(AGGREGATES)})", bygroups(_W, Keyword, _W, Keyword.Pseudo)),
            (rf"^([ \t]*)(audit)([ \t]+)({_words(AUDITS)})", bygroups(_W, Keyword, _W, Keyword.Pseudo)),
            (rf"^([ \t]*)({_words(STATEMENTS)})", bygroups(_W, Keyword)),
            (r"[ \t]+", _W),
            (r"#[^\n]*", Comment.Single),
            (r'"[^"\n]*"', String.Double),
            (SIGNAL, bygroups(Name.Builtin, Punctuation, _W, Name.Variable, _W, Punctuation, _W, Name.Variable,
                              _W, Punctuation)),
            (_words(FUNCTIONS, r"(?=\()"), Name.Function),
            (rf"({NUMERAL})(?:([ \t]*)({UNIT}))?", bygroups(Number, _W, Keyword.Type)),
            (_words(RESERVED), Name.Builtin.Pseudo),
            (rf"(specific)([ \t]+)(heat){END}", bygroups(Name.Attribute, _W, Name.Attribute)),
            (_words(tuple(w for w in ATTRIBUTES if w not in CLAUSES)), Name.Attribute),  # `at` stays a clause word
            (_words(CLAUSES), Keyword.Pseudo),
            (NAME, Name),
            (r"\.\.|<=|>=|[<>=+\-*/^]", Operator),
            (r"[(),{}]", Punctuation),
        ],
    }
