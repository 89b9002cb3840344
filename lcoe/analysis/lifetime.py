"""Lifetime study: the metrics of one site over a range of operating lives.

One rule for a change of life, used wherever a life is changed on purpose
(:func:`life_overrides`): overhauls planned after the last operating year are left
out, and a debt tenor or a PPA term longer than the life is cut to the life. Each change is stated
in words, so that a screen or a table can say what was adjusted.
"""

from __future__ import annotations

from lcoe.engine import run


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


def study(scn, lives, extension_year: int, extension_cost_per_turbine: float) -> list[dict]:
    """LCOE and project NPV for each life in ``lives``, without and with a life-extension
    overhaul in ``extension_year`` (cost per turbine, year-0 money; applied to lives
    longer than that year). Rows: ``life``, ``plan``, ``lcoe``, ``npv``, ``notes``.
    """
    rows = []
    for life in lives:
        over, notes = life_overrides(scn, life)
        for with_ext in (False, True):
            works = list(over["maintenance.overhaul"])
            if with_ext and life > extension_year:
                works.append({"name": "life extension (study)", "year": int(extension_year),
                              "cost_per_turbine": float(extension_cost_per_turbine)})
            m = run(scn.with_overrides({**over, "maintenance.overhaul": works}, label="lifetime study"),
                    breakeven=False).metrics
            rows.append({"life": int(life), "plan": "with life-extension overhaul" if with_ext else "without",
                         "lcoe": m["lcoe_nominal_per_mwh"], "npv": m["project_npv"], "notes": "; ".join(notes)})
    return rows
