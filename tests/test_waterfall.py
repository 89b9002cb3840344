"""The cash waterfall: reserve accounts, lock-up and distributions (lcoe.finance.waterfall).

References: waterfalls worked by hand below (the arithmetic in each docstring), cash
conservation as a property over random inputs (hypothesis), and numpy-financial's IRR of
the equity flows.
"""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from conftest import DEMO, plain_demo
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from lcoe import engine
from lcoe.finance import waterfall as wf
from lcoe.inputs import scenario as sc


def _both(monkeypatch, *args):
    """The waterfall by the compiled row loop and by the array formulas."""
    compiled = wf.run_rows(*args)
    monkeypatch.setattr(wf, "_kernels", None)
    arrays = wf.run_rows(*args)
    monkeypatch.undo()
    return compiled, arrays


def _row(lines, k):
    return lines[k][0].tolist()


@pytest.mark.parametrize("route", [0, 1])
def test_dsra_draw_release_and_lockup_by_hand(monkeypatch, route):
    """Three years, CFADS 100, 60, 120, debt service 80, 80, 0; DSRA 6 months, no deposit
    interest, lock-up below 1.10x; equity 200 before reserves.
    t0: target 6/12 x 80 = 40, funded by equity: equity -200 - 40 = -240.
    t1: 100 - 80 = 20 left; the DSRA is at its target 40; DSCR 1.25 passes: 20 distributed.
    t2: 60 - 80 = -20: 20 drawn from the DSRA (40 -> 20); the target is 6/12 x 0 = 0, so 20 is
    released; DSCR 0.75 < 1.10: the 20 is trapped.
    t3: no debt service, no test: 120 + the trapped 20 = 140 distributed."""
    cfads = np.array([[0.0, 100.0, 60.0, 120.0]])
    ds = np.array([[0.0, 80.0, 80.0, 0.0]])
    a = wf.dsra_targets(ds[:, 1:], 6.0)
    np.testing.assert_allclose(a, [[40.0, 40.0, 0.0, 0.0]])
    lines = _both(monkeypatch, cfads, ds, np.array([-200.0]), a, np.zeros((1, 4)), 0.0, 1.10)[route]
    assert _row(lines, "equity_cash_flow") == [-240.0, 20.0, 0.0, 140.0]
    assert _row(lines, "dsra_draw") == [0.0, 0.0, 20.0, 0.0]
    assert _row(lines, "dsra_release") == [0.0, 0.0, 20.0, 0.0]
    assert _row(lines, "cash_trapped") == [0.0, 0.0, 20.0, 0.0]
    assert _row(lines, "trapped_released") == [0.0, 0.0, 0.0, 20.0]
    assert _row(lines, "lockup") == [0.0, 0.0, 1.0, 0.0]
    assert _row(lines, "unpaid_debt_service") == [0.0] * 4


@pytest.mark.parametrize("route", [0, 1])
def test_deposit_interest_and_unpaid_debt_service_by_hand(monkeypatch, route):
    """CFADS 100, 10, 150, 90; debt service 80 each year; DSRA 6 months (target 40, then 0 in
    year 4); deposit 10 %; lock-up 1.10x.
    t1: interest 0.1 x 40 = 4: 104 - 80 = 24; DSCR 1.25: 24 distributed.
    t2: interest 4: 14 - 80 = -66; the DSRA gives its 40, 26 stays unpaid (funded by the
    sponsor: equity -26); the DSRA is empty and nothing is left to refill it.
    t3: no interest: 150 - 80 = 70; 40 refills the DSRA; 30 left; DSCR 1.875: distributed.
    t4: interest 4: 94 - 80 = 14; target 0, 40 released: 54 left; DSCR 1.125 passes: 54."""
    cfads = np.array([[0.0, 100.0, 10.0, 150.0, 90.0]])
    ds = np.array([[0.0, 80.0, 80.0, 80.0, 80.0]])
    a = wf.dsra_targets(ds[:, 1:], 6.0)
    lines = _both(monkeypatch, cfads, ds, np.array([-100.0]), a, np.zeros((1, 5)), 0.10, 1.10)[route]
    np.testing.assert_allclose(_row(lines, "reserve_interest"), [0, 4, 4, 0, 4], atol=1e-12)
    np.testing.assert_allclose(_row(lines, "unpaid_debt_service"), [0, 0, 26, 0, 0], atol=1e-12)
    np.testing.assert_allclose(_row(lines, "dsra_topup"), [40, 0, 0, 40, 0], atol=1e-12)
    np.testing.assert_allclose(_row(lines, "equity_cash_flow"), [-140, 24, -26, 30, 54], atol=1e-12)


