"""The lender workbook's summary, checks and notes sheets, and the assembly of all sheets."""

from __future__ import annotations

from pathlib import Path

from openpyxl import Workbook
from openpyxl.formatting.rule import CellIsRule
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter

from lcoe.engine import METRIC_KEYS
from lcoe.inputs.about import CAUTION, __version__
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs.files import write_atomic
from lcoe.outputs.workbook.cells import (
    BOLD,
    CHECK_TOL,
    CHECKS,
    ENGINE_FILL,
    FAIL_FILL,
    HEAD_FILL,
    ITALIC,
    METRICS,
    NOTES,
    SUMMARY,
    TITLE,
    Book,
    Timeline,
    absolute,
)
from lcoe.outputs.workbook.directions import write_directions
from lcoe.outputs.workbook.inputs import write_inputs
from lcoe.outputs.workbook.results import chart_cashflow, chart_dscr, write_montecarlo, write_sensitivity
from lcoe.outputs.workbook.sheets import write_cashflow_and_debt, write_energy

# --------------------------------------------------------------------------- Summary

def _metric_formulas(cf: Timeline) -> dict[str, str]:
    L = cf.L
    first = lambda key: cf.x(key, 0)  # noqa: E731
    rest = lambda key: cf.span(key, 1, L, other=True)  # noqa: E731
    whole = lambda key: cf.span(key, 0, L, other=True)  # noqa: E731

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
        "breakeven_ppa_price_per_mwh": "breakeven_engine",
    }


