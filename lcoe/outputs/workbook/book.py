"""The lender workbook's summary, checks and notes sheets, and the assembly of all sheets."""

from __future__ import annotations

import math
from pathlib import Path

from openpyxl import Workbook
from openpyxl.formatting.rule import CellIsRule
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter

from lcoe.engine import METRIC_KEYS
from lcoe.finance.waterfall import structure_of
from lcoe.inputs.about import CAUTION, __version__
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs.files import write_atomic
from lcoe.outputs.workbook.cells import (
    BOLD,
    CHECK_TOL,
    CHECKS,
    COVER,
    MIN_HORIZON,
    ENGINE_FILL,
    FAIL_FILL,
    HEAD_FILL,
    ITALIC,
    METRICS,
    NOTES,
    SUMMARY,
    TITLE,
    Book,
    YEAR_ROW,
    Timeline,
    absolute,
    xref,
)
from lcoe.outputs.workbook.directions import write_directions
from lcoe.outputs.workbook.inputs import write_inputs
from lcoe.outputs.workbook.results import chart_cashflow, chart_dscr, write_montecarlo, write_sensitivity
from lcoe.outputs.workbook.layout import collapse, print_setup, scenario_sha256, write_cover, write_lender_cases
from lcoe.outputs.workbook.sheets import write_cashflow_and_debt, write_energy, write_energy_trace
from lcoe.physics.energy import site_for

# --------------------------------------------------------------------------- Summary

PROJECT_METRICS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr")
FAILED = "check failed"
STALE = "stale: inputs changed"


def _metric_formulas(cf: Timeline) -> dict[str, str]:
    H = cf.H
    first = lambda key: cf.x(key, 0)  # noqa: E731
    rest = lambda key: cf.span(key, 1, H, other=True)  # noqa: E731
    whole = lambda key: cf.span(key, 0, H, other=True)  # noqa: E731

    def irr(key):
        rng = whole(key)
        return f"IFERROR(IF(AND(MIN({rng})<0,MAX({rng})>0),IRR({rng},0.1),\"n/a\"),\"n/a\")"

    pv_energy = "SUMPRODUCT(annual_energy_mwh,{df})"
    cost = "capex_total+SUMPRODUCT(annual_opex+annual_decommissioning,df_nominal)"
    return {
        "lcoe_nominal_per_mwh": f"IF({pv_energy.format(df='df_nominal')}>0,({cost})/"
                                f"{pv_energy.format(df='df_nominal')},\"n/a\")",
        "lcoe_real_per_mwh": f"IF({pv_energy.format(df='df_real')}>0,({cost})/{pv_energy.format(df='df_real')},"
                             f"\"n/a\")",
        # spreadsheet NPV() discounts its first value one period: t = 0 is added outside it
        "project_npv": f"{first('project')}+NPV(discount_rate,{rest('project')})",
        "project_irr": irr("project"),
        "equity_npv": f"{first('equity')}+NPV(equity_target_return,{rest('equity')})",
        "equity_irr": irr("equity"),
        "debt_amount": "debt_at_close",
        "min_dscr": "IF(COUNT(annual_dscr)>0,MIN(annual_dscr),\"n/a\")",
        "avg_dscr": "IF(COUNT(annual_dscr)>0,AVERAGE(annual_dscr),\"n/a\")",
        "llcr": "IF(debt_at_close>0,SUMPRODUCT((annual_debt_service>0)*annual_cfads,df_interest)/debt_at_close,"
                "\"n/a\")",
        "payback_year": "IF(COUNT(payback_marker)>0,MIN(payback_marker),\"n/a\")",
        "breakeven_ppa_price_per_mwh": f"IF(inputs_changed=0,breakeven_engine,\"{STALE}\")",
    }


