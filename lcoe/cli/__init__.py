"""The ``lcoe`` command.

The parser is built here without importing the engine, so that ``lcoe --help`` is
quick; each command's module (``lcoe.cli.run``, ``lcoe.cli.sensitivity``,
``lcoe.cli.portfolio``, ``lcoe.cli.bench``, ``lcoe.cli.app``) is imported only when that command
runs (the portfolio's Dask too).
"""

from __future__ import annotations

import argparse
import importlib
import sys

from lcoe.cli.options import nonneg_int, sweep_number, whole_number
from lcoe.inputs.about import CAUTION, __version__
from lcoe.inputs.errors import ScenarioError


def _command(p, target: str) -> None:
    p.set_defaults(func=target)


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="lcoe", description="LCOE and project finance of one wind site. " + CAUTION)
    p.add_argument("--version", action="version", version=f"lcoe {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    c = sub.add_parser("check", help="validate a scenario file and its data files")
    c.add_argument("file")
    _command(c, "lcoe.cli.run:cmd_check")

    n = sub.add_parser("new", help="write a commented scenario for a new site, with a power-curve template",
                       description="Write PATH (.toml), a complete scenario whose comments give every key's unit, "
                                   "range and default, and PATH's stem + _curve.csv beside it; both invented, ready "
                                   "to run and to edit. Existing files are never replaced.")
    n.add_argument("path", metavar="PATH", help="the new scenario file (.toml)")
    _command(n, "lcoe.cli.scaffold:cmd_new")

    k = sub.add_parser("keys", help="every scenario key with its unit, range, default and meaning",
                       description="Print the reference of the scenario keys, built from the schema the files "
                                   "are checked against.")
    k.add_argument("section", nargs="?", metavar="SECTION", help="one section, e.g. finance or finance.debt")
    _command(k, "lcoe.cli.scaffold:cmd_keys")

    r = sub.add_parser("run", help="energy, costs, cash flow and metrics of a scenario")
    r.add_argument("file")
    r.add_argument("--json", action="store_true", help="print the JSON report")
    r.add_argument("--trials", type=nonneg_int, default=None, help="Monte Carlo trials (overrides the file)")
    r.add_argument("--workbook", metavar="PATH", help="write the lender workbook (.xlsx)")
    r.add_argument("--csv", metavar="PATH", help="write the yearly table as CSV (.csv, or - for standard output)")
    r.add_argument("--brief", action="store_true", help="table output without the yearly rows")
    r.add_argument("--set", action="append", default=[], metavar="KEY=VALUE",
                   help="change one input as if written in the file, e.g. capex.turbine_per_kw=1150 or "
                        "finance.discount_rate=7%% (repeatable)")
    r.add_argument("--variant", metavar="NAME", help="run one of the file's [variants] as the base case")
    r.add_argument("--seed", type=nonneg_int, default=None, help="Monte Carlo seed (overrides the file)")
    r.add_argument("--wide", action="store_true", help="print the tables whole, however wide")
    r.add_argument("--force", action="store_true",
                   help="replace a read-only output file or a symbolic link (never an input, a folder or a device)")
    _command(r, "lcoe.cli.run:cmd_run")

    s = sub.add_parser("sweep", help="the model over a range of one input (with the AEP elasticity)",
                       description="Run the model at STEPS evenly spaced values of KEY from START to STOP (both "
                                   "included), the other inputs as in the file.")
    s.add_argument("file")
    s.add_argument("--key", required=True, help="dotted scenario key to vary, e.g. wind.mean_speed_mps")
    s.add_argument("start", type=sweep_number, help="first value (a fraction may be written 5%%)")
    s.add_argument("stop", type=sweep_number, help="last value")
    s.add_argument("steps", type=whole_number(1, 10000), help="number of values, START and STOP included")
    s.add_argument("--json", action="store_true", help="print JSON")
    s.add_argument("--breakeven", action="store_true", help="also solve the break-even PPA price at each value")
    s.add_argument("--metrics", metavar="LIST", help="comma-separated metrics for the table columns")
    s.add_argument("--wide", action="store_true", help="print the table whole, however wide")
    _command(s, "lcoe.cli.sensitivity:cmd_sweep")

    t = sub.add_parser("tornado", help="one-at-a-time swings of the uncertain inputs, largest first",
                       description="Move each input between its P10 and P90 ([montecarlo.vary]) or +-10 %, one at a "
                                   "time, and sort by the effect on a metric.")
    t.add_argument("file")
    t.add_argument("--metric", default="lcoe_nominal_per_mwh", help="metric to rank by (default %(default)s)")
    t.add_argument("--key", action="append", metavar="KEY", help="an input to move (repeatable, or comma-separated; "
                                                              "default: the vary keys, the main drivers and "
                                                              "net_aep_p90_p10_10yr)")
    t.add_argument("--inputs", action="append", dest="key", help=argparse.SUPPRESS)   # the former name
    t.add_argument("--json", action="store_true", help="print JSON")
    t.add_argument("--wide", action="store_true", help="print the table whole, however wide")
    _command(t, "lcoe.cli.sensitivity:cmd_tornado")

    v = sub.add_parser("solve", help="the value of one input that meets a target metric",
                       description="Goal seek: find the value of KEY that gives METRIC = VALUE (Brent's method).")
    v.add_argument("file")
    v.add_argument("--target", required=True, metavar="METRIC=VALUE",
                   help="e.g. lcoe_nominal_per_mwh=50 or equity_irr=0.10 (or 10%%)")
    v.add_argument("--key", metavar="KEY", help="dotted scenario key to vary (required)")
    v.add_argument("--vary", dest="key", help=argparse.SUPPRESS)                          # the former name
    v.add_argument("--low", help="low end of the search range (default 0.1x the scenario value; a fraction "
                                 "may be written 5%%)")
    v.add_argument("--high", help="high end of the search range (default 10x)")
    v.add_argument("--json", action="store_true", help="print JSON")
    _command(v, "lcoe.cli.sensitivity:cmd_solve")

    f = sub.add_parser("portfolio", help="correlated Monte Carlo of a portfolio of sites (on a Dask cluster)",
                       description="Run the sites of a portfolio file together, their yearly wind correlated, and "
                                   "sum them by year: P50/P90/P99 per year and over the life, pooled DSCR and the "
                                   "diversification benefit. Runs on a Dask cluster in this process unless "
                                   "--scheduler names an existing one.")
    f.add_argument("file", help="portfolio file (TOML)")
    f.add_argument("--json", action="store_true", help="print the JSON report")
    f.add_argument("--trials", type=whole_number(1), default=None, help="Monte Carlo trials (overrides the file)")
    f.add_argument("--scheduler", metavar="ADDRESS", help="run on the Dask scheduler at ADDRESS (tcp://host:port)")
    f.add_argument("--workers", type=whole_number(0, 64), default=None,
                   help="workers of the local cluster (default: one per core; 0: no Dask, a plain loop)")
    f.add_argument("--workbook", metavar="PATH", help="write the results as a workbook of values (.xlsx)")
    f.add_argument("--wide", action="store_true", help="print the tables whole, however wide")
    _command(f, "lcoe.cli.portfolio:cmd_portfolio")

    b = sub.add_parser("bench", help="time the engine on the demo scenario (Monte Carlo, loop, deterministic)")
    b.add_argument("file", nargs="?", default=None, help="scenario (default: the demo)")
    b.add_argument("--trials", type=nonneg_int, default=100_000)
    b.add_argument("--loop-sample", type=nonneg_int, default=500, help="trials timed in the per-trial loop")
    b.add_argument("--repeat", type=nonneg_int, default=5, help="Monte Carlo runs timed (the median is reported)")
    b.add_argument("--portfolio-sites", type=nonneg_int, default=200,
                   help="sites of the portfolio benchmark (0: skip it; default %(default)s)")
    b.add_argument("--portfolio-trials", type=whole_number(1), default=2000,
                   help="trials of the portfolio benchmark (default %(default)s)")
    b.add_argument("--no-startup", action="store_true",
                   help="skip the start-up timings (help, a first and a later `lcoe run` in fresh processes)")
    b.add_argument("--json", action="store_true")
    _command(b, "lcoe.cli.bench:cmd_bench")

    a = sub.add_parser("app", help="start the interactive app in the browser (Streamlit)")
    a.add_argument("--port", type=whole_number(1, 65535), default=8501, help="port to serve on (default 8501)")
    a.add_argument("--address", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1, this machine only)")
    _command(a, "lcoe.cli.app:cmd_app")
    return p


def _resolve(target: str):
    module, name = target.split(":")
    return getattr(importlib.import_module(module), name)


def main(argv=None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse prints its own one-line usage error
        return int(exc.code or 0) if exc.code in (0, None) else 2
    try:
        if args.command != "app":
            from lcoe.cli.kernels import announce_builds
            announce_builds()
        return int(_resolve(args.func)(args) or 0)
    except ScenarioError as exc:
        print(f"error: {exc.line()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except MemoryError:      # a backstop: the limits on inputs keep every run far below it
        print("error: not enough memory for this run; use fewer trials or a shorter series", file=sys.stderr)
        return 2
    except BrokenPipeError:
        return 0


if __name__ == "__main__":
    raise SystemExit(main())
