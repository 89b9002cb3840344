"""One-at-a-time sensitivity: parameter sweeps, the tornado and goal seek.

Every figure comes from :mod:`lcoe.engine`. A sweep goes through one batch of
:func:`lcoe.engine.evaluate` (debt re-sized per row) wherever the key allows; keys
that change the shape of the model (``project.*``) and the mean wind speed or
Weibull scale (whose batch shortcut keeps the base case's P-values, so the sizing
case would not follow the speed) run one validated scenario per value. Every value
is validated as if it were written in the file (``Scenario.with_overrides``), and a
key whose default is derived from the swept one moves with it (an omitted merchant
price follows the PPA price, an omitted equity return the discount rate, an
omitted O&M escalation the inflation).

The table and JSON output of the ``lcoe sweep / tornado / solve`` commands are at
the end of the module; they import :mod:`lcoe.outputs.report` only when a command runs,
so the engine functions above them stay upstream of the report.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy.optimize import brentq

from lcoe import engine as model
from lcoe.analysis.montecarlo import quantile
from lcoe.finance.cashflow import SPEED_KEYS, Sample
from lcoe.inputs import keys
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.physics import energy as en
from lcoe.physics.wind import Z_90

METRIC_KEYS = model.METRIC_KEYS
BREAKEVEN = "breakeven_ppa_price_per_mwh"
ENERGY_KEYS = ("gross_aep_mwh", "net_aep_p50_mwh", "net_capacity_factor")

#: The tornado's pseudo-input for the combined energy uncertainty: net energy at its
#: 10-year P90 and P10, sigma_10yr from the scenario's [uncertainty] terms.
ENERGY_INPUT = "net_aep_p90_p10_10yr"

#: Main drivers in the default tornado (besides the [montecarlo.vary] keys and the wind speed).
DRIVERS = ("capex.turbine_per_kw", "capex.balance_of_plant_per_kw", "maintenance.fixed_per_kw_year",
           "revenue.ppa_price_per_mwh", "finance.discount_rate", "losses.wake", "operations.availability_mature",
           "project.lifetime_years")

# key -> (key whose omitted value the scenario derives from it, test that it is omitted)
_DEPENDENT = {
    "revenue.ppa_price_per_mwh": ("revenue.merchant_price_per_mwh", lambda s: s.revenue.merchant_price_per_mwh is None),
    "finance.discount_rate": ("finance.equity_target_return", lambda s: s.finance.equity_target_return is None),
    "finance.inflation": ("maintenance.escalation", lambda s: s.maintenance.escalation is None),
    "operations.availability_mature": ("operations.availability_first_year",
                                       lambda s: s.operations.availability_first_year is None),
}

SOLVE_GRID = 41          # scan points of the solve bracket (batched keys)
SOLVE_GRID_SLOW = 17     # ... for keys run one scenario per value
SWING = 0.10             # +-10 % where an input has no distribution


# --------------------------------------------------------------------------- keys

def base_value(scn, key: str) -> float:
    """The scenario's value of a numeric dotted key; ScenarioError for anything else."""
    if not isinstance(key, str) or not key:
        raise ScenarioError("must be a dotted key such as 'capex.turbine_per_kw'", key="key", value=key)
    head = key.split(".")[0]
    if head in ("montecarlo", "variants", "schema_version"):
        raise ScenarioError("is a setting of the file, not a model input; choose a key such as "
                            "'capex.turbine_per_kw'", key=key, has_value=False)
    return sc.numeric_value(scn, key)


def is_integer_key(scn, key: str) -> bool:
    """True where the scenario field takes whole numbers (years, counts)."""
    return keys.is_integer_key(key)


def key_bounds(scn, key: str) -> tuple[float, float]:
    """The valid range of a key (the schema's constraints, excluded ends moved inside)."""
    return keys.key_bounds(key)


def _typed(scn, key: str, value: float, integer: bool):
    if not math.isfinite(value):
        raise ScenarioError("must be a finite number", key=key, value=value)
    if integer:
        if abs(value - round(value)) > 1e-9:
            raise ScenarioError("must be a whole number; choose values that give whole numbers", key=key,
                                value=value)
        return int(round(value))
    return float(value)


def _scenario_at(scn, key: str, value) -> Any:
    """The scenario with ``key`` set to ``value``, validated like a file."""
    return scn.with_overrides({key: value}, label="")


