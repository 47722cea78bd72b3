"""Typed expressions: syntax-tree expressions to SI Expr trees with their dimensions checked."""
from __future__ import annotations

import difflib
import functools
import math
import re
from dataclasses import dataclass
from fractions import Fraction

from lark import Token, Tree

from netgen.model import units as U
from netgen.model.errors import NetgenError
from netgen.model.expr import Binary, Const, Expr, Func, Shape, SignalRef, Time, Unary, Var, evaluate
from netgen.language import affine
from netgen.language.plain_lines import MAX_DEPTH

_NUM = re.compile(r"^((?:[0-9]+(?:\.[0-9]+)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?)[ \t]*(.*)$")

FUNCTIONS = ("sqrt", "exp", "log", "abs", "min", "max", "sin", "cos")
SHAPES = ("step", "ramp", "pulse", "sine", "table")
SIGNAL_KINDS = ("T", "V", "I", "Q", "P", "U", "S", "E")
MAX_NODES = 10_000  # terms of one value with the parameters it names written out (MAX_DEPTH: plain_lines.py)
RESERVED = ("time", "pi")


@dataclass
class Typed:
    """An expression with its dimension; `celsius` marks a bare `degC` literal. For a
    temperature, `weight` is 1 for an absolute one and 0 for a difference (None: cannot tell)
    and `degc` marks one that holds a value written in degC (netgen/language/affine.py)."""

    expr: Expr
    dim: U.Dim
    celsius: bool = False
    weight: float | None = None
    degc: bool = False

    @property
    def constant(self) -> bool:
        return isinstance(self.expr, Const)

    @property
    def value(self) -> float:
        return self.expr.v  # only for constants


@functools.lru_cache(maxsize=4096)  # a mesh repeats a few value texts (`2 W/K`) thousands of times
def read_quantity(text: str) -> tuple[float, U.Dim, bool]:
    """`0.45 J/K` → (0.45, J/K, False); `24 degC` → (297.15, K, True)."""
    m = _NUM.match(text)
    num, unit = float(m.group(1)), m.group(2).strip()
    if not unit:
        return num, U.NONE, False
    factor, dim, celsius = U.parse_unit(unit)
    if celsius:
        return num + U.ZERO_CELSIUS, dim, True
    return num * factor, dim, False


