"""The local error estimate of a TR-BDF2 step, with its filter solve only where it is needed.

TR-BDF2's error estimate (Bank et al. 1985; Hosea & Shampine 1996, eq. (4.2)) is a divided
difference of the derivatives at t, t + γh and t + h:

    est = 2·k·h·( x'(t)/γ − x'(t+γh)/(γ(1−γ)) + x'(t+h)/(1−γ) ),   k = (−3γ² + 4γ − 2)/(12(2−γ)).

For stiff components this overestimates the error, so Hosea and Shampine filter it through the
step's matrix, (C + d·h·J)⁻¹·C·est (Shampine's filtering of the estimate, as in Hairer & Wanner,
Solving ODEs II, IV.8, eq. (8.20) for RADAU5): one more back-substitution per step, a third of
a linear network's solves. The filter only shrinks each component (for the thermal part, with C
diagonal and G symmetric positive semi-definite, by 1/(1 + d·h·λ) in every mode λ ≥ 0 of
C⁻¹G), so a step that passes on the unfiltered estimate would pass on the filtered one too. This
is RADAU5's order of work (Hairer & Wanner, IV.8: the cheap estimate first, the costlier one only
where the cheap one rejects the step): the unfiltered estimate is taken first, from derivatives
already at hand, and the filter solve only when it would reject the step, or when the derivative
at t is not known (the first step, and after a corner where sources jump).
"""
from __future__ import annotations

import math

import numpy as np

GAMMA = 2.0 - math.sqrt(2.0)
D = GAMMA / 2.0
K_ERR = (-3.0 * GAMMA**2 + 4.0 * GAMMA - 2.0) / (12.0 * (2.0 - GAMMA))


def norm(est: np.ndarray, w: np.ndarray) -> float:
    return float(np.sqrt(np.mean((est / w) ** 2))) if len(est) else 0.0


def unfiltered(h: float, xd0: np.ndarray, x: np.ndarray, y1: np.ndarray, xd_new: np.ndarray) -> np.ndarray:
    """The estimate from derivatives of the unknowns themselves: x'(t) given, x'(t + γh) from the
    trapezoidal stage (y1 = x + γh/2·(x'(t) + x'(t+γh))), x'(t + h) from the BDF2 stage."""
    xd1 = (2.0 / (GAMMA * h)) * (y1 - x) - xd0
    return 2.0 * K_ERR * h * (xd0 / GAMMA - xd1 / (GAMMA * (1 - GAMMA)) + xd_new / (1 - GAMMA))
