"""Plausibility: values a scenario may hold but that lie outside common practice.

The schema (:mod:`lcoe.inputs.schema`) refuses what cannot be right (a loss of 7, a negative
speed); the remarks here are warnings only, never errors: a value outside the usual range is
sometimes meant (a very long life, a deliberately bare study) and the run goes on. Each remark
names its dotted key and value and says what is usual. Every range below is common practice in
onshore and offshore wind (industry experience, from memory), not a published standard.
"""

from __future__ import annotations

import math


def _g(value) -> str:
    return f"{value:g}"


def _field(scn, key: str):
    """The value a file gave a dotted key (None where the key or its table is absent)."""
    node = scn
    for part in key.split("."):
        node = getattr(node, part, None)
        if node is None:
            return None
    return node


def _outside(key: str, value, side: str, limit, usual: str) -> list[str]:
    if value is None or not (value > limit if side == "above" else value < limit):
        return []
    return [f"{key} = {_g(value)} is {side} {_g(limit)}: {usual} (common practice); check it is meant"]


_AVAILABLE = "wind farms are commonly 95-98 % available"
_TURBINE_COST = "turbines commonly cost some 700-2,000 per kW; check the unit is per kW"

#: (dotted key, "above" | "below", limit, what is usual): each a rule of thumb of the trade (common practice)
BOUNDS = (
    ("project.lifetime_years", "above", 35, "wind turbines are commonly designed for 20-30 years and financed for "
                                            "less"),
    ("wind.mean_speed_mps", "above", 12.0, "even the windiest sites built on have long-term means of about 10-11 m/s"),
    ("wind.shear_exponent", "above", 0.4, "the power-law exponent is commonly 0.1-0.3"),
    ("operations.availability_first_year", "below", 0.8, _AVAILABLE),
    ("operations.availability_mature", "below", 0.8, _AVAILABLE),
    ("operations.degradation_per_year", "above", 0.02, "performance commonly degrades by 0-1 % a year"),
    ("capex.turbine_per_kw", "below", 300.0, _TURBINE_COST),
    ("capex.turbine_per_kw", "above", 4000.0, _TURBINE_COST + ", not per MW"),
    ("capex.contingency", "above", 0.3, "contingency is commonly 5-15 % of the capex"),
    ("maintenance.fixed_per_kw_year", "above", 200.0, "fixed O&M is commonly some 20-80 per kW-year"),
    ("revenue.ppa_price_per_mwh", "above", 500.0, "wind power is commonly sold at some 30-150 per MWh; check the "
                                                  "unit is per MWh, not per GWh"),
    ("finance.discount_rate", "above", 0.3, "wind projects are commonly valued at some 4-12 % a year (nominal); "
                                            "give rates as fractions"),
    ("finance.discount_rate", "below", 0.0, "a negative discount rate values later money above money now"),
    ("finance.equity_target_return", "above", 0.3, "equity in wind commonly targets some 7-15 % a year"),
    ("finance.inflation", "above", 0.1, "long-run inflation is commonly assumed at 1-4 % a year"),
    ("finance.tax_rate", "above", 0.5, "corporate tax is commonly 15-35 %"),
    ("finance.debt.interest_rate", "above", 0.2, "project loans for wind commonly cost some 3-9 % a year"),
    ("finance.debt.max_gearing", "above", 0.9, "lenders commonly lend up to 70-85 % of the capex"),
    ("finance.debt.target_dscr", "below", 1.1, "lenders commonly size wind debt at a DSCR of 1.2-1.45"),
)


def _bounds(scn) -> list[str]:
    out = []
    for key, side, limit, usual in BOUNDS:
        out += _outside(key, _field(scn, key), side, limit, usual)
    for c in scn.maintenance.component:
        out += _outside(f"maintenance.component.{c.name}.failure_rate_per_turbine_year",
                        c.failure_rate_per_turbine_year, "above", 1.0,
                        "a major component commonly fails a few times in a hundred turbine-years, not every year")
    return out


def _no_costs(scn) -> list[str]:
    m = scn.maintenance
    if (m.fixed_per_kw_year or m.variable_per_mwh or m.insurance_per_kw_year or m.land_lease_share_of_revenue
            or m.overhaul or any(c.failure_rate_per_turbine_year > 0 and c.replacement_cost > 0
                                 for c in m.component)):
        return []
    return ["maintenance: no O&M cost at all (fixed_per_kw_year, variable_per_mwh, insurance_per_kw_year and "
            "land_lease_share_of_revenue are 0, no component failures or overhauls); every operating wind farm pays "
            "for service, insurance and land, commonly some 30-60 per kW-year in all (common practice), so the LCOE "
            "is too low"]


def _no_losses(scn) -> list[str]:
    if scn.layout is not None or any(getattr(scn.losses, k) > 0 for k in type(scn.losses).model_fields):
        return []
    return ["losses: every loss is 0 (wake, electrical, turbine_performance, environmental, curtailment, other); "
            "net energy is commonly 10-20 % below gross (common practice), so the energy is too high"]


def _no_uncertainty(scn) -> list[str]:
    u = scn.uncertainty
    if u.interannual_speed_sd > 0 or any(t.sd > 0 for t in (*u.speed, *u.energy)) or scn.wind.long_term is not None:
        return []
    return ["uncertainty: none given (interannual_speed_sd = 0, no speed or energy terms), so P90 = P99 = P50 and "
            "any debt is sized on the P50 energy; the inter-annual variability alone is commonly 4-7 % of the mean "
            "speed, and one year's energy uncertainty 10-15 % (common practice)"]


def _losses_total(scn) -> list[str]:
    kept = math.prod(1.0 - getattr(scn.losses, k) for k in type(scn.losses).model_fields)
    if 1.0 - kept <= 0.4:
        return []
    return [f"losses: together the losses take {100 * (1 - kept):.1f} % of the gross energy, above 40 %: net energy "
            "is commonly 10-20 % below gross (common practice); check each is a fraction (0.08 for 8 %)"]


def _turbine(scn) -> list[str]:
    t = scn.turbine
    specific_w_m2 = 1000.0 * t.rated_power_kw / (math.pi * t.rotor_diameter_m ** 2 / 4.0)
    if 100.0 <= specific_w_m2 <= 800.0:
        return []
    return [f"turbine.rated_power_kw = {_g(t.rated_power_kw)} over a rotor of {_g(t.rotor_diameter_m)} m is "
            f"{specific_w_m2:,.0f} W per m2 of swept area, outside 100-800: utility turbines are built at about "
            "200-500 W/m2 (common practice); check the units (kW, m)"]


RULES = (_bounds, _turbine, _no_losses, _losses_total, _no_costs, _no_uncertainty)


def plausibility_warnings(scn) -> list[str]:
    """Every remark of this module on a scenario, each naming its key (warnings, never errors)."""
    out: list[str] = []
    for rule in RULES:
        out += rule(scn)
    return out
