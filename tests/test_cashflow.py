"""The yearly engine: depreciation, tax with loss carry-forward, sculpted debt, a hand-worked
three-year case, and batches that match single runs."""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest
from conftest import make_raw, make_scenario
from hypothesis import given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose

from lcoe import engine as model
from lcoe.finance import tax
from lcoe.finance.cashflow import Sample
from lcoe.inputs import scenario as sc

# --------------------------------------------------------------------------- depreciation

# US IRS Publication 946, Table A-1 (GDS, half-year convention), percent of the basis per year.
PUB946_A1_5YR = [20.00, 32.00, 19.20, 11.52, 11.52, 5.76]
PUB946_A1_7YR = [14.29, 24.49, 17.49, 12.49, 8.93, 8.92, 8.93, 4.46]


@pytest.mark.parametrize("method, table", [("macrs_5", PUB946_A1_5YR), ("macrs_7", PUB946_A1_7YR)])
def test_macrs_shares_equal_publication_946_table_a1(method, table):
    """Source: US IRS Publication 946, Table A-1 (tolerance 1e-4)."""
    shares = tax.depreciation_shares(method, 20, 25)
    assert_allclose(shares[:len(table)], np.array(table) / 100.0, atol=1e-4)
    assert_allclose(shares[len(table):], 0.0, atol=1e-15)


def _macrs_from_the_method(n, factor):
    """GDS MACRS rates built from their definition in IRS Publication 946: declining balance at
    ``factor`` / n, switching to straight line over the remaining recovery period when that is
    larger, half-year convention (half a year's depreciation in year 1 and in year n + 1)."""
    book, out = 1.0, []
    for y in range(1, n + 2):
        if y == n + 1:
            out.append(book)
            break
        remaining = n if y == 1 else n + 1.5 - y
        share_of_year = 0.5 if y == 1 else 1.0
        db = book * factor / n * share_of_year
        sl = book / remaining * share_of_year
        dep = max(db, sl)
        out.append(dep)
        book -= dep
    return np.array(out)


@pytest.mark.parametrize("method, n, factor", [("macrs_5", 5, 2.0), ("macrs_7", 7, 2.0),
                                               ("macrs_15", 15, 1.5), ("macrs_20", 20, 1.5)])
def test_macrs_tables_follow_the_publication_946_method(method, n, factor):
    """All four tables against the method of IRS Publication 946 (200 % DB for 5 and 7 years,
    150 % DB for 15 and 20 years, switch to straight line, half-year convention); the table is
    printed rounded, hence 1e-4."""
    shares = tax.depreciation_shares(method, 20, 40)
    assert_allclose(shares[:n + 1], _macrs_from_the_method(n, factor), atol=1e-4)
    assert shares.sum() == pytest.approx(1.0, abs=1e-12)


def test_straight_line_and_double_declining_balance_by_hand():
    """Straight line 1/N; declining balance at 2/N switching to straight line: for N = 5 the
    textbook sequence 40 %, 24 %, 14.4 %, 10.8 %, 10.8 % (computed by hand from the method)."""
    assert_allclose(tax.depreciation_shares("straight_line", 4, 6), [0.25] * 4 + [0, 0], atol=1e-15)
    assert_allclose(tax.depreciation_shares("declining_balance", 5, 5), [0.40, 0.24, 0.144, 0.108, 0.108],
                    atol=1e-12)


@pytest.mark.parametrize("method", ["straight_line", "declining_balance", "macrs_5", "macrs_7", "macrs_15",
                                    "macrs_20"])
@pytest.mark.parametrize("years, lifetime", [(20, 25), (20, 12), (5, 3), (7, 30), (1, 1), (25, 25)])
def test_every_method_depreciates_exactly_the_base(method, years, lifetime):
    """Whatever the method and the life, the shares sum to one: the whole base, no more.
    A life shorter than the schedule writes the rest off in year L (README convention)."""
    shares = tax.depreciation_shares(method, years, lifetime)
    assert shares.shape == (lifetime,)
    assert shares.sum() == pytest.approx(1.0, abs=1e-12)
    assert np.all(shares >= -1e-15)


