"""``lcoe bench``: how fast the engine is, measured on the demo scenario.

Times in one run (a) the full Monte Carlo through the batch engine, (b) the same
trials through a straightforward loop, one trial at a time, with numpy-financial's
``npv`` and ``irr`` (timed on a subsample and scaled: the output says so), (c) one
deterministic run with the site cached, (d) the Weibull AEP integral, and the peak
memory of the process. The loop and the engine are checked against each other on
the subsample.
"""

from __future__ import annotations

import json
import resource as _rusage
import sys
import time
from pathlib import Path

import numpy as np

_REL = Path("assumptions") / "tallowmere_ridge.toml"
DEMO = Path(__file__).resolve().parents[1] / _REL
if not DEMO.exists():  # an installed package: use the demo of the current folder
    DEMO = Path.cwd() / _REL


def _median_time(fn, repeat: int) -> float:
    times = []
    for _ in range(repeat):
        t = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t)
    return float(np.median(times))


def _peak_rss_mb() -> float:
    kb = _rusage.getrusage(_rusage.RUSAGE_SELF).ru_maxrss
    return kb / 1024.0 if sys.platform != "darwin" else kb / 1024.0 / 1024.0


def loop_trials(scn, case, inputs: dict, sample, rows) -> dict:
    """The straightforward way: each trial on its own, NPV and IRR from numpy-financial."""
    import numpy_financial as npf

    from lcoe import cashflow, metrics as mt
    from lcoe.cashflow import Sample

    f = scn.finance
    out = {"project_npv": [], "project_irr": [], "equity_npv": [], "equity_irr": [], "lcoe_nominal_per_mwh": []}
    for i in rows:
        one = {k: v[i:i + 1] for k, v in inputs.items()}
        smp = Sample(*[None if getattr(sample, a) is None else getattr(sample, a)[i:i + 1]
                       for a in ("speed_factor", "energy_factor", "downtime", "failure_cost")])
        fl = cashflow.evaluate(scn, case.energy, overrides=one or None, sample=smp, schedule=case.schedule)
        r = float(one.get("finance.discount_rate", [f.discount_rate])[0])
        eq = float(one.get("finance.equity_target_return", [scn.equity_target_return])[0])
        out["project_npv"].append(npf.npv(r, fl.project_cash_flow[0]))
        out["project_irr"].append(npf.irr(fl.project_cash_flow[0]))
        out["equity_npv"].append(npf.npv(eq, fl.equity_cash_flow[0]))
        out["equity_irr"].append(npf.irr(fl.equity_cash_flow[0]))
        out["lcoe_nominal_per_mwh"].append(float(mt.lcoe(fl.capex_total, fl.opex, fl.decommissioning,
                                                         fl.energy_mwh, r)[0]))
    return {k: np.asarray(v, float) for k, v in out.items()}


def run_bench(path=DEMO, trials: int = 100_000, loop_sample: int = 200) -> dict:
    from lcoe import energy as en, model, scenario, uncertainty

    scn = scenario.load(path)
    case = model.run(scn)                      # warms the site cache (gross AEP table)
    uncertainty.monte_carlo(scn, case, trials=min(trials, 2000))   # warm-up (imports, caches)

    t0 = time.perf_counter()
    mc = uncertainty.monte_carlo(scn, case, trials=trials)
    engine_s = time.perf_counter() - t0

    # the same first trials, drawn exactly as the Monte Carlo drew them (block 0)
    m = min(loop_sample, trials, uncertainty.BLOCK)
    inputs, sample = uncertainty.draw_block(scn, min(trials, uncertainty.BLOCK), uncertainty._block_rng(mc.seed, 0),
                                            scn.lifetime)
    inputs = uncertainty._clip_inputs(scn, inputs, [])
    rows = range(m)
    t0 = time.perf_counter()
    looped = loop_trials(scn, case, inputs, sample, rows)
    loop_s_per_trial = (time.perf_counter() - t0) / m
    worst = 0.0
    for k, v in looped.items():
        e = mc.samples[k][:m]
        ok = np.isfinite(v) & np.isfinite(e)
        if np.any(np.isfinite(v) != np.isfinite(e)):
            raise AssertionError(f"bench: loop and engine disagree on which trials have a {k}")
        if ok.any():
            rel = np.max(np.abs(v[ok] - e[ok]) / np.maximum(np.abs(e[ok]), 1e-12))
            worst = max(worst, float(rel))
    if worst > 1e-8:
        raise AssertionError(f"bench: loop and engine differ by {worst:.3g} (relative) on the subsample")

    deterministic_ms = 1000.0 * _median_time(lambda: model.run(scn), 15)
    site = en.site_for(scn)
    c = site.climate
    aep_ms = 1000.0 * _median_time(lambda: en.aep_weibull_mwh(site.site_curve, c.scale_mps, c.shape,
                                                              scn.project.turbines), 50)
    return {
        "scenario": str(path),
        "trials": trials,
        "engine_s": engine_s,
        "loop_s_per_trial": loop_s_per_trial,
        "loop_subsample": m,
        "loop_estimate_s": loop_s_per_trial * trials,
        "speedup_vs_loop": (loop_s_per_trial * trials) / engine_s if engine_s > 0 else None,
        "loop_vs_engine_max_rel_diff": worst,
        "deterministic_ms": deterministic_ms,
        "aep_ms": aep_ms,
        "peak_rss_mb": _peak_rss_mb(),
        "chunk_size": scn.montecarlo.chunk_size,
    }


def cmd_bench(args) -> int:
    res = run_bench(args.file or DEMO, trials=args.trials, loop_sample=args.loop_sample)
    if args.json:
        print(json.dumps(res, indent=2))
        return 0
    print(f"Benchmark on {res['scenario']}")
    print(f"  Monte Carlo, {res['trials']:,} trials of the full model:   {res['engine_s']:.3f} s")
    print(f"  Per-trial loop with numpy-financial:            {1000 * res['loop_s_per_trial']:.3f} ms/trial "
          f"(timed on {res['loop_subsample']} trials, scaled to {res['loop_estimate_s']:.1f} s)")
    print(f"  Speed-up of the engine over the loop:           {res['speedup_vs_loop']:.0f}x "
          f"(same numbers to {res['loop_vs_engine_max_rel_diff']:.1e})")
    print(f"  One deterministic run (site cached):            {res['deterministic_ms']:.2f} ms")
    print(f"  Weibull AEP integral:                           {res['aep_ms']:.3f} ms")
    print(f"  Peak memory:                                    {res['peak_rss_mb']:.0f} MB")
    return 0


def register(sub) -> None:
    from lcoe.cli import _nonneg_int
    b = sub.add_parser("bench", help="time the engine on the demo scenario (Monte Carlo, loop, deterministic)")
    b.add_argument("file", nargs="?", default=None, help="scenario (default: the demo)")
    b.add_argument("--trials", type=_nonneg_int, default=100_000)
    b.add_argument("--loop-sample", type=_nonneg_int, default=200, help="trials timed in the per-trial loop")
    b.add_argument("--json", action="store_true")
    b.set_defaults(func=cmd_bench)
