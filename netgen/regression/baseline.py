"""Baseline files: one JSON file per design with its recorded signals, tolerances and tool version."""
from __future__ import annotations

import json
import math
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from netgen import __version__
from netgen.regression.diff import Tolerance, default_tolerance, unit_of
from netgen.model.errors import NetgenError
from netgen.checks.results import Results

FORMAT = "netgen baseline 1"
DEFAULT_DIR = "baselines"  # beside the design: examples/baselines/coil_swing.json


@dataclass
class Baseline:
    """A stored run: times, signals on them, the steady state, and the tolerances to compare with."""

    netgen: str
    design: str | None
    file: str
    settings: dict[str, str] = field(default_factory=dict)
    tolerances: dict[str, Tolerance] = field(default_factory=dict)
    steady: dict[str, float] | None = None
    time: np.ndarray | None = None
    signals: dict[str, np.ndarray] = field(default_factory=dict)


def baseline_path(design_file: Path, directory: Path | None = None) -> Path:
    """`DIR/NAME.json` with `--baseline DIR`, else `baselines/NAME.json` beside the design."""
    design_file = Path(design_file)
    folder = Path(directory) if directory is not None else design_file.parent / DEFAULT_DIR
    return folder / f"{design_file.stem}.json"


def from_results(res: Results, settings: dict[str, str], tolerances: dict[str, Tolerance]) -> Baseline:
    d = res.design
    names = [s for s in res.signals if res.time is None or s in res.waveforms]
    signals = {s: np.asarray(res.waveforms[s], dtype=float) for s in names} if res.time is not None else {}
    steady = {s: float(v) for s, v in res.steady.items() if s in names} if res.steady is not None else None
    return Baseline(__version__, d.title, Path(d.file).name, dict(settings),
                    {s: tolerances[s] for s in names}, steady, res.time, signals)


def _num(v: float):
    v = float(v)
    return float(f"{v:.12g}") if math.isfinite(v) else None


def dumps(b: Baseline) -> str:
    """Self-describing JSON, one key per line, each array on one line (diffs stay readable)."""
    head = {
        "format": FORMAT,
        "netgen": b.netgen,
        "design": b.design,
        "file": b.file,
        "settings": b.settings,
        "units": {"time": "s", **{s: unit_of(s) for s in b.tolerances}},
        "tolerances": {s: t.as_dict() for s, t in b.tolerances.items()},
        "tolerance_rule": "allowed deviation = atol + rtol * (max - min of the signal in this baseline)",
        "steady": None if b.steady is None else {s: _num(v) for s, v in b.steady.items()},
    }
    lines = [f"  {json.dumps(k)}: {json.dumps(v, ensure_ascii=False)}" for k, v in head.items()]
    if b.time is not None:
        lines.append(f'  "time": {json.dumps([_num(v) for v in b.time])}')
        sig = [f"    {json.dumps(s)}: {json.dumps([_num(v) for v in w])}" for s, w in b.signals.items()]
        lines.append('  "signals": {\n' + ",\n".join(sig) + "\n  }")
    else:
        lines.append('  "time": null')
        lines.append('  "signals": {}')
    return "{\n" + ",\n".join(lines) + "\n}\n"


def _array(v, what: str) -> np.ndarray:
    a = np.array([np.nan if x is None else x for x in v], dtype=float)
    if a.ndim != 1:
        raise ValueError(f"{what} is not a list of numbers")
    return a


def read(path: Path) -> Baseline:
    """Read a baseline file; a file that is not one is an input error naming it."""
    path = Path(path)
    hint = "write it again with `netgen verify DESIGN --update-baseline`"
    try:
        raw = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError, json.JSONDecodeError) as e:
        raise NetgenError(f"cannot read baseline `{path}`: {e}", None, hint) from None
    if not isinstance(raw, dict) or raw.get("format") != FORMAT:
        raise NetgenError(f"`{path}` is not a netgen baseline (no \"format\": \"{FORMAT}\")", None, hint)
    try:
        tols = {s: Tolerance(float(t["atol"]), float(t["rtol"])) for s, t in raw.get("tolerances", {}).items()}
        steady = raw.get("steady")
        steady = None if steady is None else {s: (math.nan if v is None else float(v)) for s, v in steady.items()}
        time = raw.get("time")
        time = None if time is None else _array(time, "time")
        signals = {s: _array(w, s) for s, w in (raw.get("signals") or {}).items()}
        if time is not None and any(len(w) != len(time) for w in signals.values()):
            raise ValueError("a signal has not as many values as there are times")
        for s in list(signals) + list(steady or {}):
            tols.setdefault(s, default_tolerance(s))
        return Baseline(str(raw.get("netgen", "?")), raw.get("design"), str(raw.get("file", "")),
                        {str(k): str(v) for k, v in (raw.get("settings") or {}).items()},
                        tols, steady, time, signals)
    except (KeyError, TypeError, ValueError) as e:
        raise NetgenError(f"baseline `{path}` is damaged: {e}", None, hint) from None
