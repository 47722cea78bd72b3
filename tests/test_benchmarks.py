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
