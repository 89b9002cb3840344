"""The report of ``lcoe run``: a JSON-ready dict and a readable table.

Only presentation: every figure comes from :mod:`lcoe.engine` (and Monte Carlo from
:mod:`lcoe.analysis.montecarlo`).
"""

from __future__ import annotations

import json
import math
import textwrap

from lcoe.analysis.study import Report
from lcoe.inputs.about import CAUTION
from lcoe.outputs.files import write_csv
from lcoe.outputs.tables import col, render, warning_lines, wrap


def to_json(report: Report) -> str:
    return json.dumps(report.to_dict(), indent=2, allow_nan=False)


def write_annual_csv(report: Report, path):
    """The yearly table of the base case as CSV (``lcoe run --csv``), written atomically."""
    rows = report.case.annual()
    keys = report.case.annual_keys()
    return write_csv(path, list(keys), [[r[k] for k in keys] for r in rows])


# --------------------------------------------------------------------------- table output

WIDTH = 100   # the width of a table printed to no terminal (lcoe.outputs.tables.DEFAULT_WIDTH)


def heading(name: str, source: str, caution: str = CAUTION, width: int | None = WIDTH) -> list[str]:
    """The first lines of every table: the name, the file it came from, the caution.

    The file goes on a line of its own when the two would not fit in ``width`` columns,
    and the caution is wrapped, so that a long path never widens the table.
    """
    width = WIDTH if width is None else max(40, width)
    one = f"{name}  ({source})"
    lines = [one] if len(one) <= width else [name, f"  ({source})"]
    return lines + textwrap.wrap(caution, width) + [""]


METRIC_LABELS = {
    "lcoe_nominal_per_mwh": ("LCOE, nominal", "{cur}/MWh", "{:.2f}"),
    "lcoe_real_per_mwh": ("LCOE, real", "{cur}/MWh", "{:.2f}"),
    "project_npv": ("Project NPV", "{cur} M", "m"),
    "project_irr": ("Project IRR", "%", "pct"),
    "equity_npv": ("Equity NPV", "{cur} M", "m"),
    "equity_irr": ("Equity IRR", "%", "pct"),
    "debt_amount": ("Debt", "{cur} M", "m"),
    "min_dscr": ("Minimum DSCR", "x", "{:.3f}"),
    "avg_dscr": ("Average DSCR", "x", "{:.3f}"),
    "llcr": ("LLCR", "x", "{:.3f}"),
    "payback_year": ("Equity payback", "year", "{:.0f}"),
    "breakeven_ppa_price_per_mwh": ("Break-even PPA price", "{cur}/MWh", "{:.2f}"),
}

ENERGY_LABELS = {
    "air_density_kgm3": ("Air density at hub", "kg/m3", "{:.4f}"),
    "hub_mean_speed_mps": ("Mean wind speed at hub", "m/s", "{:.2f}"),
    "gross_aep_mwh": ("Gross AEP", "MWh/yr", "{:,.0f}"),
    "net_aep_p50_mwh": ("Net AEP P50", "MWh/yr", "{:,.0f}"),
    "net_aep_p90_1yr_mwh": ("Net AEP P90 (1 yr)", "MWh/yr", "{:,.0f}"),
    "net_aep_p90_10yr_mwh": ("Net AEP P90 (10 yr)", "MWh/yr", "{:,.0f}"),
    "net_aep_p99_1yr_mwh": ("Net AEP P99 (1 yr)", "MWh/yr", "{:,.0f}"),
    "net_capacity_factor": ("Net capacity factor", "%", "pct"),
    "speed_sensitivity": ("AEP sensitivity to speed", "dlnE/dlnv", "{:.3f}"),
    "sigma_1yr": ("Energy uncertainty (1 yr)", "%", "pct"),
    "sigma_10yr": ("Energy uncertainty (10 yr)", "%", "pct"),
    "wake_loss": ("Wake loss", "%", "pct"),
}


SIZING_LABELS = {"p50": "P50", "p90_1yr": "P90 (1 yr)", "p90_10yr": "P90 (10 yr)", "p99_1yr": "P99 (1 yr)"}
#: the headline's own words for the LCOE: what it is (SCENARIO.md: pre-tax, unfinanced, no credits)
HEADLINE_LCOE = {"lcoe_nominal_per_mwh": "LCOE nominal, pre-tax, unlevered",
                 "lcoe_real_per_mwh": "LCOE real, pre-tax, unlevered"}


