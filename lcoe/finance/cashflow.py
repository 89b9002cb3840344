"""The vectorised yearly engine: energy, revenue, O&M, depreciation, tax and sculpted debt.

Everything is an array shaped ``(trials, years)``; a deterministic case is one row.
Column 0 is t = 0 (construction), columns 1..L the operating years. Money is
nominal; costs are positive amounts, cash flows are signed (outflows negative).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lcoe.finance import construction as build
from lcoe.finance import costs
from lcoe.finance import waterfall as wf
from lcoe.finance.debt import Schedule, size_debt, yearly_targets
from lcoe.finance.tax import depreciation_shares, tax_with_carryforward
from lcoe.inputs.schema import DERIVED_DEFAULTS, LOSS_CATEGORIES
from lcoe.physics import energy as en
from lcoe.physics import wind as resource

SPEED_KEYS = ("wind.mean_speed_mps", "wind.weibull_scale_mps")


@dataclass
class Flows:
    """Yearly lines of one batch, each (n, L + 1) with column 0 = t = 0, plus per-row values."""

    years: np.ndarray
    energy_mwh: np.ndarray
    availability: np.ndarray
    price_per_mwh: np.ndarray
    revenue: np.ndarray
    opex: np.ndarray
    capex: np.ndarray
    decommissioning: np.ndarray
    depreciation: np.ndarray
    interest: np.ndarray
    principal: np.ndarray
    balance: np.ndarray
    tax: np.ndarray
    tax_unlevered: np.ndarray
    cfads: np.ndarray
    debt_service: np.ndarray
    dscr: np.ndarray
    project_cash_flow: np.ndarray
    equity_cash_flow: np.ndarray
    capex_total: np.ndarray        # (n, 1)
    debt: np.ndarray               # (n, 1)
    fee: np.ndarray                # (n, 1)
    gross_aep_mwh: np.ndarray      # (n, 1)
    net_aep_p50_mwh: np.ndarray    # (n, 1)
    case_factors: dict = field(default_factory=dict)  # name -> (n, 1) P_case / P50
    schedule: Schedule | None = None
    warnings: list = field(default_factory=list)
    read_keys: set = field(default_factory=set)   # the override keys the engine read for these lines
    waterfall: dict | None = None  # line name -> (n, L + 1), lcoe.finance.waterfall.LINES; None without one
    funding: object = None         # lcoe.finance.construction.Funding with a [construction] table, else None


class Inputs:
    """Scenario values with per-row overrides: ``inp(key, default)`` gives a float or an (n, 1) array."""

    def __init__(self, scn, overrides: dict | None = None):
        self.scn = scn
        self.read: set[str] = set()   # the keys the engine asked for (an override nobody reads is refused)
        self.over = {}
        n = 1
        for k, v in (overrides or {}).items():
            a = np.asarray(v, float).reshape(-1, 1)
            self.over[k] = a
            n = max(n, a.shape[0])
        self.n = n

    # keys whose omitted value follows another key (schema.DERIVED_DEFAULTS): an override of
    # the source key moves them too, as it would in the file
    FOLLOWS = DERIVED_DEFAULTS

    def __call__(self, key: str, default):
        self.read.add(key)
        if key in self.over:
            return self.over[key]
        source = self.FOLLOWS.get(key)
        if source is not None and source in self.over and self._omitted(key):
            self.read.add(source)
            return self.over[source]
        return default

    def _omitted(self, key: str) -> bool:
        section, name = key.split(".")
        return getattr(getattr(self.scn, section), name) is None

    def has(self, key: str) -> bool:
        self.read.add(key)
        return key in self.over


@dataclass(frozen=True)
class Sample:
    """What Monte Carlo draws per trial; None fields mean the expected (deterministic) value."""

    speed_factor: np.ndarray | None = None    # (n, L) hub-speed factor per trial and year
    energy_factor: np.ndarray | None = None   # (n, 1)
    downtime: np.ndarray | None = None        # (n, L) fraction of the year lost to failures
    failure_cost: np.ndarray | None = None    # (n, L) year-0 money
    merchant_price_factor: np.ndarray | None = None   # (n, L) factor on the merchant price (a price path)


def _speed_factor(scn, inp: Inputs, site: en.Site):
    """Hub-speed factor (n, 1) of an overridden mean speed or Weibull scale (1.0 if none)."""
    w = scn.wind
    hub = resource.shear_factor(scn.turbine.hub_height_m, w.height_m, w.alpha, w.roughness_length_m)
    base = {"wind.mean_speed_mps": site.climate.mean_speed_mps / hub,
            "wind.weibull_scale_mps": site.climate.scale_mps / hub}
    factor = 1.0
    for key in SPEED_KEYS:
        if inp.has(key) and base[key]:
            factor = inp.over[key] / base[key]
    return factor


def _gross(scn, inp: Inputs, site: en.Site, trials: bool = False):
    """Gross AEP per row (n, 1), the hub-speed factor of overridden speed keys, the speed
    sensitivity per row, and the wake loss of the layout per row (None without a layout).

    The wake loss is a fraction computed for the long-term climate: it follows the rows
    whose climate, turbine or layout is changed, and stays as it is under a speed factor.
    ``trials``: the rows are Monte Carlo trials (a drawn Weibull shape reads its table)."""
    others = [k for k in inp.over if k.split(".")[0] in ("wind", "turbine", "layout") and k not in SPEED_KEYS]
    inp.read.update(others)     # read by integrating the changed curve or climate
    wake = en.wake_loss_of(scn, site)
    if not others:
        factor = _speed_factor(scn, inp, site)
        if np.ndim(factor) == 0:
            return site.gross_aep_mwh, factor, site.speed_sensitivity, wake
        gross = site.gross_at_factor(factor)
        lo, hi = site.ratio_at_factor(0.99 * factor), site.ratio_at_factor(1.01 * factor)
        with np.errstate(divide="ignore", invalid="ignore"):
            sens = np.log(hi / lo) / np.log(1.01 / 0.99)
        return gross, factor, sens, wake
    if others == ["wind.weibull_shape"] and trials and scn.wind.timeseries is None and scn.wind.rose is None \
            and scn.layout is None:
        # Monte Carlo trials drawing the shape read its table, as trials drawing the speed read theirs
        factor = _speed_factor(scn, inp, site)
        fixed = "mean" if scn.wind.mean_speed_mps is not None else "scale"
        k = np.broadcast_to(inp.over["wind.weibull_shape"], (inp.n, 1))
        if np.ndim(factor) == 0:
            gross, sens = en.gross_at_shape(site, fixed, k)
            return gross, 1.0, sens, wake
        # the speed drawn too: one integration per trial, all trials in one array operation
        c = site.climate
        a = (resource.weibull_scale_from_mean(c.mean_speed_mps, k) if fixed == "mean"
             else np.full(k.shape, c.scale_mps)) * factor
        rows = lambda f: en.aep_weibull_rows(site.site_curve, a * f, k, site.turbines)  # noqa: E731
        gross, lo, hi = rows(1.0), rows(0.99), rows(1.01)
        with np.errstate(divide="ignore", invalid="ignore"):
            sens = np.where((lo > 0) & (hi > 0), np.log(hi / lo) / np.log(1.01 / 0.99), np.nan)
        return gross, 1.0, sens, wake
    # other climate or turbine keys change the curve or the distribution: integrate each distinct row
    others += [k for k in SPEED_KEYS if inp.has(k)]
    stack = np.hstack([np.broadcast_to(inp.over[k], (inp.n, 1)) for k in others])
    uniq, inverse = np.unique(stack, axis=0, return_inverse=True)
    gross = np.empty((uniq.shape[0], 1))
    sens = np.empty((uniq.shape[0], 1))
    wakes = np.zeros((uniq.shape[0], 1))
    for j, row in enumerate(uniq):
        s_j = scn.with_overrides({k: _typed(scn, k, v) for k, v in zip(others, row)})
        s = en.site_for(s_j)
        gross[j, 0] = s.gross_aep_mwh
        sens[j, 0] = s.speed_sensitivity
        wakes[j, 0] = en.wake_loss_of(s_j, s) or 0.0
    inverse = np.asarray(inverse).ravel()
    return gross[inverse], 1.0, sens[inverse], (wakes[inverse] if wake is not None else None)


def _typed(scn, key, value):
    """A row value in the type its field takes (integers stay integers)."""
    node = scn
    for part in key.split(".")[:-1]:
        node = getattr(node, part)
    field_info = type(node).model_fields[key.split(".")[-1]]
    ann = str(field_info.annotation)
    return int(round(value)) if "int" in ann and "float" not in ann else float(value)


@dataclass
class Terms:
    """Everything the yearly lines of a batch are made from, computed once per batch.

    Per-row values are floats or (n, 1) arrays; yearly values are (1 or n, L) arrays
    over t = 1..L (or floats where they do not change over the years). The lines
    themselves, shaped (n, L), are left to :func:`evaluate` (numpy) and to the fused
    trial kernel of :func:`lcoe.engine.trial_metrics`; both follow the formulas here.
    """

    inp: Inputs
    years: np.ndarray
    gross: object             # (n, 1) or float: gross AEP at the rows' mean speed [MWh/yr]
    speed_ratio: object       # None, or (n, L) AEP(f)/AEP(1) of the trials' speed factors ...
    speed_gross: object       # ... multiplied by this gross AEP (see gross_t)
    loss_factor: object       # product of (1 - loss)
    availability: object
    downtime: object
    degradation: object
    energy_factor: object     # None or (n, 1)
    p50: object
    factors: dict             # sizing case -> P_case / P50
    price: object
    credit: object
    capex: np.ndarray         # (n, 1)
    fixed_real: object        # (fixed + insurance) kW + failures + overhauls, year-0 money
    variable: object
    lease: object
    esc_index: object
    decom_t: object
    shares: object            # depreciation share of each year (the depreciation is capex * shares)
    tax_rate: object
    warnings: list
    ppa_term: object = None   # revenue.ppa_term_years per row (contracted years t <= term)
    overhaul: object = 0.0    # planned overhauls of each year, year-0 money (in fixed_real too)
    period_share: object = None   # None, or (L,) the share of each year in operation (a partial year 1)

    def operating_availability(self):
        """The availability of each year times its share in operation (energy pro rata)."""
        return self.availability if self.period_share is None else self.availability * self.period_share

    def gross_t(self):
        """Gross AEP of each year with the trials' speed factors (without them, the rows'). [MWh/yr]"""
        return self.gross if self.speed_ratio is None else self.speed_gross * self.speed_ratio


def terms(scn, energy: en.EnergyResult, overrides: dict | None = None, sample: Sample | None = None,
          site: en.Site | None = None) -> Terms:
    """The per-row and per-year terms of a batch (see :class:`Terms` and :func:`evaluate`);
    ``site`` is the scenario's :class:`~lcoe.physics.energy.Site` when already built."""
    inp = Inputs(scn, overrides)
    if sample is not None:
        for a in (sample.speed_factor, sample.energy_factor, sample.downtime, sample.failure_cost,
                  sample.merchant_price_factor):
            if a is not None and np.ndim(a) == 2:
                inp.n = max(inp.n, a.shape[0])
    L = scn.lifetime
    n_turb = scn.project.turbines
    years = np.arange(1, L + 1)
    site = en.site_for(scn) if site is None else site
    gross, key_factor, sens, wake = _gross(scn, inp, site, trials=sample is not None)
    speed_ratio = speed_gross = None
    if sample is not None and sample.speed_factor is not None:
        # the trial's speed factors apply on top of any overridden mean speed
        if np.ndim(key_factor):
            speed_gross, speed_ratio = site.gross_aep_mwh, site.ratio_at_factor(key_factor * sample.speed_factor)
        else:
            speed_gross, speed_ratio = gross, site.ratio_at_factor(sample.speed_factor)

    # ---- energy (t = 1..L)
    # with a layout the wake loss is computed (losses.wake is not read, so an override of it is refused)
    lf = en.loss_factor([wake if name == "wake" and wake is not None else inp(f"losses.{name}", getattr(scn.losses, name))
                         for name in LOSS_CATEGORIES])
    o = scn.operations
    mature = inp("operations.availability_mature", o.availability_mature)
    first = inp("operations.availability_first_year", scn.availability_first_year)
    avail = en.availability_profile(years, first, mature, inp("operations.ageing_starts_year", o.ageing_starts_year),
                                    inp("operations.availability_ageing_per_year", o.availability_ageing_per_year))
    comps = scn.maintenance.component
    rates = [inp(f"maintenance.component.{c.name}.failure_rate_per_turbine_year", c.failure_rate_per_turbine_year)
             for c in comps]
    repl = [inp(f"maintenance.component.{c.name}.replacement_cost", c.replacement_cost) for c in comps]
    down = [inp(f"maintenance.component.{c.name}.downtime_days", c.downtime_days) for c in comps]
    expected_downtime = en.downtime_fraction(rates, down)
    downtime = sample.downtime if sample is not None and sample.downtime is not None else expected_downtime
    degr = en.degradation_factor(years, inp("operations.degradation_per_year", o.degradation_per_year))
    p50 = en.p50_energy(gross, lf, mature, expected_downtime)

    # ---- P-case factors (for debt sizing): sigma from the sensitivity and the uncertainty terms
    u = scn.uncertainty
    sig1, sig10 = en.sigmas(sens, inp("uncertainty.interannual_speed_sd", u.interannual_speed_sd),
                            [inp(f"uncertainty.speed.{x.name}.sd", x.sd) for x in u.speed]
                            + [sd for _, sd in en.derived_speed_terms(scn, site)],
                            [inp(f"uncertainty.energy.{x.name}.sd", x.sd) for x in u.energy])
    factors = {k: np.broadcast_to(np.asarray(v, float).reshape(-1, 1), (np.size(sig1), 1))
               for k, v in en.case_factors(sig1, sig10).items()}

    # ---- prices and revenue
    r = scn.revenue
    term = inp("revenue.ppa_term_years", scn.ppa_term_years)
    ppa = inp("revenue.ppa_price_per_mwh", r.ppa_price_per_mwh) * costs.escalation_index(
        inp("revenue.ppa_escalation", r.ppa_escalation), years)
    merchant = inp("revenue.merchant_price_per_mwh", scn.merchant_price_per_mwh) * costs.escalation_index(
        inp("revenue.merchant_escalation", r.merchant_escalation), years)
    if sample is not None and sample.merchant_price_factor is not None:
        merchant = merchant * sample.merchant_price_factor
    price = np.where(years <= term, ppa, merchant)
    credit = np.where(years <= inp("revenue.production_credit_years", r.production_credit_years),
                      inp("revenue.production_credit_per_mwh", r.production_credit_per_mwh), 0.0)

    # ---- costs
    m, c = scn.maintenance, scn.capex
    rated = inp("turbine.rated_power_kw", scn.turbine.rated_power_kw)
    plant_kw = rated * n_turb
    esc = inp("maintenance.escalation", scn.escalation)
    capex = costs.capex_total(inp("capex.turbine_per_kw", c.turbine_per_kw),
                              inp("capex.balance_of_plant_per_kw", c.balance_of_plant_per_kw),
                              inp("capex.grid_connection", c.grid_connection),
                              inp("capex.development", c.development),
                              inp("capex.contingency", c.contingency), plant_kw)
    capex = np.broadcast_to(np.asarray(capex, float).reshape(-1, 1) if np.ndim(capex) else np.full((1, 1), capex),
                            (inp.n, 1))
    if sample is not None and sample.failure_cost is not None:
        fail = sample.failure_cost
    else:
        fail = costs.expected_failure_cost(rates, repl, n_turb) if comps else 0.0
    ohs = m.overhaul
    overhaul = costs.overhaul_costs([inp(f"maintenance.overhaul.{x.name}.year", x.year) for x in ohs],
                                    [inp(f"maintenance.overhaul.{x.name}.cost_per_turbine", x.cost_per_turbine)
                                     for x in ohs], n_turb, years) if ohs else 0.0
    fixed = inp("maintenance.fixed_per_kw_year", m.fixed_per_kw_year)
    insurance = inp("maintenance.insurance_per_kw_year", m.insurance_per_kw_year)
    esc_index = costs.escalation_index(esc, years)
    decom = costs.decommissioning_net(inp("capex.decommissioning_per_kw", c.decommissioning_per_kw),
                                      inp("capex.salvage_per_kw", c.salvage_per_kw), plant_kw, esc, L)

    # ---- a construction period ending mid-year: year 1 operates for part of the year
    share = period_share(scn)

    # ---- depreciation and tax
    f = scn.finance
    dep_years = inp("finance.depreciation_years", f.depreciation_years)
    if np.ndim(dep_years) == 0:
        shares = depreciation_shares(f.depreciation, int(dep_years), L)
    else:
        shares = np.vstack([depreciation_shares(f.depreciation, int(round(y)), L) for y in dep_years.ravel()])
    return Terms(inp=inp, years=years, gross=gross, speed_ratio=speed_ratio,
                 speed_gross=speed_gross, loss_factor=lf, availability=avail, downtime=downtime, degradation=degr,
                 energy_factor=None if sample is None else sample.energy_factor, p50=p50, factors=factors,
                 price=price, credit=credit, capex=capex,
                 fixed_real=costs.fixed_om(fixed, insurance, plant_kw, fail, overhaul) * (1.0 if share is None else share),
                 variable=inp("maintenance.variable_per_mwh", m.variable_per_mwh),
                 lease=inp("maintenance.land_lease_share_of_revenue", m.land_lease_share_of_revenue),
                 esc_index=esc_index, decom_t=np.where(years == L, decom, 0.0), shares=shares,
                 tax_rate=inp("finance.tax_rate", f.tax_rate), warnings=[], ppa_term=term,
                 overhaul=overhaul, period_share=share)


