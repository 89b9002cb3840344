"""The lender workbook's cover, its lender cases and its print setup.

The Lender cases sheet runs the standard downside cases with the debt locked at the base
sizing (the held schedule on Inputs, whatever the debt mode): each case's inputs are formulas
on the base inputs, each case's yearly lines are formulas on the base lines, and the table at
the top gives per case the minimum and average DSCR, the LLCR, the equity IRR and the years
below 1.0x. A selector shows one case's yearly lines.

Print: A4 landscape (letter for a USD scenario), the year row and the label columns repeated on
every page, the years split across pages at a scale that keeps text at 8 pt or more, a header
with the project name and a footer with the export time and "page x of y".
"""

from __future__ import annotations

import hashlib
import math
from datetime import datetime, timezone
from pathlib import Path

from openpyxl.styles import Alignment
from openpyxl.utils import get_column_letter
from openpyxl.worksheet.datavalidation import DataValidation

from lcoe.finance.waterfall import structure_of
from lcoe.inputs.about import CAUTION, __version__
from lcoe.outputs.workbook.cells import (
    BLUE,
    BOLD,
    CASES_SHEET,
    FIRST_ROW,
    HEAD_FILL,
    INPUT_FILL,
    ITALIC,
    T0_COL,
    TITLE,
    YEAR_ROW,
    Book,
    Timeline,
    absolute,
    xref,
)
from lcoe.outputs.workbook.reserves import waterfall_block
from lcoe.outputs.workbook.sheets import partial

BASE_FONT_PT = 11.0    # openpyxl's default font (Calibri 11)
MIN_PRINT_PT = 8.0     # no printed text below this
MIN_SCALE = math.ceil(100 * MIN_PRINT_PT / BASE_FONT_PT)   # 73 %
#: printable width of a landscape page at 100 %, in character widths of the default font (about
#: 7 px at 96 dpi): A4 297 mm and letter 279 mm less 2 x 0.7 in margins (common practice)
PAGE_CHARS = {"a4": 95.0, "letter": 90.0}   # as LibreOffice prints them (seen in its PDF)

# lender cases: (label, energy factor, availability change, O&M factor, price factor)
LENDER_CASES = (
    ("Base", "1", "0", "1", "1"),
    ("P90 1-yr", "factor_p90_1yr", "0", "1", "1"),
    ("P99 1-yr", "factor_p99_1yr", "0", "1", "1"),
    ("P90 10-yr", "factor_p90_10yr", "0", "1", "1"),
    ("O&M +10 %", "1", "0", "1.1", "1"),
    ("Availability -2 points", "1", "-0.02", "1", "1"),
    ("Price -10 %", "1", "0", "1", "0.9"),
    ("Combined downside", "factor_p90_1yr", "-0.02", "1.1", "0.9"),
)


def scenario_sha256(scn) -> str | None:
    """SHA-256 of the scenario file as read (None where it came from no file)."""
    try:
        return hashlib.sha256(Path(scn.source).read_bytes()).hexdigest()
    except OSError:
        return None


# --------------------------------------------------------------------------- cover

