"""Fast reading of plain one-line statements into the very trees lark builds; lark reads the rest.

Large generated descriptions (a mesh written out as 30,000 `mass` and `link` lines) are almost
all statements of a few fixed shapes: a keyword, names, one value that is a number with its
unit or a parameter name, perhaps `start VALUE`. Such a line, standing alone at the top level,
is matched here by a regular expression built from the grammar's own NAME and QUANTITY
terminals and turned into the Tree lark would give (same rule names, tokens, positions). Every
other line, and everything inside `{ ... }`, goes to lark in runs of lines, whose line numbers
and positions are then moved to those in the file; so syntax errors read exactly as before.
tests/test_fastpaths.py checks the trees against lark's on a corpus of lines and the examples.
"""
from __future__ import annotations

import re
from array import array
from collections.abc import Sequence

from lark import Token, Tree
from lark.exceptions import UnexpectedInput
from lark.tree import Meta

# keyword → (names after it, whether a value follows, whether the rule has attrs, `start` allowed)
SHAPES = {
    "mass": (1, True, True, True),
    "fixed": (1, True, False, False),
    "link": (3, True, False, False),
    "heat": (2, True, False, False),
    "ground": (1, False, False, False),
    "resistor": (3, True, True, False),
    "capacitor": (3, True, True, True),
    "inductor": (3, True, True, True),
}
# Levels of nesting (operators, calls, blocks) one statement may have: every stage after the parser
# reads trees recursively, and the compiled equations (Python source) allow 200 nested brackets.
MAX_DEPTH = 100
_BRACES = re.compile(r'"[^"\n]*"|#.*|[{}]')
_BLANK = re.compile(r"[ \t]*(?:#[^\n]*)?\r?")


