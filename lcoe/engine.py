"""One scenario through the whole engine: energy -> costs -> cash flow -> metrics.

The CLI, the workbook, the app, Monte Carlo and sensitivity all come through here,
so every figure is computed once.

Locked debt
-----------
A lender sizes the debt once, at financial close, on the sizing case; every other case
(a downside case, a Monte Carlo trial, the workbook's locked mode) meets that schedule.
The public way to run a scenario with the debt taken from a base case::

    base = engine.run(scn)                     # debt sized on the sizing case
    down = engine.run(scn_downside, debt=base)  # same debt amount, fee and yearly debt service
    down.locked                                 # True
    down.cover()                                # min/avg DSCR, LLCR, years below 1.0x, unpaid debt service

``debt`` takes a :class:`Case` or its :attr:`Case.schedule` (a
:class:`lcoe.finance.debt.Schedule`: the debt, fee, interest, principal and debt service of
each year t = 1..L, and the rate and yearly targets it was sized at). Nothing is re-sized:
the debt terms of the locked scenario are not read, and a scenario whose life differs from
the schedule's, or that has no ``[finance.debt]`` table while the schedule carries debt, is
refused with a one-line :class:`~lcoe.inputs.errors.ScenarioError`. :func:`cover_of` gives
the cover figures of any case (locked or not) from its yearly lines.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy.optimize import brentq

from lcoe.finance import _kernels, cashflow  # _kernels: the compiled trial pass
from lcoe.finance import construction as build
from lcoe.finance import metrics as mt
from lcoe.finance import waterfall as wf
from lcoe.finance.cashflow import Flows, Inputs, Sample, Schedule
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.keys import check_overrides
from lcoe.physics import energy as en

METRIC_KEYS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_npv",
               "equity_irr", "debt_amount", "min_dscr", "avg_dscr", "llcr", "payback_year",
               "breakeven_ppa_price_per_mwh")
ANNUAL_KEYS = ("year", "energy_mwh", "availability", "price_per_mwh", "revenue", "opex", "capex", "decommissioning",
               "depreciation", "interest", "principal", "balance", "tax", "tax_unlevered", "cfads", "debt_service",
               "dscr", "project_cash_flow", "equity_cash_flow")
PRICE_KEY = "revenue.ppa_price_per_mwh"
# the cash waterfall's lines in the yearly rows (lcoe.finance.waterfall; its equity line is equity_cash_flow)
WATERFALL_ANNUAL_KEYS = wf.SHOWN


def batch_metrics(scn, flows: Flows, overrides: dict | None = None, irr_guess: dict | None = None,
                  irr: bool = True) -> tuple[dict, list[str]]:
    """All metrics but the break-even price, one value per row.

    ``irr_guess`` (metric -> rate) starts the IRR iteration near a known answer, such
    as the base case for Monte Carlo trials; it changes the work, not the result.
    ``irr=False`` leaves out the two IRRs (the costliest metrics) for callers that do not
    show them."""
    inp = Inputs(scn, overrides)
    f = scn.finance
    r, infl, eq, rate_i = _metric_rates(scn, inp)
    if flows.schedule is not None and flows.schedule.interest_rate is not None:
        rate_i = flows.schedule.interest_rate   # a locked debt keeps the rate it was sized at
    out = {
        "lcoe_nominal_per_mwh": mt.lcoe(flows.capex_total, flows.opex, flows.decommissioning, flows.energy_mwh, r),
        "lcoe_real_per_mwh": mt.lcoe(flows.capex_total, flows.opex, flows.decommissioning, flows.energy_mwh, r,
                                     mt.real_rate(r, infl)),
        "project_npv": mt.npv(r, flows.project_cash_flow),
        "equity_npv": mt.npv(eq, flows.equity_cash_flow),
        "debt_amount": flows.debt.ravel().copy(),
    }
    warnings: list[str] = []
    for key, cf in (("project_irr", flows.project_cash_flow), ("equity_irr", flows.equity_cash_flow))[:2 * irr]:
        rates, reasons = mt.irr(cf, guess=_irr_start(irr_guess, key))
        out[key] = rates
        if reasons:
            what = key.replace("_", " ")
            first = reasons[0][1]
            warnings.append(f"{what}: none in {len(reasons)} of {len(rates)} row(s) ({first})"
                            if len(rates) > 1 else f"{what} is null: {first}")
    out["min_dscr"], out["avg_dscr"], out["llcr"], out["payback_year"] = mt.coverage(
        flows.dscr, flows.cfads, flows.debt_service, flows.debt, rate_i, flows.equity_cash_flow,
        debt_clock(scn))
    if np.any(~np.isfinite(out["lcoe_nominal_per_mwh"])):
        warnings.append("LCOE is null: the discounted energy is zero")
    never = ~np.isfinite(out["payback_year"])
    if np.any(never):
        why = "the cumulative equity cash flow never turns non-negative within the life"
        warnings.append(f"payback_year is null: {why}" if never.size == 1 else
                        f"payback_year: none in {int(never.sum())} of {never.size} row(s) ({why})")
    if f.debt is not None:
        warnings.extend(_uncovered_tenor_years(flows, inp("finance.debt.tenor_years", f.debt.tenor_years)))
    if f.debt is None:
        warnings.append("DSCR and LLCR are null: the scenario has no [finance.debt] table (all equity)")
    elif np.all(flows.debt <= 0):
        warnings.append("DSCR and LLCR are null: there is no debt")
    return out, warnings


def debt_clock(scn):
    """None, or the time in years from the start of operation to the end of each row t = 0..L
    where year 1 is partial: the clock the debt is sized and the LLCR discounted on."""
    share = cashflow.period_share(scn)
    return None if share is None else np.concatenate([[0.0], np.cumsum(share)])


def _years_text(years) -> str:
    """[1, 2, 3, 7] -> '1-3, 7'."""
    out, run = [], []
    for y in list(years) + [None]:
        if run and (y is None or y != run[-1] + 1):
            out.append(f"{run[0]}-{run[-1]}" if len(run) > 1 else f"{run[0]}")
            run = []
        if y is not None:
            run.append(int(y))
    return ", ".join(out)


def _uncovered_tenor_years(flows: Flows, tenor) -> list[str]:
    """Tenor years with no debt service but a negative or zero CFADS: the DSCR statistics,
    taken over the years with debt service, do not see them, so they are named."""
    L = flows.cfads.shape[1] - 1
    years = np.arange(1, L + 1)
    in_tenor = years[None, :] <= np.asarray(tenor, float).reshape(-1, 1)
    gap = in_tenor & (flows.debt_service[:, 1:] <= 0) & (flows.cfads[:, 1:] <= 0) & (flows.debt > 0)
    rows = np.nonzero(gap.any(axis=1))[0]
    if rows.size == 0:
        return []
    if gap.shape[0] == 1:
        t = int(np.asarray(tenor, float).reshape(-1)[0])
        return [f"min_dscr and avg_dscr cover only the tenor years with debt service: CFADS is negative or zero "
                f"in year(s) {_years_text(years[gap[0]])} of the {t}-year tenor, where no debt service could be "
                "sculpted"]
    return [f"min_dscr and avg_dscr: in {rows.size} of {gap.shape[0]} row(s) CFADS is negative or zero in tenor "
            "years without debt service, which the DSCR statistics do not cover"]


def _metric_rates(scn, inp: Inputs):
    """(discount rate, inflation, equity target return, debt interest rate) of a batch."""
    f = scn.finance
    return (inp("finance.discount_rate", f.discount_rate), inp("finance.inflation", f.inflation),
            inp("finance.equity_target_return", scn.equity_target_return),
            inp("finance.debt.interest_rate", f.debt.interest_rate) if f.debt is not None else 0.0)


def _irr_start(irr_guess: dict | None, key: str) -> float:
    guess = (irr_guess or {}).get(key)
    return guess if guess is not None and np.isfinite(guess) else 0.1


TRIAL_KEYS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "equity_npv", "project_irr", "equity_irr",
              "min_dscr", "avg_dscr", "llcr", "payback_year", "net_aep_year1_mwh", "net_aep_mean_mwh", "opex_mean",
              "lockup_any", "dsra_drawn", "unpaid_any", "cash_trapped")
# per trial from the cash waterfall: 1.0 where any year was in lock-up / the DSRA was drawn / debt
# service was left unpaid after the reserves, else 0.0; the cash trapped over the life (nominal)
WATERFALL_TRIAL_KEYS = TRIAL_KEYS[-4:]


def waterfall_trial_values(flows: Flows) -> dict:
    """The WATERFALL_TRIAL_KEYS of each row from a batch's waterfall lines (zeros without one)."""
    n = flows.cfads.shape[0]
    w = flows.waterfall
    if w is None:
        return {k: np.zeros(n) for k in WATERFALL_TRIAL_KEYS}
    rows = lambda k: np.broadcast_to(w[k][:, 1:], (n, w[k].shape[1] - 1))  # noqa: E731
    return {"lockup_any": (rows("lockup") > 0).any(axis=1).astype(float),
            "dsra_drawn": (rows("dsra_draw") > 0).any(axis=1).astype(float),
            "unpaid_any": (rows("unpaid_debt_service") > 0).any(axis=1).astype(float),
            "cash_trapped": rows("cash_trapped").sum(axis=1)}