def test_depreciation_row_in_the_engine_is_the_capex_times_the_shares():
    scn = make_scenario(finance__depreciation="macrs_7")
    flows, _, _ = model.evaluate(scn)
    capex = flows.capex_total[0, 0]
    assert flows.depreciation[0, 0] == 0.0
    assert_allclose(flows.depreciation[0, 1:9], capex * np.array(PUB946_A1_7YR) / 100.0, rtol=2e-4)
    assert flows.depreciation[0].sum() == pytest.approx(capex, rel=1e-12)


# --------------------------------------------------------------------------- tax

def _tax_loop(taxable, rate):
    """Plain-Python reference: losses carried forward without limit, no negative tax."""
    pool, out = 0.0, []
    for x in taxable:
        if x < 0:
            pool += -x
            out.append(0.0)
        else:
            used = min(pool, x)
            pool -= used
            out.append(rate * (x - used))
    return out


@settings(max_examples=300, deadline=None)
@given(st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=1, max_size=40), st.floats(0.0, 0.6))
def test_tax_with_carryforward_matches_a_plain_loop(taxable, rate):
    got = tax.tax_with_carryforward(np.array(taxable), rate)
    assert_allclose(got, _tax_loop(taxable, rate), rtol=1e-9, atol=1e-6)


@settings(max_examples=50, deadline=None)
@given(st.integers(1, 30).flatmap(lambda n: st.lists(
    st.lists(st.floats(-1e6, 1e6, allow_nan=False), min_size=n, max_size=n), min_size=1, max_size=8)))
def test_tax_with_carryforward_by_rows(rows):
    got = tax.tax_with_carryforward(np.array(rows), 0.25)
    for g, r in zip(got, rows):
        assert_allclose(g, _tax_loop(r, 0.25), rtol=1e-9, atol=1e-6)


def test_tax_carryforward_small_case_by_hand():
    # losses 100 then 50 build a pool of 150; 80 uses 80 of it; 120 uses the last 70 and 50 is taxed at 30 %
    assert_allclose(tax.tax_with_carryforward(np.array([-100.0, -50.0, 80.0, 120.0]), 0.3), [0, 0, 0, 15.0])


# --------------------------------------------------------------------------- debt

def _flat(**updates):
    """Constant energy, constant price and O&M, no tax, no decommissioning: flat CFADS."""
    base = dict(operations__availability_first_year=0.97, operations__availability_mature=0.97,
                maintenance__escalation=0.0, finance__inflation=0.0, finance__tax_rate=0.0,
                finance__debt__max_gearing=1.0, finance__debt__sizing_case="p50")
    base.update(updates)
    return make_scenario(**base)


def test_flat_cfads_gives_an_annuity():
    """With flat CFADS the sculpted debt service is level: an annuity, numpy_financial.pmt;
    interest and principal follow numpy_financial.ipmt / ppmt."""
    scn = _flat()
    flows, _, _ = model.evaluate(scn)
    s = flows.schedule
    cf = s.sizing_cfads[0]
    assert_allclose(cf, cf[0], rtol=1e-12)                # the premise: flat CFADS
    debt, i, n = float(s.debt[0, 0]), 0.05, 15
    pmt = -npf.pmt(i, n, debt)
    ds = flows.debt_service[0, 1:]
    assert_allclose(ds[:n], pmt, rtol=1e-10)
    assert_allclose(ds[n:], 0.0, atol=1e-9)
    assert pmt == pytest.approx(cf[0] / 1.3, rel=1e-10)
    per = np.arange(1, n + 1)
    assert_allclose(flows.interest[0, 1:n + 1], -npf.ipmt(i, per, n, debt), rtol=1e-9)
    assert_allclose(flows.principal[0, 1:n + 1], -npf.ppmt(i, per, n, debt), rtol=1e-9)
    assert abs(flows.balance[0, n]) <= 1e-6 * debt
    assert not s.gearing_bound[0, 0]