def _batchable(key: str) -> bool:
    return not (key.startswith("project.") or key in SPEED_KEYS)


def _overrides(scn, key: str, values: np.ndarray) -> dict:
    over = {key: values}
    if key in _DEPENDENT:
        dep, omitted = _DEPENDENT[key]
        if omitted(scn):
            over[dep] = values
    return over


def _num(v):
    v = float(v)
    return v if math.isfinite(v) else None


def _metric_row(m: dict, i: int) -> dict:
    row = {k: _num(m[k][i]) if k in m else None for k in METRIC_KEYS}
    if row["payback_year"] is not None:
        row["payback_year"] = int(row["payback_year"])
    return row


def check_metric(metric: str, *, label: str = "metric") -> str:
    if metric not in METRIC_KEYS:
        hint = difflib.get_close_matches(str(metric), list(METRIC_KEYS), n=1, cutoff=0.6)
        msg = "unknown metric" + (f" (did you mean {hint[0]!r}?)" if hint else "")
        raise ScenarioError(f"{msg}; choose one of {', '.join(METRIC_KEYS)}", key=label, value=metric)
    return metric


# --------------------------------------------------------------------------- sweep

def elasticities(values, energies) -> list:
    """d ln(E) / d ln(x) at each row by central differences across the neighbouring rows.

    One-sided at the ends; None where a neighbour is missing, a value or an energy is
    not positive, or the neighbouring values coincide. With E = c x^n the result is n
    exactly, whatever the spacing.
    """
    x = np.asarray(values, float)
    e = np.asarray(energies, float)
    n = x.size
    out: list = [None] * n
    for i in range(n):
        j0, j1 = max(i - 1, 0), min(i + 1, n - 1)
        if j0 == j1:
            continue
        x0, x1, e0, e1 = x[j0], x[j1], e[j0], e[j1]
        if min(x0, x1, e0, e1) > 0 and x0 != x1 and all(map(math.isfinite, (x0, x1, e0, e1))):
            out[i] = float((math.log(e1) - math.log(e0)) / (math.log(x1) - math.log(x0)))
    return out


def sweep(scn, key: str, values, *, breakeven: bool = False, progress=None) -> list[dict]:
    """The model at each value of one input, the others as in the scenario.

    Returns one dict per value: ``value``, ``energy`` (gross AEP, net P50 AEP [MWh/yr],
    net capacity factor [-]), ``metrics`` (every key of :data:`lcoe.engine.METRIC_KEYS`;
    the break-even PPA price only with ``breakeven=True``, else None; non-finite
    figures are None) and ``elasticity`` = d ln(net P50 AEP) / d ln(value) from the
    neighbouring rows (see :func:`elasticities`). ``progress``, if given, is called with the
    fraction done (0 to 1) as the values are run.
    """
    base_value(scn, key)
    integer = is_integer_key(scn, key)
    vals = np.atleast_1d(np.asarray(values, float)).ravel()
    if vals.size == 0:
        raise ScenarioError("a sweep needs at least one value", key=key, has_value=False)
    typed = [_typed(scn, key, float(v), integer) for v in vals]
    batch = _batchable(key)
    # the steps to report: each value's energy, its metrics (one batch, or each value) and break-even
    steps, done = len(typed) * (1 + (not batch) + breakeven) + batch, 0

    def tick():
        nonlocal done
        done += 1
        if progress is not None:
            progress(min(1.0, done / steps))

    scns = [_scenario_at(scn, key, v) for v in typed]
    energies = []
    for s in scns:
        energies.append(en.energy_of(s))
        tick()
    if batch:
        arr = np.asarray(typed, float)
        _, m, _ = model.evaluate(scn, overrides=_overrides(scn, key, arr))
        metric_rows = [_metric_row(m, i) for i in range(arr.size)]
        tick()
    else:
        metric_rows = []
        for s, e in zip(scns, energies):
            _, m, _ = model.evaluate(s, energy=e)
            metric_rows.append(_metric_row(m, 0))
            tick()
    if breakeven:
        for s, e, row in zip(scns, energies, metric_rows):
            row[BREAKEVEN] = _num(model.breakeven_price(s, e)[0])
            tick()
    reports = [e.report() for e in energies]
    elast = elasticities(typed, [r["net_aep_p50_mwh"] for r in reports])
    return [{"value": float(v), "energy": {k: _num(r[k]) for k in ENERGY_KEYS}, "metrics": row, "elasticity": el}
            for v, r, row, el in zip(typed, reports, metric_rows, elast)]


