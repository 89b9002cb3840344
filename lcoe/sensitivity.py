"""One-at-a-time sensitivity: parameter sweeps, the tornado and goal seek.

Every figure comes from :mod:`lcoe.model`. A sweep goes through one batch of
:func:`lcoe.model.evaluate` (debt re-sized per row) wherever the key allows; keys
that change the shape of the model (``project.*``) and the mean wind speed or
Weibull scale (whose batch shortcut keeps the base case's P-values, so the sizing
case would not follow the speed) run one validated scenario per value. Every value
is validated as if it were written in the file (``Scenario.with_overrides``), and a
key whose default is derived from the swept one moves with it (an omitted merchant
price follows the PPA price, an omitted equity return the discount rate, an
omitted O&M escalation the inflation).

The table and JSON output of the ``lcoe sweep / tornado / solve`` commands are at
the end of the module; they import :mod:`lcoe.report` only when a command runs,
so the engine functions above them stay upstream of the report.
"""

from __future__ import annotations

import difflib
import math
from typing import Any

import numpy as np
from scipy.optimize import brentq

from lcoe import energy as en
from lcoe import model
from lcoe import scenario as sc
from lcoe.cashflow import SPEED_KEYS
from lcoe.errors import ScenarioError
from lcoe.resource import Z_90
from lcoe.uncertainty import quantile

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

def _owner(scn, key: str):
    """The model instance holding a dotted key and the field name (list items by name)."""
    parts = key.split(".")
    node: Any = scn
    for part in parts[:-1]:
        if isinstance(node, list):
            node = next(x for x in node if getattr(x, "name", None) == part)
        else:
            node = getattr(node, part)
    return node, parts[-1]


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
    owner, name = _owner(scn, key)
    ann = str(type(owner).model_fields[name].annotation)
    return "int" in ann and "float" not in ann


def key_bounds(scn, key: str) -> tuple[float, float]:
    """The valid range of a key from the scenario model's field constraints (open ends nudged in)."""
    owner, name = _owner(scn, key)
    info = type(owner).model_fields[name]
    metas = list(info.metadata)
    for arg in getattr(info.annotation, "__args__", ()) or ():
        for meta in getattr(arg, "__metadata__", ()) or ():
            metas.append(meta)
            metas.extend(getattr(meta, "metadata", []) or [])
    lo, hi = -math.inf, math.inf
    for meta in metas:
        for attr in ("ge", "gt", "le", "lt"):
            v = getattr(meta, attr, None)
            if v is None:
                continue
            nudge = 1e-9 * max(1.0, abs(v))
            if attr == "ge":
                lo = max(lo, v)
            elif attr == "gt":
                lo = max(lo, v + nudge)
            elif attr == "le":
                hi = min(hi, v)
            else:
                hi = min(hi, v - nudge)
    return lo, hi


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