def write_cover(book: Book, ws, report, sha256: str | None, when: datetime | None = None) -> None:
    """Tool version, the scenario file and its SHA-256, the export time, the caution, the contents
    (each a link to its sheet) and a free cell for the user's version notes."""
    b = book
    scn = report.case.scenario
    when = when or datetime.now(timezone.utc)
    ws.column_dimensions["A"].width = 24
    ws.column_dimensions["B"].width = 70
    b.text(ws, 1, 1, f"Lender workbook: {scn.project.name}", font=TITLE)
    b.text(ws, 2, 1, CAUTION, font=ITALIC)
    ws.merge_cells("A2:B2")
    ws.row_dimensions[2].height = 32
    ws.cell(2, 1).alignment = Alignment(wrap_text=True, vertical="top")
    rows = [("Written by", f"lcoe {__version__}"), ("Scenario file", Path(scn.source).name),
            ("Scenario SHA-256", sha256 or "(not from a file)"),
            ("Exported (UTC)", when.strftime("%Y-%m-%d %H:%M:%S")), ("Currency", scn.project.currency),
            ("Debt mode", "see Inputs (locked at export)")]
    r = 4
    for label, value in rows:
        b.text(ws, r, 1, label, font=BOLD)
        b.text(ws, r, 2, value)
        r += 1
    r += 1
    b.text(ws, r, 1, "Contents", font=BOLD, fill=HEAD_FILL)
    ws.cell(r, 2).fill = HEAD_FILL
    r += 1
    purpose = {"Summary": "every metric as a formula, with the engine's value when written",
               "Inputs": "every assumption once; blue on yellow may be changed, grey is the engine's",
               "Energy": "gross to net energy, sigma and P-values, the wind and the power curve",
               "Cash flow": "the P50 case year by year", "Debt": "sizing case, capacity, schedule, debt mode",
               CASES_SHEET: "downside cases with the debt locked at the base sizing",
               "Monte Carlo": "engine values: trials of lcoe", "Sensitivity": "engine values: tornado and sweep",
               "Checks": "live tests; a failed check blanks the results it concerns",
               "Notes": "conventions and sources"}
    for title in book.wb.sheetnames:
        if title == ws.title:
            continue
        c = b.text(ws, r, 1, title)
        c.hyperlink = f"#'{title}'!A1"
        c.font = BLUE
        b.text(ws, r, 2, purpose.get(title, ""), font=ITALIC)
        r += 1
    r += 1
    b.text(ws, r, 1, "Your version notes", font=BOLD)
    c = ws.cell(r, 2)
    c.fill = INPUT_FILL
    c.font = BLUE
    c.alignment = Alignment(wrap_text=True, vertical="top")
    ws.merge_cells(start_row=r, start_column=2, end_row=r + 5, end_column=2)
    b.name("user_notes", ws, absolute(2, r))


# --------------------------------------------------------------------------- lender cases

