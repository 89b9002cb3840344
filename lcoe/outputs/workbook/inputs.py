"""The Inputs sheet of the lender workbook: every assumption once, with unit and scenario key.

Values the formulas use are inputs (blue on yellow) with workbook-level defined names;
what only the engine can compute (gross AEP, the P-case energy factors, the converged
debt at close, the break-even price) follows as marked engine values (grey).

References
----------
MACRS tables: US IRS Publication 946, Table A-1 (half-year convention), as held in
:data:`lcoe.finance.tax.MACRS`.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.datavalidation import DataValidation

from lcoe.finance.debt import debt_service_scale
from lcoe.finance.tax import MACRS
from lcoe.physics import energy as en
from lcoe.finance.cashflow import period_share
from lcoe.outputs.workbook.cells import (
    BLUE,
    BOLD,
    CASES,
    DEPRECIATION,
    ENGINE_FILL,
    ENGINE_MARK,
    FORMATS,
    HEAD_FILL,
    INPUT_FILL,
    INPUTS,
    ITALIC,
    LOSSES,
    SPARE_ROWS,
    DEBT_MODES,
    TITLE,
    Book,
    absolute,
)

# --------------------------------------------------------------------------- the Inputs sheet

class InputSheet:
    """Inputs as values in one place, each with unit, scenario key and defined name."""

    def __init__(self, book: Book, ws):
        self.b, self.ws = book, ws
        self.row = 4
        self.cells: dict[str, tuple[int, int]] = {}
        b = book
        b.text(ws, 1, 1, "Inputs: every assumption the formulas use, in one place", font=TITLE)
        b.text(ws, 2, 1, "Blue on yellow: inputs you may change. Grey: engine values (computed by lcoe, "
                         "not by the sheet; re-run lcoe to refresh them). Money is year-0 money.", font=ITALIC)
        for col, width in zip("ABCDEFGH", (46, 16, 16, 44, 14, 60, 16, 8)):
            ws.column_dimensions[col].width = width
        b.text(ws, 3, 7, "As exported", font=ITALIC)
        b.text(ws, 3, 8, "Changed", font=ITALIC)
        self.locked_rows: list[int] = []
        ws.freeze_panes = "A4"
        self.fraction_dv = DataValidation(type="decimal", operator="between", formula1="0", formula2="1",
                                          allow_blank=False, showErrorMessage=True,
                                          error="A fraction between 0 and 1", errorTitle="Fraction")
        ws.add_data_validation(self.fraction_dv)

    def head(self, title: str, columns=("Item", "Value", "Unit", "Scenario key", "", "Note")):
        self.row += 1
        for i, h in enumerate(columns, start=1):
            self.b.text(self.ws, self.row, i, h, font=BOLD, fill=HEAD_FILL)
        self.b.text(self.ws, self.row, 1, title, font=BOLD, fill=HEAD_FILL)
        self.row += 1

    def value(self, name: str, label: str, value, unit: str, key: str, fmt: str, note: str = "",
              engine: bool = False, fraction: bool = False, locked: bool = False, formula: str | None = None):
        """One input row. ``engine``: an engine value (grey); ``locked``: shown like one, and a check
        fails when it is changed; ``formula``: the cell follows another input (as the scenario's
        omitted key does) until a value is typed over it. Every named row keeps its value as
        exported in column G and a changed flag in column H."""
        r = self.row
        self.row += 1
        b, ws = self.b, self.ws
        b.text(ws, r, 1, label)
        engine = engine or locked
        if formula is not None:
            c = b.formula(ws, r, 2, formula, fmt, font=BLUE)
            c.fill = INPUT_FILL
        elif isinstance(value, str):
            c = b.text(ws, r, 2, value, font=None if engine else BLUE, fill=ENGINE_FILL if engine else INPUT_FILL)
        else:
            c = b.num(ws, r, 2, value, fmt, font=None if engine else BLUE, fill=ENGINE_FILL if engine else INPUT_FILL)
        b.text(ws, r, 3, b.unit(unit), font=ITALIC)
        b.text(ws, r, 4, key, font=ITALIC)
        if engine:
            b.text(ws, r, 5, "locked" if locked else ENGINE_MARK, font=ITALIC, fill=ENGINE_FILL)
        if note:
            b.text(ws, r, 6, note, font=ITALIC)
        if fraction and not engine:
            self.fraction_dv.add(c)
        if name:
            b.name(name, ws, absolute(2, r))
            self.cells[name] = (r, 2)
            if isinstance(value, str):
                b.text(ws, r, 7, value, font=ITALIC)
            else:
                b.num(ws, r, 7, value, fmt, font=ITALIC)
            b.formula(ws, r, 8, f"IF(EXACT(B{r}&\"\",G{r}&\"\"),0,1)", "int")
            if locked:
                self.locked_rows.append(r)
        return c

    def _exported(self, first: int, last: int, ncols: int):
        """Each row of an input table keeps its values as exported (columns J on, grouped and closed: the
        flag's working, not printed) and a changed flag (H)."""
        ws = self.ws
        for i in range(1, ncols + 1):
            dim = ws.column_dimensions[get_column_letter(9 + i)]
            dim.outlineLevel, dim.hidden = 1, True
        for r in range(first, last + 1):
            parts = []
            for i in range(1, ncols + 1):
                v = ws.cell(r, i).value
                k = 9 + i
                if v is not None:
                    if isinstance(v, str):
                        self.b.text(ws, r, k, v, font=ITALIC)
                    else:
                        self.b.num(ws, r, k, v, font=ITALIC)
                col, exp = get_column_letter(i), get_column_letter(k)
                parts.append(f'EXACT({col}{r}&"",{exp}{r}&"")')
            self.b.formula(ws, r, 8, f"IF(AND({','.join(parts)}),0,1)", "int")

    def whole(self, name: str, low: int, high: int):
        """A whole number between ``low`` and ``high`` (data validation)."""
        r, col = self.cells[name]
        dv = DataValidation(type="whole", operator="between", formula1=str(low), formula2=str(high),
                            allow_blank=False, showErrorMessage=True, error=f"A whole number from {low} to {high}")
        self.ws.add_data_validation(dv)
        dv.add(self.ws.cell(r, col))

    def list_choice(self, name: str, options):
        r, col = self.cells[name]
        dv = DataValidation(type="list", formula1='"' + ",".join(options) + '"', allow_blank=False,
                            showErrorMessage=True, error="Choose one of: " + ", ".join(options))
        self.ws.add_data_validation(dv)
        dv.add(self.ws.cell(r, col))

    def table(self, title: str, columns, rows, fmts, names, engine: bool = False, spare: int = 0, note=""):
        """A table of items (one per row); ``names`` maps a column index to a range name."""
        self.head(title, columns)
        for i in range(1, len(columns) + 1):
            self.ws.cell(self.row - 1, i).alignment = Alignment(wrap_text=True, vertical="top")
        self.ws.row_dimensions[self.row - 1].height = 30
        if note:
            self.b.text(self.ws, self.row - 1, len(columns) + 1, note, font=ITALIC)
        first = self.row
        for item in rows:
            for i, (v, fmt) in enumerate(zip(item, fmts), start=1):
                font = None if engine else BLUE
                fill = ENGINE_FILL if engine else INPUT_FILL
                if v is None:
                    self.ws.cell(self.row, i).fill = fill
                elif isinstance(v, str):
                    self.b.text(self.ws, self.row, i, v, font=font, fill=fill)
                else:
                    self.b.num(self.ws, self.row, i, v, fmt, font=font, fill=fill)
            self.row += 1
        for _ in range(spare):
            for i in range(1, len(columns) + 1):
                self.ws.cell(self.row, i).fill = INPUT_FILL
                if fmts[i - 1] and fmts[i - 1] != "text":
                    self.ws.cell(self.row, i).number_format = FORMATS[fmts[i - 1]]
            self.row += 1
        last = max(first, self.row - 1)
        if not engine:
            self._exported(first, last, len(columns))
        for col, nm in names.items():
            self.b.name(nm, self.ws, f"{absolute(col, first)}:{absolute(col, last)}")
        return first, last


def write_wind_and_turbine(inp: InputSheet, scn, e) -> None:
    """The wind and turbine inputs, locked: the gross AEP is the engine's integral over them."""
    w, t = scn.wind, scn.turbine
    v = inp.value
    why = "locked: the gross AEP integrates over it (re-run lcoe to change it)"
    inp.head("Wind and turbine (locked: the gross AEP per turbine is the engine's integral over them)")
    v("wind_height_m", "Measurement height", w.height_m, "m", "wind.height_m", "price", why, locked=True)
    if w.mean_speed_mps is not None:
        v("wind_mean_speed_mps", "Mean wind speed at the measurement height", w.mean_speed_mps, "m/s",
          "wind.mean_speed_mps", "price", why, locked=True)
    if w.weibull_scale_mps is not None:
        v("wind_weibull_scale_mps", "Weibull scale A at the measurement height", w.weibull_scale_mps, "m/s",
          "wind.weibull_scale_mps", "price", why, locked=True)
    if w.weibull_shape is not None:
        v("wind_weibull_shape", "Weibull shape k", w.weibull_shape, "-", "wind.weibull_shape", "ratio", why,
          locked=True)
    if w.shear_exponent is not None:
        v("wind_shear_exponent", "Shear exponent", w.shear_exponent, "-", "wind.shear_exponent", "rate", why,
          locked=True)
    if w.roughness_length_m is not None:
        v("wind_roughness_length_m", "Roughness length", w.roughness_length_m, "m", "wind.roughness_length_m",
          "rate", why, locked=True)
    v("wind_elevation_m", "Site elevation", w.elevation_m, "m", "wind.elevation_m", "price", why, locked=True)
    v("wind_temperature_c", "Mean air temperature", w.mean_temperature_c, "deg C", "wind.mean_temperature_c",
      "price", why, locked=True)
    if w.air_density_kgm3 is not None:
        v("wind_air_density_kgm3", "Air density (given)", w.air_density_kgm3, "kg/m3", "wind.air_density_kgm3",
          "density", why, locked=True)
    v("hub_height_m", "Hub height", t.hub_height_m, "m", "turbine.hub_height_m", "price", why, locked=True)
    v("rotor_diameter_m", "Rotor diameter", t.rotor_diameter_m, "m", "turbine.rotor_diameter_m", "price", why,
      locked=True)
    if t.power_curve is not None:
        v("", "Power curve file", Path(t.power_curve).name, "", "turbine.power_curve", "text",
          "the table is on the Energy sheet", engine=True)
    if w.timeseries is not None:
        v("", "Wind series file", Path(w.timeseries).name, "", "wind.timeseries", "text", "", engine=True)
    inp.value("", "Air density at hub", e.air_density_kgm3, "kg/m3", "lcoe.physics.energy", "density",
              "ISO 2533 standard atmosphere at the hub, unless given", engine=True)
    inp.value("", "Mean wind speed at hub", e.hub_mean_speed_mps, "m/s", "lcoe.physics.energy", "price",
              "sheared from the measurement height", engine=True)
    inp.value("", "Weibull scale A at hub", e.weibull_scale_mps, "m/s", "lcoe.physics.energy", "price", "",
              engine=True)
    inp.value("", "Weibull shape k at hub", e.weibull_shape, "-", "lcoe.physics.energy", "ratio", "", engine=True)


def write_inputs(book: Book, report, horizon: int) -> InputSheet:
    """The Inputs sheet: the scenario's values, then the marked engine values and the MACRS tables."""
    case = report.case
    scn, e, fl = case.scenario, case.energy, case.flows
    ws = book.sheet(INPUTS)
    inp = InputSheet(book, ws)
    p, o, m, c, r, f = scn.project, scn.operations, scn.maintenance, scn.capex, scn.revenue, scn.finance
    v = inp.value

    inp.head("Project and plant")
    v("lifetime_years", "Operating life", scn.lifetime, "years", "project.lifetime_years", "int",
      f"live: 1 to {horizon} years (the yearly sheets run to year {horizon}; an operating mask ends the plant)")
    inp.whole("lifetime_years", 1, horizon)
    layout = scn.layout is not None
    v("turbines", "Turbines", p.turbines, "-", "project.turbines", "int",
      "locked: the layout sets the turbines and their wakes" if layout else "live: energy, kW and costs follow",
      locked=layout)
    v("rated_power_kw", "Rated power per turbine", scn.turbine.rated_power_kw, "kW", "turbine.rated_power_kw", "kw",
      "locked: the power curve (Energy sheet) is the engine's; change the turbine in the scenario", locked=True)

    write_wind_and_turbine(inp, scn, e)

    inp.head("Energy losses (fractions of gross energy, applied multiplicatively)")
    for k in LOSSES:
        if k == "wake" and e.wake_from_layout:    # the engine's computed loss, open to a flex like any input
            v("loss_wake", "Loss: wake (computed from the layout)", e.wake_loss, "fraction", "layout", "pct",
              "lcoe's Jensen/Park wake loss of the layout (Energy sheet); change it to flex", fraction=True)
            continue
        v(f"loss_{k}", f"Loss: {k.replace('_', ' ')}", getattr(scn.losses, k), "fraction", f"losses.{k}", "pct",
          fraction=True)

    inp.head("Availability and degradation")
    v("availability_first_year", "Availability, year 1", scn.availability_first_year, "fraction",
      "operations.availability_first_year", "pct",
      "" if o.availability_first_year is not None else "not in the file: follows the mature availability",
      fraction=True, formula=None if o.availability_first_year is not None else "availability_mature")
    v("availability_mature", "Availability, mature (years 2..)", o.availability_mature, "fraction",
      "operations.availability_mature", "pct", "excludes the component failures below", fraction=True)
    v("ageing_starts_year", "Availability ageing starts after year", o.ageing_starts_year, "year",
      "operations.ageing_starts_year", "int")
    v("availability_ageing_per_year", "Availability lost per year of ageing", o.availability_ageing_per_year,
      "fraction/yr", "operations.availability_ageing_per_year", "share", "absolute, per year", fraction=True)
    v("degradation_per_year", "Performance degradation", o.degradation_per_year, "fraction/yr",
      "operations.degradation_per_year", "share", "compounding: (1 - d)^(t - 1)", fraction=True)

    inp.head("Operations and maintenance (year-0 money)")
    v("fixed_per_kw_year", "Fixed O&M", m.fixed_per_kw_year, "{cur}/kW/yr", "maintenance.fixed_per_kw_year",
      "price")
    v("insurance_per_kw_year", "Insurance", m.insurance_per_kw_year, "{cur}/kW/yr",
      "maintenance.insurance_per_kw_year", "price")
    v("variable_per_mwh", "Variable O&M", m.variable_per_mwh, "{cur}/MWh", "maintenance.variable_per_mwh", "price")
    v("land_lease_share_of_revenue", "Land lease", m.land_lease_share_of_revenue, "share of revenue",
      "maintenance.land_lease_share_of_revenue", "pct", fraction=True)
    v("om_escalation", "O&M and decommissioning escalation", scn.escalation, "per year", "maintenance.escalation",
      "pct", "" if m.escalation is not None else "not in the file: follows the inflation, as the engine does",
      formula=None if m.escalation is not None else "inflation")

    comp_rows = [(x.name, x.failure_rate_per_turbine_year, x.replacement_cost, x.downtime_days)
                 for x in m.component]
    inp.table("Major component failures (expected values)",
              ("Component", "Failures per turbine-year", "Replacement cost per event [" + book.cur + "]",
               "Downtime per event [days]"),
              comp_rows, ("text", "rate", "money", "days"),
              {2: "comp_rate", 3: "comp_cost", 4: "comp_downtime_days"}, spare=SPARE_ROWS,
              note="maintenance.component; empty rows may be filled in")
    oh_rows = [(x.name, x.year, x.cost_per_turbine) for x in m.overhaul]
    inp.table("Planned overhauls", ("Work", "Operating year", "Cost per turbine [" + book.cur + "]"),
              oh_rows, ("text", "int", "money"), {2: "overhaul_year", 3: "overhaul_cost_per_turbine"},
              spare=SPARE_ROWS, note="maintenance.overhaul; empty rows may be filled in")

    inp.head("Capital cost (year-0 money, all spent at t = 0)")
    v("turbine_per_kw", "Turbines", c.turbine_per_kw, "{cur}/kW", "capex.turbine_per_kw", "price")
    v("balance_of_plant_per_kw", "Balance of plant", c.balance_of_plant_per_kw, "{cur}/kW",
      "capex.balance_of_plant_per_kw", "price")
    v("grid_connection", "Grid connection", c.grid_connection, "{cur}", "capex.grid_connection", "money")
    v("development", "Development", c.development, "{cur}", "capex.development", "money")
    v("contingency", "Contingency", c.contingency, "fraction of the above", "capex.contingency", "pct",
      fraction=True)
    v("decommissioning_per_kw", "Decommissioning at year L", c.decommissioning_per_kw, "{cur}/kW",
      "capex.decommissioning_per_kw", "price", "escalated to year L")
    v("salvage_per_kw", "Salvage at year L", c.salvage_per_kw, "{cur}/kW", "capex.salvage_per_kw", "price",
      "escalated to year L; reduces decommissioning")

    inp.head("Revenue")
    v("ppa_price_per_mwh", "PPA price", r.ppa_price_per_mwh, "{cur}/MWh", "revenue.ppa_price_per_mwh", "price")
    v("ppa_term_years", "PPA term", scn.ppa_term_years, "years", "revenue.ppa_term_years", "int",
      "" if r.ppa_term_years is not None else "not in the file: follows the life",
      formula=None if r.ppa_term_years is not None else "lifetime_years")
    v("ppa_escalation", "PPA escalation", r.ppa_escalation, "per year", "revenue.ppa_escalation", "pct")
    v("merchant_price_per_mwh", "Merchant price after the PPA", scn.merchant_price_per_mwh, "{cur}/MWh",
      "revenue.merchant_price_per_mwh", "price",
      "" if r.merchant_price_per_mwh is not None else "not in the file: follows the PPA price",
      formula=None if r.merchant_price_per_mwh is not None else "ppa_price_per_mwh")
    v("merchant_escalation", "Merchant price escalation", r.merchant_escalation, "per year",
      "revenue.merchant_escalation", "pct")
    v("production_credit_per_mwh", "Production credit", r.production_credit_per_mwh, "{cur}/MWh",
      "revenue.production_credit_per_mwh", "price", "not escalated; excluded from the LCOE")
    v("production_credit_years", "Production credit years", r.production_credit_years, "years",
      "revenue.production_credit_years", "int")

    inp.head("Finance and tax")
    v("inflation", "Inflation", f.inflation, "per year", "finance.inflation", "pct")
    v("discount_rate", "Discount rate, nominal", f.discount_rate, "per year", "finance.discount_rate", "pct",
      "project NPV and LCOE")
    v("equity_target_return", "Equity target return, nominal", scn.equity_target_return, "per year",
      "finance.equity_target_return", "pct",
      "" if f.equity_target_return is not None else "not in the file: follows the discount rate",
      formula=None if f.equity_target_return is not None else "discount_rate")
    v("tax_rate", "Corporate tax rate", f.tax_rate, "fraction", "finance.tax_rate", "pct", fraction=True)
    v("depreciation_method", "Tax depreciation method", f.depreciation, "", "finance.depreciation", "text",
      "one of: " + ", ".join(DEPRECIATION))
    inp.list_choice("depreciation_method", DEPRECIATION)
    v("depreciation_years", "Depreciation years", f.depreciation_years, "years", "finance.depreciation_years",
      "int", "straight line and declining balance")
    v("db_factor", "Declining-balance factor", 2.0, "x straight-line rate", "(workbook only)", "ratio",
      "the engine's declining balance is 2 / N (double declining); a flex of it is the workbook's alone")

    u = scn.uncertainty
    inp.head("Energy uncertainty (relative standard deviations; combined in quadrature on the Energy sheet)")
    v("unc_interannual", "Inter-annual variability of the mean speed", u.interannual_speed_sd, "fraction",
      "uncertainty.interannual_speed_sd", "pct", "shrinks with 1 / N for an N-year mean")
    inp.table("Long-term speed uncertainty terms", ("Term", "Speed sd [fraction]"),
              [(x.name, x.sd) for x in u.speed], ("text", "pct"), {2: "unc_speed_sd"}, spare=SPARE_ROWS,
              note="uncertainty.speed; times the speed sensitivity")
    derived = list(en.derived_speed_terms(scn)) or [("(none)", 0.0)]
    inp.table("Speed terms from the data (engine values)", ("Term", "Speed sd [fraction]"), derived,
              ("text", "pct"), {2: "unc_speed_derived_sd"}, engine=True,
              note="lcoe.physics.farm.long_term_term: the long-term correction's own term")
    inp.table("Energy uncertainty terms", ("Term", "Energy sd [fraction]"), [(x.name, x.sd) for x in u.energy],
              ("text", "pct"), {2: "unc_energy_sd"}, spare=SPARE_ROWS, note="uncertainty.energy")

    d = f.debt
    inp.head("Debt terms")
    v("debt_mode", "Debt mode", "locked", "", "(workbook only)", "text",
      "locked: the debt and its yearly service as at close are held (a lender's flex); resized: the debt is "
      "re-sculpted to the inputs (Debt sheet)")
    inp.list_choice("debt_mode", DEBT_MODES)
    if d is None:
        note = "all equity (no [finance.debt] table): locked at zero, a check fails if a term is typed"
        v("has_debt", "Debt in the scenario", 0, "1 = yes", "finance.debt", "int", note, locked=True)
        v("sizing_case", "Debt sizing case", "p50", "", "finance.debt.sizing_case", "text", note, engine=True)
        v("target_dscr", "Target DSCR at the sizing case", 1.30, "x", "finance.debt.target_dscr", "ratio", note,
          engine=True)
        v("max_gearing", "Maximum gearing", 0.0, "debt / capex", "finance.debt.max_gearing", "pct", note,
          engine=True)
        v("tenor_years", "Tenor", 0, "years", "finance.debt.tenor_years", "int", note, engine=True)
        v("interest_rate", "Interest rate", 0.0, "per year", "finance.debt.interest_rate", "pct", note, engine=True)
        v("upfront_fee", "Upfront fee", 0.0, "fraction of debt", "finance.debt.upfront_fee", "pct", note,
          engine=True)
    else:
        v("has_debt", "Debt in the scenario", 1, "1 = yes", "finance.debt", "int",
          "locked: the scenario has a [finance.debt] table", locked=True)
        v("sizing_case", "Debt sizing case", d.sizing_case, "", "finance.debt.sizing_case", "text",
          "one of: " + ", ".join(CASES))
        inp.list_choice("sizing_case", CASES)
        v("target_dscr", "Target DSCR at the sizing case", d.target_dscr, "x", "finance.debt.target_dscr", "ratio")
        v("max_gearing", "Maximum gearing", d.max_gearing, "debt / capex", "finance.debt.max_gearing", "pct",
          fraction=True)
        v("tenor_years", "Tenor", d.tenor_years, "years", "finance.debt.tenor_years", "int")
        v("interest_rate", "Interest rate", d.interest_rate, "per year", "finance.debt.interest_rate", "pct",
          "locked mode: the held interest stays; the LLCR discounts at this rate")
        v("upfront_fee", "Upfront fee", d.upfront_fee, "fraction of debt", "finance.debt.upfront_fee", "pct",
          "paid at t = 0; not deductible", fraction=True)

    if d is not None:
        v("target_dscr_merchant", "Target DSCR in merchant years (after the PPA term)",
          d.target_dscr if d.target_dscr_merchant is None else d.target_dscr_merchant,
          "x", "finance.debt.target_dscr_merchant", "ratio",
          "" if d.target_dscr_merchant is not None else "not in the file: follows the target DSCR",
          formula=None if d.target_dscr_merchant is not None else "target_dscr")
    else:
        v("target_dscr_merchant", "Target DSCR in merchant years", 1.30, "x", "finance.debt.target_dscr_merchant",
          "ratio", "all equity", engine=True)
    write_lender_structure(inp, case)

    # ---- engine values
    sched = case.schedule
    inp.head("Engine values: computed by lcoe, held here as marked values",
             ("Item", "Value", "Unit", "Source", "", "Why it is not a formula"))
    v("gross_aep_per_turbine_mwh", "Gross AEP per turbine", float(fl.gross_aep_mwh[0, 0]) / p.turbines, "MWh/yr",
      "lcoe.physics.energy", "mwh", "the Weibull integral (or series mean) over the site power curve", engine=True)
    v("speed_sensitivity", "AEP sensitivity to mean speed", e.speed_sensitivity, "dlnE/dlnv", "lcoe.physics.energy",
      "ratio", "the slope of the gross AEP against the mean speed, from the integral", engine=True)
    v("debt_held", "Debt at close, held", float(fl.debt[0, 0]), "{cur}", "lcoe.finance.debt.size_debt", "money",
      "sized at close through the interest-tax circularity; the debt of the locked mode", engine=True)
    v("debt_fee_held", "Upfront fee at close, held", float(fl.fee[0, 0]), "{cur}", "lcoe.finance.debt.size_debt",
      "money", "the fee of the locked mode", engine=True)
    v("interest_rate_held", "Interest rate at close", d.interest_rate if d is not None else 0.0, "per year",
      "finance.debt.interest_rate", "pct", "the rate the held schedule was sculpted at", engine=True)
    v("tenor_years_held", "Tenor at close", d.tenor_years if d is not None else 0, "years",
      "finance.debt.tenor_years", "int", "the tenor the held schedule was sculpted over", engine=True)
    v("debt_service_scale_held", "Debt-service scale at close (gearing cap)",
      debt_service_scale(sched, d.target_dscr if d is not None else 1.30), "-", "lcoe.finance.debt.sculpt",
      "factor", "1 unless the gearing cap bound at close", engine=True)
    v("breakeven_engine", "Break-even PPA price", case.metrics.get("breakeven_ppa_price_per_mwh"), "{cur}/MWh",
      "lcoe.engine.breakeven_price", "price", "a goal seek that re-sizes the debt at every trial price; shown "
      "only while every input is as exported", engine=True)
    L = scn.lifetime
    held = [(t, float(sched.debt_service[0, t - 1]) if t <= L else 0.0,
             float(sched.interest[0, t - 1]) if t <= L else 0.0) for t in range(1, horizon + 1)]
    inp.table("Debt schedule at close, held (the locked mode)", ("Year", "Debt service", "Interest"), held,
              ("int", "money", "money"), {2: "held_debt_service", 3: "held_interest"}, engine=True,
              note="lcoe.finance.debt.size_debt: sculpted at close; zero after the tenor")
    n_years = max(len(x) for x in MACRS.values())
    macrs_rows = [(t + 1, *[MACRS[k][t] if t < len(MACRS[k]) else None for k in MACRS]) for t in range(n_years)]
    first, last = inp.table("MACRS depreciation tables, percent of base by year (US IRS Publication 946, "
                            "Table A-1, half-year convention)", ("Year", *MACRS.keys()), macrs_rows,
                            ("int",) + ("rate",) * len(MACRS), {}, engine=True, note="lcoe.finance.tax.MACRS")
    book.name("macrs_table", ws, f"{absolute(2, first)}:{absolute(1 + len(MACRS), last)}")
    book.name("macrs_methods", ws, f"{absolute(2, first - 1)}:{absolute(1 + len(MACRS), first - 1)}")
    flags = [f"H{r}" for r in inp.locked_rows]
    changed = inp.row + 1
    book.text(ws, changed, 1, "Locked values changed (a check fails above 0)", font=BOLD)
    book.formula(ws, changed, 2, "+".join(flags) if flags else "0", "int")
    book.name("locked_changed", ws, absolute(2, changed))
    book.text(ws, changed + 1, 1, "Inputs changed since export (engine-held results are then stale)", font=BOLD)
    book.formula(ws, changed + 1, 2, f"SUM(H5:H{changed - 1})", "int")
    book.name("inputs_changed", ws, absolute(2, changed + 1))
    inp.row = changed + 2
    return inp


def write_lender_structure(inp: InputSheet, case) -> None:
    """The reserve accounts and the lock-up test (live inputs; locked at zero where the scenario has none),
    the construction period (locked: its funding is the engine's, Debt sheet) and the share of year 1 in
    operation (an engine value: one without a construction period)."""
    scn, v = case.scenario, inp.value
    res, w, con = scn.reserves, scn.waterfall, scn.construction
    if res is not None or w is not None:
        none = "locked at zero: the scenario has no [{}] table"
        inp.head("Reserve accounts and the cash waterfall (Cash flow sheet)")
        v("dsra_months", "Debt service reserve: months of the next year's debt service",
          res.dsra_months if res else 0.0, "months", "reserves.dsra_months", "price",
          none.format("reserves") if res is None else "funded at operation start, released at maturity",
          locked=res is None)
        v("mra_years", "Maintenance reserve: build-up years before each overhaul", res.maintenance_years if res else 0,
          "years", "reserves.maintenance_years", "int",
          none.format("reserves") if res is None else "0: no maintenance reserve", locked=res is None)
        v("deposit_rate", "Interest earned on reserve balances", res.deposit_rate if res else 0.0, "per year",
          "reserves.deposit_rate", "pct", none.format("reserves") if res is None else "", locked=res is None)
        v("lockup_dscr", "Lock-up: no distributions below this DSCR", w.lockup_dscr if w else 0.0, "x",
          "waterfall.lockup_dscr", "ratio", none.format("waterfall") if w is None else "0: no lock-up test",
          locked=w is None)
    share = period_share(scn)
    if con is not None:
        why = "locked: sets the quarters and the partial first year; change it in the scenario and re-run lcoe"
        inp.head("Construction period (locked; the funding by quarter is live on the Debt sheet)")
        v("financial_close", "Financial close", con.financial_close.isoformat(), "date",
          "construction.financial_close", "text", why, locked=True)
        v("construction_months", "Months from close to commercial operation", con.months, "months",
          "construction.months", "int", why, locked=True)
        v("construction_drawdown", "Capex drawdown profile",
          con.drawdown if isinstance(con.drawdown, str) else ", ".join(f"{x:g}" for x in con.drawdown), "",
          "construction.drawdown", "text", why, locked=True)
        v("construction_funding", "Funding order", con.funding, "", "construction.funding", "text", why, locked=True)
        v("commitment_fee", "Commitment fee on undrawn debt", con.commitment_fee, "per year",
          "construction.commitment_fee", "pct", why, locked=True)
    v("first_year_share", "Share of year 1 in operation (COD to 31 December)", 1.0 if share is None else
      float(share[0]), "fraction", "lcoe.finance.construction.operating_share", "factor",
      "energy and the fixed O&M of year 1 pro rata; the debt's clock", engine=True)
