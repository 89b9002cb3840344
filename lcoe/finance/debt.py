"""Debt sculpted to a target DSCR: the schedule fixed at close, its amortisation and the
sizing iteration through interest and tax.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from lcoe.finance.tax import tax_with_carryforward

DEBT_TOLERANCE = 1e-12   # change of the debt and of each year's debt service (to capex) that ends the sizing iteration
DEBT_MAX_ITER = 200


@dataclass(frozen=True)
class Schedule:
    """A debt schedule fixed at financial close; arrays over t = 1..L."""

    debt: np.ndarray          # (n, 1)
    debt_service: np.ndarray  # (n, L)
    interest: np.ndarray
    principal: np.ndarray
    balance_open: np.ndarray
    fee: np.ndarray           # (n, 1)
    sizing_cfads: np.ndarray  # (n, L), CFADS of the sizing case at close
    iterations: int
    gearing_bound: np.ndarray  # (n, 1) bool
    interest_rate: object = None   # the rate the schedule was amortised at (float or (n, 1))
    target_dscr: object = None     # the target of each year, float or (1 or n, L): contracted / merchant
    period: object = None          # None, or (L,) the length of each year (a partial first year)


def elapsed(years: int, period=None) -> np.ndarray:
    """Time in years from the start of operation to the end of each year t = 1..L: t itself,
    or with ``period`` (the length of each year; a partial first year) their running sum."""
    return np.arange(1, years + 1, dtype=float) if period is None else np.cumsum(np.asarray(period, float))


def sculpt(cfads, target_dscr, tenor_mask, rate, cap, period=None):
    """Debt service sculpted to CFADS / target over the tenor, and the debt it carries.

    Returns (debt_service, debt, gearing_bound). The debt is the present value of
    debt service at the interest rate, capped at ``cap``; where the cap binds the
    debt service is scaled down in proportion. ``period``: see :func:`elapsed`.
    """
    years = np.arange(1, cfads.shape[-1] + 1) if period is None else elapsed(cfads.shape[-1], period)
    disc = (1.0 + rate) ** -years
    ds = np.maximum(cfads, 0.0) / target_dscr * tenor_mask
    pv = (ds * disc).sum(axis=-1, keepdims=True)
    bound = pv > cap
    scale = np.where(bound, cap / np.where(pv > 0, pv, 1.0), 1.0)
    return ds * scale, np.minimum(pv, cap), bound


def debt_service_scale(schedule, target_dscr: float | None = None) -> float:
    """The factor the engine applied to CFADS / target DSCR when the gearing cap bound (1 otherwise);
    the schedule's own yearly targets unless ``target_dscr`` is given."""
    if schedule is None or not bool(np.asarray(schedule.gearing_bound).ravel()[0]):
        return 1.0
    if target_dscr is None:
        target_dscr = schedule.target_dscr
    target = np.asarray(target_dscr, float)
    raw = np.maximum(schedule.sizing_cfads[0], 0.0) / (target[0] if target.ndim == 2 else target)
    on = schedule.debt_service[0] > 0
    total = float(raw[on].sum())
    return float(schedule.debt_service[0][on].sum() / total) if total > 0 else 1.0


def amortise(debt_service, rate, period=None):
    """Opening balance, interest and principal of a schedule whose PV at ``rate`` is the debt;
    with ``period`` (a partial first year) the interest of each year is for its length,
    opening * ((1 + rate)^length - 1)."""
    L = debt_service.shape[-1]
    if period is not None:
        end = elapsed(L, period)
        start = end - np.asarray(period, float)
        pv_from = np.cumsum((debt_service * (1.0 + rate) ** -end)[..., ::-1], axis=-1)[..., ::-1]
        opening = pv_from * (1.0 + rate) ** start
        interest = opening * ((1.0 + rate) ** np.asarray(period, float) - 1.0)
        return opening, interest, debt_service - interest
    years = np.arange(1, L + 1)
    disc = (1.0 + rate) ** -years
    pv_from = np.cumsum((debt_service * disc)[..., ::-1], axis=-1)[..., ::-1]
    opening = pv_from * (1.0 + rate) ** (years - 1)
    interest = opening * rate
    return opening, interest, debt_service - interest


def yearly_targets(target_dscr, merchant_dscr, ppa_term_years, years):
    """The target DSCR of each year: ``target_dscr`` in the contracted (PPA) years t <= ppa term,
    ``merchant_dscr`` after; a single value where no merchant target is given."""
    if merchant_dscr is None:
        return target_dscr
    return np.where(years <= np.asarray(ppa_term_years, float), target_dscr, merchant_dscr)


def size_debt(operating, energy_t, case_factor, decom_t, dep, capex, tax_rate, target_dscr, max_gearing,
              tenor_years, interest_rate, upfront_fee, years, period=None) -> Schedule:
    """Size sculpted debt on the sizing case (energy scaled by P_case / P50).

    DS_t = CFADS_t / target_dscr over the tenor (``target_dscr`` one value, or one per year from
    :func:`yearly_targets`); debt = min(PV of DS at the interest
    rate, max_gearing * capex). Interest lowers tax, which raises CFADS and the debt:
    the loop repeats until the debt and every year's debt service change by less than
    DEBT_TOLERANCE * capex (when the gearing cap binds the debt is fixed from the start,
    but the shape of the debt service, and so the interest, still moves). ``period``: the
    length of each year where the first is partial (:func:`elapsed`).
    """
    rev_s, om_s = operating(energy_t * case_factor)
    pre_tax = rev_s - om_s - decom_t
    mask = (years <= tenor_years).astype(float)
    cap = max_gearing * capex
    interest = np.zeros_like(pre_tax)
    debt_prev = np.full(np.shape(capex), -1.0)
    ds_prev = None
    tol = DEBT_TOLERANCE * np.maximum(np.abs(capex), 1.0)
    for it in range(1, DEBT_MAX_ITER + 1):
        tax = tax_with_carryforward(pre_tax - dep - interest, tax_rate)
        cfads = pre_tax - tax
        ds, debt, bound = sculpt(cfads, target_dscr, mask, interest_rate, cap, period)
        opening, interest, principal = amortise(ds, interest_rate, period)
        if np.all(np.abs(debt - debt_prev) <= tol) and ds_prev is not None and np.all(np.abs(ds - ds_prev) <= tol):
            break
        debt_prev, ds_prev = debt, ds
    debt = np.asarray(debt).reshape(-1, 1)
    fee = upfront_fee * debt
    return Schedule(debt, ds, interest, principal, opening, np.asarray(fee).reshape(-1, 1), cfads, it,
                    np.asarray(bound).reshape(-1, 1), interest_rate, target_dscr, period)
