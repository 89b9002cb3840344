"""A full study of one scenario: the base case, its variants, the Monte Carlo and the sensitivity
set that the lender workbook shows, gathered in one :class:`Report`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from lcoe.analysis import lender, montecarlo
from lcoe.analysis import sensitivity as sens
from lcoe.engine import Case, run
from lcoe.physics import energy as en
from lcoe.physics import wind as resource


@dataclass
class Report:
    case: Case
    variants: dict = field(default_factory=dict)    # name -> Case
    montecarlo: object | None = None                # montecarlo.MonteCarloResult
    sensitivity: object | None = None               # sensitivity.SensitivitySet (shown by the workbook only)
    lender: list | None = None                      # lender.LenderResult per case (debt locked at close)
    as_run: dict = field(default_factory=dict)      # changes made on the command line (variant, set, seed)

    def to_dict(self) -> dict:
        c = self.case
        warnings = list(c.warnings)
        costs = costs_block(c)
        costs["capex_per_kw"] = costs["capex_total"] / c.scenario.plant_kw    # (the workbook has the other three)
        out = {
            "scenario": c.scenario.project.name,
            **file_block(c.scenario),
            "units": units_block(c.scenario),
            **({"as_run": dict(self.as_run)} if self.as_run else {}),
            "warnings": warnings,
            "project": project_block(c.scenario),
            "energy": c.energy.report(),
            **directions_blocks(c.energy),
            "costs": costs,
            "financing": financing_block(c),
            "sources_and_uses": c.sources_and_uses(),
            "metrics": dict(c.metrics),
            "annual": c.annual(),
        }
        if out["financing"]["gearing"] is None:
            warnings.append("financing.gearing is null: the capex is zero")
        if out["sources_and_uses"]["gearing"] is None:
            warnings.append("sources_and_uses.gearing is null: the uses of funds are zero")
        series = en.site_for(c.scenario).climate.series
        if series is not None:
            out["series"] = series_block(series)
        if self.montecarlo is not None:
            out["montecarlo"] = self.montecarlo.report()
            warnings.extend(w for w in self.montecarlo.warnings if w not in warnings)
            warnings.extend(w for w in montecarlo_null_reasons(self.montecarlo, out["montecarlo"])
                            if w not in warnings)
        if self.lender is not None:
            out["lender_cases"] = {r.case.name: r.to_dict() for r in self.lender}
            warnings.extend(w for r in self.lender for w in r.null_reasons() if w not in warnings)
        out["variants"] = {}
        for name, v in self.variants.items():
            out["variants"][name] = {"metrics": dict(v.metrics), "energy": v.energy.report()}
            warnings.extend(f"variant {name}: {w}" for w in v.warnings if w not in c.warnings)
            for key, value in out["variants"][name]["energy"].items():
                if value is None or (isinstance(value, float) and not math.isfinite(value)):
                    warnings.append(f"variant {name}: energy.{key} is null: not defined for this scenario")
        for key, value in out["energy"].items():
            if value is None or (isinstance(value, float) and not math.isfinite(value)):
                warnings.append(f"energy.{key} is null: not defined for this scenario")
        return clean(out)


def series_block(series) -> dict:
    """How a wind series was read: its time step, span, missing share and data in each calendar month."""
    return {"step_minutes": series.step_s / 60.0, "years": series.years, "hours": series.hours * series.step_h,
            "coverage_by_month": {m[:3].lower(): c for m, c in zip(resource.MONTHS, series.month_coverage)},
            "weighting": "each calendar month by its length (days / 365.2425), whatever its share of the record"}


def montecarlo_null_reasons(mc, block: dict) -> list[str]:
    """A reason for every null and every partly undefined figure in the Monte Carlo block."""
    out = []
    for key, values in mc.samples.items():
        bad = int(np.sum(~np.isfinite(values))) if values.size else 0
        if not bad or any(w.startswith(f"montecarlo: {key} undefined") for w in mc.warnings):
            continue
        if bad == values.size:
            out.append(f"montecarlo.{key} is null: it is undefined in every trial")
        else:
            out.append(f"montecarlo: {key} undefined in {bad} of {values.size} trial(s); percentiles use the rest")
    for key, se in (block.get("p90_standard_error") or {}).items():
        if se is None and block.get(key, {}).get("p50") is not None:
            out.append(f"montecarlo.p90_standard_error.{key} is null: fewer than 10 trials define {key}")
    return out


def directions_blocks(energy) -> dict:
    """The ``wind_rose``, ``wake`` and ``long_term`` blocks of a run, each only where the scenario has it."""
    out = {}
    for key in ("wind_rose", "wake", "long_term"):
        block = getattr(energy, key)
        if block is not None:
            out[key] = block
    return out


def costs_block(case: Case) -> dict:
    f = case.flows
    return {"capex_total": float(f.capex_total[0, 0]), "opex_year1": float(f.opex[0, 1]),
            "decommissioning_net": float(f.decommissioning[0, -1])}


def file_block(scn) -> dict:
    """``scenario_file``: the path the scenario was read from and the SHA-256 of its bytes (only for a
    scenario read from a file)."""
    if scn.file_sha256 is None:
        return {}
    return {"scenario_file": {"path": scn.source, "sha256": scn.file_sha256}}


def units_block(scn) -> dict:
    """The units of every figure of the report (money in whole units of the currency, never thousands)."""
    cur = scn.project.currency
    return {"currency": cur, "money": cur, "money_scale": 1,
            "annual_money": "nominal (each year's own money; inputs are year-0 money)",
            "rates": "fraction (0.065 = 6.5 %)", "energy": "MWh", "annual_energy": "MWh per year",
            "power": "kW", "price": f"{cur}/MWh", "capex_per_kw": f"{cur}/kW"}


def project_block(scn) -> dict:
    p = scn.project
    return {"name": p.name, "currency": p.currency, "lifetime_years": p.lifetime_years, "turbines": p.turbines,
            "rated_power_kw": scn.turbine.rated_power_kw, "plant_mw": scn.plant_kw / 1000.0}


def financing_block(case: Case) -> dict:
    """The rates and the debt's terms the case ran with (derived defaults applied), and its gearing;
    ``debt`` only where the scenario has a [finance.debt] table."""
    scn, f = case.scenario, case.flows
    capex = float(f.capex_total[0, 0])
    debt = scn.finance.debt
    out = {"discount_rate": scn.finance.discount_rate, "equity_target_return": scn.equity_target_return,
           "inflation": scn.finance.inflation, "tax_rate": scn.finance.tax_rate,
           "gearing": float(f.debt[0, 0]) / capex if capex > 0 else None}
    if debt is not None:
        out["debt"] = {"sizing_case": debt.sizing_case, "target_dscr": debt.target_dscr,
                       "max_gearing": debt.max_gearing,
                       "gearing_cap_binds": bool(np.ravel(case.schedule.gearing_bound)[0]),
                       "tenor_years": debt.tenor_years, "interest_rate": debt.interest_rate,
                       "upfront_fee": debt.upfront_fee}
        if debt.target_dscr_merchant is not None:
            out["debt"]["target_dscr_merchant"] = debt.target_dscr_merchant
    return out


def build(scn, *, trials: int | None = None, variants: bool = True, progress=None,
          sensitivity: bool = False) -> Report:
    """Run the base case, each variant, the lender cases (with a debt table), (when trials > 0)
    the Monte Carlo and (when ``sensitivity``) the tornado and wind-speed sweep that the lender
    workbook shows."""
    case = run(scn)
    rep = Report(case)
    if scn.finance.debt is not None:
        rep.lender = lender.lender_cases(scn, case)
    if variants:
        for name in scn.variants:
            rep.variants[name] = run(scn.variant(name))
    n = scn.montecarlo.trials if trials is None else trials
    if n and n > 0:
        rep.montecarlo = montecarlo.monte_carlo(scn, case, trials=n, progress=progress)
    if sensitivity:
        rep.sensitivity = sens.workbook_set(scn)
    return rep


def clean(obj):
    """Plain floats for JSON; NaN and infinities become None."""
    if isinstance(obj, dict):
        return {k: clean(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [clean(v) for v in obj]
    if hasattr(obj, "item") and not isinstance(obj, (str, bytes)):
        obj = obj.item()
    if isinstance(obj, float):
        return obj if math.isfinite(obj) else None
    return obj
