"""Portfolio Monte Carlo: many sites, their yearly wind correlated, summed year by year.

Each trial draws the yearly wind of every site together: standard normals, correlated
across sites through the Gaussian copula of the portfolio's correlation matrix (its
lower-triangular factor), become each site's inter-annual speed factors
(1 + interannual_speed_sd z), exactly as the single-site Monte Carlo makes them. The rest
of a site's uncertainty (long-term speed, energy terms, failures, its own
``[montecarlo.vary]`` inputs) is drawn as in its own Monte Carlo, independently of the
other sites, unless ``correlation.long_term = "correlated"`` puts the long-term speed
terms through the same matrix. Draws common to every site (one capex factor, one merchant
price path) come from the portfolio's own stream. Every site then runs through the
single-site engine (:func:`lcoe.engine.evaluate`, debt as sized at its close) and its
yearly lines, times its ownership share, are added in file order.

Work goes in blocks of trials. A block's random numbers come from generators keyed by
(seed, block) for the portfolio's draws and (seed, block, site) for each site's own, so a
block gives the same numbers wherever and whenever it runs, and the results are collected
by block number: identical bit for bit with 1 worker, 2 workers, on a cluster or without
Dask (:mod:`lcoe.analysis.cluster`). A block holds sites x trials-in-block x years normals
at most; nothing of size trials x sites x years is ever held. The whole run keeps, per
trial, the portfolio's yearly lines and a few figures per site (56 bytes per site-trial).
"""

from __future__ import annotations

import dataclasses
import math
import time
from dataclasses import dataclass

import numpy as np
from scipy.special import ndtr

from lcoe import engine
from lcoe.analysis import (
    _kernels,  # the compiled copula product; tests set _kernels = None to run the array formula
    cluster,
)
from lcoe.analysis import montecarlo as mc
from lcoe.analysis.portfolio_results import LINE_KEYS, SITE_KEYS, PortfolioResult
from lcoe.finance import metrics as mt
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.keys import numeric_value
from lcoe.physics import energy as en

BLOCK = 1024                    # trials per block (fewer for very large portfolios, see block_trials)
BLOCK_BYTES = 64 * 2 ** 20      # cap on a block's correlated normals (sites x trials x years doubles)
EARTH_RADIUS_KM = 6371.0088     # mean Earth radius (IUGG)
CAPEX_KEYS = ("capex.turbine_per_kw", "capex.balance_of_plant_per_kw", "capex.grid_connection",
              "capex.development")
PSD_TOL = 1e-10


# --------------------------------------------------------------------------- correlation

def distance_km(lat1, lon1, lat2, lon2):
    """Great-circle distance by the haversine formula on a sphere of the mean Earth radius. [km]

    References: R. W. Sinnott, "Virtues of the haversine", Sky and Telescope 68(2), 1984;
    mean radius 6371.0088 km (IUGG, Moritz 2000, Geodetic Reference System 1980)."""
    p1, p2 = np.radians(lat1), np.radians(lat2)
    dp, dl = p2 - p1, np.radians(np.asarray(lon2, float) - np.asarray(lon1, float))
    h = np.sin(dp / 2.0) ** 2 + np.cos(p1) * np.cos(p2) * np.sin(dl / 2.0) ** 2
    return 2.0 * EARTH_RADIUS_KM * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0)))


def correlation_matrix(pf) -> np.ndarray:
    """The correlation of one year's mean wind speed between every pair of sites.

    ``rule = "matrix"``: as given. ``rule = "distance"``: rho = exp(-d / length_km) with d
    the great-circle distance between the sites; an exponential decay of the correlation
    of wind anomalies with distance is common practice, and the exponential is a valid
    (positive definite) correlation on the sphere for any length (Gneiting 2013,
    "Strictly and non-strictly positive definite functions on spheres", Bernoulli 19(4)).
    The speed factor is linear in its normal draw, so rho is both the copula's
    correlation and the (Pearson) correlation of the sites' yearly mean speeds.
    """
    c = pf.correlation
    if c.rule == "matrix":
        return np.asarray(c.matrix, float)
    lat = np.array([s.latitude_deg for s in pf.sites], float)
    lon = np.array([s.longitude_deg for s in pf.sites], float)
    d = distance_km(lat[:, None], lon[:, None], lat[None, :], lon[None, :])
    r = np.exp(-d / c.length_km)
    np.fill_diagonal(r, 1.0)
    return r


