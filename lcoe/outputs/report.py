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


def to_json(report: Report) -> str:
    return json.dumps(report.to_dict(), indent=2, allow_nan=False)


def write_annual_csv(report: Report, path):
    """The yearly table of the base case as CSV (``lcoe run --csv``), written atomically."""
    rows = report.case.annual()
    keys = report.case.annual_keys()
    return write_csv(path, list(keys), [[r[k] for k in keys] for r in rows])


# --------------------------------------------------------------------------- table output

WIDTH = 100   # every table fits a 100-column terminal


def heading(name: str, source: str, caution: str = CAUTION) -> list[str]:
    """The first lines of every table: the name, the file it came from, the caution.

    The file goes on a line of its own when the two would not fit in ``WIDTH`` columns,
    and the caution is wrapped, so that a long path never widens the table.
    """
    one = f"{name}  ({source})"
    lines = [one] if len(one) <= WIDTH else [name, f"  ({source})"]
    return lines + textwrap.wrap(caution, WIDTH) + [""]


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


def to_table(report: Report, *, yearly: bool = True) -> str:
    d = report.to_dict()
    cur = report.case.scenario.project.currency
    lines = heading(d["scenario"], report.case.scenario.source)
    w = 38
    lines.append("Headline")
    for k in d["metrics"]:
        lines.append(f"  {_label(METRIC_LABELS, k, cur):<{w}} {fmt(d['metrics'][k], METRIC_LABELS[k][2]):>14}")
    lines.append("")
    lines.append("Energy")
    for k, (name, unit, how) in ENERGY_LABELS.items():
        label = _label(ENERGY_LABELS, k, cur)
        if k == "wake_loss":
            label = label.replace("Wake loss", "Wake loss, from the layout" if "wake" in d else "Wake loss, as given")
        lines.append(f"  {label:<{w}} {fmt(d['energy'][k], how):>14}")
    for block, table in (("wind_rose", rose_table), ("wake", wake_table), ("long_term", long_term_table)):
        if block in d:
            lines.append("")
            lines.extend(table(d[block]))
    costs = d["costs"]
    lines.append("")
    lines.append("Costs")
    lines.append(f"  {'Capex total [' + cur + ' M]':<{w}} {fmt(costs['capex_total'], 'm'):>14}")
    lines.append(f"  {'O&M, year 1 [' + cur + ' M]':<{w}} {fmt(costs['opex_year1'], 'm'):>14}")
    lines.append(f"  {'Decommissioning net, year L [' + cur + ' M]':<{w}} {fmt(costs['decommissioning_net'], 'm'):>14}")
    if "sources_and_uses" in d:
        lines.append("")
        lines.extend(sources_uses_table(d["sources_and_uses"], cur))
    if "montecarlo" in d:
        lines.append("")
        lines.extend(montecarlo_table(d["montecarlo"], cur))
    if "lender_cases" in d:
        lines.append("")
        lines.extend(lender_table(d["lender_cases"], cur))
    if yearly:
        lines.append("")
        lines.extend(annual_table(d["annual"], cur))
        if "distributions" in d["annual"][0]:
            lines.append("")
            lines.extend(annual_table(d["annual"], cur, WATERFALL_COLUMNS,
                                      f"Cash waterfall ({cur} k, nominal; DSRA, MRA and trapped cash: balances at "
                                      "the end of the year; lock-up: nothing paid out)", narrow=8, year=4))
    if d["variants"]:
        lines.append("")
        lines.extend(variants_table(d, cur))
    if d["warnings"]:
        lines.append("")
        lines.append("Warnings")
        for x in d["warnings"]:
            lines += textwrap.wrap(x, WIDTH, initial_indent="  - ", subsequent_indent="    ")
    return "\n".join(lines) + "\n"


def _f(value, how: str) -> str:
    return fmt(value, how)


