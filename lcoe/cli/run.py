"""``lcoe check`` and ``lcoe run``: validate a scenario; run it and print or write its report."""

from __future__ import annotations

import sys
from pathlib import Path

from lcoe.analysis import montecarlo, study
from lcoe.cli import progress
from lcoe.cli.options import key_assignment, key_value
from lcoe.inputs import scenario
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import MAX_TRIALS
from lcoe.outputs import files
from lcoe.outputs import report as rp
from lcoe.outputs.tables import terminal_width
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


def _check_outputs(args, inputs, *, suffixes: bool = True) -> None:
    """Each output path is safe to write (lcoe.outputs.files.check_output), and they differ;
    with ``suffixes``, each has its format's extension (.xlsx, .csv)."""
    force = bool(getattr(args, "force", False))
    seen: dict = {}
    for path, option, suffix in ((args.workbook, "--workbook", ".xlsx"), (args.csv, "--csv", ".csv")):
        if path is None:
            continue
        files.check_output(path, option=option, inputs=inputs, force=force, stdout=option == "--csv",
                           suffix=suffix if suffixes else None)
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


def as_run(args, scn):
    """The scenario as the command line changes it: ``--variant`` as the base case, then each
    ``--set KEY=VALUE`` and ``--seed``, all checked as if written in the file. Returns the
    scenario and the changes (empty when there are none)."""
    changes: dict = {}
    if args.variant is not None:
        if args.variant not in scn.variants:
            raise ScenarioError(f"unknown variant; the file has: {', '.join(scn.variants) or 'none'}",
                                key="--variant", value=args.variant)
        scn = scn.variant(args.variant)
        changes["variant"] = args.variant
    overrides: dict = {}
    for text in args.set:
        key, raw = key_assignment(text)
        if key in overrides:
            raise ScenarioError("is given twice; give each key once", key=f"--set {key}", has_value=False)
        overrides[key] = key_value(raw, key, f"--set {key}")
    if args.seed is not None:
        if "montecarlo.seed" in overrides:
            raise ScenarioError("and --set montecarlo.seed both give the seed; give one", key="--seed",
                                value=args.seed)
        overrides["montecarlo.seed"] = args.seed
    if overrides:
        scn = scn.with_overrides(overrides, label="")
        given = {k: v for k, v in overrides.items() if k != "montecarlo.seed" or args.seed is None}
        if given:
            changes["set"] = given
        if args.seed is not None:
            changes["seed"] = args.seed
    return scn, changes


def cmd_run(args) -> int:
    _check_trials(args.trials)
    # the data files are known once the scenario is read: an output over one of them is named as such
    _check_outputs(args, [("the scenario", Path(args.file))] if str(args.file).strip() else [], suffixes=False)
    scn = _load(args.file)
    with scenario.naming_the_file(scn):
        scn, changes = as_run(args, scn)
    _check_outputs(args, scenario.input_files(scn))
    trials = args.trials
    with scenario.naming_the_file(scn), progress.bar(args, "Monte Carlo") as tick:
        rep = study.build(scn, trials=trials, sensitivity=args.workbook is not None,
                          variants=args.variant is None, progress=tick)
    rep.as_run = changes
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
        sys.stdout.write(rp.to_table(rep, yearly=not args.brief, width=terminal_width(), wide=args.wide))
        if args.workbook:
            print(f"\nworkbook written: {args.workbook}")
        if args.csv:
            print(f"yearly table written: {args.csv}")
    return 0
