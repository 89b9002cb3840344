"""Gross and net energy: the Weibull integral, hourly series, losses, availability, P-values."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import ROOT, make_raw, make_scenario
from numpy.testing import assert_allclose
from scipy.special import gamma
from scipy.stats import norm, weibull_min

from lcoe.physics import energy as en
from lcoe.physics import turbine as tb

DEMO_CURVE = ROOT / "demo" / "tallowmere_curve.csv"


@pytest.mark.parametrize("a, k", [(6.0, 1.6), (7.9, 2.0), (9.2, 2.4), (11.0, 3.2)])
def test_uncapped_physics_curve_integrates_to_the_third_moment(a, k):
    """Mean power of P = 0.5 rho A_rotor Cp eta v^3 over a Weibull climate is
    0.5 rho A_rotor Cp eta A_w^3 Gamma(1 + 3/k).

    Source: Weibull third moment (standard distribution formula) times the kinetic
    energy flux (physics); tolerance 1e-4.
    """
    rho, d, cp, eta = 1.2, 120.0, 0.48, 0.94
    curve = tb.physics_curve(math.inf, d, cp, cut_in_mps=0.0, cut_out_mps=90.0, drivetrain_efficiency=eta)
    site = curve.at_density(rho)
    got = float(en.mean_power_weibull_kw(site, a, k))
    area = math.pi * d ** 2 / 4
    expected = 0.5 * rho * area * cp * eta * a ** 3 * gamma(1 + 3 / k) / 1000.0
    assert got == pytest.approx(expected, rel=1e-4)


def test_capped_curve_integral_matches_scipy_quadrature():
    """The piecewise Gauss-Legendre integral against scipy.integrate.quad of P(v) f(v) on the demo table."""
    from scipy.integrate import quad

    curve = tb.read_curve_csv(DEMO_CURVE, 4200.0, 136.0)
    site = curve.at_density(1.19)
    a, k = 8.4, 2.1
    pts = list(site.breaks_mps)
    ref, _ = quad(lambda v: float(site.power_kw(v)) * weibull_min.pdf(v, k, scale=a), 0.0, float(max(pts)),
                  points=pts, limit=500, epsabs=1e-10)
    assert float(en.mean_power_weibull_kw(site, a, k)) == pytest.approx(ref, rel=1e-6)


# --------------------------------------------------------------------------- Weibull against a series

N_HOURS = 25 * 8760   # 25 years of hours: sampling sd of the mean power about 0.2 % for this turbine

# mean length of each calendar month over the Gregorian 400-year cycle (97 leap years): the
# weight of each month in a series' energy, whatever its share of the record
MONTH_DAYS = np.array([31, 28 + 97 / 400, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])


def _month_weighted(values, stamps):
    """sum over calendar months of (days / 365.2425) * the month's mean: each month by its length."""
    import pandas as pd

    means = pd.Series(np.asarray(values)).groupby(np.asarray(stamps.month) - 1).mean()
    return float(sum(MONTH_DAYS[m] / MONTH_DAYS.sum() * means[m] for m in range(12)))


@pytest.fixture(scope="module")
def weibull_series(tmp_path_factory):
    """A long hourly series sampled (fixed seed) from the BASE climate: k = 2, mean 7 m/s at hub height."""
    import pandas as pd

    k, mean = 2.0, 7.0
    a = mean / gamma(1 + 1 / k)
    v = weibull_min.rvs(k, scale=a, size=N_HOURS, random_state=np.random.default_rng(2024))
    v = np.round(v, 3)
    folder = tmp_path_factory.mktemp("series")
    path = folder / "wind.csv"
    stamps = pd.date_range("2000-01-01", periods=N_HOURS, freq="h", tz="UTC")
    pd.DataFrame({"timestamp": stamps.strftime("%Y-%m-%dT%H:%M:%SZ"), "speed_mps": v}).to_csv(path, index=False)
    return path, v, stamps


def _series_scenario(path, **updates):
    raw = make_raw(**updates)
    raw["wind"].pop("mean_speed_mps")
    raw["wind"].pop("weibull_shape")
    raw["wind"]["timeseries"] = str(path)
    return make_scenario(raw)


def test_weibull_integral_agrees_with_a_long_sampled_series(weibull_series):
    """Weibull-integral AEP within 0.5 % of the AEP of a long hourly series drawn from the same
    Weibull (the law of large numbers; sampling from scipy.stats.weibull_min)."""
    path, _, _ = weibull_series
    weib = en.energy_of(make_scenario())
    series = en.energy_of(_series_scenario(path))
    assert series.gross_aep_mwh == pytest.approx(weib.gross_aep_mwh, rel=0.005)
    assert series.air_density_kgm3 == weib.air_density_kgm3


