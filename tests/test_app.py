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

import numpy as np
import pytest
from conftest import DEMO, DEMO_EQUITY, DEMO_HOURLY, DEMO_LAYOUT, ROOT, expected_headline, make_raw, require_tool

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


def shown_headline(at) -> dict:
    """The nine headline figures (drawn first; a Monte Carlo tab adds its own below)."""
    return {m.label: m.value for m in list(at.metric)[:9]}


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
    assert argv[1:5] == ["-m", "lcoe.cli.serve", "run", str(APP)]
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


# --------------------------------------------------------------------------- input that cannot be misread (issue 16)

@pytest.mark.parametrize("dotted, typed, value", [
    ("maintenance.fixed_per_kw_year", "36,5", 36.5), ("wind.mean_speed_mps", "7,9", 7.9),
    ("maintenance.fixed_per_kw_year", " 36.5 ", 36.5), ("capex.turbine_per_kw", "0,125e4", 1250.0),
], ids=["comma O&M", "comma speed", "point", "comma exponent"])
def test_a_decimal_comma_is_read_as_a_decimal_point(dotted, typed, value):
    """36,5 means 36.5 (decimal comma, ISO 80000-1 allows either mark), never 365."""
    at = type_in(start(), dotted, typed).run()
    assert not at.exception and not at.error
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO).with_overrides({dotted: value})))


@pytest.mark.parametrize("typed, why", [
    ("1,250", "'1,250': could be 1.250 or 1250; write it with a decimal point"),
    ("1,250.5", "'1,250.5': use one decimal mark and no thousands separators"),
    ("12 50", "'12 50': is not a number"), ("abc", "'abc': is not a number"), ("", "'': enter a number"),
], ids=["ambiguous", "both marks", "space", "word", "blank"])
def test_a_number_that_could_be_misread_is_refused_at_its_field(typed, why):
    at = start()
    before = shown_headline(at)
    type_in(at, "capex.turbine_per_kw", typed).run()
    assert not at.exception
    assert [e.value for e in at.sidebar.error] == [f"Turbine price {why}"]
    assert shown_headline(at) == before                      # the last valid figures stay
    (warning,) = [w.value for w in at.warning if "Stale" in w.value]
    assert f"Turbine price {why}" in warning


def test_an_out_of_range_value_keeps_the_page_and_speaks_in_the_fields_unit():
    """Availability 150 %: the schema allows at most 1 (a fraction), shown as 100 % at the field."""
    at = start(view="Cash flow and debt")
    type_in(at, "maintenance.fixed_per_kw_year", "40")      # a valid change before the bad one
    at.run()
    good = shown_headline(at)
    assert good == expected_headline(model.run(sc.load(DEMO).with_overrides({"maintenance.fixed_per_kw_year": 40.0})))
    type_in(at, "operations.availability_mature", "150").run()
    assert not at.exception
    assert [e.value for e in at.sidebar.error] == ["Availability, later years 150 %: at most 100 %"]
    assert shown_headline(at) == good                        # the last valid inputs, not the file's
    assert any("Stale" in w.value for w in at.warning)
    assert len(at.get("vega_lite_chart")) == 3               # the open tab's charts are still drawn
    texts = " ".join(e.value for e in list(at.error) + list(at.warning))
    assert str(ROOT) not in texts and "operations.availability_mature" not in texts
    type_in(at, "operations.availability_mature", "96").run()
    assert not at.warning or not any("Stale" in w.value for w in at.warning)
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO).with_overrides(
        {"maintenance.fixed_per_kw_year": 40.0, "operations.availability_mature": 0.96})))


def test_a_refusal_across_fields_is_put_at_the_field_it_names():
    """The loader's cross-check (hub height above the rotor radius) in the field's label and unit."""
    at = type_in(start(), "turbine.hub_height_m", "60").run()
    assert not at.exception
    with pytest.raises(ScenarioError) as err:
        sc.load(DEMO).with_overrides({"turbine.hub_height_m": 60.0})
    assert [e.value for e in at.sidebar.error] == [f"Hub height 60 m: {err.value.message}"]
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))


