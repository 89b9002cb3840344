"""Fuzzing: generated scenarios, TOML texts and data files, valid and broken.

Whatever goes in, the loader and the engine either answer or raise the project's own
``ScenarioError`` (whose text is one line); nothing else escapes, and a result that comes
out serialises as strict JSON (RFC 8259 has no NaN: nulls instead). Hypothesis drives the
inputs; the example counts stay modest so the suite stays fast.
"""

from __future__ import annotations

import contextlib
import copy
import datetime as dt
import io
import json
import math
import os

import numpy as np
import pytest

from conftest import make_raw
from hypothesis import HealthCheck, event, given, settings
from hypothesis import strategies as st

from lcoe import cli
from lcoe import engine as model
from lcoe.analysis import study
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.keys import is_integer_key
from lcoe.outputs import report
from lcoe.physics import turbine
from lcoe.physics import wind as resource

# LCOE_FUZZ_EXAMPLES=2000 runs a deeper search (by hand); the suite's default stays quick
N = int(os.environ.get("LCOE_FUZZ_EXAMPLES", "60"))
FUZZ = settings(max_examples=N, deadline=None, suppress_health_check=[HealthCheck.too_slow,
                                                                       HealthCheck.function_scoped_fixture])


def _base() -> dict:
    raw = make_raw(**{
        "maintenance.component": [{"name": "gearbox", "failure_rate_per_turbine_year": 0.02,
                                   "replacement_cost": 300000.0, "downtime_days": 30.0}],
        "maintenance.overhaul": [{"name": "blades", "year": 10, "cost_per_turbine": 90000.0}],
        "uncertainty.speed": [{"name": "measurement", "sd": 0.025}],
        "revenue.ppa_term_years": 15,
        "revenue.merchant_price_per_mwh": 50.0,
        "capex.decommissioning_per_kw": 40.0,
        "capex.salvage_per_kw": 10.0,
        "finance.depreciation": "macrs_7",
    })
    raw["variants"] = {"long_life": {"project.lifetime_years": 25, "maintenance.fixed_per_kw_year": 45.0}}
    return raw


BASE = _base()

# values a TOML file can hold, plus None (a Python caller can pass it)
SCALARS = st.one_of(
    st.none(), st.booleans(), st.integers(-2**70, 2**70), st.floats(allow_nan=True, allow_infinity=True),
    st.sampled_from([0, -1, 1, 0.0, -0.0, 1e-300, 1e308, -1e308, 2**63, 0.5, 1.0, 1.5, 60, 61, 10**6]),
    st.text(max_size=12), st.sampled_from(["", "p50", "macrs_5", "normal", "7.4", "gearbox"]),
    st.dates(), st.datetimes(), st.times(),
    # hostile values: huge integers, overflowing floats, terminal escapes, line separators, server paths
    st.sampled_from([10 ** 400, -10 ** 40, 2 ** 53 + 1, 1e308 * 10, 5e-324, "\x1b[2J\x1b[31m", "a\u2028b",
                     "../../../../etc/passwd", "/dev/zero", "x" * 5000, "\x00"]),
)
VALUES = st.recursive(SCALARS, lambda inner: st.lists(inner, max_size=3) |
                      st.dictionaries(st.text(max_size=8), inner, max_size=3), max_leaves=6)