def trial_metrics(scn, energy: en.EnergyResult, *, overrides=None, sample: Sample | None = None,
                  schedule: Schedule, irr_guess: dict | None = None) -> dict:
    """Monte Carlo metrics of a batch of trials whose debt is fixed at close, in one compiled pass.

    The same figures as :func:`evaluate` with ``lean=True`` followed by the mean net
    energy and O&M, but the yearly lines are never stored: ``lcoe.finance._kernels.trial_rows``
    runs them row by row from :func:`lcoe.finance.cashflow.terms`. Returns TRIAL_KEYS plus
    ``capex_total`` and ``debt_amount``, one value per trial.
    """
    overrides = check_overrides(scn, overrides) or None
    tm = cashflow.terms(scn, energy, overrides, sample)
    n, L = tm.inp.n, scn.lifetime
    r, infl, eq, rate_i = _metric_rates(scn, tm.inp)

    def yearly(a, cols=L):
        a = np.asarray(a, float)
        rows = a.shape[0] if a.ndim == 2 else 1
        return np.ascontiguousarray(np.broadcast_to(a, (rows, cols)))

    def per_row(a):
        return np.ascontiguousarray(np.asarray(a, float).reshape(-1))

    def disc(rate, times=None):
        return yearly(mt.discount_factors(rate, L + 1, times), L + 1)

    ratio = yearly(1.0) if tm.speed_ratio is None else yearly(tm.speed_ratio)
    gross = per_row(tm.gross if tm.speed_gross is None else tm.speed_gross)
    ef = per_row(1.0 if tm.energy_factor is None else tm.energy_factor)
    cap = tm.capex[:1] if tm.capex.strides[0] == 0 else tm.capex   # one row where every trial shares it
    capex = per_row(cap)
    structure = wf.structure_of(scn, tm.inp)
    if structure is not None:
        _, dsra_t, mra_t = cashflow.waterfall_targets(structure, schedule.debt_service, tm)
        wf_args = (True, yearly(dsra_t, L + 1), yearly(mra_t, L + 1), per_row(structure.deposit_rate),
                   per_row(structure.lockup_dscr), structure.sweep,
                   yearly(schedule.balance_open + schedule.interest - schedule.debt_service))
    else:
        wf_args = (False, yearly(0.0, L + 1), yearly(0.0, L + 1), per_row(0.0), per_row(0.0), False, yearly(0.0))
    out = np.empty((len(TRIAL_KEYS), n))
    equity0, _ = cashflow.equity_before_reserves(scn, tm.inp, cap, schedule, structure, lines=False)
    if overrides:
        refuse_unread(overrides, tm.inp.read, locked=True)
    _kernels.trial_rows(ratio, gross, per_row(tm.loss_factor), yearly(tm.operating_availability()), yearly(tm.downtime),
                        yearly(tm.degradation), ef, yearly(tm.price + tm.credit), yearly(tm.fixed_real),
                        per_row(tm.variable), yearly(tm.esc_index), per_row(tm.lease), yearly(tm.decom_t),
                        yearly(tm.shares), per_row(tm.tax_rate), capex, yearly(schedule.interest),
                        yearly(schedule.debt_service), per_row(equity0),
                        disc(r), disc(mt.real_rate(r, infl)), disc(eq), disc(rate_i, debt_clock(scn)),
                        per_row(schedule.debt),
                        _irr_start(irr_guess, "project_irr"), _irr_start(irr_guess, "equity_irr"), 1e-9, 50,
                        1.0 / (1.0 + mt.IRR_HIGH), 1.0 / (1.0 + mt.IRR_LOW), *wf_args, out)
    res = dict(zip(TRIAL_KEYS, out))
    res["capex_total"] = np.broadcast_to(tm.capex, (n, 1))[:, 0].copy()
    res["debt_amount"] = np.broadcast_to(np.asarray(schedule.debt, float).reshape(-1, 1), (n, 1))[:, 0].copy()
    return res