class LineReader:
    """Parses `start` text line by line, with `lark` (a Lark LALR parser) for what is not plain."""

    def __init__(self, lark):
        self.lark = lark
        name = lark.get_terminal("NAME").pattern.to_regexp()
        qty = lark.get_terminal("QUANTITY").pattern.to_regexp()
        self.name_re, self.qty_re = re.compile(name), re.compile(qty)
        value = rf"(?P<v>(?P<vq>{qty})|{name})"
        start_value = rf"(?P<s>(?P<sq>{qty})|{name})"
        tail = r"[ \t]*(?:#[^\n]*)?\r?$"
        self.patterns = {}
        for kw, (k, has_value, _, start_ok) in SHAPES.items():
            pat = rf"[ \t]*(?P<kw>{kw})" + "".join(rf"[ \t]+(?P<n{i}>{name})" for i in range(k))
            if has_value:
                pat += rf"[ \t]+{value}"
            if start_ok:
                pat += rf"(?:[ \t]+(?P<sk>start)[ \t]+{start_value})?"
            self.patterns[kw] = pat + tail
        self.res: dict = {}  # compiled when a keyword is first met: each costs ~4 ms of start-up
        # keyword → (its compiled pattern, its (value group, quantity group) pairs); by keyword,
        # since hashing a compiled pattern hashes all its code
        self.compiled: dict = {}
        self.first_word = re.compile(r"[ \t]*([a-z]+)")
        self.agree: dict[str, bool] = {}  # rest of a line from a quantity → lark would split it there too

    def _pattern(self, kw: str):
        rx = self.res.get(kw)
        if rx is None and kw in self.patterns:
            rx = self.res[kw] = re.compile(self.patterns[kw])
            self.compiled[kw] = rx, [(g, q) for g, q in (("v", "vq"), ("s", "sq")) if g in rx.groupindex]
        return rx

    # ---- one line ---------------------------------------------------------------------
    def match(self, line: str):
        """The match of a plain line, or None when lark must read it."""
        # A line that starts with its keyword and a space (almost all of a mesh) needs no
        # regular expression to find the keyword; any other goes through `first_word`.
        found = self.compiled.get(line.partition(" ")[0])
        if found is None:
            w = self.first_word.match(line)
            if w is None or self._pattern(w.group(1)) is None:
                return None
            found = self.compiled[w.group(1)]
        rx, quantities = found
        m = rx.match(line)
        if m is None:
            return None
        # Lark's lexer takes the first QUANTITY match at each place; the line's split must agree.
        # The answer depends only on the rest of the line, which a mesh repeats (`2 W/K`): kept.
        agree = self.agree
        for group, q in quantities:
            if m.group(q) is not None:
                a = m.start(group)
                rest = line[a:]
                ok = agree.get(rest)
                if ok is None:
                    if len(agree) > 4096:
                        agree.clear()
                    ok = agree[rest] = self.qty_re.match(rest).end() == m.end(group) - a
                if not ok:
                    return None
        return m

    def line_tree(self, line: str, lineno: int, offset: int) -> Tree | None:
        """The statement tree of one plain line, or None when lark must read it."""
        m = self.match(line)
        return None if m is None else self.tree(m, lineno, offset)

    @staticmethod
    def tree(m, lineno: int, offset: int) -> Tree:
        kw = m.group("kw")
        k, has_value, has_attrs, _ = SHAPES[kw]

        def token(kind, group):
            a, b = m.span(group)
            return Token(kind, m.group(group), offset + a, lineno, a + 1, lineno, b + 1, offset + b)

        def atom(group, quantity_group):
            a, b = m.span(group)
            if m.group(quantity_group) is not None:
                return Tree("number", [token("QUANTITY", group)], _meta(lineno, a, b, offset))
            return Tree("name", [token("NAME", group)], _meta(lineno, a, b, offset))

        children: list = [token("NAME", f"n{i}") for i in range(k)]
        end = m.end(f"n{k - 1}")
        if has_value:
            children.append(atom("v", "vq"))
            end = m.end("v")
        if has_attrs:
            if "sk" in m.re.groupindex and m.group("sk") is not None:
                a, b = m.start("sk"), m.end("s")
                attr = Tree("attr_start", [atom("s", "sq")], _meta(lineno, a, b, offset))
                children.append(Tree("attrs", [attr], _meta(lineno, a, b, offset)))
                end = b
            else:
                children.append(Tree("attrs", [], _NO_POS))
        return Tree(kw, children, _meta(lineno, m.start("kw"), end, offset))

    # ---- a whole text -------------------------------------------------------------------
    def parse(self, text: str) -> Tree:
        """The `start` tree of a text. Its children are a `Statements` sequence: the plain
        lines among them become trees only as they are read, so a mesh of a quarter of a
        million lines never has all its trees in memory at once."""
        items: list = []  # a lark tree, or the index of a plain line
        matches: list = []  # beside each item: a plain line's match (dropped once read), else None
        lines = text.split("\n")
        offsets = array("q")
        depth = 0
        offset = 0
        run_start = None  # (line index, offset) of the lines waiting for lark

        def flush(upto_offset):
            nonlocal run_start
            if run_start is not None:
                i0, o0 = run_start
                run_start = None
                try:
                    tree = self.lark.parse(text[o0:upto_offset], start="start")
                except UnexpectedInput as e:
                    _shift_error(e, i0, o0)
                    raise
                for stmt in tree.children:
                    _shift(stmt, i0, o0)
                    items.append(stmt)
                    matches.append(None)

        match = self.match
        for i, line in enumerate(lines):
            offsets.append(offset)
            nxt = offset + len(line) + 1
            if depth == 0:
                m = match(line)
                if m is not None:
                    if run_start is not None:
                        flush(offset)
                    items.append(i)
                    matches.append(m)
                    offset = nxt
                    continue
                if _BLANK.fullmatch(line):
                    flush(offset)
                    offset = nxt
                    continue
            if run_start is None:
                run_start = (i, offset)
            for b in _BRACES.findall(line):
                if b == "{":
                    depth += 1
                elif b == "}":
                    depth = max(0, depth - 1)
            offset = nxt
        flush(len(text))
        return Tree("start", Statements(self, lines, offsets, items, matches), Meta())


