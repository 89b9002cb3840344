"""Cell writers, styles and the yearly-line helper of the lender workbook (:mod:`lcoe.outputs.workbook`).

Every string goes through :meth:`Book.text`, which stores it as text even when it
starts with = + - or @, so no scenario text can become a formula.
"""

from __future__ import annotations

import math

import numpy as np
from openpyxl import Workbook
from openpyxl.styles import Alignment, Font, PatternFill
from openpyxl.utils import get_column_letter, quote_sheetname
from openpyxl.workbook.defined_name import DefinedName

from lcoe.inputs.schema import DEPRECIATION_METHODS, LOSS_CATEGORIES, SIZING_CASES

# sheet names (plain trade words)
COVER, SUMMARY, INPUTS, ENERGY, CASHFLOW, DEBT = "Cover", "Summary", "Inputs", "Energy", "Cash flow", "Debt"
CASES_SHEET = "Lender cases"
MONTECARLO, SENSITIVITY, CHECKS, NOTES = "Monte Carlo", "Sensitivity", "Checks", "Notes"

T0_COL = 3          # column C holds t = 0 on every yearly sheet
YEAR_ROW = 3        # the row of years on every yearly sheet
FIRST_ROW = 6       # first line below the years and phase rows
HOURS_PER_YEAR = 8760
SPARE_ROWS = 3      # empty rows left in the component and overhaul tables for additions
CHECK_TOL = 1e-9    # relative tolerance of the debt checks (the engine converges to 1e-12 of capex)
LABEL_WIDTH = 40    # the label column of the yearly sheets [characters]
MIN_HORIZON = 40    # the yearly sheets run to at least this many years, whatever the life
SNAP = 1e-10        # a closing balance within SNAP x debt of zero is zero (rounding residue, never a figure)

FORMATS = {
    "money": '#,##0;[Red]-#,##0', "mwh": '#,##0', "price": '#,##0.00', "pct": '0.00%', "share": '0.0000%',
    "ratio": '0.000', "factor": '0.000000', "int": '0', "kw": '#,##0', "flag": '0', "density": '0.0000',
    "ok": '"OK";"-";"FAIL"', "text": '@', "days": '0.0', "rate": '0.0000', "general": "General", "int_blank": '0;-0;;@',
}

BLUE = Font(color="0000CC")
BOLD = Font(bold=True)
TITLE = Font(bold=True, size=14)
ITALIC = Font(italic=True, color="555555")
INPUT_FILL = PatternFill("solid", fgColor="FFF2CC")
ENGINE_FILL = PatternFill("solid", fgColor="E7E6E6")
HEAD_FILL = PatternFill("solid", fgColor="DDEBF7")
SECTION_FILL = PatternFill("solid", fgColor="F2F2F2")
FAIL_FILL = PatternFill("solid", fgColor="F8CBAD")
ENGINE_MARK = "engine value"

METRICS = {
    "lcoe_nominal_per_mwh": ("LCOE, nominal", "{cur}/MWh", "price"),
    "lcoe_real_per_mwh": ("LCOE, real (year-0 money)", "{cur}/MWh", "price"),
    "project_npv": ("Project NPV, after tax, at the discount rate", "{cur}", "money"),
    "project_irr": ("Project IRR, after tax", "per year", "pct"),
    "equity_npv": ("Equity NPV at the equity target return", "{cur}", "money"),
    "equity_irr": ("Equity IRR", "per year", "pct"),
    "debt_amount": ("Debt at close (locked: held; resized: in the sheet)", "{cur}", "money"),
    "min_dscr": ("Minimum DSCR, P50 case", "x", "ratio"),
    "avg_dscr": ("Average DSCR, P50 case", "x", "ratio"),
    "llcr": ("LLCR, P50 case", "x", "ratio"),
    "payback_year": ("Equity payback year", "year", "int"),
    "breakeven_ppa_price_per_mwh": ("Break-even PPA price (engine goal seek)", "{cur}/MWh", "price"),
}
EXTRA_MC = {
    "net_aep_year1_mwh": ("Net energy, year 1", "MWh", "mwh"),
    "net_aep_mean_mwh": ("Net energy, mean of the life", "MWh/yr", "mwh"),
    "capex_total": ("Capex total", "{cur}", "money"),
    "opex_mean": ("O&M, mean of the life", "{cur}/yr", "money"),
}
HISTOGRAM_KEYS = ("lcoe_nominal_per_mwh", "equity_irr", "min_dscr", "net_aep_year1_mwh")
CASES = SIZING_CASES
DEBT_MODES = ("locked", "resized")
DEPRECIATION = DEPRECIATION_METHODS
LOSSES = LOSS_CATEGORIES


