"""The key reference of a scenario file, built from the schema, and the commented scenario made from it.

``lcoe keys [SECTION]`` prints :func:`reference_text`; ``lcoe new PATH`` writes
:func:`template_text` and :func:`curve_template_csv`. Both come from the same
:func:`entries`, whose type, range, allowed values and default are read from the pydantic
fields of :mod:`lcoe.inputs.schema`; only the unit and the words about each key are kept
here (:data:`ABOUT`), and a test holds the two to each other so that a key added to the
schema without its words fails. Every number of the template and its curve is invented.
"""

from __future__ import annotations

import math
import textwrap
import typing
from dataclasses import dataclass
from typing import Any

from lcoe.inputs.about import CAUTION
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.keys import _inner_model, key_range, suggest
from lcoe.inputs.schema import DERIVED_DEFAULTS, SCHEMA_VERSION, ScenarioFields

WIDTH = 100
#: the one entry of [variants.NAME]: a dotted key of the file
VARIANT_KEY = "variants.NAME"
#: the one entry of [lender_cases.NAME]: a dotted key of the file (beside label and energy_case)
LENDER_KEY = "lender_cases.NAME"

#: each section: (dotted name, how it is written, what it holds)
SECTIONS: dict[str, tuple[str, str]] = {
    "": ("top level", "The version of the file format."),
    "project": ("table", "The project: its name, the currency label, the life and the number of turbines."),
    "wind": ("table", "The wind climate at wind.height_m: exactly one source (a mean speed or a Weibull scale "
                      "with its shape, a series, or a rose), the shear to hub height and the air density."),
    "wind.rose": ("optional table", "Wind directions by sector, a wind source of its own: sector i is centred on "
                                    "i x 360 / n degrees (0 = north, clockwise, the direction the wind comes from)."),
    "wind.long_term": ("optional table", "Long-term correction (measure-correlate-predict) of wind.timeseries, "
                                         "a short site measurement, against a long reference series."),
    "turbine": ("table", "One turbine type: its size and a power curve, from a CSV table or built from physics "
                         "(cp_max, cut_in_mps, cut_out_mps, drivetrain_efficiency)."),
    "layout": ("optional table", "Turbine positions (a CSV or a regular grid) and the wake model; with a layout the "
                                 "wake loss is computed, so losses.wake is left out. Needs wind directions."),
    "losses": ("table", "Losses as fractions of the gross energy, applied one after another (multiplied)."),
    "operations": ("table", "Availability over the life and performance degradation."),
    "maintenance": ("table", "Yearly operating costs in year-0 money, growing at escalation."),
    "maintenance.component": ("array of tables", "Random major failures, one table per component; the expected "
                                                 "values in the deterministic case, drawn in the Monte Carlo."),
    "maintenance.overhaul": ("array of tables", "Planned major works, one table per job."),
    "capex": ("table", "Construction costs in year-0 money, all spent at t = 0, and the end of life."),
    "revenue": ("table", "Prices: a PPA for its term, the merchant price after it, and a production credit."),
    "finance": ("table", "Rates, tax and depreciation."),
    "finance.debt": ("optional table", "Sculpted project debt, sized on the sizing case; leave the table out for "
                                       "an all-equity project."),
    "construction": ("optional table", "The construction period from financial close to commercial operation: "
                                       "the capex drawdown, its funding, interest during construction and fees."),
    "reserves": ("optional table", "Reserve accounts funded through the cash waterfall: debt service and "
                                   "maintenance reserves."),
    "waterfall": ("optional table", "The lock-up test of the cash waterfall, and an optional cash sweep."),
    "uncertainty": ("table", "Energy uncertainty, for P90/P99 and the Monte Carlo: relative standard deviations."),
    "uncertainty.speed": ("array of tables", "Uncertainty terms on the long-term mean wind speed."),
    "uncertainty.energy": ("array of tables", "Uncertainty terms on the net energy."),
    "montecarlo": ("table", "Monte Carlo settings (P50/P90 of every result)."),
    "montecarlo.vary": ("optional tables, one per input", "Inputs drawn in each trial: the table is named by the "
                                                          "dotted key, as [montecarlo.vary.\"capex.turbine_per_kw\"]."),
    "montecarlo.correlation": ("optional array of tables", "Rank correlation between two drawn inputs."),
    "variants": ("optional tables, one per variant", "Named sets of changed inputs, compared side by side with "
                                                     "the base: [variants.NAME] holds \"dotted.key\" = value."),
    "lender_cases": ("optional tables, one per case", "Downside cases of your own, run with the debt locked at "
                                                      "the base sizing beside the default set: [lender_cases.NAME] "
                                                      "holds label, energy_case and \"dotted.key\" = value."),
}

