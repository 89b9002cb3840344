"""Charts and the engine-value sheets of the lender workbook: Monte Carlo and sensitivity.

These sheets hold results of many engine runs; a spreadsheet cannot recompute them,
so every value on them is marked as an engine value and each sheet says so.
"""

from __future__ import annotations

import math

import numpy as np
from openpyxl.chart import BarChart, LineChart, Reference, Series
from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter

from lcoe.engine import METRIC_KEYS
from lcoe.outputs.workbook.cells import (
    BOLD,
    ENGINE_FILL,
    EXTRA_MC,
    FORMATS,
    HEAD_FILL,
    HISTOGRAM_KEYS,
    ITALIC,
    METRICS,
    MONTECARLO,
    SENSITIVITY,
    T0_COL,
    TITLE,
    YEAR_ROW,
    Book,
    Timeline,
)

# --------------------------------------------------------------------------- charts

def axes(chart, x_title: str, y_title: str):
    chart.x_axis.title = x_title
    chart.y_axis.title = y_title
    chart.x_axis.delete = False
    chart.y_axis.delete = False
    chart.legend.position = "b"


def _row_ref(tl: Timeline, key: str, t_from: int, t_to: int) -> Reference:
    r = tl.rows[key]
    return Reference(tl.ws, min_col=T0_COL + t_from, max_col=T0_COL + t_to, min_row=r, max_row=r)


def chart_cashflow(cf: Timeline, years: int):
    """Columns of CFADS, debt service and equity cash flow per operating year (of the life as exported)."""
    ch = BarChart()
    ch.type = "col"
    ch.grouping = "clustered"
    ch.title = "Yearly cash flow, P50 case"
    for key, title in (("cfads", "CFADS"), ("ds", "Debt service"), ("equity", "Equity cash flow")):
        ch.series.append(Series(_row_ref(cf, key, 1, years), title=title))
    ch.set_categories(Reference(cf.ws, min_col=T0_COL + 1, max_col=T0_COL + years, min_row=YEAR_ROW,
                                max_row=YEAR_ROW))
    axes(ch, "Year", cf.b.cur)
    ch.y_axis.numFmt = "#,##0"
    ch.width, ch.height = 26, 10
    cf.ws.add_chart(ch, f"C{cf.next + 2}")


def chart_dscr(dt: Timeline, tenor: int):
    """The P50 and sizing-case DSCR against the target over the tenor (none without debt)."""
    if tenor < 1:
        return
    t_to = min(tenor, dt.H)
    ch = LineChart()
    ch.title = "DSCR against the target"
    for key, title in (("p50_dscr", "DSCR, P50 case"), ("s_dscr", "DSCR, sizing case"), ("target", "Target DSCR")):
        ch.series.append(Series(_row_ref(dt, key, 1, t_to), title=title))
    ch.set_categories(Reference(dt.ws, min_col=T0_COL + 1, max_col=T0_COL + t_to, min_row=YEAR_ROW,
                                max_row=YEAR_ROW))
    axes(ch, "Year", "DSCR [x]")
    ch.width, ch.height = 26, 10
    dt.ws.add_chart(ch, f"C{dt.next + 2}")


# --------------------------------------------------------------------------- Monte Carlo

def _heads(book: Book, ws, row: int, heads):
    """A header row, wrapped so that long headers with units stay readable."""
    for i, h in enumerate(heads, start=1):
        book.text(ws, row, i, h, font=BOLD, fill=HEAD_FILL).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[row].height = 30


def label_of(key: str, book: Book):
    if key in METRICS:
        label, unit, fmt = METRICS[key]
    elif key in EXTRA_MC:
        label, unit, fmt = EXTRA_MC[key]
    else:
        label, unit, fmt = key.replace("_", " "), "", "ratio"
    return label, book.unit(unit), fmt