def headline_lines(d: dict, cur: str, w: int) -> list[str]:
    """The plant and its capex per kW, every metric, then the financing the metrics rest on."""
    p, fin = d["project"], d["financing"]

    def row(label, text):
        return f"  {label:<{w}} {text:>14}"

    out = [row("Plant [MW]", f"{p['plant_mw']:,.1f}"),
           row("Turbines x rated power [kW]", f"{p['turbines']:,} x {p['rated_power_kw']:,.0f}"),
           row(f"Capex per kW [{cur}/kW]", fmt(d["costs"]["capex_per_kw"], "{:,.0f}"))]
    for k in d["metrics"]:
        name, unit, how = METRIC_LABELS[k]
        label = f"{HEADLINE_LCOE.get(k, name)} [{unit.format(cur=cur)}]"
        out.append(row(label, fmt(d["metrics"][k], how)))
    out += [row("Gearing, debt / capex [%]", fmt(fin["gearing"], "pct")),
            row("Discount rate, nominal [%]", fmt(fin["discount_rate"], "pct")),
            row("Equity target return, nominal [%]", fmt(fin["equity_target_return"], "pct"))]
    debt = fin.get("debt")
    if debt is None:
        return out + [row("Debt sized on", "all equity")]
    cap = "binds" if debt["gearing_cap_binds"] else "not reached"
    return out + [row("Debt sized on", SIZING_LABELS[debt["sizing_case"]]),
                  row("Target DSCR on that case [x]", f"{debt['target_dscr']:.3f}"),
                  row("Gearing cap [%]", fmt(debt["max_gearing"], "pct")) + f"  ({cap})"]


def fmt(value, how: str) -> str:
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "n/a"
    if how == "pct":
        return f"{100 * value:.2f}"
    if how == "m":
        return f"{value / 1e6:,.2f}"
    return how.format(value)


def _label(labels, key, cur):
    name, unit, _ = labels[key]
    return f"{name} [{unit.format(cur=cur)}]"


def to_table(report: Report, *, yearly: bool = True, width: int | None = WIDTH, wide: bool = False) -> str:
    """The report as text: every line within ``width`` columns, the wide tables split into blocks
    of columns (``wide``: the tables whole, one line per row)."""
    d = report.to_dict()
    cur = report.case.scenario.project.currency
    tw = None if wide else width
    lines = heading(d["scenario"], report.case.scenario.source, width=width)
    if d.get("as_run"):
        lines[-1:-1] = textwrap.wrap("As run: " + as_run_text(d["as_run"]), max(40, width or WIDTH),
                                     subsequent_indent="  ")
    w = 44
    lines.append("Headline")
    lines.extend(headline_lines(d, cur, w))
    lines.append("")
    lines.append("Energy")
    for k, (name, unit, how) in ENERGY_LABELS.items():
        label = _label(ENERGY_LABELS, k, cur)
        if k == "wake_loss":
            label = label.replace("Wake loss", "Wake loss, from the layout" if "wake" in d else "Wake loss, as given")
        lines.append(f"  {label:<{w}} {fmt(d['energy'][k], how):>14}")
    for block, table in (("wind_rose", rose_table), ("wake", wake_table)):
        if block in d:
            lines.append("")
            lines.extend(table(d[block], tw))
    if "long_term" in d:
        lines.append("")
        lines.extend(long_term_table(d["long_term"], width))
    costs = d["costs"]
    lines.append("")
    lines.append("Costs")
    lines.append(f"  {'Capex total [' + cur + ' M]':<{w}} {fmt(costs['capex_total'], 'm'):>14}")
    lines.append(f"  {'O&M, year 1 [' + cur + ' M]':<{w}} {fmt(costs['opex_year1'], 'm'):>14}")
    lines.append(f"  {'Decommissioning net, year L [' + cur + ' M]':<{w}} {fmt(costs['decommissioning_net'], 'm'):>14}")
    if "sources_and_uses" in d:
        lines.append("")
        lines.extend(sources_uses_table(d["sources_and_uses"], cur, tw))
    if "montecarlo" in d:
        lines.append("")
        lines.extend(montecarlo_table(d["montecarlo"], cur, tw))
    if "lender_cases" in d:
        lines.append("")
        lines.extend(lender_table(d["lender_cases"], cur, tw))
    if yearly:
        lines.append("")
        lines.extend(annual_table(d["annual"], cur, tw))
        if "distributions" in d["annual"][0]:
            lines.append("")
            lines.extend(annual_table(d["annual"], cur, tw, WATERFALL_COLUMNS,
                                      f"Cash waterfall ({cur} k, nominal; balances at the end of each year; "
                                      "nothing is paid out in a locked-up year)"))
    if d["variants"]:
        lines.append("")
        lines.extend(variants_table(d, cur, tw))
    lines += warning_lines(d["warnings"], width)
    return "\n".join(lines) + "\n"


