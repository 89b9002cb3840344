"""The compiled row loops (lcoe.finance._kernels) against the array formulas they replace and
against numpy-financial; both paths must give the same answers."""

from __future__ import annotations

import numpy as np
import numpy_financial as npf
import pytest

from lcoe.finance import _kernels as kernels
from lcoe.finance import metrics as mt
from lcoe.finance import tax
from lcoe.physics import site as site_mod


@pytest.fixture
def flows():
    rng = np.random.default_rng(12)
    n, years = 400, 26
    c = rng.normal(8.0, 3.0, (n, years))
    c[:, 0] = -rng.uniform(60, 120, n)
    c[:5] = np.abs(c[:5])           # no sign change
    c[5, :] = 0.0
    return c


def test_irr_kernel_equals_the_array_iteration_and_numpy_financial(flows, monkeypatch):
    fast, why_fast = mt.irr(flows)
    monkeypatch.setattr(mt, "_kernels", None)
    slow, why_slow = mt.irr(flows)
    np.testing.assert_allclose(fast, slow, rtol=0, atol=1e-12, equal_nan=True)
    assert why_fast == why_slow and why_fast[0] == (0, "no sign change in the cash flows")
    ok = np.isfinite(fast)
    # numpy_financial.irr as the outside reference, row by row
    ref = np.array([npf.irr(row) for row in flows[ok][:60]])
    np.testing.assert_allclose(fast[ok][:60], ref, atol=1e-9)


def test_tax_kernel_equals_the_running_maximum_formula(monkeypatch):
    rng = np.random.default_rng(3)
    taxable = rng.normal(1.0, 2.0, (300, 25))
    rate = rng.uniform(0.1, 0.4, (300, 1))
    fast = tax.tax_with_carryforward(taxable, rate)
    monkeypatch.setattr(tax, "_kernels", None)
    slow = tax.tax_with_carryforward(taxable, rate)
    np.testing.assert_allclose(fast, slow, rtol=1e-12, atol=1e-12)
    assert (fast >= 0).all()


@pytest.mark.parametrize("which", ["weibull", "hourly"])
def test_factor_table_kernel_equals_its_array_formula(which, monkeypatch):
    """The compiled table lookup against site._table_lookup's array formula, factor by factor,
    on the demo's Weibull climate and its hourly series (steps at every hour's cut-out)."""
    from conftest import DEMO, DEMO_HOURLY

    from lcoe.inputs import scenario
    site = site_mod.site_for(scenario.load(DEMO if which == "weibull" else DEMO_HOURLY))
    rng = np.random.default_rng(1)
    x = np.concatenate([rng.uniform(0.0, 3.0, 4000), rng.uniform(0.9, 1.3, 4000), site.factors,
                        site.step_factors[::5], np.nextafter(site.step_factors[::5], 3.0)])
    fast = site_mod._table_lookup(x, site)
    monkeypatch.setattr(site_mod, "_kernels", None)
    slow = site_mod._table_lookup(x, site)
    np.testing.assert_array_equal(np.isnan(fast), np.isnan(slow))
    np.testing.assert_allclose(fast, slow, rtol=1e-13, atol=1e-15, equal_nan=True)
    # NaN (evaluate directly) exactly outside the grid and inside the cells marked exact
    g = site.factors
    i = np.clip(np.searchsorted(g, x, side="right") - 1, 0, g.size - 2)
    outside = (x < g[0]) | (x > g[-1])
    on_node = np.isin(x, g)
    np.testing.assert_array_equal(np.isnan(fast), outside | (site.cell_exact[i] & ~on_node))
    # at the grid's factors: the directly evaluated ratios
    np.testing.assert_array_equal(site_mod._table_lookup(g.copy(), site), site.aep_ratios)
    if which == "weibull":
        # no steps: plain linear interpolation, numpy.interp as the outside reference
        ok = ~np.isnan(fast)
        np.testing.assert_allclose(fast[ok], np.interp(x[ok], g, site.aep_ratios), rtol=1e-12, atol=1e-14)


