"""Monte Carlo through the same vectorised engine: P50/P75/P90/P99 of every result.

Each trial draws

* the inputs of ``[montecarlo.vary.KEY]`` (normal, lognormal, triangular, uniform), by
  plain random sampling (correlated through a Gaussian copula) or Latin hypercube
  sampling within each random-number block (correlated by Iman-Conover reordering);
* a long-term wind-speed factor from ``[[uncertainty.speed]]`` (with the long-term
  correction's own term where the wind is corrected to the long term) and an independent
  factor for every year from ``uncertainty.interannual_speed_sd``; both scale the
  hub-height speeds, and energy follows from the model's own AEP(scale) curve;
* an energy factor from ``[[uncertainty.energy]]``;
* the number of major component failures in each year (Poisson, rate per
  turbine-year times turbines), each with its replacement cost and downtime.

The debt stays as sized at close: every trial meets the base case's schedule.
Trials run in chunks, so memory grows with the chunk, not with the trial count; the
random numbers are drawn in fixed blocks, so the chunk size does not change results.
A chunk's terms come from the same engine as a deterministic run
(:func:`lcoe.finance.cashflow.terms`); its yearly lines and metrics are then worked out in one
compiled pass (:func:`lcoe.engine.trial_metrics`), held by the tests to the array route.
"""

from __future__ import annotations

import math
import os
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np
from scipy.special import gammaln, ndtr, ndtri, xlogy

from lcoe import engine as model
from lcoe.finance import _kernels  # compiled loops; tests set it to None to run the array formulas
from lcoe.finance.cashflow import Sample
from lcoe.inputs import keys
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.keys import numeric_value
from lcoe.physics import energy as en
from lcoe.inputs.scenario import vary_refusal
from lcoe.inputs.schema import MAX_TRIALS

BLOCK = 8192  # trials per random-number block
HIST_BINS = 40

# keys where a higher value is the better outcome (P90 = 10th percentile); the rest: P90 = 90th
HIGHER_IS_BETTER = {"project_npv", "project_irr", "equity_npv", "equity_irr", "min_dscr", "avg_dscr", "llcr",
                    "net_aep_year1_mwh", "net_aep_mean_mwh", "debt_amount"}
# keys whose undefined value is the worst outcome (never paid back): counted in the percentiles
NEVER_IS_WORST = {"payback_year"}
SAMPLED_KEYS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_npv",
                "equity_irr", "min_dscr", "avg_dscr", "llcr", "payback_year", "net_aep_year1_mwh",
                "net_aep_mean_mwh", "capex_total", "opex_mean")


# --------------------------------------------------------------------------- input distributions

def correlation_matrix(scn) -> np.ndarray:
    """Normal-score correlation that gives the requested rank correlations.

    ``rho`` in ``[[montecarlo.correlation]]`` is a rank (Spearman) correlation; for a
    bivariate normal the product-moment correlation is r = 2 sin(pi rho / 6) (Pearson
    1907's relation between rank and product-moment correlation), and rank correlations
    survive monotone transforms unchanged. Random sampling uses r in a Gaussian copula;
    Latin hypercube sampling gives the same r to the normal scores of Iman-Conover.
    """
    keys = list(scn.montecarlo.vary)
    m = len(keys)
    r = np.eye(m)
    for i, c in enumerate(scn.montecarlo.correlation):
        a, b = keys.index(c.between[0]), keys.index(c.between[1])
        r[a, b] = r[b, a] = 2.0 * math.sin(math.pi * c.rho / 6.0)
    try:
        np.linalg.cholesky(r)
    except np.linalg.LinAlgError:
        raise ScenarioError("the correlations together are impossible (the matrix is not positive definite)",
                            key="montecarlo.correlation", has_value=False) from None
    return r


@lru_cache(maxsize=8)
def _normal_scores(n: int) -> np.ndarray:
    """The van der Waerden scores Phi^-1(i / (n + 1)), i = 1..n."""
    scores = ndtri(np.arange(1, n + 1) / (n + 1.0))
    scores.flags.writeable = False
    return scores