def as_run_text(as_run: dict) -> str:
    """The command line's changes in words: ``variant low_wind; capex.turbine_per_kw = 1150; seed 7``."""
    parts = []
    if as_run.get("variant"):
        parts.append(f"variant {as_run['variant']}")
    parts += [f"{k} = {v!r}" if isinstance(v, str) else f"{k} = {v:g}" if isinstance(v, float) else f"{k} = {v}"
              for k, v in as_run.get("set", {}).items()]
    if as_run.get("seed") is not None:
        parts.append(f"seed {as_run['seed']}")
    return "; ".join(parts) + " (on the command line, not in the file)"


def _f(value, how: str) -> str:
    return fmt(value, how)


def rose_table(rose: dict, width: int | None = WIDTH) -> list[str]:
    """The sector table: frequency, speeds, gross AEP and (with a layout) wake loss per sector."""
    wake = "wake_loss" in rose["rows"][0]
    cols = [col("Sector"), col("From [deg]"), col("Freq [%]"), col("Mean [m/s]"), col("A [m/s]"), col("k", min_width=5),
            col("Gross [MWh/yr]"), col("Share [%]")] + ([col("Wake [%]")] if wake else [])
    rows = []
    for r in rose["rows"]:
        rows.append([str(r["sector"]), f"{r['centre_deg']:.0f}", _f(r["frequency"], "pct"),
                     _f(r["mean_speed_mps"], "{:.2f}"), _f(r["weibull_scale_mps"], "{:.2f}"),
                     _f(r["weibull_shape"], "{:.2f}"), _f(r["gross_aep_mwh"], "{:,.0f}"), _f(r["gross_share"], "pct")]
                    + ([_f(r["wake_loss"], "pct")] if wake else []))
    return [*wrap(f"Wind rose ({rose['sectors']} sectors of {rose['width_deg']:g} deg at hub height, "
                  f"{rose['source']})", width), *render(cols, rows, width=width, gap=1)]


def wake_table(w: dict, width: int | None = WIDTH) -> list[str]:
    """The wake loss of every turbine and of the farm."""
    out = [*wrap(f"Wake losses (Jensen/Park top hat, root-sum-square; k = {w['wake_decay_constant']:g}, "
                 f"{w['location']})", width),
           *wrap(f"{w['turbines']} turbine(s) ({w['layout'][:40]}), {spacing_text(w)}", width, indent="  "),
           *wrap(f"thrust coefficient: {w['thrust']}", width, indent="  ")]
    cols = [col("Turbine", align="<", min_width=12), col("x [m]", min_width=11), col("y [m]", min_width=11),
            col("Gross [MWh/yr]"), col("Waked [MWh/yr]"), col("Wake loss [%]")]
    rows = []
    gross = waked = 0.0
    for t in w["per_turbine"]:
        gross += t["gross_aep_mwh"]
        waked += t["waked_aep_mwh"]
        rows.append([t["name"][:12], f"{t['x_m']:,.1f}", f"{t['y_m']:,.1f}", f"{t['gross_aep_mwh']:,.0f}",
                     f"{t['waked_aep_mwh']:,.0f}", _f(t["wake_loss"], "pct")])
    rows.append(["Farm", "", "", f"{gross:,.0f}", f"{waked:,.0f}", _f(w["farm_loss"], "pct")])
    out += render(cols, rows, width=width, gap=1)
    out += wrap(f"per turbine {_f(w['turbine_loss_min'], 'pct')} to {_f(w['turbine_loss_max'], 'pct')} %; "
                f"directions every {w['direction_step_deg']:g} deg, speed bins of {w['speed_bin_mps']:g} m/s", width,
                indent="  ")
    return out