def test_present_value_of_debt_service_is_the_debt(plain_demo_scenario):
    """PV at the interest rate of the debt service equals the debt (numpy_financial.npv), here on
    the demo scenario with tax, escalation and a P90 sizing case; the balance ends at zero."""
    flows, _, _ = model.evaluate(plain_demo_scenario)
    debt = flows.debt[0, 0]
    assert debt > 0
    assert npf.npv(0.055, flows.debt_service[0]) == pytest.approx(debt, rel=1e-10)
    assert abs(flows.balance[0, 16]) <= 1e-6 * debt
    assert_allclose(flows.interest[0, 1:] + flows.principal[0, 1:], flows.debt_service[0, 1:], rtol=1e-12)


def test_sizing_case_meets_the_target_dscr_in_every_tenor_year(demo_scenario):
    """DS_t = CFADS_t / target_dscr in the sizing case (the sculpting definition), with the
    interest-tax circularity converged: re-running the sizing case against the schedule fixed
    at close gives the same DSCR. The P50 case, with more energy, covers at least the target."""
    scn = demo_scenario
    flows, _, _ = model.evaluate(scn)
    s = flows.schedule
    tenor, target = 16, 1.30
    assert not s.gearing_bound[0, 0]
    assert_allclose(s.sizing_cfads[0, :tenor] / s.debt_service[0, :tenor], target, rtol=1e-12)
    factor = flows.case_factors["p90_1yr"][0, 0]
    assert factor < 1.0
    again, _, _ = model.evaluate(scn, sample=Sample(energy_factor=np.array([[factor]])), schedule=s)
    assert_allclose(again.dscr[0, 1:tenor + 1], target, rtol=1e-9)
    assert np.all(flows.dscr[0, 1:tenor + 1] > target)
    assert np.all(np.isnan(flows.dscr[0, tenor + 1:]))


def test_gearing_cap_binds_when_it_should():
    """Debt = min(PV of sculpted DS, max_gearing * capex); when the cap binds, debt service is
    scaled down and the sizing-case DSCR rises above the target (the conventions)."""
    free, _, _ = model.evaluate(_flat(finance__tax_rate=0.25))
    capex = free.capex_total[0, 0]
    uncapped = free.debt[0, 0]
    share = uncapped / capex
    assert not free.schedule.gearing_bound[0, 0]
    loose, _, _ = model.evaluate(_flat(finance__tax_rate=0.25, finance__debt__max_gearing=share + 0.01))
    assert not loose.schedule.gearing_bound[0, 0]
    assert loose.debt[0, 0] == pytest.approx(uncapped, rel=1e-9)
    tight, _, _ = model.evaluate(_flat(finance__tax_rate=0.25, finance__debt__max_gearing=share - 0.05))
    s = tight.schedule
    assert s.gearing_bound[0, 0]
    assert tight.debt[0, 0] == pytest.approx((share - 0.05) * capex, rel=1e-12)
    ratio = s.sizing_cfads[0, :15] / s.debt_service[0, :15]
    assert np.all(ratio > 1.3 + 1e-6)
    # scaled-down sculpting keeps a constant sizing-case DSCR; with the interest-tax circularity
    # converged, the sizing case run against the schedule fixed at close shows it too
    again, _, _ = model.evaluate(_flat(finance__tax_rate=0.25, finance__debt__max_gearing=share - 0.05),
                                 schedule=s)
    assert_allclose(again.dscr[0, 1:16], ratio[0], rtol=1e-9)
    assert npf.npv(0.05, tight.debt_service[0]) == pytest.approx(tight.debt[0, 0], rel=1e-10)