def difference(row: int) -> str:
    """Sheet less engine; a rounding residue below 1e-12 of the value shows as 0 (never a red "-0")."""
    return (f"IF(AND(ISNUMBER(B{row}),ISNUMBER(E{row})),IF(ABS(B{row}-E{row})<=1E-12*MAX(ABS(E{row}),1E-300),0,"
            f"B{row}-E{row}),\"\")")


def guarded(key: str, expr: str) -> str:
    """A metric shown only while the checks it depends on pass; otherwise the text ``check failed``."""
    flag = "project_checks_ok" if key in PROJECT_METRICS else "checks_ok"
    return f"IF({flag}=1,{expr},\"{FAILED}\")"


def _write_summary(book: Book, report, ws, cf: Timeline):
    case = report.case
    scn = case.scenario
    b = book
    b.text(ws, 1, 1, "Summary", font=TITLE)
    b.text(ws, 2, 1, CAUTION, font=ITALIC)
    for col, width in zip("ABCDEFG", (44, 16, 12, 26, 18, 14, 50)):
        ws.column_dimensions[col].width = width
    b.text(ws, 4, 1, "Project")
    b.text(ws, 4, 2, scn.project.name, font=BOLD)
    b.text(ws, 5, 1, "Currency (label only)")
    b.text(ws, 5, 2, scn.project.currency)
    b.text(ws, 6, 1, "Operating life [years]; turbines; plant [MW]")
    b.formula(ws, 6, 2, "lifetime_years", "int")
    b.formula(ws, 6, 3, "turbines", "int")
    b.formula(ws, 6, 4, "plant_kw/1000", "price")
    b.text(ws, 7, 1, "Model checks (see Checks); debt mode")
    b.formula(ws, 7, 2, "IF(checks_ok=1,\"all pass\",\"FAILED: see Checks\")")
    b.formula(ws, 7, 3, "debt_mode")
    b.formula(ws, 7, 4, "IF(checks_ok=1,\"\",\"first failed: \"&first_failed_check)")
    b.text(ws, 8, 1, f"Written by lcoe {__version__} from {Path(scn.source).name}", font=ITALIC)

    row = 10
    heads = ("Metric", "Value", "Unit", "Defined name", "Engine when written", "Difference", "Note")
    for i, h in enumerate(heads, start=1):
        b.text(ws, row, i, h, font=BOLD, fill=HEAD_FILL)
    formulas = _metric_formulas(cf)
    notes = {"debt_amount": "locked: held at close; resized: the capacity of the current inputs (Debt)",
             "breakeven_ppa_price_per_mwh": "engine goal seek held on Inputs: shown while no input is changed",
             "project_npv": "t = 0 plus NPV() of t = 1..L", "equity_npv": "t = 0 plus NPV() of t = 1..L",
             "lcoe_nominal_per_mwh": "pre-tax, unfinanced, no credits",
             "lcoe_real_per_mwh": "costs at the nominal rate, energy at the real rate"}
    for key in METRIC_KEYS:
        row += 1
        label, unit, fmt = METRICS[key]
        b.text(ws, row, 1, label)
        b.formula(ws, row, 2, guarded(key, formulas[key]), fmt, font=BOLD)
        b.name(key, ws, absolute(2, row))
        b.text(ws, row, 3, b.unit(unit), font=ITALIC)
        b.text(ws, row, 4, key, font=ITALIC)
        b.num(ws, row, 5, case.metrics.get(key), fmt, fill=ENGINE_FILL)
        b.formula(ws, row, 6, difference(row), fmt)
        if key in notes:
            b.text(ws, row, 7, notes[key], font=ITALIC)

    row += 2
    b.text(ws, row, 1, "Energy and costs", font=BOLD, fill=HEAD_FILL)
    for i in range(2, 5):
        ws.cell(row, i).fill = HEAD_FILL
    e = case.energy
    rows = [("Debt capacity of the current inputs", "debt_capacity", "{cur}", "money", float(case.flows.debt[0, 0])),
            ("Headroom: capacity less the held debt", "debt_headroom", "{cur}", "money", 0.0),
            ("Gross AEP (engine value per turbine x turbines)", "gross_aep_mwh", "MWh/yr", "mwh",
             e.gross_aep_mwh),
            ("Net AEP P50", "net_aep_p50_mwh", "MWh/yr", "mwh", e.net_aep_p50_mwh),
            ("Net AEP P90, 1 year", "net_aep_p90_1yr_mwh", "MWh/yr", "mwh", e.net_aep_p90_1yr_mwh),
            ("Net AEP P90, 10 years", "net_aep_p90_10yr_mwh", "MWh/yr", "mwh", e.net_aep_p90_10yr_mwh),
            ("Net AEP P99, 1 year", "net_aep_p99_1yr_mwh", "MWh/yr", "mwh", e.net_aep_p99_1yr_mwh),
            ("Net capacity factor", "net_capacity_factor", "fraction", "pct", e.net_capacity_factor),
            ("Capex total", "capex_total", "{cur}", "money", float(case.flows.capex_total[0, 0])),
            ("O&M, year 1", "opex_year1", "{cur}", "money", float(case.flows.opex[0, 1])),
            ("Decommissioning less salvage, year L", "decommissioning_net", "{cur}", "money",
             float(case.flows.decommissioning[0, -1]))]
    fund = case.flows.funding
    if fund is not None:      # the construction period's sources and uses (Debt sheet)
        rows += [("Construction: interest during construction", "interest_during_construction", "{cur}", "money",
                  float(fund.idc[0])),
                 ("Construction: commitment fee", "commitment_fee_construction", "{cur}", "money",
                  float(fund.commitment_fee[0])),
                 ("Construction: debt service reserve, first funding", "dsra_initial", "{cur}", "money",
                  float(fund.dsra[0])),
                 ("Construction: uses total = sources total", "uses_total", "{cur}", "money", float(fund.uses[0])),
                 ("Construction: equity before the reserve funding", "equity_before_reserves", "{cur}", "money",
                  float(fund.equity[0] - fund.dsra[0]))]
    for label, nm, unit, fmt, engine_value in rows:
        row += 1
        b.text(ws, row, 1, label)
        expr = cf.x("opex", 1) if nm == "opex_year1" else nm
        flag = "checks_ok" if (nm.startswith("debt_") or fund is not None and nm in (
            "interest_during_construction", "commitment_fee_construction", "dsra_initial", "uses_total",
            "equity_before_reserves")) else "project_checks_ok"
        b.formula(ws, row, 2, f"IF({flag}=1,{expr},\"{FAILED}\")", fmt)
        if nm == "opex_year1":
            b.name("opex_year1", ws, absolute(2, row))
        b.text(ws, row, 3, b.unit(unit), font=ITALIC)
        b.text(ws, row, 4, nm, font=ITALIC)
        b.num(ws, row, 5, engine_value, fmt, fill=ENGINE_FILL)
        b.formula(ws, row, 6, difference(row), fmt)

    if report.variants:
        row += 2
        names = list(report.variants)
        b.text(ws, row, 1, "Variants: engine values when written, each a separate lcoe run", font=BOLD)
        row += 1
        b.text(ws, row, 1, "Metric [unit]", font=BOLD, fill=HEAD_FILL)
        b.text(ws, row, 2, "Base", font=BOLD, fill=HEAD_FILL)
        for j, nm in enumerate(names):
            b.text(ws, row, 3 + j, nm, font=BOLD, fill=ENGINE_FILL)
        for key in METRIC_KEYS:
            row += 1
            label, unit, fmt = METRICS[key]
            b.text(ws, row, 1, f"{label} [{b.unit(unit)}]")
            b.num(ws, row, 2, case.metrics.get(key), fmt, fill=ENGINE_FILL)
            for j, nm in enumerate(names):
                b.num(ws, row, 3 + j, report.variants[nm].metrics.get(key), fmt, fill=ENGINE_FILL)
        for j in range(len(names)):
            ws.column_dimensions[get_column_letter(3 + j)].width = max(
                ws.column_dimensions[get_column_letter(3 + j)].width or 0, 18)
    ws.freeze_panes = "A11"