def iman_conover(x: np.ndarray, target: np.ndarray, rng: np.random.Generator, *,
                 presorted: bool = False) -> np.ndarray:
    """Reorder the columns of ``x`` (n draws of m inputs) towards the target rank correlation.

    Each column keeps its values, only their order changes, so a stratified (Latin
    hypercube) column stays stratified. Scores: the van der Waerden normal scores
    Phi^-1(i / (n + 1)), shuffled independently for each column; their sample
    correlation T = Q Q^T is replaced by ``target`` = P P^T through S* = S (P Q^-1)^T;
    each column of ``x`` is then given the ranks of the matching column of S*.
    ``presorted``: each column of ``x`` is already in ascending order.

    References
    ----------
    R. L. Iman and W. J. Conover (1982), "A distribution-free approach to inducing rank
    correlation among input variables", Communications in Statistics - Simulation and
    Computation 11(3).
    """
    n, m = x.shape
    if n < 2 or m < 2:
        return x
    s = rng.permuted(np.broadcast_to(_normal_scores(n), (m, n)), axis=1).T
    t = np.corrcoef(s, rowvar=False)
    try:
        q = np.linalg.cholesky(t)
    except np.linalg.LinAlgError:   # too few draws for the scores' correlation to be full rank
        q = np.eye(m)
    p = np.linalg.cholesky(target)
    s_star = s @ np.linalg.solve(q.T, p.T)
    out = np.empty_like(x)
    for j in range(m):
        out[np.argsort(s_star[:, j]), j] = x[:, j] if presorted else np.sort(x[:, j])
    return out


def _bounds(scn, key):
    """The closed range a drawn value is clipped to (the schema's, excluded ends moved inside)."""
    return keys.key_bounds(key)


def draw_inputs(scn, n: int, rng: np.random.Generator) -> dict[str, np.ndarray]:
    """Draws of every ``[montecarlo.vary]`` input for one block of ``n`` trials.

    Latin hypercube: one draw in each of n equal-probability strata per input (McKay,
    Beckman and Conover 1979); without correlations the strata are shuffled
    independently for each input, with them Iman-Conover (:func:`iman_conover`) orders
    the draws, which keeps every input's strata. Random: independent normals, correlated
    through a Gaussian copula.
    """
    vary = scn.montecarlo.vary
    if not vary or n == 0:
        return {}
    keys = list(vary)
    m = len(keys)
    if scn.montecarlo.sampling == "latin_hypercube":
        if scn.montecarlo.correlation:
            # stratum k holds draw k of every input (ascending); Iman-Conover then orders them
            u = (np.arange(n, dtype=float)[:, None] + rng.random((n, m))) / n
            x = np.column_stack([quantile(vary[key], numeric_value(scn, key), u[:, j]) for j, key in enumerate(keys)])
            mixed = iman_conover(x, correlation_matrix(scn), rng, presorted=True)
            return {key: mixed[:, j] for j, key in enumerate(keys)}
        strata = rng.permuted(np.broadcast_to(np.arange(n, dtype=float), (m, n)), axis=1)
        u = (strata.T + rng.random((n, m))) / n
        return {key: quantile(vary[key], numeric_value(scn, key), u[:, j]) for j, key in enumerate(keys)}
    z = rng.standard_normal((n, m))
    if scn.montecarlo.correlation:
        z = z @ np.linalg.cholesky(correlation_matrix(scn)).T
    out = {}
    for j, key in enumerate(keys):
        spec, base = vary[key], numeric_value(scn, key)
        if spec.distribution in ("normal", "lognormal"):
            out[key] = _from_normal(spec, base, z[:, j])    # quantile(ndtr(z)) without the round trip
        else:
            out[key] = quantile(spec, base, ndtr(z[:, j]))
    return out


def _from_normal(spec, base: float, z: np.ndarray) -> np.ndarray:
    """A normal or lognormal input from standard normal draws ``z`` (see :func:`quantile`)."""
    mean = base if spec.mean is None else spec.mean
    if spec.distribution == "normal":
        return mean + spec.sd * z
    if mean <= 0:
        raise ScenarioError("a lognormal input needs a mean > 0", key="montecarlo.vary", value=mean)
    s2 = math.log(1.0 + (spec.sd / mean) ** 2)
    return np.exp(math.log(mean) - s2 / 2.0 + math.sqrt(s2) * z)


