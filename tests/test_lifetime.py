"""lcoe.analysis.lifetime: one rule for a change of life, and the wear that a life-extension overhaul resets.

References: the demo's component table typed by hand below (rates, downtime days and repair
costs from assumptions/tallowmere_ridge.toml), with the growth rule worked out in the test:
rate * (1 + g)^(t - Y) after year Y, downtime sum(rate * days / 365), failure cost
sum(rate * turbines * cost) (SCENARIO.md's expected-value formulas); the engine's own run for
the case without growth.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO

from lcoe import engine as model
from lcoe.analysis import lifetime
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError

# (rate per turbine-year, downtime days, cost per failure) of the demo's components, typed by hand
COMPONENTS = [(0.025, 30.0, 350000.0), (0.012, 21.0, 220000.0), (0.015, 14.0, 180000.0)]
TURBINES = 14


def test_the_worn_years_grow_the_failure_rates_by_the_stated_rule():
    scn = sc.load(DEMO)
    g, year = 0.05, 20
    sample = lifetime.worn_sample(scn, year, g)
    for t in (1, 20, 21, 25):
        wear = (1 + g) ** max(t - year, 0)
        down = sum(r * wear * d / 365.0 for r, d, _ in COMPONENTS)
        cost = sum(r * wear * TURBINES * c for r, _, c in COMPONENTS)
        assert sample.downtime[0, t - 1] == pytest.approx(down, rel=1e-12)
        assert sample.failure_cost[0, t - 1] == pytest.approx(cost, rel=1e-12)
    assert lifetime.worn_sample(scn, year, 0.0) is None
    assert lifetime.worn_sample(scn, 30, g) is None          # the life ends before the year


def test_without_growth_the_study_is_the_engines_run_and_growth_only_hurts_the_case_without():
    scn = sc.load(DEMO)
    plain = lifetime.study(scn, [20, 30], 20, 400000.0)
    worn = lifetime.study(scn, [20, 30], 20, 400000.0, wear_growth=0.08)
    over, _ = lifetime.life_overrides(scn, 30)
    assert plain[2]["lcoe"] == model.run(scn.with_overrides(over), breakeven=False).metrics["lcoe_nominal_per_mwh"]
    by = {(r["life"], r["plan"]): r for r in worn}
    for r in plain:
        w = by[(r["life"], r["plan"])]
        if r["plan"] == "without" and r["life"] > 20:
            assert w["lcoe"] > r["lcoe"] and w["npv"] < r["npv"]
        else:
            assert w["lcoe"] == r["lcoe"] and w["npv"] == r["npv"]


def test_a_growth_that_stops_the_turbines_is_refused():
    with pytest.raises(ScenarioError, match="reach a downtime of the whole year"):
        lifetime.worn_sample(sc.load(DEMO).with_overrides({"project.lifetime_years": 60}), 10, 0.5)


def test_a_shorter_life_cuts_the_tenor_and_the_ppa_term_and_drops_late_overhauls():
    scn = sc.load(DEMO)           # tenor 16, PPA 15 years, an overhaul in year 12
    over, notes = lifetime.life_overrides(scn, 11)
    assert over["finance.debt.tenor_years"] == 11 and over["revenue.ppa_term_years"] == 11
    assert over["maintenance.overhaul"] == []
    assert notes == ["overhaul 'blade refurbishment' in year 12 left out: after a 11-year life",
                     "debt tenor shortened from 16 to 11 years to fit a 11-year life",
                     "PPA term shortened from 15 to 11 years to fit a 11-year life"]
    assert np.isfinite(model.run(scn.with_overrides(over), breakeven=False).metrics["lcoe_nominal_per_mwh"])
