"""Compiled inner loops of the batch engine (numba), one row at a time.

Some calculations are sequential by nature and cost the most in a large batch: the
IRR of each row (an iteration per row), the tax of each row with losses carried
forward (a recurrence over the years), the coverage ratios and the failure counts.
Here they run as compiled loops over the rows, releasing the GIL so that Monte Carlo
chunks on several threads run at once. :func:`trial_rows` goes further for Monte Carlo
trials: each trial's yearly lines and every metric in one pass, without storing the
lines. The arithmetic is the same as the array formulas documented in
:mod:`lcoe.finance.metrics`, :mod:`lcoe.finance.cashflow` and :mod:`lcoe.engine`; the results agree
with numpy-financial and with those formulas (tests/test_kernels.py).
"""

from __future__ import annotations

import numpy as np
from numba import njit

OK, NO_SIGN_CHANGE, NO_ROOT = 0, 1, 2


@njit(cache=True, nogil=True)
def _npv_x(c, x):
    """f(x) = sum c_t x^t and f'(x) for one row of cash flows, by Horner's rule."""
    f = 0.0
    d = 0.0
    for k in range(c.shape[0] - 1, -1, -1):
        d = d * x + f
        f = f * x + c[k]
    return f, d


@njit(cache=True, nogil=True)
def _bisect_x(c, lo, hi, flo):
    """A root of sum c_t x^t between lo and hi (f(lo) = flo, f(hi) of the other sign)."""
    for _ in range(200):
        mid = 0.5 * (lo + hi)
        fm, _ = _npv_x(c, mid)
        if np.sign(fm) == np.sign(flo):
            lo, flo = mid, fm
        else:
            hi = mid
        if abs(hi - lo) <= 1e-16 * abs(hi):
            break
    return 0.5 * (lo + hi)


@njit(cache=True, nogil=True)
def _closest_root(c, found, x_low, x_high):
    """The rate closest to zero among the roots between x_low and x_high, given one root
    ``found`` (NaN if none was found). Cash flows that change sign more than once can
    have several IRRs; the one closest to zero is reported, as numpy-financial does.
    Each side of zero is scanned outward on a grid of 16 rates up to ``|found|`` (512
    over the whole range when none was found) and the first sign change refined by
    bisection; two roots closer together than the grid's step can be missed."""
    r_low = 1.0 / x_high - 1.0
    r_high = 1.0 / x_low - 1.0
    known = np.isfinite(found)
    steps = 16 if known else 512
    best = found
    f0, _ = _npv_x(c, 1.0)
    if f0 == 0.0:
        return 0.0
    xs = np.empty(steps)
    fs = np.empty(steps)
    for side in (1.0, -1.0):
        limit = r_high if side > 0 else r_low
        span = abs(found) if known else abs(limit)
        m = 0
        for k in range(1, steps + 1):
            r = side * span * k / steps
            if (side > 0 and r >= r_high) or (side < 0 and r <= r_low):
                break
            xs[m] = 1.0 / (1.0 + r)
            m += 1
        # the polynomial at every grid point in one pass (Horner's rule, independent lanes)
        fs[:m] = 0.0
        for j in range(c.shape[0] - 1, -1, -1):
            cj = c[j]
            for k in range(m):
                fs[k] = fs[k] * xs[k] + cj
        prev_x, prev_f = 1.0, f0
        for k in range(m):
            x, fx = xs[k], fs[k]
            if fx == 0.0 or np.sign(fx) != np.sign(prev_f):
                if known and k == steps - 1 and side * found > 0:
                    break           # the last step ends at the root already found
                cand = 1.0 / x - 1.0 if fx == 0.0 else 1.0 / _bisect_x(c, prev_x, x, prev_f) - 1.0
                if not np.isfinite(best) or abs(cand) < abs(best):
                    best = cand
                break
            prev_x, prev_f = x, fx
    return best


@njit(cache=True, nogil=True)
def _sign_changes(c):
    """(how often the row ``c`` changes sign, zeros skipped; whether every value is finite)."""
    changes = 0
    last = 0.0
    finite = True
    for k in range(c.shape[0]):
        v = c[k]
        if not np.isfinite(v):
            finite = False
        elif v != 0.0:
            sv = 1.0 if v > 0 else -1.0
            if last != 0.0 and sv != last:
                changes += 1
            last = sv
    return changes, finite


