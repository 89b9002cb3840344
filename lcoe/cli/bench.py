"""``lcoe bench``: how fast the engine is, measured on the demo scenario.

Times in one run (a) the full Monte Carlo through the batch engine, (b) the same
trials through a straightforward loop, one trial at a time, with numpy-financial's
``npv`` and ``irr`` (timed on a subsample and scaled: the output says so), (c) one
deterministic run with the site cached, (d) the Weibull AEP integral, (e) the wake
losses of a 50-turbine grid over a 12-sector rose in 1 m/s speed bins, (f) the portfolio
Monte Carlo of many invented sites through the local Dask cluster with 1 and 2 workers,
and the peak memory of the process. The loop and the engine are checked against each other on
the subsample; with a construction period, reserves or a lock-up in the scenario the loop funds
the construction and runs the cash waterfall too (:func:`plain_funding`, :func:`plain_waterfall`,
its own plain-Python versions). With ``startup`` (the command's default) it also times the command line as a user
meets it, each in a fresh process started from an empty folder: ``--help`` and every command's help
(``cli_help_s``, the slowest), a first ``lcoe run`` of the scenario with an empty numba cache, the
compiled kernels built (``cold_run_s``), and the same run again, the kernels cached (``warm_run_s``,
the median of three).
"""

from __future__ import annotations

import json
import os
import resource as _rusage
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import numpy_financial as npf

from lcoe import engine as model
from lcoe.analysis import cluster
from lcoe.analysis import montecarlo as uncertainty
from lcoe.analysis import portfolio as portfolio_mc
from lcoe.demo_files import assumptions_dir, demo_scenario
from lcoe.finance.tax import depreciation_shares
from lcoe.inputs import portfolio as portfolio_file
from lcoe.inputs import scenario
from lcoe.inputs.schema import LOSS_CATEGORIES
from lcoe.physics import energy as en
from lcoe.physics import layout, rose, wake

# the wake benchmark: a 5 x 10 grid (7 and 4 rotor diameters) over an invented 12-sector rose
WAKE_ROWS, WAKE_COLUMNS, WAKE_SECTORS, WAKE_BIN_MPS = 5, 10, 12, 1.0
WAKE_FREQUENCY = (0.05, 0.04, 0.05, 0.06, 0.07, 0.09, 0.12, 0.15, 0.14, 0.10, 0.07, 0.06)

DEMO = demo_scenario()


def _median_time(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times))


HELP_COMMANDS = ((), ("check",), ("run",), ("sweep",), ("tornado",), ("solve",), ("portfolio",), ("bench",),
                 ("app",))


def _timed_command(argv, cwd, env=None) -> float:
    """Wall time of ``python -m lcoe ARGV`` in a fresh process (output discarded); raises if it fails."""
    t = time.perf_counter()
    done = subprocess.run([sys.executable, "-m", "lcoe", *argv], cwd=cwd, env=env, stdout=subprocess.DEVNULL,
                          stderr=subprocess.PIPE, text=True)
    elapsed = time.perf_counter() - t
    if done.returncode != 0:
        raise AssertionError(f"bench: `lcoe {' '.join(argv)}` failed: {done.stderr.strip()[-300:]}")
    return elapsed


def startup_bench(path=DEMO, warm_runs: int = 3) -> dict:
    """Start-up of the command line in fresh processes, from an empty folder (see the module's note)."""
    path = str(Path(path).resolve())
    with tempfile.TemporaryDirectory(prefix="lcoe-bench-") as tmp:
        helps = {" ".join(c) or "lcoe": _timed_command([*c, "--help"], tmp) for c in HELP_COMMANDS}
        env = dict(os.environ, NUMBA_CACHE_DIR=str(Path(tmp) / "numba-cache"))
        cold = _timed_command(["run", path], tmp, env)
        warm = [_timed_command(["run", path], tmp, env) for _ in range(max(1, warm_runs))]
    return {"cli_help_s": max(helps.values()), "cli_help_by_command_s": helps, "cold_run_s": cold,
            "warm_run_s": float(np.median(warm)), "warm_runs_s": warm}


def _peak_rss_mb() -> float:
    kb = _rusage.getrusage(_rusage.RUSAGE_SELF).ru_maxrss
    return kb / 1024.0 if sys.platform != "darwin" else kb / 1024.0 / 1024.0


