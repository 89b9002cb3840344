"""The portfolio results as a workbook of values (``lcoe portfolio --workbook``).

One sheet, Portfolio: the sites, the diversification benefit, the life figures, the
pooled debt and the yearly P-values, then the correlation matrix; a Notes sheet holds
the conventions and the caution. Every number is the engine's value (nothing here is a
formula); scenario text is written as text. The file is written atomically.
"""

from __future__ import annotations

from pathlib import Path

from openpyxl.utils import get_column_letter

from lcoe.outputs.files import write_atomic
from lcoe.outputs.workbook.cells import BOLD, HEAD_FILL, ITALIC, SECTION_FILL, TITLE, Book

SHEET, NOTES = "Portfolio", "Notes"
SITE_COLUMNS = (("name", "Site", None), ("share", "Share", "pct"),
                ("capacity_mw", "Capacity [MW]", "price"), ("lifetime_years", "Life [years]", "int"),
                ("net_aep_p50_mwh", "P50 net AEP x share [MWh/yr]", "mwh"),
                ("debt_amount", "Debt at close x share [{cur}]", "money"),
                ("energy_share", "Share of portfolio energy", "pct"))
SITE_MC = (("energy_1yr_mwh", "Net energy, year 1 [MWh]", "mwh"),
           ("energy_10yr_mwh", "Net energy, years 1-10 mean [MWh/yr]", "mwh"),
           ("energy_life_mwh", "Net energy, life [MWh]", "mwh"), ("revenue_life", "Revenue, life [{cur}]", "money"),
           ("cfads_life", "CFADS, life [{cur}]", "money"), ("equity_npv", "Equity NPV [{cur}]", "money"),
           ("min_dscr", "Minimum DSCR [x]", "ratio"))
LIFE_EXTRA = (("equity_irr", "Equity IRR of the summed flows", "pct"),
              ("pooled_min_dscr", "Minimum DSCR, debt pooled [x]", "ratio"))
STATS = ("p50", "p75", "p90", "p99", "mean", "sd")