class Statements(Sequence):
    """The statements of a text in order. A plain line's tree is built each time it is read
    and not kept; lark's trees (for everything else) are kept as they are."""

    def __init__(self, reader: LineReader, lines: list[str], offsets, items: list, matches: list | None = None):
        self.reader, self.lines, self.offsets, self.items = reader, lines, offsets, items
        self.matches = matches if matches is not None else [None] * len(items)

    def _tree(self, item):
        if not isinstance(item, int):
            return item
        line = self.lines[item]
        return self.reader.tree(self.reader.match(line), item + 1, self.offsets[item])

    def raw(self):
        """The items as kept, for a reader that takes plain lines without trees
        (language/direct.py): (lark's tree, None, None), and (a plain line's index, its text,
        its match), the match found while parsing and dropped here once handed out, so a mesh's
        matches do not all live on beside the Design being built from them."""
        matches, lines, match = self.matches, self.lines, self.reader.match
        for k, item in enumerate(self.items):
            if isinstance(item, int):
                m, matches[k] = matches[k], None
                line = lines[item]
                yield item, line, m if m is not None else match(line)  # read a second time: matched again
            else:
                yield item, None, None

    def line_match(self, i: int):
        line = self.lines[i]
        return line, self.reader.match(line)

    def tree_at(self, i: int):
        return self._tree(i)

    def __len__(self) -> int:
        return len(self.items)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self._tree(x) for x in self.items[i]]
        return self._tree(self.items[i])

    def __iter__(self):
        for item in self.items:
            yield self._tree(item)


def _shift(item, lines: int, chars: int) -> None:
    """Move the positions of a tree parsed from a piece of the text to those in the whole text,
    and refuse one nested deeper than MAX_DEPTH (TooDeep). Iterative: a statement of a thousand
    nested levels is walked without a thousand Python frames."""
    deepest, first = 0, None
    stack = [(item, 1)]
    while stack:
        node, depth = stack.pop()
        if isinstance(node, Token):
            if node.line is not None:
                node.line += lines
                node.end_line += lines
                node.start_pos += chars
                node.end_pos += chars
            continue
        if not isinstance(node, Tree):
            continue
        m = node.meta
        if not m.empty:
            m.line += lines
            m.end_line += lines
            m.start_pos += chars
            m.end_pos += chars
            if depth == MAX_DEPTH + 1 and (first is None or (m.line, m.column) < (first.line, first.column)):
                first = m
        deepest = max(deepest, depth)
        stack.extend((c, depth + 1) for c in node.children)
    if deepest > MAX_DEPTH:
        m = first if first is not None else (item.meta if isinstance(item, Tree) else None)
        raise TooDeep(deepest, m)


def check_depth(tree) -> None:
    """Raise TooDeep for a tree nested deeper than MAX_DEPTH (one that lark read on its own)."""
    _shift(tree, 0, 0)


class TooDeep(UnexpectedInput):
    """A statement nested deeper than MAX_DEPTH: reading it further (recursively, as every later
    stage does) would exhaust Python's stack. `line` and `column` are where the limit is passed."""

    def __init__(self, depth: int, meta=None):
        self.depth = depth
        empty = meta is None or getattr(meta, "empty", True)
        self.line = None if empty else meta.line
        self.column = None if empty else meta.column
        self.pos_in_stream = None if empty else meta.start_pos
        self.hint = ("split it into several `let` steps (`let a = ...` then `let b = a + ...`); each term of a "
                     "long sum and each unary minus counts as a level, parentheses alone do not")
        super().__init__(f"this statement nests {depth} levels deep, and netgen reads at most {MAX_DEPTH}")


def _shift_error(e: UnexpectedInput, lines: int, chars: int) -> None:
    if isinstance(getattr(e, "line", None), int) and e.line > 0:
        e.line += lines
    if isinstance(getattr(e, "pos_in_stream", None), int) and e.pos_in_stream >= 0:
        e.pos_in_stream += chars
    tok = getattr(e, "token", None)
    if isinstance(tok, Token) and tok.type != "$END":
        _shift(tok, lines, chars)


class _Pos:
    """The part of lark's Meta that a one-line tree needs, in slots: lark's Meta keeps a dict
    per tree, which for a 270,000-line mesh was most of the memory taken by reading it."""

    __slots__ = ("empty", "line", "column", "end_line", "end_column", "start_pos", "end_pos")

    def __init__(self, empty, line=None, column=None, end_line=None, end_column=None, start_pos=None,
                 end_pos=None):
        self.empty, self.line, self.column, self.end_line = empty, line, column, end_line
        self.end_column, self.start_pos, self.end_pos = end_column, start_pos, end_pos


_NO_POS = _Pos(True)  # shared by every empty `attrs`; nothing writes to a tree's positions


def _meta(lineno: int, a: int, b: int, offset: int) -> _Pos:
    return _Pos(False, lineno, a + 1, lineno, b + 1, offset + a, offset + b)
