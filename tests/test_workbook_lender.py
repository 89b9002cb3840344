"""The lender workbook with the lender structure: construction, reserve accounts, lock-up, merchant target.

Reference spreadsheet engine: LibreOffice (headless, converting xlsx to xlsx computes every formula;
the helpers are those of tests/test_workbook.py). Each recalculated value is compared with the
engine's to 1e-9 relative: the base case, the locked-debt flexes a lender runs (PPA and merchant price
-10 %, availability -2 points) against ``engine.run(scn, debt=base)``, and the re-sized debt with a
merchant target against the engine's own sizing. The maintenance reserve's build-up is also checked
against arithmetic stated here by hand.
"""

from __future__ import annotations

import math
import subprocess
import sys
from pathlib import Path
from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from conftest import ROOT, require_tool
from test_workbook import ANNUAL, REL, check_lender_cases, life, metric_matches, named, recalculate, rel_diff, set_named

from lcoe import engine as model
from lcoe.analysis import study
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import workbook

LENDER = ROOT / "assumptions" / "tallowmere_ridge_lender.toml"
SHOWN = [k for k in model.METRIC_KEYS if k != "breakeven_ppa_price_per_mwh"]
WATERFALL = [k for k in model.WATERFALL_ANNUAL_KEYS if k != "prepayment"]


def _failed(values):
    ws = values["Checks"]
    return [ws.cell(r, 1).value for r in range(5, ws.max_row + 1)
            if ws.cell(r, 2).value == 0 and ws.cell(r, 5).value in ("all", "debt")]


def _flexes(scn):
    r, o = scn.revenue, scn.operations
    price = {"revenue.ppa_price_per_mwh": 0.9 * r.ppa_price_per_mwh,
             "revenue.merchant_price_per_mwh": 0.9 * scn.merchant_price_per_mwh}
    avail = {"operations.availability_first_year": scn.availability_first_year - 0.02,
             "operations.availability_mature": o.availability_mature - 0.02}
    return {"price -10 %": price, "availability -2 points": avail, "turbine capex 1100": {"capex.turbine_per_kw": 1100.0},
            "turbines 16": {"project.turbines": 16}}


CELL = {"revenue.ppa_price_per_mwh": "ppa_price_per_mwh", "revenue.merchant_price_per_mwh": "merchant_price_per_mwh",
        "operations.availability_first_year": "availability_first_year",
        "operations.availability_mature": "availability_mature", "capex.turbine_per_kw": "turbine_per_kw",
        "project.turbines": "turbines"}


@pytest.fixture(scope="module")
def books(tmp_path_factory):
    require_tool("soffice")
    root = tmp_path_factory.mktemp("lender_books")
    src, out = root / "src", root / "out"
    src.mkdir()
    out.mkdir()
    cases = {}
    lender = sc.load(LENDER)
    # a lock-up that binds (threshold 1.52x: above the DSCR of years 3-7) and a merchant target
    tight = lender.with_overrides({"waterfall.lockup_dscr": 1.52, "finance.debt.target_dscr_merchant": 1.6})
    for name, scn in (("lender", lender), ("tight", tight)):
        rep = study.build(scn, trials=0, variants=False)
        path = src / f"{name}.xlsx"
        workbook.write(rep, path)
        cases[name] = SimpleNamespace(scn=scn, case=rep.case, src=path)
        wb = openpyxl.load_workbook(path)
        set_named(wb, "debt_mode", "resized")
        wb.save(src / f"{name}_resized.xlsx")
        cases[f"{name}_resized"] = SimpleNamespace(scn=scn, case=rep.case, src=src / f"{name}_resized.xlsx")
        for label, over in _flexes(scn).items():
            wb = openpyxl.load_workbook(path)
            for key, value in over.items():
                set_named(wb, CELL[key], value)
            key = f"{name} {label}"
            p = src / f"{name}_{len(cases)}.xlsx"
            wb.save(p)
            cases[key] = SimpleNamespace(scn=scn.with_overrides(over), src=p,
                                         case=model.run(scn.with_overrides(over), breakeven=False, debt=rep.case))
    recalculate([c.src for c in cases.values()], out, root / "lo-profile")
    for c in cases.values():
        c.values = openpyxl.load_workbook(out / c.src.name, data_only=True)
    return cases


def _agrees(c):
    assert _failed(c.values) == []
    for key in SHOWN:
        got = named(c.values, key)
        assert metric_matches(got, c.case.metrics[key]), (key, got, c.case.metrics[key])
    L = c.scn.lifetime
    for key in ANNUAL:
        assert rel_diff(life(named(c.values, f"annual_{key}"), L), getattr(c.case.flows, key)[0]) <= REL, key
    for key in WATERFALL:
        assert rel_diff(life(named(c.values, f"annual_{key}"), L), c.case.flows.waterfall[key][0]) <= REL, key


@pytest.mark.parametrize("name", ["lender", "tight"])
def test_base_case_equals_the_engine(books, name):
    """Reference engine: LibreOffice. With construction, reserves and lock-up every metric, yearly row and waterfall
    line equals the engine's to 1e-9, and every check passes (cash conserved, sources = uses)."""
    _agrees(books[name])


