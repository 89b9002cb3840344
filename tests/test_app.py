"""The Streamlit app (ui/app.py) through Streamlit's AppTest, and the `lcoe app` command.

The app is thin: the reference for every figure it shows is the engine itself
(lcoe.engine.run on the same scenario, formatted by lcoe.outputs.report.fmt). Downloads are
read back from Streamlit's media store, the bytes a browser would receive.
"""

from __future__ import annotations

import csv
import io
import subprocess
import tomllib
import zipfile
from pathlib import Path
from urllib.parse import urlparse

import pytest
from conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, ROOT, make_raw, require_tool

from lcoe import cli
from lcoe import engine as model
from lcoe.analysis import study
from lcoe.cli import app as appcmd
from lcoe.inputs import scenario as sc
from lcoe.inputs.about import CAUTION
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import report as rp

AppTest = pytest.importorskip("streamlit.testing.v1").AppTest
import streamlit.testing.v1.app_test as app_test_module  # noqa: E402

APP = ROOT / "ui" / "app.py"
ASSUMPTIONS = ROOT / "assumptions"
HEADLINE = [("metrics", "lcoe_nominal_per_mwh"), ("metrics", "lcoe_real_per_mwh"), ("metrics", "project_npv"),
            ("metrics", "equity_irr"), ("metrics", "min_dscr"), ("metrics", "debt_amount"),
            ("energy", "net_aep_p50_mwh"), ("energy", "net_aep_p90_1yr_mwh"), ("energy", "net_capacity_factor")]
GROUPS = ["Wind", "Turbine", "Losses and availability", "Lifetime and maintenance", "Costs", "Revenue",
          "Finance and debt"]
TABS = ["Energy", "Cash flow and debt", "Lifetime", "Wind speed", "Wind data", "Monte Carlo", "Tornado", "Compare",
        "Yearly table"]


# --------------------------------------------------------------------------- helpers

class _Recording(app_test_module.MediaFileManager):
    """The media store of AppTest runs, kept so a test can read what a download button serves."""

    made: list = []

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        _Recording.made.append(self)


@pytest.fixture
def media(monkeypatch):
    _Recording.made = []
    monkeypatch.setattr(app_test_module, "MediaFileManager", _Recording)
    return _Recording.made


def download(at, media, key: str) -> bytes:
    """The bytes behind a download button (running a deferred one as a click would)."""
    (button,) = [b for b in at.download_button if b.key == key]
    mgr = media[-1]
    url = button.proto.url
    if not url and button.proto.deferred_file_id:
        url = mgr.execute_deferred(button.proto.deferred_file_id)
    file_id = urlparse(url).path.rsplit("/", 1)[-1].split(".")[0]
    stored = mgr.read_file(file_id)
    assert stored is not None, f"no file behind {key}"
    return stored.content


def start(**session) -> AppTest:
    at = AppTest.from_file(str(APP), default_timeout=120)
    for k, v in session.items():
        at.session_state[k] = v
    at.run()
    assert not at.exception, at.exception
    return at


def expected_headline(case: model.Case) -> dict:
    """Label -> text of the headline figures, from the engine and the report's formats."""
    cur = case.scenario.project.currency
    out = {}
    for block, key in HEADLINE:
        name, unit, how = (rp.METRIC_LABELS if block == "metrics" else rp.ENERGY_LABELS)[key]
        value = case.metrics[key] if block == "metrics" else float(getattr(case.energy, key))
        out[f"{name} [{unit.format(cur=cur)}]"] = rp.fmt(value, how)
    return out


def shown_headline(at) -> dict:
    return {m.label: m.value for m in at.metric}


def input_key(at, dotted: str) -> str:
    (key,) = [w.key for w in list(at.text_input) + list(at.selectbox)
              if w.key and w.key.startswith("in|") and w.key.split("|", 3)[3] == dotted]
    return key


def type_in(at, dotted: str, text):
    """Type ``text`` into the input of ``dotted`` (as a person types it), without running."""
    at.text_input(key=input_key(at, dotted)).set_value(str(text))
    return at


def first_inputs(at) -> list[str]:
    """The dotted key of the first widget of each input group, in the order drawn."""
    firsts: dict[int, str] = {}
    for w in list(at.text_input) + list(at.selectbox):
        if w.key and w.key.startswith("in|"):
            _, _, group, dotted = w.key.split("|", 3)
            firsts.setdefault(int(group), dotted)
    return [firsts[i] for i in sorted(firsts)]


