"""Shared fixtures. Scenarios built here are small, self-contained and invented."""

from __future__ import annotations

import copy
import os
import shutil
from pathlib import Path

import pytest

from lcoe.inputs import scenario as sc

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "assumptions" / "tallowmere_ridge.toml"
DEMO_HOURLY = ROOT / "assumptions" / "tallowmere_ridge_hourly.toml"
DEMO_EQUITY = ROOT / "assumptions" / "tallowmere_ridge_equity.toml"
DEMO_LAYOUT = ROOT / "assumptions" / "tallowmere_ridge_layout.toml"

# A minimal valid scenario (invented numbers) with a physics curve, so it needs no data file.
BASE = {
    "schema_version": 1,
    "project": {"name": "Test Site", "currency": "EUR", "lifetime_years": 20, "turbines": 10},
    "wind": {"height_m": 100.0, "mean_speed_mps": 7.0, "weibull_shape": 2.0, "shear_exponent": 0.0,
             "elevation_m": 0.0, "mean_temperature_c": 15.0},
    "turbine": {"hub_height_m": 100.0, "rated_power_kw": 3000.0, "rotor_diameter_m": 110.0, "cp_max": 0.45,
                "cut_in_mps": 3.0, "cut_out_mps": 25.0, "drivetrain_efficiency": 0.95},
    "losses": {"wake": 0.05, "electrical": 0.02},
    "operations": {"availability_first_year": 0.96, "availability_mature": 0.97},
    "maintenance": {"fixed_per_kw_year": 40.0, "variable_per_mwh": 1.0, "escalation": 0.02},
    "capex": {"turbine_per_kw": 1100.0, "balance_of_plant_per_kw": 300.0, "grid_connection": 5.0e6},
    "revenue": {"ppa_price_per_mwh": 65.0},
    "finance": {"inflation": 0.02, "discount_rate": 0.07, "tax_rate": 0.25,
                "debt": {"tenor_years": 15, "interest_rate": 0.05, "target_dscr": 1.3, "max_gearing": 0.8}},
    "uncertainty": {"interannual_speed_sd": 0.06, "energy": [{"name": "losses", "sd": 0.03}]},
}


def make_raw(**updates) -> dict:
    """A deep copy of BASE with dotted-key updates; a value of None deletes the key."""
    raw = copy.deepcopy(BASE)
    for dotted, value in updates.items():
        key = dotted.replace("__", ".")
        parts = key.split(".")
        node = raw
        for p in parts[:-1]:
            node = node.setdefault(p, {})
        if value is None:
            node.pop(parts[-1], None)
        else:
            node[parts[-1]] = value
    return raw


def make_scenario(raw: dict | None = None, **updates) -> sc.Scenario:
    return sc.from_dict(raw if raw is not None else make_raw(**updates), source="test.toml", base_dir=ROOT)


@pytest.fixture
def base_raw() -> dict:
    return make_raw()


@pytest.fixture
def base_scenario() -> sc.Scenario:
    return make_scenario()


@pytest.fixture(scope="session")
def demo_scenario() -> sc.Scenario:
    return sc.load(DEMO)


# the sections of the lender structure (construction period, reserves, lock-up, lender cases) and
# the debt keys that came with it; without them the demo is the model of plain sculpted debt
LENDER_SECTIONS = ("construction", "reserves", "waterfall", "lender_cases")
LENDER_DEBT_KEYS = ("target_dscr_merchant",)


def plain_demo() -> sc.Scenario:
    """The demo without its lender structure: capex at t = 0, a full first year, equity = CFADS - debt service."""
    import tomllib
    raw = tomllib.loads(DEMO.read_text())
    for key in LENDER_SECTIONS:
        raw.pop(key, None)
    for key in LENDER_DEBT_KEYS:
        raw["finance"]["debt"].pop(key, None)
    return sc.from_dict(raw, source=str(DEMO), base_dir=DEMO.parent)


@pytest.fixture(scope="session")
def plain_demo_scenario() -> sc.Scenario:
    return plain_demo()


def require_tool(name: str) -> str:
    """Path of a system tool; skip when missing, except under CI where it must exist."""
    path = shutil.which(name)
    if path is None:
        if os.environ.get("CI"):
            pytest.fail(f"{name} is required under CI (installed by .ci/run)")
        pytest.skip(f"{name} not installed")
    return path


# The app's headline figures: (block, key) in the order shown.
HEADLINE = [("metrics", "lcoe_nominal_per_mwh"), ("metrics", "lcoe_real_per_mwh"), ("metrics", "project_npv"),
            ("metrics", "equity_irr"), ("metrics", "min_dscr"), ("metrics", "debt_amount"),
            ("energy", "net_aep_p50_mwh"), ("energy", "net_aep_p90_1yr_mwh"), ("energy", "net_capacity_factor")]


def expected_headline(case) -> dict:
    """Label -> text of the app's headline figures for an engine case, in the report's labels and formats."""
    from lcoe.outputs import report as rp
    cur = case.scenario.project.currency
    out = {}
    for block, key in HEADLINE:
        name, unit, how = (rp.METRIC_LABELS if block == "metrics" else rp.ENERGY_LABELS)[key]
        value = case.metrics[key] if block == "metrics" else float(getattr(case.energy, key))
        out[f"{name} [{unit.format(cur=cur)}]"] = rp.fmt(value, how)
    return out
