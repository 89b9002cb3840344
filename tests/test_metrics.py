"""Metrics: NPV and IRR against numpy-financial, the capital recovery factor, the
fixed-charge-rate identity for LCOE, DSCR, LLCR and payback."""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from conftest import make_raw, make_scenario
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from lcoe import engine as model
from lcoe.finance import metrics as mt


def conventional_flows(max_len=41):
    """One outflow at t = 0, then inflows (each 0 or 1e-6 .. 1.5 times the outflow, at least one
    above 1 %). Subnormal inflows are left out: numpy-financial's polynomial roots fail on them."""
    return st.tuples(
        st.floats(1.0, 1e9),
        st.lists(st.one_of(st.just(0.0), st.floats(1e-6, 1.5)), min_size=1, max_size=max_len - 1).filter(
            lambda xs: max(xs) >= 0.01),
    ).map(lambda t: [-t[0]] + [t[0] * x for x in t[1]])


@settings(max_examples=200, deadline=None)
@given(conventional_flows(), st.floats(-0.5, 0.5))
def test_npv_matches_numpy_financial(flows, rate):
    """NPV with the first value at t = 0: numpy_financial.npv."""
    scale = sum(abs(c) * (1.0 + rate) ** -t for t, c in enumerate(flows))
    assert float(mt.npv(rate, flows)) == pytest.approx(npf.npv(rate, flows), abs=1e-12 * scale)


@settings(max_examples=200, deadline=None)
@given(conventional_flows())
def test_irr_matches_numpy_financial_and_zeroes_the_npv(flows):
    """IRR against numpy_financial.irr; NPV at the IRR is zero (definition of the IRR)."""
    rates, reasons = mt.irr([flows])
    r = float(rates[0])
    ref = npf.irr(flows)
    assert reasons == []
    assert r == pytest.approx(ref, abs=1e-8)
    terms = np.array(flows) * (1.0 + r) ** -np.arange(len(flows))
    assert abs(terms.sum()) <= 1e-9 * np.abs(terms).sum()


@settings(max_examples=40, deadline=None)
@given(st.integers(2, 31).flatmap(lambda n: st.lists(conventional_flows().filter(lambda f: len(f) >= 2).map(
    lambda f: (f + [0.0] * n)[:n]).filter(lambda f: max(f[1:]) > 0), min_size=1, max_size=30)))
def test_batch_irr_rows_match_numpy_financial(rows):
    """The vectorised IRR of a whole batch equals numpy_financial.irr row by row."""
    rates, reasons = mt.irr(np.array(rows))
    assert reasons == []
    assert_allclose(rates, [npf.irr(r) for r in rows], atol=1e-8)


def test_rows_without_a_sign_change_give_nan_with_a_reason():
    rows = np.array([[-100.0, 50.0, 60.0], [100.0, 10.0, 0.0], [-1.0, -2.0, -3.0], [0.0, 0.0, 0.0]])
    rates, reasons = mt.irr(rows)
    assert rates[0] == pytest.approx(npf.irr(rows[0]), abs=1e-10)
    assert np.isnan(rates[1:]).all()
    assert reasons == [(1, "no sign change in the cash flows"), (2, "no sign change in the cash flows"),
                       (3, "no sign change in the cash flows")]


def test_a_scenario_without_project_irr_reports_null_with_a_reason():
    """A zero price leaves only outflows: IRR null, the reason in the warnings."""
    scn = make_scenario(revenue__ppa_price_per_mwh=0.0)
    case = model.run(scn, breakeven=False)
    assert case.metrics["project_irr"] is None
    assert "project irr is null: no sign change in the cash flows" in case.warnings


def _crf(rate, years):
    """Capital recovery factor CRF = i (1 + i)^n / ((1 + i)^n - 1) (engineering-economics interest tables)."""
    i = np.asarray(rate, float)
    g = (1.0 + i) ** years
    return np.where(i == 0, 1.0 / years, i * g / np.where(i == 0, 1.0, g - 1.0))


