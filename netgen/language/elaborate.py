"""Syntax tree to Design: parameters, units, nodes and their domains, elements, analyses, signals."""
from __future__ import annotations

import difflib
import math
from pathlib import Path

from lark import Token, Tree
from lark.exceptions import UnexpectedCharacters, UnexpectedEOF, UnexpectedInput, UnexpectedToken

from netgen.model import units as U
from netgen.elements import KINDS, READERS, Fixed
from netgen.elements.controller import controlled_dim, controller_signal
from netgen.model.design import (
    ELECTRICAL, THERMAL, Audit, BaselineTolerance, Design, Expectation, Humidity, Loc, Material, Modes, Node, Signal,
    Spread, Steady, Transient, signal_unit,
)
from netgen.model.errors import NetgenError, NetgenErrors
from netgen.model.expr import Binary, Const, Func, SignalRef, Wave
from netgen.language import direct, plate, response
from netgen.language.grammar import parser, paused_gc
from netgen.language.plain_lines import Statements, TooDeep
from netgen.language.parts import MAX_STATEMENTS, PartDef, PartsMixin, TooLarge  # noqa: F401
from netgen.language import affine
from netgen.language.expressions import ExprReader, SIGNAL_KINDS, Typed
from netgen.language.overrides import Overrides
from netgen.language.source import Unreadable, check_breaks, decoded, read_file, split_lines
from netgen.solve.topology import check_design  # the structural checks run on the finished model

MAX_ERRORS = 20
SPREAD_LAWS = ("normal", "uniform")
MAX_POINTS = 1_000_000  # points a transient may report (until / step); see also solve.transient.MAX_STEPS
NOT_YET: dict[str, str] = {}  # statements of LANGUAGE.md not implemented yet, with a hint
# Statements that make sense only once per design, not inside a reusable part.
TOP_LEVEL_ONLY = ("design", "steady", "transient", "modes", "response", "record", "expect_agg", "expect_at", "audit",
                  "material", "part", "include", "baseline")

_TOKEN_WORDS = {
    "_NL": "end of line", "NAME": "a name", "QUANTITY": "a number", "LPAR": "`(`", "RPAR": "`)`",
    "LBRACE": "`{`", "RBRACE": "`}`", "COMMA": "`,`", "EQUAL": "`=`", "CMP": "a comparison",
    "STRING": 'a quoted title', "$END": "end of file",
}

STATEMENTS = ["design", "let", "mass", *dict.fromkeys(k.statement for k in KINDS), "ground", "material", "steady",
              "transient", "modes", "record", "expect", "audit", "part", "use", "include", "plate", "baseline"]


def load(path, overrides: dict[str, str] | None = None) -> Design:
    """Read a .etn file into a checked Design. Raises NetgenError with a location."""
    return load_text(read_source(path), str(path), overrides)


def read_source(path) -> str:
    """The text of a .etn file; an unreadable file or one that is not UTF-8 is a NetgenError."""
    try:
        raw = read_file(path, str(path))  # a regular file of bounded size only (language/source.py)
    except Unreadable as e:
        raise NetgenError(e.message, None, e.hint) from None
    return decoded(raw, str(path), "the file is not valid UTF-8", "save it as UTF-8")


def load_text(text: str, filename: str = "<text>", overrides: dict[str, str] | None = None) -> Design:
    """Read .etn text into a checked Design."""
    with paused_gc():  # reading builds a large graph of objects and no garbage cycles
        design = Elaborator(text, filename, overrides or {}).run()
        check_design(design)
    return design


