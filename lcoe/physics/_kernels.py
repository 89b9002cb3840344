"""Compiled inner loop of the energy table lookup (numba): linear interpolation on an
evenly spaced grid, the cell index computed rather than searched. The array formula it
repeats is :func:`lcoe.physics.energy._interp_uniform`'s numpy branch (tests/test_kernels.py).
"""

from __future__ import annotations

from numba import njit


@njit(cache=True, nogil=True)
def interp_uniform(x, x0, h, fp, out):
    """Linear interpolation in a table on the evenly spaced grid x0 + h k (clipped to it)."""
    last = fp.shape[0] - 1
    flat_x = x.reshape(-1)
    flat_out = out.reshape(-1)
    for j in range(flat_x.shape[0]):
        pos = (flat_x[j] - x0) / h
        if pos <= 0.0:
            flat_out[j] = fp[0]
            continue
        if pos >= last:
            flat_out[j] = fp[last]
            continue
        i = int(pos)
        w = pos - i
        flat_out[j] = fp[i] + w * (fp[i + 1] - fp[i])
    return out