# The unit and the words about each key, in the order the file gives them. The schema gives the rest.
ABOUT: dict[str, tuple[str, str]] = {
    "schema_version": ("-", "The version of this file format; this program reads version 1."),
    "project.name": ("text", "The site's name, shown on every report and sheet."),
    "project.currency": ("text", "A label for the money; all money is in this one currency."),
    "project.lifetime_years": ("years", "Operating years L; t = 0 is construction, t = 1..L operation."),
    "project.turbines": ("turbines", "The number of turbines."),
    "wind.height_m": ("m", "Height above ground of the wind statistics below."),
    "wind.mean_speed_mps": ("m/s", "Long-term mean wind speed at height_m (a Weibull climate, with weibull_shape)."),
    "wind.weibull_scale_mps": ("m/s", "Weibull scale A at height_m, instead of mean_speed_mps."),
    "wind.timeseries": ("file", "A wind series CSV instead of a distribution, relative to this file; columns "
                                "timestamp (ISO 8601), speed_mps, and optionally temperature_c and direction_deg; "
                                "one row per step of 1 to 60 minutes, a full year or more."),
    "wind.weibull_shape": ("-", "Weibull shape k; required with mean_speed_mps or weibull_scale_mps."),
    "wind.shear_exponent": ("-", "Power-law shear exponent alpha to hub height: v_hub = v (hub / height)^alpha."),
    "wind.roughness_length_m": ("m", "Roughness length z0 for the log law instead of the power law."),
    "wind.elevation_m": ("m", "Site elevation above sea level, for the air pressure (ISO 2533)."),
    "wind.mean_temperature_c": ("degC", "Mean air temperature at the site, for the air density."),
    "wind.air_density_kgm3": ("kg/m3", "Air density at hub height; overrides elevation_m and mean_temperature_c."),
    "wind.max_missing_share": ("fraction", "A series missing more than this share of its steps is refused."),
    "wind.rose.frequency": ("fraction", "Share of the time in each sector, from north clockwise; sums to 1."),
    "wind.rose.weibull_scale_mps": ("m/s", "Weibull scale A of each sector at wind.height_m."),
    "wind.rose.weibull_shape": ("-", "Weibull shape k of each sector."),
    "wind.sectors": ("sectors", "Sectors of the rose derived from a series with a direction_deg column."),
    "wind.long_term.reference": ("file", "The long reference series CSV, relative to this file; columns timestamp, "
                                         "speed_mps, and optionally direction_deg; at least the site's period."),
    "wind.long_term.method": ("-", "The line relating site to reference speeds."),
    "turbine.hub_height_m": ("m", "Hub height above ground; above the rotor radius."),
    "turbine.rated_power_kw": ("kW", "Rated power of one turbine; a curve table's peak must be within 2 % of it."),
    "turbine.rotor_diameter_m": ("m", "Rotor diameter."),
    "turbine.power_curve": ("file", "The power curve CSV, relative to this file; columns speed_mps, power_kw (at "
                                    "curve_air_density_kgm3) and optionally ct (thrust coefficient 0..1, for "
                                    "wakes); speeds ascending from 0 to the cut-out; zero outside the table."),
    "turbine.curve_air_density_kgm3": ("kg/m3", "Air density at which the curve table holds."),
    "turbine.regulation": ("-", "How the curve is adjusted to the site density: pitch by speed (IEC 61400-12-1), "
                                "stall by power."),
    "turbine.cp_max": ("-", "Peak power coefficient of a physics-built curve (at most 16/27, the Betz limit)."),
    "turbine.cut_in_mps": ("m/s", "Cut-in speed of a physics-built curve."),
    "turbine.cut_out_mps": ("m/s", "Cut-out speed of a physics-built curve."),
    "turbine.drivetrain_efficiency": ("fraction", "Drivetrain efficiency of a physics-built curve."),
    "layout.positions": ("file", "Turbine positions CSV, relative to this file; columns x_m (east), y_m (north) "
                                 "and optionally name; one row per turbine."),
    "layout.rows": ("turbines", "Rows of a regular grid, instead of positions."),
    "layout.columns": ("turbines", "Turbines in each row of the grid."),
    "layout.row_spacing_diameters": ("rotor diameters", "Distance between rows."),
    "layout.column_spacing_diameters": ("rotor diameters", "Distance between turbines within a row."),
    "layout.row_bearing_deg": ("deg", "Bearing along each row, clockwise from north."),
    "layout.location": ("-", "Sets the usual wake decay constant."),
    "layout.wake_decay_constant": ("-", "Wake decay constant k of the Jensen/Park model."),
    "layout.speed_bin_mps": ("m/s", "Width of the speed bins of the wake computation."),
    "layout.direction_step_deg": ("deg", "Step between the directions of the wake computation."),
    "losses.wake": ("fraction", "Wake loss (computed instead with a [layout])."),
    "losses.electrical": ("fraction", "Electrical losses to the metering point."),
    "losses.turbine_performance": ("fraction", "Turbine performance below the power curve."),
    "losses.environmental": ("fraction", "Icing, blade soiling, high temperatures."),
    "losses.curtailment": ("fraction", "Curtailment (grid, noise, wildlife)."),
    "losses.other": ("fraction", "Any other loss."),
    "operations.availability_first_year": ("fraction", "Availability in year 1."),
    "operations.availability_mature": ("fraction", "Availability from year 2 (component failures below come on "
                                                   "top)."),
    "operations.ageing_starts_year": ("year", "After this year the availability falls by availability_ageing_per_"
                                              "year each year."),
    "operations.availability_ageing_per_year": ("fraction per year", "Yearly fall of availability once ageing "
                                                                     "starts (absolute)."),
    "operations.degradation_per_year": ("fraction per year", "Performance degradation, compounding from year 2."),
    "maintenance.fixed_per_kw_year": ("money per kW-year", "Fixed O&M (service contract, staff)."),
    "maintenance.variable_per_mwh": ("money per MWh", "O&M that grows with the energy."),
    "maintenance.insurance_per_kw_year": ("money per kW-year", "Insurance."),
    "maintenance.land_lease_share_of_revenue": ("fraction", "Land lease as a share of revenue."),
    "maintenance.escalation": ("fraction per year", "Nominal growth of every O&M cost and of decommissioning."),
    "maintenance.component.name": ("text", "The component's name, unique in the table."),
    "maintenance.component.failure_rate_per_turbine_year": ("events per turbine-year", "Expected failures."),
    "maintenance.component.replacement_cost": ("money", "Cost of one event."),
    "maintenance.component.downtime_days": ("days", "Turbine downtime of one event."),
    "maintenance.overhaul.name": ("text", "The job's name, unique in the table."),
    "maintenance.overhaul.year": ("year", "Operating year of the job, within the life."),
    "maintenance.overhaul.cost_per_turbine": ("money", "Cost for each turbine, year-0 money."),
    "capex.turbine_per_kw": ("money per kW", "Turbines, delivered and erected."),
    "capex.balance_of_plant_per_kw": ("money per kW", "Foundations, roads, cabling, substation."),
    "capex.grid_connection": ("money", "Grid connection."),
    "capex.development": ("money", "Development and permits."),
    "capex.contingency": ("fraction", "Contingency on the four items above."),
    "capex.decommissioning_per_kw": ("money per kW", "Decommissioning at t = L, escalated."),
    "capex.salvage_per_kw": ("money per kW", "Salvage at t = L, escalated; reduces decommissioning."),
    "revenue.ppa_price_per_mwh": ("money per MWh", "PPA price in year 0 money, paid while t <= ppa_term_years."),
    "revenue.ppa_term_years": ("years", "Years under the PPA."),
    "revenue.ppa_escalation": ("fraction per year", "Nominal growth of the PPA price."),
    "revenue.merchant_price_per_mwh": ("money per MWh", "Market price after the PPA, year-0 money."),
    "revenue.merchant_escalation": ("fraction per year", "Nominal growth of the merchant price."),
    "revenue.production_credit_per_mwh": ("money per MWh", "A credit per MWh, not escalated."),
    "revenue.production_credit_years": ("years", "Years the credit is paid."),
    "finance.inflation": ("fraction per year", "Inflation, for the real LCOE and the default escalation."),
    "finance.discount_rate": ("fraction per year", "Nominal discount rate for project NPV and LCOE."),
    "finance.equity_target_return": ("fraction per year", "Nominal rate for equity NPV and the break-even price."),
    "finance.tax_rate": ("fraction", "Tax on profit; losses are carried forward."),
    "finance.depreciation": ("-", "Tax depreciation of the capex; macrs_N are the half-year tables of US IRS "
                                  "Publication 946."),
    "finance.depreciation_years": ("years", "Years of straight_line or declining_balance depreciation."),
    "finance.debt.sizing_case": ("-", "The energy the debt is sized on: P50, or P90 of one or ten years, or P99."),
    "finance.debt.target_dscr": ("x", "Debt service cover ratio the debt is sculpted to in the sizing case."),
    "finance.debt.max_gearing": ("fraction", "Largest debt as a share of the capex."),
    "finance.debt.tenor_years": ("years", "Years of debt service, within the life."),
    "finance.debt.interest_rate": ("fraction per year", "Interest on the debt."),
    "finance.debt.upfront_fee": ("fraction", "Fee as a share of the debt, paid at t = 0."),
    "finance.debt.target_dscr_merchant": ("x", "Target DSCR in the merchant years of the tenor (after "
                                               "revenue.ppa_term_years); target_dscr applies in the PPA years."),
    "construction.financial_close": ("date", "Financial close, written as a TOML date without quotes."),
    "construction.months": ("months", "Months from financial close to commercial operation; operating years "
                                      "then run to 31 December, the first one pro rata."),
    "construction.drawdown": ("-", "How the capex is spent over the quarters: evenly, on an S-curve, or as an "
                                   "array of one share per quarter adding up to 1."),
    "construction.funding": ("-", "Equity spent first, then debt; or every use funded pro rata at the gearing."),
    "construction.commitment_fee": ("fraction per year", "Fee on the debt not yet drawn, capitalised."),
    "reserves.dsra_months": ("months", "Debt service reserve: months of the next year's debt service (0: none)."),
    "reserves.maintenance_years": ("years", "Maintenance reserve built up over the years before each overhaul "
                                            "(0: none)."),
    "reserves.deposit_rate": ("fraction per year", "Interest earned on reserve and lock-up balances."),
    "waterfall.lockup_dscr": ("x", "No distributions in a year whose DSCR is below this; the cash is trapped."),
    "waterfall.cash_sweep": ("-", "true: the cash of a locked-up year prepays the debt instead of waiting."),
    "uncertainty.interannual_speed_sd": ("fraction", "Relative sd of one year's mean wind speed."),
    "uncertainty.speed.name": ("text", "The term's name (measurement, long-term correlation, ...)."),
    "uncertainty.speed.sd": ("fraction", "Relative sd of the long-term mean speed."),
    "uncertainty.energy.name": ("text", "The term's name (losses, power curve, ...)."),
    "uncertainty.energy.sd": ("fraction", "Relative sd of the net energy."),
    "montecarlo.trials": ("trials", "Trials of `lcoe run` (0: the deterministic case only)."),
    "montecarlo.seed": ("-", "Seed of the draws: the same seed gives the same results."),
    "montecarlo.sampling": ("-", "Plain random draws or Latin hypercube sampling."),
    "montecarlo.failures": ("-", "Component failures drawn in each trial, or their expected values."),
    "montecarlo.chunk_size": ("trials", "Trials computed at once (memory only; results do not change)."),
    "montecarlo.vary.distribution": ("-", "normal and lognormal take sd (and mean); triangular takes low, high "
                                          "(and mode); uniform low and high."),
    "montecarlo.vary.mean": ("unit of the key", "Mean of a normal or lognormal draw."),
    "montecarlo.vary.sd": ("unit of the key", "Standard deviation of a normal or lognormal draw."),
    "montecarlo.vary.low": ("unit of the key", "Lowest value of a triangular or uniform draw."),
    "montecarlo.vary.mode": ("unit of the key", "Most likely value of a triangular draw."),
    "montecarlo.vary.high": ("unit of the key", "Highest value of a triangular or uniform draw."),
    "montecarlo.correlation.between": ("keys", "Two keys of [montecarlo.vary]."),
    "montecarlo.correlation.rho": ("-", "Their rank correlation."),
    "variants.NAME": ("unit of the key", "Any input of the file, by its dotted key; an item of an array of "
                                         "tables by its name, as \"maintenance.component.gearbox.failure_rate_per_"
                                         "turbine_year\" = 0.012."),
    "lender_cases.NAME": ("unit of the key", "Any input but the debt terms, the life, the construction period "
                                             "and the Monte Carlo, by its dotted key; label = \"text\" names the "
                                             "case and energy_case = \"p90_1yr\" (or p50, p90_10yr, p99_1yr) "
                                             "scales its energy by P_case / P50."),
}

