"""The interactive app: move the assumptions of one wind site and see the economics at once.

Start with ``lcoe app`` or ``streamlit run ui/app.py``. The app is thin: widgets and
charts over the engine. Every figure shown comes from :mod:`lcoe` (the model, the
report, the Monte Carlo, the sensitivity sweeps, the workbook); the app turns
inputs into scenario overrides and results into tables and charts, nothing more.
"""

from __future__ import annotations

import gc
import hashlib
import tempfile
import time
import tomllib
from pathlib import Path

import numpy as np
import pandas as pd
import streamlit as st
from lcoe.ui import charts, inputs, uploads

from lcoe import engine as model
from lcoe.analysis import lender, lifetime, study, wind_data
from lcoe.analysis import montecarlo as unc_mod
from lcoe.analysis import sensitivity as sens_mod
from lcoe.demo_files import assumptions_dir
from lcoe.inputs import reference
from lcoe.inputs import scenario as sc
from lcoe.inputs.about import CAUTION
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import MAX_TRIALS
from lcoe.inputs.portfolio import is_portfolio_file
from lcoe.outputs import bundle
from lcoe.outputs import report as rp
from lcoe.outputs import workbook
from lcoe.physics import energy as en

ASSUMPTIONS = assumptions_dir()
DEMO_FILE = "tallowmere_ridge.toml"

UPLOAD = "Upload a scenario file..."
TEMPLATE = "Start from the template (as lcoe new writes it)"
TEMPLATE_CURVE = "new_site_curve.csv"
TABS = ["Energy", "Cash flow and debt", "Lifetime", "Wind speed", "Wind data", "Monte Carlo", "Tornado",
        "Compare", "Yearly table"]
LIFETIMES = list(range(15, 36))
MIN_TRIALS = 100      # fewer trials say nothing of a P90 (the app's rule; the CLI takes any count)

# Headline figures: (block, key); labels, units and formats are the report's own.
HEADLINE = [("metrics", "lcoe_nominal_per_mwh"), ("metrics", "lcoe_real_per_mwh"), ("metrics", "project_npv"),
            ("metrics", "equity_irr"), ("metrics", "min_dscr"), ("metrics", "debt_amount"),
            ("energy", "net_aep_p50_mwh"), ("energy", "net_aep_p90_1yr_mwh"), ("energy", "net_capacity_factor")]
LOWER_IS_BETTER = {"lcoe_nominal_per_mwh", "lcoe_real_per_mwh"}
NEUTRAL = {"debt_amount"}
MC_KEYS = ("lcoe_nominal_per_mwh", "lcoe_real_per_mwh", "project_npv", "equity_npv", "equity_irr", "min_dscr")
TORNADO_METRICS = ("lcoe_nominal_per_mwh", "project_npv", "equity_irr", "min_dscr")
SHOW_SCALE = {"m": 1e-6, "pct": 100.0}   # report formats that show a value scaled: EUR M, percent

st.set_page_config(page_title="lcoe: wind site economics", layout="wide")


# --------------------------------------------------------------------------- the engine, cached

@st.cache_resource(max_entries=16, show_spinner=False)
def load_file(path: str, mtime_ns: int) -> sc.Scenario:
    return sc.load(path)


@st.cache_data(max_entries=4, show_spinner=False)
def site_files(stamped: tuple) -> list[str]:
    """The scenario files of one site in assumptions/ (portfolios left out), read again when one changes."""
    return [name for name, _ in stamped if not is_portfolio_file(ASSUMPTIONS / name)]


def upload_folder() -> Path:
    """This session's folder for the data files uploaded with a scenario."""
    folder = st.session_state.get("upload_dir")
    if folder is None or not Path(folder).is_dir():
        folder = str(uploads.new_folder())
        st.session_state["upload_dir"] = folder
    return Path(folder)


def say(exc) -> str:
    """An error for the browser: one line, naming uploaded files, never a server path."""
    return uploads.public(exc, st.session_state.get("upload_dir"))


@st.cache_resource(max_entries=64, show_spinner=False)
def scenario_of(text: str, base_dir: str, source: str) -> sc.Scenario:
    return sc.from_dict(tomllib.loads(text), source=source, base_dir=base_dir, check_variants=False)


@st.cache_resource(max_entries=64, show_spinner=False)
def case_of(text: str, base_dir: str, source: str, breakeven: bool = False) -> model.Case:
    """The deterministic case; the break-even price (a root search) only where it is shown."""
    return model.run(scenario_of(text, base_dir, source), breakeven=breakeven)


@st.cache_data(max_entries=16, show_spinner=False)
def lifetime_study(text: str, base_dir: str, source: str, ext_year: int, ext_cost: float,
                   growth: float) -> pd.DataFrame:
    """Metrics for lives of 15..35 years, with and without a life-extension overhaul (lcoe.analysis.lifetime)."""
    rows = lifetime.study(scenario_of(text, base_dir, source), LIFETIMES, ext_year, ext_cost, growth)
    return pd.DataFrame(rows)


@st.cache_data(max_entries=16, show_spinner=False)
def speed_study(text: str, base_dir: str, source: str, key: str, values: tuple) -> list:
    return sens_mod.sweep(scenario_of(text, base_dir, source), key, list(values))


@st.cache_data(max_entries=8, show_spinner=False)
def series_sweep(text: str, base_dir: str, source: str) -> list:
    return wind_data.speed_sweep(scenario_of(text, base_dir, source))


@st.cache_data(max_entries=8, show_spinner=False)
def series_of(text: str, base_dir: str, source: str) -> dict | None:
    return wind_data.series_view(scenario_of(text, base_dir, source))


@st.cache_data(max_entries=16, show_spinner=False)
def tornado_of(text: str, base_dir: str, source: str, metric: str) -> list:
    return sens_mod.tornado(scenario_of(text, base_dir, source), metric=metric)


# --------------------------------------------------------------------------- formatting (the report's own)

def label_of(block: str, key: str, cur: str) -> tuple[str, str, str]:
    labels = rp.METRIC_LABELS if block == "metrics" else rp.ENERGY_LABELS
    name, unit, how = labels[key]
    return name, unit.format(cur=cur), how


def value_of(case: model.Case, block: str, key: str):
    return case.metrics[key] if block == "metrics" else float(getattr(case.energy, key))


def change_text(now, then, how: str) -> str | None:
    """The change against the pinned case, in the figure's own format, signed ("0" for none)."""
    if now is None or then is None:
        return None
    text = rp.fmt(now - then, how)
    if text == "n/a":
        return None
    if text.strip("-+0.,") == "":
        return "0"
    return text if text.startswith("-") else "+" + text