# --------------------------------------------------------------------------- the first screen

def test_app_runs_and_shows_the_engines_headline_and_the_caution():
    at = start()
    assert not at.exception
    assert not at.error
    assert [i.value for i in at.info][:1] == [CAUTION]
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))
    assert [e.label for e in at.sidebar.expander] == GROUPS


@pytest.mark.parametrize("tab", TABS)
def test_every_screen_runs_without_an_exception(tab):
    at = start(view=tab)
    assert not at.exception
    assert not at.error


@pytest.mark.parametrize("path", [DEMO_HOURLY, DEMO_EQUITY, DEMO_LAYOUT], ids=["hourly", "equity", "layout"])
def test_other_demo_scenarios_run(path):
    at = start(scenario_file=path.name)
    assert not at.error
    assert shown_headline(at) == expected_headline(model.run(sc.load(path)))


def test_the_layout_demo_shows_its_rose_wakes_and_long_term_on_the_energy_tab():
    """The figures are the engine's own (its report blocks); the wake-loss input gives way to the decay constant."""
    at = start(scenario_file=DEMO_LAYOUT.name)
    assert not at.error
    e = model.run(sc.load(DEMO_LAYOUT), breakeven=False).energy
    texts = " ".join(m.value for m in at.markdown)
    assert "Wind rose at hub height (12 sectors, derived from the wind series)" in texts
    assert f"Wake loss of the layout: {100 * e.wake['farm_loss']:.2f} %" in texts
    assert f"r = {e.long_term['r']:.3f}" in texts
    assert len(at.get("vega_lite_chart")) == 3 and len(at.dataframe) == 1     # power curve, energy, rose; turbines
    keys = [w.key.split("|", 3)[3] for w in at.text_input if w.key and w.key.startswith("in|")]
    assert "layout.wake_decay_constant" in keys and "losses.wake" not in keys
    type_in(at, "layout.wake_decay_constant", "0.05").run()
    assert not at.exception and not at.error
    stronger = model.run(sc.load(DEMO_LAYOUT).with_overrides({"layout.wake_decay_constant": 0.05}))
    assert shown_headline(at) == expected_headline(stronger)


# --------------------------------------------------------------------------- inputs move the figures

# First widget of each group in the demo: (dotted key, value typed in the app, the same in scenario units).
FIRST_CHANGES = [("wind.mean_speed_mps", 8.0, 8.0), ("turbine.hub_height_m", 125.0, 125.0),
                 ("losses.wake", 11.0, 0.11), ("project.lifetime_years", 30, 30),
                 ("capex.turbine_per_kw", 1150.0, 1150.0), ("revenue.ppa_price_per_mwh", 62.0, 62.0),
                 ("finance.discount_rate", 8.0, 0.08)]


def test_the_groups_come_in_the_trades_order_with_units():
    at = start()
    assert first_inputs(at) == [k for k, _, _ in FIRST_CHANGES]
    for w in at.text_input:
        if w.key and w.key.startswith("in|"):
            assert w.label.endswith("]"), f"no unit: {w.label}"


@pytest.mark.parametrize("dotted, shown, value", FIRST_CHANGES, ids=GROUPS)
def test_first_widget_of_each_group_changes_the_headline(dotted, shown, value):
    at = start()
    before = shown_headline(at)
    type_in(at, dotted, shown).run()
    assert not at.exception and not at.error
    after = shown_headline(at)
    expected = expected_headline(model.run(sc.load(DEMO).with_overrides({dotted: value})))
    assert after == expected
    assert after != before


def test_lifetime_and_maintenance_inputs_move_the_figures():
    """A maintenance plan (cheaper failures, a later overhaul) and a longer life, as a developer tries them."""
    at = start()
    changes = {"project.lifetime_years": (28, 28),
               "maintenance.component.gearbox.failure_rate_per_turbine_year": (0.01, 0.01),
               "maintenance.overhaul.blade refurbishment.year": (14, 14),
               "maintenance.fixed_per_kw_year": (40.0, 40.0)}
    for dotted, (shown, _) in changes.items():
        type_in(at, dotted, shown)
    at.run()
    assert not at.exception and not at.error
    scn = sc.load(DEMO).with_overrides({k: v for k, (_, v) in changes.items()})
    assert shown_headline(at) == expected_headline(model.run(scn))


