"""``lcoe portfolio``: the correlated Monte Carlo of a portfolio of sites, on a Dask cluster."""

from __future__ import annotations

import sys
from pathlib import Path

from lcoe.analysis import cluster
from lcoe.analysis import portfolio as analysis
from lcoe.inputs import portfolio as inputs
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import files
from lcoe.outputs import portfolio as out
from lcoe.outputs.tables import terminal_width
from lcoe.outputs.workbook import portfolio as sheet


def runner_for(args):
    """Where the work runs: ``--scheduler`` an existing cluster; else a local one of
    ``--workers`` workers in this process (``--workers 0``: no Dask, a plain loop)."""
    if args.scheduler:
        if args.workers is not None:
            raise ScenarioError("applies to the local cluster; with --scheduler the cluster's own workers run",
                                key="--workers", value=args.workers)
        return cluster.remote(args.scheduler)
    if args.workers == 0:
        return cluster.Plain()
    return cluster.local(args.workers)


def cmd_portfolio(args) -> int:
    if args.workbook:
        files.check_output(args.workbook, option="--workbook", inputs=[("the portfolio", Path(args.file))],
                           stdout=False, suffix=".xlsx")
    pf = inputs.load(args.file)
    with runner_for(args) as runner:
        result = analysis.run(pf, trials=args.trials, runner=runner)
    report = result.report()
    if args.workbook:
        sheet.write(report, args.workbook)
    if args.json:
        print(out.to_json(report))
    else:
        sys.stdout.write(out.to_table(report, width=terminal_width(), wide=args.wide))
        if args.workbook:
            print(f"\nworkbook written: {args.workbook}")
    return 0