def test_coverage_kernel_equals_the_array_formulas(monkeypatch):
    rng = np.random.default_rng(9)
    n, cols = 200, 21
    cfads = rng.normal(10, 2, (n, cols))
    cfads[:, 0] = 0.0
    ds = np.zeros((1, cols))
    ds[0, 1:16] = 7.0
    with np.errstate(divide="ignore", invalid="ignore"):
        dscr = np.where(ds > 0, cfads / np.where(ds > 0, ds, 1.0), np.nan)
    debt = np.full((n, 1), 60.0)
    equity = cfads - ds
    equity[:, 0] = -40.0
    fast = mt.coverage(dscr, cfads, ds, debt, 0.05, equity)
    monkeypatch.setattr(mt, "_kernels", None)
    slow = mt.coverage(dscr, cfads, ds, debt, 0.05, equity)
    for a, b in zip(fast, slow):
        np.testing.assert_allclose(a, b, rtol=1e-12, equal_nan=True)


def test_failure_kernel_counts_like_the_plain_inversion():
    """Several components in one pass equal the plain count of CDF steps below each uniform
    (the inversion method for a discrete distribution), component by component."""
    rng = np.random.default_rng(6)
    from lcoe.analysis.montecarlo import _poisson_cdf32
    u = rng.random((3, 500, 20), dtype=np.float32)
    cdfs = [_poisson_cdf32(lam, int(lam + 12 * np.sqrt(lam) + 20)) for lam in (0.2, 0.5, 1.5)]
    costs = rng.uniform(1e5, 5e5, (3, 500))
    days = rng.uniform(5, 40, (3, 500))
    padded = np.ones((3, max(c.size for c in cdfs)), np.float32)
    for j, c in enumerate(cdfs):
        padded[j, :c.size] = c
    cost, down = np.zeros((500, 20)), np.zeros((500, 20))
    kernels.add_failures_many(u, padded, costs, days, 12.0, cost, down)
    want_cost, want_down = np.zeros((500, 20)), np.zeros((500, 20))
    for j in range(3):
        counts = sum((u[j] > c).astype(float) for c in cdfs[j] if c < 1.0)
        want_cost += counts * costs[j][:, None]
        want_down += counts * days[j][:, None] / (365.0 * 12.0)
    np.testing.assert_allclose(cost, want_cost, rtol=1e-12)
    np.testing.assert_allclose(down, want_down, rtol=1e-12)
    # the counts follow the Poisson law they invert (scipy.stats.poisson mean)
    one = sum((u[2] > c).astype(float) for c in cdfs[2] if c < 1.0)
    assert one.mean() == pytest.approx(1.5, rel=0.03)


# --------------------------------------------------------------------------- the fused trial kernel

def _wide_vary(scn) -> dict:
    """A uniform spread of +-15 % on every input a trial may draw without re-integrating the
    curve (the hub speed through the mean speed; other wind and turbine keys integrate
    each row afresh and are covered by the array path alone)."""
    from lcoe.inputs.keys import numeric_keys, numeric_value
    from lcoe.inputs.scenario import vary_refusal
    vary = {}
    for key in numeric_keys(scn):
        if key.startswith(("project.", "turbine.")) or (key.startswith("wind.") and key != "wind.mean_speed_mps"):
            continue
        if vary_refusal(scn, key):      # whole numbers, debt terms, uncertainty: refused by the loader
            continue
        base = numeric_value(scn, key)
        lo, hi = (0.85 * base, 1.15 * base) if base else (0.0, 0.02)
        vary[key] = {"distribution": "uniform", "low": min(lo, hi), "high": max(lo, hi)}
    return vary


def _trials_both_ways(scn, n=3000, seed=4):
    from lcoe import engine as model
    from lcoe.analysis import montecarlo as un
    case = model.run(scn, breakeven=False)
    inputs, sample = un.draw_block(scn, n, un._block_rng(seed, 0), scn.lifetime)
    inputs = un._clip_inputs(scn, inputs, [])
    fused = un.run_trials(scn, case, inputs, sample, fused=True)
    plain = un.run_trials(scn, case, inputs, sample, fused=False)
    return case, fused, plain


def _assert_same_trials(case, fused, plain):
    assert fused.keys() == plain.keys()
    money = abs(case.metrics["project_npv"] or 0.0) + float(case.flows.capex_total[0, 0])
    for key in fused:
        a, b = fused[key], plain[key]
        assert a.shape == b.shape, key
        assert np.array_equal(np.isnan(a), np.isnan(b)), key
        # the kernel sums the years in order, numpy pairwise: equal to rounding
        atol = 1e-12 * money if "npv" in key else 1e-12
        np.testing.assert_allclose(a, b, rtol=1e-11, atol=atol, equal_nan=True, err_msg=key)