def rose_table(rose: dict) -> list[str]:
    """The sector table: frequency, speeds, gross AEP and (with a layout) wake loss per sector."""
    wake = "wake_loss" in rose["rows"][0]
    head = (f"  {'Sector':>6} {'From [deg]':>10} {'Freq [%]':>9} {'Mean [m/s]':>10} {'A [m/s]':>8} {'k':>6} "
            f"{'Gross [MWh/yr]':>15} {'Share [%]':>9}" + (f" {'Wake [%]':>9}" if wake else ""))
    out = [f"Wind rose ({rose['sectors']} sectors of {rose['width_deg']:g} deg at hub height, {rose['source']})", head]
    for r in rose["rows"]:
        line = (f"  {r['sector']:>6} {r['centre_deg']:>10.0f} {_f(r['frequency'], 'pct'):>9} "
                f"{_f(r['mean_speed_mps'], '{:.2f}'):>10} {_f(r['weibull_scale_mps'], '{:.2f}'):>8} "
                f"{_f(r['weibull_shape'], '{:.2f}'):>6} {_f(r['gross_aep_mwh'], '{:,.0f}'):>15} "
                f"{_f(r['gross_share'], 'pct'):>9}")
        if wake:
            line += f" {_f(r['wake_loss'], 'pct'):>9}"
        out.append(line)
    return out


def wake_table(w: dict) -> list[str]:
    """The wake loss of every turbine and of the farm."""
    out = [f"Wake losses (Jensen/Park top hat, root-sum-square; k = {w['wake_decay_constant']:g}, {w['location']})",
           f"  {w['turbines']} turbine(s) ({w['layout'][:40]}), {spacing_text(w)}",
           f"  thrust coefficient: {w['thrust']}",
           f"  {'Turbine':<12} {'x [m]':>11} {'y [m]':>11} {'Gross [MWh/yr]':>15} {'Waked [MWh/yr]':>15} "
           f"{'Wake loss [%]':>14}"]
    gross = waked = 0.0
    for t in w["per_turbine"]:
        gross += t["gross_aep_mwh"]
        waked += t["waked_aep_mwh"]
        out.append(f"  {t['name'][:12]:<12} {t['x_m']:>11,.1f} {t['y_m']:>11,.1f} {t['gross_aep_mwh']:>15,.0f} "
                   f"{t['waked_aep_mwh']:>15,.0f} {_f(t['wake_loss'], 'pct'):>14}")
    out.append(f"  {'Farm':<12} {'':>11} {'':>11} {gross:>15,.0f} {waked:>15,.0f} {_f(w['farm_loss'], 'pct'):>14}")
    out.append(f"  per turbine {_f(w['turbine_loss_min'], 'pct')} to {_f(w['turbine_loss_max'], 'pct')} %; "
               f"directions every {w['direction_step_deg']:g} deg, speed bins of {w['speed_bin_mps']:g} m/s")
    return out


def spacing_text(w: dict) -> str:
    """The nearest pair of a layout in words ("one turbine" where there is no pair)."""
    d = w["nearest_spacing_m"]
    if d is None or not math.isfinite(d):
        return "one turbine, no wakes"
    return f"nearest pair {d:,.0f} m = {w['nearest_spacing_rotor_diameters']:.1f} rotor diameters"


