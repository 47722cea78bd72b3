"""Numeric expression trees in SI: time shapes, functions and signal references, evaluated by our own code."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np


class Expr:
    """A node of an SI-valued expression. `value(env)` works on floats and numpy arrays."""

    def value(self, env: dict):
        raise NotImplementedError

    def children(self) -> tuple:
        return ()

    def walk(self):
        yield self
        for c in self.children():
            yield from c.walk()

    @property
    def uses_time(self) -> bool:
        return any(isinstance(n, (Time, Shape)) for n in self.walk()) and not isinstance(self, Const)

    @property
    def uses_vars(self) -> bool:
        return any(isinstance(n, Var) for n in self.walk())

    @property
    def uses_signals(self) -> bool:
        return any(isinstance(n, SignalRef) for n in self.walk())

    # Arithmetic builds trees (folding constants, dropping zeros and ones), so that element
    # kinds can write their equations once as `R * I + S * (Tb - Ta)`.
    def __add__(self, other):
        return plus(self, other)

    def __radd__(self, other):
        return plus(other, self)

    def __sub__(self, other):
        return minus(self, other)

    def __rsub__(self, other):
        return minus(other, self)

    def __mul__(self, other):
        return times(self, other)

    def __rmul__(self, other):
        return times(other, self)

    def __truediv__(self, other):
        return over(self, other)

    def __rtruediv__(self, other):
        return over(other, self)

    def __pow__(self, other):
        return power(self, other)

    def __neg__(self):
        return times(-1.0, self)


@dataclass(frozen=True)
class Const(Expr):
    v: float

    def value(self, env):
        return self.v


@dataclass(frozen=True)
class Time(Expr):
    def value(self, env):
        return env["time"]


@dataclass(frozen=True)
class Var(Expr):
    """A named variable bound at evaluation, such as the temperature `T` of a material."""

    name: str

    def value(self, env):
        return env[self.name]


@dataclass(frozen=True)
class Unary(Expr):
    op: str  # "neg"
    a: Expr

    def value(self, env):
        return -self.a.value(env)

    def children(self):
        return (self.a,)


@dataclass(frozen=True)
class Binary(Expr):
    op: str  # + - * / ^
    a: Expr
    b: Expr

    def value(self, env):
        x, y = self.a.value(env), self.b.value(env)
        if self.op == "+":
            return x + y
        if self.op == "-":
            return x - y
        if self.op == "*":
            return x * y
        with np.errstate(all="ignore"):  # 1/0 and 0^-1 give inf; the callers report non-finite values
            if self.op == "/":
                return np.divide(x, y)
            return np.power(np.float64(x) if not isinstance(x, np.ndarray) else x, y)

    def children(self):
        return (self.a, self.b)


_FUNCS = {
    "sqrt": np.sqrt, "exp": np.exp, "log": np.log, "abs": np.abs,
    "sin": np.sin, "cos": np.cos,
    # Made only by differentiation (netgen.model.calculus), never read from a file.
    "sign": np.sign, "above": lambda x: np.heaviside(x, 0.5),
}


@dataclass(frozen=True)
class Func(Expr):
    name: str  # sqrt exp log abs min max sin cos
    args: tuple

    def value(self, env):
        vals = [a.value(env) for a in self.args]
        if self.name == "min":
            out = vals[0]
            for v in vals[1:]:
                out = np.minimum(out, v)
            return out
        if self.name == "max":
            out = vals[0]
            for v in vals[1:]:
                out = np.maximum(out, v)
            return out
        with np.errstate(all="ignore"):
            return _FUNCS[self.name](vals[0])

    def children(self):
        return self.args


@dataclass(frozen=True)
class Shape(Expr):
    """A built-in time shape with constant SI arguments (LANGUAGE.md, time shapes)."""

    name: str  # step ramp pulse sine table
    args: tuple  # floats
    # The value at a corner is the value just after it; `left=True` in env asks for the limit from before.

    def value(self, env):
        return shape_value(self.name, self.args, env["time"], env.get("left", False))

    def corners(self, t_end: float) -> list[float]:
        return shape_corners(self.name, self.args, t_end)


@dataclass(frozen=True)
class SignalRef(Expr):
    """A result signal such as T(die) inside an expectation; `text` is its canonical spelling."""

    kind: str  # T V I Q P
    args: tuple  # names
    text: str

    def value(self, env):
        return env["signals"][self.text]


def shape_value(name: str, a: tuple, t, left: bool = False):
    t = np.asarray(t, dtype=float)
    if name == "step":
        before, after, at = a
        out = np.where(t < at if not left else t <= at, before, after)
    elif name == "ramp":
        before, after, start, stop = a
        if stop <= start:
            out = np.where(t < start if not left else t <= start, before, after)
        else:
            frac = np.clip((t - start) / (stop - start), 0.0, 1.0)
            out = before + (after - before) * frac
    elif name == "pulse":
        low, high, delay, rise, fall, width, period = a
        out = _pulse(t, low, high, delay, rise, fall, width, period, left)
    elif name == "sine":
        offset, amp, freq = a
        out = offset + amp * np.sin(2 * math.pi * freq * t)
    elif name == "table":
        ts, vs = np.array(a[0::2]), np.array(a[1::2])
        out = np.interp(t, ts, vs)
        # Equal times in a table mean a jump; np.interp takes the later value there.
        if left and len(ts) > 1:
            for i in range(1, len(ts)):
                if ts[i] == ts[i - 1]:
                    out = np.where(t == ts[i], vs[i - 1], out)
    else:  # pragma: no cover - the reader only makes the names above
        raise ValueError(name)
    return float(out) if out.ndim == 0 else out


def _pulse(t, low, high, delay, rise, fall, width, period, left):
    tau = t - delay
    if period > 0:
        tau = np.where(tau >= 0, np.mod(tau, period), tau)
    out = np.full_like(tau, low, dtype=float)
    if rise > 0:  # from the left, the rise's last instant belongs to it: the value is `high` there
        r = (tau >= 0) & (tau < rise) if not left else (tau > 0) & (tau <= rise)
        out = np.where(r, low + (high - low) * tau / rise, out)
    top_start = rise
    top_end = rise + width
    on = (tau >= top_start) & (tau < top_end) if not left else (tau > top_start) & (tau <= top_end)
    if rise == 0 and not left:
        on = (tau >= 0) & (tau < top_end)
    out = np.where(on, high, out)
    if fall > 0:
        f = (tau >= top_end) & (tau < top_end + fall)
        out = np.where(f, high + (low - high) * (tau - top_end) / fall, out)
    return out


def shape_corners(name: str, a: tuple, t_end: float) -> list[float]:
    """Times where the shape's value or slope jumps, within [0, t_end]."""
    if name == "step":
        pts = [a[2]]
    elif name == "ramp":
        pts = [a[2], a[3]]
    elif name == "table":
        pts = list(a[0::2])
    elif name == "pulse":
        low, high, delay, rise, fall, width, period = a
        offsets = [0.0, rise, rise + width, rise + width + fall]
        pts = []
        k = 0
        while True:
            base = delay + k * period
            if base > t_end or (period <= 0 and k > 0):
                break
            pts.extend(base + o for o in offsets)
            k += 1
            if len(pts) > 400000:
                break
    else:
        pts = []
    return sorted({p for p in pts if 0.0 < p < t_end})


