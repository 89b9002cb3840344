"""The construction funding as live formulas: capex drawdown by quarter, interest during
construction (IDC), the commitment fee, and the equity and debt that pay them.

The arithmetic is that of :func:`lcoe.finance.construction.fund`: uses = capex + upfront fee + IDC
+ commitment fee + the first funding of the debt service reserve (at COD); equity = uses - debt;
``equity_first`` spends the equity on each use until it is gone, then draws debt, ``pro_rata`` pays
each use at the gearing debt / uses. IDC (on the debt drawn by the start of each quarter) and the
commitment fee (on the debt not yet drawn) depend on when the debt is drawn, which depends on the
equity, which depends on them: the sheet repeats the pass a fixed number of times (the engine stops
when the uses change by less than 1e-12 of capex; it takes about ten passes), each pass on the last
one's totals, without a circular reference, and a check tests that the last two passes agree.
The quarter lengths and capex shares follow the locked construction inputs (engine values here).
"""

from __future__ import annotations

from openpyxl.utils import get_column_letter

from lcoe.finance import construction as build
from lcoe.outputs.workbook.cells import BOLD, ENGINE_FILL, ITALIC, SECTION_FILL, T0_COL, Timeline

PASSES = 14


def write_funding(dt: Timeline, scn, dsra0: str, collapse_rows: list) -> dict:
    """Write the funding passes below the Debt sheet's lines (call before ``dt.render``); returns
    the cells of the totals (absolute references on the Debt sheet, by name)."""
    c = scn.construction
    b, ws = dt.b, dt.ws
    lengths = build.quarters(c.months)
    shares = build.drawdown_shares(c.drawdown, c.months)
    q = len(lengths)
    col = lambda k: get_column_letter(T0_COL + k)  # noqa: E731  k = 0: at close, 1..q the quarters
    row = dt.next + 1

    def head(text):
        nonlocal row
        for j in range(1, T0_COL + q + 2):
            ws.cell(row, j).fill = SECTION_FILL
        b.text(ws, row, 1, text, font=BOLD, fill=SECTION_FILL)
        row += 1

    def label(text, unit):
        b.text(ws, row, 1, text)
        b.text(ws, row, 2, b.unit(unit), font=ITALIC)

    head("Construction funding by quarter from close (live; the passes below carry the IDC circularity)")
    label("Quarter (0 = at close)", "-")
    for k in range(q + 1):
        b.num(ws, row, T0_COL + k, k, "int", font=BOLD)
    b.text(ws, row, T0_COL + q + 1, "Total", font=BOLD)
    row += 1
    r_len, r_share = row, row + 1
    label("Months in the quarter (construction.months, locked)", "months")
    label_len = row
    for k in range(1, q + 1):
        b.num(ws, label_len, T0_COL + k, float(lengths[k - 1]), "price", fill=ENGINE_FILL)
    row += 1
    label(f"Share of capex spent ({c.drawdown if isinstance(c.drawdown, str) else 'as given'}, locked)", "share")
    for k in range(1, q + 1):
        b.num(ws, row, T0_COL + k, float(shares[k - 1]), "share", fill=ENGINE_FILL)
    row += 1
    rate = "IF(debt_locked=1,interest_rate_held,interest_rate)"
    r_qrate, r_cshare, r_spend = row, row + 1, row + 2
    label("Interest rate of the quarter, (1 + i)^(months / 12) - 1", "-")
    for k in range(1, q + 1):
        b.formula(ws, row, T0_COL + k, f"(1+{rate})^({col(k)}{r_len}/12)-1", "rate")
    row += 1
    label("Commitment fee of the quarter, fee x months / 12", "-")
    for k in range(1, q + 1):
        b.formula(ws, row, T0_COL + k, f"commitment_fee*{col(k)}{r_len}/12", "rate")
    row += 1
    label("Capex spent", "{cur}")
    for k in range(1, q + 1):
        b.formula(ws, row, T0_COL + k, f"capex_total*{col(k)}{r_share}", "money")
    b.formula(ws, row, T0_COL + q + 1, f"SUM({col(1)}{row}:{col(q)}{row})", "money")
    row += 1
    tot = T0_COL + q + 1
    tcol = get_column_letter(tot)
    equity_first = c.funding == "equity_first"
    prev_idc = prev_cf = "0"
    passes = []
    for j in range(1, PASSES + 1):
        first_row = row
        r_uses, r_idc, r_cf, r_use, r_eq, r_bal, r_left = (row + i for i in range(7))
        label(f"Pass {j}: uses with pass {j - 1}'s IDC and fee; equity = uses - debt (col C: equity)", "{cur}")
        b.formula(ws, r_uses, T0_COL + 1, f"capex_total+debt_fee+{prev_idc}+{prev_cf}+{dsra0}", "money")
        b.formula(ws, r_uses, T0_COL, f"{col(1)}{r_uses}-debt_at_close", "money")
        g = f"IF({col(1)}{r_uses}>0,debt_at_close/{col(1)}{r_uses},0)"
        b.formula(ws, r_uses, T0_COL + 2, g, "pct")
        eqt, gear = f"${col(0)}${r_uses}", f"${col(2)}${r_uses}"
        row = r_idc
        for rr, text in ((r_idc, "IDC on the balance at the start of the quarter"),
                         (r_cf, "Commitment fee on the undrawn debt"),
                         (r_use, "Uses of the quarter (col C: the upfront fee at close)"),
                         (r_eq, "Paid by equity"), (r_bal, "Debt drawn, balance at the end"),
                         (r_left, "Equity left to spend")):
            row = rr
            label(f"Pass {j}: {text}", "{cur}")
        # at close: the upfront fee
        b.formula(ws, r_use, T0_COL, "debt_fee", "money")
        b.formula(ws, r_eq, T0_COL, f"MIN(debt_fee,{eqt})" if equity_first else f"debt_fee*(1-{gear})", "money")
        b.formula(ws, r_bal, T0_COL, f"debt_fee-{col(0)}{r_eq}", "money")
        b.formula(ws, r_left, T0_COL, f"{eqt}-{col(0)}{r_eq}", "money")
        for k in range(1, q + 1):
            p, cur = col(k - 1), col(k)
            b.formula(ws, r_idc, T0_COL + k, f"{p}{r_bal}*{cur}{r_qrate}", "money")
            b.formula(ws, r_cf, T0_COL + k, f"MAX(debt_at_close-{p}{r_bal},0)*{cur}{r_cshare}", "money")
            extra = f"+{dsra0}" if k == q else ""
            b.formula(ws, r_use, T0_COL + k, f"{cur}{r_spend}+{cur}{r_idc}+{cur}{r_cf}{extra}", "money")
            b.formula(ws, r_eq, T0_COL + k, f"MIN({cur}{r_use},MAX({p}{r_left},0))" if equity_first
                      else f"{cur}{r_use}*(1-{gear})", "money")
            b.formula(ws, r_bal, T0_COL + k, f"{p}{r_bal}+{cur}{r_use}-{cur}{r_eq}", "money")
            b.formula(ws, r_left, T0_COL + k, f"{p}{r_left}-{cur}{r_eq}", "money")
        for rr in (r_idc, r_cf, r_use, r_eq):
            b.formula(ws, rr, tot, f"SUM({col(0)}{rr}:{col(q)}{rr})", "money")
        prev_idc, prev_cf = f"${tcol}${r_idc}", f"${tcol}${r_cf}"
        passes.append((r_idc, r_cf, r_use, r_eq, r_bal))
        row = r_left + 1
        if j < PASSES:
            collapse_rows.extend(range(first_row, row))
    r_idc, r_cf, r_use, r_eq, r_bal = passes[-1]
    p_idc, p_cf = passes[-2][0], passes[-2][1]
    dt.next = row + 1
    return {"idc": f"${tcol}${r_idc}", "commitment": f"${tcol}${r_cf}",
            "change": f"ABS(${tcol}${r_idc}-${tcol}${p_idc})+ABS(${tcol}${r_cf}-${tcol}${p_cf})",
            "debt_drawn": f"${col(q)}${r_bal}", "equity_paid": f"${tcol}${r_eq}"}