class Elaborator(PartsMixin):
    def __init__(self, text: str, filename: str, overrides: dict[str, str]):
        self.text = text
        self.lines = split_lines(text)  # of the file being read now (changes inside includes); cut at \n only
        self.file = filename
        self.overrides = Overrides(overrides)
        self.used_overrides: set[str] = set()
        self.params: dict[str, Typed] = {}
        self.param_locs: dict[str, Loc] = {}
        self.design = Design(file=filename)
        self.errors: list[NetgenError] = []
        self.node_first: dict[str, Loc] = {}
        self.element_locs: dict[str, Loc] = {}
        self.pending_signals: list[tuple] = []
        self.parts: dict[str, PartDef] = {}
        # Inside a used part: the instance prefix, the port → outer node map, the part's own
        # `let` names and the `with` values, and the chain of parts being expanded.
        self.prefix = ""
        self.ports: dict[str, str] = {}
        self.local_names: set[str] = set()
        self.bindings: dict[str, Typed] = {}
        self.expanding: list[str] = []
        self.size = 0  # statements read, those of parts at each use (parts.MAX_STATEMENTS)
        self.cells = 0  # of all plates (plate.MAX_CELLS)
        self.part_sizes: dict[str, int] = {}
        self.including: list[Path] = [Path(filename).resolve()] if filename != "<text>" else []

    # ---- locations ---------------------------------------------------------------
    def loc(self, item) -> Loc:
        if isinstance(item, Token):
            line, col = item.line, item.column
        elif isinstance(item, Tree) and not item.meta.empty:
            line, col = item.meta.line, item.meta.column
        else:
            line, col = 1, 1
        text = self.lines[line - 1] if 0 < line <= len(self.lines) else ""
        return Loc(self.file, line, col, text)

    def err(self, item, message, hint=None) -> NetgenError:
        return NetgenError(message, self.loc(item), hint)

    def override_notes(self, dim) -> list[str]:
        """The overrides in use of parameters in `dim`: where a refused value may come from."""
        return [f"in effect: {self.overrides._where(n)}" for n in sorted(self.used_overrides)
                if n in self.params and self.params[n].dim == dim]

    def above_absolute_zero(self, tree, kelvin: float, what: str) -> None:
        """A temperature read from the file (or an override) must be above 0 K."""
        if kelvin <= 0:
            e = self.err(tree, f"{what} must be above absolute zero, not {kelvin:g} K",
                         "temperatures are absolute: write e.g. `300 K` or `25 degC`")
            e.notes = self.override_notes(U.TEMPERATURE)
            raise e

    # ---- driver ------------------------------------------------------------------
    def _comparison(self, cmp_tok, within, within_t, example: str) -> str:
        """An expectation's comparison, checked against its `within`: `=` needs one, the others none."""
        cmp = str(cmp_tok)
        if cmp == "=" and within is None:
            raise self.err(cmp_tok, "`=` needs `within TOL`", example)
        if cmp != "=" and within is not None:
            raise self.err(within_t, f"`within` only goes with `=`, not with `{cmp}`")
        return cmp

    def run(self) -> Design:
        check_breaks(self.text, self.file, self.lines)
        tree = self.parse(self.text)
        try:
            self.statements(tree.children)
        except _Stop:
            pass
        if not self.errors:
            self.finish()
        unused = set(self.overrides) - self.used_overrides
        for name in sorted(unused):
            close = difflib.get_close_matches(name, list(self.params), n=1)
            self.errors.append(NetgenError(
                f"{self.overrides.flag} {name}: the design has no parameter `{name}`",
                None, f"did you mean `{close[0]}`?" if close else (
                    "only names defined with `let` can be set; "
                    + (f"this design's: {', '.join(sorted(self.params))}" if self.params else "this design has none")),
            ))
        if self.errors:
            raise NetgenErrors(self.errors) if len(self.errors) > 1 else self.errors[0]
        d = self.design
        d.params = {k: (v.value, U.unit_name(v.dim)) for k, v in self.params.items() if v.constant}
        return d

    def statements(self, stmts) -> None:
        """Elaborate statements one by one, collecting located errors (up to MAX_ERRORS)."""
        plain = isinstance(stmts, Statements)
        for stmt, line, m in (stmts.raw() if plain else ((s, None, None) for s in stmts)):
            if m is not None:  # a plain line: straight into the Design if it can
                if direct.read(self, line, m, stmt + 1):
                    continue
                stmt = stmts.tree_at(stmt)
            if not isinstance(stmt, Tree):
                continue
            try:
                try:
                    self.statement(stmt)
                except RecursionError:
                    raise self.err(stmt, "this statement nests too deeply to read",
                                   "split a very long expression into several `let` steps") from None
            except NetgenError as e:
                self.errors.append(e)
                if len(self.errors) >= MAX_ERRORS or e.loc is None or isinstance(e, TooLarge):
                    raise _Stop() from None  # a --set error has no place in the file; the rest would echo it

    def statement(self, stmt) -> None:
        self.size += 1
        if self.size > MAX_STATEMENTS:
            raise self.too_large(stmt)
        if self.prefix and stmt.data in TOP_LEVEL_ONLY:
            word = stmt.data.split("_")[0]
            raise self.err(stmt, f"`{word}` is not allowed inside a part", "write it in the design that uses the part")
        read = READERS.get(stmt.data)
        if read is not None:  # an element kind reads its own statement
            read(self, stmt)
        else:
            getattr(self, "st_" + stmt.data)(stmt)

    def qualify(self, name: str) -> str:
        """A name as written inside a part → its name in the design."""
        return self.ports.get(name) or self.prefix + name

    def parse(self, text: str, start: str = "start"):
        try:
            return parser().parse(text, start=start)
        except UnexpectedInput as e:
            raise self.syntax_error(e) from None

    def syntax_error(self, e: UnexpectedInput) -> NetgenError:
        line, col = getattr(e, "line", 1), getattr(e, "column", 1)
        if line is None or line < 1:
            line, col = max(1, len(self.lines)), len(self.lines[-1]) + 1 if self.lines else 1
        text = self.lines[line - 1] if 0 < line <= len(self.lines) else ""
        loc = Loc(self.file, line, col, text)
        if isinstance(e, TooDeep):
            return NetgenError(str(e), loc, e.hint)
        if isinstance(e, UnexpectedToken):
            tok = e.token
            expected = sorted({_TOKEN_WORDS.get(t, f"`{t.lower()}`") for t in e.expected if not t.startswith("__")})
            if tok.type == "$END":
                what = "end of the file"
            elif tok.type == "_NL":
                what = "end of the line"
            else:
                what = f"`{tok}`"
            hint = None
            prev = text[: col - 1].rstrip()
            opened = _open_brace(self.lines, line, col)
            if opened and opened[1] != "part" and (tok.type == "$END" or col == 1 or not prev or prev.endswith("{")):
                at_line, stmt = opened
                if tok.type == "NAME":
                    names = _BRACE_ATTRIBUTES.get(stmt) or sorted(
                        t.lower() for t in e.expected if t.isalpha() and t.isupper() and t not in _TOKEN_WORDS)
                    close = difflib.get_close_matches(str(tok), names, n=1)
                    return NetgenError(f"`{tok}` is not an attribute of `{stmt}`", loc,
                                       f"did you mean `{close[0]}`?" if close else
                                       f"attributes of `{stmt}`: `" + "`, `".join(names) + "`")
                if tok.type == "$END" or str(tok) in STATEMENTS:
                    return NetgenError(f"unexpected {what}: a `}}` is probably missing", loc,
                                       f"the `{{` at line {at_line} is not closed")
            if tok.type == "NAME" and prev and (prev[-1].isdigit()):
                return NetgenError(f"unknown unit `{tok}`", loc, _unit_hint(str(tok)))
            elif (col == 1 or not prev) and str(tok) in NOT_YET:
                return NetgenError(f"`{tok}` is not supported yet by this version of netgen", loc, NOT_YET[str(tok)])
            elif col == 1 or not prev:
                close = difflib.get_close_matches(str(tok), STATEMENTS, n=1)
                hint = (f"did you mean `{close[0]}`?" if close else
                        "a statement starts with one of: " + " ".join(STATEMENTS))
            elif len(expected) <= 8:
                hint = "expected " + ", ".join(expected)
            return NetgenError(f"unexpected {what}", loc, hint)
        if isinstance(e, UnexpectedCharacters):
            ch = text[col - 1] if 0 < col <= len(text) else "?"
            hint = None
            prev = text[: col - 1].rstrip()
            if prev and prev[-1].isdigit() or (ch.isalpha()):
                word = ""
                for c in text[col - 1:]:
                    if c.isspace():
                        break
                    word += c
                hint = _unit_hint(word) if prev and prev[-1].isdigit() else None
            return NetgenError(f"unexpected character `{ch}`", loc, hint)
        if isinstance(e, UnexpectedEOF):
            return NetgenError("the file ends in the middle of a statement", loc, "is a `}` or `)` missing?")
        return NetgenError(str(e).split("\n")[0], loc)

    # ---- values ------------------------------------------------------------------
    def reader(self, signals_ok=False) -> ExprReader:
        return ExprReader(self.params, self.loc, signals_ok, self.signal_dim)

    def typed(self, tree, signals_ok=False) -> Typed:
        r = self.reader(signals_ok)
        t = r.read(tree)
        if r.celsius_seen:
            self.design.celsius = True
        return t

    def const(self, tree, dims, what: str, positive=False, nonneg=False) -> float:
        """A constant of one of `dims` (a Dim or a tuple of Dims)."""
        t = self.typed(tree)
        dims = dims if isinstance(dims, tuple) else (dims,)
        self.need_dim(tree, t, dims, what)
        return self.checked(tree, t, what, positive, nonneg)

    def checked(self, tree, t: Typed, what: str, positive=False, nonneg=False) -> float:
        """The value of `t`, already read from `tree` and of the right dimension, if constant."""
        if not isinstance(t.expr, Const):
            raise self.err(tree, f"{what} must be constant", "only `fixed`, `heat` and `source` values may vary in time")
        v = t.value
        if not math.isfinite(v):
            raise self.err(tree, f"{what} is not a finite number")
        if positive and v <= 0:
            unit = "" if t.dim.dimensionless else f" {U.unit_name(t.dim)}"  # not `0 1`
            e = self.err(tree, f"{what} must be positive, not {v:g}{unit}")
            e.notes = self.override_notes(t.dim)
            raise e
        if nonneg and v < 0:
            raise self.err(tree, f"{what} may not be negative")
        return v

    def difference(self, tree, what: str, positive=False) -> float:
        """A constant temperature difference: a degC value there is refused (affine.py)."""
        if affine.is_absolute(self.typed(tree)):
            raise self.err(tree, f"{what} is a temperature difference, but this is an absolute temperature (degC)",
                           "write differences in K, e.g. `70 K`")
        return self.const(tree, U.TEMPERATURE, what, positive=positive)

    def need_dim(self, tree, t: Typed, dims, what):
        if t.dim in dims:
            return
        want = " or ".join(U.unit_name(d) for d in dims)
        if t.dim.dimensionless:
            raise self.err(tree, f"{what} needs a unit: {want}", f"write e.g. `1 {U.unit_name(dims[0])}`")
        raise self.err(tree, f"{what} needs a unit of {want}, not {U.unit_name(t.dim)}")

    def wave(self, tree, dims, what) -> tuple[Wave, U.Dim]:
        t = self.typed(tree)
        dims = dims if isinstance(dims, tuple) else (dims,)
        self.need_dim(tree, t, dims, what)
        if isinstance(t.expr, Const) and not math.isfinite(t.value):
            raise self.err(tree, f"{what} is not a finite number")
        return Wave(t.expr, U.unit_name(t.dim)), t.dim

    # ---- nodes -------------------------------------------------------------------
    def node(self, tok, domain: str) -> str:
        name = self.qualify(str(tok))
        d = self.design
        if name in d.nodes:
            n = d.nodes[name]
            if n.domain != domain:
                raise self.err(
                    tok, f"node `{name}` is {n.domain} (first used at line {n.loc.line}) but is used here as {domain}",
                    "a node belongs to one domain; use another name for this one",
                )
        else:
            d.nodes[name] = Node(name, domain, self.loc(tok))
        return name

    def element_name(self, tok) -> str:
        name = self.prefix + str(tok)
        if name in self.element_locs:
            raise self.err(tok, f"element `{name}` is already defined at line {self.element_locs[name].line}",
                           "element names must be unique")
        self.element_locs[name] = self.loc(tok)
        return name

    def attrs(self, tree, allowed: tuple[str, ...], stmt: str) -> dict:
        out: dict = {}
        if tree is None:
            return out
        for a in tree.children:
            key = a.data[len("attr_"):]
            if key not in allowed:
                hint = ("`" + "`, `".join(allowed) + "`") if allowed else "none"
                raise self.err(a, f"`{key}` is not an attribute of `{stmt}`", f"attributes of `{stmt}`: {hint}")
            if key in out:
                raise self.err(a, f"`{key}` is given twice")
            out[key] = a
        return out

    # ---- statements --------------------------------------------------------------
    def st_design(self, t):
        if self.design.title is not None:
            raise self.err(t, "`design` is given twice", "one title per file")
        self.design.title = str(t.children[0])[1:-1]

    def st_let(self, t):
        name_tok, value, spread = (list(t.children) + [None])[:3]
        name = str(name_tok)
        in_part = bool(self.prefix)
        if (name in self.local_names) if in_part else (name in self.params):
            raise self.err(name_tok, f"parameter `{name}` is already defined at line {self.param_locs[name].line}")
        if name in ("time", "pi"):
            raise self.err(name_tok, f"`{name}` is a reserved name")
        # `h` (hours) joined the units late; it stays free as a name (a heat-transfer coefficient).
        if U.is_unit_word(name) and name != "h":
            raise self.err(name_tok, f"`{name}` is a unit symbol and cannot name a parameter", "choose another name")
        typed = self.typed(value)
        if isinstance(typed.expr, Const) and not math.isfinite(typed.value):
            raise self.err(value, f"`{name}` is not a finite number")
        if in_part and name in self.bindings:
            given = self.bindings.pop(name)
            if given.dim != typed.dim:
                raise self.err(name_tok, f"`with {name} = ...` is in {U.unit_name(given.dim)}, but `{name}` is in "
                               f"{U.unit_name(typed.dim)}")
            typed = given
        elif not in_part and name in self.overrides:
            self.used_overrides.add(name)
            typed = self.overrides.read(name, typed, self.params)  # netgen/language/overrides.py
        self.params[name] = typed
        self.param_locs[name] = self.loc(name_tok)
        if in_part:
            self.local_names.add(name)
        if spread is not None:
            self.spread(name, typed, spread)

    def spread(self, name: str, typed: Typed, t) -> None:
        """`spread normal 2 %` or `spread uniform 5 %` after a top-level constant `let`."""
        law_tok, amount = t.children
        hint = f"e.g. let {name} = ... spread normal 2 %  (σ), or spread uniform 5 %  (half-width)"
        if self.prefix:
            raise self.err(t, "`spread` is not allowed inside a part", "give the spread to a `let` of the design")
        if str(law_tok) not in SPREAD_LAWS:
            raise self.err(law_tok, f"unknown spread `{law_tok}`: expected normal or uniform", hint)
        if not typed.constant:
            raise self.err(t, f"`{name}` varies, so it cannot have a spread", "give a spread to a constant parameter")
        share = self.const(amount, U.NONE, "a spread (a share such as 2 %)", positive=True)
        if str(law_tok) == "uniform" and share >= 1:
            raise self.err(amount, f"a uniform spread of {share:.4g} (100 % or more) would draw values of zero "
                           "or of the other sign", hint)
        self.design.spreads[name] = Spread(str(law_tok), share, self.loc(t))

    def st_mass(self, t):
        name_tok, cap, attrs = t.children
        name = self.node(name_tok, THERMAL)
        n = self.design.nodes[name]
        if n.capacity is not None:
            raise self.err(name_tok, f"mass `{name}` is already defined at line {n.loc.line}")
        n.capacity = self.const(cap, U.HEAT_CAPACITY, "a heat capacity", positive=True)
        n.loc = self.loc(name_tok)
        a = self.attrs(attrs, ("start",), "mass")
        if "start" in a:
            n.start = self.const(a["start"].children[0], U.TEMPERATURE, "a start temperature", positive=True)

    def two_pins(self, t):
        """Name and two electrical nodes of `KIND NAME A B ...`, with the name's location."""
        name_tok, a, b = t.children[:3]
        name = self.element_name(name_tok)
        return name, self.node(a, ELECTRICAL), self.node(b, ELECTRICAL), self.loc(name_tok)

    def st_ground(self, t):
        tok = t.children[0]
        name = self.node(tok, ELECTRICAL)
        self.design.grounds.setdefault(name, self.loc(tok))

    def st_material(self, t):
        name_tok, attrs = t.children
        name = str(name_tok)
        if name in self.design.materials:
            raise self.err(name_tok, f"material `{name}` is already defined at line {self.design.materials[name].loc.line}")
        at = self.attrs(attrs, ("seebeck", "resistivity", "conductivity"), "material")
        missing = [k for k in ("seebeck", "resistivity", "conductivity") if k not in at]
        if missing:
            raise self.err(name_tok, f"material `{name}` needs {', '.join('`' + m + '`' for m in missing)}",
                           "e.g. material bite { seebeck 200 uV/K  resistivity 1e-5 ohm*m  conductivity 1.5 W/(m*K) }")
        exprs = []
        for key, dim, what in (("seebeck", U.SEEBECK, "a Seebeck coefficient"),
                               ("resistivity", U.RESISTIVITY, "a resistivity"),
                               ("conductivity", U.CONDUCTIVITY, "a thermal conductivity")):
            tree = at[key].children[0]
            r = ExprReader(self.params, self.loc, variables={"T": U.TEMPERATURE})
            typed = r.read(tree)
            self.need_dim(tree, typed, (dim,), what)
            if typed.expr.uses_time:
                raise self.err(tree, f"{what} may depend on the temperature `T`, not on `time`")
            exprs.append(typed.expr)
        self.design.materials[name] = Material(name, self.loc(name_tok), *exprs)

    def st_steady(self, t):
        if self.design.steady:
            raise self.err(t, "`steady` is given twice")
        self.design.analyses.append(Steady(self.loc(t)))

    def st_modes(self, t):
        self.design.analyses.append(Modes(self.loc(t)))

    def st_response(self, t):
        response.read(self, t)

    def st_transient(self, t):
        if self.design.transient:
            raise self.err(t, "`transient` is given twice")
        until = self.const(t.children[0], U.TIME, "the end time", positive=True)
        at = self.attrs(t.children[1], ("step", "tolerance"), "transient")
        step = self.const(at["step"].children[0], U.TIME, "a step", positive=True) if "step" in at else None
        if step is not None and step > until:
            raise self.err(at["step"], f"the step ({step:g} s) is longer than the run ({until:g} s)")
        if step is not None and until / step > MAX_POINTS:  # each point is kept in memory, and solved for
            raise self.err(at["step"], f"the transient would report {until / step:.3g} points ({until:g} s in "
                           f"steps of {step:g} s), and netgen reports at most {MAX_POINTS:,}",
                           f"use `step {until / MAX_POINTS:.4g} s` or longer, or a shorter run")
        tol = self.const(at["tolerance"].children[0], U.NONE, "a tolerance", positive=True) if "tolerance" in at else None
        self.design.analyses.append(Transient(until, self.loc(t), step, tol))

    def st_record(self, t):
        for s in t.children:
            kind = str(s.children[0])
            names = tuple(str(c) for c in s.children[1:] if c is not None)
            if kind not in SIGNAL_KINDS:
                raise self.err(s, f"unknown signal `{kind}(...)`", "signals are T(node) V(node) I(elem) Q(elem) P(elem) U(controller) S(total) E(total)")
            line = self.lines[s.meta.line - 1] if s.meta.line == s.meta.end_line else ""
            written = line[s.meta.column - 1: s.meta.end_column - 1] if line else ""
            sig = Signal(kind, names, self.loc(s), written)
            if any(r.text == sig.text for r in self.design.records):
                continue  # recorded once is enough
            self.design.records.append(sig)
            self.pending_signals.append((kind, names, s))

    def _expect_common(self, t, expr_t, cmp_tok, limit_t, opts, agg, at_time=None):
        typed = self.typed(expr_t, signals_ok=True)
        lim = self.typed(limit_t)
        if not isinstance(lim.expr, Const):
            raise self.err(limit_t, "the limit must be constant")
        if lim.dim != typed.dim:
            raise self.err(limit_t, f"the limit is in {U.unit_name(lim.dim)} but the signal is in "
                           f"{U.unit_name(typed.dim)}")
        if affine.is_difference(typed) and affine.is_absolute(lim):
            # 1 degC is 274.15 K: compared with a difference it would pass or fail for the wrong reason.
            raise self.err(limit_t, "the limit is an absolute temperature (`degC`), but the expression is a "
                           "temperature difference", "differences are in K: write e.g. `< 1 K`")
        if affine.is_absolute(typed) and affine.is_difference(lim) and lim.degc:
            raise self.err(limit_t, "the limit is a difference of two temperatures, but the expression is an "
                           "absolute temperature", "write the limit as one temperature, e.g. `< 30 degC`")
        within_t, b1, b2 = opts.children
        within = None
        if within_t is not None:
            w = self.typed(within_t)
            if w.dim != typed.dim and not w.dim.dimensionless:
                raise self.err(within_t, f"`within` needs {U.unit_name(typed.dim)} or a fraction such as `1 %`")
            if w.celsius or affine.is_absolute(w):
                raise self.err(within_t, "a tolerance is a temperature difference, not an absolute temperature "
                               "(`degC`)", "write it in K: `within 0.5 K`")
            within = w.value if w.dim == typed.dim else -w.value  # negative marks a relative tolerance
        cmp = self._comparison(cmp_tok, within, within_t, "e.g. `= 4 degC within 0.5 K`")
        between = None
        if b1 is not None and agg == "at":
            raise self.err(b1, "`between` does not go with `at TIME`", "use `max`, `min`, `mean` or `final` over an interval")
        if b1 is not None:
            between = (self.const(b1, U.TIME, "a time"), self.const(b2, U.TIME, "a time"))
            if between[1] < between[0]:
                raise self.err(b1, "`between` needs the earlier time first")
        text = self.loc(t).text.strip()
        self.design.expectations.append(Expectation(
            agg, typed.expr, cmp, lim.value, U.unit_name(typed.dim), text, self.loc(t),
            within=within, between=between, at_time=at_time, celsius=lim.celsius))

    def st_expect_agg(self, t):
        agg, expr_t, cmp_tok, limit_t, opts = t.children
        self._expect_common(t, expr_t, cmp_tok, limit_t, opts, str(agg))

    def st_expect_at(self, t):
        expr_t, time_t, cmp_tok, limit_t, opts = t.children
        at_time = self.const(time_t, U.TIME, "a time", nonneg=True)
        self._expect_common(t, expr_t, cmp_tok, limit_t, opts, "at", at_time)

    def st_expect_window(self, t):
        """`expect window A < B and C > D lasts CMP DURATION` (netgen/checks/windows.py)."""
        *comparisons, cmp_tok, dur_t = t.children
        margins = []
        for c in comparisons:
            lhs_t, op, rhs_t = c.children
            lhs, rhs = self.typed(lhs_t, signals_ok=True), self.typed(rhs_t, signals_ok=True)
            if str(op) == "=":
                raise self.err(op, "a window's condition compares with `<`, `<=`, `>` or `>=`, not `=`",
                               "a value equals another only at instants; give a band as `A > X and A < Y`")
            if lhs.dim != rhs.dim:
                raise self.err(rhs_t, f"this side is in {U.unit_name(rhs.dim)} but the other in {U.unit_name(lhs.dim)}")
            for one, other, tree in ((lhs, rhs, rhs_t), (rhs, lhs, lhs_t)):
                if affine.is_difference(one) and affine.is_absolute(other):
                    raise self.err(tree, "this side is an absolute temperature (degC), but the other is a "
                                   "temperature difference", "differences are in K: write e.g. `> 2 K`")
            if not (lhs.expr.uses_signals or rhs.expr.uses_signals):
                raise self.err(c, "this comparison names no signal, so it holds always or never",
                               "compare a signal, e.g. `T(body) < T(bath)`")
            less = str(op) in ("<", "<=")
            margins.append(Binary("-", rhs.expr, lhs.expr) if less else Binary("-", lhs.expr, rhs.expr))
        dur = self.typed(dur_t)
        if not isinstance(dur.expr, Const):
            raise self.err(dur_t, "the duration must be constant")
        self.need_dim(dur_t, dur, (U.TIME,), "a window's duration")
        cmp = str(cmp_tok)
        if cmp == "=":
            raise self.err(cmp_tok, "`lasts` compares with `<`, `<=`, `>` or `>=`",
                           "e.g. `lasts > 1 s`, or two windows expectations for a band")
        text = self.loc(t).text.strip()
        self.design.expectations.append(Expectation(
            "window", Func("min", tuple(margins)) if len(margins) > 1 else margins[0], cmp, dur.value, "s", text,
            self.loc(t), margins=tuple(margins)))

    def st_expect_time(self, t):
        """`expect time of min|max EXPR CMP TIME [within TOL] [between T1 and T2]`."""
        agg_tok, expr_t, cmp_tok, limit_t, opts = t.children
        which = str(agg_tok)
        if which not in ("min", "max"):
            raise self.err(agg_tok, f"`time of` takes `min` or `max`, not `{which}`",
                           "e.g. `expect time of min T(body) = 3.4 s within 2 ms`")
        typed = self.typed(expr_t, signals_ok=True)
        if not typed.expr.uses_signals:
            raise self.err(expr_t, "`time of` needs an expression of signals", "e.g. `time of min T(body)`")
        lim = self.typed(limit_t)
        if not isinstance(lim.expr, Const):
            raise self.err(limit_t, "the time must be constant")
        self.need_dim(limit_t, lim, (U.TIME,), "the time of an extreme")
        within_t, b1, b2 = opts.children
        within = None
        if within_t is not None:
            w = self.typed(within_t)
            if w.dim != U.TIME and not w.dim.dimensionless:
                raise self.err(within_t, "`within` needs a time (e.g. `2 ms`) or a fraction such as `1 %`")
            within = w.value if w.dim == U.TIME else -w.value
        cmp = self._comparison(cmp_tok, within, within_t, "e.g. `= 3.4 s within 2 ms`")
        between = None
        if b1 is not None:
            between = (self.const(b1, U.TIME, "a time"), self.const(b2, U.TIME, "a time"))
            if between[1] < between[0]:
                raise self.err(b1, "`between` needs the earlier time first")
        text = self.loc(t).text.strip()
        self.design.expectations.append(Expectation(
            f"time of {which}", typed.expr, cmp, lim.value, "s", text, self.loc(t), within=within, between=between))

    def st_baseline(self, t):
        *sig_trees, first, second = t.children
        signals = []
        for s in sig_trees:
            kind = str(s.children[0])
            names = tuple(str(c) for c in s.children[1:] if c is not None)
            if kind not in SIGNAL_KINDS:
                raise self.err(s, f"unknown signal `{kind}(...)`", "signals are T(node) V(node) I(elem) Q(elem) P(elem) U(controller) S(total) E(total)")
            signals.append(Signal(kind, names, self.loc(s)).text)
            self.pending_signals.append((kind, names, s))
        entry = BaselineTolerance(tuple(signals), self.loc(t))
        units = {U.unit_name(d) for d in (U.TEMPERATURE, U.VOLTAGE, U.CURRENT, U.POWER)}
        for tree in (first, second):
            if tree is None:
                continue
            typed = self.typed(tree)
            if not isinstance(typed.expr, Const) or not typed.value >= 0 or not math.isfinite(typed.value):
                raise self.err(tree, "a baseline tolerance is a constant that is not negative")
            if typed.dim.dimensionless:
                if entry.rtol is not None:
                    raise self.err(tree, "two relative tolerances", "give one absolute (in the signal's unit) and one relative")
                entry.rtol = typed.value
                continue
            unit = U.unit_name(typed.dim)
            if unit not in units or typed.celsius or affine.is_absolute(typed):
                raise self.err(tree, f"an absolute tolerance is a difference in K, V, A or W, not {unit}"
                               + (" (a temperature in degC is absolute: write K)" if typed.celsius else ""))
            if entry.atol is not None:
                raise self.err(tree, "two absolute tolerances", "give one absolute (in the signal's unit) and one relative")
            wrong = [s for s in signals if signal_unit(s) != unit]
            if wrong:
                raise self.err(tree, f"{', '.join(wrong)} {'is' if len(wrong) == 1 else 'are'} not in {unit}",
                               "list the signals of one unit together")
            entry.atol, entry.unit = typed.value, unit
        self.design.baseline_tolerances.append(entry)

    def st_humidity(self, t):
        """`humidity 50 % at 20 degC`: the relative humidity of the air at its temperature."""
        rh_t, air_t = t.children
        if self.design.humidity is not None:
            raise self.err(t, f"`humidity` is given twice (first at line {self.design.humidity.loc.line})")
        rh = self.const(rh_t, U.NONE, "a relative humidity")
        if not 0 < rh <= 1:
            raise self.err(rh_t, f"a relative humidity is more than 0 % and at most 100 %, not {100 * rh:g} %",
                           "write it as a percentage, e.g. `humidity 50 % at 20 degC`")
        air = self.const(air_t, U.TEMPERATURE, "the air temperature", positive=True)
        if affine.is_difference(self.typed(air_t)):
            raise self.err(air_t, "the air temperature is a difference here", "write it as one temperature, e.g. `20 degC`")
        if not 223.15 <= air <= 373.15:
            raise self.err(air_t, f"the air temperature is {air - U.ZERO_CELSIUS:.1f} degC; the dew-point formula "
                           "holds from -50 degC to 100 degC", "give the air temperature in degC or K")
        self.design.humidity = Humidity(rh, air, self.loc(t))

    def st_audit(self, t):
        kind_tok, within_t = t.children
        within = self.const(within_t, U.NONE, "an audit tolerance", positive=True) if within_t is not None else None
        self.design.audits.append(Audit(str(kind_tok), self.loc(t), within))

    def st_plate(self, t):
        plate.elaborate(self, t)

    # ---- signals -----------------------------------------------------------------
    def signal_dim(self, kind, names, tree) -> U.Dim:
        self.pending_signals.append((kind, names, tree))
        if kind == "U":
            return controlled_dim(self.design, names, lambda m, h: self.err(tree, m, h))
        return {"T": U.TEMPERATURE, "V": U.VOLTAGE, "I": U.CURRENT, "Q": U.POWER, "P": U.POWER,
                "S": U.HEAT_CAPACITY, "E": U.ENERGY}[kind]

    def finish(self):
        """What can only be judged once the whole file is read."""
        plate.finish(self)  # edges join their plate once everything that attaches to them is read
        self.finish_signals()
        d = self.design
        for e in d.elements:
            self.errors += e.resolve(d)
        self.errors += response.check(d)
        tr = d.transient
        asks = next((e for e in d.expectations if e.agg == "steady"), None)
        if asks is not None and d.steady is None:
            d.analyses.insert(0, Steady(asks.loc))  # `expect steady` asks for the steady state, as `steady` does
        for e in d.expectations:
            needs = "steady" if e.agg == "steady" else "transient"
            if (needs == "steady" and d.steady is None) or (needs == "transient" and tr is None):
                self.errors.append(NetgenError(f"this expectation reads the `{needs}` analysis, which the file "
                                               "does not have", e.loc, f"add `{needs}`" + (" until TIME" if needs == "transient" else "")))
                continue
            if tr is not None and e.at_time is not None and e.at_time > tr.until:
                self.errors.append(NetgenError(f"`at {e.at_time:g} s` is after the end of the transient ({tr.until:g} s)",
                                               e.loc, "read an instant inside the run"))
            if tr is not None and e.between is not None and e.between[0] > tr.until:
                self.errors.append(NetgenError(f"the interval starts after the end of the transient ({tr.until:g} s)", e.loc))
        for a in d.audits:
            if tr is None:
                self.errors.append(NetgenError(f"`audit {a.kind}` needs a `transient`", a.loc, "add `transient until TIME`"))
        fixed = {e.node: e for e in d.elements if isinstance(e, Fixed)}
        for e in d.elements:
            if not isinstance(e, Fixed) and e.name in fixed:
                self.errors.append(NetgenError(
                    f"`{e.name}` names both an element and a reservoir node, so `Q({e.name})` would be ambiguous",
                    e.loc, "rename the element"))

    def finish_signals(self):
        """Signals may name things defined later in the file, so they are checked at the end."""
        for kind, names, tree in self.pending_signals:
            try:
                check_signal(self.design, kind, names)
            except ValueError as e:
                msg, hint = e.args if len(e.args) == 2 else (e.args[0], None)
                self.errors.append(self.err(tree, msg, hint))