def test_parse_number_reads_both_decimal_marks_and_guesses_nothing():
    from lcoe.ui.inputs import parse_number
    assert parse_number("36,5") == 36.5 and parse_number("0,125") == 0.125 and parse_number("-2,5") == -2.5
    assert parse_number("1e3") == 1000.0 and parse_number("15.0", integer=True) == 15
    for bad in ("1,250", "12,345", "1,2,3", "1.2.3", "nan", "inf", "1,5%", "--1"):
        with pytest.raises(ValueError):
            parse_number(bad)
    with pytest.raises(ValueError):
        parse_number("15.5", integer=True)


# --------------------------------------------------------------------------- one rule for a change of life

@pytest.mark.parametrize("life", [15, 11])
def test_a_shorter_life_is_adjusted_by_the_engines_rule_and_says_so(life):
    """Life 15 (tenor 16) and life 11 (overhaul in year 12) are no longer refused: the same rule as the
    lifetime study (lcoe.analysis.lifetime.life_overrides) adjusts them, stated on screen."""
    from lcoe.analysis import lifetime
    at = type_in(start(), "project.lifetime_years", life).run()
    assert not at.exception and not at.error
    scn = sc.load(DEMO)
    over, notes = lifetime.life_overrides(scn, life)
    assert f"debt tenor shortened from 16 to {life} years to fit a {life}-year life" in notes
    (info,) = [i.value for i in at.info if i.value.startswith("Operating life")]
    assert info == f"Operating life {life} years: " + "; ".join(notes) + "."
    assert shown_headline(at) == expected_headline(model.run(scn.with_overrides(over)))
    if life == 11:
        assert "overhaul 'blade refurbishment' in year 12 left out: after a 11-year life" in info


# --------------------------------------------------------------------------- Monte Carlo views

def test_monte_carlo_shows_the_lender_probabilities_and_energy_spread_of_the_engine():
    unc = pytest.importorskip("lcoe.analysis.montecarlo")
    at = start(view="Monte Carlo")
    at.text_input(key="mc_trials").set_value("2000")
    at.button(key="mc_run").click().run()
    assert not at.exception and not at.error
    scn = sc.load(DEMO)
    res = unc.monte_carlo(scn, model.run(scn), trials=2000)
    rep = res.report()
    shown = {m.label: m.value for m in at.metric}
    assert shown["Chance minimum DSCR < 1.00x [%]"] == rp.fmt(rep["prob_min_dscr_below_1"], "pct")
    assert shown[f"Chance minimum DSCR < target {res.target_dscr:.2f}x [%]"] == rp.fmt(
        rep["prob_min_dscr_below_target"], "pct")
    assert shown[f"Chance equity IRR < target {rp.fmt(res.equity_target, 'pct')} % [%]"] == rp.fmt(
        rep["prob_equity_irr_below_target"], "pct")
    e = res.stats("net_aep_mean_mwh")
    assert shown["Net energy, mean year P50 / P90 [MWh/yr]"] == f"{e['p50']:,.0f} / {e['p90']:,.0f}"
    caption = " ".join(c.value for c in at.caption)
    assert "the median of the figure is not the figure of the median inputs" in caption
    assert "The deterministic figures above are the P50 case" not in caption
    at.selectbox(key="mc_pick").set_value("min_dscr").run()
    spec = at.get("vega_lite_chart")[0].proto.spec
    assert f"target {res.target_dscr:.2f}x" in spec and "1.00x: cash just covers debt service" in spec


def test_a_refused_trial_count_refuses_the_run():
    at = start(view="Monte Carlo")
    at.text_input(key="mc_trials").set_value("50").run()
    assert [e.value for e in at.error] == ["Trials 50: from 100 to 10,000,000; the Monte Carlo does not run."]
    assert at.button(key="mc_run").disabled
    assert "mc" not in at.session_state
    at.text_input(key="mc_trials").set_value("2,5").run()
    assert [e.value for e in at.error] == ["Trials '2,5': must be a whole number; the Monte Carlo does not run."]


