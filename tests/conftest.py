"""Shared test helpers: the outside circuit simulator, skipped locally when absent, required on CI."""
from __future__ import annotations

import os
import shutil

import pytest


def find_ngspice() -> str:
    """ngspice's path; skips the test where it is not installed, fails on CI (CI=true)."""
    exe = shutil.which("ngspice")
    if exe is None:
        if os.environ.get("CI") == "true":
            pytest.fail("ngspice is not installed on CI (apt-get install -y ngspice)")
        pytest.skip("ngspice is not installed (apt-get install -y ngspice): no outside simulator to compare with")
    return exe


@pytest.fixture(scope="session")
def ngspice() -> str:
    return find_ngspice()