COVER_KEYS = ("min_dscr", "avg_dscr", "llcr", "years_below_1", "cfads_shortfall", "dsra_draws",
              "years_in_lockup", "cash_trapped", "unpaid_debt_service")


def cover_of(flows: Flows, metrics: dict, row: int = 0) -> dict:
    """How one row meets its debt service: minimum and average DSCR and LLCR (from the
    metrics); the years with debt service whose CFADS falls short of it (DSCR < 1.0x) and that
    shortfall; from the cash waterfall (zero without one) the draws on the debt service
    reserve, the years in lock-up and the cash trapped in them; and the debt service left
    unpaid after the reserve and the trapped cash (without a waterfall: the CFADS shortfall).
    Money is nominal, summed over the life; figures that do not exist are None."""
    ds = flows.debt_service[row, 1:]
    cfads = flows.cfads[row, 1:]
    on = ds > 0
    short = np.where(on, np.maximum(ds - np.maximum(cfads, 0.0), 0.0), 0.0)
    out = {k: _num(np.asarray(metrics[k]).ravel()[row]) if metrics.get(k) is not None else None
           for k in ("min_dscr", "avg_dscr", "llcr")}
    out["years_below_1"] = int(np.count_nonzero(on & (cfads < ds)))
    out["cfads_shortfall"] = float(short.sum())
    w = flows.waterfall
    line = (lambda k: w[k][min(row, w[k].shape[0] - 1), 1:]) if w is not None else None
    out["dsra_draws"] = float(line("dsra_draw").sum()) if w is not None else 0.0
    out["years_in_lockup"] = int(np.count_nonzero(line("lockup"))) if w is not None else 0
    out["cash_trapped"] = float(line("cash_trapped").sum()) if w is not None else 0.0
    out["unpaid_debt_service"] = float(line("unpaid_debt_service").sum()) if w is not None else float(short.sum())
    return out