def headline(case: model.Case, pinned: model.Case | None, cur: str) -> None:
    """Nine figures, three to a row: wide enough for every label and unit at 1,280 px."""
    for row in (HEADLINE[:3], HEADLINE[3:6], HEADLINE[6:]):
        for col, (block, key) in zip(st.columns(3), row):
            name, unit, how = label_of(block, key, cur)
            now = value_of(case, block, key)
            delta = change_text(now, value_of(pinned, block, key), how) if pinned is not None else None
            color = "inverse" if key in LOWER_IS_BETTER else "off" if key in NEUTRAL else "normal"
            col.metric(f"{name} [{unit}]", rp.fmt(now, how), delta=delta, delta_color=color,
                       delta_arrow="off" if delta == "0" else "auto", border=True)


def years_table(case: model.Case) -> pd.DataFrame:
    return pd.DataFrame(case.annual())


# --------------------------------------------------------------------------- downloads

def workbook_bytes(text: str, base_dir: str, source: str, mc) -> bytes:
    """The lender workbook of the current inputs (with the Monte Carlo when it was run on them)."""
    try:
        rep = study.build(sc.from_dict(tomllib.loads(text), source=source, base_dir=base_dir), trials=0,
                          sensitivity=True)
    except ScenarioError:  # a variant of the file no longer fits the current inputs: leave the variants out
        rep = study.build(scenario_of(text, base_dir, source), trials=0, variants=False, sensitivity=True)
    rep.montecarlo = mc
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "workbook.xlsx"
        workbook.write(rep, path)
        return path.read_bytes()


@st.cache_data(max_entries=32, show_spinner=False)
def csv_bytes(text: str, base_dir: str, source: str) -> bytes:
    """The yearly table exactly as ``lcoe run --csv`` writes it."""
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "yearly.csv"
        rp.write_annual_csv(study.Report(case_of(text, base_dir, source)), path)
        return path.read_bytes()


def bundle_bytes(base, text: str, base_dir: str, source: str, original: str | None) -> bytes:
    """The bundle (lcoe.outputs.bundle) of the current inputs, the file's comments kept."""
    return bundle.bundle_zip(scenario_of(text, base_dir, source), original, _slug(base.project.name))


def _slug(name: str) -> str:
    out = "".join(ch.lower() if ch.isalnum() else "_" for ch in name)
    return "_".join(p for p in out.split("_") if p) or "scenario"


# --------------------------------------------------------------------------- the page

def pick_scenario() -> tuple[sc.Scenario | None, str]:
    """The scenario chosen in the sidebar (a file, an upload, or a variant of either loaded for editing)."""
    files = site_files(tuple((p.name, p.stat().st_mtime_ns) for p in sorted(ASSUMPTIONS.glob("*.toml"))))
    first = files.index(DEMO_FILE) if DEMO_FILE in files else 0     # the demo site, not a portfolio's site
    st.sidebar.header("Scenario")
    choice = st.sidebar.selectbox("Scenario file from assumptions/", files + [UPLOAD, TEMPLATE], index=first,
                                  key="scenario_file")
    try:
        if choice == UPLOAD:
            scn, ident = uploaded()
        elif choice == TEMPLATE:
            scn, ident = template()
        else:
            path = ASSUMPTIONS / choice
            scn = load_file(str(path), path.stat().st_mtime_ns)
            ident = "file:" + hashlib.sha256(path.read_bytes()).hexdigest()[:12]
            st.session_state.setdefault("file_text", {})[ident] = path.read_text(encoding="utf-8")
        if scn is None:
            return None, ""
        st.session_state["file_scn"] = scn          # the file as written: its variants are pinned from it
        variant = st.session_state.get("variant_loaded", {}).get(ident)
        if variant in scn.variants:
            st.sidebar.caption(f"Variant **{variant}** of the file is loaded into the inputs (Compare tab to change).")
            text = st.session_state.get("file_text", {}).get(ident)
            scn = scn.variant(variant)
            ident = f"{ident}:variant:{variant}"
            if text is not None:
                st.session_state["file_text"][ident] = text
        return scn, ident
    except ScenarioError as exc:
        st.session_state.pop("upload_scn", None)
        st.error(say(exc))
        return None, ""


def template() -> tuple[sc.Scenario, str]:
    """The scaffold of a new site (lcoe.inputs.reference, the text `lcoe new` writes) with its invented
    power curve, loaded as an upload: edit it here, then take the bundle away."""
    text = reference.template_text(TEMPLATE_CURVE)
    ident = "template:" + hashlib.sha256(text.encode()).hexdigest()[:12]
    if st.session_state.get("upload_ident") != ident or not st.session_state.get("upload_scn"):
        st.session_state["upload_scn"] = uploads.load_upload(
            "new_site.toml", text.encode(), {TEMPLATE_CURVE: reference.curve_template_csv().encode()}, upload_folder())
        st.session_state["upload_ident"] = ident
        st.session_state.setdefault("file_text", {})[ident] = text
    st.sidebar.caption("A new site from the template: every number is invented; replace them with the site's own, "
                       "or download the bundle and edit the file (each key's unit, range and default are its "
                       "comments).")
    return st.session_state["upload_scn"], ident


def uploaded() -> tuple[sc.Scenario | None, str]:
    """The uploaded scenario: one TOML with its data files, or one zip (a bundle) holding them all."""
    up = st.sidebar.file_uploader("Scenario file (TOML), or a bundle (zip) of the scenario and its data files",
                                  type=["toml", "zip"], key="upload")
    extra = st.sidebar.file_uploader("Data files it names (power curve, wind series; CSV)", type=["csv"],
                                     accept_multiple_files=True, key="upload_data")
    if up is None:
        return None, ""
    name, data = up.name, up.getvalue()
    files = {f.name: f.getvalue() for f in extra or []}
    if name.lower().endswith(".zip"):
        name, data, inside = uploads.unzip(name, data)
        files = {**inside, **files}
    digest = hashlib.sha256(data)
    for fname in sorted(files):
        digest.update(fname.encode() + b"\0" + hashlib.sha256(files[fname]).digest())
    ident = "upload:" + digest.hexdigest()[:12]
    if st.session_state.get("upload_ident") != ident or not st.session_state.get("upload_scn"):
        st.session_state["upload_scn"] = uploads.load_upload(name, data, files, upload_folder())
        st.session_state["upload_ident"] = ident
        st.session_state.setdefault("file_text", {})[ident] = data.decode("utf-8-sig")
    return st.session_state["upload_scn"], ident


def apply_inputs(base, overrides: dict):
    """The scenario of the inputs, with the one rule for a change of life (lcoe.analysis.lifetime):
    overhauls after the life left out, a longer debt tenor or PPA term cut to the life. Returns
    (scenario, the adjustments in words)."""
    over = dict(overrides)
    life = over.pop("project.lifetime_years", None)
    if life is None:
        return (base.with_overrides(over, label="input") if over else base), []
    first = base.with_overrides({**over, "project.lifetime_years": max(int(life), base.lifetime)}, label="input")
    adjust, notes = lifetime.life_overrides(first, int(life))
    return first.with_overrides(adjust, label="input"), notes