def quantile(spec, base: float, u) -> np.ndarray:
    """Inverse CDF of one ``[montecarlo.vary.KEY]`` distribution at probabilities ``u``.

    normal(mean, sd); lognormal with the variable's own mean and sd
    (sigma^2 = ln(1 + sd^2 / mean^2), mu = ln(mean) - sigma^2 / 2); triangular(low,
    mode, high), the mode clipped into low..high; uniform(low, high). ``mean`` and
    ``mode`` default to the scenario's value ``base``. Closed forms of the
    scipy.stats norm, lognorm, triang and uniform quantiles.
    """
    u = np.asarray(u, float)
    d = spec.distribution
    if d == "normal":
        mean = base if spec.mean is None else spec.mean
        return mean + spec.sd * ndtri(u)
    if d == "lognormal":
        mean = base if spec.mean is None else spec.mean
        if mean <= 0:
            raise ScenarioError("a lognormal input needs a mean > 0", key="montecarlo.vary", value=mean)
        s2 = math.log(1.0 + (spec.sd / mean) ** 2)
        return np.exp(math.log(mean) - s2 / 2.0 + math.sqrt(s2) * ndtri(u))
    lo, hi = spec.low, spec.high
    if d == "uniform" or hi <= lo:
        return lo + (hi - lo) * u
    mode = min(max(base if spec.mode is None else spec.mode, lo), hi)
    c = (mode - lo) / (hi - lo)
    left = lo + np.sqrt(u * (hi - lo) * (mode - lo))
    right = hi - np.sqrt((1.0 - u) * (hi - lo) * (hi - mode))
    return np.where(u < c, left, right)


# --------------------------------------------------------------------------- the trials

@dataclass
class MonteCarloResult:
    trials: int
    seed: int
    samples: dict
    target_dscr: float | None
    equity_target: float
    warnings: list = field(default_factory=list)
    inputs: dict = field(default_factory=dict)     # vary key -> drawn values
    waterfall: dict = field(default_factory=dict)  # engine.WATERFALL_TRIAL_KEYS -> values, with a cash waterfall

    def waterfall_report(self) -> dict:
        """P(lock-up in any year), P(DSRA drawn), P(debt service unpaid after the reserves) and the
        expected cash trapped over the life (nominal), with the debt locked at close."""
        w = self.waterfall
        if not w or w["lockup_any"].size == 0:
            return {}
        return {"prob_lockup_any_year": float(np.mean(w["lockup_any"] > 0)),
                "prob_dsra_drawn": float(np.mean(w["dsra_drawn"] > 0)),
                "prob_debt_service_unpaid": float(np.mean(w["unpaid_any"] > 0)),
                "expected_cash_trapped": float(np.mean(w["cash_trapped"]))}

    def _ranked(self, key: str) -> np.ndarray:
        """The values percentiles are taken of: the defined ones, except for the payback year,
        where a trial that never pays back counts as later than any year (+inf)."""
        x = self.samples[key]
        if key in NEVER_IS_WORST:
            return np.where(np.isfinite(x), x, np.inf)
        return x[np.isfinite(x)]

    def stats(self, key: str) -> dict:
        """p50, p75, p90, p99 (conservative side), mean and sd of one sampled key.

        Percentiles are numpy's (linear between order statistics) of the defined values;
        for the payback year those of all trials, a trial that never pays back being later
        than any year, so a percentile among those trials is None. Mean and sd are of the
        defined values (the trials that pay back)."""
        x = self._ranked(key)
        finite = x[np.isfinite(x)]
        if finite.size == 0:
            return {k: None for k in ("p50", "p75", "p90", "p99", "mean", "sd")}
        better_high = key in HIGHER_IS_BETTER
        q = {"p50": 50.0, "p75": 25.0 if better_high else 75.0, "p90": 10.0 if better_high else 90.0,
             "p99": 1.0 if better_high else 99.0}
        with np.errstate(invalid="ignore"):
            vals = np.percentile(x, list(q.values()))
        out = {k: (float(v) if math.isfinite(v) else None) for k, v in zip(q, vals)}
        out["mean"] = float(finite.mean())
        out["sd"] = float(finite.std(ddof=1)) if finite.size > 1 else 0.0
        return out

    def p90_standard_error(self, key: str) -> float | None:
        """Standard error of the P90, distribution-free: half the spread between the order
        statistics one binomial standard deviation either side of the P90 rank (None where
        one of them is a trial that never pays back)."""
        x = np.sort(self._ranked(key))
        n = x.size
        if n < 10:
            return None
        q = 0.10 if key in HIGHER_IS_BETTER else 0.90
        half = math.sqrt(n * q * (1 - q))
        lo = int(max(0, math.floor(n * q - half)))
        hi = int(min(n - 1, math.ceil(n * q + half)))
        if not np.isfinite(x[hi]):
            return None
        return float((x[hi] - x[lo]) / 2.0)

    def probability(self, key: str, below: float) -> float | None:
        x = self.samples[key]
        if x.size == 0:
            return None
        # an undefined value (no IRR, no DSCR) counts as missing the threshold
        return float(np.mean(~(x >= below)))

    def histogram(self, key: str, bins: int = HIST_BINS) -> dict:
        x = self.samples[key]
        x = x[np.isfinite(x)]
        if x.size == 0:
            return {"edges": [], "counts": []}
        counts, edges = np.histogram(x, bins=bins)
        return {"edges": edges.tolist(), "counts": counts.astype(int).tolist()}

    def report(self) -> dict:
        out: dict = {"trials": self.trials, "seed": self.seed}
        for key in self.samples:
            out[key] = self.stats(key)
        if self.target_dscr is not None:
            out["prob_min_dscr_below_1"] = self.probability("min_dscr", 1.0)
            out["prob_min_dscr_below_target"] = self.probability("min_dscr", self.target_dscr)
        out["prob_equity_irr_below_target"] = self.probability("equity_irr", self.equity_target)
        out.update(self.waterfall_report())
        out["p90_standard_error"] = {k: self.p90_standard_error(k) for k in self.samples}
        out["histogram"] = {k: self.histogram(k) for k in self.samples}
        return out


