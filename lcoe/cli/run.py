"""``lcoe check`` and ``lcoe run``: validate a scenario; run it and print or write its report."""

from __future__ import annotations

import sys
from pathlib import Path

from lcoe.analysis import study
from lcoe.inputs import scenario
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import report as rp
from lcoe.outputs import workbook
from lcoe.physics import energy


def _load(path):
    return scenario.load(path)


def cmd_check(args) -> int:
    scn = _load(args.file)
    e = energy.energy_of(scn)  # reads and checks the curve, series, reference and layout files too
    for name in scn.variants:
        energy.energy_of(scn.variant(name))
    print(f"{args.file}: ok ({scn.project.name}, {scn.lifetime} years, {scn.project.turbines} turbines, "
          f"{len(scn.variants)} variant(s))")
    if e.wake is not None:
        w = e.wake
        print(f"layout: {w['turbines']} turbine(s) ({w['layout']}), {rp.spacing_text(w)}; wake loss "
              f"{100 * w['farm_loss']:.2f} %")
    if e.long_term is not None:
        lt = e.long_term
        print(f"long-term reference: {lt['reference']} covers the site period; {100 * lt['coverage']:.1f} % "
              f"concurrent ({lt['concurrent_pairs']:,} records), r = {lt['r']:.3f}")
    for w in scn.warnings():
        print(f"warning: {w}")
    return 0


def _check_output_folders(*outputs) -> None:
    """Refuse a missing output folder before any work is done (write_atomic's own message)."""
    for path, option in outputs:
        folder = Path(path).parent
        if path and not folder.is_dir():
            raise ScenarioError(f"folder does not exist: {folder}", key=option, value=str(path))


def cmd_run(args) -> int:
    _check_output_folders(*((p, o) for p, o in ((args.workbook, "--workbook"), (args.csv, "--csv")) if p))
    scn = _load(args.file)
    trials = args.trials
    rep = study.build(scn, trials=trials, sensitivity=bool(args.workbook))
    written = []
    try:                       # each file is atomic; if the second fails, the first goes too
        if args.workbook:
            workbook.write(rep, args.workbook)
            written.append(args.workbook)
        if args.csv:
            rp.write_annual_csv(rep, args.csv)
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
