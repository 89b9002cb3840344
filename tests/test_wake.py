"""Wake losses of a layout: the Jensen/Park top hat, partial overlap, combination, layouts and their checks."""

from __future__ import annotations

import math
import os

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import layout as lay
from lcoe.physics import rose as rs
from lcoe.physics import turbine as tb
from lcoe.physics import wake as wk

D = 100.0
K = 0.075
EDGES = np.arange(0.0, 27.0)


def _power(v):
    """An invented 3 MW turbine: 0.5 rho A Cp v^3 (rho 1.2, Cp 0.45) between cut-in 3 and cut-out 25 m/s."""
    v = np.asarray(v, float)
    return np.where((v >= 3) & (v < 25), np.minimum(0.5 * 1.2 * math.pi * (D / 2) ** 2 * 0.45 * v ** 3 / 1000, 3000.0),
                    0.0)


def _ct_const(v):
    v = np.asarray(v, float)
    return np.where((v >= 3) & (v < 25), 0.8, 0.0)


def _one_bin(sector: int, speed_bin: int, sectors: int = 12) -> np.ndarray:
    p = np.zeros((sectors, EDGES.size - 1))
    p[sector, speed_bin] = 1.0
    return p


# --------------------------------------------------------------------------- geometry

def test_two_equal_circles_one_radius_apart():
    """Two unit circles whose centres are 1 apart share 2 pi / 3 - sqrt(3) / 2 = 1.2283697.

    Source: circle-circle intersection (lens) area, worked by hand.
    """
    assert float(wk.circle_overlap_area(1.0, 1.0, 1.0)) == pytest.approx(2 * math.pi / 3 - math.sqrt(3) / 2, rel=1e-12)


@pytest.mark.parametrize("d, r1, r2", [(0.5, 1.0, 1.0), (1.5, 2.0, 1.0), (2.2, 1.5, 1.0), (0.3, 3.0, 0.5),
                                       (87.5, 87.5, 50.0), (130.0, 87.5, 50.0)])
def test_overlap_area_matches_two_circular_segments_and_a_numerical_integral(d, r1, r2):
    """The lens area as the sum of two circular segments (the chord at distance a = (d^2 + r1^2 - r2^2) / 2d
    from the first centre; a segment of height h has area r^2 acos((r - h) / r) - (r - h) sqrt(2 r h - h^2)),
    and as the integral of the shared chord length across the line of centres (midpoint rule).

    Source: plane geometry of two intersecting circles (independent forms of the same area).
    """
    got = float(wk.circle_overlap_area(d, r1, r2))
    if d <= abs(r1 - r2):
        assert got == pytest.approx(math.pi * min(r1, r2) ** 2, rel=1e-12)
        return
    a = (d ** 2 + r1 ** 2 - r2 ** 2) / (2 * d)

    def segment(r, dist):      # the part of a circle beyond a chord at distance dist (signed) from its centre
        h = r - dist
        return r * r * math.acos((r - h) / r) - (r - h) * math.sqrt(max(2 * r * h - h * h, 0.0))

    assert got == pytest.approx(segment(r1, a) + segment(r2, d - a), rel=1e-10)
    x = np.linspace(-r1, r1, 400_001)
    mid = 0.5 * (x[1:] + x[:-1])
    h1 = np.sqrt(np.maximum(r1 ** 2 - mid ** 2, 0.0))
    h2 = np.sqrt(np.maximum(r2 ** 2 - (mid - d) ** 2, 0.0))
    assert got == pytest.approx(float(np.sum(2 * np.minimum(h1, h2)) * (x[1] - x[0])), rel=1e-6)


def test_apart_and_inside():
    """Circles that do not touch share nothing; a circle inside another shares all of itself (plane geometry)."""
    assert float(wk.circle_overlap_area(3.1, 2.0, 1.0)) == 0.0
    assert float(wk.circle_overlap_area(0.0, 2.0, 1.0)) == pytest.approx(math.pi)


# --------------------------------------------------------------------------- the Jensen/Park deficit