# --------------------------------------------------------------------------- cells and names

class Book:
    """An openpyxl workbook with safe writers, styles and defined names."""

    def __init__(self, currency: str):
        self.wb = Workbook()
        self.wb.remove(self.wb.active)
        self.cur = currency

    def sheet(self, title: str):
        ws = self.wb.create_sheet(title)
        ws.sheet_view.zoomScale = 90
        return ws

    def text(self, ws, row: int, col: int, value, font=None, fill=None):
        """Any text, stored as text: a leading = + - @ never makes it a formula."""
        c = ws.cell(row, col)
        c.value = str(value)
        c.data_type = "s"
        if font is not None:
            c.font = font
        if fill is not None:
            c.fill = fill
        return c

    def num(self, ws, row: int, col: int, value, fmt: str | None = None, font=None, fill=None):
        """A number; None or NaN becomes the text n/a."""
        if value is None or (isinstance(value, float) and not math.isfinite(value)):
            return self.text(ws, row, col, "n/a", font=font, fill=fill)
        c = ws.cell(row, col)
        c.value = int(value) if isinstance(value, (bool, np.bool_)) else (
            int(value) if isinstance(value, (int, np.integer)) else float(value))
        if fmt:
            c.number_format = FORMATS[fmt]
        if font is not None:
            c.font = font
        if fill is not None:
            c.fill = fill
        return c

    def formula(self, ws, row: int, col: int, expr: str, fmt: str | None = None, font=None):
        c = ws.cell(row, col)
        c.value = "=" + expr
        if fmt:
            c.number_format = FORMATS[fmt]
        if font is not None:
            c.font = font
        return c

    def unit(self, text: str) -> str:
        return text.replace("{cur}", self.cur)

    def name(self, name: str, ws, ref: str):
        """A workbook-level defined name for an absolute reference on ``ws``."""
        dn = DefinedName(name, attr_text=f"{quote_sheetname(ws.title)}!{ref}")
        self.wb.defined_names[name] = dn


def absolute(col: int, row: int) -> str:
    return f"${get_column_letter(col)}${row}"


def xref(ws, ref: str) -> str:
    return f"{quote_sheetname(ws.title)}!{ref}"