def resolve(base, ident: str, drawn: inputs.Drawn) -> dict | None:
    """The inputs to show: the current ones when valid, else the last valid ones (marked stale)."""
    source, base_dir = base.source, str(base.base_dir)
    problems = list(drawn.problems.values())
    if not problems:
        try:
            scn, notes = apply_inputs(base, drawn.overrides)
            text = sc.to_toml(scn.raw)
            case_of(text, base_dir, source)
            good = {"text": text, "overrides": dict(drawn.overrides), "notes": notes}
            st.session_state.setdefault("last_good", {})[ident] = good
            return {**good, "scn": scn, "stale": []}
        except ScenarioError as exc:
            problems.append(inputs.message_at_field(base, drawn, exc) or say(exc))
    good = st.session_state.get("last_good", {}).get(ident)
    if good is None:
        good = {"text": sc.to_toml(base.raw), "overrides": {}, "notes": []}
    try:
        case_of(good["text"], base_dir, source)
    except ScenarioError as exc:
        st.error(say(exc))
        return None
    return {**good, "scn": scenario_of(good["text"], base_dir, source), "stale": problems}


def main() -> None:
    started = time.perf_counter()
    st.title("Wind site economics")
    st.info(CAUTION, icon="⚠️")
    base, ident = pick_scenario()
    st.session_state["ident"] = ident
    if base is None:
        if st.session_state.get("scenario_file") == UPLOAD:
            st.write("Upload a scenario file (TOML) in the sidebar, or one zip of a bundle, or pick a file from "
                     "assumptions/. Upload the data files it names (power curve, wind series) with it; they are "
                     "matched by file name. The bundled demo files need no upload.")
        return
    resets = st.session_state.setdefault("resets", {})
    token = hashlib.sha256(f"{ident}:{resets.get(ident, 0)}".encode()).hexdigest()[:10]
    if st.sidebar.button("Reset inputs to the file", key="reset"):
        resets[ident] = resets.get(ident, 0) + 1
        st.session_state.get("last_good", {}).pop(ident, None)
        st.rerun()
    st.sidebar.header("Inputs")
    query = st.sidebar.text_input("Find an input", key="find", placeholder="a word of its label: tenor, O&M, ...")
    drawn = inputs.input_widgets(base, token, query)
    if query.strip() and not drawn.shown:
        st.sidebar.caption(f"No input's label holds '{query.strip()}'.")
    labels = inputs.labels(base)
    cur = base.project.currency
    source, base_dir = base.source, str(base.base_dir)
    now = resolve(base, ident, drawn)
    if now is None:
        return
    scn, text, overrides = now["scn"], now["text"], now["overrides"]
    case = case_of(text, base_dir, source)
    pins = st.session_state.setdefault("pins", [])
    pinned, pin = None, None
    if pins:
        names = [p["name"] for p in pins]
        ref = st.session_state.get("against")
        pin = pins[names.index(ref)] if ref in names else pins[-1]
        try:
            pinned = case_of(pin["text"], pin["base_dir"], pin["source"])
        except ScenarioError as exc:
            st.warning(f"The pinned case '{pin['name']}' no longer runs: {say(exc)}")

    st.subheader(f"{base.project.name}: {base.project.turbines} x {base.turbine.rated_power_kw:,.0f} kW, "
                 f"{scn.lifetime} years")
    if now["stale"]:
        st.warning("**Stale: the figures below are those of the last valid inputs.** Not taken: "
                   + "; ".join(now["stale"]) + ".", icon="⏸️")
    changed = ", ".join(labels.get(k, k).split(" [")[0] for k in overrides) or "none"
    note = f" Changes against the pinned case '{pin['name']}'." if pinned is not None else ""
    st.caption(f"Scenario `{Path(source).name}`; changed inputs: {changed}.{note}")
    if now["notes"]:
        st.info(f"Operating life {scn.lifetime} years: " + "; ".join(now["notes"]) + ".", icon="ℹ️")
    headline(case, pinned, cur)
    actions(base, scn, text, base_dir, source, overrides, changed, pins)
    if case.warnings:
        with st.expander(f"Warnings ({len(case.warnings)})"):
            for w in case.warnings:
                st.write(f"- {say(w)}")

    tabs = st.tabs(TABS, key="view", on_change="rerun")
    views = [lambda: tab_energy(scn, case),
             lambda: (tab_cash(scn, case, cur), lender_panel(case, text, base_dir, source, cur)),
             lambda: tab_lifetime(scn, text, base_dir, source, cur),
             lambda: tab_speed(scn, text, base_dir, source, cur),
             lambda: tab_series(scn, text, base_dir, source),
             lambda: tab_montecarlo(scn, case, text, cur),
             lambda: tab_tornado(scn, text, base_dir, source, cur, labels),
             lambda: tab_compare(base, ident, text, base_dir, source, pins, cur),
             lambda: tab_yearly(case, cur)]
    for tab, view in zip(tabs, views):
        with tab:
            if tab.open:
                view()
    st.caption(f"Page computed in {1000 * (time.perf_counter() - started):.0f} ms.")


def actions(base, scn, text, base_dir, source, overrides, changed, pins) -> None:
    """Pin a named case and the downloads, under the headline."""
    c1, c2, _ = st.columns([2, 1, 3], vertical_alignment="bottom")
    default = f"case {len(pins) + 1}"
    name = c1.text_input("Name of the case to pin", key="pin_name", placeholder=default)
    if c2.button("Pin", key="pin", help="Keep these inputs under this name; the figures then show the change "
                                        "against the last pinned case, and Compare shows them side by side"):
        name = (name or "").strip() or default
        names = [p["name"] for p in pins]
        if name in names:
            pins.pop(names.index(name))
        pins.append({"name": name, "text": text, "base_dir": base_dir, "source": source,
                     "label": Path(source).name + (f" with {changed}" if overrides else "")})
        st.session_state["against"] = name
        st.rerun()
    slug = _slug(base.project.name)
    mc = current_mc(text)
    row = st.container(horizontal=True)        # the buttons wrap to a second line rather than clip
    row.download_button("Workbook (.xlsx)", data=lambda: workbook_bytes(text, base_dir, source, mc),
                       file_name=f"{slug}.xlsx", key="dl_workbook", on_click="ignore",
                       mime="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
                       help="The lender workbook of these inputs, with live formulas"
                            + (" and the Monte Carlo run" if mc is not None else ""))
    original = st.session_state.get("file_text", {}).get(st.session_state.get("ident"))
    row.download_button("Bundle (.zip)", data=lambda: bundle_bytes(base, text, base_dir, source, original),
                       file_name=f"{slug}_bundle.zip", mime="application/zip", key="dl_bundle", on_click="ignore",
                       help="These inputs as a scenario file with its data files, paths relative inside the zip: "
                            "`lcoe check` accepts it wherever it is unpacked")
    row.download_button("Scenario (.toml)", data=text.encode("utf-8"), file_name=f"{slug}_inputs.toml",
                       mime="application/toml", key="dl_scenario", on_click="ignore",
                       help="These inputs as a scenario file; its data paths are relative to the file's folder "
                            "(take the bundle to carry the data files with it)")
    row.download_button("Yearly table (.csv)", data=csv_bytes(text, base_dir, source), file_name=f"{slug}_yearly.csv",
                       mime="text/csv", key="dl_csv", on_click="ignore")