def test_series_reproduces_its_own_mean_power(weibull_series):
    """Gross AEP of a series = turbines * 8760 h * mean of P(v_i), each calendar month weighed by
    its length (days / 365.2425, Gregorian calendar); P evaluated here from the physics formula
    min(rated, 0.5 rho A Cp eta v^3) inside cut-in..cut-out (kinetic energy flux)."""
    path, v, stamps = weibull_series
    scn = _series_scenario(path)
    e = en.energy_of(scn)
    rho = e.air_density_kgm3
    p = np.minimum(0.5 * rho * math.pi * 55.0 ** 2 * 0.45 * 0.95 * v ** 3 / 1000.0, 3000.0)
    p = np.where((v >= 3.0) & (v < 25.0), p, 0.0)
    assert e.gross_aep_mwh == pytest.approx(10 * 8760.0 * _month_weighted(p, stamps) / 1000.0, rel=1e-12)
    assert e.hub_mean_speed_mps == pytest.approx(_month_weighted(v, stamps), rel=1e-12)
    # 25 whole years less the leap days: the weighting moves the plain mean by little
    assert e.gross_aep_mwh == pytest.approx(10 * 8760.0 * p.mean() / 1000.0, rel=1e-4)


def test_series_with_temperature_uses_hourly_density(tmp_path):
    """With a temperature column every hour has its own density, rho = p / (287.05 (T + 273.15))
    (ISO 2533 pressure; IEC 61400-12-1 gas constant): the mean of P(v_i, rho_i)."""
    import pandas as pd

    n = 8760
    rng = np.random.default_rng(5)
    v = np.round(rng.uniform(2.0, 14.0, n), 2)
    t_c = np.round(rng.uniform(-10.0, 30.0, n), 1)
    when = pd.date_range("2021-01-01", periods=n, freq="h", tz="UTC")
    stamps = when.strftime("%Y-%m-%dT%H:%M:%SZ")
    path = tmp_path / "w.csv"
    pd.DataFrame({"timestamp": stamps, "speed_mps": v, "temperature_c": t_c}).to_csv(path, index=False)
    e = en.energy_of(_series_scenario(path, wind__elevation_m=300.0))
    pressure = 101325.0 * (1 - 2.25577e-5 * 300.0) ** 5.25588
    rho = pressure / (287.05 * (t_c + 273.15))
    p = np.minimum(0.5 * rho * math.pi * 55.0 ** 2 * 0.45 * 0.95 * v ** 3 / 1000.0, 3000.0)
    p = np.where((v >= 3.0) & (v < 25.0), p, 0.0)
    assert e.gross_aep_mwh == pytest.approx(10 * 8760.0 * _month_weighted(p, when) / 1000.0, rel=1e-12)
    assert e.air_density_kgm3 == pytest.approx(_month_weighted(rho, when), rel=1e-12)


# --------------------------------------------------------------------------- gross to net

def _full_raw():
    return make_raw(
        losses={"wake": 0.08, "electrical": 0.02, "turbine_performance": 0.015, "environmental": 0.01,
                "curtailment": 0.01, "other": 0.005},
        operations={"availability_first_year": 0.94, "availability_mature": 0.97, "ageing_starts_year": 15,
                    "availability_ageing_per_year": 0.002, "degradation_per_year": 0.004},
        maintenance={"component": [
            {"name": "gearbox", "failure_rate_per_turbine_year": 0.025, "replacement_cost": 3e5, "downtime_days": 30.0},
            {"name": "generator", "failure_rate_per_turbine_year": 0.015, "replacement_cost": 2e5,
             "downtime_days": 14.0}]},
        uncertainty={"interannual_speed_sd": 0.06, "speed": [{"name": "measurement", "sd": 0.025}],
                     "energy": [{"name": "losses", "sd": 0.03}, {"name": "curve", "sd": 0.02}]},
    )