@pytest.mark.parametrize("rate, years, crf", [(0.10, 10, 0.16275), (0.08, 18, 0.10670), (0.07, 20, 0.09439)])
def test_capital_recovery_factor_table(rate, years, crf):
    """Source: engineering-economics interest tables (e.g. ASHRAE Pocket Guide), tolerance 1e-5;
    also -numpy_financial.pmt(i, n, 1)."""
    assert float(_crf(rate, years)) == pytest.approx(crf, abs=1e-5)
    assert float(_crf(rate, years)) == pytest.approx(-npf.pmt(rate, years, 1.0), rel=1e-12)


def test_capital_recovery_factor_at_zero_rate_is_one_over_n():
    assert float(_crf(0.0, 25)) == pytest.approx(0.04, rel=1e-15)


def test_fixed_charge_rate_identity():
    """With constant energy, no escalation, no inflation, no tax, no debt and no decommissioning,
    LCOE = (CRF(r, L) capex + yearly O&M) / yearly energy.

    Source: US national-lab "Cost of Wind Energy Review", Eq. 1 (from memory), an identity to 1e-9.
    """
    raw = make_raw(operations__availability_first_year=0.97, operations__availability_mature=0.97,
                   maintenance__escalation=0.0, finance__inflation=0.0, finance__tax_rate=0.0,
                   capex__decommissioning_per_kw=0.0, capex__salvage_per_kw=0.0, finance__discount_rate=0.07)
    del raw["finance"]["debt"]
    scn = make_scenario(raw)
    case = model.run(scn, breakeven=False)
    f = case.flows
    e = f.energy_mwh[0, 1:]
    om = f.opex[0, 1:]
    assert_allclose(e, e[0], rtol=1e-14)
    assert_allclose(om, om[0], rtol=1e-14)
    capex = f.capex_total[0, 0]
    crf = float(_crf(0.07, 20))
    expected = (crf * capex + om[0]) / e[0]
    assert case.metrics["lcoe_nominal_per_mwh"] == pytest.approx(expected, rel=1e-9)
    assert case.metrics["lcoe_real_per_mwh"] == pytest.approx(expected, rel=1e-9)   # inflation 0
    # the same in the units of the review: (FCR * CapEx[$/kW] + OpEx[$/kW-yr]) / (8.76 * NCF)
    kw = scn.plant_kw
    ncf = e[0] / (kw * 8.76)
    assert (crf * capex / kw + om[0] / kw) / (8.76 * ncf) == pytest.approx(expected, rel=1e-12)


def test_real_rate_is_the_fisher_relation():
    """(1 + r) / (1 + inflation) - 1 (Fisher relation)."""
    assert float(mt.real_rate(0.065, 0.02)) == pytest.approx(1.065 / 1.02 - 1.0, rel=1e-15)


def test_lcoe_real_discounts_energy_at_the_real_rate():
    """lcoe_real: costs at the nominal rate over energy at the real rate (the conventions),
    checked with numpy_financial.npv."""
    scn = make_scenario()
    f, m, _ = model.evaluate(scn)
    cost = f.capex_total[0, 0] + npf.npv(0.07, f.opex[0] + f.decommissioning[0])
    real = 1.07 / 1.02 - 1
    assert m["lcoe_nominal_per_mwh"][0] == pytest.approx(cost / npf.npv(0.07, f.energy_mwh[0]), rel=1e-12)
    assert m["lcoe_real_per_mwh"][0] == pytest.approx(cost / npf.npv(real, f.energy_mwh[0]), rel=1e-12)
    assert m["lcoe_real_per_mwh"][0] < m["lcoe_nominal_per_mwh"][0]


def test_dscr_llcr_and_payback_by_hand():
    dscr = np.array([[np.nan, 1.4, 1.2, 1.6, np.nan], [np.nan] * 5])
    mn, avg = mt.dscr_stats(dscr)
    assert mn[0] == pytest.approx(1.2) and avg[0] == pytest.approx(1.4)
    assert np.isnan(mn[1]) and np.isnan(avg[1])
    # LLCR = PV at the interest rate of CFADS over the tenor / debt: (110/1.1 + 121/1.21) / 150 = 4/3
    cfads = np.array([[0.0, 110.0, 121.0, 500.0]])
    ds = np.array([[0.0, 80.0, 80.0, 0.0]])
    assert float(mt.llcr(cfads, ds, np.array([[150.0]]), 0.1)[0]) == pytest.approx(4 / 3, rel=1e-12)
    # cumulative -100, -60, -10, +30: the first non-negative year is 3
    assert mt.payback_year(np.array([[-100.0, 40.0, 50.0, 40.0]]))[0] == 3
    assert np.isnan(mt.payback_year(np.array([[-100.0, 40.0, 50.0]]))[0])