def write_lender_cases(book: Book, en: Timeline, cf: Timeline, scn) -> Timeline:
    """The Lender cases sheet: a table of the cases and the yearly lines of each (debt locked)."""
    ws = book.sheet(CASES_SHEET)
    H = cf.H
    tl = Timeline(book, ws, H, "Lender cases: the debt locked at the base sizing",
                  "Each case changes the base inputs by the formulas in the table; the debt, its fee, interest and "
                  "service are as held at close (Inputs), whatever the debt mode.")
    b = book
    n = len(LENDER_CASES)
    head = FIRST_ROW
    heads = ("Case", "Energy factor", "Availability change", "O&M factor", "Price factor", "Min DSCR",
             "Average DSCR", "LLCR", "Equity IRR", "Years below 1.0x")
    for j, h in enumerate(heads, start=1):
        b.text(ws, head, j, h, font=BOLD, fill=HEAD_FILL).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[head].height = 30
    tl.next = head + n + 5
    y = tl.y
    op = lambda t: cf.x("op", t)  # noqa: E731
    gross = "gross_aep_mwh*loss_factor*(1-downtime_fraction)"
    keys = []
    # the equity contribution before the reserves, with the debt held at close (with a construction period:
    # the funding passes of the Debt sheet, which hold that debt in the locked mode; n/a in the resized mode)
    equity0 = ("(capex_total+debt_fee_held-debt_held)" if scn.construction is None
               else "IF(debt_locked=1,equity_before_reserves,0)")
    for i, (label, ef, da, omf, pf) in enumerate(LENDER_CASES):
        r = head + 1 + i
        b.text(ws, r, 1, label, font=BOLD)
        for j, (expr, fmt) in enumerate(((ef, "factor"), (da, "pct"), (omf, "ratio"), (pf, "ratio")), start=2):
            b.formula(ws, r, j, expr, fmt)
        k = f"case{i}"
        keys.append(k)
        ef_c, da_c, om_c, pf_c = (absolute(j, r) for j in (2, 3, 4, 5))
        c = _cell_of(tl, k)
        tl.section(f"{label}: energy x {ef}, availability {da}, O&M x {omf}, price x {pf}")
        tl.line(f"{k}_avail", "Availability", "fraction",
                lambda t, da_c=da_c, c=c: f"IF({op(t)}=0,0,MAX(0,MIN(1,IF({y(t)}<=1,availability_first_year,"
                                     f"availability_mature)+{da_c}-{en.x('ageing', t)})))", "pct")
        tl.line(f"{k}_energy", "Net energy", "MWh",
                lambda t, ef_c=ef_c, c=c: f"IF({op(t)}=0,0,{gross}*{c('avail', t)}{partial(scn, en.x('share', t))}"
                                         f"*{en.x('degr', t)})*{ef_c}",
                "mwh")
        tl.line(f"{k}_revenue", "Revenue", "{cur}",
                lambda t, pf_c=pf_c, c=c: f"{c('energy', t)}*({cf.x('price', t)}*{pf_c}+{cf.x('credit', t)})", "money")
        tl.line(f"{k}_opex", "O&M", "{cur}",
                lambda t, om_c=om_c, c=c: f"({cf.x('om_fixed', t)}+{cf.x('om_fail', t)}+{cf.x('om_overhaul', t)}+"
                                     f"variable_per_mwh*{c('energy', t)})*{cf.x('esc', t)}*{om_c}"
                                     f"+land_lease_share_of_revenue*{c('revenue', t)}", "money")
        tl.line(f"{k}_pre", "Operating cash flow before tax", "{cur}",
                lambda t, c=c: f"{c('revenue', t)}-{c('opex', t)}-{cf.x('decommissioning', t)}", "money")
        tl.line(f"{k}_taxable", "Taxable income (held interest)", "{cur}",
                lambda t, c=c: f"{c('pre', t)}-{cf.x('depreciation', t)}-{HELD_INTEREST(t, y)}", "money")
        tl.line(f"{k}_cum", "Cumulative taxable income", "{cur}",
                lambda t, c=c: f"{c('cum', t - 1)}+{c('taxable', t)}", "money", t0=lambda t, c=c: c("taxable", t))
        tl.line(f"{k}_peak", "Running maximum, floored at zero", "{cur}",
                lambda t, c=c: f"MAX({c('peak', t - 1)},{c('cum', t)})", "money", t0=lambda t, c=c: f"MAX(0,{c('cum', t)})")
        tl.line(f"{k}_tax", "Tax paid", "{cur}", lambda t, c=c: f"tax_rate*({c('peak', t)}-{c('peak', t - 1)})", "money",
                t0=lambda t, c=c: f"tax_rate*{c('peak', t)}")
        tl.line(f"{k}_cfads", "CFADS", "{cur}", lambda t, c=c: f"{c('pre', t)}-{c('tax', t)}", "money", bold=True)
        tl.line(f"{k}_ds", "Debt service, held", "{cur}", lambda t, c=c: HELD_DS(t, y), "money")
        tl.line(f"{k}_dscr", "DSCR", "x", lambda t, c=c: f"IF({c('ds', t)}>0,{c('cfads', t)}/{c('ds', t)},\"\")", "ratio",
                name=f"lender_case_{i}_dscr")
        if structure_of(scn) is None:
            tl.line(f"{k}_equity", "Equity cash flow", "{cur}",
                    lambda t, c=c: f"{c('cfads', t)}-{c('ds', t)}-IF({y(t)}=0,{equity0},0)", "money")
        else:
            waterfall_block(tl, f"{k}_w", lambda t, c=c: c("cfads", t), lambda t, c=c: c("ds", t),
                            lambda t: en.x("share", t), f"-{equity0}", cost_factor=om_c)
            tl.line(f"{k}_equity", "Equity cash flow (from the waterfall)", "{cur}",
                    lambda t, c=c: c("wequity", t), "money")
        collapse(ws, [tl.rows[f"{k}_{x}"] for x in ("avail", "energy", "revenue", "opex", "pre", "taxable", "cum",
                                                     "peak", "tax")])
        dscr, eq = tl.span(f"{k}_dscr"), tl.span(f"{k}_equity")
        cfads, ds = tl.span(f"{k}_cfads"), tl.span(f"{k}_ds")
        b.formula(ws, r, 6, f"IF(COUNT({dscr})>0,MIN({dscr}),\"n/a\")", "ratio")
        b.formula(ws, r, 7, f"IF(COUNT({dscr})>0,AVERAGE({dscr}),\"n/a\")", "ratio")
        b.formula(ws, r, 8, f"IF(debt_held>0,SUMPRODUCT(({ds}>0)*{cfads},(1+interest_rate_held)^-{xref(en.ws, en.span('clock'))})"
                            f"/debt_held,\"n/a\")", "ratio")
        irr = f"IFERROR(IF(AND(MIN({eq})<0,MAX({eq})>0),IRR({eq},0.1),\"n/a\"),\"n/a\")"
        if scn.construction is not None:     # the funding passes hold the debt at close in the locked mode only
            irr = f"IF(debt_locked=1,{irr},\"locked mode only\")"
        b.formula(ws, r, 9, irr, "pct")
        b.formula(ws, r, 10, f"COUNTIF({dscr},\"<1\")", "int")
        for j, nm in ((6, "min_dscr"), (7, "avg_dscr"), (8, "llcr"), (9, "equity_irr"), (10, "years_below_1")):
            b.name(f"lender_case_{i}_{nm}", ws, absolute(j, r))
    # the selector: one case's DSCR and CFADS across the years
    sel = head + n + 2
    b.text(ws, sel, 1, "Show the case", font=BOLD)
    chosen = b.text(ws, sel, 2, LENDER_CASES[-1][0], font=BLUE, fill=INPUT_FILL)
    dv = DataValidation(type="list", formula1=f"$A${head + 1}:$A${head + n}", allow_blank=False)
    ws.add_data_validation(dv)
    dv.add(chosen)
    b.name("lender_case_selected", ws, absolute(2, sel))
    pick = f"MATCH(lender_case_selected,$A${head + 1}:$A${head + n},0)"
    for off, key, label in ((1, "dscr", "DSCR of the case shown"), (2, "cfads", "CFADS of the case shown")):
        b.text(ws, sel + off, 1, label)
        for t in range(H + 1):
            refs = ",".join(tl.c(f"{k}_{key}", t) for k in keys)
            b.formula(ws, sel + off, 3 + t, f"CHOOSE({pick},{refs})", "ratio" if key == "dscr" else "money")
    tl.render()
    return tl