@pytest.mark.parametrize("route", [0, 1])
def test_maintenance_reserve_builds_and_pays_the_overhaul_by_hand(monkeypatch, route):
    """An overhaul of nominal cost 300 in year 4, built up over 3 years: targets 100, 200, 300
    at the ends of years 1-3, 0 from year 4; with cash enough, 100 goes in each year and the
    300 comes out in year 4, where it meets the overhaul already in that year's O&M."""
    oh = np.array([[0.0, 0.0, 0.0, 300.0, 0.0]])
    b = wf.mra_targets(oh, 3)
    np.testing.assert_allclose(b, [[0, 100, 200, 300, 0, 0]])
    cfads = np.array([[0.0, 500.0, 500.0, 500.0, 200.0, 500.0]])
    ds = np.zeros((1, 6))
    lines = _both(monkeypatch, cfads, ds, np.array([-1000.0]), np.zeros((1, 6)), b, 0.0, 0.0)[route]
    np.testing.assert_allclose(_row(lines, "mra_topup"), [0, 100, 100, 100, 0, 0])
    np.testing.assert_allclose(_row(lines, "mra_release"), [0, 0, 0, 0, 300, 0])
    np.testing.assert_allclose(_row(lines, "distributions"), [0, 400, 400, 400, 500, 500])


def test_an_overhaul_sooner_than_the_build_up_starts_in_year_one():
    """Year 2 with K = 3: the build-up has only year 1 (s = max(1, 2 - 3) = 1)."""
    b = wf.mra_targets(np.array([[0.0, 90.0, 0.0]]), 3)
    np.testing.assert_allclose(b, [[0, 90, 0, 0]])


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(2, 12), st.integers(0, 2**31 - 1), st.floats(0, 12), st.floats(0, 0.1),
       st.sampled_from([0.0, 1.05, 1.10, 1.4]), st.integers(0, 4))
def test_cash_is_never_created_or_lost(years, seed, months, rate, lockup, k):
    """Every year: cash in (CFADS, deposit interest, reserve releases and draws, trapped cash
    released, sponsor funding of unpaid debt service) = cash out (debt service, reserve top-ups,
    cash trapped, distributions); balances never negative and all released by year L; the
    two routes agree."""
    rng = np.random.default_rng(seed)
    n = 6
    cfads = np.zeros((n, years + 1))
    cfads[:, 1:] = rng.normal(100.0, 60.0, (n, years))
    ds = np.zeros((n, years + 1))
    tenor = rng.integers(1, years + 1)
    ds[:, 1:tenor + 1] = rng.uniform(0.0, 120.0, (n, tenor))
    oh = np.where(rng.random((n, years)) < 0.2, rng.uniform(0, 200, (n, years)), 0.0)
    a, b = wf.dsra_targets(ds[:, 1:], months), wf.mra_targets(oh, k)
    e0 = -rng.uniform(100, 500, n)
    res = wf.run_rows(cfads, ds, e0, a, b, rate, lockup)
    from lcoe.finance import waterfall as w2
    saved, w2._kernels = w2._kernels, None
    try:
        arr = wf.run_rows(cfads, ds, e0, a, b, rate, lockup)
    finally:
        w2._kernels = saved
    for key in wf.LINES:
        np.testing.assert_allclose(res[key], arr[key], rtol=1e-12, atol=1e-9)
    g = {key: v[:, 1:] for key, v in res.items()}
    cash_in = (cfads[:, 1:] + g["reserve_interest"] + g["mra_release"] + g["dsra_draw"] + g["lockup_draw"]
               + g["unpaid_debt_service"] + g["dsra_release"] + g["trapped_released"])
    cash_out = ds[:, 1:] + g["dsra_topup"] + g["mra_topup"] + g["cash_trapped"] + g["distributions"]
    np.testing.assert_allclose(cash_in, cash_out, atol=1e-9)
    for bal, ins, outs in (("dsra_balance", ("dsra_topup",), ("dsra_draw", "dsra_release")),
                           ("mra_balance", ("mra_topup",), ("mra_release",)),
                           ("lockup_balance", ("cash_trapped",), ("lockup_draw", "trapped_released"))):
        prev = res[bal][:, :-1]
        step = sum(g[x] for x in ins) - sum(g[x] for x in outs)
        np.testing.assert_allclose(res[bal][:, 1:], prev + step, atol=1e-9)
        assert np.all(res[bal] >= -1e-9)
        assert np.all(res[bal][:, -1] == 0.0)
    np.testing.assert_allclose(res["equity_cash_flow"][:, 0], e0 - a[:, 0] - b[:, 0])
    np.testing.assert_allclose(res["equity_cash_flow"][:, 1:], g["distributions"] - g["unpaid_debt_service"])
    assert np.all(g["unpaid_debt_service"] <= np.maximum(ds[:, 1:] - cfads[:, 1:], 0) + 1e-9)


