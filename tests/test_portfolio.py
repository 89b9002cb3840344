"""The portfolio Monte Carlo (lcoe.analysis.portfolio) and its file (lcoe.inputs.portfolio).

Outside references: the arc length of a great circle (R theta, spherical geometry) for
the haversine distance; LAPACK's Cholesky factor (numpy.linalg.cholesky) for the copula
factor; the algebra of sample moments for the variance of a sum; comonotonic additivity
of quantiles (Dhaene et al. 2002) for perfectly correlated sites; the lognormal mean
exp(mu + s^2 / 2) for the merchant price path.
"""

from __future__ import annotations

import copy
import dataclasses
import json
import math

import numpy as np
import pytest
from conftest import ROOT, make_raw

from lcoe import engine
from lcoe.analysis import cluster
from lcoe.analysis import portfolio as ap
from lcoe.cli import main
from lcoe.inputs import portfolio as ip
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.toml import to_toml

DEMO_PORTFOLIO = ROOT / "assumptions" / "portfolio_demo.toml"


def _site_raw(name, speed, iav, **updates):
    raw = make_raw(**updates)
    raw["project"]["name"] = name
    raw["wind"]["mean_speed_mps"] = speed
    raw["uncertainty"] = {"interannual_speed_sd": iav}
    return raw


def _two_sites(tmp_path, matrix, *, shares=(1.0, 0.5), quiet=False, extra=None):
    """Two invented sites (conftest's physics-curve scenario) as files, and a portfolio of them."""
    a = _site_raw("Hollin Top", 7.2, 0.06)
    b = _site_raw("Sedge Hill", 6.6, 0.05, **{"project.lifetime_years": 18, "finance.debt.tenor_years": 12})
    if not quiet:
        b["uncertainty"]["energy"] = [{"name": "losses", "sd": 0.03}]
        b["maintenance"]["component"] = [{"name": "gearbox", "failure_rate_per_turbine_year": 0.03,
                                          "replacement_cost": 300000.0, "downtime_days": 20.0}]
    else:
        a["uncertainty"]["energy"] = b["uncertainty"]["energy"] = []
    for raw, name in ((a, "a.toml"), (b, "b.toml")):
        (tmp_path / name).write_text(to_toml(raw))
    pf = {"schema_version": 1, "portfolio": {"name": "Two hills", "trials": 3000, "seed": 11},
          "site": [{"scenario": "a.toml", "share": shares[0]}, {"scenario": "b.toml", "share": shares[1]}],
          "correlation": {"rule": "matrix", "matrix": matrix}}
    pf.update(extra or {})
    return pf


def _load(tmp_path, raw) -> ip.Portfolio:
    return ip.from_dict(raw, source="p.toml", base_dir=tmp_path)


# --------------------------------------------------------------------------- correlation

def test_haversine_distance_is_the_great_circle_arc():
    # spherical geometry: an arc of angle theta on a sphere of radius R is R theta long
    r = ap.EARTH_RADIUS_KM
    assert ap.distance_km(54.0, -2.0, 55.0, -2.0) == pytest.approx(r * math.pi / 180.0, rel=1e-12)
    assert ap.distance_km(0.0, 0.0, 0.0, 90.0) == pytest.approx(r * math.pi / 2.0, rel=1e-12)
    assert ap.distance_km(10.0, 20.0, 10.0, 20.0) == 0.0


def test_distance_rule_gives_exp_of_minus_distance_over_length():
    pf = ip.load(DEMO_PORTFOLIO)
    r = ap.correlation_matrix(pf)
    s = pf.sites
    d01 = ap.distance_km(s[0].latitude_deg, s[0].longitude_deg, s[1].latitude_deg, s[1].longitude_deg)
    assert r[0, 1] == pytest.approx(math.exp(-d01 / 150.0), rel=1e-12)
    assert np.allclose(r, r.T) and np.all(np.diag(r) == 1.0)
    assert np.linalg.eigvalsh(r).min() > 0          # positive definite, as the exponential on a sphere is


