"""`netgen format`: .etn text rewritten into one canonical layout, with the same meaning.

The layout keeps every line where it is (statements, blank lines, comments) and changes only the
space between tokens:

- one space between tokens, except none after `(`, before `)` and `,`, between a function,
  signal or part name and its `(` (`T(x)`, `sqrt(x)`, `use driver d1(p, gnd)`), after a unary
  minus or plus (`-25 degC`), and around `^` (`x^2`, `(2 mm)^2`; but `2 mm ^ 2`, since `2 mm^2`
  would be two square millimetres);
- a quantity's number and unit one space apart (`4.7mH` becomes `4.7 mH`), the unit spelled as
  written;
- four spaces of indentation for each `{ ... }` the line is inside (a line that starts with `}`
  one level less), for statements and full-line comments alike;
- trailing comments two spaces after the code, aligned to one column in a run of consecutive
  lines that have them; no trailing white space; `\\n` line ends and one at the end of the file.

The rules only add or drop white space where the grammar's tokens stay the same, and every
result is parsed again and compared with the original's syntax tree: formatting never changes
what a file means, and formatting twice changes nothing (tests/test_format.py).
"""
from __future__ import annotations

import difflib
import functools
import re
from dataclasses import dataclass
from pathlib import Path

from lark import Token, Tree

from netgen.model.errors import NetgenError, NetgenErrors
from netgen.model.design import Loc
from netgen.language.elaborate import Elaborator, read_source
from netgen.language.grammar import parser

INDENT = " " * 4
COMMENT_GAP = 2  # spaces between code and its trailing comment
_NUMERAL = re.compile(r"(?:[0-9]+(?:\.[0-9]+)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")
_OPERATORS = "+-*/^"


@dataclass
class _Tok:
    kind: str  # ws, comment, string, quantity, name, punct
    text: str
    pos: int  # offset in the whole text

    @property
    def end(self) -> int:
        return self.pos + len(self.text)


@functools.lru_cache(maxsize=1)
def _token_re() -> re.Pattern:
    p = parser()
    qty = p.get_terminal("QUANTITY").pattern.to_regexp()
    name = p.get_terminal("NAME").pattern.to_regexp()
    return re.compile(
        r"(?P<ws>[ \t]+)|(?P<comment>#[^\n]*)|(?P<string>\"[^\"\n]*\")"
        rf"|(?P<quantity>{qty})|(?P<name>{name})|(?P<punct>\.\.|<=|>=|[<>=+\-*/^(),{{}}])")


class _Marks:
    """What the syntax tree tells that the tokens alone do not: which `+ - * / ^` are binary
    (the rest are unary), and which names are directly followed by their own `(`."""

    def __init__(self, tree, text: str):
        self.binary: set[int] = set()
        self.callees: set[int] = set()  # end offsets
        for stmt in tree.children:
            if isinstance(stmt, Tree):
                self._walk(stmt, text)

    def _walk(self, tree: Tree, text: str) -> None:
        stack = [tree]
        while stack:
            t = stack.pop()
            kind, ch = t.data, t.children
            if kind in ("add", "sub", "mul", "div", "pow"):
                a, b = _start_end(ch[0])[1], _start_end(ch[1])[0]
                gap = text[a:b]
                at = next(i for i, c in enumerate(gap) if c in _OPERATORS)
                self.binary.add(a + at)
            elif kind in ("call", "signal", "part"):
                self.callees.add(ch[0].end_pos)
            elif kind == "use":
                self.callees.add(ch[1].end_pos)
            stack.extend(c for c in ch if isinstance(c, Tree))


def _start_end(item) -> tuple[int, int]:
    if isinstance(item, Token):
        return item.start_pos, item.end_pos
    return item.meta.start_pos, item.meta.end_pos


def _quantity(text: str) -> str:
    """`4.7mH`, `4.7  mH` → `4.7 mH`; the number and the unit as written."""
    n = _NUMERAL.match(text).end()
    unit = text[n:].lstrip(" \t")
    return text[:n] + (" " + unit if unit else "")


def _has_unit(tok: _Tok) -> bool:
    return tok.kind == "quantity" and _NUMERAL.match(tok.text).end() < len(tok.text)


def _code(tokens: list[_Tok], marks: _Marks) -> str:
    """The tokens of one line (without white space and comment) in the canonical spacing."""
    out: list[str] = []
    spaced_pow = False  # the `^` just written stands between spaces
    prev: _Tok | None = None
    for tok in tokens:
        t = _quantity(tok.text) if tok.kind == "quantity" else tok.text
        if prev is not None:
            p = prev.text
            unary = prev.kind == "punct" and p in "+-" and prev.pos not in marks.binary
            if t in (",", ")") or p == "(" or unary:
                sep = ""
            elif t == "(":
                sep = "" if (prev.kind == "name" and prev.end in marks.callees) or p == "^" and not spaced_pow else " "
            elif t == "^":
                spaced_pow = _has_unit(prev)
                sep = " " if spaced_pow else ""
            elif p == "^":
                sep = " " if spaced_pow else ""
            else:
                sep = " "
            out.append(sep)
        out.append(t)
        prev = tok
    return "".join(out)