@pytest.fixture(scope="module")
def demo_reserved():
    scn = plain_demo().with_overrides({"reserves": {"dsra_months": 6, "maintenance_years": 3,
                                                     "deposit_rate": 0.02},
                                        "waterfall": {"lockup_dscr": 1.10}})
    return scn, engine.run(scn, breakeven=False)


def test_the_demo_dsra_is_six_months_of_next_years_debt_service(demo_reserved):
    """Sized by hand: the balance at the end of year t is 6/12 of year t + 1's debt service
    (the DSRA is never drawn in the P50 demo), and zero from the last tenor year."""
    scn, case = demo_reserved
    w, ds = case.flows.waterfall, case.flows.debt_service[0]
    tenor = scn.finance.debt.tenor_years
    np.testing.assert_allclose(w["dsra_balance"][0, :tenor], 0.5 * ds[1:tenor + 1], rtol=1e-12)
    assert np.all(w["dsra_balance"][0, tenor:] == 0.0)
    assert w["dsra_release"][0, tenor] == pytest.approx(0.5 * ds[tenor], rel=1e-12)


def test_equity_irr_is_numpy_financials_irr_of_the_waterfall_flows(demo_reserved):
    """Reference: numpy_financial.irr of the equity contributions and distributions."""
    _, case = demo_reserved
    eq = case.flows.equity_cash_flow[0]
    np.testing.assert_array_equal(eq, case.flows.waterfall["equity_cash_flow"][0])
    assert case.metrics["equity_irr"] == pytest.approx(npf.irr(eq), abs=1e-10)
    assert case.metrics["equity_npv"] == pytest.approx(npf.npv(0.10, eq), rel=1e-12)


def test_a_lockup_traps_cash_in_a_locked_downside(demo_reserved):
    """With the debt locked and energy at 75 % (well below the sizing case's P90 factor, 0.86), the
    DSCR falls under 1.10x in some years: nothing is distributed in those years."""
    from lcoe.finance.cashflow import Sample
    scn, case = demo_reserved
    flows, m, _ = engine.evaluate(scn, sample=Sample(energy_factor=np.array([[0.75]])), schedule=case.schedule,
                                  energy=case.energy)
    w = flows.waterfall
    locked = w["lockup"][0] > 0
    assert locked.any()
    np.testing.assert_array_equal(locked[1:], (flows.dscr[0, 1:] < 1.10) & (flows.debt_service[0, 1:] > 0))
    assert np.all(w["distributions"][0, locked] == 0.0)
    cov = engine.cover_of(flows, m)
    assert cov["years_in_lockup"] == int(locked.sum())
    assert cov["cash_trapped"] == pytest.approx(float(w["cash_trapped"][0].sum()))


def test_the_compiled_trial_pass_runs_the_same_waterfall(demo_reserved):
    """Monte Carlo trials through the compiled kernel and through the array engine agree,
    the waterfall's per-trial figures included."""
    from lcoe.analysis import montecarlo as mc
    scn, case = demo_reserved
    inputs, sample = mc.draw_block(scn, 300, mc._block_rng(5, 0), scn.lifetime)
    fused = mc.run_trials(scn, case, inputs, sample, fused=True)
    arrays = mc.run_trials(scn, case, inputs, sample, fused=False)
    for k in engine.WATERFALL_TRIAL_KEYS + ("equity_irr", "equity_npv", "payback_year"):
        np.testing.assert_allclose(fused[k], arrays[k], rtol=1e-11, atol=1e-6, err_msg=k)
    assert 0 < fused["lockup_any"].sum() < 300 and fused["dsra_drawn"].sum() > 0


