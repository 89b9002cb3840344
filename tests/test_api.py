"""The public Python API (lcoe/__init__.py): the README's example runs as written, and each
function gives what the engine gives (the engine's own results are the reference here; the
engine is held to outside references in the other test files)."""

from __future__ import annotations

import os
import re

import numpy as np
import pytest
from conftest import DEMO, ROOT

import lcoe
from lcoe import engine
from lcoe.analysis import montecarlo, sensitivity
from lcoe.inputs import scenario as sc


def test_the_readme_example_runs_as_written(tmp_path, capsys):
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    section = text.split("## Use from Python", 1)[1]
    code = re.search(r"```python\n(.*?)```", section, re.S).group(1)
    cwd = os.getcwd()
    os.chdir(ROOT)
    try:
        code = code.replace('"tallowmere.xlsx"', repr(str(tmp_path / "tallowmere.xlsx")))
        exec(compile(code, "README.md", "exec"), {})
    finally:
        os.chdir(cwd)
    out = capsys.readouterr().out
    assert re.search(r"LCOE \d+\.\d\d EUR/MWh, equity IRR \d+\.\d\d%", out)
    assert (tmp_path / "tallowmere.xlsx").stat().st_size > 10_000


def test_import_is_light():
    """`import lcoe` loads the API only on first use (the CLI's start-up depends on it)."""
    import subprocess
    import sys
    code = "import sys, lcoe; print('lcoe.engine' in sys.modules, 'scipy' in sys.modules)"
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True).stdout
    assert out.split() == ["False", "False"]


def test_run_equals_the_engine():
    scn = sc.load(DEMO)
    res = lcoe.run(scn)
    assert res.metrics == engine.run(scn).metrics
    assert res.to_dict()["metrics"]["lcoe_nominal_per_mwh"] == pytest.approx(res.metrics["lcoe_nominal_per_mwh"])
    frame = res.to_frame()
    assert list(frame.index) == list(range(scn.lifetime + 1))
    assert frame["revenue"].iloc[1] == pytest.approx(res.case.flows.revenue[0, 1])


def test_monte_carlo_takes_a_generator_or_a_seed():
    """A Generator gives one seed; the same seed given directly gives the same trials."""
    scn = sc.load(DEMO)
    a = lcoe.monte_carlo(scn, trials=600, rng=np.random.default_rng(5))
    seed = int(np.random.default_rng(5).integers(0, 2 ** 63 - 1))
    b = montecarlo.monte_carlo(scn, trials=600, seed=seed)
    assert a.seed == seed
    np.testing.assert_array_equal(a.result.samples["lcoe_nominal_per_mwh"], b.samples["lcoe_nominal_per_mwh"])
    assert len(a.to_frame()) == 600
    with pytest.raises(ValueError, match="seed or rng"):
        lcoe.monte_carlo(scn, trials=10, seed=1, rng=np.random.default_rng(1))


def test_sweep_tornado_solve_and_evaluate_return_the_analysis_rows():
    scn = sc.load(DEMO)
    rows = lcoe.sweep(scn, "wind.mean_speed_mps", [7.0, 7.4])
    assert rows.rows == sensitivity.sweep(scn, "wind.mean_speed_mps", [7.0, 7.4])
    assert list(rows.to_frame()["value"]) == [7.0, 7.4]
    batch = lcoe.evaluate(scn, {"losses.wake": [0.08]})
    assert batch.metrics["lcoe_nominal_per_mwh"][0] == pytest.approx(engine.run(scn).metrics["lcoe_nominal_per_mwh"],
                                                                     rel=1e-12)
    with pytest.raises(lcoe.ScenarioError, match=r"did you mean 'capex\.turbine_per_kw'"):
        lcoe.evaluate(scn, {"capex.turbine_per_kW": [1e9]})
    sol = lcoe.solve(scn, target_metric="equity_irr", target_value=0.12, vary_key="revenue.ppa_price_per_mwh")
    check = engine.run(scn.with_overrides({"revenue.ppa_price_per_mwh": sol.value}), breakeven=False)
    assert check.metrics["equity_irr"] == pytest.approx(0.12, abs=1e-6)


def test_portfolio_gives_the_command_line_report():
    from lcoe.analysis import portfolio as ap
    from lcoe.inputs import portfolio as ip
    path = ROOT / "assumptions" / "portfolio_demo.toml"
    got = lcoe.portfolio(path, trials=1100, workers=0)
    ref = ap.run(ip.load(path), trials=1100).report()
    a, b = got.to_dict(), ref
    assert a.pop("execution")["mode"] == b.pop("execution")["mode"] == "plain"
    assert a == b
    frame = got.to_frame()
    assert len(frame) == lcoe.load_portfolio(path).horizon + 1
    assert frame.loc[1, "energy_mwh_p90"] == b["annual"][1]["energy_mwh"]["p90"]
