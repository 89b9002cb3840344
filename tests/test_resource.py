"""Wind climate: Weibull moments, air density, shear, P-value quantiles and hourly series.

Every check names its outside source (see shared/reference/CHECK-VALUES.md).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import make_scenario
from numpy.testing import assert_allclose
from scipy.special import gamma
from scipy.stats import norm, weibull_min

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import energy as en
from lcoe.physics import wind as resource

SHAPES = [1.2, 1.8, 2.0, 2.1, 2.7, 3.5]
SCALES = [4.0, 6.5, 8.35, 11.0]


# --------------------------------------------------------------------------- Weibull

def _weibull_moment(scale_mps, shape, n):
    """n-th raw moment of a Weibull distribution, A^n Gamma(1 + n/k) (standard distribution formula)."""
    return np.asarray(scale_mps) ** n * gamma(1.0 + n / np.asarray(shape))


@pytest.mark.parametrize("k", SHAPES)
@pytest.mark.parametrize("a", SCALES)
def test_weibull_mean_and_third_moment_match_scipy(a, k):
    """Mean A Gamma(1 + 1/k) and E[v^3] = A^3 Gamma(1 + 3/k).

    Source: standard distribution formula, checked against scipy.stats.weibull_min (tolerance 1e-9).
    """
    dist = weibull_min(k, loc=0.0, scale=a)
    assert_allclose(resource.weibull_mean(a, k), dist.mean(), rtol=1e-9)
    assert_allclose(_weibull_moment(a, k, 3), dist.moment(3), rtol=1e-9)
    assert_allclose(resource.weibull_scale_from_mean(dist.mean(), k), a, rtol=1e-9)


@pytest.mark.parametrize("k", SHAPES)
def test_weibull_pdf_matches_scipy(k):
    """Source: scipy.stats.weibull_min.pdf (location 0)."""
    v = np.linspace(0.0, 30.0, 301)
    assert_allclose(resource.weibull_pdf(v, 8.0, k), weibull_min.pdf(v, k, scale=8.0), rtol=1e-12, atol=1e-300)


def test_rayleigh_worked_case():
    """Rayleigh (k = 2), mean 7 m/s: A = 7.89865 m/s, E[v^3] = 655.082 m^3/s^3.

    Source: Rayleigh worked case computed from the Weibull formulas, CHECK-VALUES.md
    (tolerance 1e-5); Gamma(1.5) = 0.886227, A = 1.128379 * mean, energy pattern
    factor 6/pi = 1.909859 (tolerance 1e-6).
    """
    a = float(resource.weibull_scale_from_mean(7.0, 2.0))
    assert a == pytest.approx(7.89865, abs=1e-5)
    assert float(_weibull_moment(a, 2.0, 3)) == pytest.approx(655.082, rel=1e-5)
    assert a / 7.0 == pytest.approx(1.128379, abs=1e-6)
    assert 7.0 / a == pytest.approx(0.886227, abs=1e-6)
    pattern = float(_weibull_moment(a, 2.0, 3)) / 7.0 ** 3
    assert pattern == pytest.approx(6.0 / math.pi, abs=1e-6)
    assert 6.0 / math.pi == pytest.approx(1.909859, abs=1e-6)


def test_weibull_fit_recovers_the_distribution():
    """A maximum-likelihood fit (scipy.stats.weibull_min.fit, floc=0) of a large sample returns its k and A."""
    v = weibull_min.rvs(2.2, scale=8.5, size=50_000, random_state=np.random.default_rng(11))
    k, a = resource.fit_weibull(v)
    assert k == pytest.approx(2.2, rel=0.02)
    assert a == pytest.approx(8.5, rel=0.01)


def test_weibull_fit_refuses_too_few_speeds():
    with pytest.raises(ScenarioError, match=r"wind\.timeseries: too few positive speeds to fit a Weibull"):
        resource.fit_weibull(np.array([0.0, 0.0, 3.0]))


# --------------------------------------------------------------------------- air density

def test_isa_sea_level():
    """ISA sea level: T0 = 288.15 K, p0 = 101325 Pa, rho0 = 1.225 kg/m^3.

    Source: ISO 2533:1975 / ICAO Doc 7488 (tolerance 1e-4). Dry-air density
    101325 Pa / (287.05 * 288.15 K) = 1.22501: IEC 61400-12-1.
    """
    assert float(resource.isa_pressure_pa(0.0)) == pytest.approx(101325.0, abs=1e-9)
    assert float(resource.isa_density(0.0)) == pytest.approx(1.225, abs=1e-4)
    assert float(resource.air_density(0.0, 15.0)) == pytest.approx(1.22501, abs=1e-4)
    assert 101325.0 / (287.05 * 288.15) == pytest.approx(1.22501, abs=1e-5)


@pytest.mark.parametrize("z, rho", [(0.0, 1.2250), (500.0, 1.1673), (1000.0, 1.1117), (2000.0, 1.0066)])
def test_isa_density_at_altitude(z, rho):
    """ISA density: 500 m 1.1673, 1000 m 1.1117, 2000 m 1.0066 kg/m^3.

    Source: ISO 2533 table (from memory; agrees with the ISA equations to 4 decimals),
    tolerance 5e-4. ``air_density`` at the ISA temperature (15 C less 6.5 K/km, lapse
    rate of ISO 2533) gives the same value.
    """
    assert float(resource.isa_density(z)) == pytest.approx(rho, abs=5e-4)
    t_isa_c = 15.0 - 0.0065 * z
    assert float(resource.air_density(z, t_isa_c)) == pytest.approx(rho, abs=5e-4)


def test_air_density_from_elevation_and_temperature_in_the_scenario():
    """The scenario's density: ISO 2533 pressure at the elevation, rho = p / (287.05 (T + 273.15)).

    Source: the conventions' formula, evaluated here by hand from ISO 2533 / IEC 61400-12-1.
    """
    scn = make_scenario(wind__elevation_m=420.0, wind__mean_temperature_c=8.5)
    p = 101325.0 * (1.0 - 2.25577e-5 * 420.0) ** 5.25588
    expected = p / (287.05 * (8.5 + 273.15))
    assert en.energy_of(scn).air_density_kgm3 == pytest.approx(expected, rel=1e-12)
    given = make_scenario(wind__air_density_kgm3=1.18)
    assert en.energy_of(given).air_density_kgm3 == 1.18


@pytest.mark.parametrize("z, rho", [(0.0, 1.2250), (1000.0, 1.1117), (2000.0, 1.0066)])
def test_scenario_without_temperature_takes_the_standard_atmosphere(z, rho):
    """No wind.mean_temperature_c: the temperature is ISO 2533's 15 degC less 6.5 K per km, so the
    density is the standard atmosphere's at the elevation (ISO 2533 table, from memory: 1.2250 kg/m^3
    at 0 m, 1.1117 at 1000 m, 1.0066 at 2000 m; tolerance 5e-4), not 15 degC at every height."""
    scn = make_scenario(wind__elevation_m=z, wind__mean_temperature_c=None)
    assert scn.wind.mean_temperature_c is None
    assert scn.wind.temperature_c == pytest.approx(15.0 - 0.0065 * z, abs=1e-12)
    assert en.energy_of(scn).air_density_kgm3 == pytest.approx(rho, abs=5e-4)
    given = make_scenario(wind__elevation_m=z, wind__mean_temperature_c=15.0)
    if z > 0:   # 15 degC at 1000 m: some 2.3 % below the standard atmosphere (the old default)
        assert en.energy_of(given).air_density_kgm3 < rho - 0.02


# --------------------------------------------------------------------------- shear

def test_power_law_shear_reference_case():
    """7.25 m/s at 50 m -> 7.89 m/s at 90.1 m with alpha = 1/7.

    Source: US national-lab "2019 Cost of Wind Energy Review" (reference site
    description), tolerance 0.01 m/s.
    """
    assert 7.25 * resource.shear_factor(90.1, 50.0, 1.0 / 7.0) == pytest.approx(7.89, abs=0.01)


def test_power_law_shear_through_the_scenario():
    """Same reference case through a scenario: the hub mean speed and the Weibull scale scale
    by (hub / h)^alpha, the shape is unchanged (2019 Cost of Wind Energy Review, 0.01 m/s)."""
    scn = make_scenario(wind__height_m=50.0, wind__mean_speed_mps=7.25, wind__shear_exponent=1.0 / 7.0,
                        turbine__hub_height_m=90.1)
    e = en.energy_of(scn)
    assert e.hub_mean_speed_mps == pytest.approx(7.89, abs=0.01)
    assert e.weibull_shape == 2.0
    a50 = 7.25 / math.gamma(1.5)
    assert e.weibull_scale_mps == pytest.approx(a50 * (90.1 / 50.0) ** (1.0 / 7.0), rel=1e-12)


def test_log_law_shear():
    """Neutral log law: v2/v1 = ln(z2/z0) / ln(z1/z0) (Manwell, McGowan and Rogers, Wind Energy Explained, ch. 2)."""
    assert resource.shear_factor(100.0, 10.0, roughness_length_m=0.03) == pytest.approx(
        math.log(100 / 0.03) / math.log(10 / 0.03), rel=1e-12)


# --------------------------------------------------------------------------- P-value quantiles

def test_normal_quantiles_and_p90_ratio():
    """z_90 = 1.2815516, z_99 = 2.3263479; P90/P50 = 0.871845 at sigma 10 %.

    Source: standard normal distribution (also scipy.stats.norm), tolerance 1e-6.
    """
    assert resource.Z_90 == pytest.approx(norm.ppf(0.90), abs=1e-12)
    assert resource.Z_99 == pytest.approx(norm.ppf(0.99), abs=1e-12)
    assert resource.Z_90 == pytest.approx(1.2815516, abs=1e-6)
    assert resource.Z_99 == pytest.approx(2.3263479, abs=1e-6)
    assert en.exceedance_factor(0.10, resource.Z_90) == pytest.approx(0.871845, abs=1e-6)


# --------------------------------------------------------------------------- hourly series

def _write(path, lines):
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def test_series_gaps_and_bad_values_are_reported(tmp_path):
    """Bad rows are dropped with a reason, gaps in the hourly record counted (hand count)."""
    import pandas as pd

    stamps = pd.date_range("2025-01-01", periods=48, freq="h", tz="UTC")
    rows = ["timestamp,speed_mps,temperature_c"]
    for h, ts in enumerate(stamps):
        if h in (5, 6):           # two hours absent from the record
            continue
        speed = {10: "x", 11: "-1"}.get(h, "7.5")   # two bad speeds
        rows.append(f"{ts.isoformat()},{speed},10.0")
    series = resource.load_series(_write(tmp_path / "w.csv", rows))
    assert series.hours == 44
    text = " | ".join(series.warnings)
    assert "2 row(s) with a missing, negative or non-numeric speed dropped" in text
    assert "4 of 48 hour(s) missing" in text
    assert np.all(series.speed_mps == 7.5)


def test_series_with_too_many_missing_hours_is_refused(tmp_path):
    rows = ["timestamp,speed_mps"] + [f"2025-01-01T{h:02d}:00:00Z,{'nan' if h < 12 else 6.0}" for h in range(24)]
    with pytest.raises(ScenarioError, match=r"wind\.timeseries = 'w\.csv': 50\.0% of the hours are missing or bad, "
                                            r"more than wind\.max_missing_share = 0\.2"):
        resource.load_series(_write(tmp_path / "w.csv", rows))


def test_series_with_a_wrong_header_is_refused(tmp_path):
    path = _write(tmp_path / "w.csv", ["time,speed", "2025-01-01T00:00:00Z,5"])
    with pytest.raises(ScenarioError, match=r"header must be 'timestamp,speed_mps\[,temperature_c\]', found 'time,speed'"):
        resource.load_series(path)


def test_series_file_missing(tmp_path):
    with pytest.raises(ScenarioError, match=r"wind\.timeseries = 'none\.csv': file not found"):
        resource.load_series(tmp_path / "none.csv")
