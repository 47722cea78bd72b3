"""Frequency response: the small-signal transfer function from one input (a source, a heat input
or a reservoir's temperature) to one signal, of the system linearised at its steady state.

With C·x' + F(x) = b(t) linearised at x0 (J = ∂F/∂x there) and the input entering b along the
vector B (b = b0 + B·u), a sinusoid u = Re(û·e^{jωt}) gives the state x0 + Re(x̂·e^{jωt}) with

    (jω·C + J)·x̂ = B·û

and a signal s(x, x') answers with ŝ = ∇s·x̂ + ∇_{x'}s·(jω·x̂). The gradient of a signal is
taken by central differences along the real and the imaginary part of x̂ (exact for a signal
that is linear in the state, second-order accurate otherwise), through the same signal
functions every other result uses, so `Q(link)`, `I(resistor)` and `P(...)` need no formulas
of their own here.
"""
from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass

import numpy as np
import scipy.sparse.linalg as spla

from netgen.elements.base import Stamp
from netgen.model.expr import Const, Wave
from netgen.model.signals import parse
from netgen.solve.assembly import System
from netgen.solve.modes import DENSE_LIMIT, modes

# The inputs a response may be taken from: the kind's class name → the attribute of its value.
INPUTS = {"CurrentSource": "value", "VoltageSource": "value", "Heat": "power", "Fixed": "temperature"}
DEFAULT_POINTS = 41
STEP = 1e-6  # of the central differences, relative to the state's scale


@dataclass
class Response:
    """One transfer function over frequency: `values` complex, in the signal's unit per the input's."""

    signal: str
    input: str
    unit: str  # of the ratio, e.g. K/W
    frequency: np.ndarray  # Hz
    values: np.ndarray  # complex

    @property
    def label(self) -> str:
        return f"{self.signal} / {self.input}"

    @property
    def magnitude(self) -> np.ndarray:
        return np.abs(self.values)

    @property
    def phase(self) -> np.ndarray:
        """Degrees, unwrapped along frequency from the principal value at the lowest one."""
        return np.degrees(np.unwrap(np.angle(self.values)))


def input_vector(sys: System, element, design) -> np.ndarray:
    """B: how b moves per unit of the element's value. Its kind stamps a copy of it once with the
    value 1 and once with 0; a source driven by a controller moves the controller's bias."""
    def b_of(value: float) -> np.ndarray:
        st = Stamp(sys.n, sys.node_index, sys.branch_index)
        target = element
        ctl = getattr(element, "controller", None)
        if ctl is not None:
            ctl = next(c for c in design.elements if c.name == ctl)
            target = ctl
            e = dataclasses.replace(ctl, bias=Wave(Const(value)))
        else:
            e = dataclasses.replace(element, **{INPUTS[type(element).__name__]: Wave(Const(value))})
        type(target).stamp([e], st)
        return st.b_const[: sys.n].copy()

    return b_of(1.0) - b_of(0.0)


def states(sys: System, x0: np.ndarray, B: np.ndarray, omega: np.ndarray, t: float = 0.0) -> np.ndarray:
    """x̂ per angular frequency (k × n complex): (jω·C + J(x0))·x̂ = B."""
    J = sys.J(x0, sys.switch_state(t)).tocsc().astype(complex)
    C = sys.C.tocsc().astype(complex)
    out = np.empty((len(omega), sys.n), dtype=complex)
    for k, w in enumerate(omega):
        A = (1j * w * C + J).tocsc()
        out[k] = spla.splu(A).solve(B.astype(complex)) if sys.n else out[k]
    return out


def signal_response(sig, text: str, x0: np.ndarray, dx: np.ndarray, omega: np.ndarray) -> np.ndarray:
    """ŝ of the signal `text` for state responses dx (k × n complex) at angular frequencies
    omega: central differences of the signal functions along Re and Im of dx (and of jω·dx
    for the rates of change)."""
    scale = max(1.0, float(np.max(np.abs(x0)))) if len(x0) else 1.0
    out = np.zeros(len(omega), dtype=complex)
    rate = 1j * omega[:, None] * dx
    for part, unit in ((np.real, 1.0), (np.imag, 1j)):
        d, dd = part(dx), part(rate)
        size = np.maximum(np.max(np.abs(np.concatenate([d, dd], axis=1)), axis=1, initial=0.0), 1e-300)
        h = (STEP * scale / size)[:, None]
        X0 = np.broadcast_to(x0, d.shape)
        plus = sig(text, X0 + h * d, h * dd, np.zeros(len(omega)))
        minus = sig(text, X0 - h * d, -h * dd, np.zeros(len(omega)))
        out = out + unit * (np.asarray(plus) - np.asarray(minus)) / (2 * h[:, 0])
    return out


def default_band(sys: System, x0: np.ndarray) -> tuple[float, float]:
    """Whole decades from a tenth of the slowest mode's rate to ten times the fastest's, in Hz
    (1 mHz to 1 kHz when the system has no finite mode)."""
    rates = []
    if 0 < sys.n <= DENSE_LIMIT:
        rates = [math.hypot(m.real, m.imag) / (2 * math.pi) for m in modes(sys, x0)]
        rates = [r for r in rates if r > 0]
    if not rates:
        return 1e-3, 1e3
    return 10.0 ** math.floor(math.log10(min(rates) / 10)), 10.0 ** math.ceil(math.log10(max(rates) * 10))


def frequencies(f1: float, f2: float, points: int) -> np.ndarray:
    return np.geomspace(f1, f2, points)


def unit_of(design, text: str, element) -> str:
    """The ratio's unit: the signal's per the input's (`K/W`, the thermal impedance)."""
    s = parse(text)
    top = s.unit
    if s.kind == "U":
        base = s.args[0].rsplit(".", 1)[0] if s.args[0] not in {e.name for e in design.elements} else s.args[0]
        top = next((e.unit for e in design.elements if e.name == base), "")
    bottom = getattr(element, INPUTS[type(element).__name__]).unit
    return f"{top}/{bottom}"


def response(design, sys: System, sig, x0: np.ndarray, asked) -> Response:
    """The `response` statement `asked`, solved at the steady state x0."""
    element = next(e for e in design.elements if e.name == asked.input)
    if asked.f_from is not None:
        f1, f2 = asked.f_from, asked.f_to
    else:
        f1, f2 = default_band(sys, x0)
    f = frequencies(f1, f2, asked.points or DEFAULT_POINTS)
    omega = 2 * np.pi * f
    dx = states(sys, x0, input_vector(sys, element, design), omega)
    text = asked.signal.text
    return Response(text, asked.input, unit_of(design, text, element), f,
                    signal_response(sig, text, x0, dx, omega))