def test_copula_factor_matches_lapack_and_allows_perfect_correlation():
    rng = np.random.default_rng(5)
    a = rng.normal(size=(6, 6))
    cov = a @ a.T + 6 * np.eye(6)
    r = cov / np.sqrt(np.outer(np.diag(cov), np.diag(cov)))
    np.testing.assert_allclose(ap.factor(r), np.linalg.cholesky(r), rtol=0, atol=1e-12)   # LAPACK dpotrf
    c = ap.factor(np.array([[1.0, 1.0], [1.0, 1.0]]))
    assert c.tolist() == [[1.0, 0.0], [1.0, 0.0]]          # the second site moves with the first
    with pytest.raises(ScenarioError, match="not positive semi-definite"):
        ap.factor(np.array([[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]]))


def test_correlated_normals_have_the_requested_correlation():
    # the sample correlation of n pairs has sd about (1 - rho^2) / sqrt(n) (Fisher 1915)
    r = np.array([[1.0, 0.6, 0.2], [0.6, 1.0, 0.4], [0.2, 0.4, 1.0]])
    z = np.random.default_rng(3).standard_normal((3, 200_000))
    x = ap.correlate(ap.factor(r), z)
    got = np.corrcoef(x)
    assert np.all(np.abs(got - r) < 5 * (1 - r ** 2) / math.sqrt(200_000) + 1e-12)


# --------------------------------------------------------------------------- the two-site identities

def test_perfectly_correlated_sites_sum_to_the_portfolio_with_the_same_wind(tmp_path):
    pf = _load(tmp_path, _two_sites(tmp_path, [[1.0, 1.0], [1.0, 1.0]]))
    res = ap.run(pf, trials=1500)
    plan = res.plan
    H = plan.horizon
    for b in range(plan.blocks):
        common = ap.draw_common(plan, b)
        lo, n = b * plan.block, plan.size(b)
        draws = [ap.site_draws(plan, common, b, s) for s in range(2)]
        # the same yearly wind: each site's speed factor is 1 + sd z with one z for both
        za = (draws[0][1].speed_factor - 1.0) / 0.06
        zb = (draws[1][1].speed_factor - 1.0) / 0.05
        np.testing.assert_allclose(zb, za[:, :18], rtol=0, atol=1e-12)
        expected = {k: np.zeros((n, H + 1)) for k in ("energy_mwh", "revenue", "cfads", "equity_cash_flow")}
        for s, (inputs, sample, _) in enumerate(draws):
            sp = plan.sites[s]
            # each site on its own through the single-site engine, with those draws
            flows, _, _ = engine.evaluate(sp.scenario, overrides=inputs or None, sample=sample,
                                          schedule=engine.run(sp.scenario, breakeven=False).schedule)
            L = sp.scenario.lifetime
            for k in expected:
                expected[k][:, :L + 1] += sp.share * getattr(flows, k)
        for k, v in expected.items():
            np.testing.assert_allclose(res.lines[k][lo:lo + n], v, rtol=1e-12, atol=1e-6, err_msg=k)


def test_perfect_correlation_leaves_no_diversification_benefit(tmp_path):
    # only the yearly wind is random here, so each site's year-1 energy is an increasing function of
    # one shared normal: comonotonic, and quantiles of comonotonic sums add (Dhaene et al. 2002)
    raw = _two_sites(tmp_path, [[1.0, 1.0], [1.0, 1.0]], quiet=True)
    for name in ("a.toml", "b.toml"):
        scn = sc.load(tmp_path / name).raw
        scn["montecarlo"] = {"failures": "expected"}
        (tmp_path / name).write_text(to_toml(scn))
    rep = ap.run(_load(tmp_path, raw), trials=2000).report()
    d = rep["diversification"]["energy_1yr_mwh"]
    assert d["benefit"] == pytest.approx(0.0, abs=1e-9 * d["portfolio_p90"])


def test_independent_sites_add_their_variances(tmp_path):
    """With correlation 0 the sample variance of the portfolio's year-1 energy equals the sum of
    the sites' sample variances to sampling error.

    The tolerance, derived: for the same trials, var(X + Y) = var(X) + var(Y) + 2 cov(X, Y)
    holds exactly for the sample moments, so the gap is twice the sample covariance. For
    independent X and Y, cov has mean 0 and variance sd_x^2 sd_y^2 / n (the variance of a
    product of independent centred variables, divided by n), so the gap has sd
    2 sd_x sd_y / sqrt(n); the test allows 4 of them. That is tighter than the sd of a sample
    variance itself, sd^2 sqrt(2 / (n - 1)) for normal data, which would bound a comparison
    with the true variances instead.
    """
    n = 20_000

    def gap(matrix):
        res = ap.run(_load(tmp_path, _two_sites(tmp_path, matrix)), trials=n)
        x = res.site_values["energy_1yr_mwh"]
        total = res.portfolio_values("energy_1yr_mwh")
        v1, v2 = x[:, 0].var(ddof=1), x[:, 1].var(ddof=1)
        tol = 4 * 2 * math.sqrt(v1 * v2) / math.sqrt(n)
        return abs(total.var(ddof=1) - (v1 + v2)), tol

    diff, tol = gap([[1.0, 0.0], [0.0, 1.0]])
    assert diff <= tol
    diff, tol = gap([[1.0, 0.8], [0.8, 1.0]])        # the check can fail: correlated sites do not add
    assert diff > 10 * tol


