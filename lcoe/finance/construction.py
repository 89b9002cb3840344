"""The construction period: capex drawdown, funding, interest during construction and fees.

From financial close the capex is spent quarter by quarter over ``months`` to commercial
operation (COD), by a given profile (shares of each quarter), evenly, or on an S-curve
(the smoothstep F(x) = 3x^2 - 2x^3 of the elapsed share of the period, a common shape, not a
standard). Uses, in order: the upfront debt fee at close; each quarter's capex, the interest
during construction (IDC) on the debt drawn by the start of the quarter and the commitment
fee on the debt not yet drawn (both for the quarter's length, capitalised: paid from that
quarter's funding); at COD the first funding of the debt service reserve. Sources: the debt
(the amount sized on operations, drawn in full by COD) and equity (the rest). ``funding``:
``equity_first`` (equity pays every use until its share is spent, then debt) or
``pro_rata`` (each use at the project's gearing, debt / uses). IDC and the fees depend on
when debt is drawn, which depends on the equity share, which depends on them: the loop
repeats until the uses change by less than 1e-12 of capex.

Interest per quarter is (1 + i)^(months / 12) - 1 on the balance at its start (the last
quarter may be shorter than three months); the commitment fee is the yearly rate times the
quarter's share of a year. The engine keeps its yearly grid: t = 0 is the construction
period (its cash at COD) and the operating years follow; equity contributions made during
construction are counted at t = 0, not compounded. IDC and fees are not tax-deductible here
(the depreciable base stays the capex).
"""

from __future__ import annotations

import calendar
import datetime as dt
import math
from dataclasses import dataclass

import numpy as np

from lcoe.finance import _kernels  # compiled loops; tests set it to None to run the array formulas

TOLERANCE = 1e-12
MAX_ITER = 200


def add_months(day: dt.date, months: int) -> dt.date:
    """The date ``months`` calendar months after ``day`` (the day clipped to the month's length)."""
    y, m = divmod(day.month - 1 + months, 12)
    year, month = day.year + y, m + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def quarters(months: int) -> np.ndarray:
    """The length in months of each quarter from close to COD (the last one may be shorter)."""
    q = math.ceil(months / 3)
    out = np.full(q, 3.0)
    out[-1] = months - 3 * (q - 1)
    return out


def drawdown_shares(profile, months: int) -> np.ndarray:
    """The share of capex spent in each quarter: a list as given, ``even`` by the quarters'
    lengths, or ``s_curve`` (F(x) = 3x^2 - 2x^3 of the elapsed share of the months)."""
    lengths = quarters(months)
    if not isinstance(profile, str):
        return np.asarray(profile, float)
    if profile == "even":
        return lengths / lengths.sum()
    x = np.concatenate([[0.0], np.cumsum(lengths)]) / months
    f = 3 * x ** 2 - 2 * x ** 3
    return np.diff(f)


def operating_share(cod: dt.date) -> float:
    """The share of year 1 in operation when operating years are calendar years and operation
    starts at ``cod``: the months left in its year (the COD month pro rata by days) / 12."""
    days = calendar.monthrange(cod.year, cod.month)[1]
    return (12 - cod.month + (days - cod.day + 1) / days) / 12.0


def period_ends(cod: dt.date, years: int) -> list[str]:
    """The end date of each row t = 0..L: COD for the construction row, then 31 December of
    each operating year, the first in COD's own year."""
    first = cod.year
    return [cod.isoformat()] + [dt.date(first + t - 1, 12, 31).isoformat() for t in range(1, years + 1)]


@dataclass
class Funding:
    """Sources and uses of each row (n,) and the quarter-by-quarter lines (n, Q)."""

    capex: np.ndarray
    upfront_fee: np.ndarray
    idc: np.ndarray
    commitment_fee: np.ndarray
    dsra: np.ndarray
    debt: np.ndarray
    equity: np.ndarray
    capex_q: np.ndarray
    idc_q: np.ndarray
    commitment_q: np.ndarray
    debt_q: np.ndarray
    equity_q: np.ndarray
    iterations: int

    @property
    def uses(self) -> np.ndarray:
        return self.capex + self.upfront_fee + self.idc + self.commitment_fee + self.dsra

    @property
    def sources(self) -> np.ndarray:
        return self.debt + self.equity