# --------------------------------------------------------------------------- the screens

def tab_energy(scn, case) -> None:
    e = case.energy
    site = en.site_for(scn)
    c = site.climate
    top = max(float(np.max(site.site_curve.breaks_mps)) + 2.0, 3.0 * c.mean_speed_mps)
    v = np.linspace(0.0, top, 281)
    curve = pd.DataFrame({"speed": v, "power": site.site_curve.power_kw(v)})
    pdf = None
    if np.isfinite(c.scale_mps) and np.isfinite(c.shape):
        pdf = pd.DataFrame({"speed": v, "pdf": c.pdf(v)})
    left, right = st.columns(2)
    with left:
        st.markdown("**Power curve over the wind-speed distribution at hub height**")
        charts.draw(charts.power_curve, curve=curve, pdf=pdf)
        fit = " (Weibull fitted to the series)" if c.kind == "series" else ""
        st.caption(f"Hub-height mean {e.hub_mean_speed_mps:.2f} m/s; Weibull A {e.weibull_scale_mps:.2f} m/s, "
                   f"k {e.weibull_shape:.2f}{fit}; air density {e.air_density_kgm3:.4f} kg/m³.")
    with right:
        st.markdown("**Net energy and availability by year**")
        y = years_table(case).iloc[1:]
        charts.draw(charts.energy_by_year, years=pd.DataFrame(
            {"year": y["year"], "energy": y["energy_mwh"], "availability": y["availability"] * 100.0}))
        d = e.report()
        st.caption(" · ".join(f"{name} {rp.fmt(d[k], how)} {unit}" for k, (name, unit, how) in rp.ENERGY_LABELS.items()
                              if k in ("gross_aep_mwh", "net_aep_p90_10yr_mwh", "net_aep_p99_1yr_mwh", "sigma_1yr")))
    if e.wind_rose is not None:
        directions(e)


def directions(e) -> None:
    """The wind rose, and the wake and long-term figures of the report, under the energy charts."""
    rose = e.wind_rose
    w = rose["width_deg"]
    rows = pd.DataFrame([{"start": r["centre_deg"] - w / 2, "end": r["centre_deg"] + w / 2,
                          "frequency": 100 * r["frequency"], "share": 100 * (r["gross_share"] or 0.0),
                          "mean": r["mean_speed_mps"], "label": f"from {r['centre_deg']:.0f}°",
                          **({"wake": 100 * r["wake_loss"]} if "wake_loss" in r else {})} for r in rose["rows"]])
    left, right = st.columns(2)
    with left:
        st.markdown(f"**Wind rose at hub height ({rose['sectors']} sectors, {rose['source']})**")
        charts.draw(charts.wind_rose, sectors=rows)
        st.caption("Each wedge is a direction the wind comes from, north at the top; its length is the share of "
                   "the time, its shade the share of the gross energy.")
    with right:
        if e.wake is not None:
            wk = e.wake
            st.markdown(f"**Wake loss of the layout: {100 * wk['farm_loss']:.2f} %** (per turbine "
                        f"{100 * wk['turbine_loss_min']:.2f} to {100 * wk['turbine_loss_max']:.2f} %)")
            st.dataframe(pd.DataFrame([{"Turbine": t["name"], "x [m]": round(t["x_m"], 1), "y [m]": round(t["y_m"], 1),
                                        "Wake loss [%]": round(100 * t["wake_loss"], 2)} for t in wk["per_turbine"]]),
                         hide_index=True, height=240)
            st.caption(f"Jensen/Park top-hat wakes, k = {wk['wake_decay_constant']:g} ({wk['location']}); thrust: "
                       f"{wk['thrust']}.")
        if e.long_term is not None:
            lt = e.long_term
            st.markdown(f"**Long-term correction ({lt['method'].replace('_', ' ')})**: r = {lt['r']:.3f} over "
                        f"{lt['concurrent_years']:.2f} concurrent years against {lt['reference_years']:.1f} reference "
                        f"years; site mean {lt['site_mean_short_term_mps']:.2f} m/s measured, "
                        f"{lt['site_mean_long_term_mps']:.2f} m/s long term; uncertainty "
                        f"{100 * lt['uncertainty_speed_sd']:.2f} % of the speed.")


CASH_LINES = {"revenue": "Revenue", "opex": "O&M", "tax": "Tax", "cfads": "CFADS", "debt_service": "Debt service",
              "equity_cash_flow": "Equity cash flow"}


def tab_cash(scn, case, cur) -> None:
    y = years_table(case).iloc[1:]
    left, right = st.columns(2)
    with left:
        st.markdown("**Yearly cash flow (nominal)**")
        long = y.melt(id_vars="year", value_vars=list(CASH_LINES), var_name="line", value_name="value")
        long["line"] = long["line"].map(CASH_LINES)
        long["value"] = long["value"] * SHOW_SCALE["m"]
        charts.draw(charts.cash_by_year, lines=long, ytitle=f"Nominal money [{cur} M]", order=list(CASH_LINES.values()))
        costs = study.costs_block(case)
        st.caption(f"Year 0: capex {rp.fmt(costs['capex_total'], 'm')} {cur} M, debt "
                   f"{rp.fmt(case.metrics['debt_amount'], 'm')} {cur} M. Decommissioning net of salvage in year "
                   f"{scn.lifetime}: {rp.fmt(costs['decommissioning_net'], 'm')} {cur} M.")
    with right:
        st.markdown("**DSCR against the target**")
        d = scn.finance.debt
        y = y[y["dscr"].notna()]
        if d is None or y.empty:
            st.write("No debt in this case.")
            return
        rules = pd.DataFrame({"y": [d.target_dscr, 1.0], "what": [f"target {d.target_dscr:.2f}x", "1.00x"]})
        charts.draw(charts.dscr_by_year, years=y[["year", "dscr"]], rules=rules)
        st.caption(f"Debt sculpted to {d.target_dscr:.2f}x on the {inputs.plain(d.sizing_case)} case; the P50 case "
                   "meets the same "
                   f"schedule. Minimum DSCR {rp.fmt(case.metrics['min_dscr'], '{:.3f}')}x, "
                   f"LLCR {rp.fmt(case.metrics['llcr'], '{:.3f}')}x.")


@st.cache_data(max_entries=16, show_spinner=False)
def lender_rows(text: str, base_dir: str, source: str) -> tuple[list, pd.DataFrame]:
    """The lender cases of the current inputs, debt locked at the base sizing (lcoe.analysis.lender):
    their figures, and each case's DSCR by year (t = 1..L, years with debt service)."""
    case = case_of(text, base_dir, source)
    results = lender.lender_cases(case.scenario, case)
    years = []
    for r in results:
        d = np.asarray(r.flows.dscr, float).reshape(-1)
        years += [{"year": t, "case": r.case.label, "value": float(d[t])} for t in range(1, d.size)
                  if np.isfinite(d[t])]
    return [r.to_dict() for r in results], pd.DataFrame(years, columns=["year", "case", "value"])


