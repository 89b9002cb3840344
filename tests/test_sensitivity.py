"""Sweeps, the tornado and goal seek (lcoe.analysis.sensitivity) and their CLI commands.

Each check names its outside source beside it (see shared/reference/CHECK-VALUES.md).
"""

from __future__ import annotations

import json
import math
import subprocess
import sys

import numpy as np
import numpy_financial as npf
import pytest
from conftest import DEMO, ROOT, make_raw, make_scenario
from numpy.testing import assert_allclose
from scipy import integrate, stats
from scipy.special import gamma

from lcoe import cli
from lcoe import engine as model
from lcoe.analysis import sensitivity as se
from lcoe.finance.cashflow import Sample
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.physics import energy as en
from lcoe.physics.turbine import physics_curve, swept_area_m2

Z90 = 1.2815516  # standard normal 90 % quantile (scipy.stats.norm; CHECK-VALUES "normal quantiles")


def _scn(**updates):
    return make_scenario(**updates)


def _at(scn, key, value):
    return scn.with_overrides({key: value}, label="")


# --------------------------------------------------------------------------- the cubic role of wind speed

def test_elasticity_of_a_power_law_is_its_exponent():
    """d ln(c x^n) / d ln x = n on any grid, by central and one-sided differences (calculus identity)."""
    x = np.array([2.0, 2.5, 3.7, 4.0, 6.1])
    for n in (3.0, 1.0, -0.5):
        assert_allclose(se.elasticities(x, 7.0 * x ** n), n, rtol=1e-12)
    assert se.elasticities([5.0], [10.0]) == [None]
    assert se.elasticities([1.0, 1.0], [2.0, 3.0]) == [None, None]
    assert se.elasticities([1.0, 2.0], [0.0, 3.0]) == [None, None]


@pytest.mark.parametrize("k", [1.5, 2.0, 2.5])
def test_uncapped_physics_curve_aep_scales_as_cube_of_weibull_scale(k):
    """With no rated cap, AEP = 8.76 c A^3 Gamma(1 + 3/k), so d ln AEP / d ln A = 3.

    Source: Weibull third moment A^3 Gamma(1 + 3/k) (standard distribution formula,
    CHECK-VALUES, 1e-9); power in the wind goes as v^3 (physics). Cut-in 0 and cut-out
    60 m/s leave a tail above 60 m/s far below the tolerance for A <= 6 m/s.
    """
    curve = physics_curve(rated_power_kw=float("inf"), rotor_diameter_m=110.0, cp_max=0.45, cut_in_mps=0.0,
                          cut_out_mps=60.0, drivetrain_efficiency=0.95).at_density(1.225)
    coeff = 0.5 * 1.225 * float(swept_area_m2(110.0)) * 0.45 * 0.95 / 1000.0   # kW per (m/s)^3
    scales = np.linspace(4.0, 6.0, 9)
    aep = en.aep_weibull_mwh(curve, scales, k)
    assert_allclose(aep, 8.76 * coeff * scales ** 3 * gamma(1.0 + 3.0 / k), rtol=1e-9)
    assert_allclose(se.elasticities(scales, aep), 3.0, rtol=1e-9)


def test_sweep_of_mean_speed_below_rated_gives_elasticity_three():
    """Scenario level: cut-in 0 and rated power far above the wind (30 MW at 2.5-4 m/s) give exactly 3.

    Source: Weibull third moment A^3 Gamma(1 + 3/k), A = mean / Gamma(1 + 1/k) (standard
    distribution formulas, CHECK-VALUES); dry-air density 101325 Pa / (287.05 * 288.15 K)
    = 1.22501 kg/m^3 (IEC 61400-12-1, CHECK-VALUES) at sea level and 15 C.
    """
    scn = _scn(turbine__rated_power_kw=30000.0, turbine__cut_in_mps=0.0, wind__mean_speed_mps=3.0)
    speeds = [2.5, 3.0, 3.5, 4.0]
    rows = se.sweep(scn, "wind.mean_speed_mps", speeds)
    assert_allclose([r["elasticity"] for r in rows], 3.0, rtol=1e-7)
    k = 2.0
    rho = 101325.0 / (287.05 * 288.15)
    coeff = 0.5 * rho * float(swept_area_m2(110.0)) * 0.45 * 0.95 / 1000.0
    a = np.array(speeds) / gamma(1.0 + 1.0 / k)
    expected = 10 * 8.76 * coeff * a ** 3 * gamma(1.0 + 3.0 / k)      # 10 turbines, MWh/yr
    assert_allclose([r["energy"]["gross_aep_mwh"] for r in rows], expected, rtol=1e-6)


