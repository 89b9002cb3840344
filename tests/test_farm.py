"""A scenario with a layout: the computed wake loss in the net energy chain, the report blocks, the rules."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from conftest import DEMO_LAYOUT, make_raw, make_scenario

from lcoe import cli
from lcoe import engine as model
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import LOSS_CATEGORIES
from lcoe.physics import energy as en


@pytest.fixture(scope="module")
def demo():
    scn = sc.load(DEMO_LAYOUT)
    return scn, en.energy_of(scn)


def test_the_net_energy_chain_uses_the_computed_wake_loss(demo):
    """P50 = gross x prod(1 - loss) x availability_mature x (1 - D) (SCENARIO conventions) with the wake
    loss of the layout in place of losses.wake."""
    scn, e = demo
    assert e.wake_from_layout and e.wake_loss == pytest.approx(e.wake["farm_loss"], rel=1e-15)
    lf = math.prod(1 - (e.wake_loss if k == "wake" else getattr(scn.losses, k)) for k in LOSS_CATEGORIES)
    p50 = e.gross_aep_mwh * lf * scn.operations.availability_mature * (1 - e.downtime_fraction)
    assert e.net_aep_p50_mwh == pytest.approx(p50, rel=1e-12)
    case = model.run(scn, breakeven=False)
    assert case.flows.energy_mwh[0, 2] == pytest.approx(e.energy_mwh[1], rel=1e-12)
    assert float(case.flows.net_aep_p50_mwh[0, 0]) == pytest.approx(p50, rel=1e-12)


def test_the_wake_block_adds_up(demo):
    """Per-turbine waked energy sums to gross x (1 - farm loss); the farm loss lies within the turbines' range."""
    _, e = demo
    w = e.wake
    assert w["turbines"] == 14 and len(w["per_turbine"]) == 14
    waked = sum(t["waked_aep_mwh"] for t in w["per_turbine"])
    assert waked == pytest.approx(e.gross_aep_mwh * (1 - w["farm_loss"]), rel=1e-12)
    assert w["turbine_loss_min"] <= w["farm_loss"] <= w["turbine_loss_max"]
    assert 0.0 < w["turbine_loss_min"] and w["turbine_loss_max"] < 0.15     # common practice: wake loss 5-15 % or less
    assert w["thrust"] == "ct column of the power curve" and w["wake_decay_constant"] == 0.075
    rose = e.wind_rose
    assert rose["sectors"] == 12 and sum(r["frequency"] for r in rose["rows"]) == pytest.approx(1.0)
    # the farm's loss is the sector losses weighted by each sector's energy (the wake model weighs by its
    # 1 m/s bins, the gross AEP is the exact integral: they agree to well within 0.1 % of the loss)
    weighted = sum(r["gross_aep_mwh"] * r["wake_loss"] for r in rose["rows"]) / e.gross_aep_mwh
    assert weighted == pytest.approx(w["farm_loss"], rel=1e-3)


