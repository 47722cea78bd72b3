"""Figures of merit of each module (COP or efficiency beside the ideal limits) and safety cautions.

The ideal limits are those of CHECKS.md 4-6 (CRC Handbook of Thermoelectrics; Ioffe), for the
module's S, R, K at the solved side temperatures.
"""
from __future__ import annotations

import math

import numpy as np

from netgen.checks.dewpoint import dew_point
from netgen.model.design import THERMAL, Design
from netgen.elements import Thermoelectric

FREEZING = 273.15
# The hot side a ΔT_max is quoted at when a module states no rating temperature: 27 °C, one of
# the hot-side temperatures catalogues quote (common practice; others use 25 °C or 50 °C).
CATALOGUE_HOT = 300.15


def dt_max_from_hot(m: Thermoelectric, hot: float) -> float:
    """Ideal ΔT_max with the hot side held at `hot` (no heat load, the best current): the cold
    side reaches T_c = (√(1 + 2·Z·T_h) − 1)/Z (the ideal cooler equations of CHECKS.md 4). Z is
    taken at the mean side temperature, found by a few fixed-point steps."""
    dt = 0.0
    for _ in range(20):
        S, R, K = (float(v) for v in m.values_at(hot - 0.5 * dt))
        Z = S * S / (R * K)
        new = hot - (math.sqrt(1 + 2 * Z * hot) - 1) / Z
        if abs(new - dt) < 1e-9:
            break
        dt = new
    return new


def module_signals(d: Design) -> list[str]:
    """The signals `figures` reads of each module (a long transient keeps only what is read)."""
    return [text for m in d.of_kind(Thermoelectric) for text in (
        f"T({m.a})", f"T({m.b})", f"I({m.name})", f"P({m.name})", f"Q({m.name}.a)", f"Q({m.name}.b)")]


def figures(d: Design, value) -> list[dict]:
    """`value(signal)` gives a solved scalar (the steady state, or the end of the transient)."""
    out = []
    for m in d.of_kind(Thermoelectric):
        Ta, Tb = value(f"T({m.a})"), value(f"T({m.b})")
        I = value(f"I({m.name})")
        P = value(f"P({m.name})")
        Qa, Qb = value(f"Q({m.name}.a)"), value(f"Q({m.name}.b)")
        S, R, K = (float(v) for v in m.values_at(0.5 * (Ta + Tb)))
        Z = S * S / (R * K)
        Tc, Th = min(Ta, Tb), max(Ta, Tb)
        Tm, dT = 0.5 * (Tc + Th), Th - Tc
        root = math.sqrt(1 + Z * Tm)
        row = {"module": m.name, "current": I, "power": P, "Z": Z, "ZT": Z * Tm,
               "cold_side": m.a if Ta <= Tb else m.b, "T_cold": Tc, "T_hot": Th}
        cold_heat = Qa if Ta <= Tb else -Qb  # heat taken from the colder side
        if abs(I) < 1e-6 * S * Tc / R:
            row["mode"] = "idle"
        elif P > 0 and cold_heat > 0:
            row["mode"] = "cooling"
            row["cop"] = cold_heat / P
            row["cooling_power"] = cold_heat
            if dT > 0:
                row["cop_max"] = (Tc / dT) * (root - Th / Tc) / (root + 1)
                row["current_best_cop"] = S * dT / (R * (root - 1))
            row["current_max"] = S * Tc / R
            row["dt_max"] = 0.5 * Z * Tc * Tc
            row["rated_hot"] = m.rated_hot if m.rated_hot is not None else CATALOGUE_HOT
            row["dt_max_rated"] = dt_max_from_hot(m, row["rated_hot"])
        elif P < 0 and dT > 0:
            hot_heat = Qa if Ta > Tb else -Qb  # heat taken from the hotter side
            row["mode"] = "generating"
            row["efficiency"] = -P / hot_heat if hot_heat > 0 else float("nan")
            row["efficiency_max"] = (dT / Th) * (root - 1) / (root + Tc / Th)
            row["power_matched"] = (S * dT) ** 2 / (4 * R)
            row["electrical_power"] = -P
        else:
            row["mode"] = "heating"
        out.append(row)
    return out


def cautions(d: Design, series) -> list[str]:
    """`series(signal)` gives every solved value of a signal (steady and transient together), or
    of a node's own temperature at least its smallest and largest (a long run keeps only those).
    With a `humidity`, every thermal node colder than the dew point is named (water condenses
    on such a surface); the freezing caution of a module's side stays."""
    notes = []
    if d.humidity is not None:
        dew = dew_point(d.humidity.relative, d.humidity.air)
        for n in d.nodes.values():
            if n.domain != THERMAL:
                continue
            T = np.asarray(series(f"T({n.name})"))
            if len(T) and float(T.min()) < dew:
                notes.append(f"`{n.name}` goes down to {T.min() - FREEZING:.1f} °C, below the dew point of "
                             f"{dew - FREEZING:.1f} °C ({100 * d.humidity.relative:g} % humidity at "
                             f"{d.humidity.air - FREEZING:.1f} °C): water condenses on it")
    for m in d.of_kind(Thermoelectric):
        for side in (m.a, m.b):
            T = np.asarray(series(f"T({side})"))
            if len(T) == 0:
                continue
            if m.hottest is not None and float(T.max()) > m.hottest:
                notes.append(f"module `{m.name}`: side `{side}` reaches {T.max() - FREEZING:.1f} °C, above its "
                             f"stated limit of {m.hottest - FREEZING:.1f} °C; it needs a better heat sink or less drive")
            if float(T.min()) < FREEZING:
                notes.append(f"module `{m.name}`: side `{side}` goes down to {T.min() - FREEZING:.1f} °C, below "
                             "freezing: frost and condensation can form on the cold side and the electronics on it")
    return list(dict.fromkeys(notes))