def test_yearly_net_energy_follows_the_loss_chain():
    """E_t = gross prod(1 - loss_k) avail_t (1 - D) (1 - deg)^(t - 1), written out by hand.

    Loss categories as in EWEA, "Wind Energy - The Facts"; the total here (about 13 %) lies
    in its usual 10-20 % range.
    """
    scn = make_scenario(_full_raw())
    e = en.energy_of(scn)
    lf = 0.92 * 0.98 * 0.985 * 0.99 * 0.99 * 0.995
    assert e.loss_factor == pytest.approx(lf, rel=1e-12)
    assert 0.10 <= 1 - lf <= 0.20
    d = 0.025 * 30 / 365 + 0.015 * 14 / 365
    assert e.downtime_fraction == pytest.approx(d, rel=1e-12)
    t = np.arange(1, 21)
    avail = np.where(t == 1, 0.94, 0.97) - np.where(t > 15, 0.002 * (t - 15), 0.0)
    assert_allclose(e.availability, avail, rtol=1e-12)
    assert e.availability[15] == pytest.approx(0.97 - 0.002)     # year 16: first ageing year
    expected = e.gross_aep_mwh * lf * avail * (1 - d) * 0.996 ** (t - 1)
    assert_allclose(e.energy_mwh, expected, rtol=1e-12)
    assert e.net_aep_p50_mwh == pytest.approx(e.gross_aep_mwh * lf * 0.97 * (1 - d), rel=1e-12)
    assert e.net_capacity_factor == pytest.approx(e.net_aep_p50_mwh / (30_000 * 8.76), rel=1e-12)


def test_p_values_from_the_sensitivity_and_the_uncertainty_terms():
    """sigma_1yr = sqrt((S iav)^2 + sum (S sd)^2 + sum sd_E^2), sigma_10yr with iav^2 / 10
    (common practice in energy-yield assessment); P90 = P50 (1 - z_90 sigma), P99 with z_99
    (standard normal quantiles, scipy.stats.norm)."""
    scn = make_scenario(_full_raw())
    e = en.energy_of(scn)
    s = e.speed_sensitivity
    # S = d ln AEP / d ln v by central difference of +-1 % on the scale (the conventions)
    site = en.site_for(scn)
    lo, hi = site.aep_direct(np.array([0.99, 1.01]))
    assert s == pytest.approx(math.log(hi / lo) / math.log(1.01 / 0.99), rel=1e-12)
    assert 1.0 < s < 3.0                      # between the capped and the cubic limits
    s1 = math.sqrt((s * 0.06) ** 2 + (s * 0.025) ** 2 + 0.03 ** 2 + 0.02 ** 2)
    s10 = math.sqrt((s * 0.06) ** 2 / 10 + (s * 0.025) ** 2 + 0.03 ** 2 + 0.02 ** 2)
    assert e.sigma_1yr == pytest.approx(s1, rel=1e-12)
    assert e.sigma_10yr == pytest.approx(s10, rel=1e-12)
    assert e.net_aep_p90_1yr_mwh == pytest.approx(e.net_aep_p50_mwh * (1 - norm.ppf(0.9) * s1), rel=1e-9)
    assert e.net_aep_p90_10yr_mwh == pytest.approx(e.net_aep_p50_mwh * (1 - norm.ppf(0.9) * s10), rel=1e-9)
    assert e.net_aep_p99_1yr_mwh == pytest.approx(e.net_aep_p50_mwh * (1 - norm.ppf(0.99) * s1), rel=1e-9)


def test_p90_over_p50_at_ten_percent_sigma():
    """P90/P50 = 0.871845 at sigma 10 % (standard normal distribution), tolerance 1e-6."""
    scn = make_scenario(uncertainty={"interannual_speed_sd": 0.0, "energy": [{"name": "all", "sd": 0.10}]})
    e = en.energy_of(scn)
    assert e.sigma_1yr == pytest.approx(0.10, abs=1e-15)
    assert e.net_aep_p90_1yr_mwh / e.net_aep_p50_mwh == pytest.approx(0.871845, abs=1e-6)
    assert e.case_factor("p90_1yr") == pytest.approx(0.871845, abs=1e-6)


def test_n_year_sigma_shrinks_only_the_interannual_term():
    """sigma_N = sqrt(sigma_iav^2 / N + sigma_other^2) (common practice), tolerance 1e-9."""
    assert en.sigma_total(1.0, 0.06, [], [0.05], years=10) == pytest.approx(math.sqrt(0.06 ** 2 / 10 + 0.05 ** 2),
                                                                              abs=1e-9)