def _capped_aep_quad(scn, mean_mps):
    """Gross AEP by scipy.integrate.quad of min(c v^3, rated) against scipy.stats.weibull_min. [MWh/yr]"""
    t = scn.turbine
    k = scn.wind.weibull_shape
    rho = 101325.0 / (287.05 * 288.15)
    coeff = 0.5 * rho * math.pi * t.rotor_diameter_m ** 2 / 4.0 * t.cp_max * t.drivetrain_efficiency / 1000.0
    dist = stats.weibull_min(k, scale=mean_mps / gamma(1.0 + 1.0 / k))
    vr = (t.rated_power_kw / coeff) ** (1.0 / 3.0)
    below = integrate.quad(lambda v: coeff * v ** 3 * dist.pdf(v), 0.0, vr, epsabs=0, epsrel=1e-12)[0]
    above = t.rated_power_kw * (dist.cdf(t.cut_out_mps) - dist.cdf(vr))
    return scn.project.turbines * 8.76 * (below + above)


def test_rated_cap_makes_elasticity_fall_below_three_as_speed_rises():
    """With a 3 MW cap the elasticity is below 3 and falls with the mean speed.

    Source: scipy.integrate.quad of min(0.5 rho A Cp eta v^3, rated) over scipy.stats.weibull_min
    (independent of the engine's quadrature), differenced on the same rows.
    """
    scn = _scn(turbine__cut_in_mps=0.0)
    speeds = [4.0, 5.0, 6.0, 7.0, 8.0, 9.0, 10.0]
    rows = se.sweep(scn, "wind.mean_speed_mps", speeds)
    ref = [_capped_aep_quad(scn, v) for v in speeds]
    assert_allclose([r["energy"]["gross_aep_mwh"] for r in rows], ref, rtol=1e-7)
    el = [r["elasticity"] for r in rows]
    assert_allclose(el, se.elasticities(speeds, ref), rtol=1e-6)
    assert all(e < 3.0 for e in el)
    assert all(b < a for a, b in zip(el, el[1:]))


def test_demo_elasticity_flattens_from_5_to_9_mps():
    """Demo curve (with a rated cap): local elasticity (+-1 % rows) below 3 and falling at 5, 7, 9 m/s.

    Source: the engine's speed sensitivity S = d ln AEP / d ln v by +-1 % central difference
    (SCENARIO.md), which the sweep's central difference over the same +-1 % rows must equal.
    """
    scn = sc.load(DEMO)
    el = []
    for v in (5.0, 7.0, 9.0):
        rows = se.sweep(scn, "wind.mean_speed_mps", [0.99 * v, v, 1.01 * v])
        s = en.energy_of(_at(scn, "wind.mean_speed_mps", v)).speed_sensitivity
        assert rows[1]["elasticity"] == pytest.approx(s, rel=1e-9)
        el.append(rows[1]["elasticity"])
    assert 3.0 > el[0] > el[1] > el[2] > 0.5


# --------------------------------------------------------------------------- sweep

def test_sweep_rows_match_direct_runs_for_every_numeric_key():
    """Batch rows equal lcoe.engine.run on the scenario edited to each value, key by key.

    Source: the deterministic run of the edited scenario (the same engine, one scenario per value).
    """
    scn = _scn()
    checked = 0
    for key in sc.numeric_keys(scn):
        base = sc.numeric_value(scn, key)
        integer = se.is_integer_key(scn, key)
        values = []
        for f in (0.95, 1.05):
            v = base * f if base else 0.01
            if integer:
                v = int(round(v)) if round(v) != base else int(base) + (1 if f > 1 else -1)
            try:
                _at(scn, key, v)
            except ScenarioError:
                continue
            values.append(v)
        if not values:
            continue
        rows = se.sweep(scn, key, values)
        for v, row in zip(values, rows):
            case = model.run(_at(scn, key, v), breakeven=False)
            for m, x in case.metrics.items():
                y = row["metrics"][m]
                assert (x is None) == (y is None), (key, m)
                if x is not None:
                    assert y == pytest.approx(x, rel=1e-9, abs=1e-6), (key, v, m)
            rep = case.energy.report()
            for e in se.ENERGY_KEYS:
                assert row["energy"][e] == pytest.approx(rep[e], rel=1e-12), (key, e)
        checked += 1
    assert checked >= 40