def _carry_forward(taxable: float, pool: float, rate: float) -> tuple[float, float]:
    """One year of tax with a loss pool: returns (tax, new pool)."""
    if taxable <= 0:
        return 0.0, pool - taxable
    used = min(pool, taxable)
    return rate * (taxable - used), pool - used


def table_ratio(site, f: float) -> float:
    """AEP(f)/AEP(1) from the site's table for one factor, looked up step by step (a plain
    second implementation of :meth:`lcoe.physics.site.Site.ratio_at_factor`)."""
    grid = site.factors

    def direct():
        return float(site.aep_direct(max(f, 0.0))[0] / site.gross_aep_mwh)

    if not grid[0] <= f <= grid[-1]:
        return direct()
    i = min(int(np.searchsorted(grid, f, side="right")) - 1, grid.size - 2)
    if f == grid[i] or f == grid[i + 1]:
        return float(site.aep_ratios[i if f == grid[i] else i + 1])
    if site.cell_exact[i]:
        return direct()
    fall = 0.0
    k = int(site.step_starts[i])
    while k < site.step_factors.size and site.step_factors[k] < f:
        fall += site.step_cum[k + 1] - site.step_cum[k]
        k += 1
    w = (f - grid[i]) / (grid[i + 1] - grid[i])
    return float(site.aep_ratios[i] + w * site.cell_slopes[i] - fall)