def test_run_and_check_show_the_blocks(capsys):
    assert cli.main(["run", str(DEMO_LAYOUT), "--json", "--trials", "0"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert {"wind_rose", "wake", "long_term"} <= set(rep)
    assert rep["energy"]["wake_loss"] == rep["wake"]["farm_loss"]
    assert cli.main(["run", str(DEMO_LAYOUT), "--trials", "0", "--brief"]) == 0
    out = capsys.readouterr().out
    for text in ("Wind rose (12 sectors of 30 deg at hub height", "Wake losses (Jensen/Park top hat",
                 "Long-term correction (measure-correlate-predict, variance ratio)", "Wake loss, from the layout [%]",
                 "  Farm ", "Correlation r"):
        assert text in out
    assert max(len(line) for line in out.splitlines()) <= 100
    assert cli.main(["check", str(DEMO_LAYOUT)]) == 0
    out = capsys.readouterr().out
    assert "layout: 14 turbine(s) (tallowmere_ridge_layout.csv), nearest pair" in out
    assert "long-term reference: tallowmere_reference_20yr.csv covers the site period;" in out


def _grid_raw(**updates):
    raw = make_raw(**{"wind.mean_speed_mps": None, "wind.weibull_shape": None, "losses.wake": None, **updates})
    raw["wind"]["rose"] = {"frequency": [1 / 12] * 12, "weibull_scale_mps": [7.9] * 12, "weibull_shape": [2.0] * 12}
    raw["layout"] = {"rows": 2, "columns": 5, "row_spacing_diameters": 7.0, "column_spacing_diameters": 4.0}
    return raw


def test_a_grid_layout_runs_and_the_decay_constant_follows_the_location():
    """Default k 0.075 onshore and 0.04 offshore (common practice); a smaller k keeps the wakes stronger."""
    on = make_scenario(_grid_raw())
    raw = _grid_raw()
    raw["layout"]["location"] = "offshore"
    off = make_scenario(raw)
    assert sc.numeric_value(on, "layout.wake_decay_constant") == 0.075
    assert sc.numeric_value(off, "layout.wake_decay_constant") == 0.04
    assert en.energy_of(off).wake_loss > en.energy_of(on).wake_loss > 0


def test_a_batch_over_the_decay_constant_equals_one_scenario_per_value():
    """The batch override path (each distinct row's wakes computed) against separate validated runs."""
    scn = make_scenario(_grid_raw())
    ks = np.array([0.05, 0.075, 0.1])
    flows, m, _ = model.evaluate(scn, overrides={"layout.wake_decay_constant": ks})
    for i, k in enumerate(ks):
        one = scn.with_overrides({"layout.wake_decay_constant": float(k)})
        f1, m1, _ = model.evaluate(one)
        assert flows.energy_mwh[i, 1] == pytest.approx(f1.energy_mwh[0, 1], rel=1e-12)
        assert m["lcoe_nominal_per_mwh"][i] == pytest.approx(m1["lcoe_nominal_per_mwh"][0], rel=1e-12)


def test_a_changed_layout_file_is_read_again(tmp_path):
    """The site cache is keyed on the layout file too: moving a turbine changes the wake loss."""
    raw = _grid_raw()
    raw["layout"] = {"positions": "layout.csv"}
    raw["project"]["turbines"] = 3
    path = tmp_path / "layout.csv"
    path.write_text("x_m,y_m\n0,0\n0,500\n0,1000\n", encoding="utf-8")
    first = en.energy_of(sc.from_dict(raw, source="t.toml", base_dir=tmp_path)).wake_loss
    path.write_text("x_m,y_m\n0,0\n0,900\n0,1800\n", encoding="utf-8")
    second = en.energy_of(sc.from_dict(raw, source="t.toml", base_dir=tmp_path)).wake_loss
    assert 0 < second < first


def _error(raw, base_dir=None):
    with pytest.raises(ScenarioError) as e:
        s = sc.from_dict(raw, source="test.toml", base_dir=base_dir or ".")
        en.energy_of(s)
    return str(e.value)


def test_one_turbine_has_no_wake_and_says_so(tmp_path, capsys):
    raw = _grid_raw()
    raw["layout"] = {"positions": "one.csv"}
    raw["project"]["turbines"] = 1
    (tmp_path / "one.csv").write_text("x_m,y_m\n0,0\n", encoding="utf-8")
    (tmp_path / "one.toml").write_text(sc.to_toml(raw), encoding="utf-8")
    assert cli.main(["check", str(tmp_path / "one.toml")]) == 0
    assert "layout: 1 turbine(s) (one.csv), one turbine, no wakes; wake loss 0.00 %" in capsys.readouterr().out
    assert cli.main(["run", str(tmp_path / "one.toml"), "--json", "--trials", "0"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["wake"]["farm_loss"] == 0.0 and rep["wake"]["nearest_spacing_m"] is None


def test_the_rules_of_a_layout(tmp_path):
    raw = _grid_raw()
    raw["losses"]["wake"] = 0.05
    assert _error(raw) == ("test.toml: losses.wake = 0.05: cannot be given together with [layout]: the wake loss is "
                           "computed from the layout")
    raw = _grid_raw()
    raw["project"]["turbines"] = 12
    assert _error(raw) == "test.toml: project.turbines = 12: must equal the grid's layout.rows x layout.columns = 10"
    raw = make_raw(**{"losses.wake": None})
    raw["layout"] = {"rows": 2, "columns": 5, "row_spacing_diameters": 7.0, "column_spacing_diameters": 4.0}
    assert _error(raw) == ("test.toml: layout: a layout needs wind directions: give [wind.rose], or a wind.timeseries "
                           "with a direction_deg column")
    raw = _grid_raw()
    raw["layout"]["positions"] = "x.csv"
    assert _error(raw) == ("test.toml: layout.rows = 2: cannot be given together with layout.positions; give a "
                           "positions file or a grid")
    raw = _grid_raw()
    del raw["layout"]["column_spacing_diameters"]
    assert _error(raw) == "test.toml: layout.column_spacing_diameters: is required for a grid layout"
    raw = _grid_raw()
    raw["layout"]["row_spacing_diameters"] = 0.5
    assert _error(raw) == "test.toml: layout.row_spacing_diameters = 0.5: must be >= 1.0"
    raw = _grid_raw()
    raw["montecarlo"] = {"vary": {"layout.wake_decay_constant": {"distribution": "normal", "sd": 0.01}}}
    assert _error(raw) == ("test.toml: montecarlo.vary.layout.wake_decay_constant: cannot vary between trials with a "
                           "[layout]: each value needs its own wake computation; use a sweep or variants")
    raw = _grid_raw()
    raw["layout"] = {"positions": "layout.csv"}
    (tmp_path / "layout.csv").write_text("x_m,y_m\n0,0\n0,500\n", encoding="utf-8")
    assert _error(raw, tmp_path) == f"{tmp_path / 'layout.csv'}: layout.positions = 'layout.csv': has 2 turbine(s) " \
                                    "but project.turbines = 10"


def test_the_rules_of_a_rose():
    raw = _grid_raw()
    raw["wind"]["rose"]["frequency"] = [0.1] * 12
    assert _error(raw) == ("test.toml: wind.rose.frequency = [...]: must sum to 1 (each sector's share of the time); "
                           "these sum to 1.2")
    raw = _grid_raw()
    raw["wind"]["rose"]["weibull_shape"] = [2.0] * 11
    assert _error(raw) == ("test.toml: wind.rose.weibull_shape = [...]: has 11 value(s) but wind.rose.frequency has "
                           "12; give one value per sector")
    raw = _grid_raw()
    raw["wind"]["weibull_shape"] = 2.0
    assert _error(raw) == ("test.toml: wind.weibull_shape = 2.0: cannot be given together with wind.rose: each sector "
                           "has its own weibull_shape")
    raw = _grid_raw()
    raw["wind"]["mean_speed_mps"] = 7.0
    assert _error(raw) == ("test.toml: wind.rose: cannot be given together with wind.mean_speed_mps; give exactly one "
                           "of mean_speed_mps, weibull_scale_mps, timeseries or rose")
    raw = _grid_raw()
    raw["wind"]["rose"]["weibull_scale_mps"][3] = -1.0
    assert _error(raw) == "test.toml: wind.rose.weibull_scale_mps[3] = -1.0: must be > 0.0"


def test_a_layout_over_a_series_without_directions_is_refused(tmp_path):
    stamps = np.datetime64("2024-01-01T00:00") + np.arange(24 * 366).astype("timedelta64[h]")
    lines = ["timestamp,speed_mps"] + [f"{s}Z,{7 + 4 * math.sin(0.3 * i):.2f}" for i, s in enumerate(stamps)]
    (tmp_path / "w.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    raw = _grid_raw()
    del raw["wind"]["rose"]
    raw["wind"]["timeseries"] = "w.csv"
    assert _error(raw, tmp_path) == (f"{tmp_path / 'w.csv'}: wind.timeseries = 'w.csv': has no direction_deg column; "
                                     "a layout needs wind directions")
