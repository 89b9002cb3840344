"""A catalogue of broken scenarios and data files: each one gets one clear line and no output.

Every file ``tests/broken/NAME.toml`` departs from ``tests/broken/valid_base.toml`` in one
way (its first line says which). Each is run through the command line exactly as a user
would, ``lcoe run FILE --csv OUT``, and must give

* exit code 2,
* exactly one line on stderr, of the form ``error: FILE: dotted.key = value: what is expected``
  (without ``= value`` where there is none, without the key for file-level problems),
  where FILE is the scenario, or the data file when the problem lies in one,
* no traceback, nothing on stdout,
* and no output file (nor a temporary one) afterwards.

The expected texts are this project's own wording (docs/SCENARIO contract: "name the file,
the dotted key and the offending value"); the rules they enforce are cited where they
come from outside the project.
"""

from __future__ import annotations

import contextlib
import importlib.util
import io
import json
import re
from pathlib import Path

import pytest

from lcoe import cli

BROKEN = Path(__file__).resolve().parent / "broken"
VALID = BROKEN / "valid_base.toml"
TOML = "toml"   # the message names the scenario file itself

# (fixture, file named in the message, dotted key or None, shown value or None, message regex)
CASES = [
    # ---- TOML syntax: line and column (TOML 1.0 specification, toml.io)
    ("syntax_unclosed_string", TOML, None, None,
     r"TOML syntax error at line 5, column 23: illegal character .* \(a string or value is not closed on its line\); "
     r"the line reads 'name = \"Catalogue Site'"),
    ("syntax_duplicate_key", TOML, None, None,
     r"TOML syntax error at line 9, column 13: cannot overwrite a value \(a key is given twice\); "
     r"the line reads 'turbines = 9'"),
    ("syntax_missing_value", TOML, None, None,
     r"TOML syntax error at line 63, column 11: invalid value \(text needs quotes; numbers use '\.' for decimals\); "
     r"the line reads 'tax_rate ='"),
    ("syntax_comma_decimal", TOML, None, None,
     r"TOML syntax error at line 28, column 9: expected newline or end of document after a statement "
     r"\(one key = value per line; numbers use '\.' for decimals\); the line reads 'wake = 0,07'"),
    ("syntax_table_twice", TOML, None, None,
     r"TOML syntax error at line 56, column 7: cannot declare \[capex\] twice; the line reads '\[capex\]'"),
    # ---- schema version
    ("schema_version_missing", TOML, "schema_version", None, r"is required \(this program reads version 1\)"),
    ("schema_version_future", TOML, "schema_version", "2", r"unsupported; this program reads version 1"),
    ("schema_version_text", TOML, "schema_version", "'1'", r"unsupported; this program reads version 1"),
    # ---- unknown keys, with a suggestion (difflib)
    ("unknown_section", TOML, "finanse", None, r"unknown key \(did you mean 'finance'\?\)"),
    ("unknown_key_wind", TOML, "wind.mean_speed", None, r"unknown key \(did you mean 'wind\.mean_speed_mps'\?\)"),
    ("unknown_key_debt", TOML, "finance.debt.tenor_yaers", None,
     r"unknown key \(did you mean 'finance\.debt\.tenor_years'\?\)"),
    ("unknown_key_component", TOML, "maintenance.component[0].failure_rate", None,
     r"unknown key \(did you mean 'maintenance\.component\[0\]\.failure_rate_per_turbine_year'\?\)"),
    ("unknown_key_percent", TOML, "losses.wake_percent", None, r"unknown key \(did you mean 'losses\.wake'\?\)"),
    # ---- wrong types
    ("type_lifetime_text", TOML, "project.lifetime_years", "'20'", r"must be an integer"),
    ("type_lifetime_fraction", TOML, "project.lifetime_years", "20.5", r"must be an integer"),
    ("type_turbines_bool", TOML, "project.turbines", "True", r"must be an integer"),
    ("type_speed_text", TOML, "wind.mean_speed_mps", "'7.2 m/s'", r"must be a number"),
    ("type_name_number", TOML, "project.name", "2027", r"must be text \(a quoted string\)"),
    ("type_section_value", TOML, "losses", "0.09", r"must be a table"),
    ("type_depreciation_choice", TOML, "finance.depreciation", "'linear'",
     r"must be one of 'straight_line', 'declining_balance', 'macrs_5', 'macrs_7', 'macrs_15' or 'macrs_20'"),
    ("type_component_not_table", TOML, "maintenance.component[0]", "0.02", r"must be a table"),
    # ---- out of range (fractions are 0..1: SCENARIO contract)
    ("range_weibull_shape", TOML, "wind.weibull_shape", "-1.0", r"must be >= 0\.5"),
    ("range_wake_percent", TOML, "losses.wake", "7.0", r"must be < 1\.0"),
    ("range_loss_negative", TOML, "losses.electrical", "-0.02", r"must be >= 0\.0"),
    ("range_lease_share", TOML, "maintenance.land_lease_share_of_revenue", "3.5", r"must be < 1\.0"),
    ("range_lifetime_zero", TOML, "project.lifetime_years", "0", r"must be >= 1"),
    ("range_discount_nan", TOML, "finance.discount_rate", "nan", r"must be a finite number"),
    ("range_capex_negative", TOML, "capex.turbine_per_kw", "-1050.0", r"must be >= 0\.0"),
    ("range_availability_percent", TOML, "operations.availability_mature", "97.0", r"must be <= 1\.0"),
    ("range_turbines_zero", TOML, "project.turbines", "0", r"must be >= 1"),
    # ---- mutually exclusive keys
    ("exclusive_mean_and_scale", TOML, "wind.weibull_scale_mps", "8.1",
     r"cannot be given together with wind\.mean_speed_mps; give exactly one of mean_speed_mps, "
     r"weibull_scale_mps, timeseries or rose"),
    ("exclusive_curve_and_physics", TOML, "turbine.cp_max", "0.45",
     r"cannot be given together with turbine\.power_curve; use a curve table or physics parameters"),
    ("exclusive_shear_and_roughness", TOML, "wind.roughness_length_m", "0.05",
     r"cannot be given together with wind\.shear_exponent; choose the power law or the log law"),
    ("exclusive_no_wind_source", TOML, "wind", None,
     r"give exactly one of mean_speed_mps, weibull_scale_mps, timeseries or rose"),
    ("series_weibull_too", TOML, "wind.timeseries", "'series_weibull_too.csv'",
     r"cannot be given together with wind\.mean_speed_mps; give exactly one of mean_speed_mps, "
     r"weibull_scale_mps, timeseries or rose"),
    # ---- missing required keys
    ("missing_capex_section", TOML, "capex", None, r"is required"),
    ("missing_ppa_price", TOML, "revenue.ppa_price_per_mwh", None, r"is required"),
    ("missing_weibull_shape", TOML, "wind.weibull_shape", None, r"is required with a Weibull climate \(k > 0\)"),
    ("missing_debt_tenor", TOML, "finance.debt.tenor_years", None, r"is required"),
    ("missing_rated_power", TOML, "turbine.rated_power_kw", None, r"is required"),
    # ---- cross-field rules
    ("cross_tenor_beyond_life", TOML, "finance.debt.tenor_years", "22",
     r"must not be longer than project\.lifetime_years = 20"),
    ("cross_overhaul_after_life", TOML, "maintenance.overhaul[0].year", "24",
     r"must lie within the operating life 1\.\.20"),
    ("cross_hub_below_radius", TOML, "turbine.hub_height_m", "55.0",
     r"must be above the rotor radius 60 m \(the blade would reach the ground\)"),
    ("cross_cut_out_below_cut_in", TOML, "turbine.cut_out_mps", "2.5", r"must be above turbine\.cut_in_mps = 3\.0"),
    # Betz (1920): no rotor extracts more than 16/27 of the wind's power
    ("cross_cp_above_betz", TOML, "turbine.cp_max", "0.62", r"must not exceed the Betz limit 16/27 = 0\.5926"),
    ("cross_downtime_all_year", TOML, "maintenance.component", None,
     r"the expected downtime sum\(rate \* downtime_days / 365\) = 1\.23 must be below 1 "
     r"\(the turbines would never run\)"),
    ("cross_duplicate_component", TOML, "maintenance.component[1].name", "'gearbox'",
     r"must be unique within the table"),
    # ---- variants
    ("variant_unknown_key", TOML, "variants.long_life.project.lifetime_yeras", "25",
     r"unknown key \(did you mean 'project\.lifetime_years'\?\)"),
    ("variant_unknown_section", TOML, "variants.cheap_om.maintenence.fixed_per_kw_year", "30.0",
     r"unknown key \(did you mean 'maintenance\.fixed_per_kw_year'\?\)"),
    ("variant_wrong_type", TOML, "variants.long_life.project.lifetime_years", "'25'", r"must be an integer"),
    ("variant_out_of_range", TOML, "variants.lossy.losses.wake", "1.2", r"must be < 1\.0"),
    ("variant_breaks_cross_rule", TOML, "variants.short_life", None,
     r"with this variant, finance\.debt\.tenor_years = 15: must not be longer than project\.lifetime_years = 12"),
    ("variant_unknown_item", TOML,
     "variants.better_bearings.maintenance.component.main bearing.failure_rate_per_turbine_year", None,
     r"no item named 'main bearing' in maintenance\.component \(known: gearbox\)"),
    ("variant_not_table", TOML, "variants.long_life", "25", r"must be a table"),
    # ---- Monte Carlo inputs
    ("montecarlo_unknown_input", TOML, "montecarlo.vary.capex.turbin_per_kw", None,
     r"unknown key \(did you mean 'capex\.turbine_per_kw'\?\)"),
    ("montecarlo_missing_sd", TOML, "montecarlo.vary.capex.turbine_per_kw.sd", None,
     r"is required for a normal distribution"),
    # ---- power-curve files: the message names the data file and the row
    ("curve_missing_file", "curve_missing_file.csv", "turbine.power_curve", "'curve_missing_file.csv'",
     r"file not found"),
    ("curve_wrong_header", "curve_wrong_header.csv", "turbine.power_curve", "'curve_wrong_header.csv'",
     r"header must be 'speed_mps,power_kw', found 'wind_speed,power'"),
    # unit mistake found by magnitude: 3 "kW" peak against 3000 kW rated is a factor 1000
    ("curve_in_mw", "curve_in_mw.csv", "turbine.power_curve", "'curve_in_mw.csv'",
     r"peak power 3 looks like MW; the column power_kw must be in kW \(turbine\.rated_power_kw = 3000\)"),
    ("curve_nan", "curve_nan.csv", "turbine.power_curve", "'curve_nan.csv'",
     r"row 12 has a missing or non-finite value \(power_kw = nan\); every cell must be a number"),
    ("curve_negative_power", "curve_negative_power.csv", "turbine.power_curve", "'curve_negative_power.csv'",
     r"row 10: power must be >= 0 \(power_kw = -189\.5\)"),
    ("curve_not_numeric", "curve_not_numeric.csv", "turbine.power_curve", "'curve_not_numeric.csv'",
     r"row 14 is not numeric \('6,about 500'\)"),
    ("curve_unsorted", "curve_unsorted.csv", "turbine.power_curve", "'curve_unsorted.csv'",
     r"row 17: speeds must increase \(sorted ascending\); 7 m/s follows 7\.5 m/s"),
    ("curve_duplicate_speed", "curve_duplicate_speed.csv", "turbine.power_curve", "'curve_duplicate_speed.csv'",
     r"row 19: duplicate speed 8 m/s \(also on row 18\)"),
    ("curve_peak_off_rated", "curve_peak_off_rated.csv", "turbine.power_curve", "'curve_peak_off_rated.csv'",
     r"peak power 2850 kW differs from turbine\.rated_power_kw = 3000 by more than 2% \(-5\.0%\)"),
    ("curve_empty", "curve_empty.csv", "turbine.power_curve", "'curve_empty.csv'",
     r"is empty; expected the header 'speed_mps,power_kw' and one row per speed"),
    ("curve_one_row", "curve_one_row.csv", "turbine.power_curve", "'curve_one_row.csv'", r"needs at least two rows"),
    ("curve_not_utf8", "curve_not_utf8.csv", "turbine.power_curve", "'curve_not_utf8.csv'",
     r"cannot be read \(UnicodeDecodeError\): not UTF-8 text"),
    ("curve_short_row", "curve_short_row.csv", "turbine.power_curve", "'curve_short_row.csv'",
     r"row 20 has 1 column\(s\), expected 2"),
    # ---- hourly series files
    ("series_missing_file", "series_missing_file.csv", "wind.timeseries", "'series_missing_file.csv'",
     r"file not found"),
    ("series_wrong_header", "series_wrong_header.csv", "wind.timeseries", "'series_wrong_header.csv'",
     r"header must be 'timestamp,speed_mps\[,temperature_c\]', found 'time,ws,temperature_c'"),
    ("series_too_many_gaps", "series_too_many_gaps.csv", "wind.timeseries", "'series_too_many_gaps.csv'",
     r"35\.0% of the hours are missing or bad, more than wind\.max_missing_share = 0\.2 \(504 of 1440 hour\(s\)\)"),
    ("series_no_usable_rows", "series_no_usable_rows.csv", "wind.timeseries", "'series_no_usable_rows.csv'",
     r"has no usable rows \(0 unreadable timestamp\(s\), 48 bad speed\(s\), 0 bad temperature\(s\) of 48\)"),
    ("series_only_header", "series_only_header.csv", "wind.timeseries", "'series_only_header.csv'",
     r"has no data rows"),
    ("series_duplicate_column", "series_duplicate_column.csv", "wind.timeseries", "'series_duplicate_column.csv'",
     r"column 'speed_mps' appears more than once in the header"),
    ("series_ragged_row", "series_ragged_row.csv", "wind.timeseries", "'series_ragged_row.csv'",
     r"cannot be read as CSV \(ParserError: .*Expected 3 fields in line 55, saw 5\)"),
    # ---- directions, layouts and the long-term reference
    ("rose_frequencies_sum", TOML, "wind.rose.frequency", "[...]",
     r"must sum to 1 \(each sector's share of the time\); these sum to 0\.89"),
    ("layout_without_directions", TOML, "layout", None,
     r"a layout needs wind directions: give \[wind\.rose\], or a wind\.timeseries with a direction_deg column"),
    ("layout_keeps_wake_loss", TOML, "losses.wake", "0.07",
     r"cannot be given together with \[layout\]: the wake loss is computed from the layout"),
    # spacing sanity (common practice): no two rotors closer than one diameter
    ("layout_too_close", "layout_too_close.csv", "layout.positions", "'layout_too_close.csv'",
     r"turbines T7 and T8 are 85\.4 m apart, closer than one rotor diameter \(turbine\.rotor_diameter_m = 120\)"),
    ("reference_not_covering", "reference_not_covering.csv", "wind.long_term.reference",
     "'reference_not_covering.csv'",
     r"covers 2024-01-01 00:00 to 2024-03-10 18:00, but the site series reference_site_40days\.csv runs "
     r"2024-03-01 00:00 to 2024-04-09 23:00; the reference must cover the site period"),
]

