"""`diode NAME A B [saturation IS] [emission N] [series R] [at NODE] [heats NODE]`: a pn junction
from anode A to cathode B, Shockley's exponential law with a series resistance.

    I = IS·(exp(Vj / (N·V_T)) − 1) + GMIN·Vj,    V(A) − V(B) = Vj + R·I,    V_T = k·T/q

T is 27 °C (300.15 K, the circuit simulators' nominal temperature) or, with `at NODE`, the
temperature of that thermal node; k and q are the exact SI (CODATA 2018) values. GMIN, 1e-12 S
across the junction, is what circuit simulators put there (SPICE's default `gmin`), so that a
reverse-biased junction still conducts a little and the matrix stays regular.

The unknown of each diode is its junction voltage Vj (`V(NAME)` in messages): its equations are
then explicit in it, and Newton's updates of it can be limited the way circuit simulators do
(Nagel, "SPICE2: A computer program to simulate semiconductor circuits", UC Berkeley ERL-M520,
1975: the junction-voltage limiting of the diode and transistor models): above the critical
voltage an update that would raise Vj by more than two thermal voltages is replaced by the
logarithm of the exponential's step, so exp() follows the current instead of overflowing.
`heats NODE` sends its dissipation V(A, B)·I (junction and series resistance) to a thermal node.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from netgen.elements.base import EnergyTerm, Equations, TwoTerminal, electrical_power, ix
from netgen.model import units as U
from netgen.model.calculus import evaluate_with
from netgen.model.design import THERMAL
from netgen.model.expr import Func, Var

BOLTZMANN = 1.380649e-23  # J/K, exact (SI 2019, CODATA 2018)
CHARGE = 1.602176634e-19  # C, exact (SI 2019, CODATA 2018)
K_OVER_Q = BOLTZMANN / CHARGE  # V/K
NOMINAL = 300.15  # K: 27 °C, circuit simulators' nominal temperature (SPICE's TNOM)
GMIN = 1e-12  # S across the junction, SPICE's default gmin
SATURATION, EMISSION = 1e-14, 1.0  # defaults, as SPICE's D model (IS = 1e-14 A, N = 1)

# The equations, once. Tt is the `at` node's temperature (the reference 0 without one) and T0
# the fixed temperature (0 with `at`), so one set of trees serves both.
_VJ = Var("Vj")
_VT = K_OVER_Q * (Var("Tt") + Var("T0"))
CURRENT = Var("Is") * (Func("exp", (_VJ / (Var("N") * _VT),)) - 1.0) + GMIN * _VJ
BRANCH = Var("Va") - Var("Vb") - _VJ - Var("Rs") * CURRENT  # = 0: the series resistance's drop
HEAT = (Var("Va") - Var("Vb")) * CURRENT


def pnjlim(vnew: np.ndarray, vold: np.ndarray, vt: np.ndarray, vcrit: np.ndarray):
    """Junction-voltage limiting (Nagel 1975, SPICE2): (limited vnew, where it was limited).

    Above vcrit = vt·ln(vt/(√2·IS)), where the junction's current starts to matter, a step up by
    more than 2·vt is shortened to vt·ln(1 + Δ/vt), so that the new exponential is at most the
    old one plus the linear step; from a junction that was off (vold ≤ 0), to vt·ln(vnew/vt)."""
    big = (vnew > vcrit) & (np.abs(vnew - vold) > 2.0 * vt)
    if not np.any(big):
        return vnew, big
    with np.errstate(all="ignore"):
        arg = 1.0 + (vnew - vold) / vt
        from_on = np.where(arg > 0, vold + vt * np.log(np.maximum(arg, 1e-300)), vcrit)
        from_off = vt * np.log(np.maximum(vnew / vt, 1e-300))
    return np.where(big, np.where(vold > 0, from_on, from_off), vnew), big


class JunctionLimit:
    """Newton's hook for a batch of diodes: limits the junction unknowns of a new iterate."""

    def __init__(self, rows, temps, fixed, emission, saturation):
        self.rows = ix(rows)
        self.temps = ix(temps)
        self.fixed = np.asarray(fixed, float)
        self.emission = np.asarray(emission, float)
        self.saturation = np.asarray(saturation, float)

    def apply(self, x_old: np.ndarray, x_new: np.ndarray) -> tuple[np.ndarray, bool]:
        """(x_new with its junction voltages limited, whether any was)."""
        n = len(x_old)
        T = self.fixed + np.where(self.temps < n, x_old[np.minimum(self.temps, n - 1)], 0.0)
        vt = self.emission * K_OVER_Q * np.maximum(T, 1e-3)
        vcrit = vt * np.log(vt / (math.sqrt(2.0) * self.saturation))
        v, hit = pnjlim(x_new[self.rows], x_old[self.rows], vt, vcrit)
        if not np.any(hit):
            return x_new, False
        out = x_new.copy()
        out[self.rows] = v
        return out, True