def test_full_wake_deficit_by_hand():
    """Ct 0.8, D 100 m, k 0.075, x = 500 m: (1 - sqrt(0.2)) (100 / 175)^2 = 0.5527864 x 0.3265306 = 0.1805017.

    Source: Jensen (1983); Katic, Hojstrup and Jensen (1986); the arithmetic by hand.
    """
    assert float(wk.jensen_deficit(0.8, 500.0, D, K)) == pytest.approx(0.1805017, abs=1e-7)
    # one turbine 500 m straight downwind of another, the wind from the north at 7.5 m/s (the bin's centre)
    res = wk.farm_wake([0.0, 0.0], [500.0, 0.0], D, K, _one_bin(0, 7), EDGES, _power, _ct_const,
                       direction_step_deg=30.0)
    u = 7.5 * (1 - 0.1805017)
    assert res.waked_kw[0] == pytest.approx(float(_power(7.5)), rel=1e-12)      # the upstream turbine is free
    assert res.waked_kw[1] == pytest.approx(float(_power(u)), rel=1e-6)
    assert res.turbine_loss[1] == pytest.approx(1 - (u / 7.5) ** 3, rel=1e-6)


def test_outside_the_wake_cone_no_deficit_and_partial_overlap_by_area():
    """500 m downstream the wake radius is 50 + 0.075 x 500 = 87.5 m: a rotor (radius 50 m) whose centre is
    140 m to the side (> 137.5 m) is untouched; at 110 m it takes the full deficit times the share of its
    disc inside the wake circle.

    Source: Katic, Hojstrup and Jensen (1986), deficit weighted by the overlap area; by hand.
    """
    for side, share in ((140.0, 0.0), (110.0, float(wk.circle_overlap_area(110.0, 87.5, 50.0)) / (math.pi * 2500))):
        res = wk.farm_wake([0.0, side], [500.0, 0.0], D, K, _one_bin(0, 7), EDGES, _power, _ct_const,
                           direction_step_deg=30.0)
        u = 7.5 * (1 - 0.1805017 * share)
        assert res.waked_kw[1] == pytest.approx(float(_power(u)), rel=1e-6)
    assert 0.0 < share < 1.0


def test_two_upstream_wakes_combine_by_root_sum_square():
    """Two turbines, 500 m and 1000 m upwind in one line: the last sees sqrt(d1^2 + d2^2), d1 the deficit of
    the nearer at its own waked inflow (same Ct 0.8 below rated), d2 that of the farther at 1000 m:
    d2 = 0.5527864 (100 / 250)^2 = 0.0884458.

    Source: Katic, Hojstrup and Jensen (1986), root-sum-square combination; by hand.
    """
    res = wk.farm_wake([0.0, 0.0, 0.0], [1000.0, 500.0, 0.0], D, K, _one_bin(0, 7), EDGES, _power, _ct_const,
                       direction_step_deg=30.0)
    d = math.hypot(0.1805017, 0.5527864 * (100 / 250) ** 2)
    assert res.waked_kw[2] == pytest.approx(float(_power(7.5 * (1 - d))), rel=1e-6)


def test_a_single_turbine_has_no_wake_loss():
    r = rs.rose_from_table([1 / 12] * 12, [8.0] * 12, [2.0] * 12)
    res = wk.farm_wake([0.0], [0.0], D, K, r.bin_probabilities(EDGES), EDGES, _power, _ct_const)
    assert res.farm_loss == 0.0 and res.turbine_loss[0] == 0.0


def _rotate(x, y, deg):
    """Turn positions clockwise (as compass bearings turn) by ``deg`` about the origin."""
    p = math.radians(deg)
    return x * math.cos(p) + y * math.sin(p), y * math.cos(p) - x * math.sin(p)


def _spaced(pos) -> bool:
    """At least one rotor diameter between any two turbines (what `lcoe check` requires of a layout)."""
    p = np.array(pos)
    d = np.hypot(p[:, None, 0] - p[None, :, 0], p[:, None, 1] - p[None, :, 1])
    return bool(np.all(d[np.triu_indices(len(p), 1)] >= D))


positions = st.lists(st.tuples(st.floats(-900, 900), st.floats(-900, 900)), min_size=2, max_size=6).filter(_spaced)