def sources_and_uses(scn, flows: Flows, row: int = 0) -> dict:
    """Uses (capex, upfront fee, interest during construction, commitment fee, the first funding
    of the debt service reserve) and sources (debt, equity) of one row, with the gearing (debt /
    uses) and the check that the two totals agree; the dates with a construction period."""
    f = flows.funding
    if f is not None:
        uses = {"capex": f.capex[row], "upfront_fee": f.upfront_fee[row], "interest_during_construction": f.idc[row],
                "commitment_fee": f.commitment_fee[row], "dsra_initial": f.dsra[row]}
        debt, equity = f.debt[row], f.equity[row]
    else:
        w = flows.waterfall
        dsra = float(w["dsra_balance"][min(row, w["dsra_balance"].shape[0] - 1), 0]) if w is not None else 0.0
        uses = {"capex": flows.capex_total[row, 0], "upfront_fee": flows.fee[row, 0],
                "interest_during_construction": 0.0, "commitment_fee": 0.0, "dsra_initial": dsra}
        debt = flows.debt[row, 0]
        equity = -flows.equity_cash_flow[row, 0]
    uses = {k: float(v) for k, v in uses.items()}
    total = sum(uses.values())
    sources = {"debt": float(debt), "equity": float(equity)}
    out = {"uses": {**uses, "total": total}, "sources": {**sources, "total": sources["debt"] + sources["equity"]},
           "gearing": sources["debt"] / total if total > 0 else None}
    out["balanced"] = bool(abs(out["sources"]["total"] - total) <= 1e-9 * max(1.0, abs(total)))
    c = scn.construction
    if c is not None:
        cod = build.add_months(c.financial_close, c.months)
        out.update(financial_close=c.financial_close.isoformat(), commercial_operation=cod.isoformat(),
                   construction_months=c.months, drawdown=c.drawdown if isinstance(c.drawdown, str) else "shares",
                   funding=c.funding, first_year_operating_share=build.operating_share(cod),
                   quarters=[{"quarter": k + 1, "capex": float(f.capex_q[row, k]),
                              "interest_during_construction": float(f.idc_q[row, k]),
                              "commitment_fee": float(f.commitment_q[row, k]), "debt": float(f.debt_q[row, k]),
                              "equity": float(f.equity_q[row, k])} for k in range(f.capex_q.shape[1])])
    return out


