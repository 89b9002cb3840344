"""The cash waterfall as live yearly formulas: reserve accounts, the lock-up test and distributions.

The lines follow :func:`lcoe.finance.waterfall.run_rows` step by step, in its order of operations:
cash available (CFADS + deposit interest on the opening balances + the maintenance reserve above
its target), senior debt service, draws on the debt service reserve (DSRA) and the lock-up account,
unpaid debt service (funded by the sponsor), the DSRA brought to its target (N / 12 of the next
year's debt service at that year's pace), the maintenance reserve (MRA) topped up towards its
target (each overhaul's nominal cost built up evenly over the K years before it), the lock-up test
(DSCR below the threshold: the cash is trapped; a year that passes releases it), distributions,
and in year L every balance released. At t = 0 the reserves receive their first funding from
equity. The same block is written for the P50 case (Cash flow) and for each lender case.
"""

from __future__ import annotations

from lcoe.outputs.workbook.cells import Timeline


def mra_target(year: str) -> str:
    """MRA target at the end of ``year``: sum over the overhauls (year Y, nominal cost C) of
    C x clip((t - Y + n + 1) / n, 0, 1) for t < Y, n = min(K, Y - 1) the build-up years (none for
    Y = 1 or K = 0); min and max written with ABS so that they act on each overhaul row."""
    n = "(mra_years+overhaul_year-1-ABS(mra_years-overhaul_year+1))/2"
    x = f"({year}-overhaul_year+{n}+1)"
    return (f"SUMPRODUCT(overhaul_cost_per_turbine*turbines*(1+om_escalation)^overhaul_year*"
            f"(({x}+ABS({x}))/2)/({n}+({n}<=0)*(1-{n}))*({year}<overhaul_year)*(overhaul_year>=2)*"
            f"(overhaul_year<=lifetime_years)*(mra_years>0))")