@settings(max_examples=25, deadline=None)
@given(positions, st.integers(1, 11), st.integers(0, 10_000))
def test_turning_the_layout_by_whole_sectors_with_the_rose_leaves_the_loss(pos, m, seed):
    """Turning a layout by m sector widths and the rose by m sectors is the same farm seen from another
    side: the same loss. With a rose equal in every sector, turning the layout alone changes nothing.

    Source: rotational symmetry of the problem (the wake model depends only on relative positions).
    """
    x, y = np.array(pos).T
    rng = np.random.default_rng(seed)
    r = rs.rose_from_table(rng.random(12) + 0.05, 6 + 4 * rng.random(12), 1.5 + rng.random(12))
    prob = r.bin_probabilities(EDGES)
    base = wk.farm_wake(x, y, D, K, prob, EDGES, _power, _ct_const, direction_step_deg=5.0)
    xr, yr = _rotate(x, y, 30.0 * m)
    turned = wk.farm_wake(xr, yr, D, K, np.roll(prob, m, axis=0), EDGES, _power, _ct_const, direction_step_deg=5.0)
    assert_allclose(turned.turbine_loss, base.turbine_loss, rtol=1e-9, atol=1e-12)
    flat = rs.rose_from_table([1 / 12] * 12, [8.0] * 12, [2.0] * 12).bin_probabilities(EDGES)
    a = wk.farm_wake(x, y, D, K, flat, EDGES, _power, _ct_const, direction_step_deg=5.0).farm_loss
    b = wk.farm_wake(xr, yr, D, K, flat, EDGES, _power, _ct_const, direction_step_deg=5.0).farm_loss
    assert b == pytest.approx(a, rel=1e-9, abs=1e-12)


@settings(max_examples=25, deadline=None)
@given(positions, st.integers(0, 10_000))
def test_more_spacing_never_raises_the_loss(pos, seed):
    """Stretching a layout (every distance times s > 1) never raises the farm's wake loss.

    Source: the Jensen deficit falls with distance and the overlap does not grow (property from the model).
    """
    x, y = np.array(pos).T
    rng = np.random.default_rng(seed)
    r = rs.rose_from_table(rng.random(12) + 0.05, 6 + 4 * rng.random(12), 1.5 + rng.random(12))
    prob = r.bin_probabilities(EDGES)
    ct = lambda v: tb.momentum_thrust_coefficient(np.where((np.asarray(v) >= 3) & (np.asarray(v) < 25), 0.45, 0.0))  # noqa: E731
    losses = [wk.farm_wake(x * s, y * s, D, K, prob, EDGES, _power, ct, direction_step_deg=5.0).farm_loss
              for s in (1.0, 1.2, 1.6, 2.5, 4.0)]
    assert all(b <= a + 1e-12 for a, b in zip(losses, losses[1:])), losses


def test_a_larger_decay_constant_spreads_and_weakens_the_wake_behind_a_row():
    """A turbine in full wake 500 m downstream: a larger k means a weaker deficit there (Jensen 1983)."""
    losses = [wk.farm_wake([0.0, 0.0], [500.0, 0.0], D, k, _one_bin(0, 7), EDGES, _power, _ct_const,
                           direction_step_deg=30.0).farm_loss for k in (0.04, 0.075, 0.1)]
    assert losses[0] > losses[1] > losses[2] > 0


# --------------------------------------------------------------------------- thrust from the power coefficient

def test_momentum_thrust_coefficient_of_an_actuator_disc():
    """a = 0.2: Cp = 4 a (1 - a)^2 = 0.512, Ct = 4 a (1 - a) = 0.64; the Betz optimum Cp = 16/27 has Ct = 8/9.

    Source: one-dimensional momentum theory (Betz 1920; Manwell, McGowan and Rogers, Wind Energy Explained, ch. 3).
    """
    assert_allclose(tb.momentum_thrust_coefficient([0.512, 16 / 27, 0.0]), [0.64, 8 / 9, 0.0], atol=1e-7)


def test_a_curve_without_ct_gets_the_momentum_default(tmp_path):
    """The site curve's power coefficient P / (0.5 rho A v^3) through momentum theory (Betz 1920)."""
    curve = tb.physics_curve(3000.0, 100.0, 0.45, 3.0, 25.0, 1.0)
    a = np.roots([4, -8, 4, -0.45])
    a = float(min(x.real for x in a if abs(x.imag) < 1e-12 and 0 <= x.real <= 1 / 3))
    assert float(curve.thrust_coefficient_at(6.0, 1.2)) == pytest.approx(4 * a * (1 - a), rel=1e-9)
    assert "momentum theory" in curve.thrust_source
    path = tmp_path / "curve.csv"
    path.write_text("speed_mps,power_kw,ct\n0,0,0\n3,50,0.8\n12,3000,0.6\n25,3000,0.1\n", encoding="utf-8")
    table = tb.read_curve_csv(path, 3000.0, 100.0)
    assert float(table.thrust_coefficient_at(7.5, 1.225)) == pytest.approx(0.7)
    assert table.thrust_source == "ct column of the power curve"


