"""The construction period: drawdown, funding, interest during construction (IDC), fees,
sources and uses, the partial first year (lcoe.finance.construction).

References: examples worked by hand (the arithmetic in each docstring) and the definitions
in the module notes.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from conftest import DEMO, plain_demo

from lcoe import engine
from lcoe.finance import construction as build
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError


def test_idc_of_an_equity_first_drawdown_by_hand():
    """Capex 1,000 over three quarters (shares 0.4, 0.4, 0.2), debt 600, interest 2 % a quarter
    (yearly 1.02^4 - 1), no fees, equity first. Equity is 400 + IDC. Q1: equity pays the 400;
    no debt, no interest. Q2: equity pays the IDC it still owes (X), debt the remaining 400 - X.
    Q3: interest 2 % x (400 - X); debt pays the 200 and that interest, ending at 600, so
    X = 0.02 (400 - X): X = 8 / 1.02 = 7.843137..."""
    f = build.fund(1000.0, 600.0, 0.0, 0.0, [0.4, 0.4, 0.2], build.quarters(9), 1.02 ** 4 - 1, 0.0, "equity_first")
    x = 8.0 / 1.02
    assert f.idc[0] == pytest.approx(x, rel=1e-10)
    np.testing.assert_allclose(f.idc_q[0], [0.0, 0.0, x], rtol=1e-10, atol=1e-12)
    np.testing.assert_allclose(f.equity_q[0], [400.0, x, 0.0], rtol=1e-10, atol=1e-9)
    np.testing.assert_allclose(f.debt_q[0], [0.0, 400.0 - x, 200.0 + x], rtol=1e-10, atol=1e-9)
    assert f.equity[0] == pytest.approx(400.0 + x, rel=1e-12)
    assert f.sources[0] == pytest.approx(f.uses[0], rel=1e-14)


def test_commitment_fee_and_upfront_fee_by_hand():
    """Capex 1,000 over two quarters (0.5, 0.5), debt 400, upfront fee 8 at close, commitment fee
    2 % a year (0.5 % a quarter), equity first. Close: equity pays the fee 8. Q1: 0.5 % of the 400
    undrawn = 2; equity pays 502. Q2: no debt was drawn at its start, so 2 again and no interest;
    equity pays its last 600 + 8 + 4 - 8 - 502 = 102 and the debt its 400. Uses 1,012."""
    f = build.fund(1000.0, 400.0, 8.0, 0.0, [0.5, 0.5], build.quarters(6), 0.08, 0.02, "equity_first")
    np.testing.assert_allclose(f.commitment_q[0], [2.0, 2.0])
    assert f.idc[0] == 0.0
    np.testing.assert_allclose(f.equity_q[0], [8.0 + 502.0, 102.0])
    np.testing.assert_allclose(f.debt_q[0], [0.0, 400.0])
    assert f.uses[0] == pytest.approx(1012.0) and f.equity[0] == pytest.approx(612.0)


def test_pro_rata_funds_every_use_at_the_gearing():
    f = build.fund(1000.0, 600.0, 9.0, 20.0, build.drawdown_shares("even", 12), build.quarters(12), 0.06, 0.005,
                   "pro_rata")
    g = f.debt[0] / f.uses[0]
    uses_q = f.debt_q[0] + f.equity_q[0]
    np.testing.assert_allclose(f.debt_q[0], g * uses_q, rtol=1e-9)
    assert f.debt_q[0].sum() == pytest.approx(600.0, rel=1e-12)
    assert f.idc[0] > 0 and f.uses[0] == pytest.approx(1000 + 9 + 20 + f.idc[0] + f.commitment_fee[0])


def test_the_profiles_and_quarters():
    """S-curve F(x) = 3x^2 - 2x^3 at 1/4, 1/2, 3/4: 0.15625, 0.5, 0.84375; 14 months are four
    quarters of 3 and one of 2; even shares follow the lengths."""
    np.testing.assert_allclose(build.drawdown_shares("s_curve", 12), [0.15625, 0.34375, 0.34375, 0.15625])
    np.testing.assert_array_equal(build.quarters(14), [3, 3, 3, 3, 2])
    np.testing.assert_allclose(build.drawdown_shares("even", 14), np.array([3, 3, 3, 3, 2]) / 14)


def test_dates_and_the_partial_first_year():
    """Close 2027-01-01 + 18 months = 2028-07-01; year 1 runs July to December: 6 / 12; a COD
    of 16 March has 9 months and 16/31 of March left: (9 + 16/31) / 12."""
    cod = build.add_months(dt.date(2027, 1, 1), 18)
    assert cod == dt.date(2028, 7, 1)
    assert build.operating_share(cod) == 0.5
    assert build.operating_share(dt.date(2027, 3, 16)) == pytest.approx((9 + 16 / 31) / 12)
    assert build.operating_share(dt.date(2027, 1, 1)) == 1.0
    assert build.period_ends(cod, 2) == ["2028-07-01", "2028-12-31", "2029-12-31"]
    assert build.add_months(dt.date(2027, 1, 31), 1) == dt.date(2027, 2, 28)


@pytest.fixture(scope="module")
def built():
    scn = plain_demo().with_overrides({"construction": {"financial_close": dt.date(2027, 1, 1), "months": 18,
                                                         "commitment_fee": 0.005},
                                        "reserves": {"dsra_months": 6}})
    return scn, engine.run(scn, breakeven=False)


def test_the_demo_with_a_construction_period(built):
    """Half a first year: energy and fixed O&M at half the full year's pace; the year's interest
    is for six months, opening x (1.055^0.5 - 1); the debt repaid by the end of the tenor; the
    sources and uses balance and the equity contribution at t = 0 is the equity of the table."""
    scn, case = built
    plain = engine.run(plain_demo(), breakeven=False)
    f, p = case.flows, plain.flows
    assert f.energy_mwh[0, 1] == pytest.approx(0.5 * p.energy_mwh[0, 1], rel=1e-12)
    np.testing.assert_allclose(f.energy_mwh[0, 2:], p.energy_mwh[0, 2:], rtol=1e-12)
    assert f.interest[0, 1] == pytest.approx(f.debt[0, 0] * (math.sqrt(1.055) - 1), rel=1e-12)
    assert abs(f.balance[0, scn.finance.debt.tenor_years]) < 1e-6
    su = case.sources_and_uses()
    assert su["balanced"] and su["commercial_operation"] == "2028-07-01"
    assert su["sources"]["equity"] == pytest.approx(-f.equity_cash_flow[0, 0], rel=1e-12)
    assert su["uses"]["interest_during_construction"] > 0 and su["uses"]["commitment_fee"] > 0
    # six months of debt service at the pace of year 1 (a half year): the whole of year 1's
    assert su["uses"]["dsra_initial"] == pytest.approx(f.debt_service[0, 1], rel=1e-12)
    rows = case.annual()
    assert rows[0]["period_end"] == "2028-07-01" and rows[-1]["period_end"] == "2052-12-31"


def test_monte_carlo_trials_pay_the_construction_equity(built):
    from lcoe.analysis import montecarlo as mc
    scn, case = built
    inputs, sample = mc.draw_block(scn, 200, mc._block_rng(3, 0), scn.lifetime)
    fused = mc.run_trials(scn, case, inputs, sample, fused=True)
    arrays = mc.run_trials(scn, case, inputs, sample, fused=False)
    for k in ("equity_irr", "equity_npv", "min_dscr", "lcoe_nominal_per_mwh", "lockup_any"):
        np.testing.assert_allclose(fused[k], arrays[k], rtol=1e-11, atol=1e-6, err_msg=k)


def test_a_drawdown_that_does_not_fit_is_refused():
    with pytest.raises(ScenarioError, match=r"construction.drawdown = .*add up to 1"):
        plain_demo().with_overrides({"construction": {"financial_close": dt.date(2027, 1, 1), "months": 6,
                                                       "drawdown": [0.5, 0.4]}})
    with pytest.raises(ScenarioError, match=r"construction.financial_close = '2027-01-01': must be a date"):
        plain_demo().with_overrides({"construction": {"financial_close": "2027-01-01", "months": 6}})


def test_the_llcr_runs_on_the_debts_clock(built):
    """Sculpted at 1.30x on the sizing case, every tenor year's DSCR is 1.30, so the LLCR (PV of
    CFADS over PV of debt service, at the debt rate on the same clock) is 1.30 too, with a half
    first year as without one."""
    from lcoe.analysis import lender
    scn, case = built
    r = lender.run_case(scn, case, lender.LenderCase("sizing", "sizing", energy_case="p90_1yr"))
    assert r.metrics["min_dscr"] == pytest.approx(1.30, rel=1e-9)
    assert r.metrics["llcr"] == pytest.approx(1.30, rel=1e-9)


def test_the_lender_demo_prints_every_new_table():
    """`lcoe run assumptions/tallowmere_ridge_lender.toml` shows the sources and uses, the cash
    waterfall and the lender cases (its own case among them); the JSON has the blocks."""
    import json
    import subprocess
    import sys
    from conftest import ROOT
    path = ROOT / "assumptions" / "tallowmere_ridge_lender.toml"
    out = subprocess.run([sys.executable, "-m", "lcoe", "run", str(path), "--trials", "500"], capture_output=True,
                         text=True, check=True).stdout
    for title in ("Sources and uses of funds", "Cash waterfall", "Lender cases", "P(lock-up in any year)",
                  "O&M +20 %, P90 10-yr energy"):
        assert title in out, title
    d = json.loads(subprocess.run([sys.executable, "-m", "lcoe", "run", str(path), "--trials", "500", "--json"],
                                  capture_output=True, text=True, check=True).stdout)
    assert d["sources_and_uses"]["balanced"] and d["sources_and_uses"]["construction_months"] == 18
    assert "om_plus_20_p90_10yr" in d["lender_cases"] and "prob_dsra_drawn" in d["montecarlo"]
    assert d["annual"][1]["period_end"] == "2028-12-31"


def test_a_locked_debt_keeps_its_first_year(built):
    """The base's schedule was sized with a half first year: a scenario whose first year differs
    cannot meet it, and a lender case cannot move the construction period."""
    scn, case = built
    with pytest.raises(ScenarioError, match=r"^construction: must give the locked debt's first operating year"):
        engine.run(plain_demo(), debt=case)
    other = scn.with_overrides({"construction.months": 12})
    with pytest.raises(ScenarioError, match="construction: must give"):
        engine.run(other, debt=case)
    import tomllib
    raw = tomllib.loads((DEMO.parent / "tallowmere_ridge_lender.toml").read_text())
    raw["lender_cases"]["late"] = {"construction.months": 24}
    with pytest.raises(ScenarioError, match=r"lender_cases.late.construction.months = 24: a lender case cannot"):
        sc.from_dict(raw, source="x.toml", base_dir=DEMO.parent)


@pytest.mark.parametrize("order", ["equity_first", "pro_rata"])
def test_the_compiled_funding_loop_is_the_array_one(monkeypatch, order):
    rng = np.random.default_rng(1)
    capex = rng.uniform(500, 1500, 50)
    debt = capex * rng.uniform(0.3, 0.8, 50)
    shares, lengths = build.drawdown_shares("s_curve", 20), build.quarters(20)
    args = (capex, debt, 0.01 * debt, rng.uniform(0, 30, 50), shares, lengths, 0.06, rng.uniform(0, 0.01, 50), order)
    compiled = build.equity_rows(*args)
    np.testing.assert_allclose(compiled, build.fund(*args).equity, rtol=1e-12)
    monkeypatch.setattr(build, "_kernels", None)
    np.testing.assert_array_equal(build.equity_rows(*args), build.fund(*args).equity)


def test_the_workbook_refuses_a_cash_sweep_in_one_line(tmp_path):
    """The workbook shows the construction period, reserves and lock-up, not yet a cash sweep: one line naming
    the key, exit 2, nothing written."""
    import subprocess
    import sys
    from conftest import ROOT
    src = tmp_path / "sweep.toml"
    text = (ROOT / "assumptions" / "tallowmere_ridge_lender.toml").read_text()
    text = text.replace('../demo/', str(ROOT / "demo") + "/").replace("lockup_dscr = 1.10", "lockup_dscr = 1.10\ncash_sweep = true")
    src.write_text(text)
    out = tmp_path / "book.xlsx"
    r = subprocess.run([sys.executable, "-m", "lcoe", "run", str(src), "--trials", "0", "--workbook", str(out)],
                       capture_output=True, text=True)
    assert r.returncode == 2 and not out.exists(), r.stderr
    assert "waterfall.cash_sweep = true: the workbook does not yet show this part of the lender structure" in r.stderr.lower()