def test_reset_returns_to_the_file():
    at = start()
    type_in(at, "project.lifetime_years", 30).run()
    assert shown_headline(at) != expected_headline(model.run(sc.load(DEMO)))
    at.button(key="reset").click().run()
    assert not at.exception
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))
    assert at.text_input(key=input_key(at, "project.lifetime_years")).value == "25"


# --------------------------------------------------------------------------- pin and compare

def test_pin_then_change_shows_the_change_against_the_pinned_case():
    at = start()
    at.button(key="pin").click().run()
    type_in(at, "maintenance.fixed_per_kw_year", "45").run()
    assert not at.exception
    pinned = model.run(sc.load(DEMO))
    now = model.run(sc.load(DEMO).with_overrides({"maintenance.fixed_per_kw_year": 45.0}))
    deltas = {m.label: m.delta for m in at.metric}
    lcoe_change = now.metrics["lcoe_nominal_per_mwh"] - pinned.metrics["lcoe_nominal_per_mwh"]
    assert lcoe_change > 0  # dearer O&M raises the LCOE
    assert deltas["LCOE, nominal [EUR/MWh]"] == "+" + f"{lcoe_change:.2f}"
    assert deltas["Net AEP P50 [MWh/yr]"] == "0"
    at.session_state["view"] = "Compare"
    at.run()
    table = at.dataframe[0].value.set_index("Figure")
    assert table.loc["LCOE, nominal [EUR/MWh]", "case 1"] == f"{pinned.metrics['lcoe_nominal_per_mwh']:.2f}"
    assert table.loc["LCOE, nominal [EUR/MWh]", "current"] == f"{now.metrics['lcoe_nominal_per_mwh']:.2f}"
    assert table.loc["Project NPV [EUR M]", "Current - reference"] == rp.fmt(
        now.metrics["project_npv"] - pinned.metrics["project_npv"], "m")


def test_pin_a_variant_of_the_file():
    at = start(view="Compare")
    at.selectbox(key="variant_pick").set_value("life_30_extension").run()
    at.button(key="pin_variant").click().run()
    assert not at.exception
    var = model.run(sc.load(DEMO).variant("life_30_extension"))
    table = at.dataframe[0].value.set_index("Figure")
    assert table.loc["LCOE, nominal [EUR/MWh]", "variant life_30_extension"] == \
        f"{var.metrics['lcoe_nominal_per_mwh']:.2f}"


# --------------------------------------------------------------------------- downloads

def test_scenario_download_loads_back_to_the_same_results(media):
    at = start()
    changes = {"project.lifetime_years": 30, "maintenance.fixed_per_kw_year": 41.0}
    for dotted, v in changes.items():
        type_in(at, dotted, v)
    type_in(at, "losses.wake", "9").run()
    data = download(at, media, "dl_scenario")
    back = sc.from_dict(tomllib.loads(data.decode("utf-8")), source="download.toml", base_dir=ASSUMPTIONS)
    expected = model.run(sc.load(DEMO).with_overrides({**changes, "losses.wake": 0.09}))
    assert model.run(back).metrics == expected.metrics
    assert shown_headline(at) == expected_headline(expected)


def test_unchanged_scenario_download_is_the_file_itself(media):
    at = start()
    data = download(at, media, "dl_scenario")
    assert tomllib.loads(data.decode()) == tomllib.loads(DEMO.read_text())


def test_yearly_csv_download_is_the_cli_table(media, tmp_path):
    at = start()
    data = download(at, media, "dl_csv")
    path = tmp_path / "cli.csv"
    rp.write_annual_csv(study.Report(model.run(sc.load(DEMO))), path)
    assert data == path.read_bytes()
    rows = list(csv.DictReader(io.StringIO(data.decode())))
    assert [int(r["year"]) for r in rows] == list(range(0, 26))


WORKBOOK_CHANGES = {"project.lifetime_years": 28, "maintenance.fixed_per_kw_year": 40.0}


@pytest.fixture(scope="module")
def workbook_download():
    """(bytes of the workbook download after changing inputs, the engine's case of those inputs)."""
    pytest.importorskip("lcoe.outputs.workbook")
    with pytest.MonkeyPatch.context() as mp:
        _Recording.made = []
        mp.setattr(app_test_module, "MediaFileManager", _Recording)
        at = start()
        for dotted, v in WORKBOOK_CHANGES.items():
            type_in(at, dotted, v)
        at.run()
        data = download(at, _Recording.made, "dl_workbook")
    assert zipfile.is_zipfile(io.BytesIO(data))
    return data, model.run(sc.load(DEMO).with_overrides(WORKBOOK_CHANGES))