def test_the_workbook_right_after_a_run_holds_its_monte_carlo_sheet(media):
    openpyxl = pytest.importorskip("openpyxl")
    at = start(view="Monte Carlo")
    at.text_input(key="mc_trials").set_value("1000")
    at.button(key="mc_run").click().run()
    assert not at.exception and not at.error
    wb = openpyxl.load_workbook(io.BytesIO(download(at, media, "dl_workbook")))
    assert "Monte Carlo" in wb.sheetnames
    ws = wb["Monte Carlo"]
    cells = [str(c.value) for row in ws.iter_rows(max_row=12) for c in row if c.value is not None]
    assert any("1,000" in c or c == "1000" for c in cells), cells[:30]


# --------------------------------------------------------------------------- own site: uploads and the bundle

def _bundle_zip(at, media) -> bytes:
    data = download(at, media, "dl_bundle")
    assert zipfile.is_zipfile(io.BytesIO(data))
    return data


def test_the_bundle_is_accepted_by_lcoe_check_wherever_unpacked_and_keeps_the_comments(media, tmp_path, capsys):
    at = start()
    type_in(at, "maintenance.fixed_per_kw_year", "41,5")
    type_in(at, "project.lifetime_years", "22").run()
    data = _bundle_zip(at, media)
    where = tmp_path / "somewhere" / "else"
    with zipfile.ZipFile(io.BytesIO(data)) as z:
        names = z.namelist()
        z.extractall(where)
    (toml_name,) = [n for n in names if n.endswith(".toml")]
    assert any(n.endswith("/data/tallowmere_curve.csv") for n in names)
    path = where / toml_name
    assert cli.main(["check", str(path)]) == 0, capsys.readouterr().err
    text = path.read_text(encoding="utf-8")
    first_comment = DEMO.read_text(encoding="utf-8").splitlines()[0]
    assert first_comment in text                              # the file's own comments are kept
    assert "could not be kept" not in text
    expected = model.run(sc.load(DEMO).with_overrides({"maintenance.fixed_per_kw_year": 41.5,
                                                       "project.lifetime_years": 22,
                                                       "finance.debt.tenor_years": 16}))
    assert model.run(sc.load(path)).metrics == expected.metrics
    assert shown_headline(at) == expected_headline(expected)


def test_an_upload_of_scenario_curve_and_series_uses_the_uploaded_files():
    """The hourly demo under new file names, its curve and series uploaded beside it (several files)."""
    curve = (ROOT / "demo" / "tallowmere_curve.csv").read_bytes()
    series = (ROOT / "demo" / "tallowmere_wind_hourly.csv").read_bytes()
    data = DEMO_HOURLY.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', b'"my_curve.csv"').replace(
        b'"../demo/tallowmere_wind_hourly.csv"', b'"my_site_wind.csv"')
    assert b"my_site_wind.csv" in data and b"my_curve.csv" in data
    at = start()
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value(("my_site.toml", data, "application/toml"))
    at.file_uploader(key="upload_data").set_value([("my_curve.csv", curve, "text/csv"),
                                                   ("my_site_wind.csv", series, "text/csv")]).run()
    assert not at.exception and not at.error
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO_HOURLY)))


def test_a_bundle_zip_uploads_back_to_the_same_figures(media):
    at = start(scenario_file=DEMO_HOURLY.name)
    type_in(at, "capex.turbine_per_kw", "1100").run()
    data = _bundle_zip(at, media)
    figures = shown_headline(at)
    again = start()
    again.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    again.file_uploader(key="upload").set_value(("bundle.zip", data, "application/zip")).run()
    assert not again.exception and not again.error
    assert shown_headline(again) == figures


def test_a_zip_without_one_scenario_is_refused_in_one_line():
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w") as z:
        z.writestr("a.toml", DEMO.read_bytes())
        z.writestr("b.toml", DEMO.read_bytes())
    at = start()
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value(("two.zip", buf.getvalue(), "application/zip")).run()
    assert [e.value for e in at.error] == ["two.zip: must hold exactly one scenario file (.toml), found 2"]