IDS = [c[0] for c in CASES]
# The one-line form: "error: FILE: " then "key" [" = value"] ": " then the message; no line break anywhere.
LINE_FORM = re.compile(r"^error: (?P<file>[^\n:]+\.(?:toml|csv)): (?P<rest>[^\n]+)$")


def _expected_prefix(name, shown, key, value) -> str:
    file = BROKEN / (f"{name}.toml" if shown == TOML else shown)
    prefix = f"error: {file}: "
    if key is not None:
        prefix += key + (f" = {value}" if value is not None else "") + ": "
    return prefix


def _run(argv):
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        code = cli.main(argv)
    return code, out.getvalue(), err.getvalue()


def test_catalogue_is_large_and_covers_every_fixture():
    """At least 40 cases (issue 8), and no broken fixture sits in tests/broken/ untested."""
    assert len(CASES) >= 40
    assert len(set(IDS)) == len(IDS)
    fixtures = {p.stem for p in BROKEN.glob("*.toml")} - {"valid_base"}
    assert fixtures == set(IDS)
    # every data file is used by a case, by the warning test below, or by a valid variant of the base
    csvs = {p.name for p in BROKEN.glob("*.csv")}
    named = {c[1] for c in CASES if c[1] != TOML} | {"series_weibull_too.csv", "curve_good.csv",
                                                     "series_gaps_and_duplicates.csv", "reference_site_40days.csv"}
    assert csvs <= named


