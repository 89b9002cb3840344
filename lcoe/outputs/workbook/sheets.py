"""The live yearly sheets of the lender workbook: energy, cash flow and debt.

The formulas follow the engine's arithmetic line by line (:mod:`lcoe.physics.energy`,
:mod:`lcoe.finance.costs`, :mod:`lcoe.finance.cashflow`), in the same order of operations where it
matters for rounding, so a spreadsheet engine reproduces the engine's yearly lines.
The yearly columns run to a fixed horizon; the operating life is an input and a live
operating mask ends energy, revenue and costs after it.

The debt has two modes, one input cell (``debt_mode``):

* ``locked``: the debt, its fee and its yearly debt service and interest as sized at close
  are held (engine values on Inputs); every flex moves CFADS, DSCR, LLCR and the equity.
* ``resized``: the debt is re-sculpted to the current inputs without a circular reference.
  Sculpting fixes DS_t = CFADS_t / D over the tenor, and CFADS_t = pre-tax_t - tau (pre-tax_t -
  dep_t - r B_(t-1)) while the sizing case pays tax on its income in every tenor year. With
  a_t = (pre-tax_t - tau (pre-tax_t - dep_t)) / D and k = tau r / D this is DS_t = a_t + k B_(t-1),
  and B_t = B_(t-1) (1 + r) - DS_t gives B_(t-1) = (B_t + a_t) / (1 + r - k): the balance is rolled
  backward from zero at maturity, and its value at close is the debt capacity. Where a year's
  service would be negative it is zero and B_(t-1) = B_t / (1 + r). A tax loss in the tenor, or a
  gearing cap that binds, makes the roll inexact; named checks say so.

The capacity is shown in both modes beside the held debt, with the headroom.
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from lcoe.outputs.workbook.cells import (
    BOLD,
    CASHFLOW,
    CHECK_TOL,
    DEBT,
    ENERGY,
    ENGINE_FILL,
    HEAD_FILL,
    HOURS_PER_YEAR,
    ITALIC,
    LOSSES,
    SNAP,
    Book,
    Timeline,
)
from lcoe.finance.cashflow import period_share
from lcoe.finance.waterfall import structure_of
from lcoe.outputs.workbook.construction import write_funding
from lcoe.outputs.workbook.reserves import waterfall_block
from lcoe.physics.wind import Z_90, Z_99

RESIZE_PASSES = 10   # passes of the backward roll that carry the tax losses (each corrects the last)


def partial(scn, ref: str) -> str:
    """``*ref`` (the share of the year in operation) where year 1 is partial, else nothing (the
    formulas of a scenario without a construction period stay as they were)."""
    return f"*{ref}" if period_share(scn) is not None else ""


# --------------------------------------------------------------------------- Energy

def write_energy(book: Book, scn, horizon: int) -> Timeline:
    """The Energy sheet: gross AEP (engine value) to net energy per year, sigma and the P-values."""
    ws = book.sheet(ENERGY)
    en = Timeline(book, ws, horizon, "Energy: gross to net, each year",
                  "Gross AEP per turbine is an engine value (Inputs); everything else here is a formula.")
    en.section("Plant and energy (single values in column B)")
    en.single("plant_kw", "Plant capacity", "kW", "rated_power_kw*turbines", "kw", name="plant_kw")
    en.single("gross", "Gross AEP", "MWh/yr", "gross_aep_per_turbine_mwh*turbines", "mwh", name="gross_aep_mwh")
    en.single("lf", "Loss factor, prod(1 - loss)", "-", "*".join(f"(1-loss_{k})" for k in LOSSES), "factor",
              name="loss_factor")
    en.single("down", "Expected component downtime, sum(rate x days) / 365", "fraction",
              "SUMPRODUCT(comp_rate,comp_downtime_days)/365", "share", name="downtime_fraction")
    en.single("p50", "Net AEP P50 (mature availability)", "MWh/yr",
              "gross_aep_mwh*loss_factor*availability_mature*(1-downtime_fraction)", "mwh", name="net_aep_p50_mwh")

    en.section("Uncertainty and P-values: sigma_N = sqrt((S iav)^2 / N + sum (S speed)^2 + sum energy^2)")
    spd = "(SUMSQ(unc_speed_sd)+SUMSQ(unc_speed_derived_sd))"
    for n, key in ((1, "sigma_1yr"), (10, "sigma_10yr")):
        en.single(key, f"Energy uncertainty sigma, {n}-year mean", "fraction",
                  f"SQRT((speed_sensitivity*unc_interannual)^2/{n}+speed_sensitivity^2*{spd}+SUMSQ(unc_energy_sd))",
                  "pct", name=key)
    en.single("z90", "Normal quantile z_90 (constant; scipy.stats.norm.ppf(0.90))", "-", repr(Z_90), "factor",
              name="z_90", fill=ENGINE_FILL)
    en.single("z99", "Normal quantile z_99 (constant; scipy.stats.norm.ppf(0.99))", "-", repr(Z_99), "factor",
              name="z_99", fill=ENGINE_FILL)
    en.single("z90_check", "The spreadsheet's NORM.S.INV(0.90), for comparison", "-", "_xlfn.NORM.S.INV(0.9)",
              "factor", name="z_90_sheet")
    en.single("z99_check", "The spreadsheet's NORM.S.INV(0.99), for comparison", "-", "_xlfn.NORM.S.INV(0.99)",
              "factor", name="z_99_sheet")
    for key, sig, z, label in (("p90_1yr", "sigma_1yr", "z_90", "P90, 1 year"),
                               ("p90_10yr", "sigma_10yr", "z_90", "P90, 10 years"),
                               ("p99_1yr", "sigma_1yr", "z_99", "P99, 1 year")):
        en.single(f"factor_{key}", f"Factor {label}, P / P50 = MAX(0, 1 - z sigma)", "-", f"MAX(0,1-{z}*{sig})",
                  "factor", name=f"factor_{key}")
    for k, label in (("p90_1yr", "P90, 1 year"), ("p90_10yr", "P90, 10 years"), ("p99_1yr", "P99, 1 year")):
        en.single(k, f"Net AEP {label}", "MWh/yr", f"net_aep_p50_mwh*factor_{k}", "mwh", name=f"net_aep_{k}_mwh")
    en.single("cf", "Net capacity factor, P50", "fraction", f"net_aep_p50_mwh/(plant_kw*{HOURS_PER_YEAR}/1000)",
              "pct", name="net_capacity_factor")
    en.single("sizing", "Debt sizing factor, P_case / P50 of the sizing case", "-",
              'IF(sizing_case="p50",1,IF(sizing_case="p90_1yr",factor_p90_1yr,IF(sizing_case="p90_10yr",'
              'factor_p90_10yr,IF(sizing_case="p99_1yr",factor_p99_1yr,NA()))))', "factor", name="sizing_factor")

    en.section("Yearly energy")
    y, c = en.y, en.c
    en.line("op", "Operating year (1 = yes): the live operating mask", "flag",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}<=lifetime_years),1,0)", "flag", name="operating_mask")
    en.line("ageing", "Availability lost to ageing", "fraction",
            lambda t: f"IF(AND({c('op', t)}=1,{y(t)}>ageing_starts_year),"
                      f"availability_ageing_per_year*({y(t)}-ageing_starts_year),0)", "share")
    en.line("avail", "Availability", "fraction",
            lambda t: f"IF({c('op', t)}=0,0,MAX(0,MIN(1,IF({y(t)}<=1,availability_first_year,availability_mature)"
                      f"-{c('ageing', t)})))", "pct")
    en.line("share", "Share of the year in operation (year 1 from the COD; first_year_share)", "fraction",
            lambda t: f"IF({c('op', t)}=0,0,IF({y(t)}=1,first_year_share,1))", "factor", name="operating_share")
    en.line("clock", "Years from the start of operation to the end of the year (the debt's clock)", "years",
            lambda t: f"{c('clock', t - 1)}+IF({y(t)}=1,first_year_share,1)", "factor", t0=lambda t: "0",
            name="debt_clock")
    en.line("degr", "Degradation factor, (1 - d)^(t - 1)", "-",
            lambda t: f"IF({c('op', t)}=0,0,(1-degradation_per_year)^({y(t)}-1))", "factor")
    en.line("energy", "Net energy", "MWh",
            lambda t: f"IF({c('op', t)}=0,0,gross_aep_mwh*loss_factor*{c('avail', t)}{partial(scn, c('share', t))}"
                      f"*(1-downtime_fraction)*{c('degr', t)})", "mwh", bold=True)
    en.line("ncf", "Net capacity factor", "fraction",
            lambda t: f"{c('energy', t)}/(plant_kw*{HOURS_PER_YEAR}/1000)", "pct")
    return en


def write_energy_trace(book: Book, en: Timeline, scn, site) -> int:
    """Below the yearly lines: the wind and turbine values the gross AEP comes from, the series (if
    any) and the power-curve table; engine values, shown so that the energy can be traced."""
    b, ws = book, en.ws
    row = en.next + 2
    b.text(ws, row, 1, "Where the gross AEP comes from (engine values; the inputs are locked on Inputs)",
           font=BOLD, fill=ENGINE_FILL)
    row += 1
    w, tb, cl = scn.wind, scn.turbine, site.climate
    items = [("Measurement height [m]", "wind_height_m", "price")]
    items += [(lbl, nm, fmt) for lbl, nm, fmt, given in (
        ("Mean wind speed at the measurement height [m/s]", "wind_mean_speed_mps", "price", w.mean_speed_mps),
        ("Weibull scale A at the measurement height [m/s]", "wind_weibull_scale_mps", "price", w.weibull_scale_mps),
        ("Weibull shape k", "wind_weibull_shape", "ratio", w.weibull_shape),
        ("Shear exponent", "wind_shear_exponent", "rate", w.shear_exponent),
        ("Roughness length [m]", "wind_roughness_length_m", "rate", w.roughness_length_m)) if given is not None]
    items += [("Hub height [m]", "hub_height_m", "price"), ("Rotor diameter [m]", "rotor_diameter_m", "price"),
              ("Rated power per turbine [kW]", "rated_power_kw", "kw")]
    for label, nm, fmt in items:
        b.text(ws, row, 1, label)
        b.formula(ws, row, 2, nm, fmt)
        row += 1
    for label, value, fmt in (("Air density at hub [kg/m3]", cl.density_kgm3, "density"),
                              ("Mean speed at hub [m/s]", cl.mean_speed_mps, "price"),
                              ("Weibull A at hub [m/s]", cl.scale_mps, "price"),
                              ("Weibull k at hub", cl.shape, "ratio"),
                              ("Gross AEP per turbine [MWh/yr]", site.gross_aep_mwh / max(site.turbines, 1), "mwh")):
        b.text(ws, row, 1, label)
        b.num(ws, row, 2, value, fmt, fill=ENGINE_FILL)
        row += 1
    series = getattr(cl, "series", None)
    if w.timeseries is not None:
        b.text(ws, row, 1, "Wind series", font=BOLD)
        b.text(ws, row, 2, Path(w.timeseries).name)
        row += 1
        if series is not None and series.timestamps is not None and len(series.timestamps):
            first = np.datetime_as_string(series.timestamps.min(), unit="m")
            last = np.datetime_as_string(series.timestamps.max(), unit="m")
            b.text(ws, row, 1, "Series period (UTC)")
            b.text(ws, row, 2, f"{first} to {last}")
            row += 1
        if series is not None:
            for label, value, fmt in (("Samples kept", series.hours, "int"), ("Time step [h]", series.step_h, "price"),
                                      ("Years of data", series.years, "price")):
                b.text(ws, row, 1, label)
                b.num(ws, row, 2, value, fmt, fill=ENGINE_FILL)
                row += 1
            b.text(ws, row, 1, "Data coverage by calendar month [months of data]")
            for m, cov in enumerate(series.month_coverage):
                b.num(ws, row, 3 + m, cov, "price", fill=ENGINE_FILL)
            row += 1
        if cl.long_term is not None:
            b.text(ws, row, 1, "Long-term corrected (see the long-term block below)", font=ITALIC)
            row += 1
    curve = site.curve
    row += 1
    if curve.speed_mps is not None:
        name = Path(tb.power_curve).name if tb.power_curve else "physics curve"
        b.text(ws, row, 1, f"Power curve ({name}), at {curve.reference_density_kgm3:g} kg/m3; the engine "
                           "normalises it to the hub density (IEC 61400-12-1)", font=BOLD, fill=HEAD_FILL)
        row += 1
        b.text(ws, row, 1, "Wind speed [m/s]", font=BOLD)
        b.text(ws, row + 1, 1, "Power [kW]", font=BOLD)
        for j, (v, pw) in enumerate(zip(curve.speed_mps, curve.power_kw)):
            b.num(ws, row, 3 + j, float(v), "price", fill=ENGINE_FILL)
            b.num(ws, row + 1, 3 + j, float(pw), "kw", fill=ENGINE_FILL)
        row += 2
    else:
        b.text(ws, row, 1, f"Power curve from physics: Cp max {curve.cp_max:g}, cut-in {curve.cut_in_mps:g} m/s, "
                           f"cut-out {curve.cut_out_mps:g} m/s", font=ITALIC)
        row += 1
    return row


# --------------------------------------------------------------------------- Cash flow and Debt

def sources_and_uses(dt: Timeline, scn, cf: Timeline, cells: dict) -> None:
    """Sources and uses of the construction period (live: the funding passes below the yearly lines,
    lcoe.outputs.workbook.construction); ``cells`` is filled by ``write_funding`` before rendering."""
    for key, label, expr in (("u_capex", "Uses: capex", lambda: "capex_total"),
                             ("u_fee", "Uses: upfront debt fee", lambda: "debt_fee"),
                             ("u_idc", "Uses: interest during construction, capitalised", lambda: cells["idc"]),
                             ("u_cf", "Uses: commitment fee on undrawn debt", lambda: cells["commitment"]),
                             ("u_dsra", "Uses: debt service reserve, first funding at COD", lambda: cells["dsra0"])):
        dt.single(key, label, "{cur}", expr, "money", name={"u_idc": "interest_during_construction",
                                                            "u_cf": "commitment_fee_construction",
                                                            "u_dsra": "dsra_initial"}.get(key))
    dt.single("u_total", "Uses, total", "{cur}",
              "+".join(dt.v(k) for k in ("u_capex", "u_fee", "u_idc", "u_cf", "u_dsra")), "money", name="uses_total")
    dt.single("s_debt", "Sources: debt drawn by COD", "{cur}", lambda: cells["debt_drawn"], "money")
    dt.single("s_equity", "Sources: equity paid in", "{cur}", lambda: cells["equity_paid"], "money")
    dt.single("s_total", "Sources, total", "{cur}", f"{dt.v('s_debt')}+{dt.v('s_equity')}", "money",
              name="sources_total")
    dt.single("equity", "Equity contribution before the reserves' first funding, uses - debt - reserve", "{cur}",
              f"uses_total-debt_at_close-{dt.v('u_dsra')}", "money", name="equity_before_reserves")
    tol = f"{CHECK_TOL}*MAX(capex_total,1)"
    dt.single("su_same", "Funding converged: debt drawn by COD = the debt, last two passes agree (1 = yes)", "flag",
              lambda: f"IF(AND(ABS({dt.v('s_debt')}-debt_at_close)<={tol},{cells['change']}<={tol}),1,0)",
              "flag", name="construction_as_close")


def write_cashflow_and_debt(book: Book, scn, en: Timeline) -> tuple[Timeline, Timeline]:
    """The Cash flow sheet (P50 case) and the Debt sheet (sizing case, capacity, schedule)."""
    H = en.H
    cf = Timeline(book, book.sheet(CASHFLOW), H, "Cash flow: the P50 case, nominal money",
                  "t = 0 is construction; cash flows at the end of each year; costs positive, cash flows signed. "
                  "Years after the life are zero.")
    dt = Timeline(book, book.sheet(DEBT), H, "Debt: sculpted to the sizing case",
                  "Debt mode (Inputs): locked holds the debt and its service as at close; resized re-sculpts them to "
                  "the inputs. The debt capacity of the current inputs is shown in both modes, beside the held debt.")
    y, c, p = cf.y, cf.c, (lambda key, t: cf.c(key, t - 1))
    op = lambda t: en.x("op", t)  # noqa: E731

    cf.section("Capital cost and single values (column B)")
    cf.single("capex", "Capex total, with contingency", "{cur}",
              "((turbine_per_kw+balance_of_plant_per_kw)*plant_kw+grid_connection+development)*(1+contingency)",
              "money", name="capex_total")
    cf.single("fixed_real", "Fixed O&M and insurance, year-0 money", "{cur}/yr",
              "(fixed_per_kw_year+insurance_per_kw_year)*plant_kw", "money", name="om_fixed_year0")
    cf.single("fail_real", "Expected failure repairs, year-0 money", "{cur}/yr",
              "SUMPRODUCT(comp_rate,comp_cost)*turbines", "money", name="om_failures_year0")
    cf.single("decom", "Decommissioning less salvage at year L, escalated", "{cur}",
              "(decommissioning_per_kw-salvage_per_kw)*plant_kw*(1+om_escalation)^lifetime_years", "money",
              name="decommissioning_net")
    cf.single("real", "Real discount rate, (1 + r) / (1 + inflation) - 1", "per year",
              "(1+discount_rate)/(1+inflation)-1", "rate", name="real_rate")

    cf.section("Energy and price")
    cf.line("op", "Operating year (1 = yes)", "flag", lambda t: op(t), "flag")
    cf.line("energy", "Net energy", "MWh", lambda t: en.x("energy", t), "mwh", name="annual_energy_mwh")
    cf.line("availability", "Availability", "fraction", lambda t: en.x("avail", t), "pct",
            name="annual_availability")
    cf.line("price", "Power price: PPA, then merchant, escalated (1 + g)^t", "{cur}/MWh",
            lambda t: f"IF({c('op', t)}=0,0,IF({y(t)}<=ppa_term_years,ppa_price_per_mwh*(1+ppa_escalation)^{y(t)},"
                      f"merchant_price_per_mwh*(1+merchant_escalation)^{y(t)}))", "price",
            name="annual_price_per_mwh")
    cf.line("credit", "Production credit", "{cur}/MWh",
            lambda t: f"IF(AND({c('op', t)}=1,{y(t)}<=production_credit_years),production_credit_per_mwh,0)", "price")
    cf.line("revenue", "Revenue", "{cur}", lambda t: f"{c('energy', t)}*({c('price', t)}+{c('credit', t)})",
            "money", name="annual_revenue", bold=True)

    cf.section("Operating costs")
    cf.line("esc", "Escalation index, (1 + g)^t", "-", lambda t: f"(1+om_escalation)^{y(t)}", "factor")
    cf.line("om_fixed", "Fixed O&M and insurance, year-0 money", "{cur}",
            lambda t: f"{c('op', t)}*om_fixed_year0{partial(scn, en.x('share', t))}", "money")
    cf.line("om_fail", "Expected failure repairs, year-0 money", "{cur}",
            lambda t: f"{c('op', t)}*om_failures_year0{partial(scn, en.x('share', t))}", "money")
    cf.line("om_overhaul", "Planned overhauls, year-0 money", "{cur}",
            lambda t: f"IF({c('op', t)}=1,SUMIF(overhaul_year,{y(t)},overhaul_cost_per_turbine)*turbines"
                      f"{partial(scn, en.x('share', t))},0)", "money")
    cf.line("om_var", "Variable O&M, year-0 money", "{cur}", lambda t: f"variable_per_mwh*{c('energy', t)}",
            "money")
    cf.line("lease", "Land lease, share of revenue", "{cur}",
            lambda t: f"land_lease_share_of_revenue*{c('revenue', t)}", "money")
    cf.line("opex", "O&M total, nominal", "{cur}",
            lambda t: f"({c('om_fixed', t)}+{c('om_fail', t)}+{c('om_overhaul', t)}+{c('om_var', t)})*{c('esc', t)}"
                      f"+{c('lease', t)}", "money", name="annual_opex", bold=True)
    cf.line("decommissioning", "Decommissioning less salvage (year L, follows the life)", "{cur}",
            lambda t: f"IF({y(t)}=lifetime_years,decommissioning_net,0)", "money", name="annual_decommissioning")
    cf.line("pre_tax", "Operating cash flow before tax", "{cur}",
            lambda t: f"{c('revenue', t)}-{c('opex', t)}-{c('decommissioning', t)}", "money")

    cf.section("Capital and tax depreciation")
    cf.line("capex_row", "Capex", "{cur}", lambda t: f"IF({y(t)}=0,capex_total,0)", "money", name="annual_capex")
    cf.line("sl", "Straight-line share, 1 / N", "share",
            lambda t: f"IF(AND({c('op', t)}=1,{y(t)}<=depreciation_years),1/depreciation_years,0)", "share")
    cf.line("db_book", "Declining balance: book value at the start", "share",
            lambda t: f"{p('db_book', t)}-{p('db', t)}", "share", t0=lambda t: "1")
    cf.line("db", "Declining-balance share (factor / N, then straight line)", "share",
            lambda t: f"IF(AND({c('op', t)}=1,{y(t)}<=depreciation_years),MIN(MAX({c('db_book', t)}*db_factor/"
                      f"depreciation_years,{c('db_book', t)}/(depreciation_years-{y(t)}+1)),{c('db_book', t)}),0)",
            "share", t0=lambda t: "0")
    cf.line("macrs", "MACRS share (table on Inputs)", "share",
            lambda t: f"IF({c('op', t)}=1,IFERROR(INDEX(macrs_table,{y(t)},MATCH(depreciation_method,macrs_methods,0))"
                      f"/100,0),0)", "share")
    cf.line("share_base", "Share of the chosen method", "share",
            lambda t: f"IF(depreciation_method=\"straight_line\",{c('sl', t)},IF(depreciation_method="
                      f"\"declining_balance\",{c('db', t)},{c('macrs', t)}))", "share")
    cf.line("share", "Depreciation share, remainder written off in year L", "share",
            lambda t: f"{c('share_base', t)}+IF({y(t)}=lifetime_years,1-SUM({cf.span('share_base')}),0)", "share",
            name="depreciation_share")
    cf.line("depreciation", "Tax depreciation", "{cur}", lambda t: f"capex_total*{c('share', t)}", "money",
            name="annual_depreciation")

    def tax_block(tl, prefix, pre_key, interest=None, name=None, label="", pool_name=None):
        """Taxable income, its cumulative sum, the running maximum of that sum (floored at 0), the tax
        on the rise of the maximum and the losses carried forward (maximum less cumulative income):
        losses carried forward without limit, never a negative tax."""
        cc = tl.c
        dep = lambda t: cf.c("depreciation", t) if tl is cf else cf.x("depreciation", t)  # noqa: E731
        tl.line(prefix + "taxable", f"Taxable income{label}", "{cur}",
                lambda t: f"{cc(pre_key, t)}-{dep(t)}" + (f"-{interest(t)}" if interest else ""), "money")
        tl.line(prefix + "cum", "Cumulative taxable income", "{cur}",
                lambda t: f"{cc(prefix + 'cum', t - 1)}+{cc(prefix + 'taxable', t)}", "money",
                t0=lambda t: cc(prefix + "taxable", t))
        tl.line(prefix + "peak", "Running maximum of it, floored at zero", "{cur}",
                lambda t: f"MAX({cc(prefix + 'peak', t - 1)},{cc(prefix + 'cum', t)})", "money",
                t0=lambda t: f"MAX(0,{cc(prefix + 'cum', t)})")
        tl.line(prefix + "pool", "Tax losses carried forward at the end of the year", "{cur}",
                lambda t: f"{cc(prefix + 'peak', t)}-{cc(prefix + 'cum', t)}", "money", name=pool_name)
        tl.line(prefix + "tax", f"Tax paid{label}", "{cur}",
                lambda t: f"tax_rate*({cc(prefix + 'peak', t)}-{cc(prefix + 'peak', t - 1)})", "money",
                t0=lambda t: f"tax_rate*{cc(prefix + 'peak', t)}", name=name, bold=name is not None)

    cf.section("Tax without debt (for the project cash flow)")
    tax_block(cf, "u_", "pre_tax", name="annual_tax_unlevered", label=", unlevered")
    cf.line("project", "Project cash flow", "{cur}",
            lambda t: f"{c('pre_tax', t)}-{c('u_tax', t)}-{c('capex_row', t)}", "money",
            name="annual_project_cash_flow", bold=True)

    # ---- the debt sheet
    yd, d = dt.y, dt.c
    dt.section("Sources and uses at close (single values, column B)")
    dt.single("locked", "Debt mode is locked (1) or resized (0)", "-", 'IF(debt_mode="resized",0,1)', "flag",
              name="debt_locked")
    dt.single("held", "Debt at close, held (engine value, Inputs)", "{cur}", "debt_held*has_debt", "money")
    dt.single("cap", "Gearing cap, max gearing x capex", "{cur}", "max_gearing*capex_total", "money",
              name="debt_cap")
    dt.single("converged", "Change of the capacity in the last pass", "{cur}",
              lambda: f"{d(f'b{RESIZE_PASSES}', 0)}-{d(f'b{RESIZE_PASSES - 1}', 0)}", "money",
              name="capacity_last_change")
    dt.single("capacity", "Debt capacity of the current inputs, at the target DSCR and the gearing cap", "{cur}",
              lambda: f"MAX(0,{d('b', 0)})*has_debt", "money", name="debt_capacity")
    dt.single("headroom", "Headroom: capacity less the held debt", "{cur}", f"debt_capacity-{dt.v('held')}",
              "money", name="debt_headroom")
    dt.single("cap_scale", "Capacity debt-service scale (gearing cap; 1 unless it binds)", "-",
              lambda: dt.v(f"sc{RESIZE_PASSES}"), "factor")
    dt.single("debt", "Debt at close, used (held if locked, the capacity if resized)", "{cur}",
              f"IF(debt_locked=1,{dt.v('held')},debt_capacity)", "money", name="debt_at_close")
    dt.single("scale", "Debt-service scale, used", "-",
              f"IF(debt_locked=1,debt_service_scale_held,{dt.v('cap_scale')})", "factor", name="debt_service_scale")
    dt.single("fee", "Upfront debt fee", "{cur}", "IF(debt_locked=1,debt_fee_held*has_debt,upfront_fee*debt_at_close)",
              "money", name="debt_fee")
    dt.single("gearing", "Gearing, debt / capex", "fraction", "IF(capex_total>0,debt_at_close/capex_total,0)", "pct")
    if scn.construction is None:
        dt.single("equity", "Equity at close, capex + fee - debt", "{cur}", "capex_total+debt_fee-debt_at_close",
                  "money", name="equity_before_reserves")
    else:
        funding_cells = {}
        sources_and_uses(dt, scn, cf, funding_cells)

    dt.section("Sizing case (energy x factor, the same prices and costs)")
    dt.line("tenor", "Tenor year within the life (1 = yes)", "flag",
            lambda t: f"IF(AND({yd(t)}>=1,{yd(t)}<=tenor_years,{yd(t)}<=lifetime_years),has_debt,0)", "flag",
            name="tenor_mask")
    dt.line("rate", "Interest rate of the year, for its length (a partial year 1: (1 + r)^share - 1)", "per year",
            lambda t: f"IF(AND({yd(t)}=1,first_year_share<1),(1+interest_rate)^first_year_share-1,interest_rate)",
            "rate", name="annual_interest_rate")
    dt.line("tgt", "Target DSCR of the year: contracted (t <= PPA term) or merchant", "x",
            lambda t: f"IF({yd(t)}<=ppa_term_years,target_dscr,target_dscr_merchant)", "ratio",
            name="annual_target_dscr")
    dt.line("sh", "Interest tax shield per unit of balance, tax x rate / target DSCR", "-",
            lambda t: f"tax_rate*{d('rate', t)}/{d('tgt', t)}", "factor", name="shield_coefficient")
    dt.line("s_energy", "Net energy, sizing case", "MWh", lambda t: f"{cf.x('energy', t)}*sizing_factor", "mwh",
            name="sizing_energy_mwh")
    dt.line("s_revenue", "Revenue, sizing case", "{cur}",
            lambda t: f"{d('s_energy', t)}*({cf.x('price', t)}+{cf.x('credit', t)})", "money")
    dt.line("s_opex", "O&M, sizing case", "{cur}",
            lambda t: f"({cf.x('om_fixed', t)}+{cf.x('om_fail', t)}+{cf.x('om_overhaul', t)}+variable_per_mwh*"
                      f"{d('s_energy', t)})*{cf.x('esc', t)}+land_lease_share_of_revenue*{d('s_revenue', t)}",
            "money")
    dt.line("s_pre", "Operating cash flow before tax, sizing case", "{cur}",
            lambda t: f"{d('s_revenue', t)}-{d('s_opex', t)}-{cf.x('decommissioning', t)}", "money")

    dt.section("Debt capacity: re-sculpted to the current inputs, the balance rolled backward from zero at maturity")
    dt.line("a", "Sculpted service before the interest tax shield, (pre-tax - tax (pre-tax - dep)) / target", "{cur}",
            lambda t: f"IF({d('tenor', t)}=1,({d('s_pre', t)}-tax_rate*({d('s_pre', t)}-{cf.x('depreciation', t)}))"
                      f"/{d('tgt', t)},0)", "money")
    last = H

    def roll(j, a_key):
        """Pass j: the balance rolled backward from zero at maturity on the service s (a_t + k B_(t-1)), s the
        gearing-cap scale of the pass (1 unless the cap binds: then the last pass's s x cap / capacity)."""
        bk = f"b{j}"
        if j == 0:
            dt.single("sc0", "Pass 0: debt-service scale", "-", "1", "factor")
        elif j == 1:
            dt.single("sc1", "Pass 1: debt-service scale, MIN(1, last scale x cap / last capacity)", "-",
                      lambda: f"IF({d('b0', 0)}>0,MIN(1,{dt.v('sc0')}*MAX(debt_cap,0)/{d('b0', 0)}),1)", "factor")
        else:
            def secant(j=j):
                k1, k2, b1, b2 = dt.v(f"sc{j - 1}"), dt.v(f"sc{j - 2}"), d(f"b{j - 1}", 0), d(f"b{j - 2}", 0)
                return (f"IF({b1}>0,MIN(1,IF(AND({k1}<>{k2},{b1}<>{b2}),{k1}+(MAX(debt_cap,0)-{b1})*({k1}-{k2})/"
                        f"({b1}-{b2}),{k1}*MAX(debt_cap,0)/{b1})),1)")
            dt.single(f"sc{j}", f"Pass {j}: debt-service scale, MIN(1, secant step to capacity = cap)", "-",
                      secant, "factor")
        k = dt.v(f"sc{j}")

        def back(t):
            if t == last:
                return "0"
            n = t + 1
            r, sh = d("rate", n), d("sh", n)
            return (f"IF({d('tenor', n)}=1,IF({d(a_key, n)}*(1+{r})+{sh}*{d(bk, n)}>=0,"
                    f"({d(bk, n)}+{k}*{d(a_key, n)})/(1+{r}-{k}*{sh}),"
                    f"{d(bk, n)}/(1+{r})),0)")
        dt.line(bk, f"Pass {j}: capacity balance at the end of the year, (B_t + a_t) / (1 + r - k) from the next year",
                "{cur}", back, "money")
        dt.line(f"ds{j}", f"Pass {j}: capacity debt service, s MAX(0, a_t + k B_(t-1))", "{cur}",
                lambda t: f"IF({d('tenor', t)}=1,{k}*MAX(0,{d(a_key, t)}+{d('sh', t)}*{d(bk, t - 1)}),0)",
                "money",
                t0=lambda t: "0")

    roll(0, "a")
    for j in range(1, RESIZE_PASSES + 1):
        prev = f"b{j - 1}"
        dt.line(f"tx{j}", f"Pass {j}: sizing-case taxable income with pass {j - 1}'s interest", "{cur}",
                lambda t, prev=prev: f"{d('s_pre', t)}-{cf.x('depreciation', t)}-{d('rate', t)}*{d(prev, t - 1)}",
                "money", t0=lambda t: "0")
        dt.line(f"cu{j}", f"Pass {j}: cumulative taxable income", "{cur}",
                lambda t, j=j: f"{d(f'cu{j}', t - 1)}+{d(f'tx{j}', t)}", "money", t0=lambda t, j=j: d(f"tx{j}", t))
        dt.line(f"pk{j}", f"Pass {j}: running maximum, floored at zero", "{cur}",
                lambda t, j=j: f"MAX({d(f'pk{j}', t - 1)},{d(f'cu{j}', t)})", "money",
                t0=lambda t, j=j: f"MAX(0,{d(f'cu{j}', t)})")
        dt.line(f"dl{j}", f"Pass {j}: tax with losses carried forward less tax x income (0 without a loss)", "{cur}",
                lambda t, j=j: f"tax_rate*({d(f'pk{j}', t)}-{d(f'pk{j}', t - 1)})-tax_rate*{d(f'tx{j}', t)}", "money",
                t0=lambda t: "0")
        dt.line(f"a{j}", f"Pass {j}: service before the shield, less that difference / target", "{cur}",
                lambda t, j=j: f"IF({d('tenor', t)}=1,{d('a', t)}-{d(f'dl{j}', t)}/{d('tgt', t)},0)", "money")
        roll(j, f"a{j}")
    fin = RESIZE_PASSES
    dt.pass_rows = [dt.rows[k] for k in dt.rows if re.fullmatch(r"(b|ds|tx|cu|pk|dl|a|sc)\d+", k)]
    dt.line("b", f"Capacity balance at the end of the year (pass {fin})", "{cur}", lambda t: d(f"b{fin}", t), "money",
            name="capacity_balance")
    dt.line("cap_ds", f"Capacity debt service (pass {fin})", "{cur}", lambda t: d(f"ds{fin}", t), "money",
            name="capacity_debt_service")

    dt.section("Debt schedule used (locked: as held at close; resized: the capacity schedule)")
    dt.line("open", "Opening balance, last year's closing balance", "{cur}", lambda t: d("close", t - 1), "money",
            t0=lambda t: "0", name="debt_opening")
    dt.line("draw", "Drawdown", "{cur}", lambda t: f"IF({yd(t)}=0,debt_at_close,0)", "money")
    dt.line("interest", "Interest (locked: held; resized: opening x rate)", "{cur}",
            lambda t: f"IF(debt_locked=1,has_debt*INDEX(held_interest,{yd(t)}),{d('open', t)}*{d('rate', t)})",
            "money", t0=lambda t: "0", name="debt_interest")
    dt.line("ds", "Debt service (locked: held; resized: the capacity service)", "{cur}",
            lambda t: f"IF(debt_locked=1,has_debt*INDEX(held_debt_service,{yd(t)}),{d('cap_ds', t)})",
            "money", t0=lambda t: "0", name="debt_service_sculpted", bold=True)
    dt.line("principal", "Principal repaid", "{cur}", lambda t: f"{d('ds', t)}-{d('interest', t)}", "money",
            name="debt_principal")
    dt.line("close", "Closing balance (a residue below 1e-10 of the debt shows as zero)", "{cur}",
            lambda t: f"IF(ABS({d('open', t)}+{d('draw', t)}+{d('interest', t)}-{d('ds', t)})<={SNAP}*MAX(debt_at_close,1)"
                      f",0,{d('open', t)}+{d('draw', t)}+{d('interest', t)}-{d('ds', t)})", "money",
            name="debt_closing")
    tax_block(dt, "s_", "s_pre", interest=lambda t: d("interest", t), label=", sizing case")
    dt.line("s_cfads", "CFADS, sizing case", "{cur}", lambda t: f"{d('s_pre', t)}-{d('s_tax', t)}", "money",
            name="sizing_cfads")
    dt.line("s_dscr", "DSCR, sizing case", "x",
            lambda t: f"IF({d('ds', t)}>0,{d('s_cfads', t)}/{d('ds', t)},\"\")", "ratio", name="sizing_dscr")
    dt.line("target", "Target DSCR", "x", lambda t: f"IF({d('tenor', t)}=1,{d('tgt', t)},\"\")", "ratio")
    dt.line("p50_dscr", "DSCR, P50 case (Cash flow)", "x", lambda t: cf.x("dscr", t), "ratio")
    dt.line("check", "Check, resized: sizing DSCR meets the target (= target / scale); locked: n/a", "1 = OK",
            lambda t: f"IF(OR(debt_locked=1,{d('ds', t)}<=0),1,IF(ABS({d('s_dscr', t)}-{d('tgt', t)}/debt_service_scale)"
                      f"<={CHECK_TOL}*{d('tgt', t)},1,0))", "ok", name="sizing_dscr_check")

    # ---- back on the cash-flow sheet: the schedule, levered tax, CFADS and equity
    cf.section("Debt (from the Debt sheet) and tax with interest")
    cf.line("interest", "Interest", "{cur}", lambda t: dt.x("interest", t), "money", name="annual_interest")
    cf.line("principal", "Principal repaid", "{cur}", lambda t: dt.x("principal", t), "money",
            name="annual_principal")
    cf.line("balance", "Debt balance at the end of the year", "{cur}", lambda t: dt.x("close", t), "money",
            name="annual_balance")
    tax_block(cf, "l_", "pre_tax", interest=lambda t: c("interest", t), name="annual_tax",
              pool_name="annual_tax_loss_pool")
    cf.line("cfads", "CFADS, cash flow available for debt service", "{cur}",
            lambda t: f"{c('pre_tax', t)}-{c('l_tax', t)}", "money", name="annual_cfads", bold=True)
    cf.line("ds", "Debt service", "{cur}", lambda t: dt.x("ds", t), "money", name="annual_debt_service")
    cf.line("dscr", "DSCR", "x", lambda t: f"IF({c('ds', t)}>0,{c('cfads', t)}/{c('ds', t)},\"\")", "ratio",
            name="annual_dscr")
    equity0 = "-equity_before_reserves"
    if structure_of(scn) is None:
        cf.line("equity", "Equity cash flow", "{cur}",
                lambda t: f"{c('cfads', t)}-{c('ds', t)}-IF({y(t)}=0,{equity0[1:]},0)", "money",
                name="annual_equity_cash_flow", bold=True)
    else:
        cf.section("Cash waterfall: reserve accounts, lock-up and distributions")
        waterfall_block(cf, "w_", lambda t: c("cfads", t), lambda t: c("ds", t), lambda t: en.x("share", t),
                        equity0, name="annual_")
        cf.line("equity", "Equity cash flow (from the waterfall)", "{cur}", lambda t: c("w_equity", t), "money",
                name="annual_equity_cash_flow", bold=True)
    cf.line("eq_cum", "Cumulative equity cash flow", "{cur}", lambda t: f"{p('eq_cum', t)}+{c('equity', t)}",
            "money", t0=lambda t: c("equity", t))
    cf.line("payback", "Year if the cumulative equity cash flow is non-negative (within the life)", "year",
            lambda t: f"IF(AND({y(t)}<=lifetime_years,{c('eq_cum', t)}>=0),{y(t)},\"\")", "int",
            name="payback_marker")

    cf.section("Discount factors, (1 + rate)^-t")
    cf.line("df_nom", "At the discount rate", "-", lambda t: f"(1+discount_rate)^-{y(t)}", "factor",
            name="df_nominal")
    cf.line("df_real", "At the real discount rate", "-", lambda t: f"(1+real_rate)^-{y(t)}", "factor",
            name="df_real")
    cf.line("df_int", "At the debt's interest rate (LLCR; locked: the rate at close)", "-",
            lambda t: f"(1+IF(debt_locked=1,interest_rate_held,interest_rate))^-{en.x('clock', t)}", "factor",
            name="df_interest")

    if scn.construction is not None:
        dsra0 = cf.x("w_dtgt", 0) if structure_of(scn) is not None else "0"
        funding_cells.update(write_funding(dt, scn, dsra0, dt.pass_rows))
        funding_cells["dsra0"] = dsra0
    en.render()
    cf.render()
    dt.render()
    return cf, dt