CONTINUE, CONVERGED, FAILED = 0, 1, 2


@njit(cache=True, nogil=True, inline="always")
def _halley_step(f, d, dd, x, tol):
    """Halley's step (Newton's with the second derivative: cubic convergence near the
    root) from x, given f, f' and f'' there. Returns (new x, CONTINUE / CONVERGED / FAILED)."""
    den = 2.0 * d * d - f * dd
    if den != 0.0:
        step = 2.0 * f * d / den
    elif d != 0.0:
        step = f / d
    else:
        return x, FAILED
    xn = x - step
    if not np.isfinite(xn) or xn <= 0:
        return x, FAILED
    if abs(step) <= tol * abs(xn):
        return xn, CONVERGED
    return xn, CONTINUE


@njit(cache=True, nogil=True)
def _halley_pair(a, b, xa, xb, tol, max_iter):
    """Halley's method on two rows of cash flows of one length at once, from xa and xb
    (x = 1 / (1 + r)); f, f' and f'' by Horner's rule. The two rows' sums are
    independent, so the processor works on both together. Returns the two rates (NaN
    where the iteration did not converge)."""
    sa = CONTINUE
    sb = CONTINUE
    for _ in range(max_iter):
        fa = da = dda = 0.0
        fb = db = ddb = 0.0
        for k in range(a.shape[0] - 1, -1, -1):
            dda = dda * xa + 2.0 * da
            da = da * xa + fa
            fa = fa * xa + a[k]
            ddb = ddb * xb + 2.0 * db
            db = db * xb + fb
            fb = fb * xb + b[k]
        if sa == CONTINUE:
            xa, sa = _halley_step(fa, da, dda, xa, tol)
        if sb == CONTINUE:
            xb, sb = _halley_step(fb, db, ddb, xb, tol)
        if sa != CONTINUE and sb != CONTINUE:
            break
    return (1.0 / xa - 1.0 if sa == CONVERGED else np.nan), (1.0 / xb - 1.0 if sb == CONVERGED else np.nan)


@njit(cache=True, nogil=True)
def _irr_finish(c, rate, changes, finite, x_low, x_high):
    """The IRR of a row from Halley's result ``rate`` (NaN if it failed): bisection on
    [x_low, x_high] where it failed; where the flows change sign more than once, the
    root closest to zero (:func:`_closest_root`). Returns (rate, status)."""
    if changes == 0 or not finite:
        return np.nan, (NO_SIGN_CHANGE if finite else NO_ROOT)
    if not np.isfinite(rate):
        flo, _ = _npv_x(c, x_low)
        fhi, _ = _npv_x(c, x_high)
        if np.sign(flo) * np.sign(fhi) <= 0:
            rate = 1.0 / _bisect_x(c, x_low, x_high, flo) - 1.0
    if changes > 1:
        rate = _closest_root(c, rate, x_low, x_high)
    if not np.isfinite(rate):
        return np.nan, NO_ROOT
    return rate, OK


@njit(cache=True, nogil=True)
def _irr_pair(a, b, xa, xb, tol, max_iter, x_low, x_high):
    """IRRs of two rows of one length: Halley's method from xa and xb (both rows at once),
    then :func:`_irr_finish`. Returns (rate a, status a, rate b, status b)."""
    ca, fin_a = _sign_changes(a)
    cb, fin_b = _sign_changes(b)
    ra, rb = _halley_pair(a, b, xa, xb, tol, max_iter)
    ra, st_a = _irr_finish(a, ra, ca, fin_a, x_low, x_high)
    rb, st_b = _irr_finish(b, rb, cb, fin_b, x_low, x_high)
    return ra, st_a, rb, st_b


@njit(cache=True, nogil=True)
def irr_rows(c, guess, tol, max_iter, x_low, x_high):
    """IRR of each row of ``c`` (rows, periods), two rows at a time (:func:`_irr_pair`),
    every row from x = 1 / (1 + guess). Returns (rates, status)."""
    n = c.shape[0]
    rates = np.full(n, np.nan)
    status = np.zeros(n, np.int8)
    x0 = 1.0 / (1.0 + guess)
    for i in range(0, n, 2):
        j = min(i + 1, n - 1)
        rates[i], status[i], rates[j], status[j] = _irr_pair(c[i], c[j], x0, x0, tol, max_iter, x_low, x_high)
    return rates, status