def _named_cells(wb) -> dict:
    """Defined name -> (sheet, row, column) of the metric names on the workbook."""
    from openpyxl.utils.cell import column_index_from_string, coordinate_from_string
    out = {}
    for key in model.METRIC_KEYS:
        assert key in wb.defined_names, f"defined name {key} missing"
        ((sheet, ref),) = list(wb.defined_names[key].destinations)
        col, row = coordinate_from_string(ref.replace("$", ""))
        out[key] = (sheet, row, column_index_from_string(col))
    return out


def test_workbook_download_is_the_workbook_of_the_current_inputs(workbook_download):
    """The download opens as .xlsx, names every metric, and the engine figures it carries are those
    of the inputs in the app (not of the file)."""
    openpyxl = pytest.importorskip("openpyxl")
    data, case = workbook_download
    wb = openpyxl.load_workbook(io.BytesIO(data))
    cells = _named_cells(wb)
    summary = wb[cells["lcoe_nominal_per_mwh"][0]]
    head = {summary.cell(10, c).value: c for c in range(1, 8)}
    engine_col = head["Engine when written"]
    for key, (sheet, row, col) in cells.items():
        assert str(summary.cell(row, col).value).startswith("="), f"{key} is not a live formula"
        written = wb[sheet].cell(row, engine_col).value
        if case.metrics[key] is None:
            assert written in (None, "")
        else:
            assert written == pytest.approx(case.metrics[key], rel=1e-12), key
    assert case.metrics["lcoe_nominal_per_mwh"] != model.run(sc.load(DEMO)).metrics["lcoe_nominal_per_mwh"]


def test_workbook_download_recalculates_to_the_engines_metrics(workbook_download, tmp_path):
    """LibreOffice (the reference spreadsheet engine) recomputes the downloaded workbook's live
    formulas; the named metric cells then equal the engine's figures for the app's inputs."""
    soffice = require_tool("soffice")
    openpyxl = pytest.importorskip("openpyxl")
    data, case = workbook_download
    src = tmp_path / "in" / "app.xlsx"
    src.parent.mkdir()
    src.write_bytes(data)
    out = tmp_path / "out"
    subprocess.run([soffice, f"-env:UserInstallation=file://{tmp_path}/lo-profile", "--headless", "--calc",
                    "--convert-to", "xlsx", "--outdir", str(out), str(src)], check=True, capture_output=True,
                   timeout=180)
    wb = openpyxl.load_workbook(out / "app.xlsx", data_only=True)
    for key, (sheet, row, col) in _named_cells(wb).items():
        value = wb[sheet].cell(row, col).value
        if case.metrics[key] is None:
            assert not isinstance(value, (int, float)), key
        else:
            assert value == pytest.approx(case.metrics[key], rel=1e-6, abs=1e-6), key


# --------------------------------------------------------------------------- uploads

def _upload(at, name: str, data: bytes):
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value((name, data, "application/toml")).run()
    return at


def _expected_error(tmp_path, name: str, data: bytes) -> str:
    """The loader's own one-line message for these bytes, with the uploaded file's name."""
    p = tmp_path / "loader.toml"
    p.write_bytes(data)
    try:
        sc.from_dict(sc.parse_toml(p), source=name, base_dir=ASSUMPTIONS)
    except ScenarioError as exc:
        return ScenarioError(exc.message, key=exc.key, value=exc.value, file=name, has_value=exc.has_value).line()
    raise AssertionError("expected the loader to refuse these bytes")


@pytest.mark.parametrize("data, match", [
    (b"schema_version = 1\n[project\nname = 1\n", "TOML syntax error"),
    (DEMO.read_bytes().replace(b"weibull_shape = 2.1", b"weibull_shape = -1.0"),
     r"wind.weibull_shape = -1.0: must be >= 0.5"),
    (b"\xff\xfe not text", "is not UTF-8 text"),
], ids=["syntax", "range", "encoding"])
def test_invalid_upload_shows_the_loaders_message(tmp_path, data, match):
    at = _upload(start(), "bad.toml", data)
    assert not at.exception
    expected = _expected_error(tmp_path, "bad.toml", data)
    assert expected.startswith("bad.toml: ")
    assert at.error[0].value == expected
    assert match in at.error[0].value.replace("\\", "")