def test_upfront_fee_and_equity_at_close():
    """Equity at t = 0 pays capex + fee - debt; the fee is a fraction of the debt (conventions)."""
    scn = make_scenario(finance__debt__upfront_fee=0.02)
    flows, _, _ = model.evaluate(scn)
    debt = flows.debt[0, 0]
    assert flows.fee[0, 0] == pytest.approx(0.02 * debt, rel=1e-12)
    assert flows.equity_cash_flow[0, 0] == pytest.approx(-(flows.capex_total[0, 0] + 0.02 * debt - debt), rel=1e-12)


def test_all_equity_has_no_debt_lines():
    raw = make_raw()
    del raw["finance"]["debt"]
    flows, m, _ = model.evaluate(make_scenario(raw))
    assert flows.debt[0, 0] == 0.0
    assert_allclose(flows.debt_service, 0.0)
    assert_allclose(flows.equity_cash_flow, flows.project_cash_flow, rtol=1e-12)
    assert np.isnan(m["min_dscr"][0]) and np.isnan(m["llcr"][0])


# --------------------------------------------------------------------------- a hand-worked three-year case

@pytest.fixture
def three_year(tmp_path, monkeypatch):
    """One 1,000 kW turbine whose (invented) curve gives 1,000 kW at every speed from 0 to 40 m/s,
    so the gross energy is 1,000 kW * 8760 h = 8,760 MWh whatever the Weibull climate.

    No rotor takes power from still air (Betz), so a curve file saying this is refused; the
    curve is handed to the engine directly, past the file checks."""
    from lcoe.physics import site
    from lcoe.physics.turbine import PowerCurve

    flat = PowerCurve("table", 1000.0, 60.0, speed_mps=np.array([0.0, 40.0]), power_kw=np.array([1000.0, 1000.0]))
    monkeypatch.setattr(site, "curve_from", lambda scn: flat)
    raw = {
        "schema_version": 1,
        "project": {"name": "Three years", "lifetime_years": 3, "turbines": 1},
        "wind": {"height_m": 80.0, "mean_speed_mps": 7.0, "weibull_shape": 2.0, "shear_exponent": 0.0,
                 "air_density_kgm3": 1.225},
        "turbine": {"hub_height_m": 80.0, "rated_power_kw": 1000.0, "rotor_diameter_m": 60.0,
                    "power_curve": "flat.csv"},
        "operations": {"availability_first_year": 0.9, "availability_mature": 1.0, "degradation_per_year": 0.1},
        "maintenance": {"fixed_per_kw_year": 20.0, "insurance_per_kw_year": 5.0, "variable_per_mwh": 2.0,
                        "land_lease_share_of_revenue": 0.05, "escalation": 0.1,
                        "component": [{"name": "gearbox", "failure_rate_per_turbine_year": 0.1,
                                       "replacement_cost": 50_000.0, "downtime_days": 36.5}],
                        "overhaul": [{"name": "blades", "year": 2, "cost_per_turbine": 10_000.0}]},
        "capex": {"turbine_per_kw": 500.0, "balance_of_plant_per_kw": 100.0, "grid_connection": 50_000.0,
                  "development": 50_000.0, "contingency": 0.1, "decommissioning_per_kw": 30.0,
                  "salvage_per_kw": 10.0},
        "revenue": {"ppa_price_per_mwh": 50.0, "ppa_term_years": 2, "ppa_escalation": 0.1,
                    "merchant_price_per_mwh": 40.0, "merchant_escalation": 0.0,
                    "production_credit_per_mwh": 10.0, "production_credit_years": 1},
        "finance": {"inflation": 0.0, "discount_rate": 0.08, "equity_target_return": 0.12, "tax_rate": 0.3,
                    "depreciation": "declining_balance", "depreciation_years": 3,
                    "debt": {"sizing_case": "p50", "target_dscr": 1.25, "max_gearing": 0.9, "tenor_years": 1,
                             "interest_rate": 0.1, "upfront_fee": 0.02}},
    }
    return sc.from_dict(raw, source="three.toml", base_dir=tmp_path)


