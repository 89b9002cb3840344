"""The lender workbook, recalculated by LibreOffice as the reference spreadsheet engine.

openpyxl stores formulas without cached values, so LibreOffice (headless, converting
xlsx to xlsx) computes every formula on load and saves the values; the tests read
them back with ``openpyxl.load_workbook(data_only=True)`` and compare with the
engine. One module-scoped fixture converts every workbook of the module in a single
LibreOffice call (each file costs about 2.5 s), with a private user profile so that
no shared profile lock gets in the way.

Agreement is to 1e-9 relative: each cell against the engine's value; a value below
a millionth of its row's largest magnitude is compared relative to that magnitude
(the balance rolled forward in the sheet leaves a residual of about 1e-14 of the
debt where the engine holds exactly zero, and that residual accrues interest).
"""

from __future__ import annotations

import errno
import math
import os
import subprocess
import tempfile
from pathlib import Path
from dataclasses import replace
from types import SimpleNamespace

import numpy as np
import openpyxl
import pytest
from conftest import DEMO, DEMO_EQUITY, DEMO_LAYOUT, make_scenario, require_tool
from openpyxl.formula import Tokenizer
from openpyxl.utils import range_boundaries

from lcoe import cli
from lcoe import engine as model
from lcoe.analysis import study
from lcoe.finance.debt import debt_service_scale
from lcoe.inputs import scenario as sc
from lcoe.inputs.about import CAUTION
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import workbook

REL = 1e-9
ENGINE_DIGITS = 1e-15  # openpyxl stores numbers with 16 significant digits ("%.16g")
ZERO_BAND = 1e-6       # of the row's largest magnitude: below it a value counts as zero
ANNUAL = [k for k in model.ANNUAL_KEYS if k != "year"]
LIVE_CHANGES = {"revenue.ppa_price_per_mwh": 61.5, "operations.degradation_per_year": 0.006}
HOSTILE_NAME_1 = '=HYPERLINK("x")'
HOSTILE_NAME_2 = "+1+1"
ERROR_TEXT = ("#DIV/0!", "#N/A", "#NAME?", "#NULL!", "#NUM!", "#REF!", "#VALUE!")


# --------------------------------------------------------------------------- helpers

def named(wb, name):
    """The value of a defined name: one value, or the list of a row."""
    dests = list(wb.defined_names[name].destinations)
    assert len(dests) == 1, name
    sheet, ref = dests[0]
    cells = wb[sheet][ref.replace("$", "")]
    if isinstance(cells, tuple):
        return [c.value for row in cells for c in (row if isinstance(row, tuple) else (row,))]
    return cells.value


def set_named(wb, name, value):
    sheet, ref = next(iter(wb.defined_names[name].destinations))
    wb[sheet][ref.replace("$", "")].value = value


def as_array(values):
    return np.array([np.nan if v in (None, "", "n/a") else v for v in values], float)


def rel_diff(sheet, engine):
    """Largest relative difference of two rows; NaN positions must agree."""
    s, e = as_array(sheet), np.asarray(engine, float)
    assert s.shape == e.shape
    assert np.array_equal(np.isnan(s), np.isnan(e)), (s, e)
    ok = ~np.isnan(e)
    if not ok.any():
        return 0.0
    scale = max(float(np.max(np.abs(e[ok]))), 1e-300)
    den = np.where(np.abs(e[ok]) >= ZERO_BAND * scale, np.abs(e[ok]), scale)
    return float(np.max(np.abs(s[ok] - e[ok]) / den))


def life(values, L):
    """The first L + 1 values of a yearly row that runs to the horizon; every later one is zero or blank."""
    rest = as_array(values[L + 1:])
    assert np.all(np.isnan(rest) | (rest == 0)), rest
    return values[:L + 1]


def metric_matches(sheet_value, engine_value):
    if engine_value is None:
        return sheet_value == "n/a"
    if not isinstance(sheet_value, (int, float)):
        return False
    return math.isclose(sheet_value, engine_value, rel_tol=REL, abs_tol=1e-12)