# The default of a key that the schema leaves unset (None): what the program then uses.
UNSET: dict[str, str] = {
    "wind.mean_speed_mps": "optional, one of the four wind sources",
    "wind.weibull_scale_mps": "optional, one of the four wind sources",
    "wind.timeseries": "optional, one of the four wind sources",
    "wind.weibull_shape": "optional",
    "wind.shear_exponent": "1/7 (unless roughness_length_m)",
    "wind.roughness_length_m": "optional (without it, the power law)",
    "wind.mean_temperature_c": "the standard atmosphere's at elevation_m, 15 - 0.0065 x elevation_m (ISO 2533)",
    "wind.air_density_kgm3": "from elevation_m and mean_temperature_c",
    "wind.sectors": "12 (for a series with directions)",
    "turbine.power_curve": "optional (without it, a physics-built curve)",
    "turbine.cp_max": "optional (without it, a curve table)",
    "turbine.cut_in_mps": "3.0 (physics-built curve)",
    "turbine.cut_out_mps": "25.0 (physics-built curve)",
    "turbine.drivetrain_efficiency": "1.0 (physics-built curve)",
    "layout.positions": "optional (without it, a grid)",
    "layout.rows": "optional (without it, positions)",
    "layout.columns": "optional (without it, positions)",
    "layout.row_spacing_diameters": "optional (without it, positions)",
    "layout.column_spacing_diameters": "optional (without it, positions)",
    "layout.wake_decay_constant": "0.075 onshore, 0.04 offshore (common practice)",
    "montecarlo.vary.mean": "the scenario's value",
    "montecarlo.vary.sd": "optional",
    "montecarlo.vary.low": "optional",
    "montecarlo.vary.mode": "the scenario's value",
    "montecarlo.vary.high": "optional",
    "finance.debt.target_dscr_merchant": "target_dscr (one target in every year)",
}

