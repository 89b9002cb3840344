"""Locked debt (lcoe.engine.run(scn, debt=...)) and the contracted / merchant target DSCRs."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO

from lcoe import engine
from lcoe.analysis import lender
from lcoe.finance.cashflow import Sample
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError


@pytest.fixture(scope="module")
def demo():
    scn = sc.load(DEMO)
    return scn, engine.run(scn, breakeven=False)


def test_a_case_locked_on_itself_is_the_case(demo):
    """Identity: the base case run with its own schedule gives the same lines and metrics."""
    scn, base = demo
    again = engine.run(scn, breakeven=False, debt=base)
    assert again.locked and not base.locked
    for k, v in base.metrics.items():
        assert again.metrics[k] == (pytest.approx(v, rel=1e-12) if v is not None else None), k
    np.testing.assert_array_equal(again.flows.equity_cash_flow, base.flows.equity_cash_flow)


def test_a_downside_meets_the_base_schedule_and_reports_its_cover(demo):
    """O&M +25 % with the debt locked: same debt, fee and debt service as the base; the DSCR is
    CFADS / that debt service each year (definition), and the cover figures count from the lines."""
    scn, base = demo
    down_scn = scn.with_overrides({"maintenance.fixed_per_kw_year": 1.25 * scn.maintenance.fixed_per_kw_year,
                                   "finance.debt.target_dscr": 2.0})   # debt terms of a locked case are not read
    down = engine.run(down_scn, breakeven=False, debt=base.schedule)
    f, b = down.flows, base.flows
    np.testing.assert_array_equal(f.debt_service, b.debt_service)
    assert f.debt[0, 0] == b.debt[0, 0] and f.fee[0, 0] == b.fee[0, 0]
    on = f.debt_service[0] > 0
    np.testing.assert_allclose(f.dscr[0, on], f.cfads[0, on] / f.debt_service[0, on], rtol=1e-15)
    cov = down.cover()
    assert cov["min_dscr"] == pytest.approx(float(np.min(f.dscr[0, on])), rel=1e-12)
    assert cov["min_dscr"] < base.metrics["min_dscr"]
    short = np.maximum(f.debt_service[0, 1:] - np.maximum(f.cfads[0, 1:], 0), 0)
    assert cov["unpaid_debt_service"] == pytest.approx(float(short.sum()))
    assert cov["years_below_1"] == int(np.sum(on[1:] & (f.cfads[0, 1:] < f.debt_service[0, 1:])))


def test_a_schedule_of_another_life_is_refused(demo):
    scn, base = demo
    other = scn.with_overrides({"project.lifetime_years": 20, "revenue.ppa_term_years": 15})
    with pytest.raises(ScenarioError, match=r"project.lifetime_years = 20: must equal the locked debt"):
        engine.run(other, debt=base)


def test_the_merchant_target_applies_after_the_ppa_term():
    """Sculpting (SCENARIO.md): on the sizing case DS_t = CFADS_t / target_t, so the sizing case's
    DSCR is 1.30 in the contracted years and 1.60 in the merchant years of the tenor (demo: PPA 15
    years, tenor 16, so year 16 is merchant)."""
    scn = sc.load(DEMO).with_overrides({"finance.debt.target_dscr_merchant": 1.60})
    base = engine.run(scn, breakeven=False)
    assert not base.schedule.gearing_bound[0, 0]
    case = lender.LenderCase("sizing", "sizing", energy_case=scn.finance.debt.sizing_case)
    r = lender.run_case(scn, base, case)
    d = r.flows.dscr[0]
    np.testing.assert_allclose(d[1:16], 1.30, rtol=1e-9)
    assert d[16] == pytest.approx(1.60, rel=1e-9)
    plain = engine.run(sc.load(DEMO), breakeven=False)
    assert base.metrics["debt_amount"] < plain.metrics["debt_amount"]   # a higher target carries less debt


def test_without_a_merchant_target_the_sizing_is_unchanged(demo):
    scn, base = demo
    same = engine.run(scn.with_overrides({"finance.debt.target_dscr_merchant": scn.finance.debt.target_dscr}),
                      breakeven=False)
    assert same.metrics["debt_amount"] == pytest.approx(base.metrics["debt_amount"], rel=1e-12)


def test_a_trial_batch_meets_the_locked_schedule(demo):
    """The Monte Carlo route: every row of a batch pays the base debt service."""
    scn, base = demo
    flows, m, _ = engine.evaluate(scn, sample=Sample(energy_factor=np.array([[0.8], [1.0], [1.2]])),
                                  schedule=base.schedule, energy=base.energy)
    np.testing.assert_array_equal(flows.debt_service, np.broadcast_to(base.flows.debt_service, (3, 26)))
    assert m["min_dscr"][0] < m["min_dscr"][1] < m["min_dscr"][2]