def test_hand_worked_three_year_case(three_year):
    """Every yearly row of a three-year project, worked out by hand from the conventions."""
    case = model.run(three_year, breakeven=False)
    rows = case.annual()

    # Energy: gross 8760 MWh; no losses; expected downtime D = 0.1 * 36.5 / 365 = 0.01
    # E1 = 8760 * 0.9 (first-year availability) * 0.99               = 7805.16
    # E2 = 8760 * 1.0 * 0.99 * 0.9 (one year of 10 % degradation)     = 7805.16
    # E3 = 8760 * 1.0 * 0.99 * 0.81                                   = 7024.644
    energy = [0.0, 7805.16, 7805.16, 7024.644]
    # Price: PPA 50 escalating 10 % for two years, then merchant 40 flat: 55, 60.5, 40
    price = [0.0, 55.0, 60.5, 40.0]
    # Revenue = E * (price + credit); credit 10 / MWh in year 1 only
    # R1 = 7805.16 * 65 = 507,335.4; R2 = 7805.16 * 60.5 = 472,212.18; R3 = 7024.644 * 40 = 280,985.76
    revenue = [0.0, 507_335.4, 472_212.18, 280_985.76]
    # O&M_t = [(20 + 5) * 1000 + 0.1 * 1 * 50,000 + overhaul + 2 * E_t] * 1.1^t + 0.05 * R_t
    # t1: (25,000 + 5,000 + 15,610.32) * 1.1 + 25,366.77          = 75,538.122
    # t2: (25,000 + 5,000 + 10,000 + 15,610.32) * 1.21 + 23,610.609 = 90,899.0962
    # t3: (25,000 + 5,000 + 14,049.288) * 1.331 + 14,049.288        = 72,678.8903...
    opex = [0.0,
            (25_000 + 5_000 + 2 * 7805.16) * 1.1 + 0.05 * 507_335.4,
            (25_000 + 5_000 + 10_000 + 2 * 7805.16) * 1.21 + 0.05 * 472_212.18,
            (25_000 + 5_000 + 2 * 7024.644) * 1.331 + 0.05 * 280_985.76]
    # Capex (500 + 100) * 1000 + 50,000 + 50,000 = 700,000, contingency 10 % -> 770,000 at t = 0
    capex = 770_000.0
    # Decommissioning (30 - 10) * 1000 * 1.1^3 = 26,620 at t = 3
    decom = 26_620.0
    # Declining balance, 3 years, rate 2/3: 2/3, then max(2/9, (1/3)/2) = 2/9, then the rest 1/9
    dep = [0.0, capex * 2 / 3, capex * 2 / 9, capex / 9]                 # 513,333.33; 171,111.11; 85,555.56
    pre_tax = [revenue[t] - opex[t] - (decom if t == 3 else 0.0) for t in range(4)]
    # pre-tax: 431,797.278; 381,313.0838; 181,686.8697

    # Debt, one-year tenor, sized on P50 at DSCR 1.25. Year 1 is a tax loss whatever the interest
    # (431,797 - 513,333 < 0), so CFADS1 = 431,797.278 and DS1 = 431,797.278 / 1.25 = 345,437.8224.
    ds1 = pre_tax[1] / 1.25
    debt = ds1 / 1.1                                                       # 314,034.384 (gearing 41 %)
    interest1 = 0.1 * debt                                                 # 31,403.4384
    fee = 0.02 * debt                                                      # 6,280.69
    # Levered taxable income: t1 431,797.278 - 513,333.333 - 31,403.438 = -112,939.494 (a loss, no tax)
    #                         t2 381,313.084 - 171,111.111 = 210,201.973; less the loss: 97,262.479 * 30 %
    #                         t3 181,686.870 - 85,555.556  = 96,131.314 * 30 %
    t1 = pre_tax[1] - dep[1] - interest1
    t2 = pre_tax[2] - dep[2]
    t3 = pre_tax[3] - dep[3]
    tax = [0.0, 0.0, 0.3 * (t2 + t1), 0.3 * t3]                            # 0; 29,178.74; 28,839.39
    # Unlevered tax (project cash flow): t1 431,797.278 - 513,333.333 = -81,536.055;
    # t2 (210,201.973 - 81,536.055) * 30 % = 38,599.78; t3 96,131.314 * 30 % = 28,839.39
    tax_u = [0.0, 0.0, 0.3 * (t2 + pre_tax[1] - dep[1]), 0.3 * t3]
    cfads = [0.0] + [pre_tax[t] - tax[t] for t in (1, 2, 3)]
    project = [-capex] + [pre_tax[t] - tax_u[t] for t in (1, 2, 3)]
    equity = [-(capex + fee - debt), cfads[1] - ds1, cfads[2], cfads[3]]   # -462,246.30; 86,359.46; ...

    assert [r["year"] for r in rows] == [0, 1, 2, 3]
    expect = {"energy_mwh": energy, "price_per_mwh": price, "revenue": revenue, "opex": opex,
              "capex": [capex, 0, 0, 0], "decommissioning": [0, 0, 0, decom], "depreciation": dep,
              "interest": [0, interest1, 0, 0], "principal": [0, debt, 0, 0],
              "debt_service": [0, ds1, 0, 0], "tax": tax, "tax_unlevered": tax_u, "cfads": cfads,
              "project_cash_flow": project, "equity_cash_flow": equity}
    for key, values in expect.items():
        got = [r[key] for r in rows]
        assert_allclose(got, values, rtol=1e-9, atol=1e-6, err_msg=key)
    # a few rounded figures from the working above, as a check on the working itself
    assert opex[1] == pytest.approx(75_538.122, abs=1e-3) and opex[2] == pytest.approx(90_899.0962, abs=1e-3)
    assert tax[2] == pytest.approx(29_178.74, abs=0.01) and equity[0] == pytest.approx(-462_246.30, abs=0.01)

    m = case.metrics
    assert m["debt_amount"] == pytest.approx(debt, rel=1e-9)
    assert m["min_dscr"] == pytest.approx(1.25, rel=1e-9)
    # LCOE = (capex + PV(O&M) + PV(decommissioning)) / PV(E) at 8 %; inflation 0 -> real = nominal
    d = [1.08 ** -t for t in range(4)]
    lcoe = (capex + sum(opex[t] * d[t] for t in range(4)) + decom * d[3]) / sum(energy[t] * d[t] for t in range(4))
    assert m["lcoe_nominal_per_mwh"] == pytest.approx(lcoe, rel=1e-9)
    assert m["lcoe_real_per_mwh"] == pytest.approx(lcoe, rel=1e-9)
    # NPV and IRR of the hand flows with numpy-financial (the flows are ~1e6, NPV a small difference)
    assert m["project_npv"] == pytest.approx(npf.npv(0.08, project), abs=1e-3)
    assert m["equity_npv"] == pytest.approx(npf.npv(0.12, equity), abs=1e-3)
    assert m["project_irr"] == pytest.approx(npf.irr(project), abs=1e-9)
    assert m["equity_irr"] == pytest.approx(npf.irr(equity), abs=1e-9)
    # cumulative equity: -462,246; -375,887; -23,752; +129,095 -> payback in year 3
    assert m["payback_year"] == 3


