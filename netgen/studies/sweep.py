"""`netgen sweep`: a design run at every point of a grid of parameter values, and the best point
(refined, for one varied parameter, by Brent's bounded method in `scipy.optimize.minimize_scalar`)."""
from __future__ import annotations

import difflib
import math
import re
from dataclasses import dataclass, field
from pathlib import Path


from lark.exceptions import UnexpectedInput

from netgen.language import load_text
from netgen.language.expressions import ExprReader
from netgen.language.grammar import parser
from netgen.model import units as U
from netgen.model.design import Loc
from netgen.model.errors import NetgenError
from netgen.studies.columns import Task, finite, run_task
from netgen.studies.grid import Axis, Vary, axis, points, read_vary
from netgen.studies.runner import Outcome, Progress, execute

REFINE_TOL = 1e-4  # the refined best point to this share of the varied range
GOALS = ("max", "min")
_HINT = "e.g. --vary I_drive=0.5A..3A:11"


@dataclass
class Sweep:
    """A finished (or interrupted) sweep: its axes, points, rows and best point."""

    axes: list[Axis]
    points: list[dict[str, float]]
    outcome: Outcome
    best: dict | None = None
    notes: list[str] = field(default_factory=list)

    def lead(self, index: int) -> dict:
        return dict(self.points[index])

    def document(self) -> dict:
        """sweep.json: the grid, the columns and the best point."""
        from netgen.studies.runner import table

        cols, _ = table(self.outcome, self.lead)
        return {"grid": {a.name: a.describe() for a in self.axes}, "columns": cols, "best": self.best,
                "runs": self.outcome.total, "finished": self.outcome.finished, "failed": self.outcome.failed,
                "interrupted": self.outcome.interrupted}


def read_axes(text: str, filename: str, settings: dict, varies: list[str], logs: list[str]) -> list[Axis]:
    """The `--vary` options read against the design: FROM and TO in SI of the parameter's unit."""
    read = [read_vary(v) for v in varies]
    if not read:
        raise NetgenError("netgen sweep: nothing to vary", None, "e.g. --vary I_drive=0.5A..3A:11")
    names = [v.name for v in read]
    for n in names:
        if names.count(n) > 1:
            raise NetgenError(f"--vary {n}: the parameter is varied twice", None, "give each parameter once")
        if n in settings:
            raise NetgenError(f"--vary {n}: the parameter is also given with --set", None, "give it once")
    for n in logs:
        if n not in names:
            raise NetgenError(f"--log {n}: `{n}` is not varied", None, f"vary it too: --vary {n}=FROM..TO")
    return [axis(v, _si(text, filename, settings, v, v.low), _si(text, filename, settings, v, v.high),
                 v.name in logs, _unit(text, filename, settings, v)) for v in read]


def _si(text, filename, settings, v: Vary, value: str) -> float:
    """FROM or TO in SI, read as a `let` value and checked against the parameter's unit. Only the
    value is read here: a point whose value the design refuses (a negative capacity) is a failed
    row of the study, not the end of it."""
    d = load_text(text, filename, settings)
    if v.name not in d.params:
        try:
            load_text(text, filename, {**settings, v.name: value})  # no such parameter: its own message
        except NetgenError as e:
            if e.loc is None:
                e.message = re.sub(r"^--set [^:]*: ", f"--vary {v.spec}: ", e.message)
                raise
        raise NetgenError(f"--vary {v.spec}: `{v.name}` varies in time in the design, so it cannot be swept",
                          None, "sweep a constant parameter, e.g. the amplitude a shape is written with")
    unit = d.params[v.name][1]
    where = f"--vary {v.spec}"
    try:
        tree = parser().parse(value, start="expr")
        typed = ExprReader({}, lambda _t: Loc("--vary", 1, 1, value)).read(tree)
    except (UnexpectedInput, NetgenError):
        raise NetgenError(f"{where}: cannot read `{value}` as a value", None, _HINT) from None
    if not typed.constant:
        raise NetgenError(f"{where}: `{value}` is not a constant value", None, _HINT)
    if U.unit_name(typed.dim) != unit:
        given = "has no unit" if typed.dim.dimensionless else f"is in {U.unit_name(typed.dim)}"
        raise NetgenError(f"{where}: `{v.name}` is in {unit}, `{value}` {given}", None,
                          f"e.g. --vary {v.name}=1{unit}..2{unit}:11")
    return float(typed.value)