def locked_schedule(scn, debt) -> Schedule | None:
    """The schedule of ``debt`` (a :class:`Case`, a :class:`Schedule` or None) checked against
    ``scn``: one row, the scenario's life, and a debt table where it carries debt."""
    if debt is None:
        return None
    sched = debt.schedule if isinstance(debt, Case) else debt
    if not isinstance(sched, Schedule):
        raise TypeError(f"debt must be an engine.Case or a finance.debt.Schedule, not {type(debt).__name__}")
    if np.shape(sched.debt)[0] != 1:
        raise ValueError("a locked debt holds one schedule (one row); run each row's case on its own")
    years = np.shape(sched.debt_service)[1]
    if years != scn.lifetime:
        raise ScenarioError(f"must equal the locked debt schedule's {years} years: the debt is fixed at close",
                            key="project.lifetime_years", value=scn.lifetime)
    share = cashflow.period_share(scn)
    if float(np.asarray(sched.debt).ravel()[0]) > 0 and not (
            (share is None and sched.period is None) or
            (share is not None and sched.period is not None and np.array_equal(share, sched.period))):
        raise ScenarioError("must give the locked debt's first operating year: the schedule's interest and "
                            "debt service are fixed at close for its length", key="construction", has_value=False)
    if scn.finance.debt is None and float(np.asarray(sched.debt).ravel()[0]) > 0:
        raise ScenarioError("is missing: a locked debt needs the scenario's debt table (its interest rate "
                            "discounts the LLCR)", key="finance.debt", has_value=False)
    return sched


@dataclass
class Case:
    """A deterministic run of one scenario (the P50 case, debt sized on the sizing case, or,
    where ``locked``, the debt and its schedule taken from a base case)."""

    scenario: object
    energy: en.EnergyResult
    flows: Flows
    metrics: dict
    warnings: list = field(default_factory=list)
    locked: bool = False

    @property
    def schedule(self) -> Schedule:
        return self.flows.schedule

    def cover(self) -> dict:
        """The cover figures of this case (:func:`cover_of`)."""
        return cover_of(self.flows, self.metrics)

    def annual_keys(self) -> tuple:
        """The keys of each yearly row: ANNUAL_KEYS, then the waterfall's lines where there is one,
        and ``period_end`` (ISO date) with a construction period."""
        return ANNUAL_KEYS + (WATERFALL_ANNUAL_KEYS if self.flows.waterfall is not None else ()) + \
            (("period_end",) if self.scenario.construction is not None else ())

    def sources_and_uses(self) -> dict:
        """Sources and uses of funds at commercial operation (:func:`sources_and_uses`)."""
        return sources_and_uses(self.scenario, self.flows)

    def annual(self) -> list[dict]:
        rows = []
        w = self.flows.waterfall
        c = self.scenario.construction
        ends = build.period_ends(build.add_months(c.financial_close, c.months), self.scenario.lifetime) \
            if c is not None else None
        for t in range(self.flows.years.size):
            row = {}
            for k in ANNUAL_KEYS:
                v = self.flows.years[t] if k == "year" else getattr(self.flows, k)[0, t]
                row[k] = int(v) if k == "year" else _num(v)
            if w is not None:
                for k in WATERFALL_ANNUAL_KEYS:
                    row[k] = bool(w[k][0, t]) if k == "lockup" else _num(w[k][0, t])
            if ends is not None:
                row["period_end"] = ends[t]
            rows.append(row)
        return rows


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def evaluate(scn, *, overrides=None, sample: Sample | None = None, schedule: Schedule | None = None,
             energy: en.EnergyResult | None = None, lean: bool = False, irr_guess: dict | None = None,
             site: en.Site | None = None, irr: bool = True) -> tuple[Flows, dict, list[str]]:
    """Flows and metrics (without break-even) for a batch of rows (``lean`` and ``site``: see
    cashflow.evaluate; ``irr``: see batch_metrics)."""
    overrides = check_overrides(scn, overrides) or None
    energy = energy if energy is not None else en.energy_of(scn, site)
    flows = cashflow.evaluate(scn, energy, overrides=overrides, sample=sample, schedule=schedule, lean=lean,
                              site=site)
    m, w = batch_metrics(scn, flows, overrides, irr_guess, irr)
    if overrides:
        rates = Inputs(scn, overrides)
        _metric_rates(scn, rates)
        refuse_unread(overrides, flows.read_keys | rates.read, locked=schedule is not None)
    return flows, m, flows.warnings + w


