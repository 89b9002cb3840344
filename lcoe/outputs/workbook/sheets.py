"""The live yearly sheets of the lender workbook: energy, cash flow and debt.

The formulas follow the engine's arithmetic line by line (:mod:`lcoe.physics.energy`,
:mod:`lcoe.finance.costs`, :mod:`lcoe.finance.cashflow`), in the same order of operations where it
matters for rounding, so a spreadsheet engine reproduces the engine's yearly lines.
The debt schedule is rolled forward from the engine's converged debt at close (held
on Inputs), which keeps the sheet free of circular references: in each year the
interest comes from the opening balance, the sizing-case tax from that interest, and
the sculpted debt service from the sizing-case CFADS.
"""

from __future__ import annotations

from lcoe.outputs.workbook.cells import CASHFLOW, CHECK_TOL, DEBT, ENERGY, HOURS_PER_YEAR, LOSSES, Book, Timeline

# --------------------------------------------------------------------------- Energy

def write_energy(book: Book, scn) -> Timeline:
    """The Energy sheet: gross AEP (engine value) to net energy per year, and the P-values."""
    ws = book.sheet(ENERGY)
    en = Timeline(book, ws, scn.lifetime, "Energy: gross to net, each year",
                  "Gross AEP is an engine value (Inputs); everything else here is a formula.")
    en.section("Plant and energy (single values, in the t = 0 column)")
    en.single("plant_kw", "Plant capacity", "kW", "rated_power_kw*turbines", "kw", name="plant_kw")
    en.single("gross", "Gross AEP", "MWh/yr", "gross_aep_per_turbine_mwh*turbines", "mwh", name="gross_aep_mwh")
    en.single("lf", "Loss factor, prod(1 - loss)", "-", "*".join(f"(1-loss_{k})" for k in LOSSES), "factor",
              name="loss_factor")
    en.single("down", "Expected component downtime, sum(rate x days) / 365", "fraction",
              "SUMPRODUCT(comp_rate,comp_downtime_days)/365", "share", name="downtime_fraction")
    en.single("p50", "Net AEP P50 (mature availability)", "MWh/yr",
              "gross_aep_mwh*loss_factor*availability_mature*(1-downtime_fraction)", "mwh", name="net_aep_p50_mwh")
    for k, label in (("p90_1yr", "P90, 1 year"), ("p90_10yr", "P90, 10 years"), ("p99_1yr", "P99, 1 year")):
        en.single(k, f"Net AEP {label}", "MWh/yr", f"net_aep_p50_mwh*factor_{k}", "mwh", name=f"net_aep_{k}_mwh")
    en.single("cf", "Net capacity factor, P50", "fraction", f"net_aep_p50_mwh/(plant_kw*{HOURS_PER_YEAR}/1000)",
              "pct", name="net_capacity_factor")
    en.single("sizing", "Debt sizing factor, P_case / P50", "-",
              "INDEX(case_factors,MATCH(sizing_case,case_names,0))", "factor", name="sizing_factor")

    en.section("Yearly energy")
    y = en.y
    en.line("ageing", "Availability lost to ageing", "fraction",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}>ageing_starts_year),"
                      f"availability_ageing_per_year*({y(t)}-ageing_starts_year),0)", "share")
    en.line("avail", "Availability", "fraction",
            lambda t: f"IF({y(t)}=0,0,MAX(0,MIN(1,IF({y(t)}<=1,availability_first_year,availability_mature)"
                      f"-{en.c('ageing', t)})))", "pct")
    en.line("degr", "Degradation factor, (1 - d)^(t - 1)", "-",
            lambda t: f"IF({y(t)}=0,0,(1-degradation_per_year)^({y(t)}-1))", "factor")
    en.line("energy", "Net energy", "MWh",
            lambda t: f"IF({y(t)}=0,0,gross_aep_mwh*loss_factor*{en.c('avail', t)}*(1-downtime_fraction)"
                      f"*{en.c('degr', t)})", "mwh", bold=True)
    en.line("ncf", "Net capacity factor", "fraction",
            lambda t: f"{en.c('energy', t)}/(plant_kw*{HOURS_PER_YEAR}/1000)", "pct")
    return en


# --------------------------------------------------------------------------- Cash flow and Debt

