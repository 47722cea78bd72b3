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
from netgen.solve import produced

DEFAULT_ENERGY_TOL = 0.005  # LANGUAGE.md: `audit energy` default 0.5 %
TEMPERATURE_FLOOR = 1e-3  # K, the transient's absolute error floor for temperatures (solve/transient.py ATOL)
ENTROPY_TOL = produced.ENTROPY_TOL  # a negative production within this share of the entropy flows is integration error


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
    return produced.entropy_inputs(d)


def inflow(node: str) -> str:
    """The waveform name of the heat flowing into a mass (C·dT/dt, from the solver's rates)."""
    return f"heat into {node}"


def energy_audit(d: Design, t: np.ndarray, right: dict, left: dict, tol: float | None = None) -> AuditResult:
    """First law: energy supplied = stored + dissipated, over the whole transient, judged against
    the sum of all terms and against each mass's own throughput (∫|C·dT/dt|, the heat into it
    from the system's equations), so an error in one small body cannot hide among large flows."""
    tol = DEFAULT_ENERGY_TOL if tol is None else tol
    step = produced.step_integral
    supplied_terms = {term.signal: term.sign * float(np.sum(step(t, right[term.signal], left[term.signal])))
                      for term in _terms(d, "supplied")}
    lost_terms = {term.signal: float(np.sum(step(t, right[term.signal], left[term.signal])))
                  for term in _terms(d, "lost")}
    stored_terms = {}
    throughs: dict[str, float] = {}
    for n in d.nodes.values():
        if n.capacity is not None:
            T = right[f"T({n.name})"]
            change = n.capacity * float(T[-1] - T[0])
            stored_terms[f"T({n.name})"] = change
            key = inflow(n.name)
            if key in right:
                q = step(t, right[key], left[key])
                # A mass that barely moves is judged against at least the solver's temperature floor.
                through = max(float(np.sum(np.abs(q))), abs(change), n.capacity * TEMPERATURE_FLOOR)
                throughs[n.name] = (through, abs(change - float(np.sum(q))))
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
              f"imbalance {imbalance:.3g} J, {100 * rel:.3g} % of all terms")
    # A mass is blamed when both its own balance and the whole run's imbalance are large
    # against the heat through it: a wrong energy in one body shows in both, while the solver's
    # error in a small, fast body shows only in its own and the quadrature of large supplies
    # only in the whole run's.
    worst_mass, worst_rel = None, 0.0
    for name, (through, own) in throughs.items():
        share = min(own, abs(imbalance)) / through
        if worst_mass is None or share > worst_rel:
            worst_mass, worst_rel = name, share
    if worst_mass is not None:
        detail += f"; {100 * worst_rel:.3g} % of the heat through mass `{worst_mass}`"
    measured = max(rel, worst_rel)
    return AuditResult("energy", measured <= tol, measured, tol, detail)


def entropy_audit(d: Design, t: np.ndarray, right: dict, left: dict) -> AuditResult:
    """Second law: the entropy the design produces (produced.py: the masses, the heat reservoirs
    and heat inputs bring in, and the electrical dissipation that lands in no thermal node),
    step by step, is never negative."""
    if len(t) < 2:
        return AuditResult("entropy", True, 0.0, -ENTROPY_TOL, "no steps")
    h = np.diff(t)
    made, flows = produced.entropy_steps(d, t, right, left)
    # A corner stored twice is a step of zero length: nothing is produced across it.
    keep = h > 0
    made, flows, h, starts = made[keep], flows[keep], h[keep], t[:-1][keep]
    ends = t[1:][keep]
    rate = made / h
    # Near equilibrium both the production and the flows vanish: judge a step against at least
    # a thousandth of the run's largest entropy flow, so round-off there is not a violation.
    norm = produced.noise(made, flows, h)
    k = int(np.argmin(norm))
    worst = float(norm[k])
    total = float(np.sum(made))
    ok = worst >= -ENTROPY_TOL and total >= 0
    detail = (f"total production {total:.6g} J/K; lowest rate {rate[k]:.3g} W/K "
              f"({worst:.2e} of the entropy flows) at t = {starts[k]:.6g} s .. {ends[k]:.6g} s")
    return AuditResult("entropy", ok, worst, -ENTROPY_TOL, detail, worst_time=float(starts[k]))


def needed_signals(d: Design) -> list[str]:
    sig = energy_signals(d)
    out = sig["supplied"] + sig["lost"] + entropy_signals(d)
    out += [f"T({n.name})" for n in d.nodes.values() if n.capacity is not None]
    return list(dict.fromkeys(out + sig["stored"]))
