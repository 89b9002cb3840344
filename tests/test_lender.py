"""Lender cases with the debt locked at the base sizing (lcoe.analysis.lender)."""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from conftest import DEMO, DEMO_EQUITY

from lcoe import engine
from lcoe.analysis import lender
from lcoe.inputs import scenario as sc


@pytest.fixture(scope="module")
def demo():
    scn = sc.load(DEMO)
    base = engine.run(scn, breakeven=False)
    return scn, base, {r.case.name: r for r in lender.lender_cases(scn, base)}


def test_every_case_meets_the_base_schedule(demo):
    """Locked debt: the debt and every year's debt service are those fixed at close (identity)."""
    scn, base, res = demo
    for r in res.values():
        np.testing.assert_array_equal(r.flows.debt, base.flows.debt)
        np.testing.assert_array_equal(r.flows.debt_service, base.flows.debt_service)


def test_the_base_row_is_the_engine_base_case(demo):
    scn, base, res = demo
    for k in ("min_dscr", "avg_dscr", "llcr", "equity_irr"):
        assert res["base"].metrics[k] == pytest.approx(base.metrics[k], rel=1e-12)


def test_the_sizing_case_meets_the_target_dscr_exactly(demo):
    """The debt is sculpted on the P90 1-yr case at the target DSCR (SCENARIO.md): run on that
    case with the same schedule, every tenor year's DSCR is the target (1.30 in the demo)."""
    scn, base, res = demo
    assert scn.finance.debt.sizing_case == "p90_1yr"
    d = res["p90_1yr"].flows.dscr[0, 1:scn.finance.debt.tenor_years + 1]
    np.testing.assert_allclose(d, scn.finance.debt.target_dscr, rtol=1e-9)


def test_price_down_cuts_revenue_by_the_share_every_year(demo):
    """Price -10 %: revenue is 0.9 x base in every year (no production credit in the demo)."""
    scn, base, res = demo
    assert scn.revenue.production_credit_per_mwh == 0
    np.testing.assert_allclose(res["price_minus_10"].flows.revenue, 0.9 * base.flows.revenue, rtol=1e-12)


def test_om_up_raises_every_om_input_by_ten_percent(demo):
    scn, _, _ = demo
    over = lender.om_up(scn)
    assert over["maintenance.fixed_per_kw_year"] == pytest.approx(1.1 * scn.maintenance.fixed_per_kw_year)
    comps = [k for k in over if k.startswith("maintenance.component.")]
    assert len(comps) == len(scn.maintenance.component)


def test_equity_irr_is_numpy_financials_irr_of_the_case_flows(demo):
    """Reference: numpy_financial.irr of each case's equity cash flow."""
    _, _, res = demo
    for r in res.values():
        assert r.metrics["equity_irr"] == pytest.approx(npf.irr(r.flows.equity_cash_flow[0]), abs=1e-9)


def test_years_below_one_and_the_shortfall_are_counted_from_the_lines(demo):
    _, _, res = demo
    for r in res.values():
        ds, cfads, dscr = r.flows.debt_service[0, 1:], r.flows.cfads[0, 1:], r.flows.dscr[0, 1:]
        on = ds > 0
        assert r.metrics["years_below_1"] == int(np.sum(on & (cfads < ds)))
        assert r.metrics["cfads_shortfall"] == pytest.approx(float(np.sum(np.maximum(ds - np.maximum(cfads, 0), 0)[on])))
        assert r.metrics["min_dscr"] == pytest.approx(float(np.min(dscr[on])))
    assert res["combined_downside"].metrics["min_dscr"] < res["p90_1yr"].metrics["min_dscr"]


def test_an_all_equity_scenario_has_no_cover_figures():
    scn = sc.load(DEMO_EQUITY)
    for r in lender.lender_cases(scn):
        assert r.metrics["min_dscr"] is None and r.metrics["llcr"] is None
        assert r.metrics["years_below_1"] == 0
