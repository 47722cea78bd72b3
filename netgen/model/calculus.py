"""Expression trees as equations: substitution, exact derivatives, and compiled numpy functions.

Element kinds write their nonlinear equations once, as expression trees of named variables
(`Ta`, `Tb`, `I`, ...). The solver differentiates them here for the Jacobian and runs them as
compiled numpy functions; the netlist writer prints the same trees as behavioural sources.
"""
from __future__ import annotations

import functools
import math

import numpy as np

from netgen.model.expr import Binary, Const, Expr, Func, Time, Unary, Var, lift, minus, over, plus, power, times


def substitute(e: Expr, values: dict[str, Expr]) -> Expr:
    """`e` with each variable named in `values` replaced by its expression."""
    if isinstance(e, Var):
        return values.get(e.name, e)
    if isinstance(e, Unary):
        return -substitute(e.a, values)
    if isinstance(e, Binary):
        a, b = substitute(e.a, values), substitute(e.b, values)
        return {"+": plus, "-": minus, "*": times, "/": over, "^": power}[e.op](a, b)
    if isinstance(e, Func):
        out = Func(e.name, tuple(substitute(x, values) for x in e.args))
        if all(isinstance(x, Const) for x in out.args):
            return Const(float(out.value({})))
        return out
    return e


def split_scale(e: Expr) -> tuple[float, Expr]:
    """`e` as c·rest, the constant factors of its top products and quotients taken out, so that
    links of one law and different sizes (a plate's cells, its half-cell edges) share `rest`."""
    if isinstance(e, Unary):
        c, rest = split_scale(e.a)
        return -c, rest
    if isinstance(e, Binary) and e.op in ("*", "/"):
        ca, ra = split_scale(e.a)
        if isinstance(e.b, Const) and e.b.v != 0:
            return (ca * e.b.v if e.op == "*" else ca / e.b.v), ra
        cb, rb = split_scale(e.b)
        if cb == 0:
            return 1.0, e
        if e.op == "*":
            return ca * cb, times(ra, rb)
        return ca / cb, over(ra, rb)
    if isinstance(e, Const):
        return e.v, Const(1.0)
    return 1.0, e


def derivative(e: Expr, var: str) -> Expr:
    """The exact derivative of `e` with respect to the variable `var` (chain rule, simplified)."""
    d = lambda x: derivative(x, var)
    if isinstance(e, Var):
        return Const(1.0 if e.name == var else 0.0)
    if not _depends(e, var):
        return Const(0.0)
    if isinstance(e, Unary):
        return -d(e.a)
    if isinstance(e, Binary):
        a, b = e.a, e.b
        if e.op == "+":
            return d(a) + d(b)
        if e.op == "-":
            return d(a) - d(b)
        if e.op == "*":
            return d(a) * b + a * d(b)
        if e.op == "/":
            return d(a) / b - a * d(b) / (b * b)
        if not _depends(b, var):  # a^c: c·a^(c−1)·a'
            return b * power(a, b - 1.0) * d(a)
        return e * (d(b) * Func("log", (a,)) + b * d(a) / a)  # a^b = exp(b·ln a)
    if isinstance(e, Func):
        if e.name in ("min", "max"):
            first, rest = e.args[0], e.args[1:]
            other = Func(e.name, rest) if len(rest) > 1 else rest[0]
            # The derivative of the side that is taken (half of each where they are equal).
            wins = Func("above", (other - first if e.name == "min" else first - other,))
            return wins * d(first) + (1.0 - wins) * d(other)
        x = e.args[0]
        inner = d(x)
        outer = {
            "sqrt": lambda: 0.5 / e,
            "exp": lambda: e,
            "log": lambda: 1.0 / x,
            "abs": lambda: Func("sign", (x,)),
            "sin": lambda: Func("cos", (x,)),
            "cos": lambda: -Func("sin", (x,)),
            "sign": lambda: Const(0.0),
            "above": lambda: Const(0.0),
        }[e.name]()
        return outer * inner
    raise TypeError(f"{type(e).__name__} cannot be differentiated")  # shapes of time take no variables


def _depends(e: Expr, var: str) -> bool:
    return any(isinstance(n, Var) and n.name == var for n in e.walk())


_NUMPY = {"sqrt": "np.sqrt", "exp": "np.exp", "log": "np.log", "abs": "np.abs", "sin": "np.sin",
          "cos": "np.cos", "sign": "np.sign", "min": "np.minimum", "max": "np.maximum"}


def _source(e: Expr) -> str:
    if isinstance(e, Const):
        return repr(e.v) if math.isfinite(e.v) else f"float({str(e.v)!r})"
    if isinstance(e, Var):
        return f"v[{e.name!r}]"
    if isinstance(e, Time):
        return "v['time']"
    if isinstance(e, Unary):
        return f"(-{_source(e.a)})"
    if isinstance(e, Binary):
        a, b = _source(e.a), _source(e.b)
        if e.op == "^":
            return f"np.power({a}, {b})"
        return f"({a} {e.op} {b})"
    if isinstance(e, Func):
        args = [_source(x) for x in e.args]
        if e.name == "above":
            return f"np.heaviside({args[0]}, 0.5)"
        if e.name in ("min", "max"):
            return functools.reduce(lambda x, y: f"{_NUMPY[e.name]}({x}, {y})", args)
        return f"{_NUMPY[e.name]}({args[0]})"
    raise TypeError(f"{type(e).__name__} cannot be compiled")


@functools.lru_cache(maxsize=4096)
def compiled(e: Expr):
    """`e` as a Python function of a dict of numpy arrays (one per variable), about as fast as
    the same formula written by hand. Results of equal trees are shared."""
    code = compile(f"lambda v: {_source(e)}", "<netgen equation>", "eval")
    return eval(code, {"np": np, "float": float})  # noqa: S307 - our own tree, printed above


def evaluate_with(e: Expr, values: dict) -> np.ndarray:
    """`e` at the given variables (floats or arrays), with numpy's warnings kept quiet: callers
    check the results for values that are not finite."""
    with np.errstate(all="ignore"):
        return compiled(lift(e))(values)