class ExprReader:
    """Turns expression trees into Typed values. `loc_of(tree)` gives a Loc for messages."""

    def __init__(self, params: dict, loc_of, signals_ok: bool = False, signal_dim=None,
                 variables: dict | None = None):
        self.params = params  # name -> Typed (constant)
        self.variables = variables or {}  # name -> Dim, e.g. {"T": TEMPERATURE} in a material
        self.loc_of = loc_of
        self.signals_ok = signals_ok
        self.signal_dim = signal_dim  # callback(kind, args, tree) -> Dim
        self.celsius_seen = False

    def err(self, tree, message, hint=None):
        return NetgenError(message, self.loc_of(tree), hint)

    def read(self, tree) -> Typed:
        t = self._read(tree)
        problem = affine.complete_problem(t)
        if problem:
            raise self.err(tree, problem, affine.HINT_SUM)
        if not isinstance(t.expr, Const):
            self._bounded(t.expr, tree)  # before anything walks it
        if (not isinstance(t.expr, Const) and not t.expr.uses_time and not t.expr.uses_signals
                and not t.expr.uses_vars):
            t = Typed(Const(float(evaluate(t.expr))), t.dim, t.celsius, t.weight, t.degc)
        return t

    def _bounded(self, e: Expr, tree) -> None:
        """A value that varies (in time, with `T`, or with a signal) keeps the trees of the
        parameters it names, and those of theirs: a chain of `let`s can nest deeper than any one
        line, and `let b = a + a` doubles `a`. Every later stage walks the whole tree, so its
        depth and its size are limited here, where the line is known."""
        depth, size = _measure(e)
        hint = ("a parameter that varies is written out wherever it is used: compute fewer steps in a chain of "
                "`let`s, or use such a parameter fewer times")
        if depth > MAX_DEPTH:
            raise self.err(tree, f"this value nests {depth} levels deep with the parameters it uses written out, "
                           f"and netgen reads at most {MAX_DEPTH}", hint)
        if size > MAX_NODES:
            shown = f"{size:,}" if size < 10**15 else f"more than 10^{len(str(size)) - 1}"
            raise self.err(tree, f"this value has {shown} terms with the parameters it uses written out, and "
                           f"netgen reads at most {MAX_NODES:,}", hint)

    def _read(self, tree) -> Typed:
        if isinstance(tree, Token):
            raise self.err(tree, f"unexpected `{tree}`")
        kind = tree.data
        if kind == "number":
            tok = tree.children[0]
            try:
                v, dim, celsius = read_quantity(str(tok))
            except U.UnitError as e:
                raise self.err(tree, str(e), e.hint) from None
            self.celsius_seen |= celsius
            if dim == U.TEMPERATURE:  # degC is absolute; a number in K may be either (None)
                return Typed(Const(v), dim, celsius, 1.0 if celsius else None, celsius)
            return Typed(Const(v), dim, celsius)
        if kind == "name":
            return self._name(tree)
        if kind == "neg":
            a = self._read(tree.children[0])
            if a.celsius and isinstance(a.expr, Const) and tree.children[0].data == "number":
                # `-25 degC` is minus twenty-five degrees Celsius, not minus 298.15 K.
                return Typed(Const(2 * U.ZERO_CELSIUS - a.expr.v), a.dim, True, 1.0, True)
            return Typed(_fold(Unary("neg", a.expr)), a.dim, False, None if a.weight is None else -a.weight, a.degc)
        if kind == "unary":  # unary plus keeps its operand (lark inlines `?unary`)
            return self._read(tree.children[0])
        if kind in ("add", "sub"):
            a, b = self._read(tree.children[0]), self._read(tree.children[1])
            if a.dim != b.dim:
                raise self.err(
                    tree, f"cannot {'add' if kind == 'add' else 'subtract'} {U.unit_name(b.dim)} "
                    f"{'to' if kind == 'add' else 'from'} {U.unit_name(a.dim)}",
                    "both sides of + and - need the same unit",
                )
            weight, degc = affine.add(a, b, 1 if kind == "add" else -1)
            return Typed(_fold(Binary("+" if kind == "add" else "-", a.expr, b.expr)), a.dim, False, weight, degc)
        if kind in ("mul", "div"):
            a, b = self._read(tree.children[0]), self._read(tree.children[1])
            if kind == "div" and isinstance(b.expr, Const) and b.expr.v == 0:
                raise self.err(tree.children[1], "division by zero")
            dim = a.dim * b.dim if kind == "mul" else a.dim / b.dim
            return Typed(_fold(Binary("*" if kind == "mul" else "/", a.expr, b.expr)), dim, False,
                         *self._product_weight(tree, kind, a, b, dim))
        if kind == "pow":
            a, b = self._read(tree.children[0]), self._read(tree.children[1])
            if not b.dim.dimensionless:
                raise self.err(tree.children[1], f"an exponent must be a plain number, not {U.unit_name(b.dim)}")
            if a.dim.dimensionless:
                return Typed(_fold(Binary("^", a.expr, b.expr)), a.dim)
            self._product_weight(tree, "pow", a, b, None)
            if not isinstance(b.expr, Const):
                raise self.err(tree.children[1], "the exponent of a quantity with a unit must be constant")
            p = Fraction(b.expr.v).limit_denominator(12)
            if abs(float(p) - b.expr.v) > 1e-12:
                raise self.err(tree.children[1], "the exponent of a quantity with a unit must be a simple fraction")
            return Typed(_fold(Binary("^", a.expr, b.expr)), a.dim**p)
        if kind == "call":
            return self._call(tree)
        if kind == "expr":
            return self._read(tree.children[0])
        raise self.err(tree, f"unexpected `{kind}` in an expression")

    def _product_weight(self, tree, kind, a: Typed, b: Typed, dim):
        """The affine rule for *, / and ^ (netgen/language/affine.py): a plain constant scales the
        weight; otherwise only differences and measured absolute temperatures may be multiplied."""
        pairs = [(a, b), (b, a)] if kind == "mul" else [(a, b)] if kind == "div" else []
        for temp, other in pairs:  # (a temperature, a plain constant)
            if temp.dim == U.TEMPERATURE and other.dim.dimensionless and isinstance(other.expr, Const):
                return affine.scale(temp, other.value if kind == "mul" else 1.0 / other.value)
        problem = affine.product_problem(a, b)
        if problem == "sum":
            raise self.err(tree, "a sum of absolute temperatures is multiplied here", affine.HINT_SUM)
        if problem == "degc":
            raise self.err(tree, "a temperature written in degC is multiplied here", affine.HINT_DEGC)
        return affine.product_weight(a, b, dim)

    def _name(self, tree) -> Typed:
        name = str(tree.children[0])
        if name == "time":
            return Typed(Time(), U.TIME)
        if name in self.variables:
            d = self.variables[name]
            return Typed(Var(name), d, False, 1.0 if d == U.TEMPERATURE else None)
        if name == "pi":
            return Typed(Const(math.pi), U.NONE)
        if name in U.ABSOLUTE_CELSIUS:
            raise self.err(tree, f"`{name}` may not appear inside a compound unit",
                           "write temperature differences in K, e.g. `W/K`")
        if name in self.params:
            p = self.params[name]
            return Typed(p.expr, p.dim, p.celsius, p.weight, p.degc)
        loc = self.loc_of(tree)
        before = loc.text[: loc.col - 1] if loc.text else ""
        if len(before) >= 2 and before[-1] in "*/" and not before[-2].isspace():
            # Written straight after `J/` or `W*`: this was meant as part of a unit.
            if before[:-1].endswith(U.ABSOLUTE_CELSIUS):
                sym = next(c for c in U.ABSOLUTE_CELSIUS if before[:-1].endswith(c))
                raise self.err(tree, f"`{sym}` may not appear inside a compound unit",
                               "write temperature differences in K, e.g. `K/W`")
            raise self.err(tree, f"unknown unit `{name}`", U._suggest(name))
        close = difflib.get_close_matches(name, list(self.params) + list(RESERVED), n=1)
        hint = f"did you mean `{close[0]}`?" if close else "define it first with `let NAME = VALUE`"
        if U.is_unit_word(name):
            hint = f"`{name}` is a unit: write it right after a number, e.g. `1 {name}`"
        elif not close:
            unit_hint = U._suggest(name)
            if unit_hint and unit_hint.startswith("did you mean"):
                hint = unit_hint.replace("did you mean", "if this is part of a unit, did you mean")
        raise self.err(tree, f"unknown name `{name}`", hint)

    def _call(self, tree) -> Typed:
        fname = str(tree.children[0])
        arg_trees = [c for c in tree.children[1:] if c is not None]
        if fname in SIGNAL_KINDS and self.signals_ok:
            return self._signal(tree, fname, arg_trees)
        if fname in SIGNAL_KINDS and fname not in FUNCTIONS + SHAPES:
            raise self.err(tree, f"signal `{fname}(...)` is only allowed in `expect` and `record`",
                           "results are not known while the design is read")
        args = [self._read(a) for a in arg_trees]
        if fname in FUNCTIONS:
            return self._function(tree, fname, args)
        if fname in SHAPES:
            return self._shape(tree, fname, args)
        if fname in SIGNAL_KINDS:
            raise self.err(tree, f"signal `{fname}(...)` is only allowed in `expect` and `record`")
        close = difflib.get_close_matches(fname, FUNCTIONS + SHAPES, n=1)
        hint = f"did you mean `{close[0]}`?" if close else f"functions: {' '.join(FUNCTIONS)}; shapes: {' '.join(SHAPES)}"
        raise self.err(tree, f"unknown function `{fname}`", hint)

    def _function(self, tree, fname, args) -> Typed:
        if fname in ("min", "max"):
            if len(args) < 2:
                raise self.err(tree, f"`{fname}` needs at least two arguments")
            for a in args[1:]:
                if a.dim != args[0].dim:
                    raise self.err(tree, f"`{fname}` needs arguments of one unit")
            weights = {a.weight for a in args}
            weight = weights.pop() if len(weights) == 1 else None
            return Typed(_fold(Func(fname, tuple(a.expr for a in args))), args[0].dim, False, weight,
                         any(a.degc for a in args))
        if len(args) != 1:
            raise self.err(tree, f"`{fname}` takes one argument, not {len(args)}")
        a = args[0]
        if fname == "sqrt":
            self._product_weight(tree, "pow", a, Typed(Const(0.5), U.NONE), None)
            return Typed(_fold(Func(fname, (a.expr,))), a.dim ** Fraction(1, 2))
        if fname == "abs":
            return Typed(_fold(Func(fname, (a.expr,))), a.dim, False, a.weight, a.degc)
        if not a.dim.dimensionless:
            raise self.err(tree, f"`{fname}` needs a plain number, not {U.unit_name(a.dim)}")
        if fname == "log" and isinstance(a.expr, Const) and a.expr.v <= 0:
            raise self.err(tree, "`log` of a number that is not positive")
        return Typed(_fold(Func(fname, (a.expr,))), U.NONE)

    def _shape(self, tree, fname, args) -> Typed:
        for a, t in zip(args, tree.children[1:]):
            if not isinstance(a.expr, Const):
                raise self.err(t, f"the arguments of `{fname}` must be constant")
        counts = {"step": 3, "ramp": 4, "pulse": 7, "sine": 3}
        if fname in counts and len(args) != counts[fname]:
            sig = {
                "step": "step(before, after, at)",
                "ramp": "ramp(before, after, start, stop)",
                "pulse": "pulse(low, high, delay, rise, fall, width, period)",
                "sine": "sine(offset, amplitude, frequency)",
            }[fname]
            raise self.err(tree, f"`{fname}` takes {counts[fname]} arguments, not {len(args)}", f"write {sig}")
        v = [a.value for a in args]
        if fname == "table":
            if len(args) < 2 or len(args) % 2:
                raise self.err(tree, "`table` takes pairs of time and value", "write table(t1, v1, t2, v2, ...)")
            times, vals = args[0::2], args[1::2]
            for t in times:
                self._need(tree, t, U.TIME, "a table time")
            for x in vals[1:]:
                if x.dim != vals[0].dim:
                    raise self.err(tree, "the values of a `table` need one unit")
            tv = v[0::2]
            if any(b < a for a, b in zip(tv, tv[1:])):
                raise self.err(tree, "the times of a `table` must not decrease")
            weights = {x.weight for x in vals}
            return Typed(Shape("table", tuple(v)), vals[0].dim, vals[0].celsius,
                         weights.pop() if len(weights) == 1 else None, any(x.degc for x in vals))
        value_idx = {"step": (0, 1), "ramp": (0, 1), "pulse": (0, 1), "sine": (0, 1)}[fname]
        d = args[value_idx[0]].dim
        if args[value_idx[1]].dim != d:
            raise self.err(tree, f"the two values of `{fname}` need one unit, not {U.unit_name(d)} and "
                           f"{U.unit_name(args[value_idx[1]].dim)}")
        if fname == "sine":
            self._need(tree, args[2], U.FREQUENCY, "the frequency")
            if args[1].celsius or affine.is_absolute(args[1]):
                raise self.err(tree, "the amplitude of `sine` is a difference: write it in K")
        else:
            for a in args[2:]:
                self._need(tree, a, U.TIME, "a time")
        if fname == "ramp" and v[3] < v[2]:
            raise self.err(tree, "a `ramp` must stop after it starts")
        if fname == "pulse" and (min(v[3:7]) < 0):
            raise self.err(tree, "the times of a `pulse` may not be negative")
        if fname == "sine":
            weight = args[0].weight
        else:
            weight = args[0].weight if args[0].weight == args[1].weight else None
        return Typed(Shape(fname, tuple(v)), d, args[0].celsius, weight, args[0].degc or args[1].degc)

    def _need(self, tree, a: Typed, dim: U.Dim, what: str):
        if a.dim != dim:
            raise self.err(tree, f"{what} needs a unit of {U.unit_name(dim)}, not {U.unit_name(a.dim)}")

    def _signal(self, tree, kind, arg_trees) -> Typed:
        names = []
        for a in arg_trees:
            if not (isinstance(a, Tree) and a.data == "name"):
                raise self.err(a if isinstance(a, Tree) else tree, f"`{kind}(...)` takes names")
            names.append(str(a.children[0]))
        text = f"{kind}({', '.join(names)})"
        dim = self.signal_dim(kind, tuple(names), tree)
        weight = (1.0 if len(names) == 1 else 0.0) if kind == "T" else None  # T(a, b) is a difference
        return Typed(SignalRef(kind, tuple(names), text), dim, False, weight)


def _measure(e: Expr) -> tuple[int, int]:
    """Depth and size of an expression tree, a shared part counted wherever it stands (as the
    later stages see it). Iterative, each shared node measured once: a chain of a thousand, or
    a tree of 2^40 written-out nodes, takes as many steps as it has distinct nodes."""
    memo: dict[int, tuple[int, int]] = {}
    stack = [(e, False)]
    while stack:
        node, ready = stack.pop()
        if id(node) in memo:
            continue
        kids = node.children()
        if not ready and kids:
            stack.append((node, True))
            stack.extend((k, False) for k in kids if id(k) not in memo)
            continue
        memo[id(node)] = (1 + max((memo[id(k)][0] for k in kids), default=0),
                          1 + sum(memo[id(k)][1] for k in kids))
    return memo[id(e)]


def _fold(e: Expr) -> Expr:
    """Constant-fold a node whose children are all constants."""
    if isinstance(e, Shape):
        return e
    kids = e.children()
    if kids and all(isinstance(k, Const) for k in kids):
        v = evaluate(e)
        try:
            return Const(float(v))
        except (TypeError, ValueError):
            return e
    return e