def spacing_text(w: dict) -> str:
    """The nearest pair of a layout in words ("one turbine" where there is no pair)."""
    d = w["nearest_spacing_m"]
    if d is None or not math.isfinite(d):
        return "one turbine, no wakes"
    return f"nearest pair {d:,.0f} m = {w['nearest_spacing_rotor_diameters']:.1f} rotor diameters"


def long_term_table(lt: dict, width: int | None = WIDTH) -> list[str]:
    """The long-term correction: the periods, the concurrent statistics, both methods and the result."""
    method = lt["method"].replace("_", " ")
    w = 32

    def row(label, text):
        return "\n".join(wrap(text, width, indent=f"  {label:<{w}} ", subsequent=" " * (w + 3)))

    ratio = lt["long_term_over_short_term"]
    lines = [
        f"Long-term correction (measure-correlate-predict, {method})",
        row("Reference file", lt["reference"][:60]),
        row("Reference", f"{lt['reference_start']} to {lt['reference_end']}, {lt['reference_years']:.1f} years, "
                         f"every {lt['reference_step_h']:g} h"),
        row("Site series", f"{lt['site_start']} to {lt['site_end']}"),
        row("Concurrent records", f"{lt['concurrent_pairs']:,} ({lt['concurrent_years']:.2f} years, "
                                  f"{100 * lt['coverage']:.1f} % of the site period)"),
        row("Correlation r", f"{lt['r']:.3f}"),
        row("Mean, concurrent [m/s]", f"site {lt['site_mean_concurrent_mps']:.2f}, reference "
                                      f"{lt['reference_mean_concurrent_mps']:.2f}; reference long term "
                                      f"{lt['reference_mean_long_term_mps']:.2f}"),
        row("Linear regression", f"slope {lt['regression_slope']:.4f}, offset {lt['regression_offset_mps']:+.3f} m/s"
                                 f" -> long-term mean {lt['long_term_mean_regression_mps']:.2f} m/s"),
        row("Variance ratio", f"slope {lt['variance_ratio_slope']:.4f}, offset {lt['variance_ratio_offset_mps']:+.3f}"
                              f" m/s -> long-term mean {lt['long_term_mean_variance_ratio_mps']:.2f} m/s"),
        row("Site mean, measured [m/s]", f"{lt['site_mean_short_term_mps']:.2f} (at the measurement height)"),
        row("Site mean, long term [m/s]", f"{lt['site_mean_long_term_mps']:.2f} ({method}; x "
                                          f"{'n/a' if ratio is None else f'{ratio:.4f}'} of the measured)"),
        row("Veer, site - reference [deg]", "n/a" if lt["veer_deg"] is None else f"{lt['veer_deg']:+.1f}"),
        row("Uncertainty of the long term", f"{100 * lt['uncertainty_speed_sd']:.2f} % of the mean speed "
                                            f"(term {lt['uncertainty_term']!r})"),
        row("", f"= {100 * lt['interannual_sd']:.2f} % x sqrt((1 - r^2) / {lt['concurrent_years']:.2f} + r^2 / "
                f"{lt['reference_years']:.1f})"),
        row("", f"inter-annual sd from the {lt['interannual_source']}"),
    ]
    return [part for line in lines for part in line.split("\n")]


ANNUAL_COLUMNS = [("year", "Year", "{:d}"), ("energy_mwh", "Energy [MWh]", "{:,.0f}"),
                  ("price_per_mwh", "Price [{cur}/MWh]", "{:.2f}"), ("revenue", "Revenue [{cur} k]", "k"),
                  ("opex", "O&M [{cur} k]", "k"), ("capex", "Capex [{cur} k]", "k"),
                  ("decommissioning", "Decom. [{cur} k]", "k"), ("tax", "Tax [{cur} k]", "k"),
                  ("cfads", "CFADS [{cur} k]", "k"), ("interest", "Interest [{cur} k]", "k"),
                  ("principal", "Principal [{cur} k]", "k"), ("debt_service", "Debt service [{cur} k]", "k"),
                  ("dscr", "DSCR [x]", "{:.3f}"), ("project_cash_flow", "Project CF [{cur} k]", "k"),
                  ("equity_cash_flow", "Equity CF [{cur} k]", "k")]


