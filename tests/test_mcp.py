"""Long-term correction (MCP): the concurrent statistics, both methods, the checks and the uncertainty term."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import DEMO_LAYOUT, make_raw
from scipy.stats import linregress, pearsonr, weibull_min

from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.physics import energy as en
from lcoe.physics import mcp
from lcoe.physics import wind as resource


def _pair(n=5000, seed=1):
    rng = np.random.default_rng(seed)
    x = weibull_min.rvs(2.0, scale=7.0, size=n, random_state=rng)
    y = np.maximum(0.4 + 1.1 * x + rng.normal(0.0, 1.2, n), 0.0)
    return x, y


def test_variance_ratio_keeps_the_site_mean_and_sd_over_the_concurrent_period():
    """offset + slope x with slope = s_y / s_x has mean(y) and sd(y) exactly.

    Source: the variance-ratio method (Rogers, Rogers and Manwell 2005, from memory); identity of the
    first two moments under a linear map.
    """
    x, y = _pair()
    slope, offset = mcp.variance_ratio(x, y)
    pred = offset + slope * x
    assert pred.mean() == pytest.approx(y.mean(), rel=1e-13)
    assert pred.std() == pytest.approx(y.std(), rel=1e-13)
    assert pred.std(ddof=1) == pytest.approx(y.std(ddof=1), rel=1e-13)


def test_linear_regression_is_ordinary_least_squares():
    """Slope, intercept and r against scipy.stats.linregress and scipy.stats.pearsonr."""
    x, y = _pair(seed=2)
    ref = linregress(x, y)
    slope, offset = mcp.linear_regression(x, y)
    assert slope == pytest.approx(ref.slope, rel=1e-12)
    assert offset == pytest.approx(ref.intercept, rel=1e-12)
    assert mcp.correlation(x, y) == pytest.approx(pearsonr(x, y)[0], rel=1e-12)
    # the two slopes differ by r: b_lr = r s_y / s_x (OLS)
    assert slope == pytest.approx(mcp.correlation(x, y) * mcp.variance_ratio(x, y)[0], rel=1e-12)


def test_long_term_uncertainty_by_hand():
    """r = 0.8, 1 concurrent year, 20 reference years, inter-annual sd 6 %:
    0.06 sqrt((1 - 0.64) / 1 + 0.64 / 20) = 0.06 sqrt(0.392) = 0.0375659.

    Source: double sampling with a regression estimator, V = S^2 (1 - rho^2) / n + rho^2 S^2 / n'
    (Cochran, Sampling Techniques, 3rd ed. 1977, ch. 12; from memory).
    """
    assert mcp.long_term_uncertainty(0.8, 1.0, 20.0, 0.06) == pytest.approx(0.0375659, abs=1e-7)
    # a perfect correlation leaves only the reference's own sampling: sigma / sqrt(N_r)
    assert mcp.long_term_uncertainty(1.0, 1.0, 25.0, 0.06) == pytest.approx(0.06 / 5.0, rel=1e-12)


def _series(start, hours, speed, direction=None, step_h=1):
    stamps = np.datetime64(start) + (np.arange(hours) * step_h).astype("timedelta64[h]")
    return resource.Series(speed_mps=np.asarray(speed, float), temperature_c=None, hours=hours,
                           direction_deg=None if direction is None else np.asarray(direction, float),
                           timestamps=stamps.astype("datetime64[ns]"), step_h=float(step_h))


def _reference(years=6, seed=4):
    rng = np.random.default_rng(seed)
    n = int(years * 365.25 * 4)
    speed = weibull_min.rvs(2.0, scale=7.0, size=n, random_state=rng)
    direction = rng.uniform(0, 360, n)
    return _series("2019-01-01T00:00", n, speed, direction, step_h=6)


def test_an_exact_linear_site_is_recovered_by_both_methods():
    """A site that is exactly 0.3 + 1.2 x the reference (r = 1): both lines are that line, and the
    long-term mean is 0.3 + 1.2 mean(reference) (worked by hand)."""
    ref = _reference()
    start = np.datetime64("2023-01-01T00:00")
    i0 = int((start - ref.timestamps[0].astype("datetime64[h]")) / np.timedelta64(6, "h"))
    x = ref.speed_mps[i0:i0 + 1460]
    hours = np.arange(1460 * 6)
    y = np.repeat(0.3 + 1.2 * x, 6)
    site = _series("2023-01-01T00:00", hours.size, y, np.repeat(ref.direction_deg[i0:i0 + 1460] + 10.0, 6))
    lt = mcp.correct(site, ref, method="linear_regression", site_name="s.csv", reference_name="r.csv")
    assert lt.r == pytest.approx(1.0, abs=1e-12)
    assert lt.regression_slope == pytest.approx(1.2, rel=1e-10) and lt.variance_ratio_slope == pytest.approx(1.2)
    assert lt.regression_offset_mps == pytest.approx(0.3, abs=1e-9)
    assert lt.site_mean_long_term_mps == pytest.approx(0.3 + 1.2 * ref.speed_mps.mean(), rel=1e-10)
    assert lt.veer_deg == pytest.approx(10.0, abs=1e-9)
    assert lt.concurrent_pairs == 1460 and lt.coverage == pytest.approx(1.0)


def test_the_veer_is_a_circular_mean_across_north():
    """Site 5 deg where the reference reads 355 deg: a veer of +10 deg, not -350 (circular mean)."""
    ref = _reference(years=3)
    n = 24 * 365
    site = _series("2020-01-01T00:00", n, np.full(n, 7.0) + np.sin(np.arange(n)), np.full(n, 5.0))
    ref = resource.Series(ref.speed_mps, None, ref.hours, direction_deg=np.full(ref.hours, 355.0),
                          timestamps=ref.timestamps, step_h=6.0)
    lt = mcp.correct(site, ref, method="variance_ratio", site_name="s.csv", reference_name="r.csv")
    assert lt.veer_deg == pytest.approx(10.0, abs=1e-9)
    assert np.allclose(lt.directions_deg, 5.0)


def test_a_reference_that_does_not_cover_the_site_period_is_refused():
    ref = _reference(years=3)          # 2019 .. 2021
    site = _series("2021-07-01T00:00", 24 * 365, np.full(24 * 365, 7.0))
    with pytest.raises(ScenarioError) as e:
        mcp.correct(site, ref, method="variance_ratio", site_name="s.csv", reference_name="r.csv", file="r.csv")
    assert str(e.value) == ("r.csv: wind.long_term.reference = 'r.csv': covers 2019-01-01 00:00 to 2021-12-31 "
                            "12:00, but the site series s.csv runs 2021-07-01 00:00 to 2022-06-30 23:00; the "
                            "reference must cover the site period")


def test_less_than_90_percent_concurrent_is_refused():
    """A site year with 15 % of its hours missing at the reference times: 85 % concurrent, below 90 %."""
    ref = _reference(years=6)
    n = 24 * 365
    keep = np.ones(n, bool)
    keep[(np.arange(n) % 6 == 0) & (np.arange(n) % 40 < 6)] = False     # every 40 h the 6-hourly hour is missing
    keep[: int(0.12 * n)] = False
    stamps = np.datetime64("2022-01-01T00:00") + np.arange(n).astype("timedelta64[h]")
    site = resource.Series(np.full(keep.sum(), 7.0) + np.arange(keep.sum()) % 3, None, int(keep.sum()),
                           timestamps=stamps[keep].astype("datetime64[ns]"))
    with pytest.raises(ScenarioError, match=r"wind\.long_term\.reference = 'r\.csv': only 8\d\.\d% of the site "
                                            r"period has concurrent data \(\d+ of \d+ reference records\); "
                                            r"at least 90% is needed$"):
        mcp.correct(site, ref, method="variance_ratio", site_name="s.csv", reference_name="r.csv")


def test_timestamps_that_never_coincide_are_named():
    ref = _reference(years=3)
    half = np.datetime64("2020-01-01T00:30") + np.arange(24 * 100).astype("timedelta64[h]")
    site = resource.Series(np.full(half.size, 7.0), None, half.size, timestamps=half.astype("datetime64[ns]"))
    with pytest.raises(ScenarioError, match=r"only 0\.0% of the site period has concurrent data .*; no reference "
                                            r"timestamp matches one of the site series \(both read as UTC\)$"):
        mcp.correct(site, ref, method="variance_ratio", site_name="s.csv", reference_name="r.csv")


# --------------------------------------------------------------------------- the demo

def test_the_demo_long_term_correction_feeds_energy_and_uncertainty():
    """The long-term series feeds the gross AEP; its uncertainty term joins the speed terms in quadrature:
    sigma_1yr = sqrt((S sigma_iav)^2 + S^2 sum sd_speed^2 + sum sd_energy^2) (common practice)."""
    scn = sc.load(DEMO_LAYOUT)
    e = en.energy_of(scn)
    lt = e.long_term
    assert lt["method"] == "variance_ratio" and lt["reference_years"] > 19.9 and lt["coverage"] >= 0.9
    assert lt["site_mean_long_term_mps"] == pytest.approx(lt["long_term_mean_variance_ratio_mps"])
    assert lt["uncertainty_speed_sd"] == pytest.approx(
        mcp.long_term_uncertainty(lt["r"], lt["concurrent_years"], lt["reference_years"], lt["interannual_sd"]))
    names = [n for n, _ in e.speed_terms]
    assert names == ["measurement", "long-term correction (MCP)"]
    u = scn.uncertainty
    s = e.speed_sensitivity
    expected = math.sqrt((s * u.interannual_speed_sd) ** 2 + s ** 2 * sum(sd ** 2 for _, sd in e.speed_terms)
                         + sum(x.sd ** 2 for x in u.energy))
    assert e.sigma_1yr == pytest.approx(expected, rel=1e-12)
    # the hub-height mean follows the long-term series, power law with alpha 0.14 (SCENARIO conventions)
    assert e.hub_mean_speed_mps == pytest.approx(lt["site_mean_long_term_mps"] * (110 / 100) ** 0.14, rel=1e-12)


def test_linear_regression_through_the_scenario(tmp_path):
    raw = sc.parse_toml(DEMO_LAYOUT)
    raw["wind"]["long_term"]["method"] = "linear_regression"
    e = en.energy_of(sc.from_dict(raw, source=str(DEMO_LAYOUT), base_dir=DEMO_LAYOUT.parent))
    assert e.long_term["method"] == "linear_regression"
    assert e.long_term["site_mean_long_term_mps"] == pytest.approx(e.long_term["long_term_mean_regression_mps"])


@pytest.mark.parametrize("change, message", [
    ({"wind.long_term": {"reference": "r.csv"}, "wind.mean_speed_mps": 7.0},
     r"wind\.long_term: needs wind\.timeseries: the site's short measurement to correct$"),
    ({"wind.long_term": {"reference": "r.csv", "method": "ratio"}},
     r"wind\.long_term\.method = 'ratio': must be one of 'variance_ratio' or 'linear_regression'$"),
])
def test_long_term_keys_are_checked(change, message):
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None, "wind.timeseries": "s.csv"})
    for k, v in change.items():
        node = raw
        parts = k.split(".")
        for p in parts[:-1]:
            node = node.setdefault(p, {})
        node[parts[-1]] = v
    if "wind.mean_speed_mps" in change:
        raw["wind"].pop("timeseries")
    with pytest.raises(ScenarioError, match=message):
        sc.from_dict(raw, source="test.toml")


def test_a_reference_file_that_is_missing_or_a_folder(tmp_path):
    raw = sc.parse_toml(DEMO_LAYOUT)
    raw["wind"]["long_term"]["reference"] = str(tmp_path)
    with pytest.raises(ScenarioError) as e:
        en.energy_of(sc.from_dict(raw, source="x.toml", base_dir=DEMO_LAYOUT.parent))
    assert str(e.value) == f"{tmp_path}: wind.long_term.reference = '{tmp_path.name}': is a folder, not a CSV file"


def test_monte_carlo_draws_the_long_term_term_with_the_others():
    """Trials' long-term speed factors have sd sqrt(sum sd^2) over the scenario's terms and the MCP term
    (independent terms in quadrature: common practice); inter-annual variability set to zero to see it alone."""
    from lcoe.analysis import montecarlo

    raw = sc.parse_toml(DEMO_LAYOUT)
    raw["uncertainty"]["interannual_speed_sd"] = 0.0
    scn = sc.from_dict(raw, source=str(DEMO_LAYOUT), base_dir=DEMO_LAYOUT.parent)
    terms = en.speed_terms(scn)
    assert [n for n, _ in terms] == ["measurement", "long-term correction (MCP)"]
    _, sample = montecarlo.draw_block(scn, 20000, np.random.default_rng(3), scn.lifetime)
    expected = math.sqrt(sum(sd ** 2 for _, sd in terms))
    assert np.std(sample.speed_factor[:, 0]) == pytest.approx(expected, rel=0.03)   # sampling error about 0.5 %
    assert np.all(sample.speed_factor == sample.speed_factor[:, :1])                 # one factor for the life
