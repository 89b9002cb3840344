"""LCOE, NPV, IRR (vectorised), DSCR, LLCR and payback over batches of cash flows.

Sign convention as in numpy-financial: outflows negative, flows at the end of each
period, the first value at t = 0 (not discounted).
"""

from __future__ import annotations

import numpy as np

from lcoe.finance import _kernels  # compiled loops; tests set it to None to run the array formulas

IRR_LOW, IRR_HIGH = -0.99, 10.0


def discount_factors(rate, periods: int, times=None):
    """(1 + r)^-t for t = 0..periods-1; ``rate`` may be an (n, 1) array; ``times`` (periods,)
    replaces t by the time elapsed in years (a partial first year). [-]"""
    return (1.0 + np.asarray(rate, float)) ** -(np.arange(periods) if times is None else np.asarray(times, float))


def npv(rate, values):
    """Net present value with the first value at t = 0 (numpy-financial's convention)."""
    v = np.asarray(values, float)
    return (v * discount_factors(rate, v.shape[-1])).sum(axis=-1)


def _horner(ct, x):
    """f(x) = sum c_t x^t and f'(x) by Horner's rule; ``ct`` is (periods, rows), one row of
    coefficients per period, so each step works on contiguous memory."""
    f = np.zeros(x.shape)
    d = np.zeros(x.shape)
    for k in range(ct.shape[0] - 1, -1, -1):
        d *= x
        d += f
        f *= x
        f += ct[k]
    return f, d


def irr(values, *, guess=0.1, tol=1e-9, max_iter=50):
    """Internal rate of return of each row of cash flows (vectorised).

    Solves sum c_t x^t = 0 for the discount factor x = 1 / (1 + r) with Newton's
    method, the polynomial and its derivative evaluated by Horner's rule. A row stops
    once its Newton step is below ``tol`` (relative): convergence is quadratic, so the
    step just taken leaves an error of the order of tol^2. A converged root counts
    wherever it lies (r > -100 %). Rows where Newton does not converge fall back to
    bisection on r in [-99 %, 1000 %]; rows with no sign change, or with no root found
    either way, give NaN. Flows that change sign more than once can have several IRRs
    (Descartes' rule of signs); for those the one closest to zero is reported, as
    numpy-financial's ``irr`` does.

    Returns
    -------
    (rates, reasons): an (n,) array and a list of (row, reason) for the NaN rows.
    """
    c = np.atleast_2d(np.asarray(values, float))
    n = c.shape[0]
    if _kernels is not None:
        out, status = _kernels.irr_rows(np.ascontiguousarray(c), float(guess), float(tol), int(max_iter),
                                        1.0 / (1.0 + IRR_HIGH), 1.0 / (1.0 + IRR_LOW))
        reasons = [(int(i), "no sign change in the cash flows") for i in np.nonzero(status == 1)[0]]
        reasons += [(int(i), f"no IRR between {IRR_LOW:.0%} and {IRR_HIGH:.0%}") for i in np.nonzero(status == 2)[0]]
        return out, sorted(reasons)
    out = np.full(n, np.nan)
    reasons: list[tuple[int, str]] = []
    has_pos = (c > 0).any(axis=1)
    has_neg = (c < 0).any(axis=1)
    ok = has_pos & has_neg & np.isfinite(c).all(axis=1)
    x = np.full(n, 1.0 / (1.0 + guess))
    active = ok.copy()
    done = np.zeros(n, bool)
    ct = np.ascontiguousarray(c.T)
    with np.errstate(all="ignore"):
        for _ in range(max_iter):
            idx = np.nonzero(active)[0]
            if idx.size == 0:
                break
            whole = idx.size == n
            xi = x if whole else x[idx]
            f, d = _horner(ct if whole else ct[:, idx], xi)
            step = f / d
            xn = xi - step
            bad = ~np.isfinite(xn) | (xn <= 0)
            conv = ~bad & (np.abs(step) <= tol * np.abs(xn))
            x[idx] = np.where(bad, xi, xn)
            done[idx[conv]] = True
            active[idx[conv | bad]] = False
        r = 1.0 / x - 1.0
        good = done & np.isfinite(r) & (r > -1.0)   # a converged Newton root is an IRR wherever it lies
        out[good] = r[good]
        retry = np.nonzero(ok & ~good)[0]
        if retry.size:
            out[retry] = _bisect(c[retry])
        for i in np.nonzero(ok & (_sign_changes(c) > 1))[0]:
            out[i] = _closest_root(c[i], out[i])
    for i in np.nonzero(~(has_pos & has_neg))[0]:
        reasons.append((int(i), "no sign change in the cash flows"))
    for i in np.nonzero((has_pos & has_neg) & np.isnan(out))[0]:
        reasons.append((int(i), f"no IRR between {IRR_LOW:.0%} and {IRR_HIGH:.0%}"))
    return out, reasons


def _sign_changes(c):
    """How often each row of ``c`` changes sign (zeros skipped)."""
    changes = np.zeros(c.shape[0], int)
    for i, row in enumerate(c):
        s = np.sign(row[row != 0])
        changes[i] = np.count_nonzero(s[1:] != s[:-1])
    return changes