def test_metrics_of_the_demo_against_numpy_financial(plain_demo_scenario):
    """Project and equity NPV / IRR of the demo's own flows with numpy-financial; LLCR and
    min DSCR from the yearly lines."""
    f, m, _ = model.evaluate(plain_demo_scenario)
    assert m["project_npv"][0] == pytest.approx(npf.npv(0.065, f.project_cash_flow[0]), rel=1e-12)
    assert m["equity_npv"][0] == pytest.approx(npf.npv(0.10, f.equity_cash_flow[0]), rel=1e-12)
    assert m["project_irr"][0] == pytest.approx(npf.irr(f.project_cash_flow[0]), abs=1e-10)
    assert m["equity_irr"][0] == pytest.approx(npf.irr(f.equity_cash_flow[0]), abs=1e-10)
    on = f.debt_service[0] > 0
    assert m["min_dscr"][0] == pytest.approx((f.cfads[0, on] / f.debt_service[0, on]).min(), rel=1e-12)
    pv = npf.npv(0.055, np.where(on, f.cfads[0], 0.0))
    assert m["llcr"][0] == pytest.approx(pv / f.debt[0, 0], rel=1e-12)


def test_flows_with_two_irrs_give_the_one_closest_to_zero():
    """-100, +230, -132 has two IRRs, 10 % and 20 % (check: -100 + 230/1.1 - 132/1.1^2 = 0 and
    -100 + 230/1.2 - 132/1.2^2 = 0, by hand); numpy-financial reports the one closest to zero,
    and so does the engine, compiled and not. The other rows are numpy-financial's own
    docstring examples (0.0886 and -0.0833 to 4 decimals)."""
    rows = [[-100.0, 230.0, -132.0, 0.0, 0.0], [-5.0, 10.5, 1.0, -8.0, 1.0], [-100.0, 100.0, 0.0, -7.0, 0.0]]
    want = [0.10, 0.0886, -0.0833]
    compiled, _ = mt.irr(rows, guess=0.18)
    assert compiled[0] == pytest.approx(0.10, abs=1e-12)
    assert_allclose(compiled, [npf.irr(r) for r in rows], atol=1e-12)
    assert_allclose(compiled, want, atol=5e-5)
    saved, mt._kernels = mt._kernels, None
    try:
        plain, _ = mt.irr(rows, guess=0.18)
    finally:
        mt._kernels = saved
    assert_allclose(plain, compiled, atol=1e-12)


def end_of_life_flows(max_len=30):
    """An outflow, inflows, then a closing outflow (decommissioning) and perhaps a bad year in
    between: two or four sign changes. Tiny closing values are left out: numpy-financial's
    polynomial roots lose their accuracy, or fail, when the last coefficient is near zero."""
    return st.tuples(
        st.floats(1.0, 1e6),
        st.lists(st.floats(0.02, 0.4), min_size=3, max_size=max_len - 2),
        st.floats(1e-3, 1.5), st.one_of(st.just(0.0), st.floats(1e-3, 0.5)), st.integers(1, 100),
    ).map(lambda t: [-t[0]] + [t[0] * x if i != t[4] % len(t[1]) else -t[0] * t[3] for i, x in enumerate(t[1])]
          + [-t[0] * t[2]])


@settings(max_examples=300, deadline=None)
@given(end_of_life_flows())
def test_irr_of_flows_with_several_sign_changes_matches_numpy_financial(flows):
    """Where numpy-financial finds an IRR in -99 % .. 1000 %, the engine gives the same one."""
    ref = npf.irr(flows)
    rate = float(mt.irr([flows])[0][0])
    if np.isfinite(ref) and -0.99 <= ref <= 10.0:
        assert rate == pytest.approx(ref, abs=1e-9)