def recalculate(paths, outdir: Path, profile: Path):
    """LibreOffice headless: load each xlsx (computing every formula) and save it again."""
    soffice = require_tool("soffice")
    cmd = [soffice, f"-env:UserInstallation=file://{profile}", "--headless", "--calc", "--convert-to", "xlsx",
           "--outdir", str(outdir), *map(str, paths)]
    done = subprocess.run(cmd, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    for p in paths:
        assert (outdir / Path(p).name).is_file(), done.stdout + done.stderr


# --------------------------------------------------------------------------- the recalculated workbooks

def _macrs_scenario():
    # MACRS 7-year with a low price: tax losses in the early years are carried forward
    return make_scenario(**{"finance.depreciation": "macrs_7", "project.name": HOSTILE_NAME_1,
                            "revenue.ppa_price_per_mwh": 48.0})


def _declining_capped_scenario():
    # declining balance over 12 years; the gearing cap binds, so debt service is scaled down; a large
    # overhaul in year 16 makes a tax loss after years of profit (carried forward, not refunded)
    return make_scenario(**{
        "finance.depreciation": "declining_balance", "finance.depreciation_years": 12,
        "project.name": HOSTILE_NAME_2, "finance.debt.max_gearing": 0.4,
        "maintenance.component": [{"name": "=1+2", "failure_rate_per_turbine_year": 0.02,
                                   "replacement_cost": 3.0e5, "downtime_days": 20.0}],
        "maintenance.overhaul": [{"name": "@SUM(A1)", "year": 16, "cost_per_turbine": 1.0e6}]})


@pytest.fixture(scope="module")
def books(tmp_path_factory):
    require_tool("soffice")
    root = tmp_path_factory.mktemp("workbooks")
    src, out = root / "src", root / "out"
    src.mkdir()
    out.mkdir()
    demo = sc.load(DEMO)
    specs = {
        "demo": (demo, dict(trials=2000), True),
        "equity": (sc.load(DEMO_EQUITY), dict(trials=300, variants=False), False),
        "macrs": (_macrs_scenario(), dict(trials=0), False),
        "capped": (_declining_capped_scenario(), dict(trials=0), False),
        "layout": (sc.load(DEMO_LAYOUT), dict(trials=0, variants=False), False),
    }
    cases = {}
    for name, (scn, build_args, with_sens) in specs.items():
        rep = study.build(scn, **build_args, sensitivity=with_sens)
        path = src / f"{name}.xlsx"
        workbook.write(rep, path)
        cases[name] = SimpleNamespace(scn=scn, report=rep, case=rep.case, src=path)

    # liveness: change the PPA price and the degradation on Inputs; "live" re-sizes the debt in the
    # sheet (debt mode resized), "held" keeps the debt locked at close
    changed = demo.with_overrides(LIVE_CHANGES)
    base = cases["demo"].case
    for name, mode in (("live", "resized"), ("held", "locked")):
        wb = openpyxl.load_workbook(cases["demo"].src)
        set_named(wb, "ppa_price_per_mwh", LIVE_CHANGES["revenue.ppa_price_per_mwh"])
        set_named(wb, "degradation_per_year", LIVE_CHANGES["operations.degradation_per_year"])
        set_named(wb, "debt_mode", mode)
        path = src / f"{name}.xlsx"
        wb.save(path)
        engine_case = model.run(changed, breakeven=False, debt=None if mode == "resized" else base)
        cases[name] = SimpleNamespace(scn=changed, report=None, case=engine_case, src=path)
    # the base in the resized mode: the backward roll reproduces the engine's sizing
    wb = openpyxl.load_workbook(cases["demo"].src)
    set_named(wb, "debt_mode", "resized")
    wb.save(src / "resized.xlsx")
    cases["resized"] = SimpleNamespace(scn=demo, report=None, case=base, src=src / "resized.xlsx")
    # all equity: typed debt terms are ignored and a check fails
    wb = openpyxl.load_workbook(cases["equity"].src)
    set_named(wb, "tenor_years", 15)
    set_named(wb, "interest_rate", 0.06)
    set_named(wb, "max_gearing", 0.7)
    wb.save(src / "equity_typed.xlsx")
    cases["equity_typed"] = SimpleNamespace(scn=cases["equity"].scn, report=None, case=cases["equity"].case,
                                            src=src / "equity_typed.xlsx")

    recalculate([c.src for c in cases.values()], out, root / "lo-profile")
    for name, c in cases.items():
        c.values = openpyxl.load_workbook(out / c.src.name, data_only=True)
        c.formulas = openpyxl.load_workbook(c.src)
    return cases


BASE_CASES = ("demo", "equity", "macrs", "capped", "layout")


# --------------------------------------------------------------------------- agreement with the engine

@pytest.mark.parametrize("name", BASE_CASES)
def test_every_metric_name_equals_the_engine(books, name):
    """Reference engine: LibreOffice. Every key of the report's metrics is a defined name of the same spelling
    whose recalculated value equals the engine's to 1e-9 relative (None in the engine is "n/a")."""
    c = books[name]
    for key in model.METRIC_KEYS:
        got = named(c.values, key)
        assert metric_matches(got, c.case.metrics[key]), (key, got, c.case.metrics[key])


@pytest.mark.parametrize("name", BASE_CASES)
def test_every_yearly_row_equals_the_engine(books, name):
    """Reference engine: LibreOffice. Each yearly cash-flow line (t = 0..L) equals the engine's to 1e-9."""
    c = books[name]
    for key in ANNUAL:
        assert rel_diff(life(named(c.values, f"annual_{key}"), c.scn.lifetime), getattr(c.case.flows, key)[0]) <= REL, key


@pytest.mark.parametrize("name", BASE_CASES)
def test_debt_schedule_equals_the_engine(books, name):
    """Reference engine: LibreOffice. The sculpted schedule rolled forward from the converged debt equals the
    engine's schedule (which it computes backwards from the debt service) to 1e-9."""
    c = books[name]
    s, f = c.case.schedule, c.case.flows
    zero = np.zeros(1)
    rows = {"debt_opening": np.concatenate([zero, s.balance_open[0]]),
            "debt_interest": np.concatenate([zero, s.interest[0]]),
            "debt_principal": np.concatenate([zero, s.principal[0]]),
            "debt_service_sculpted": np.concatenate([zero, s.debt_service[0]]),
            "debt_closing": f.balance[0]}
    if c.scn.finance.debt is not None:
        factor = f.case_factors[c.scn.finance.debt.sizing_case][0, 0]
        rows["sizing_cfads"] = np.concatenate([zero, s.sizing_cfads[0]])
        rows["sizing_energy_mwh"] = f.energy_mwh[0] * factor
    for key, engine_row in rows.items():
        assert rel_diff(life(named(c.values, key), c.scn.lifetime), engine_row) <= REL, key


@pytest.mark.parametrize("name", BASE_CASES)
def test_energy_and_cost_totals_equal_the_engine(books, name):
    """Reference engine: LibreOffice. Energy totals and the costs block of the JSON report, to 1e-9."""
    c = books[name]
    e = c.case.energy
    for key in ("gross_aep_mwh", "net_aep_p50_mwh", "net_aep_p90_1yr_mwh", "net_aep_p90_10yr_mwh",
                "net_aep_p99_1yr_mwh", "net_capacity_factor", "loss_factor", "downtime_fraction"):
        assert math.isclose(named(c.values, key), getattr(e, key), rel_tol=REL, abs_tol=1e-15), key
    for key, value in study.costs_block(c.case).items():
        assert math.isclose(named(c.values, key), value, rel_tol=REL), key


@pytest.mark.parametrize("name", BASE_CASES)
def test_live_checks_pass_on_the_engine_inputs(books, name):
    c = books[name]
    assert named(c.values, "checks_ok") == 1
    assert all(v == 1 for v in named(c.values, "sizing_dscr_check"))


def test_macrs_shares_are_the_irs_table(books):
    """MACRS 7-year, half-year convention: 14.29, 24.49, 17.49, 12.49, 8.93, 8.92, 8.93, 4.46 %
    (US IRS Publication 946, Table A-1); the rest of the life writes off nothing."""
    shares = as_array(named(books["macrs"].values, "depreciation_share"))
    irs = [0.1429, 0.2449, 0.1749, 0.1249, 0.0893, 0.0892, 0.0893, 0.0446]
    assert np.allclose(shares[1:9], irs, atol=1e-4)
    assert np.all(shares[9:] == 0) and shares[0] == 0
    assert books["macrs"].case.flows.tax_unlevered[0, 1] == 0  # the early losses are carried forward


def test_gearing_cap_binds_in_the_capped_case(books):
    c = books["capped"]
    cap = 0.4 * c.case.flows.capex_total[0, 0]
    assert math.isclose(named(c.values, "debt_amount"), cap, rel_tol=REL)
    assert named(c.values, "debt_service_scale") < 1


# --------------------------------------------------------------------------- liveness

@pytest.mark.parametrize("name", ["live", "held", "resized"])
def test_changed_inputs_recompute_every_metric(books, name):
    """Reference engine: LibreOffice. With the PPA price and the degradation changed on Inputs, every metric and
    yearly row equals the engine run with the same changes (Scenario.with_overrides): in the resized mode the
    engine's re-sized run, in the locked mode its run with the debt of the base case (engine.run(debt=base)).
    "resized" is the base case in the resized mode. The break-even price is an engine goal seek: shown only while
    no input is changed."""
    c = books[name]
    for key in model.METRIC_KEYS:
        got = named(c.values, key)
        if key == "breakeven_ppa_price_per_mwh":
            if name != "resized":
                assert got == workbook.book.STALE
            continue
        assert metric_matches(got, c.case.metrics[key]), (key, got, c.case.metrics[key])
    for key in ANNUAL:
        assert rel_diff(life(named(c.values, f"annual_{key}"), c.scn.lifetime), getattr(c.case.flows, key)[0]) \
            <= REL, key
    assert named(c.values, "checks_ok") == 1
    if name == "held":
        assert named(c.values, "debt_amount") == named(books["demo"].values, "debt_amount")
        assert named(c.values, "debt_headroom") != 0
    if name == "live":
        assert named(c.values, "debt_amount") != named(books["demo"].values, "debt_amount")


def test_all_equity_refuses_typed_debt_terms(books):
    """All equity: a tenor, rate and gearing typed on Inputs charge no debt service, and a named check fails."""
    c = books["equity_typed"]
    assert all(v == 0 for v in as_array(named(c.values, "annual_debt_service")))
    sheet = c.values["Checks"]
    results = {sheet.cell(r, 1).value: sheet.cell(r, 2).value for r in range(5, sheet.max_row + 1)}
    assert results["All-equity scenario: no debt term typed"] == 0
    assert named(c.values, "checks_ok") == 0
    assert named(c.values, "equity_irr") == workbook.book.FAILED
    assert named(c.values, "lcoe_nominal_per_mwh") == pytest.approx(c.case.metrics["lcoe_nominal_per_mwh"], rel=REL)


def test_the_layout_workbook_shows_the_rose_the_wakes_and_the_long_term(books):
    """Reference engine: LibreOffice. The wake loss on Inputs is the engine's computed one, so the live net
    energy equals the engine's (above); the Energy sheet holds the sector, turbine and long-term tables."""
    c = books["layout"]
    e = c.case.energy
    assert named(c.values, "loss_wake") == pytest.approx(e.wake_loss, rel=1e-15)
    ws = c.values["Energy"]
    col_a = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value is not None}
    turbine = e.wake["per_turbine"][4]
    r = col_a[turbine["name"]]
    assert ws.cell(r, 6).value == pytest.approx(turbine["wake_loss"], rel=1e-12)
    farm = next(v for k, v in col_a.items() if str(k).startswith("Farm"))
    assert ws.cell(farm, 6).value == pytest.approx(e.wake["farm_loss"], rel=1e-12)
    assert ws.cell(col_a["Correlation r"], 2).value == pytest.approx(e.long_term["r"], rel=1e-12)
    assert ws.cell(col_a["Site mean, long term (used) [m/s]"], 2).value == pytest.approx(
        e.long_term["site_mean_long_term_mps"], rel=1e-12)
    head = col_a["Sector (wind from) [deg]"]
    freqs = [ws.cell(head + 1 + s, 2).value for s in range(12)]
    assert freqs == pytest.approx([row["frequency"] for row in e.wind_rose["rows"]], rel=1e-12)
    assert len(c.formulas["Energy"]._charts) == 1