def fund(capex, debt, upfront_fee, dsra, shares, lengths, rate, commitment, order: str) -> Funding:
    """Sources and uses of a batch: ``capex``, ``debt``, ``upfront_fee``, ``dsra`` per row (n,)
    or one; ``shares`` and ``lengths`` per quarter; ``rate`` the debt's yearly interest rate,
    ``commitment`` the yearly commitment fee on undrawn debt; ``order`` equity_first | pro_rata."""
    capex, debt, fee, dsra = (np.atleast_1d(np.asarray(a, float)).ravel() for a in (capex, debt, upfront_fee, dsra))
    n = max(a.size for a in (capex, debt, fee, dsra))
    capex, debt, fee, dsra = (np.broadcast_to(a, (n,)) for a in (capex, debt, fee, dsra))
    q = len(shares)
    spend = capex[:, None] * np.asarray(shares, float)[None, :]
    qrate = (1.0 + rate) ** (np.asarray(lengths, float) / 12.0) - 1.0
    cshare = np.asarray(commitment, float).reshape(-1, 1) * np.asarray(lengths, float)[None, :] / 12.0
    idc_total = np.zeros(n)
    cf_total = np.zeros(n)
    tol = TOLERANCE * np.maximum(capex, 1.0)
    for it in range(1, MAX_ITER + 1):
        uses = capex + fee + idc_total + cf_total + dsra
        equity_total = uses - debt
        gearing = np.where(uses > 0, debt / np.where(uses > 0, uses, 1.0), 0.0)
        balance = np.zeros(n)
        equity_left = equity_total.copy()
        idc_q, cf_q, debt_q, eq_q = (np.zeros((n, q)) for _ in range(4))
        # the upfront fee at close is the first use
        if order == "equity_first":
            e0 = np.minimum(fee, equity_left)
        else:
            e0 = fee * (1.0 - gearing)
        equity_left -= e0
        balance += fee - e0
        eq_close = e0
        for k in range(q):
            idc_q[:, k] = balance * qrate[k]
            cf_q[:, k] = np.maximum(debt - balance, 0.0) * cshare[:, k]
            use = spend[:, k] + idc_q[:, k] + cf_q[:, k] + (dsra if k == q - 1 else 0.0)
            if order == "equity_first":
                e = np.minimum(use, np.maximum(equity_left, 0.0))
            else:
                e = use * (1.0 - gearing)
            eq_q[:, k] = e
            debt_q[:, k] = use - e
            equity_left -= e
            balance += use - e
        new_idc, new_cf = idc_q.sum(axis=1), cf_q.sum(axis=1)
        done = np.all(np.abs(new_idc - idc_total) <= tol) and np.all(np.abs(new_cf - cf_total) <= tol)
        idc_total, cf_total = new_idc, new_cf
        if done:
            break
    eq_q[:, 0] += eq_close
    debt_q[:, 0] += fee - eq_close
    uses = capex + fee + idc_total + cf_total + dsra
    return Funding(capex=capex.copy(), upfront_fee=fee.copy(), idc=idc_total, commitment_fee=cf_total,
                   dsra=dsra.copy(), debt=debt.copy(), equity=uses - debt, capex_q=spend, idc_q=idc_q,
                   commitment_q=cf_q, debt_q=debt_q, equity_q=eq_q, iterations=it)


def equity_rows(capex, debt, upfront_fee, dsra, shares, lengths, rate, commitment, order: str) -> np.ndarray:
    """The equity (uses - debt) of each row of :func:`fund`, by the compiled row loop where
    available (Monte Carlo trials need no more than this)."""
    if _kernels is None:
        return fund(capex, debt, upfront_fee, dsra, shares, lengths, rate, commitment, order).equity
    rows = [np.ascontiguousarray(np.atleast_1d(np.asarray(a, float)).ravel()) for a in (capex, debt, upfront_fee, dsra)]
    n = max(a.size for a in rows)
    lengths = np.asarray(lengths, float)
    qrate = (1.0 + rate) ** (lengths / 12.0) - 1.0
    cshare = np.ascontiguousarray(np.asarray(commitment, float).reshape(-1, 1) * lengths[None, :] / 12.0)
    return _kernels.fund_rows(*rows, np.ascontiguousarray(shares, dtype=float), qrate, cshare,
                              order == "equity_first", TOLERANCE, MAX_ITER, np.empty(n))
