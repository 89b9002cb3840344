"""Compiled inner loops of the batch engine (numba), one row at a time.

Two calculations are sequential by nature and cost the most in a large batch: the
IRR of each row (an iteration per row) and the tax of each row with losses carried
forward (a recurrence over the years). Here they run as compiled loops over the rows,
releasing the GIL so that Monte Carlo chunks on several threads run at once. The
arithmetic is the same as the array formulas documented in :mod:`lcoe.metrics` and
:mod:`lcoe.cashflow`; the results agree with numpy-financial and with those formulas
(tests/test_kernels.py).
"""

from __future__ import annotations

import numpy as np
from numba import njit

OK, NO_SIGN_CHANGE, NO_ROOT = 0, 1, 2


@njit(cache=True, nogil=True)
def _npv_x(c, i, x):
    """f(x) = sum c_t x^t and f'(x) for row i, by Horner's rule."""
    f = 0.0
    d = 0.0
    for k in range(c.shape[1] - 1, -1, -1):
        d = d * x + f
        f = f * x + c[i, k]
    return f, d


@njit(cache=True, nogil=True)
def irr_rows(c, guess, tol, max_iter, x_low, x_high):
    """IRR of each row of ``c`` (rows, periods): Halley's method (Newton's with the second
    derivative) on x = 1 / (1 + r), bisection on [x_low, x_high] where it fails.
    Returns (rates, status)."""
    n = c.shape[0]
    rates = np.full(n, np.nan)
    status = np.zeros(n, np.int8)
    x0 = 1.0 / (1.0 + guess)
    for i in range(n):
        pos = False
        neg = False
        finite = True
        for k in range(c.shape[1]):
            v = c[i, k]
            if v > 0:
                pos = True
            elif v < 0:
                neg = True
            if not np.isfinite(v):
                finite = False
        if not (pos and neg) or not finite:
            status[i] = NO_SIGN_CHANGE if finite else NO_ROOT
            continue
        x = x0
        found = False
        for _ in range(max_iter):
            # Halley's step (f, f', f'' by Horner's rule): cubic convergence near the root
            f = 0.0
            d = 0.0
            dd = 0.0
            for k in range(c.shape[1] - 1, -1, -1):
                dd = dd * x + 2.0 * d
                d = d * x + f
                f = f * x + c[i, k]
            den = 2.0 * d * d - f * dd
            step = 2.0 * f * d / den if den != 0.0 else f / d
            xn = x - step
            if not np.isfinite(xn) or xn <= 0:
                break
            x = xn
            if abs(step) <= tol * max(1.0, abs(xn)):
                found = True
                break
        if found:
            rates[i] = 1.0 / x - 1.0
            continue
        lo, hi = x_low, x_high
        flo, _ = _npv_x(c, i, lo)
        fhi, _ = _npv_x(c, i, hi)
        if np.sign(flo) * np.sign(fhi) > 0:
            status[i] = NO_ROOT
            continue
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            fm, _ = _npv_x(c, i, mid)
            if np.sign(fm) == np.sign(flo):
                lo, flo = mid, fm
            else:
                hi = mid
            if hi - lo <= 1e-16 * hi:
                break
        rates[i] = 1.0 / (0.5 * (lo + hi)) - 1.0
    return rates, status


@njit(cache=True, nogil=True)
def carry_rows(taxable, rate, out):
    """Tax of each row with losses carried forward without limit, never negative:
    ``out = rate * taxed``, ``rate`` one value per row."""
    n, years = taxable.shape
    for i in range(n):
        pool = 0.0
        r = rate[i]
        for t in range(years):
            x = taxable[i, t]
            if x <= 0.0:
                pool -= x
                out[i, t] = 0.0
            elif pool >= x:
                pool -= x
                out[i, t] = 0.0
            else:
                out[i, t] = r * (x - pool)
                pool = 0.0
    return out


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


@njit(cache=True, nogil=True)
def coverage_rows(dscr, cfads, debt_service, debt, rate, equity):
    """Per row: minimum and average DSCR over the years with debt service, the LLCR (PV
    at the interest rate of CFADS over those years, over the debt) and the first year in
    which the cumulative equity cash flow is non-negative. Arrays are (rows, L + 1) with
    column 0 = t = 0; ``debt_service`` may have one row for all."""
    n, cols = dscr.shape
    one_ds = debt_service.shape[0] == 1
    mn = np.full(n, np.nan)
    avg = np.full(n, np.nan)
    llcr = np.full(n, np.nan)
    payback = np.full(n, np.nan)
    for i in range(n):
        lo = np.inf
        total = 0.0
        count = 0
        pv = 0.0
        disc = 1.0
        r = rate[i]
        ds_row = 0 if one_ds else i
        for t in range(cols):
            if t > 0:
                disc /= 1.0 + r
            if debt_service[ds_row, t] > 0:
                d = dscr[i, t]
                if np.isfinite(d):
                    lo = min(lo, d)
                    total += d
                    count += 1
                pv += cfads[i, t] * disc
        if count:
            mn[i] = lo
            avg[i] = total / count
        if debt[i] > 0:
            llcr[i] = pv / debt[i]
        cum = 0.0
        for t in range(cols):
            cum += equity[i, t]
            if cum >= 0:
                payback[i] = t
                break
    return mn, avg, llcr, payback


@njit(cache=True, nogil=True)
def add_failures_many(u, cdf, cost_per_event, days_per_event, turbines, cost, downtime):
    """Failure counts of several components, by inverting each one's Poisson CDF (one
    uniform per turbine-fleet year), with their cost and downtime share added to
    ``cost`` and ``downtime``: ``u`` (components, rows, years) uniforms; ``cdf`` (components, steps) padded with 1.0; ``cost_per_event`` and
    ``days_per_event`` (components, rows). The count is the number of CDF steps below u,
    summed step by step without branches; each row's years are summed over the
    components before they are added, so memory is read and written once."""
    comps, n, years = u.shape
    steps = np.zeros(comps, np.int64)
    for j in range(comps):
        while steps[j] < cdf.shape[1] and cdf[j, steps[j]] < 1.0:
            steps[j] += 1
    counts = np.zeros(years)
    add_cost = np.zeros(years)
    add_down = np.zeros(years)
    for i in range(n):
        add_cost[:] = 0.0
        add_down[:] = 0.0
        for j in range(comps):
            counts[:] = 0.0
            for k in range(steps[j]):
                c = cdf[j, k]
                for t in range(years):
                    counts[t] += u[j, i, t] > c
            cost_j = cost_per_event[j, i]
            share = days_per_event[j, i] / (365.0 * turbines)
            for t in range(years):
                add_cost[t] += counts[t] * cost_j
                add_down[t] += counts[t] * share
        for t in range(years):
            cost[i, t] += add_cost[t]
            downtime[i, t] += add_down[t]
