"""The dew point of moist air, by the Magnus formula with the coefficients of Alduchov and
Eskridge (1996, J. Appl. Meteor. 35, 601-609): over water, within 0.4 % in vapour pressure from
-40 °C to 50 °C.

    γ = ln(RH) + a·t / (b + t),    t_dew = b·γ / (a − γ),    a = 17.625, b = 243.04 °C

with t and t_dew in °C and RH the relative humidity as a fraction.
"""
from __future__ import annotations

import math

A = 17.625
B = 243.04  # °C
ZERO_C = 273.15


def dew_point(relative: float, air: float) -> float:
    """Dew point in K of air at `air` K with relative humidity `relative` (0 < RH <= 1)."""
    t = air - ZERO_C
    gamma = math.log(relative) + A * t / (B + t)
    return B * gamma / (A - gamma) + ZERO_C
