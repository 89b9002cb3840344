"""Monte Carlo: sampling laws checked with scipy.stats and the standard normal quantiles."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import make_raw, make_scenario
from scipy import stats

from lcoe import engine as model
from lcoe.analysis import montecarlo as uncertainty
from lcoe.inputs.errors import ScenarioError

Z90 = 1.2815515655446004  # standard normal 90 % quantile (scipy.stats.norm.ppf(0.9))


def _quiet(**updates):
    """The base test scenario with every source of spread switched off."""
    raw = make_raw(**updates)
    raw["uncertainty"] = {"interannual_speed_sd": 0.0}
    raw.setdefault("montecarlo", {})["failures"] = "expected"
    return raw


def test_zero_spread_every_trial_equals_the_deterministic_case():
    raw = _quiet()
    raw["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": 0.03,
                                        "replacement_cost": 300000.0, "downtime_days": 20.0}]
    scn = make_scenario(raw)
    case = model.run(scn)
    mc = uncertainty.monte_carlo(scn, case, trials=300)
    for key in ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_npv",
                "equity_irr", "min_dscr", "avg_dscr", "llcr", "payback_year"):
        # equal to rounding: the trial kernel sums the years in order, numpy pairwise
        np.testing.assert_allclose(mc.samples[key], case.metrics[key], rtol=1e-12, atol=1e-6, err_msg=key)
    assert np.all(mc.samples["net_aep_year1_mwh"] == case.flows.energy_mwh[0, 1])


def test_energy_uncertainty_p90_matches_the_normal_quantile():
    """Standard normal quantile: P90 = P50 (1 - 1.2816 sigma); 50,000 trials, within 1 %."""
    sigma = 0.08
    raw = _quiet(**{"operations.availability_first_year": 0.97})
    raw["uncertainty"]["energy"] = [{"name": "losses", "sd": sigma}]
    scn = make_scenario(raw)
    case = model.run(scn, breakeven=False)
    mc = uncertainty.monte_carlo(scn, case, trials=50_000, seed=11)
    p50 = case.flows.energy_mwh[0, 1]
    p90 = mc.stats("net_aep_year1_mwh")["p90"]
    assert p90 == pytest.approx(p50 * (1 - Z90 * sigma), rel=0.01)
    assert mc.stats("net_aep_year1_mwh")["p50"] == pytest.approx(p50, rel=0.01)
    # LCOE is a cost: its P90 is on the high side
    lcoe = mc.stats("lcoe_nominal_per_mwh")
    assert lcoe["p90"] > lcoe["p50"] > lcoe["p75"] - 1e9 and lcoe["p90"] > lcoe["p75"]


@pytest.mark.parametrize("spec,dist", [
    ({"distribution": "normal", "mean": 1100.0, "sd": 50.0}, stats.norm(1100.0, 50.0)),
    ({"distribution": "uniform", "low": 1000.0, "high": 1200.0}, stats.uniform(1000.0, 200.0)),
    ({"distribution": "triangular", "low": 1000.0, "mode": 1050.0, "high": 1250.0},
     stats.triang(c=0.2, loc=1000.0, scale=250.0)),
    ({"distribution": "lognormal", "mean": 1100.0, "sd": 80.0},
     stats.lognorm(s=np.sqrt(np.log(1 + (80 / 1100) ** 2)),
                   scale=np.exp(np.log(1100.0) - np.log(1 + (80 / 1100) ** 2) / 2))),
])
@pytest.mark.parametrize("sampling", ["random", "latin_hypercube"])
def test_sampled_marginals_pass_kolmogorov_smirnov(spec, dist, sampling):
    """scipy.stats.kstest of the drawn inputs against the distribution asked for."""
    raw = _quiet()
    raw["montecarlo"].update({"sampling": sampling, "vary": {"capex.turbine_per_kw": spec}})
    scn = make_scenario(raw)
    x = uncertainty.draw_inputs(scn, 4000, np.random.default_rng(3))["capex.turbine_per_kw"]
    assert stats.kstest(x, dist.cdf).pvalue > 0.01
    assert x.mean() == pytest.approx(dist.mean(), rel=0.01)


@pytest.mark.parametrize("sampling", ["random", "latin_hypercube"])
@pytest.mark.parametrize("rho", [-0.6, 0.3, 0.8])
def test_requested_rank_correlation_is_met(rho, sampling):
    """Spearman rank correlation (scipy.stats.spearmanr) of the draws within 0.05 of rho."""
    raw = _quiet()
    raw["montecarlo"]["sampling"] = sampling
    raw["montecarlo"]["vary"] = {
        "capex.turbine_per_kw": {"distribution": "triangular", "low": 1000.0, "high": 1300.0},
        "maintenance.fixed_per_kw_year": {"distribution": "lognormal", "sd": 6.0},
        "revenue.ppa_price_per_mwh": {"distribution": "uniform", "low": 50.0, "high": 80.0},
    }
    raw["montecarlo"]["correlation"] = [{"between": ["capex.turbine_per_kw", "maintenance.fixed_per_kw_year"],
                                         "rho": rho}]
    scn = make_scenario(raw)
    d = uncertainty.draw_inputs(scn, 20_000, np.random.default_rng(8))
    r = stats.spearmanr(d["capex.turbine_per_kw"], d["maintenance.fixed_per_kw_year"]).statistic
    assert r == pytest.approx(rho, abs=0.05)
    r0 = stats.spearmanr(d["capex.turbine_per_kw"], d["revenue.ppa_price_per_mwh"]).statistic
    assert abs(r0) < 0.05


def test_impossible_correlations_are_refused():
    raw = _quiet()
    raw["montecarlo"]["vary"] = {k: {"distribution": "normal", "sd": 1.0} for k in
                                 ("capex.turbine_per_kw", "maintenance.fixed_per_kw_year",
                                  "revenue.ppa_price_per_mwh")}
    raw["montecarlo"]["correlation"] = [
        {"between": ["capex.turbine_per_kw", "maintenance.fixed_per_kw_year"], "rho": 0.95},
        {"between": ["capex.turbine_per_kw", "revenue.ppa_price_per_mwh"], "rho": 0.95},
        {"between": ["maintenance.fixed_per_kw_year", "revenue.ppa_price_per_mwh"], "rho": -0.95}]
    scn = make_scenario(raw)
    with pytest.raises(ScenarioError, match=r"montecarlo.correlation: the correlations together are impossible"):
        uncertainty.monte_carlo(scn, trials=100)


def test_failure_counts_are_poisson():
    """Poisson law: mean and variance of the count over the life = rate * turbines * years (3 SE)."""
    raw = _quiet()
    raw["montecarlo"]["failures"] = "sampled"
    rate, turbines, years = 0.04, 10, 20
    raw["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": rate,
                                        "replacement_cost": 1.0, "downtime_days": 0.0}]
    scn = make_scenario(raw)
    n = 20_000
    _, sample = uncertainty.draw_block(scn, n, np.random.default_rng(21), years)
    counts = sample.failure_cost.sum(axis=1)          # cost 1 per event: the count over the life
    lam = rate * turbines * years
    assert abs(counts.mean() - lam) < 3 * np.sqrt(lam / n)
    # the sample variance of a Poisson count has sd about sqrt((lam + 2 lam^2) / n)
    assert abs(counts.var(ddof=1) - lam) < 3 * np.sqrt((lam + 2 * lam ** 2) / n)
    per_year = sample.failure_cost
    assert per_year.mean() == pytest.approx(rate * turbines, rel=0.03)


def test_failures_cost_and_downtime_reach_the_results():
    raw = _quiet()
    raw["montecarlo"]["failures"] = "sampled"
    raw["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": 0.05,
                                        "replacement_cost": 400000.0, "downtime_days": 40.0}]
    scn = make_scenario(raw)
    case = model.run(scn, breakeven=False)
    mc = uncertainty.monte_carlo(scn, case, trials=8000, seed=4)
    # the expected values drive the deterministic case, so the trial means come close to it
    assert mc.stats("opex_mean")["mean"] == pytest.approx(case.flows.opex[0, 1:].mean(), rel=0.01)
    assert mc.stats("net_aep_mean_mwh")["mean"] == pytest.approx(case.flows.energy_mwh[0, 1:].mean(), rel=0.002)
    assert mc.stats("lcoe_nominal_per_mwh")["sd"] > 0


def test_same_seed_same_result_and_chunking_and_threads_do_not_matter():
    scn = make_scenario(make_raw())
    case = model.run(scn, breakeven=False)
    n = 3 * uncertainty.BLOCK + 123
    a = uncertainty.monte_carlo(scn, case, trials=n, seed=99, chunk_size=uncertainty.BLOCK, workers=1)
    b = uncertainty.monte_carlo(scn, case, trials=n, seed=99, chunk_size=4 * uncertainty.BLOCK, workers=1)
    c = uncertainty.monte_carlo(scn, case, trials=n, seed=99, chunk_size=uncertainty.BLOCK, workers=2)
    d = uncertainty.monte_carlo(scn, case, trials=n, seed=100)
    for k in a.samples:
        np.testing.assert_array_equal(a.samples[k], b.samples[k])
        np.testing.assert_array_equal(a.samples[k], c.samples[k])
    assert not np.array_equal(a.samples["equity_npv"], d.samples["equity_npv"])
    assert a.samples["equity_npv"].size == n


def test_wind_speed_uncertainty_goes_through_the_aep_curve():
    """A long-term speed factor moves energy by the model's own AEP(scale), not a fixed exponent."""
    raw = _quiet()
    raw["uncertainty"]["speed"] = [{"name": "measurement", "sd": 0.05}]
    scn = make_scenario(raw)
    case = model.run(scn, breakeven=False)
    mc = uncertainty.monte_carlo(scn, case, trials=20_000, seed=5)
    from lcoe.physics import energy as en
    site = en.site_for(scn)
    # the median trial has a speed factor near 1; the 10th percentile one near 1 - 1.2816 * 0.05
    e1 = mc.samples["net_aep_year1_mwh"]
    f10 = 1 - Z90 * 0.05
    expected = case.flows.energy_mwh[0, 1] * float(site.aep_direct(f10)[0] / site.gross_aep_mwh)
    assert np.percentile(e1, 10) == pytest.approx(expected, rel=0.01)