def evaluate(scn, energy: en.EnergyResult, *, overrides: dict | None = None, sample: Sample | None = None,
             schedule: Schedule | None = None, lean: bool = False, site: en.Site | None = None) -> Flows:
    """Run the yearly engine for a batch of rows.

    ``overrides`` maps dotted keys to one value per row; ``sample`` carries Monte Carlo
    draws; ``schedule`` is a debt schedule fixed at close (None: size the debt here,
    per row, on the sizing case); ``site`` the scenario's site when already built.
    ``lean`` keeps only the lines the metrics and a portfolio's sums need (energy, revenue,
    O&M, decommissioning, CFADS, debt service, DSCR and the two cash flows); the others
    are None.
    """
    tm = terms(scn, energy, overrides, sample, site)
    inp, years, L = tm.inp, tm.years, scn.lifetime
    warnings = tm.warnings
    # the main lines are written straight into (n, L + 1) arrays whose column 0 is t = 0
    energy_line = _line(inp.n, L, 0.0)
    energy_t = energy_line[:, 1:]
    en.yearly_energy(tm.gross_t(), tm.loss_factor, tm.operating_availability(), tm.downtime, tm.degradation,
                     tm.energy_factor, out=energy_t)
    price, credit, decom_t, capex, tax_rate = tm.price, tm.credit, tm.decom_t, tm.capex, tm.tax_rate
    dep = capex * tm.shares

    def operating(e, out=None):
        rev = e * (price + credit)
        return rev, costs.opex(tm.fixed_real, tm.variable, e, tm.esc_index, tm.lease, rev, out=out)

    opex_line = _line(inp.n, L, 0.0)
    revenue, om = operating(energy_t, out=opex_line[:, 1:])
    pre_tax = revenue - om - decom_t
    tax_u = tax_with_carryforward(pre_tax - dep, tax_rate)
    capex_row = capex.ravel()
    project_line = _line(inp.n, L, -capex_row)
    np.subtract(pre_tax, tax_u, out=project_line[:, 1:])

    # ---- debt
    f = scn.finance
    debt_terms = f.debt
    if debt_terms is None:
        zeros = np.zeros((inp.n, L))
        sched = Schedule(np.zeros((inp.n, 1)), zeros, zeros, zeros, zeros, np.zeros((inp.n, 1)), zeros, 0,
                         np.zeros((inp.n, 1), bool))
    elif schedule is not None:
        sched = schedule
    else:
        sched = size_debt(operating, energy_t, tm.factors[debt_terms.sizing_case], decom_t, dep, capex, tax_rate,
                          yearly_targets(inp("finance.debt.target_dscr", debt_terms.target_dscr),
                                         None if debt_terms.target_dscr_merchant is None else
                                         inp("finance.debt.target_dscr_merchant", debt_terms.target_dscr_merchant),
                                         tm.ppa_term, years),
                          inp("finance.debt.max_gearing", debt_terms.max_gearing),
                          inp("finance.debt.tenor_years", debt_terms.tenor_years),
                          inp("finance.debt.interest_rate", debt_terms.interest_rate),
                          inp("finance.debt.upfront_fee", debt_terms.upfront_fee), years, tm.period_share)
        zero = np.ravel(sched.debt) <= 0
        capped = zero & np.ravel(sched.gearing_bound)   # CFADS would carry debt, but the cap is zero
        if np.any(zero & ~capped):
            warnings.append("debt cannot be sized: the sizing-case CFADS is not positive over the tenor; "
                            "debt set to zero")
        if np.any(capped):
            warnings.append("no debt: finance.debt.max_gearing times the capex is zero")
    tax = tax_with_carryforward(pre_tax - dep - sched.interest, tax_rate)
    cfads_line = _line(inp.n, L, 0.0)
    cfads = np.subtract(pre_tax, tax, out=cfads_line[:, 1:])
    ds = sched.debt_service
    dscr_line = _line(inp.n, L, np.nan)
    np.divide(cfads, np.where(ds > 0, ds, np.nan), out=dscr_line[:, 1:])
    structure = wf.structure_of(scn, inp)
    equity0, funding = equity_before_reserves(scn, inp, capex, sched, structure)
    lines = None
    shown = None    # (interest, principal, closing balance) where a cash sweep moved them
    if structure is None:
        equity_line = _line(inp.n, L, equity0)
        np.subtract(cfads, ds, out=equity_line[:, 1:])
    else:
        swept = None   # the schedule at close stays the one a locked case meets; the flows show the swept lines
        if structure.sweep:
            zero = np.zeros((inp.n, 1))
            t0 = lambda a: np.hstack([zero, np.broadcast_to(a, (inp.n, L))])  # noqa: E731
            swept = (t0(pre_tax), t0(pre_tax - dep), t0(sched.interest),
                     t0(sched.balance_open + sched.interest - sched.debt_service), tax_rate)
        lines = waterfall_lines(structure, cfads_line, ds, equity0, tm, swept)
        equity_line = lines["equity_cash_flow"]
        if swept is not None:          # the sweep moved the debt service, interest, tax and CFADS
            cfads_line = lines["cfads"]
            cfads = cfads_line[:, 1:]
            ds = lines["debt_service"][:, 1:]
            tax = lines["tax"][:, 1:]
            dscr_line = _line(inp.n, L, np.nan)
            np.divide(cfads, np.where(ds > 0, ds, np.nan), out=dscr_line[:, 1:])
            shown = (lines["interest"][:, 1:], ds - lines["interest"][:, 1:], lines["balance"][:, 1:])

    def with_t0(a, t0=0.0, keep=False):
        if lean and not keep:
            return None
        # in lean mode a line equal in every row stays one row (consumers broadcast it)
        rows = 1 if lean and (np.ndim(a) < 2 or np.shape(a)[0] == 1) and np.size(t0) == 1 else inp.n
        out = np.empty((rows, L + 1))
        out[:, 0] = t0 if np.ndim(t0) == 0 else np.asarray(t0).ravel()
        out[:, 1:] = a
        return out

    balance_close = None if lean else sched.balance_open + sched.interest - ds
    if shown is not None:
        balance_close = None if lean else shown[2]
    return Flows(
        years=np.arange(0, L + 1), energy_mwh=energy_line, availability=with_t0(tm.availability),
        price_per_mwh=with_t0(price), revenue=with_t0(revenue, keep=True), opex=opex_line,
        capex=with_t0(0.0, capex_row), decommissioning=with_t0(decom_t, keep=True), depreciation=with_t0(dep),
        interest=with_t0(sched.interest if shown is None else shown[0]),
        principal=with_t0(sched.principal if shown is None else shown[1]),
        balance=with_t0(balance_close, sched.debt.ravel()), tax=with_t0(tax), tax_unlevered=with_t0(tax_u),
        cfads=cfads_line, debt_service=with_t0(ds, keep=True), dscr=dscr_line,
        project_cash_flow=project_line, equity_cash_flow=equity_line,
        capex_total=np.asarray(capex).reshape(-1, 1), debt=np.asarray(sched.debt).reshape(-1, 1),
        fee=np.asarray(sched.fee).reshape(-1, 1), gross_aep_mwh=np.broadcast_to(tm.gross, (inp.n, 1)),
        net_aep_p50_mwh=np.broadcast_to(tm.p50, (inp.n, 1)),
        case_factors={k: np.broadcast_to(v, (inp.n, 1)) for k, v in tm.factors.items()},
        schedule=sched, warnings=warnings, read_keys=set(inp.read), waterfall=lines, funding=funding)


