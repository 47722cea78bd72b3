"""Results as files: transient.csv, summary.json, the matrices (Matrix Market), and atomic writes."""
from __future__ import annotations

import csv
import io
import json
import math
import os
import tempfile
from pathlib import Path

import numpy as np

from netgen import __version__
from netgen.checks.results import Results
from netgen.model.design import Design
from netgen.solve.assembly import assemble


def write_atomic(path: Path, text: str | bytes) -> None:
    """Write via a temporary file in the same directory and rename, so a crash never leaves half a file."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
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
        os.replace(tmp, path)
    except BaseException:
        if os.path.exists(tmp):
            os.unlink(tmp)
        raise


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
    if res.figures:
        out["modules"] = res.figures
    if res.cautions:
        out["cautions"] = res.cautions
    if res.checks:
        out["expectations"] = [
            {"text": c.text, "measured": c.measured, "limit": c.limit, "unit": c.unit, "passed": c.passed}
            for c in res.checks
        ]
    return out


def _strict(value):
    """JSON has no NaN or infinity: those become null."""
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, dict):
        return {k: _strict(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [_strict(v) for v in value]
    return value


def transient_csv(res: Results) -> str:
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    names = [s for s in res.signals if s in res.waveforms]
    w.writerow(["time"] + names)
    cols = [res.time] + [res.waveforms[s] for s in names]
    for row in zip(*cols):
        w.writerow([repr(float(v)) for v in row])
    return buf.getvalue()


def write_outputs(res: Results, out_dir: Path) -> list[Path]:
    written = []
    if res.time is not None:
        # A transient that stopped early never replaces a complete one written before.
        p = out_dir / ("transient.partial.csv" if res.stats.get("partial") else "transient.csv")
        write_atomic(p, transient_csv(res))
        written.append(p)
    p = out_dir / ("summary.partial.json" if res.stats.get("partial") else "summary.json")
    write_atomic(p, json.dumps(_strict(summary(res)), indent=2, allow_nan=False) + "\n")
    written.append(p)
    return written


def write_matrices(d: Design, out_dir: Path) -> list[Path]:
    """G, C (constant parts, switches open at t = 0 state), b(0) and the unknowns' names."""
    import scipy.io

    sys_ = assemble(d)
    out_dir.mkdir(parents=True, exist_ok=True)
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