def test_speed_sensitivity_of_an_uncapped_cubic_curve_is_three():
    """For P ~ v^3, with the rated speed (71 m/s) and the cut-out (60 m/s) far in the Weibull
    tail, AEP ~ A^3, so d ln AEP / d ln v = 3 (physics, Weibull third moment)."""
    scn = make_scenario(turbine__rotor_diameter_m=20.0, turbine__cut_in_mps=0.0, turbine__cut_out_mps=60.0,
                        wind__mean_speed_mps=6.0)
    assert en.energy_of(scn).speed_sensitivity == pytest.approx(3.0, rel=1e-6)


def test_availability_profile_never_negative():
    t = np.arange(1, 61)
    a = en.availability_profile(t, 0.95, 0.97, 10, 0.05)
    assert a.min() == 0.0 and a[0] == 0.95 and a[10] == pytest.approx(0.92)


def test_site_speed_factor_table_matches_direct_integration():
    """The tabulated AEP(factor) used by batches agrees with direct integration to 1e-5."""
    site = en.site_for(make_scenario())
    f = np.array([0.813, 0.95, 1.0, 1.0371, 1.2])
    assert_allclose(site.gross_at_factor(f), site.aep_direct(f), rtol=1e-5)


# --------------------------------------------------------------------------- the speed-factor table

def _hourly_power_kw(kind, v, rho):
    """Power of each hour computed here, outside the package: the demo table with the IEC
    61400-12-1 speed normalisation v (rho / 1.225)^(1/3) (pitch) or the power scaled by
    rho / 1.225 (stall), zero outside the table and capped at 4200 kW; or the BASE physics
    curve min(3000, 0.5 rho A Cp eta v^3) for 3 <= v < 25 m/s (kinetic energy flux)."""
    if kind == "physics":
        p = np.minimum(0.5 * rho * math.pi * 55.0 ** 2 * 0.45 * 0.95 * v ** 3 / 1000.0, 3000.0)
        return np.where((v >= 3.0) & (v < 25.0), p, 0.0)
    table = np.loadtxt(DEMO_CURVE, delimiter=",", skiprows=1)
    if kind == "stall":
        p = np.interp(v, table[:, 0], table[:, 1], left=0.0, right=0.0) * rho / 1.225
    else:
        p = np.interp(v * (rho / 1.225) ** (1.0 / 3.0), table[:, 0], table[:, 1], left=0.0, right=0.0)
    return np.minimum(p, 4200.0)


def _hourly_scenario(kind):
    if kind == "pitch":
        from conftest import DEMO_HOURLY

        from lcoe.inputs import scenario
        return scenario.load(DEMO_HOURLY)
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None,
                      "wind.timeseries": str(ROOT / "demo" / "tallowmere_wind_hourly.csv"),
                      "wind.shear_exponent": 0.14, "turbine.hub_height_m": 110.0})
    if kind == "stall":
        raw["turbine"] = {"hub_height_m": 110.0, "rated_power_kw": 4200.0, "rotor_diameter_m": 136.0,
                          "power_curve": str(DEMO_CURVE), "regulation": "stall"}
    return make_scenario(raw)


@pytest.mark.parametrize("kind", ["pitch", "stall", "physics"])
def test_series_factor_table_within_its_bound_of_the_direct_hourly_energy(kind):
    """The table of AEP(f) against AEP computed here hour by hour at f times every hub-height
    speed (mean power x 8760 h, each calendar month weighed by its length), at random factors over the whole table, around 1, and just
    either side (1e-12 and 1e-9 of f) of the factors where hours cross the cut-in or cut-out:
    the worst error is at most 1e-5 of the AEP at that factor (zero where there is no energy).
    Exactly at a crossing the hour is decided by how the speed product rounds, so that single
    point is not tested."""
    scn = _hourly_scenario(kind)
    site = en.site_for(scn)
    c = site.climate
    rho = c.densities_kgm3 if c.densities_kgm3 is not None else c.density_kgm3
    rng = np.random.default_rng(17)
    steps = rng.choice(site.step_factors, 400, replace=False)
    f = np.concatenate([rng.uniform(0.1, 2.5, 1500), rng.uniform(0.8, 1.25, 1000), steps * (1 - 1e-12),
                        steps * (1 + 1e-12), steps * (1 - 1e-9), steps * (1 + 1e-9), site.factors[::7]])
    f = f[(f >= 0.1) & (f <= 2.5)]
    import pandas as pd
    stamps = pd.DatetimeIndex(pd.read_csv(ROOT / "demo" / "tallowmere_wind_hourly.csv")["timestamp"])
    direct = np.array([_month_weighted(_hourly_power_kw(kind, c.speeds_mps * x, rho), stamps) for x in f])
    direct *= scn.project.turbines * 8760.0 / 1000.0
    table = site.gross_at_factor(f)
    assert site.step_factors.size >= c.speeds_mps.size * 0.99      # a step for (nearly) every hour
    # the factors trials draw are served by the table, not by direct evaluation
    assert not site.cell_exact[(site.factors[:-1] >= 0.75) & (site.factors[:-1] < 1.5)].any()
    assert np.all(np.abs(table - direct) <= 1e-5 * direct + 1e-12 * site.gross_aep_mwh)