def write_cashflow_and_debt(book: Book, scn, en: Timeline) -> tuple[Timeline, Timeline]:
    """The Cash flow sheet (P50 case) and the Debt sheet (sizing case, schedule, sculpting)."""
    L = scn.lifetime
    cf = Timeline(book, book.sheet(CASHFLOW), L, "Cash flow: the P50 case, nominal money",
                  "t = 0 is construction; cash flows at the end of each year; costs positive, cash flows signed.")
    dt = Timeline(book, book.sheet(DEBT), L, "Debt: sculpted to the sizing case",
                  "Debt service = sizing-case CFADS / target DSCR over the tenor (scaled if the gearing cap "
                  "binds). The debt at close is the engine's converged value (Inputs); Checks test it.")
    y, c, p = cf.y, cf.c, (lambda key, t: cf.c(key, t - 1))

    cf.section("Capital cost and single values (in the t = 0 column)")
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
    cf.single("fee", "Upfront debt fee", "{cur}", "upfront_fee*debt_at_close", "money", name="debt_fee")

    cf.section("Energy and price")
    cf.line("energy", "Net energy", "MWh", lambda t: en.x("energy", t), "mwh", name="annual_energy_mwh")
    cf.line("availability", "Availability", "fraction", lambda t: en.x("avail", t), "pct",
            name="annual_availability")
    cf.line("ppa_on", "PPA period (1 = yes)", "flag",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}<=ppa_term_years),1,0)", "flag")
    cf.line("price", "Power price: PPA, then merchant, escalated (1 + g)^t", "{cur}/MWh",
            lambda t: f"IF({y(t)}=0,0,IF({y(t)}<=ppa_term_years,ppa_price_per_mwh*(1+ppa_escalation)^{y(t)},"
                      f"merchant_price_per_mwh*(1+merchant_escalation)^{y(t)}))", "price",
            name="annual_price_per_mwh")
    cf.line("credit", "Production credit", "{cur}/MWh",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}<=production_credit_years),production_credit_per_mwh,0)", "price")
    cf.line("revenue", "Revenue", "{cur}", lambda t: f"{c('energy', t)}*({c('price', t)}+{c('credit', t)})",
            "money", name="annual_revenue", bold=True)

    cf.section("Operating costs")
    cf.line("esc", "Escalation index, (1 + g)^t", "-", lambda t: f"(1+om_escalation)^{y(t)}", "factor")
    cf.line("om_fixed", "Fixed O&M and insurance, year-0 money", "{cur}",
            lambda t: f"IF({y(t)}>=1,om_fixed_year0,0)", "money")
    cf.line("om_fail", "Expected failure repairs, year-0 money", "{cur}",
            lambda t: f"IF({y(t)}>=1,om_failures_year0,0)", "money")
    cf.line("om_overhaul", "Planned overhauls, year-0 money", "{cur}",
            lambda t: f"IF({y(t)}>=1,SUMIF(overhaul_year,{y(t)},overhaul_cost_per_turbine)*turbines,0)", "money")
    cf.line("om_var", "Variable O&M, year-0 money", "{cur}", lambda t: f"variable_per_mwh*{c('energy', t)}",
            "money")
    cf.line("lease", "Land lease, share of revenue", "{cur}",
            lambda t: f"land_lease_share_of_revenue*{c('revenue', t)}", "money")
    cf.line("opex", "O&M total, nominal", "{cur}",
            lambda t: f"({c('om_fixed', t)}+{c('om_fail', t)}+{c('om_overhaul', t)}+{c('om_var', t)})*{c('esc', t)}"
                      f"+{c('lease', t)}", "money", name="annual_opex", bold=True)
    cf.line("decommissioning", "Decommissioning less salvage", "{cur}",
            lambda t: f"IF({y(t)}=lifetime_years,decommissioning_net,0)", "money", name="annual_decommissioning")
    cf.line("pre_tax", "Operating cash flow before tax", "{cur}",
            lambda t: f"{c('revenue', t)}-{c('opex', t)}-{c('decommissioning', t)}", "money")

    cf.section("Capital and tax depreciation")
    cf.line("capex_row", "Capex", "{cur}", lambda t: f"IF({y(t)}=0,capex_total,0)", "money", name="annual_capex")
    cf.line("sl", "Straight-line share, 1 / N", "share",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}<=depreciation_years),1/depreciation_years,0)", "share")
    cf.line("db_book", "Declining balance: book value at the start", "share",
            lambda t: f"{p('db_book', t)}-{p('db', t)}", "share", t0=lambda t: "1")
    cf.line("db", "Declining-balance share (2 / N, then straight line)", "share",
            lambda t: f"IF(AND({y(t)}>=1,{y(t)}<=depreciation_years),MIN(MAX({c('db_book', t)}*2/depreciation_years,"
                      f"{c('db_book', t)}/(depreciation_years-{y(t)}+1)),{c('db_book', t)}),0)", "share",
            t0=lambda t: "0")
    cf.line("macrs", "MACRS share (table on Inputs)", "share",
            lambda t: f"IF({y(t)}>=1,IFERROR(INDEX(macrs_table,{y(t)},MATCH(depreciation_method,macrs_methods,0))"
                      f"/100,0),0)", "share")
    cf.line("share_base", "Share of the chosen method", "share",
            lambda t: f"IF(depreciation_method=\"straight_line\",{c('sl', t)},IF(depreciation_method="
                      f"\"declining_balance\",{c('db', t)},{c('macrs', t)}))", "share")
    cf.line("share", "Depreciation share, remainder written off in year L", "share",
            lambda t: f"{c('share_base', t)}+IF({y(t)}=lifetime_years,1-SUM({cf.span('share_base')}),0)", "share",
            name="depreciation_share")
    cf.line("depreciation", "Tax depreciation", "{cur}", lambda t: f"capex_total*{c('share', t)}", "money",
            name="annual_depreciation")

    def tax_block(tl, prefix, pre_key, interest=None, name=None, label=""):
        """Taxable income, its cumulative sum, the running maximum of that sum (floored at 0) and the tax
        on the rise of the maximum: losses carried forward without limit, never a negative tax."""
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
        tl.line(prefix + "tax", f"Tax paid{label}", "{cur}",
                lambda t: f"tax_rate*({cc(prefix + 'peak', t)}-{cc(prefix + 'peak', t - 1)})", "money",
                t0=lambda t: f"tax_rate*{cc(prefix + 'peak', t)}", name=name, bold=name is not None)

    cf.section("Tax without debt (for the project cash flow)")
    tax_block(cf, "u_", "pre_tax", name="annual_tax_unlevered", label=", unlevered")
    cf.line("project", "Project cash flow", "{cur}",
            lambda t: f"{c('pre_tax', t)}-{c('u_tax', t)}-{c('capex_row', t)}", "money",
            name="annual_project_cash_flow", bold=True)

    # ---- the debt sheet: sizing case, schedule rolled forward from the converged debt
    yd, d = dt.y, dt.c
    dt.section("Sources and uses at close (single values, in the t = 0 column)")
    dt.single("debt", "Debt at close (engine value, Inputs)", "{cur}", "debt_at_close", "money")
    dt.single("cap", "Gearing cap, max gearing x capex", "{cur}", "max_gearing*capex_total", "money",
              name="debt_cap")
    dt.single("gearing", "Gearing, debt / capex", "fraction", "IF(capex_total>0,debt_at_close/capex_total,0)", "pct")
    dt.single("equity", "Equity at close, capex + fee - debt", "{cur}", "capex_total+debt_fee-debt_at_close",
              "money")
    dt.single("factor", "Sizing case energy factor, P_case / P50", "-", "sizing_factor", "factor")

    dt.section("Sizing case (energy x factor, the same prices and costs)")
    dt.line("tenor", "Tenor year (1 = yes)", "flag", lambda t: f"IF(AND({yd(t)}>=1,{yd(t)}<=tenor_years),1,0)",
            "flag")
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

    dt.section("Debt schedule (fixed at close; the P50 case and every trial meet it)")
    dt.line("open", "Opening balance, last year's closing balance", "{cur}", lambda t: d("close", t - 1), "money",
            t0=lambda t: "0", name="debt_opening")
    dt.line("draw", "Drawdown", "{cur}", lambda t: f"IF({yd(t)}=0,debt_at_close,0)", "money")
    dt.line("interest", "Interest", "{cur}", lambda t: f"{d('open', t)}*interest_rate", "money",
            name="debt_interest")
    tax_block(dt, "s_", "s_pre", interest=lambda t: d("interest", t), label=", sizing case")
    dt.line("s_cfads", "CFADS, sizing case", "{cur}", lambda t: f"{d('s_pre', t)}-{d('s_tax', t)}", "money",
            name="sizing_cfads")
    dt.line("ds", "Debt service, MAX(CFADS, 0) / target DSCR x scale", "{cur}",
            lambda t: f"MAX({d('s_cfads', t)},0)/target_dscr*{d('tenor', t)}*debt_service_scale", "money",
            name="debt_service_sculpted", bold=True)
    dt.line("principal", "Principal repaid", "{cur}", lambda t: f"{d('ds', t)}-{d('interest', t)}", "money",
            name="debt_principal")
    dt.line("close", "Closing balance", "{cur}",
            lambda t: f"{d('open', t)}+{d('draw', t)}+{d('interest', t)}-{d('ds', t)}", "money",
            name="debt_closing")
    dt.line("s_dscr", "DSCR, sizing case", "x",
            lambda t: f"IF({d('ds', t)}>0,{d('s_cfads', t)}/{d('ds', t)},\"\")", "ratio", name="sizing_dscr")
    dt.line("target", "Target DSCR", "x", lambda t: f"IF({d('tenor', t)}=1,target_dscr,\"\")", "ratio")
    dt.line("p50_dscr", "DSCR, P50 case (Cash flow)", "x", lambda t: cf.x("dscr", t), "ratio")
    dt.line("check", "Check: sizing DSCR meets the target (= target / scale)", "1 = OK",
            lambda t: f"IF({d('ds', t)}>0,IF(ABS({d('s_dscr', t)}-target_dscr/debt_service_scale)"
                      f"<={CHECK_TOL}*target_dscr,1,0),1)", "ok", name="sizing_dscr_check")

    # ---- back on the cash-flow sheet: the fixed schedule, levered tax, CFADS and equity
    cf.section("Debt (from the Debt sheet) and tax with interest")
    cf.line("interest", "Interest", "{cur}", lambda t: dt.x("interest", t), "money", name="annual_interest")
    cf.line("principal", "Principal repaid", "{cur}", lambda t: dt.x("principal", t), "money",
            name="annual_principal")
    cf.line("balance", "Debt balance at the end of the year", "{cur}", lambda t: dt.x("close", t), "money",
            name="annual_balance")
    tax_block(cf, "l_", "pre_tax", interest=lambda t: c("interest", t), name="annual_tax")
    cf.line("cfads", "CFADS, cash flow available for debt service", "{cur}",
            lambda t: f"{c('pre_tax', t)}-{c('l_tax', t)}", "money", name="annual_cfads", bold=True)
    cf.line("ds", "Debt service", "{cur}", lambda t: dt.x("ds", t), "money", name="annual_debt_service")
    cf.line("dscr", "DSCR", "x", lambda t: f"IF({c('ds', t)}>0,{c('cfads', t)}/{c('ds', t)},\"\")", "ratio",
            name="annual_dscr")
    cf.line("equity", "Equity cash flow", "{cur}",
            lambda t: f"{c('cfads', t)}-{c('ds', t)}-IF({y(t)}=0,capex_total+debt_fee-debt_at_close,0)", "money",
            name="annual_equity_cash_flow", bold=True)
    cf.line("eq_cum", "Cumulative equity cash flow", "{cur}", lambda t: f"{p('eq_cum', t)}+{c('equity', t)}",
            "money", t0=lambda t: c("equity", t))
    cf.line("payback", "Year if the cumulative equity cash flow is non-negative", "year",
            lambda t: f"IF({c('eq_cum', t)}>=0,{y(t)},\"\")", "int", name="payback_marker")

    cf.section("Discount factors, (1 + rate)^-t")
    cf.line("df_nom", "At the discount rate", "-", lambda t: f"(1+discount_rate)^-{y(t)}", "factor",
            name="df_nominal")
    cf.line("df_real", "At the real discount rate", "-", lambda t: f"(1+real_rate)^-{y(t)}", "factor",
            name="df_real")
    cf.line("df_int", "At the interest rate (LLCR)", "-", lambda t: f"(1+interest_rate)^-{y(t)}", "factor",
            name="df_interest")

    en.render()
    cf.render()
    dt.render()
    return cf, dt