def test_the_tight_case_locks_up_and_releases(books):
    """The binding threshold traps cash in some years and releases it later: the sheet shows both."""
    c = books["tight"]
    L = c.scn.lifetime
    lock = np.array(life(named(c.values, "annual_lockup"), L), float)
    released = np.array(life(named(c.values, "annual_trapped_released"), L), float)
    assert lock.sum() >= 1 and released.max() > 0


@pytest.mark.parametrize("name", ["lender", "tight"])
@pytest.mark.parametrize("label", ["price -10 %", "availability -2 points", "turbine capex 1100", "turbines 16"])
def test_locked_flexes_equal_the_engine_locked_run(books, name, label):
    """Reference engine: LibreOffice. A lender's flex typed on Inputs, debt locked: equal to engine.run(debt=base).
    A capex change moves the construction funding (IDC, commitment fee, equity) live in the sheet."""
    _agrees(books[f"{name} {label}"])


@pytest.mark.parametrize("name", ["lender", "tight"])
def test_resized_base_equals_the_engine_sizing(books, name):
    """Resized mode on the exported inputs re-sculpts to the engine's debt: with the partial first year (the debt's
    clock) and, in "tight", the merchant target DSCR of 1.6 after the PPA term."""
    c = books[f"{name}_resized"]
    _agrees(c)
    target = np.array(named(c.values, "annual_target_dscr")[1:c.scn.lifetime + 1], float)
    term = c.scn.ppa_term_years
    want = c.scn.finance.debt.target_dscr_merchant or c.scn.finance.debt.target_dscr
    assert np.all(target[term:] == want) and np.all(target[:term] == c.scn.finance.debt.target_dscr)


def test_sources_and_uses_are_the_engines(books):
    """Reference engine: LibreOffice. The live funding passes give the engine's IDC, fees and sources and uses."""
    c = books["lender"]
    f = c.case.flows.funding
    assert math.isclose(named(c.values, "uses_total"), float(f.uses[0]), rel_tol=1e-12)
    assert math.isclose(named(c.values, "sources_total"), float(f.sources[0]), rel_tol=1e-12)
    assert math.isclose(named(c.values, "equity_before_reserves"), float(f.equity[0] - f.dsra[0]), rel_tol=1e-12)
    for name, want in (("interest_during_construction", f.idc[0]), ("commitment_fee_construction", f.commitment_fee[0]),
                       ("dsra_initial", f.dsra[0])):
        assert math.isclose(named(c.values, name), float(want), rel_tol=1e-11), name
    summary = c.values["Summary"]
    shown = {summary.cell(r, 4).value: summary.cell(r, 6).value for r in range(11, summary.max_row + 1)}
    assert all(shown[k] == 0 for k in ("interest_during_construction", "uses_total", "equity_before_reserves"))


def test_maintenance_reserve_builds_up_by_hand(books):
    """Worked by hand: the demo's blade refurbishment in year 12 costs 14 x 120,000 = 1,680,000 in year-0 money,
    escalated at 2 % a year to 1,680,000 x 1.02^12 in year 12; with a 3-year build-up the target is a third of it
    at the end of year 9, two thirds at year 10, all of it at year 11, and zero otherwise."""
    c = books["lender"]
    target = np.array(named(c.values, "annual_mra_target"), float)
    cost = 14 * 120000.0 * 1.02 ** 12
    want = np.zeros_like(target)
    want[9], want[10], want[11] = cost / 3, 2 * cost / 3, cost
    np.testing.assert_allclose(target, want, rtol=1e-12, atol=1e-6)


def test_partial_first_year_by_hand(books):
    """Financial close 1 January 2027 + 18 months: operation from 1 July 2028, half of year 1 (6 of 12 months)."""
    c = books["lender"]
    assert named(c.values, "first_year_share") == 0.5
    share = named(c.values, "operating_share")
    assert share[1] == 0.5 and share[2] == 1


def test_lender_cases_with_the_waterfall_equal_the_engine(books):
    """Reference engine: LibreOffice. Each lender case, with its own waterfall and the debt locked, equals the
    engine's run with the same change (as in tests/test_workbook.py), equity IRR from the distributions."""
    for name in ("lender", "tight"):
        c = books[name]
        check_lender_cases(c.values, c.scn, c.case)


def test_a_cash_sweep_is_refused_in_one_line(tmp_path):
    """The sweep re-works the schedule, tax and CFADS each year; the workbook does not show that yet."""
    scn = sc.load(LENDER).with_overrides({"waterfall.cash_sweep": True})
    rep = study.build(scn, trials=0, variants=False)
    out = tmp_path / "book.xlsx"
    with pytest.raises(ScenarioError, match=r"waterfall.cash_sweep = True: the workbook does not yet show"):
        workbook.write(rep, out)
    assert not out.exists()


def test_cli_writes_the_lender_demo(tmp_path):
    """`lcoe run` with the lender structure writes the workbook (exit 0)."""
    out = tmp_path / "book.xlsx"
    r = subprocess.run([sys.executable, "-m", "lcoe", "run", str(LENDER), "--trials", "0", "--workbook", str(out)],
                       capture_output=True, text=True)
    assert r.returncode == 0, r.stderr
    assert Path(out).is_file()
