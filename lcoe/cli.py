"""The ``lcoe`` command."""

from __future__ import annotations

import argparse
import sys

from lcoe import CAUTION, __version__
from lcoe.errors import ScenarioError


def _load(path):
    from lcoe import scenario
    return scenario.load(path)


def cmd_check(args) -> int:
    scn = _load(args.file)
    from lcoe import energy
    energy.energy_of(scn)  # reads and checks the curve and series files too
    for name in scn.variants:
        energy.energy_of(scn.variant(name))
    print(f"{args.file}: ok ({scn.project.name}, {scn.lifetime} years, {scn.project.turbines} turbines, "
          f"{len(scn.variants)} variant(s))")
    for w in scn.warnings():
        print(f"warning: {w}")
    return 0


def _check_output_folders(*outputs) -> None:
    """Refuse a missing output folder before any work is done (write_atomic's own message)."""
    from pathlib import Path
    for path, option in outputs:
        folder = Path(path).parent
        if path and not folder.is_dir():
            raise ScenarioError(f"folder does not exist: {folder}", key=option, value=str(path))


def cmd_run(args) -> int:
    from lcoe import report as rp
    from pathlib import Path
    _check_output_folders(*((p, o) for p, o in ((args.workbook, "--workbook"), (args.csv, "--csv")) if p))
    scn = _load(args.file)
    trials = args.trials
    rep = rp.build(scn, trials=trials)
    written = []
    try:                       # each file is atomic; if the second fails, the first goes too
        if args.workbook:
            from lcoe import workbook
            workbook.write(rep, args.workbook)
            written.append(args.workbook)
        if args.csv:
            write_annual_csv(rep, args.csv)
            written.append(args.csv)
    except BaseException:
        for path in written:
            Path(path).unlink(missing_ok=True)
        raise
    if args.json:
        print(rp.to_json(rep))
    else:
        sys.stdout.write(rp.to_table(rep, yearly=not args.brief))
        if args.workbook:
            print(f"\nworkbook written: {args.workbook}")
        if args.csv:
            print(f"yearly table written: {args.csv}")
    return 0


def write_annual_csv(rep, path):
    from lcoe.files import write_csv
    from lcoe.model import ANNUAL_KEYS
    rows = rep.case.annual()
    return write_csv(path, list(ANNUAL_KEYS), [[r[k] for k in ANNUAL_KEYS] for r in rows])


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="lcoe", description="LCOE and project finance of one wind site. " + CAUTION)
    p.add_argument("--version", action="version", version=f"lcoe {__version__}")
    sub = p.add_subparsers(dest="command", required=True)

    c = sub.add_parser("check", help="validate a scenario file and its data files")
    c.add_argument("file")
    c.set_defaults(func=cmd_check)

    r = sub.add_parser("run", help="energy, costs, cash flow and metrics of a scenario")
    r.add_argument("file")
    r.add_argument("--json", action="store_true", help="print the JSON report")
    r.add_argument("--trials", type=_nonneg_int, default=None, help="Monte Carlo trials (overrides the file)")
    r.add_argument("--workbook", metavar="PATH", help="write the lender workbook (.xlsx)")
    r.add_argument("--csv", metavar="PATH", help="write the yearly table as CSV")
    r.add_argument("--brief", action="store_true", help="table output without the yearly rows")
    r.set_defaults(func=cmd_run)

    _optional_commands(sub)
    return p


def whole_number(low: int = 0, high: int | None = None):
    """An argparse type: a whole number >= low (and <= high when given)."""
    def parse(text: str) -> int:
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
        if high is None and v < low:
            raise argparse.ArgumentTypeError(f"must be >= {low}, got {v}")
        if high is not None and not low <= v <= high:
            raise argparse.ArgumentTypeError(f"must be between {low} and {high}, got {v}")
        return v
    return parse


_nonneg_int = whole_number(0)


def _optional_commands(sub) -> None:
    """Commands that live in their own modules register themselves here."""
    for modname in ("lcoe.sensitivity", "lcoe.bench", "lcoe.appcmd"):
        try:
            mod = __import__(modname, fromlist=["register"])
        except ModuleNotFoundError as exc:
            if exc.name == modname:
                continue
            raise
        mod.register(sub)


def main(argv=None) -> int:
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
    except SystemExit as exc:  # argparse prints its own one-line usage error
        return int(exc.code or 0) if exc.code in (0, None) else 2
    try:
        return int(args.func(args) or 0)
    except ScenarioError as exc:
        print(f"error: {exc.line()}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return 0


if __name__ == "__main__":
    raise SystemExit(main())