def test_sweep_row_shape_breakeven_and_derived_defaults():
    """Break-even only when asked, equal to the direct run; an omitted merchant price follows the PPA price.

    Source: SCENARIO.md (an omitted merchant price equals the PPA price) and lcoe.engine.run.
    """
    scn = _scn()
    rows = se.sweep(scn, "revenue.ppa_price_per_mwh", [60.0, 70.0])
    assert set(rows[0]) == {"value", "energy", "metrics", "elasticity"}
    assert set(rows[0]["metrics"]) == set(model.METRIC_KEYS)
    assert set(rows[0]["energy"]) == {"gross_aep_mwh", "net_aep_p50_mwh", "net_capacity_factor"}
    assert rows[0]["metrics"]["breakeven_ppa_price_per_mwh"] is None
    with_be = se.sweep(scn, "revenue.ppa_price_per_mwh", [60.0, 70.0], breakeven=True)
    for v, row in zip((60.0, 70.0), with_be):
        direct = model.run(_at(scn, "revenue.ppa_price_per_mwh", v)).metrics
        assert row["metrics"]["breakeven_ppa_price_per_mwh"] == pytest.approx(
            direct["breakeven_ppa_price_per_mwh"], rel=1e-9)
        assert row["metrics"]["equity_irr"] == pytest.approx(direct["equity_irr"], rel=1e-9)
    # PPA price moves no energy: the elasticity of net AEP to it is 0
    assert rows[0]["elasticity"] == pytest.approx(0.0, abs=1e-12)


def test_sweep_of_lifetime_runs_one_scenario_per_value():
    """project.lifetime_years changes the shape of the model: each row equals its own run (lcoe.engine.run)."""
    scn = _scn()
    rows = se.sweep(scn, "project.lifetime_years", [15, 20, 25])
    for v, row in zip((15, 20, 25), rows):
        direct = model.run(_at(scn, "project.lifetime_years", v), breakeven=False).metrics
        assert row["metrics"]["lcoe_nominal_per_mwh"] == pytest.approx(direct["lcoe_nominal_per_mwh"], rel=1e-12)
    assert rows[0]["value"] == 15.0


@pytest.mark.parametrize("key, values, match", [
    ("capex.turbine_per_kwh", [1.0], r"capex\.turbine_per_kwh: unknown key"),
    ("montecarlo.trials", [10.0], r"montecarlo\.trials: is a setting of the file, not a model input"),
    ("project.lifetime_years", [20.5], r"project\.lifetime_years = 20\.5: must be a whole number"),
    ("losses.wake", [0.1, 1.5], r"losses\.wake = 1\.5: must be < 1"),
    ("capex.turbine_per_kw", [], r"capex\.turbine_per_kw: a sweep needs at least one value"),
    ("capex.turbine_per_kw", [float("nan")], r"capex\.turbine_per_kw = nan: must be a finite number"),
])
def test_sweep_rejects_bad_input_with_a_message(key, values, match):
    with pytest.raises(ScenarioError, match=match):
        se.sweep(_scn(), key, values)


# --------------------------------------------------------------------------- tornado

VARY = {
    "capex.turbine_per_kw": {"distribution": "triangular", "low": 1000.0, "high": 1300.0},
    "maintenance.fixed_per_kw_year": {"distribution": "normal", "sd": 4.0},
    "revenue.ppa_price_per_mwh": {"distribution": "lognormal", "sd": 8.0},
    "losses.wake": {"distribution": "uniform", "low": 0.04, "high": 0.07},
}


def _vary_scenario(**updates):
    raw = make_raw(**updates)
    raw["montecarlo"] = {"trials": 0, "vary": VARY}
    return make_scenario(raw)