# --------------------------------------------------------------------------- batches

N_BATCH = 1000


def test_batch_rows_equal_single_runs():
    """1,000 rows through one call give, row by row, the numbers of 1,000 separate scenarios
    built with the same values (the single-trial path). The equity target return, the O&M
    escalation and the merchant price are omitted, so they follow the discount rate, the
    inflation and the PPA price (README defaults) in both paths."""
    scn = make_scenario(finance__depreciation="declining_balance", finance__depreciation_years=12,
                        maintenance__land_lease_share_of_revenue=0.03, maintenance__escalation=None,
                        revenue__ppa_term_years=12)
    rng = np.random.default_rng(7)
    over = {
        "revenue.ppa_price_per_mwh": rng.uniform(30.0, 110.0, N_BATCH),
        "capex.turbine_per_kw": rng.uniform(800.0, 1400.0, N_BATCH),
        "maintenance.fixed_per_kw_year": rng.uniform(20.0, 60.0, N_BATCH),
        "losses.wake": rng.uniform(0.0, 0.15, N_BATCH),
        "operations.availability_mature": rng.uniform(0.9, 1.0, N_BATCH),
        "finance.tax_rate": rng.uniform(0.0, 0.35, N_BATCH),
        "finance.discount_rate": rng.uniform(0.03, 0.10, N_BATCH),
        "finance.inflation": rng.uniform(0.0, 0.04, N_BATCH),
        "finance.debt.interest_rate": rng.uniform(0.02, 0.09, N_BATCH),
        "finance.debt.max_gearing": rng.uniform(0.4, 0.9, N_BATCH),
    }
    flows, metrics, _ = model.evaluate(scn, overrides=over)
    lines = ("energy_mwh", "price_per_mwh", "revenue", "opex", "depreciation", "interest", "principal", "tax",
             "tax_unlevered", "cfads", "debt_service", "project_cash_flow", "equity_cash_flow")
    bound = 0
    for i in range(N_BATCH):
        one = scn.with_overrides({k: float(v[i]) for k, v in over.items()})
        f1, m1, _ = model.evaluate(one)
        for line in lines:
            assert_allclose(getattr(flows, line)[i], getattr(f1, line)[0], rtol=1e-9, atol=1e-6,
                            err_msg=f"row {i}: {line}")
        for key, value in m1.items():
            assert_allclose(metrics[key][i], value[0], rtol=1e-9, atol=1e-9, equal_nan=True,
                            err_msg=f"row {i}: {key}")
        bound += bool(f1.schedule.gearing_bound[0, 0])
    assert 0 < bound < N_BATCH        # both sides of the gearing cap are exercised