def test_weibull_factor_table_within_its_bound_of_scipy_quadrature():
    """The table of AEP(f) for the demo's Weibull climate against scipy.integrate.quad of
    P(v) f(v; k, f A) (scipy.stats.weibull_min), over the whole table: within 1e-5."""
    from conftest import DEMO
    from scipy.integrate import quad

    from lcoe.inputs import scenario
    scn = scenario.load(DEMO)
    site = en.site_for(scn)
    sc_ = site.site_curve
    pts = list(sc_.breaks_mps)
    factors = np.concatenate([np.linspace(0.11, 2.49, 13), [0.7137, 0.9411, 1.0063, 1.1781]])
    for f in factors:
        a = site.climate.scale_mps * f
        ref, _ = quad(lambda v, a=a: float(sc_.power_kw(v)) * weibull_min.pdf(v, site.climate.shape, scale=a), 0.0,
                      float(max(pts)), points=pts, limit=500, epsabs=0, epsrel=1e-11)
        ref *= scn.project.turbines * 8760.0 / 1000.0
        assert float(site.gross_at_factor(np.array([f]))[0]) == pytest.approx(ref, rel=1e-5), f
    assert not site.cell_exact[(site.factors[:-1] >= 0.75) & (site.factors[:-1] < 1.5)].any()


@pytest.mark.parametrize("fixed", ["mean", "scale"])
def test_weibull_shape_table_within_its_bound_of_scipy_quadrature(fixed):
    """The table of AEP(k) that Monte Carlo reads when it draws the Weibull shape, against
    scipy.integrate.quad of P(v) f(v; k, A) (scipy.stats.weibull_min), with A = mean / Gamma(1 + 1/k)
    (the scenario holds the mean) or A fixed (it holds the scale): within 1e-5, at shapes off the grid."""
    from conftest import DEMO
    from scipy.integrate import quad
    from scipy.special import gamma as gamma_fn

    from lcoe.inputs import scenario
    site = en.site_for(scenario.load(DEMO))
    c, sc_ = site.climate, site.site_curve
    pts = list(sc_.breaks_mps)
    shapes = np.array([0.5031, 1.1234, 1.7777, 2.0987, 2.3456, 3.0101, 4.4444, 7.3331, 9.9977])
    gross, _ = en.gross_at_shape(site, fixed, shapes)
    for k, table in zip(shapes, gross):
        a = c.mean_speed_mps / gamma_fn(1.0 + 1.0 / k) if fixed == "mean" else c.scale_mps
        ref, _ = quad(lambda v, a=a, k=k: float(sc_.power_kw(v)) * weibull_min.pdf(v, k, scale=a), 0.0,
                      float(max(pts)), points=pts, limit=500, epsabs=0, epsrel=1e-11)
        ref *= site.turbines * 8760.0 / 1000.0
        assert table == pytest.approx(ref, rel=1e-5), k


def test_monte_carlo_drawing_the_shape_matches_one_integration_per_trial():
    """Trials that draw the shape read the table; the same trials run one scenario each (the
    integral evaluated afresh) give the same energy to 1e-5 (the table's bound)."""
    from conftest import DEMO

    from lcoe import engine as model
    from lcoe.finance.cashflow import Sample
    from lcoe.inputs import scenario
    scn = scenario.load(DEMO)
    case = model.run(scn, breakeven=False)
    ks = np.array([1.55, 1.9, 2.1, 2.35, 2.8])
    fast, _, _ = model.evaluate(scn, overrides={"wind.weibull_shape": ks}, sample=Sample(), schedule=case.schedule,
                                energy=case.energy, lean=True)
    for i, k in enumerate(ks):
        one = en.site_for(scn.with_overrides({"wind.weibull_shape": float(k)}))
        assert fast.energy_mwh[i, 1] / case.flows.energy_mwh[0, 1] == pytest.approx(
            one.gross_aep_mwh / case.energy.gross_aep_mwh, rel=1e-5)