def test_p10_p90_of_each_distribution():
    """P10/P90 of the four input distributions.

    Source: scipy.stats (norm, triang, uniform); the normal and lognormal also by hand from
    z_90 = 1.2815516 (standard normal quantile, CHECK-VALUES); the lognormal's mean and sd
    from exp(mu + s^2/2) and sqrt((exp(s^2) - 1) exp(2 mu + s^2)) (standard lognormal moments).
    """
    scn = _vary_scenario()
    vary = scn.montecarlo.vary
    lo, hi = se.input_p10_p90(vary["maintenance.fixed_per_kw_year"], 40.0)
    assert (lo, hi) == pytest.approx((40.0 - Z90 * 4.0, 40.0 + Z90 * 4.0), rel=1e-7)
    # triangular, mode defaults to the scenario value 1100
    lo, hi = se.input_p10_p90(vary["capex.turbine_per_kw"], 1100.0)
    ref = stats.triang(c=1.0 / 3.0, loc=1000.0, scale=300.0).ppf([0.1, 0.9])
    assert (lo, hi) == pytest.approx(tuple(ref), rel=1e-12)
    assert lo == pytest.approx(1000.0 + math.sqrt(0.1 * 300.0 * 100.0), rel=1e-12)   # F(x) = (x-a)^2/((b-a)(c-a))
    lo, hi = se.input_p10_p90(vary["losses.wake"], 0.05)
    assert (lo, hi) == pytest.approx((0.043, 0.067), rel=1e-12)
    # lognormal with its own mean 65 and sd 8
    s2 = math.log(1.0 + (8.0 / 65.0) ** 2)
    mu = math.log(65.0) - s2 / 2.0
    assert math.exp(mu + s2 / 2.0) == pytest.approx(65.0, rel=1e-12)
    assert math.sqrt((math.exp(s2) - 1.0) * math.exp(2 * mu + s2)) == pytest.approx(8.0, rel=1e-12)
    lo, hi = se.input_p10_p90(vary["revenue.ppa_price_per_mwh"], 65.0)
    assert (lo, hi) == pytest.approx((math.exp(mu - Z90 * math.sqrt(s2)), math.exp(mu + Z90 * math.sqrt(s2))),
                                     rel=1e-7)


def test_lognormal_needs_a_positive_mean():
    spec = sc.Vary(distribution="lognormal", sd=1.0)
    with pytest.raises(ScenarioError, match=r"montecarlo\.vary\.capex\.development\.mean = 0\.0: a lognormal "
                                            r"input needs a mean > 0"):
        se.input_p10_p90(spec, 0.0, "capex.development")


def test_tornado_rows_sorted_and_equal_to_direct_runs():
    """Each row's metric at its low and high value equals a direct run of the edited scenario.

    Source: lcoe.engine.run on the scenario with the one input changed; the energy row against
    P50 (1 -+ z_90 sigma_10yr) (standard normal quantile, CHECK-VALUES) and against the
    engine's own per-trial energy factor (lcoe.finance.cashflow.Sample).
    """
    scn = _vary_scenario()
    rows = se.tornado(scn)
    keys = [r["key"] for r in rows]
    assert set(VARY) <= set(keys)
    assert {"wind.mean_speed_mps", "project.lifetime_years", "finance.debt.interest_rate", se.ENERGY_INPUT} <= set(keys)
    assert "capex.balance_of_plant_per_kw" in keys
    swings = [abs(r["swing"]) for r in rows]
    assert swings == sorted(swings, reverse=True)
    base = model.run(scn, breakeven=False).metrics["lcoe_nominal_per_mwh"]
    by_key = {r["key"]: r for r in rows}
    for r in rows:
        assert r["metric_base"] == pytest.approx(base, rel=1e-12)
        assert r["swing"] == pytest.approx(r["metric_at_high"] - r["metric_at_low"], rel=1e-12)
        if r["key"] == se.ENERGY_INPUT:
            continue
        for end in ("low", "high"):
            v = r[f"{end}_value"]
            v = int(v) if se.is_integer_key(scn, r["key"]) else v
            direct = model.run(_at(scn, r["key"], v), breakeven=False).metrics["lcoe_nominal_per_mwh"]
            assert r[f"metric_at_{end}"] == pytest.approx(direct, rel=1e-10), (r["key"], end)
    life = by_key["project.lifetime_years"]
    assert (life["low_value"], life["base_value"], life["high_value"]) == (18.0, 20.0, 22.0)
    speed = by_key["wind.mean_speed_mps"]
    assert (speed["low_value"], speed["high_value"]) == pytest.approx((6.3, 7.7), rel=1e-12)
    assert speed["basis"] == "+-10 %"
    assert by_key["capex.turbine_per_kw"]["basis"] == "triangular P10/P90"

    e = en.energy_of(scn)
    row = by_key[se.ENERGY_INPUT]
    assert row["low_value"] == pytest.approx(e.net_aep_p90_10yr_mwh, rel=1e-12)
    assert row["low_value"] == pytest.approx(e.net_aep_p50_mwh * (1 - Z90 * e.sigma_10yr), rel=1e-7)
    assert row["high_value"] == pytest.approx(e.net_aep_p50_mwh * (1 + Z90 * e.sigma_10yr), rel=1e-7)
    # the P90 end as a real scenario: losses.other chosen so that net energy falls by the same factor
    f_lo = row["low_value"] / row["base_value"]
    low_scn = _at(scn, "losses.other", 1.0 - f_lo)
    assert model.run(low_scn, breakeven=False).metrics["lcoe_nominal_per_mwh"] == pytest.approx(
        row["metric_at_low"], rel=1e-10)
    f_hi = row["high_value"] / row["base_value"]
    _, m, _ = model.evaluate(scn, sample=Sample(energy_factor=np.array([[f_hi]])))
    assert m["lcoe_nominal_per_mwh"][0] == pytest.approx(row["metric_at_high"], rel=1e-10)