def _closest_root(c, found):
    """The IRR closest to zero of flows that change sign more than once (they can have
    several): the real roots x > 0 of sum c_t x^t (numpy.roots, as numpy-financial finds
    them), rates kept within [IRR_LOW, IRR_HIGH], each polished by two Newton steps, and
    ``found``."""
    x = np.roots(c[::-1])
    x = x[(np.abs(x.imag) <= 1e-9 * np.abs(x)) & (x.real > 0)].real
    ct = c.reshape(-1, 1)
    for _ in range(2):
        f, d = _horner(ct, x)
        with np.errstate(all="ignore"):
            x = np.where(d != 0, x - f / d, x)
    r = 1.0 / x - 1.0
    r = r[(r >= IRR_LOW) & (r <= IRR_HIGH)]
    if np.isfinite(found):
        r = np.append(r, found)
    return float(r[np.argmin(np.abs(r))]) if r.size else np.nan


def _bisect(c, iters=200):
    c = np.ascontiguousarray(c.T)
    lo = np.full(c.shape[1], 1.0 / (1.0 + IRR_HIGH))
    hi = np.full(c.shape[1], 1.0 / (1.0 + IRR_LOW))
    flo, _ = _horner(c, lo)
    fhi, _ = _horner(c, hi)
    valid = np.sign(flo) * np.sign(fhi) <= 0
    for _ in range(iters):
        mid = 0.5 * (lo + hi)
        fm, _ = _horner(c, mid)
        left = np.sign(fm) == np.sign(flo)
        lo = np.where(left, mid, lo)
        flo = np.where(left, fm, flo)
        hi = np.where(left, hi, mid)
    x = 0.5 * (lo + hi)
    return np.where(valid, 1.0 / x - 1.0, np.nan)


def real_rate(nominal, inflation):
    """Real discount rate (1 + r) / (1 + inflation) - 1 (Fisher relation). [-]"""
    return (1.0 + np.asarray(nominal, float)) / (1.0 + np.asarray(inflation, float)) - 1.0


def lcoe(capex, opex, decommissioning, energy_mwh, rate, energy_rate=None):
    """Levelised cost of energy, pre-tax and unfinanced. [money/MWh]

    LCOE = [capex + sum PV(O&M_t) + PV(decommissioning)] / sum PV(E_t), costs at
    ``rate`` and energy at ``energy_rate`` (default ``rate``; the real LCOE uses the
    real rate). Arrays are (n, L + 1) with column 0 = t = 0; NaN where the
    discounted energy is zero.
    """
    T = np.shape(opex)[-1]
    dc = discount_factors(rate, T)
    de = dc if energy_rate is None else discount_factors(energy_rate, T)
    cost = np.ravel(capex) + ((np.asarray(opex) + np.asarray(decommissioning)) * dc).sum(axis=-1)
    en = (np.asarray(energy_mwh) * de).sum(axis=-1)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(en > 0, cost / np.where(en > 0, en, 1.0), np.nan)


def dscr_stats(dscr):
    """Minimum and average DSCR over the years with debt service (NaN where none)."""
    d = np.asarray(dscr, float)
    has = np.isfinite(d)
    any_ = has.any(axis=-1)
    with np.errstate(all="ignore"):
        mn = np.where(any_, np.where(has, d, np.inf).min(axis=-1), np.nan)
        avg = np.where(any_, np.where(has, d, 0.0).sum(axis=-1) / np.maximum(has.sum(axis=-1), 1), np.nan)
    return mn, avg


def llcr(cfads, debt_service, debt, rate, times=None):
    """Loan-life coverage ratio: PV at the interest rate of CFADS over the tenor, over the debt
    (``times``: see :func:`discount_factors`; the debt's own clock where year 1 is partial)."""
    T = np.shape(cfads)[-1]
    on = np.asarray(debt_service) > 0
    pv = (np.where(on, cfads, 0.0) * discount_factors(rate, T, times)).sum(axis=-1)
    d = np.ravel(debt)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(d > 0, pv / np.where(d > 0, d, 1.0), np.nan)


def payback_year(cash_flow):
    """First year in which the cumulative cash flow turns non-negative (NaN if never)."""
    cum = np.cumsum(np.asarray(cash_flow, float), axis=-1)
    nonneg = cum >= 0
    first = np.argmax(nonneg, axis=-1).astype(float)
    return np.where(nonneg.any(axis=-1), first, np.nan)


def coverage(dscr, cfads, debt_service, debt, rate, equity_cash_flow, times=None):
    """(min DSCR, average DSCR, LLCR, payback year) per row, as :func:`dscr_stats`,
    :func:`llcr` and :func:`payback_year` define them (one compiled pass where available)."""
    n = np.shape(cfads)[0]
    if _kernels is not None:
        disc = np.atleast_2d(discount_factors(rate, np.shape(cfads)[-1], times))
        debt_rows = np.ascontiguousarray(np.broadcast_to(np.asarray(debt, float).reshape(-1, 1), (n, 1))[:, 0])
        return _kernels.coverage_rows(np.ascontiguousarray(dscr, dtype=float), np.ascontiguousarray(cfads, dtype=float),
                                      np.ascontiguousarray(debt_service, dtype=float), debt_rows,
                                      np.ascontiguousarray(disc), np.ascontiguousarray(equity_cash_flow, dtype=float))
    mn, avg = dscr_stats(dscr)
    return mn, avg, llcr(cfads, debt_service, debt, rate, times), payback_year(equity_cash_flow)