def test_monte_carlo_reports_the_waterfall_probabilities(demo_reserved):
    from lcoe.analysis import montecarlo as mc
    scn, case = demo_reserved
    res = mc.monte_carlo(scn, case, trials=2000)
    rep = res.report()
    w = res.waterfall
    assert rep["prob_lockup_any_year"] == pytest.approx(np.mean(w["lockup_any"]))
    assert rep["prob_dsra_drawn"] <= rep["prob_lockup_any_year"]   # a draw needs DSCR < 1 < 1.10
    assert rep["prob_debt_service_unpaid"] <= rep["prob_dsra_drawn"]
    assert rep["expected_cash_trapped"] == pytest.approx(np.mean(w["cash_trapped"]))
    plain = mc.monte_carlo(plain_demo(), trials=200).report()
    assert "prob_lockup_any_year" not in plain


def test_the_yearly_rows_csv_and_table_carry_the_waterfall(demo_reserved, tmp_path):
    from lcoe.analysis import study
    from lcoe.outputs import report as rp
    scn, case = demo_reserved
    rows = case.annual()
    assert rows[0]["dsra_balance"] == pytest.approx(case.flows.waterfall["dsra_balance"][0, 0])
    assert rows[1]["lockup"] is False and rows[1]["distributions"] > 0
    rep = study.build(scn, trials=0, variants=False)
    path = tmp_path / "yearly.csv"
    rp.write_annual_csv(rep, path)
    head = path.read_text().splitlines()[0].split(",")
    assert head[:len(engine.ANNUAL_KEYS)] == list(engine.ANNUAL_KEYS) and "dsra_balance" in head
    table = rp.to_table(rep)
    assert "Cash waterfall" in table


def test_monte_carlo_may_draw_the_waterfall_terms(demo_reserved):
    """A drawn deposit rate and lock-up threshold are read by the trials (not refused as
    unused); both routes agree and a higher threshold locks up more trials."""
    from lcoe.analysis import montecarlo as mc
    scn, case = demo_reserved
    n = 256
    inputs = {"reserves.deposit_rate": np.linspace(0.0, 0.05, n), "waterfall.lockup_dscr": np.linspace(1.0, 1.6, n)}
    _, sample = mc.draw_block(scn, n, mc._block_rng(9, 0), scn.lifetime)
    fused = mc.run_trials(scn, case, inputs, sample, fused=True)
    arrays = mc.run_trials(scn, case, inputs, sample, fused=False)
    for k in engine.WATERFALL_TRIAL_KEYS + ("equity_irr",):
        np.testing.assert_allclose(fused[k], arrays[k], rtol=1e-11, atol=1e-6, err_msg=k)
    assert fused["lockup_any"][: n // 4].mean() < fused["lockup_any"][-n // 4:].mean()


def _schedule_lines(ds, rate):
    """Scheduled interest and closing balance of debt service ``ds`` over t = 1..L at ``rate``."""
    from lcoe.finance.debt import amortise
    opening, interest, _ = amortise(np.asarray([ds], float), rate)
    zero = np.zeros((1, 1))
    return np.hstack([zero, interest]), np.hstack([zero, opening + interest - np.asarray([ds], float)])


@pytest.mark.parametrize("route", [0, 1])
def test_cash_sweep_by_hand(monkeypatch, route):
    """Debt service 100 a year for 3 years at 10 %: the debt is 100/1.1 + 100/1.21 + 100/1.331 =
    248.685, the balance after year 1 is 173.554. No tax, no reserves, lock-up below 1.10x.
    Year 1: CFADS 105, DSCR 1.05: locked; the 5 left prepays the debt, so 5 / 173.554 of it goes
    and every later debt service is 1 - 5 / 173.554 = 0.971190 of the scheduled: 97.119.
    Years 2 and 3: CFADS 150 pass: 150 - 97.119 = 52.881 distributed; the balance is 0 at the end."""
    interest, balance = _schedule_lines([100.0, 100.0, 100.0], 0.10)
    assert balance[0, 1] == pytest.approx(173.553719, rel=1e-8)
    pre = np.array([[0.0, 105.0, 150.0, 150.0]])
    ds = np.array([[0.0, 100.0, 100.0, 100.0]])
    sweep = (pre, pre, interest, balance, 0.0)
    lines = _both(monkeypatch, pre, ds, np.array([-300.0]), np.zeros((1, 4)), np.zeros((1, 4)), 0.0, 1.10,
                  sweep)[route]
    k = 1 - 5 / balance[0, 1]
    np.testing.assert_allclose(_row(lines, "prepayment"), [0, 5, 0, 0], atol=1e-12)
    np.testing.assert_allclose(_row(lines, "debt_service"), [0, 100, 100 * k, 100 * k], rtol=1e-12)
    np.testing.assert_allclose(_row(lines, "equity_cash_flow"), [-300, 0, 150 - 100 * k, 150 - 100 * k], rtol=1e-12)
    np.testing.assert_allclose(_row(lines, "balance"), [0, k * balance[0, 1], k * balance[0, 2], 0], atol=1e-9)
    assert _row(lines, "cash_trapped") == [0.0] * 4


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.integers(2, 10), st.integers(0, 2**31 - 1), st.floats(0, 12), st.floats(0, 0.05), st.floats(0, 0.4))
def test_a_sweep_conserves_cash_and_repays_the_debt(years, seed, months, rate, tax_rate):
    """Every year: cash in = cash out with the prepayment among the uses; the debt outstanding
    is never above the schedule's and is zero at the end; the tax is the carry-forward tax of the swept interest;
    the two routes agree."""
    from lcoe.finance.tax import tax_with_carryforward
    rng = np.random.default_rng(seed)
    n = 5
    ds_sched = rng.uniform(20.0, 100.0, (1, years))
    interest, balance = _schedule_lines(ds_sched[0], 0.06)
    pre = np.hstack([np.zeros((n, 1)), rng.normal(110.0, 40.0, (n, years))])
    taxable = pre - rng.uniform(0, 50, (n, years + 1)) * (np.arange(years + 1) > 0)
    ds = np.hstack([np.zeros((1, 1)), ds_sched])
    a = wf.dsra_targets(ds_sched, months)
    args = (pre, ds, -np.full(n, 400.0), a, np.zeros((1, years + 1)), rate, 1.2,
            (pre, taxable, interest, balance, tax_rate))
    res = wf.run_rows(*args)
    from lcoe.finance import waterfall as w2
    saved, w2._kernels = w2._kernels, None
    try:
        arr = wf.run_rows(*args)
    finally:
        w2._kernels = saved
    for key in wf.LINES:
        np.testing.assert_allclose(res[key], arr[key], rtol=1e-12, atol=1e-9, err_msg=key)
    g = {key: v[:, 1:] for key, v in res.items()}
    cash_in = g["cfads"] + g["reserve_interest"] + g["dsra_draw"] + g["unpaid_debt_service"] + g["dsra_release"]
    cash_out = g["debt_service"] + g["dsra_topup"] + g["prepayment"] + g["distributions"]
    np.testing.assert_allclose(cash_in, cash_out, atol=1e-9)
    assert np.all(res["balance"][:, 1:] <= balance[:, 1:] + 1e-9) and np.all(np.abs(res["balance"][:, -1]) < 1e-9)
    np.testing.assert_allclose(g["tax"], tax_with_carryforward(taxable[:, 1:] - g["interest"], tax_rate), atol=1e-9)
    np.testing.assert_allclose(g["cfads"], pre[:, 1:] - g["tax"], atol=1e-9)