# --------------------------------------------------------------------------- wind speed and wind data

def test_the_wind_speed_tab_is_the_engines_sweep_centred_on_the_site():
    from lcoe.analysis import sensitivity as sens
    at = start(view="Wind speed")
    assert not at.exception and not at.error
    scn = sc.load(DEMO)
    values = [float(x) for x in np.round(7.4 * np.linspace(0.7, 1.3, 25), 4)]
    rows = sens.sweep(scn, "wind.mean_speed_mps", values)
    site = rows[12]
    assert site["value"] == 7.4
    caption = " ".join(c.value for c in at.caption)
    assert f"At the site: {site['elasticity']:.2f}" in caption
    table = at.dataframe[0].value
    assert list(table["Elasticity [-]"]) == [f"{r['elasticity']:.2f}" for r in rows]
    assert float(table.iloc[0, 0]) == pytest.approx(0.7 * 7.4, abs=0.005)
    assert float(table.iloc[-1, 0]) == pytest.approx(1.3 * 7.4, abs=0.005)
    spec = at.get("vega_lite_chart")[0].proto.spec
    assert '"type": "log"' in spec or '"type":"log"' in spec


def test_the_wind_data_tab_shows_the_hourly_series():
    at = start(scenario_file=DEMO_HOURLY.name, view="Wind data")
    assert not at.exception and not at.error
    assert len(at.get("vega_lite_chart")) == 4
    text = " ".join(m.value for m in at.markdown)
    assert "17,520 of 17,520 steps present (100.0 %)" in text


# --------------------------------------------------------------------------- named cases

def _pin(at, name: str):
    at.text_input(key="pin_name").set_value(name)
    at.button(key="pin").click().run()
    assert not at.exception
    return at


def test_three_named_cases_side_by_side_with_the_current_inputs():
    at = start()
    _pin(at, "as filed")
    type_in(at, "maintenance.fixed_per_kw_year", "45").run()
    _pin(at, "dear O&M")
    type_in(at, "project.lifetime_years", "30").run()
    _pin(at, "long life")
    type_in(at, "capex.turbine_per_kw", "1080").run()
    at.session_state["view"] = "Compare"
    at.run()
    assert not at.exception and not at.error
    table = at.dataframe[0].value.set_index("Figure")
    assert list(table.columns) == ["as filed", "dear O&M", "long life", "current", "Current - reference"]
    scn = sc.load(DEMO)
    cases = {"as filed": scn, "dear O&M": scn.with_overrides({"maintenance.fixed_per_kw_year": 45.0}),
             "long life": scn.with_overrides({"maintenance.fixed_per_kw_year": 45.0, "project.lifetime_years": 30}),
             "current": scn.with_overrides({"maintenance.fixed_per_kw_year": 45.0, "project.lifetime_years": 30,
                                            "capex.turbine_per_kw": 1080.0})}
    for name, one in cases.items():
        assert table.loc["LCOE, nominal [EUR/MWh]", name] == f"{model.run(one).metrics['lcoe_nominal_per_mwh']:.2f}"
    # the headline's changes are against the last pinned case, unless another is chosen
    ref = model.run(cases["long life"]).metrics["lcoe_nominal_per_mwh"]
    now = model.run(cases["current"]).metrics["lcoe_nominal_per_mwh"]
    assert {m.label: m.delta for m in at.metric}["LCOE, nominal [EUR/MWh]"] == f"{now - ref:+.2f}"
    at.selectbox(key="against_pick").set_value("as filed").run()
    first = model.run(cases["as filed"]).metrics["lcoe_nominal_per_mwh"]
    assert {m.label: m.delta for m in at.metric}["LCOE, nominal [EUR/MWh]"] == f"{now - first:+.2f}"
    at.selectbox(key="unpin_pick").set_value("dear O&M").run()
    at.button(key="unpin").click().run()
    assert list(at.dataframe[0].value.columns) == ["Figure", "as filed", "long life", "current",
                                                   "Current - reference"]


