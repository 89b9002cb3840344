"""Plausibility warnings: values outside common practice are named (key and value), never refused.

The ranges are rules of thumb of the trade (common practice, from memory); the checks here are
that each one trips where it should, names its key, and leaves the run going, and that the demo
scenarios (built to be ordinary) trip none.
"""

from __future__ import annotations

import json

import pytest

from lcoe.cli import main
from lcoe.engine import run
from lcoe.inputs import scenario as sc
from lcoe.inputs.plausibility import plausibility_warnings
from tests.conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, ROOT, make_scenario


def _named(scn, key: str) -> list[str]:
    return [w for w in plausibility_warnings(scn) if w.startswith(key)]


def test_the_demo_scenarios_are_ordinary():
    """The demo sites use values inside common practice: not one remark."""
    for path in (DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, *sorted((ROOT / "assumptions").glob("portfolio_*.toml"))):
        if path.name == "portfolio_demo.toml":
            continue
        scn = sc.load(path)
        assert plausibility_warnings(scn) == [], path.name
        for name in scn.variants:
            assert plausibility_warnings(scn.variant(name)) == [], (path.name, name)


def test_the_shared_test_scenario_is_ordinary(base_scenario):
    assert plausibility_warnings(base_scenario) == []


@pytest.mark.parametrize("updates, key, shown", [
    ({"project__lifetime_years": 40}, "project.lifetime_years", "= 40 is above 35"),
    ({"operations__availability_mature": 0.75}, "operations.availability_mature", "= 0.75 is below 0.8"),
    ({"operations__availability_first_year": 0.7}, "operations.availability_first_year", "= 0.7 is below 0.8"),
    ({"finance__discount_rate": 0.35}, "finance.discount_rate", "= 0.35 is above 0.3"),
    ({"finance__equity_target_return": 0.4}, "finance.equity_target_return", "= 0.4 is above 0.3"),
    ({"finance__debt__interest_rate": 0.25}, "finance.debt.interest_rate", "= 0.25 is above 0.2"),
    ({"finance__debt__target_dscr": 1.05}, "finance.debt.target_dscr", "= 1.05 is below 1.1"),
    ({"finance__debt__max_gearing": 0.95}, "finance.debt.max_gearing", "= 0.95 is above 0.9"),
    ({"finance__inflation": 0.2}, "finance.inflation", "= 0.2 is above 0.1"),
    ({"finance__tax_rate": 0.6}, "finance.tax_rate", "= 0.6 is above 0.5"),
    ({"operations__degradation_per_year": 0.05}, "operations.degradation_per_year", "= 0.05 is above 0.02"),
    ({"capex__turbine_per_kw": 11000.0}, "capex.turbine_per_kw", "= 11000 is above 4000"),
    ({"capex__turbine_per_kw": 1.1}, "capex.turbine_per_kw", "= 1.1 is below 300"),
    ({"capex__contingency": 0.5}, "capex.contingency", "= 0.5 is above 0.3"),
    ({"maintenance__fixed_per_kw_year": 400.0}, "maintenance.fixed_per_kw_year", "= 400 is above 200"),
    ({"revenue__ppa_price_per_mwh": 6500.0}, "revenue.ppa_price_per_mwh", "= 6500 is above 500"),
    ({"wind__mean_speed_mps": 14.0}, "wind.mean_speed_mps", "= 14 is above 12"),
    ({"wind__shear_exponent": 0.6}, "wind.shear_exponent", "= 0.6 is above 0.4"),
    # 3000 kW over 30 m: 3e6 W / (pi 15^2 m2) = 4,244 W/m2 (worked by hand)
    ({"turbine__rotor_diameter_m": 30.0, "turbine__hub_height_m": 100.0}, "turbine.rated_power_kw",
     "is 4,244 W per m2 of swept area"),
    ({"losses__wake": 0.3, "losses__electrical": 0.2}, "losses: together", "take 44.0 %"),   # 1 - 0.7 x 0.8
])
def test_each_remark_names_its_key_and_value(updates, key, shown):
    scn = make_scenario(**updates)
    found = _named(scn, key)
    assert len(found) == 1, plausibility_warnings(scn)
    assert shown in found[0] and "common practice" in found[0]


def test_a_failure_rate_above_one_per_turbine_year():
    scn = make_scenario(maintenance__component=[{"name": "pitch", "failure_rate_per_turbine_year": 1.5,
                                                 "replacement_cost": 2e4, "downtime_days": 1.0}])
    found = _named(scn, "maintenance.component.pitch.failure_rate_per_turbine_year")
    assert found and "= 1.5 is above 1" in found[0]


def test_at_the_limits_no_remark():
    """The limits themselves are inside common practice (above / below, not at)."""
    scn = make_scenario(project__lifetime_years=35, operations__availability_mature=0.8,
                        operations__availability_first_year=0.8, finance__discount_rate=0.3,
                        finance__debt__target_dscr=1.1)
    assert plausibility_warnings(scn) == []


def test_a_bare_scenario_is_warned_of_but_runs(tmp_path):
    """No O&M, no losses and no uncertainty: three remarks, each naming its section, in the JSON
    warnings and on the command line; the run still gives its numbers (P90 = P50 with no spread)."""
    bare = make_scenario(maintenance=None, losses=None, uncertainty=None)
    w = plausibility_warnings(bare)
    assert [x.split(":")[0] for x in w] == ["losses", "maintenance", "uncertainty"]
    case = run(bare)
    assert all(x in case.warnings for x in w)
    assert case.energy.report()["net_aep_p90_1yr_mwh"] == pytest.approx(case.energy.report()["net_aep_p50_mwh"])
    path = tmp_path / "bare.toml"
    path.write_text(sc.to_toml(bare.raw))
    assert main(["check", str(path)]) == 0
    assert main(["run", str(path), "--json"]) == 0


def test_warnings_reach_the_json_and_the_check(tmp_path, capsys):
    scn = make_scenario(project__lifetime_years=45)
    path = tmp_path / "long.toml"
    path.write_text(sc.to_toml(scn.raw))
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "warning: project.lifetime_years = 45 is above 35" in out
    assert main(["run", str(path), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert any(x.startswith("project.lifetime_years = 45 is above 35") for x in d["warnings"])


def test_a_variant_outside_common_practice_is_named_as_the_variant(tmp_path, capsys):
    raw = make_scenario().raw
    raw["variants"] = {"long": {"project.lifetime_years": 50}}
    path = tmp_path / "v.toml"
    path.write_text(sc.to_toml(raw))
    assert main(["run", str(path), "--json"]) == 0
    d = json.loads(capsys.readouterr().out)
    assert any(x.startswith("variant long: project.lifetime_years = 50 is above 35") for x in d["warnings"])
