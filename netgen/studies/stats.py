"""Summaries of a tolerance study: the yield of each expectation with its 95 % confidence
interval, and each measured column's mean, standard deviation, percentiles and worst run."""
from __future__ import annotations

import math

import numpy as np

Z95 = 1.959963984540054  # the standard normal's 97.5 % point: a two-sided 95 % interval


def wilson_interval(passed: int, n: int, z: float = Z95) -> tuple[float, float]:
    """The Wilson score interval of a binomial share (E. B. Wilson, "Probable inference, the law
    of succession, and statistical inference", J. Amer. Statist. Assoc. 22 (1927) 209-212): unlike
    the normal approximation it stays inside [0, 1] and is not empty when every run passes."""
    if n == 0:
        return 0.0, 1.0
    p = passed / n
    denom = 1 + z * z / n
    centre = (p + z * z / (2 * n)) / denom
    half = z * math.sqrt(p * (1 - p) / n + z * z / (4 * n * n)) / denom
    return max(0.0, centre - half), min(1.0, centre + half)


def column_stats(runs: list[int], values: list[float], worst: str = "far") -> dict:
    """mean, std (n − 1), p1, p50, p99 (linear interpolation between order statistics) and the
    worst run: the largest value (`worst="max"`), the smallest (`"min"`), the farthest from a
    limit (`("far", LIMIT)`) or from the mean (`"far"`)."""
    v = np.asarray(values, dtype=float)
    mean = float(np.mean(v))
    std = float(np.std(v, ddof=1)) if len(v) > 1 else 0.0
    p1, p50, p99 = (float(x) for x in np.percentile(v, [1, 50, 99]))
    if worst == "max":
        k = int(np.argmax(v))
    elif worst == "min":
        k = int(np.argmin(v))
    elif isinstance(worst, tuple):
        k = int(np.argmax(np.abs(v - worst[1])))
    else:
        k = int(np.argmax(np.abs(v - mean)))
    return {"mean": mean, "std": std, "p1": p1, "p50": p50, "p99": p99, "worst": {"run": runs[k], "value": float(v[k])}}