def write_montecarlo(book: Book, mc):
    """The Monte Carlo sheet: percentiles, probabilities and histograms of a MonteCarloResult."""
    ws = book.sheet(MONTECARLO)
    b = book
    b.text(ws, 1, 1, "Monte Carlo results", font=TITLE)
    b.text(ws, 2, 1, "ENGINE VALUES, NOT LIVE: these trials ran in lcoe and are not recomputed by the sheet. "
                     "Re-run lcoe run FILE --trials N --workbook PATH to refresh them.", font=BOLD, fill=ENGINE_FILL)
    for col, width in zip("ABCDEFGHIJK", (44, 14, 16, 16, 16, 16, 16, 20, 20, 16, 16)):
        ws.column_dimensions[col].width = width
    rep = mc.report()
    b.text(ws, 4, 1, "Trials")
    b.num(ws, 4, 2, rep["trials"], "int", fill=ENGINE_FILL)
    b.text(ws, 5, 1, "Seed")
    b.num(ws, 5, 2, rep["seed"], "int", fill=ENGINE_FILL)
    b.text(ws, 6, 1, "P90 is the conservative side: the 10th percentile where higher is better (energy, NPV, "
                     "IRR, DSCR), the 90th where lower is better (LCOE, costs).", font=ITALIC)
    row = 8
    heads = ("Result", "Unit", "P50", "P75", "P90", "P99", "Mean", "Standard deviation", "P90 standard error")
    _heads(b, ws, row, heads)
    stats_rows = {}
    keys = [k for k in METRIC_KEYS if k in mc.samples] + [k for k in mc.samples if k not in METRIC_KEYS]
    for key in keys:
        row += 1
        label, unit, fmt = label_of(key, book)
        label = label.replace(", P50 case", ", distribution over the trials")
        st = rep[key]
        b.text(ws, row, 1, label)
        b.text(ws, row, 2, unit, font=ITALIC)
        for j, s in enumerate(("p50", "p75", "p90", "p99", "mean", "sd")):
            b.num(ws, row, 3 + j, st[s], fmt, fill=ENGINE_FILL)
        b.num(ws, row, 9, rep.get("p90_standard_error", {}).get(key), fmt, fill=ENGINE_FILL)
        stats_rows[key] = row
    row += 2
    for key, label in (("prob_min_dscr_below_1", "Probability that the minimum DSCR falls below 1.0"),
                       ("prob_min_dscr_below_target", "Probability that the minimum DSCR falls below the target"),
                       ("prob_equity_irr_below_target", "Probability that the equity IRR falls below the target")):
        if key in rep:
            b.text(ws, row, 1, label)
            b.num(ws, row, 3, rep[key], "pct", fill=ENGINE_FILL)
            b.text(ws, row, 4, key, font=ITALIC)
            row += 1
    if mc.warnings:
        row += 1
        b.text(ws, row, 1, "Warnings", font=BOLD)
        for w in mc.warnings:
            row += 1
            b.text(ws, row, 1, w, font=ITALIC)

    # histograms, each with the bins holding P50 and P90 marked
    row += 2
    chart_col = 8
    for key in HISTOGRAM_KEYS:
        hist = rep.get("histogram", {}).get(key)
        if not hist or not hist["counts"]:
            continue
        label, unit, fmt = label_of(key, book)
        st = rep[key]
        b.text(ws, row, 1, f"Histogram: {label} [{unit}]", font=BOLD, fill=HEAD_FILL)
        row += 1
        _heads(b, ws, row, ("Bin from", "Bin to", "Trials", "Bin holding P50", "Bin holding P90"))
        first = row + 1
        edges, counts = hist["edges"], hist["counts"]
        marks = {s: _bin_of(edges, st[s]) for s in ("p50", "p90")}
        for i, n in enumerate(counts):
            row += 1
            b.num(ws, row, 1, edges[i], fmt, fill=ENGINE_FILL)
            b.num(ws, row, 2, edges[i + 1], fmt, fill=ENGINE_FILL)
            b.num(ws, row, 3, n, "int", fill=ENGINE_FILL)
            b.num(ws, row, 4, n if marks["p50"] == i else 0, "int_blank", fill=ENGINE_FILL)
            b.num(ws, row, 5, n if marks["p90"] == i else 0, "int_blank", fill=ENGINE_FILL)
        last = row
        ch = BarChart()
        ch.type = "col"
        ch.grouping = "standard"
        ch.overlap = 100
        ch.gapWidth = 10
        shown = (lambda v: f"{100 * v:.2f} %") if fmt == "pct" else (lambda v: f"{v:,.3g}")
        ch.title = f"{label}: P50 {shown(st['p50'])}, P90 {shown(st['p90'])}"
        for col, title in ((3, "Trials per bin"), (4, "Bin holding P50"), (5, "Bin holding P90")):
            ch.series.append(Series(Reference(ws, min_col=col, min_row=first, max_row=last), title=title))
        ch.set_categories(Reference(ws, min_col=1, min_row=first, max_row=last))
        axes(ch, f"{label} [{unit}] (bin start)", "Trials")
        ch.x_axis.numFmt = FORMATS[fmt]
        ch.width, ch.height = 20, 9
        ws.add_chart(ch, f"{get_column_letter(chart_col)}{first - 1}")
        row += 2
    ws.freeze_panes = "A9"