def test_upload_naming_a_data_file_not_uploaded_is_refused_clearly():
    data = DEMO.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', b'"my_curve.csv"')
    at = _upload(start(), "site.toml", data)
    assert not at.exception
    assert at.error[0].value == ("site.toml: turbine.power_curve = 'my_curve.csv': is neither among the files "
                                 "uploaded with the scenario nor a bundled demo file; upload 'my_curve.csv' beside "
                                 "the scenario (data files are matched by name)")


def test_upload_with_its_data_file_uses_the_uploaded_file():
    """The curve uploaded beside the scenario is the one read (the demo's curve with 2 % less power
    everywhere: the gross AEP falls by 2 %, the integral being linear in the curve)."""
    lines = (ROOT / "demo" / "tallowmere_curve.csv").read_text(encoding="utf-8").splitlines()
    rows = [lines[0]] + [",".join([c[0], str(float(c[1]) * 0.98)] + c[2:]) for c in (r.split(",") for r in lines[1:])]
    data = DEMO.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', b'"my_curve.csv"')
    data = data.replace(b"rated_power_kw = 4200", b"rated_power_kw = 4116")
    at = start()
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value(("site.toml", data, "application/toml"))
    at.file_uploader(key="upload_data").set_value([("my_curve.csv", "\n".join(rows).encode(), "text/csv")]).run()
    assert not at.exception and not at.error
    shown = {m.label: m.value for m in at.metric}
    base = model.run(sc.load(DEMO))
    assert shown["Net AEP P50 [MWh/yr]"] != rp.fmt(base.energy.net_aep_p50_mwh, "{:,.0f}")


@pytest.mark.parametrize("path", ["/etc/passwd", "../../../../../../etc/passwd", "/proc/self/environ",
                                  "../../../../../../etc/hostname"])
def test_upload_naming_a_server_file_is_refused_without_showing_it(path):
    """A scenario may name any path; the app reads none of them, and says so without the file's content."""
    secret = Path(path.replace("../", "").lstrip("/"))
    secret = Path("/") / secret
    first = secret.read_text(errors="replace").splitlines()[0][:20] if secret.is_file() and \
        secret.read_text(errors="replace").strip() else None
    data = DEMO.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', f'"{path}"'.encode())
    at = _upload(start(), "site.toml", data)
    assert not at.exception
    (error,) = [e.value for e in at.error]
    assert error.startswith("site.toml: turbine.power_curve = ")
    assert "is neither among the files uploaded with the scenario nor a bundled demo file" in error
    assert "Traceback" not in error and str(ROOT) not in error
    if first:
        assert first not in error
    # the same through a variant
    data = DEMO.read_bytes() + f'\n[variants.sneaky]\n"turbine.power_curve" = "{path}"\n'.encode()
    at = _upload(start(), "site.toml", data)
    (error,) = [e.value for e in at.error]
    assert error.startswith("site.toml: variants.sneaky.turbine.power_curve = ")
    if first:
        assert first not in error


def test_a_bad_uploaded_data_file_is_named_by_its_upload_name_only():
    data = DEMO.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', b'"my_curve.csv"')
    at = start()
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value(("site.toml", data, "application/toml"))
    at.file_uploader(key="upload_data").set_value([("my_curve.csv", b"wind,power\n0,0\n", "text/csv")]).run()
    assert not at.exception
    (error,) = [e.value for e in at.error]
    assert error == ("my_curve.csv: turbine.power_curve = 'my_curve.csv': header must be 'speed_mps,power_kw', "
                     "found 'wind,power'")


def test_upload_with_a_physics_curve_offers_the_turbine_inputs():
    """A scenario with no data files (a curve built from Cp, conftest.BASE) loads from an upload alone."""
    raw = make_raw()
    at = _upload(start(), "physics.toml", sc.to_toml(raw).encode())
    assert not at.error
    assert shown_headline(at) == expected_headline(model.run(sc.from_dict(raw, source="physics.toml")))
    type_in(at, "turbine.rotor_diameter_m", "120").run()
    raw["turbine"]["rotor_diameter_m"] = 120.0
    assert shown_headline(at) == expected_headline(model.run(sc.from_dict(raw, source="physics.toml")))


def test_valid_upload_gives_the_engines_figures():
    at = _upload(start(), "tallowmere_copy.toml", DEMO.read_bytes())
    assert not at.error
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))