def p_stats(x, better_high: bool, keys=("p50", "p75", "p90", "p99", "mean", "sd")) -> dict:
    """P-values on the conservative side (P90 = the 10th percentile where a higher value is
    better, else the 90th), mean and sd (ddof 1) of the finite values of ``x``; ``keys``
    chooses which. Percentiles are numpy's linear interpolation between order statistics."""
    x = np.asarray(x, float)
    x = x[np.isfinite(x)]
    if x.size == 0:
        return {k: None for k in keys}
    level = {"p50": 50.0, "p75": 25.0 if better_high else 75.0, "p90": 10.0 if better_high else 90.0,
             "p99": 1.0 if better_high else 99.0}
    q = {k: level[k] for k in keys if k in level}
    vals = np.percentile(x, list(q.values())) if q else []
    out = {k: float(v) for k, v in zip(q, vals)}
    if "mean" in keys:
        out["mean"] = float(x.mean())
    if "sd" in keys:
        out["sd"] = float(x.std(ddof=1)) if x.size > 1 else 0.0
    return {k: out[k] for k in keys}


def block_rng(seed: int, *key: int) -> np.random.Generator:
    """The random generator of one block, keyed by ``(seed, key...)`` alone: what a block draws
    never depends on which blocks run before it, where, or how many run at once."""
    return np.random.default_rng(np.random.SeedSequence(entropy=seed, spawn_key=tuple(key)))


def _block_rng(seed: int, block: int) -> np.random.Generator:
    return block_rng(seed, block)


