"""Laws the engine's results must obey, checked on generated scenarios (hypothesis).

Each property is a consequence of a definition outside this project, named beside it:
LCOE as discounted cost over discounted energy (the levelised-cost definition used by
IEA/NEA "Projected Costs of Generating Electricity" and the US national-lab cost-of-wind
reviews, from memory), NPV and IRR as numpy-financial defines them, and the OWASP
guidance on spreadsheet formula injection for text cells.
"""

from __future__ import annotations

import copy
import csv
import re
import tomllib

import numpy as np
import numpy_financial as npf
import pytest
from conftest import make_raw
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from lcoe import engine as model
from lcoe.finance import metrics as mt
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import files

SETTINGS = settings(max_examples=30, deadline=None, suppress_health_check=[HealthCheck.too_slow])


@st.composite
def scenarios(draw):
    """Valid scenarios around the shared test base (invented numbers in plausible ranges)."""
    life = draw(st.integers(10, 30))
    raw = make_raw(**{
        "project.lifetime_years": life,
        "project.turbines": draw(st.integers(1, 40)),
        "wind.mean_speed_mps": draw(st.floats(4.5, 9.0)),
        "wind.weibull_shape": draw(st.floats(1.6, 2.8)),
        "capex.turbine_per_kw": draw(st.floats(600.0, 1600.0)),
        "capex.grid_connection": draw(st.floats(0.0, 2.0e7)),
        "maintenance.fixed_per_kw_year": draw(st.floats(10.0, 70.0)),
        "maintenance.variable_per_mwh": draw(st.floats(0.0, 5.0)),
        "maintenance.land_lease_share_of_revenue": draw(st.floats(0.0, 0.08)),
        "revenue.ppa_price_per_mwh": draw(st.floats(25.0, 130.0)),
        "finance.discount_rate": draw(st.floats(0.02, 0.11)),
        "finance.inflation": draw(st.floats(0.0, 0.04)),
        "finance.tax_rate": draw(st.floats(0.0, 0.35)),
        "finance.debt.tenor_years": draw(st.integers(1, life)),
        "finance.debt.interest_rate": draw(st.floats(0.02, 0.09)),
    })
    return raw


def _scn(raw):
    return sc.from_dict(raw, source="property.toml")


def _metrics(raw):
    return model.run(_scn(raw), breakeven=False).metrics


def _bump(raw, key, value):
    out = copy.deepcopy(raw)
    sc.set_dotted(out, key, value)
    return out


# --------------------------------------------------------------------------- LCOE


@SETTINGS
@given(raw=scenarios(), extra=st.floats(10.0, 800.0))
def test_lcoe_rises_with_capex(raw, extra):
    """LCOE = [capex + PV(O&M) + PV(decommissioning)] / PV(energy): capex is in the numerator only."""
    before = _metrics(raw)["lcoe_nominal_per_mwh"]
    after = _metrics(_bump(raw, "capex.turbine_per_kw", raw["capex"]["turbine_per_kw"] + extra))
    assert after["lcoe_nominal_per_mwh"] > before
    assert after["lcoe_real_per_mwh"] > _metrics(raw)["lcoe_real_per_mwh"]


@SETTINGS
@given(raw=scenarios(), extra=st.floats(1.0, 40.0), key=st.sampled_from(
    ["maintenance.fixed_per_kw_year", "maintenance.variable_per_mwh"]))
def test_lcoe_rises_with_om(raw, extra, key):
    """O&M is a discounted cost in the LCOE numerator; more of it, at the same energy, costs more per MWh."""
    section, field = key.split(".")
    before = _metrics(raw)["lcoe_nominal_per_mwh"]
    after = _metrics(_bump(raw, key, raw[section][field] + extra))["lcoe_nominal_per_mwh"]
    assert after > before


@SETTINGS
@given(raw=scenarios(), factor=st.floats(1.02, 1.25))
def test_lcoe_falls_with_mean_wind_speed(raw, factor):
    """More wind, more energy for the same fixed costs.

    The law holds where the curve gains more below cut-out than it loses above it: hub mean
    speeds up to about 11 m/s for Weibull shapes 1.6..2.8, beyond IEC 61400-1 class I
    (10 m/s annual mean, Table 1).
    """
    v = raw["wind"]["mean_speed_mps"]
    before = _metrics(raw)
    after = _metrics(_bump(raw, "wind.mean_speed_mps", v * factor))
    assert after["lcoe_nominal_per_mwh"] < before["lcoe_nominal_per_mwh"]
    assert after["lcoe_real_per_mwh"] < before["lcoe_real_per_mwh"]


