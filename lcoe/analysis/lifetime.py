"""Lifetime study: the metrics of one site over a range of operating lives.

One rule for a change of life, used wherever a life is changed on purpose
(:func:`life_overrides`): overhauls planned after the last operating year are left
out, and a debt tenor or a PPA term longer than the life is cut to the life. Each change is stated
in words, so that a screen or a table can say what was adjusted.
"""

from __future__ import annotations

import numpy as np

from lcoe.engine import evaluate, run
from lcoe.finance import costs
from lcoe.finance.cashflow import Sample
from lcoe.inputs.errors import ScenarioError
from lcoe.physics import energy as en


def life_overrides(scn, life: int) -> tuple[dict, list[str]]:
    """The overrides that set the operating life to ``life`` years, and what they adjusted.

    Returns ``(overrides, notes)``: ``overrides`` holds ``project.lifetime_years``, the
    overhaul list without works after the life, and (where the debt's tenor is longer
    than the life) ``finance.debt.tenor_years = life``; a PPA term longer than the life is cut
    to it (it would have no effect past the life, but it reads as a promise).
    """
    life = int(life)
    notes = []
    over: dict = {"project.lifetime_years": life}
    overhauls = [dict(o) for o in scn.raw.get("maintenance", {}).get("overhaul", [])]
    kept = [o for o in overhauls if int(o["year"]) <= life]
    for o in overhauls:
        if int(o["year"]) > life:
            notes.append(f"overhaul '{o['name']}' in year {int(o['year'])} left out: after a {life}-year life")
    over["maintenance.overhaul"] = kept
    debt = scn.finance.debt
    if debt is not None and debt.tenor_years > life:
        over["finance.debt.tenor_years"] = life
        notes.append(f"debt tenor shortened from {debt.tenor_years} to {life} years to fit a {life}-year life")
    term = scn.raw.get("revenue", {}).get("ppa_term_years")
    if term is not None and int(term) > life:
        over["revenue.ppa_term_years"] = life
        notes.append(f"PPA term shortened from {int(term)} to {life} years to fit a {life}-year life")
    return over, notes


def worn_sample(scn, extension_year: int, growth: float) -> Sample | None:
    """The years after ``extension_year`` without the overhaul: each component's failure rate grows
    by ``growth`` per year, compounding (rate * (1 + growth)^(t - extension_year) in year t), and with
    it the downtime sum(rate * downtime_days / 365) and the failure cost sum(rate * turbines * cost)
    (year-0 money, as the scenario's own expected values). None where nothing would change.
    """
    comps = scn.maintenance.component
    if not comps or growth == 0.0 or scn.lifetime <= extension_year:
        return None
    years = np.arange(1, scn.lifetime + 1, dtype=float)
    wear = (1.0 + growth) ** np.maximum(years - extension_year, 0.0)
    rates = [c.failure_rate_per_turbine_year * wear for c in comps]
    down = en.downtime_fraction(rates, [c.downtime_days for c in comps])
    if np.any(down >= 1.0):
        raise ScenarioError(f"the failure rates grown by {growth:g} per year reach a downtime of the whole year "
                            f"by year {int(years[np.argmax(down >= 1.0)])}; choose a smaller growth",
                            key="lifetime study growth", value=growth)
    cost = costs.expected_failure_cost(rates, [c.replacement_cost for c in comps], scn.project.turbines)
    return Sample(downtime=np.asarray(down, float).reshape(1, -1), failure_cost=np.asarray(cost, float).reshape(1, -1))


def study(scn, lives, extension_year: int, extension_cost_per_turbine: float, wear_growth: float = 0.0) -> list[dict]:
    """LCOE and project NPV for each life in ``lives``, without and with a life-extension
    overhaul in ``extension_year`` (cost per turbine, year-0 money; applied to lives
    longer than that year). Rows: ``life``, ``plan``, ``lcoe``, ``npv``, ``notes``.

    The overhaul resets the wear: with it, the failure rates stay as in the scenario; without
    it, they grow by ``wear_growth`` per year after ``extension_year`` (:func:`worn_sample`),
    so a long life without the works pays for more failures and more downtime. Availability
    ageing (``operations``) applies to both. Each life follows :func:`life_overrides`.
    """
    rows = []
    for life in lives:
        over, notes = life_overrides(scn, life)
        for with_ext in (False, True):
            works = list(over["maintenance.overhaul"])
            if with_ext and life > extension_year:
                works.append({"name": "life extension (study)", "year": int(extension_year),
                              "cost_per_turbine": float(extension_cost_per_turbine)})
            one = scn.with_overrides({**over, "maintenance.overhaul": works}, label="lifetime study")
            sample = None if with_ext else worn_sample(one, extension_year, wear_growth)
            if sample is None:
                m = run(one, breakeven=False).metrics
            else:
                _, batch, _ = evaluate(one, sample=sample)
                m = {k: (float(np.asarray(v).reshape(-1)[0]) if v is not None else None) for k, v in batch.items()}
            rows.append({"life": int(life), "plan": "with life-extension overhaul" if with_ext else "without",
                         "lcoe": m["lcoe_nominal_per_mwh"], "npv": m["project_npv"], "notes": "; ".join(notes)})
    return rows