def factor(r: np.ndarray) -> np.ndarray:
    """Lower-triangular C with C C^T = r, for a positive semi-definite r (perfect
    correlations allowed: a pivot that is zero to rounding gives a zero column).

    The Cholesky-Banachiewicz recurrence (Golub and Van Loan, Matrix Computations,
    4th ed., section 4.2), row by row in a fixed order."""
    r = np.asarray(r, float)
    n = r.shape[0]
    c = np.zeros((n, n))
    for j in range(n):
        d = r[j, j] - float(np.dot(c[j, :j], c[j, :j]))
        below = r[j + 1:, j] - c[j + 1:, :j] @ c[j, :j]
        if d > PSD_TOL:
            c[j, j] = math.sqrt(d)
            c[j + 1:, j] = below / c[j, j]
        elif d >= -PSD_TOL and np.all(np.abs(below) <= 1e-8):
            c[j, j] = 0.0            # site j moves with the sites before it
        else:
            raise ScenarioError("the correlations together are impossible (the matrix is not positive "
                                "semi-definite)", key="correlation", has_value=False)
    return c


def correlate(chol: np.ndarray, z: np.ndarray) -> np.ndarray:
    """``chol @ z`` for z (sites, m), in place, summed in one fixed order (see
    :mod:`lcoe.analysis._kernels`)."""
    if _kernels is not None:
        return _kernels.correlate_in_place(np.ascontiguousarray(chol), z)
    z[:] = chol @ z
    return z


def block_trials(sites: int, horizon: int) -> int:
    """Trials per block: BLOCK, halved while a block's normals would pass BLOCK_BYTES."""
    n = BLOCK
    while n > 64 and sites * horizon * n * 8 > BLOCK_BYTES:
        n //= 2
    return n


# --------------------------------------------------------------------------- the plan

@dataclass(frozen=True)
class SitePlan:
    """One site ready for the trials: its scenario, site, P50 case and debt schedule at close."""

    name: str
    share: float
    file: str
    scenario: object
    site: en.Site
    energy: en.EnergyResult
    schedule: object
    metrics: dict
    warnings: tuple

    @property
    def lifetime(self) -> int:
        return self.scenario.lifetime


@dataclass(frozen=True)
class Plan:
    """Everything a block needs, sent to every worker once."""

    sites: tuple
    chol: np.ndarray
    horizon: int
    trials: int
    seed: int
    block: int
    long_term_correlated: bool
    capex: object            # a Vary spec of the common capex factor, or None
    price_volatility: float | None
    debt_service: np.ndarray  # (H + 1,) the sites' debt service at close, times their shares

    @property
    def blocks(self) -> int:
        return math.ceil(self.trials / self.block)

    def size(self, b: int) -> int:
        return min(self.block, self.trials - b * self.block)


def prepare_site(inputs, i: int):
    """A task: the site table and the P50 case (debt sized at close) of site ``i`` from its
    scenario, climate and curve (read by the caller, so a worker needs no data files)."""
    cluster.one_blas_thread()
    scn, climate, curve = inputs[i]
    try:
        site = en.build_site(scn, climate, curve)
        case = engine.run(scn, breakeven=False, site=site)
    except ScenarioError as exc:
        raise exc.with_file(scn.source) from None
    warnings = tuple(dict.fromkeys(list(scn.warnings()) + list(case.warnings)))
    return site, case.energy, case.schedule, case.metrics, warnings


def make_plan(pf, runner, trials: int) -> tuple[Plan, np.ndarray]:
    """Prepare every site (as tasks on ``runner``) and the copula factor: (plan, correlation)."""
    r = correlation_matrix(pf)
    chol = factor(r)
    inputs = [(s.scenario, en.climate_from(s.scenario), en.curve_from(s.scenario)) for s in pf.sites]
    done: dict[int, tuple] = {}
    runner.map(prepare_site, inputs, range(len(inputs)), lambda i, res: done.__setitem__(i, res))
    H = pf.horizon
    ds = np.zeros(H + 1)
    sites = []
    for i, s in enumerate(pf.sites):
        site, energy, schedule, metrics, warnings = done[i]
        L = s.scenario.lifetime
        ds[1:L + 1] += s.share * np.asarray(schedule.debt_service, float).reshape(-1)[:L]
        sites.append(SitePlan(s.name, s.share, s.file, s.scenario, site, energy, schedule, metrics, warnings))
    merchant = pf.common.merchant_price
    plan = Plan(sites=tuple(sites), chol=chol, horizon=H, trials=trials, seed=pf.seed,
                block=block_trials(len(sites), H), long_term_correlated=pf.correlation.long_term == "correlated",
                capex=pf.common.capex, price_volatility=None if merchant is None else merchant.volatility,
                debt_service=ds)
    return plan, r


# --------------------------------------------------------------------------- the draws

