"""Results as files: transient.csv, summary.json, the matrices (Matrix Market), and atomic writes."""
from __future__ import annotations

import csv
import io
import json
import os
import shutil
import tempfile
from pathlib import Path

import numpy as np

from netgen import __version__
from netgen.checks.dewpoint import dew_point
from netgen.checks.results import Results
from netgen.model.design import Design
from netgen.model.errors import NetgenError
from netgen.model.jsonsafe import jsonable
from netgen.solve.assembly import assemble


def _cannot_write(path: Path, e: OSError) -> NetgenError:
    """An OSError on writing as the user's error (exit 2), naming the path."""
    why = e.strerror or str(e)
    at = Path(os.fsdecode(e.filename)) if isinstance(e.filename, (str, bytes, os.PathLike)) else None
    where = f"`{path}` (at `{at}`)" if at is not None and at in Path(path).parents else f"`{path}`"
    return NetgenError(f"cannot write {where}: {why}", None,
                       "choose a place you can write to, in a folder (not inside a file), with space left")


def make_dir(path: Path) -> None:
    """`mkdir -p`, with an OSError turned into a NetgenError."""
    try:
        Path(path).mkdir(parents=True, exist_ok=True)
    except OSError as e:
        raise _cannot_write(Path(path), e) from None


def _temporary(path: Path, text: str | bytes) -> str:
    """`text` in a new temporary file beside `path`, with the usual mode; its name."""
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", dir=path.parent)
    try:
        if isinstance(text, bytes):
            with os.fdopen(fd, "wb") as f:
                f.write(text)
        else:
            with os.fdopen(fd, "w", encoding="utf-8", newline="") as f:
                f.write(text)
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes the file private; give it the usual mode
    except BaseException:
        _remove(tmp)
        raise
    return tmp


def _backup(path: Path) -> str:
    """A second name for the file at `path` (a hard link, else a copy), to put it back with."""
    fd, keep = tempfile.mkstemp(prefix=f".{path.name}.old.", dir=path.parent)
    os.close(fd)
    os.unlink(keep)
    try:
        os.link(path, keep)
    except OSError:
        shutil.copy2(path, keep)
    return keep


def _remove(path) -> None:
    try:
        os.unlink(path)
    except FileNotFoundError:
        pass


def write_set(files: dict[Path, str | bytes]) -> None:
    """Write several files as one set: each to a temporary beside it, then all renamed into
    place. If any step fails (or is interrupted), the new files are removed and the old ones
    are put back, so a reader finds the whole old set or the whole new one, never a mix and
    never half a file. An OSError becomes a NetgenError naming the file."""
    files = {Path(p): t for p, t in files.items()}
    tmps: dict[Path, str] = {}
    backups: dict[Path, str] = {}
    placed: list[Path] = []
    path = next(iter(files), Path("."))
    try:
        for path, text in files.items():
            make_dir(path.parent)
            tmps[path] = _temporary(path, text)
        if len(files) > 1:  # one file is replaced atomically; a set keeps the old ones until all are in
            for path in files:
                if path.exists():
                    backups[path] = _backup(path)
        for path in files:
            os.replace(tmps[path], path)
            placed.append(path)
    except BaseException as e:
        for p in placed:
            if p in backups:
                os.replace(backups.pop(p), p)
            else:
                _remove(p)
        for p in files:
            if p not in placed and p in tmps:
                _remove(tmps[p])
        for b in backups.values():
            _remove(b)
        if isinstance(e, OSError):
            raise _cannot_write(path, e) from None
        raise
    for b in backups.values():
        _remove(b)


def write_atomic(path: Path, text: str | bytes) -> None:
    """Write via a temporary file in the same directory and rename, so a crash never leaves half
    a file; an OSError becomes a NetgenError naming the file."""
    write_set({Path(path): text})


# ---- output paths, checked before any work starts -------------------------------------------------
def _shown(option: str, text: str) -> str:
    return f"{option} {text}" if text else f'{option} ""'


def _writable_parent(path: Path, shown: str) -> None:
    """The nearest existing folder above `path` (the one a write would create folders in) is a
    folder, and one this process may write in."""
    p = path
    while not os.path.lexists(p) and p != p.parent:
        p = p.parent
    if not p.is_dir():
        raise NetgenError(f"{shown}: `{p}` is a file, so nothing can be written inside it", None,
                          "name a new or existing folder (not a path through a file)")
    if not os.access(p, os.W_OK | os.X_OK):
        raise NetgenError(f"{shown}: cannot write in `{p}` (permission denied)", None,
                          "choose a folder you can write to")


def output_dir(text: str | None, option: str, write: bool = True, label: str | None = None) -> Path | None:
    """An output folder named on the command line (`--out DIR`), checked before any work: not
    empty, not an existing file, not inside a file, writable (with `write=False` only a folder
    to read from, if it exists). None if the option was not given. Messages start with
    `OPTION DIR`, or with `label` for a folder the user did not name."""
    if text is None:
        return None
    shown = label or _shown(option, text)
    hint = f"name a new or existing folder, e.g. {option} results" if label is None else \
        f"name another folder with {option} DIR"
    if not text.strip():
        raise NetgenError(f"{shown}: the folder name is empty", None, hint)
    path = Path(text)
    if os.path.lexists(path) and not path.is_dir():
        raise NetgenError(f"{shown}: `{path}` is a file, not a folder", None, hint)
    if write:
        _writable_parent(path, shown)
    return path


