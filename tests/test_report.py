"""The report of ``lcoe run``: the headline's plant, capex per kW and financing, the yearly table's
debt and cost columns within 100 columns, and the JSON's units, file and financing blocks.

Figures are worked by hand from the demo file (assumptions/tallowmere_ridge.toml); the file's
digest by the standard library's hashlib.
"""

from __future__ import annotations

import hashlib
import json

import pytest

from lcoe import cli
from lcoe.analysis import study
from lcoe.inputs import scenario as sc
from lcoe.outputs import report as rp
from tests.conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, make_scenario


@pytest.fixture(scope="module")
def demo():
    return study.build(sc.load(DEMO), trials=0)


def test_the_json_names_the_file_by_path_and_digest(demo):
    d = demo.to_dict()
    assert d["scenario_file"] == {"path": str(DEMO), "sha256": hashlib.sha256(DEMO.read_bytes()).hexdigest()}
    assert "scenario_file" not in study.build(make_scenario(), trials=0, variants=False).to_dict()


def test_the_units_block(demo):
    u = demo.to_dict()["units"]
    assert (u["currency"], u["money"], u["money_scale"], u["energy"], u["price"]) == ("EUR", "EUR", 1, "MWh",
                                                                                    "EUR/MWh")
    assert u["rates"].startswith("fraction")


def test_plant_capex_per_kw_and_gearing_worked_by_hand(demo):
    """14 x 4,200 kW = 58.8 MW; capex (1,000 + 340) x 58,800 kW + 9.0e6 + 4.0e6 = 91.792e6, with 5 %
    contingency 96,381,600, so 1,639.14 per kW; gearing = debt / capex."""
    d = demo.to_dict()
    assert d["project"]["plant_mw"] == pytest.approx(58.8, rel=1e-12)
    assert d["costs"]["capex_total"] == pytest.approx(96_381_600.0, rel=1e-12)
    assert d["costs"]["capex_per_kw"] == pytest.approx(96_381_600.0 / 58_800.0, rel=1e-12)
    assert d["costs"]["capex_per_kw"] == pytest.approx(1639.14, abs=0.01)
    fin = d["financing"]
    assert fin["gearing"] == pytest.approx(d["metrics"]["debt_amount"] / 96_381_600.0, rel=1e-12)
    assert fin["gearing"] <= fin["debt"]["max_gearing"] and fin["debt"]["gearing_cap_binds"] is False
    assert (fin["discount_rate"], fin["equity_target_return"]) == (0.065, 0.10)
    assert (fin["debt"]["sizing_case"], fin["debt"]["target_dscr"]) == ("p90_1yr", 1.30)


def test_a_binding_gearing_cap_is_reported_as_such():
    """With the cap at 30 % of the capex the sculpted debt would be larger: the cap binds, and the
    gearing is the cap."""
    rep = study.build(make_scenario(finance__debt__max_gearing=0.3), trials=0, variants=False).to_dict()
    assert rep["financing"]["debt"]["gearing_cap_binds"] is True
    assert rep["financing"]["gearing"] == pytest.approx(0.3, rel=1e-9)
    assert "30.00  (binds)" in rp.to_table(study.build(make_scenario(finance__debt__max_gearing=0.3), trials=0,
                                                       variants=False))


def test_all_equity_has_no_debt_block():
    d = study.build(sc.load(DEMO_EQUITY), trials=0).to_dict()
    assert "debt" not in d["financing"] and d["financing"]["gearing"] == 0.0
    lines = rp.to_table(study.build(sc.load(DEMO_EQUITY), trials=0)).splitlines()
    assert any(x.startswith("  Debt sized on") and x.endswith("all equity") for x in lines)
    assert any("all equity" in w for w in d["warnings"])