def _bin_of(edges, value):
    if value is None or not edges:
        return None
    i = int(np.searchsorted(edges, value, side="right")) - 1
    return min(max(i, 0), len(edges) - 2)


# --------------------------------------------------------------------------- Sensitivity

def _value_format(v) -> str:
    """A number format that suits the size of an input value."""
    if v is None or not math.isfinite(v) or v == 0:
        return "general"
    return "money" if abs(v) >= 1000 else "price" if abs(v) >= 1 else "rate"


#: plain words for the scenario keys a tornado moves (other keys: their words, from the key)
PLAIN = {"capex.turbine_per_kw": "Turbine capex", "capex.balance_of_plant_per_kw": "Balance-of-plant capex",
         "maintenance.fixed_per_kw_year": "Fixed O&M", "revenue.ppa_price_per_mwh": "PPA price",
         "revenue.merchant_price_per_mwh": "Merchant price", "finance.discount_rate": "Discount rate",
         "losses.wake": "Wake loss", "operations.availability_mature": "Availability, mature",
         "project.lifetime_years": "Operating life", "wind.mean_speed_mps": "Mean wind speed",
         "wind.weibull_scale_mps": "Weibull scale A", "net_aep_p90_p10_10yr": "Net energy, P90 to P10 (10 years)",
         "finance.tax_rate": "Tax rate", "finance.debt.interest_rate": "Interest rate"}
_UNIT_SUFFIX = (("_per_kw_year", "{cur}/kW/yr"), ("_per_turbine_year", "per turbine-year"), ("_per_kw", "{cur}/kW"),
                ("_per_mwh", "{cur}/MWh"), ("_per_turbine", "{cur}/turbine"), ("_mps", "m/s"), ("_years", "years"),
                ("_days", "days"), ("_kw", "kW"))


def plain_label(key: str, cur: str) -> str:
    """Plain words and a unit for a tornado input (the scenario key is shown beside it)."""
    unit = next((u for suffix, u in _UNIT_SUFFIX if key.endswith(suffix)), "")
    unit = unit.format(cur=cur)
    if key == "net_aep_p90_p10_10yr":
        unit = "MWh/yr"
    if key in PLAIN:
        words = PLAIN[key]
    else:
        parts = key.split(".")
        last = parts[-1]
        for suffix, _ in _UNIT_SUFFIX:
            if last.endswith(suffix):
                last = last[: -len(suffix)]
        words = last.replace("_", " ")
        if len(parts) >= 3 and parts[1] in ("component", "overhaul", "speed", "energy"):
            words = f"{parts[2]}: {words}"
        words = words[:1].upper() + words[1:]
    return f"{words} [{unit}]" if unit else words