# What may stand inside the `{ ... }` of a statement, for the hint on a typo there.
_BRACE_ATTRIBUTES = {k.statement: k.attributes for k in KINDS if k.attributes}
_BRACE_ATTRIBUTES["material"] = ("seebeck", "resistivity", "conductivity")


def _open_brace(lines: list[str], line: int, col: int) -> tuple[int, str] | None:
    """The line and the statement word of the innermost `{` still open before LINE:COL, if any."""
    stack = []
    for i, text in enumerate(lines[:line], 1):
        text = text[: col - 1] if i == line else text
        text = text.split("#", 1)[0]
        for ch in text:
            if ch == "{":
                stack.append(i)
            elif ch == "}" and stack:
                stack.pop()
    if not stack:
        return None
    words = lines[stack[-1] - 1].split()
    return stack[-1], (words[0] if words else "")


def _a(word: str) -> str:
    """`an electrical`, `a thermal`: the word with its article."""
    return f"{'an' if word[:1] in 'aeiou' else 'a'} {word}"


class _Stop(Exception):
    """Too many errors, or one that makes the rest meaningless: stop reading."""


def check_signal(d: Design, kind: str, names: tuple[str, ...]) -> None:
    """Raise ValueError(message, hint) when a signal does not fit the design."""

    def nearest(name, pool):
        close = difflib.get_close_matches(name, list(pool), n=1)
        return f"did you mean `{close[0]}`?" if close else None

    if kind == "U":
        controller_signal(d, names)
        return
    if kind in ("S", "E"):
        if names != ("total",):
            what = "the entropy produced so far" if kind == "S" else "the energy stored so far"
            raise ValueError(f"`{kind}(...)` is {what} of the whole design: write {kind}(total)", None)
        return
    if kind in ("T", "V"):
        want = THERMAL if kind == "T" else ELECTRICAL
        if len(names) != (1 if kind == "T" else len(names)) or not 1 <= len(names) <= 2:
            raise ValueError(f"`{kind}(...)` takes {'one node' if kind == 'T' else 'one or two nodes'}", None)
        for n in names:
            node = d.nodes.get(n)
            if node is None:
                raise ValueError(f"unknown node `{n}`", nearest(n, d.nodes))
            if node.domain != want:
                other = "T" if want == ELECTRICAL else "V"
                raise ValueError(f"`{n}` is {_a(node.domain)} node", f"write {other}({n})")
        return
    if len(names) != 1:
        raise ValueError(f"`{kind}(...)` takes one name", None)
    elements = {e.name: e for e in d.elements}
    name, side = Signal(kind, names).element_and_side(elements.__contains__)
    e = elements.get(name)
    if side is not None and e is not None and e.sides:
        if side in e.sides:
            return
        raise ValueError(f"{_a(e.statement)} side is " + " or ".join(f"`.{x}`" for x in e.sides) + f", not `.{side}`",
                         None)
    e = elements.get(names[0])
    if e is None:
        raise ValueError(f"unknown element `{names[0]}`", nearest(names[0], elements))
    if kind in ("I", "P") and kind not in e.signals:
        raise ValueError(f"`{kind}({name})` needs an electrical element; `{name}` is thermal",
                         f"write Q({name}) for its heat flow")
    if kind == "Q" and "Q" not in e.signals:
        hint = (f"write Q({name}.{e.sides[0]}) or Q({name}.{e.sides[1]})" if e.sides
                else f"write I({name}) or P({name})")
        carriers = ", ".join(f"`{k.statement}`" for k in KINDS if "Q" in k.signals)
        raise ValueError(f"`Q({name})` needs an element that carries heat: {carriers}", hint)


def _unit_hint(word: str) -> str:
    try:
        U.parse_unit(word)
    except U.UnitError as e:
        return e.hint or f"`{word}` is not a unit"
    return "units are written right after the number"
