"""Inputs of the app: the scenario's values as widgets, grouped in the trade's order.

Wind, turbine, losses and availability, lifetime and maintenance, costs, revenue,
finance and debt; each label carries its unit. Widgets show fractions as percent
and large sums in thousands or millions; only inputs the user changed become
dotted-key overrides of the scenario (so an untouched scenario stays exact).
"""

from __future__ import annotations

import streamlit as st

from lcoe.inputs import scenario as sc

# Display units of the inputs: the scenario keeps SI units and fractions 0..1.
#   pct: shown x 100; m: shown / 1e6; k: shown / 1e3
_TO_SHOW = {None: lambda v: v, "pct": lambda v: v * 100.0, "m": lambda v: v / 1e6, "k": lambda v: v / 1e3}
_FROM_SHOW = {None: lambda v: v, "pct": lambda v: v / 100.0, "m": lambda v: v * 1e6, "k": lambda v: v * 1e3}


def _f(key, label, unit, step, fmt="%.2f", show=None, kind="float"):
    return {"key": key, "label": label, "unit": unit, "step": step, "fmt": fmt, "show": show, "kind": kind}


def _i(key, label, unit="years"):
    return _f(key, label, unit, 1, "%d", None, "int")


def _choice(key, label, options):
    return {"key": key, "label": label, "unit": "", "kind": "choice", "options": options}