def _paths(node, prefix=()):
    """Every (path) to a value in nested dicts and lists."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield prefix + (k,)
            yield from _paths(v, prefix + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield prefix + (i,)
            yield from _paths(v, prefix + (i,))


def _get(node, path):
    for p in path:
        node = node[p]
    return node


def _tables(node):
    return [p for p in [()] + list(_paths(node)) if isinstance(_get(node, p), dict)]


@st.composite
def mutated(draw, base=BASE):
    """The base with 0..5 random edits: deletions, type swaps, out-of-range numbers, unknown keys,
    variant overrides of real or invented keys."""
    raw = copy.deepcopy(base)
    for _ in range(draw(st.integers(0, 5))):
        op = draw(st.sampled_from(["delete", "swap", "scale", "unknown", "variant"]))
        paths = list(_paths(raw))
        if op == "delete" and paths:
            path = draw(st.sampled_from(paths))
            del _get(raw, path[:-1])[path[-1]]
        elif op == "swap" and paths:
            path = draw(st.sampled_from(paths))
            _get(raw, path[:-1])[path[-1]] = draw(VALUES)
        elif op == "scale":
            nums = [p for p in paths if isinstance(_get(raw, p), (int, float)) and not isinstance(_get(raw, p), bool)]
            if nums:
                path = draw(st.sampled_from(nums))
                v = _get(raw, path)
                factor = draw(st.sampled_from([-1, 0, 2, 10, 1000, 1e6, 0.001, 1e-9]))
                new = v * factor
                _get(raw, path[:-1])[path[-1]] = int(new) if isinstance(v, int) and abs(new) < 2**63 else new
        elif op == "unknown":
            table = draw(st.sampled_from(_tables(raw)))
            _get(raw, table)[draw(st.text(min_size=1, max_size=10))] = draw(VALUES)
        elif op == "variant":
            keys = sc.numeric_keys(sc.from_dict(base)) + ["wind.weibull_shape", "turbine.cp_max",
                                                        "finance.depreciation", "maintenance.overhaul",
                                                        "finance.debt", "losses"]
            key = draw(st.sampled_from(keys) | st.text(max_size=20))
            value = draw(VALUES | st.floats(-1e3, 1e3) | st.integers(-5, 80))
            variants = raw.setdefault("variants", {})
            if isinstance(variants, dict):
                variants.setdefault(draw(st.sampled_from(["a", "b", "long_life"])), {})
                target = variants[draw(st.sampled_from(list(variants)))]
                if isinstance(target, dict):
                    target[key] = value
    return raw


@st.composite
def nudged(draw, base=BASE):
    """The base with 1..6 numbers moved by a factor 0.3..3 (integers by a few units): mostly
    valid scenarios, some just over a limit, so the engine sees many plausible inputs."""
    raw = copy.deepcopy(base)
    nums = [p for p in _paths(raw) if isinstance(_get(raw, p), (int, float)) and not isinstance(_get(raw, p), bool)
            and p != ("schema_version",)]
    for path in draw(st.lists(st.sampled_from(nums), min_size=1, max_size=6, unique=True)):
        v = _get(raw, path)
        new = v + draw(st.integers(-5, 5)) if isinstance(v, int) else v * draw(st.floats(0.3, 3.0))
        _get(raw, path[:-1])[path[-1]] = new
    return raw


def _assert_one_line(exc: ScenarioError):
    text = str(exc)
    assert len(text.splitlines()) == 1, text
    assert exc.line() == text
    assert len(text) < 700, len(text)                  # parts are cut: no screenful from one mistake
    assert all(ch.isprintable() for ch in text), text  # no control character reaches the terminal


def _strict_json(case_or_report):
    text = report.to_json(case_or_report)      # allow_nan=False: a NaN left anywhere raises here
    json.loads(text)
    return text


# --------------------------------------------------------------------------- targets


@FUZZ
@given(raw=mutated() | nudged())
def test_fuzz_scenario_dicts_through_loader_and_engine(raw):
    """Target 1: mutated scenario dictionaries through from_dict, model.run and the JSON report."""
    try:
        scn = sc.from_dict(raw, source="fuzz.toml")
    except ScenarioError as exc:
        _assert_one_line(exc)
        assert str(exc).startswith("fuzz.toml: ")
        event("refused by the loader")
        return
    try:
        rep = study.build(scn, trials=0)
    except ScenarioError as exc:
        _assert_one_line(exc)
        event("refused by the engine")
        return
    event("ran")
    _strict_json(rep)
    for key, value in rep.case.metrics.items():
        assert value is None or math.isfinite(value), key


@settings(max_examples=max(80, N), deadline=None)
@given(raw=st.dictionaries(st.sampled_from(list(BASE) + ["extra"]), VALUES, max_size=6) |
       VALUES.filter(lambda v: not isinstance(v, dict)))
def test_fuzz_arbitrary_structures_through_the_loader(raw):
    """Target 2: anything at all (scalars, lists, random tables) in place of a scenario."""
    if isinstance(raw, dict):
        raw.setdefault("schema_version", 1)
    try:
        sc.from_dict(raw, source="fuzz.toml")
    except ScenarioError as exc:
        _assert_one_line(exc)


DEMO_TEXT = sc.to_toml(BASE)


@st.composite
def edited_text(draw):
    text = DEMO_TEXT
    for _ in range(draw(st.integers(1, 4))):
        i = draw(st.integers(0, len(text)))
        j = min(len(text), i + draw(st.integers(0, 12)))
        junk = draw(st.text(st.sampled_from(list("=[]\"'.,#\n 0123456789-abc_{}ε\t")), max_size=6))
        text = text[:i] + junk + text[j:]
    return text


@FUZZ
@given(text=edited_text())
def test_fuzz_toml_text_through_the_command_line(text, tmp_path_factory):
    """Target 3: a scenario file with random edits, run by ``lcoe run --csv``: exit 0 with the CSV
    written, or exit 2 with one stderr line and no CSV; never a traceback."""
    folder = tmp_path_factory.mktemp("fuzz")
    path, out = folder / "fuzz.toml", folder / "yearly.csv"
    path.write_text(text, encoding="utf-8")
    so, se = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
        code = cli.main(["run", str(path), "--csv", str(out), "--brief", "--trials", "0"])
    event(f"exit {code}")
    if code == 0:
        assert out.exists() and se.getvalue() == ""
    else:
        assert code == 2
        assert se.getvalue().count("\n") == 1 and se.getvalue().startswith(f"error: {path}")
        assert not out.exists()
    assert sorted(p.name for p in folder.iterdir()) in (["fuzz.toml"], ["fuzz.toml", "yearly.csv"])


CURVE_LINES = ["speed_mps,power_kw"] + [f"{v},{min(3000.0, 2.9 * v ** 3) if v >= 3 else 0.0:.1f}" for v in range(0, 26)]
CELLS = st.sampled_from(["", "nan", "inf", "-1", "1e9", "abc", "3000", "0", "12.5", "1,2", '"', "3000000", "3",
                         "3_000", "1e300", "25000", "\u0663", "0x10", "1e-400", " 7 ", "+5", "61"])


@st.composite
def curve_files(draw):
    lines = list(CURVE_LINES)
    for _ in range(draw(st.integers(0, 4))):
        i = draw(st.integers(0, len(lines) - 1))
        op = draw(st.sampled_from(["cell", "drop", "dup", "swap", "junk"]))
        if op == "cell":
            parts = lines[i].split(",")
            parts[draw(st.integers(0, len(parts) - 1))] = draw(CELLS)
            lines[i] = ",".join(parts)
        elif op == "drop":
            del lines[i]
        elif op == "dup":
            lines.insert(i, lines[i])
        elif op == "swap" and i + 1 < len(lines):
            lines[i], lines[i + 1] = lines[i + 1], lines[i]
        elif op == "junk":
            lines[i] = draw(st.text(max_size=15))
        if not lines:
            break
    return "\n".join(lines) + draw(st.sampled_from(["\n", "", "\r\n", "\n\n"]))


@FUZZ
@given(text=curve_files())
def test_fuzz_power_curve_files(text, tmp_path_factory):
    """Target 4: power-curve CSVs with bad cells, missing, repeated and swapped rows, junk lines."""
    path = tmp_path_factory.mktemp("curve") / "curve.csv"
    path.write_bytes(text.encode("utf-8", "surrogatepass"))
    try:
        curve = turbine.read_curve_csv(path, 3000.0, 120.0)
    except ScenarioError as exc:
        event("refused")
        _assert_one_line(exc)
        assert str(exc).startswith(f"{path}: turbine.power_curve = 'curve.csv': ")
        return
    site = curve.at_density(1.18)
    assert all(math.isfinite(x) for x in site.power_kw([0.0, 5.0, 12.0, 30.0]))
    # what was accepted is physical and bounded: speeds 0..60 m/s, no power beyond Betz (1920)
    assert curve.speed_mps.size <= turbine.MAX_CURVE_ROWS and 0 <= curve.speed_mps.min() <= curve.speed_mps.max() <= 60
    betz = turbine.BETZ_LIMIT * turbine.wind_power_kw(curve.speed_mps, 1.225, float(turbine.swept_area_m2(120.0)))
    assert np.all(curve.power_kw <= 1.01 * betz + 1.0)


@st.composite
def series_files(draw):
    rows = ["timestamp,speed_mps,temperature_c"]
    start = dt.datetime(2025, 3, 1, tzinfo=dt.timezone.utc)
    n = draw(st.integers(0, 60))
    step = draw(st.sampled_from([60, 60, 10, 30, 180, 1440]))        # minutes: hourly most often
    for h in range(n):
        rows.append(f"{(start + dt.timedelta(minutes=step * h)).isoformat()},{5 + h % 7},{10 + h % 5}")
    for _ in range(draw(st.integers(0, 5))):
        if len(rows) < 2:
            break
        i = draw(st.integers(1, len(rows) - 1))
        op = draw(st.sampled_from(["cell", "drop", "dup", "junk", "header"]))
        if op == "cell":
            parts = rows[i].split(",")
            parts[draw(st.integers(0, len(parts) - 1))] = draw(CELLS | st.sampled_from(["2025-13-01T00:00", "yesterday",
                                                                                          "-5"]))
            rows[i] = ",".join(parts)
        elif op == "drop":
            del rows[i]
        elif op == "dup":
            rows.insert(i, rows[i])
        elif op == "junk":
            rows[i] = draw(st.text(max_size=20))
        elif op == "header":
            rows[0] = draw(st.sampled_from(["timestamp,speed_mps", "time,speed", "timestamp,speed_mps,speed_mps", ""]))
    return "\n".join(rows) + "\n"


@FUZZ
@given(text=series_files(), share=st.sampled_from([0.0, 0.2, 0.9]))
def test_fuzz_hourly_series_files(text, share, tmp_path_factory):
    """Target 5: hourly series with bad cells, gaps, duplicates, junk lines and broken headers."""
    path = tmp_path_factory.mktemp("series") / "wind.csv"
    path.write_text(text, encoding="utf-8")
    try:
        series = resource.load_series(path, max_missing_share=share)
    except ScenarioError as exc:
        event("refused")
        _assert_one_line(exc)
        assert str(exc).startswith(f"{path}: wind.timeseries = 'wind.csv': ")
        return
    assert series.hours == series.speed_mps.size > 0           # the samples kept
    assert 60 <= series.step_s <= 3600                    # hourly or finer, whatever the rows say
    assert all(math.isfinite(x) and 0 <= x <= 75 for x in series.speed_mps)
    assert all("\n" not in w for w in series.warnings)
    with pytest.raises(ScenarioError, match=r"covers \d+ of the 12 calendar months well enough"):
        resource.require_year(series, path)               # never a year: refused for energy, not averaged


@FUZZ
@given(overrides=st.dictionaries(
    st.sampled_from(["project.lifetime_years", "finance.debt.tenor_years", "revenue.ppa_price_per_mwh",
                     "maintenance.component.gearbox.failure_rate_per_turbine_year", "maintenance.overhaul.blades.year",
                     "capex.turbine_per_kw", "losses.wake", "operations.availability_mature",
                     "finance.debt.max_gearing", "finance.debt.target_dscr", "wind.mean_speed_mps",
                     "finance.discount_rate", "revenue.ppa_term_years", "finance.depreciation_years"]),
    st.integers(-3, 70) | st.floats(-2.0, 200.0, allow_nan=False), min_size=1, max_size=4))
def test_fuzz_variants_through_the_engine(overrides):
    """Target 6: variants overriding real keys with numbers in and out of range."""
    raw = copy.deepcopy(BASE)
    raw["variants"] = {"v": overrides}
    try:
        scn = sc.from_dict(raw, source="fuzz.toml")
    except ScenarioError as exc:
        _assert_one_line(exc)
        assert str(exc).startswith("fuzz.toml: variants.v")
        event("refused")
        return
    event("ran")
    case = model.run(scn.variant("v"))
    for key, value in case.metrics.items():
        assert value is None or math.isfinite(value), key


FRAGMENTS = st.one_of(
    st.integers(20, 60).map(lambda d: "deep = " + "[" * d + "1" + "]" * d),
    st.integers(20, 60).map(lambda d: "deep = " + "{a = " * d + "1" + "}" * d),
    st.integers(25, 60).map(lambda n: "big = " + "9" * n),
    st.integers(25, 60).map(lambda n: "big = 0." + "1" * n),
    st.sampled_from(["huge = 1e99999", "k" * 3000 + " = 1", 'name = "a\\u0000b"', 'name = "\\u001b[2J"',
                     'power_curve = "/dev/zero"', 'timeseries = "../../../../etc/passwd"', "seed = 9" * 3,
                     "trials = 100000000", "grid_connection = 1e308", 'x = """' + "[" * 50 + '"""']),
)


@FUZZ
@given(fragment=FRAGMENTS, at=st.floats(0.0, 1.0), bom=st.booleans())
def test_fuzz_hostile_toml_text(fragment, at, bom, tmp_path_factory):
    """Target 7: the demo text with a hostile fragment (deep nesting, huge numbers, huge keys, control
    characters, device and server paths) on some line: exit 0 or 2, one line, never a traceback."""
    lines = DEMO_TEXT.splitlines()
    i = int(at * len(lines))
    text = "\n".join(lines[:i] + [fragment] + lines[i:]) + "\n"
    folder = tmp_path_factory.mktemp("hostile")
    path = folder / "fuzz.toml"
    path.write_bytes((b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8"))
    so, se = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(so), contextlib.redirect_stderr(se):
        code = cli.main(["check", str(path)])
    event(f"exit {code}")
    assert code in (0, 2)
    if code == 2:
        assert se.getvalue().count("\n") == 1 and se.getvalue().startswith("error: ")
        assert len(se.getvalue()) < 700 and all(ch.isprintable() for ch in se.getvalue().rstrip("\n"))
    assert sorted(p.name for p in folder.iterdir()) == ["fuzz.toml"]


VARY_KEYS = sorted(set(sc.numeric_keys(sc.from_dict(BASE))) | {"wind.weibull_shape", "montecarlo.seed",
                                                                 "uncertainty.interannual_speed_sd"})
SPECS = st.one_of(
    st.builds(lambda sd: {"distribution": "normal", "sd": sd}, st.sampled_from([0.0, 1e-3, 0.05, 1.0, 50.0, 1e12])),
    st.builds(lambda lo, w: {"distribution": "uniform", "low": lo, "high": lo + w},
              st.floats(-5.0, 2000.0), st.sampled_from([0.0, 0.01, 1.0, 10.0])),
    st.builds(lambda sd: {"distribution": "lognormal", "sd": sd}, st.sampled_from([0.01, 1.0, 1e6])),
)


@FUZZ
@given(vary=st.dictionaries(st.sampled_from(VARY_KEYS), SPECS, min_size=1, max_size=3))
def test_fuzz_monte_carlo_keys(vary):
    """Target 8: Monte Carlo on any numeric key with any spread. Whole-number keys, debt terms and the
    file's settings are refused at load; a run that goes ahead moves some result with each key."""
    from lcoe.analysis import montecarlo

    raw = copy.deepcopy(BASE)
    raw["montecarlo"] = {"trials": 64, "vary": vary}
    try:
        scn = sc.from_dict(raw, source="fuzz.toml")
        res = montecarlo.monte_carlo(scn, trials=64)
    except ScenarioError as exc:
        _assert_one_line(exc)
        event("refused")
        return
    event("ran")
    for key in vary:
        assert not key.startswith(("finance.debt.", "montecarlo.", "uncertainty.", "project."))
        assert not is_integer_key(key)
    assert res.samples["lcoe_nominal_per_mwh"].size == 64