# --------------------------------------------------------------------------- Monte Carlo on demand

def test_monte_carlo_on_demand_matches_the_engine():
    unc = pytest.importorskip("lcoe.analysis.montecarlo")
    at = start(view="Monte Carlo")
    assert not at.dataframe  # nothing until asked
    at.text_input(key="mc_trials").set_value("2000")
    at.button(key="mc_run").click().run()
    assert not at.exception and not at.error
    scn = sc.load(DEMO)
    res = unc.monte_carlo(scn, model.run(scn), trials=2000)
    table = at.dataframe[0].value.set_index("Figure")
    s = res.stats("lcoe_nominal_per_mwh")
    assert table.loc["LCOE, nominal [EUR/MWh]", "P50"] == f"{s['p50']:.2f}"
    assert table.loc["LCOE, nominal [EUR/MWh]", "P90"] == f"{s['p90']:.2f}"
    # a changed input makes the result stale: it is not shown against the new inputs
    type_in(at, "capex.turbine_per_kw", "1200").run()
    assert not at.dataframe


# --------------------------------------------------------------------------- `lcoe app`

def test_app_command_finds_the_app_and_serves_it_headless():
    app = appcmd.find_app()
    assert app == APP
    argv = appcmd.streamlit_argv(app, 8765, "127.0.0.1")
    assert argv[1:5] == ["-m", "streamlit", "run", str(APP)]
    opts = dict(zip(argv[5::2], argv[6::2]))
    assert opts == {"--server.headless": "true", "--server.port": "8765", "--server.address": "127.0.0.1",
                    "--browser.gatherUsageStats": "false", "--client.toolbarMode": "minimal",
                    "--client.showErrorDetails": "none"}


def test_app_command_without_the_app_says_so(monkeypatch, capsys, tmp_path):
    monkeypatch.setattr(appcmd.importlib.util, "find_spec", lambda name: None)
    assert appcmd.find_app() is None
    monkeypatch.undo()
    monkeypatch.setattr(appcmd, "find_app", lambda: None)
    assert cli.main(["app"]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1
    assert "error: the app is not installed:" in err and "lcoe.ui has no app.py" in err


def test_app_command_refuses_a_bad_port(capsys):
    assert cli.main(["app", "--port", "70000"]) == 2
    assert "must be between 1 and 65535, got 70000" in capsys.readouterr().err


# --------------------------------------------------------------------------- failures in the browser

def test_a_failure_inside_a_screen_is_one_message_and_the_page_stays(monkeypatch):
    """No traceback reaches the browser: an unexpected error is one message, the headline stays."""
    from lcoe.analysis import lifetime

    import streamlit as st

    def broken(*args, **kwargs):
        raise RuntimeError("/srv/secret/path exploded")
    monkeypatch.setattr(lifetime, "study", broken)
    st.cache_data.clear()             # a study cached by an earlier test would not call it
    at = start(view="Lifetime")
    assert not at.exception
    assert [e.value for e in at.error] == ["Something went wrong (RuntimeError); the inputs are kept. Change an input "
                                           "or reload the page."]
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))


def test_a_monte_carlo_run_refused_for_memory_keeps_nothing(monkeypatch):
    from lcoe.analysis import montecarlo as unc

    at = start(view="Monte Carlo")
    at.text_input(key="mc_trials").set_value("2000")
    at.button(key="mc_run").click().run()
    assert "mc" in at.session_state

    def too_big(*args, **kwargs):
        raise MemoryError
    monkeypatch.setattr(unc, "monte_carlo", too_big)
    at.button(key="mc_run").click().run()
    assert not at.exception
    assert [e.value for e in at.error] == ["Not enough memory for this many trials; the run was dropped. Try fewer "
                                           "trials."]
    assert "mc" not in at.session_state          # neither the refused run nor the one before is held


def test_a_trial_count_beyond_the_files_limit_is_refused_at_the_field():
    from lcoe.inputs.schema import MAX_TRIALS

    at = start(view="Monte Carlo")
    at.text_input(key="mc_trials").set_value(str(MAX_TRIALS + 1)).run()
    assert MAX_TRIALS == 10_000_000
    assert [e.value for e in at.error] == ["Trials 10,000,001: from 100 to 10,000,000; the Monte Carlo does not run."]
    assert at.button(key="mc_run").disabled
