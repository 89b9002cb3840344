"""Power curves: physics of the wind, the Betz limit, density normalisation, table validation."""

from __future__ import annotations

import math

import numpy as np
import pytest
from conftest import make_scenario
from numpy.testing import assert_allclose

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import turbine as tb


def _physics(rated=3000.0, diameter=110.0, cp=0.45, eta=0.95, cut_in=3.0, cut_out=25.0):
    return tb.physics_curve(rated, diameter, cp, cut_in, cut_out, eta)


def test_betz_limit_value():
    """Betz limit 16/27 = 0.592593 (Betz 1920; any wind-energy textbook), tolerance 1e-6."""
    assert tb.BETZ_LIMIT == pytest.approx(0.592593, abs=1e-6)
    # the maximum of Cp(a) = 4 a (1 - a)^2 lies at axial induction a = 1/3 (same source)
    a = np.linspace(0.0, 0.5, 500_001)
    cp = 4 * a * (1 - a) ** 2
    assert a[cp.argmax()] == pytest.approx(1 / 3, abs=1e-5)
    assert cp.max() == pytest.approx(tb.BETZ_LIMIT, abs=1e-9)


def test_doubling_speed_gives_eight_times_the_power_below_rated():
    """Power in the wind goes as v^3: doubling speed gives 8x (physics, P = 0.5 rho A v^3), 1e-9."""
    site = _physics().at_density(1.225)
    assert site.rated_speed_mps > 8.0          # both speeds below rated
    p4, p8 = site.power_kw([4.0, 8.0])
    assert p8 / p4 == pytest.approx(8.0, rel=1e-9)
    assert p4 == pytest.approx(0.5 * 1.225 * math.pi * 55.0 ** 2 * 0.45 * 0.95 * 4.0 ** 3 / 1000.0, rel=1e-12)
    assert tb.wind_power_kw(10.0, 1.2, 100.0) / tb.wind_power_kw(5.0, 1.2, 100.0) == pytest.approx(8.0, rel=1e-12)


def test_doubling_swept_area_doubles_the_power():
    """Swept area pi r^2: twice the area, twice the power (physics), 1e-9."""
    small = _physics(rated=1e9, diameter=100.0).at_density(1.2)
    large = _physics(rated=1e9, diameter=100.0 * math.sqrt(2.0)).at_density(1.2)
    v = np.array([4.0, 6.0, 9.0, 12.0])
    assert_allclose(large.power_kw(v) / small.power_kw(v), 2.0, rtol=1e-9)
    assert float(tb.swept_area_m2(100.0 * math.sqrt(2))) == pytest.approx(2 * float(tb.swept_area_m2(100.0)), rel=1e-12)


def test_physics_curve_is_capped_at_rated_and_zero_outside_cut_in_cut_out():
    """min(rated, 0.5 rho A Cp eta v^3) between cut-in and cut-out (the turbine's operating window)."""
    site = _physics().at_density(1.225)
    vr = (3000.0 / site.coeff_kw_per_v3) ** (1 / 3)
    assert site.rated_speed_mps == pytest.approx(vr, rel=1e-12)
    p = site.power_kw([2.99, 3.0, vr, 15.0, 24.99, 25.0, 30.0])
    assert_allclose(p, [0.0, site.coeff_kw_per_v3 * 27.0, 3000.0, 3000.0, 3000.0, 0.0, 0.0], rtol=1e-12)
    assert vr in site.breaks_mps


def test_cp_above_betz_is_refused():
    """A Cp above 16/27 would extract more than the Betz limit allows (Betz 1920)."""
    with pytest.raises(ScenarioError, match=r"turbine\.cp_max = 0\.6: must not exceed the Betz limit 16/27 = 0\.5926"):
        tb.physics_curve(3000.0, 110.0, 0.6)
    with pytest.raises(ScenarioError, match=r"test\.toml: turbine\.cp_max = 0\.6: must not exceed the Betz limit"):
        make_scenario(turbine__cp_max=0.6)
    tb.physics_curve(3000.0, 110.0, 16.0 / 27.0)  # the limit itself is allowed


def test_cut_out_below_cut_in_is_refused():
    with pytest.raises(ScenarioError, match=r"turbine\.cut_out_mps = 2\.0: must be above turbine\.cut_in_mps = 3\.0"):
        tb.physics_curve(3000.0, 110.0, 0.45, cut_in_mps=3.0, cut_out_mps=2.0)


# --------------------------------------------------------------------------- density normalisation