def _cell_of(tl: Timeline, k: str):
    return lambda key, t: tl.c(f"{k}_{key}", t)


def HELD_INTEREST(t: int, y) -> str:  # noqa: N802
    return "0" if t == 0 else f"has_debt*INDEX(held_interest,{y(t)})"


def HELD_DS(t: int, y) -> str:  # noqa: N802
    return "0" if t == 0 else f"has_debt*INDEX(held_debt_service,{y(t)})"


# --------------------------------------------------------------------------- print

def _content_chars(ws, last_col: int) -> float:
    total = 0.0
    for col in range(1, last_col + 1):
        w = ws.column_dimensions[get_column_letter(col)].width
        total += w if w else 8.43
    return total


def collapse(ws, rows) -> None:
    """Rows of working shown on demand: an outline group, closed (not printed until opened)."""
    for r in rows:
        ws.row_dimensions[r].outlineLevel = 1
        ws.row_dimensions[r].hidden = True
    ws.sheet_properties.outlinePr.summaryBelow = False


def print_setup(book: Book, scn, timelines, print_years: int) -> None:
    """Paper, orientation, print titles, a scale that keeps text at 8 pt or more, header and footer."""
    paper = "letter" if scn.project.currency.upper() == "USD" else "a4"
    stamp = datetime.now(timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    name = scn.project.name.replace("&", "&&")
    yearly = {tl.ws.title for tl in timelines} | {CASES_SHEET}
    for ws in book.wb.worksheets:
        ps = ws.page_setup
        ps.orientation = "landscape"
        ps.paperSize = ws.PAPERSIZE_LETTER if paper == "letter" else ws.PAPERSIZE_A4
        ws.sheet_properties.pageSetUpPr.fitToPage = False
        width = _content_chars(ws, max(ws.max_column, 1))
        if ws.title in yearly:
            # the label columns repeat on every page: the years go across in pages of their own
            ws.print_title_rows = f"{YEAR_ROW}:{YEAR_ROW + 1}"
            ws.print_title_cols = "A:B"
            ws.print_area = f"A1:{get_column_letter(T0_COL + print_years)}{ws.max_row}"
            ws.page_setup.pageOrder = "overThenDown"
            scale = MIN_SCALE
        else:
            scale = max(MIN_SCALE, min(100, int(100 * PAGE_CHARS[paper] / max(width, 1.0))))
        ps.scale = scale
        ws.print_options.gridLines = False
        ws.page_margins.left = ws.page_margins.right = 0.7
        ws.page_margins.top = ws.page_margins.bottom = 0.75
        ws.oddHeader.center.text = f"{name}: {ws.title}"
        ws.oddHeader.center.size = 9
        ws.oddFooter.left.text = f"lcoe {__version__}, exported {stamp}. Indicative only."
        ws.oddFooter.left.size = 8
        ws.oddFooter.right.text = "page &P of &N"
        ws.oddFooter.right.size = 8
