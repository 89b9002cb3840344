"""End to end: ``lcoe run FILE --json`` gives the whole report of SCENARIO.md, its figures agree
with numpy-financial applied to its own yearly rows, ``lcoe check`` validates, and every user
mistake is one line on stderr with exit code 2."""

from __future__ import annotations

import json
import re

import numpy as np
import numpy_financial as npf
import pytest
from conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, make_raw

from lcoe import CAUTION, cli
from lcoe import engine as model
from lcoe.inputs import scenario as sc

# The report keys of shared/design/SCENARIO.md (a contract).
ENERGY_KEYS = {"air_density_kgm3", "hub_mean_speed_mps", "gross_aep_mwh", "net_aep_p50_mwh", "net_aep_p90_1yr_mwh",
               "net_aep_p90_10yr_mwh", "net_aep_p99_1yr_mwh", "net_capacity_factor", "speed_sensitivity",
               "sigma_1yr", "sigma_10yr"}
COST_KEYS = {"capex_total", "opex_year1", "decommissioning_net"}
METRIC_KEYS = {"lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_npv", "equity_irr",
               "debt_amount", "min_dscr", "avg_dscr", "llcr", "payback_year", "breakeven_ppa_price_per_mwh"}
ANNUAL_KEYS = {"year", "energy_mwh", "price_per_mwh", "revenue", "opex", "capex", "depreciation", "interest", "tax",
               "cfads", "debt_service", "project_cash_flow", "equity_cash_flow"}


def _run_json(capsys, path):
    rc = cli.main(["run", str(path), "--json", "--trials", "0"])
    out = capsys.readouterr()
    assert rc == 0, out.err
    return json.loads(out.out)


@pytest.fixture(scope="module")
def demo_report():
    import contextlib
    import io

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        rc = cli.main(["run", str(DEMO), "--json", "--trials", "0"])
    assert rc == 0
    return json.loads(buf.getvalue())


def test_report_has_every_key_of_the_contract(demo_report):
    rep = demo_report
    assert {"scenario", "warnings", "energy", "costs", "metrics", "annual", "variants"} <= set(rep)
    assert rep["scenario"] == "Tallowmere Ridge"
    assert isinstance(rep["warnings"], list) and all(isinstance(w, str) for w in rep["warnings"])
    assert ENERGY_KEYS <= set(rep["energy"])
    assert COST_KEYS <= set(rep["costs"])
    assert METRIC_KEYS <= set(rep["metrics"])
    for block in ("energy", "costs", "metrics"):
        for key, value in rep[block].items():
            assert value is None or isinstance(value, (int, float)), f"{block}.{key}"
    # the demo is a financed project with a PPA: every metric has a value
    assert all(rep["metrics"][k] is not None for k in METRIC_KEYS)
    assert isinstance(rep["metrics"]["payback_year"], int)


def test_annual_rows_cover_t0_to_L(demo_report):
    rows = demo_report["annual"]
    assert [r["year"] for r in rows] == list(range(0, 26))
    for r in rows:
        assert ANNUAL_KEYS <= set(r)
        assert all(isinstance(r[k], (int, float)) for k in ANNUAL_KEYS)
    assert rows[0]["energy_mwh"] == 0.0 and rows[0]["capex"] > 0
    assert all(r["capex"] == 0.0 for r in rows[1:])
    assert all(r["energy_mwh"] > 0 for r in rows[1:])


def test_variants_are_present_and_match_their_own_runs(demo_report):
    var = demo_report["variants"]
    assert set(var) == {"life_20", "life_30_extension", "preventive_plan"}
    for name, block in var.items():
        assert METRIC_KEYS <= set(block["metrics"]) and ENERGY_KEYS <= set(block["energy"])
    case = model.run(sc.load(DEMO).variant("life_20"))
    for key in METRIC_KEYS:
        assert var["life_20"]["metrics"][key] == pytest.approx(case.metrics[key], rel=1e-12), key
    # a preventive plan with fewer failures loses less energy to downtime
    assert var["preventive_plan"]["energy"]["net_aep_p50_mwh"] > demo_report["energy"]["net_aep_p50_mwh"]