def draw_block(scn, n: int, rng: np.random.Generator, lifetime: int, *, long_term_normals=None,
               interannual_normals=None):
    """Everything random for ``n`` trials: (vary inputs, Sample).

    ``long_term_normals`` (n, 1) and ``interannual_normals`` (n, lifetime), when given, are
    the standard normals of the long-term and yearly wind-speed factors (a portfolio draws
    them correlated across sites); they are then not drawn from ``rng``."""
    inputs = draw_inputs(scn, n, rng)
    u = scn.uncertainty
    lt_sd = math.sqrt(sum(sd ** 2 for _, sd in en.speed_terms(scn)))
    en_sd = math.sqrt(sum(x.sd ** 2 for x in u.energy))
    z_lt = rng.standard_normal((n, 1)) if long_term_normals is None else long_term_normals
    z_iav = rng.standard_normal((n, lifetime)) if interannual_normals is None else interannual_normals
    z_en = rng.standard_normal((n, 1))
    speed = None
    if lt_sd > 0 or u.interannual_speed_sd > 0:
        speed = np.maximum((1.0 + lt_sd * z_lt) * (1.0 + u.interannual_speed_sd * z_iav), 0.0)
    energy = np.maximum(1.0 + en_sd * z_en, 0.0) if en_sd > 0 else None
    cost = downtime = None
    comps = scn.maintenance.component
    if comps and scn.montecarlo.failures == "sampled":
        turbines = scn.project.turbines
        cost = np.zeros((n, lifetime))
        downtime = np.zeros((n, lifetime))
        plan = []
        for c in comps:
            key = f"maintenance.component.{c.name}."
            rate = inputs.get(key + "failure_rate_per_turbine_year", c.failure_rate_per_turbine_year)
            lam = np.broadcast_to(np.maximum(np.asarray(rate, float).reshape(-1, 1), 0.0) * turbines,
                                  (n, lifetime))
            repl = np.asarray(inputs.get(key + "replacement_cost", c.replacement_cost), float).reshape(-1, 1)
            days = np.asarray(inputs.get(key + "downtime_days", c.downtime_days), float).reshape(-1, 1)
            first = float(lam.flat[0]) if lam.size else 0.0
            fast = _kernels is not None and lam.size and first <= 10.0 and (np.ndim(rate) == 0 or
                                                                             np.all(lam == first))
            plan.append((fast, lam, first, repl, days))
        quick = [p for p in plan if p[0]]
        # components with one rate are counted together in one compiled pass from the same
        # uniforms poisson() would draw; the others go through poisson()
        u_all = np.empty((len(quick), n, lifetime), np.float32) if quick else None
        j = 0
        for fast, lam, first, repl, days in plan:
            if fast:
                rng.random(out=u_all[j], dtype=np.float32)
                j += 1
                continue
            counts = poisson(rng, lam)
            cost += counts * repl
            downtime += counts * days / (365.0 * turbines)
        if quick:
            cdf_list = [_poisson_cdf32(p[2], int(p[2] + 12.0 * math.sqrt(p[2]) + 20)) for p in quick]
            cdfs = np.ones((len(quick), max(c.size for c in cdf_list)), np.float32)
            for k, cdf in enumerate(cdf_list):
                cdfs[k, :cdf.size] = cdf
            _kernels.add_failures_many(u_all, cdfs, np.stack([np.broadcast_to(p[3], (n, 1))[:, 0] for p in quick]),
                                       np.stack([np.broadcast_to(p[4], (n, 1))[:, 0] for p in quick]),
                                       float(turbines), cost, downtime)
        np.minimum(downtime, 1.0, out=downtime)
    return inputs, Sample(speed_factor=speed, energy_factor=energy, downtime=downtime, failure_cost=cost)


@lru_cache(maxsize=256)
def _poisson_cdf32(lam: float, kmax: int) -> np.ndarray:
    # the Poisson pmf exp(k ln lam - ln k! - lam), as scipy.stats.poisson.pmf writes it (xlogy, gammaln);
    # scipy.special alone, as scipy.stats takes half a second to import
    k = np.arange(kmax + 1)
    cdf = np.cumsum(np.exp(xlogy(k, lam) - gammaln(k + 1) - lam)).astype(np.float32)
    cdf.flags.writeable = False
    return cdf


def poisson(rng: np.random.Generator, lam) -> np.ndarray:
    """Poisson counts with means ``lam``; a single mean is sampled by inverting its CDF
    (one uniform per count, far quicker than the general sampler when counts are small)."""
    lam = np.asarray(lam, float)
    first = float(lam.flat[0]) if lam.size else 0.0
    if lam.size and np.all(lam == first) and first <= 10.0:
        kmax = int(first + 12.0 * math.sqrt(first) + 20)
        cdf = _poisson_cdf32(first, kmax)
        u = rng.random(lam.shape, dtype=np.float32)
        # count = number of CDF steps below u; steps at 1.0 (float32) can never be passed
        counts = np.zeros(lam.shape, np.uint8 if kmax < 255 else np.int32)
        for c in cdf:
            if c >= 1.0:
                break
            counts += u > c
        return counts.astype(float)
    return rng.poisson(lam).astype(float)


