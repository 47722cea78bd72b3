"""Modes: eigenvalues of the system linearised at a state, as the generalised problem −J·v = λ·C·v."""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import scipy.linalg

from ..assemble import System

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
    seen_conj = set()
    state_rows = ~sys.algebraic_rows
    for k in np.flatnonzero(finite):
        lam = w[k]
        if lam.imag < 0:
            continue
        key = (round(lam.real, 12), round(abs(lam.imag), 12))
        if key in seen_conj:
            continue
        seen_conj.add(key)
        vec = np.abs(v[:, k])
        # Shares over the nodes: temperatures, and voltages of nodes with capacitance.
        kinds = np.array(sys.kinds)
        vec = np.where((kinds == "T") | ((kinds == "V") & state_rows), vec, 0.0)
        total = vec.sum() or 1.0
        order = np.argsort(-vec)
        nodes = [(sys.names[i], float(vec[i] / total)) for i in order[:4] if vec[i] / total > 0.05]
        out.append(Mode(float(lam.real), float(abs(lam.imag)), nodes))
    out.sort(key=lambda m: (abs(m.real), m.imag))
    return out