@pytest.mark.parametrize("which", ["demo", "hourly", "equity", "layout"])
def test_trial_kernel_equals_the_array_engine_on_the_demo_scenarios(which):
    from conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT

    from lcoe.inputs import scenario
    scn = scenario.load({"demo": DEMO, "hourly": DEMO_HOURLY, "equity": DEMO_EQUITY, "layout": DEMO_LAYOUT}[which])
    _assert_same_trials(*_trials_both_ways(scn))


def test_trial_kernel_equals_the_array_engine_when_every_input_varies():
    """Every price, cost, loss, rate and schedule key drawn per trial, the PPA price low
    enough that some trials make losses (tax carried forward) and some have no IRR."""
    from conftest import DEMO

    from lcoe.inputs import scenario
    raw = scenario.parse_toml(DEMO)
    scn = scenario.load(DEMO)
    vary = _wide_vary(scn)
    vary["revenue.ppa_price_per_mwh"] = {"distribution": "uniform", "low": 0.0, "high": 90.0}
    vary["revenue.merchant_price_per_mwh"] = {"distribution": "uniform", "low": 0.0, "high": 60.0}
    raw["montecarlo"]["vary"] = vary
    raw["montecarlo"]["correlation"] = []
    wide = scenario.from_dict(raw, source=str(DEMO), base_dir=DEMO.parent)
    case, fused, plain = _trials_both_ways(wide)
    assert np.isnan(plain["project_irr"]).any() and np.isfinite(plain["project_irr"]).any()
    assert (plain["payback_year"] > 0).any()
    _assert_same_trials(case, fused, plain)
    # and the outside reference for the two IRRs: numpy-financial on the engine's own rows,
    # many of which change sign more than once (years where CFADS falls short of debt service)
    from lcoe import engine as model
    flows, m, _ = model.evaluate(wide, overrides=_draw(wide, 600), schedule=case.schedule, energy=case.energy,
                                 lean=True)
    multi = 0
    for key, cf in (("project_irr", flows.project_cash_flow), ("equity_irr", flows.equity_cash_flow)):
        for row, rate in zip(cf, m[key]):
            signs = np.sign(row[row != 0])
            multi += np.count_nonzero(signs[1:] != signs[:-1]) > 1
            ref = npf.irr(row)
            if np.isfinite(ref) and -0.99 <= ref <= 10.0:
                assert rate == pytest.approx(ref, abs=1e-9), (key, row)
            else:
                assert np.isnan(rate), (key, row)
    assert multi > 20


def _draw(scn, n):
    from lcoe.analysis import montecarlo as un
    inputs, _ = un.draw_block(scn, n, un._block_rng(9, 0), scn.lifetime)
    return un._clip_inputs(scn, inputs, [])


def test_irr_two_rows_at_a_time_equals_one_row_at_a_time(flows):
    """The IRR kernel iterates rows in pairs; an odd batch, and each row alone, give the same rates."""
    odd = flows[:257]
    batch, why = mt.irr(odd)
    alone = [mt.irr(row[None, :]) for row in odd]
    np.testing.assert_array_equal(batch, np.concatenate([a for a, _ in alone]))
    assert why == [(i, w[0][1]) for i, (_, w) in enumerate(alone) if w]


def test_copula_kernel_equals_the_matrix_product(monkeypatch):
    """The portfolio's compiled copula product against numpy's (BLAS) chol @ z."""
    from lcoe.analysis import portfolio
    rng = np.random.default_rng(21)
    a = rng.normal(size=(40, 40))
    cov = a @ a.T + 40 * np.eye(40)
    chol = np.linalg.cholesky(cov / np.sqrt(np.outer(np.diag(cov), np.diag(cov))))
    z = rng.standard_normal((40, 3001))            # not a whole number of tiles
    fast = portfolio.correlate(chol, z.copy())
    monkeypatch.setattr(portfolio, "_kernels", None)
    slow = portfolio.correlate(chol, z.copy())
    np.testing.assert_allclose(fast, slow, rtol=0, atol=1e-13)
    np.testing.assert_allclose(fast, chol @ z, rtol=0, atol=1e-13)
