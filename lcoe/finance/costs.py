"""Capital and operating costs: capex, O&M with escalation, failures, overhauls, decommissioning.

All inputs are year-0 money. Functions broadcast: a parameter may be a float or an
array shaped (trials, 1); yearly results are shaped (trials, years).
"""

from __future__ import annotations

import numpy as np


def capex_total(turbine_per_kw, balance_of_plant_per_kw, grid_connection, development, contingency, plant_kw):
    """Total capex at t = 0: (turbine + BoP per kW) * plant kW + grid + development, plus contingency."""
    base = (turbine_per_kw + balance_of_plant_per_kw) * plant_kw + grid_connection + development
    return base * (1.0 + contingency)


def escalation_index(rate, years):
    """(1 + g)^t for years t: the nominal growth of a year-0 amount. [-]"""
    return (1.0 + np.asarray(rate, float)) ** np.asarray(years, float)


def expected_failure_cost(rates, costs, turbines):
    """Expected yearly cost of random major failures, sum(rate * turbines * cost), year-0 money."""
    return sum(r * turbines * c for r, c in zip(rates, costs))


def overhaul_costs(years_of_work, costs_per_turbine, turbines, years):
    """Planned works by operating year (year-0 money), shape of ``years`` (broadcast on inputs)."""
    t = np.asarray(years)
    out = np.zeros(np.broadcast_shapes(t.shape, *[np.shape(c) for c in costs_per_turbine],
                                       *[np.shape(y) for y in years_of_work]))
    for y, c in zip(years_of_work, costs_per_turbine):
        out = out + np.where(t == y, c * turbines, 0.0)
    return out


def fixed_om(fixed_per_kw_year, insurance_per_kw_year, plant_kw, failure_cost, overhaul_cost):
    """The year-0 O&M that does not follow energy: (fixed + insurance) * kW + failures + overhauls."""
    return (fixed_per_kw_year + insurance_per_kw_year) * plant_kw + failure_cost + overhaul_cost


def opex(fixed_om_real, variable_per_mwh, energy_mwh, escalation_idx, lease_share, revenue, out=None):
    """O&M of each year, nominal.

    O&M_t = [(fixed + insurance) * kW + failures_t + overhauls_t + variable * E_t] * (1 + esc)^t
    + lease_share * Revenue_t, with the first three terms given as ``fixed_om_real``
    (:func:`fixed_om`) and (1 + esc)^t as ``escalation_idx`` (:func:`escalation_index`).
    """
    return np.add((fixed_om_real + variable_per_mwh * energy_mwh) * escalation_idx, lease_share * revenue, out=out)


def decommissioning_net(decommissioning_per_kw, salvage_per_kw, plant_kw, escalation, lifetime_years):
    """Decommissioning less salvage at t = L, escalated to year L (negative when salvage exceeds it)."""
    return (decommissioning_per_kw - salvage_per_kw) * plant_kw * escalation_index(escalation, lifetime_years)