class Timeline:
    """Yearly lines on one sheet: column C is t = 0, D.. the years 1..H of the horizon.

    The horizon H is fixed when the workbook is written (the longest life among the scenario
    and its variants, at least :data:`MIN_HORIZON` years); the operating life is an input, and a
    live operating mask ends revenue and costs after it. Single values sit in column B, one a
    row, their unit in the label; the t = 0 column holds yearly values only.
    """

    def __init__(self, book: Book, ws, horizon: int, title: str, note: str):
        self.b, self.ws, self.H = book, ws, horizon
        self.rows: dict[str, int] = {}
        self.pending: list = []
        self.singles: list = []
        self.next = FIRST_ROW
        book.text(ws, 1, 1, title, font=TITLE)
        book.text(ws, 2, 1, note, font=ITALIC)
        book.text(ws, YEAR_ROW, 1, "Year", font=BOLD, fill=HEAD_FILL)
        book.text(ws, YEAR_ROW, 2, "unit / value", font=BOLD, fill=HEAD_FILL)
        book.text(ws, YEAR_ROW + 1, 1, "Phase", font=ITALIC)
        for t in range(horizon + 1):
            c = book.num(ws, YEAR_ROW, T0_COL + t, t, "int", font=BOLD, fill=HEAD_FILL)
            c.alignment = Alignment(horizontal="center")
            expr = '"build"' if t == 0 else f'IF({get_column_letter(T0_COL + t)}${YEAR_ROW}<=lifetime_years,"operate","after life")'
            p = book.formula(ws, YEAR_ROW + 1, T0_COL + t, expr, font=ITALIC)
            p.alignment = Alignment(horizontal="center")
        ws.freeze_panes = ws.cell(FIRST_ROW - 1, T0_COL)
        ws.column_dimensions["A"].width = LABEL_WIDTH
        ws.column_dimensions["B"].width = 12
        for t in range(horizon + 1):
            ws.column_dimensions[get_column_letter(T0_COL + t)].width = 11

    # references
    def col(self, t: int) -> str:
        return get_column_letter(T0_COL + t)

    def y(self, t: int) -> str:
        """The year cell of column t (row fixed)."""
        return f"{self.col(t)}${YEAR_ROW}"

    def c(self, key: str, t: int) -> str:
        return f"{self.col(t)}{self.rows[key]}"

    def x(self, key: str, t: int) -> str:
        """The same cell seen from another sheet."""
        return xref(self.ws, self.c(key, t))

    def v(self, key: str) -> str:
        """A single value (column B), absolute."""
        return absolute(2, self.rows[key])

    def span(self, key: str, t_from: int = 0, t_to: int | None = None, other: bool = False) -> str:
        t_to = self.H if t_to is None else t_to
        r = self.rows[key]
        ref = f"${self.col(t_from)}${r}:${self.col(t_to)}${r}"
        return xref(self.ws, ref) if other else ref

    # writing
    def section(self, title: str):
        self.next += 1 if self.next > FIRST_ROW else 0
        for col in range(1, T0_COL + self.H + 1):
            self.ws.cell(self.next, col).fill = SECTION_FILL
        self.b.text(self.ws, self.next, 1, title, font=BOLD, fill=SECTION_FILL)
        self.next += 1

    def single(self, key: str, label: str, unit: str, expr: str, fmt: str, name: str | None = None, fill=None):
        """One value (not yearly) in column B, its unit in the label."""
        r = self.next
        self.next += 1
        unit = self.b.unit(unit)
        lab = self.b.text(self.ws, r, 1, f"{label} [{unit}]" if unit and unit != "-" else label)
        lines = math.ceil(len(lab.value) / (1.05 * LABEL_WIDTH))
        if lines > 1:      # a long label wraps in a row tall enough for it (printing keeps the height)
            lab.alignment = Alignment(wrap_text=True, vertical="top")
            self.ws.row_dimensions[r].height = 15.0 * lines
        self.rows[key] = r
        if callable(expr):        # refers to a line written later: formed at render
            self.singles.append((r, expr, fmt, fill))
        else:
            c = self.b.formula(self.ws, r, 2, expr, fmt)
            if fill is not None:
                c.fill = fill
        if name:
            self.b.name(name, self.ws, absolute(2, r))
        return r

    def line(self, key: str, label: str, unit: str, expr, fmt: str, name: str | None = None, t0=None,
             bold: bool = False):
        """A yearly line: ``expr(t)`` gives the formula of column t (``t0(t)`` for t = 0 if given)."""
        r = self.next
        self.next += 1
        self.rows[key] = r
        self.b.text(self.ws, r, 1, label, font=BOLD if bold else None)
        self.b.text(self.ws, r, 2, self.b.unit(unit), font=ITALIC)
        self.pending.append((r, expr, t0, fmt, bold))
        if name:
            self.b.name(name, self.ws, self.span(key))
        return r

    def render(self):
        """Write the yearly formulas (after all lines exist, so a line may refer to a later one)."""
        for r, expr, t0, fmt, bold in self.pending:
            for t in range(self.H + 1):
                fn = t0 if (t == 0 and t0 is not None) else expr
                self.b.formula(self.ws, r, T0_COL + t, fn(t), fmt, font=BOLD if bold else None)
        for r, expr, fmt, fill in self.singles:
            c = self.b.formula(self.ws, r, 2, expr(), fmt)
            if fill is not None:
                c.fill = fill
        self.pending, self.singles = [], []