def plain_funding(capex: float, debt: float, fee: float, dsra: float, c, rate: float) -> float:
    """The equity of a construction period in plain Python, quarter by quarter, repeated until
    the interest during construction and the commitment fee settle (lcoe.finance.construction)."""
    q = -(-c.months // 3)
    lengths = [3.0] * (q - 1) + [float(c.months - 3 * (q - 1))]
    if isinstance(c.drawdown, list):
        shares = list(c.drawdown)
    elif c.drawdown == "even":
        shares = [x / c.months for x in lengths]
    else:
        done, shares = 0.0, []
        for x in lengths:
            a, b = done / c.months, (done + x) / c.months
            shares.append((3 * b * b - 2 * b ** 3) - (3 * a * a - 2 * a ** 3))
            done += x
    extra = 0.0
    for _ in range(200):
        uses = capex + fee + extra + dsra
        equity_left = uses - debt
        share_debt = debt / uses if uses > 0 else 0.0
        paid = min(fee, equity_left) if c.funding == "equity_first" else fee * (1 - share_debt)
        equity_left -= paid
        balance = fee - paid
        total = 0.0
        for k in range(q):
            interest = balance * ((1 + rate) ** (lengths[k] / 12) - 1)
            commit = max(debt - balance, 0.0) * c.commitment_fee * lengths[k] / 12
            use = capex * shares[k] + interest + commit + (dsra if k == q - 1 else 0.0)
            paid = min(use, max(equity_left, 0.0)) if c.funding == "equity_first" else use * (1 - share_debt)
            equity_left -= paid
            balance += use - paid
            total += interest + commit
        if abs(total - extra) <= 1e-12 * max(capex, 1.0):
            extra = total
            break
        extra = total
    return capex + fee + extra + dsra - debt


def plain_waterfall(cfads: list, ds: list, overhauls: list, equity0: float, months: float, build_years: int,
                    deposit: float, lockup: float, first_share: float = 1.0, sweep=None) -> dict:
    """The cash waterfall of one trial in plain Python (the order of lcoe.finance.waterfall):
    lists over t = 0..L; ``overhauls`` the nominal overhaul cost of each year. Returns the equity
    cash flow and whether any year was locked up, the DSRA drawn, debt service left unpaid, and
    the cash trapped over the life. ``sweep``: None, or (pre-tax cash, taxable income before
    interest, scheduled interest, scheduled closing balance, tax rate) for a cash sweep, which
    also gives back the swept CFADS and debt service."""
    L = len(cfads) - 1

    def dsra_target(t):
        pace = first_share if t + 1 == 1 else 1.0
        return months / 12.0 * (ds[t + 1] / pace if t + 1 <= L else 0.0)

    def mra_target(t):
        total = 0.0
        for y in range(2, L + 1):
            start = max(1, y - build_years)
            if build_years > 0 and overhauls[y] and start <= t < y:
                total += overhauls[y] * min(1.0, (t - start + 1) / (y - start))
        return total

    dsra, mra, trapped = dsra_target(0), mra_target(0), 0.0
    left, pool = 1.0, 0.0          # the share of the scheduled debt still owed; the tax loss pool
    cfads, ds = list(cfads), list(ds)
    scheduled = list(ds)
    equity = [equity0 - dsra - mra]
    flags = {"lockup_any": 0.0, "dsra_drawn": 0.0, "unpaid_any": 0.0, "cash_trapped": 0.0}
    for t in range(1, L + 1):
        if sweep is not None:
            pre, taxable, interest, balance, rate = sweep
            ds[t] = left * scheduled[t]
            tax, pool = _carry_forward(taxable[t] - left * interest[t], pool, rate)
            cfads[t] = pre[t] - tax
        cash = cfads[t] + deposit * (dsra + mra + trapped)
        if mra > mra_target(t):
            cash += mra - mra_target(t)
            mra = mra_target(t)
        cash -= ds[t]
        unpaid = 0.0
        if cash < 0:
            take = min(dsra, -cash)
            dsra -= take
            cash += take
            if take > 0:
                flags["dsra_drawn"] = 1.0
        if cash < 0:
            take = min(trapped, -cash)
            trapped -= take
            cash += take
        if cash < 0:
            unpaid, cash = -cash, 0.0
            flags["unpaid_any"] = 1.0
        target = dsra_target(t) * (left if sweep is not None else 1.0)
        if dsra > target:
            cash += dsra - target
            dsra = target
        else:
            top = min(cash, target - dsra)
            dsra += top
            cash -= top
        if mra < mra_target(t):
            top = min(cash, mra_target(t) - mra)
            mra += top
            cash -= top
        if sweep is not None and lockup > 0 and ds[t] > 0 and cfads[t] / ds[t] < lockup:
            flags["lockup_any"] = 1.0
            owed = left * sweep[3][t]
            prepay = min(cash, owed)
            if owed > 0:
                left *= 1.0 - prepay / owed
            paid, trapped = cash - prepay + trapped, 0.0
        elif lockup > 0 and ds[t] > 0 and cfads[t] / ds[t] < lockup:
            trapped += cash
            flags["lockup_any"] = 1.0
            flags["cash_trapped"] += cash
            paid = 0.0
        else:
            paid, trapped = cash + trapped, 0.0
        if t == L:
            paid += dsra + mra + trapped
        equity.append(paid - unpaid)
    return {"equity": equity, "cfads": cfads, "ds": ds, **flags}


def reference_trial(scn, case, site, over: dict, speed, efac, downtime, fail_cost) -> dict:
    """One Monte Carlo trial the straightforward way: a Python loop over the years, then
    numpy-financial's ``npv`` and ``irr`` and every other metric the engine gives. ``over`` holds this trial's drawn inputs;
    ``speed``, ``downtime`` and ``fail_cost`` are its yearly draws (or None), ``efac`` its
    energy factor (or None). The debt schedule is the one fixed at close."""


    def get(key, default):
        return float(over[key]) if key in over else float(default)

    L, n = scn.lifetime, scn.project.turbines
    kw = get("turbine.rated_power_kw", scn.turbine.rated_power_kw) * n
    lf = 1.0
    used = en.losses_used(scn, site)     # the wake loss of a layout where there is one
    for name in LOSS_CATEGORIES:
        lf *= 1.0 - get(f"losses.{name}", used[name])
    o, m, c, r, f = scn.operations, scn.maintenance, scn.capex, scn.revenue, scn.finance
    mature = get("operations.availability_mature", o.availability_mature)
    first = get("operations.availability_first_year", scn.availability_first_year)
    comps = [(get(f"maintenance.component.{x.name}.failure_rate_per_turbine_year", x.failure_rate_per_turbine_year),
              get(f"maintenance.component.{x.name}.replacement_cost", x.replacement_cost),
              get(f"maintenance.component.{x.name}.downtime_days", x.downtime_days)) for x in m.component]
    exp_down = sum(rate * days / 365.0 for rate, _, days in comps)
    exp_cost = sum(rate * n * cost for rate, cost, _ in comps)
    capex = ((get("capex.turbine_per_kw", c.turbine_per_kw) + get("capex.balance_of_plant_per_kw",
              c.balance_of_plant_per_kw)) * kw + get("capex.grid_connection", c.grid_connection)
             + get("capex.development", c.development)) * (1.0 + get("capex.contingency", c.contingency))
    esc = get("maintenance.escalation", scn.escalation)
    shares = depreciation_shares(f.depreciation, int(get("finance.depreciation_years", f.depreciation_years)), L)
    tax_rate = get("finance.tax_rate", f.tax_rate)
    sched = case.schedule
    gross = site.gross_aep_mwh
    cons = scn.construction
    first_share = 1.0
    if cons is not None:
        cod = cons.financial_close
        y, mo = divmod(cod.month - 1 + cons.months, 12)
        cod = cod.replace(year=cod.year + y, month=mo + 1, day=1) if cod.day == 1 else None
        if cod is None:
            raise ValueError("bench: the plain loop takes a financial close on the first of a month")
        first_share = (13 - cod.month) / 12.0
    energy, costs, project, cfads, ds_line, works_line = [0.0], [0.0], [-capex], [0.0], [0.0], [0.0]
    pre_line, taxable_line = [0.0], [0.0]
    equity = [-(capex + float(sched.fee[0, 0]) - float(sched.debt[0, 0]))]
    pool_u = pool_l = 0.0
    for t in range(1, L + 1):
        avail = first if t <= 1 else mature
        if t > get("operations.ageing_starts_year", o.ageing_starts_year):
            avail -= get("operations.availability_ageing_per_year", o.availability_ageing_per_year) * (
                t - get("operations.ageing_starts_year", o.ageing_starts_year))
        avail = min(max(avail, 0.0), 1.0)
        g = gross if speed is None else gross * table_ratio(site, float(speed[t - 1]))
        down = exp_down if downtime is None else downtime[t - 1]
        part = first_share if t == 1 else 1.0
        e = g * lf * avail * part * (1.0 - down) * (1.0 - get("operations.degradation_per_year",
                                                                o.degradation_per_year)) ** (t - 1)
        if efac is not None:
            e *= efac
        if t <= get("revenue.ppa_term_years", scn.ppa_term_years):
            price = get("revenue.ppa_price_per_mwh", r.ppa_price_per_mwh) * (1 + get("revenue.ppa_escalation",
                                                                                   r.ppa_escalation)) ** t
        else:
            price = get("revenue.merchant_price_per_mwh", scn.merchant_price_per_mwh) * (
                1 + get("revenue.merchant_escalation", r.merchant_escalation)) ** t
        credit = get("revenue.production_credit_per_mwh", r.production_credit_per_mwh) \
            if t <= get("revenue.production_credit_years", r.production_credit_years) else 0.0
        revenue = e * (price + credit)
        works = sum(get(f"maintenance.overhaul.{x.name}.cost_per_turbine", x.cost_per_turbine) * n
                    for x in m.overhaul if get(f"maintenance.overhaul.{x.name}.year", x.year) == t)
        failures = exp_cost if fail_cost is None else fail_cost[t - 1]
        om = (((get("maintenance.fixed_per_kw_year", m.fixed_per_kw_year)
                + get("maintenance.insurance_per_kw_year", m.insurance_per_kw_year)) * kw + failures + works) * part
              + get("maintenance.variable_per_mwh", m.variable_per_mwh) * e) * (1 + esc) ** t \
            + get("maintenance.land_lease_share_of_revenue", m.land_lease_share_of_revenue) * revenue
        decom = (get("capex.decommissioning_per_kw", c.decommissioning_per_kw)
                 - get("capex.salvage_per_kw", c.salvage_per_kw)) * kw * (1 + esc) ** L if t == L else 0.0
        pre_tax = revenue - om - decom
        dep = capex * shares[t - 1]
        tax_u, pool_u = _carry_forward(pre_tax - dep, pool_u, tax_rate)
        tax_l, pool_l = _carry_forward(pre_tax - dep - float(sched.interest[0, t - 1]), pool_l, tax_rate)
        energy.append(e)
        costs.append(om + decom)
        project.append(pre_tax - tax_u)
        cfads.append(pre_tax - tax_l)
        equity.append(pre_tax - tax_l - float(sched.debt_service[0, t - 1]))
        ds_line.append(float(sched.debt_service[0, t - 1]))
        pre_line.append(pre_tax)
        taxable_line.append(pre_tax - dep)
        works_line.append(works * (1 + esc) ** t)
    flags = {}
    res, wfall = scn.reserves, scn.waterfall
    if cons is not None:
        dsra0 = res.dsra_months / 12.0 * ds_line[1] / first_share if res is not None else 0.0
        equity[0] = -(plain_funding(capex, float(sched.debt[0, 0]), float(sched.fee[0, 0]), dsra0, cons,
                                    scn.finance.debt.interest_rate if scn.finance.debt else 0.0) - dsra0)
    swept_ds = [0.0] + [float(x) for x in sched.debt_service[0]]
    if res is not None or wfall is not None:
        sweep = None
        if wfall is not None and wfall.cash_sweep:
            owed = [0.0] + [float(o + i - d) for o, i, d in zip(sched.balance_open[0], sched.interest[0],
                                                                  sched.debt_service[0])]
            sweep = (pre_line, taxable_line, [0.0] + [float(x) for x in sched.interest[0]], owed, tax_rate)
        flags = plain_waterfall(cfads, ds_line, works_line, equity[0], res.dsra_months if res else 0.0,
                                res.maintenance_years if res else 0, res.deposit_rate if res else 0.0,
                                wfall.lockup_dscr if wfall else 0.0, first_share, sweep)
        equity = flags.pop("equity")
        cfads, swept_ds = flags.pop("cfads"), flags.pop("ds")
    rate = get("finance.discount_rate", f.discount_rate)
    real = (1 + rate) / (1 + get("finance.inflation", f.inflation)) - 1
    disc = [(1 + rate) ** -t for t in range(L + 1)]
    pv_costs = capex + sum(x * d for x, d in zip(costs, disc))
    pv_energy = sum(x * d for x, d in zip(energy, disc))
    pv_energy_real = sum(x * (1 + real) ** -t for t, x in enumerate(energy))
    nan = float("nan")
    eq_rate = get("finance.equity_target_return", scn.equity_target_return)
    out = {"project_npv": npf.npv(rate, project), "project_irr": npf.irr(project),
           "equity_npv": npf.npv(eq_rate, equity), "equity_irr": npf.irr(equity),
           "lcoe_nominal_per_mwh": pv_costs / pv_energy if pv_energy > 0 else nan,
           "lcoe_real_per_mwh": pv_costs / pv_energy_real if pv_energy_real > 0 else nan, **flags}
    cum, payback = 0.0, nan
    for t, x in enumerate(equity):
        cum += x
        if cum >= 0:
            payback = float(t)
            break
    out["payback_year"] = payback
    debt = float(sched.debt[0, 0])
    if f.debt is not None and debt > 0:
        i_rate = get("finance.debt.interest_rate", f.debt.interest_rate)
        dscr, pv = [], 0.0
        for t in range(1, L + 1):
            ds = swept_ds[t]
            if ds > 0:
                dscr.append(cfads[t] / ds)
                pv += cfads[t] * (1 + i_rate) ** -(t - 1 + first_share)   # the debt's clock
        out.update(min_dscr=min(dscr), avg_dscr=sum(dscr) / len(dscr), llcr=pv / debt)
    return out


def loop_trials(scn, case, inputs: dict, sample, rows) -> dict:
    """The straightforward way: each trial on its own (:func:`reference_trial`)."""

    site = en.site_for(scn)
    out: dict[str, list] = {}
    for i in rows:
        pick = (lambda a: None if a is None else a[i])  # noqa: E731
        res = reference_trial(scn, case, site, {k: v[i] for k, v in inputs.items()},
                              pick(sample.speed_factor), None if sample.energy_factor is None else
                              float(sample.energy_factor[i, 0]), pick(sample.downtime), pick(sample.failure_cost))
        for k, v in res.items():
            out.setdefault(k, []).append(v)
    return {k: np.asarray(v, float) for k, v in out.items()}


def _shape_vary_s(scn, trials: int) -> float | None:
    """One Monte Carlo run (after one untimed) with the Weibull shape drawn as well (normal, sd 5 % of k),
    which reads its own AEP table; None for a series climate (no shape to draw)."""
    if scn.wind.timeseries is not None or trials <= 0:
        return None
    raw = scn.raw
    vary = raw.setdefault("montecarlo", {}).setdefault("vary", {})
    vary["wind.weibull_shape"] = {"distribution": "normal", "sd": 0.05 * scn.wind.weibull_shape}
    raw["montecarlo"]["correlation"] = []
    shaped = scenario.from_dict(raw, source=scn.source, base_dir=scn.base_dir)
    case = model.run(shaped, breakeven=False)
    uncertainty.monte_carlo(shaped, case, trials=min(trials, uncertainty.BLOCK))
    t0 = time.perf_counter()
    uncertainty.monte_carlo(shaped, case, trials=trials)
    return time.perf_counter() - t0


def wake_case(site):
    """The wake benchmark's inputs on the scenario's turbine: (x, y, D, k, probabilities, edges, power, thrust)."""
    d = site.curve.rotor_diameter_m
    grid = layout.grid_layout(WAKE_ROWS, WAKE_COLUMNS, 7.0, 4.0, 90.0, d)
    a = site.climate.scale_mps if np.isfinite(site.climate.scale_mps) else 8.0
    r = rose.rose_from_table(WAKE_FREQUENCY, [a * (0.85 + 0.3 * f / max(WAKE_FREQUENCY)) for f in WAKE_FREQUENCY],
                             [2.0] * WAKE_SECTORS)
    top = float(np.max(site.site_curve.breaks_mps))
    edges = np.arange(0.0, np.ceil(top / WAKE_BIN_MPS) * WAKE_BIN_MPS + WAKE_BIN_MPS + 1e-9, WAKE_BIN_MPS)
    rho = site.climate.density_kgm3
    return (grid.x_m, grid.y_m, d, wake.DECAY_ONSHORE, r.bin_probabilities(edges), edges, site.site_curve.power_kw,
            lambda v: site.curve.thrust_coefficient_at(v, rho))


def synthetic_portfolio(sites: int, trials: int, seed: int = 7) -> portfolio_file.Portfolio:
    """``sites`` invented candidate sites (the demo portfolio's first site with its turbine count,
    mean wind speed and elevation drawn afresh, each its own climate) scattered over about
    220 x 190 km around the ridge, their yearly wind correlated by distance (150 km)."""
    base = scenario.load(demo_scenario("portfolio_tallowmere_north.toml"))
    rng = np.random.default_rng(seed)
    out = []
    for i in range(sites):
        raw = base.raw
        raw["project"]["name"] = f"Candidate {i + 1:03d}"
        raw["project"]["turbines"] = int(rng.integers(6, 21))
        raw["wind"]["mean_speed_mps"] = round(float(rng.uniform(6.6, 8.4)), 3)
        raw["wind"]["elevation_m"] = round(float(rng.uniform(150.0, 650.0)), 1)
        scn = scenario.from_dict(raw, source=f"candidate_{i + 1:03d}", base_dir=assumptions_dir())
        out.append(portfolio_file.PortfolioSite(name=scn.project.name, share=1.0, scenario=scn, file=scn.source,
                                                latitude_deg=54.9 + float(rng.uniform(-1.0, 1.0)),
                                                longitude_deg=-2.6 + float(rng.uniform(-1.5, 1.5))))
    return portfolio_file.Portfolio(name=f"{sites} candidate sites", currency="EUR", trials=trials, seed=seed,
                                    sites=tuple(out), correlation=portfolio_file.CorrelationSection(
                                        rule="distance", length_km=150.0),
                                    common=portfolio_file.CommonSection())


def portfolio_bench(sites: int = 200, trials: int = 2000) -> dict:
    """The portfolio Monte Carlo of ``sites`` x ``trials`` through the local Dask cluster with 1
    and with 2 workers (each run whole: sites prepared, then the trials), after a small warm-up.
    The two runs must agree bit for bit."""
    with cluster.local(1) as warm:
        portfolio_mc.run(synthetic_portfolio(2, 200), runner=warm)
    pf = synthetic_portfolio(sites, trials)
    runs, results = {}, {}
    for workers in (1, 2):
        with cluster.local(workers) as runner:
            t0 = time.perf_counter()
            res = portfolio_mc.run(pf, runner=runner)
            runs[workers] = (time.perf_counter() - t0, res.execution["prepare_s"], res.execution["trials_s"])
        results[workers] = res
        res = None
    a, b = results[1], results[2]
    same = all(np.array_equal(a.lines[k], b.lines[k]) for k in a.lines) and \
        all(np.array_equal(a.site_values[k], b.site_values[k], equal_nan=True) for k in a.site_values)
    if not same:
        raise AssertionError("bench: the portfolio with 1 and with 2 workers differs")
    st = sites * trials
    return {
        "portfolio_sites": sites,
        "portfolio_trials": trials,
        "portfolio_s_1_worker": runs[1][0],
        "portfolio_s_2_workers": runs[2][0],
        "portfolio_prepare_s_2_workers": runs[2][1],
        "portfolio_trials_s_2_workers": runs[2][2],
        "portfolio_site_trials_per_s": st / runs[2][0],
        "portfolio_site_trials_per_s_1_worker": st / runs[1][0],
        "portfolio_speedup_1_to_2_workers": runs[1][0] / runs[2][0],
        "portfolio_trials_speedup_1_to_2_workers": runs[1][2] / runs[2][2],
    }


def run_bench(path=DEMO, trials: int = 100_000, loop_sample: int = 500, repeat: int = 5,
              portfolio_sites: int = 0, portfolio_trials: int = 2000, startup: bool = False) -> dict:
    """Time the engine; ``engine_s`` is the median of ``repeat`` Monte Carlo runs;
    ``portfolio_sites`` > 0 adds :func:`portfolio_bench`, ``startup`` :func:`startup_bench`."""

    scn = scenario.load(path)
    case = model.run(scn)                      # warms the site cache (gross AEP table)
    # warm-up, not timed: imports, compiled kernels, caches and the memory the run will reuse
    uncertainty.monte_carlo(scn, case, trials=min(trials, 100_000))

    # the loop runs the same first trials, drawn exactly as the Monte Carlo drew them (block 0)
    m = min(loop_sample, trials, uncertainty.BLOCK)
    inputs, sample = uncertainty.draw_block(scn, min(trials, uncertainty.BLOCK),
                                            uncertainty._block_rng(scn.montecarlo.seed, 0), scn.lifetime)
    inputs = uncertainty._clip_inputs(scn, inputs, [])
    # engine runs and slices of the loop take turns, so that a machine whose speed drifts
    # during the benchmark slows both sides of the speed-up alike
    repeat = max(1, repeat)
    slices = [range(m * k // repeat, m * (k + 1) // repeat) for k in range(repeat)]
    runs, loop_s, parts = [], 0.0, []
    for rows in slices:
        mc = None                               # one result held at a time, as in a user's run
        t0 = time.perf_counter()
        mc = uncertainty.monte_carlo(scn, case, trials=trials)
        runs.append(time.perf_counter() - t0)
        t0 = time.perf_counter()
        parts.append(loop_trials(scn, case, inputs, sample, rows))
        loop_s += time.perf_counter() - t0
    engine_s = float(np.median(runs))
    loop_s_per_trial = loop_s / m if m else 0.0
    looped = {k: np.concatenate([p[k] for p in parts if k in p]) for k in set().union(*parts)}
    worst = 0.0
    for k, v in looped.items():
        e = (mc.samples[k] if k in mc.samples else mc.waterfall[k])[:m]
        ok = np.isfinite(v) & np.isfinite(e)
        if np.any(np.isfinite(v) != np.isfinite(e)):
            raise AssertionError(f"bench: loop and engine disagree on which trials have a {k}")
        if ok.any():
            rel = np.max(np.abs(v[ok] - e[ok]) / np.maximum(np.abs(e[ok]), 1e-12))
            worst = max(worst, float(rel))
    if worst > 1e-8:
        raise AssertionError(f"bench: loop and engine differ by {worst:.3g} (relative) on the subsample")

    shape_s = _shape_vary_s(scn, trials)
    deterministic_ms = 1000.0 * _median_time(lambda: model.run(scn), 15)
    site = en.site_for(scn)
    c = site.climate
    aep_ms = 1000.0 * _median_time(lambda: en.aep_weibull_mwh(site.site_curve, c.scale_mps, c.shape,
                                                              scn.project.turbines), 50)
    case_w = wake_case(site)
    wake_ms = 1000.0 * _median_time(lambda: wake.farm_wake(*case_w), 5)
    out = {
        "scenario": str(path),
        "trials": trials,
        "engine_s": engine_s,
        "engine_runs_s": runs,
        "loop_s_per_trial": loop_s_per_trial,
        "loop_subsample": m,
        "loop_estimate_s": loop_s_per_trial * trials,
        "speedup_vs_loop": (loop_s_per_trial * trials) / engine_s if engine_s > 0 else None,
        "loop_vs_engine_max_rel_diff": worst,
        "deterministic_ms": deterministic_ms,
        "aep_ms": aep_ms,
        "shape_vary_s": shape_s,
        "wake_ms": wake_ms,
        "wake_case": f"{WAKE_ROWS * WAKE_COLUMNS} turbines, {WAKE_SECTORS} sectors, {WAKE_BIN_MPS:g} m/s bins, "
                     "1 degree directions",
        "peak_rss_mb": _peak_rss_mb(),
        "chunk_size": scn.montecarlo.chunk_size,
    }
    if portfolio_sites > 0:
        out.update(portfolio_bench(portfolio_sites, portfolio_trials))
        out["peak_rss_mb"] = _peak_rss_mb()
    if startup:
        out.update(startup_bench(path))
    return out


def cmd_bench(args) -> int:
    from lcoe.inputs.errors import ScenarioError
    from lcoe.inputs.schema import MAX_TRIALS
    if args.trials > MAX_TRIALS:
        raise ScenarioError(f"must be at most {MAX_TRIALS:,} (the limit montecarlo.trials has in the file)",
                            key="--trials", value=args.trials)
    if args.repeat > 100:
        raise ScenarioError("must be at most 100", key="--repeat", value=args.repeat)
    res = run_bench(args.file or DEMO, trials=args.trials, loop_sample=args.loop_sample, repeat=args.repeat,
                    portfolio_sites=args.portfolio_sites, portfolio_trials=args.portfolio_trials,
                    startup=not args.no_startup)
    if args.json:
        print(json.dumps(res, indent=2))
        return 0
    print(f"Benchmark on {res['scenario']}")
    print(f"  Monte Carlo, {res['trials']:,} trials of the full model:   {res['engine_s']:.3f} s "
          f"(median of {len(res['engine_runs_s'])} runs)")
    print(f"  Per-trial loop with numpy-financial:            {1000 * res['loop_s_per_trial']:.3f} ms/trial "
          f"(timed on {res['loop_subsample']} trials, scaled to {res['loop_estimate_s']:.1f} s)")
    print(f"  Speed-up of the engine over the loop:           {res['speedup_vs_loop']:.0f}x "
          f"(same numbers to {res['loop_vs_engine_max_rel_diff']:.1e})")
    if res["shape_vary_s"] is not None:
        print(f"  The same with the Weibull shape drawn too:      {res['shape_vary_s']:.3f} s (one run)")
    print(f"  One deterministic run (site cached):            {res['deterministic_ms']:.2f} ms")
    print(f"  Weibull AEP integral:                           {res['aep_ms']:.3f} ms")
    print(f"  Wake losses ({res['wake_case']}): {res['wake_ms']:.1f} ms")
    if "portfolio_sites" in res:
        print(f"  Portfolio, {res['portfolio_sites']} sites x {res['portfolio_trials']:,} trials, local cluster:")
        print(f"    2 workers:                                    {res['portfolio_s_2_workers']:.2f} s "
              f"({res['portfolio_site_trials_per_s']:,.0f} site-trials/s; sites prepared in "
              f"{res['portfolio_prepare_s_2_workers']:.2f} s)")
        print(f"    1 worker:                                     {res['portfolio_s_1_worker']:.2f} s "
              f"(2 workers are {res['portfolio_speedup_1_to_2_workers']:.2f}x as fast; the trials alone "
              f"{res['portfolio_trials_speedup_1_to_2_workers']:.2f}x)")
    if "cli_help_s" in res:
        print("  Command line, fresh processes from an empty folder:")
        print(f"    `--help` (the slowest of every command's):    {res['cli_help_s']:.2f} s")
        print(f"    first `lcoe run`, kernels built:              {res['cold_run_s']:.2f} s")
        print(f"    `lcoe run` again, kernels cached:             {res['warm_run_s']:.2f} s "
              f"(median of {len(res['warm_runs_s'])})")
    print(f"  Peak memory:                                    {res['peak_rss_mb']:.0f} MB")
    return 0