# --------------------------------------------------------------------------- integrity

@pytest.mark.parametrize("name", list(BASE_CASES) + ["live", "held", "resized"])
def test_no_error_values_after_recalculation(books, name):
    """LibreOffice writes a circular reference or any failed formula as an error value (#VALUE!, ...)."""
    bad = []
    for ws in books[name].values.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                v = cell.value
                if cell.data_type == "e" or (isinstance(v, str) and (v in ERROR_TEXT or v.startswith("Err:"))):
                    bad.append(f"{ws.title}!{cell.coordinate} {v}")
    assert not bad, bad[:10]


def _references(wb, ws, formula):
    """Cells a formula reads: (sheet, column, row) of every cell in its ranges and defined names."""
    out = []
    for tok in Tokenizer(formula).items:
        if tok.type != "OPERAND" or tok.subtype != "RANGE":
            continue
        text = tok.value
        if text in wb.defined_names:
            targets = list(wb.defined_names[text].destinations)
        elif "!" in text:
            sheet, ref = text.rsplit("!", 1)
            targets = [(sheet.strip("'").replace("''", "'"), ref)]
        else:
            targets = [(ws.title, text)]
        for sheet, ref in targets:
            c0, r0, c1, r1 = range_boundaries(ref.replace("$", ""))
            out.extend((sheet, col, r) for col in range(c0, c1 + 1) for r in range(r0, r1 + 1))
    return out


