"""The report of ``lcoe portfolio``: JSON and a table that fits 100 columns.

Only presentation: every figure comes from :mod:`lcoe.analysis.portfolio_results`.
"""

from __future__ import annotations

import json
import textwrap

from lcoe.outputs.report import fmt, heading

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


def _wrap(text: str, indent: str = "") -> list[str]:
    return textwrap.wrap(text, WIDTH, initial_indent=indent, subsequent_indent=" " * len(indent) if indent else "  ")


def to_table(d: dict) -> str:
    cur = d["currency"]
    n = len(d["sites"])
    corr = d["correlation"]
    lines = heading(d["portfolio"], d["source"], d["caution"])
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
    lines.extend(_sites_table(d, cur))
    if n <= MAX_MATRIX_SITES:
        lines.append("")
        lines.extend(_matrix_table(corr["matrix"]))
    lines.append("")
    lines.extend(_diversification_table(d, cur))
    lines.append("")
    lines.extend(_life_table(d, cur))
    if d["pooled_debt"] is not None:
        p = d["pooled_debt"]
        lines.append("")
        lines += _wrap(f"Pooled debt: {cur} {p['debt_amount'] / 1e6:,.1f} M at close (the sites' debts times their "
                       f"shares, each sized on its own). P(minimum DSCR of the pool < 1.0) = "
                       f"{fmt(p['prob_min_dscr_below_1'], 'pct')} %; P(some site's own minimum DSCR < 1.0) = "
                       f"{fmt(p['prob_any_site_min_dscr_below_1'], 'pct')} %.")
    lines.append("")
    lines.extend(_annual_table(d, cur))
    if d["warnings"]:
        lines.append("")
        lines.append("Warnings")
        for w in d["warnings"]:
            lines += _wrap(w, "  - ")
    out = "\n".join(lines) + "\n"
    return out


def _sites_table(d, cur) -> list[str]:
    head = (f"  {'#':>2} {'site':<22} {'share':>6} {'MW':>6} {'P50 AEP':>9} {'P90 1-yr':>9} {'P90 10-yr':>9} "
            f"{'P90 eq.NPV':>10} {'P90 min':>7} {'energy':>7}")
    units = (f"  {'':>2} {'':<22} {'[%]':>6} {'':>6} {'[GWh/yr]':>9} {'[GWh]':>9} {'[GWh/yr]':>9} "
             f"{'[' + cur + ' M]':>10} {'DSCR':>7} {'share':>7}")
    out = ["Sites (figures times the owned share; each P90 is the site's own 10th percentile)", head, units]
    for i, s in enumerate(d["sites"], 1):
        m = s["montecarlo"]
        name = s["name"] if len(s["name"]) <= 22 else s["name"][:21] + "."
        out.append(f"  {i:>2} {name:<22} {fmt(s['share'], 'pct')[:-1]:>6} {s['capacity_mw'] * s['share']:>6.1f} "
                   f"{_value('energy', s['net_aep_p50_mwh']):>9} {_value('energy', m['energy_1yr_mwh']['p90']):>9} "
                   f"{_value('energy', m['energy_10yr_mwh']['p90']):>9} "
                   f"{_value('equity_npv', m['equity_npv']['p90']):>10} "
                   f"{_value('min_dscr', m['min_dscr']['p90']):>7} {fmt(s['energy_share'], 'pct')[:-1]:>6}%")
    return out


def _matrix_table(matrix) -> list[str]:
    n = len(matrix)
    out = ["Correlation of yearly mean wind speed between the sites (numbered as above)",
           "      " + "".join(f"{j:>7}" for j in range(1, n + 1))]
    for i, row in enumerate(matrix, 1):
        out.append(f"  {i:>2}  " + "".join(f"{v:>7.3f}" for v in row))
    return out


def _diversification_table(d, cur) -> list[str]:
    w = 44
    out = ["Diversification: the portfolio's P90 against the sum of the sites' own P90s",
           f"  {'':<{w}} {'portfolio':>12} {'sum of site':>12} {'benefit':>11} {'benefit':>9}",
           f"  {'':<{w}} {'P90':>12} {'P90s':>12} {'':>11} {'[%]':>9}"]
    for key, row in d["diversification"].items():
        share = row["benefit_share"]
        pct = "n/a" if share is None else f"{100 * share:+.2f}"
        out.append(f"  {_label(DIVERSIFICATION_LABELS, key, cur, w):<{w}} {_value(key, row['portfolio_p90']):>12} "
                   f"{_value(key, row['sum_of_site_p90']):>12} {_value(key, row['benefit']):>11} {pct:>9}")
    return out


def _life_table(d, cur) -> list[str]:
    w = 44
    cols = ("p50", "p75", "p90", "p99", "mean", "sd")
    out = ["The portfolio over its life (P90 = the 10th percentile: the low side)",
           f"  {'':<{w}}" + "".join(f" {c.upper() if c.startswith('p') else c:>8}" for c in cols)]
    for key, stats in d["life"].items():
        out.append(f"  {_label(LIFE_LABELS, key, cur, w):<{w}}" + "".join(f" {_value(key, stats[c]):>8}"
                                                                        for c in cols))
    return out


def _annual_table(d, cur) -> list[str]:
    out = ["The portfolio year by year (nominal money; P90 = the 10th percentile)",
           f"  {'Year':>4}  {'Energy [GWh]':^23}  {'Revenue [' + cur + ' M]':^23}  {'CFADS [' + cur + ' M]':^23}"
           f"  {'DS':>6} {'DSCR':>5}",
           f"  {'':>4}  " + "  ".join(f"{'P50':>7}{'P90':>8}{'P99':>8}" for _ in range(3)) +
           f"  {'[M]':>6} {'P90':>5}"]
    for row in d["annual"]:
        cells = []
        for key, unit in (("energy_mwh", "energy"), ("revenue", "money"), ("cfads", "money")):
            s = row[key]
            cells.append(f"{_value(unit, s['p50']):>7}{_value(unit, s['p90']):>8}{_value(unit, s['p99']):>8}")
        ds = row["debt_service"]
        dscr = row["dscr_at_p90_cfads"]
        out.append(f"  {row['year']:>4}  " + "  ".join(cells) +
                   f"  {'-' if not ds else f'{ds / 1e6:,.1f}':>6} {'-' if dscr is None else f'{dscr:.2f}':>5}")
    return out
