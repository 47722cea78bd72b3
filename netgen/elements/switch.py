"""`switch NAME A B closed T1 .. T2[, ...] [on R] [off R]`: a resistance that is `on` while
closed and `off` otherwise; its state changes only at the listed times."""
from __future__ import annotations

from dataclasses import dataclass, field

from netgen.elements.base import EnergyTerm, TwoTerminal, electrical_power
from netgen.model import units as U


@dataclass
class Switch(TwoTerminal):
    """Closed (r_on) during the listed intervals, open (r_off) otherwise."""

    intervals: list[tuple[float, float]] = field(default_factory=list)
    r_on: float = 1e-3
    r_off: float = 1e9

    statement = "switch"
    noun = "switches"
    signals = ("I", "P")

    def closed_at(self, t: float, left: bool = False) -> bool:
        """Closed on [t1, t2): the state just after `t`; with `left`, on (t1, t2], the state just before."""
        if left:
            return any(t1 < t <= t2 for t1, t2 in self.intervals)
        return any(t1 <= t < t2 for t1, t2 in self.intervals)

    def conductance(self, closed: bool) -> float:
        return 1.0 / (self.r_on if closed else self.r_off)

    @staticmethod
    def read(r, t) -> None:
        name, a, b, loc = r.two_pins(t)
        at = r.attrs(t.children[3], ("closed", "on", "off"), "switch")
        if "closed" not in at:
            raise r.err(t, f"switch `{name}` needs `closed T1 .. T2`", "e.g. `closed 1 s .. 2 s, 5 s .. 6 s`")
        intervals = []
        for iv in at["closed"].children:
            t1 = r.const(iv.children[0], U.TIME, "a switch time", nonneg=True)
            t2 = r.const(iv.children[1], U.TIME, "a switch time", nonneg=True)
            if t2 <= t1:
                raise r.err(iv, f"the interval {t1:g} s .. {t2:g} s is empty or reversed",
                            "write the earlier time first")
            intervals.append((t1, t2))
        intervals.sort()
        for (x1, x2), (y1, y2) in zip(intervals, intervals[1:]):
            if y1 < x2:
                raise r.err(at["closed"], "the closed intervals of a switch overlap")
        r_on = r.const(at["on"].children[0], U.RESISTANCE, "an on resistance", positive=True) if "on" in at else 1e-3
        r_off = r.const(at["off"].children[0], U.RESISTANCE, "an off resistance", positive=True) if "off" in at else 1e9
        r.design.elements.append(Switch(name, loc, a=a, b=b, intervals=intervals, r_on=r_on, r_off=r_off))

    @classmethod
    def stamp(cls, batch, st) -> None:
        # Their conductances change with time: the System fills them in by switch state.
        st.switches += list(zip(batch, st.nodes(batch, "a").tolist(), st.nodes(batch, "b").tolist()))

    def switch_times(self) -> list[float]:
        return [t for iv in self.intervals for t in iv]

    def signal(self, kind, side, p):
        i = p.each(lambda t, left: self.conductance(self.closed_at(t, left))) * p.across(self.a, self.b)
        return i if kind == "I" else electrical_power(self, p, i)

    def energy(self):
        return [EnergyTerm("lost", f"P({self.name})")]

    def netlist(self, w, s) -> None:
        ctl = f"x_{s}_ctl"
        w.internal_node(ctl, self.name, lambda value: float(self.closed_at(0.0)))
        pts = [(0.0, float(self.closed_at(0.0)))]
        for t1, t2 in self.intervals:
            pts += [(t1, 0.0), (t1, 1.0), (t2, 1.0), (t2, 0.0)]
        pts = [pts[0]] + [p for p in pts[1:] if p[0] > 0]
        w.add(f"vsw_{s}", ctl, 0, f"DC {w.num(pts[0][1])} {w.pwl(pts)}")
        w.add(f"s_{s}", w.node(self.a), w.node(self.b), ctl, 0, f"msw_{s}")
        w.models.append(f".model msw_{s} SW(RON={w.num(self.r_on)} ROFF={w.num(self.r_off)} VT=0.5 VH=0)")
        w.notes.add("switch")
        w.row(f"s_{s}", f"switch {self.name}: closed while V({ctl}) > 0.5")
        w.row(f"vsw_{s}", f"switch {self.name}: control, 1 = closed")
        w.row(f"msw_{s}", f"switch {self.name}: model with its on and off resistances")
