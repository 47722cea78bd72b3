"""Segmented legs: a material-form module (`couples ... material ... segments N`) cut into N slices.

A leg whose Seebeck coefficient, resistivity and conductivity depend on temperature is, in the
lumped form, one module with S, R, K taken at the mean side temperature, so both Peltier terms
use one S. With `segments N` each leg is N slices of length LENGTH/N in series, heat and current
passing from one to the next through N − 1 internal thermal nodes without heat capacity
(`NAME.joint1` next to side A, ..., `NAME.joint{N-1}` next to side B). Slice j lies between
T_{j-1} and T_j (T_0 = side A, T_N = side B) and is itself a lumped module with

    S_j, R_j, K_j = the module's S, R·(1/N), K·N at the slice's mean (T_{j-1} + T_j)/2,

written with the same three equations as the whole module (`thermoelectric.equations`). At an
internal node the heat of slice j given to it and the heat slice j+1 takes from it differ by
(S_j − S_{j+1})·T_j·I + ½(R_j + R_{j+1})·I² plus conduction: the Peltier heat of a junction
between slices of different S at that junction's temperature — the Thomson heat, falling where
it arises — and the Joule heat of the two halves. Each slice conserves energy exactly (heat
given − heat taken = its V·I), so the module does too. The pins see the sum of the slices'
voltages.
"""
from __future__ import annotations

from netgen.model.expr import Binary, Const

MAX_SEGMENTS = 1000


def joint_names(name: str, n: int) -> list[str]:
    """The internal thermal nodes of module `name` cut into `n` slices, from side A to side B."""
    return [f"{name}.joint{j}" for j in range(1, n)]


def chain(e) -> list[str]:
    """Side A, the joints, side B of a module: slice j lies between chain[j-1] and chain[j]."""
    return [e.a, *joint_names(e.name, e.segments), e.b]


def slice_props(props: tuple, n: int) -> tuple:
    """The module's S, R, K expressions of T for one of n slices: S, R/n, K·n."""
    s, r, k = props
    return s, Binary("*", Const(1.0 / n), r), Binary("*", Const(float(n)), k)


def slices(e) -> list[tuple[str, str]]:
    """(side-A node, side-B node) of each slice of module e, from side A to side B."""
    c = chain(e)
    return list(zip(c[:-1], c[1:]))