@pytest.mark.parametrize("name, shown, key, value, message", CASES, ids=IDS)
def test_broken_input_gets_one_line_exit_2_and_no_output(tmp_path, name, shown, key, value, message):
    out = tmp_path / "yearly.csv"
    code, stdout, stderr = _run(["run", str(BROKEN / f"{name}.toml"), "--csv", str(out)])
    assert code == 2
    assert "Traceback" not in stderr and "Traceback" not in stdout
    assert stdout == ""
    assert stderr.endswith("\n") and stderr.count("\n") == 1, stderr
    line = stderr.rstrip("\n")
    assert LINE_FORM.match(line), line
    prefix = _expected_prefix(name, shown, key, value)
    assert line.startswith(prefix), line
    assert re.fullmatch(message, line[len(prefix):]), line
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []       # no temporary file left either


@pytest.mark.parametrize("name, shown, key, value, message", CASES, ids=IDS)
def test_check_command_gives_the_same_line(name, shown, key, value, message):
    code, stdout, stderr = _run(["check", str(BROKEN / f"{name}.toml")])
    assert code == 2 and stdout == ""
    line = stderr.rstrip("\n")
    prefix = _expected_prefix(name, shown, key, value)
    assert "\n" not in line and line.startswith(prefix) and re.fullmatch(message, line[len(prefix):]), line