def refuse_unread(overrides: dict, read: set, *, locked: bool) -> None:
    """An override that no part of this run reads would change nothing: refuse it, never ignore it."""
    for key in overrides:
        if key in read:
            continue
        if key.startswith("finance.debt.") and locked:
            why = "the debt is fixed at close here, so its terms change nothing; they apply only where it is sized"
        elif key.startswith("project."):
            why = "it changes the shape of the model (years or turbines): run one scenario per value"
        else:
            why = "this run does not use it, so a batch cannot vary it: run one scenario per value"
        raise ScenarioError(f"cannot be varied here: {why}", key=key, has_value=False)


def _equity_npv_at_price(scn, energy, price, row_overrides, sample=None):
    over = dict(row_overrides)
    over[PRICE_KEY] = np.array([price])
    flows = cashflow.evaluate(scn, energy, overrides=over, sample=sample, lean=True)
    eq = Inputs(scn, over)("finance.equity_target_return", scn.equity_target_return)
    return float(mt.npv(eq, flows.equity_cash_flow)[0])


def breakeven_price(scn, energy=None, row_overrides: dict | None = None, *, sample: Sample | None = None
                    ) -> tuple[float, str | None]:
    """Year-0 PPA price at which equity NPV is zero at the equity target return (debt sized afresh).

    Brent's method (scipy.optimize.brentq) on a bracket found by doubling from the
    scenario's price. Returns (price, None) or (NaN, reason).
    """
    energy = energy if energy is not None else en.energy_of(scn)
    row = {k: np.asarray(v, float).reshape(-1)[:1] for k, v in (row_overrides or {}).items()}
    row.pop(PRICE_KEY, None)
    # the merchant price stays as it is, even where the file leaves it to follow the PPA price
    row.setdefault("revenue.merchant_price_per_mwh", np.array([scn.merchant_price_per_mwh]))
    g = lambda p: _equity_npv_at_price(scn, energy, p, row, sample)  # noqa: E731
    lo, hi = 0.0, max(10.0, scn.revenue.ppa_price_per_mwh)
    f_lo = g(lo)
    if f_lo >= 0:
        return 0.0 if f_lo == 0 else float("nan"), (None if f_lo == 0 else
                                                    "equity NPV is positive even at a zero PPA price")
    f_hi = g(hi)
    while f_hi < 0 and hi < 1e5:
        lo, f_lo = hi, f_hi
        hi *= 2.0
        f_hi = g(hi)
    if f_hi < 0:
        return float("nan"), "no PPA price up to 100,000 per MWh gives equity NPV = 0"
    return float(brentq(g, lo, hi, xtol=1e-9, rtol=1e-13, maxiter=200)), None


def run(scn, *, breakeven: bool = True, site: en.Site | None = None, debt=None) -> Case:
    """The deterministic case of a scenario, every metric filled (``site``: its
    :class:`~lcoe.physics.energy.Site` when already built; the break-even search looks it up).

    ``debt`` (a base :class:`Case` or its :class:`Schedule`) locks the debt: its amount, fee
    and yearly debt service are taken as fixed at close, not sized here (see the module
    notes). The break-even PPA price keeps its definition (debt sized afresh)."""
    schedule = locked_schedule(scn, debt)
    energy = en.energy_of(scn, site)
    flows, m, warnings = evaluate(scn, energy=energy, site=site, schedule=schedule)
    metrics = {k: _num(v[0]) for k, v in m.items()}
    if breakeven:
        price, why = breakeven_price(scn, energy)
        metrics["breakeven_ppa_price_per_mwh"] = _num(price)
        if why:
            warnings.append(f"break-even PPA price is null: {why}")
    else:
        metrics["breakeven_ppa_price_per_mwh"] = None
    if metrics["payback_year"] is not None:
        metrics["payback_year"] = int(metrics["payback_year"])
    metrics = {k: metrics.get(k) for k in METRIC_KEYS}
    all_warn = list(scn.warnings()) + list(energy.warnings) + warnings
    return Case(scn, energy, flows, metrics, _dedupe(all_warn), locked=schedule is not None)


def _dedupe(items):
    seen, out = set(), []
    for w in items:
        if w not in seen:
            seen.add(w)
            out.append(w)
    return out