def test_report_figures_agree_with_numpy_financial_on_its_own_rows(demo_report):
    """NPV / IRR of the printed yearly cash flows (numpy_financial.npv / irr), LCOE and DSCR
    recomputed from the rows with the SCENARIO.md definitions."""
    rep = demo_report
    rows, m = rep["annual"], rep["metrics"]
    col = lambda k: np.array([r[k] for r in rows], float)  # noqa: E731
    project, equity = col("project_cash_flow"), col("equity_cash_flow")
    assert m["project_npv"] == pytest.approx(npf.npv(0.065, project), rel=1e-9)
    assert m["equity_npv"] == pytest.approx(npf.npv(0.10, equity), rel=1e-9)
    assert m["project_irr"] == pytest.approx(npf.irr(project), abs=1e-9)
    assert m["equity_irr"] == pytest.approx(npf.irr(equity), abs=1e-9)
    decom = col("decommissioning")
    cost = rows[0]["capex"] + npf.npv(0.065, col("opex") + decom)
    assert m["lcoe_nominal_per_mwh"] == pytest.approx(cost / npf.npv(0.065, col("energy_mwh")), rel=1e-9)
    assert m["lcoe_real_per_mwh"] == pytest.approx(cost / npf.npv(1.065 / 1.02 - 1, col("energy_mwh")), rel=1e-9)
    ds = col("debt_service")
    on = ds > 0
    assert m["min_dscr"] == pytest.approx((col("cfads")[on] / ds[on]).min(), rel=1e-9)
    assert m["avg_dscr"] == pytest.approx((col("cfads")[on] / ds[on]).mean(), rel=1e-9)
    # the demo operates from 1 July 2028 (close 1 January 2027 + 18 months): year 1 is half a year, so the end of
    # year t is t - 0.5 years after the start of operation, the clock the debt is sculpted on (worked by hand)
    clock = np.r_[0.0, np.arange(1, len(ds)) - 0.5]
    assert m["debt_amount"] == pytest.approx(float(np.sum(ds * 1.055 ** -clock)), rel=1e-9)
    assert m["payback_year"] == int(np.argmax(np.cumsum(equity) >= 0))
    # costs block and yearly rows show the same figures
    assert rep["costs"]["capex_total"] == rows[0]["capex"]
    assert rep["costs"]["opex_year1"] == rows[1]["opex"]
    assert rep["costs"]["decommissioning_net"] == rows[-1]["decommissioning"]
    # capacity factor: P50 net energy over 14 x 4.2 MW x 8760 h
    e = rep["energy"]
    assert e["net_capacity_factor"] == pytest.approx(e["net_aep_p50_mwh"] / (58.8 * 8760), rel=1e-12)
    # cash-flow identities: CFADS = revenue - O&M - tax - decommissioning; with the demo's cash waterfall the
    # equity receives the distributions less any debt service the sponsor pays (SCENARIO.md)
    assert np.allclose(col("cfads")[1:], (col("revenue") - col("opex") - col("tax") - decom)[1:], rtol=1e-12)
    assert np.allclose(equity[1:], (col("distributions") - col("unpaid_debt_service"))[1:], rtol=1e-12, atol=1e-6)


def test_breakeven_price_zeroes_the_equity_npv(demo_report):
    """At the break-even PPA price, with the debt sized afresh, equity NPV at the target return is zero."""
    price = demo_report["metrics"]["breakeven_ppa_price_per_mwh"]
    scn = sc.load(DEMO).with_overrides({"revenue.ppa_price_per_mwh": price})
    case = model.run(scn, breakeven=False)
    assert abs(case.metrics["equity_npv"]) < 0.1      # a tenth of a currency unit on a ~1e8 project


@pytest.mark.parametrize("path", [DEMO_HOURLY, DEMO_EQUITY, DEMO_LAYOUT])
def test_other_demo_scenarios_run(capsys, path):
    rep = _run_json(capsys, path)
    assert METRIC_KEYS <= set(rep["metrics"]) and ENERGY_KEYS <= set(rep["energy"])
    L = sc.load(path).lifetime
    assert [r["year"] for r in rep["annual"]] == list(range(L + 1))
    if path == DEMO_EQUITY:
        assert rep["metrics"]["debt_amount"] == 0.0
        assert rep["metrics"]["min_dscr"] is None