def input_groups(scn) -> list[tuple[str, list[dict]]]:
    """The input widgets a scenario offers, grouped wind -> turbine -> ... -> finance and debt."""
    cur = scn.project.currency
    w, t = scn.wind, scn.turbine
    wind = []
    if w.mean_speed_mps is not None:
        wind.append(_f("wind.mean_speed_mps", f"Mean wind speed at {w.height_m:g} m", "m/s", 0.1))
    elif w.weibull_scale_mps is not None:
        wind.append(_f("wind.weibull_scale_mps", f"Weibull scale A at {w.height_m:g} m", "m/s", 0.1))
    if w.timeseries is None and w.rose is None:
        wind.append(_f("wind.weibull_shape", "Weibull shape k", "-", 0.05))
    if w.roughness_length_m is not None:
        wind.append(_f("wind.roughness_length_m", "Roughness length (log law)", "m", 0.01, "%.3f"))
    else:
        wind.append(_f("wind.shear_exponent", "Shear exponent (power law)", "-", 0.01, "%.3f"))
    wind.append(_f("wind.height_m", "Height of the wind statistics", "m", 1.0, "%.1f"))
    if w.air_density_kgm3 is not None:
        wind.append(_f("wind.air_density_kgm3", "Air density", "kg/m³", 0.005, "%.3f"))
    else:
        wind += [_f("wind.elevation_m", "Site elevation", "m", 10.0, "%.0f"),
                 _f("wind.mean_temperature_c", "Mean air temperature", "°C", 0.5, "%.1f")]

    turbine = [_f("turbine.hub_height_m", "Hub height", "m", 1.0, "%.1f"),
               _i("project.turbines", "Number of turbines", "turbines")]
    if t.power_curve is None:
        turbine += [_f("turbine.rated_power_kw", "Rated power", "kW", 100.0, "%.0f"),
                    _f("turbine.rotor_diameter_m", "Rotor diameter", "m", 1.0, "%.1f"),
                    _f("turbine.cp_max", "Peak power coefficient Cp", "-", 0.01, "%.3f"),
                    _f("turbine.cut_in_mps", "Cut-in speed", "m/s", 0.5, "%.1f"),
                    _f("turbine.cut_out_mps", "Cut-out speed", "m/s", 0.5, "%.1f"),
                    _f("turbine.drivetrain_efficiency", "Drivetrain efficiency", "%", 0.5, "%.1f", "pct")]

    losses = [_f(f"losses.{k}", label, "%", 0.5, "%.2f", "pct") for k, label in (
        ("wake", "Wake loss"), ("electrical", "Electrical loss"), ("turbine_performance", "Turbine performance loss"),
        ("environmental", "Environmental loss"), ("curtailment", "Curtailment"), ("other", "Other losses"))
        if not (k == "wake" and scn.layout is not None)]     # with a layout the wake loss is computed
    if scn.layout is not None:
        losses.insert(0, _f("layout.wake_decay_constant", "Wake decay constant (layout)", "-", 0.005, "%.3f"))
    losses += [_f("operations.availability_first_year", "Availability, first year", "%", 0.5, "%.2f", "pct"),
               _f("operations.availability_mature", "Availability, later years", "%", 0.5, "%.2f", "pct"),
               _i("operations.ageing_starts_year", "Availability falls after year", "year"),
               _f("operations.availability_ageing_per_year", "Availability fall per year of age", "% points", 0.05,
                  "%.2f", "pct"),
               _f("operations.degradation_per_year", "Performance degradation", "%/yr", 0.05, "%.2f", "pct")]

    life = [_i("project.lifetime_years", "Operating life"),
            _f("maintenance.fixed_per_kw_year", "Fixed O&M", f"{cur}/kW/yr", 1.0, "%.1f"),
            _f("maintenance.variable_per_mwh", "Variable O&M", f"{cur}/MWh", 0.1),
            _f("maintenance.insurance_per_kw_year", "Insurance", f"{cur}/kW/yr", 0.5, "%.1f"),
            _f("maintenance.land_lease_share_of_revenue", "Land lease", "% of revenue", 0.1, "%.2f", "pct"),
            _f("maintenance.escalation", "O&M escalation", "%/yr", 0.1, "%.2f", "pct")]
    for c in scn.maintenance.component:
        k = f"maintenance.component.{c.name}."
        life += [_f(k + "failure_rate_per_turbine_year", f"{c.name.capitalize()}: failure rate",
                    "per turbine-year", 0.001, "%.4f"),
                 _f(k + "replacement_cost", f"{c.name.capitalize()}: cost per failure", f"{cur} k", 10.0, "%.0f",
                    "k"),
                 _f(k + "downtime_days", f"{c.name.capitalize()}: downtime per failure", "days", 1.0, "%.1f")]
    for o in scn.maintenance.overhaul:
        k = f"maintenance.overhaul.{o.name}."
        life += [_i(k + "year", f"{o.name.capitalize()}: year", "year"),
                 _f(k + "cost_per_turbine", f"{o.name.capitalize()}: cost", f"{cur} k per turbine", 10.0, "%.0f",
                    "k")]

    costs = [_f("capex.turbine_per_kw", "Turbine price", f"{cur}/kW", 10.0, "%.0f"),
             _f("capex.balance_of_plant_per_kw", "Balance of plant", f"{cur}/kW", 10.0, "%.0f"),
             _f("capex.grid_connection", "Grid connection", f"{cur} M", 0.5, "%.2f", "m"),
             _f("capex.development", "Development", f"{cur} M", 0.5, "%.2f", "m"),
             _f("capex.contingency", "Contingency", "% of capex", 0.5, "%.1f", "pct"),
             _f("capex.decommissioning_per_kw", "Decommissioning", f"{cur}/kW", 5.0, "%.0f"),
             _f("capex.salvage_per_kw", "Salvage value", f"{cur}/kW", 5.0, "%.0f")]

    revenue = [_f("revenue.ppa_price_per_mwh", "PPA price", f"{cur}/MWh", 0.5),
               _i("revenue.ppa_term_years", "PPA term"),
               _f("revenue.ppa_escalation", "PPA escalation", "%/yr", 0.1, "%.2f", "pct"),
               _f("revenue.merchant_price_per_mwh", "Merchant price after the PPA", f"{cur}/MWh", 0.5),
               _f("revenue.merchant_escalation", "Merchant price escalation", "%/yr", 0.1, "%.2f", "pct"),
               _f("revenue.production_credit_per_mwh", "Production credit", f"{cur}/MWh", 0.5),
               _i("revenue.production_credit_years", "Production credit period")]

    finance = [_f("finance.discount_rate", "Discount rate (nominal)", "%", 0.1, "%.2f", "pct"),
               _f("finance.inflation", "Inflation", "%/yr", 0.1, "%.2f", "pct"),
               _f("finance.equity_target_return", "Equity target return", "%", 0.25, "%.2f", "pct"),
               _f("finance.tax_rate", "Tax rate", "%", 0.5, "%.1f", "pct"),
               _choice("finance.depreciation", "Tax depreciation",
                       list(sc.DEPRECIATION_METHODS)),
               _i("finance.depreciation_years", "Depreciation period")]
    if scn.finance.debt is not None:
        finance += [_choice("finance.debt.sizing_case", "Debt sized on", list(sc.SIZING_CASES)),
                    _f("finance.debt.target_dscr", "Target DSCR", "x", 0.05),
                    _f("finance.debt.max_gearing", "Maximum gearing", "% of capex", 1.0, "%.1f", "pct"),
                    _i("finance.debt.tenor_years", "Debt tenor"),
                    _f("finance.debt.interest_rate", "Interest rate", "%", 0.1, "%.2f", "pct"),
                    _f("finance.debt.upfront_fee", "Upfront fee", "% of debt", 0.1, "%.2f", "pct")]
    return [("Wind", wind), ("Turbine", turbine), ("Losses and availability", losses),
            ("Lifetime and maintenance", life), ("Costs", costs), ("Revenue", revenue),
            ("Finance and debt", finance)]


