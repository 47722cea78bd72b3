"""Plots of design studies (matplotlib, Agg): a line per column over one varied parameter, a map
per column over two, a histogram per column of a tolerance study."""
from __future__ import annotations

import io
from pathlib import Path

import numpy as np

from netgen.outputs.files import write_set
from netgen.outputs.plots import CURVE, DPI, SIZE, slug


def _png(fig) -> bytes:
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()


def _figure():
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    fig = Figure(figsize=SIZE, dpi=DPI, layout="constrained")
    FigureCanvasAgg(fig)
    return fig


def _label(name: str, unit: str) -> str:
    return f"{name} ({unit})" if unit and unit != "1" else name


def sweep_plots(folder: Path, axes: list, columns: list[str], body: list[dict], best: dict | None = None) -> list[Path]:
    """One PNG per measured column: a line over one varied parameter, a coloured map over two
    (the first on the x axis). `axes` are studies.grid.Axis; `body` the rows as dicts."""
    names = [a.name for a in axes]
    measured = [c for c in columns if c not in names and c != "error" and not c.startswith("pass@")]
    files = {}
    for col in measured:
        fig = _figure()
        ax = fig.add_subplot()
        if len(axes) == 1:
            a = axes[0]
            pts = sorted((d[a.name], d.get(col)) for d in body if isinstance(d.get(col), float))
            if not pts:
                continue
            x, y = np.array(pts).T
            ax.plot(x, y, "o-", color=CURVE, lw=1.8, ms=3.5)
            if best and best.get("column") == col and a.name in best["parameters"]:
                ax.plot([best["parameters"][a.name]], [best["value"]], "*", color="#c23b22", ms=12, label="best")
                ax.legend(fontsize=8)
            if a.log:
                ax.set_xscale("log")
            ax.set_xlabel(_label(a.name, a.unit))
            ax.set_ylabel(col)
            ax.grid(True, color="0.9", lw=0.8)
        elif len(axes) == 2:
            a, b = axes
            xs, ys = a.values(), b.values()
            z = np.full((len(ys), len(xs)), np.nan)
            for d in body:
                v = d.get(col)
                if isinstance(v, float):
                    i = int(np.argmin(np.abs(xs - d[a.name])))
                    j = int(np.argmin(np.abs(ys - d[b.name])))
                    z[j, i] = v
            if np.all(np.isnan(z)):
                continue
            mesh = ax.pcolormesh(xs, ys, np.ma.masked_invalid(z), shading="nearest", cmap="viridis")
            fig.colorbar(mesh, ax=ax, label=col)
            if a.log:
                ax.set_xscale("log")
            if b.log:
                ax.set_yscale("log")
            ax.set_xlabel(_label(a.name, a.unit))
            ax.set_ylabel(_label(b.name, b.unit))
        else:
            continue  # three or more varied parameters: the table only
        ax.set_title(col, loc="left", fontsize=10)
        files[folder / f"sweep_{slug(col)}.png"] = _png(fig)
    write_set(files)
    return list(files)


def histograms(folder: Path, columns: list[str], body: list[dict]) -> list[Path]:
    """One PNG per measured column of a tolerance study: the runs' values as a histogram."""
    files = {}
    for col in columns:
        values = np.array([d[col] for d in body if isinstance(d.get(col), float) and d[col] == d[col]])
        if len(values) == 0 or col.startswith("pass@"):
            continue
        fig = _figure()
        ax = fig.add_subplot()
        ax.hist(values, bins=min(50, max(5, int(np.sqrt(len(values))))), color=CURVE, alpha=0.85)
        ax.axvline(float(np.mean(values)), color="#c23b22", lw=1.2, label="mean")
        ax.set_xlabel(col)
        ax.set_ylabel("runs")
        ax.set_title(f"{col}: {len(values)} runs", loc="left", fontsize=10)
        ax.legend(fontsize=8)
        ax.grid(True, color="0.9", lw=0.8)
        files[folder / f"tolerance_{slug(col)}.png"] = _png(fig)
    write_set(files)
    return list(files)