def test_the_demo_with_a_sweep_prepays_in_a_downside(demo_reserved):
    """Energy at 75 % with the debt locked: with the sweep the locked-up years prepay the debt,
    nothing is trapped, later debt service is lower than the schedule, and the outstanding debt
    at maturity is zero; the trial pass agrees with the array route."""
    from lcoe.analysis import montecarlo as mc
    from lcoe.finance.cashflow import Sample
    scn, case = demo_reserved
    swept = scn.with_overrides({"waterfall.cash_sweep": True})
    flows, m, _ = engine.evaluate(swept, sample=Sample(energy_factor=np.array([[0.75]])), schedule=case.schedule,
                                  energy=case.energy)
    w = flows.waterfall
    assert w["prepayment"][0].sum() > 0 and w["cash_trapped"][0].sum() == 0
    assert np.all(flows.debt_service[0] <= case.flows.debt_service[0] + 1e-6)
    assert abs(flows.balance[0, scn.finance.debt.tenor_years]) < 1e-6
    np.testing.assert_array_equal(flows.schedule.debt_service, case.schedule.debt_service)   # the lock stays
    base = engine.run(swept, breakeven=False)
    inputs, sample = mc.draw_block(swept, 200, mc._block_rng(4, 0), swept.lifetime)
    fused = mc.run_trials(swept, base, inputs, sample, fused=True)
    arrays = mc.run_trials(swept, base, inputs, sample, fused=False)
    for k in engine.WATERFALL_TRIAL_KEYS + ("equity_irr", "min_dscr", "llcr"):
        np.testing.assert_allclose(fused[k], arrays[k], rtol=1e-11, atol=1e-6, err_msg=k)
