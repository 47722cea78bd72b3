"""Shared test helpers: the outside circuit simulator, skipped locally when absent, required on CI."""
from __future__ import annotations

import contextlib
import os
import shutil
import signal

import pytest


def find_ngspice() -> str:
    """ngspice's path; skips the test where it is not installed, fails on CI (CI=true)."""
    exe = shutil.which("ngspice")
    if exe is None:
        if os.environ.get("CI") == "true":
            pytest.fail("ngspice is not installed on CI (apt-get install -y ngspice)")
        pytest.skip("ngspice is not installed (apt-get install -y ngspice): no outside simulator to compare with")
    return exe


def jacobian_by_differences(sys, x, state):
    """The Jacobian of F at x by central differences, column by column: the outside check on the
    assembled, analytic one (common practice)."""
    import numpy as np

    F = lambda y: sys.F(y, 0.0, state)
    num = np.zeros((sys.n, sys.n))
    for j in range(sys.n):
        h = 1e-6 * max(1.0, abs(x[j]))
        e = np.zeros(sys.n)
        e[j] = h
        num[:, j] = (F(x + e) - F(x - e)) / (2 * h)
    return num


class _TooSlow(BaseException):
    """Raised by `deadline` in the main thread (SIGALRM); a BaseException so nothing on the way catches it."""


@contextlib.contextmanager
def deadline(seconds: float):
    """Fail a test that hangs (the code before the fix looped or blocked) instead of waiting."""
    def ring(signum, frame):
        raise _TooSlow(f"still running after {seconds} s")

    old = signal.signal(signal.SIGALRM, ring)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        signal.signal(signal.SIGALRM, old)


@pytest.fixture(scope="session")
def ngspice() -> str:
    return find_ngspice()