def refuse_idle_inputs(scn, case=None) -> None:
    """Refuse a ``[montecarlo.vary]`` key whose draws would change no result.

    Each key is set to the P10 and the P90 of its distribution (everything else as in the
    file, the debt as sized at close) in one batch through the engine; a key that moves no
    figure between the two is not used by this scenario, and drawing it would be a silent
    no-op. (The loader refuses the kinds of key it can tell from the file alone.)
    """
    vary = scn.montecarlo.vary
    if not vary:
        return
    for key in vary:
        why = vary_refusal(scn, key)
        if why:
            raise ScenarioError(why, key=f"montecarlo.vary.{key}", has_value=False)
    case = case if case is not None else model.run(scn, breakeven=False)
    names = list(vary)
    rows = 2 * len(names)
    over = {}
    for j, key in enumerate(names):
        base = numeric_value(scn, key)
        lo, hi = _bounds(scn, key)
        column = np.full(rows, base)
        column[2 * j:2 * j + 2] = np.clip(quantile(vary[key], base, np.array([0.1, 0.9])), lo, hi)
        over[key] = column
    res = run_trials(scn, case, over, Sample(), fused=False)
    for j, key in enumerate(names):
        a = np.array([np.asarray(res[k], float).reshape(-1)[2 * j] for k in res])
        b = np.array([np.asarray(res[k], float).reshape(-1)[2 * j + 1] for k in res])
        same = (a == b) | (np.isnan(a) & np.isnan(b)) | (np.abs(a - b) <= 1e-12 * np.maximum(np.abs(a), np.abs(b)))
        if np.all(same):
            p10, p90 = over[key][2 * j:2 * j + 2]
            raise ScenarioError(f"its draws change no result (every figure is the same at its P10 {p10:g} and its "
                                f"P90 {p90:g}): this scenario does not use it", key=f"montecarlo.vary.{key}",
                                has_value=False)


def _clip_inputs(scn, inputs: dict, clipped: list) -> dict:
    """Each drawn input clipped to its key's valid range; ``clipped`` receives
    (key, number of draws clipped, low, high) for each key with draws outside it."""
    out = {}
    for key, x in inputs.items():
        lo, hi = _bounds(scn, key)
        bad = (x < lo) | (x > hi)
        if bad.any():
            clipped.append((key, int(bad.sum()), lo, hi))
            x = np.clip(x, lo, hi)
        out[key] = x
    return out


def clip_inputs(scn, inputs: dict) -> tuple[dict, list]:
    """Each drawn input clipped to its key's valid range: (clipped inputs, a list of
    (key, number of draws clipped, low, high) for the keys with draws outside it)."""
    clipped: list[tuple] = []
    return _clip_inputs(scn, inputs, clipped), clipped


def _clip_warnings(scn, clipped: list, n: int) -> list[str]:
    """One warning for each key with clipped draws, their count over the whole run."""
    total: dict[str, list] = {}
    for key, count, lo, hi in clipped:
        total.setdefault(key, [0, lo, hi])[0] += count
    return [f"montecarlo.vary.{key}: {total[key][0]} of {n} draw(s) outside the valid range "
            f"[{total[key][1]:g}, {total[key][2]:g}] were clipped to it" for key in scn.montecarlo.vary if key in total]


def run_trials(scn, case, inputs: dict, sample: Sample, *, fused: bool = True) -> dict:
    """One chunk of trials through the engine (debt as sized at close). Returns key -> values.

    ``fused`` runs the compiled trial kernel (:func:`lcoe.engine.trial_metrics`); without
    it, or without numba, the chunk goes through :func:`lcoe.engine.evaluate` with the
    same results."""
    guess = {k: case.metrics.get(k) for k in ("project_irr", "equity_irr")}
    if fused and model._kernels is not None:
        res = model.trial_metrics(scn, case.energy, overrides=inputs or None, sample=sample,
                                  schedule=case.schedule, irr_guess=guess)
        return {k: res[k] for k in SAMPLED_KEYS + model.WATERFALL_TRIAL_KEYS if k in res}
    flows, m, w = model.evaluate(scn, overrides=inputs or None, sample=sample, schedule=case.schedule,
                                 energy=case.energy, lean=True, irr_guess=guess)
    out = {k: m[k] for k in SAMPLED_KEYS if k in m}
    out.update(model.waterfall_trial_values(flows))
    out["net_aep_year1_mwh"] = flows.energy_mwh[:, 1].copy()
    out["net_aep_mean_mwh"] = flows.energy_mwh[:, 1:].mean(axis=1)
    out["capex_total"] = np.broadcast_to(flows.capex_total, (flows.energy_mwh.shape[0], 1))[:, 0].copy()
    out["opex_mean"] = flows.opex[:, 1:].mean(axis=1)
    return out


