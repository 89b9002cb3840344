"""The scenario file: loading, defaults, variants and one-line error messages.

The reference is the contract in shared/design/SCENARIO.md (key names, units, the
"file: dotted.key = value: what is expected" message form) and the README defaults.
"""

from __future__ import annotations

import tomllib

import pytest
from conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, make_raw, make_scenario

from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError


@pytest.mark.parametrize("path", [DEMO, DEMO_HOURLY, DEMO_EQUITY, DEMO_LAYOUT])
def test_demo_scenarios_load(path):
    scn = sc.load(path)
    assert scn.project.lifetime_years >= 1 and scn.project.turbines >= 1
    assert scn.source == str(path)


def test_demo_values_and_units():
    scn = sc.load(DEMO)
    assert scn.project.name == "Tallowmere Ridge"
    assert scn.turbine.rated_power_kw == 4200.0 and scn.plant_kw == 14 * 4200.0
    assert scn.resolve(scn.turbine.power_curve).is_file()
    assert scn.finance.debt.sizing_case == "p90_1yr"
    # every variant names real keys and validates
    assert set(scn.variants) == {"life_20", "life_30_extension", "preventive_plan"}


def test_defaults_of_omitted_keys():
    """README: omitted availability 1.0 (first year = mature), escalation = inflation, PPA term =
    whole life, merchant price = PPA price, equity return = discount rate, shear 1/7."""
    raw = make_raw(wind__shear_exponent=None, maintenance__escalation=None, operations={})
    scn = make_scenario(raw)
    assert scn.operations.availability_mature == 1.0 and scn.availability_first_year == 1.0
    assert scn.escalation == scn.finance.inflation == 0.02
    assert scn.ppa_term_years == scn.lifetime == 20
    assert scn.merchant_price_per_mwh == scn.revenue.ppa_price_per_mwh
    assert scn.equity_target_return == scn.finance.discount_rate
    assert scn.wind.alpha == pytest.approx(1 / 7)
    assert sc.numeric_value(scn, "maintenance.escalation") == 0.02


def test_variants_override_dotted_keys_and_named_items():
    scn = sc.load(DEMO)
    life = scn.variant("life_20")
    assert life.lifetime == 20 and scn.lifetime == 25
    prev = scn.variant("preventive_plan")
    rates = {c.name: c.failure_rate_per_turbine_year for c in prev.maintenance.component}
    assert rates == {"gearbox": 0.012, "main bearing": 0.006, "generator": 0.008}
    assert prev.maintenance.fixed_per_kw_year == 42.0
    ext = scn.variant("life_30_extension")
    assert [o.name for o in ext.maintenance.overhaul] == ["blade refurbishment", "life extension"]


def test_unknown_variant():
    scn = sc.load(DEMO)
    with pytest.raises(ScenarioError, match=r"tallowmere_ridge\.toml: variants = 'nope': unknown variant; known: "
                                            r"life_20, life_30_extension, preventive_plan"):
        scn.variant("nope")


def test_toml_round_trip():
    raw = make_raw(maintenance__component=[{"name": "gearbox", "failure_rate_per_turbine_year": 0.02,
                                            "replacement_cost": 3e5, "downtime_days": 20.0}])
    raw["variants"] = {"long": {"project.lifetime_years": 25}}
    assert tomllib.loads(sc.to_toml(raw)) == raw


# --------------------------------------------------------------------------- errors (one line each)

@pytest.mark.parametrize("updates, message", [
    (dict(project__lifetme_years=3),
     r"^test\.toml: project\.lifetme_years: unknown key \(did you mean 'project\.lifetime_years'\?\)$"),
    (dict(wind__weibull_shape=-1.0), r"^test\.toml: wind\.weibull_shape = -1\.0: must be >= 0\.5$"),
    (dict(project__lifetime_years=0), r"^test\.toml: project\.lifetime_years = 0: must be >= 1$"),
    (dict(project__lifetime_years=2.5), r"^test\.toml: project\.lifetime_years = 2\.5: must be an integer$"),
    (dict(project__lifetime_years="20"), r"^test\.toml: project\.lifetime_years = '20': must be an integer$"),
    (dict(losses__wake=1.0), r"^test\.toml: losses\.wake = 1\.0: must be < 1\.0$"),
    (dict(revenue__ppa_price_per_mwh=-1.0), r"^test\.toml: revenue\.ppa_price_per_mwh = -1\.0: must be >= 0\.0$"),
    (dict(capex__turbine_per_kw=None), r"^test\.toml: capex\.turbine_per_kw: is required$"),
    (dict(finance__discount_rate=float("nan")), r"^test\.toml: finance\.discount_rate = nan: must be a finite number$"),
    (dict(schema_version=2), r"^test\.toml: schema_version = 2: unsupported; this program reads version 1$"),
    (dict(wind__weibull_scale_mps=8.0),
     r"^test\.toml: wind\.weibull_scale_mps = 8\.0: cannot be given together with wind\.mean_speed_mps"),
    (dict(wind__mean_speed_mps=None),
     r"^test\.toml: wind: give exactly one of mean_speed_mps, weibull_scale_mps, timeseries or rose$"),
    (dict(turbine__hub_height_m=50.0),
     r"^test\.toml: turbine\.hub_height_m = 50\.0: must be above the rotor radius 55 m"),
    (dict(finance__debt__tenor_years=25),
     r"^test\.toml: finance\.debt\.tenor_years = 25: must not be longer than project\.lifetime_years = 20$"),
    (dict(finance__debt__sizing_case="p80"),
     r"^test\.toml: finance\.debt\.sizing_case = 'p80': must be one of 'p50', 'p90_1yr', 'p90_10yr' or 'p99_1yr'$"),
    (dict(maintenance__overhaul=[{"name": "a", "year": 30, "cost_per_turbine": 1.0}]),
     r"^test\.toml: maintenance\.overhaul\[0\]\.year = 30: must lie within the operating life 1\.\.20$"),
    (dict(variants={"x": {"project.lifetime_years": 0}}),
     r"^test\.toml: variants\.x\.project\.lifetime_years = 0: must be >= 1$"),
    (dict(variants={"x": {"capex.turbine_per_kwh": 1.0}}),
     r"^test\.toml: variants\.x\.capex\.turbine_per_kwh = 1\.0: unknown key \(did you mean 'capex\.turbine_per_kw'\?\)$"),
])
def test_errors_name_file_key_value_and_expectation(updates, message):
    with pytest.raises(ScenarioError, match=message) as info:
        make_scenario(**updates)
    assert "\n" not in str(info.value)


def test_file_errors(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("schema_version = 1\n[project\nname = 'x'\n", encoding="utf-8")
    with pytest.raises(ScenarioError, match=r"bad\.toml: TOML syntax error at line 2"):
        sc.load(bad)
    with pytest.raises(ScenarioError, match=r"none\.toml: file not found$"):
        sc.load(tmp_path / "none.toml")


def test_error_carries_key_and_value():
    with pytest.raises(ScenarioError, match=r"wind\.weibull_shape = -1\.0") as info:
        make_scenario(wind__weibull_shape=-1.0)
    assert info.value.key == "wind.weibull_shape" and info.value.value == -1.0 and info.value.file == "test.toml"