# The invented values of the template, as TOML text; keys not here are written commented out, at their
# default. OFF: keys and sections written commented out (alternatives, or tables a new site does not need).
EXAMPLE: dict[str, str] = {
    "schema_version": str(SCHEMA_VERSION),
    "project.name": '"New site"', "project.currency": '"EUR"', "project.lifetime_years": "25",
    "project.turbines": "12",
    "wind.height_m": "100.0", "wind.mean_speed_mps": "7.2", "wind.weibull_scale_mps": "8.1",
    "wind.timeseries": '"wind.csv"', "wind.weibull_shape": "2.0", "wind.shear_exponent": "0.15",
    "wind.roughness_length_m": "0.05", "wind.elevation_m": "250.0", "wind.mean_temperature_c": "9.0",
    "wind.air_density_kgm3": "1.20", "wind.sectors": "12",
    "wind.rose.frequency": "[0.06, 0.05, 0.05, 0.06, 0.07, 0.09, 0.12, 0.14, 0.12, 0.10, 0.08, 0.06]",
    "wind.rose.weibull_scale_mps": "[6.8, 6.5, 6.4, 6.9, 7.5, 8.2, 8.9, 9.4, 9.0, 8.4, 7.7, 7.1]",
    "wind.rose.weibull_shape": "[2.0, 2.0, 2.0, 2.0, 2.1, 2.1, 2.2, 2.2, 2.2, 2.1, 2.0, 2.0]",
    "wind.long_term.reference": '"reference.csv"',
    "turbine.hub_height_m": "115.0", "turbine.rated_power_kw": "4000.0", "turbine.rotor_diameter_m": "130.0",
    "turbine.power_curve": '"{curve}"', "turbine.cp_max": "0.46", "turbine.cut_in_mps": "3.0",
    "turbine.cut_out_mps": "25.0", "turbine.drivetrain_efficiency": "0.94",
    "layout.positions": '"layout.csv"', "layout.rows": "3", "layout.columns": "4",
    "layout.row_spacing_diameters": "7.0", "layout.column_spacing_diameters": "4.0",
    "layout.wake_decay_constant": "0.075",
    "losses.wake": "0.07", "losses.electrical": "0.02", "losses.turbine_performance": "0.015",
    "losses.environmental": "0.01", "losses.curtailment": "0.01",
    "operations.availability_first_year": "0.95", "operations.availability_mature": "0.97",
    "operations.ageing_starts_year": "15", "operations.availability_ageing_per_year": "0.002",
    "operations.degradation_per_year": "0.003",
    "maintenance.fixed_per_kw_year": "38.0", "maintenance.variable_per_mwh": "1.5",
    "maintenance.insurance_per_kw_year": "6.0", "maintenance.land_lease_share_of_revenue": "0.03",
    "maintenance.escalation": "0.02",
    "maintenance.component.name": '"gearbox"', "maintenance.component.failure_rate_per_turbine_year": "0.02",
    "maintenance.component.replacement_cost": "340000.0", "maintenance.component.downtime_days": "30.0",
    "maintenance.overhaul.name": '"blade refurbishment"', "maintenance.overhaul.year": "12",
    "maintenance.overhaul.cost_per_turbine": "110000.0",
    "capex.turbine_per_kw": "1050.0", "capex.balance_of_plant_per_kw": "350.0", "capex.grid_connection": "8.0e6",
    "capex.development": "3.5e6", "capex.contingency": "0.05", "capex.decommissioning_per_kw": "40.0",
    "capex.salvage_per_kw": "15.0",
    "revenue.ppa_price_per_mwh": "80.0", "revenue.ppa_term_years": "15", "revenue.ppa_escalation": "0.015",
    "revenue.merchant_price_per_mwh": "60.0", "revenue.merchant_escalation": "0.01",
    "finance.inflation": "0.02", "finance.discount_rate": "0.065", "finance.equity_target_return": "0.10",
    "finance.tax_rate": "0.25",
    "finance.debt.tenor_years": "16", "finance.debt.interest_rate": "0.055", "finance.debt.upfront_fee": "0.015",
    "uncertainty.interannual_speed_sd": "0.06",
    "uncertainty.speed.name": '"measurement"', "uncertainty.speed.sd": "0.03",
    "uncertainty.energy.name": '"losses"', "uncertainty.energy.sd": "0.03",
    "montecarlo.trials": "2000", "montecarlo.seed": "1",
    "montecarlo.vary.distribution": '"triangular"', "montecarlo.vary.mean": "1050.0", "montecarlo.vary.sd": "50.0",
    "montecarlo.vary.low": "1000.0", "montecarlo.vary.mode": "1050.0", "montecarlo.vary.high": "1150.0",
    "montecarlo.correlation.between": '["capex.turbine_per_kw", "maintenance.fixed_per_kw_year"]',
    "montecarlo.correlation.rho": "0.4",
    "variants.NAME": '"project.lifetime_years" = 30',
    "finance.debt.target_dscr_merchant": "1.40",
    "construction.financial_close": "2027-01-01", "construction.months": "18",
    "reserves.dsra_months": "6.0", "reserves.maintenance_years": "3", "reserves.deposit_rate": "0.02",
    "waterfall.lockup_dscr": "1.10",
    "lender_cases.NAME": '"maintenance.fixed_per_kw_year" = 45.6',
}
OFF = {"wind.weibull_scale_mps", "wind.timeseries", "wind.roughness_length_m", "wind.mean_temperature_c",
       "wind.air_density_kgm3", "wind.sectors", "wind.rose", "wind.long_term", "layout",
       "turbine.cp_max", "turbine.cut_in_mps", "turbine.cut_out_mps", "turbine.drivetrain_efficiency",
       "montecarlo.vary", "montecarlo.correlation", "montecarlo.vary.mean", "montecarlo.vary.sd",
       "construction", "reserves", "waterfall", "lender_cases", "finance.debt.target_dscr_merchant"}