def energy_depends(scn, rows) -> bool:
    """False where a swept key leaves the energy as it is: every row's energy equals the scenario's
    (a cost, a price or a rate), so the energy columns and the elasticity (0) say nothing."""
    base = en.energy_of(scn).report()
    return any(r["energy"][k] != _num(base[k]) for r in rows for k in ENERGY_KEYS)


# --------------------------------------------------------------------------- tornado

def input_p10_p90(spec, base: float, key: str = "") -> tuple[float, float]:
    """P10 and P90 of a ``[montecarlo.vary.KEY]`` distribution (scipy.stats quantiles).

    normal(mean, sd); lognormal with the variable's own mean m and sd s
    (sigma^2 = ln(1 + s^2 / m^2), mu = ln m - sigma^2 / 2); triangular(low, mode,
    high), the mode clipped into low..high; uniform(low, high). ``mean`` and
    ``mode`` default to the scenario's value ``base``.
    """
    if spec.distribution == "lognormal":
        mean = base if spec.mean is None else spec.mean
        if mean <= 0:
            raise ScenarioError("a lognormal input needs a mean > 0 (the scenario value is used when mean is "
                                "omitted)", key=f"montecarlo.vary.{key}.mean", value=mean)
    p = quantile(spec, base, np.array([0.1, 0.9]))
    return float(p[0]), float(p[1])


def swing_values(scn, key: str) -> tuple[float, float, str]:
    """(low, high, basis) of one tornado input, inside the key's valid range.

    P10/P90 of its ``[montecarlo.vary]`` distribution, else +-10 % of the scenario
    value; a whole-number key (years, counts) moves by +-max(1, round(10 %)) whole
    units, so 25 years gives 22 and 28.
    """
    base = base_value(scn, key)
    integer = is_integer_key(scn, key)
    spec = scn.montecarlo.vary.get(key)
    if spec is not None:
        low, high = input_p10_p90(spec, base, key)
        basis = f"{spec.distribution} P10/P90"
    elif integer:
        step = max(1, int(math.floor(SWING * abs(base) + 0.5)))
        low, high, basis = base - step, base + step, f"+-{step} (whole)"
    else:
        low, high = sorted((base * (1.0 - SWING), base * (1.0 + SWING)))
        basis = "+-10 %"
    lo_b, hi_b = key_bounds(scn, key)
    clipped = (min(max(low, lo_b), hi_b), min(max(high, lo_b), hi_b))
    if clipped != (low, high):
        low, high = clipped
        basis += ", clipped"
    if integer:
        low, high = float(math.ceil(low - 1e-9)), float(math.floor(high + 1e-9))
    return low, high, basis


def default_inputs(scn) -> list[str]:
    """The tornado's default inputs: the [montecarlo.vary] keys, the main drivers (with a layout, the wake
    decay constant) and the energy uncertainty.

    Drivers whose scenario value is zero (and that have no distribution) are left
    out: +-10 % of nothing moves nothing.
    """
    keys = list(scn.montecarlo.vary)
    w = scn.wind
    speed = "wind.mean_speed_mps" if w.mean_speed_mps is not None else \
        "wind.weibull_scale_mps" if w.weibull_scale_mps is not None else None
    drivers = ([speed] if speed else []) + list(DRIVERS)
    if scn.finance.debt is not None:
        drivers.append("finance.debt.interest_rate")
    if scn.layout is not None:
        drivers.append("layout.wake_decay_constant")     # the wakes of the layout, in place of losses.wake
    for k in drivers:
        if k not in keys and base_value(scn, k) != 0:
            keys.append(k)
    e = en.energy_of(scn)
    if math.isfinite(e.sigma_10yr) and e.sigma_10yr > 0 and e.net_aep_p50_mwh > 0:
        keys.append(ENERGY_INPUT)
    return keys