@dataclass
class Diode(TwoTerminal):
    saturation: float = SATURATION
    emission: float = EMISSION
    series: float = 0.0
    at: str | None = None
    heats: str | None = None

    statement = "diode"
    noun = "diodes"
    branch = "V"  # its junction voltage
    signals = ("I", "P")
    recorded = "I"
    attributes = ("saturation", "emission", "series", "at", "heats")

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        at = r.attrs(t.children[3], Diode.attributes, "diode")
        val = lambda key, dim, what, default: (r.const(at[key].children[0], dim, what, positive=True)
                                               if key in at else default)
        r.design.elements.append(Diode(
            name, loc, a=a, b=b,
            saturation=val("saturation", U.CURRENT, "a saturation current", SATURATION),
            emission=val("emission", U.NONE, "an emission coefficient", EMISSION),
            series=(r.const(at["series"].children[0], U.RESISTANCE, "a series resistance", nonneg=True)
                    if "series" in at else 0.0),
            at=r.node(at["at"].children[0], THERMAL) if "at" in at else None,
            heats=r.node(at["heats"].children[0], THERMAL) if "heats" in at else None))

    @classmethod
    def stamp(cls, batch, st) -> None:
        n = st.n
        a, b, k = st.nodes(batch, "a"), st.nodes(batch, "b"), st.branches(batch)
        t = ix([st.node_index[e.at] if e.at else n for e in batch])
        h = ix([st.node_index[e.heats] if e.heats else n for e in batch])
        params = cls._params(batch)
        st.equations(Equations([(a, CURRENT), (b, -CURRENT), (k, BRANCH), (h, -HEAT)],
                               {"Va": a, "Vb": b, "Vj": k, "Tt": t}, params))
        st.limits.append(JunctionLimit(k, t, params["T0"], params["N"], params["Is"]))

    @staticmethod
    def _params(batch) -> dict[str, list[float]]:
        return {"Is": [e.saturation for e in batch], "N": [e.emission for e in batch],
                "Rs": [e.series for e in batch], "T0": [0.0 if e.at else NOMINAL for e in batch]}

    def _values(self, p) -> dict:
        return {"Vj": p.branch(self.name), "Tt": p.node(self.at) if self.at else 0.0,
                "T0": 0.0 if self.at else NOMINAL, "Is": self.saturation, "N": self.emission,
                "Rs": self.series}

    def signal(self, kind, side, p):
        i = np.broadcast_to(evaluate_with(CURRENT, self._values(p)), (p.X.shape[0],))
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        return [] if self.heats else [EnergyTerm("lost", f"P({self.name})")]

    def netlist(self, w, s) -> None:
        a, b = w.node(self.a), w.node(self.b)
        w.notes.add("diode")
        am = f"x_{s}_in"  # after the 0 V source that reads its current
        w.internal_node(am, self.name, lambda value: value(f"V({self.a})"))  # a ground reads 0
        w.add(f"vd_{s}", a, am, "DC 0")
        w.signal(f"I({self.name})", f"I(vd_{s})")
        w.row(f"vd_{s}", f"diode {self.name}: reads its current")
        if self.at is None:
            w.add(f"d_{s}", am, b, f"dmod_{s}")
            w.models.append(f".model dmod_{s} D(IS={w.num(self.saturation)} N={w.num(self.emission)} "
                            f"RS={w.num(self.series)})")
            w.row(f"d_{s}", f"diode {self.name} (the simulator's nominal 27 degC)")
            w.row(f"dmod_{s}", f"diode {self.name}: model with IS, N and the series resistance")
            junction = f"V({am})-{w.v(b)}-{w.num(self.series)}*I(vd_{s})"
        else:
            j = am
            if self.series > 0:
                j = f"x_{s}_j"
                w.internal_node(j, self.name, lambda value: value(f"V({self.b})") + value(f"V({self.name})"))
                w.add(f"rs_{s}", am, j, w.num(self.series))
                w.row(f"rs_{s}", f"diode {self.name}: series resistance")
            values = {"Vj": f"({w.v(j)}-{w.v(b)})", "Tt": w.v(w.node(self.at)), "T0": 0.0,
                      "Is": self.saturation, "N": self.emission, "Rs": self.series}
            w.add(f"bd_{s}", j, b, f"I={w.expr(CURRENT, values)}")
            w.row(f"bd_{s}", f"diode {self.name}: junction at the temperature of {self.at}")
            junction = f"{w.v(j)}-{w.v(b)}"
        probe = f"x_{s}_vj"
        w.internal_node(probe, self.name, lambda value: value(f"V({self.name})"))
        w.add(f"bvj_{s}", probe, 0, f"V={junction}")
        w.row(f"bvj_{s}", f"diode {self.name}: its junction voltage, for reading back")
        w.signal(f"V({self.name})", f"V({probe})")
        if self.heats:
            w.add(f"bheat_{s}", 0, w.node(self.heats), f"I=({w.v(a)}-{w.v(b)})*I(vd_{s})")
            w.row(f"bheat_{s}", f"diode {self.name}: its dissipation into {self.heats}, W")