#: how the template names the items of its tables of tables
TABLE_NAMES = {"montecarlo.vary": '"capex.turbine_per_kw"', "variants": "longer_life", "lender_cases": "heavy_om"}


@dataclass(frozen=True)
class Entry:
    """One key of the reference: everything it says about the key."""

    key: str          # dotted, with no item names (maintenance.component.name)
    kind: str         # "number", "whole number", "text", "one of ..." ...
    unit: str
    allowed: str      # the range, or "" where any value of the kind is taken
    default: str      # "required", or the value the program uses when the key is left out
    about: str

    @property
    def name(self) -> str:
        return '"dotted.key"' if self.key in (VARIANT_KEY, LENDER_KEY) else self.key.rsplit(".", 1)[-1]

    def lines(self) -> list[str]:
        """The entry in words: the key, unit, kind, range and default, then what it is; wrapped."""
        plain = self.default == "required" or self.default.startswith("optional")
        facts = "; ".join(x for x in (self.kind, self.allowed, self.default if plain
                                      else f"default {self.default}") if x)
        text = f"{self.name} [{self.unit}]: {facts}. {self.about}"
        return textwrap.wrap(text, WIDTH - 4, subsequent_indent="    ")


def _choices(ann) -> list[str] | None:
    for a in (ann, *(typing.get_args(ann) or ())):
        if typing.get_origin(a) is typing.Literal:
            return [str(x) for x in typing.get_args(a)]
    return None


