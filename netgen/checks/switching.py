"""Cautions about switching: a switch that opens a loop with a coil in it.

A coil keeps its current for an instant after the switch opens, so the current is forced through
the switch's off resistance and the voltage across it leaps to about I·R_off (the inductive kick,
common practice in circuit design: a freewheeling diode or another clamp gives the current a path).
The transient follows that steep decay; this module only tells the user it happened and how high
the voltage rose.
"""
from __future__ import annotations

import numpy as np

from netgen.elements import Switch
from netgen.model.design import Design

KICK = 10.0  # a peak across the open switch this many times the largest voltage before it opened


def openings(d: Design, t_end: float, events: list[dict]) -> list[tuple[Switch, float, float]]:
    """(switch, time it opened, time it closed again or the end) for every opening in the run:
    the ends of a timed switch's closed intervals and the `opens` events of the others."""
    out = []
    by_name = {e.name: e for e in d.of_kind(Switch)}
    for s in by_name.values():
        for t1, t2 in s.intervals:
            if 0 < t2 < t_end:
                later = [a for a, _ in s.intervals if a > t2]
                out.append((s, t2, min(later) if later else t_end))
    for k, ev in enumerate(events):
        if ev["what"] != "opens":
            continue
        closes = [e["time"] for e in events[k + 1:] if e["element"] == ev["element"] and e["what"] == "closes"]
        out.append((by_name[ev["element"]], ev["time"], min(closes) if closes else t_end))
    return out


def opening_cautions(d: Design, sys, X: np.ndarray, t: np.ndarray, left_rows: np.ndarray,
                     events: list[dict]) -> list[str]:
    """A caution for each opening whose voltage across the switch peaks above `KICK` times the
    largest node voltage just before it opened."""
    if len(t) < 2:
        return []
    volts = np.flatnonzero(np.array(sys.kinds) == "V")
    left = np.asarray(left_rows, dtype=bool) if left_rows is not None else np.zeros(len(t), bool)
    notes = []
    for s, t_open, t_close in openings(d, float(t[-1]), events):
        before = np.flatnonzero((t < t_open) | ((t == t_open) & left))
        after = np.flatnonzero(((t > t_open) | ((t == t_open) & ~left)) & (t < t_close))
        if not len(before) or not len(after):
            continue
        i0 = before[-1]
        ref = float(np.max(np.abs(X[i0, volts]))) if len(volts) else 0.0
        ia, ib = sys.node_index[s.a], sys.node_index[s.b]
        va = X[after, ia] if ia < sys.n else 0.0
        vb = X[after, ib] if ib < sys.n else 0.0
        across = np.abs(va - vb)
        k = int(np.argmax(across))
        peak = float(across[k])
        if peak > KICK * max(ref, 1e-3):
            notes.append(f"switch `{s.name}` opens at t = {t_open:.6g} s and the voltage across it peaks at "
                         f"{peak:.4g} V (at t = {float(t[after[k]]):.6g} s): a coil's current is forced through "
                         f"its off resistance; a clamp gives it a path, e.g. a diode across the coil "
                         f"(`diode NAME B A` with A, B the coil's ends)")
    return notes