@pytest.mark.parametrize("name", ["demo", "equity"])
def test_no_circular_reference(books, name):
    """The formula graph is acyclic (depth-first search over every reference)."""
    wb = books[name].formulas
    graph = {}
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    graph[(ws.title, cell.column, cell.row)] = _references(wb, ws, cell.value)
    assert len(graph) > 1000
    state = {}
    for start in graph:
        if start in state:
            continue
        stack = [(start, iter(graph[start]))]
        state[start] = "open"
        while stack:
            node, it = stack[-1]
            nxt = next(it, None)
            if nxt is None:
                state[node] = "done"
                stack.pop()
            elif nxt in graph:
                assert state.get(nxt) != "open", f"circular reference through {nxt}"
                if nxt not in state:
                    state[nxt] = "open"
                    stack.append((nxt, iter(graph[nxt])))


@pytest.mark.parametrize("name", ["demo", "capped"])
def test_yearly_rows_are_formulas(books, name):
    """Every filled cell of the yearly columns on Energy, Cash flow and Debt is a formula."""
    wb = books[name].formulas
    L = workbook.book.horizon_of(books[name].scn)
    for title in ("Energy", "Cash flow", "Debt", "Lender cases"):
        ws = wb[title]
        lines = 0
        for r in range(workbook.FIRST_ROW, ws.max_row + 1):
            label = ws.cell(r, 1).value
            if label is None or ws.cell(r, workbook.T0_COL + L).value is None or not ws.cell(r, 2).value:
                continue  # section heads, single values and the tables below the yearly lines
            lines += 1
            for col in range(workbook.T0_COL, workbook.T0_COL + L + 1):
                assert ws.cell(r, col).data_type == "f", f"{title}!{ws.cell(r, col).coordinate}"
        assert lines >= 5, title


def test_metric_names_point_at_summary_formulas(books):
    wb = books["demo"].formulas
    for key in model.METRIC_KEYS:
        sheet, ref = next(iter(wb.defined_names[key].destinations))
        cell = wb[sheet][ref.replace("$", "")]
        assert sheet == "Summary" and cell.data_type == "f", key


def test_key_inputs_are_named_values_on_inputs(books):
    wb = books["demo"].formulas
    scn = books["demo"].scn
    expected = {"ppa_price_per_mwh": scn.revenue.ppa_price_per_mwh,
                "degradation_per_year": scn.operations.degradation_per_year,
                "discount_rate": scn.finance.discount_rate, "tax_rate": scn.finance.tax_rate,
                "fixed_per_kw_year": scn.maintenance.fixed_per_kw_year, "loss_wake": scn.losses.wake,
                "tenor_years": scn.finance.debt.tenor_years, "interest_rate": scn.finance.debt.interest_rate,
                "target_dscr": scn.finance.debt.target_dscr, "turbine_per_kw": scn.capex.turbine_per_kw}
    for key, value in expected.items():
        sheet, ref = next(iter(wb.defined_names[key].destinations))
        cell = wb[sheet][ref.replace("$", "")]
        assert sheet == "Inputs" and cell.data_type == "n" and cell.value == value, key


# --------------------------------------------------------------------------- text from the scenario

@pytest.mark.parametrize("name, text", [("macrs", HOSTILE_NAME_1), ("capped", HOSTILE_NAME_2)])
def test_scenario_name_is_written_as_text(books, name, text):
    c = books[name]
    cell = c.formulas["Summary"]["B4"]
    assert cell.value == text and cell.data_type == "s"
    assert c.values["Summary"]["B4"].value == text            # LibreOffice kept it as text
    for ws in c.formulas.worksheets:                           # and no formula came from it
        for row in ws.iter_rows():
            for cl in row:
                assert not (cl.data_type == "f" and ("HYPERLINK" in cl.value or cl.value == text))


def test_item_names_are_written_as_text(books):
    c = books["capped"]
    found = {}
    for row in c.formulas["Inputs"].iter_rows():
        for cell in row:
            if cell.value in ("=1+2", "@SUM(A1)"):
                found[cell.value] = cell.data_type
    assert found == {"=1+2": "s", "@SUM(A1)": "s"}
    texts = [cell.value for row in c.values["Inputs"].iter_rows() for cell in row]
    assert "=1+2" in texts and "@SUM(A1)" in texts


# --------------------------------------------------------------------------- Monte Carlo and sensitivity

