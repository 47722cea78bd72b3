"""Energy (first law) and entropy (second law) audits of a transient, from its waveforms alone.

Both audits read only named waveforms (signal → array on the time grid), so a test can feed
them a doctored waveform and see them fail. Each waveform may come in two versions at the
grid points: the value just after (`right`) and just before (`left`) a source corner; step
integrals use the right value at the start of a step and the left value at its end.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from netgen.model.design import Design

DEFAULT_ENERGY_TOL = 0.005  # LANGUAGE.md: `audit energy` default 0.5 %
ENTROPY_TOL = 2e-3  # a negative production within this share of the entropy flows is integration error


@dataclass
class AuditResult:
    kind: str
    passed: bool
    measured: float  # energy: relative imbalance; entropy: worst normalised production rate
    limit: float
    detail: str
    worst_time: float | None = None


def _terms(d: Design, role: str) -> list:
    return [term for e in d.elements for term in e.energy() if term.role == role]


def energy_signals(d: Design) -> dict[str, list[str]]:
    """The signals each energy term needs (each element kind names its own terms)."""
    return {role: [term.signal for term in _terms(d, role)] for role in ("supplied", "lost", "stored")}


def entropy_signals(d: Design) -> list[str]:
    out = [f"T({n.name})" for n in d.nodes.values() if n.capacity is not None]
    out += [s for e in d.elements for pair in e.entropy() for s in pair]
    return list(dict.fromkeys(out))


def _step_integral(t, right, left):
    """Σ h/2·(value after the start + value before the end) per step."""
    h = np.diff(t)
    return 0.5 * h * (right[:-1] + left[1:])


def energy_audit(d: Design, t: np.ndarray, right: dict, left: dict, tol: float | None = None) -> AuditResult:
    """First law: energy supplied = stored + dissipated, over the whole transient."""
    tol = DEFAULT_ENERGY_TOL if tol is None else tol
    supplied_terms = {term.signal: term.sign * float(np.sum(_step_integral(t, right[term.signal], left[term.signal])))
                      for term in _terms(d, "supplied")}
    lost_terms = {term.signal: float(np.sum(_step_integral(t, right[term.signal], left[term.signal])))
                  for term in _terms(d, "lost")}
    stored_terms = {}
    for n in d.nodes.values():
        if n.capacity is not None:
            T = right[f"T({n.name})"]
            stored_terms[f"T({n.name})"] = n.capacity * float(T[-1] - T[0])
    for term in _terms(d, "stored"):
        v = right[term.signal]
        stored_terms[term.signal] = 0.5 * term.k * float(v[-1] ** 2 - v[0] ** 2)
    supplied = sum(supplied_terms.values())
    stored = sum(stored_terms.values())
    lost = sum(lost_terms.values())
    scale = sum(abs(v) for v in (*supplied_terms.values(), *stored_terms.values(), *lost_terms.values()))
    imbalance = supplied - stored - lost
    rel = abs(imbalance) / scale if scale > 0 else 0.0
    detail = (f"supplied {supplied:.6g} J, stored {stored:.6g} J, dissipated {lost:.6g} J, "
              f"imbalance {imbalance:.3g} J")
    return AuditResult("energy", rel <= tol, rel, tol, detail)


def entropy_audit(d: Design, t: np.ndarray, right: dict, left: dict) -> AuditResult:
    """Second law: the entropy the thermal network produces, step by step, is never negative.

    Production over a step = Σ C·ln(T_end/T_start) over masses − ∫ Q/T over the heat that
    reservoirs and heat inputs bring in. Electrical dissipation outside the thermal network
    produces entropy too (always positive) and is left out.
    """
    if len(t) < 2:
        return AuditResult("entropy", True, 0.0, -ENTROPY_TOL, "no steps")
    h = np.diff(t)
    produced = np.zeros(len(h))
    flows = np.zeros(len(h))
    for n in d.nodes.values():
        if n.capacity is not None:
            T = right[f"T({n.name})"]
            ds = n.capacity * np.log(T[1:] / T[:-1])
            produced += ds
            flows += np.abs(ds)
    for q, temp in (pair for e in d.elements for pair in e.entropy()):
        s_in = _step_integral(t, right[q] / right[temp], left[q] / left[temp])
        produced -= s_in
        flows += np.abs(s_in)
    # A corner stored twice is a step of zero length: nothing is produced across it.
    keep = h > 0
    produced, flows, h, starts = produced[keep], flows[keep], h[keep], t[:-1][keep]
    ends = t[1:][keep]
    rate = produced / h
    flow_rate = flows / h
    # Near equilibrium both the production and the flows vanish: judge a step against at least
    # a thousandth of the run's largest entropy flow, so round-off there is not a violation.
    norm = rate / np.maximum(flow_rate, max(1e-3 * float(flow_rate.max()), 1e-300))
    k = int(np.argmin(norm))
    worst = float(norm[k])
    total = float(np.sum(produced))
    ok = worst >= -ENTROPY_TOL and total >= 0
    detail = (f"total production {total:.6g} J/K; lowest rate {rate[k]:.3g} W/K "
              f"({worst:.2e} of the entropy flows) at t = {starts[k]:.6g} s .. {ends[k]:.6g} s")
    return AuditResult("entropy", ok, worst, -ENTROPY_TOL, detail, worst_time=float(starts[k]))


def needed_signals(d: Design) -> list[str]:
    sig = energy_signals(d)
    out = sig["supplied"] + sig["lost"] + entropy_signals(d)
    out += [f"T({n.name})" for n in d.nodes.values() if n.capacity is not None]
    return list(dict.fromkeys(out + sig["stored"]))