def test_a_variant_of_the_file_loads_into_the_inputs_for_editing():
    at = start(view="Compare")
    at.selectbox(key="variant_pick").set_value("life_30_extension").run()
    at.button(key="load_variant").click().run()
    assert not at.exception and not at.error
    var = sc.load(DEMO).variant("life_30_extension")
    assert shown_headline(at) == expected_headline(model.run(var))
    assert at.text_input(key=input_key(at, "project.lifetime_years")).value == "30"
    type_in(at, "maintenance.fixed_per_kw_year", "39").run()      # edit the variant
    assert shown_headline(at) == expected_headline(model.run(var.with_overrides(
        {"maintenance.fixed_per_kw_year": 39.0})))
    # another variant pinned meanwhile is the file's variant, not one on top of the loaded one
    at.selectbox(key="variant_pick").set_value("preventive_plan").run()
    at.button(key="pin_variant").click().run()
    table = at.dataframe[0].value.set_index("Figure")
    plan = model.run(sc.load(DEMO).variant("preventive_plan"))
    assert table.loc["LCOE, nominal [EUR/MWh]", "variant preventive_plan"] == \
        f"{plan.metrics['lcoe_nominal_per_mwh']:.2f}"
    at.selectbox(key="variant_pick").set_value("(the file as written)").run()
    at.button(key="load_variant").click().run()
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO)))


# --------------------------------------------------------------------------- plain words, search

def test_codes_are_shown_in_plain_words():
    at = start(view="Cash flow and debt")
    options = {w.key.split("|", 3)[3]: w.options for w in at.selectbox if w.key and w.key.startswith("in|")}
    assert options["finance.depreciation"][0] == "Straight line"
    assert "P90 energy, one year" in options["finance.debt.sizing_case"]
    shown = " ".join(str(x) for v in options.values() for x in v)
    assert "_" not in shown
    caption = " ".join(c.value for c in at.caption)
    assert "p90_1yr" not in caption and "P90 energy, one year case" in caption


def test_the_search_box_shows_only_matching_inputs_and_keeps_the_others():
    at = start()
    type_in(at, "maintenance.fixed_per_kw_year", "44").run()
    at.text_input(key="find").set_value("tenor").run()
    assert not at.exception and not at.error
    drawn = [w.key.split("|", 3)[3] for w in at.text_input if w.key and w.key.startswith("in|")]
    assert drawn == ["finance.debt.tenor_years"]
    expected = model.run(sc.load(DEMO).with_overrides({"maintenance.fixed_per_kw_year": 44.0}))
    assert shown_headline(at) == expected_headline(expected)          # the hidden change still counts
    type_in(at, "finance.debt.tenor_years", "14").run()
    at.text_input(key="find").set_value("").run()
    assert at.text_input(key=input_key(at, "maintenance.fixed_per_kw_year")).value == "44"
    assert shown_headline(at) == expected_headline(model.run(sc.load(DEMO).with_overrides(
        {"maintenance.fixed_per_kw_year": 44.0, "finance.debt.tenor_years": 14})))
    at.text_input(key="find").set_value("no such input").run()
    assert "No input's label holds 'no such input'." in [c.value for c in at.sidebar.caption]


def test_the_tornado_names_each_inputs_low_and_high_value():
    from lcoe.analysis import sensitivity as sens
    at = start(view="Tornado")
    rows = sens.tornado(sc.load(DEMO))
    spec = at.get("vega_lite_chart")[0].proto.spec
    turbine = next(r for r in rows if r["key"] == "capex.turbine_per_kw")
    assert f"Turbine price [EUR/kW]: {turbine['low_value']:,.0f} to {turbine['high_value']:,.0f}" in spec


# --------------------------------------------------------------------------- the whole journey (issue 16, done when)

