"""Reader of Berkeley raw files (binary and ASCII), the result files circuit simulators write."""
from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from netgen.model.errors import NetgenError


class RawError(NetgenError):
    """A raw file that cannot be read: truncated, or not in the Berkeley raw format."""


@dataclass
class Plot:
    """One analysis of a raw file: its name (`Operating Point`, `Transient Analysis`, ...), the
    vector names as written (lower-cased: simulators ignore case), and one column per vector."""

    name: str
    flags: str
    names: list[str]
    kinds: list[str]
    data: np.ndarray  # (points, vectors); complex when the flags say so

    def __contains__(self, vector: str) -> bool:
        return vector.lower() in self.names

    def __getitem__(self, vector: str) -> np.ndarray:
        try:
            return self.data[:, self.names.index(vector.lower())]
        except ValueError:
            raise KeyError(vector) from None

    @property
    def complex(self) -> bool:
        return "complex" in self.flags.lower()


def read_raw(source: Path | str | bytes) -> list[Plot]:
    """Every plot in a raw file (a path, or the file's bytes), in the order written."""
    data = source if isinstance(source, bytes) else Path(source).read_bytes()
    plots: list[Plot] = []
    pos = 0
    while True:
        pos = _skip_blank(data, pos)
        if pos >= len(data):
            return plots
        plot, pos = _plot(data, pos)
        plots.append(plot)


def find_plot(plots: list[Plot], name: str) -> Plot | None:
    """The last plot whose name starts with `name` (ngspice writes `Transient Analysis`)."""
    hits = [p for p in plots if p.name.lower().startswith(name.lower())]
    return hits[-1] if hits else None


def _skip_blank(data: bytes, pos: int) -> int:
    while pos < len(data) and data[pos:pos + 1] in (b"\n", b"\r", b" ", b"\t"):
        pos += 1
    return pos


def _line(data: bytes, pos: int) -> tuple[str, int]:
    end = data.find(b"\n", pos)
    if end < 0:
        end = len(data)
    # Header text is ASCII; latin-1 never fails, so an odd title cannot stop the reader.
    return data[pos:end].decode("latin-1").rstrip("\r"), end + 1


def _plot(data: bytes, pos: int) -> tuple[Plot, int]:
    """One header (`Key: value` lines, the variable list) and the data block after it."""
    header: dict[str, str] = {}
    names: list[str] = []
    kinds: list[str] = []
    while True:
        if pos >= len(data):
            raise RawError("the raw file ends inside a header (no `Binary:` or `Values:` line)")
        line, pos = _line(data, pos)
        if "Variables" in header and line[:1] in (" ", "\t") and line.strip():
            parts = line.split()  # index, name, kind [, more attributes]
            if len(parts) < 2:
                raise RawError(f"the raw file's variable line `{line.strip()[:40]}` has no name")
            names.append(parts[1].lower())
            kinds.append(parts[2] if len(parts) > 2 else "")
            continue
        key, _, value = line.partition(":")
        key = key.strip()
        header[key] = value.strip()
        if key in ("Binary", "Values"):
            break
    try:
        nvar, npts = int(header["No. Variables"]), int(header["No. Points"])
    except (KeyError, ValueError):
        raise RawError("the raw file's header has no `No. Variables` or `No. Points`") from None
    if nvar < 1 or npts < 0:
        raise RawError(f"the raw file's header says {nvar} variables and {npts} points")
    if len(names) != nvar:
        raise RawError(f"the raw file's header lists {len(names)} variables but says {nvar}")
    flags = header.get("Flags", "real")
    cplx = "complex" in flags.lower()
    if key == "Binary":
        arr, pos = _binary(data, pos, nvar, npts, cplx)
    else:
        arr, pos = _ascii(data, pos, nvar, npts, cplx)
    if cplx:  # ngspice leaves the imaginary half of its real scale (frequency) uninitialised
        for j, k in enumerate(kinds):
            if k in ("frequency", "time"):
                arr[:, j] = arr[:, j].real
    plot = Plot(header.get("Plotname", ""), flags, names, kinds, arr)
    _check_values(plot)
    return plot, pos


def _check_values(plot: Plot) -> None:
    """Every value a number (no NaN or infinity), and time, the scale of a transient, never
    going back. A simulator that writes anything else has failed, whatever its exit code said."""
    bad = ~np.isfinite(plot.data)
    if bad.any():
        i, j = (int(k[0]) for k in np.nonzero(bad))
        raise RawError(f"the raw file's `{plot.name}` has a value that is not a number: "
                       f"{plot.names[j]} = {plot.data[i, j]} at point {i}")
    if "time" in plot:
        t = np.real(plot["time"])
        back = np.flatnonzero(np.diff(t) < 0)
        if back.size:
            i = int(back[0])
            raise RawError(f"the raw file's times go back: {float(t[i + 1])!r} s at point {i + 1} comes after {float(t[i])!r} s")


def _binary(data: bytes, pos: int, nvar: int, npts: int, cplx: bool) -> tuple[np.ndarray, int]:
    """Little-endian doubles, point by point (a complex value is two: real, imaginary). The
    format stores the writer's native byte order; every machine ngspice runs on today is
    little-endian."""
    per = 2 * nvar if cplx else nvar
    size = 8 * per * npts
    if pos + size > len(data):
        raise RawError(f"the raw file is truncated: {npts} points of {nvar} vectors need {size} bytes, "
                       f"{len(data) - pos} are left")
    arr = np.frombuffer(data, "<f8", per * npts, pos).reshape(npts, per)
    if cplx:
        arr = arr[:, 0::2] + 1j * arr[:, 1::2]
    return arr.copy(), pos + size


def _ascii(data: bytes, pos: int, nvar: int, npts: int, cplx: bool) -> tuple[np.ndarray, int]:
    """Each point: its index, then one value per vector (`re,im` when complex), whitespace apart."""
    width = nvar + 1
    toks: list[bytes] = []
    while len(toks) < npts * width:
        if pos >= len(data):
            raise RawError(f"the raw file is truncated: {npts} points of {nvar} vectors expected, "
                           f"{len(toks) // width} found")
        end = data.find(b"\n", pos)
        end = len(data) if end < 0 else end
        toks += data[pos:end].split()
        pos = end + 1
    rows = np.array(toks[:npts * width], dtype=object).reshape(npts, width)[:, 1:] if npts else np.zeros((0, nvar))
    try:
        if cplx:
            pairs = [[complex(*map(float, v.split(b","))) for v in row] for row in rows]
            return np.array(pairs, dtype=complex).reshape(npts, nvar), pos
        return rows.astype(float).reshape(npts, nvar), pos
    except ValueError as e:
        raise RawError(f"the raw file has a value that is not a number: {e}") from None
