"""Costs: capex and contingency, escalation, expected failures, overhauls, O&M, decommissioning.

The reference for each check is a hand calculation written in the test (the formulas are
the conventions of shared/design/SCENARIO.md); compound growth base (1 + g)^t is the usual
future-value formula of engineering economics.
"""

from __future__ import annotations

import numpy as np
import pytest
from conftest import make_scenario
from numpy.testing import assert_allclose

from lcoe import engine as model
from lcoe.finance import costs


def test_capex_total_with_contingency():
    # (1000 + 300) EUR/kW * 30,000 kW + 5e6 grid + 2e6 development = 46e6; contingency 6 % -> 48.76e6
    got = costs.capex_total(1000.0, 300.0, 5e6, 2e6, 0.06, 30_000.0)
    assert got == pytest.approx(48.76e6, rel=1e-12)


def test_capex_broadcasts_over_rows():
    per_kw = np.array([[900.0], [1000.0], [1100.0]])
    got = costs.capex_total(per_kw, 0.0, 1e6, 0.0, 0.0, 1000.0)
    # 900 * 1000 kW + 1e6 grid = 1.9e6, and so on
    assert_allclose(got.ravel(), [1.9e6, 2.0e6, 2.1e6], rtol=1e-12)


def test_escalation_index_is_compound_growth():
    """Future value of a year-0 amount: (1 + g)^t (engineering-economics compound-interest factor)."""
    assert_allclose(costs.escalation_index(0.02, [0, 1, 2, 10]), [1.0, 1.02, 1.0404, 1.02 ** 10], rtol=1e-12)


def test_expected_failure_cost():
    # 0.025 / turbine-year * 14 turbines * 350,000 + 0.012 * 14 * 220,000 = 122,500 + 36,960 = 159,460
    assert costs.expected_failure_cost([0.025, 0.012], [350e3, 220e3], 14) == pytest.approx(159_460.0, rel=1e-12)


def test_overhauls_fall_in_their_year():
    got = costs.overhaul_costs([3, 5, 5], [100.0, 10.0, 1.0], 4, np.arange(1, 7))
    assert_allclose(got, [0, 0, 400, 0, 44, 0])


def test_opex_formula_by_hand():
    """O&M_t = [(fixed + insurance) kW + variable E_t + failures + overhauls] (1 + esc)^t + lease Revenue_t."""
    years = np.array([1, 2])
    e = np.array([1000.0, 2000.0])
    rev = np.array([50_000.0, 100_000.0])
    fixed = costs.fixed_om(30.0, 5.0, 100.0, 500.0, np.array([0.0, 1000.0]))
    got = costs.opex(fixed, 2.0, e, costs.escalation_index(0.1, years), 0.04, rev)
    # year 1: (3500 + 2000 + 500 + 0) * 1.1 + 2000 = 8600; year 2: (3500 + 4000 + 500 + 1000) * 1.21 + 4000 = 14890
    assert_allclose(got, [8600.0, 14890.0], rtol=1e-12)


def test_decommissioning_net_of_salvage_escalated_to_year_L():
    # (40 - 15) EUR/kW * 58,800 kW * 1.02^25 = 1,470,000 * 1.640606 = 2,411,690.8
    assert costs.decommissioning_net(40.0, 15.0, 58_800.0, 0.02, 25) == pytest.approx(1_470_000 * 1.02 ** 25,
                                                                                        rel=1e-12)
    assert costs.decommissioning_net(10.0, 15.0, 1000.0, 0.0, 5) == pytest.approx(-5000.0)


def test_costs_in_the_yearly_engine():
    """The engine's O&M and decommissioning rows equal the formula evaluated here by hand."""
    scn = make_scenario(
        maintenance={"fixed_per_kw_year": 40.0, "insurance_per_kw_year": 6.0, "variable_per_mwh": 1.5,
                     "land_lease_share_of_revenue": 0.03, "escalation": 0.025,
                     "component": [{"name": "gearbox", "failure_rate_per_turbine_year": 0.02,
                                    "replacement_cost": 300e3, "downtime_days": 0.0}],
                     "overhaul": [{"name": "blades", "year": 8, "cost_per_turbine": 90e3}]},
        capex={"turbine_per_kw": 1000.0, "balance_of_plant_per_kw": 300.0, "grid_connection": 5e6,
               "development": 1e6, "contingency": 0.05, "decommissioning_per_kw": 35.0, "salvage_per_kw": 10.0})
    flows, _, _ = model.evaluate(scn)
    t = np.arange(1, 21)
    e = flows.energy_mwh[0, 1:]
    rev = flows.revenue[0, 1:]
    kw = 30_000.0
    real = 46.0 * kw + 1.5 * e + 0.02 * 10 * 300e3 + np.where(t == 8, 10 * 90e3, 0.0)
    assert_allclose(flows.opex[0, 1:], real * 1.025 ** t + 0.03 * rev, rtol=1e-12)
    assert flows.opex[0, 0] == 0.0
    assert flows.capex_total[0, 0] == pytest.approx(((1300.0 * kw) + 6e6) * 1.05, rel=1e-12)
    assert_allclose(flows.decommissioning[0, :-1], 0.0)
    assert flows.decommissioning[0, -1] == pytest.approx(25.0 * kw * 1.025 ** 20, rel=1e-12)


def test_escalation_defaults_to_inflation():
    """An omitted maintenance.escalation is finance.inflation (README convention)."""
    scn = make_scenario(maintenance={"fixed_per_kw_year": 40.0}, finance__inflation=0.03)
    flows, _, _ = model.evaluate(scn)
    assert_allclose(flows.opex[0, 1:], 40.0 * 30_000 * 1.03 ** np.arange(1, 21), rtol=1e-12)