# --------------------------------------------------------------------------- Checks

def _write_checks(book: Book, ws, en: Timeline, cf: Timeline, dt: Timeline, scn):
    b = book
    b.text(ws, 1, 1, "Checks: live tests of the model (1 = OK, 0 = FAIL)", font=TITLE)
    b.text(ws, 2, 1, "A failed check blanks the results that depend on it (Summary shows \"check failed\"). Scope "
                     "'all' covers every metric; 'debt' the equity and debt metrics.", font=ITALIC)
    for col, width in zip("ABCDEF", (66, 10, 20, 20, 10, 64)):
        ws.column_dimensions[col].width = width
    for i, h in enumerate(("Check", "Result", "Value", "Against", "Scope", "Tolerance and meaning"), start=1):
        b.text(ws, 4, i, h, font=BOLD, fill=HEAD_FILL)
    H = cf.H
    close = dt.span("close", other=True)
    ds_row = dt.span("ds", 1, H, other=True)
    tenor_end = f"INDEX({close},1,MIN(IF(debt_locked=1,tenor_years_held,tenor_years),lifetime_years)+1)"
    life_end = f"INDEX({close},1,lifetime_years+1)"
    rate = "IF(debt_locked=1,interest_rate_held,interest_rate)"
    clock = xref(en.ws, en.span("clock", 1, H))
    pv_ds = f"SUMPRODUCT({ds_row},(1+{rate})^-{clock})"
    tol = f"{CHECK_TOL}*MAX(debt_at_close,1)"
    years = xref(cf.ws, f"${cf.col(1)}${YEAR_ROW}:${cf.col(H)}${YEAR_ROW}")

    def irr_check(key, metric):
        return (f"IF(ISNUMBER({metric}),IF(ABS({cf.x(key, 0)}+NPV({metric},{cf.span(key, 1, H, other=True)}))"
                f"<=1E-6*MAX(capex_total,1),1,0),1)", f"{cf.x(key, 0)}+NPV({metric},{cf.span(key, 1, H, other=True)})")

    checks = [
        ("Operating life is a whole number from 1 to the horizon",
         f"IF(AND(lifetime_years>=1,lifetime_years<={H},lifetime_years=INT(lifetime_years)),1,0)", "lifetime_years",
         f"{H}", "all", f"the yearly sheets run to year {H}; re-export from lcoe for a longer life"),
        ("Locked inputs are as exported (rated power, wind and turbine, layout, debt table)",
         "IF(locked_changed=0,1,0)", "locked_changed", "0", "all",
         "the gross AEP and the power curve are the engine's: change them in the scenario and re-run lcoe"),
        ("Debt mode is locked or resized", 'IF(OR(debt_mode="locked",debt_mode="resized"),1,0)', "debt_mode",
         '"locked / resized"', "debt", "one input cell on Inputs"),
        ("Depreciation shares sum to one", "IF(ABS(SUM(depreciation_share)-1)<=1E-12,1,0)",
         "SUM(depreciation_share)", "1", "all", "the whole base is written off by year L"),
        ("Tax is never negative", "IF(AND(MIN(annual_tax)>=0,MIN(annual_tax_unlevered)>=0),1,0)",
         "MIN(annual_tax)", "0", "all", "losses are carried forward, not refunded"),
        ("Debt service is paid at the schedule's rate: its present value equals the debt",
         f"IF(ABS({pv_ds}-debt_at_close)<={tol},1,0)", pv_ds, "debt_at_close", "debt",
         f"<= {CHECK_TOL:g} x debt, discounted on the debt's clock; locked: at the rate at close"),
        ("Debt repaid at the end of the tenor", f"IF(ABS({tenor_end})<={tol},1,0)", tenor_end, "0", "debt",
         f"closing balance in the last tenor year, <= {CHECK_TOL:g} x debt"),
        ("Debt repaid within the life: no balance and no debt service after it",
         f"IF(AND(ABS({life_end})<={tol},SUMPRODUCT(({years}>lifetime_years)*{ds_row})=0),1,0)", life_end, "0",
         "debt", "locked: fails when the life is cut below the held tenor"),
        ("Debt within the gearing cap", "IF(debt_at_close<=debt_cap*(1+1e-09)+1E-6,1,0)", "debt_at_close",
         "debt_cap", "debt", "debt <= max gearing x capex"),
        ("Resized: the sizing-case DSCR meets the target in every tenor year", "MIN(sizing_dscr_check)",
         f"MIN({dt.span('s_dscr', other=True)})", "target_dscr", "debt",
         f"each year |DSCR - target / scale| <= {CHECK_TOL:g} x target (row on Debt); locked: n/a"),
        ("Resized: the passes that carry the tax losses and the gearing cap converged", f"IF(OR(debt_locked=1,ABS(capacity_last_change)"
         f"<={tol}),1,0)", "capacity_last_change", "0", "debt",
         "change of the capacity in the last pass <= 1e-9 x debt; else the re-sized debt needs the engine (re-run lcoe)"),
        ("All-equity scenario: no debt term typed", "IF(OR(has_debt=1,AND(max_gearing=0,tenor_years=0,"
         "interest_rate=0,upfront_fee=0)),1,0)", "has_debt", "1", "debt",
         "without a [finance.debt] table the debt is zero; typed terms are refused here"),
        ("Normal quantiles: the constants equal NORM.S.INV", "IF(AND(ABS(z_90-z_90_sheet)<=1E-9,"
         "ABS(z_99-z_99_sheet)<=1E-9),1,0)", "z_90_sheet", "z_90", "all", "1e-9"),
    ]
    if structure_of(scn) is not None:
        cons = cf.span("w_cons", 1, H, other=True)
        checks.append(("Cash waterfall: no cash created or lost in any year", f"IF(SUMPRODUCT(ABS({cons}))<="
                       f"{CHECK_TOL}*MAX(capex_total,1),1,0)", f"SUMPRODUCT(ABS({cons}))", "0", "debt",
                       "sum of |conservation row| (Cash flow) <= 1e-9 x capex"))
    if scn.construction is not None:
        tol_c = f"{CHECK_TOL}*MAX(capex_total,1)"
        checks.append(("Construction: sources equal uses", f"IF(ABS(sources_total-uses_total)<={tol_c},1,0)",
                       "sources_total", "uses_total", "debt", "<= 1e-9 x capex (Debt sheet)"))
        checks.append(("Construction funding: the debt is drawn in full by COD and the passes converged",
                       "construction_as_close", "sources_total", "uses_total", "debt",
                       "debt drawn = debt and the last two passes' IDC and fee agree, <= 1e-9 x capex (Debt sheet)"))
    for key, metric, label in (("project", "project_irr", "Project"), ("equity", "equity_irr", "Equity")):
        res, val = irr_check(key, f"{metric}_raw")
        checks.append((f"{label} IRR: NPV at the IRR is zero", res, f"IF(ISNUMBER({metric}_raw),{val},\"n/a\")", "0",
                       "all" if key == "project" else "debt", "<= 1e-6 x capex (n/a counts as OK)"))
    row = 4
    first = row + 1
    for label, result, value, against, scope, meaning in checks:
        row += 1
        b.text(ws, row, 1, label)
        b.formula(ws, row, 2, result, "ok", font=BOLD)
        b.formula(ws, row, 3, value, "price")
        b.formula(ws, row, 4, against, "price")
        b.text(ws, row, 5, scope, font=ITALIC)
        b.text(ws, row, 6, meaning, font=ITALIC)
        ws.cell(row, 1).alignment = Alignment(wrap_text=True, vertical="top")
        ws.cell(row, 6).alignment = Alignment(wrap_text=True, vertical="top")
    last = row
    rng, scopes, labels = f"B{first}:B{last}", f"E{first}:E{last}", f"A{first}:A{last}"
    row += 2
    b.text(ws, row, 1, "Checks of scope 'all' (the project metrics)", font=BOLD)
    b.formula(ws, row, 2, f'IF(COUNTIFS({scopes},"all",{rng},0)=0,1,0)', "ok", font=BOLD)
    b.name("project_checks_ok", ws, absolute(2, row))
    row += 1
    b.text(ws, row, 1, "All checks", font=BOLD)
    b.formula(ws, row, 2, f"MIN({rng})", "ok", font=BOLD)
    b.name("checks_ok", ws, absolute(2, row))
    row += 1
    b.text(ws, row, 1, "First failed check", font=BOLD)
    b.formula(ws, row, 2, f'IFERROR(INDEX({labels},MATCH(0,{rng},0)),"")')
    b.name("first_failed_check", ws, absolute(2, row))
    row += 2
    formulas = _metric_formulas(cf)
    for key in ("project_irr", "equity_irr"):
        b.text(ws, row, 1, f"{METRICS[key][0]} before the checks (the value the IRR check tests)", font=ITALIC)
        b.formula(ws, row, 2, formulas[key], "pct")
        b.name(f"{key}_raw", ws, absolute(2, row))
        row += 1
    for ref in (rng, f"B{row - 2}:B{row - 1}"):
        ws.conditional_formatting.add(ref, CellIsRule(operator="equal", formula=["0"], fill=FAIL_FILL))
    dt.ws.conditional_formatting.add(dt.span("check"), CellIsRule(operator="equal", formula=["0"], fill=FAIL_FILL))
    ws.freeze_panes = "A5"