WATERFALL_COLUMNS = [("year", "Year", "{:d}"), ("cfads", "CFADS", "k"), ("debt_service", "Debt svc", "k"),
                     ("dsra_draw", "DSRA use", "k"), ("dsra_balance", "DSRA", "k"), ("mra_balance", "MRA", "k"),
                     ("lockup", "Lock-up", "yes"), ("lockup_balance", "Trapped", "k"),
                     ("prepayment", "Prepaid", "k"), ("unpaid_debt_service", "Unpaid", "k"),
                     ("distributions", "Paid out", "k")]


def _head_lines(head: str) -> tuple[str, ...]:
    """A column head on two lines, the unit under the name: ``O&M [EUR k]`` -> ("O&M", "[EUR k]")."""
    name, bracket, unit = head.partition(" [")
    return (name, "[" + unit) if bracket else ("", name)


def annual_table(rows, cur, width: int | None = WIDTH, columns=None,
                 title: str = "Yearly cash flow (t = 0 is construction; nominal money)") -> list[str]:
    """The yearly cash flow (or the yearly ``columns`` given); the year labels every block of columns."""
    columns = ANNUAL_COLUMNS if columns is None else columns
    cols = [col(*(_head_lines(h.format(cur=cur)) if " [" in h else (h,)), min_width=4 if k == "year" else 8)
            for k, h, _ in columns]
    cells = []
    for r in rows:
        line = []
        for k, _, how in columns:
            v = r[k]
            if how == "yes":
                line.append("yes" if v else "-")
            elif how == "k":
                line.append("n/a" if v is None else f"{v / 1e3:,.0f}")
            else:
                line.append("-" if v is None else how.format(v))
        cells.append(line)
    return [*wrap(title, width), *render(cols, cells, width=width, gap=1)]


def variants_table(d, cur, width: int | None = WIDTH) -> list[str]:
    """Each variant's metrics and its change against the base; the metric labels every block."""
    names = list(d["variants"])
    cols = [col("", align="<"), col("base", min_width=10)]
    for n in names:
        cols += [col(n, min_width=10), col("change", min_width=9)]
    keys = [("metrics", k, METRIC_LABELS) for k in d["metrics"]] + \
        [("energy", k, ENERGY_LABELS) for k in ("net_aep_p50_mwh", "net_capacity_factor")]
    rows = []
    for block, k, labels in keys:
        how = labels[k][2]
        base = d[block][k]
        line = [_label(labels, k, cur)[:34], fmt(base, how)]
        for n in names:
            v = d["variants"][n][block][k]
            diff = None if v is None or base is None else v - base
            line += [fmt(v, how), _signed(diff, how)]
        rows.append(line)
    return [*wrap("Variants (each against the base)", width), *render(cols, rows, width=width, gap=1)]


def _signed(diff, how):
    if diff is None:
        return "n/a"
    s = fmt(diff, how)
    return s if s.startswith("-") else "+" + s


USES_LABELS = {"capex": "Capex", "upfront_fee": "Upfront debt fee", "interest_during_construction":
               "Interest during construction", "commitment_fee": "Commitment fee",
               "dsra_initial": "Debt service reserve, first funding", "total": "Total uses"}


def sources_uses_table(su: dict, cur: str, width: int | None = WIDTH) -> list[str]:
    """Uses and sources side by side, with the gearing, the check and the construction dates."""
    uses = [(USES_LABELS[k], v) for k, v in su["uses"].items()]
    sources = [("Senior debt", su["sources"]["debt"]), ("Equity", su["sources"]["equity"]),
               ("Total sources", su["sources"]["total"])]
    title = f"Sources and uses of funds [{cur} M]"
    if "commercial_operation" in su:
        title += (f" (close {su['financial_close']}, operation {su['commercial_operation']}, "
                  f"{su['construction_months']} months, {su['drawdown'].replace('_', '-')} drawdown, "
                  f"{su['funding'].replace('_', ' ')})")
    cols = [col("Uses", align="<"), col("", min_width=8), col("Sources", align="<"), col("", min_width=8)]
    rows = []
    for i in range(max(len(uses), len(sources))):
        left = [uses[i][0], fmt(uses[i][1], "m")] if i < len(uses) else ["", ""]
        right = [sources[i][0], fmt(sources[i][1], "m")] if i < len(sources) else ["", ""]
        rows.append(left + right)
    check = "balanced" if su["balanced"] else "NOT BALANCED"
    return [*wrap(title, width), *render(cols, rows, width=width, gap=3),
            f"  gearing (debt / uses) {fmt(su['gearing'], 'pct')} %; sources = uses: {check}"]


