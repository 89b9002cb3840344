"""Tax and depreciation: depreciation shares by method (straight line, declining balance,
MACRS) and cash tax with losses carried forward, for arrays shaped (rows, years).
"""

from __future__ import annotations

import numpy as np

from lcoe.finance import _kernels  # compiled loops; tests set it to None to run the array formulas

# Modified ACRS, general depreciation system, half-year convention: US IRS Publication 946, Table A-1.
MACRS = {
    "macrs_5": [20.00, 32.00, 19.20, 11.52, 11.52, 5.76],
    "macrs_7": [14.29, 24.49, 17.49, 12.49, 8.93, 8.92, 8.93, 4.46],
    "macrs_15": [5.00, 9.50, 8.55, 7.70, 6.93, 6.23, 5.90, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 5.90, 5.91, 2.95],
    "macrs_20": [3.750, 7.219, 6.677, 6.177, 5.713, 5.285, 4.888, 4.522, 4.462, 4.461, 4.462, 4.461, 4.462,
                 4.461, 4.462, 4.461, 4.462, 4.461, 4.462, 4.461, 2.231],
}


def depreciation_shares(method: str, years: int, lifetime: int) -> np.ndarray:
    """Share of the depreciable base written off in each operating year t = 1..L.

    ``straight_line``: 1/N a year. ``declining_balance``: twice the straight-line rate
    on the remaining book value, switching to straight line over the remaining years
    when that is larger. ``macrs_*``: US IRS Publication 946, Table A-1 (half-year
    convention). Whatever is left at the end of the life is written off in year L,
    so the shares always sum to one.
    """
    if method == "straight_line":
        shares = np.full(years, 1.0 / years)
    elif method == "declining_balance":
        shares = np.empty(years)
        book = 1.0
        for t in range(years):
            dep = max(book * 2.0 / years, book / (years - t))
            dep = min(dep, book)
            shares[t] = dep
            book -= dep
    else:
        shares = np.asarray(MACRS[method], float) / 100.0
    out = np.zeros(lifetime)
    k = min(lifetime, shares.size)
    out[:k] = shares[:k]
    out[lifetime - 1] += 1.0 - out.sum()
    return out


def tax_with_carryforward(taxable, rate):
    """Cash tax with losses carried forward without limit, never negative.

    The income taxed in year t is the rise of the running maximum of cumulative
    taxable income (starting from zero): a loss builds a pool that later profits
    use up before any tax is due.
    """
    taxable = np.asarray(taxable, float)
    if taxable.size == 0 or taxable.min() >= 0:   # no loss anywhere: tax is simply rate * income
        return rate * taxable
    if _kernels is not None and taxable.ndim == 2:
        rows = np.ascontiguousarray(np.broadcast_to(np.asarray(rate, float).reshape(-1, 1),
                                                    (taxable.shape[0], 1))[:, 0])
        return _kernels.carry_rows(np.ascontiguousarray(taxable), rows, np.empty_like(taxable))
    if taxable.ndim < 2:
        return _carry(taxable, rate)
    # rows without a loss keep the plain product, so a row's tax never depends on its batch
    return np.where((taxable < 0).any(axis=-1, keepdims=True), _carry(taxable, rate), rate * taxable)


def _carry(taxable, rate):
    cum = np.cumsum(taxable, axis=-1)
    np.maximum(cum, 0.0, out=cum)
    peak = np.maximum.accumulate(cum, axis=-1)
    taxed = np.empty_like(peak)
    taxed[..., :1] = peak[..., :1]
    np.subtract(peak[..., 1:], peak[..., :-1], out=taxed[..., 1:])
    return rate * taxed
