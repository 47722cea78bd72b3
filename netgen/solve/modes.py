"""Modes: eigenvalues of the system linearised at a state, as the generalised problem −J·v = λ·C·v."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from netgen.solve.assembly import System

DENSE_LIMIT = 3000  # unknowns; beyond this the dense eigenproblem is too costly here


@dataclass
class Mode:
    real: float  # 1/s
    imag: float  # 1/s, >= 0 (one entry per conjugate pair)
    nodes: list[tuple[str, float]] = field(default_factory=list)  # (unknown, share), largest first

    @property
    def decay_time(self) -> float:
        return -1.0 / self.real if self.real < 0 else math.inf

    @property
    def frequency(self) -> float:
        return self.imag / (2 * math.pi)

    @property
    def damping(self) -> float:
        mag = math.hypot(self.real, self.imag)
        return -self.real / mag if mag > 0 else 1.0

    @property
    def oscillatory(self) -> bool:
        return self.imag > 1e-12 * max(1.0, abs(self.real))

    def as_dict(self) -> dict:
        return {"real": self.real, "imag": self.imag, "decay_time": self.decay_time,
                "frequency": self.frequency, "damping": self.damping,
                "nodes": [n for n, _ in self.nodes]}


def modes(sys: System, x: np.ndarray, t: float = 0.0) -> list[Mode]:
    """Finite eigenvalues of the DAE linearised at x; algebraic (infinite) ones removed.

    Sorted slowest first. Raises ValueError for systems too large for the dense method.
    """
    n = sys.n
    if n == 0:
        return []
    if n > DENSE_LIMIT:
        raise ValueError(f"{n} unknowns is more than the dense eigenvalue method handles here ({DENSE_LIMIT})")
    J = sys.J(x, sys.switch_state(t)).toarray()
    C = sys.C.toarray()
    w, v = scipy.linalg.eig(-J, C)
    scale = max(1.0, float(np.max(np.abs(J))) / max(float(np.max(np.abs(C))), 1e-300))
    finite = np.isfinite(w) & (np.abs(w) < 1e10 * scale)
    out = []
    state_rows = ~sys.algebraic_rows
    for k in np.flatnonzero(finite):
        lam = w[k]
        # One entry per conjugate pair (the member with positive imaginary part); a real
        # eigenvalue, even with round-off in its imaginary part, and a repeated one (two equal
        # masses on equal links) each stay: every eigenvalue is one row or half of a pair's row.
        if lam.imag < 0 and abs(lam.imag) > 1e-12 * max(1.0, abs(lam.real)):
            continue
        vec = np.abs(v[:, k])
        # Shares over the nodes: temperatures, and voltages of nodes with capacitance.
        kinds = np.array(sys.kinds)
        vec = np.where((kinds == "T") | ((kinds == "V") & state_rows), vec, 0.0)
        total = vec.sum() or 1.0
        order = np.argsort(-vec)
        nodes = [(sys.names[i], float(vec[i] / total)) for i in order[:4] if vec[i] / total > 0.05]
        imag = float(lam.imag) if lam.imag > 1e-12 * max(1.0, abs(lam.real)) else 0.0
        out.append(Mode(float(lam.real), imag, nodes))
    out.sort(key=lambda m: (abs(m.real), m.imag))
    return out


@dataclass
class Forecast:
    """The linear estimate of one temperature's swing past its final value."""

    unknown: str
    final: float
    crossing_time: float  # first time the value passes its final value, s
    overshoot: float  # largest excursion beyond the final value after that crossing (same unit)
    overshoot_time: float
    frequency: float
    damping: float


def forecast(sys: System, x0: np.ndarray, x_final: np.ndarray, span: float) -> list[Forecast]:
    """Linear response from x0 towards x_final, linearised at x_final (where it rings).

    δx(t) = Σ v_k·e^(λ_k t)·(w_kᴴ C δx0)/(w_kᴴ C v_k) over the finite modes, with right and left
    eigenvectors v_k, w_k of −J·v = λ·C·v. Returns the temperatures that cross their final value
    while an oscillatory mode is present.
    """
    n = sys.n
    if n == 0 or n > DENSE_LIMIT:
        return []
    J = sys.J(x_final, sys.switch_state(span)).toarray()
    C = sys.C.toarray()
    w, vl, vr = scipy.linalg.eig(-J, C, left=True, right=True)
    scale = max(1.0, float(np.max(np.abs(J))) / max(float(np.max(np.abs(C))), 1e-300))
    finite = np.isfinite(w) & (np.abs(w) < 1e10 * scale)
    osc = finite & (np.abs(w.imag) > 1e-12 * np.maximum(1.0, np.abs(w.real)))
    if not osc.any():
        return []
    dx0 = x0 - x_final
    coef = np.zeros(len(w), dtype=complex)
    for k in np.flatnonzero(finite):
        den = vl[:, k].conj() @ C @ vr[:, k]
        if abs(den) > 1e-300:
            coef[k] = (vl[:, k].conj() @ C @ dx0) / den
    t = np.linspace(0.0, span, 4001)
    ks = np.flatnonzero(finite)
    lam = w[ks]
    ringing = min((k for k in np.flatnonzero(osc)), key=lambda k: -w[k].real / abs(w[k]))
    zeta = float(-w[ringing].real / abs(w[ringing]))
    freq = float(abs(w[ringing].imag) / (2 * math.pi))
    out = []
    for i, kind in enumerate(sys.kinds):
        if kind != "T" or abs(dx0[i]) < 1e-9:
            continue
        if abs(vr[i, ringing]) < 1e-6 * np.max(np.abs(vr[:, ringing])):
            continue
        dx = np.real((vr[i, ks] * coef[ks])[None, :] * np.exp(np.outer(t, lam))).sum(axis=1)
        sign0 = np.sign(dx0[i])
        crossed = np.flatnonzero(np.sign(dx) == -sign0)
        if len(crossed) == 0:
            continue
        k0 = crossed[0]
        # Interpolate the crossing between grid points.
        tc = t[k0 - 1] + (t[k0] - t[k0 - 1]) * dx[k0 - 1] / (dx[k0 - 1] - dx[k0]) if k0 > 0 else 0.0
        after = dx[k0:] * -sign0
        j = int(np.argmax(after))
        out.append(Forecast(sys.names[i], float(x_final[i]), float(tc), float(after[j]),
                            float(t[k0 + j]), freq, zeta))
    return out