# --------------------------------------------------------------------------- reproducibility

def _arrays(res):
    return ([res.lines[k] for k in sorted(res.lines)] + [res.site_values[k] for k in sorted(res.site_values)]
            + [res.totals[k] for k in sorted(res.totals)])


def test_one_worker_two_workers_and_no_dask_agree_bit_for_bit():
    pf = ip.load(DEMO_PORTFOLIO)
    plain = ap.run(pf, trials=2500)               # three blocks, so two workers share them
    with cluster.local(1) as one:
        r1 = ap.run(pf, trials=2500, runner=one)
    with cluster.local(2) as two:
        r2 = ap.run(pf, trials=2500, runner=two)
    assert {k: r2.execution[k] for k in ("mode", "workers", "scheduler")} == {"mode": "local", "workers": 2,
                                                                               "scheduler": None}
    for a, b, c in zip(_arrays(plain), _arrays(r1), _arrays(r2)):
        assert np.array_equal(a, b, equal_nan=True) and np.array_equal(a, c, equal_nan=True)
    strip = lambda rep: {k: v for k, v in rep.items() if k != "execution"}  # noqa: E731
    assert strip(plain.report()) == strip(r1.report()) == strip(r2.report())


def test_a_whole_block_does_not_depend_on_the_blocks_after_it():
    pf = ip.load(DEMO_PORTFOLIO)
    block = ap.block_trials(len(pf.sites), pf.horizon)
    short, long = ap.run(pf, trials=block), ap.run(pf, trials=2 * block + 100)
    for k in short.lines:
        assert np.array_equal(short.lines[k], long.lines[k][:block])


# --------------------------------------------------------------------------- common draws and results

def test_common_draws_are_shared_by_every_site(tmp_path):
    extra = {"common": {"capex": {"distribution": "uniform", "low": 0.9, "high": 1.2},
                        "merchant_price": {"volatility": 0.1}}}
    pf = _load(tmp_path, _two_sites(tmp_path, [[1.0, 0.3], [0.3, 1.0]], extra=extra))
    res = ap.run(pf, trials=1024)
    plan = res.plan
    common = ap.draw_common(plan, 0)
    factors = []
    for s in range(2):
        inputs, sample, _ = ap.site_draws(plan, common, 0, s)
        base = plan.sites[s].scenario.capex.grid_connection
        factors.append(inputs["capex.grid_connection"] / base)
        np.testing.assert_array_equal(sample.merchant_price_factor, common.price_path[:, :plan.sites[s].lifetime])
    np.testing.assert_allclose(factors[0], factors[1], rtol=1e-15)
    assert 0.9 <= factors[0].min() and factors[0].max() <= 1.2
    # the path is exp(s W_t - t s^2 / 2), W a random walk: lognormal with mean 1 every year
    big = ap.draw_common(dataclasses.replace(plan, trials=200_000, block=200_000), 0).price_path
    t = np.arange(1, plan.horizon + 1)
    sd_mean = np.sqrt(np.exp(0.01 * t) - 1.0) / math.sqrt(200_000)     # sd of the lognormal / sqrt(n)
    assert np.all(np.abs(big.mean(axis=0) - 1.0) < 5 * sd_mean)
    np.testing.assert_allclose(np.log(big).std(axis=0), 0.1 * np.sqrt(t), rtol=0.02)