def test_report_block_has_the_contract_keys():
    scn = make_scenario(make_raw())
    case = model.run(scn, breakeven=False)
    rep = uncertainty.monte_carlo(scn, case, trials=2000, seed=1).report()
    assert rep["trials"] == 2000 and rep["seed"] == 1
    for key in ("lcoe_nominal_per_mwh", "project_npv", "equity_irr", "min_dscr"):
        assert set(rep[key]) == {"p50", "p75", "p90", "p99", "mean", "sd"}
    for key in ("prob_min_dscr_below_1", "prob_min_dscr_below_target", "prob_equity_irr_below_target"):
        assert 0.0 <= rep[key] <= 1.0
    assert sum(rep["histogram"]["lcoe_nominal_per_mwh"]["counts"]) == 2000
    assert rep["p90_standard_error"]["lcoe_nominal_per_mwh"] > 0
    # conservative side: a higher-is-better metric has P90 below P50, a cost above it
    assert rep["equity_npv"]["p90"] < rep["equity_npv"]["p50"]
    assert rep["lcoe_nominal_per_mwh"]["p90"] > rep["lcoe_nominal_per_mwh"]["p50"]


def test_draws_outside_a_keys_range_are_clipped_and_reported():
    raw = _quiet()
    raw["montecarlo"]["vary"] = {"losses.wake": {"distribution": "normal", "mean": 0.02, "sd": 0.05}}
    scn = make_scenario(raw)
    mc = uncertainty.monte_carlo(scn, trials=2000, seed=2)
    assert mc.inputs["losses.wake"].min() >= 0.0
    assert any("montecarlo.vary.losses.wake" in w and "clipped" in w for w in mc.warnings)