def test_table_output(capsys):
    rc = cli.main(["run", str(DEMO), "--trials", "0"])
    out = capsys.readouterr().out
    assert rc == 0
    assert "Tallowmere Ridge" in out
    assert "Variants (each against the base)" in out and "life_20" in out
    assert "LCOE, nominal [EUR/MWh]" in out


@pytest.mark.parametrize("path", [DEMO, DEMO_HOURLY, DEMO_EQUITY, DEMO_LAYOUT])
def test_check_accepts_the_demo_files(capsys, path):
    rc = cli.main(["check", str(path)])
    out = capsys.readouterr()
    assert rc == 0, out.err
    assert out.out.startswith(f"{path}: ok (")


# --------------------------------------------------------------------------- user mistakes

def _write_scenario(folder, raw, name="scn.toml"):
    path = folder / name
    path.write_text(sc.to_toml(raw), encoding="utf-8")
    return path


def _fails(capsys, argv, pattern):
    rc = cli.main(argv)
    out = capsys.readouterr()
    assert rc == 2
    assert out.out == ""
    lines = out.err.splitlines()
    assert len(lines) == 1, out.err
    assert re.fullmatch(pattern, lines[0]), lines[0]


@pytest.mark.parametrize("command", ["run", "check"])
def test_wrong_key(tmp_path, capsys, command):
    raw = make_raw()
    raw["project"]["lifetme_years"] = 20
    path = _write_scenario(tmp_path, raw)
    shown = re.escape(str(path))
    _fails(capsys, [command, str(path)],
           rf"error: {shown}: project\.lifetme_years: unknown key \(did you mean 'project\.lifetime_years'\?\)")


@pytest.mark.parametrize("command", ["run", "check"])
def test_bad_range(tmp_path, capsys, command):
    path = _write_scenario(tmp_path, make_raw(wind__weibull_shape=-1.0))
    shown = re.escape(str(path))
    _fails(capsys, [command, str(path)], rf"error: {shown}: wind\.weibull_shape = -1\.0: must be >= 0\.5")


@pytest.mark.parametrize("command", ["run", "check"])
def test_broken_curve_file(tmp_path, capsys, command):
    (tmp_path / "curve.csv").write_text("speed_mps,power_kw\n0,0\n5,abc\n25,3000\n", encoding="utf-8")
    raw = make_raw(turbine__cp_max=None, turbine__cut_in_mps=None, turbine__cut_out_mps=None,
                   turbine__drivetrain_efficiency=None, turbine__power_curve="curve.csv")
    path = _write_scenario(tmp_path, raw)
    curve, shown = re.escape(str(tmp_path / "curve.csv")), re.escape(str(path))
    # the line names the key, the value, the bad row and the curve file (before or after the message)
    msg = r"turbine\.power_curve = 'curve\.csv': row 3 is not numeric \('5,abc'\)"
    _fails(capsys, [command, str(path)], rf"error: (?:{curve}: {msg}|(?:{shown}: )?{msg}: {curve})")


def test_missing_file(tmp_path, capsys):
    missing = tmp_path / "nope.toml"
    _fails(capsys, ["run", str(missing)], rf"error: {re.escape(str(missing))}: file not found")


def test_a_long_path_moves_to_its_own_line_and_the_caution_wraps():
    # every table fits a 100-column terminal, whatever the folder the scenario sits in
    from lcoe.outputs.report import WIDTH, heading
    long = "/very/deep/folder/" * 6 + "tallowmere_ridge.toml"
    lines = heading("Tallowmere Ridge", long)
    assert lines[0] == "Tallowmere Ridge" and lines[1] == f"  ({long})"
    assert all(len(x) <= WIDTH for x in lines[2:])
    assert " ".join(lines[2:]).strip() == CAUTION
    assert heading("Tallowmere Ridge", "a.toml")[0] == "Tallowmere Ridge  (a.toml)"
