"""`netgen verify`: run designs, evaluate their checks and compare them with stored baselines."""
from __future__ import annotations

import json
import time
from dataclasses import dataclass, field
from pathlib import Path

from netgen.analyses import run
from netgen.language import load
from netgen.regression.baseline import Baseline, baseline_path, dumps, from_results, read
from netgen.regression.diff import Comparison, Tolerance, compare, default_tolerance
from netgen.model.errors import NetgenError
from netgen.outputs.text import check_text
from netgen.outputs.files import write_atomic
from netgen.checks.results import Check, Results
from netgen.model.design import signal_unit


@dataclass
class Outcome:
    """What verifying one design gave: its results, checks, and the baseline comparison."""

    path: Path
    settings: dict[str, str] = field(default_factory=dict)
    results: Results | None = None
    error: str | None = None  # a rendered input error: the design could not be checked
    baseline_file: Path | None = None
    baseline: Baseline | None = None  # as stored before this run
    comparison: Comparison | None = None
    update: str | None = None  # with --update-baseline: new, unchanged, moved within tolerance, changed
    elapsed: float = 0.0
    baseline_seconds: float = 0.0  # of `elapsed`, the baseline comparison (or update)

    @property
    def checks(self) -> list[Check]:
        return self.results.checks if self.results is not None else []

    @property
    def baseline_passed(self) -> bool:
        """A missing baseline passes (reported as `no baseline`); an update always passes."""
        return self.update is not None or self.comparison is None or self.comparison.passed

    @property
    def status(self) -> str:
        if self.error is not None:
            return "error"
        return "pass" if all(c.passed for c in self.checks) and self.baseline_passed else "FAIL"


def design_files(paths: list[str]) -> list[Path]:
    """The designs named: files as given, directories as their *.etn files, sorted."""
    out: list[Path] = []
    for p in map(Path, paths):
        if p.is_dir():
            found = sorted(p.glob("*.etn"))
            if not found:
                raise NetgenError(f"`{p}` holds no .etn files", None, "name a design file or a directory of them")
            out += found
        elif p.is_file():
            out.append(p)
        else:
            raise NetgenError(f"cannot find `{p}`", None, "name a .etn file or a directory of them")
    seen: set[Path] = set()
    unique = []
    for p in out:  # a design named twice is verified once
        if p.resolve() not in seen:
            seen.add(p.resolve())
            unique.append(p)
    return unique


def check_names(files: list[Path], directory: Path | None) -> None:
    """Two designs must not share one baseline file."""
    seen: dict[Path, Path] = {}
    for f in files:
        b = baseline_path(f, directory)
        if b in seen:
            raise NetgenError(f"`{seen[b]}` and `{f}` would share the baseline `{b}`", None,
                              "verify them in separate runs with different --baseline directories")
        seen[b] = f


def parse_fraction(text: str, what: str) -> float:
    """`0.002`, `0.2%` or `2e-3` → 0.002; negative or unreadable is an input error."""
    t = text.strip()
    try:
        v = float(t[:-1]) / 100 if t.endswith("%") else float(t)
    except ValueError:
        v = -1.0
    if not v >= 0:
        raise NetgenError(f"{what} {text}: expected a fraction such as 0.002 or 0.2%", None,
                          "e.g. --rtol 0.5% or --rtol 'T(die)=0.2%'")
    return v


def parse_rtol(values: list[str] | None) -> tuple[float | None, dict[str, float]]:
    """`--rtol R` for every signal, `--rtol SIGNAL=R` for one; the last of each wins."""
    every, per = None, {}
    for v in values or []:
        if "=" in v:
            sig, frac = v.split("=", 1)
            per[sig.strip()] = parse_fraction(frac, f"--rtol {sig.strip()}=")
        else:
            every = parse_fraction(v, "--rtol")
    return every, per




def tolerances_for(signals: list[str], stored: Baseline | None, rtol: float | None,
                   per_signal: dict[str, float], design_tols=()) -> dict[str, Tolerance]:
    """Command line first, then the design's `baseline ... within`, then the tolerances stored
    in the baseline, then the defaults."""
    out = {}
    for s in signals:
        tol = stored.tolerances.get(s) if stored is not None else None
        tol = tol or default_tolerance(s)
        for entry in design_tols:  # later statements win over earlier ones
            if entry.signals and s not in entry.signals:
                continue
            atol, rel = tol.atol, tol.rtol
            if entry.atol is not None and signal_unit(s) == entry.unit:
                atol = entry.atol
            if entry.rtol is not None:
                rel = entry.rtol
            tol = Tolerance(atol, rel)
        if s in per_signal:
            tol = Tolerance(tol.atol, per_signal[s])
        elif rtol is not None:
            tol = Tolerance(tol.atol, rtol)
        out[s] = tol
    return out


def recorded(res: Results) -> list[str]:
    return [s for s in res.signals if res.time is None or s in res.waveforms]


