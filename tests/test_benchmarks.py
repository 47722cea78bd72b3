"""A smoke run of benchmarks/run.py at its smallest size: it runs and prints its table (no timings
are checked here; the measurements live in the README)."""
from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

SCRIPT = Path(__file__).resolve().parents[1] / "benchmarks" / "run.py"


@pytest.mark.slow
def test_benchmark_script_runs_at_the_smallest_size(tmp_path):
    r = subprocess.run([sys.executable, str(SCRIPT), "--sizes", "10", "--steps", "20", "--nonlinear", "10",
                        "--work", str(tmp_path / "work"), "--json", str(tmp_path / "bench.json")],
                       capture_output=True, text=True, timeout=600)
    assert r.returncode == 0, r.stderr[-3000:]
    assert "| grid10 | 102 |" in r.stdout
    assert "| modules10 |" in r.stdout
    assert "nonlinear 10² ÷ its linear twin" in r.stdout
    assert (tmp_path / "bench.json").is_file()
    # The accuracy columns (benchmarks/accuracy.py): netgen's default run within 1 mK of its own
    # run at tolerance 1e-7 (issue 15's "default accuracy" bar), and the outside simulator's
    # temperatures measured against the same reference at each of its settings.
    import json

    grid = json.loads((tmp_path / "bench.json").read_text())["results"][0]
    assert grid["case"] == "grid10"
    assert 0 <= grid["error_mk"] < 1.0
    settings = grid.get("spice_settings") or {}
    if settings:  # ngspice installed (CI installs it)
        assert settings["stated"]["error_mk"] < 1.0  # reltol 1e-9: far inside a millikelvin
