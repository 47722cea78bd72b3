"""`netgen tolerance`: the design run with its `spread` parameters drawn, run by run.

Run k draws from its own generator, `numpy.random.default_rng([seed, k])` (a SeedSequence of
the seed and the run's number), so its values are the same whatever the executor and whatever
order the runs finish in. A normal spread draws nominal·(1 + share·N(0, 1)), a uniform one
nominal·(1 + share·U(−1, 1)).
"""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from netgen.language import load_text
from netgen.model.design import Design
from netgen.model.errors import NetgenError
from netgen.studies.columns import Task
from netgen.studies.runner import Outcome, Progress, execute
from netgen.studies.stats import column_stats, wilson_interval

MAX_RUNS = 1_000_000


def draws(design: Design, seed: int, run: int) -> dict[str, float]:
    """The values of run `run`: each spread parameter drawn, in the order the file defines them."""
    rng = np.random.default_rng([seed, run])
    out = {}
    for name, s in design.spreads.items():
        nominal = design.params[name][0]
        x = rng.standard_normal() if s.law == "normal" else rng.uniform(-1.0, 1.0)
        out[name] = float(nominal * (1.0 + s.share * x))
    return out


@dataclass
class Tolerance:
    design: Design  # the nominal design (with --set values)
    seed: int
    draws: list[dict[str, float]]
    outcome: Outcome

    def lead(self, index: int) -> dict:
        return {"run": index, **self.draws[index]}

    def yields(self) -> list[dict]:
        """Per expectation: the share of finished runs that pass it (a failed run does not), with
        its Wilson score interval at 95 %."""
        rows = self.outcome.ordered()
        out = []
        for e in self.design.expectations:
            key = f"pass@{e.loc.line}"
            n = len(rows)
            k = sum(1 for r in rows if r.values.get(key) == 1.0)
            low, high = wilson_interval(k, n)
            out.append({"line": e.loc.line, "expectation": e.text, "yield": k / n if n else float("nan"),
                        "low": low, "high": high, "passed": k, "runs": n})
        return out

    def stats(self) -> dict:
        """Per measured column (not the draws, not the passes): mean, std, p1, p50, p99, worst."""
        rows = [r for r in self.outcome.ordered() if r.error is None]
        limits = {f"measured@{e.loc.line}": e for e in self.design.expectations}
        out = {}
        for col in self.outcome.columns():
            if col.startswith("pass@"):
                continue
            got = [(r.index, r.values[col]) for r in rows if col in r.values and np.isfinite(r.values[col])]
            if not got:
                continue
            e = limits.get(col)
            worst = "far"
            if e is not None:
                worst = "max" if e.cmp in ("<", "<=") else "min" if e.cmp in (">", ">=") else ("far", e.limit)
            runs, values = zip(*got)
            out[col] = column_stats(list(runs), list(values), worst)
        return out

    def document(self, columns: list[str]) -> dict:
        """tolerance.json."""
        return {"runs": self.outcome.total, "seed": self.seed,
                "spreads": {n: {"law": s.law, "share": s.share, "nominal": self.design.params[n][0],
                                "unit": self.design.params[n][1]} for n, s in self.design.spreads.items()},
                "columns": columns, "yield": self.yields(), "stats": self.stats(),
                "finished": self.outcome.finished, "failed": self.outcome.failed,
                "interrupted": self.outcome.interrupted}


def run_tolerance(text: str, filename: str, settings: dict, runs: int, seed: int, ex,
                  progress: Progress | None = None, stream: Path | None = None) -> Tolerance:
    """`runs` runs of the design with its spread parameters drawn (module doc)."""
    if runs < 1 or runs > MAX_RUNS:
        raise NetgenError(f"--runs {runs}: expected 1 to {MAX_RUNS}", None, "e.g. --runs 500")
    d = load_text(text, filename, settings)
    if not d.spreads:
        raise NetgenError(f"{filename}: no parameter has a spread, so every run would be the same", None,
                          "give one: let R_leads = 50 mohm spread normal 2 %")
    drawn = [draws(d, seed, k) for k in range(runs)]
    t = Tolerance(d, seed, drawn, Outcome(runs))
    tasks = [Task(k, text, filename, {**settings, **drawn[k]}) for k in range(runs)]
    t.outcome = execute(tasks, ex, t.lead, progress, stream)
    return t