def test_montecarlo_sheet_holds_the_engine_results(books):
    c = books["demo"]
    mc = c.report.montecarlo.report()
    ws = c.formulas["Monte Carlo"]
    assert "NOT LIVE" in ws["A2"].value
    assert ws["B4"].value == 2000
    rows = {ws.cell(r, 1).value: r for r in range(9, ws.max_row + 1) if ws.cell(r, 1).value}
    lcoe_row = rows["LCOE, nominal"]
    for j, stat in enumerate(("p50", "p75", "p90", "p99", "mean", "sd")):
        assert ws.cell(lcoe_row, 3 + j).value == pytest.approx(mc["lcoe_nominal_per_mwh"][stat], rel=ENGINE_DIGITS)
    # histogram of the LCOE: counts of all trials, the P50 and P90 bins marked
    head = next(r for r in range(1, ws.max_row + 1)
                if str(ws.cell(r, 1).value).startswith("Histogram: LCOE, nominal"))
    counts = [ws.cell(r, 3).value for r in range(head + 2, head + 2 + len(mc["histogram"]["lcoe_nominal_per_mwh"]
                                                                         ["counts"]))]
    assert counts == mc["histogram"]["lcoe_nominal_per_mwh"]["counts"]
    assert sum(counts) == 2000
    for col, stat in ((4, "p50"), (5, "p90")):
        marked = [r for r in range(head + 2, head + 2 + len(counts)) if ws.cell(r, col).value]
        assert len(marked) == 1
        lo, hi = ws.cell(marked[0], 1).value, ws.cell(marked[0], 2).value
        assert lo <= mc["lcoe_nominal_per_mwh"][stat] <= hi
    assert len(ws._charts) >= 3
    eq = books["equity"].formulas["Monte Carlo"]
    assert "Minimum DSCR, P50 case" not in [eq.cell(r, 1).value for r in range(1, eq.max_row + 1)]


def test_sensitivity_sheet_holds_the_tornado_and_the_sweep(books):
    from lcoe.analysis import sensitivity as sens
    c = books["demo"]
    ws = c.formulas["Sensitivity"]
    rows = sens.tornado(c.scn, metric="lcoe_nominal_per_mwh")
    keys = [ws.cell(r, 11).value for r in range(6, 6 + len(rows))]
    assert keys == [r["key"] for r in rows]
    labels = [ws.cell(r, 1).value for r in range(6, 6 + len(rows))]
    assert all("." not in lab.split(" [")[0] for lab in labels), labels     # plain words, not keys
    assert ws.cell(6, 7).value == pytest.approx(rows[0]["swing"], rel=ENGINE_DIGITS)
    # equity IRR and minimum DSCR of the same runs: each equals the tornado run on that metric
    for col, metric in ((12, "equity_irr"), (14, "min_dscr")):
        other = {r["key"]: r for r in sens.tornado(c.scn, metric=metric)}
        for i, key in enumerate(keys):
            for j, end in enumerate(("metric_at_low", "metric_at_high")):
                want = other[key][end]
                got = ws.cell(6 + i, col + j).value
                assert (got == "n/a") if want is None else got == pytest.approx(want, rel=ENGINE_DIGITS), (key, metric)
    head = next(r for r in range(1, ws.max_row + 1) if str(ws.cell(r, 1).value).startswith("Wind-speed sweep"))
    factors = [ws.cell(r, 1).value for r in range(head + 2, head + 15)]
    assert factors == pytest.approx([0.7 + 0.05 * i for i in range(13)])
    speeds = [ws.cell(r, 2).value for r in range(head + 2, head + 15)]
    assert speeds == pytest.approx([7.4 * f for f in factors])
    assert len(ws._charts) == 2
    assert "Sensitivity" not in books["macrs"].formulas.sheetnames


# --------------------------------------------------------------------------- presentation

def test_presentation(books):
    wb = books["demo"].formulas
    assert wb.sheetnames == ["Cover", "Summary", "Inputs", "Energy", "Cash flow", "Debt", "Lender cases",
                             "Monte Carlo", "Sensitivity", "Checks", "Notes"]
    L = workbook.book.horizon_of(books["demo"].scn)
    assert L == 40
    for title in ("Energy", "Cash flow", "Debt"):
        ws = wb[title]
        assert ws.freeze_panes == "C5"
        assert [ws.cell(workbook.YEAR_ROW, workbook.T0_COL + t).value for t in range(L + 1)] == list(range(L + 1))
        for r in range(workbook.FIRST_ROW, ws.max_row + 1):
            if ws.cell(r, workbook.T0_COL + L).data_type == "f":
                assert ws.cell(r, 2).value, f"{title} row {r} has no unit"
                assert ws.cell(r, workbook.T0_COL + L).number_format != "General", f"{title} row {r}"
    assert len(wb["Cash flow"]._charts) == 1 and len(wb["Debt"]._charts) == 1
    notes = [wb["Notes"].cell(r, 1).value for r in range(1, wb["Notes"].max_row + 1)]
    assert CAUTION in notes
    assert any("NPV() discounts its first value" in str(n) for n in notes)
    assert wb["Summary"]["A2"].value == CAUTION


# --------------------------------------------------------------------------- writing safely

def _small_report():
    return study.build(make_scenario(), trials=0, variants=False)


