"""Lender cases: downside cases run with the debt locked at the base sizing.

A lender sizes the debt once, at financial close, on the sizing case; every downside
case then meets that fixed schedule, and the question is how far the cover falls. Each
case here is a set of dotted-key changes on the scenario's own values and, for the
energy cases, the P-case energy factor (P_case / P50, from the energy assessment) on
every year's energy. The debt amount and its yearly debt service are those of the base
case (:attr:`lcoe.engine.Case.schedule`); nothing is re-sized.

The default set (common practice in lenders' base-case reviews; the sizes are the usual
round numbers, not a standard): base, P90 1-yr, P99 1-yr, P90 10-yr, O&M +10 %,
availability -2 points, price -10 %, and a combined downside (P90 1-yr energy, O&M +10 %,
availability -2 points and price -10 % together). A scenario adds its own cases as
``[lender_cases.NAME]`` tables (an optional ``label`` and ``energy_case``, then dotted keys
as in a variant); a case named like a default one replaces it.

Each case runs the whole engine on the scenario with the case's keys applied and the debt
locked (:func:`lcoe.engine.run`'s ``debt``), the cash waterfall included; its figures are
:func:`lcoe.engine.cover_of` plus the equity and project IRR and the equity NPV.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from lcoe import engine
from lcoe.finance.cashflow import Flows, Sample
from lcoe.inputs.keys import numeric_keys, numeric_value

ENERGY_CASES = ("p90_1yr", "p99_1yr", "p90_10yr")
OM_UP = 0.10            # O&M +10 %
AVAILABILITY_DOWN = 0.02  # availability -2 points (absolute)
PRICE_DOWN = 0.10       # price -10 %


@dataclass(frozen=True)
class LenderCase:
    """One downside case: ``changes`` name what moves (key -> factor or shift) for the reader;
    ``overrides`` are the dotted keys and values the engine runs; ``energy_case`` scales energy."""
    name: str
    label: str
    overrides: dict = field(default_factory=dict)
    energy_case: str | None = None


@dataclass(frozen=True)
class LenderResult:
    case: LenderCase
    flows: Flows
    metrics: dict                # min_dscr, avg_dscr, llcr, equity_irr, project_irr, years_below_1, ...

    def to_dict(self) -> dict:
        return {"label": self.case.label, "energy_case": self.case.energy_case or "p50",
                "overrides": dict(self.case.overrides), **self.metrics}

    def null_reasons(self) -> list[str]:
        """A reason for each figure of this case that does not exist."""
        why = {"min_dscr": "no year of this case has debt service", "avg_dscr": "no year of this case has debt service",
               "llcr": "there is no debt", "equity_irr": "its equity cash flow has no IRR",
               "project_irr": "its project cash flow has no IRR", "equity_npv": "it is not defined"}
        return [f"lender_cases.{self.case.name}.{k} is null: {why.get(k, 'it is not defined')}"
                for k, v in self.metrics.items() if v is None or (isinstance(v, float) and not np.isfinite(v))]


def _om_keys(scn) -> list[str]:
    """Every O&M cost input: fixed, insurance, variable, component replacements, overhauls."""
    keys = ["maintenance.fixed_per_kw_year", "maintenance.insurance_per_kw_year", "maintenance.variable_per_mwh"]
    keys += [k for k in numeric_keys(scn) if k.startswith("maintenance.component.") and k.endswith(".replacement_cost")]
    keys += [k for k in numeric_keys(scn) if k.startswith("maintenance.overhaul.") and k.endswith(".cost_per_turbine")]
    return keys


def om_up(scn, share: float = OM_UP) -> dict:
    return {k: numeric_value(scn, k) * (1.0 + share) for k in _om_keys(scn)}


def availability_down(scn, points: float = AVAILABILITY_DOWN) -> dict:
    return {"operations.availability_first_year": max(0.0, scn.availability_first_year - points),
            "operations.availability_mature": max(0.0, scn.operations.availability_mature - points)}


def price_down(scn, share: float = PRICE_DOWN) -> dict:
    return {"revenue.ppa_price_per_mwh": scn.revenue.ppa_price_per_mwh * (1.0 - share),
            "revenue.merchant_price_per_mwh": scn.merchant_price_per_mwh * (1.0 - share)}


def default_cases(scn) -> list[LenderCase]:
    """The default lender cases of a scenario, as changes on its own values."""
    return [
        LenderCase("base", "Base case (P50)"),
        LenderCase("p90_1yr", "P90 1-yr energy", energy_case="p90_1yr"),
        LenderCase("p99_1yr", "P99 1-yr energy", energy_case="p99_1yr"),
        LenderCase("p90_10yr", "P90 10-yr energy", energy_case="p90_10yr"),
        LenderCase("om_plus_10", "O&M +10 %", om_up(scn)),
        LenderCase("availability_minus_2", "Availability -2 points", availability_down(scn)),
        LenderCase("price_minus_10", "Price -10 %", price_down(scn)),
        LenderCase("combined_downside", "Combined downside (P90 1-yr, O&M +10 %, availability -2 points, "
                   "price -10 %)", {**om_up(scn), **availability_down(scn), **price_down(scn)},
                   energy_case="p90_1yr"),
    ]


def scenario_cases(scn) -> list[LenderCase]:
    """The default cases with the scenario's ``[lender_cases.NAME]`` tables: a case named like a
    default one replaces it, the others follow in the file's order."""
    own = {}
    for name, table in scn.lender_cases.items():
        over = {k: v for k, v in table.items() if k not in ("label", "energy_case")}
        own[name] = LenderCase(name, table.get("label") or name.replace("_", " "), over, table.get("energy_case"))
    cases = [own.pop(c.name, c) for c in default_cases(scn)]
    return cases + list(own.values())


def _finite(v):
    v = float(v)
    return v if np.isfinite(v) else None


def run_case(scn, base: engine.Case, case: LenderCase) -> LenderResult:
    """One case with the debt locked at ``base``'s sizing."""
    sample = None
    if case.energy_case is not None:
        factor = float(np.asarray(base.flows.case_factors[case.energy_case]).ravel()[0])
        sample = Sample(energy_factor=np.array([[factor]]))
    scn_case = scn.with_overrides(case.overrides, label=f"lender_cases.{case.name}") if case.overrides else scn
    schedule = engine.locked_schedule(scn_case, base)
    flows, m, _ = engine.evaluate(scn_case, sample=sample, schedule=schedule,
                                  energy=None if case.overrides else base.energy)
    metrics = engine.cover_of(flows, m)
    metrics.update({k: _finite(np.asarray(m[k]).ravel()[0]) for k in ("equity_irr", "project_irr", "equity_npv")})
    return LenderResult(case, flows, metrics)


def lender_cases(scn, base: engine.Case | None = None, cases: list[LenderCase] | None = None
                 ) -> list[LenderResult]:
    """Every lender case (the default set and the scenario's own unless ``cases`` is given) with
    the debt locked at the base sizing. An all-equity scenario has no debt to lock: the cover
    figures come back null."""
    base = base if base is not None else engine.run(scn, breakeven=False)
    return [run_case(scn, base, c) for c in (cases if cases is not None else scenario_cases(scn))]
