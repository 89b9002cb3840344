"""lcoe.analysis.wind_data: the summaries of a wind series that the app's Wind data tab shows.

References: a series built by hand in the test (speeds set by the hour of the day, one hole of
known length), so the monthly means, the mean day, the coverage and the gap are known in
advance; the fitted distribution is checked against scipy.stats.weibull_min with the engine's
fitted scale and shape; a histogram of shares integrates to 1 by construction.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from conftest import DEMO, make_raw
from scipy import stats

from lcoe.analysis import wind_data
from lcoe.inputs import scenario as sc
from lcoe.physics import energy as en

HOLE_START, HOLE_HOURS = 1000, 10


@pytest.fixture(scope="module")
def series_scenario(tmp_path_factory):
    """One year of hourly wind, 5 m/s + 0.25 m/s per hour of the day, with 10 hours missing;
    measured at hub height (no shear): the speeds shown are the speeds typed."""
    folder = tmp_path_factory.mktemp("series")
    ts = pd.date_range("2023-01-01", periods=8760, freq="h", tz="UTC")
    speed = 5.0 + 0.25 * ts.hour.to_numpy()
    keep = np.ones(ts.size, bool)
    keep[HOLE_START:HOLE_START + HOLE_HOURS] = False
    df = pd.DataFrame({"timestamp": ts[keep].strftime("%Y-%m-%dT%H:%M:%SZ"), "speed_mps": speed[keep]})
    df.to_csv(folder / "wind.csv", index=False)
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None, "wind.timeseries": "wind.csv"})
    return sc.from_dict(raw, source="series.toml", base_dir=folder)


def test_the_mean_day_monthly_means_coverage_and_gap_are_those_of_the_record(series_scenario):
    v = wind_data.series_view(series_scenario)
    assert v["at_hub"] and v["height_m"] == 100.0 and v["step_h"] == 1.0
    assert list(v["diurnal"]["hour"]) == list(range(24))
    assert v["diurnal"]["mean"].to_numpy() == pytest.approx(5.0 + 0.25 * np.arange(24), abs=1e-12)
    jan = v["monthly"].iloc[0]
    assert jan["mean"] == pytest.approx(5.0 + 0.25 * 11.5) and jan["coverage"] == 1.0
    feb = v["monthly"].iloc[1]                 # the hole (hours 1000..1009) lies in February
    assert feb["coverage"] == pytest.approx((28 * 24 - HOLE_HOURS) / (28 * 24))
    assert v["coverage"] == {"present": 8760 - HOLE_HOURS, "expected": 8760,
                             "share": (8760 - HOLE_HOURS) / 8760}
    (gap,) = v["gaps"].itertuples()
    assert gap.hours == HOLE_HOURS
    assert gap.start == pd.Timestamp("2023-01-01") + pd.Timedelta(hours=HOLE_START - 1)
    assert gap.end == pd.Timestamp("2023-01-01") + pd.Timedelta(hours=HOLE_START + HOLE_HOURS)
    assert len(v["daily"]) == 365 and v["daily"]["min"].min() == 5.0 and v["daily"]["max"].max() == 10.75


def test_the_histogram_integrates_to_one_and_the_line_is_the_fitted_weibull(series_scenario):
    v = wind_data.series_view(series_scenario)
    h = v["histogram"]
    assert float((h["density"] * (h["hi"] - h["lo"])).sum()) == pytest.approx(1.0, abs=1e-12)
    climate = en.site_for(series_scenario).climate
    assert (v["scale_mps"], v["shape"]) == (climate.scale_mps, climate.shape)
    w = v["weibull"]
    ref = stats.weibull_min(c=v["shape"], scale=v["scale_mps"]).pdf(w["speed"].to_numpy())
    assert w["pdf"].to_numpy() == pytest.approx(ref, rel=1e-9, abs=1e-15)


def test_a_scenario_without_a_series_has_no_view():
    assert wind_data.series_view(sc.load(DEMO)) is None


def test_the_speed_sweep_of_a_series_is_the_engine_on_the_series_scaled_in_the_file(series_scenario, tmp_path):
    """Every speed of the record times 1.1, written to a new file and run by the engine, gives the
    sweep's figures at the factor 1.1 (within the site table's stated tolerance); at 1.0 the sweep is
    the scenario's own run."""
    from lcoe import engine as model
    from lcoe.physics.site import TABLE_RTOL
    rows = {r["factor"]: r for r in wind_data.speed_sweep(series_scenario, (0.9, 1.0, 1.1))}
    base = model.run(series_scenario, breakeven=False)
    assert rows[1.0]["lcoe"] == pytest.approx(base.metrics["lcoe_nominal_per_mwh"], rel=1e-12)
    assert rows[1.0]["net_aep_p50_mwh"] == pytest.approx(base.energy.net_aep_p50_mwh, rel=1e-12)
    df = pd.read_csv(series_scenario.resolve("wind.csv"))
    df["speed_mps"] = df["speed_mps"] * 1.1
    df.to_csv(tmp_path / "wind.csv", index=False)
    scaled = sc.from_dict(series_scenario.raw, source="scaled.toml", base_dir=tmp_path)
    case = model.run(scaled, breakeven=False)
    assert rows[1.1]["gross_aep_mwh"] == pytest.approx(case.energy.gross_aep_mwh, rel=2 * TABLE_RTOL)
    assert rows[1.1]["lcoe"] == pytest.approx(case.metrics["lcoe_nominal_per_mwh"], rel=2 * TABLE_RTOL)
    assert rows[1.1]["hub_mean_speed_mps"] == pytest.approx(case.energy.hub_mean_speed_mps, rel=1e-12)
    assert rows[1.0]["elasticity"] == pytest.approx(
        np.log(rows[1.1]["net_aep_p50_mwh"] / rows[0.9]["net_aep_p50_mwh"]) / np.log(1.1 / 0.9), rel=1e-12)