def test_the_headline_shows_what_each_figure_is(demo):
    text = rp.to_table(demo)
    head = text.split("\nHeadline\n", 1)[1].split("\n\n", 1)[0].splitlines()
    assert head[0].split() == ["Plant", "[MW]", "58.8"] and head[1].endswith("14 x 4,200")
    assert head[2].split()[-1] == "1,639"
    lcoe = demo.to_dict()["metrics"]["lcoe_nominal_per_mwh"]
    assert any(x.startswith("  LCOE nominal, pre-tax, unlevered [EUR/MWh]") and x.endswith(f"{lcoe:.2f}")
               for x in head)
    assert any(x.startswith("  LCOE real, pre-tax, unlevered [EUR/MWh]") for x in head)
    assert any(x.startswith("  Discount rate, nominal [%]") and x.endswith("6.50") for x in head)
    assert any(x.startswith("  Equity target return, nominal [%]") and x.endswith("10.00") for x in head)
    assert any(x.startswith("  Gearing, debt / capex [%]") for x in head)
    assert head[-3].split("Debt sized on", 1)[1].strip() == "P90 (1 yr)"
    assert head[-2].startswith("  Target DSCR on that case [x]") and head[-2].endswith("1.300")
    assert head[-1].startswith("  Gearing cap [%]") and head[-1].endswith("75.00  (not reached)")


@pytest.mark.parametrize("path", [DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT])
def test_headline_and_yearly_table_fit_100_columns(path):
    text = rp.to_table(study.build(sc.load(path), trials=0, variants=False))
    body = text.split("\nHeadline\n", 1)[1]
    yearly = body.split("Yearly cash flow", 1)[1]
    for line in body.split("\nEnergy\n")[0].splitlines() + yearly.split("\n\nVariants")[0].splitlines():
        assert len(line) <= 100, line


def test_the_yearly_table_has_the_cost_and_debt_columns_and_their_values(demo):
    """Both blocks of the yearly table carry every year; the new columns hold the JSON's figures in
    thousands (capex at t = 0, decommissioning at t = L, interest and principal over the tenor)."""
    d = demo.to_dict()
    lines = rp.annual_table(d["annual"], "EUR")
    blocks, block = [], []
    for line in lines[1:]:
        if not line:
            blocks.append(block)
            block = []
        else:
            block.append(line)
    blocks.append(block)
    assert len(blocks) == 2
    cols = {}
    for b in blocks:
        # two heading lines: the names (the year's above its own column is blank), then the units
        names = ["Year"] + b[0].replace("Debt service", "Debt_service").replace("t CF", "t_CF") \
            .replace("y CF", "y_CF").split()
        assert b[1].split()[0] == "Year" and len(b) == 2 + len(d["annual"])
        for i, name in enumerate(names):
            cols.setdefault(name, [r.split()[i] for r in b[2:]])
    for name in ("Capex", "Decom.", "Interest", "Principal", "CFADS", "DSCR", "Tax", "Revenue"):
        assert name in cols, name
    L = len(d["annual"]) - 1

    def k(v):
        return f"{v / 1e3:,.0f}"
    assert cols["Capex"][0] == k(d["annual"][0]["capex"]) == "96,382"
    assert cols["Decom."][L] == k(d["annual"][L]["decommissioning"]) and cols["Decom."][1] == "0"
    for t in (1, 5, 16):
        assert cols["Interest"][t] == k(d["annual"][t]["interest"])
        assert cols["Principal"][t] == k(d["annual"][t]["principal"])
    # interest + principal = debt service, each year of the tenor (rounded to thousands)
    for t in range(1, 17):
        r = d["annual"][t]
        assert r["interest"] + r["principal"] == pytest.approx(r["debt_service"], rel=1e-9)


def test_sweep_tornado_and_solve_json_carry_the_file_and_units(capsys):
    digest = hashlib.sha256(DEMO.read_bytes()).hexdigest()
    for argv in (["sweep", str(DEMO), "--key", "wind.mean_speed_mps", "6", "8", "2", "--json"],
                 ["tornado", str(DEMO), "--json", "--key", "capex.turbine_per_kw"],
                 ["solve", str(DEMO), "--target", "equity_irr=12%", "--vary", "revenue.ppa_price_per_mwh", "--json"]):
        assert cli.main(argv) == 0
        d = json.loads(capsys.readouterr().out)
        assert list(d)[:3] == ["scenario", "scenario_file", "units"], argv[0]
        assert d["scenario_file"]["sha256"] == digest and d["units"]["currency"] == "EUR"