def period_share(scn):
    """None, or the share of each operating year in operation: year 1 starts at COD (financial
    close + the construction months) and ends on 31 December (lcoe.finance.construction)."""
    c = scn.construction
    if c is None:
        return None
    share = np.ones(scn.lifetime)
    share[0] = build.operating_share(build.add_months(c.financial_close, c.months))
    return None if share[0] == 1.0 else share


def equity_before_reserves(scn, inp: Inputs, capex, sched: Schedule, structure, lines: bool = True):
    """(the equity contribution at t = 0 before the reserves' first funding, per row (negative);
    the construction funding or None). Without ``[construction]``: -(capex + upfront fee - debt);
    with it, IDC and the commitment fee are uses too (lcoe.finance.construction.fund; with
    ``lines=False`` only the equity, by the compiled row loop, and no funding lines)."""
    plain = -(capex + sched.fee - sched.debt).ravel()
    c = scn.construction
    if c is None:
        return plain, None
    d = scn.finance.debt
    rate = sched.interest_rate if sched.interest_rate is not None else (d.interest_rate if d is not None else 0.0)
    dsra0 = 0.0
    if structure is not None:
        dsra0 = wf.dsra_targets(np.asarray(sched.debt_service, float), structure.dsra_months,
                                period_share(scn))[:, 0]
    args = (capex, sched.debt, sched.fee, dsra0, build.drawdown_shares(c.drawdown, c.months),
            build.quarters(c.months), float(np.asarray(rate, float).ravel()[0]),
            inp("construction.commitment_fee", c.commitment_fee), c.funding)
    if not lines:
        return -(build.equity_rows(*args) - dsra0), None
    funding = build.fund(*args)
    return -(funding.equity - funding.dsra), funding