def test_cli_trials_override_prints_the_block(capsys):
    import json

    from conftest import DEMO

    from lcoe.cli import main
    assert main(["run", str(DEMO), "--json", "--trials", "3000"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["montecarlo"]["trials"] == 3000
    assert out["montecarlo"]["seed"] == 2028


# --------------------------------------------------------------------------- Latin hypercube under correlation

CORRELATED = {
    "capex.turbine_per_kw": ({"distribution": "triangular", "low": 1000.0, "mode": 1100.0, "high": 1300.0},
                             stats.triang(c=100.0 / 300.0, loc=1000.0, scale=300.0)),
    "maintenance.fixed_per_kw_year": ({"distribution": "lognormal", "mean": 40.0, "sd": 6.0},
                                      stats.lognorm(s=np.sqrt(np.log(1 + (6 / 40) ** 2)),
                                                    scale=np.exp(np.log(40.0) - np.log(1 + (6 / 40) ** 2) / 2))),
    "revenue.ppa_price_per_mwh": ({"distribution": "uniform", "low": 50.0, "high": 80.0},
                                  stats.uniform(50.0, 30.0)),
    "capex.balance_of_plant_per_kw": ({"distribution": "normal", "mean": 300.0, "sd": 20.0},
                                      stats.norm(300.0, 20.0)),
}
PAIRS = {("capex.turbine_per_kw", "maintenance.fixed_per_kw_year"): 0.6,
         ("capex.turbine_per_kw", "capex.balance_of_plant_per_kw"): -0.3,
         ("revenue.ppa_price_per_mwh", "capex.balance_of_plant_per_kw"): 0.45}


def _correlated_scenario(sampling="latin_hypercube"):
    raw = _quiet()
    raw["montecarlo"].update({"sampling": sampling, "vary": {k: spec for k, (spec, _) in CORRELATED.items()},
                              "correlation": [{"between": list(k), "rho": r} for k, r in PAIRS.items()]})
    return make_scenario(raw)


def _blocks(n):
    return [(b, min(n, b + uncertainty.BLOCK)) for b in range(0, n, uncertainty.BLOCK)]


def test_latin_hypercube_keeps_one_draw_per_stratum_for_every_correlated_input():
    """Latin hypercube (McKay, Beckman and Conover 1979): in each block of n trials every input has
    exactly one draw in each of its n equal-probability strata, the strata found with the
    scipy.stats distribution's CDF. Iman-Conover only reorders, so this holds for every input of
    a correlated group, not only the first."""
    scn = _correlated_scenario()
    n = 2 * uncertainty.BLOCK + 700
    mc = uncertainty.monte_carlo(scn, trials=n, seed=31)
    for lo, hi in _blocks(n):
        size = hi - lo
        for key, (_, dist) in CORRELATED.items():
            strata = np.floor(dist.cdf(mc.inputs[key][lo:hi]) * size).astype(int)
            counts = np.bincount(np.clip(strata, 0, size - 1), minlength=size)
            assert np.mean(counts == 1) == 1.0, (key, lo)


def test_iman_conover_rank_correlations_hold_in_every_block():
    """Spearman rho (scipy.stats.spearmanr) of each pair, block by block, within three standard
    errors of its target: Fisher's z = atanh(rho_s) has variance about 1.06 / (n - 3) for a rank
    correlation (Fieller, Hartley and Pearson 1957; the constant from memory). Pairs with no
    correlation asked for are held near zero the same way."""
    scn = _correlated_scenario()
    n = 2 * uncertainty.BLOCK + 700
    mc = uncertainty.monte_carlo(scn, trials=n, seed=32)
    keys = list(CORRELATED)
    for lo, hi in _blocks(n):
        se = np.sqrt(1.06 / (hi - lo - 3))
        for i, a in enumerate(keys):
            for b in keys[i + 1:]:
                target = PAIRS.get((a, b), PAIRS.get((b, a), 0.0))
                r = stats.spearmanr(mc.inputs[a][lo:hi], mc.inputs[b][lo:hi]).statistic
                assert abs(np.arctanh(r) - np.arctanh(target)) < 3 * se, (a, b, lo, r, target)


def test_iman_conover_only_reorders_and_nearly_meets_the_score_correlation():
    """Iman and Conover (1982): each column keeps its values (only the order changes), and the
    van der Waerden scores of the result's ranks have nearly the target correlation
    (numpy.corrcoef): the reordered scores have it exactly, and replacing them by the scores of
    their ranks moves it by far less than the sampling error 1/sqrt(n) of independent draws."""
    from scipy.special import ndtri
    rng = np.random.default_rng(5)
    n = 3000
    x = np.column_stack([rng.gamma(2.0, size=n), rng.uniform(size=n), rng.normal(size=n)])
    target = np.array([[1.0, 0.5, -0.2], [0.5, 1.0, 0.1], [-0.2, 0.1, 1.0]])
    out = uncertainty.iman_conover(x, target, rng)
    for j in range(3):
        np.testing.assert_array_equal(np.sort(out[:, j]), np.sort(x[:, j]))
    ranks = np.argsort(np.argsort(out, axis=0), axis=0) + 1
    scores = ndtri(ranks / (n + 1.0))
    np.testing.assert_allclose(np.corrcoef(scores, rowvar=False), target, rtol=0, atol=0.25 / np.sqrt(n))


def test_random_sampling_still_uses_the_gaussian_copula():
    """Plain random sampling: the normal scores Phi^-1(F(x)) of the draws (scipy.stats CDFs) are
    multivariate normal with correlation 2 sin(pi rho / 6) (Pearson 1907), within three standard
    errors (1 - r^2) / sqrt(n) of a sample correlation."""
    scn = _correlated_scenario("random")
    n = 20_000
    d = uncertainty.draw_inputs(scn, n, np.random.default_rng(9))
    z = {k: stats.norm.ppf(dist.cdf(d[k])) for k, (_, dist) in CORRELATED.items()}
    for (a, b), rho in PAIRS.items():
        r = 2 * np.sin(np.pi * rho / 6)
        assert np.corrcoef(z[a], z[b])[0, 1] == pytest.approx(r, abs=3 * (1 - r ** 2) / np.sqrt(n))


# --------------------------------------------------------------------------- the report does not depend on chunking

def _clipping_scenario(sampling, **montecarlo):
    raw = _quiet()
    raw["montecarlo"].update({"sampling": sampling, **montecarlo,
                              "vary": {"losses.electrical": {"distribution": "normal", "mean": 0.02, "sd": 0.02}}})
    return make_scenario(raw)


@pytest.mark.parametrize("sampling", ["random", "latin_hypercube"])
def test_clipped_draws_are_counted_over_the_whole_run(sampling):
    """40,000 trials of a loss drawn normal(0.02, 0.02), clipped at 0: one warning with the
    exact count, the same for every chunk size. The count is that of the draws at the bound, and
    near n Phi(-1) (scipy.stats.norm.cdf): within 4 binomial standard deviations for random
    sampling; with Latin hypercube each block of m trials has floor(m p) or one more below the
    p-quantile (one draw per stratum)."""
    n = 40_000
    p = stats.norm.cdf(-1.0)
    texts = []
    for chunk in (8192, 24576, 40960):
        mc = uncertainty.monte_carlo(_clipping_scenario(sampling, chunk_size=chunk), trials=n, seed=2028)
        notes = [w for w in mc.warnings if w.startswith("montecarlo.vary.losses.electrical")]
        assert len(notes) == 1
        texts.append(notes[0])
        count = int(np.sum(mc.inputs["losses.electrical"] == 0.0))
        assert notes[0] == (f"montecarlo.vary.losses.electrical: {count} of {n} draw(s) outside the valid "
                            "range [0, 1] were clipped to it")
    assert texts[0] == texts[1] == texts[2]
    if sampling == "random":
        assert abs(count - n * p) < 4 * np.sqrt(n * p * (1 - p))
    else:
        sizes = [hi - lo for lo, hi in _blocks(n)]
        low = sum(int(np.floor(m * p)) for m in sizes)
        assert low <= count <= low + len(sizes)


def test_whole_json_report_is_identical_for_any_chunk_size_and_thread_count(monkeypatch):
    """The whole report, warnings included, byte for byte: chunks of one, three and five
    random-number blocks, on two threads and on one."""
    import os

    from lcoe.analysis import study
    from lcoe.outputs import report
    raw = _quiet()
    raw["uncertainty"] = {"interannual_speed_sd": 0.05, "speed": [{"name": "measurement", "sd": 0.03}],
                          "energy": [{"name": "losses", "sd": 0.03}]}
    raw["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": 0.04,
                                        "replacement_cost": 300000.0, "downtime_days": 20.0}]
    raw["montecarlo"] = {"trials": 4 * uncertainty.BLOCK + 321, "seed": 77, "sampling": "latin_hypercube",
                         "vary": {"losses.electrical": {"distribution": "normal", "mean": 0.02, "sd": 0.02},
                                  "capex.turbine_per_kw": {"distribution": "normal", "sd": 60.0},
                                  "revenue.ppa_price_per_mwh": {"distribution": "uniform", "low": 20.0,
                                                                "high": 70.0}},
                         "correlation": [{"between": ["capex.turbine_per_kw", "revenue.ppa_price_per_mwh"],
                                          "rho": 0.5}]}
    outs = []
    for chunk, cpus in ((8192, None), (24576, None), (40960, None), (8192, 1)):
        raw["montecarlo"]["chunk_size"] = chunk
        if cpus is not None:
            monkeypatch.setattr(os, "cpu_count", lambda cpus=cpus: cpus)
        outs.append(report.to_json(study.build(make_scenario(raw), variants=False)))
    assert outs[0] == outs[1] == outs[2] == outs[3]
    warnings = __import__("json").loads(outs[0])["warnings"]
    assert sum(w.startswith("montecarlo.vary.losses.electrical") for w in warnings) == 1


def test_payback_percentiles_count_trials_that_never_pay_back_as_the_latest():
    """P90 of the payback year is the year by which 90 % of trials have paid back (the
    conservative side, later is worse): a trial that never pays back counts as later than any
    year, so the percentiles are numpy.percentile's with those trials at +inf, and a percentile
    that falls among them is null. Mean and sd are of the trials that pay back."""
    raw = _quiet()
    raw["montecarlo"]["vary"] = {"revenue.ppa_price_per_mwh": {"distribution": "uniform", "low": 45.0,
                                                               "high": 75.0}}
    mc = uncertainty.monte_carlo(make_scenario(raw), trials=3000, seed=3)
    x = mc.samples["payback_year"]
    never = int(np.isnan(x).sum())
    assert 0.1 * x.size < never < 0.25 * x.size           # the case: P50 and P75 defined, P90 not
    ranked = np.where(np.isnan(x), np.inf, x)
    s = mc.stats("payback_year")
    assert s["p50"] == np.percentile(ranked, 50) and s["p75"] == np.percentile(ranked, 75)
    assert s["p90"] is None and s["p99"] is None
    assert s["mean"] == pytest.approx(np.nanmean(x), rel=1e-12)
    assert mc.p90_standard_error("payback_year") is None
    assert f"montecarlo: payback_year undefined in {never} of 3000 trial(s) (never paid back within the life)" \
        in " ".join(mc.warnings)