@njit(cache=True, nogil=True)
def _carry_one(taxable, r, out):
    """Tax of one row with losses carried forward without limit, never negative."""
    pool = 0.0
    for t in range(taxable.shape[0]):
        x = taxable[t]
        if x <= 0.0:
            pool -= x
            out[t] = 0.0
        elif pool >= x:
            pool -= x
            out[t] = 0.0
        else:
            out[t] = r * (x - pool)
            pool = 0.0


@njit(cache=True, nogil=True)
def carry_rows(taxable, rate, out):
    """Tax of each row with losses carried forward without limit, never negative:
    ``out = rate * taxed``, ``rate`` one value per row."""
    for i in range(taxable.shape[0]):
        _carry_one(taxable[i], rate[i], out[i])
    return out


@njit(cache=True, nogil=True)
def _coverage_one(dscr, cfads, debt_service, debt, disc, equity):
    """(min DSCR, average DSCR, LLCR, payback year) of one row; ``disc`` holds the
    discount factors at the debt's interest rate; see :func:`coverage_rows`."""
    lo = np.inf
    total = 0.0
    count = 0
    pv = 0.0
    for t in range(dscr.shape[0]):
        if debt_service[t] > 0:
            d = dscr[t]
            if np.isfinite(d):
                lo = min(lo, d)
                total += d
                count += 1
            pv += cfads[t] * disc[t]
    mn = np.nan
    avg = np.nan
    llcr = np.nan
    payback = np.nan
    if count:
        mn = lo
        avg = total / count
    if debt > 0:
        llcr = pv / debt
    cum = 0.0
    for t in range(equity.shape[0]):
        cum += equity[t]
        if cum >= 0:
            payback = t
            break
    return mn, avg, llcr, payback


@njit(cache=True, nogil=True)
def coverage_rows(dscr, cfads, debt_service, debt, disc, equity):
    """Per row: minimum and average DSCR over the years with debt service, the LLCR (PV
    at the interest rate of CFADS over those years, over the debt; ``disc`` the discount
    factors at that rate) and the first year in which the cumulative equity cash flow is
    non-negative. Arrays are (rows, L + 1) with column 0 = t = 0; ``debt_service`` and
    ``disc`` may have one row for all."""
    n = dscr.shape[0]
    one_ds = debt_service.shape[0] == 1
    mn = np.full(n, np.nan)
    avg = np.full(n, np.nan)
    llcr = np.full(n, np.nan)
    payback = np.full(n, np.nan)
    for i in range(n):
        mn[i], avg[i], llcr[i], payback[i] = _coverage_one(dscr[i], cfads[i], debt_service[0 if one_ds else i],
                                                           debt[i], disc[_row(disc, i)], equity[i])
    return mn, avg, llcr, payback


