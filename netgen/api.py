"""The Python API's entry: `load` a design from a path or from text; `run` it (netgen.analyses)."""
from __future__ import annotations

import os
from collections.abc import Mapping
from pathlib import Path

from netgen.analyses import run as _run  # importing it also lets `Design.run()` work
from netgen.checks.results import Results
from netgen.language import load_text
from netgen.language.elaborate import read_source
from netgen.language.source import decoded
from netgen.language.overrides import from_api
from netgen.model.design import Design
from netgen.model.errors import NetgenError

_LOAD_HINT = 'e.g. netgen.load("cooler.etn"), netgen.load(Path("cooler.etn")) or netgen.load(text)'


def load(path_or_text, overrides: Mapping[str, str | float] | None = None) -> Design:
    """Read a design from a path or from .etn text.

    `path_or_text` is a path (`str` or `os.PathLike`) or the text of a design. A `str` is text when
    it holds a line break, or when it is one line with spaces that is neither a `.etn` name nor an
    existing file or directory (every design has spaces; `"cooler"` is a path). `bytes` are
    decoded as UTF-8 first. `overrides` replace top-level `let` values by name: text as on a
    `let` line (`"1.5 A"`, `"2 * P"`) or a number in SI units of the parameter's dimension
    (`1.5` for a current is 1.5 A, `300` for a temperature is 300 K).

    Every error the arguments can cause is a `NetgenError`.

    Example:
        >>> d = netgen.load("let I = 1 A\nfixed a 300 K\nmass m 2 J/K start 310 K\nlink l m a 0.5 W/K\n"
        ...                 "transient until 4 s\n", {"I": 2.0})
        >>> d
        <Design <text>: 2 nodes, 2 elements, transient>
    """
    settings = from_api(overrides)
    return load_text(*_text_and_name(path_or_text, "netgen.load"), settings)


def _text_and_name(path_or_text, who: str) -> tuple[str, str]:
    """The text of a design and its file name ("<text>" for text given), by `load`'s rules."""
    if isinstance(path_or_text, (bytes, bytearray)):
        path_or_text = _decoded(bytes(path_or_text))
    if isinstance(path_or_text, os.PathLike):
        path = _checked_path(os.fsdecode(os.fspath(path_or_text)))
        return read_source(path), path
    if not isinstance(path_or_text, str):
        raise NetgenError(f"{who}: expected a path or the text of a design, not {type(path_or_text).__name__}",
                          None, _LOAD_HINT)
    text = path_or_text
    if not text.strip():
        raise NetgenError(f"{who}: the path or text is empty", None, _LOAD_HINT)
    if "\n" not in text and "\r" not in text:
        if Path(text).suffix == ".etn" or _exists(text) or not any(c.isspace() for c in text):
            path = _checked_path(text)
            return read_source(path), path
    return text, "<text>"


def run(design: Design, progress=None, keep_all: bool = False) -> Results:
    """Solve a design's analyses, then its expectations and audits: `netgen.run(netgen.load(path))`.

    A transient whose states would pass 256 MB keeps those of only the unknowns that its
    records, expectations and figures of merit read; `keep_all=True` keeps every unknown.

    Example:
        >>> res = netgen.run(netgen.load("fixed a 300 K\nmass m 2 J/K start 310 K\nlink l m a 0.5 W/K\n"
        ...                              "transient until 4 s\nrecord T(m)\n"))
        >>> round(float(res["T(m)"][-1]), 3)    # 300 K + 10 K·exp(−4 s / 4 s)
        303.679
    """
    if not isinstance(design, Design):
        raise NetgenError(f"netgen.run: expected a Design, not {type(design).__name__}", None,
                          'load it first: netgen.run(netgen.load("cooler.etn"))')
    return _run(design, progress, keep_all)


def _exists(path: str) -> bool:
    try:
        return Path(path).exists()
    except (OSError, ValueError):  # a name too long for the file system, a NUL character: not a file
        return False


def _checked_path(path: str) -> str:
    if "\0" in path:  # the operating system would refuse it with a ValueError, not an OSError
        raise NetgenError(f"cannot read {path!r}: a path cannot hold a NUL character")
    return path


def _decoded(raw: bytes) -> str:
    return decoded(raw, "<bytes>", "the bytes given are not valid UTF-8",
                   "decode them yourself, or save the file as UTF-8")