# --------------------------------------------------------------------------- Notes

NOTES_WIDTH = 110

def _write_notes(book: Book, report, sens_note: str | None):
    ws = book.sheet(NOTES)
    scn = report.case.scenario
    b = book
    ws.column_dimensions["A"].width = NOTES_WIDTH
    lines = [
        ("Notes", TITLE),
        ("Caution", BOLD), (CAUTION, None),
        ("", None),
        ("How to read and use this workbook", BOLD),
        ("Inputs holds every assumption once, with its unit and scenario key; blue on yellow cells may be "
         "changed.", None),
        ("Energy, Cash flow and Debt are yearly formulas over the inputs: years run across, t = 0 is "
         "construction.", None),
        ("Summary shows every metric as a formula; each has a workbook-level defined name spelled as in the JSON "
         "report (for example lcoe_nominal_per_mwh). The inputs, yearly rows and energy totals are named too.", None),
        ("Grey cells are engine values: computed by lcoe, held as values because a formula would need the engine "
         "(the Weibull integral, the debt sizing iteration, a goal seek, Monte Carlo, sensitivity runs).", None),
        ("Debt mode (Inputs): locked holds the debt, its fee and its yearly service and interest as at close, as a "
         "lender does when running a downside case; resized re-sculpts the debt to the inputs without a circular "
         "reference: the balance is rolled backward from zero at maturity with the interest tax shield in closed "
         "form, and a few passes carry the tax losses and the gearing cap (Debt sheet). The debt capacity of the "
         "current inputs and the headroom are shown in both modes.", None),
        *([("Lender structure: the construction funding by quarter (Debt sheet, below the yearly lines) is worked "
            "in a fixed number of passes, each on the last one's interest during construction and commitment fee "
            "(no circular reference; a check tests that the last two agree). Year 1 runs from the COD to 31 "
            "December: energy and fixed O&M pro rata, and the debt's interest, sizing and LLCR on the clock of "
            "elapsed years.", None)] if scn.construction is not None else []),
        *([("Cash waterfall (Cash flow sheet): deposit interest, maintenance reserve above target released, debt "
            "service, DSRA then lock-up account drawn, unpaid service funded by the sponsor, DSRA to N/12 of next "
            "year's service, maintenance reserve towards its build-up target, lock-up test, distributions; every "
            "balance released in year L. Equity IRR and NPV come from the contribution and the distributions.",
            None)] if structure_of(scn) is not None else []),
        ("The operating life is live: the yearly sheets run to a fixed horizon and an operating mask ends energy, "
         "revenue and costs after the life; decommissioning falls in year L.", None),
        ("A failed check blanks the results that depend on it (\"check failed\"); the break-even price, Monte "
         "Carlo and sensitivity are engine results, shown as stale once an input is changed.", None),
        ("", None),
        ("Conventions", BOLD),
        ("t = 0 is construction (all capex at t = 0); t = 1..L are operating years; cash flows at the end of each "
         "year, discounted by (1 + r)^-t.", None),
        ("Inputs are year-0 money; a price or cost with growth g is worth base x (1 + g)^t in year t (nominal). "
         "O&M and decommissioning grow at the O&M escalation. Real rate = (1 + r) / (1 + inflation) - 1.", None),
        ("Net energy_t = gross x prod(1 - loss) x availability_t x (1 - expected component downtime) x "
         "(1 - degradation)^(t - 1). P50 uses the mature availability.", None),
        ("Price: the PPA price while t <= PPA term, the merchant price after. Revenue = energy x (price + "
         "production credit).", None),
        ("O&M_t = [(fixed + insurance) x kW + variable x E_t + expected failures + overhauls] x (1 + esc)^t + "
         "lease share x revenue_t. Decommissioning less salvage is a cost of year L, deductible for tax.", None),
        ("Tax: taxable income = revenue - O&M - decommissioning - depreciation (- interest when levered); losses "
         "carried forward without limit, never a negative tax: the tax base of a year is the rise of the running "
         "maximum of cumulative taxable income.", None),
        ("Depreciation starts in year 1 on the capex total; whatever is left at year L is written off then.", None),
        ("Debt: sculpted. In the sizing case (energy x P_case / P50) debt service = CFADS / target DSCR over the "
         "tenor; debt = min(PV of that service at the interest rate, max gearing x capex), scaled down where the "
         "cap binds. The schedule is fixed at close; the P50 case meets it.", None),
        ("LCOE (pre-tax, unfinanced, no credits) = [capex + PV(O&M) + PV(decommissioning)] / PV(energy); the real "
         "LCOE discounts energy at the real rate.", None),
        ("NPV: the spreadsheet NPV() discounts its first value by one period, so each NPV here is the t = 0 value "
         "plus NPV() of t = 1..L. IRR() starts from a guess of 10 %, as the engine does.", None),
        ("LLCR = PV at the interest rate of P50 CFADS over the debt-service years / debt. Payback year = first "
         "year the cumulative equity cash flow is non-negative.", None),
        ("P-values are conservative-side: P90 is the outcome no worse than in 90 % of cases.", None),
        ("", None),
        ("Sources", BOLD),
        ("MACRS tables: US IRS Publication 946, Table A-1 (general depreciation system, half-year convention).", None),
        ("Power-curve density normalisation: IEC 61400-12-1. Air density: ISO 2533 standard atmosphere.", None),
        ("P90 / P99: normal quantiles z_90 = 1.2815516, z_99 = 2.3263479; uncertainties combined in quadrature "
         "(common practice in energy-yield assessment).", None),
        ("", None),
        (f"Written by lcoe {__version__}.", ITALIC),
    ]
    if sens_note:
        lines.insert(-1, (sens_note, ITALIC))
    warnings = report.to_dict().get("warnings") or []
    if warnings:
        lines.insert(-1, ("Warnings from the engine", BOLD))
        for w in warnings:
            lines.insert(-1, (w, None))
    for i, (text, font) in enumerate(lines, start=1):
        if text:
            c = b.text(ws, i, 1, text, font=font)
            c.alignment = Alignment(wrap_text=True, vertical="top")
            # rows tall enough for their wrapped text: about 1.1 characters per unit of column width
            n_lines = max(1, math.ceil(len(text) / (1.1 * NOTES_WIDTH)))
            ws.row_dimensions[i].height = 15.0 * n_lines + (6 if font is TITLE else 2)


