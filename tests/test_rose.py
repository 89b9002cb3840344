"""Wind directions: sectors, roses from a table or a series, and the gross AEP summed by sector."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import make_raw, make_scenario
from numpy.testing import assert_allclose
from scipy.stats import weibull_min

from lcoe.physics import energy as en
from lcoe.physics import rose as rs


def test_sector_boundaries():
    """12 sectors of 30 deg, sector 0 centred on north: it spans 345..15 deg (half-open at its upper edge)."""
    got = rs.sector_of([0.0, 14.99, 15.0, 44.99, 45.0, 344.99, 345.0, 359.9, 360.0], 12)
    assert got.tolist() == [0, 0, 1, 1, 2, 11, 0, 0, 0]
    assert_allclose(rs.sector_centres_deg(8), [0, 45, 90, 135, 180, 225, 270, 315])


@pytest.mark.parametrize("k, a", [(1.6, 6.5), (2.1, 8.4), (3.0, 10.0)])
def test_weibull_fit_equals_scipy_maximum_likelihood(k, a):
    """The profile-likelihood fit against scipy.stats.weibull_min.fit with floc = 0 (the same estimate)."""
    v = weibull_min.rvs(k, scale=a, size=3000, random_state=np.random.default_rng(5))
    k_ref, _, a_ref = weibull_min.fit(v, floc=0)
    k_got, a_got = rs.weibull_fit_mle(v)
    assert k_got == pytest.approx(k_ref, rel=1e-4)
    assert a_got == pytest.approx(a_ref, rel=1e-4)


def test_weibull_fit_of_too_few_speeds_is_undefined():
    assert all(np.isnan(rs.weibull_fit_mle([5.0, 6.0, 7.0])))
    assert all(np.isnan(rs.weibull_fit_mle(np.full(50, 7.0))))


def test_equivalent_weibull_returns_a_weibull_from_its_own_moments():
    """Mean A Gamma(1 + 1/k) and mean cube A^3 Gamma(1 + 3/k) give back k and A (scipy.stats.weibull_min moments)."""
    k, a = 2.2, 8.0
    mean, cube = weibull_min.mean(k, scale=a), weibull_min.moment(3, k, scale=a)
    k2, a2 = rs.equivalent_weibull(mean, cube)
    assert k2 == pytest.approx(k, rel=1e-9) and a2 == pytest.approx(a, rel=1e-9)


def test_bin_probabilities_of_a_table_rose():
    """Each cell is f_s (F(hi) - F(lo)) with the Weibull distribution function (scipy.stats.weibull_min.cdf)."""
    r = rs.rose_from_table([0.5, 0.2, 0.2, 0.1], [8.0, 7.0, 6.0, 9.0], [2.0, 1.8, 2.4, 2.1])
    edges = np.arange(0.0, 31.0)
    p = r.bin_probabilities(edges)
    for s in range(4):
        ref = r.frequency[s] * np.diff(weibull_min.cdf(edges, r.shape[s], scale=r.scale_mps[s]))
        assert_allclose(p[s], ref, rtol=1e-12, atol=1e-15)
    assert p.sum() == pytest.approx(1.0, abs=1e-6)


def test_rose_from_a_series_counts_and_means_by_hand():
    """Four samples from the north (two, means 6 m/s), one from the east, one from the south: shares
    2/4, 1/4, 1/4 and their own mean speeds (worked by hand)."""
    r = rs.rose_from_series([5.0, 7.0, 8.0, 9.0], [350.0, 10.0, 90.0, 180.0], 4)
    assert_allclose(r.frequency, [0.5, 0.25, 0.25, 0.0])
    assert_allclose(r.sector_mean_mps()[:3], [6.0, 8.0, 9.0])
    p = r.bin_probabilities(np.arange(0.0, 11.0))
    assert p[0, 5] == 0.25 and p[0, 7] == 0.25 and p[1, 8] == 0.25 and p[2, 9] == 0.25


def _rose_raw(frequency, scales, shapes, **updates):
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None, **updates})
    raw["wind"]["rose"] = {"frequency": frequency, "weibull_scale_mps": scales, "weibull_shape": shapes}
    return raw


def test_a_rose_of_identical_sectors_equals_the_single_weibull():
    """Twelve sectors each with A = 7.9 m/s, k = 2.0 give the gross AEP of one Weibull with those values:
    sum_s f_s AEP(A, k) = AEP(A, k) because the frequencies sum to one."""
    single = en.energy_of(make_scenario(**{"wind.mean_speed_mps": None, "wind.weibull_scale_mps": 7.9}))
    rose = en.energy_of(make_scenario(_rose_raw([1 / 12] * 12, [7.9] * 12, [2.0] * 12)))
    assert rose.gross_aep_mwh == pytest.approx(single.gross_aep_mwh, rel=1e-12)
    assert rose.net_aep_p50_mwh == pytest.approx(single.net_aep_p50_mwh, rel=1e-12)
    assert rose.weibull_shape == pytest.approx(2.0, rel=1e-9) and rose.weibull_scale_mps == pytest.approx(7.9)
    assert rose.speed_sensitivity == pytest.approx(single.speed_sensitivity, rel=1e-9)


def test_the_sector_table_sums_to_the_gross_aep():
    """Gross AEP by sector f_s AEP(A_s, k_s) sums to the all-sector gross AEP; each sector's value is the
    single-Weibull AEP of its own A and k times its frequency."""
    f = [0.05, 0.04, 0.05, 0.06, 0.07, 0.09, 0.12, 0.15, 0.14, 0.10, 0.07, 0.06]
    a = [6.5, 6.2, 6.4, 6.9, 7.4, 8.0, 8.8, 9.4, 9.1, 8.3, 7.5, 6.9]
    k = [1.9, 1.8, 1.9, 2.0, 2.1, 2.2, 2.3, 2.3, 2.2, 2.1, 2.0, 1.9]
    e = en.energy_of(make_scenario(_rose_raw(f, a, k)))
    rows = e.wind_rose["rows"]
    assert sum(r["gross_aep_mwh"] for r in rows) == pytest.approx(e.gross_aep_mwh, rel=1e-12)
    for s in (0, 7):
        one = en.energy_of(make_scenario(**{"wind.mean_speed_mps": None, "wind.weibull_scale_mps": a[s],
                                            "wind.weibull_shape": k[s]}))
        assert rows[s]["gross_aep_mwh"] == pytest.approx(f[s] * one.gross_aep_mwh, rel=1e-12)
    assert e.wind_rose["sectors"] == 12 and rows[7]["centre_deg"] == 210.0


def test_a_series_with_directions_gets_a_rose_whose_sectors_sum_to_the_series_gross(tmp_path):
    """The series' gross AEP (mean power x 8760) split by the direction of each hour sums back to it."""
    rng = np.random.default_rng(3)
    n = 24 * 366     # a full year: a series must cover every calendar month
    stamps = np.datetime64("2024-01-01T00:00") + np.arange(n).astype("timedelta64[h]")
    speed = weibull_min.rvs(2.0, scale=8.0, size=n, random_state=rng)
    direction = rng.uniform(0, 360, n)
    lines = ["timestamp,speed_mps,direction_deg"] + [f"{s}Z,{v:.2f},{d:.1f}" for s, v, d in zip(stamps, speed, direction)]
    (tmp_path / "wind.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None, "wind.timeseries": "wind.csv",
                      "wind.sectors": 8})
    from lcoe.inputs import scenario as sc
    e = en.energy_of(sc.from_dict(raw, source="t.toml", base_dir=tmp_path))
    rows = e.wind_rose["rows"]
    assert len(rows) == 8
    assert sum(r["gross_aep_mwh"] for r in rows) == pytest.approx(e.gross_aep_mwh, rel=1e-12)
    assert sum(r["frequency"] for r in rows) == pytest.approx(1.0, rel=1e-12)