def _energy_row(scn, case, metric: str, also=()) -> dict:
    """Net energy at its 10-year P90 and P10 (P50 (1 -+ z_90 sigma_10yr)), everything else as in the scenario.

    The factor f multiplies every year's net energy (the engine's energy factor, as a
    Monte Carlo trial's); the debt is re-sized per row as for every other input.
    """
    e = case.energy
    p50, sig = e.net_aep_p50_mwh, e.sigma_10yr
    f_lo, f_hi = max(0.0, 1.0 - Z_90 * sig), 1.0 + Z_90 * sig
    m = None
    if metric == BREAKEVEN:
        at = [_num(model.breakeven_price(scn, e, sample=Sample(energy_factor=np.array([[f]])))[0])
              for f in (f_lo, f_hi)]
    else:
        _, m, _ = model.evaluate(scn, sample=Sample(energy_factor=np.array([[f_lo], [f_hi]])), energy=e)
        at = [_num(m[metric][0]), _num(m[metric][1])]
    if also and m is None:
        _, m, _ = model.evaluate(scn, sample=Sample(energy_factor=np.array([[f_lo], [f_hi]])), energy=e)
    row = {"key": ENERGY_INPUT, "base_value": p50, "low_value": p50 * f_lo, "high_value": p50 * f_hi,
           "basis": "energy P90/P10 (10 yr)", "at": at}
    if also:
        row["also"] = {k: [_num(m[k][0]), _num(m[k][1])] for k in also}
    return row


def tornado(scn, *, metric: str = "lcoe_nominal_per_mwh", inputs=None, progress=None, also=()) -> list[dict]:
    """One-at-a-time swings of each input between its low and high value, largest effect first.

    Rows: ``key``, ``base_value``, ``low_value``, ``high_value`` (see
    :func:`swing_values`), ``metric_base``, ``metric_at_low``, ``metric_at_high``,
    ``swing`` = metric_at_high - metric_at_low (signed; None where a metric is
    undefined), and ``basis`` (how low and high were chosen). Sorted by |swing|,
    largest first; rows with no swing last. ``inputs`` defaults to
    :func:`default_inputs`; an input from that default list that cannot be moved
    validly (a life shorter than the debt tenor, say) is left out, while a named
    input raises the ScenarioError. ``net_aep_p90_p10_10yr`` names the combined
    energy uncertainty (values in MWh/yr). ``progress``, if given, is called with the fraction
    of the inputs done (0 to 1). ``also`` names further metrics of the same runs: each row then
    carries ``also`` = {metric: [at low, at high]}.
    """
    check_metric(metric)
    case = model.run(scn, breakeven=metric == BREAKEVEN)
    metric_base = case.metrics[metric]
    named = inputs is not None
    keys = list(inputs) if named else default_inputs(scn)
    rows = []
    for i, key in enumerate(keys):
        if progress is not None and i:
            progress(i / len(keys))
        if key == ENERGY_INPUT:
            r = _energy_row(scn, case, metric, also)
            at_low, at_high = r.pop("at")
            rows.append({**r, "metric_base": metric_base, "metric_at_low": at_low, "metric_at_high": at_high})
            continue
        try:
            low, high, basis = swing_values(scn, key)
            sw = sweep(scn, key, [low, high], breakeven=metric == BREAKEVEN)
        except ScenarioError:
            if named:
                raise
            continue
        rows.append({"key": key, "base_value": base_value(scn, key), "low_value": low, "high_value": high,
                     "basis": basis, "metric_base": metric_base, "metric_at_low": sw[0]["metrics"][metric],
                     "metric_at_high": sw[1]["metrics"][metric],
                     "also": {k: [sw[0]["metrics"][k], sw[1]["metrics"][k]] for k in also}})
    if progress is not None:
        progress(1.0)
    for r in rows:
        lo, hi = r["metric_at_low"], r["metric_at_high"]
        r["swing"] = None if lo is None or hi is None else hi - lo
    order = ("key", "base_value", "low_value", "high_value", "metric_base", "metric_at_low", "metric_at_high",
             "swing", "basis")
    order += ("also",) if also else ()
    rows = [{k: r[k] for k in order} for r in rows]
    rows.sort(key=lambda r: -abs(r["swing"]) if r["swing"] is not None else math.inf)
    return rows