def test_tornado_on_equity_irr_and_chosen_inputs():
    """Chosen inputs only, ranked by equity IRR; values equal direct runs (lcoe.engine.run)."""
    scn = _scn()
    rows = se.tornado(scn, metric="equity_irr", inputs=["revenue.ppa_price_per_mwh", "finance.debt.interest_rate"])
    assert [r["key"] for r in rows] == ["revenue.ppa_price_per_mwh", "finance.debt.interest_rate"]
    ppa = rows[0]
    assert (ppa["low_value"], ppa["high_value"]) == pytest.approx((58.5, 71.5), rel=1e-12)
    assert ppa["metric_at_high"] == pytest.approx(
        model.run(_at(scn, "revenue.ppa_price_per_mwh", 71.5), breakeven=False).metrics["equity_irr"], rel=1e-10)
    assert ppa["swing"] > 0 > rows[1]["swing"]


def test_tornado_fraction_clipped_to_valid_range():
    """availability 0.97 +10 % would exceed 1: the high end stops at 1.0 (SCENARIO.md: fractions are 0..1)."""
    rows = se.tornado(_scn(), inputs=["operations.availability_mature"])
    assert rows[0]["high_value"] == 1.0
    assert rows[0]["low_value"] == pytest.approx(0.873, rel=1e-12)
    assert rows[0]["basis"] == "+-10 %, clipped"


def test_tornado_leaves_out_a_default_input_it_cannot_move_but_raises_for_a_named_one():
    scn = _scn(finance__debt__tenor_years=20)      # a life of 18 years would be shorter than the tenor
    assert "project.lifetime_years" not in [r["key"] for r in se.tornado(scn)]
    with pytest.raises(ScenarioError, match=r"finance\.debt\.tenor_years = 20: must not be longer than "
                                            r"project\.lifetime_years = 18"):
        se.tornado(scn, inputs=["project.lifetime_years"])


@pytest.mark.parametrize("kwargs, match", [
    ({"metric": "lcoe_nominal"}, r"metric = 'lcoe_nominal': unknown metric \(did you mean 'lcoe_nominal_per_mwh'\?\)"),
    ({"inputs": ["capex.turbine"]}, r"capex\.turbine: unknown key"),
])
def test_tornado_rejects_bad_input_with_a_message(kwargs, match):
    with pytest.raises(ScenarioError, match=match):
        se.tornado(_scn(), **kwargs)


# --------------------------------------------------------------------------- solve

def test_solve_capex_for_lcoe_round_trips():
    """Turbine capex for an LCOE of 50: fed back, the run gives 50; and it equals the linear solution.

    Source: the LCOE definition (capex + PV O&M + PV decommissioning) / PV energy (SCENARIO.md)
    is linear in capex, so two direct runs fix the line LCOE = a + b x.
    """
    scn = _scn()
    res = se.solve(scn, target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="capex.turbine_per_kw")
    assert set(res) >= {"key", "value", "metric", "target", "achieved", "iterations"}
    assert res["key"] == "capex.turbine_per_kw" and res["metric"] == "lcoe_nominal_per_mwh"
    assert res["target"] == 50.0
    assert res["achieved"] == pytest.approx(50.0, abs=1e-8)
    back = model.run(_at(scn, "capex.turbine_per_kw", res["value"]), breakeven=False)
    assert back.metrics["lcoe_nominal_per_mwh"] == pytest.approx(50.0, abs=1e-8)
    y0 = model.run(_at(scn, "capex.turbine_per_kw", 500.0), breakeven=False).metrics["lcoe_nominal_per_mwh"]
    y1 = model.run(_at(scn, "capex.turbine_per_kw", 1500.0), breakeven=False).metrics["lcoe_nominal_per_mwh"]
    assert res["value"] == pytest.approx(500.0 + (50.0 - y0) * 1000.0 / (y1 - y0), rel=1e-9)