def test_unwritable_folder_leaves_nothing(tmp_path, monkeypatch):
    rep = _small_report()
    folder = tmp_path / "locked"
    folder.mkdir()
    target = folder / "book.xlsx"
    if os.geteuid() != 0:      # a real read-only folder (root may write anywhere)
        folder.chmod(0o500)
        try:
            with pytest.raises(ScenarioError, match=r"^--workbook = .*: cannot write in .* \(Permission denied\)$"):
                workbook.write(rep, target)
        finally:
            folder.chmod(0o700)
        assert list(folder.iterdir()) == []

    def refuse(*args, **kwargs):
        raise PermissionError(errno.EACCES, "Permission denied")

    monkeypatch.setattr(tempfile, "mkstemp", refuse)
    with pytest.raises(ScenarioError, match=r"^--workbook = .*: cannot write in .* \(Permission denied\)$") as exc:
        workbook.write(rep, target)
    assert "\n" not in str(exc.value)
    assert list(folder.iterdir()) == []


def test_a_failed_save_leaves_no_partial_file(tmp_path, monkeypatch):
    rep = _small_report()

    def half_save(self, filename):
        Path(filename).write_bytes(b"PK\x03\x04 partial")
        raise OSError(errno.ENOSPC, "No space left on device")

    monkeypatch.setattr(openpyxl.Workbook, "save", half_save)
    with pytest.raises(ScenarioError, match=r"cannot write the file \(No space left on device\)"):
        workbook.write(rep, tmp_path / "book.xlsx")
    assert list(tmp_path.iterdir()) == []


def test_cli_reports_a_missing_folder_in_one_line(tmp_path, capsys):
    target = tmp_path / "no" / "such" / "book.xlsx"
    rc = cli.main(["run", str(DEMO_EQUITY), "--trials", "0", "--brief", "--workbook", str(target)])
    err = capsys.readouterr().err
    assert rc == 2
    assert err.count("\n") == 1
    assert err.startswith("error: --workbook = ") and "folder does not exist" in err
    assert not (tmp_path / "no").exists()


# --------------------------------------------------------------------------- the lender's flex table

def _overhaul_row(wb, name, year, cost):
    """Fill the first empty row of the overhaul table on Inputs."""
    sheet, ref = next(iter(wb.defined_names["overhaul_year"].destinations))
    ws = wb[sheet]
    c0, r0, c1, r1 = range_boundaries(ref.replace("$", ""))
    for r in range(r0, r1 + 1):
        if ws.cell(r, c0).value is None:
            ws.cell(r, c0 - 1).value = name
            ws.cell(r, c0).value = year
            ws.cell(r, c0 + 1).value = cost
            return
    raise AssertionError("no empty overhaul row")


def _first_of(wb, range_name, value):
    sheet, ref = next(iter(wb.defined_names[range_name].destinations))
    c0, r0, _, _ = range_boundaries(ref.replace("$", ""))
    wb[sheet].cell(r0, c0).value = value


#: name -> (workbook edit, engine overrides or the variant it equals)
FLEXES = {
    "interest 6.5 %": (lambda wb: set_named(wb, "interest_rate", 0.065), {"finance.debt.interest_rate": 0.065}),
    "tenor 14": (lambda wb: set_named(wb, "tenor_years", 14), {"finance.debt.tenor_years": 14}),
    "target DSCR 1.40": (lambda wb: set_named(wb, "target_dscr", 1.40), {"finance.debt.target_dscr": 1.40}),
    "PPA price +10 %": (lambda wb: set_named(wb, "ppa_price_per_mwh", 74.8), {"revenue.ppa_price_per_mwh": 74.8}),
    "sizing case P50": (lambda wb: set_named(wb, "sizing_case", "p50"), {"finance.debt.sizing_case": "p50"}),
    "turbines 16": (lambda wb: set_named(wb, "turbines", 16), {"project.turbines": 16}),
    "availability 95 %": (lambda wb: set_named(wb, "availability_mature", 0.95),
                          {"operations.availability_mature": 0.95}),
    "fixed O&M 40": (lambda wb: set_named(wb, "fixed_per_kw_year", 40.0), {"maintenance.fixed_per_kw_year": 40.0}),
    "tax rate 30 %": (lambda wb: set_named(wb, "tax_rate", 0.30), {"finance.tax_rate": 0.30}),
    "degradation 0.6 %": (lambda wb: set_named(wb, "degradation_per_year", 0.006),
                          {"operations.degradation_per_year": 0.006}),
    "gearbox failures 0.04": (lambda wb: _first_of(wb, "comp_rate", 0.04),
                              {"maintenance.component.gearbox.failure_rate_per_turbine_year": 0.04}),
    "life 20": (lambda wb: set_named(wb, "lifetime_years", 20), "life_20"),
    "life 30": (lambda wb: (set_named(wb, "lifetime_years", 30), set_named(wb, "fixed_per_kw_year", 40.0),
                            _overhaul_row(wb, "life extension", 25, 450000.0)), "life_30_extension"),
    "rated power 4500 kW": (lambda wb: set_named(wb, "rated_power_kw", 4500.0), None),
}


def _locked_to(schedule, years):
    """The base schedule for another life: cut or padded with zero years (the tenor ends before either)."""
    L = schedule.debt_service.shape[1]

    def fit(a):
        a = np.asarray(a)
        return a[:, :years] if years <= L else np.hstack([a, np.zeros((a.shape[0], years - L))])
    assert not np.any(schedule.debt_service[0, min(years, L):])
    period = None
    if schedule.period is not None:     # a partial first year: the same first year, full years after it
        period = np.ones(years)
        period[0] = schedule.period[0]
    target = schedule.target_dscr
    if np.ndim(target) == 2:
        target = fit(target)
    return replace(schedule, debt_service=fit(schedule.debt_service), interest=fit(schedule.interest),
                   principal=fit(schedule.principal), balance_open=fit(schedule.balance_open),
                   sizing_cfads=fit(schedule.sizing_cfads), period=period, target_dscr=target)