def long_term_table(lt: dict) -> list[str]:
    """The long-term correction: the periods, the concurrent statistics, both methods and the result."""
    method = lt["method"].replace("_", " ")
    w = 32

    def row(label, text):
        return f"  {label:<{w}} {text}"

    ratio = lt["long_term_over_short_term"]
    return [
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


ANNUAL_COLUMNS = [("year", "Year", "{:d}"), ("energy_mwh", "Energy [MWh]", "{:,.0f}"),
                  ("price_per_mwh", "Price [{cur}/MWh]", "{:.2f}"), ("revenue", "Revenue [{cur} k]", "k"),
                  ("opex", "O&M [{cur} k]", "k"), ("tax", "Tax [{cur} k]", "k"), ("cfads", "CFADS [{cur} k]", "k"),
                  ("debt_service", "Debt service [{cur} k]", "k"), ("dscr", "DSCR [x]", "{:.3f}"),
                  ("project_cash_flow", "Project CF [{cur} k]", "k"), ("equity_cash_flow", "Equity CF [{cur} k]", "k")]


WATERFALL_COLUMNS = [("year", "Year", "{:d}"), ("cfads", "CFADS", "k"), ("debt_service", "Debt svc", "k"),
                     ("dsra_draw", "DSRA use", "k"), ("dsra_balance", "DSRA", "k"), ("mra_balance", "MRA", "k"),
                     ("lockup", "Lock-up", "yes"), ("lockup_balance", "Trapped", "k"),
                     ("unpaid_debt_service", "Unpaid", "k"), ("distributions", "Paid out", "k")]


def annual_table(rows, cur, columns=None, title="Yearly cash flow (t = 0 is construction; nominal money)",
                 narrow: int = 9, year: int = 9) -> list[str]:
    columns = ANNUAL_COLUMNS if columns is None else columns
    heads = [h.format(cur=cur) for _, h, _ in columns]
    widths = [max(len(h), narrow if k != "year" else year) for (k, _, _), h in zip(columns, heads)]
    out = textwrap.wrap(title, WIDTH, break_on_hyphens=False) + ["  " + "  ".join(f"{h:>{wd}}" for h, wd in zip(heads, widths))]
    for r in rows:
        cells = []
        for (k, _, how), wd in zip(columns, widths):
            v = r[k]
            if how == "yes":
                s = "yes" if v else "-"
            elif how == "k":
                s = "n/a" if v is None else f"{v / 1e3:,.0f}"
            elif v is None:
                s = "-"
            else:
                s = how.format(v)
            cells.append(f"{s:>{wd}}")
        out.append("  " + "  ".join(cells))
    return out


def variants_table(d, cur) -> list[str]:
    names = list(d["variants"])
    wd = max([14] + [len(n) for n in names])
    head = f"  {'':<34} {'base':>12}" + "".join(f" {n:>{wd}} {'change':>10}" for n in names)
    out = ["Variants (each against the base)", head]
    rows = [("metrics", k, METRIC_LABELS) for k in d["metrics"]] + \
        [("energy", k, ENERGY_LABELS) for k in ("net_aep_p50_mwh", "net_capacity_factor")]
    for block, k, labels in rows:
        how = labels[k][2]
        base = d[block][k]
        line = f"  {_label(labels, k, cur)[:34]:<34} {fmt(base, how):>12}"
        for n in names:
            v = d["variants"][n][block][k]
            diff = None if v is None or base is None else v - base
            line += f" {fmt(v, how):>{wd}} {_signed(diff, how):>10}"
        out.append(line)
    return out


def _signed(diff, how):
    if diff is None:
        return "n/a"
    s = fmt(diff, how)
    return s if s.startswith("-") else "+" + s


USES_LABELS = {"capex": "Capex", "upfront_fee": "Upfront debt fee", "interest_during_construction":
               "Interest during construction", "commitment_fee": "Commitment fee",
               "dsra_initial": "Debt service reserve, first funding", "total": "Total uses"}


def sources_uses_table(su: dict, cur: str) -> list[str]:
    """Uses and sources side by side, with the gearing, the check and the construction dates."""
    w = 38
    uses = [(USES_LABELS[k], v) for k, v in su["uses"].items()]
    sources = [("Senior debt", su["sources"]["debt"]), ("Equity", su["sources"]["equity"]),
               ("Total sources", su["sources"]["total"])]
    title = f"Sources and uses of funds [{cur} M]"
    if "commercial_operation" in su:
        title += (f" (close {su['financial_close']}, operation {su['commercial_operation']}, "
                  f"{su['construction_months']} months, {su['drawdown'].replace('_', '-')} drawdown, "
                  f"{su['funding'].replace('_', ' ')})")
    out = textwrap.wrap(title, WIDTH, break_on_hyphens=False)
    out.append(f"  {'Uses':<{w}} {'':>10}   Sources")
    for i in range(max(len(uses), len(sources))):
        left = f"{uses[i][0]:<{w}} {fmt(uses[i][1], 'm'):>10}" if i < len(uses) else " " * (w + 11)
        right = f"{sources[i][0]:<24} {fmt(sources[i][1], 'm'):>10}" if i < len(sources) else ""
        out.append(f"  {left}   {right}".rstrip())
    check = "balanced" if su["balanced"] else "NOT BALANCED"
    out.append(f"  gearing (debt / uses) {fmt(su['gearing'], 'pct')} %; sources = uses: {check}")
    return out


LENDER_COLUMNS = [("min_dscr", "Min DSCR", "{:.3f}"), ("avg_dscr", "Avg DSCR", "{:.3f}"), ("llcr", "LLCR", "{:.3f}"),
                  ("years_in_lockup", "Lock-up", "{:d}"), ("dsra_draws", "DSRA drawn", "k"),
                  ("unpaid_debt_service", "Unpaid DS", "k"), ("equity_irr", "Equity IRR", "pct")]


def lender_table(cases: dict, cur: str) -> list[str]:
    """One line per lender case, the debt locked at the base sizing (money in thousands)."""
    heads = [h for _, h, _ in LENDER_COLUMNS]
    widths = [max(len(h), 8) for h in heads]
    out = ["Lender cases (debt and debt service locked at the base sizing)",
           f"  lock-up in years; DSRA drawn and unpaid debt service over the life in {cur} thousands; IRR in %",
           f"  {'Case':<28}" + "".join(f" {h:>{w}}" for h, w in zip(heads, widths))]
    for name, r in cases.items():
        cells = []
        for (k, _, how), w in zip(LENDER_COLUMNS, widths):
            v = r[k]
            s = "n/a" if v is None else (f"{v / 1e3:,.0f}" if how == "k" else fmt(v, how))
            cells.append(f" {s:>{w}}")
        label = r["label"] if len(r["label"]) <= 28 else r["label"][:25] + "..."
        out.append(f"  {label:<28}" + "".join(cells))
    return out


MC_LABELS = {
    "net_aep_year1_mwh": ("Net energy, year 1", "MWh", "{:,.0f}"),
    "net_aep_mean_mwh": ("Net energy, life mean", "MWh/yr", "{:,.0f}"),
    "capex_total": ("Capex total", "{cur} M", "m"),
    "opex_mean": ("O&M, life mean", "{cur} M/yr", "m"),
}


def montecarlo_table(mc: dict, cur: str) -> list[str]:
    out = [f"Monte Carlo ({mc['trials']:,} trials, seed {mc['seed']}; P90 = the conservative side)",
           f"  {'':<34} {'P50':>12} {'P75':>12} {'P90':>12} {'P99':>12} {'mean':>12} {'sd':>12}"]
    for k, stats in mc.items():
        if not isinstance(stats, dict) or "p50" not in stats:
            continue
        labels = next((lab for lab in (METRIC_LABELS, ENERGY_LABELS, MC_LABELS) if k in lab), None)
        label = _label(labels, k, cur)[:34] if labels else k
        how = labels[k][2] if labels else "{:.4g}"
        out.append(f"  {label:<34}" + "".join(f" {fmt(stats[s], how):>12}"
                                              for s in ("p50", "p75", "p90", "p99", "mean", "sd")))
    for k, label in (("prob_min_dscr_below_1", "P(minimum DSCR < 1.0) [%]"),
                     ("prob_min_dscr_below_target", "P(minimum DSCR < target) [%]"),
                     ("prob_equity_irr_below_target", "P(equity IRR < target) [%]"),
                     ("prob_lockup_any_year", "P(lock-up in any year) [%]"),
                     ("prob_dsra_drawn", "P(DSRA drawn) [%]"),
                     ("prob_debt_service_unpaid", "P(debt service unpaid) [%]")):
        if k in mc:
            out.append(f"  {label:<34} {fmt(mc[k], 'pct'):>12}")
    if "expected_cash_trapped" in mc:
        out.append(f"  {'Expected cash trapped [' + cur + ' M]':<34} {fmt(mc['expected_cash_trapped'], 'm'):>12}")
    return out
