"""The report of ``lcoe portfolio``: JSON and a table that fits 100 columns.

Only presentation: every figure comes from :mod:`lcoe.analysis.portfolio_results`.
"""

from __future__ import annotations

import json

from lcoe.outputs.report import fmt, heading
from lcoe.outputs.tables import col, render, warning_lines, wrap

WIDTH = 100
MAX_MATRIX_SITES = 12      # the correlation matrix is printed for up to this many sites

DIVERSIFICATION_LABELS = {
    "energy_1yr_mwh": ("Net energy, year 1", "GWh"),
    "energy_10yr_mwh": ("Net energy, years 1-10 mean", "GWh/yr"),
    "energy_life_mwh": ("Net energy, life", "GWh"),
    "revenue_life": ("Revenue, life", "{cur} M"),
    "cfads_life": ("CFADS, life", "{cur} M"),
    "equity_npv": ("Equity NPV (each site at its target)", "{cur} M"),
}
LIFE_LABELS = dict(DIVERSIFICATION_LABELS, equity_irr=("Equity IRR of the summed flows", "%"),
                   pooled_min_dscr=("Minimum DSCR, debt pooled", "x"))


def to_json(report: dict) -> str:
    return json.dumps(report, indent=2, allow_nan=False)


def _value(key: str, v) -> str:
    """A figure in the table's unit: energy in GWh, money in millions, IRR in %, DSCR as x."""
    if v is None:
        return "n/a"
    if key.startswith("energy"):
        return f"{v / 1e3:,.1f}"
    if key == "equity_irr":
        return fmt(v, "pct")
    if "dscr" in key:
        return f"{v:.3f}"
    return f"{v / 1e6:,.1f}"


def _label(labels, key, cur, width):
    name, unit = labels[key]
    text = f"{name} [{unit.format(cur=cur)}]"
    return text if len(text) <= width else text[:width - 1] + "."


def to_table(d: dict, width: int | None = WIDTH, wide: bool = False) -> str:
    """The report as text within ``width`` columns, the wide tables split into blocks of columns
    (``wide``: the tables whole)."""
    cur = d["currency"]
    n = len(d["sites"])
    corr = d["correlation"]
    tw = None if wide else width

    def _wrap(text: str, indent: str = "") -> list[str]:
        return wrap(text, width or None, indent, " " * len(indent) if indent else "  ")

    lines = heading(d["portfolio"], d["source"], d["caution"], width=width)
    if corr["rule"] == "distance":
        rule = f"by distance, rho = exp(-d / {corr['length_km']:g} km)"
    else:
        rule = "as the matrix in the file"
    common = [name for name, key in (("one capex factor", "capex"), ("one merchant price path", "merchant_price"))
              if d["common"][key] is not None]
    ex = d["execution"]
    where = {"plain": "a plain loop in this process", "local": f"a local Dask cluster, {ex['workers']} worker(s)",
             "scheduler": f"the Dask scheduler at {ex['scheduler']}, {ex['workers']} worker(s)"}[ex["mode"]]
    lines += _wrap(f"{n} site(s), {d['trials']:,} trials (seed {d['seed']}), {d['horizon_years']} years. Yearly "
                   f"wind correlated {rule}; long-term speed terms {corr['long_term']}; common draws: "
                   f"{', '.join(common) if common else 'none'}. Run on {where} (sites prepared in "
                   f"{ex['prepare_s']:.1f} s, trials in {ex['trials_s']:.1f} s).")
    lines.append("")
    lines.extend(_sites_table(d, cur, tw))
    if n <= MAX_MATRIX_SITES:
        lines.append("")
        lines.extend(_matrix_table(corr["matrix"], tw))
    lines.append("")
    lines.extend(_diversification_table(d, cur, tw))
    lines.append("")
    lines.extend(_life_table(d, cur, tw))
    if d["pooled_debt"] is not None:
        p = d["pooled_debt"]
        lines.append("")
        lines += _wrap(f"Pooled debt: {cur} {p['debt_amount'] / 1e6:,.1f} M at close (the sites' debts times their "
                       f"shares, each sized on its own). P(minimum DSCR of the pool < 1.0) = "
                       f"{fmt(p['prob_min_dscr_below_1'], 'pct')} %; P(some site's own minimum DSCR < 1.0) = "
                       f"{fmt(p['prob_any_site_min_dscr_below_1'], 'pct')} %.")
    lines.append("")
    lines.extend(_annual_table(d, cur, tw))
    lines += warning_lines(d["warnings"], width)
    out = "\n".join(lines) + "\n"
    return out