def test_a_first_time_user_brings_a_site_pins_cases_runs_the_monte_carlo_and_downloads(media, tmp_path, capsys):
    """Upload a site (scenario, curve, series), edit lifetime and maintenance, pin three named cases,
    run the Monte Carlo, read the lender probabilities, download a bundle and a workbook: the bundle
    passes `lcoe check` elsewhere and gives the figures on screen; the workbook holds the same figures
    and the Monte Carlo sheet."""
    openpyxl = pytest.importorskip("openpyxl")
    unc = pytest.importorskip("lcoe.analysis.montecarlo")
    curve = (ROOT / "demo" / "tallowmere_curve.csv").read_bytes()
    series = (ROOT / "demo" / "tallowmere_wind_hourly.csv").read_bytes()
    data = DEMO_HOURLY.read_bytes().replace(b'"../demo/tallowmere_curve.csv"', b'"curve.csv"').replace(
        b'"../demo/tallowmere_wind_hourly.csv"', b'"wind.csv"')
    at = start()
    at.selectbox(key="scenario_file").set_value("Upload a scenario file...").run()
    at.file_uploader(key="upload").set_value(("my_site.toml", data, "application/toml"))
    at.file_uploader(key="upload_data").set_value([("curve.csv", curve, "text/csv"),
                                                   ("wind.csv", series, "text/csv")]).run()
    assert not at.exception and not at.error
    _pin(at, "as uploaded")
    type_in(at, "project.lifetime_years", "28")
    type_in(at, "maintenance.fixed_per_kw_year", "39,5").run()
    _pin(at, "28 years")
    type_in(at, "maintenance.component.gearbox.failure_rate_per_turbine_year", "0,015").run()
    _pin(at, "better gearbox")
    assert [p["name"] for p in at.session_state["pins"]] == ["as uploaded", "28 years", "better gearbox"]
    at.session_state["view"] = "Monte Carlo"
    at.run()
    at.text_input(key="mc_trials").set_value("1000").run()
    at.button(key="mc_run").click().run()
    assert not at.exception and not at.error
    changes = {"project.lifetime_years": 28, "maintenance.fixed_per_kw_year": 39.5,
               "maintenance.component.gearbox.failure_rate_per_turbine_year": 0.015}
    scn = sc.load(DEMO_HOURLY).with_overrides(changes)
    case = model.run(scn)
    assert shown_headline(at) == expected_headline(case)
    rep = unc.monte_carlo(scn, case, trials=1000).report()
    shown = {m.label: m.value for m in at.metric}
    assert shown["Chance minimum DSCR < 1.00x [%]"] == rp.fmt(rep["prob_min_dscr_below_1"], "pct")
    # the bundle, unpacked elsewhere
    with zipfile.ZipFile(io.BytesIO(download(at, media, "dl_bundle"))) as z:
        z.extractall(tmp_path / "elsewhere")
        (toml_name,) = [n for n in z.namelist() if n.endswith(".toml")]
    path = tmp_path / "elsewhere" / toml_name
    assert cli.main(["check", str(path)]) == 0, capsys.readouterr().err
    assert expected_headline(model.run(sc.load(path))) == shown_headline(at)
    # the workbook of the same inputs, with its Monte Carlo sheet
    wb = openpyxl.load_workbook(io.BytesIO(download(at, media, "dl_workbook")))
    assert "Monte Carlo" in wb.sheetnames
    cells = _named_cells(wb)
    sheet, row, _ = cells["lcoe_nominal_per_mwh"]
    head = {wb[sheet].cell(10, c).value: c for c in range(1, 8)}
    assert wb[sheet].cell(row, head["Engine when written"]).value == pytest.approx(
        case.metrics["lcoe_nominal_per_mwh"], rel=1e-12)


