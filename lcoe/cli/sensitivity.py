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
    base_value,
    check_metric,
    energy_depends,
    is_integer_key,
    null_reasons,
    solve,
    sweep,
    tornado,
)
from lcoe.analysis.study import clean, file_block, units_block
from lcoe.cli import progress
from lcoe.cli.options import key_number
from lcoe.engine import run
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs.report import ENERGY_LABELS, METRIC_LABELS, fmt, heading
from lcoe.outputs.tables import col, render, terminal_width, wrap

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


def _head(scn, width) -> list[str]:
    return heading(scn.project.name, scn.source, width=width)


def _print_json(obj, scn) -> None:
    """The JSON of a command: after the scenario's name, the file it was read from (path, SHA-256)
    and the units, as in the report of ``lcoe run``."""
    head = {"scenario": obj.pop("scenario"), **file_block(scn), "units": units_block(scn)}
    print(json.dumps(clean({**head, **obj}), indent=2, allow_nan=False))


def _widths(args) -> tuple[int, int | None]:
    """(the width of text, the width of tables: None with --wide)."""
    width = terminal_width()
    return width, None if getattr(args, "wide", False) else width


SWEEP_COLUMNS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "project_irr", "equity_irr",
                 "debt_amount", "min_dscr")


def _metric_list(text: str | None, default) -> list[str]:
    if not text:
        return list(default)
    return [check_metric(m.strip(), label="--metrics") for m in text.split(",") if m.strip()]


def sweep_columns(metrics: str | None, breakeven: bool) -> list[str]:
    """The metric columns of a sweep: ``--metrics`` (or the default ones), and the break-even price
    whenever ``--breakeven`` asks for it, also where ``--metrics`` does not name it."""
    cols = _metric_list(metrics, SWEEP_COLUMNS)
    if breakeven and BREAKEVEN not in cols:
        cols.append(BREAKEVEN)
    return cols


def cmd_sweep(args) -> int:
    scn = sc.load(args.file)
    with sc.naming_the_file(scn):
        return _cmd_sweep(args, scn)


def _cmd_sweep(args, scn) -> int:
    cols = sweep_columns(args.metrics, args.breakeven)
    be = BREAKEVEN in cols
    base_value(scn, args.key)            # an unknown key is named before its values are read
    start, stop = (key_number(v, args.key, name) for v, name in ((args.start, "START"), (args.stop, "STOP")))
    values = np.linspace(start, stop, args.steps)
    with progress.bar(args, f"sweep of {args.key}") as tick:
        rows = sweep(scn, args.key, values, breakeven=be, progress=tick)
    notes = null_reasons(scn, rows, cols)
    energy = energy_depends(scn, rows)
    if args.json:
        _print_json({"scenario": scn.project.name, "key": args.key, "energy_depends_on_key": energy, "rows": rows,
                     "warnings": notes}, scn)
        return 0
    cur = scn.project.currency
    width, tw = _widths(args)
    integer = is_integer_key(scn, args.key)
    heads = [col("Value", "[" + key_label(args.key, cur).split(" [")[-1].rstrip("]") + "]")]
    if energy:
        heads += [col(ENERGY_LABELS[k][0], f"[{ENERGY_LABELS[k][1]}]") for k in ENERGY_KEYS]
        heads += [col("Elasticity", "[dlnE/dlnx]")]
    heads += [col(METRIC_LABELS[k][0], "[" + METRIC_LABELS[k][1].format(cur=cur) + "]") for k in cols]
    cells = []
    for r in rows:
        line = [_fmt_value(r["value"], integer)]
        if energy:
            line += [fmt(r["energy"][k], ENERGY_LABELS[k][2]) for k in ENERGY_KEYS]
            line += ["n/a" if r["elasticity"] is None else f"{r['elasticity']:.3f}"]
        line += [fmt(r["metrics"][k], METRIC_LABELS[k][2]) for k in cols]
        cells.append(line)
    lines = _head(scn, width)
    about = (f"Sweep of {key_label(args.key, cur)}: {len(rows)} value(s); debt re-sized at each value; "
             + ("elasticity = d ln(net AEP P50) / d ln(value) from the neighbouring rows" if energy else
                "the energy does not depend on this input, so its columns and the elasticity are left out"))
    lines += wrap(about, width)
    lines += render(heads, cells, width=tw)
    if not energy:
        notes = [n for n in notes if not n.startswith("elasticity")]
    lines.extend(f"warning: {w}" for w in notes)
    print("\n".join(lines))
    return 0