def lender_panel(case, text, base_dir, source, cur) -> None:
    """Sources and uses, then the lender cases: the figures of `lcoe run`, as tables."""
    su = case.sources_and_uses()
    st.markdown("**Sources and uses of funds**")
    uses = [(rp.USES_LABELS[k], v) for k, v in su["uses"].items()]
    sources = [("Senior debt", su["sources"]["debt"]), ("Equity", su["sources"]["equity"]),
               ("Total sources", su["sources"]["total"])]
    st.dataframe(pd.DataFrame({"Uses": [u for u, _ in uses], f"[{cur} M]": [rp.fmt(v, "m") for _, v in uses],
                               "Sources": [x for x, _ in sources] + [""] * (len(uses) - len(sources)),
                               f"[{cur} M] ": [rp.fmt(v, "m") for _, v in sources] + [""] * (len(uses) - len(sources))}),
                 hide_index=True, key="sources_uses")
    when = (f" Financial close {su['financial_close']}, operation {su['commercial_operation']}."
            if "commercial_operation" in su else "")
    st.caption(f"Gearing (debt / uses) {rp.fmt(su['gearing'], 'pct')} %; sources and uses "
               f"{'balance' if su['balanced'] else 'do NOT balance'}.{when}")
    if case.scenario.finance.debt is None:
        return
    st.markdown("**Lender cases (debt and debt service locked at the base sizing)**")
    rows, dscr = lender_rows(text, base_dir, source)
    table = [{"Case": r["label"], **{h: ("n/a" if r[k] is None else f"{r[k] / 1e3:,.0f}" if how == "k"
                                         else rp.fmt(r[k], how)) for k, h, how in rp.LENDER_COLUMNS}}
             for r in rows]
    st.dataframe(pd.DataFrame(table), hide_index=True, key="lender_cases")
    st.caption(f"Lock-up in years; DSRA drawn and unpaid debt service over the life in {cur} thousands; "
               "equity IRR in %.")
    if not dscr.empty:
        st.markdown("**DSCR by year in each lender case (the debt locked)**")
        charts.draw(charts.cases_by_year, data=dscr, ytitle="DSCR [x]", order=[r["label"] for r in rows])
        st.caption(f"Each case meets the debt service sized at close on the base case; target "
                   f"{case.scenario.finance.debt.target_dscr:.2f}x, and below 1.00x the year's cash does not cover it.")


def _extension_default(scn) -> tuple[int, float]:
    """The scenario's own life-extension works (from a variant) when it has them."""
    for overrides in scn.variants.values():
        items = overrides.get("maintenance.overhaul", []) if isinstance(overrides, dict) else []
        for item in items if isinstance(items, list) else []:
            if isinstance(item, dict) and "extension" in str(item.get("name", "")).lower():
                return int(item["year"]), float(item["cost_per_turbine"])
    return 20, 0.1 * scn.capex.turbine_per_kw * scn.turbine.rated_power_kw


def study_field(col, label: str, key: str, value: float, integer: bool = False, low: float = 0.0,
                high: float = float("inf")):
    """A number typed for a study (not a scenario input), read as the sidebar reads numbers; None if refused."""
    text = col.text_input(label, value=str(int(value)) if integer else f"{value:g}", key=key)
    try:
        x = inputs.parse_number(text, integer=integer)
    except ValueError as exc:
        col.error(f"{label.split(' [')[0]} '{text.strip()}': {exc}")
        return None
    if not low <= x <= high:
        col.error(f"{label.split(' [')[0]} {x:g}: from {low:g} to {high:g}")
        return None
    return x


WEAR_GROWTH = 0.05    # the study's starting value for the wear without the overhaul: an assumption, shown and editable


def tab_lifetime(scn, text, base_dir, source, cur) -> None:
    st.markdown("**LCOE and NPV against the operating life, with and without a life-extension overhaul**")
    year0, cost0 = _extension_default(scn)
    a, b, c, _ = st.columns([1, 1, 1, 1])
    year = study_field(a, "Extension overhaul in year [year]", "ext_year", year0, integer=True, low=1, high=59)
    cost_k = study_field(b, f"Extension overhaul cost [{cur} k per turbine]", "ext_cost", round(cost0 / 1e3, 3))
    growth = study_field(c, "Failure-rate growth without it [%/yr]", "ext_wear", 100 * WEAR_GROWTH, high=100.0)
    if year is None or cost_k is None or growth is None:
        return
    try:
        with st.spinner("Running 42 lives..."):
            df = lifetime_study(text, base_dir, source, int(year), float(cost_k) * 1e3, float(growth) / 100.0)
    except ScenarioError as exc:
        st.error(say(exc))
        return
    df["npv"] = df["npv"] * SHOW_SCALE["m"]
    left, right = st.columns(2)
    with left:
        charts.draw(charts.lines, data=df, x="life", xtitle="Operating life [years]", y="lcoe",
                    ytitle=f"LCOE, nominal [{cur}/MWh]", color="plan", mark_x=float(scn.lifetime))
    with right:
        charts.draw(charts.lines, data=df, x="life", xtitle="Operating life [years]", y="npv",
                    ytitle=f"Project NPV [{cur} M]", color="plan", mark_x=float(scn.lifetime))
    shortest = df.loc[df["life"] == df["life"].min(), "notes"].iloc[0]
    st.caption(f"With: an overhaul of {cost_k:,.0f} {cur} k per turbine in year {int(year)} for every life longer "
               f"than {int(year)} years; it resets the wear. Without: each component's failure rate grows by "
               f"{growth:g} % a year after year {int(year)} (compounding), with its downtime and repair cost; the "
               f"{growth:g} % is this study's assumption, set your own. Availability ageing is the scenario's in "
               "both. Each life follows the same rule as the sidebar's life input: overhauls after the life left "
               "out, a longer debt tenor or PPA term cut to the life"
               + (f" (at {int(df['life'].min())} years: {shortest})" if shortest else "") + ". Dashed line: the "
               "current life.")