def waterfall_block(tl: Timeline, p: str, cfads, ds, share, equity0: str, name: str | None = None,
                    cost_factor: str | None = None) -> None:
    """The waterfall lines on ``tl``, keys prefixed ``p``: ``cfads(t)``, ``ds(t)`` and ``share(t)`` (the
    share of year t in operation) give cell references; ``equity0`` the equity contribution at t = 0
    before the reserves' first funding (negative). ``name``: the prefix of defined names (P50 case);
    ``cost_factor``: a factor on the overhauls' cost (a lender case's O&M factor), so on the MRA target."""
    c, y, H = tl.c, tl.y, tl.H
    prev = lambda key, t: c(p + key, t - 1)  # noqa: E731
    nm = (lambda key: f"{name}{key}") if name else (lambda key: None)  # noqa: E731
    zero = lambda t: "0"  # noqa: E731
    final = lambda t: f"{y(t)}=lifetime_years"  # noqa: E731

    def dsra_target(t):
        if t >= H:
            return "0"
        return f"IF({y(t)}>=lifetime_years,0,dsra_months/12*{ds(t + 1)}/{share(t + 1)})"

    tl.line(p + "dtgt", "DSRA target, months / 12 of next year's debt service (zero from year L)", "{cur}",
            dsra_target, "money", name=nm("dsra_target"))
    tl.line(p + "mtgt", "Maintenance reserve target, built up over the years before each overhaul", "{cur}",
            lambda t: mra_target(y(t)) + (f"*{cost_factor}" if cost_factor else ""), "money", name=nm("mra_target"))
    tl.line(p + "inc", "Interest earned on the opening reserve and lock-up balances", "{cur}",
            lambda t: f"deposit_rate*({prev('D', t)}+{prev('M', t)}+{prev('T', t)})", "money", t0=zero,
            name=nm("reserve_interest"))
    tl.line(p + "mrel", "Maintenance reserve above its target, released", "{cur}",
            lambda t: f"MAX({prev('M', t)}-{c(p + 'mtgt', t)},0)", "money", t0=zero)
    tl.line(p + "after", "Cash after debt service, CFADS + interest + release - debt service", "{cur}",
            lambda t: f"{cfads(t)}+{c(p + 'inc', t)}+{c(p + 'mrel', t)}-{ds(t)}", "money", t0=zero)
    tl.line(p + "dd", "Drawn from the DSRA", "{cur}",
            lambda t: f"MIN({prev('D', t)},MAX(-{c(p + 'after', t)},0))", "money", t0=zero, name=nm("dsra_draw"))
    tl.line(p + "ld", "Drawn from the lock-up account", "{cur}",
            lambda t: f"MIN({prev('T', t)},MAX(-({c(p + 'after', t)}+{c(p + 'dd', t)}),0))", "money", t0=zero,
            name=nm("lockup_draw"))
    tl.line(p + "u", "Debt service unpaid after the reserves (funded by the sponsor)", "{cur}",
            lambda t: f"MAX(-({c(p + 'after', t)}+{c(p + 'dd', t)}+{c(p + 'ld', t)}),0)", "money", t0=zero,
            name=nm("unpaid_debt_service"))
    tl.line(p + "cash1", "Cash after debt service and draws", "{cur}",
            lambda t: f"{c(p + 'after', t)}+{c(p + 'dd', t)}+{c(p + 'ld', t)}+{c(p + 'u', t)}", "money", t0=zero)
    tl.line(p + "drel", "DSRA above its target, released", "{cur}",
            lambda t: f"MAX({prev('D', t)}-{c(p + 'dd', t)}-{c(p + 'dtgt', t)},0)", "money", t0=zero)
    tl.line(p + "dtop", "DSRA topped up towards its target", "{cur}",
            lambda t: f"MIN({c(p + 'cash1', t)},MAX({c(p + 'dtgt', t)}-({prev('D', t)}-{c(p + 'dd', t)}),0))",
            "money", t0=lambda t: c(p + "dtgt", t), name=nm("dsra_topup"))
    tl.line(p + "mtop", "Maintenance reserve topped up towards its target", "{cur}",
            lambda t: f"MIN({c(p + 'cash1', t)}+{c(p + 'drel', t)}-{c(p + 'dtop', t)},MAX({c(p + 'mtgt', t)}-"
                      f"({prev('M', t)}-{c(p + 'mrel', t)}),0))", "money", t0=lambda t: c(p + "mtgt", t),
            name=nm("mra_topup"))
    tl.line(p + "avail", "Cash after the reserves", "{cur}",
            lambda t: f"{c(p + 'cash1', t)}+{c(p + 'drel', t)}-{c(p + 'dtop', t)}-{c(p + 'mtop', t)}", "money",
            t0=zero)
    tl.line(p + "lock", "Lock-up: DSCR below the threshold (1 = yes)", "flag",
            lambda t: f"IF(AND(lockup_dscr>0,{ds(t)}>0),IF({cfads(t)}/IF({ds(t)}>0,{ds(t)},1)<lockup_dscr,1,0),0)",
            "flag", t0=zero, name=nm("lockup"))
    tl.line(p + "trap", "Cash trapped in the lock-up account", "{cur}",
            lambda t: f"IF({c(p + 'lock', t)}=1,{c(p + 'avail', t)},0)", "money", t0=zero, name=nm("cash_trapped"))
    tl.line(p + "Dpre", "DSRA before the end-of-life release", "{cur}",
            lambda t: f"{prev('D', t)}-{c(p + 'dd', t)}-{c(p + 'drel', t)}+{c(p + 'dtop', t)}", "money",
            t0=lambda t: c(p + "dtgt", t))
    tl.line(p + "Mpre", "Maintenance reserve before the end-of-life release", "{cur}",
            lambda t: f"{prev('M', t)}-{c(p + 'mrel', t)}+{c(p + 'mtop', t)}", "money",
            t0=lambda t: c(p + "mtgt", t))
    tl.line(p + "Tpre", "Lock-up account before the end-of-life release", "{cur}",
            lambda t: f"IF({c(p + 'lock', t)}=1,{prev('T', t)}-{c(p + 'ld', t)}+{c(p + 'avail', t)},0)", "money",
            t0=zero)
    tl.line(p + "relT", "Trapped cash released", "{cur}",
            lambda t: f"IF({c(p + 'lock', t)}=1,0,{prev('T', t)}-{c(p + 'ld', t)})+IF({final(t)},{c(p + 'Tpre', t)},0)",
            "money", t0=zero, name=nm("trapped_released"))
    tl.line(p + "relD", "DSRA released (above target; all of it in year L)", "{cur}",
            lambda t: f"{c(p + 'drel', t)}+IF({final(t)},{c(p + 'Dpre', t)},0)", "money", t0=zero,
            name=nm("dsra_release"))
    tl.line(p + "relM", "Maintenance reserve released (above target; all of it in year L)", "{cur}",
            lambda t: f"{c(p + 'mrel', t)}+IF({final(t)},{c(p + 'Mpre', t)},0)", "money", t0=zero,
            name=nm("mra_release"))
    tl.line(p + "dist", "Distributions to equity", "{cur}",
            lambda t: f"IF({c(p + 'lock', t)}=1,0,{c(p + 'avail', t)}+({prev('T', t)}-{c(p + 'ld', t)}))"
                      f"+IF({final(t)},{c(p + 'Dpre', t)}+{c(p + 'Mpre', t)}+{c(p + 'Tpre', t)},0)", "money",
            t0=zero, name=nm("distributions"), bold=True)
    for key, label, short in (("D", "DSRA balance at the end of the year", "dsra_balance"),
                              ("M", "Maintenance reserve balance at the end of the year", "mra_balance"),
                              ("T", "Lock-up account balance at the end of the year", "lockup_balance")):
        tl.line(p + key, label, "{cur}", lambda t, key=key: f"IF({final(t)},0,{c(p + key + 'pre', t)})", "money",
                t0=lambda t, key=key: c(p + key + "pre", t), name=nm(short))
    tl.line(p + "equity", "Equity cash flow: contribution and reserve funding at t = 0, then distributions "
                          "less unpaid debt service", "{cur}",
            lambda t: f"{c(p + 'dist', t)}-{c(p + 'u', t)}", "money",
            t0=lambda t: f"{equity0}-{c(p + 'D', t)}-{c(p + 'M', t)}")
    tl.line(p + "cons", "Cash conservation: CFADS + interest + unpaid + balance falls - debt service - "
                        "distributions (0)", "{cur}",
            lambda t: f"{cfads(t)}+{c(p + 'inc', t)}+{c(p + 'u', t)}+({prev('D', t)}-{c(p + 'D', t)})+"
                      f"({prev('M', t)}-{c(p + 'M', t)})+({prev('T', t)}-{c(p + 'T', t)})-{ds(t)}-{c(p + 'dist', t)}",
            "money", t0=zero, name=nm("waterfall_conservation"))
