"""Compiled inner loop of the portfolio's Gaussian copula (numba).

:func:`correlate_in_place` multiplies independent standard normals by the lower-triangular
factor of the sites' correlation matrix, x = C z, tile by tile so that the normals of
every site stay in the processor's cache. Each result is summed in one fixed order (site
0 first), so it is the same bit for bit on every run, thread or worker: unlike a BLAS
product, whose summation order changes with its thread count. The array formula it
repeats is ``chol @ z`` (tests/test_kernels.py holds the two to each other).
"""

from __future__ import annotations

import numpy as np
from numba import njit

TILE = 256      # values of each site per tile: sites x TILE doubles stay in the cache


@njit(cache=True, nogil=True)
def correlate_in_place(chol, z):
    """``z`` (sites, m) of independent standard normals becomes ``chol @ z`` in place;
    ``chol`` (sites, sites) is lower-triangular. Row s is written after the rows below it
    are used, from the last site up, so no copy of ``z`` is needed; each value is the sum
    of chol[s, j] z[j] over j = 0..s in that order."""
    sites, m = z.shape
    acc = np.empty(TILE)
    for start in range(0, m, TILE):
        w = min(TILE, m - start)
        for s in range(sites - 1, -1, -1):
            for k in range(w):
                acc[k] = 0.0
            for j in range(s + 1):
                c = chol[s, j]
                zj = z[j, start:start + w]
                for k in range(w):
                    acc[k] += c * zj[k]
            for k in range(w):
                z[s, start + k] = acc[k]
    return z
