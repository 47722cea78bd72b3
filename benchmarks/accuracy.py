"""How far a run's temperatures are from a tight reference: netgen's own default run, and the
outside simulator's at each tolerance setting (issue 15's "within 1 mK" and "within 10 mK").

The reference is netgen on the same design with `tolerance 1e-7` (its error a thousandth of the
default's). A run's recorded temperatures are compared at its own points, the reference put on
those times by a monotone cubic (scipy's PchipInterpolator): the reference steps at most 1 s and
far shorter where the temperatures bend, so its interpolation error is well under a millikelvin
after the first second, where both are compared (the first second holds the heat's switch-on,
which each solver steps through its own way).
"""
from __future__ import annotations

import csv
import re
from pathlib import Path

import numpy as np

SKIP = 1.0  # seconds at the start left out of the comparison


def tight(text: str, tolerance: float = 1e-7) -> str:
    """The design with its transient's tolerance set to `tolerance`."""
    return re.sub(r"^(transient until .*?)(?: tolerance \S+)?$", rf"\1 tolerance {tolerance:g}", text, flags=re.M)


def read_csv(path: Path) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    with open(path, newline="") as f:
        rows = list(csv.reader(f))
    head, data = rows[0], np.array(rows[1:], dtype=float)
    return data[:, 0], {h: data[:, k] for k, h in enumerate(head) if k}


def worst(ref: tuple[np.ndarray, dict], t: np.ndarray, signals: dict[str, np.ndarray]) -> float:
    """The largest |ΔT| in K over the signals the two have in common, after the first second."""
    from scipy.interpolate import PchipInterpolator

    tr, ys = ref
    keep = (t >= SKIP) & (t <= tr[-1])
    _, first = np.unique(tr, return_index=True)  # a corner's left and right limits share a time
    out = 0.0
    for name, y in signals.items():
        if name in ys and name.startswith("T("):
            f = PchipInterpolator(tr[first], ys[name][first])
            out = max(out, float(np.max(np.abs(f(t[keep]) - y[keep]))))
    return out


def spice_vectors(netlist: str) -> dict[str, str]:
    """Signal → raw-file vector, from the exported netlist's own key (`*   T(c1) = V(t_c1)`)."""
    return {m.group(1): m.group(2).lower() for m in re.finditer(r"^\*\s+(T\([^)]*\)) = (V\([^)]*\))\s*$", netlist, re.M)}


def spice_signals(raw: Path, netlist: str, wanted) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    from netgen.spice.raw import find_plot, read_raw

    plot = find_plot(read_raw(raw), "Transient")
    vec = spice_vectors(netlist)
    t = np.real(plot["time"])
    return t, {s: np.real(plot[vec[s]]) for s in wanted if s in vec and vec[s] in plot}
