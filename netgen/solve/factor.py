"""Sparse LU factors with one fill-reducing ordering: the factorisation every solver here uses."""
from __future__ import annotations

import warnings

import scipy.sparse as sp
import scipy.sparse.linalg as spla

# Fill-reducing column order for SuperLU. Minimum degree on the structure of A + Aᵀ suits MNA
# matrices, whose pattern is symmetric: on a 300 × 300 plate it gives half the fill of COLAMD
# and solves a third faster (benchmarks/README.md).
ORDERING = "MMD_AT_PLUS_A"
# How the run's statistics name it (summary.json "transient_stats"). Measured against the
# alternatives issue 15 asked for (benchmarks/README.md): conjugate gradients with algebraic
# multigrid costs 5 to 20 times a back-substitution per solve up to 500 × 500, and a nested-
# dissection ordering (METIS) cuts the fill by at most 12 % but not the solve time; so this one
# factorisation serves every size.
DESCRIPTION = "sparse LU (SuperLU), minimum-degree ordering of A + A^T"


def lu(A: sp.spmatrix):
    """SuperLU factors of A, or None when A is singular."""
    with warnings.catch_warnings():
        warnings.simplefilter("error", sp.linalg.MatrixRankWarning)
        try:
            return spla.splu(sp.csc_matrix(A), permc_spec=ORDERING)
        except (RuntimeError, sp.linalg.MatrixRankWarning):
            return None