LENDER_COLUMNS = [("min_dscr", "Min DSCR", "{:.3f}"), ("avg_dscr", "Avg DSCR", "{:.3f}"), ("llcr", "LLCR", "{:.3f}"),
                  ("years_in_lockup", "Lock-up", "{:d}"), ("dsra_draws", "DSRA drawn", "k"),
                  ("unpaid_debt_service", "Unpaid DS", "k"), ("equity_irr", "Equity IRR", "pct")]


def lender_table(cases: dict, cur: str, width: int | None = WIDTH) -> list[str]:
    """One line per lender case, the debt locked at the base sizing (money in thousands); the
    case labels every block of columns."""
    cols = [col("Case", align="<")] + [col(h, min_width=8) for _, h, _ in LENDER_COLUMNS]
    rows = []
    for r in cases.values():
        label = r["label"] if len(r["label"]) <= 28 else r["label"][:25] + "..."
        rows.append([label] + ["n/a" if r[k] is None else (f"{r[k] / 1e3:,.0f}" if how == "k" else fmt(r[k], how))
                               for k, _, how in LENDER_COLUMNS])
    return [*wrap("Lender cases (debt and debt service locked at the base sizing)", width),
            *wrap(f"lock-up in years; DSRA drawn and unpaid debt service over the life in {cur} thousands; "
                  "IRR in %", width, indent="  "),
            *render(cols, rows, width=width, gap=1)]


MC_LABELS = {
    "net_aep_year1_mwh": ("Net energy, year 1", "MWh", "{:,.0f}"),
    "net_aep_mean_mwh": ("Net energy, life mean", "MWh/yr", "{:,.0f}"),
    "capex_total": ("Capex total", "{cur} M", "m"),
    "opex_mean": ("O&M, life mean", "{cur} M/yr", "m"),
}


MC_STATS = ("p50", "p75", "p90", "p99", "mean", "sd")


def montecarlo_table(mc: dict, cur: str, width: int | None = WIDTH) -> list[str]:
    """Percentiles, mean and sd of each sampled figure, and the probabilities of a shortfall."""
    cols = [col("", align="<")] + [col(s.upper() if s.startswith("p") else s, min_width=10) for s in MC_STATS]
    rows = []
    for k, stats in mc.items():
        if not isinstance(stats, dict) or "p50" not in stats:
            continue
        labels = next((lab for lab in (METRIC_LABELS, ENERGY_LABELS, MC_LABELS) if k in lab), None)
        label = _label(labels, k, cur)[:34] if labels else k
        how = labels[k][2] if labels else "{:.4g}"
        rows.append([label] + [fmt(stats[s], how) for s in MC_STATS])
    for k, label in (("prob_min_dscr_below_1", "P(minimum DSCR < 1.0) [%]"),
                     ("prob_min_dscr_below_target", "P(minimum DSCR < target) [%]"),
                     ("prob_equity_irr_below_target", "P(equity IRR < target) [%]"),
                     ("prob_lockup_any_year", "P(lock-up in any year) [%]"),
                     ("prob_dsra_drawn", "P(DSRA drawn) [%]"),
                     ("prob_debt_service_unpaid", "P(debt service unpaid) [%]")):
        if k in mc:
            rows.append([label, fmt(mc[k], "pct")] + [""] * (len(MC_STATS) - 1))
    if "expected_cash_trapped" in mc:
        rows.append([f"Expected cash trapped [{cur} M]", fmt(mc["expected_cash_trapped"], "m")]
                    + [""] * (len(MC_STATS) - 1))
    return [*wrap(f"Monte Carlo ({mc['trials']:,} trials, seed {mc['seed']}; P90 = the conservative side)",
                  width),
            *render(cols, rows, width=width, gap=1)]