def corners(expr: Expr, t_end: float) -> list[float]:
    """Every shape corner inside an expression."""
    out: set[float] = set()
    for n in expr.walk():
        if isinstance(n, Shape):
            out.update(n.corners(t_end))
    return sorted(out)


def lift(x) -> Expr:
    """A number as a constant; an expression as it is."""
    return x if isinstance(x, Expr) else Const(float(x))


def plus(a, b) -> Expr:
    a, b = lift(a), lift(b)
    if isinstance(a, Const) and isinstance(b, Const):
        return Const(a.v + b.v)
    if isinstance(a, Const) and a.v == 0:
        return b
    if isinstance(b, Const) and b.v == 0:
        return a
    return Binary("+", a, b)


def minus(a, b) -> Expr:
    a, b = lift(a), lift(b)
    if isinstance(b, Const):
        return plus(a, Const(-b.v))
    if isinstance(a, Const) and a.v == 0:
        return times(-1.0, b)
    return Binary("-", a, b)


def times(a, b) -> Expr:
    a, b = lift(a), lift(b)
    if isinstance(a, Const) and isinstance(b, Const):
        return Const(a.v * b.v)
    if isinstance(b, Const):
        a, b = b, a
    if isinstance(a, Const):
        if a.v == 0:
            return a
        if a.v == 1:
            return b
        if a.v == -1 and isinstance(b, Unary):
            return b.a
        if a.v == -1:
            return Unary("neg", b)
    return Binary("*", a, b)


def over(a, b) -> Expr:
    a, b = lift(a), lift(b)
    if isinstance(b, Const) and b.v == 1:
        return a
    if isinstance(a, Const) and a.v == 0:
        return a
    return Binary("/", a, b)


def power(a, b) -> Expr:
    a, b = lift(a), lift(b)
    if isinstance(b, Const) and b.v == 1:
        return a
    if isinstance(b, Const) and b.v == 0:
        return Const(1.0)
    return Binary("^", a, b)


def evaluate(expr: Expr, time=0.0, left: bool = False, signals: dict | None = None, **variables):
    """Evaluate at `time` (float or array); `left` takes limits from before at corners."""
    return expr.value({"time": time, "left": left, "signals": signals or {}, **variables})


@dataclass
class Wave:
    """A value that may vary in time: an expression in SI with its dimension name."""

    expr: Expr
    unit: str = ""
    _const: float | None = field(default=None, repr=False)

    def __post_init__(self):
        if isinstance(self.expr, Const):
            self._const = self.expr.v
        elif not self.expr.uses_time:
            self._const = float(evaluate(self.expr))

    @property
    def constant(self) -> bool:
        return self._const is not None

    def at(self, t: float, left: bool = False) -> float:
        if self._const is not None:
            return self._const
        return float(evaluate(self.expr, t, left))

    def corners(self, t_end: float) -> list[float]:
        return corners(self.expr, t_end)