def tab_speed(scn, text, base_dir, source, cur) -> None:
    st.markdown("**Energy and LCOE against the mean wind speed, centred on the site (±30 %)**")
    w = scn.wind
    key = sens_mod.speed_key(scn)
    try:
        with st.spinner("Sweeping the wind speed..."):
            if key is None:       # a series or a rose: every speed of the wind scaled (lcoe.analysis.wind_data)
                pts = [{"speed": r["hub_mean_speed_mps"], "net": r["net_aep_p50_mwh"], "el": r["elasticity"],
                        "lcoe": r["lcoe"]} for r in series_sweep(text, base_dir, source)]
                now = pts[len(pts) // 2]["speed"]
                xtitle = f"Mean wind speed at hub height {scn.turbine.hub_height_m:g} m [m/s]"
                how = ("Every speed of the wind record scaled by 0.7 to 1.3, its shape kept (as the Monte Carlo "
                       "scales it), the debt as sized at close.")
            else:
                now = float(sc.numeric_value(scn, key))
                values = tuple(float(x) for x in np.round(now * np.linspace(0.7, 1.3, 25), 4))
                pts = [{"speed": r["value"], "net": r["energy"]["net_aep_p50_mwh"], "el": r["elasticity"],
                        "lcoe": r["metrics"]["lcoe_nominal_per_mwh"]}
                       for r in speed_study(text, base_dir, source, key, values)]
                what = "Mean wind speed" if key.endswith("mean_speed_mps") else "Weibull scale A"
                xtitle = f"{what} at {w.height_m:g} m [m/s]"
                how = "The engine's sweep of the input (`lcoe sweep`), the debt sized again at each value."
    except ScenarioError as exc:
        st.error(say(exc))
        return
    site = min(pts, key=lambda r: abs(r["speed"] - now))
    aep = pd.DataFrame([{"speed": r["speed"], "what": "net AEP P50", "aep": r["net"]} for r in pts] +
                       [{"speed": r["speed"], "what": "cube of the speed (through the site)",
                         "aep": site["net"] * (r["speed"] / site["speed"]) ** 3} for r in pts])
    el = pd.DataFrame([{"speed": r["speed"], "elasticity": r["el"]} for r in pts if r["el"] is not None])
    lc = pd.DataFrame([{"speed": r["speed"], "lcoe": r["lcoe"]} for r in pts]).dropna()
    a, b = st.columns(2)
    with a:
        charts.draw(charts.loglog, data=aep, x="speed", xtitle=xtitle + ", log", y="aep",
                    ytitle="Net AEP P50 [MWh/yr], log", color="what", mark_x=now)
        st.caption("On log-log axes a power law is a straight line: the grey line, the cube of the speed through "
                   "the site, has slope 3. The model's line is flatter: the power curve reaches rated power.")
    with b:
        charts.draw(charts.lines, data=el, x="speed", xtitle=xtitle, y="elasticity",
                    ytitle="Elasticity d ln AEP / d ln v [-]", mark_x=now)
        st.caption(f"At the site: {rp.fmt(site['el'], '{:.2f}')}, so 1 % more wind gives about "
                   f"{rp.fmt(site['el'], '{:.1f}')} % more energy (central differences of the sweep, as "
                   "`lcoe sweep` prints them).")
    c, d = st.columns(2)
    with c:
        mc = current_mc(text)
        band = None
        if mc is not None:
            s_ = mc.stats("lcoe_nominal_per_mwh")
            band = pd.DataFrame({"x": [now], "lo": [s_["p50"]], "hi": [s_["p90"]]})
        charts.draw(charts.lines, data=lc, x="speed", xtitle=xtitle, y="lcoe", ytitle=f"LCOE, nominal [{cur}/MWh]",
                    mark_x=now, **({"band": band} if band is not None else {}))
        st.caption(how + " Dashed line: the current input." + (
            f" Red bar: the Monte Carlo's LCOE from P50 {rp.fmt(band['lo'][0], '{:.2f}')} to P90 "
            f"{rp.fmt(band['hi'][0], '{:.2f}')} {cur}/MWh at the site's speed." if band is not None else
            " Run the Monte Carlo to see its LCOE band here."))
    table = pd.DataFrame([{xtitle: f"{r['speed']:.2f}", "Net AEP P50 [MWh/yr]": rp.fmt(r["net"], "{:,.0f}"),
                           "Elasticity [-]": rp.fmt(r["el"], "{:.2f}"),
                           f"LCOE, nominal [{cur}/MWh]": rp.fmt(r["lcoe"], "{:.2f}")} for r in pts])
    with d:
        st.markdown("**The sweep**")
        st.dataframe(table, hide_index=True, width="stretch", height=300)


def tab_series(scn, text, base_dir, source) -> None:
    view = series_of(text, base_dir, source)
    if view is None:
        st.write("This scenario's wind series is corrected to the long term against a reference: the energy uses "
                 "the corrected record, shown on the Energy tab as its distribution and rose."
                 if scn.wind.timeseries is not None else
                 "This scenario's wind is a distribution (a mean speed or Weibull, or a rose), not a measured "
                 "series: there is no record to show. The Energy tab shows the distribution.")
        return
    where = f"at hub height {view['height_m']:g} m" if view["at_hub"] else \
        f"at the measurement height {view['height_m']:g} m"
    cov = view["coverage"]
    st.markdown(f"**The wind series {where}**: {cov['present']:,} of {cov['expected']:,} steps present "
                f"({100 * cov['share']:.1f} %), {view['step_h'] * 60:g}-minute steps.")
    left, right = st.columns(2)
    with left:
        charts.draw(charts.daily_speed, days=view["daily"])
        st.caption("Daily mean speed, with the day's lowest and highest step as a band.")
        charts.draw(charts.monthly_speed, months=view["monthly"].assign(coverage=100 * view["monthly"]["coverage"]))
        st.caption("Monthly mean speed; the shade is the share of the month's steps present.")
    with right:
        charts.draw(charts.lines, data=view["diurnal"], x="hour", xtitle="Hour of the day (UTC)", y="mean",
                    ytitle="Mean wind speed [m/s]")
        st.caption("The mean day: the mean speed at each hour of the day over the record.")
        charts.draw(charts.speed_histogram, bins=view["histogram"],
                    **({"pdf": view["weibull"]} if view["weibull"] is not None else {}))
        st.caption((f"Bars: the share of time in each 0.5 m/s bin (each calendar month weighed by its length, as in "
                    f"the energy). Line: the Weibull fitted to the series, A {view['scale_mps']:.2f} m/s, "
                    f"k {view['shape']:.2f}.") if view["weibull"] is not None else
                   "Bars: the share of time in each 0.5 m/s bin of the measured series (the energy uses the "
                   "long-term corrected series).")
    gaps = view["gaps"]
    if gaps.empty:
        st.caption("No gaps: every step from the first to the last timestamp is present.")
    else:
        st.markdown(f"**Longest gaps in the record** ({len(gaps)} shown)")
        st.dataframe(pd.DataFrame({"Last step before": gaps["start"].dt.strftime("%Y-%m-%d %H:%M"),
                                   "Next step present": gaps["end"].dt.strftime("%Y-%m-%d %H:%M"),
                                   "Missing [h]": gaps["hours"].round(2)}), hide_index=True)
    for wtext in view["warnings"]:
        st.caption(f"note: {say(wtext)}")


def current_mc(text: str):
    store = st.session_state.get("mc")
    return store["result"] if store and store["text"] == text else None


def tab_montecarlo(scn, case, text, cur) -> None:
    unc = unc_mod
    a, b, _ = st.columns([1, 1, 2], vertical_alignment="bottom")
    first = str(int(min(scn.montecarlo.trials or 10000, MAX_TRIALS)))
    typed = a.text_input("Trials [-]", value=first, key="mc_trials",
                         help=f"Whole number from {MIN_TRIALS:,} to {MAX_TRIALS:,}")
    trials, refused = None, None
    try:
        trials = inputs.parse_number(typed, integer=True)
        if not MIN_TRIALS <= trials <= MAX_TRIALS:
            refused = f"Trials {trials:,}: from {MIN_TRIALS:,} to {MAX_TRIALS:,}"
    except ValueError as exc:
        refused = f"Trials '{typed.strip()}': {exc}"
    if refused:
        a.error(refused + "; the Monte Carlo does not run.")
    if b.button("Run the Monte Carlo", key="mc_run", type="primary", disabled=refused is not None) and not refused:
        bar = st.progress(0.0, text="Monte Carlo: starting")

        def tick(fraction):
            f = min(max(float(fraction), 0.0), 1.0)
            bar.progress(f, text=f"Monte Carlo: {100 * f:.0f} % of {int(trials):,} trials")
        st.session_state.pop("mc", None)     # the last result goes before a new one is made
        gc.collect()
        try:
            res = unc.monte_carlo(scn, case, trials=int(trials), progress=tick)
        except (ScenarioError, MemoryError) as exc:
            res = None
            bar.empty()
            st.error(say(exc) if isinstance(exc, ScenarioError) else
                     "Not enough memory for this many trials; the run was dropped. Try fewer trials.")
            del exc
            gc.collect()                     # a refused run keeps nothing
            return
        bar.empty()
        st.session_state["mc"] = {"text": text, "result": res}
        st.rerun()                           # the whole page again: the workbook download holds this run
    res = current_mc(text)
    if res is None:
        stale = st.session_state.get("mc") is not None
        st.write(("The inputs changed since the last run. " if stale else "")
                 + "Run the Monte Carlo to see the spread of the figures (P90 on the conservative side).")
        return
    rep = res.report()
    lender_odds(res, rep, scn, cur)
    options = [k for k in MC_KEYS if k in res.samples]
    names = {k: label_of("metrics", k, cur) for k in options}
    pick = st.selectbox("Figure", options, format_func=lambda k: f"{names[k][0]} [{names[k][1]}]", key="mc_pick")
    name, unit, how = names[pick]
    stats, hist = res.stats(pick), rep["histogram"][pick]
    scale = SHOW_SCALE.get(how, 1.0)
    e = np.asarray(hist["edges"], float) * scale
    bins = pd.DataFrame({"lo": e[:-1], "hi": e[1:], "count": hist["counts"]})
    marks = [(stats["p50"] * scale, f"P50 {rp.fmt(stats['p50'], how)}"),
             (stats["p90"] * scale, f"P90 {rp.fmt(stats['p90'], how)}")]
    if pick == "min_dscr" and res.target_dscr is not None:
        marks += [(res.target_dscr, f"target {res.target_dscr:.2f}x"), (1.0, "1.00x: cash just covers debt service")]
    if pick == "equity_irr":
        marks.append((res.equity_target * scale, f"equity target {rp.fmt(res.equity_target, how)} %"))
    charts.draw(charts.histogram, bins=bins, marks=pd.DataFrame(marks, columns=["x", "what"]), title=f"{name} [{unit}]")
    table = []
    for k in options:
        n, u, h = names[k]
        s_ = res.stats(k)
        table.append({"Figure": f"{n} [{u}]", "P50": rp.fmt(s_["p50"], h), "P75": rp.fmt(s_["p75"], h),
                      "P90": rp.fmt(s_["p90"], h), "P99": rp.fmt(s_["p99"], h), "Mean": rp.fmt(s_["mean"], h),
                      "SD": rp.fmt(s_["sd"], h), "Single case above": rp.fmt(case.metrics.get(k), h)})
    st.dataframe(pd.DataFrame(table), hide_index=True, width="stretch")
    st.caption(f"{res.trials:,} trials, seed {res.seed}. P90 is the conservative side: the 10th percentile of NPV, "
               "IRR and DSCR, the 90th of LCOE. The single case above (the headline) puts every input at its "
               "central value; the Monte Carlo P50 is the median over the trials of each figure. For a ratio or "
               "a minimum over years (DSCR, IRR, LCOE) the median of the figure is not the figure of the median "
               "inputs: a minimum DSCR takes each trial's worst year, and bad years in some trials pull it down, "
               "so its P50 sits below the single case's. Both are right; they answer different questions.")
    for w in res.warnings:
        st.caption(f"warning: {say(w)}")


def lender_odds(res, rep, scn, cur) -> None:
    """The lender's view of a run: the probabilities of missing the covenants, and the energy's spread."""
    cols = st.columns(5)
    if res.target_dscr is not None:
        cols[0].metric("Chance minimum DSCR < 1.00x [%]", rp.fmt(rep["prob_min_dscr_below_1"], "pct"), border=True,
                       help="Share of trials where some year's cash does not cover its debt service")
        cols[1].metric(f"Chance minimum DSCR < target {res.target_dscr:.2f}x [%]",
                       rp.fmt(rep["prob_min_dscr_below_target"], "pct"), border=True)
    else:
        cols[0].metric("Chance minimum DSCR < 1.00x [%]", "no debt", border=True)
        cols[1].metric("Chance minimum DSCR < target [%]", "no debt", border=True)
    cols[2].metric(f"Chance equity IRR < target {rp.fmt(res.equity_target, 'pct')} % [%]",
                   rp.fmt(rep["prob_equity_irr_below_target"], "pct"), border=True)
    for col, key, name in ((cols[3], "net_aep_mean_mwh", "Net energy, mean year"),
                           (cols[4], "net_aep_year1_mwh", "Net energy, first year")):
        if key in res.samples:
            s_ = res.stats(key)
            col.metric(f"{name} P50 / P90 [MWh/yr]", f"{rp.fmt(s_['p50'], '{:,.0f}')} / {rp.fmt(s_['p90'], '{:,.0f}')}",
                       border=True)


def tab_tornado(scn, text, base_dir, source, cur, labels) -> None:
    sens = sens_mod
    names = {k: label_of("metrics", k, cur) for k in TORNADO_METRICS}
    pick = st.selectbox("Figure", TORNADO_METRICS, format_func=lambda k: f"{names[k][0]} [{names[k][1]}]",
                        key="tornado_pick")
    try:
        with st.spinner("Moving each input in turn..."):
            rows = tornado_of(text, base_dir, source, pick)
    except ScenarioError as exc:
        st.error(say(exc))
        return
    name, unit, how = names[pick]
    scale = SHOW_SCALE.get(how, 1.0)
    extra = {sens.ENERGY_INPUT: "Net energy at its 10-year P90 / P10 [MWh/yr]"}
    bars, order = [], []
    for r in rows:  # the engine's order: largest swing first
        if r["metric_base"] is None:
            continue
        label = labels.get(r["key"]) or extra.get(r["key"]) or r["key"]
        label += f": {inputs.value_text(scn, r['key'], r['low_value'])} to {inputs.value_text(scn, r['key'], r['high_value'])}"
        order.append(label)
        for side in ("low", "high"):
            if r[f"metric_at_{side}"] is not None:
                bars.append({"input": label, "side": f"{side} input", "start": r["metric_base"] * scale,
                             "end": r[f"metric_at_{side}"] * scale, "input_value": r[f"{side}_value"]})
    if not bars:
        st.write("No input moves this figure.")
        return
    base = rows[0]["metric_base"]
    charts.draw(charts.tornado, bars=pd.DataFrame(bars), order=order, title=f"{name} [{unit}]", base=base * scale)
    st.caption(f"Each bar: {name} with one input at its low or high value (P10 / P90 of its Monte Carlo "
               "distribution, else ±10 %; the two values follow each input's name, in its unit), the others at the "
               "current inputs. Widest first.")


def tab_compare(base, ident, text, base_dir, source, pins, cur) -> None:
    file_ident = ident.split(":variant:")[0]
    file_scn = st.session_state.get("file_scn", base)
    if file_scn.variants:
        loaded = st.session_state.get("variant_loaded", {}).get(file_ident)
        names = list(file_scn.variants)
        a, b, c, _ = st.columns([2, 1, 1.2, 1.5], vertical_alignment="bottom")
        var = a.selectbox("A variant of the scenario file", ["(the file as written)"] + names, key="variant_pick",
                          index=(names.index(loaded) + 1) if loaded in names else 0)
        if b.button("Pin the variant", key="pin_variant", disabled=var not in file_scn.variants):
            pins.append({"name": f"variant {var}", "text": sc.to_toml(file_scn.variant(var).raw),
                         "base_dir": str(file_scn.base_dir), "source": file_scn.source,
                         "label": f"variant {var} of {Path(file_scn.source).name}"})
            st.session_state["against"] = f"variant {var}"
            st.rerun()
        if c.button("Load it into the inputs", key="load_variant",
                    help="Edit the variant: the sidebar then starts from it instead of the file"):
            store = st.session_state.setdefault("variant_loaded", {})
            if var in file_scn.variants:
                store[file_ident] = var
            else:
                store.pop(file_ident, None)
            st.rerun()
    if not pins:
        st.write("Pin a case (name it and press Pin under the headline figures) to compare it with the current "
                 "inputs; pin several to see them side by side.")
        return
    cases = []
    for p in pins:
        try:
            cases.append((p["name"], case_of(p["text"], p["base_dir"], p["source"], breakeven=True)))
        except ScenarioError as exc:
            st.warning(f"The pinned case '{p['name']}' no longer runs: {say(exc)}")
    cases.append(("current", case_of(text, base_dir, source, breakeven=True)))
    a, b, c, _ = st.columns([1.5, 1.5, 0.8, 1.2], vertical_alignment="bottom")
    names = [p["name"] for p in pins]
    now_ref = st.session_state.get("against")
    a.selectbox("Headline changes against", names, key="against_pick",
                index=names.index(now_ref) if now_ref in names else len(names) - 1,
                on_change=lambda: st.session_state.update(against=st.session_state["against_pick"]))
    gone = b.selectbox("Pinned case to remove", names, key="unpin_pick")
    if c.button("Remove", key="unpin"):
        pins.pop(names.index(gone))
        st.rerun()
    for p in pins:
        st.caption(f"**{p['name']}**: {p['label']}")
    ref = next((cs for n, cs in cases if n == st.session_state.get("against")), cases[-2][1] if len(cases) > 1 else None)
    rows = []
    for block, labels in (("metrics", rp.METRIC_LABELS), ("energy", rp.ENERGY_LABELS)):
        for key in labels:
            name, unit, how = label_of(block, key, cur)
            row = {"Figure": f"{name} [{unit}]"}
            for n, cs in cases:
                row[n] = rp.fmt(value_of(cs, block, key), how)
            row["Current - reference"] = change_text(value_of(cases[-1][1], block, key),
                                                    value_of(ref, block, key), how) or "n/a"
            rows.append(row)
    st.dataframe(pd.DataFrame(rows), hide_index=True, width="stretch", height=35 * (len(rows) + 1) + 3,
                 column_config={"Figure": st.column_config.TextColumn(width="large")})
    order = [n for n, _ in cases]
    cols = st.columns(3)
    for col, (column, title, scale, bars) in zip(cols, (
            ("energy_mwh", "Net energy [MWh]", 1.0, True),
            ("equity_cash_flow", f"Equity cash flow [{cur} M]", SHOW_SCALE["m"], False),
            ("dscr", "DSCR [x]", 1.0, False))):
        frames = []
        for n, cs in cases:
            y = years_table(cs).iloc[1:]
            frames.append(pd.DataFrame({"year": y["year"], "case": n, "value": y[column] * scale}))
        with col:
            charts.draw(charts.cases_by_year, data=pd.concat(frames, ignore_index=True), ytitle=title, bars=bars,
                        order=order)


def tab_yearly(case, cur) -> None:
    df = years_table(case)
    heads = {k: h.format(cur=cur).replace(f"[{cur} k]", f"[{cur}]") for k, h, _ in rp.ANNUAL_COLUMNS}
    extra = {"availability": "Availability [-]", "capex": f"Capex [{cur}]",
             "decommissioning": f"Decommissioning [{cur}]", "depreciation": f"Depreciation [{cur}]",
             "interest": f"Interest [{cur}]", "principal": f"Principal [{cur}]", "balance": f"Debt balance [{cur}]",
             "tax_unlevered": f"Tax, unlevered [{cur}]"}
    cols = {k: heads.get(k) or extra.get(k) or k for k in df.columns}
    fine = {"dscr": "%.3f", "availability": "%.4f", "price_per_mwh": "%.2f"}
    shown = df.copy()
    for k in df.columns:
        if k not in fine and k != "year":
            shown[k] = df[k].round(0)  # whole MWh and whole money, shown with thousands separators
    st.dataframe(shown.rename(columns=cols), hide_index=True, width="stretch", height=35 * (len(df) + 1) + 3,
                 column_config={cols[k]: st.column_config.NumberColumn(format=fine.get(k, "localized"))
                                for k in df.columns if k != "year"})
    st.caption("t = 0 is construction; nominal money; costs are positive amounts, cash-flow lines are signed. "
               "The same table as the CSV download and `lcoe run --csv`.")


def page() -> None:
    """The page, with every failure shown as one message and the page kept (never a traceback)."""
    try:
        main()
    except ScenarioError as exc:
        st.error(say(exc))
    except MemoryError:
        gc.collect()
        st.error("Not enough memory for this request; it was dropped. Try fewer trials or a shorter series.")
    except Exception as exc:   # noqa: BLE001 - a bug must not show server internals in the browser
        # (Streamlit's rerun and stop signals are BaseExceptions and pass through)
        st.error(f"Something went wrong ({type(exc).__name__}); the inputs are kept. Change an input or reload the "
                 "page.")
        gc.collect()


page()