@SETTINGS
@given(raw=scenarios())
def test_lcoe_is_the_definition_recomputed_with_numpy_financial(raw):
    """numpy-financial's npv (first value at t = 0) over the yearly lines gives the same LCOE."""
    case = model.run(_scn(raw), breakeven=False)
    f, r = case.flows, raw["finance"]["discount_rate"]
    cost = f.capex_total[0, 0] + npf.npv(r, f.opex[0] + f.decommissioning[0])
    energy = npf.npv(r, f.energy_mwh[0])
    assert case.metrics["lcoe_nominal_per_mwh"] == pytest.approx(cost / energy, rel=1e-10)


# --------------------------------------------------------------------------- NPV and IRR


@SETTINGS
@given(raw=scenarios(), extra=st.floats(0.5, 60.0))
def test_project_npv_rises_with_the_ppa_price(raw, extra):
    """Revenue rises with the price; tax (rate < 1) and the lease share (< 1) take only part of it."""
    before = _metrics(raw)["project_npv"]
    after = _metrics(_bump(raw, "revenue.ppa_price_per_mwh", raw["revenue"]["ppa_price_per_mwh"] + extra))
    assert after["project_npv"] > before


@SETTINGS
@given(raw=scenarios())
def test_npv_at_the_irr_is_zero(raw):
    """NPV(IRR(x), x) = 0 (numpy-financial's identity test), and the IRR agrees with npf.irr
    where the cash flow changes sign once (one root, by Descartes' rule of signs)."""
    case = model.run(_scn(raw), breakeven=False)
    for key, cf in (("project_irr", case.flows.project_cash_flow[0]), ("equity_irr", case.flows.equity_cash_flow[0])):
        rate = case.metrics[key]
        if rate is None:
            continue
        scale = float(np.abs(cf).sum())
        assert abs(float(mt.npv(rate, cf))) <= 1e-9 * scale
        assert abs(npf.npv(rate, cf)) <= 1e-9 * scale
        signs = np.sign(cf[cf != 0])
        if np.count_nonzero(np.diff(signs)) == 1:
            assert rate == pytest.approx(npf.irr(cf), abs=1e-9)


@settings(max_examples=40, deadline=None)
@given(rows=st.lists(st.lists(st.floats(-1e7, 1e7, allow_nan=False, allow_subnormal=False), min_size=3,
                              max_size=25), min_size=1, max_size=6).filter(lambda rs: len({len(r) for r in rs}) == 1))
def test_batch_irr_is_a_root_wherever_it_is_defined(rows):
    """The vectorised IRR of arbitrary rows: either null with a reason, or a root of the NPV.
    (Subnormal values are left out: no arithmetic on them keeps its relative precision.)"""
    c = np.array(rows)
    rates, reasons = mt.irr(c)
    nulls = {i for i, _ in reasons}
    for i, rate in enumerate(rates):
        if i in nulls:
            assert np.isnan(rate)
        else:
            assert rate >= -1.0         # any converged root counts; bisection searches -99 %..1000 %
            if 1.0 + rate < 1e-9:
                # a root so near -100 % that 1 + r has lost digits: look for the sign change of
                # f(x) = sum c_t x^t around x = 1 / (1 + r), or, at r = -100 %, somewhere beyond
                # x = 1e15 (a log grid up to where f overflows)
                f = np.polynomial.polynomial.Polynomial(c[i])
                if rate == -1.0:
                    with np.errstate(over="ignore", invalid="ignore"):
                        vals = f(10.0 ** np.arange(15.0, 300.0, 0.25))
                    signs = np.sign(vals[np.isfinite(vals) & (vals != 0)])
                    assert signs.size and (signs != signs[0]).any()
                else:
                    x = 1.0 / (1.0 + rate)
                    assert np.sign(f(0.99 * x)) * np.sign(f(1.01 * x)) <= 0
                continue
            # the residual against the size of the discounted terms (a rate near -100 % makes
            # them large); the derivative can be tiny near a multiple root: judge the rate too
            scale = float(mt.npv(rate, np.abs(c[i])))
            assert abs(float(mt.npv(rate, c[i]))) <= 1e-7 * scale or \
                np.sign(mt.npv(rate - 1e-7, c[i])) != np.sign(mt.npv(rate + 1e-7, c[i]))


# --------------------------------------------------------------------------- variants


def _raw_keys(raw, prefix=""):
    """Dotted keys of the values present in raw data (list items by name)."""
    for k, v in raw.items():
        if k in ("schema_version", "variants", "montecarlo"):
            continue
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            yield from _raw_keys(v, key + ".")
        elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
            for item in v:
                yield from ((f"{key}.{item['name']}.{sub}", x) for sub, x in item.items() if sub != "name")
        else:
            yield key, v


