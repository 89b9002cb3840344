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


def _with_cases(**tables):
    import tomllib
    raw = tomllib.loads(DEMO.read_text())
    raw["lender_cases"] = tables
    return sc.from_dict(raw, source="cases.toml", base_dir=DEMO.parent)


def test_a_scenario_case_runs_with_its_keys_and_the_locked_debt():
    """[lender_cases.NAME]: a label, an energy case and dotted keys; O&M +25 % with P90 10-yr
    energy must give lower cover than either alone (same locked schedule)."""
    scn = _with_cases(heavy={"label": "Heavy O&M, P90 10-yr", "energy_case": "p90_10yr",
                             "maintenance.fixed_per_kw_year": 45.0},
                      om_plus_10={"label": "O&M +10 % (own)", "maintenance.fixed_per_kw_year": 39.6})
    base = engine.run(scn, breakeven=False)
    res = {r.case.name: r for r in lender.lender_cases(scn, base)}
    assert list(res)[-1] == "heavy" and res["om_plus_10"].case.label == "O&M +10 % (own)"   # replaces the default
    assert len(res) == 9
    np.testing.assert_array_equal(res["heavy"].flows.debt_service, base.flows.debt_service)
    assert res["heavy"].metrics["min_dscr"] < min(res["p90_10yr"].metrics["min_dscr"],
                                                  res["om_plus_10"].metrics["min_dscr"])


@pytest.mark.parametrize("table, match", [
    ({"finance.debt.tenor_years": 12}, r"lender_cases.bad.finance.debt.tenor_years = 12: a lender case cannot"),
    ({"project.lifetime_years": 20}, r"lender_cases.bad.project.lifetime_years = 20: a lender case cannot"),
    ({"energy_case": "p80"}, r"lender_cases.bad.energy_case = 'p80': must be one of"),
    ({"maintenance.fixed_per_kw_yr": 40.0}, r"lender_cases.bad.maintenance.fixed_per_kw_yr = 40.0: unknown key"),
    ({"operations.availability_mature": 1.5}, r"lender_cases.bad.operations.availability_mature = 1.5"),
])
def test_a_lender_case_that_cannot_be_honoured_is_refused(table, match):
    from lcoe.inputs.errors import ScenarioError
    with pytest.raises(ScenarioError, match=match):
        _with_cases(bad=table)


def test_the_report_has_the_lender_cases_block_and_table():
    from lcoe.analysis import study
    from lcoe.outputs import report as rp
    scn = sc.load(DEMO)
    rep = study.build(scn, trials=0, variants=False)
    d = rep.to_dict()
    block = d["lender_cases"]
    assert list(block)[:2] == ["base", "p90_1yr"] and len(block) == 8
    for row in block.values():
        for k in engine.COVER_KEYS + ("equity_irr", "label", "energy_case"):
            assert k in row
    assert block["base"]["min_dscr"] == pytest.approx(d["metrics"]["min_dscr"], rel=1e-12)
    table = rp.to_table(rep, yearly=False)
    assert "Lender cases (debt and debt service locked at the base sizing)" in table
    line = next(x for x in table.splitlines() if x.strip().startswith("P99 1-yr energy"))
    assert f"{block['p99_1yr']['min_dscr']:.3f}" in line
    assert all(len(x) <= 100 for x in table.splitlines() if "DSCR" in x and "Case" in x)


def test_too_many_lender_cases_are_refused():
    from lcoe.inputs.errors import ScenarioError
    from lcoe.inputs.schema import MAX_VARIANTS
    with pytest.raises(ScenarioError, match=rf"lender_cases: {MAX_VARIANTS + 1} lender cases; a scenario runs at most"):
        _with_cases(**{f"c{i}": {"maintenance.fixed_per_kw_year": 40.0} for i in range(MAX_VARIANTS + 1)})
