"""Hostile inputs: files and options made to destroy, leak, hang or crash, each refused in one line.

Every case runs the command line (``lcoe.cli.main``, as ``lcoe ...`` would) in a child
process of its own, forked from the test process so that it starts at once, in a folder
of its own, with a time limit that is the child's timeout: a case that hangs is killed
and fails; nothing is timed. (The tests at the end start ``python -m lcoe`` itself.)
Each case must give

* exit code 2 and exactly one line on stderr, matching the case's message,
* no traceback and nothing on stdout,
* and leave every file of its folder as it was (the same names, the same SHA-256 of
  each regular file, links and pipes still links and pipes): nothing written, nothing
  changed, nothing half-written.

The scenarios live in ``tests/broken/hostile/`` (each file's first line says what it
attacks); files that cannot live in a repository (pipes, link loops, huge or sparse
files, devices) are made here. A few hostile inputs are not errors but must still
finish in time and say what they did: those are at the end.
"""

from __future__ import annotations

import hashlib
import os
import re
import shutil
import signal
import stat
import subprocess
import sys
import time
from pathlib import Path

import pytest
from conftest import ROOT

import lcoe.cli.bench  # noqa: F401  the children forked below start with the commands imported
import lcoe.cli.run  # noqa: F401
import lcoe.cli.sensitivity  # noqa: F401

HOSTILE = ROOT / "tests" / "broken" / "hostile"
PYTHON = [sys.executable, "-m", "lcoe"]


# --------------------------------------------------------------------------- files made by the test

