"""``lcoe check`` and ``lcoe run``: validate a scenario; run it and print or write its report."""

from __future__ import annotations

import sys
from pathlib import Path

from lcoe.analysis import montecarlo, study
from lcoe.inputs import scenario
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import MAX_TRIALS
from lcoe.outputs import files
from lcoe.outputs import report as rp
from lcoe.physics import energy
from lcoe.physics import wind as resource


def _load(path):
    return scenario.load(path)


def _check_trials(trials, option="--trials") -> None:
    if trials is not None and trials > MAX_TRIALS:
        raise ScenarioError(f"must be at most {MAX_TRIALS:,} (the limit montecarlo.trials has in the file)",
                            key=option, value=trials)


def cmd_check(args) -> int:
    scn = _load(args.file)
    with scenario.naming_the_file(scn):
        e = energy.energy_of(scn)  # reads and checks the curve, series, reference and layout files too
        for name in scn.variants:
            energy.energy_of(scn.variant(name))
        montecarlo.refuse_idle_inputs(scn)
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
    series = energy.site_for(scn).climate.series
    if series is not None and series.weights is not None:
        print(f"series: {series.step_text} steps over {series.years:.1f} years; months of data in each calendar "
              "month (each weighs by its length):")
        cells = [f"{m[:3]} {c:4.1f}" for m, c in zip(resource.MONTHS, series.month_coverage)]
        print("  " + "   ".join(cells[:6]) + "\n  " + "   ".join(cells[6:]))
    for w in dict.fromkeys(list(scn.warnings()) + list(e.warnings)):
        print(f"warning: {w}")
    return 0


def _check_outputs(args, inputs) -> None:
    """Each output path is safe to write (lcoe.outputs.files.check_output), and they differ."""
    force = bool(getattr(args, "force", False))
    seen: dict = {}
    for path, option in ((args.workbook, "--workbook"), (args.csv, "--csv")):
        if path is None:
            continue
        files.check_output(path, option=option, inputs=inputs, force=force, stdout=option == "--csv")
        if path == files.STDOUT:
            if args.json:
                raise ScenarioError("and --json both write to standard output; choose one", key=option,
                                    value=path)
            continue
        here = Path(path).resolve()
        if here in seen:
            raise ScenarioError(f"is also the {seen[here]} output; give each output its own file", key=option,
                                value=path)
        seen[here] = option


def cmd_run(args) -> int:
    _check_trials(args.trials)
    _check_outputs(args, [("the scenario", Path(args.file))] if str(args.file).strip() else [])
    scn = _load(args.file)
    _check_outputs(args, scenario.input_files(scn))
    trials = args.trials
    with scenario.naming_the_file(scn):
        rep = study.build(scn, trials=trials, sensitivity=args.workbook is not None)
    written = []
    try:                       # each file is atomic; if the second fails, the first goes too
        if args.workbook is not None:
            from lcoe.outputs import workbook     # openpyxl, imported only when a workbook is written
            workbook.write(rep, args.workbook)
            written.append(args.workbook)
        if args.csv is not None and args.csv != files.STDOUT:
            rp.write_annual_csv(rep, args.csv)
            written.append(args.csv)
    except BaseException:
        for path in written:
            Path(path).unlink(missing_ok=True)
        raise
    if args.csv == files.STDOUT:
        rp.write_annual_csv(rep, files.STDOUT)      # the yearly table alone, for a pipe
        if args.workbook is not None:
            print(f"workbook written: {args.workbook}", file=sys.stderr)
        return 0
    if args.json:
        print(rp.to_json(rep))
    else:
        sys.stdout.write(rp.to_table(rep, yearly=not args.brief))
        if args.workbook:
            print(f"\nworkbook written: {args.workbook}")
        if args.csv:
            print(f"yearly table written: {args.csv}")
    return 0
