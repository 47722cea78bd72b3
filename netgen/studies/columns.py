"""One run of a study: the design read with its overrides, solved, and measured into one row.

A row's columns, all in SI: each module's figure of merit (`COP(tec)` for a module that cools,
`efficiency(teg)` for one that generates), each recorded signal's steady value under its own name,
`final`, `min` and `max` of each recorded signal over the transient (`final T(x)`), and each
expectation's measured value and pass (1 or 0) as `measured@LINE` and `pass@LINE`. A run that fails
gives a row with its `error` instead.
"""
from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from netgen.analyses import run
from netgen.checks.results import Results
from netgen.language import load_text
from netgen.language.overrides import API, Overrides
from netgen.model.errors import NetgenError

ERROR = "error"


@dataclass(frozen=True)
class Task:
    """What a worker needs for one run; picklable: the file's text, its name (for includes and
    messages) and the overrides (SI numbers by parameter name)."""

    index: int
    text: str
    filename: str
    overrides: dict = field(default_factory=dict)


@dataclass
class Row:
    """What one run gave: its values by column, or its error."""

    index: int
    values: dict[str, float]
    error: str | None = None


def measure(res: Results) -> dict[str, float]:
    """The study's columns of one solved run, in their order (module doc)."""
    out: dict[str, float] = {}
    for f in res.figures:
        if "cop" in f:
            out[f"COP({f['module']})"] = float(f["cop"])
        elif "efficiency" in f:
            out[f"efficiency({f['module']})"] = float(f["efficiency"])
    if res.steady is not None:
        for s in res.signals:
            if s in res.steady:
                out[s] = float(res.steady[s])
    if res.time is not None:
        for agg, fn in (("final", lambda w: w[-1]), ("min", np.min), ("max", np.max)):
            for s in res.signals:
                if s in res.waveforms and len(res.waveforms[s]):
                    out[f"{agg} {s}"] = float(fn(res.waveforms[s]))
    for c in res.checks:
        line = c.loc.line if c.loc is not None else 0
        out[f"measured@{line}"] = float(c.measured)
        out[f"pass@{line}"] = 1.0 if c.passed else 0.0
    return out


def run_task(task: Task) -> Row:
    """Read, solve and measure one run; any failure is the row's error, never an exception (a
    study goes on past a run that fails)."""
    try:
        design = load_text(task.text, task.filename, Overrides(task.overrides, API))
        return Row(task.index, measure(run(design)))
    except NetgenError as e:
        return Row(task.index, {}, _one_line(e.message))
    except Exception as e:  # noqa: BLE001 - a bug in one run is reported in its row, the study goes on
        return Row(task.index, {}, _one_line(f"{type(e).__name__}: {e}"))


def _one_line(text: str) -> str:
    return " ".join(str(text).split())


def union(rows: list[Row]) -> list[str]:
    """The columns of all rows, in the order they first appear going by run."""
    cols: dict[str, None] = {}
    for r in sorted(rows, key=lambda r: r.index):
        cols.update(dict.fromkeys(r.values))
    return sorted(cols, key=_group)  # stable: within a group, the order of first appearance


def _group(column: str) -> int:
    """The module doc's order: figures of merit, steady values, transient values, expectations."""
    if column.startswith(("COP(", "efficiency(")):
        return 0
    if column.startswith(("final ", "min ", "max ")):
        return 2
    if column.startswith(("measured@", "pass@")):
        return 3
    return 1


def finite(v) -> bool:
    return isinstance(v, (int, float)) and math.isfinite(v)