def test_batch_speed_rows_equal_single_runs():
    """Overridden mean speeds use the tabulated AEP(speed factor) (interpolated, 0.25 % steps)
    and its sensitivity for the sizing case; single runs integrate afresh. Energy, cash flows,
    debt and ratios agree to 1e-5, NPVs to 1e-5 of capex (30 rows: each single run builds a
    new site)."""
    scn = make_scenario()
    speeds = np.linspace(5.5, 9.0, 30)
    flows, metrics, _ = model.evaluate(scn, overrides={"wind.mean_speed_mps": speeds})
    for i, v in enumerate(speeds):
        f1, m1, _ = model.evaluate(scn.with_overrides({"wind.mean_speed_mps": float(v)}))
        capex = f1.capex_total[0, 0]
        for line in ("energy_mwh", "revenue", "opex", "cfads", "debt_service", "project_cash_flow"):
            assert_allclose(getattr(flows, line)[i], getattr(f1, line)[0], rtol=1e-5, atol=1e-5 * capex,
                            err_msg=f"row {i}: {line}")
        for key in ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "debt_amount", "min_dscr", "llcr"):
            assert_allclose(metrics[key][i], m1[key][0], rtol=1e-5, err_msg=f"row {i}: {key}")
        for key in ("project_npv", "equity_npv"):
            assert_allclose(metrics[key][i], m1[key][0], atol=1e-5 * capex, err_msg=f"row {i}: {key}")
        for key in ("project_irr", "equity_irr"):
            assert_allclose(metrics[key][i], m1[key][0], atol=1e-5, err_msg=f"row {i}: {key}")