@SETTINGS
@given(raw=scenarios(), data=st.data())
def test_a_variant_that_changes_nothing_gives_identical_results(raw, data):
    """Setting keys to the values they already have is the base case, to the last bit."""
    present = list(_raw_keys(raw))
    chosen = data.draw(st.lists(st.sampled_from(present), max_size=5, unique_by=lambda kv: kv[0]))
    raw = dict(raw, variants={"same": dict(chosen)})
    scn = _scn(raw)
    base = model.run(scn, breakeven=True)
    same = model.run(scn.variant("same"), breakeven=True)
    assert same.metrics == base.metrics
    assert same.annual() == base.annual()
    assert same.energy.report() == base.energy.report()


# --------------------------------------------------------------------------- names stay text

NAMES = st.text(min_size=1, max_size=40).filter(lambda s: s.strip() != "") | \
    st.builds(lambda c, s: c + s, st.sampled_from(["=", "+", "-", "@", "\t", "\r"]), st.text(max_size=20))
_PRINTABLE = st.text(st.characters(exclude_categories=("Cc", "Cs")), max_size=30)
ONE_LINE_NAMES = _PRINTABLE.filter(lambda s: s.strip() != "") | \
    st.builds(lambda c, s: c + s, st.sampled_from(["=", "+", "-", "@", "=SUM(A1:A2)", "=HYPERLINK(\"x\")"]), _PRINTABLE)


@settings(max_examples=40, deadline=None)
@given(name=NAMES)
def test_a_scenario_name_survives_toml_and_is_text_in_csv(name, tmp_path_factory):
    """Any name: written as TOML and read back unchanged (TOML 1.0: control characters are
    escaped in basic strings), and in a CSV cell it is text, never a formula (OWASP, "CSV
    Injection": cells starting with = + - @ tab or carriage return get a leading apostrophe)."""
    raw = make_raw(**{"project.name": name})
    text = sc.to_toml(raw)
    assert tomllib.loads(text)["project"]["name"] == name
    if re.search(r"[\x00-\x1f\x7f]", name) or not name.strip():
        with pytest.raises(ScenarioError, match=r"project\.name = .*: must (be one line of text without control "
                                                r"characters|not be blank)"):
            sc.from_dict(tomllib.loads(text), source="named.toml")
    else:
        assert sc.from_dict(tomllib.loads(text), source="named.toml").project.name == name

    path = tmp_path_factory.mktemp("names") / "named.csv"
    files.write_csv(path, ["scenario", "lcoe"], [[name, 61.5]])
    with path.open(newline="", encoding="utf-8") as fh:     # newline="": a carriage return stays in its cell
        rows = list(csv.reader(fh))
    cell = rows[1][0]
    if name[0] in "=+-@\t\r":
        assert cell == "'" + name
    else:
        assert cell == name
    assert cell[0] not in "=+-@\t\r"


@settings(max_examples=8, deadline=None)
@given(name=ONE_LINE_NAMES)
def test_a_scenario_name_is_text_in_the_workbook(name, tmp_path_factory):
    """The workbook stores any name the loader accepts as a string cell (data type 's'), never
    as a formula (OpenXML SpreadsheetML: a cell is a formula only when it has an <f> element)."""
    import openpyxl

    from lcoe.analysis import study
    from lcoe.outputs import workbook

    scn = sc.from_dict(make_raw(**{"project.name": name}), source="named.toml")
    path = tmp_path_factory.mktemp("book") / "named.xlsx"
    workbook.write(study.build(scn, trials=0, variants=False), path)
    book = openpyxl.load_workbook(path)
    cells = [c for ws in book.worksheets for row in ws.iter_rows() for c in row if c.value == name]
    assert cells, "the scenario name is not in the workbook"
    assert all(c.data_type == "s" for c in cells)      # "f" would be a formula


def test_formula_characters_are_neutralised_in_csv_cells():
    """The OWASP list of leading characters, one by one (a worked example beside the property)."""
    for lead in ("=", "+", "-", "@", "\t", "\r"):
        assert files.safe_cell(lead + "1+1") == "'" + lead + "1+1"
    assert files.safe_cell("Tallowmere Ridge") == "Tallowmere Ridge"
    assert files.safe_cell(12.5) == 12.5


# --------------------------------------------------------------------------- every null has a reason