def _table():
    v = np.arange(0.0, 26.0, 1.0)
    p = np.clip(2.0 * (v - 3.0) ** 3, 0.0, 2000.0)
    p[v < 3] = 0.0
    return tb.table_curve(v, p, 2000.0, 90.0, reference_density_kgm3=1.225)


def test_normalised_speed_is_the_iec_formula():
    """Pitch-regulated: v_n = v (rho / rho_0)^(1/3). Source: IEC 61400-12-1, tolerance 1e-9."""
    v = np.array([3.0, 7.5, 12.0])
    assert_allclose(tb.normalised_speed(v, 1.10, 1.225), v * (1.10 / 1.225) ** (1 / 3), rtol=1e-12)


def test_pitch_curve_at_site_density_follows_the_iec_normalisation():
    """P_site(v) = P_curve(v (rho_site / rho_curve)^(1/3)), capped at rated (IEC 61400-12-1), 1e-9."""
    curve = _table()
    rho = 1.12
    site = curve.at_density(rho)
    v = np.linspace(0.0, 24.0, 241)
    expected = np.minimum(np.interp(v * (rho / 1.225) ** (1 / 3), curve.speed_mps, curve.power_kw, left=0, right=0),
                          2000.0)
    assert_allclose(site.power_kw(v), expected, rtol=1e-9, atol=1e-9)
    assert_allclose(curve.power_kw_at(v, rho), expected, rtol=1e-9, atol=1e-9)
    # thinner air: less power below rated at the same speed
    assert site.power_kw(8.0) < curve.at_density(1.225).power_kw(8.0)


def test_stall_curve_at_site_density_scales_the_power():
    """Stall-regulated: P_n = P rho_0 / rho, i.e. P_site = P_curve rho / rho_0, capped.

    Source: IEC 61400-12-1 (from memory), tolerance 1e-9.
    """
    base = _table()
    curve = tb.table_curve(base.speed_mps, base.power_kw, 2000.0, 90.0, reference_density_kgm3=1.225,
                           regulation="stall")
    rho = 1.10
    v = np.linspace(0.0, 24.0, 97)
    p_curve = np.interp(v, curve.speed_mps, curve.power_kw, left=0, right=0)
    assert_allclose(curve.at_density(rho).power_kw(v), np.minimum(p_curve * rho / 1.225, 2000.0), atol=1e-9)


def test_table_is_zero_outside_its_range():
    site = _table().at_density(1.225)
    assert site.power_kw(-1.0) == 0.0 and site.power_kw(25.5) == 0.0


# --------------------------------------------------------------------------- table validation

@pytest.mark.parametrize("speeds, powers, message", [
    ([0, 1, 1, 2], [0, 10, 20, 2000], r"row 4: duplicate speed 1 m/s in power curve"),
    ([0, 2, 1, 3], [0, 10, 20, 2000], r"row 4: speeds must increase \(sorted ascending\) in power curve"),
    ([0, 1, 2, 3], [0, -5, 20, 2000], r"row 3: power must be >= 0 in power curve"),
    ([0, 1, 2, 3], [0, 0.5, 1.0, 2.0], r"peak power 2 looks like MW; the column power_kw must be in kW"),
    ([0, 1, 2, 3], [0, 10, 20, 1500], r"peak power 1500 kW differs from turbine\.rated_power_kw = 2000 by more than 2%"),
    ([0], [0], r"needs at least two rows in power curve"),
])
def test_bad_tables_are_refused(speeds, powers, message):
    with pytest.raises(ScenarioError, match=r"turbine\.power_curve = 'power curve': " + message):
        tb.table_curve(speeds, powers, 2000.0, 90.0)


def test_curve_csv_errors(tmp_path):
    bad = tmp_path / "c.csv"
    bad.write_text("speed_mps,power_kw\n0,0\n5,abc\n", encoding="utf-8")
    with pytest.raises(ScenarioError, match=r"turbine\.power_curve = 'c\.csv': row 3 is not numeric \('5,abc'\)"):
        tb.read_curve_csv(bad, 2000.0, 90.0)
    bad.write_text("v,p\n0,0\n", encoding="utf-8")
    with pytest.raises(ScenarioError, match=r"header must be 'speed_mps,power_kw', found 'v,p'"):
        tb.read_curve_csv(bad, 2000.0, 90.0)
    with pytest.raises(ScenarioError, match=r"turbine\.power_curve = 'missing\.csv': file not found"):
        tb.read_curve_csv(tmp_path / "missing.csv", 2000.0, 90.0)