def test_report_blocks_and_the_pooled_debt(tmp_path):
    pf = ip.load(DEMO_PORTFOLIO)
    res = ap.run(pf, trials=2000)
    rep = res.report()
    for key in ("portfolio", "trials", "seed", "correlation", "sites", "life", "diversification", "pooled_debt",
                "annual", "warnings", "caution", "execution"):
        assert key in rep
    assert [s["name"] for s in rep["sites"]] == ["Tallowmere North", "Greyholt Moor", "Kestrel Scar",
                                                 "Brannock Fell", "Wrenlow Edge"]
    assert len(rep["annual"]) == pf.horizon + 1
    # the sites' tail means add up to the portfolio's (expected-shortfall allocation, Tasche 1999)
    for key, d in rep["diversification"].items():
        assert sum(s["tail_mean"][key] for s in rep["sites"]) == pytest.approx(d["portfolio_tail_mean"], rel=1e-12)
        assert d["benefit"] == pytest.approx(d["portfolio_p90"] - d["sum_of_site_p90"])
    # pooled DSCR by hand on one trial: the portfolio's CFADS over the summed debt service
    ds = np.zeros(pf.horizon + 1)
    for s in pf.sites:
        sched = engine.run(s.scenario, breakeven=False).schedule
        ds[1:s.scenario.lifetime + 1] += s.share * sched.debt_service[0]
    i = 17
    paid = ds > 0
    assert res.totals["pooled_min_dscr"][i] == pytest.approx((res.lines["cfads"][i, paid] / ds[paid]).min(), rel=1e-12)
    assert rep["pooled_debt"]["prob_min_dscr_below_1"] == float(np.mean(res.totals["pooled_min_dscr"] < 1.0))
    json.dumps(rep, allow_nan=False)


# --------------------------------------------------------------------------- the file

def _bad(tmp_path, mutate, match):
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    mutate(raw)
    with pytest.raises(ScenarioError, match=match) as err:
        _load(tmp_path, raw)
    assert str(err.value).startswith("p.toml: ")
    return str(err.value)


@pytest.mark.parametrize("mutate, match", [
    (lambda r: r.pop("correlation"), r"^p.toml: correlation: is required$"),
    (lambda r: r["site"][1].update(share=1.5), r"site\[1\].share = 1.5: must be <= 1"),
    (lambda r: r["site"][0].update(sahre=0.5), r"site\[0\].sahre: unknown key \(did you mean 'site\[0\].share'\?\)"),
    (lambda r: r["site"][1].update(scenario="nowhere.toml"), r"site\[1\].scenario = 'nowhere.toml': file not found"),
    (lambda r: r["site"][1].update(name="Hollin Top"), r"site\[1\].name = 'Hollin Top': site\[0\] has the same name"),
    (lambda r: r["correlation"].update(matrix=[[1.0, 0.5]]),
     r"correlation.matrix: must have 2 rows of 2 numbers, one per \[\[site\]\] in order \(it has 1 row\(s\) of 2\)"),
    (lambda r: r["correlation"].update(matrix=[[1.0, 0.5], [0.4, 1.0]]),
     r"correlation.matrix\[0\]\[1\] = 0.5: must equal correlation.matrix\[1\]\[0\] = 0.4"),
    (lambda r: r["correlation"].update(matrix=[[0.9, 0.5], [0.5, 1.0]]), r"correlation.matrix\[0\]\[0\] = 0.9: must be 1.0"),
    (lambda r: r["correlation"].update(rule="distance", matrix=None) or r["correlation"].pop("matrix"),
     r'correlation.length_km: is required with rule = "distance"'),
    (lambda r: r["correlation"].update(rule="distance", length_km=100.0) or r["correlation"].pop("matrix"),
     r'site\[0\].latitude_deg: is required with the correlation rule "distance"'),
    (lambda r: r["correlation"].update(rule="nearby"), r"correlation.rule = 'nearby': must be one of 'distance' or 'matrix'"),
    (lambda r: r.update(common={"capex": {"distribution": "uniform", "low": 0.0, "high": 1.1}}),
     r"common.capex.low = 0.0: must be > 0: the capex factor multiplies every site's capex"),
    (lambda r: r.update(common={"capex": {"distribution": "normal"}}), r"common.capex.sd: is required for a normal"),
    (lambda r: r["portfolio"].update(trials=0), r"portfolio.trials = 0: must be >= 1"),
])
def test_mistakes_in_the_file_name_the_key(tmp_path, mutate, match):
    _bad(tmp_path, mutate, match)