def tornado_keys(args) -> list[str] | None:
    """The inputs named with ``--key`` (repeated, or comma-separated); None for the default set."""
    if not args.key:
        return None
    return [k.strip() for text in args.key for k in text.split(",") if k.strip()] or None


def cmd_tornado(args) -> int:
    scn = sc.load(args.file)
    with sc.naming_the_file(scn):
        return _cmd_tornado(args, scn)


def _cmd_tornado(args, scn) -> int:
    metric = check_metric(args.metric, label="--metric")
    with progress.bar(args, f"tornado on {metric}") as tick:
        rows = tornado(scn, metric=metric, inputs=tornado_keys(args), progress=tick)
    notes = null_reasons(scn, rows, [metric])
    if args.json:
        _print_json({"scenario": scn.project.name, "metric": metric,
                     "metric_base": rows[0]["metric_base"] if rows else None, "rows": rows, "warnings": notes}, scn)
        return 0
    cur = scn.project.currency
    width, tw = _widths(args)
    name, unit, how = METRIC_LABELS[metric]
    label = f"{name} [{unit.format(cur=cur)}]"
    base = run(scn, breakeven=metric == BREAKEVEN).metrics[metric] if not rows else rows[0]["metric_base"]
    lines = _head(scn, width)
    debt = "debt re-sized" if scn.finance.debt is not None else "all equity (no debt)"
    lines += wrap(f"Tornado on {label}: base case {fmt(base, how)}; one input at a time from its low to its high "
                  f"value, {debt}", width)
    # the effect first, then how each input was moved: a narrow terminal shows them as two blocks
    heads = [col("Input", align="<"), col("at low", min_width=8), col("at high", min_width=8),
             col("swing", min_width=8), col("", align="<", min_width=20), col("basis", align="<"),
             col("low", min_width=8), col("base", min_width=8), col("high", min_width=8)]
    biggest = max([abs(r["swing"]) for r in rows if r["swing"] is not None] + [0.0])
    cells = []
    for r in rows:
        integer = r["key"] != ENERGY_INPUT and is_integer_key(scn, r["key"])
        bar = "" if r["swing"] is None or biggest == 0 else "#" * round(20 * abs(r["swing"]) / biggest)
        swing = "n/a" if r["swing"] is None else (("+" if r["swing"] >= 0 else "") + fmt(r["swing"], how))
        cells.append([key_label(r["key"], cur), fmt(r["metric_at_low"], how), fmt(r["metric_at_high"], how), swing,
                      bar, r["basis"], _fmt_value(r["low_value"], integer), _fmt_value(r["base_value"], integer),
                      _fmt_value(r["high_value"], integer)])
    lines += render(heads, cells, width=tw, gap=1)
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
    if not args.key:
        raise ScenarioError("name the input to vary, e.g. --key revenue.ppa_price_per_mwh", key="--key",
                            has_value=False)
    if (args.low is None) != (args.high is None):
        raise ScenarioError("give both --low and --high, or neither", key="--low" if args.low is None else "--high",
                            has_value=False)
    base_value(scn, args.key)
    low, high = (None if v is None else key_number(v, args.key, name)
                 for v, name in ((args.low, "--low"), (args.high, "--high")))
    res = solve(scn, target_metric=metric, target_value=value, vary_key=args.key, low=low, high=high)
    if args.json:
        _print_json({"scenario": scn.project.name, **res}, scn)
        return 0
    cur = scn.project.currency
    width, _ = _widths(args)
    name, unit, how = METRIC_LABELS[metric]
    lines = _head(scn, width)
    lines += wrap(f"Goal seek: {key_label(res['key'], cur)} for {name} [{unit.format(cur=cur)}] = {fmt(value, how)}",
                  width)
    body = (("value found", f"{res['value']:.6g}"), ("gives", fmt(res["achieved"], how)),
            ("scenario value", f"{_fmt_value(res['base_value'])} (gives {fmt(res['metric_at_base'], how)})"),
            ("searched", f"{res['low']:g} to {res['high']:g} (Brent's method, {res['iterations']} iterations; "
                         "debt re-sized at each value)"))
    for label, text in body:
        lines += wrap(text, width, indent=f"  {label:<24} ", subsequent=" " * 27)
    print("\n".join(lines))
    return 0