def null_reasons(scn, rows: list[dict], metrics) -> list[str]:
    """A reason for every null in sweep or tornado rows (``metrics``: the columns shown).

    A metric null in the base case has the base case's own reason (no debt, no sign change
    in the cash flows, ...); one null only at some values is named with those values.
    """
    case = model.run(scn, breakeven=BREAKEVEN in metrics)
    out: list[str] = []
    for metric in metrics:
        nulls = [r for r in rows if _row_metric(r, metric, "low") is None or _row_metric(r, metric, "high") is None]
        if not nulls:
            continue
        if case.metrics.get(metric) is None:
            why = [w for w in case.warnings if _names(w, metric)]
            out.append(f"{metric} is null in the base case and so in every row" +
                       (f": {why[0]}" if why else ""))
            continue
        where = ", ".join(_where(r, metric) for r in nulls[:3]) + (" and more" if len(nulls) > 3 else "")
        out.append(f"{metric} is null at {where}: it does not exist there (no sign change in the cash flows, "
                   "no debt or no energy at that value)")
    if any(r.get("elasticity", 0) is None for r in rows) and "elasticity" not in metrics:
        out.append("elasticity is null where a row has no neighbour, or a value or its energy is not positive")
    return out


_NULL_NAMES = {"lcoe_nominal_per_mwh": "LCOE", "lcoe_real_per_mwh": "LCOE", "project_irr": "project irr",
               "equity_irr": "equity irr", "min_dscr": "DSCR", "avg_dscr": "DSCR", "llcr": "LLCR",
               "payback_year": "payback_year", BREAKEVEN: "break-even"}


def _names(warning: str, metric: str) -> bool:
    return metric in warning or _NULL_NAMES.get(metric, metric) in warning


def _row_metric(r: dict, metric: str, side: str):
    if "metrics" in r:
        return r["metrics"].get(metric)
    return r.get(f"metric_at_{side}")


def _where(r: dict, metric: str) -> str:
    if "metrics" in r:
        return f"{r['value']:g}"
    sides = [s for s in ("low", "high") if r.get(f"metric_at_{s}") is None]
    return f"{r['key']} " + " and ".join(f"{s} {r[f'{s}_value']:g}" for s in sides)


# --------------------------------------------------------------------------- solve

def _bracket(scn, key, base, low, high) -> tuple[float, float, bool]:
    """The search range: given, or 0.1x to 10x the scenario value (a fraction's whole valid range)."""
    lo_b, hi_b = key_bounds(scn, key)
    fraction = lo_b >= 0.0 and hi_b <= 1.0
    if low is None or high is None:
        if fraction:
            d_lo, d_hi = lo_b, hi_b
        elif base == 0:
            raise ScenarioError("is 0 in the scenario, so there is no default search range (0.1x to 10x); "
                                "give low and high", key=key, has_value=False)
        else:
            d_lo, d_hi = sorted((0.1 * base, 10.0 * base))
            d_lo, d_hi = max(d_lo, lo_b), min(d_hi, hi_b)
        low = d_lo if low is None else float(low)
        high = d_hi if high is None else float(high)
    low, high = float(low), float(high)
    if not (math.isfinite(low) and math.isfinite(high)) or not low < high:
        raise ScenarioError(f"the search range must have low < high (got {low:g} and {high:g})", key=key,
                            has_value=False)
    return low, high, fraction


def _valid(scn, key, x) -> bool:
    try:
        en.energy_of(_scenario_at(scn, key, x))
    except ScenarioError:
        return False
    return True