def _kind(key: str, ann) -> str:
    choices = _choices(ann)
    if choices:
        return "one of " + " | ".join(choices)
    text = str(ann)
    if ann is bool:
        return "true or false"
    if "datetime.date" in text:
        return "date"
    if key == "wind.rose.frequency" or text.startswith("list[typing.Annotated[float"):
        return "array of numbers, one per sector (4 to 72)"
    if text.startswith("list[str"):
        return "array of two texts"
    if "str" in text:
        return "text"
    if "int" in text and "float" not in text:
        return "whole number"
    return "number"


def _num(v: float, whole: bool) -> str:
    """A bound as a reader takes it in: 10,000,000 and 0.5 rather than 1e+07; 1e12 for the money caps."""
    if whole or (v == int(v) and abs(v) < 1e9):
        return f"{int(v):,}"
    return f"{v:g}".replace("e+", "e")


def _range(key: str, whole: bool) -> str:
    lo, hi, lo_open, hi_open = key_range(key)
    lo_t, hi_t = (_num(x, whole) if math.isfinite(x) else "" for x in (lo, hi))
    fin_lo, fin_hi = math.isfinite(lo), math.isfinite(hi)
    if not fin_lo and not fin_hi:
        return ""
    if not fin_hi:
        return f"x {'>' if lo_open else '>='} {lo_t}"
    if not fin_lo:
        return f"x {'<' if hi_open else '<='} {hi_t}"
    return f"{lo_t} {'<' if lo_open else '<='} x {'<' if hi_open else '<='} {hi_t}"


