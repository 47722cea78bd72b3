"""Absolute temperatures and temperature differences: the affine rule, one pass over each value.

A temperature is either absolute (a point on the scale: `T(x)`, `25 degC`, `T` in a material
law) or a difference (`T(a) - T(b)`, `T(a, b)`). Every temperature-valued expression carries a
*weight*, the sum of the coefficients of the absolute temperatures in it: 1 is absolute, 0 a
difference. So

    absolute − absolute = difference (1 − 1 = 0)     absolute ± difference = absolute (1 ± 0)
    (T(a) + T(b)) / 2   = absolute (a mean)          absolute + absolute = 2: an error

A number in K may be either (`300 K` is absolute in `fixed r 300 K` and in `T - 300 K`, a
difference in `< 3 K`), so its weight is unknown (None), as is that of any sum it enters, and
it is never refused. A product or quotient reads an absolute temperature on
the kelvin scale, which is meaningful for measured ones (`T(a) / T(b)`, `Q(x) / T(x)`), but a
value written in degC multiplied by anything but a plain number is refused: `2 W/K * 25 degC`
is 596.3 W, not 50 W. A value whose weight is neither 0 nor 1 is refused where it is complete,
and a degC value where a difference is meant (a limit of a difference, a tolerance, a ΔT) is
refused by the statement that means the difference (`is_absolute`).
"""
from __future__ import annotations

from netgen.model import units as U

EPS = 1e-9


def _is(w, target) -> bool:
    return w is not None and abs(w - target) < EPS


def is_absolute(t) -> bool:
    """A Typed value that is certainly an absolute temperature (it holds a degC value or a
    measured temperature with weight 1)."""
    return t.dim == U.TEMPERATURE and _is(t.weight, 1)


def is_difference(t) -> bool:
    return t.dim == U.TEMPERATURE and _is(t.weight, 0)


def add(a, b, sign: int):
    """Weight and degC mark of a ± b (both of one dimension)."""
    if a.dim != U.TEMPERATURE or a.weight is None or b.weight is None:
        return None, False
    return a.weight + sign * b.weight, a.degc or b.degc


def scale(a, factor):
    """Weight of a temperature times a plain constant."""
    if a.weight is None:
        return None, a.degc
    return a.weight * factor, a.degc


def product_problem(a, b) -> str | None:
    """Why a * b or a / b (not a plain-constant scaling) mixes up the scale, or None.
    Differences may be multiplied freely; measured absolute temperatures read in kelvin."""
    for t in (a, b):
        if t.dim != U.TEMPERATURE or t.weight is None or _is(t.weight, 0):
            continue
        if not _is(t.weight, 1):
            return "sum"
        if t.degc:
            return "degc"
    return None


def product_weight(a, b, dim):
    """A product's weight: a difference stays a difference when scaled by anything."""
    if dim != U.TEMPERATURE:
        return None, False
    for t in (a, b):
        if t.dim == U.TEMPERATURE and _is(t.weight, 0):
            return 0.0, False
    return None, False


def complete_problem(t) -> str | None:
    """Why a finished temperature value is neither absolute nor a difference, or None."""
    if t.dim != U.TEMPERATURE or t.weight is None or _is(t.weight, 0) or _is(t.weight, 1):
        return None
    return (f"this adds up to {t.weight:g} absolute temperatures, which is neither a temperature nor a "
            "difference of two")


HINT_SUM = ("subtract two temperatures for a difference (`T(a) - T(b)`), add a difference in K to one "
            "(`25 degC + 5 K`), or take a mean as `(T(a) + T(b)) / 2`")
HINT_DEGC = ("a degC value is absolute (25 degC is 298.15 K): multiply a difference instead "
             "(`(T_hot - T_cold) * 2 W/K`), or write the kelvin value in K if that is what is meant")