@njit(cache=True, nogil=True)
def add_failures_many(u, cdf, cost_per_event, days_per_event, turbines, cost, downtime):
    """Failure counts of several components, by inverting each one's Poisson CDF (one
    uniform per turbine-fleet year), with their cost and downtime share added to
    ``cost`` and ``downtime``: ``u`` (components, rows, years) uniforms; ``cdf``
    (components, steps) padded with 1.0; ``cost_per_event`` and ``days_per_event``
    (components, rows). The count is the number of CDF steps below u,
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


@njit(cache=True, nogil=True, inline="always")
def _row(a, i):
    """Row index into an argument that holds one row for every trial or one for all."""
    return i if a.shape[0] > 1 else 0


@njit(cache=True, nogil=True)
def trial_rows(ratio, gross, loss_factor, availability, downtime, degradation, energy_factor, price_credit,
               fixed_real, variable, esc_index, lease, decom, shares, tax_rate, capex, interest, debt_service,
               equity0, dc_nominal, dc_real, dc_equity, dc_debt, debt, guess_project, guess_equity, tol,
               max_iter, x_low, x_high, has_waterfall, dsra_target, mra_target, deposit_rate, lockup_dscr,
               sweep, balance_close, out):
    """The lean yearly lines and every Monte Carlo metric of each trial, one row at a time.

    The same formulas, in the same order of operations, as ``lcoe.finance.cashflow.evaluate``
    and ``lcoe.engine.batch_metrics`` (tests/test_kernels.py holds the two to each
    other), without (trials, years) arrays in between. Yearly arguments are (1 or n, L)
    over t = 1..L, discount factors (1 or n, L + 1) from t = 0 (nominal, real, equity
    target and debt interest rate), per-trial values (1 or n,).
    ``out`` (17, n) receives, in this order: LCOE nominal and real, project NPV, equity
    NPV, project IRR, equity IRR, minimum and average DSCR, LLCR, payback year, year-1
    and mean net energy, mean O&M (NaN where a metric does not exist), and from the cash
    waterfall (``has_waterfall``; :func:`waterfall_one` with the DSRA and MRA targets (1 or n,
    L + 1), deposit rate and lock-up DSCR (1 or n,)) whether any year was in lock-up, whether
    the DSRA was drawn, whether any debt service was left unpaid (1.0 / 0.0), and the cash
    trapped over the life (zeros without a waterfall).
    """
    n = out.shape[1]
    L = ratio.shape[1]
    pre = np.empty(L)
    taxable_u = np.empty(L)
    taxable_l = np.empty(L)
    tax_u = np.empty(L)
    tax_l = np.empty(L)
    project = np.empty(L + 1)
    equity = np.empty(L + 1)
    cfads = np.empty(L + 1)
    dscr = np.empty(L + 1)
    ds_row = np.empty(L + 1)
    lines = np.zeros((22, L + 1))
    pre1 = np.zeros(L + 1)
    tx1 = np.zeros(L + 1)
    int1 = np.zeros(L + 1)
    bal1 = np.zeros(L + 1)
    x_project = 1.0 / (1.0 + guess_project)
    x_equity = 1.0 / (1.0 + guess_equity)
    for i in range(n):
        ri, gi, li = _row(ratio, i), _row(gross, i), _row(loss_factor, i)
        ai, di, gdi, ei = _row(availability, i), _row(downtime, i), _row(degradation, i), _row(energy_factor, i)
        pi, fi, vi, xi, lsi = _row(price_credit, i), _row(fixed_real, i), _row(variable, i), _row(esc_index, i), \
            _row(lease, i)
        dci, shi, tri, ci = _row(decom, i), _row(shares, i), _row(tax_rate, i), _row(capex, i)
        ii, dsi, e0i = _row(interest, i), _row(debt_service, i), _row(equity0, i)
        ni, rli, eqi, dri, dbi = _row(dc_nominal, i), _row(dc_real, i), _row(dc_equity, i), _row(dc_debt, i), \
            _row(debt, i)
        cap = capex[ci]
        cost = 0.0
        en_nominal = 0.0
        en_real = 0.0
        energy_sum = 0.0
        opex_sum = 0.0
        year1 = 0.0
        for t in range(L):
            e = gross[gi] * ratio[ri, t]
            e = e * loss_factor[li] * availability[ai, t] * (1.0 - downtime[di, t]) * degradation[gdi, t]
            e = e * energy_factor[ei]
            rev = e * price_credit[pi, t]
            om = (fixed_real[fi, t] + variable[vi] * e) * esc_index[xi, t] + lease[lsi] * rev
            p = rev - om - decom[dci, t]
            dep = cap * shares[shi, t]
            pre[t] = p
            taxable_u[t] = p - dep
            taxable_l[t] = p - dep - interest[ii, t]
            cost += (om + decom[dci, t]) * dc_nominal[ni, t + 1]
            en_nominal += e * dc_nominal[ni, t + 1]
            en_real += e * dc_real[rli, t + 1]
            energy_sum += e
            opex_sum += om
            if t == 0:
                year1 = e
        _carry_one(taxable_u, tax_rate[tri], tax_u)
        _carry_one(taxable_l, tax_rate[tri], tax_l)
        project[0] = -cap
        equity[0] = equity0[e0i]
        cfads[0] = 0.0
        dscr[0] = np.nan
        ds_row[0] = 0.0
        npv_project = -cap * dc_nominal[ni, 0]
        for t in range(L):
            project[t + 1] = pre[t] - tax_u[t]
            c = pre[t] - tax_l[t]
            d = debt_service[dsi, t]
            cfads[t + 1] = c
            ds_row[t + 1] = d
            dscr[t + 1] = c / d if d > 0 else np.nan
            equity[t + 1] = c - d
            npv_project += project[t + 1] * dc_nominal[ni, t + 1]
        lock_any = drawn = unpaid = trapped = 0.0
        if has_waterfall:
            if sweep:
                bci = _row(balance_close, i)
                for t in range(L):
                    pre1[t + 1] = pre[t]
                    tx1[t + 1] = taxable_u[t]
                    int1[t + 1] = interest[ii, t]
                    bal1[t + 1] = balance_close[bci, t]
            waterfall_one(cfads, ds_row, dsra_target[_row(dsra_target, i)], mra_target[_row(mra_target, i)],
                          deposit_rate[_row(deposit_rate, i)], lockup_dscr[_row(lockup_dscr, i)], equity0[e0i],
                          lines, sweep, pre1, tx1, int1, bal1, tax_rate[tri])
            if sweep:
                for t in range(1, L + 1):
                    cfads[t] = lines[17, t]
                    ds_row[t] = lines[18, t]
                    dscr[t] = cfads[t] / ds_row[t] if ds_row[t] > 0 else np.nan
            for t in range(L + 1):
                equity[t] = lines[15, t]
                if lines[14, t] > 0:
                    lock_any = 1.0
                if lines[2, t] > 0:
                    drawn = 1.0
                if lines[4, t] > 0:
                    unpaid = 1.0
                trapped += lines[8, t]
        npv_equity = equity[0] * dc_equity[eqi, 0]
        for t in range(L):
            npv_equity += equity[t + 1] * dc_equity[eqi, t + 1]
        cost += cap
        out[0, i] = cost / en_nominal if en_nominal > 0 else np.nan
        out[1, i] = cost / en_real if en_real > 0 else np.nan
        out[2, i] = npv_project
        out[3, i] = npv_equity
        out[4, i], _, out[5, i], _ = _irr_pair(project, equity, x_project, x_equity, tol, max_iter, x_low, x_high)
        out[6, i], out[7, i], out[8, i], out[9, i] = _coverage_one(dscr, cfads, ds_row, debt[dbi], dc_debt[dri],
                                                                   equity)
        out[10, i] = year1
        out[11, i] = energy_sum / L
        out[12, i] = opex_sum / L
        out[13, i] = lock_any
        out[14, i] = drawn
        out[15, i] = unpaid
        out[16, i] = trapped
    return out


@njit(cache=True, nogil=True)
def waterfall_one(cfads, ds, a, b, rate, lock, equity0, lines, sweep, pre, taxable, interest, balance, tax_rate):
    """The cash waterfall of one row (``lcoe.finance.waterfall``, which documents the order and
    holds the array version): ``cfads``, ``ds`` and the DSRA and MRA targets ``a``, ``b`` over
    t = 0..L; ``lines`` (22, L + 1) receives the lines in the order of ``waterfall.LINES``.
    With ``sweep`` the cash of a locked-up year prepays the debt: the later debt service,
    interest and balance fall pro rata, and each year's tax (losses carried forward) and CFADS
    follow from ``pre`` (pre-tax cash), ``taxable`` (before interest) and the interest paid."""
    L1 = cfads.shape[0]
    lines[:, :] = 0.0
    K = 1.0
    pool = 0.0
    D = a[0]
    M = b[0]
    T = 0.0
    lines[6, 0] = D
    lines[7, 0] = M
    lines[11, 0] = D
    lines[12, 0] = M
    lines[15, 0] = equity0 - D - M
    for t in range(1, L1):
        c_t = cfads[t]
        d_t = ds[t]
        if sweep:
            d_t = K * ds[t]
            x = taxable[t] - K * interest[t]
            tax = 0.0
            if x <= 0.0:
                pool -= x
            elif pool >= x:
                pool -= x
            else:
                tax = tax_rate * (x - pool)
                pool = 0.0
            c_t = pre[t] - tax
            lines[19, t] = K * interest[t]
            lines[20, t] = tax
        lines[17, t] = c_t
        lines[18, t] = d_t
        inc = rate * (D + M + T)
        mrel = max(M - b[t], 0.0)
        M = M - mrel
        after = c_t + inc + mrel - d_t
        dd = min(D, max(-after, 0.0))
        D = D - dd
        after = after + dd
        dt = min(T, max(-after, 0.0))
        T = T - dt
        after = after + dt
        u = max(-after, 0.0)
        after = after + u
        a_t = K * a[t] if sweep else a[t]
        rel = max(D - a_t, 0.0)
        top = min(after, max(a_t - D, 0.0))
        D = D - rel + top
        after = after + rel - top
        mtop = min(after, max(b[t] - M, 0.0))
        M = M + mtop
        after = after - mtop
        locked = lock > 0 and d_t > 0 and c_t / d_t < lock
        prepaid = 0.0
        if locked and sweep:
            owed = K * balance[t]
            prepaid = min(after, owed)
            K = K * (1.0 - prepaid / owed) if owed > 0 else K
            trapped = 0.0
            released = T
            dist = after - prepaid + T
            T = 0.0
        elif locked:
            trapped = after
            released = 0.0
            dist = 0.0
            T = T + after
        else:
            trapped = 0.0
            released = T
            dist = after + T
            T = 0.0
        if t == L1 - 1:
            dist = dist + D + M + T
            rel = rel + D
            released = released + T
            mrel = mrel + M
            D = 0.0
            M = 0.0
            T = 0.0
        lines[0, t] = inc
        lines[1, t] = mrel
        lines[2, t] = dd
        lines[3, t] = dt
        lines[4, t] = u
        lines[5, t] = rel
        lines[6, t] = top
        lines[7, t] = mtop
        lines[8, t] = trapped
        lines[9, t] = released
        lines[10, t] = dist
        lines[11, t] = D
        lines[12, t] = M
        lines[13, t] = T
        lines[14, t] = 1.0 if locked else 0.0
        lines[15, t] = dist - u
        lines[16, t] = prepaid
        if sweep:
            lines[21, t] = K * balance[t]


@njit(cache=True, nogil=True)
def waterfall_rows(cfads, ds, a, b, rate, lock, equity0, out, sweep, pre, taxable, interest, balance, tax_rate):
    """:func:`waterfall_one` for each row; ``out`` (22, rows, L + 1); with ``sweep`` the rows'
    pre-tax cash, taxable income before interest, scheduled interest and closing balance, and
    tax rate (each (rows, L + 1) or (rows,))."""
    for i in range(cfads.shape[0]):
        waterfall_one(cfads[i], ds[i], a[i], b[i], rate[i], lock[i], equity0[i], out[:, i, :], sweep, pre[i],
                      taxable[i], interest[i], balance[i], tax_rate[i])
    return out


@njit(cache=True, nogil=True)
def fund_rows(capex, debt, fee, dsra, shares, qrate, cshare, equity_first, tol, max_iter, out):
    """The equity of each row's construction funding (``lcoe.finance.construction.fund``, which
    documents it and holds the array version): per-row ``capex``, ``debt``, ``fee``, ``dsra``
    (1 or n,), the quarters' ``shares`` and interest ``qrate``, the commitment fee per quarter
    ``cshare`` (1 or n, Q). ``out`` (n,) receives uses - debt."""
    q = shares.shape[0]
    for i in range(out.shape[0]):
        cap = capex[_row(capex, i)]
        d = debt[_row(debt, i)]
        f = fee[_row(fee, i)]
        a = dsra[_row(dsra, i)]
        ci = _row(cshare, i)
        idc = 0.0
        cf = 0.0
        limit = tol * max(cap, 1.0)
        for _ in range(max_iter):
            uses = cap + f + idc + cf + a
            left = uses - d
            g = d / uses if uses > 0 else 0.0
            e0 = min(f, left) if equity_first else f * (1.0 - g)
            left -= e0
            bal = f - e0
            new_idc = 0.0
            new_cf = 0.0
            for k in range(q):
                ik = bal * qrate[k]
                ck = max(d - bal, 0.0) * cshare[ci, k]
                use = cap * shares[k] + ik + ck + (a if k == q - 1 else 0.0)
                e = min(use, max(left, 0.0)) if equity_first else use * (1.0 - g)
                left -= e
                bal += use - e
                new_idc += ik
                new_cf += ck
            done = abs(new_idc - idc) <= limit and abs(new_cf - cf) <= limit
            idc = new_idc
            cf = new_cf
            if done:
                break
        out[i] = cap + f + idc + cf + a - d
    return out