def output_file(text: str | None, option: str) -> Path | None:
    """An output file named on the command line (`-o OUT`), checked before any work: not empty,
    not a folder, its folder writable (it may not exist yet). None if the option was not given."""
    if text is None:
        return None
    shown = _shown(option, text)
    if not text.strip():
        raise NetgenError(f"{shown}: the file name is empty", None, f"name a file, e.g. {option} out.txt")
    path = Path(text)
    if path.is_dir() or text.endswith(("/", os.sep)):
        raise NetgenError(f"{shown}: `{path}` is a folder, not a file", None, f"name a file, e.g. {option} {path / 'out'}")
    _writable_parent(path.parent, shown)
    return path


def summary(res: Results) -> dict:
    d = res.design
    out: dict = {"design": d.title, "file": d.file, "netgen": __version__}
    out["steady"] = dict(res.steady) if res.steady is not None else {}
    if res.time is not None:
        out["transient"] = {
            s: {"min": float(np.min(w)), "max": float(np.max(w)), "final": float(w[-1])}
            for s, w in res.waveforms.items() if s in res.signals
        }
        out["transient_stats"] = dict(res.stats, points=int(len(res.time)), until=float(res.time[-1]))
        if res.stats.get("partial"):
            out["partial"] = True  # the transient stopped early; see transient_stats.stopped
    if res.modes is not None:
        out["modes"] = [m.as_dict() for m in res.modes]
    if res.forecast:
        out["forecast"] = [dict(vars(f)) for f in res.forecast]
    if res.responses:
        out["responses"] = [{"signal": r.signal, "input": r.input, "unit": r.unit, "points": len(r.frequency),
                             "from": float(r.frequency[0]), "to": float(r.frequency[-1])} for r in res.responses]
    if res.figures:
        out["modules"] = res.figures
    if res.cautions:
        out["cautions"] = res.cautions
    if d.humidity is not None:
        out["dew_point"] = dew_point(d.humidity.relative, d.humidity.air)
    if res.events:
        out["events"] = [{"element": e["element"], "what": e["what"], "time": float(e["time"])} for e in res.events]
    if res.checks:
        out["expectations"] = [
            {"text": c.text, "measured": c.measured, "limit": c.limit, "unit": c.unit, "passed": c.passed}
            for c in res.checks
        ]
    if res.windows:
        out["windows"] = [{k: w[k] for k in ("line", "start", "end", "duration")} for w in res.windows]
    return out


def transient_csv(res: Results) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    names = [s for s in res.signals if s in res.waveforms]
    w.writerow(["time"] + names)
    cols = [res.time] + [res.waveforms[s] for s in names]
    for row in zip(*cols):
        w.writerow([repr(float(v)) for v in row])
    return buf.getvalue()


def response_csv(res: Results) -> str:
    """`frequency` in Hz, then per response `|SIGNAL / INPUT|` and `phase(SIGNAL / INPUT)` in degrees."""
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["frequency"] + [h for r in res.responses for h in (f"|{r.label}|", f"phase({r.label})")])
    cols = [res.responses[0].frequency] + [c for r in res.responses for c in (r.magnitude, r.phase)]
    for row in zip(*cols):
        w.writerow([repr(float(v)) for v in row])
    return buf.getvalue()


def write_outputs(res: Results, out_dir: Path) -> list[Path]:
    """transient.csv (with a transient) and summary.json, written as one set (`write_set`)."""
    files: dict[Path, str] = {}
    if res.time is not None:
        # A transient that stopped early never replaces a complete one written before.
        p = out_dir / ("transient.partial.csv" if res.stats.get("partial") else "transient.csv")
        files[p] = transient_csv(res)
    if res.responses:
        files[out_dir / "response.csv"] = response_csv(res)
    p = out_dir / ("summary.partial.json" if res.stats.get("partial") else "summary.json")
    files[p] = json.dumps(jsonable(summary(res)), indent=2, allow_nan=False) + "\n"
    write_set(files)
    return list(files)


def write_matrices(d: Design, out_dir: Path) -> list[Path]:
    """G, C (constant parts, switches open at t = 0 state), b(0) and the unknowns' names."""
    import scipy.io

    sys_ = assemble(d)
    make_dir(out_dir)
    written = []
    state = sys_.switch_state(0.0)
    for name, M in (("G", sys_.G(state)), ("C", sys_.C)):
        buf = io.BytesIO()
        scipy.io.mmwrite(buf, M.tocoo(), comment=f"netgen {__version__}: {name} of C*x' + G*x + f(x) = b(t) at t = 0")
        p = out_dir / f"{name}.mtx"
        write_atomic(p, buf.getvalue().decode("ascii"))
        written.append(p)
    buf = io.BytesIO()
    scipy.io.mmwrite(buf, sys_.b(0.0).reshape(-1, 1), comment="b(t) at t = 0 (sources)")
    p = out_dir / "b.mtx"
    write_atomic(p, buf.getvalue().decode("ascii"))
    written.append(p)
    p = out_dir / "unknowns.txt"
    write_atomic(p, "".join(f"{i}\t{n}\n" for i, n in enumerate(sys_.names)))
    written.append(p)
    if not sys_.linear:
        note = ("# f(x) holds the nonlinear terms (thermoelectric Peltier and Joule heat, self-heating,\n"
                "# temperature-dependent resistors); it is not written as a matrix.\n")
        p = out_dir / "README.txt"
        write_atomic(p, note)
        written.append(p)
    return written