def _stamps(start: str, periods: int, freq: str) -> list[str]:
    import pandas as pd
    return list(pd.date_range(start, periods=periods, freq=freq, tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ"))


def _series(folder: Path, name: str, stamps, speeds) -> None:
    lines = ["timestamp,speed_mps"] + [f"{t},{v:.2f}" for t, v in zip(stamps, speeds)]
    (folder / name).write_text("\n".join(lines) + "\n", encoding="utf-8")


def _varying(n: int, mean: float = 7.5):
    import numpy as np
    return mean * (1.0 + 0.45 * np.sin(np.arange(n) * 0.37) * np.cos(np.arange(n) * 0.011))


MAKERS = {
    "loop_a.csv": lambda f: (os.symlink("loop_b.csv", f / "loop_a.csv"), os.symlink("loop_a.csv", f / "loop_b.csv")),
    "pipe.csv": lambda f: os.mkfifo(f / "pipe.csv"),
    "curve_many_rows.csv": lambda f: (f / "curve_many_rows.csv").write_text(
        "speed_mps,power_kw\n" + "".join(f"{i * 0.0002:.4f},0\n" for i in range(100_000)), encoding="utf-8"),
    "curve_binary_header.csv": lambda f: (f / "curve_binary_header.csv").write_bytes(
        bytes((32 + (i * 7919) % 95) if i % 97 else 27 for i in range(100_000)) + b"\n0,0\n25,3000\n"),
    "series_ten_minute_summer.csv": lambda f: _series(f, "series_ten_minute_summer.csv",
                                                      _stamps("2025-05-01", 153 * 144, "10min"), _varying(153 * 144)),
    "series_one_january.csv": lambda f: _series(f, "series_one_january.csv", _stamps("2025-01-01", 744, "h"),
                                                _varying(744)),
    "series_kmh.csv": lambda f: _series(f, "series_kmh.csv", _stamps("2025-01-01", 8760, "h"), 3.6 * _varying(8760)),
    "series_constant.csv": lambda f: _series(f, "series_constant.csv", _stamps("2025-01-01", 8760, "h"),
                                             [7.0] * 8760),
    "series_daily.csv": lambda f: _series(f, "series_daily.csv", _stamps("2024-01-01", 731, "D"), _varying(731)),
    "series_from_pipe.csv": lambda f: os.mkfifo(f / "series_from_pipe.csv"),
    "series_many_rows.csv": lambda f: (f / "series_many_rows.csv").write_bytes(
        b"timestamp,speed_mps\n" + b"x\n" * 1_600_000),
    "series_huge_file.csv": lambda f: _sparse(f / "series_huge_file.csv", 250 * 2 ** 20),
    "ro.csv": lambda f: ((f / "ro.csv").write_text("earlier results\n", encoding="utf-8"), os.chmod(f / "ro.csv", 0o444)),
    "link.csv": lambda f: ((f / "target.csv").write_text("earlier results\n", encoding="utf-8"),
                           os.symlink("target.csv", f / "link.csv")),
    "hard.csv": lambda f: os.link(f / "curve.csv", f / "hard.csv"),
    "out_pipe.csv": lambda f: os.mkfifo(f / "out_pipe.csv"),
    "out_folder.csv": lambda f: (f / "out_folder.csv").mkdir(),
    "big_key.toml": lambda f: (f / "big_key.toml").write_text(
        (HOSTILE / "site_with_curve.toml").read_text(encoding="utf-8").replace(
            "[losses]\n", "[losses]\n" + "k" * (1 << 20) + " = 1\n", 1), encoding="utf-8"),
    "scenario_pipe.toml": lambda f: os.mkfifo(f / "scenario_pipe.toml"),
}


def _sparse(path: Path, size: int) -> None:
    with open(path, "wb") as fh:
        fh.write(b"timestamp,speed_mps\n")
        fh.truncate(size)


# --------------------------------------------------------------------------- the cases

# (id, scenario file or None, files the case needs beside it, command line after `lcoe`, message regex, timeout s)
# In the command line, SCN stands for the scenario's path.
V = "'{}'"
CASES = [
    # ---- outputs never destroy
    ("output_is_the_scenario", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--csv", "site_with_curve.toml"],
     r"error: --csv = 'site_with_curve\.toml': is the scenario, an input of this run; writing there would destroy it",
     60),
    ("output_is_the_power_curve", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--workbook", "curve.csv"],
     r"error: --workbook = 'curve\.csv': is turbine\.power_curve, an input of this run; writing there would destroy it",
     60),
    ("output_is_the_curve_by_a_hard_link", "site_with_curve.toml", ["curve.csv", "hard.csv"],
     ["run", "SCN", "--csv", "hard.csv"],
     r"error: --csv = 'hard\.csv': is turbine\.power_curve, an input of this run; writing there would destroy it", 60),
    ("output_read_only", "site_with_curve.toml", ["curve.csv", "ro.csv"], ["run", "SCN", "--csv", "ro.csv"],
     r"error: --csv = 'ro\.csv': is read-only; give another path, or --force to replace it", 60),
    ("output_symbolic_link", "site_with_curve.toml", ["curve.csv", "link.csv"], ["run", "SCN", "--csv", "link.csv"],
     r"error: --csv = 'link\.csv': is a symbolic link; give another path, or --force to replace the link "
     r"\(its target is left alone\)", 60),
    ("output_null_device", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--csv", "/dev/null"],
     r"error: --csv = '/dev/null': is not a regular file \(a device, pipe or socket\); outputs are written only to "
     r"regular files", 60),
    ("output_null_device_forced", "site_with_curve.toml", ["curve.csv"],
     ["run", "SCN", "--workbook", "/dev/null", "--force"],
     r"error: --workbook = '/dev/null': is not a regular file \(a device, pipe or socket\); outputs are written only "
     r"to regular files", 60),
    ("output_named_pipe", "site_with_curve.toml", ["curve.csv", "out_pipe.csv"], ["run", "SCN", "--csv", "out_pipe.csv"],
     r"error: --csv = 'out_pipe\.csv': is not a regular file \(a device, pipe or socket\); outputs are written only to "
     r"regular files", 60),
    ("output_folder", "site_with_curve.toml", ["curve.csv", "out_folder.csv"], ["run", "SCN", "--csv", "out_folder.csv"],
     r"error: --csv = 'out_folder\.csv': is a folder; give a file name", 60),
    ("output_empty_name", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--workbook", ""],
     r"error: --workbook = '': the path is empty; give a file name", 60),
    ("output_workbook_to_stdout", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--workbook", "-"],
     r"error: --workbook = '-': cannot be standard output \('-'\); give a file name", 60),
    ("output_csv_and_json_both_to_stdout", "site_with_curve.toml", ["curve.csv"],
     ["run", "SCN", "--csv", "-", "--json"],
     r"error: --csv = '-': and --json both write to standard output; choose one", 60),
    ("output_twice_the_same_file", "site_with_curve.toml", ["curve.csv"],
     ["run", "SCN", "--workbook", "out.xlsx", "--csv", "out.xlsx"],
     r"error: --csv = 'out\.xlsx': is also the --workbook output; give each output its own file", 60),
    # ---- Monte Carlo keys that cannot be drawn
    ("mc_overhaul_year", "mc_overhaul_year.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.maintenance\.overhaul\.blade refurbishment\.year: is a whole number \(a year or a "
     r"count\): a trial's draw of, say, 11\.6 would match no year, so it cannot be drawn; compare whole values with "
     r"variants or `lcoe sweep`", 60),
    ("mc_debt_interest_rate", "mc_debt_interest.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.finance\.debt\.interest_rate: is a term of the debt, which is sized once at "
     r"financial close; every trial meets that schedule, so its draws would change nothing; compare values with "
     r"variants or `lcoe sweep` \(which re-size the debt\)", 60),
    ("mc_debt_target_dscr", "mc_debt_target_dscr.toml", [], ["check", "SCN"],
     r"error: SCN: montecarlo\.vary\.finance\.debt\.target_dscr: is a term of the debt, .*", 60),
    ("mc_debt_tenor", "mc_debt_tenor.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.finance\.debt\.tenor_years: is a whole number \(a year or a count\).*", 60),
    ("mc_cost_of_a_part_that_never_fails", "mc_unused_cost.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.maintenance\.component\.gearbox\.replacement_cost: is not used in this scenario "
     r"\(the component never fails \(maintenance\.component\.gearbox\.failure_rate_per_turbine_year = 0\)\), so its "
     r"draws would change nothing", 60),
    ("mc_draws_that_move_nothing", "mc_idle_height.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.wind\.height_m: its draws change no result \(every figure is the same at its P10 "
     r"92 and its P90 108\): this scenario does not use it", 90),
    ("mc_draws_that_move_nothing_in_check", "mc_idle_height.toml", [], ["check", "SCN"],
     r"error: SCN: montecarlo\.vary\.wind\.height_m: its draws change no result .*", 90),
    ("mc_no_spread", "mc_no_spread.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.capex\.turbine_per_kw\.sd = 0\.0: must be > 0: with no spread every trial draws "
     r"the same value", 60),
    ("mc_sd_1e308", "mc_sd_1e308.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.vary\.capex\.turbine_per_kw\.sd = 1e\+308: must be <= 1e\+12", 60),
    ("mc_trials_in_the_file", "mc_trials_too_many.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: montecarlo\.trials = 100000000: must be <= 10000000", 60),
    ("mc_trials_on_the_command_line", "site_with_curve.toml", ["curve.csv"],
     ["run", "SCN", "--trials", "1e8", "--csv", "out.csv"],
     r"error: --trials = 100000000: must be at most 10,000,000 \(the limit montecarlo\.trials has in the file\)", 60),
    ("mc_trials_a_trillion", "site_with_curve.toml", ["curve.csv"], ["run", "SCN", "--trials", "1e12"],
     r"error: --trials = 1000000000000: must be at most 10,000,000 \(the limit montecarlo\.trials has in the file\)",
     60),
    ("bench_trials", None, [], ["bench", "--trials", "1e11"],
     r"error: --trials = 100000000000: must be at most 10,000,000 \(the limit montecarlo\.trials has in the file\)", 60),
    ("mc_seed_beyond_a_spreadsheet", "mc_seed_huge.toml", [], ["run", "SCN", "--workbook", "out.xlsx"],
     r"error: SCN: montecarlo\.seed = 9007199254740993: must be <= 9007199254740991", 60),
    ("mc_seed_of_400_digits", "mc_seed_400_digits.toml", [], ["check", "SCN"],
     r"error: SCN: line 7\d: a number with more than 30 digits; numbers in a scenario are written with at most 30 "
     r"\(use an exponent, e\.g\. 1\.5e9\)", 60),
    # ---- series by their real time step
    ("series_ten_minute_summer", "series_ten_minute_summer.toml", ["series_ten_minute_summer.csv"],
     ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_ten_minute_summer\.csv: wind\.timeseries = 'series_ten_minute_summer\.csv': covers 5 of the 12 "
     r"calendar months well enough: too little data in January, February, March and 4 more; an annual energy needs "
     r"at least half of every calendar month \(a year or more of record\)", 90),
    ("series_one_january", "series_one_january.toml", ["series_one_january.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_one_january\.csv: wind\.timeseries = 'series_one_january\.csv': covers 1 of the 12 calendar "
     r"months well enough: too little data in February, March, April and 8 more; .*", 60),
    ("series_one_hour_in_check", "series_one_hour.toml", ["series_one_hour.csv"], ["check", "SCN"],
     r"error: DIR/series_one_hour\.csv: wind\.timeseries = 'series_one_hour\.csv': covers 0 of the 12 calendar months "
     r"well enough: .*", 60),
    ("series_in_km_per_hour", "series_kmh.toml", ["series_kmh.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_kmh\.csv: wind\.timeseries = 'series_kmh\.csv': the mean speed is 2\d\.\d m/s; no site has "
     r"a mean above 20 m/s \(is the column in km/h or knots\? speed_mps is in m/s\)", 60),
    ("series_constant", "series_constant.toml", ["series_constant.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_constant\.csv: wind\.timeseries = 'series_constant\.csv': every speed in the series is "
     r"7\.0\d* m/s; a constant record is not wind", 60),
    ("series_daily_means", "series_daily.toml", ["series_daily.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_daily\.csv: wind\.timeseries = 'series_daily\.csv': rows are 24 h apart \(the most common "
     r"step\); the energy needs hourly or finer data \(a mean over hours hides the speeds the power curve sees\)", 60),
    ("series_named_pipe", "series_from_pipe.toml", ["series_from_pipe.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_from_pipe\.csv: wind\.timeseries = 'series_from_pipe\.csv': is not a regular file \(a pipe, "
     r"device or socket\); give a CSV file", 30),
    ("series_of_1_6_million_rows", "series_many_rows.toml", ["series_many_rows.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_many_rows\.csv: wind\.timeseries = 'series_many_rows\.csv': has more than 1,577,880 rows; a "
     r"series is read up to 1,577,880 \(30 years of 10-minute data\)", 60),
    ("series_of_250_mb", "series_huge_file.toml", ["series_huge_file.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/series_huge_file\.csv: wind\.timeseries = 'series_huge_file\.csv': is 250 MB; a CSV file is read up "
     r"to 200 MB", 30),
    # ---- power curves and absurd values
    ("curve_full_power_at_zero", "curve_full_power_at_zero.toml", ["curve_full_power_at_zero.csv"],
     ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_full_power_at_zero\.csv: turbine\.power_curve = 'curve_full_power_at_zero\.csv': row 2: 3000 kW "
     r"at 0 m/s is more than a 120 m rotor can take from the wind \(the Betz limit 16/27 x 0\.5 rho A v\^3 is 0 kW "
     r"there\)", 60),
    ("curve_speed_1e300", "curve_speed_1e300.toml", ["curve_speed_1e300.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_speed_1e300\.csv: turbine\.power_curve = 'curve_speed_1e300\.csv': row 53: speed must be <= 60 "
     r"m/s \(speed_mps = 1e\+300\); a power curve ends at its cut-out speed", 60),
    ("curve_speed_25000", "curve_speed_25000.toml", ["curve_speed_25000.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_speed_25000\.csv: turbine\.power_curve = 'curve_speed_25000\.csv': row 53: speed must be <= 60 "
     r"m/s \(speed_mps = 25000\); a power curve ends at its cut-out speed", 60),
    ("curve_of_100000_rows", "curve_many_rows.toml", ["curve_many_rows.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_many_rows\.csv: turbine\.power_curve = 'curve_many_rows\.csv': has more than 1,000 rows; a "
     r"power curve has at most 1,000 \(one every 0\.5 m/s to 60 m/s needs 121\)", 60),
    ("curve_number_with_underscore", "curve_underscore.toml", ["curve_underscore.csv"],
     ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_underscore\.csv: turbine\.power_curve = 'curve_underscore\.csv': row 52 is not numeric "
     r"\('25,3_000\.0'\)", 60),
    ("curve_binary_header", "curve_binary_header.toml", ["curve_binary_header.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/curve_binary_header\.csv: turbine\.power_curve = 'curve_binary_header\.csv': header must be "
     r"'speed_mps,power_kw', found '.{40,90}\.\.\.'", 60),
    ("curve_blank_path", "curve_blank_path.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: turbine\.power_curve = '   ': must name a file \(not blank, without control characters\)", 60),
    ("curve_nul_in_path", "curve_nul_in_path.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: turbine\.power_curve = 'cur\\x00ve\.csv': must name a file \(not blank, without control "
     r"characters\)", 60),
    ("curve_zero_device", "curve_zero_device.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: /dev/zero: turbine\.power_curve = 'zero': is not a regular file \(a pipe, device or socket\); give a CSV "
     r"file", 30),
    ("curve_symbolic_link_loop", "curve_from_link.toml", ["loop_a.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/loop_a\.csv: turbine\.power_curve = 'loop_a\.csv': cannot be read \(a loop of symbolic links\)", 30),
    ("curve_named_pipe", "curve_from_pipe.toml", ["pipe.csv"], ["run", "SCN", "--csv", "out.csv"],
     r"error: DIR/pipe\.csv: turbine\.power_curve = 'pipe\.csv': is not a regular file \(a pipe, device or socket\); "
     r"give a CSV file", 30),
    ("money_1e308", "money_1e308.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: capex\.grid_connection = 1e\+308: must be <= 1e\+12", 60),
    ("hub_mean_beyond_20", "hub_mean_above_20.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: wind\.mean_speed_mps = 19\.95: gives a hub-height mean speed of 20\.1 m/s; no site has a mean "
     r"above 20 m/s", 60),
    ("mean_speed_beyond_20", "mean_speed_25.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: wind\.mean_speed_mps = 25\.0: must be <= 20\.0", 60),
    # ---- TOML and scenario shape
    ("toml_nested_5000_deep", "toml_nested_5000.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: line 3: arrays or tables nest more than 32 levels deep; a scenario needs 3", 30),
    ("toml_number_of_400_digits", "number_400_digits.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: line 12: a number with more than 30 digits; numbers in a scenario are written with at most 30 "
     r"\(use an exponent, e\.g\. 1\.5e9\)", 30),
    ("toml_integer_of_100000_digits", "number_100k_digits.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: line 8: a number with more than 30 digits; .*", 30),
    ("toml_unknown_key_of_a_megabyte", None, ["big_key.toml", "curve.csv"], ["run", "big_key.toml", "--csv", "out.csv"],
     r"error: big_key\.toml: losses\.k{70,80}\.\.\.k{70,80}: unknown key", 60),
    ("toml_named_pipe", None, ["scenario_pipe.toml"], ["run", "scenario_pipe.toml", "--csv", "out.csv"],
     r"error: scenario_pipe\.toml: is not a regular file \(a pipe, device or socket\); give a scenario file", 30),
    ("toml_zero_device", None, [], ["run", "/dev/zero", "--csv", "out.csv"],
     r"error: /dev/zero: is not a regular file \(a pipe, device or socket\); give a scenario file", 30),
    ("toml_blank_path", None, [], ["run", " ", "--csv", "out.csv"],
     r"error: no scenario file given \(the path is blank\)", 30),
    ("toml_nul_in_path", None, [], ["check", "site\x01.toml"],
     r"error: site\?\.toml: file not found", 30),
    ("variants_a_thousand", "variants_1000.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: variants: 1000 variants; a scenario compares at most 200", 30),
    ("variant_name_with_a_line_break", "variant_name_newline.toml", [], ["run", "SCN", "--csv", "out.csv"],
     r"error: SCN: variants = 'two\\nlines': a variant's name must be one line of at most 60 printable characters", 30),
]
IDS = [c[0] for c in CASES]


def _snapshot(folder: Path) -> dict:
    """Every entry of a folder: regular files by SHA-256, the others by kind (and a link's target)."""
    out = {}
    for p in sorted(folder.iterdir()):
        st = os.lstat(p)
        if stat.S_ISLNK(st.st_mode):
            out[p.name] = ("link", os.readlink(p))
        elif stat.S_ISREG(st.st_mode):
            h = hashlib.sha256()
            with open(p, "rb") as fh:
                for block in iter(lambda: fh.read(1 << 20), b""):
                    h.update(block)
            out[p.name] = ("file", h.hexdigest(), stat.S_IMODE(st.st_mode))
        else:
            out[p.name] = ("other", stat.S_IFMT(st.st_mode))
    return out


def _prepare(folder: Path, scenario: str | None, files: list[str]) -> None:
    folder.mkdir(parents=True)
    if scenario:
        shutil.copy(HOSTILE / scenario, folder / scenario)
    for name in files:
        if name in MAKERS:
            if name == "hard.csv":
                shutil.copy(HOSTILE / "curve.csv", folder / "curve.csv") if not (folder / "curve.csv").exists() else None
            MAKERS[name](folder)
        elif not (folder / name).exists():
            shutil.copy(HOSTILE / name, folder / name)


def _child(argv, folder: str, out: str, err: str) -> None:
    """In the forked child: the command line with its own stdout and stderr files, then exit with its code."""
    import traceback

    from lcoe import cli
    code = 1
    try:
        os.chdir(folder)
        for fd, path in ((1, out), (2, err)):
            os.dup2(os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o644), fd)
        sys.stdout = open(1, "w", closefd=False)
        sys.stderr = open(2, "w", closefd=False)
        code = cli.main(argv)
    except BaseException:           # a traceback is what the case must not give: keep it for the assertion
        traceback.print_exc()
    finally:
        sys.stdout.flush()
        sys.stderr.flush()
        os._exit(code if isinstance(code, int) else 1)


def _run_case(case, root: Path) -> dict:
    import multiprocessing

    name, scenario, files, argv, _, timeout = case
    folder = root / name
    _prepare(folder, scenario, files)
    argv = [str(folder / scenario) if a == "SCN" else a for a in argv]
    before = _snapshot(folder)
    devnull = os.stat("/dev/null")
    out, err = root / f"{name}.stdout", root / f"{name}.stderr"
    child = multiprocessing.get_context("fork").Process(target=_child, args=(argv, str(folder), str(out), str(err)))
    child.start()
    child.join(timeout)
    if child.is_alive():
        child.kill()
        child.join()
        result = {"timeout": timeout}
    else:
        result = {"code": child.exitcode, "stdout": out.read_text(errors="replace"),
                  "stderr": err.read_text(errors="replace")}
    result.update(before=before, after=_snapshot(folder), folder=str(folder),
                  devnull_kept=stat.S_ISCHR(os.stat("/dev/null").st_mode) and os.stat("/dev/null").st_ino == devnull.st_ino)
    return result


@pytest.fixture(scope="module")
def results(tmp_path_factory):
    """Every case run once, each in its own child process with its own time limit."""
    root = tmp_path_factory.mktemp("hostile")
    return {c[0]: _run_case(c, root) for c in CASES}


def test_every_hostile_scenario_is_in_a_case():
    """Each scenario of tests/broken/hostile/ is refused by a case here or run by a test below."""
    used = {c[1] for c in CASES if c[1]} | {"toml_bom.toml", "mean_speed_half.toml", "ppa_price_zero.toml",
                                           "variants_200.toml", "mc_weibull_shape.toml"}
    assert {p.name for p in HOSTILE.glob("*.toml")} == used
    assert len(CASES) >= 50


@pytest.mark.parametrize("case", CASES, ids=IDS)
def test_a_hostile_input_gets_one_line_exit_2_and_changes_nothing(results, case):
    name, scenario, files, argv, message, timeout = case
    res = results[name]
    assert "timeout" not in res, f"still running after {timeout} s"
    assert "Traceback" not in res["stderr"] and "Traceback" not in res["stdout"]
    assert res["code"] == 2, res["stderr"]
    assert res["stdout"] == ""
    assert res["stderr"].endswith("\n") and res["stderr"].count("\n") == 1, res["stderr"]
    line = res["stderr"].rstrip("\n")
    folder = res["folder"]
    expected = message.replace("DIR", re.escape(folder))
    if scenario:
        expected = expected.replace("SCN", re.escape(str(Path(folder) / scenario)))
    assert re.fullmatch(expected, line), line
    assert len(line) < 600
    assert res["after"] == res["before"]          # nothing written, nothing changed, no temporary file left
    assert res["devnull_kept"]


# --------------------------------------------------------------------------- hostile, yet not errors

def _cli(tmp_path, argv, timeout=120):
    proc = subprocess.run(PYTHON + argv, cwd=tmp_path, capture_output=True, text=True, timeout=timeout,
                          env={**os.environ, "PYTHONPATH": str(ROOT)})
    assert "Traceback" not in proc.stderr
    return proc


def _copy(tmp_path, name, *more):
    for n in (name,) + more:
        shutil.copy(HOSTILE / n, tmp_path / n)
    return str(tmp_path / name)


def test_a_byte_order_mark_in_the_scenario_is_read(tmp_path):
    proc = _cli(tmp_path, ["check", _copy(tmp_path, "toml_bom.toml")])
    assert proc.returncode == 0 and proc.stdout.startswith(f"{tmp_path / 'toml_bom.toml'}: ok (Catalogue Site")


def test_a_calm_site_runs_with_a_warning(tmp_path):
    import json
    proc = _cli(tmp_path, ["run", _copy(tmp_path, "mean_speed_half.toml"), "--json", "--trials", "0"])
    assert proc.returncode == 0, proc.stderr
    rep = json.loads(proc.stdout)
    assert any(w.startswith("the hub-height mean wind speed is 0.50 m/s: below 3 m/s the turbines hardly turn")
               for w in rep["warnings"])


def test_dscr_statistics_name_the_tenor_years_they_leave_out(tmp_path):
    """A zero PPA price: CFADS is negative through the PPA years of the tenor, where nothing can be
    sculpted; the DSCR of the merchant years is reported, with the years it does not cover named."""
    import json
    proc = _cli(tmp_path, ["run", _copy(tmp_path, "ppa_price_zero.toml"), "--json", "--trials", "0"])
    assert proc.returncode == 0, proc.stderr
    rep = json.loads(proc.stdout)
    assert rep["metrics"]["debt_amount"] > 0 and rep["metrics"]["min_dscr"] is not None
    assert ("min_dscr and avg_dscr cover only the tenor years with debt service: CFADS is negative or zero in "
            "year(s) 1-15 of the 18-year tenor, where no debt service could be sculpted") in rep["warnings"]
    assert "payback_year is null: the cumulative equity cash flow never turns non-negative within the life" \
        in rep["warnings"]


def test_two_hundred_variants_run_within_the_limit(tmp_path):
    """The most variants a scenario may hold, each checked and run: linear in their number."""
    proc = _cli(tmp_path, ["check", _copy(tmp_path, "variants_200.toml")], timeout=120)
    assert proc.returncode == 0 and "200 variant(s)" in proc.stdout


def test_drawing_the_weibull_shape_finishes_within_the_limit(tmp_path):
    """10,000 trials drawing the shape (once 75 ms a trial: 13 minutes) read the shape's table."""
    import json
    proc = _cli(tmp_path, ["run", _copy(tmp_path, "mc_weibull_shape.toml"), "--json"], timeout=120)
    assert proc.returncode == 0, proc.stderr
    mc = json.loads(proc.stdout)["montecarlo"]
    assert mc["trials"] == 10000 and mc["lcoe_nominal_per_mwh"]["sd"] > 0


def test_csv_to_standard_output(tmp_path):
    proc = _cli(tmp_path, ["run", _copy(tmp_path, "site_with_curve.toml", "curve.csv"), "--csv", "-", "--trials", "0"])
    assert proc.returncode == 0 and proc.stderr == ""
    lines = proc.stdout.splitlines()
    assert lines[0].startswith("year,energy_mwh,") and len(lines) == 1 + 21
    assert sorted(p.name for p in tmp_path.iterdir()) == ["curve.csv", "site_with_curve.toml"]


def test_force_replaces_a_read_only_output_and_a_link_but_not_its_target(tmp_path):
    scn = _copy(tmp_path, "site_with_curve.toml", "curve.csv")
    (tmp_path / "ro.csv").write_text("old\n")
    os.chmod(tmp_path / "ro.csv", 0o444)
    (tmp_path / "target.csv").write_text("old\n")
    os.symlink("target.csv", tmp_path / "link.csv")
    for out in ("ro.csv", "link.csv"):
        proc = _cli(tmp_path, ["run", scn, "--csv", out, "--force", "--brief", "--trials", "0"])
        assert proc.returncode == 0, proc.stderr
        assert (tmp_path / out).read_text().startswith("year,")
    assert not (tmp_path / "link.csv").is_symlink() and (tmp_path / "target.csv").read_text() == "old\n"


def test_sigterm_during_the_workbook_write_leaves_nothing(tmp_path):
    """The workbook is written to a temporary file; a SIGTERM in the middle removes it (as Ctrl+C does)."""
    scn = _copy(tmp_path, "site_with_curve.toml", "curve.csv")
    proc = subprocess.Popen(PYTHON + ["run", scn, "--workbook", "out.xlsx", "--trials", "20000", "--brief"],
                            cwd=tmp_path, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, text=True,
                            env={**os.environ, "PYTHONPATH": str(ROOT)})
    try:
        part = None
        for _ in range(120_000):                # until the temporary file appears (the subprocess bounds it)
            part = next((p for p in tmp_path.iterdir() if p.name.endswith(".part")), None)
            if part is not None or proc.poll() is not None:
                break
            time.sleep(0.001)
        assert part is not None, "the write finished before it could be interrupted"
        proc.send_signal(signal.SIGTERM)
        _, stderr = proc.communicate(timeout=60)
    finally:
        if proc.poll() is None:
            proc.kill()
    assert proc.returncode == 128 + signal.SIGTERM
    assert "Traceback" not in stderr
    assert sorted(p.name for p in tmp_path.iterdir()) == ["curve.csv", "site_with_curve.toml"]