def _write_summary(book: Book, report, ws, cf: Timeline):
    case = report.case
    scn = case.scenario
    b = book
    b.text(ws, 1, 1, "Summary", font=TITLE)
    b.text(ws, 2, 1, CAUTION, font=ITALIC)
    for col, width in zip("ABCDEFG", (50, 18, 14, 30, 20, 16, 50)):
        ws.column_dimensions[col].width = width
    b.text(ws, 4, 1, "Project")
    b.text(ws, 4, 2, scn.project.name, font=BOLD)
    b.text(ws, 5, 1, "Currency (label only)")
    b.text(ws, 5, 2, scn.project.currency)
    b.text(ws, 6, 1, "Operating life [years]; turbines; plant [MW]")
    b.formula(ws, 6, 2, "lifetime_years", "int")
    b.formula(ws, 6, 3, "turbines", "int")
    b.formula(ws, 6, 4, "plant_kw/1000", "price")
    b.text(ws, 7, 1, "Model checks (see Checks)")
    b.formula(ws, 7, 2, "IF(checks_ok=1,\"all pass\",\"FAILED: see Checks\")")
    b.text(ws, 8, 1, f"Written by lcoe {__version__} from {Path(scn.source).name}", font=ITALIC)

    row = 10
    heads = ("Metric", "Value", "Unit", "Defined name", "Engine when written", "Difference", "Note")
    for i, h in enumerate(heads, start=1):
        b.text(ws, row, i, h, font=BOLD, fill=HEAD_FILL)
    formulas = _metric_formulas(cf)
    notes = {"debt_amount": "engine value held on Inputs (converged sizing)",
             "breakeven_ppa_price_per_mwh": "engine value held on Inputs: re-run lcoe after changing inputs",
             "project_npv": "t = 0 plus NPV() of t = 1..L", "equity_npv": "t = 0 plus NPV() of t = 1..L",
             "lcoe_nominal_per_mwh": "pre-tax, unfinanced, no credits",
             "lcoe_real_per_mwh": "costs at the nominal rate, energy at the real rate"}
    for key in METRIC_KEYS:
        row += 1
        label, unit, fmt = METRICS[key]
        b.text(ws, row, 1, label)
        b.formula(ws, row, 2, formulas[key], fmt, font=BOLD)
        b.name(key, ws, absolute(2, row))
        b.text(ws, row, 3, b.unit(unit), font=ITALIC)
        b.text(ws, row, 4, key, font=ITALIC)
        b.num(ws, row, 5, case.metrics.get(key), fmt, fill=ENGINE_FILL)
        b.formula(ws, row, 6, f"IF(AND(ISNUMBER(B{row}),ISNUMBER(E{row})),B{row}-E{row},\"\")", fmt)
        if key in notes:
            b.text(ws, row, 7, notes[key], font=ITALIC)

    row += 2
    b.text(ws, row, 1, "Energy and costs", font=BOLD, fill=HEAD_FILL)
    for i in range(2, 5):
        ws.cell(row, i).fill = HEAD_FILL
    e = case.energy
    rows = [("Gross AEP (engine value per turbine x turbines)", "gross_aep_mwh", "MWh/yr", "mwh",
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
    for label, nm, unit, fmt, engine_value in rows:
        row += 1
        b.text(ws, row, 1, label)
        expr = cf.x("opex", 1) if nm == "opex_year1" else nm
        b.formula(ws, row, 2, expr, fmt)
        if nm == "opex_year1":
            b.name("opex_year1", ws, absolute(2, row))
        b.text(ws, row, 3, b.unit(unit), font=ITALIC)
        b.text(ws, row, 4, nm, font=ITALIC)
        b.num(ws, row, 5, engine_value, fmt, fill=ENGINE_FILL)
        b.formula(ws, row, 6, f"IF(AND(ISNUMBER(B{row}),ISNUMBER(E{row})),B{row}-E{row},\"\")", fmt)

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

def _write_checks(book: Book, ws, cf: Timeline, dt: Timeline):
    b = book
    b.text(ws, 1, 1, "Checks: live tests of the model (1 = OK, 0 = FAIL)", font=TITLE)
    b.text(ws, 2, 1, "The debt at close is an engine value: after changing an input that moves the sizing case, "
                     "the debt checks fail until the debt is re-converged (re-run lcoe).", font=ITALIC)
    for col, width in zip("ABCDE", (62, 10, 20, 20, 60)):
        ws.column_dimensions[col].width = width
    for i, h in enumerate(("Check", "Result", "Value", "Against", "Tolerance and meaning"), start=1):
        b.text(ws, 4, i, h, font=BOLD, fill=HEAD_FILL)
    L = cf.L
    tenor_end = f"INDEX({dt.span('close', other=True)},1,MIN(tenor_years,lifetime_years)+1)"
    pv_ds = f"NPV(interest_rate,{dt.span('ds', 1, L, other=True)})"
    tol = f"{CHECK_TOL}*MAX(debt_at_close,1)"

    def irr_check(key, metric):
        return (f"IF(ISNUMBER({metric}),IF(ABS({cf.x(key, 0)}+NPV({metric},{cf.span(key, 1, L, other=True)}))"
                f"<=1E-6*MAX(capex_total,1),1,0),1)", f"{cf.x(key, 0)}+NPV({metric},{cf.span(key, 1, L, other=True)})")

    checks = [
        ("Sizing-case DSCR meets the target in every tenor year", "MIN(sizing_dscr_check)",
         f"MIN({dt.span('s_dscr', other=True)})", "target_dscr",
         f"each year |DSCR - target / scale| <= {CHECK_TOL:g} x target (row on Debt)"),
        ("Present value of debt service at the interest rate equals the debt",
         f"IF(ABS({pv_ds}-debt_at_close)<={tol},1,0)", pv_ds, "debt_at_close",
         f"<= {CHECK_TOL:g} x debt; fails when inputs moved and the debt was not re-converged"),
        ("Debt repaid at the end of the tenor", f"IF(ABS({tenor_end})<={tol},1,0)", tenor_end, "0",
         f"closing balance in the last tenor year, <= {CHECK_TOL:g} x debt"),
        ("Debt within the gearing cap", "IF(debt_at_close<=debt_cap*(1+1E-12)+1E-6,1,0)", "debt_at_close",
         "debt_cap", "debt <= max gearing x capex"),
        ("Debt-service scale is 1 unless the gearing cap binds",
         f"IF(OR(debt_service_scale=1,ABS(debt_at_close-debt_cap)<={tol}),1,0)", "debt_service_scale", "1",
         "a scale below 1 only when the debt equals the cap"),
        ("Depreciation shares sum to one", "IF(ABS(SUM(depreciation_share)-1)<=1E-12,1,0)",
         "SUM(depreciation_share)", "1", "the whole base is written off by year L"),
        ("Tax is never negative", "IF(AND(MIN(annual_tax)>=0,MIN(annual_tax_unlevered)>=0),1,0)",
         "MIN(annual_tax)", "0", "losses are carried forward, not refunded"),
    ]
    for key, metric, label in (("project", "project_irr", "Project"), ("equity", "equity_irr", "Equity")):
        res, val = irr_check(key, metric)
        checks.append((f"{label} IRR: NPV at the IRR is zero", res, f"IF(ISNUMBER({metric}),{val},\"n/a\")", "0",
                       "<= 1e-6 x capex (n/a counts as OK)"))
    row = 4
    first = row + 1
    for label, result, value, against, meaning in checks:
        row += 1
        b.text(ws, row, 1, label)
        b.formula(ws, row, 2, result, "ok", font=BOLD)
        b.formula(ws, row, 3, value, "price")
        b.formula(ws, row, 4, against, "price")
        b.text(ws, row, 5, meaning, font=ITALIC)
    row += 2
    b.text(ws, row, 1, "All checks", font=BOLD)
    b.formula(ws, row, 2, f"MIN(B{first}:B{row - 2})", "ok", font=BOLD)
    b.name("checks_ok", ws, absolute(2, row))
    for ref in (f"B{first}:B{row - 2}", f"B{row}"):
        ws.conditional_formatting.add(ref, CellIsRule(operator="equal", formula=["0"], fill=FAIL_FILL))
    dt.ws.conditional_formatting.add(dt.span("check"), CellIsRule(operator="equal", formula=["0"], fill=FAIL_FILL))
    ws.freeze_panes = "A5"


# --------------------------------------------------------------------------- Notes

def _write_notes(book: Book, report, sens_note: str | None):
    ws = book.sheet(NOTES)
    b = book
    ws.column_dimensions["A"].width = 130
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
        ("The debt at close is held, so the sheet has no circular reference. After changing an input that moves "
         "the sizing case the Checks sheet flags the debt; re-run lcoe for the re-converged debt, or enter it on "
         "Inputs.", None),
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


# --------------------------------------------------------------------------- the workbook

def _value_at(scn, dotted: str):
    node = scn
    for part in dotted.split("."):
        node = getattr(node, part)
    return node if isinstance(node, (int, float, str, bool)) else None   # a table: named, not shown


def build(report) -> Workbook:
    """The lender workbook of a report (an :class:`openpyxl.Workbook`, not yet saved).

    The Sensitivity sheet shows ``report.sensitivity`` when the study computed it
    (:func:`lcoe.analysis.study.build` with ``sensitivity=True``).
    """
    case = report.case
    scn = case.scenario
    unshown = scn.lender_structure()
    if unshown:
        value = _value_at(scn, unshown[0])
        raise ScenarioError("the workbook does not yet show this part of the lender structure; write it "
                            "without it (the engine and `lcoe run` include it)", key=unshown[0], value=value,
                            has_value=value is not None)
    book = Book(scn.project.currency)
    summary = book.sheet(SUMMARY)
    write_inputs(book, report)
    en = write_energy(book, scn)
    cf, dt = write_cashflow_and_debt(book, scn, en)
    write_directions(book, en.ws, en.next + 2, case.energy)
    chart_cashflow(cf)
    chart_dscr(dt, scn.finance.debt.tenor_years if scn.finance.debt is not None else 0)
    _write_summary(book, report, summary, cf)
    if report.montecarlo is not None:
        write_montecarlo(book, report.montecarlo)
    sens_note = None
    if report.sensitivity is None:
        sens_note = "No Sensitivity sheet: left out when this workbook was written."
    else:
        write_sensitivity(book, report.sensitivity)
    _write_checks(book, book.sheet(CHECKS), cf, dt)
    _write_notes(book, report, sens_note)
    for ws in book.wb.worksheets:
        ws.page_setup.orientation = "landscape"
        ws.page_setup.fitToWidth = 1
        ws.page_setup.fitToHeight = 0
        ws.sheet_properties.pageSetUpPr.fitToPage = True
    book.wb.active = 0
    return book.wb


def write(report, path) -> Path:
    """Write the lender workbook of ``report`` to ``path`` (.xlsx), atomically.

    A folder that does not exist or cannot be written raises a one-line
    :class:`~lcoe.inputs.errors.ScenarioError` (key ``--workbook``) and leaves nothing behind.
    """
    wb = build(report)
    return write_atomic(path, lambda tmp: wb.save(tmp), option="--workbook")