def waterfall_targets(structure, debt_service, tm: Terms):
    """(debt service over t = 0..L, DSRA targets, MRA targets) of a batch: the DSRA from the
    debt service (1 or n, L), the MRA from the nominal cost of each year's overhauls."""
    ds = np.asarray(debt_service, float)
    ds_line = np.concatenate([np.zeros((ds.shape[0], 1)), ds], axis=1)
    oh = np.atleast_2d(np.asarray(tm.overhaul, float) * tm.esc_index)   # nominal cost of each year's overhauls
    return (ds_line, wf.dsra_targets(ds, structure.dsra_months, tm.period_share),
            wf.mra_targets(oh, structure.mra_years))


def waterfall_lines(structure, cfads_line, debt_service, equity0, tm: Terms, sweep=None) -> dict:
    """The waterfall of a batch (lcoe.finance.waterfall); ``cfads_line`` (n, L + 1); ``sweep``
    the lines a cash sweep needs (see :func:`lcoe.finance.waterfall.run_rows`)."""
    ds_line, a, b = waterfall_targets(structure, debt_service, tm)
    return wf.run_rows(cfads_line, ds_line, equity0, a, b, structure.deposit_rate, structure.lockup_dscr, sweep)


def _line(rows: int, years: int, t0) -> np.ndarray:
    """An empty yearly line (rows, years + 1) with its t = 0 column set."""
    out = np.empty((rows, years + 1))
    out[:, 0] = t0 if np.ndim(t0) == 0 else np.asarray(t0).ravel()
    return out