def write_sensitivity(book: Book, sens) -> None:
    """The Sensitivity sheet: a tornado and a sweep of the mean wind speed (:func:`lcoe.analysis.sensitivity.workbook_set`)."""
    ws = book.sheet(SENSITIVITY)
    b = book
    b.text(ws, 1, 1, "Sensitivity", font=TITLE)
    b.text(ws, 2, 1, "ENGINE VALUES, NOT LIVE: each row is a full lcoe run with one input changed (debt re-sized). "
                     "Re-run lcoe to refresh them.", font=BOLD, fill=ENGINE_FILL)
    for col, width in zip("ABCDEFGHIJKLMNO", (40, 14, 14, 14, 14, 14, 14, 14, 14, 24, 30, 14, 14, 14, 14)):
        ws.column_dimensions[col].width = width
    label, unit, fmt = label_of(sens.metric, book)
    rows = sens.tornado   # largest swing first
    also = list((rows[0].get("also") or {}) if rows else {})
    row = 4
    b.text(ws, row, 1, f"Tornado: {label} [{unit}], one input at a time", font=BOLD, fill=HEAD_FILL)
    row += 1
    heads = ["Input", "Base value", "Low value", "High value", "Metric at low", "Metric at high",
             "Swing, high - low", "Change at low", "Change at high", "Low and high chosen by", "Scenario key"]
    for k in also:
        lab, un, _ = label_of(k, book)
        heads += [f"{lab} at low [{un}]", f"{lab} at high [{un}]"]
    _heads(b, ws, row, heads)
    first = row + 1
    for item in rows:
        row += 1
        b.text(ws, row, 1, plain_label(item["key"], book.cur))
        value_fmt = _value_format(item.get("base_value"))
        for j, k in enumerate(("base_value", "low_value", "high_value"), start=2):
            b.num(ws, row, j, item.get(k), value_fmt, fill=ENGINE_FILL)
        for j, k in enumerate(("metric_at_low", "metric_at_high", "swing"), start=5):
            b.num(ws, row, j, item.get(k), fmt, fill=ENGINE_FILL)
        base = item.get("metric_base")
        for j, k in ((8, "metric_at_low"), (9, "metric_at_high")):
            v = item.get(k)
            b.num(ws, row, j, None if v is None or base is None else v - base, fmt, fill=ENGINE_FILL)
        if item.get("basis"):
            b.text(ws, row, 10, item["basis"], font=ITALIC)
        b.text(ws, row, 11, item["key"], font=ITALIC)
        for i, k in enumerate(also):
            lo, hi = (item.get("also") or {}).get(k, (None, None))
            kfmt = label_of(k, book)[2]
            b.num(ws, row, 12 + 2 * i, lo, kfmt, fill=ENGINE_FILL)
            b.num(ws, row, 13 + 2 * i, hi, kfmt, fill=ENGINE_FILL)
    last = row
    if rows:
        ch = BarChart()
        ch.type = "bar"
        ch.grouping = "clustered"
        ch.overlap = 100
        ch.title = f"Tornado: change of {label}"
        for col, title in ((8, "Input at low"), (9, "Input at high")):
            ch.series.append(Series(Reference(ws, min_col=col, min_row=first, max_row=last), title=title))
        ch.set_categories(Reference(ws, min_col=1, min_row=first, max_row=last))
        axes(ch, "", f"Change [{unit}]")
        ch.x_axis.scaling.orientation = "maxMin"
        ch.x_axis.tickLblPos = "low"
        ch.width, ch.height = 22, max(8.0, 0.7 * len(rows) + 3)
        ws.add_chart(ch, f"A{last + 3}")

    key = sens.sweep_key
    row += 3 + (int(max(8.0, 0.7 * len(rows) + 3) * 2) if rows else 0)   # below the tornado chart
    if key is None:
        b.text(ws, row, 1, "Wind-speed sweep: not available for a time-series climate", font=ITALIC)
        return
    factors, sweep = sens.sweep_factors, sens.sweep
    b.text(ws, row, 1, f"Wind-speed sweep of {key} (0.7x to 1.3x)", font=BOLD, fill=HEAD_FILL)
    row += 1
    heads = ("Factor on the base", "Speed [m/s]", "Net AEP P50 [MWh/yr]", f"LCOE, nominal [{b.unit('{cur}')}/MWh]",
             "Equity IRR", "Minimum DSCR [x]", "Debt [" + b.cur + "]", "Elasticity of net AEP, dlnE / dlnv")
    _heads(b, ws, row, heads)
    first = row + 1
    for fct, item in zip(factors, sweep):
        row += 1
        energy, mets = item.get("energy", {}) or {}, item.get("metrics", {}) or {}
        b.num(ws, row, 1, fct, "ratio", fill=ENGINE_FILL)
        b.num(ws, row, 2, item.get("value"), "price", fill=ENGINE_FILL)
        b.num(ws, row, 3, energy.get("net_aep_p50_mwh"), "mwh", fill=ENGINE_FILL)
        b.num(ws, row, 4, mets.get("lcoe_nominal_per_mwh"), "price", fill=ENGINE_FILL)
        b.num(ws, row, 5, mets.get("equity_irr"), "pct", fill=ENGINE_FILL)
        b.num(ws, row, 6, mets.get("min_dscr"), "ratio", fill=ENGINE_FILL)
        b.num(ws, row, 7, mets.get("debt_amount"), "money", fill=ENGINE_FILL)
        b.num(ws, row, 8, item.get("elasticity"), "ratio", fill=ENGINE_FILL)
    last = row
    ch = LineChart()
    ch.title = "LCOE against the mean wind speed"
    ch.series.append(Series(Reference(ws, min_col=4, min_row=first, max_row=last), title="LCOE nominal"))
    ch.set_categories(Reference(ws, min_col=2, min_row=first, max_row=last))
    axes(ch, "Mean wind speed [m/s]", f"LCOE [{b.unit('{cur}')}/MWh]")
    ch.x_axis.numFmt = "0.00"
    ch.width, ch.height = 22, 9
    ws.add_chart(ch, f"A{last + 3}")