@pytest.mark.parametrize("name, shown, key, value, message", CASES[::3], ids=IDS[::3])
def test_no_workbook_is_left_for_broken_input(tmp_path, name, shown, key, value, message):
    pytest.importorskip("lcoe.outputs.workbook")
    book, table = tmp_path / "lenders.xlsx", tmp_path / "yearly.csv"
    code, stdout, stderr = _run(["run", str(BROKEN / f"{name}.toml"), "--workbook", str(book), "--csv", str(table)])
    assert code == 2 and stderr.count("\n") == 1
    prefix = _expected_prefix(name, shown, key, value)
    assert re.fullmatch(message, stderr.rstrip("\n")[len(prefix):])
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- the valid base


def test_the_base_of_the_catalogue_is_valid(tmp_path):
    """Each broken file differs from a scenario that runs: the failures come from the one change."""
    out = tmp_path / "yearly.csv"
    code, stdout, stderr = _run(["run", str(VALID), "--csv", str(out), "--trials", "0"])
    assert (code, stderr) == (0, "")
    rows = out.read_text(encoding="utf-8").splitlines()
    assert rows[0].startswith("year,energy_mwh,")
    assert len(rows) == 1 + 21           # header, then t = 0..20


def test_an_existing_output_survives_a_broken_scenario(tmp_path):
    out = tmp_path / "yearly.csv"
    out.write_text("earlier results\n", encoding="utf-8")
    code, _, stderr = _run(["run", str(BROKEN / "curve_in_mw.toml"), "--csv", str(out)])
    assert code == 2 and "looks like MW" in stderr
    assert out.read_text(encoding="utf-8") == "earlier results\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["yearly.csv"]