def _sites_table(d, cur, width) -> list[str]:
    cols = [col("#", min_width=2), col("site", align="<", min_width=22), col("share", "[%]"), col("MW"),
            col("P50 AEP", "[GWh/yr]"), col("P90 1-yr", "[GWh]"), col("P90 10-yr", "[GWh/yr]"),
            col("P90 eq.NPV", f"[{cur} M]"), col("P90 min", "DSCR"), col("energy", "share")]
    rows = []
    for i, s in enumerate(d["sites"], 1):
        m = s["montecarlo"]
        name = s["name"] if len(s["name"]) <= 22 else s["name"][:21] + "."
        rows.append([str(i), name, fmt(s["share"], "pct")[:-1], f"{s['capacity_mw'] * s['share']:.1f}",
                     _value("energy", s["net_aep_p50_mwh"]), _value("energy", m["energy_1yr_mwh"]["p90"]),
                     _value("energy", m["energy_10yr_mwh"]["p90"]), _value("equity_npv", m["equity_npv"]["p90"]),
                     _value("min_dscr", m["min_dscr"]["p90"]), fmt(s["energy_share"], "pct")[:-1] + "%"])
    return [*wrap("Sites (figures times the owned share; each P90 is the site's own 10th percentile)", width),
            *render(cols, rows, labels=2, width=width, gap=1)]


def _matrix_table(matrix, width) -> list[str]:
    n = len(matrix)
    cols = [col("", min_width=2)] + [col(str(j), min_width=6) for j in range(1, n + 1)]
    rows = [[str(i)] + [f"{v:.3f}" for v in row] for i, row in enumerate(matrix, 1)]
    return [*wrap("Correlation of yearly mean wind speed between the sites (numbered as above)", width),
            *render(cols, rows, width=width, gap=1)]


def _diversification_table(d, cur, width) -> list[str]:
    w = 44
    cols = [col("", "", align="<", min_width=w), col("portfolio", "P90"), col("sum of site", "P90s"),
            col("benefit", ""), col("benefit", "[%]")]
    rows = []
    for key, row in d["diversification"].items():
        share = row["benefit_share"]
        rows.append([_label(DIVERSIFICATION_LABELS, key, cur, w), _value(key, row["portfolio_p90"]),
                     _value(key, row["sum_of_site_p90"]), _value(key, row["benefit"]),
                     "n/a" if share is None else f"{100 * share:+.2f}"])
    return [*wrap("Diversification: the portfolio's P90 against the sum of the sites' own P90s", width),
            *render(cols, rows, width=width, gap=1)]


def _life_table(d, cur, width) -> list[str]:
    w = 44
    stats_ = ("p50", "p75", "p90", "p99", "mean", "sd")
    cols = [col("", align="<", min_width=w)] + [col(c.upper() if c.startswith("p") else c, min_width=8)
                                                for c in stats_]
    rows = [[_label(LIFE_LABELS, key, cur, w)] + [_value(key, st[c]) for c in stats_] for key, st in d["life"].items()]
    return [*wrap("The portfolio over its life (P90 = the 10th percentile: the low side)", width),
            *render(cols, rows, width=width, gap=1)]


def _annual_table(d, cur, width) -> list[str]:
    cols = [col("Year", "", min_width=4)]
    for name, unit in (("Energy", "[GWh]"), ("Revenue", f"[{cur} M]"), ("CFADS", f"[{cur} M]")):
        # the group's name and unit over its first two columns: "Energy [GWh]" reads across them
        cols += [col(head, p, min_width=7) for head, p in ((name, "P50"), (unit, "P90"), ("", "P99"))]
    cols += [col("DS", "[M]", min_width=6), col("DSCR", "P90", min_width=5)]
    rows = []
    for row in d["annual"]:
        cells = [str(row["year"])]
        for key, unit in (("energy_mwh", "energy"), ("revenue", "money"), ("cfads", "money")):
            s = row[key]
            cells += [_value(unit, s["p50"]), _value(unit, s["p90"]), _value(unit, s["p99"])]
        ds = row["debt_service"]
        dscr = row["dscr_at_p90_cfads"]
        cells += ["-" if not ds else f"{ds / 1e6:,.1f}", "-" if dscr is None else f"{dscr:.2f}"]
        rows.append(cells)
    return [*wrap("The portfolio year by year (nominal money; P90 = the 10th percentile)", width),
            *render(cols, rows, width=width, gap=1)]