def _tree_shape(item):
    """A syntax tree as nested tuples, without positions; a quantity's inner spacing ignored."""
    if isinstance(item, Token):
        return (item.type, _quantity(item) if item.type == "QUANTITY" else str(item))
    if isinstance(item, Tree):
        return (str(item.data), tuple(_tree_shape(c) for c in item.children))
    return item


def _parse(text: str, filename: str):
    """The syntax tree, or the located syntax error that `netgen check` would report."""
    return Elaborator(text, filename, {}).parse(text)


def format_text(text: str, filename: str = "<text>") -> str:
    """`text` in the canonical layout. A text that does not parse is a NetgenError with its place."""
    tree = _parse(text, filename)
    marks = _Marks(tree, text)
    rx = _token_re()
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    rows: list[tuple[str, str | None]] = []  # (indented code or "", comment or None)
    depth = 0
    offset = 0
    for line in lines:
        body = line[:-1] if line.endswith("\r") else line
        tokens: list[_Tok] = []
        comment = None
        pos = 0
        while pos < len(body):
            m = rx.match(body, pos)
            if m is None:  # cannot happen in a text that parsed; say where, rather than guess
                raise NetgenError(f"cannot lay out the character `{body[pos]}`",
                                  Loc(filename, len(rows) + 1, pos + 1, body), "please report this")
            kind = m.lastgroup
            if kind == "comment":
                comment = m.group().rstrip()
            elif kind != "ws":
                tokens.append(_Tok(kind, m.group(), offset + pos))
            pos = m.end()
        offset += len(line) + 1
        level = depth - (1 if tokens and tokens[0].text == "}" else 0)
        for tok in tokens:
            if tok.text == "{":
                depth += 1
            elif tok.text == "}":
                depth = max(0, depth - 1)
        indent = INDENT * max(0, level)
        code = _code(tokens, marks)
        rows.append((indent + code if code or comment else "", comment))
    while rows and rows[-1] == ("", None):
        rows.pop()
    out = _with_comments(rows)
    result = "".join(line + "\n" for line in out)
    if _tree_shape(_parse(result, filename)) != _tree_shape(tree):  # a bug, not the user's: write nothing
        raise NetgenError("netgen format would change what this file means, so it leaves it as it is",
                          Loc(filename, 1, 1, lines[0] if lines else ""), "please report this with the file")
    return result


def _with_comments(rows: list[tuple[str, str | None]]) -> list[str]:
    """Each row's code with its comment: a full-line comment at the code's indentation (the
    `indent` is already in the code column), trailing comments aligned within a run of lines."""
    out: list[str] = []
    i = 0
    while i < len(rows):
        code, comment = rows[i]
        if comment is None or not code.strip():
            out.append(code + (comment or ""))
            i += 1
            continue
        j = i
        while j < len(rows) and rows[j][1] is not None and rows[j][0].strip():
            j += 1
        column = max(len(c) for c, _ in rows[i:j]) + COMMENT_GAP
        out.extend(c.ljust(column) + k for c, k in rows[i:j])
        i = j
    return out


@dataclass
class Formatted:
    """One file: its text as read and in the canonical layout."""

    path: Path
    old: str
    new: str

    @property
    def changed(self) -> bool:
        return self.old != self.new

    def diff(self) -> str:
        """A unified diff from the text as written to the formatted text ("" when they agree)."""
        name = str(self.path)
        lines = difflib.unified_diff(self.old.splitlines(keepends=True), self.new.splitlines(keepends=True), name, name)
        # A last line without its newline is marked, as patch expects, rather than run into the next.
        return "".join(line if line.endswith("\n") else line + "\n\\ No newline at end of file\n" for line in lines)


def format_files(paths) -> list[Formatted]:
    """Every file read and formatted, or, when any cannot be read or does not parse, the
    errors of all of them together (so that nothing is written when one file is wrong)."""
    done: list[Formatted] = []
    errors: list[NetgenError] = []
    for p in paths:
        p = Path(p)
        try:
            text = read_source(p)
            done.append(Formatted(p, text, format_text(text, str(p))))
        except NetgenErrors as e:
            errors.extend(e.errors)
        except NetgenError as e:
            errors.append(e)
    if errors:
        raise NetgenErrors(errors) if len(errors) > 1 else errors[0]
    return done