def verify_file(path: Path, settings: dict[str, str], directory: Path | None = None,
                rtol: float | None = None, per_signal: dict[str, float] | None = None,
                update: bool = False) -> Outcome:
    """Run one design, evaluate its checks, compare with (or, with `update`, write) its baseline."""
    o = Outcome(Path(path), dict(settings))
    start = time.monotonic()
    try:
        o.results = run(load(path, settings))
        solved = time.monotonic()
        attach_baseline(o, directory, rtol, per_signal, update)
        o.baseline_seconds = time.monotonic() - solved
    except NetgenError as e:
        o.error = e.render()
    o.elapsed = time.monotonic() - start
    return o


def attach_baseline(o: Outcome, directory: Path | None = None, rtol: float | None = None,
                    per_signal: dict[str, float] | None = None, update: bool = False) -> None:
    """Read the design's baseline if there is one and compare; with `update`, write it anew."""
    o.baseline_file = baseline_path(o.path, directory)
    if o.baseline_file.exists():
        try:
            o.baseline = read(o.baseline_file)
        except NetgenError:
            if not update:
                raise
    res = o.results
    names = recorded(res)
    tols = tolerances_for(names, o.baseline, rtol, per_signal or {}, o.results.design.baseline_tolerances)
    if o.baseline is not None:
        o.comparison = compare(o.baseline, res.time, res.waveforms, res.steady, names, tols)
    if update:
        o.update = _write(o, from_results(res, o.settings, tols))


def _write(o: Outcome, new: Baseline) -> str:
    text = dumps(new)
    old_text = o.baseline_file.read_text(encoding="utf-8") if o.baseline_file.exists() else None
    if old_text != text:
        write_atomic(o.baseline_file, text)
    if o.baseline is None:
        return "new" if old_text is None else "new (the old file was not a readable baseline)"
    if old_text == text:
        return "unchanged"
    if _values(old_text) == _values(text):
        return "unchanged values, header rewritten"
    return "moved within tolerance" if o.comparison.passed and not o.comparison.new else "changed"


def _values(text: str) -> tuple:
    raw = json.loads(text)
    return raw.get("time"), raw.get("signals"), raw.get("steady")


def _checks_text(o: Outcome) -> str:
    n = len(o.checks)
    failed = sum(not c.passed for c in o.checks)
    if n == 0:
        return "no checks"
    return f"{n - failed} of {n} checks pass" if failed == 0 else f"{failed} of {n} checks FAIL"


def _baseline_text(o: Outcome) -> tuple[str, list[str]]:
    """The baseline's part of the design's line, and the lines that explain it."""
    c = o.comparison
    if o.update is not None:
        more = [f"changed: {c.summary()}"] if o.update == "changed" else []
        return f"baseline {o.update} ({o.baseline_file})", more
    if c is None:
        return "no baseline", []
    more = []
    if c.new:
        more.append("not in the baseline yet: " + ", ".join(c.new))
    if o.baseline.settings != o.settings:
        more.append(f"note: the baseline was made with {_settings_text(o.baseline.settings)}, "
                    f"this run with {_settings_text(o.settings)}")
    if c.passed:
        return f"baseline ok ({c.summary()})", more
    return "baseline FAIL", [f"FAIL  baseline: {c.summary()}"] + more


def _settings_text(s: dict[str, str]) -> str:
    return " ".join(f"--set {k}={v}" for k, v in s.items()) if s else "no --set"


def outcome_lines(o: Outcome) -> list[str]:
    """One line for the design, then an indented line for each thing that failed."""
    if o.error is not None:
        return [f"error {o.path}"] + ["      " + ln for ln in o.error.split("\n")]
    base, more = _baseline_text(o)
    lines = [f"{o.status:<5} {o.path}: {_checks_text(o)}; {base}  [{o.elapsed:.1f} s]"]
    lines += [f"        {check_text(c)}" for c in o.checks if not c.passed]
    return lines + [f"        {m}" for m in more]


def total_line(outcomes: list[Outcome]) -> str:
    n = len(outcomes)
    counts = {k: sum(o.status == k for o in outcomes) for k in ("pass", "FAIL", "error")}
    text = f"total: {n} design{'s' * (n != 1)}, {counts['pass']} passed, {counts['FAIL']} failed"
    if counts["error"]:
        text += f", {counts['error']} with input errors"
    updates = [o.update.split(" ")[0] for o in outcomes if o.update]
    if updates:
        text += "; baselines: " + ", ".join(f"{updates.count(k)} {k}" for k in dict.fromkeys(updates))
    else:
        missing = sum(o.error is None and o.comparison is None for o in outcomes)
        if missing:
            text += f"; {missing} without a baseline (run with --update-baseline to write them)"
    return text


def exit_code(outcomes: list[Outcome]) -> int:
    if any(o.status == "error" for o in outcomes):
        return 2
    return 1 if any(o.status == "FAIL" for o in outcomes) else 0