def _default(key: str, info) -> str:
    if info.is_required():
        return "required"
    if key in DERIVED_DEFAULTS:
        return f"the value of {DERIVED_DEFAULTS[key]}"
    if info.default is None:
        return UNSET.get(key, "optional")
    v = info.default
    if isinstance(v, str):
        return f'"{v}"'
    if isinstance(v, (list, dict)):
        return "none"
    return f"{v:g}" if isinstance(v, float) else str(v)


def _models():
    """(section, model) of every table the schema has, in the order of the file."""
    out = [("", ScenarioFields)]

    def visit(model, prefix):
        for name, info in model.model_fields.items():
            inner = _inner_model(info.annotation)
            if inner is not None:
                key = f"{prefix}{name}"
                out.append((key, inner))
                visit(inner, key + ".")
    visit(ScenarioFields, "")
    return out


def entries() -> dict[str, list[Entry]]:
    """Every key of the schema, section by section (a section's own keys, not its tables')."""
    out: dict[str, list[Entry]] = {}
    for section, model in _models():
        rows = []
        for name, info in model.model_fields.items():
            key = f"{section}.{name}" if section else name
            if _inner_model(info.annotation) is not None:
                continue
            if key in ("variants", "lender_cases"):
                continue
            unit, about = ABOUT[key]
            kind = _kind(key, info.annotation)
            rows.append(Entry(key, kind, unit, _range(key, kind == "whole number"), _default(key, info), about))
        out[section] = rows
    unit, about = ABOUT[VARIANT_KEY]
    out["variants"] = [Entry(VARIANT_KEY, "any value the key takes", unit, "", "optional", about)]
    unit, about = ABOUT[LENDER_KEY]
    out["lender_cases"] = [Entry(LENDER_KEY, "any value the key takes", unit, "", "optional", about)]
    return out


def _header(section: str) -> str:
    how = SECTIONS[section][0]
    if "array" in how:
        return f"[[{section}]]"
    if section == "montecarlo.vary":
        return '[montecarlo.vary."KEY"]'
    if section in ("variants", "lender_cases"):
        return f"[{section}.NAME]"
    return f"[{section}]"


def _title(section: str) -> str:
    how, about = SECTIONS[section]
    return f"Top level, before any table: {about}" if section == "" else f"{_header(section)}  ({how}) {about}"


def _section_lines(section: str, rows: list[Entry]) -> list[str]:
    out = textwrap.wrap(_title(section), WIDTH, subsequent_indent="    ")
    for e in rows:
        out += ["  " + line for line in e.lines()]
    return out


REFERENCE_INTRO = (
    "Scenario keys (TOML). Units are in the key names and in brackets; fractions are 0..1, never percent; "
    "money is year-0 money of project.currency; paths are relative to the scenario file. "
    "A key left out takes its default; 'x' stands for the value.")


def sections_for(name: str | None) -> list[str]:
    """The sections ``lcoe keys NAME`` shows: all, one, or one with its tables (``finance`` with
    ``finance.debt``); an unknown name is refused with the nearest one."""
    known = list(entries())
    if not name:
        return known
    name = name.strip().strip("[]").strip()
    picked = [s for s in known if s == name or s.startswith(name + ".")]
    if not picked:
        hint = suggest(name, [s for s in known if s])
        raise ScenarioError("no such section" + (f" (did you mean {hint[0]!r}?)" if hint else "")
                            + f"; sections: {', '.join(s for s in known if s)}", key="SECTION", value=name)
    return picked