def monte_carlo(scn, case=None, *, trials: int | None = None, seed: int | None = None,
                chunk_size: int | None = None, progress=None, workers: int | None = None) -> MonteCarloResult:
    """Run the Monte Carlo of a scenario; ``case`` is its deterministic run (made if None)."""
    case = case if case is not None else model.run(scn, breakeven=False)
    n = scn.montecarlo.trials if trials is None else int(trials)
    seed = scn.montecarlo.seed if seed is None else int(seed)
    if n < 0:
        raise ScenarioError("must be >= 0", key="montecarlo.trials", value=n)
    if n > MAX_TRIALS:
        raise ScenarioError(f"must be at most {MAX_TRIALS:,} (as in the file)", key="montecarlo.trials", value=n)
    if n:
        refuse_idle_inputs(scn, case)
    chunk = scn.montecarlo.chunk_size if chunk_size is None else int(chunk_size)
    chunk = max(BLOCK, (chunk // BLOCK) * BLOCK)
    L = scn.lifetime
    clipped: list[tuple] = []
    parts: dict[str, list] = {k: [] for k in SAMPLED_KEYS + model.WATERFALL_TRIAL_KEYS}
    drawn: dict[str, list] = {k: [] for k in scn.montecarlo.vary}
    blocks = math.ceil(n / BLOCK) if n else 0
    per_chunk = chunk // BLOCK
    chunks = [(b, min(blocks, b + per_chunk)) for b in range(0, blocks, per_chunk)]

    def one_chunk(span):
        group = [draw_block(scn, min(BLOCK, n - b * BLOCK), _block_rng(seed, b), L) for b in range(*span)]
        notes: list[tuple] = []
        inputs = {k: np.concatenate([g[0][k] for g in group]) for k in scn.montecarlo.vary}
        inputs = _clip_inputs(scn, inputs, notes)
        sample = Sample(*[None if getattr(group[0][1], f) is None else
                          np.concatenate([getattr(g[1], f) for g in group])
                          for f in ("speed_factor", "energy_factor", "downtime", "failure_cost")])
        return run_trials(scn, case, inputs, sample), inputs, notes

    workers = max(1, min(len(chunks), workers if workers is not None else (os.cpu_count() or 1), 4))
    done = 0
    # numpy releases the GIL inside its array loops, so chunks overlap on several cores;
    # results are collected in chunk order, so they do not depend on the number of workers
    with ThreadPoolExecutor(max_workers=workers) as pool:
        results = pool.map(one_chunk, chunks) if workers > 1 else map(one_chunk, chunks)
        for span, (res, inputs, notes) in zip(chunks, results):
            for k in parts:
                parts[k].append(res[k])
            for k in drawn:
                drawn[k].append(inputs[k])
            clipped.extend(notes)
            done += min(n, span[1] * BLOCK) - span[0] * BLOCK
            if progress is not None:
                progress(done / n)
    samples = {k: (np.concatenate(v) if v else np.empty(0)) for k, v in parts.items()}
    structure = {k: samples.pop(k) for k in model.WATERFALL_TRIAL_KEYS}
    if scn.reserves is None and scn.waterfall is None:
        structure = {}
    # counted over the whole run, so that the report does not depend on the chunk size
    warnings = _clip_warnings(scn, clipped, n)
    for k in ("project_irr", "equity_irr", "lcoe_nominal_per_mwh", "payback_year"):
        bad = int(np.sum(~np.isfinite(samples[k]))) if samples[k].size else 0
        if bad:
            if k in NEVER_IS_WORST:
                warnings.append(f"montecarlo: {k} undefined in {bad} of {n} trial(s) (never paid back within the "
                                "life); they count as later than any year, and a percentile among them is null")
            else:
                warnings.append(f"montecarlo: {k} undefined in {bad} of {n} trial(s); percentiles use the rest")
    debt = scn.finance.debt
    has_debt = debt is not None and case.metrics.get("debt_amount") and case.metrics["debt_amount"] > 0
    if not has_debt:
        for k in ("min_dscr", "avg_dscr", "llcr"):
            samples.pop(k, None)
    return MonteCarloResult(trials=n, seed=seed, samples=samples,
                            target_dscr=debt.target_dscr if has_debt else None,
                            equity_target=scn.equity_target_return, warnings=warnings,
                            inputs={k: np.concatenate(v) for k, v in drawn.items() if v}, waterfall=structure)