# --------------------------------------------------------------------------- the workbook

def _value_at(scn, dotted: str):
    node = scn
    for part in dotted.split("."):
        node = getattr(node, part)
    return node if isinstance(node, (int, float, str, bool)) else None   # a table: named, not shown


def horizon_of(scn, minimum: int = MIN_HORIZON) -> int:
    """The yearly sheets' horizon: the longest life among the scenario and its variants, at least
    ``minimum`` years (the print area runs to the longest life)."""
    lives = [scn.lifetime] + [scn.variant(name).lifetime for name in (scn.variants or {})]
    return max(minimum, *lives)


def build(report, *, source_sha256: str | None = None) -> Workbook:
    """The lender workbook of a report (an :class:`openpyxl.Workbook`, not yet saved).

    The Sensitivity sheet shows ``report.sensitivity`` when the study computed it
    (:func:`lcoe.analysis.study.build` with ``sensitivity=True``).
    """
    case = report.case
    scn = case.scenario
    # the workbook shows the construction period, the reserves, the lock-up test and the merchant target;
    # a cash sweep (prepayments moving the schedule) is not shown yet
    unshown = [k for k in scn.lender_structure() if k == "waterfall"
               and scn.waterfall is not None and scn.waterfall.cash_sweep]
    unshown = ["waterfall.cash_sweep"] if unshown else []
    if unshown:
        value = _value_at(scn, unshown[0])
        raise ScenarioError("the workbook does not yet show this part of the lender structure; write it "
                            "without it (the engine and `lcoe run` include it)", key=unshown[0], value=value,
                            has_value=value is not None)
    horizon = horizon_of(scn)
    book = Book(scn.project.currency)
    cover = book.sheet(COVER)
    summary = book.sheet(SUMMARY)
    write_inputs(book, report, horizon)
    en = write_energy(book, scn, horizon)
    cf, dt = write_cashflow_and_debt(book, scn, en)
    collapse(dt.ws, dt.pass_rows)
    site = site_for(scn)
    trace_end = write_energy_trace(book, en, scn, site)
    write_directions(book, en.ws, trace_end + 2, case.energy)
    chart_cashflow(cf, scn.lifetime)
    chart_dscr(dt, min(scn.finance.debt.tenor_years, scn.lifetime) if scn.finance.debt is not None else 0)
    _write_summary(book, report, summary, cf)
    if scn.finance.debt is not None:
        write_lender_cases(book, en, cf, scn)
    if report.montecarlo is not None:
        write_montecarlo(book, report.montecarlo)
    sens_note = None
    if report.sensitivity is None:
        sens_note = "No Sensitivity sheet: left out when this workbook was written."
    else:
        write_sensitivity(book, report.sensitivity)
    _write_checks(book, book.sheet(CHECKS), en, cf, dt, scn)
    _write_notes(book, report, sens_note)
    write_cover(book, cover, report, source_sha256)
    print_setup(book, scn, (en, cf, dt), horizon_of(scn, minimum=0))
    book.wb.active = 0
    return book.wb


def write(report, path) -> Path:
    """Write the lender workbook of ``report`` to ``path`` (.xlsx), atomically.

    A folder that does not exist or cannot be written raises a one-line
    :class:`~lcoe.inputs.errors.ScenarioError` (key ``--workbook``) and leaves nothing behind.
    """
    wb = build(report, source_sha256=scenario_sha256(report.case.scenario))
    return write_atomic(path, lambda tmp: wb.save(tmp), option="--workbook")
