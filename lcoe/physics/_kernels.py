"""Compiled inner loop of the energy table lookup (numba): AEP(f)/AEP(1) at speed factors f,
the cell computed on the evenly spaced grid, the steps of hours crossing cut-out placed exactly.
The array formula it repeats is :func:`lcoe.physics.site._table_lookup` (tests/test_kernels.py).
"""

from __future__ import annotations

import numpy as np
from numba import njit


@njit(cache=True, nogil=True)
def factor_table(x, grid, ratios, slopes, exact, steps, step_cum, starts, out):
    """The AEP(f)/AEP(1) table at factors ``x`` (see :func:`lcoe.physics.site._table_lookup`, its
    array formula): on a grid factor its value; inside cell i, ratios[i] + w slopes[i]
    minus the steps between grid[i] and x; NaN outside the grid or in an exact cell.
    The grid is evenly spaced: the cell is computed, then checked against the grid."""
    last = grid.shape[0] - 1
    x0 = grid[0]
    h = (grid[last] - x0) / last
    n_steps = steps.shape[0]
    flat_x = x.reshape(-1)
    flat_out = out.reshape(-1)
    for j in range(flat_x.shape[0]):
        xj = flat_x[j]
        if not (xj >= x0 and xj <= grid[last]):
            flat_out[j] = np.nan
            continue
        i = min(int((xj - x0) / h), last - 1)
        while i > 0 and xj < grid[i]:
            i -= 1
        while i < last - 1 and xj >= grid[i + 1]:
            i += 1
        lo, hi = grid[i], grid[i + 1]
        if xj == lo:
            flat_out[j] = ratios[i]
        elif xj == hi:
            flat_out[j] = ratios[i + 1]
        elif exact[i]:
            flat_out[j] = np.nan
        else:
            value = ratios[i] + (xj - lo) / (hi - lo) * slopes[i]
            first = starts[i]
            k = first
            while k < n_steps and steps[k] < xj:
                k += 1
            if k > first:
                value -= step_cum[k] - step_cum[first]
            flat_out[j] = value
    return out