def solve(scn, *, target_metric: str, target_value: float, vary_key: str, low=None, high=None) -> dict:
    """The value of one input that makes a metric meet a target (goal seek).

    The range (``low``..``high``; default 0.1x to 10x the scenario value, or the
    whole valid range of a fraction) is scanned on a grid for the first sign change
    of metric - target from the low end, which Brent's method
    (scipy.optimize.brentq) then closes in on. Raises ScenarioError naming the key
    when no value in the range meets the target.

    Returns ``key``, ``value``, ``metric``, ``target``, ``achieved`` (the metric
    recomputed at ``value``), ``iterations`` (Brent's), and ``low``, ``high``,
    ``base_value``, ``metric_at_base``.
    """
    metric = check_metric(target_metric, label="target")
    if metric == "payback_year":
        raise ScenarioError("is a whole year, so no value meets it exactly; use `lcoe sweep` to scan it",
                            key="target", value=metric)
    target = float(target_value)
    if not math.isfinite(target):
        raise ScenarioError("must be a finite number", key="target", value=target_value)
    base = base_value(scn, vary_key)
    if is_integer_key(scn, vary_key):
        raise ScenarioError("is a whole number (years or a count); solve needs a continuous input — "
                            "use `lcoe sweep` to scan it", key=vary_key, has_value=False)
    given = low is not None and high is not None
    lo, hi, fraction = _bracket(scn, vary_key, base, low, high)
    n = SOLVE_GRID if _batchable(vary_key) else SOLVE_GRID_SLOW
    grid = np.geomspace(lo, hi, n) if lo > 0 and not fraction and hi / lo > 20 else np.linspace(lo, hi, n)
    if given:
        for end in (lo, hi):
            en.energy_of(_scenario_at(scn, vary_key, end))   # the user's range must be valid: raise its error
    else:
        grid = np.array([x for x in grid if _valid(scn, vary_key, float(x))])
        if grid.size == 0:
            raise ScenarioError(f"no valid value between {lo:g} and {hi:g}; give low and high", key=vary_key,
                                has_value=False)
    with_be = metric == BREAKEVEN

    def value_at(xs):
        rows = sweep(scn, vary_key, xs, breakeven=with_be)
        return np.array([np.nan if r["metrics"][metric] is None else r["metrics"][metric] for r in rows])

    g = value_at(grid) - target
    found = None
    for i in range(grid.size):
        if g[i] == 0:
            found = (i, i)
            break
        if i + 1 < grid.size and np.isfinite(g[i]) and np.isfinite(g[i + 1]) and g[i] * g[i + 1] < 0:
            found = (i, i + 1)
            break
    if found is None:
        span = g[np.isfinite(g)] + target
        seen = f" (it ranges from {span.min():.6g} to {span.max():.6g} there)" if span.size else \
            " (it is undefined everywhere there)"
        raise ScenarioError(f"no value of {vary_key} between {grid[0]:g} and {grid[-1]:g} gives "
                            f"{metric} = {target:g}{seen}", file=scn.source)
    i, j = found
    iterations = 0
    if i == j:
        x = float(grid[i])
    else:
        f = lambda v: float(value_at([v])[0] - target)  # noqa: E731
        try:
            x, res = brentq(f, float(grid[i]), float(grid[j]), xtol=1e-12 * (hi - lo), rtol=1e-12, maxiter=200,
                            full_output=True)
        except (ValueError, RuntimeError) as exc:
            raise ScenarioError(f"the search for {metric} = {target:g} did not converge ({exc})",
                                key=vary_key, has_value=False) from None
        iterations = int(res.iterations)
    achieved = float(value_at([x])[0])
    at_base = model.run(scn, breakeven=with_be).metrics[metric]
    return {"key": vary_key, "value": float(x), "metric": metric, "target": target, "achieved": achieved,
            "iterations": iterations, "low": float(grid[0]), "high": float(grid[-1]), "base_value": base,
            "metric_at_base": at_base}


# --------------------------------------------------------------------------- the workbook's set

WORKBOOK_SWEEP_FACTORS = tuple(round(0.7 + 0.05 * i, 10) for i in range(13))


@dataclass(frozen=True)
class SensitivitySet:
    """The sensitivity results a lender workbook shows: a tornado and a wind-speed sweep."""
    metric: str
    tornado: list
    sweep_key: str | None               # None for a time-series climate (no mean-speed key to sweep)
    sweep_factors: tuple = ()
    sweep: list = field(default_factory=list)


def speed_key(scn) -> str | None:
    """The scenario's mean-speed key (mean or Weibull scale), or None for a time series."""
    for key in SPEED_KEYS:
        if getattr(scn.wind, key.split(".")[1]) is not None:
            return key
    return None


#: the metrics a lender workbook's tornado shows beside its own
WORKBOOK_ALSO = ("equity_irr", "min_dscr")


def workbook_set(scn, metric: str = "lcoe_nominal_per_mwh") -> SensitivitySet:
    """The tornado on ``metric`` and a 0.7x..1.3x sweep of the mean wind speed (13 runs)."""
    rows = tornado(scn, metric=metric, also=WORKBOOK_ALSO)
    key = speed_key(scn)
    if key is None:
        return SensitivitySet(metric, rows, None)
    base = float(getattr(scn.wind, key.split(".")[1]))
    return SensitivitySet(metric, rows, key, WORKBOOK_SWEEP_FACTORS,
                          sweep(scn, key, [base * x for x in WORKBOOK_SWEEP_FACTORS]))