@pytest.fixture(scope="module")
def flexes(books, tmp_path_factory):
    root = tmp_path_factory.mktemp("flex")
    src, out = root / "src", root / "out"
    src.mkdir()
    out.mkdir()
    demo = books["demo"]
    base = demo.case
    runs = {}
    for i, (label, (edit, engine)) in enumerate(FLEXES.items()):
        if engine is None:
            scn = None
        elif isinstance(engine, str):
            scn = demo.scn.variant(engine)
        else:
            scn = demo.scn.with_overrides(engine)
        for mode in ("locked", "resized"):
            wb = openpyxl.load_workbook(demo.src)
            edit(wb)
            set_named(wb, "debt_mode", mode)
            path = src / f"flex{i}_{mode}.xlsx"
            wb.save(path)
            want = None
            if scn is not None:
                if mode == "resized":
                    want = model.run(scn, breakeven=False)
                else:
                    debt = base if scn.lifetime == base.scenario.lifetime else _locked_to(base.schedule, scn.lifetime)
                    want = model.run(scn, breakeven=False, debt=debt)
            runs[(label, mode)] = SimpleNamespace(src=path, case=want, scn=scn)
    recalculate([r.src for r in runs.values()], out, root / "lo-profile")
    for r in runs.values():
        r.values = openpyxl.load_workbook(out / r.src.name, data_only=True)
    return runs


def _failed_checks(values):
    ws = values["Checks"]
    return [ws.cell(r, 1).value for r in range(5, ws.max_row + 1)
            if ws.cell(r, 2).value == 0 and ws.cell(r, 5).value in ("all", "debt")]


SHOWN = [k for k in model.METRIC_KEYS if k != "breakeven_ppa_price_per_mwh"]


@pytest.mark.parametrize("mode", ["locked", "resized"])
@pytest.mark.parametrize("label", list(FLEXES))
def test_flex_table(flexes, label, mode):
    """Reference engine: LibreOffice. A lender's flex typed on Inputs: in the locked mode every check passes and
    each metric equals the engine's run with the same change and the debt of the base case (engine.run(debt=base));
    in the resized mode it equals the engine's re-sized run, or a named check fails and the metrics it concerns
    read "check failed". Life 20 and life 30 are the scenario's variants life_20 and life_30_extension. The rated
    power is locked (the power curve is the engine's): the locked-input check fails and every metric is blanked."""
    r = flexes[(label, mode)]
    failed = _failed_checks(r.values)
    if r.case is None:
        assert failed == ["Locked inputs are as exported (rated power, wind and turbine, layout, debt table)"]
        assert all(named(r.values, k) == workbook.book.FAILED for k in SHOWN)
        ws = r.values["Summary"]
        shown = {ws.cell(row, 4).value: ws.cell(row, 2).value for row in range(11, ws.max_row + 1)}
        for nm in ("net_capacity_factor", "capex_total", "debt_capacity", "gross_aep_mwh"):
            assert shown[nm] == workbook.book.FAILED, nm     # the energy and cost block is blanked too
        return
    if mode == "locked" or not failed:
        assert failed == [], failed
        for key in SHOWN:
            got = named(r.values, key)
            assert metric_matches(got, r.case.metrics[key]), (key, got, r.case.metrics[key])
        L = r.scn.lifetime
        for key in ANNUAL:
            assert rel_diff(life(named(r.values, f"annual_{key}"), L), getattr(r.case.flows, key)[0]) <= REL, key
    else:
        assert all(f.startswith("Resized:") for f in failed), failed
        for key in SHOWN:
            if key not in workbook.book.PROJECT_METRICS:
                assert named(r.values, key) == workbook.book.FAILED, key
    assert named(r.values, "breakeven_ppa_price_per_mwh") == (workbook.book.FAILED if failed else workbook.book.STALE)


def test_flex_table_resizes_exactly(flexes):
    """Every flex but the locked rated power re-sizes exactly in the sheet (no named check needed for the demo)."""
    inexact = [label for label in FLEXES if FLEXES[label][1] is not None and _failed_checks(flexes[(label, "resized")].values)]
    assert inexact == []


# --------------------------------------------------------------------------- print and cover

def test_print_setup(books):
    """Read back with openpyxl: A4 landscape for a EUR scenario, the year row and label columns as print titles on
    the yearly sheets, no sheet scaled below 8 pt (the default font is 11 pt: scale >= 73 %, never fit-to-page),
    a header with the project name and a footer with the page x of y."""
    wb = books["demo"].formulas
    for ws in wb.worksheets:
        ps = ws.page_setup
        assert ps.orientation == "landscape", ws.title
        assert int(ps.paperSize) == int(ws.PAPERSIZE_A4), ws.title
        assert not ws.sheet_properties.pageSetUpPr.fitToPage, ws.title
        assert int(ps.scale) * 11 / 100 >= 8.0, ws.title
        assert "page &P of &N" in ws.oddFooter.right.text
        assert "Tallowmere Ridge" in ws.oddHeader.center.text
    for title in ("Energy", "Cash flow", "Debt", "Lender cases"):
        ws = wb[title]
        assert ws.print_title_rows.replace("$", "") == "3:4" and ws.print_title_cols.replace("$", "") == "A:B", title
    notes = wb["Notes"]
    for r in range(1, notes.max_row + 1):
        text = notes.cell(r, 1).value
        if text and len(text) > 150:
            assert notes.row_dimensions[r].height >= 30, r


