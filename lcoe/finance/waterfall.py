"""The cash waterfall: reserve accounts, the lock-up test and distributions, year by year.

Each operating year t = 1..L, in this order (a common order in project-finance term
sheets; lenders' models vary in the details):

1. cash available = CFADS_t + interest earned at ``deposit_rate`` on the opening balances of
   the debt service reserve (DSRA), the maintenance reserve (MRA) and the lock-up account
   (deposit interest is not taxed here: a simplification, small at deposit rates);
2. the MRA above its target is released (it pays the planned overhaul, already in O&M);
3. senior debt service is paid; a shortfall is drawn from the DSRA, then from the lock-up
   account; what is still short is **unpaid debt service**, which the sponsor is taken to
   fund (a negative equity cash flow that year), so cash is never created or lost;
4. the DSRA is brought to its target, N/12 of the next year's debt service: topped up from the
   cash left, or released above it (at maturity the target is zero, so it is released);
5. the MRA is topped up towards its target, which builds up evenly over K years before each
   overhaul (the overhaul's nominal cost);
6. the lock-up test: in a year with debt service whose DSCR (CFADS / debt service) is below
   ``lockup_dscr`` nothing is distributed and the cash left is trapped in the lock-up account;
   in a year that passes, the cash left and any trapped cash are distributed;
7. in year L every balance is released and distributed.

With a cash sweep (``waterfall.cash_sweep``) step 6 differs: the cash left in a locked-up year
prepays the senior debt (up to what is owed) instead of being trapped. The prepayment is pro
rata: every later debt service and interest fall by the share of the debt repaid, so each
year's tax (losses carried forward) and CFADS are worked out again in the loop from the pre-tax
cash, the taxable income before interest and the swept interest; the DSRA target follows the
swept debt service.

At t = 0 the DSRA is funded to its first target (N/12 of year 1's debt service), a use of
funds paid by equity. Equity cash flow: -(equity contribution) at t = 0, then distributions
less sponsor-funded debt service. Without reserves and lock-up this is CFADS - debt service,
exactly the engine's equity cash flow without a waterfall.

The lines are computed by :func:`run_rows` here (numpy, a loop over the years on whole
batches) and by the compiled row loop ``lcoe.finance._kernels.waterfall_one`` (Monte Carlo
trials); tests hold the two to each other.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.finance import _kernels  # compiled loops; tests set it to None to run the array formulas

# the yearly lines of the waterfall, in the order of the compiled kernel's output
LINES = ("reserve_interest", "mra_release", "dsra_draw", "lockup_draw", "unpaid_debt_service", "dsra_release",
         "dsra_topup", "mra_topup", "cash_trapped", "trapped_released", "distributions", "dsra_balance",
         "mra_balance", "lockup_balance", "lockup", "equity_cash_flow", "prepayment", "cfads", "debt_service",
         "interest", "tax", "balance")
N_LINES = len(LINES)
# the lines the yearly rows show; with a cash sweep the last five replace the engine's own lines
SHOWN = LINES[:15] + ("prepayment",)
SWEPT = ("cfads", "debt_service", "interest", "tax", "balance")


@dataclass(frozen=True)
class Structure:
    """The waterfall's terms: DSRA months of next year's debt service (0: no DSRA), MRA build-up
    years (0: no MRA), deposit rate, lock-up DSCR (0: no lock-up). Floats or (n, 1) arrays."""

    dsra_months: object = 0.0
    mra_years: int = 0
    deposit_rate: object = 0.0
    lockup_dscr: object = 0.0
    sweep: bool = False


def structure_of(scn, inp=None) -> Structure | None:
    """The waterfall terms of a scenario (``inp``: its batch inputs), None without
    ``[reserves]`` and ``[waterfall]`` (equity then receives CFADS - debt service)."""
    res, wf = scn.reserves, scn.waterfall
    if res is None and wf is None:
        return None
    read = inp if inp is not None else (lambda key, default: default)
    return Structure(
        dsra_months=0.0 if res is None else read("reserves.dsra_months", res.dsra_months),
        mra_years=0 if res is None else res.maintenance_years,
        deposit_rate=0.0 if res is None else read("reserves.deposit_rate", res.deposit_rate),
        lockup_dscr=0.0 if wf is None else read("waterfall.lockup_dscr", wf.lockup_dscr),
        sweep=bool(wf is not None and wf.cash_sweep))


def dsra_targets(debt_service, months, period=None) -> np.ndarray:
    """DSRA target at the end of each year t = 0..L: months / 12 of year t + 1's debt service
    (zero in year L and after maturity). ``debt_service`` (rows, L) over t = 1..L; ``period``
    (the length of each year, a partial first year) makes it N months at next year's pace:
    months / 12 x DS_{t+1} / length_{t+1}."""
    ds = np.asarray(debt_service, float)
    if period is not None:
        ds = ds / np.asarray(period, float)
    nxt = np.concatenate([ds, np.zeros((ds.shape[0], 1))], axis=1)
    return np.asarray(months, float) / 12.0 * nxt


def mra_targets(overhaul_nominal, years_before: int) -> np.ndarray:
    """MRA target at the end of each year t = 0..L: each overhaul of year Y with nominal cost C
    builds up evenly over the K years before it, s = max(1, Y - K) .. Y - 1, the target reaching
    C at the end of year Y - 1 (an overhaul in year 1 has no build-up); ``overhaul_nominal``
    (rows, L) over t = 1..L."""
    oh = np.asarray(overhaul_nominal, float)
    rows, L = oh.shape
    out = np.zeros((rows, L + 1))
    if years_before <= 0:
        return out
    t = np.arange(L + 1)
    for y in range(2, L + 1):
        cost = oh[:, y - 1:y]
        if not np.any(cost):
            continue
        s = max(1, y - years_before)
        n = y - s
        ramp = np.clip((t - s + 1) / n, 0.0, 1.0) * (t < y)
        out += cost * ramp
    return out


def run_rows(cfads, debt_service, equity0, dsra_target, mra_target, deposit_rate, lockup_dscr, sweep=None) -> dict:
    """The waterfall of a batch: ``cfads``, ``debt_service`` (rows or 1, L + 1) with column 0 =
    t = 0; targets (rows or 1, L + 1); ``equity0`` the equity contribution before reserves
    (rows,) (negative); rates per row or one. ``sweep``: None, or (pre-tax cash, taxable income
    before interest, scheduled interest, scheduled closing balance, tax rate), the lines
    (rows or 1, L + 1) and the rate per row, for a cash sweep. Returns line name -> (rows, L + 1)."""
    cfads = np.asarray(cfads, float)
    n, L1 = cfads.shape[0], cfads.shape[1]
    if sweep is not None:
        pre, taxable, interest, balance = (np.ascontiguousarray(np.broadcast_to(np.asarray(x, float), (n, L1)))
                                           for x in sweep[:4])
        tax_rate = np.ascontiguousarray(np.broadcast_to(np.asarray(sweep[4], float).reshape(-1), (n,)))
    else:
        pre = taxable = interest = balance = np.zeros((n, L1))
        tax_rate = np.zeros(n)
    ds = np.broadcast_to(np.asarray(debt_service, float), (n, L1))
    a = np.broadcast_to(np.asarray(dsra_target, float), (n, L1))
    b = np.broadcast_to(np.asarray(mra_target, float), (n, L1))
    rate = np.broadcast_to(np.asarray(deposit_rate, float).reshape(-1), (n,))
    lock = np.broadcast_to(np.asarray(lockup_dscr, float).reshape(-1), (n,))
    if _kernels is not None:
        out = np.zeros((N_LINES, n, L1))
        _kernels.waterfall_rows(np.ascontiguousarray(cfads), np.ascontiguousarray(ds), np.ascontiguousarray(a),
                                np.ascontiguousarray(b), np.ascontiguousarray(rate), np.ascontiguousarray(lock),
                                np.ascontiguousarray(np.broadcast_to(np.asarray(equity0, float).reshape(-1), (n,))),
                                out, sweep is not None, pre, taxable, interest, balance, tax_rate)
        return dict(zip(LINES, out))
    out = {k: np.zeros((n, L1)) for k in LINES}
    D, M, T = a[:, 0].copy(), b[:, 0].copy(), np.zeros(n)
    K, pool = np.ones(n), np.zeros(n)
    out["dsra_topup"][:, 0], out["mra_topup"][:, 0] = D, M
    out["dsra_balance"][:, 0], out["mra_balance"][:, 0] = D, M
    out["equity_cash_flow"][:, 0] = np.asarray(equity0, float).reshape(-1) - D - M
    for t in range(1, L1):
        c_t, d_t = cfads[:, t], ds[:, t]
        if sweep is not None:
            d_t = K * ds[:, t]
            x = taxable[:, t] - K * interest[:, t]
            used = np.where(x > 0, np.minimum(pool, x), 0.0)
            tax = np.where(x > 0, tax_rate * (x - used), 0.0)
            pool = np.where(x > 0, pool - used, pool - x)
            c_t = pre[:, t] - tax
            out["interest"][:, t], out["tax"][:, t] = K * interest[:, t], tax
        out["cfads"][:, t], out["debt_service"][:, t] = c_t, d_t
        inc = rate * (D + M + T)
        mrel = np.maximum(M - b[:, t], 0.0)
        M = M - mrel
        after = c_t + inc + mrel - d_t
        dd = np.minimum(D, np.maximum(-after, 0.0))
        D, after = D - dd, after + dd
        dt = np.minimum(T, np.maximum(-after, 0.0))
        T, after = T - dt, after + dt
        u = np.maximum(-after, 0.0)
        after = after + u
        a_t = K * a[:, t] if sweep is not None else a[:, t]
        rel = np.maximum(D - a_t, 0.0)
        top = np.minimum(after, np.maximum(a_t - D, 0.0))
        D, after = D - rel + top, after + rel - top
        mtop = np.minimum(after, np.maximum(b[:, t] - M, 0.0))
        M, after = M + mtop, after - mtop
        with np.errstate(divide="ignore", invalid="ignore"):
            locked = (lock > 0) & (d_t > 0) & (c_t / np.where(d_t > 0, d_t, 1.0) < lock)
        prepaid = np.zeros(n)
        if sweep is not None:
            owed = K * balance[:, t]
            prepaid = np.where(locked, np.minimum(after, owed), 0.0)
            with np.errstate(divide="ignore", invalid="ignore"):
                K = np.where(locked & (owed > 0), K * (1.0 - prepaid / np.where(owed > 0, owed, 1.0)), K)
            out["balance"][:, t] = K * balance[:, t]
            trapped = np.zeros(n)
            released = T
            dist = after - prepaid + T
            T = np.zeros(n)
        else:
            trapped = np.where(locked, after, 0.0)
            released = np.where(locked, 0.0, T)
            dist = np.where(locked, 0.0, after + T)
            T = np.where(locked, T + after, 0.0)
        if t == L1 - 1:                      # the end of the life: every balance is released
            dist = dist + D + M + T
            rel, released, mrel = rel + D, released + T, mrel + M
            D, M, T = np.zeros(n), np.zeros(n), np.zeros(n)
        for k, v in (("reserve_interest", inc), ("mra_release", mrel), ("dsra_draw", dd), ("lockup_draw", dt),
                     ("unpaid_debt_service", u), ("dsra_release", rel), ("dsra_topup", top), ("mra_topup", mtop),
                     ("cash_trapped", trapped), ("trapped_released", released), ("distributions", dist),
                     ("dsra_balance", D), ("mra_balance", M), ("lockup_balance", T),
                     ("lockup", locked.astype(float)), ("equity_cash_flow", dist - u), ("prepayment", prepaid)):
            out[k][:, t] = v
    return out