def test_solve_ppa_price_for_equity_irr_round_trips():
    """PPA price for an equity IRR of 10 %: numpy-financial's irr of the equity cash flow at that price is 0.10.

    Source: numpy_financial.irr (independent of the engine's vectorised IRR).
    """
    scn = _scn()
    res = se.solve(scn, target_metric="equity_irr", target_value=0.10, vary_key="revenue.ppa_price_per_mwh")
    case = model.run(_at(scn, "revenue.ppa_price_per_mwh", res["value"]), breakeven=False)
    assert case.metrics["equity_irr"] == pytest.approx(0.10, abs=1e-9)
    assert npf.irr(case.flows.equity_cash_flow[0]) == pytest.approx(0.10, abs=1e-9)
    assert res["iterations"] > 0


def test_solve_fraction_and_speed_keys_round_trip():
    """A fraction searched over its valid range, and the wind speed (one scenario per value): both round-trip
    (lcoe.engine.run on the scenario with the found value)."""
    scn = _scn()
    base = model.run(scn, breakeven=False).metrics["lcoe_nominal_per_mwh"]
    res = se.solve(scn, target_metric="lcoe_nominal_per_mwh", target_value=base * 1.05, vary_key="losses.wake")
    assert 0.05 < res["value"] < 1.0 and res["low"] == 0.0
    assert model.run(_at(scn, "losses.wake", res["value"]), breakeven=False).metrics["lcoe_nominal_per_mwh"] == \
        pytest.approx(base * 1.05, rel=1e-10)
    res = se.solve(scn, target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="wind.mean_speed_mps",
                   low=5.0, high=12.0)
    assert model.run(_at(scn, "wind.mean_speed_mps", res["value"]), breakeven=False).metrics[
        "lcoe_nominal_per_mwh"] == pytest.approx(50.0, rel=1e-9)


@pytest.mark.parametrize("kwargs, match", [
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=5.0, vary_key="capex.turbine_per_kw"),
     r"no value of capex\.turbine_per_kw between 110 and 11000 gives lcoe_nominal_per_mwh = 5 \(it ranges from"),
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="project.lifetime_years"),
     r"project\.lifetime_years: is a whole number .* use `lcoe sweep`"),
    (dict(target_metric="payback_year", target_value=8, vary_key="capex.turbine_per_kw"),
     r"target = 'payback_year': is a whole year"),
    (dict(target_metric="lcoe", target_value=50.0, vary_key="capex.turbine_per_kw"),
     r"target = 'lcoe': unknown metric"),
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="capex.development"),
     r"capex\.development: is 0 in the scenario, so there is no default search range"),
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="capex.turbine_per_kw", low=900.0,
          high=800.0), r"capex\.turbine_per_kw: the search range must have low < high \(got 900 and 800\)"),
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="losses.wake", low=0.0, high=1.5),
     r"losses\.wake = 1\.5: must be < 1"),
    (dict(target_metric="lcoe_nominal_per_mwh", target_value=50.0, vary_key="capex.turbin_per_kw"),
     r"capex\.turbin_per_kw: unknown key"),
])
def test_solve_rejects_bad_input_with_a_message(kwargs, match):
    with pytest.raises(ScenarioError, match=match):
        se.solve(_scn(), **kwargs)


# --------------------------------------------------------------------------- the commands

def _cli(capsys, *argv):
    rc = cli.main(list(argv))
    out, err = capsys.readouterr()
    return rc, out, err