def sweep(scn, key: str, values, *, breakeven: bool = False) -> list[dict]:
    """The model at each value of one input, the others as in the scenario.

    Returns one dict per value: ``value``, ``energy`` (gross AEP, net P50 AEP [MWh/yr],
    net capacity factor [-]), ``metrics`` (every key of :data:`lcoe.model.METRIC_KEYS`;
    the break-even PPA price only with ``breakeven=True``, else None; non-finite
    figures are None) and ``elasticity`` = d ln(net P50 AEP) / d ln(value) from the
    neighbouring rows (see :func:`elasticities`).
    """
    base_value(scn, key)
    integer = is_integer_key(scn, key)
    vals = np.atleast_1d(np.asarray(values, float)).ravel()
    if vals.size == 0:
        raise ScenarioError("a sweep needs at least one value", key=key, has_value=False)
    typed = [_typed(scn, key, float(v), integer) for v in vals]
    scns = [_scenario_at(scn, key, v) for v in typed]
    energies = [en.energy_of(s) for s in scns]
    if _batchable(key):
        arr = np.asarray(typed, float)
        _, m, _ = model.evaluate(scn, overrides=_overrides(scn, key, arr))
        metric_rows = [_metric_row(m, i) for i in range(arr.size)]
    else:
        metric_rows = []
        for s, e in zip(scns, energies):
            _, m, _ = model.evaluate(s, energy=e)
            metric_rows.append(_metric_row(m, 0))
    if breakeven:
        for s, e, row in zip(scns, energies, metric_rows):
            row[BREAKEVEN] = _num(model.breakeven_price(s, e)[0])
    reports = [e.report() for e in energies]
    elast = elasticities(typed, [r["net_aep_p50_mwh"] for r in reports])
    return [{"value": float(v), "energy": {k: _num(r[k]) for k in ENERGY_KEYS}, "metrics": row, "elasticity": el}
            for v, r, row, el in zip(typed, reports, metric_rows, elast)]


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
    """The tornado's default inputs: the [montecarlo.vary] keys, the main drivers and the energy uncertainty.

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
    for k in drivers:
        if k not in keys and base_value(scn, k) != 0:
            keys.append(k)
    e = en.energy_of(scn)
    if math.isfinite(e.sigma_10yr) and e.sigma_10yr > 0 and e.net_aep_p50_mwh > 0:
        keys.append(ENERGY_INPUT)
    return keys


def _energy_row(scn, case, metric: str) -> dict:
    """Net energy at its 10-year P90 and P10 (P50 (1 -+ z_90 sigma_10yr)), everything else as in the scenario.

    The factor f on every year's net energy enters through the loss product
    (1 - other') = f (1 - other), the one net-energy multiplier the override path
    has; the debt is re-sized per row as for every other input.
    """
    e = case.energy
    p50, sig = e.net_aep_p50_mwh, e.sigma_10yr
    f_lo, f_hi = max(0.0, 1.0 - Z_90 * sig), 1.0 + Z_90 * sig
    other = scn.losses.other
    o = np.array([1.0 - f_lo * (1.0 - other), 1.0 - f_hi * (1.0 - other)])
    if metric == BREAKEVEN:
        at = [_num(model.breakeven_price(scn, e, {"losses.other": np.array([x])})[0]) for x in o]
    else:
        _, m, _ = model.evaluate(scn, overrides={"losses.other": o}, energy=e)
        at = [_num(m[metric][0]), _num(m[metric][1])]
    return {"key": ENERGY_INPUT, "base_value": p50, "low_value": p50 * f_lo, "high_value": p50 * f_hi,
            "basis": "energy P90/P10 (10 yr)", "at": at}


def tornado(scn, *, metric: str = "lcoe_nominal_per_mwh", inputs=None) -> list[dict]:
    """One-at-a-time swings of each input between its low and high value, largest effect first.

    Rows: ``key``, ``base_value``, ``low_value``, ``high_value`` (see
    :func:`swing_values`), ``metric_base``, ``metric_at_low``, ``metric_at_high``,
    ``swing`` = metric_at_high - metric_at_low (signed; None where a metric is
    undefined), and ``basis`` (how low and high were chosen). Sorted by |swing|,
    largest first; rows with no swing last. ``inputs`` defaults to
    :func:`default_inputs`; an input from that default list that cannot be moved
    validly (a life shorter than the debt tenor, say) is left out, while a named
    input raises the ScenarioError. ``net_aep_p90_p10_10yr`` names the combined
    energy uncertainty (values in MWh/yr).
    """
    check_metric(metric)
    case = model.run(scn, breakeven=metric == BREAKEVEN)
    metric_base = case.metrics[metric]
    named = inputs is not None
    keys = list(inputs) if named else default_inputs(scn)
    rows = []
    for key in keys:
        if key == ENERGY_INPUT:
            r = _energy_row(scn, case, metric)
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
                     "metric_at_high": sw[1]["metrics"][metric]})
    for r in rows:
        lo, hi = r["metric_at_low"], r["metric_at_high"]
        r["swing"] = None if lo is None or hi is None else hi - lo
    order = ("key", "base_value", "low_value", "high_value", "metric_base", "metric_at_low", "metric_at_high",
             "swing", "basis")
    rows = [{k: r[k] for k in order} for r in rows]
    rows.sort(key=lambda r: -abs(r["swing"]) if r["swing"] is not None else math.inf)
    return rows


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


# --------------------------------------------------------------------------- the commands

_UNITS = (("_per_kw_year", "{cur}/kW/yr"), ("_per_turbine_year", "1/turbine/yr"), ("_per_turbine", "{cur}/turbine"),
          ("_per_kw", "{cur}/kW"), ("_per_mwh", "{cur}/MWh"), ("_per_year", "1/yr"), ("_mps", "m/s"),
          ("_kgm3", "kg/m3"), ("_kw", "kW"), ("_years", "years"), ("_year", "year"), ("_days", "days"),
          ("_m", "m"), ("_temperature_c", "degC"), ("replacement_cost", "{cur}"), ("grid_connection", "{cur}"),
          ("development", "{cur}"), ("turbines", "count"))


def key_label(key: str, cur: str) -> str:
    """A dotted key with its unit from the name, e.g. ``capex.turbine_per_kw [EUR/kW]``."""
    if key == ENERGY_INPUT:
        return "Net AEP, P90 to P10 (10 yr) [MWh/yr]"
    for suffix, unit in _UNITS:
        if key.endswith(suffix):
            return f"{key} [{unit.format(cur=cur)}]"
    return f"{key} [-]"


def _fmt_value(v, integer=False) -> str:
    if v is None or (isinstance(v, float) and not math.isfinite(v)):
        return "n/a"
    if integer:
        return f"{v:.0f}"
    a = abs(v)
    if a >= 1000:
        return f"{v:,.0f}"
    if a >= 10:
        return f"{v:.2f}"
    if a >= 1:
        return f"{v:.3f}"
    return f"{v:.4g}"


def _head(scn) -> list[str]:
    from lcoe import CAUTION
    return [f"{scn.project.name}  ({scn.source})", CAUTION, ""]


def _print_json(obj) -> None:
    import json

    from lcoe.report import clean
    print(json.dumps(clean(obj), indent=2, allow_nan=False))


SWEEP_COLUMNS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_irr",
                 "debt_amount", "min_dscr")


def _metric_list(text: str | None, default) -> list[str]:
    if not text:
        return list(default)
    return [check_metric(m.strip(), label="--metrics") for m in text.split(",") if m.strip()]


def cmd_sweep(args) -> int:
    from lcoe.report import ENERGY_LABELS, METRIC_LABELS, fmt
    scn = sc.load(args.file)
    cols = _metric_list(args.metrics, SWEEP_COLUMNS + ((BREAKEVEN,) if args.breakeven else ()))
    be = args.breakeven or BREAKEVEN in cols
    values = np.linspace(args.start, args.stop, args.steps)
    rows = sweep(scn, args.key, values, breakeven=be)
    if args.json:
        _print_json({"scenario": scn.project.name, "key": args.key, "rows": rows})
        return 0
    cur = scn.project.currency
    integer = is_integer_key(scn, args.key)
    heads = [("Value", key_label(args.key, cur).split(" [")[-1].rstrip("]"))]
    heads += [(ENERGY_LABELS[k][0], ENERGY_LABELS[k][1]) for k in ENERGY_KEYS]
    heads += [("Elasticity", "dlnE/dlnx")]
    heads += [(METRIC_LABELS[k][0], METRIC_LABELS[k][1].format(cur=cur)) for k in cols]
    widths = [max(len(a), len(b) + 2, 9) for a, b in heads]
    lines = _head(scn)
    lines.append(f"Sweep of {key_label(args.key, cur)}: {len(rows)} value(s); elasticity = "
                 "d ln(net AEP P50) / d ln(value) from the neighbouring rows; debt re-sized at each value")
    lines.append("  " + "  ".join(f"{a:>{w}}" for (a, _), w in zip(heads, widths)))
    lines.append("  " + "  ".join(f"{'[' + b + ']':>{w}}" for (_, b), w in zip(heads, widths)))
    for r in rows:
        cells = [_fmt_value(r["value"], integer)]
        cells += [fmt(r["energy"][k], ENERGY_LABELS[k][2]) for k in ENERGY_KEYS]
        cells += ["n/a" if r["elasticity"] is None else f"{r['elasticity']:.3f}"]
        cells += [fmt(r["metrics"][k], METRIC_LABELS[k][2]) for k in cols]
        lines.append("  " + "  ".join(f"{c:>{w}}" for c, w in zip(cells, widths)))
    print("\n".join(lines))
    return 0


def cmd_tornado(args) -> int:
    from lcoe.report import METRIC_LABELS, fmt
    scn = sc.load(args.file)
    metric = check_metric(args.metric, label="--metric")
    inputs = [k.strip() for k in args.inputs.split(",") if k.strip()] if args.inputs else None
    rows = tornado(scn, metric=metric, inputs=inputs)
    if args.json:
        _print_json({"scenario": scn.project.name, "metric": metric,
                     "metric_base": rows[0]["metric_base"] if rows else None, "rows": rows})
        return 0
    cur = scn.project.currency
    name, unit, how = METRIC_LABELS[metric]
    label = f"{name} [{unit.format(cur=cur)}]"
    base = model.run(scn, breakeven=metric == BREAKEVEN).metrics[metric] if not rows else rows[0]["metric_base"]
    lines = _head(scn)
    lines.append(f"Tornado on {label}: base case {fmt(base, how)}; one input at a time from its low to its high "
                 "value, debt re-sized")
    w = max([len(key_label(r["key"], cur)) for r in rows] + [5])
    wb = max([len(r["basis"]) for r in rows] + [5])
    lines.append(f"  {'Input':<{w}}  {'basis':<{wb}} {'low':>10} {'base':>10} {'high':>10}  {'at low':>10} "
                 f"{'at high':>10} {'swing':>10}")
    biggest = max([abs(r["swing"]) for r in rows if r["swing"] is not None] + [0.0])
    for r in rows:
        integer = r["key"] != ENERGY_INPUT and is_integer_key(scn, r["key"])
        bar = "" if r["swing"] is None or biggest == 0 else "#" * round(20 * abs(r["swing"]) / biggest)
        swing = "n/a" if r["swing"] is None else (("+" if r["swing"] >= 0 else "") + fmt(r["swing"], how))
        lines.append(f"  {key_label(r['key'], cur):<{w}}  {r['basis']:<{wb}} "
                     f"{_fmt_value(r['low_value'], integer):>10} {_fmt_value(r['base_value'], integer):>10} "
                     f"{_fmt_value(r['high_value'], integer):>10}  {fmt(r['metric_at_low'], how):>10} "
                     f"{fmt(r['metric_at_high'], how):>10} {swing:>10}  {bar}")
    lines.append(f"  (at low / at high / swing in {unit.format(cur=cur)}; swing = at high - at low)")
    print("\n".join(lines))
    return 0


def parse_target(text: str) -> tuple[str, float]:
    """``METRIC=VALUE``; a value ending in % is read as a percentage (``equity_irr=10%`` = 0.10)."""
    if not isinstance(text, str) or text.count("=") != 1:
        raise ScenarioError("must be METRIC=VALUE, e.g. lcoe_nominal_per_mwh=50 or equity_irr=0.10",
                            key="--target", value=text)
    metric, raw = (s.strip() for s in text.split("="))
    check_metric(metric, label="--target")
    scale = 1.0
    if raw.endswith("%"):
        raw, scale = raw[:-1].strip(), 0.01
    try:
        value = float(raw) * scale
    except ValueError:
        raise ScenarioError("the value after = must be a number", key="--target", value=text) from None
    if not math.isfinite(value):
        raise ScenarioError("the value after = must be a finite number", key="--target", value=text)
    return metric, value


def cmd_solve(args) -> int:
    from lcoe.report import METRIC_LABELS, fmt
    scn = sc.load(args.file)
    metric, value = parse_target(args.target)
    if (args.low is None) != (args.high is None):
        raise ScenarioError("give both --low and --high, or neither", key="--low" if args.low is None else "--high",
                            has_value=False)
    res = solve(scn, target_metric=metric, target_value=value, vary_key=args.vary, low=args.low, high=args.high)
    if args.json:
        _print_json({"scenario": scn.project.name, **res})
        return 0
    cur = scn.project.currency
    name, unit, how = METRIC_LABELS[metric]
    lines = _head(scn)
    lines.append(f"Goal seek: {key_label(res['key'], cur)} for {name} [{unit.format(cur=cur)}] = {fmt(value, how)}")
    lines.append(f"  {'value found':<24} {res['value']:.6g}")
    lines.append(f"  {'gives':<24} {fmt(res['achieved'], how)}")
    lines.append(f"  {'scenario value':<24} {_fmt_value(res['base_value'])} (gives {fmt(res['metric_at_base'], how)})")
    lines.append(f"  {'searched':<24} {res['low']:g} to {res['high']:g} (Brent's method, "
                 f"{res['iterations']} iterations; debt re-sized at each value)")
    print("\n".join(lines))
    return 0


def _finite(text: str) -> float:
    import argparse
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number, got {text!r}") from None
    if not math.isfinite(v):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text!r}")
    return v


def register(sub) -> None:
    """Add ``sweep``, ``tornado`` and ``solve`` to the ``lcoe`` command."""
    from lcoe.cli import whole_number
    p = sub.add_parser("sweep", help="the model over a range of one input (with the AEP elasticity)",
                       description="Run the model at STEPS evenly spaced values of KEY from START to STOP (both "
                                   "included), the other inputs as in the file.")
    p.add_argument("file")
    p.add_argument("key", help="dotted scenario key, e.g. wind.mean_speed_mps")
    p.add_argument("start", type=_finite)
    p.add_argument("stop", type=_finite)
    p.add_argument("steps", type=whole_number(1, 10000), help="number of values, START and STOP included")
    p.add_argument("--json", action="store_true", help="print JSON")
    p.add_argument("--breakeven", action="store_true", help="also solve the break-even PPA price at each value")
    p.add_argument("--metrics", metavar="LIST", help="comma-separated metrics for the table columns")
    p.set_defaults(func=cmd_sweep)

    t = sub.add_parser("tornado", help="one-at-a-time swings of the uncertain inputs, largest first",
                       description="Move each input between its P10 and P90 ([montecarlo.vary]) or +-10 %, one at a "
                                   "time, and sort by the effect on a metric.")
    t.add_argument("file")
    t.add_argument("--metric", default="lcoe_nominal_per_mwh", help="metric to rank by (default %(default)s)")
    t.add_argument("--inputs", metavar="LIST", help=f"comma-separated keys (default: the vary keys, the main "
                                                    f"drivers and {ENERGY_INPUT})")
    t.add_argument("--json", action="store_true", help="print JSON")
    t.set_defaults(func=cmd_tornado)

    s = sub.add_parser("solve", help="the value of one input that meets a target metric",
                       description="Goal seek: find the value of KEY that gives METRIC = VALUE (Brent's method).")
    s.add_argument("file")
    s.add_argument("--target", required=True, metavar="METRIC=VALUE",
                   help="e.g. lcoe_nominal_per_mwh=50 or equity_irr=0.10 (or 10%%)")
    s.add_argument("--vary", required=True, metavar="KEY", help="dotted scenario key to vary")
    s.add_argument("--low", type=_finite, help="low end of the search range (default 0.1x the scenario value)")
    s.add_argument("--high", type=_finite, help="high end of the search range (default 10x)")
    s.add_argument("--json", action="store_true", help="print JSON")
    s.set_defaults(func=cmd_solve)