def sweep(design, vary: Mapping, *, log=(), best: tuple[str, str] | None = None, overrides: Mapping | None = None,
          jobs: int = 1, cluster: str | None = None, progress=None):
    """Run a design at every point of a grid: `netgen sweep` as a table.

    `design` is a path or text, as for `load`. `vary` maps each varied parameter to
    `(FROM, TO)` or `(FROM, TO, COUNT)` (11 points if not given), each end a number in SI units of
    the parameter's dimension or text with its unit (`"0.5 A"`); several make a grid, the last
    varying fastest; `log` names parameters spaced evenly on a log scale. `best=("max", COLUMN)`
    (or "min") adds the best point as `table.attrs["best"]` for a DataFrame, `table["best"]` for
    a dict. `jobs` processes (1: here, one run after another) or a Dask `cluster` address (or
    "local"). `progress(finished, total, failed)` is called as runs finish.

    Returns a pandas DataFrame when pandas is installed, else a dict of numpy arrays by column;
    the columns are those of sweep.csv (README.md).

    Example:
        >>> table = netgen.sweep("cooler.etn", {"I_drive": ("0.5 A", "3 A", 11)}, best=("max", "COP(tec)"))
        >>> table["COP(tec)"].max()
    """
    from netgen.studies.executors import executor
    from netgen.model.jsonsafe import jsonable
    from netgen.studies.runner import table
    from netgen.studies.sweep import read_axes, run_sweep
    from netgen.studies.tables import frame

    text, name = _text_and_name(design, "netgen.sweep")
    settings = dict(from_api(overrides) or {})
    load_text(text, name, settings)
    if not isinstance(vary, Mapping) or not vary:
        raise NetgenError("netgen.sweep: `vary` is a dict of parameter names to (FROM, TO[, COUNT])", None,
                          'e.g. netgen.sweep(path, {"I_drive": ("0.5 A", "3 A", 11)})')
    specs = []
    for n, r in vary.items():
        if not isinstance(r, (tuple, list)) or len(r) not in (2, 3):
            raise NetgenError(f"netgen.sweep: vary {n}: expected (FROM, TO) or (FROM, TO, COUNT), not {r!r}", None,
                              'e.g. {"I_drive": ("0.5 A", "3 A", 11)}')
        ends = [repr(float(x)) + _si_unit(text, name, settings, n) if not isinstance(x, str) else x for x in r[:2]]
        specs.append(f"{n}={ends[0]}..{ends[1]}" + (f":{r[2]}" if len(r) == 3 else ""))
    axes = read_axes(text, name, settings, specs, list(log))
    ex = executor(jobs, cluster)
    try:
        s = run_sweep(text, name, settings, axes, ex, tuple(best) if best else None, progress)
    finally:
        ex.close()
    cols, body = table(s.outcome, s.lead)
    out = frame(cols, body)
    if best:
        _attach(out, "best", jsonable(s.best))
    return out


def tolerance(design, runs: int, *, seed: int = 0, overrides: Mapping | None = None, jobs: int = 1,
              cluster: str | None = None, progress=None):
    """Run a design `runs` times with its `spread` parameters drawn: `netgen tolerance` as a table.

    Run k draws from `numpy.random.default_rng([seed, k])`, whatever the executor. The yields
    and statistics of tolerance.json are attached as `table.attrs["yield"]` and
    `table.attrs["stats"]` for a DataFrame, `table["yield"]` and `table["stats"]` for a dict.
    Other arguments as for `sweep`.

    Example:
        >>> runs = netgen.tolerance("cooler.etn", 500, seed=1)
        >>> runs.attrs["yield"][0]["yield"]
    """
    from netgen.studies.executors import executor
    from netgen.model.jsonsafe import jsonable
    from netgen.studies.runner import table
    from netgen.studies.tables import frame
    from netgen.studies.tolerance import run_tolerance

    text, name = _text_and_name(design, "netgen.tolerance")
    settings = dict(from_api(overrides) or {})
    ex = executor(jobs, cluster)
    try:
        t = run_tolerance(text, name, settings, int(runs), int(seed), ex, progress)
    finally:
        ex.close()
    cols, body = table(t.outcome, t.lead)
    doc = jsonable(t.document(cols))
    out = frame(cols, body)
    _attach(out, "yield", doc["yield"])
    _attach(out, "stats", doc["stats"])
    return out


def _si_unit(text: str, name: str, settings: dict, param: str) -> str:
    """A number given in SI, written with the parameter's SI unit for `--vary`'s reader."""
    d = load_text(text, name, settings)
    unit = d.params.get(param, (0.0, ""))[1]
    return "" if unit in ("", "1") else f" {unit}"


def _attach(table, key: str, value) -> None:
    if isinstance(table, dict):
        table[key] = value
    else:
        table.attrs[key] = value