def test_cli_sweep_json_and_table(capsys):
    """`lcoe sweep` on the demo: JSON parses (NaN as null), STEPS values from START to STOP (numpy.linspace)."""
    rc, out, _ = _cli(capsys, "sweep", str(DEMO), "--key", "wind.mean_speed_mps", "5", "9", "5", "--json")
    assert rc == 0
    d = json.loads(out)
    assert d["key"] == "wind.mean_speed_mps"
    assert [r["value"] for r in d["rows"]] == [5.0, 6.0, 7.0, 8.0, 9.0]
    el = [r["elasticity"] for r in d["rows"]]
    assert all(b < a for a, b in zip(el, el[1:]))
    rc, out, _ = _cli(capsys, "sweep", str(DEMO), "--key", "capex.turbine_per_kw", "900", "1100", "3")
    assert rc == 0
    assert "Sweep of capex.turbine_per_kw [EUR/kW]" in out
    assert "[EUR/MWh]" in out and "Indicative results only" in out
    # a cost leaves the energy as it is: no energy columns, no elasticity of 0.000
    assert "Net AEP P50" not in out and "Elasticity" not in out
    assert "the energy does not depend on this input" in " ".join(out.split())
    assert "1,100" in out


def test_cli_tornado_json_and_table(capsys):
    rc, out, _ = _cli(capsys, "tornado", str(DEMO), "--json")
    assert rc == 0
    d = json.loads(out)
    assert d["metric"] == "lcoe_nominal_per_mwh"
    swings = [abs(r["swing"]) for r in d["rows"]]
    assert swings == sorted(swings, reverse=True)
    rc, out, _ = _cli(capsys, "tornado", str(DEMO), "--metric", "equity_irr",
                      "--inputs", "revenue.ppa_price_per_mwh,capex.turbine_per_kw")
    assert rc == 0
    assert "Tornado on Equity IRR [%]" in out
    assert "revenue.ppa_price_per_mwh [EUR/MWh]" in out and "triangular P10/P90" in out


def test_cli_solve_json_and_table(capsys):
    rc, out, _ = _cli(capsys, "solve", str(DEMO), "--target", "lcoe_nominal_per_mwh=60", "--vary",
                      "capex.turbine_per_kw", "--json")
    assert rc == 0
    d = json.loads(out)
    assert d["achieved"] == pytest.approx(60.0, abs=1e-8)
    rc, out, _ = _cli(capsys, "solve", str(DEMO), "--target", "equity_irr=12%", "--vary",
                      "revenue.ppa_price_per_mwh", "--low", "40", "--high", "120")
    assert rc == 0
    assert "Goal seek: revenue.ppa_price_per_mwh [EUR/MWh] for Equity IRR [%] = 12.00" in out
    assert "searched                 40 to 120" in out


@pytest.mark.parametrize("argv, match", [
    (["sweep", str(DEMO), "--key", "wind.mean_sped_mps", "5", "9", "3"], "wind.mean_sped_mps: unknown key"),
    (["sweep", str(DEMO), "--key", "losses.wake", "0.5", "1.5", "3"], "losses.wake = 1.0: must be < 1"),
    (["tornado", str(DEMO), "--metric", "irr"], "--metric = 'irr': unknown metric"),
    (["solve", str(DEMO), "--target", "lcoe_nominal_per_mwh", "--vary", "capex.turbine_per_kw"],
     "--target = 'lcoe_nominal_per_mwh': must be METRIC=VALUE"),
    (["solve", str(DEMO), "--target", "lcoe_nominal_per_mwh=abc", "--vary", "capex.turbine_per_kw"],
     "the value after = must be a number"),
    (["solve", str(DEMO), "--target", "lcoe_nominal_per_mwh=5", "--vary", "capex.turbine_per_kw"],
     "no value of capex.turbine_per_kw between 100 and 10000 gives lcoe_nominal_per_mwh = 5"),
    (["solve", str(DEMO), "--target", "lcoe_nominal_per_mwh=50", "--vary", "capex.turbine_per_kw", "--low", "5"],
     "--high: give both --low and --high, or neither"),
])
def test_cli_bad_input_exits_2_with_one_line(capsys, argv, match):
    rc, out, err = _cli(capsys, *argv)
    assert rc == 2
    assert match in err
    assert err.startswith("error: ") and err.count("\n") == 1


def test_cli_exit_code_from_the_shell():
    """The installed entry point exits 2 with the one-line message (python -m lcoe)."""
    p = subprocess.run([sys.executable, "-m", "lcoe", "tornado", str(DEMO), "--metric", "npv"], cwd=ROOT,
                       capture_output=True, text=True, timeout=120)
    assert p.returncode == 2
    assert "unknown metric" in p.stderr and "Traceback" not in p.stderr
