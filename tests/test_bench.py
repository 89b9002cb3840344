"""The benchmark's straightforward loop is a second, plain-Python implementation of a trial:
it must agree with the vectorised engine (numpy-financial supplies its NPV and IRR)."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO, make_raw, make_scenario

from lcoe import engine as model
from lcoe.analysis import montecarlo as uncertainty
from lcoe.cli import bench
from lcoe.inputs import scenario
from lcoe.physics import energy as en


@pytest.mark.parametrize("which", ["demo", "tax_losses_macrs", "demo_reserved", "demo_built", "demo_swept"])
def test_plain_loop_equals_the_engine_trial_by_trial(which):
    if which == "demo":
        scn = _without_structure(scenario.load(DEMO))
    elif which == "demo_reserved":
        # a deep lock-up threshold so that many of the 64 trials lock up and draw the reserve
        scn = scenario.load(DEMO).with_overrides({"reserves": {"dsra_months": 6, "maintenance_years": 3,
                                                               "deposit_rate": 0.03},
                                                  "waterfall": {"lockup_dscr": 1.45}})
    elif which == "demo_built":
        import datetime as dt
        scn = scenario.load(DEMO).with_overrides({
            "construction": {"financial_close": dt.date(2027, 4, 1), "months": 20, "funding": "pro_rata",
                             "drawdown": "even", "commitment_fee": 0.006},
            "reserves": {"dsra_months": 6, "maintenance_years": 2, "deposit_rate": 0.01},
            "waterfall": {"lockup_dscr": 1.45}})
    elif which == "demo_swept":
        scn = scenario.load(DEMO).with_overrides({"reserves": {"dsra_months": 6, "maintenance_years": 3},
                                                  "waterfall": {"lockup_dscr": 1.45, "cash_sweep": True}})
    else:
        raw = make_raw(**{"finance.depreciation": "macrs_5", "finance.tax_rate": 0.3})
        raw["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": 0.04,
                                            "replacement_cost": 500000.0, "downtime_days": 25.0}]
        raw["uncertainty"]["speed"] = [{"name": "measurement", "sd": 0.04}]
        raw["montecarlo"] = {"vary": {"revenue.ppa_price_per_mwh": {"distribution": "normal", "sd": 8.0}}}
        scn = make_scenario(raw)
    case = model.run(scn, breakeven=False)
    n = 64
    mc = uncertainty.monte_carlo(scn, case, trials=n, seed=7)
    inputs, sample = uncertainty.draw_block(scn, n, uncertainty._block_rng(7, 0), scn.lifetime)
    inputs = uncertainty._clip_inputs(scn, inputs, [])
    looped = bench.loop_trials(scn, case, inputs, sample, range(n))
    for key, values in looped.items():
        # numpy-financial npv/irr against the engine's vectorised NPV and Newton IRR
        engine = mc.samples[key] if key in mc.samples else mc.waterfall[key]
        np.testing.assert_allclose(values, engine, rtol=1e-9, atol=1e-6, err_msg=key)
    assert ("lockup_any" in looped) == (which in ("demo_reserved", "demo_built", "demo_swept"))
    if which in ("demo_reserved", "demo_built", "demo_swept"):
        assert looped["lockup_any"].sum() > 0 and looped["dsra_drawn"].sum() > 0


def _without_structure(scn):
    raw = scn.raw
    for key in ("reserves", "waterfall", "construction"):
        raw.pop(key, None)
    return scenario.from_dict(raw, source=scn.source, base_dir=scn.base_dir)


def test_bench_reports_the_contract_keys():
    res = bench.run_bench(DEMO, trials=3000, loop_sample=20, repeat=1)
    for key in ("trials", "engine_s", "loop_s_per_trial", "speedup_vs_loop", "deterministic_ms", "aep_ms",
                "peak_rss_mb"):
        assert key in res and res[key] is not None
    assert res["trials"] == 3000
    assert res["loop_vs_engine_max_rel_diff"] < 1e-8
    assert en.site_for(scenario.load(DEMO)).gross_aep_mwh > 0


def test_bench_reports_the_portfolio_figures():
    res = bench.run_bench(DEMO, trials=1000, loop_sample=10, repeat=1, portfolio_sites=3, portfolio_trials=300)
    for key in ("portfolio_site_trials_per_s", "portfolio_s_1_worker", "portfolio_s_2_workers",
                "portfolio_speedup_1_to_2_workers"):
        assert res[key] > 0
    assert (res["portfolio_sites"], res["portfolio_trials"]) == (3, 300)
    pf = bench.synthetic_portfolio(3, 300)
    assert len({s.scenario.wind.mean_speed_mps for s in pf.sites}) == 3      # each site its own climate
