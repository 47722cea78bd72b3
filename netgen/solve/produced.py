"""The entropy produced and the energy stored, from waveforms: the `S(total)` and `E(total)`
signals, and the steps `audit entropy` judges.

Entropy produced over a step (second law, the balance of the whole design):

    Σ C·ln(T_end/T_start) over the masses
    − ∫ Q/T over the heat that reservoirs and heat inputs bring in at their node's temperature
    + ∫ P/T_ref over the electrical power dissipated in no thermal node (resistors without
      `heats`, switches), taken to land in the surroundings at T_ref: the temperature of the
      design's first `fixed` reservoir, or 300 K when it has none.

Electrical power that lands in a thermal node (a resistor that `heats` it, a module's Joule
heat) is already in the masses' and reservoirs' terms at that node's temperature. Each step
integral is the trapezoid rule on the waveform's values (the value just after a corner at the
start of a step, just before one at its end).
"""
from __future__ import annotations

import numpy as np

from netgen.model.design import Design

REFERENCE_T = 300.0  # K, the surroundings of a design without a reservoir
ENTROPY_TOL = 2e-3  # a negative production within this share of the entropy flows is integration error


def surroundings(d: Design) -> str | None:
    """The temperature signal of the first reservoir, where dissipation outside the network lands."""
    for e in d.elements:
        if getattr(e, "reservoir", False):
            return f"T({e.terminals[0]})"
    return None


def _lost(d: Design) -> list[str]:
    return [term.signal for e in d.elements for term in e.energy() if term.role == "lost"]


def entropy_inputs(d: Design) -> list[str]:
    """The signals the entropy produced is computed from."""
    out = [f"T({n.name})" for n in d.nodes.values() if n.capacity is not None]
    out += [s for e in d.elements for pair in e.entropy() for s in pair]
    lost = _lost(d)
    ref = surroundings(d)
    out += lost + ([ref] if lost and ref else [])
    return list(dict.fromkeys(out))


def step_integral(t, right, left):
    """Σ h/2·(value after the start + value before the end) per step."""
    h = np.diff(t)
    return 0.5 * h * (right[:-1] + left[1:])


def entropy_steps(d: Design, t, right: dict, left: dict) -> tuple[np.ndarray, np.ndarray]:
    """(entropy produced, sum of the sizes of the entropy flows) in each step, J/K."""
    produced = np.zeros(len(t) - 1)
    flows = np.zeros(len(t) - 1)
    for n in d.nodes.values():
        if n.capacity is not None:
            T = right[f"T({n.name})"]
            ds = n.capacity * np.log1p((T[1:] - T[:-1]) / T[:-1])  # log1p: small steps keep their digits
            produced += ds
            flows += np.abs(ds)
    for q, temp in (pair for e in d.elements for pair in e.entropy()):
        s_in = step_integral(t, right[q] / right[temp], left[q] / left[temp])
        produced -= s_in
        flows += np.abs(s_in)
    ref = surroundings(d)
    for p in _lost(d):
        if ref is None:
            s_out = step_integral(t, right[p], left[p]) / REFERENCE_T
        else:
            s_out = step_integral(t, right[p] / right[ref], left[p] / left[ref])
        produced += s_out
        flows += np.abs(s_out)
    return produced, flows


def noise(produced: np.ndarray, flows: np.ndarray, h: np.ndarray) -> np.ndarray:
    """Each step's production as a share of its entropy flows (at least a thousandth of the
    run's largest flow rate, so round-off near equilibrium is not judged against nothing)."""
    rate = flows / np.where(h > 0, h, 1.0)
    floor = max(1e-3 * float(rate.max()) if rate.size else 0.0, 1e-300)
    return produced / (np.maximum(rate, floor) * np.where(h > 0, h, 1.0))


def entropy_so_far(d: Design, t, values: dict) -> np.ndarray:
    """`S(total)`: the entropy produced from the first sample to each sample, J/K. A step whose
    production is negative only within integration error (`audit entropy`'s margin) adds 0."""
    t = np.atleast_1d(np.asarray(t, dtype=float))
    if len(t) < 2:
        return np.zeros(len(t))
    produced, flows = entropy_steps(d, t, values, values)
    share = noise(produced, flows, np.diff(t))
    produced = np.where((produced < 0) & (share >= -ENTROPY_TOL), 0.0, produced)
    return np.concatenate([[0.0], np.cumsum(produced)])


def stored_inputs(d: Design) -> list[str]:
    out = [f"T({n.name})" for n in d.nodes.values() if n.capacity is not None]
    out += [term.signal for e in d.elements for term in e.energy() if term.role == "stored"]
    return list(dict.fromkeys(out))


def energy_so_far(d: Design, values: dict) -> np.ndarray:
    """`E(total)`: the energy stored since the first sample, J: C·ΔT over the masses and
    ½·C·Δ(v²), ½·L·Δ(i²) over capacitors and coils."""
    out = 0.0
    for n in d.nodes.values():
        if n.capacity is not None:
            T = values[f"T({n.name})"]
            out = out + n.capacity * (T - T[0])
    for e in d.elements:
        for term in e.energy():
            if term.role == "stored":
                v = values[term.signal]
                out = out + 0.5 * term.k * (v * v - v[0] * v[0])
    return out