@dataclass
class CommonDraws:
    """A block's draws shared across sites: correlated normals and the common factors."""

    interannual: np.ndarray           # (sites, n, H) correlated standard normals
    long_term: np.ndarray | None      # (sites, n) correlated, or None (each site draws its own)
    capex_factor: np.ndarray | None   # (n,)
    price_path: np.ndarray | None     # (n, H) factor on the merchant price of year t = 1..H
    capex_clipped: int = 0


def draw_common(plan: Plan, b: int) -> CommonDraws:
    """The portfolio's own draws for block ``b`` (generator keyed by (seed, b, 0))."""
    n, S, H = plan.size(b), len(plan.sites), plan.horizon
    rng = mc.block_rng(plan.seed, b, 0)
    z = rng.standard_normal((S, n * H))
    correlate(plan.chol, z)
    lt = None
    if plan.long_term_correlated:
        lt = rng.standard_normal((S, n))
        correlate(plan.chol, lt)
    capex = None
    clipped = 0
    if plan.capex is not None:
        spec, zc = plan.capex, rng.standard_normal(n)
        capex = mc._from_normal(spec, 1.0, zc) if spec.distribution in ("normal", "lognormal") else \
            mc.quantile(spec, 1.0, ndtr(zc))
        clipped = int(np.sum(capex < 0.0))
        capex = np.maximum(capex, 0.0)
    path = None
    if plan.price_volatility is not None:
        # a random walk of the log price with mean factor 1 in every year: exp(s W_t - t s^2 / 2)
        s = plan.price_volatility
        walk = np.cumsum(rng.standard_normal((n, H)), axis=1)
        path = np.exp(s * walk - (s * s / 2.0) * np.arange(1, H + 1))
    return CommonDraws(z.reshape(S, n, H), lt, capex, path, clipped)


def site_draws(plan: Plan, common: CommonDraws, b: int, s: int):
    """Site ``s``'s trials of block ``b``: (drawn inputs, Sample, clipped counts). Its own
    draws come from the generator keyed by (seed, b, 1 + s)."""
    sp = plan.sites[s]
    scn, L, n = sp.scenario, sp.lifetime, plan.size(b)
    lt = None if common.long_term is None else common.long_term[s].reshape(n, 1)
    inputs, sample = mc.draw_block(scn, n, mc.block_rng(plan.seed, b, 1 + s), L, long_term_normals=lt,
                                   interannual_normals=common.interannual[s, :, :L])
    inputs, clipped = mc.clip_inputs(scn, inputs)
    if common.capex_factor is not None:
        for key in CAPEX_KEYS:
            inputs[key] = np.asarray(inputs.get(key, numeric_value(scn, key)), float) * common.capex_factor
    if common.price_path is not None:
        sample = dataclasses.replace(sample, merchant_price_factor=common.price_path[:, :L])
    return inputs, sample, clipped


def site_flows(plan: Plan, s: int, inputs: dict, sample):
    """Site ``s``'s yearly lines and metrics for its drawn trials, through the single-site engine."""
    sp = plan.sites[s]
    flows, m, _ = engine.evaluate(sp.scenario, overrides=inputs or None, sample=sample, schedule=sp.schedule,
                                  energy=sp.energy, site=sp.site, irr=False, lean=True)
    return flows, m


# --------------------------------------------------------------------------- a block

def run_block(plan: Plan, b: int) -> dict:
    """A task: block ``b`` of trials across every site. Returns the portfolio's yearly lines
    (n, H + 1), each site's figures (len(SITE_KEYS), n, sites), the portfolio's equity IRR,
    equity NPV and pooled minimum DSCR (n,), and the counts of clipped draws."""
    cluster.one_blas_thread()
    n, S, H = plan.size(b), len(plan.sites), plan.horizon
    common = draw_common(plan, b)
    lines = {k: np.zeros((n, H + 1)) for k in LINE_KEYS}
    per_site = np.empty((len(SITE_KEYS), n, S))
    clipped: dict = {}
    for s, sp in enumerate(plan.sites):
        try:
            inputs, sample, clip = site_draws(plan, common, b, s)
            flows, m = site_flows(plan, s, inputs, sample)
        except ScenarioError as exc:
            raise exc.with_file(sp.file) from None
        for key, count, lo, hi in clip:
            clipped[(s, key)] = (count, lo, hi)
        L, w = sp.lifetime, sp.share
        e = flows.energy_mwh
        for key, line in (("energy_mwh", e), ("revenue", flows.revenue), ("cfads", flows.cfads),
                          ("equity_cash_flow", flows.equity_cash_flow)):
            lines[key][:, :L + 1] += w * line
        per_site[0, :, s] = w * e[:, 1]
        per_site[1, :, s] = w * (e[:, 1:min(L, 10) + 1].sum(axis=1) / 10.0)
        per_site[2, :, s] = w * e[:, 1:].sum(axis=1)
        per_site[3, :, s] = w * flows.revenue[:, 1:].sum(axis=1)
        per_site[4, :, s] = w * flows.cfads[:, 1:].sum(axis=1)
        per_site[5, :, s] = w * m["equity_npv"]
        per_site[6, :, s] = m["min_dscr"]
    equity_npv = np.zeros(n)
    for s in range(S):
        equity_npv += per_site[5, :, s]
    irr, _ = mt.irr(lines["equity_cash_flow"])
    ds = plan.debt_service
    paid = ds > 0
    if paid.any():
        pooled = (lines["cfads"][:, paid] / ds[paid]).min(axis=1)
    else:
        pooled = np.full(n, np.nan)
    return {"lines": lines, "sites": per_site, "equity_irr": irr, "equity_npv": equity_npv,
            "pooled_min_dscr": pooled, "clipped": clipped, "capex_clipped": common.capex_clipped}