def test_cover_sheet(books):
    c = books["demo"]
    ws = c.formulas["Cover"]
    col_b = {ws.cell(r, 1).value: ws.cell(r, 2).value for r in range(1, ws.max_row + 1)}
    import hashlib
    assert col_b["Scenario SHA-256"] == hashlib.sha256(Path(c.scn.source).read_bytes()).hexdigest()
    assert col_b["Scenario file"] == Path(c.scn.source).name
    assert ws["A2"].value == CAUTION
    links = {ws.cell(r, 1).value: ws.cell(r, 1).hyperlink for r in range(1, ws.max_row + 1) if ws.cell(r, 1).hyperlink}
    assert set(links) == set(c.formulas.sheetnames) - {"Cover"}
    assert "user_notes" in c.formulas.defined_names


def test_lender_cases_equal_the_engine_with_the_debt_locked(books):
    """Reference engine: LibreOffice. Each lender case equals the engine's run of the same change with the debt of
    the base case: P-cases as an energy factor (Sample.energy_factor), O&M +10 % on every O&M cost term, availability
    -2 points on the first-year and mature availability, price -10 % on the PPA and merchant prices."""
    c = books["demo"]
    check_lender_cases(c.values, c.scn, c.case)


def lender_case_changes(scn, base):
    """The default lender cases as engine changes: (overrides, energy factor) of each, in the sheet's order."""
    m, r = scn.maintenance, scn.revenue
    om = {"maintenance.fixed_per_kw_year": 1.1 * m.fixed_per_kw_year,
          "maintenance.insurance_per_kw_year": 1.1 * m.insurance_per_kw_year,
          "maintenance.variable_per_mwh": 1.1 * m.variable_per_mwh}
    om.update({f"maintenance.component.{x.name}.replacement_cost": 1.1 * x.replacement_cost for x in m.component})
    om.update({f"maintenance.overhaul.{x.name}.cost_per_turbine": 1.1 * x.cost_per_turbine for x in m.overhaul})
    av = {"operations.availability_first_year": scn.availability_first_year - 0.02,
          "operations.availability_mature": scn.operations.availability_mature - 0.02}
    pr = {"revenue.ppa_price_per_mwh": 0.9 * r.ppa_price_per_mwh,
          "revenue.merchant_price_per_mwh": 0.9 * scn.merchant_price_per_mwh}
    f = base.flows.case_factors
    cases = [({}, 1.0), ({}, f["p90_1yr"][0, 0]), ({}, f["p99_1yr"][0, 0]), ({}, f["p90_10yr"][0, 0]), (om, 1.0),
             (av, 1.0), (pr, 1.0), ({**om, **av, **pr}, f["p90_1yr"][0, 0])]
    return cases


def check_lender_cases(values, scn, base):
    """Each lender case of the sheet equals the engine's locked run of the same change (see the test above)."""
    from lcoe.finance.cashflow import Sample
    for i, (over, factor) in enumerate(lender_case_changes(scn, base)):
        over = {k: np.array([v]) for k, v in over.items()}
        flows, met, _ = model.evaluate(scn, overrides=over or None, schedule=base.schedule,
                                       sample=Sample(energy_factor=np.array([[factor]])))
        cover = model.cover_of(flows, met)
        for key in ("min_dscr", "avg_dscr", "llcr"):
            assert math.isclose(named(values, f"lender_case_{i}_{key}"), cover[key], rel_tol=REL), (i, key)
        assert math.isclose(named(values, f"lender_case_{i}_equity_irr"), float(met["equity_irr"][0]), rel_tol=REL)
        assert named(values, f"lender_case_{i}_years_below_1") == cover["years_below_1"], i


def test_usd_prints_on_letter():
    wb = workbook.build(study.build(make_scenario(**{"project.currency": "USD"}), trials=0, variants=False))
    assert {int(ws.page_setup.paperSize) for ws in wb.worksheets} == {int(wb.active.PAPERSIZE_LETTER)}


def test_energy_sheet_traces_a_series():
    """An hourly scenario: the Energy sheet names its series file, its period and its coverage by month."""
    from conftest import DEMO_HOURLY
    scn = sc.load(DEMO_HOURLY)
    wb = workbook.build(study.build(scn, trials=0, variants=False))
    ws = wb["Energy"]
    col_a = {ws.cell(r, 1).value: r for r in range(1, ws.max_row + 1) if ws.cell(r, 1).value}
    assert ws.cell(col_a["Wind series"], 2).value == Path(scn.wind.timeseries).name
    assert " to " in ws.cell(col_a["Series period (UTC)"], 2).value
    cover = [ws.cell(col_a["Data coverage by calendar month [months of data]"], 3 + m).value for m in range(12)]
    assert all(isinstance(v, float) for v in cover) and sum(cover) > 0
    assert any(str(k).startswith("Power curve (") for k in col_a)


@pytest.mark.parametrize("name", ["demo", "equity"])
def test_every_input_cell_is_read_by_a_formula(books, name):
    """Every cell styled as an input (blue on yellow) on Inputs and Lender cases is read by some formula, so a
    change to it moves the model (what cannot move it is styled as an engine value and locked with a check)."""
    wb = books[name].formulas
    read = set()
    for ws in wb.worksheets:
        for row in ws.iter_rows():
            for cell in row:
                if cell.data_type == "f":
                    read.update(_references(wb, ws, cell.value))
    unread = []
    for title in ("Inputs", "Lender cases"):
        if title not in wb.sheetnames:
            continue
        ws = wb[title]
        for row in ws.iter_rows():
            for cell in row:
                if cell.fill is not None and cell.fill.fgColor is not None and cell.fill.fgColor.rgb in (
                        "00FFF2CC", "FFFFF2CC") and (ws.title, cell.column, cell.row) not in read:
                    unread.append(f"{title}!{cell.coordinate}")
    assert unread == [], unread
