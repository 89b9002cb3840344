"""The ``sweep``, ``tornado`` and ``solve`` commands: options, tables and JSON over
:mod:`lcoe.analysis.sensitivity`, which computes every figure they print.
"""

from __future__ import annotations

import json
import math

import numpy as np

from lcoe.analysis.sensitivity import (
    BREAKEVEN,
    ENERGY_INPUT,
    ENERGY_KEYS,
    check_metric,
    is_integer_key,
    null_reasons,
    solve,
    sweep,
    tornado,
)
from lcoe.analysis.study import clean, file_block, units_block
from lcoe.engine import run
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs.report import ENERGY_LABELS, METRIC_LABELS, fmt, heading

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
    return heading(scn.project.name, scn.source)


def _print_json(obj, scn) -> None:
    """The JSON of a command: after the scenario's name, the file it was read from (path, SHA-256)
    and the units, as in the report of ``lcoe run``."""
    head = {"scenario": obj.pop("scenario"), **file_block(scn), "units": units_block(scn)}
    print(json.dumps(clean({**head, **obj}), indent=2, allow_nan=False))


SWEEP_COLUMNS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_irr",
                 "debt_amount", "min_dscr")


def _metric_list(text: str | None, default) -> list[str]:
    if not text:
        return list(default)
    return [check_metric(m.strip(), label="--metrics") for m in text.split(",") if m.strip()]


def cmd_sweep(args) -> int:
    scn = sc.load(args.file)
    with sc.naming_the_file(scn):
        return _cmd_sweep(args, scn)


def _cmd_sweep(args, scn) -> int:
    cols = _metric_list(args.metrics, SWEEP_COLUMNS + ((BREAKEVEN,) if args.breakeven else ()))
    be = args.breakeven or BREAKEVEN in cols
    values = np.linspace(args.start, args.stop, args.steps)
    rows = sweep(scn, args.key, values, breakeven=be)
    notes = null_reasons(scn, rows, cols)
    if args.json:
        _print_json({"scenario": scn.project.name, "key": args.key, "rows": rows, "warnings": notes}, scn)
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
    lines.extend(f"warning: {w}" for w in notes)
    print("\n".join(lines))
    return 0


def cmd_tornado(args) -> int:
    scn = sc.load(args.file)
    with sc.naming_the_file(scn):
        return _cmd_tornado(args, scn)


def _cmd_tornado(args, scn) -> int:
    metric = check_metric(args.metric, label="--metric")
    inputs = [k.strip() for k in args.inputs.split(",") if k.strip()] if args.inputs else None
    rows = tornado(scn, metric=metric, inputs=inputs)
    notes = null_reasons(scn, rows, [metric])
    if args.json:
        _print_json({"scenario": scn.project.name, "metric": metric,
                     "metric_base": rows[0]["metric_base"] if rows else None, "rows": rows, "warnings": notes}, scn)
        return 0
    cur = scn.project.currency
    name, unit, how = METRIC_LABELS[metric]
    label = f"{name} [{unit.format(cur=cur)}]"
    base = run(scn, breakeven=metric == BREAKEVEN).metrics[metric] if not rows else rows[0]["metric_base"]
    lines = _head(scn)
    debt = "debt re-sized" if scn.finance.debt is not None else "all equity (no debt)"
    lines.append(f"Tornado on {label}: base case {fmt(base, how)}; one input at a time from its low to its high "
                 f"value, {debt}")
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
    lines.extend(f"warning: {w}" for w in notes)
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
    scn = sc.load(args.file)
    with sc.naming_the_file(scn):
        return _cmd_solve(args, scn)


def _cmd_solve(args, scn) -> int:
    metric, value = parse_target(args.target)
    if (args.low is None) != (args.high is None):
        raise ScenarioError("give both --low and --high, or neither", key="--low" if args.low is None else "--high",
                            has_value=False)
    res = solve(scn, target_metric=metric, target_value=value, vary_key=args.vary, low=args.low, high=args.high)
    if args.json:
        _print_json({"scenario": scn.project.name, **res}, scn)
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