def _current_value(scn, spec):
    if spec["kind"] == "choice":
        node = scn
        for part in spec["key"].split("."):
            node = getattr(node, part)
        return node
    v = sc.numeric_value(scn, spec["key"])
    return int(v) if spec["kind"] == "int" else round(_TO_SHOW[spec["show"]](v), 9)


# What an omitted key follows (the scenario's documented defaults).
FOLLOWS = {"operations.availability_first_year": "the later-years availability",
           "maintenance.escalation": "inflation", "revenue.ppa_term_years": "the operating life",
           "revenue.merchant_price_per_mwh": "the PPA price", "finance.equity_target_return": "the discount rate",
           "wind.shear_exponent": "the default 1/7"}


def _help(scn, spec) -> str | None:
    """A note for a key the file leaves out: it follows another input until the user sets it."""
    try:
        sc.get_dotted(scn.raw, spec["key"])
        return None
    except KeyError:
        pass
    follows = FOLLOWS.get(spec["key"])
    if follows:
        return f"Not set in the file: it follows {follows} (as in the file) until you change it here."
    return "Not set in the file: the scenario default is shown."


def input_widgets(scn, token: str) -> dict:
    """Draw the inputs; return the dotted-key overrides of the values the user changed."""
    overrides = {}
    for gi, (group, specs) in enumerate(input_groups(scn)):
        with st.sidebar.expander(group, expanded=gi == 0):
            if group == "Wind" and scn.wind.timeseries is not None:
                st.caption(f"Hourly wind series: `{scn.wind.timeseries}`")
            if group == "Wind" and scn.wind.long_term is not None:
                st.caption(f"Corrected to the long term against `{scn.wind.long_term.reference}` "
                           f"({scn.wind.long_term.method.replace('_', ' ')})")
            if group == "Turbine" and scn.turbine.power_curve is not None:
                st.caption(f"Power curve table `{scn.turbine.power_curve}`: {scn.turbine.rated_power_kw:,.0f} kW, "
                           f"rotor {scn.turbine.rotor_diameter_m:g} m")
            for spec in specs:
                key = f"in|{token}|{gi}|{spec['key']}"
                shown = _current_value(scn, spec)
                label = f"{spec['label']} [{spec['unit']}]" if spec["unit"] else spec["label"]
                hint = _help(scn, spec)
                if spec["kind"] == "choice":
                    opts = list(spec["options"])
                    value = st.selectbox(label, opts, index=opts.index(shown), key=key, help=hint)
                    if value != shown:
                        overrides[spec["key"]] = value
                    continue
                if spec["kind"] == "int":
                    value = st.number_input(label, value=int(shown), step=1, format="%d", key=key, help=hint)
                    if int(value) != shown:
                        overrides[spec["key"]] = int(value)
                    continue
                value = st.number_input(label, value=float(shown), step=float(spec["step"]), format=spec["fmt"],
                                        key=key, help=hint)
                if value != shown:
                    overrides[spec["key"]] = float(_FROM_SHOW[spec["show"]](value))
    return overrides


def labels(scn) -> dict:
    """Dotted key -> the input's label with its unit, for every input the app offers."""
    out = {}
    for _, specs in input_groups(scn):
        for spec in specs:
            out[spec["key"]] = f"{spec['label']} [{spec['unit']}]" if spec["unit"] else spec["label"]
    return out