# --------------------------------------------------------------------------- the run

def run(pf, *, trials: int | None = None, runner=None) -> PortfolioResult:
    """The portfolio Monte Carlo of ``pf`` (:class:`lcoe.inputs.portfolio.Portfolio`) on
    ``runner`` (default: a plain loop in this process; see :mod:`lcoe.analysis.cluster`)."""
    n = pf.trials if trials is None else int(trials)
    if n < 1:
        raise ScenarioError("must be >= 1", key="--trials", value=n)
    own = runner is None
    runner = cluster.Plain() if own else runner
    try:
        with cluster.blas_held_to_one():
            t0 = time.perf_counter()
            plan, r = make_plan(pf, runner, n)
            t1 = time.perf_counter()
            S, H = len(plan.sites), plan.horizon
            lines = {k: np.empty((n, H + 1)) for k in LINE_KEYS}
            per_site = np.empty((len(SITE_KEYS), n, S))
            totals = {k: np.empty(n) for k in ("equity_irr", "equity_npv", "pooled_min_dscr")}
            clipped: dict = {}
            capex_clipped = [0]

            def sink(b, res):
                lo, hi = b * plan.block, b * plan.block + plan.size(b)
                for k in LINE_KEYS:
                    lines[k][lo:hi] = res["lines"][k]
                per_site[:, lo:hi, :] = res["sites"]
                for k in totals:
                    totals[k][lo:hi] = res[k]
                for key, (count, low, high) in res["clipped"].items():
                    seen = clipped.get(key, (0, low, high))
                    clipped[key] = (seen[0] + count, low, high)
                capex_clipped[0] += res["capex_clipped"]

            runner.map(run_block, plan, range(plan.blocks), sink)
            execution = dict(runner.describe(), prepare_s=t1 - t0, trials_s=time.perf_counter() - t1)
    finally:
        if own:
            runner.close()
    warnings = _warnings(pf, plan, clipped, capex_clipped[0], n, int(np.sum(~np.isfinite(totals["equity_irr"]))))
    return PortfolioResult(pf=pf, plan=plan, matrix=r, lines=lines, site_values=dict(zip(SITE_KEYS, per_site)),
                           totals=totals, warnings=warnings, execution=execution)


def _warnings(pf, plan: Plan, clipped: dict, capex_clipped: int, n: int, no_irr: int) -> list[str]:
    out = []
    for sp in plan.sites:
        out.extend(f"site {sp.name}: {w}" for w in sp.warnings)
    for s, sp in enumerate(plan.sites):
        rows = [(key, count, lo, hi) for (i, key), (count, lo, hi) in clipped.items() if i == s]
        out.extend(f"site {sp.name}: {w}" for w in mc._clip_warnings(sp.scenario, rows, n))
    if capex_clipped:
        out.append(f"common.capex: {capex_clipped} of {n} draw(s) of the capex factor were below 0 and set to 0")
    if no_irr:
        out.append(f"portfolio: equity IRR undefined in {no_irr} of {n} trial(s) (no sign change or no root); "
                   "percentiles use the rest")
    for sp in plan.sites:
        vary = sp.scenario.montecarlo.vary
        if plan.price_volatility is not None and "revenue.merchant_price_per_mwh" in vary:
            out.append(f"site {sp.name}: its own draw of revenue.merchant_price_per_mwh and the common merchant "
                       "price path both apply (they multiply)")
        if plan.capex is not None and any(k in vary for k in CAPEX_KEYS):
            out.append(f"site {sp.name}: its own capex draws and the common capex factor both apply (they "
                       "multiply)")
    return list(dict.fromkeys(out))