def test_an_output_folder_that_does_not_exist_is_one_line(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = _run(["run", str(VALID), "--csv", "no_such_folder/yearly.csv", "--brief"])
    assert code == 2
    assert stderr == "error: --csv = 'no_such_folder/yearly.csv': folder does not exist: no_such_folder\n"
    assert list(tmp_path.iterdir()) == []


def _failing_rename(monkeypatch, name):
    """The final rename onto ``name`` fails (as on a full or vanished disk), after the data was written."""
    import errno
    import os

    from lcoe.outputs import files
    real = os.replace

    def replace(src, dst):
        if os.path.basename(dst) == name:
            raise OSError(errno.EIO, os.strerror(errno.EIO))
        return real(src, dst)
    monkeypatch.setattr(files.os, "replace", replace)


def test_a_failed_rename_leaves_neither_the_file_nor_a_temporary(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _failing_rename(monkeypatch, "yearly.csv")
    code, _, stderr = _run(["run", str(VALID), "--csv", "yearly.csv", "--brief"])
    assert code == 2
    assert re.fullmatch(r"error: --csv = 'yearly\.csv': cannot write the file \([^\n]+\)\n", stderr)
    assert list(tmp_path.iterdir()) == []


def test_a_folder_in_the_way_of_an_output_is_refused_before_any_work(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    target = tmp_path / "yearly.csv"
    target.mkdir()
    code, _, stderr = _run(["run", str(VALID), "--csv", "yearly.csv", "--brief"])
    assert (code, stderr) == (2, "error: --csv = 'yearly.csv': is a folder; give a file name\n")
    assert [p.name for p in tmp_path.iterdir()] == ["yearly.csv"] and target.is_dir()
    assert list(target.iterdir()) == []


# --------------------------------------------------------------------------- data-file warnings


def test_series_gaps_and_duplicates_are_reported_with_counts(tmp_path):
    """Gaps, duplicate timestamps and bad rows are counted, not fatal, below the missing-share limit."""
    from lcoe.physics import wind as resource

    series = resource.load_series(BROKEN / "series_gaps_and_duplicates.csv")
    text = " | ".join(series.warnings)
    # 960 hours written; 31 left out (100..129 and 500), 2 unreadable speeds, 3 duplicated stamps
    assert "2 row(s) with a missing, negative or non-numeric speed dropped" in text
    assert "3 duplicate timestamp(s); the first of each kept" in text
    assert "33 of 960 hour(s) missing (3.4%); 3 gap(s) in the record, the longest 30 h" in text
    assert series.hours == 960 - 33


def test_a_byte_order_mark_is_not_part_of_the_header(tmp_path):
    """Spreadsheets often save UTF-8 with a byte-order mark (U+FEFF); the curve still reads."""
    from lcoe.physics import turbine

    path = tmp_path / "bom.csv"
    path.write_bytes(b"\xef\xbb\xbf" + (BROKEN / "curve_good.csv").read_bytes())
    curve = turbine.read_curve_csv(path, 3000.0, 120.0)
    assert curve.power_kw.max() == 3000.0


# --------------------------------------------------------------------------- numerical edge cases
# Each gives exit code 0, a warning and a null, never a crash or a made-up number.


def _edge(tmp_path, *subs, extra_files=()) -> dict:
    text = VALID.read_text(encoding="utf-8")
    for old, new in subs:
        assert old in text, old
        text = text.replace(old, new, 1)
    path = tmp_path / "edge.toml"
    path.write_text(text, encoding="utf-8")
    for fname, data in extra_files:
        (tmp_path / fname).write_text(data, encoding="utf-8")
    code, stdout, stderr = _run(["run", str(path), "--json", "--trials", "0"])
    assert (code, stderr) == (0, "")
    return json.loads(stdout)


def test_no_sign_change_gives_a_null_irr_and_zero_debt(tmp_path):
    """A zero price: nothing but costs. IRR has no root (numpy-financial's irr returns NaN here too)."""
    rep = _edge(tmp_path, ("ppa_price_per_mwh = 62.0", "ppa_price_per_mwh = 0.0"))
    m = rep["metrics"]
    assert m["project_irr"] is None and m["equity_irr"] is None
    assert "project irr is null: no sign change in the cash flows" in rep["warnings"]
    assert m["debt_amount"] == 0.0
    assert any(w.startswith("debt cannot be sized: the sizing-case CFADS is not positive") for w in rep["warnings"])
    assert m["min_dscr"] is None and m["llcr"] is None
    assert m["lcoe_nominal_per_mwh"] is not None and m["lcoe_nominal_per_mwh"] > 0


def test_zero_energy_gives_no_lcoe(tmp_path):
    """A calm site (a year with every hour below cut-in): zero energy, so LCOE = cost / 0 is null, not infinite."""
    import pandas as pd

    stamps = pd.date_range("2025-01-01", periods=8760, freq="h", tz="UTC").strftime("%Y-%m-%dT%H:%M:%SZ")
    calm = "timestamp,speed_mps\n" + "".join(f"{t},{0.5 + (h % 25) / 10:.1f}\n" for h, t in enumerate(stamps))
    rep = _edge(tmp_path, ("mean_speed_mps = 7.2\nweibull_shape = 2.0\n", 'timeseries = "calm.csv"\n'),
                extra_files=[("calm.csv", calm)])
    assert rep["energy"]["gross_aep_mwh"] == 0.0
    assert rep["metrics"]["lcoe_nominal_per_mwh"] is None and rep["metrics"]["lcoe_real_per_mwh"] is None
    assert "LCOE is null: the discounted energy is zero" in rep["warnings"]
    assert "gross AEP is zero: the power curve produces nothing in this wind climate" in rep["warnings"]
    assert rep["metrics"]["debt_amount"] == 0.0


def test_a_zero_gearing_cap_is_not_called_a_cfads_shortfall(tmp_path):
    rep = _edge(tmp_path, ("interest_rate = 0.05", "interest_rate = 0.05\nmax_gearing = 0.0"))
    assert rep["metrics"]["debt_amount"] == 0.0
    assert "no debt: finance.debt.max_gearing times the capex is zero" in rep["warnings"]
    assert not any("CFADS is not positive" in w for w in rep["warnings"])
    assert rep["metrics"]["project_irr"] is not None


def test_one_year_life(tmp_path):
    rep = _edge(tmp_path, ("lifetime_years = 20", "lifetime_years = 1"), ("tenor_years = 15", "tenor_years = 1"),
                ("year = 10", "year = 1"))
    assert [r["year"] for r in rep["annual"]] == [0, 1]
    m = rep["metrics"]
    assert m["lcoe_nominal_per_mwh"] is not None and m["lcoe_nominal_per_mwh"] > 0
    # one year of revenue cannot repay the capex: the equity never pays back
    assert m["payback_year"] is None
    assert all(v is None or isinstance(v, (int, float)) for v in m.values())


def test_cash_flows_with_no_real_irr_give_null_with_a_reason():
    """-1 + 3x - 3x^2 = 0 (x = 1 / (1 + r)) has discriminant 9 - 12 < 0: signs change, yet no IRR exists."""
    import numpy as np

    from lcoe.finance import metrics

    rates, reasons = metrics.irr(np.array([[-1.0, 3.0, -3.0], [-100.0, 60.0, 60.0]]))
    assert np.isnan(rates[0]) and reasons == [(0, "no IRR between -99% and 1000%")]
    # the second row: 100 = 60 x + 60 x^2 gives x = 0.8844, r = 13.07 % (quadratic formula; npf.irr agrees)
    assert rates[1] == pytest.approx(0.130662, abs=1e-6)


def test_zero_trials_means_deterministic_only(tmp_path):
    text = VALID.read_text(encoding="utf-8") + "\n[montecarlo]\ntrials = 0\nseed = 7\n"
    path = tmp_path / "zero.toml"
    path.write_text(text, encoding="utf-8")
    code, stdout, stderr = _run(["run", str(path), "--json"])
    assert (code, stderr) == (0, "")
    rep = json.loads(stdout)
    assert "montecarlo" not in rep
    assert rep["metrics"]["lcoe_nominal_per_mwh"] is not None


def test_ppa_term_longer_than_life_is_only_a_warning(tmp_path):
    rep = _edge(tmp_path, ("ppa_term_years = 15", "ppa_term_years = 30"))
    assert ("revenue.ppa_term_years = 30 is longer than project.lifetime_years = 20; "
            "the years past the life are ignored") in rep["warnings"]


@pytest.mark.skipif(importlib.util.find_spec("lcoe.outputs.workbook") is None, reason="lcoe.outputs.workbook not built yet")
def test_when_the_second_output_fails_the_first_is_removed(tmp_path, monkeypatch):
    """--workbook is written first; a --csv that cannot be written takes it away again."""
    monkeypatch.chdir(tmp_path)
    _failing_rename(monkeypatch, "yearly.csv")
    code, _, stderr = _run(["run", str(VALID), "--workbook", "lenders.xlsx", "--csv", "yearly.csv", "--brief",
                            "--trials", "0"])
    assert code == 2
    assert re.fullmatch(r"error: --csv = 'yearly\.csv': cannot write the file \([^\n]+\)\n", stderr)
    assert list(tmp_path.iterdir()) == []          # the workbook went again, and no temporary file is left


def test_a_missing_output_folder_is_refused_before_any_work(tmp_path, monkeypatch):
    """Both outputs are checked first, so a long run does not end in a failed write."""
    monkeypatch.chdir(tmp_path)
    code, stdout, stderr = _run(["run", str(VALID), "--workbook", "lenders.xlsx", "--csv", "out/yearly.csv"])
    assert (code, stdout) == (2, "")
    assert stderr == "error: --csv = 'out/yearly.csv': folder does not exist: out\n"
    assert list(tmp_path.iterdir()) == []