def test_an_impossible_matrix_is_refused(tmp_path):
    raw = copy.deepcopy(_two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]]))
    (tmp_path / "c.toml").write_text((tmp_path / "a.toml").read_text().replace("Hollin Top", "Crag End"))
    raw["site"].append({"scenario": "c.toml"})
    raw["correlation"]["matrix"] = [[1.0, 0.9, -0.9], [0.9, 1.0, 0.9], [-0.9, 0.9, 1.0]]
    with pytest.raises(ScenarioError, match=r"correlation.matrix: the correlations together are impossible: the "
                                            r"matrix is not positive semi-definite \(smallest eigenvalue -0.8"):
        _load(tmp_path, raw)


def test_sites_in_another_currency_are_refused(tmp_path):
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    text = (tmp_path / "b.toml").read_text().replace('currency = "EUR"', 'currency = "USD"')
    (tmp_path / "b.toml").write_text(text)
    with pytest.raises(ScenarioError, match=r"^p.toml: site\[1\].scenario = 'b.toml': this site's project.currency = "
                                            r"'USD' differs from portfolio.currency = 'EUR'"):
        _load(tmp_path, raw)


def test_a_broken_site_scenario_names_its_own_file(tmp_path):
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    (tmp_path / "b.toml").write_text((tmp_path / "b.toml").read_text().replace("wake = 0.05", "wake = 7.0"))
    with pytest.raises(ScenarioError, match=r"b.toml: losses.wake = 7.0: must be < 1"):
        _load(tmp_path, raw)


def test_a_scenario_and_a_portfolio_file_are_not_mistaken_for_each_other():
    with pytest.raises(ScenarioError, match=r"tallowmere_ridge.toml: is a scenario file, not a portfolio \(it has no "
                                            r"\[portfolio\] table\); run it with lcoe run"):
        ip.load(ROOT / "assumptions" / "tallowmere_ridge.toml")
    with pytest.raises(ScenarioError, match=r"portfolio_demo.toml: is a portfolio file, not a scenario \(it has a "
                                            r"\[portfolio\] table\); run it with lcoe portfolio"):
        sc.load(DEMO_PORTFOLIO)


def test_is_portfolio_file_tells_the_two_kinds_apart():
    assert ip.is_portfolio_file(DEMO_PORTFOLIO)
    assert not ip.is_portfolio_file(ROOT / "assumptions" / "tallowmere_ridge.toml")


# --------------------------------------------------------------------------- the command

def test_cli_table_fits_100_columns_and_shows_the_benefit(capsys):
    assert main(["portfolio", str(DEMO_PORTFOLIO), "--trials", "1200", "--workers", "2"]) == 0
    text = capsys.readouterr().out
    assert max(len(line) for line in text.splitlines()) <= 100
    assert "Diversification: the portfolio's P90 against the sum of the sites' own P90s" in text
    assert "Indicative results only" in text
    assert "Run on a local Dask cluster, 2 worker(s) (sites prepared in " in text


def test_cli_json_equals_the_python_result(capsys):
    assert main(["portfolio", str(DEMO_PORTFOLIO), "--trials", "1200", "--json", "--workers", "0"]) == 0
    got = json.loads(capsys.readouterr().out)
    rep = json.loads(json.dumps(ap.run(ip.load(DEMO_PORTFOLIO), trials=1200).report()))
    assert got.pop("execution")["mode"] == rep.pop("execution")["mode"] == "plain"
    assert got == rep


def test_cli_workbook_holds_the_values(tmp_path, capsys):
    from openpyxl import load_workbook
    out = tmp_path / "pf.xlsx"
    assert main(["portfolio", str(DEMO_PORTFOLIO), "--trials", "1100", "--workers", "0", "--workbook", str(out)]) == 0
    capsys.readouterr()
    rep = ap.run(ip.load(DEMO_PORTFOLIO), trials=1100).report()
    wb = load_workbook(out)
    assert wb.sheetnames == ["Portfolio", "Notes"]
    ws = wb["Portfolio"]
    labels = [ws.cell(r, 1).value for r in range(1, ws.max_row + 1)]
    start = labels.index("Diversification: the portfolio's P90 against the sum of the sites' own P90s") + 1
    r = labels.index("Net energy, year 1 [MWh]", start) + 1
    row = [ws.cell(r, c).value for c in range(2, 8)]
    assert row[0] == pytest.approx(rep["diversification"]["energy_1yr_mwh"]["portfolio_p90"], rel=1e-15)
    assert row[1] == pytest.approx(rep["diversification"]["energy_1yr_mwh"]["sum_of_site_p90"], rel=1e-15)
    assert wb["Notes"]["A2"].value.startswith("Indicative results only")