def test_a_new_site_starts_from_the_template_and_its_bundle_keeps_the_reference_comments(media, tmp_path, capsys):
    """The scaffold `lcoe new` writes (lcoe.inputs.reference), run in the app as the engine runs it
    from the files `lcoe new` writes; edited, its bundle passes `lcoe check` with the comments kept."""
    at = start()
    at.selectbox(key="scenario_file").set_value("Start from the template (as lcoe new writes it)").run()
    assert not at.exception and not at.error
    assert cli.main(["new", str(tmp_path / "site.toml")]) == 0, capsys.readouterr().err
    capsys.readouterr()
    written = sc.load(tmp_path / "site.toml")
    assert shown_headline(at) == expected_headline(model.run(written))
    type_in(at, "project.turbines", "12").run()
    with zipfile.ZipFile(io.BytesIO(download(at, media, "dl_bundle"))) as z:
        z.extractall(tmp_path / "out")
        (toml_name,) = [n for n in z.namelist() if n.endswith(".toml")]
    path = tmp_path / "out" / toml_name
    assert cli.main(["check", str(path)]) == 0, capsys.readouterr().err
    text = path.read_text(encoding="utf-8")
    assert "# Each key has its unit, kind, allowed range and default in the comment above it" in text
    assert model.run(sc.load(path)).metrics == model.run(written.with_overrides({"project.turbines": 12})).metrics


def test_the_wind_speed_tab_of_an_hourly_site_scales_its_record():
    from lcoe.analysis import wind_data
    at = start(scenario_file=DEMO_HOURLY.name, view="Wind speed")
    assert not at.exception and not at.error
    rows = wind_data.speed_sweep(sc.load(DEMO_HOURLY))
    assert rows[12]["factor"] == 1.0
    assert f"At the site: {rows[12]['elasticity']:.2f}" in " ".join(c.value for c in at.caption)
    table = at.dataframe[0].value
    assert list(table["Elasticity [-]"]) == [rp.fmt(r["elasticity"], "{:.2f}") for r in rows]
    assert len(at.get("vega_lite_chart")) == 3


def test_warnings_name_data_files_as_a_user_knows_them():
    at = start(scenario_file=DEMO_LAYOUT.name)
    lines = [m.value for m in at.markdown if "tallowmere_site_12months.csv" in m.value]
    assert lines and all("demo/tallowmere_site_12months.csv" in x and "../" not in x and str(ROOT) not in x
                         for x in lines)


def test_the_cash_tab_shows_sources_and_uses_and_the_lender_cases():
    """The tables hold the engine's figures (lcoe.analysis.lender on the same scenario)."""
    from lcoe.analysis import lender
    at = start(view="Cash flow and debt")
    assert not at.exception
    (cases,) = [d.value for d in at.dataframe if "Min DSCR" in d.value.columns]
    table = cases.set_index("Case")
    scn = sc.load(DEMO)
    ref = {r.case.label: r.metrics for r in lender.lender_cases(scn)}
    assert list(table.index) == list(ref)
    assert table.loc["P99 1-yr energy", "Min DSCR"] == rp.fmt(ref["P99 1-yr energy"]["min_dscr"], "{:.3f}")
    (su,) = [d.value for d in at.dataframe if "Uses" in d.value.columns]
    assert su.iloc[0, 0] == "Capex" and "Senior debt" in list(su["Sources"])


def test_the_lender_cases_have_their_dscr_by_year_with_the_debt_locked():
    """The chart's points are the engine's yearly DSCR of each lender case (lcoe.analysis.lender)."""
    import json

    from lcoe.analysis import lender
    at = start(view="Cash flow and debt")
    assert not at.exception and not at.error
    results = lender.lender_cases(sc.load(DEMO))
    pa = pytest.importorskip("pyarrow")
    (chart,) = [c for c in at.get("vega_lite_chart") if "DSCR [x]" in c.proto.spec and '"case"' in c.proto.spec]
    frames = [pa.ipc.open_stream(d.data.data).read_all().to_pandas() for d in chart.proto.datasets]
    if chart.proto.data.data:
        frames.append(pa.ipc.open_stream(chart.proto.data.data).read_all().to_pandas())
    (data,) = [f for f in frames if {"case", "year", "value"} <= set(f.columns)]
    points = {(c, int(y)): v for c, y, v in zip(data["case"], data["year"], data["value"])}
    assert json.loads(chart.proto.spec)["encoding"]["y"]["title"] == "DSCR [x]"
    for r in results:
        d = r.flows.dscr.reshape(-1)
        for t in range(1, d.size):
            if np.isfinite(d[t]):
                assert points[(r.case.label, t)] == pytest.approx(float(d[t]), rel=1e-12)