def build(report: dict) -> Book:
    cur = report["currency"]
    b = Book(cur)
    ws = b.sheet(SHEET)
    b.text(ws, 1, 1, f"{report['portfolio']}: portfolio Monte Carlo", font=TITLE)
    b.text(ws, 2, 1, f"{report['trials']:,} trials, seed {report['seed']}; values from the engine, not formulas. "
                     "P90 is the 10th percentile (the low side).", font=ITALIC)
    b.text(ws, 3, 1, report["caution"], font=ITALIC)
    r = 5

    def head(row, labels):
        for j, text in enumerate(labels, 1):
            b.text(ws, row, j, b.unit(text), font=BOLD, fill=HEAD_FILL)

    def section(row, title):
        b.text(ws, row, 1, title, font=BOLD, fill=SECTION_FILL)
        return row + 1

    r = section(r, "Sites (figures times the owned share)")
    labels = [h for _, h, _ in SITE_COLUMNS] + [f"{h.split(' [')[0]} P90" for _, h, _ in SITE_MC] + ["Scenario file"]
    head(r, labels)
    r += 1
    for s in report["sites"]:
        for j, (key, _, how) in enumerate(SITE_COLUMNS, 1):
            if how is None:
                b.text(ws, r, j, s[key])
            else:
                b.num(ws, r, j, s[key], how)
        for j, (key, _, how) in enumerate(SITE_MC, len(SITE_COLUMNS) + 1):
            b.num(ws, r, j, s["montecarlo"][key]["p90"], how)
        b.text(ws, r, len(SITE_COLUMNS) + len(SITE_MC) + 1, s["scenario"])
        r += 1

    r = section(r + 1, "Diversification: the portfolio's P90 against the sum of the sites' own P90s")
    head(r, ["Measure", "Portfolio P90", "Sum of site P90s", "Benefit", "Benefit share", "Portfolio worst-10 % mean"])
    r += 1
    fmts = {k: how for k, _, how in SITE_MC}
    names = {k: h for k, h, _ in SITE_MC}
    for key, row in report["diversification"].items():
        b.text(ws, r, 1, b.unit(names[key]))
        for j, k in enumerate(("portfolio_p90", "sum_of_site_p90", "benefit"), 2):
            b.num(ws, r, j, row[k], fmts[key])
        b.num(ws, r, 5, row["benefit_share"], "pct")
        b.num(ws, r, 6, row["portfolio_tail_mean"], fmts[key])
        r += 1

    r = section(r + 1, "The portfolio over its life")
    head(r, ["Measure"] + [s.upper() if s.startswith("p") else s for s in STATS])
    r += 1
    rows = [(k, h, how) for k, h, how in SITE_MC if k != "min_dscr"] + list(LIFE_EXTRA)
    for key, label, how in rows:
        b.text(ws, r, 1, b.unit(label))
        for j, st in enumerate(STATS, 2):
            b.num(ws, r, j, report["life"][key][st], how)
        r += 1
    pooled = report["pooled_debt"]
    if pooled is not None:
        for label, value, how in (("Debt at close, sum x shares [{cur}]", pooled["debt_amount"], "money"),
                                  ("P(minimum DSCR of the pool < 1.0)", pooled["prob_min_dscr_below_1"], "pct"),
                                  ("P(some site's own minimum DSCR < 1.0)",
                                   pooled["prob_any_site_min_dscr_below_1"], "pct")):
            b.text(ws, r, 1, b.unit(label))
            b.num(ws, r, 2, value, how)
            r += 1

    r = section(r + 1, "The portfolio year by year (nominal money)")
    lines = (("energy_mwh", "Energy [MWh]", "mwh"), ("revenue", "Revenue [{cur}]", "money"),
             ("cfads", "CFADS [{cur}]", "money"), ("equity_cash_flow", "Equity cash flow [{cur}]", "money"))
    labels = ["Year"] + [f"{h.split(' [')[0]} {st.upper() if st.startswith('p') else st}"
                         for _, h, _ in lines for st in ("p50", "p90", "p99", "mean")] + \
        ["Debt service [{cur}]", "DSCR at P90 CFADS [x]"]
    head(r, labels)
    r += 1
    for row in report["annual"]:
        b.num(ws, r, 1, row["year"], "int")
        j = 2
        for key, _, how in lines:
            for st in ("p50", "p90", "p99", "mean"):
                b.num(ws, r, j, row[key][st], how)
                j += 1
        b.num(ws, r, j, row["debt_service"], "money")
        b.num(ws, r, j + 1, row["dscr_at_p90_cfads"], "ratio")
        r += 1

    r = section(r + 1, "Correlation of yearly mean wind speed between the sites")
    head(r, ["Site"] + [s["name"] for s in report["sites"]])
    r += 1
    for s, row in zip(report["sites"], report["correlation"]["matrix"]):
        b.text(ws, r, 1, s["name"])
        for j, v in enumerate(row, 2):
            b.num(ws, r, j, v, "rate")
        r += 1
    ws.column_dimensions["A"].width = 44
    for j in range(2, 26):
        ws.column_dimensions[get_column_letter(j)].width = 16
    ws.freeze_panes = ws.cell(5, 2)

    notes = b.sheet(NOTES)
    corr = report["correlation"]
    rule = (f"rho = exp(-distance / {corr['length_km']:g} km) between the site coordinates"
            if corr["rule"] == "distance" else "the matrix given in the portfolio file")
    for i, text in enumerate((
            "Notes", report["caution"],
            f"Source: {report['source']}; {report['trials']:,} trials, seed {report['seed']}, "
            f"{report['block_trials']} trials per block.",
            f"Yearly wind correlated between sites by {rule}; long-term speed terms {corr['long_term']}.",
            "Each site runs through the single-site engine with its debt as sized at its close; its yearly "
            "lines times its share are summed by year.",
            "A site's P90 is its own 10th percentile over the same trials; the diversification benefit is the "
            "portfolio's P90 minus the sum of the sites' P90s.",
            "Pooled DSCR: the portfolio's CFADS over the sum of the sites' debt service, year by year; its minimum "
            "over the years with debt service.",
            *[f"Warning: {w}" for w in report["warnings"]]), 1):
        b.text(notes, i, 1, text, font=TITLE if i == 1 else None)
    notes.column_dimensions["A"].width = 120
    return b


def write(report: dict, path) -> Path:
    """Write the portfolio workbook atomically (nothing is left behind on failure)."""
    book = build(report)
    return write_atomic(path, lambda tmp: book.wb.save(tmp), option="--workbook")