def _unit(text, filename, settings, v: Vary) -> str:
    return load_text(text, filename, settings).params[v.name][1]


def run_sweep(text: str, filename: str, settings: dict, axes: list[Axis], ex, best: tuple[str, str] | None = None,
              progress: Progress | None = None, stream: Path | None = None) -> Sweep:
    """Every point of the grid on `ex`, then the best point if `best` = (max|min, COLUMN)."""
    pts = points(axes)
    if best is not None:
        _check_goal(text, filename, settings, pts[0], best)
    tasks = [Task(i, text, filename, {**settings, **p}) for i, p in enumerate(pts)]
    s = Sweep(axes, pts, Outcome(len(tasks)))
    s.outcome = execute(tasks, ex, s.lead, progress, stream)
    if best is not None and not s.outcome.interrupted:
        s.best = best_point(s, text, filename, settings, *best)
    return s


def _check_goal(text, filename, settings, first: dict, best: tuple[str, str]) -> None:
    """`--best max COLUMN` names a column the design gives: checked at the nominal values and the
    first point before the study starts (a typo should not cost a whole grid). A module's COP is
    a column where it cools, its efficiency where it generates."""
    goal, column = best
    if goal not in GOALS:
        raise NetgenError(f"--best {goal} {column}: expected max or min", None, "e.g. --best max 'COP(tec)'")
    rows = [run_task(Task(0, text, filename, dict(settings))), run_task(Task(0, text, filename, {**settings, **first}))]
    if any(r.error is None for r in rows) and not any(column in r.values for r in rows):
        names = list(dict.fromkeys(c for r in rows for c in r.values))
        close = difflib.get_close_matches(column, names, n=1)
        raise NetgenError(f"--best {goal} {column}: the design gives no column `{column}`", None,
                          f"did you mean `{close[0]}`?" if close else "columns: " + ", ".join(names))


def best_point(s: Sweep, text, filename, settings, goal: str, column: str) -> dict | None:
    """The grid's best finished point; with one varied parameter, refined between the grid points
    beside it by Brent's bounded method to REFINE_TOL of the range."""
    sign = -1.0 if goal == "max" else 1.0
    scored = [(sign * r.values[column], i) for i, r in s.outcome.rows.items() if finite(r.values.get(column))]
    if not scored:
        s.notes.append(f"no run gave a value of {column}: no best point")
        return None
    score, i = min(scored)
    params, value = dict(s.points[i]), sign * score
    refined = False
    if len(s.axes) == 1 and s.axes[0].count >= 3:
        a = s.axes[0]
        vals = a.values()
        lo, hi = vals[max(i - 1, 0)], vals[min(i + 1, a.count - 1)]
        lo, hi = min(lo, hi), max(lo, hi)

        def f(x: float) -> float:
            row = run_task(Task(-1, text, filename, {**settings, a.name: float(x)}))
            v = row.values.get(column)
            return sign * v if finite(v) else math.inf

        from scipy.optimize import minimize_scalar  # lazily, as everything a plain run does not use

        r = minimize_scalar(f, bounds=(lo, hi), method="bounded",
                            options={"xatol": REFINE_TOL * abs(a.high - a.low)})
        if math.isfinite(r.fun) and r.fun <= score:
            params, value, refined = {a.name: float(r.x)}, sign * float(r.fun), True
    return {"goal": goal, "column": column, "parameters": params, "value": value, "refined": refined}


def best_line(s: Sweep) -> str:
    """`best: NAME = VALUE UNIT, COLUMN = VALUE`."""
    b = s.best
    units = {a.name: a.unit for a in s.axes}
    parts = [f"{n} = {v:.6g}" + (f" {units[n]}" if units.get(n) not in ("", "1") else "")
             for n, v in b["parameters"].items()]
    return "best: " + ", ".join(parts) + f", {b['column']} = {b['value']:.6g}"
