"""Every example reads, checks and runs; its expectations pass (demo data, invented values)."""
from pathlib import Path

import pytest

import netgen

EXAMPLES = sorted((Path(__file__).resolve().parents[1] / "examples").glob("*.etn"))


@pytest.mark.parametrize("path", EXAMPLES, ids=[p.name for p in EXAMPLES])
def test_example_runs(path):
    d = netgen.load(path)
    res = d.run()
    assert res.steady is not None or res.time is not None
    for c in res.checks:
        assert c.passed, f"{path.name}: {c.text}: measured {c.measured}"