def reference_text(section: str | None = None) -> str:
    """The key reference (``lcoe keys``): every section asked for (or the one key named, as
    ``finance.debt.sizing_case``), each key's unit, kind, range, default and meaning."""
    table = entries()
    lines = textwrap.wrap(REFERENCE_INTRO, WIDTH) + [""]
    one = [(s, e) for s, rows in table.items() for e in rows if section and e.key == section.strip()]
    if one:
        s, e = one[0]
        return "\n".join(lines + _section_lines(s, [e]) + [""])
    for s in sections_for(section):
        lines += _section_lines(s, table[s]) + [""]
    return "\n".join(lines)


# --------------------------------------------------------------------------- the template

def template_text(curve_name: str) -> str:
    """A complete scenario, every section and key with its reference as comments; it runs as written
    (the power curve ``curve_name`` beside it, from :func:`curve_template_csv`). Keys and tables in
    :data:`OFF` are written commented out."""
    table = entries()
    out = ["# A new wind site. Every number here is invented: replace them with the site's own.",
           "# Each key has its unit, kind, allowed range and default in the comment above it (the same",
           "# words as `lcoe keys`). Lines starting with '#' are comments; a commented key takes its default,",
           "# and a commented [table] is left out. Check with `lcoe check FILE`, run with `lcoe run FILE`.",
           *("# " + x for x in textwrap.wrap(CAUTION, WIDTH - 2)), ""]
    for section, rows in table.items():
        off = section in OFF or any(section.startswith(x + ".") for x in OFF)
        out += _template_section(section, rows, off, curve_name)
    return "\n".join(out).rstrip() + "\n"


def _template_section(section: str, rows: list[Entry], off: bool, curve_name: str) -> list[str]:
    lines = ["# " + "-" * (WIDTH - 2)]
    lines += ["# " + x for x in textwrap.wrap(_title(section), WIDTH - 2)]
    pre = "# " if off else ""
    if section:
        header = _header(section)
        if section in TABLE_NAMES:
            header = header.replace('"KEY"', TABLE_NAMES[section]).replace("NAME", TABLE_NAMES[section])
        lines.append(pre + header)
    lines.append("")
    for e in rows:
        lines += ["# " + x for x in e.lines()]
        commented = off or e.key in OFF or e.key not in EXAMPLE
        value = EXAMPLE.get(e.key)
        if value is None:
            value = _default_toml(e.key)
        value = value.replace("{curve}", curve_name)
        text = value if e.key in (VARIANT_KEY, LENDER_KEY) else f"{e.name} = {value}"
        lines += [("# " if commented else "") + text, ""]
    return lines


def _default_toml(key: str) -> str:
    info = _field_info(key)
    v = info.default
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):
        return f'"{v}"'
    return repr(v)


def _field_info(key: str):
    section, _, name = key.rpartition(".")
    model = dict(_models())[section]
    return model.model_fields[name]


def template_keys() -> dict[str, Any]:
    """The dotted keys the template gives a value, with the value's TOML text (for tests)."""
    out = {}
    for section, rows in entries().items():
        off = section in OFF or any(section.startswith(x + ".") for x in OFF)
        for e in rows:
            if not off and e.key not in OFF and e.key in EXAMPLE:
                out[e.key] = EXAMPLE[e.key]
    return out


def curve_template_csv(rated_power_kw: float = 4000.0, rotor_diameter_m: float = 130.0) -> str:
    """An invented power curve (``speed_mps,power_kw,ct``) for the template's turbine: the power of
    the wind through the rotor, 0.5 rho A v^3, times a power coefficient of 0.44 and a drivetrain
    efficiency of 0.94, capped at rated; zero below 3 m/s and above 25 m/s. The thrust coefficient
    is 0.80 up to rated and falls as (v_rated / v)^2.5 beyond (an invented, typical shape)."""
    area = math.pi * rotor_diameter_m ** 2 / 4.0
    rows = ["speed_mps,power_kw,ct"]
    v_rated = (rated_power_kw * 1000.0 / (0.5 * 1.225 * area * 0.44 * 0.94)) ** (1.0 / 3.0)
    for i in range(0, 51):
        v = i / 2.0
        if v < 3.0:
            p, ct = 0.0, 0.0
        else:
            p = min(rated_power_kw, 0.5 * 1.225 * area * 0.44 * 0.94 * v ** 3 / 1000.0)
            ct = 0.80 if v <= v_rated else 0.80 * (v_rated / v) ** 2.5
        rows.append(f"{v:g},{p:.0f},{ct:.3f}")
    return "\n".join(rows) + "\n"

