"""`part`, `use ... with` and `include`: reusable blocks and files, read into the Elaborator's scope."""
from __future__ import annotations

import difflib
from dataclasses import dataclass
from pathlib import Path

from lark import Token, Tree

from netgen.model.design import Loc
from netgen.model.errors import NetgenError
from netgen.language.source import Unreadable, check_breaks, read_file, split_lines


# Statements a design may expand to: each statement read counts, those of a part again at each
# `use` (so a part that uses another twice doubles it). Reading takes about 30 us a statement.
MAX_STATEMENTS = 1_000_000


class TooLarge(NetgenError):
    """The design expands past MAX_STATEMENTS: reading stops at the first such error."""


def _many(n: int) -> str:
    return f"{n:,}" if n < 10**15 else f"more than 10^{len(str(n)) - 1}"


_SIZE_HINT = ("each `use` reads its part's statements again, so parts that use another part twice, a few levels "
              "deep, multiply: use fewer copies, or `plate` for a large grid")


@dataclass
class PartDef:
    """A `part` as written: its ports, its statements, and the file they came from."""

    name: str
    ports: list[str]
    body: list
    loc: Loc
    file: str
    lines: list[str]


class PartsMixin:
    """The Elaborator's statements for parts and files; they swap its scope while they read."""

    def st_part(self, t):
        name_tok, *rest = t.children
        name = str(name_tok)
        ports = [str(p) for p in rest if isinstance(p, Token) and p.type == "NAME"]
        body = [c for c in rest if isinstance(c, Tree)]
        if name in self.parts:
            raise self.err(name_tok, f"part `{name}` is already defined at {self.parts[name].loc}")
        if len(set(ports)) != len(ports):
            raise self.err(name_tok, f"part `{name}` names a port twice")
        self.parts[name] = PartDef(name, ports, body, self.loc(name_tok), self.file, self.lines)

    def st_use(self, t):
        part_tok, inst_tok, *rest = t.children
        part = self.parts.get(str(part_tok))
        if part is None:
            close = difflib.get_close_matches(str(part_tok), list(self.parts), n=1)
            raise self.err(part_tok, f"unknown part `{part_tok}`",
                           f"did you mean `{close[0]}`?" if close else "define it first with `part NAME(PORTS) { ... }`")
        if part.name in self.expanding:
            raise self.err(part_tok, f"part `{part.name}` uses itself", "parts may not be recursive")
        size = self.part_size(part)
        if self.size + size > MAX_STATEMENTS:  # before reading any of it: 2^40 copies would never end
            raise TooLarge(f"`use {part.name}` here would expand to {_many(size)} statements, and a design may expand "
                           f"to at most {MAX_STATEMENTS:,}"
                           + (f" ({self.size - 1:,} are read before it)" if size <= MAX_STATEMENTS
                              else ""),
                           self.loc(part_tok), _SIZE_HINT)
        nodes = [c for c in rest if isinstance(c, Token) and c.type == "NAME"]
        bindings = [c for c in rest if isinstance(c, Tree) and c.data == "binding"]
        if len(nodes) != len(part.ports):
            raise self.err(inst_tok, f"part `{part.name}` has {len(part.ports)} port{'' if len(part.ports) == 1 else 's'} "
                           f"({', '.join(part.ports) or 'none'}), but {len(nodes)} "
                           + ("node is given" if len(nodes) == 1 else "nodes are given"))
        inst = self.prefix + str(inst_tok)
        if inst in self.element_locs or any(k.startswith(inst + ".") for k in self.element_locs):
            raise self.err(inst_tok, f"`{inst_tok}` is already used as a name")
        given = {}
        for b in bindings:
            bname, bexpr = b.children
            if str(bname) in given:
                raise self.err(bname, f"`{bname}` is given twice")
            given[str(bname)] = self.typed(bexpr)
        ports = {p: self.qualify(str(n)) for p, n in zip(part.ports, nodes)}
        saved = (self.prefix, self.ports, self.local_names, self.bindings, self.params, self.param_locs,
                 self.file, self.lines)
        where = self.loc(t)
        self.prefix, self.ports, self.local_names, self.bindings = inst + ".", ports, set(), dict(given)
        self.params, self.param_locs = dict(self.params), dict(self.param_locs)
        self.file, self.lines = part.file, part.lines
        self.expanding.append(part.name)
        try:
            for stmt in part.body:
                self.statement(stmt)
            if self.bindings:
                extra = sorted(self.bindings)
                raise NetgenError(f"part `{part.name}` has no parameter {', '.join('`' + x + '`' for x in extra)}",
                                  where, "`with` sets a part's own `let` defaults")
        except NetgenError as e:
            e.notes.append(f"in part `{part.name}` used as `{inst}` at {where}")
            raise
        finally:
            self.expanding.pop()
            (self.prefix, self.ports, self.local_names, self.bindings, self.params, self.param_locs,
             self.file, self.lines) = saved

    def too_large(self, item) -> TooLarge:
        return TooLarge(f"the design expands to more than {MAX_STATEMENTS:,} statements here, and that is the most "
                        "netgen reads", self.loc(item), _SIZE_HINT)

    def part_size(self, part: PartDef) -> int:
        """The statements one `use` of `part` reads: its own, and again those of each part it uses,
        as the parts are defined now. Without recursion (a chain of a thousand parts is fine);
        remembered once every part it reaches is defined. A part that is not defined yet, or that
        leads back to itself, counts as nothing here: reading it is an error of its own."""
        known = self.part_sizes
        done: dict[str, tuple[int, bool]] = {}  # name -> (size, complete) in this count
        active: set[str] = set()  # entered and not yet left: the path from `part`
        stack = [(part.name, False)]
        while stack:
            name, leaving = stack.pop()
            used = [str(s.children[0]) for s in self.parts[name].body if isinstance(s, Tree) and s.data == "use"]
            if not leaving:
                if name in done or name in known:
                    continue
                active.add(name)
                stack.append((name, True))
                stack.extend((u, False) for u in used if u in self.parts and u not in active)
                continue
            active.discard(name)
            total, complete = len(self.parts[name].body), True
            for u in used:
                if u in known:
                    total += known[u]
                elif u in done:
                    total += done[u][0]
                    complete = complete and done[u][1]
                else:
                    complete = False
            done[name] = (total, complete)
            if complete:
                known[name] = total
        return known[part.name] if part.name in known else done[part.name][0]

    def st_include(self, t):
        tok = t.children[0]
        rel = str(tok)[1:-1]
        base = Path(self.file).resolve().parent if self.file != "<text>" else Path.cwd()
        path = (base / rel).resolve()
        if path.suffix != ".etn":
            raise self.err(tok, f"`{rel}` is not a .etn file", "only descriptions ending in .etn can be included")
        if path in self.including:
            raise self.err(tok, f"`{rel}` is already being read: an include cycle")
        try:
            text = read_file(path, rel).decode("utf-8")  # a regular file of bounded size only
        except Unreadable as e:
            raise self.err(tok, e.message, e.hint) from None
        except UnicodeDecodeError:
            raise self.err(tok, f"`{rel}` is not valid UTF-8") from None
        where = self.loc(t)
        saved = (self.file, self.lines)
        self.file, self.lines = str(path), split_lines(text)
        self.including.append(path)
        before = len(self.errors)
        try:
            check_breaks(text, self.file, self.lines)
            tree = self.parse(text)
            self.statements(tree.children)
        except NetgenError as e:
            e.notes.append(f"included from {where}")
            raise
        finally:
            for e in self.errors[before:]:
                e.notes.append(f"included from {where}")
            self.including.pop()
            self.file, self.lines = saved