def test_a_ct_outside_0_to_1_is_refused(tmp_path):
    path = tmp_path / "curve.csv"
    path.write_text("speed_mps,power_kw,ct\n0,0,0\n3,50,1.2\n12,3000,0.6\n", encoding="utf-8")
    with pytest.raises(ScenarioError) as e:
        tb.read_curve_csv(path, 3000.0, 100.0)
    assert str(e.value) == (f"{path}: turbine.power_curve = 'curve.csv': row 3: ct must be a thrust coefficient "
                            "between 0 and 1 (ct = 1.2)")


# --------------------------------------------------------------------------- layouts

def test_grid_layout_geometry():
    """Two rows of three, 4 D along each row (bearing 90: east) and 7 D between rows (the next to the north)."""
    g = lay.grid_layout(2, 3, 7.0, 4.0, 90.0, 100.0)
    assert g.names == ("R1C1", "R1C2", "R1C3", "R2C1", "R2C2", "R2C3")
    assert_allclose(g.x_m, [0, 400, 800, 0, 400, 800], atol=1e-9)
    assert_allclose(g.y_m, [0, 0, 0, 700, 700, 700], atol=1e-9)
    assert g.nearest_spacing_m() == pytest.approx(400.0)


def _csv(tmp_path, text, name="layout.csv"):
    p = tmp_path / name
    p.write_text(text, encoding="utf-8")
    return p


def test_layout_csv_with_and_without_names(tmp_path):
    a = lay.read_layout_csv(_csv(tmp_path, "x_m,y_m\n0,0\n500,0\n"), 100.0)
    assert a.names == ("T1", "T2") and a.turbines == 2
    b = lay.read_layout_csv(_csv(tmp_path, "name,x_m,y_m\nWTG-A,500000.0,6000000.0\nWTG-B,500400,6000000\n"), 100.0)
    assert b.names == ("WTG-A", "WTG-B") and b.nearest_spacing_m() == pytest.approx(400.0)


@pytest.mark.parametrize("text, message", [
    ("x,y\n0,0\n", "header must be 'x_m,y_m' (optionally with 'name'), found 'x,y'"),
    ("x_m,y_m\n", "has no turbine rows"),
    ("x_m,y_m\n0,0\n1,abc\n", "row 3 is not numeric ('1,abc')"),
    ("x_m,y_m\n0,0\n50,0\n", "turbines T1 and T2 are 50.0 m apart, closer than one rotor diameter "
                             "(turbine.rotor_diameter_m = 100)"),
    ("x_m,y_m\n0,0\n60000,0\n", "the turbines span 60.0 km x 0.0 km, more than 50 km across; coordinates must be "
                                "in metres"),
    ("x_m,y_m\n0,0\n2e7,0\n", "row 3: coordinates must lie within +-1e+07 m (x_m = 2e+07, y_m = 0)"),
    ("name,x_m,y_m\nA,0,0\nA,500,0\n", "row 3: turbine name 'A' appears twice"),
    ("x_m,y_m\n0,0\n500\n", "row 3 has 1 column(s), expected 2"),
])
def test_bad_layout_files_get_one_line(tmp_path, text, message):
    p = _csv(tmp_path, text)
    with pytest.raises(ScenarioError) as e:
        lay.read_layout_csv(p, 100.0)
    assert str(e.value) == f"{p}: layout.positions = 'layout.csv': {message}"


def test_a_layout_that_is_not_a_regular_file_is_refused(tmp_path):
    fifo = tmp_path / "pipe.csv"
    os.mkfifo(fifo)
    with pytest.raises(ScenarioError) as e:
        lay.read_layout_csv(fifo, 100.0)
    assert str(e.value) == (f"{fifo}: layout.positions = 'pipe.csv': is not a regular file (a device, pipe or "
                            "socket); give a CSV file")
    with pytest.raises(ScenarioError, match=r"layout.positions = 'missing.csv': file not found$"):
        lay.read_layout_csv(tmp_path / "missing.csv", 100.0)