@pytest.mark.parametrize("args, message", [
    (["--trials", "0"], "argument --trials: must be >= 1, got 0"),
    (["--scheduler", "tcp://127.0.0.1:1", "--workers", "2"],
     "error: --workers = 2: applies to the local cluster; with --scheduler the cluster's own workers run"),
    (["--workbook", "/no/such/folder/pf.xlsx"], "error: --workbook = '/no/such/folder/pf.xlsx': folder does not exist"),
])
def test_cli_refuses_bad_options_in_one_line(args, message, capsys):
    assert main(["portfolio", str(DEMO_PORTFOLIO), *args]) == 2
    err = capsys.readouterr().err
    assert message in err and "Traceback" not in err


def test_cli_bad_file_is_one_line_and_writes_nothing(tmp_path, capsys):
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    raw["site"][0]["share"] = 0.0
    path = tmp_path / "p.toml"
    path.write_text(to_toml(raw))
    out = tmp_path / "pf.xlsx"
    assert main(["portfolio", str(path), "--workbook", str(out)]) == 2
    err = capsys.readouterr().err.strip()
    assert err == f"error: {path}: site[0].share = 0.0: must be > 0.0" and not out.exists()


def test_an_unreachable_scheduler_is_a_one_line_error():
    with pytest.raises(ScenarioError, match=r"^--scheduler = 'tcp://127.0.0.1:9': cannot reach a Dask scheduler"):
        cluster.remote("tcp://127.0.0.1:9", timeout_s=1)


def test_the_parser_imports_neither_the_engine_nor_dask():
    import subprocess
    import sys
    code = ("import sys, lcoe.cli; lcoe.cli.build_parser(); "
            "print(sorted(m for m in ('lcoe.engine', 'dask', 'distributed', 'numpy') if m in sys.modules))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, cwd=ROOT, check=True).stdout
    assert out.strip() == "[]"


def test_a_mistake_met_inside_a_task_comes_back_as_its_one_line(tmp_path, capsys):
    # a lognormal draw around a base value of 0: refused in one line naming the site's file
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    b = sc.load(tmp_path / "b.toml").raw
    b["maintenance"]["variable_per_mwh"] = 0.0
    b["montecarlo"] = {"vary": {"maintenance.variable_per_mwh": {"distribution": "lognormal", "sd": 1.0}}}
    (tmp_path / "b.toml").write_text(to_toml(b))
    path = tmp_path / "p.toml"
    path.write_text(to_toml(raw))
    assert main(["portfolio", str(path), "--workers", "2", "--trials", "100"]) == 2
    err = capsys.readouterr().err
    assert err == (f"error: {tmp_path / 'b.toml'}: montecarlo.vary.maintenance.variable_per_mwh: a lognormal input "
                   "needs a mean > 0 (the scenario's value 0 is used when mean is omitted)\n")


def test_workbook_text_from_a_site_name_is_never_a_formula(tmp_path):
    from openpyxl import load_workbook

    from lcoe.outputs.workbook import portfolio as sheet
    raw = _two_sites(tmp_path, [[1.0, 0.5], [0.5, 1.0]])
    raw["site"][0]["name"] = "=HYPERLINK(\"x\")"
    rep = ap.run(_load(tmp_path, raw), trials=200).report()
    sheet.write(rep, tmp_path / "pf.xlsx")
    ws = load_workbook(tmp_path / "pf.xlsx")["Portfolio"]
    found = [c for row in ws.iter_rows() for c in row if c.value == "=HYPERLINK(\"x\")"]
    assert found and all(c.data_type == "s" for c in found)


def test_the_local_cluster_opens_no_socket(monkeypatch):
    """The in-process cluster talks in memory: no socket connects anywhere, not even to look up
    this machine's address."""
    import socket
    seen = []
    real = socket.socket.connect
    monkeypatch.setattr(socket.socket, "connect", lambda self, addr: seen.append(addr) or real(self, addr))
    with cluster.local(2) as runner:
        assert runner.client.scheduler.address.startswith("inproc://127.0.0.1/")
        ap.run(ip.load(DEMO_PORTFOLIO), trials=200, runner=runner)
    assert seen == []