# The words a warning uses for a metric that is null (JSON contract: "NaN as null with a reason in warnings")
NULL_WORDS = {"lcoe_nominal_per_mwh": "LCOE", "lcoe_real_per_mwh": "LCOE", "project_irr": "project irr",
              "equity_irr": "equity irr", "min_dscr": "DSCR", "avg_dscr": "DSCR", "llcr": "LLCR",
              "payback_year": "payback_year", "breakeven_ppa_price_per_mwh": "break-even PPA price"}


@st.composite
def any_accepted(draw):
    """Scenarios across the edges: no price, no debt, a calm site, a one-year life, a tenor as long as
    the life, costly overhauls, variants and a small Monte Carlo."""
    life = draw(st.integers(1, 30))
    raw = make_raw(**{
        "project.lifetime_years": life,
        "wind.mean_speed_mps": draw(st.sampled_from([1.0, 2.5, 4.0]) | st.floats(4.0, 11.0)),
        "revenue.ppa_price_per_mwh": draw(st.sampled_from([0.0, 5.0]) | st.floats(0.0, 150.0)),
        "capex.turbine_per_kw": draw(st.floats(0.0, 3000.0)),
        "maintenance.fixed_per_kw_year": draw(st.floats(0.0, 200.0)),
        "finance.tax_rate": draw(st.floats(0.0, 0.5)),
        "finance.debt.tenor_years": draw(st.integers(1, life)),
        "finance.debt.max_gearing": draw(st.sampled_from([0.0, 0.8, 1.0])),
        "capex.decommissioning_per_kw": draw(st.sampled_from([0.0, 40.0, 2000.0])),
    })
    if draw(st.booleans()):
        del raw["finance"]["debt"]
    if draw(st.booleans()):
        raw["maintenance"]["overhaul"] = [{"name": "works", "year": draw(st.integers(1, life)),
                                           "cost_per_turbine": draw(st.floats(0.0, 5e6))}]
    raw["variants"] = {"cheap": {"capex.turbine_per_kw": draw(st.floats(0.0, 3000.0))},
                       "calm": {"wind.mean_speed_mps": draw(st.floats(1.0, 6.0))}}
    raw["montecarlo"] = {"trials": draw(st.sampled_from([0, 5, 64])), "seed": 3}
    return raw


def _numbers(node, path=()):
    """(path, value) of every number or null in a report."""
    if isinstance(node, dict):
        for k, v in node.items():
            yield from _numbers(v, path + (k,))
    elif isinstance(node, list):
        for i, v in enumerate(node):
            yield from _numbers(v, path + (i,))
    elif node is None or (isinstance(node, (int, float)) and not isinstance(node, bool)):
        yield path, node


def _has_reason(path, report) -> bool:
    warnings = report["warnings"]
    head = path[0]
    if head == "annual":
        row = report["annual"][path[1]]
        # a year without debt service has no coverage ratio: the row's own zero says why
        return path[2] == "dscr" and not row["debt_service"]
    if head in ("metrics", "energy"):
        word = NULL_WORDS.get(path[1], path[1]) if head == "metrics" else f"energy.{path[1]} is null"
        return any(word in w for w in warnings)
    if head == "variants":
        name, block, key = path[1], path[2], path[3]
        word = NULL_WORDS.get(key, key) if block == "metrics" else f"energy.{key} is null"
        return any(w.startswith(f"variant {name}: ") and word in w for w in warnings) or \
            any(word in w for w in warnings if not w.startswith("variant "))
    if head == "lender_cases":
        return any(w.startswith(f"lender_cases.{path[1]}.{path[2]} is null: ") for w in warnings)
    if head in ("financing", "sources_and_uses"):   # the report's own blocks name the null by its dotted key
        return any(f"{'.'.join(map(str, path))} is null" in w for w in warnings)
    if head == "montecarlo":
        key = path[2] if path[1] == "p90_standard_error" else path[1]
        return any(f"montecarlo.{key} is null" in w or f"montecarlo: {key} undefined" in w or
                   f"montecarlo.p90_standard_error.{key} is null" in w for w in warnings)
    return False


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(raw=any_accepted())
def test_every_reported_number_is_finite_or_null_with_a_reason(raw):
    """For any scenario the loader accepts, the JSON report (RFC 8259: no NaN or infinity) holds
    finite numbers, and every null has its reason among the warnings."""
    import json
    import math

    from lcoe.analysis import study
    from lcoe.outputs import report as rp
    try:
        scn = sc.from_dict(raw, source="property.toml")
        rep = json.loads(rp.to_json(study.build(scn)))
    except ScenarioError:
        return                                  # refused, in one line (the fuzz targets check how)
    for path, value in _numbers(rep):
        if value is None:
            assert _has_reason(path, rep), (path, rep["warnings"])
        else:
            assert math.isfinite(value), path
