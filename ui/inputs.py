"""Inputs of the app: the scenario's values as widgets, grouped in the trade's order.

Wind, turbine, losses and availability, lifetime and maintenance, costs, revenue,
finance and debt; each label carries its unit. Widgets show fractions as percent
and large sums in thousands or millions; only inputs the user changed become
dotted-key overrides of the scenario (so an untouched scenario stays exact).

Numbers are typed as text and read by :func:`parse_number`: a decimal comma is read
as a decimal point ("36,5" is 36.5), a comma that could also separate thousands
("1,250") is refused, never guessed. A value the scenario cannot take is refused at
its field, in the field's label and display unit ("Availability, later years 150 %:
at most 100 %"); the app then keeps the last valid figures (see ``ui/app.py``).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass, field

import streamlit as st

from lcoe.inputs import keys
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError

# Display units of the inputs: the scenario keeps SI units and fractions 0..1.
#   pct: shown x 100; m: shown / 1e6; k: shown / 1e3
_TO_SHOW = {None: lambda v: v, "pct": lambda v: v * 100.0, "m": lambda v: v / 1e6, "k": lambda v: v / 1e3}
_FROM_SHOW = {None: lambda v: v, "pct": lambda v: v / 100.0, "m": lambda v: v * 1e6, "k": lambda v: v * 1e3}


def _f(key, label, unit, step, fmt="%.2f", show=None, kind="float"):
    return {"key": key, "label": label, "unit": unit, "step": step, "fmt": fmt, "show": show, "kind": kind}


def _i(key, label, unit="years"):
    return _f(key, label, unit, 1, "%d", None, "int")


def _choice(key, label, options):
    return {"key": key, "label": label, "unit": "", "kind": "choice", "options": options}


def input_groups(scn) -> list[tuple[str, list[dict]]]:
    """The input widgets a scenario offers, grouped wind -> turbine -> ... -> finance and debt."""
    cur = scn.project.currency
    w, t = scn.wind, scn.turbine
    wind = []
    if w.mean_speed_mps is not None:
        wind.append(_f("wind.mean_speed_mps", f"Mean wind speed at {w.height_m:g} m", "m/s", 0.1))
    elif w.weibull_scale_mps is not None:
        wind.append(_f("wind.weibull_scale_mps", f"Weibull scale A at {w.height_m:g} m", "m/s", 0.1))
    if w.timeseries is None and w.rose is None:
        wind.append(_f("wind.weibull_shape", "Weibull shape k", "-", 0.05))
    if w.roughness_length_m is not None:
        wind.append(_f("wind.roughness_length_m", "Roughness length (log law)", "m", 0.01, "%.3f"))
    else:
        wind.append(_f("wind.shear_exponent", "Shear exponent (power law)", "-", 0.01, "%.3f"))
    wind.append(_f("wind.height_m", "Height of the wind statistics", "m", 1.0, "%.1f"))
    if w.air_density_kgm3 is not None:
        wind.append(_f("wind.air_density_kgm3", "Air density", "kg/m³", 0.005, "%.3f"))
    else:
        wind += [_f("wind.elevation_m", "Site elevation", "m", 10.0, "%.0f"),
                 _f("wind.mean_temperature_c", "Mean air temperature", "°C", 0.5, "%.1f")]

    turbine = [_f("turbine.hub_height_m", "Hub height", "m", 1.0, "%.1f"),
               _i("project.turbines", "Number of turbines", "turbines")]
    if t.power_curve is None:
        turbine += [_f("turbine.rated_power_kw", "Rated power", "kW", 100.0, "%.0f"),
                    _f("turbine.rotor_diameter_m", "Rotor diameter", "m", 1.0, "%.1f"),
                    _f("turbine.cp_max", "Peak power coefficient Cp", "-", 0.01, "%.3f"),
                    _f("turbine.cut_in_mps", "Cut-in speed", "m/s", 0.5, "%.1f"),
                    _f("turbine.cut_out_mps", "Cut-out speed", "m/s", 0.5, "%.1f"),
                    _f("turbine.drivetrain_efficiency", "Drivetrain efficiency", "%", 0.5, "%.1f", "pct")]

    losses = [_f(f"losses.{k}", label, "%", 0.5, "%.2f", "pct") for k, label in (
        ("wake", "Wake loss"), ("electrical", "Electrical loss"), ("turbine_performance", "Turbine performance loss"),
        ("environmental", "Environmental loss"), ("curtailment", "Curtailment"), ("other", "Other losses"))
        if not (k == "wake" and scn.layout is not None)]     # with a layout the wake loss is computed
    if scn.layout is not None:
        losses.insert(0, _f("layout.wake_decay_constant", "Wake decay constant (layout)", "-", 0.005, "%.3f"))
    losses += [_f("operations.availability_first_year", "Availability, first year", "%", 0.5, "%.2f", "pct"),
               _f("operations.availability_mature", "Availability, later years", "%", 0.5, "%.2f", "pct"),
               _i("operations.ageing_starts_year", "Availability falls after year", "year"),
               _f("operations.availability_ageing_per_year", "Availability fall per year of age", "% points", 0.05,
                  "%.2f", "pct"),
               _f("operations.degradation_per_year", "Performance degradation", "%/yr", 0.05, "%.2f", "pct")]

    life = [_i("project.lifetime_years", "Operating life"),
            _f("maintenance.fixed_per_kw_year", "Fixed O&M", f"{cur}/kW/yr", 1.0, "%.1f"),
            _f("maintenance.variable_per_mwh", "Variable O&M", f"{cur}/MWh", 0.1),
            _f("maintenance.insurance_per_kw_year", "Insurance", f"{cur}/kW/yr", 0.5, "%.1f"),
            _f("maintenance.land_lease_share_of_revenue", "Land lease", "% of revenue", 0.1, "%.2f", "pct"),
            _f("maintenance.escalation", "O&M escalation", "%/yr", 0.1, "%.2f", "pct")]
    for c in scn.maintenance.component:
        k = f"maintenance.component.{c.name}."
        life += [_f(k + "failure_rate_per_turbine_year", f"{c.name.capitalize()}: failure rate",
                    "per turbine-year", 0.001, "%.4f"),
                 _f(k + "replacement_cost", f"{c.name.capitalize()}: cost per failure", f"{cur} k", 10.0, "%.0f",
                    "k"),
                 _f(k + "downtime_days", f"{c.name.capitalize()}: downtime per failure", "days", 1.0, "%.1f")]
    for o in scn.maintenance.overhaul:
        k = f"maintenance.overhaul.{o.name}."
        life += [_i(k + "year", f"{o.name.capitalize()}: year", "year"),
                 _f(k + "cost_per_turbine", f"{o.name.capitalize()}: cost", f"{cur} k per turbine", 10.0, "%.0f",
                    "k")]

    costs = [_f("capex.turbine_per_kw", "Turbine price", f"{cur}/kW", 10.0, "%.0f"),
             _f("capex.balance_of_plant_per_kw", "Balance of plant", f"{cur}/kW", 10.0, "%.0f"),
             _f("capex.grid_connection", "Grid connection", f"{cur} M", 0.5, "%.2f", "m"),
             _f("capex.development", "Development", f"{cur} M", 0.5, "%.2f", "m"),
             _f("capex.contingency", "Contingency", "% of capex", 0.5, "%.1f", "pct"),
             _f("capex.decommissioning_per_kw", "Decommissioning", f"{cur}/kW", 5.0, "%.0f"),
             _f("capex.salvage_per_kw", "Salvage value", f"{cur}/kW", 5.0, "%.0f")]

    revenue = [_f("revenue.ppa_price_per_mwh", "PPA price", f"{cur}/MWh", 0.5),
               _i("revenue.ppa_term_years", "PPA term"),
               _f("revenue.ppa_escalation", "PPA escalation", "%/yr", 0.1, "%.2f", "pct"),
               _f("revenue.merchant_price_per_mwh", "Merchant price after the PPA", f"{cur}/MWh", 0.5),
               _f("revenue.merchant_escalation", "Merchant price escalation", "%/yr", 0.1, "%.2f", "pct"),
               _f("revenue.production_credit_per_mwh", "Production credit", f"{cur}/MWh", 0.5),
               _i("revenue.production_credit_years", "Production credit period")]

    finance = [_f("finance.discount_rate", "Discount rate (nominal)", "%", 0.1, "%.2f", "pct"),
               _f("finance.inflation", "Inflation", "%/yr", 0.1, "%.2f", "pct"),
               _f("finance.equity_target_return", "Equity target return", "%", 0.25, "%.2f", "pct"),
               _f("finance.tax_rate", "Tax rate", "%", 0.5, "%.1f", "pct"),
               _choice("finance.depreciation", "Tax depreciation", list(sc.DEPRECIATION_METHODS)),
               _i("finance.depreciation_years", "Depreciation period")]
    if scn.finance.debt is not None:
        finance += [_choice("finance.debt.sizing_case", "Debt sized on", list(sc.SIZING_CASES)),
                    _f("finance.debt.target_dscr", "Target DSCR", "x", 0.05),
                    _f("finance.debt.max_gearing", "Maximum gearing", "% of capex", 1.0, "%.1f", "pct"),
                    _i("finance.debt.tenor_years", "Debt tenor"),
                    _f("finance.debt.interest_rate", "Interest rate", "%", 0.1, "%.2f", "pct"),
                    _f("finance.debt.upfront_fee", "Upfront fee", "% of debt", 0.1, "%.2f", "pct")]
    return [("Wind", wind), ("Turbine", turbine), ("Losses and availability", losses),
            ("Lifetime and maintenance", life), ("Costs", costs), ("Revenue", revenue),
            ("Finance and debt", finance)]


# Plain words for the codes a scenario uses (shown instead of the code).
CHOICE_LABELS = {
    "straight_line": "Straight line", "declining_balance": "Declining balance",
    "macrs_5": "MACRS, 5 years", "macrs_7": "MACRS, 7 years", "macrs_15": "MACRS, 15 years",
    "macrs_20": "MACRS, 20 years",
    "p50": "P50 energy", "p90_1yr": "P90 energy, one year", "p90_10yr": "P90 energy, ten-year mean",
    "p99_1yr": "P99 energy, one year",
}


def plain(code) -> str:
    """The plain words for a code of the scenario (the code itself where none are known)."""
    return CHOICE_LABELS.get(code, str(code).replace("_", " "))


def _current_value(scn, spec):
    if spec["kind"] == "choice":
        node = scn
        for part in spec["key"].split("."):
            node = getattr(node, part)
        return node
    v = sc.numeric_value(scn, spec["key"])
    return int(v) if spec["kind"] == "int" else round(_TO_SHOW[spec["show"]](v), 9)


# What an omitted key follows (the scenario's documented defaults).
FOLLOWS = {"operations.availability_first_year": "the later-years availability",
           "maintenance.escalation": "inflation", "revenue.ppa_term_years": "the operating life",
           "revenue.merchant_price_per_mwh": "the PPA price", "finance.equity_target_return": "the discount rate",
           "wind.shear_exponent": "the default 1/7"}


def _help(raw: dict, spec) -> str | None:
    """A note for a key the file (its tables ``raw``) leaves out: it follows another input until the user sets it."""
    try:
        sc.get_dotted(raw, spec["key"])
        return None
    except KeyError:
        pass
    follows = FOLLOWS.get(spec["key"])
    if follows:
        return f"Not set in the file: it follows {follows} (as in the file) until you change it here."
    return "Not set in the file: the scenario default is shown."


# --------------------------------------------------------------------------- numbers as typed

_PLAIN = re.compile(r"[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?")
_THOUSANDS = re.compile(r"[+-]?[1-9]\d{0,2},\d{3}")


def parse_number(text: str, integer: bool = False):
    """The number a person typed: a decimal point or a decimal comma, never a guess.

    "36,5" and "36.5" are 36.5; "1,250" is refused (a decimal comma or a thousands
    separator?), as are both marks together ("1,250.5"), spaces inside and anything
    that is not a finite number. An integer field takes whole numbers ("15" or "15.0").
    Raises ValueError with the reason, in words for the field.
    """
    t = str(text).strip()
    if not t:
        raise ValueError("enter a number")
    if "," in t:
        if "." in t or t.count(",") > 1:
            raise ValueError("use one decimal mark and no thousands separators")
        if _THOUSANDS.fullmatch(t):
            whole, frac = t.split(",")
            raise ValueError(f"could be {whole}.{frac} or {whole}{frac}; write it with a decimal point")
        t = t.replace(",", ".")
    if not _PLAIN.fullmatch(t):
        raise ValueError("is not a number")
    v = float(t)
    if not math.isfinite(v):
        raise ValueError("is not a finite number")
    if integer:
        if v != round(v):
            raise ValueError("must be a whole number")
        return int(round(v))
    return v


def _num_text(v: float) -> str:
    return f"{v:,.10g}".replace(",", "") if abs(v) < 1e15 else f"{v:g}"


def text_of(spec, shown) -> str:
    """The text a field starts with: its value in the field's format, exact where the format would round."""
    if spec["kind"] == "int":
        return str(int(shown))
    text = spec["fmt"] % shown
    return text if float(text) == shown else _num_text(shown)


def _unit(spec) -> str:
    return "" if spec["unit"] in ("", "-") else f" {spec['unit']}"


def field_problem(spec, text: str) -> tuple[object, str | None]:
    """(value in the scenario's units, None) or (None, the message at the field)."""
    label = spec["label"]
    try:
        x = parse_number(text, spec["kind"] == "int")
    except ValueError as exc:
        return None, f"{label} '{str(text).strip()}': {exc}"
    value = x if spec["kind"] == "int" else _FROM_SHOW[spec["show"]](x)
    lo, hi, lo_open, hi_open = keys.key_range(spec["key"])
    show = _TO_SHOW[spec["show"]]
    unit = _unit(spec)
    typed = f"{label} {_num_text(x)}{unit}"
    if value < lo or (lo_open and value == lo):
        return None, f"{typed}: {'above' if lo_open else 'at least'} {_num_text(show(lo))}{unit}"
    if value > hi or (hi_open and value == hi):
        return None, f"{typed}: {'below' if hi_open else 'at most'} {_num_text(show(hi))}{unit}"
    return value, None


# --------------------------------------------------------------------------- the sidebar

@dataclass
class Drawn:
    """What the inputs say: the overrides of the changed valid fields, and the refused fields."""
    overrides: dict = field(default_factory=dict)
    problems: dict = field(default_factory=dict)     # dotted key -> message at the field
    slots: dict = field(default_factory=dict)        # dotted key -> the place under its widget
    groups: dict = field(default_factory=dict)       # dotted key -> its group
    shown: int = 0                                   # inputs drawn (a search draws fewer)


def _matches(spec, words: list[str]) -> bool:
    hay = f"{spec['label']} {spec['unit']} {spec['key'].replace('.', ' ').replace('_', ' ')}".lower()
    return all(w in hay for w in words)


def input_widgets(scn, token: str, query: str = "") -> Drawn:
    """Draw the inputs (only those matching ``query`` when it is given); return what they say.

    Every input counts whether drawn or not: the text typed into a field is kept per
    session (``typed``), so a search that hides a field keeps its value.
    """
    store = st.session_state.setdefault("typed", {}).setdefault(token, {})
    opened = st.session_state.setdefault("opened", set())
    words = query.lower().split()
    raw = scn.raw                     # one copy of the file's tables for every field's note
    out = Drawn()
    for gi, (group, specs) in enumerate(input_groups(scn)):
        texts = {}
        for spec in specs:
            wkey = f"in|{token}|{gi}|{spec['key']}"
            out.groups[spec["key"]] = group
            shown = _current_value(scn, spec)
            if spec["kind"] == "choice":
                texts[spec["key"]] = st.session_state.get(wkey, store.get(spec["key"], shown))
                continue
            texts[spec["key"]] = st.session_state.get(wkey, store.get(spec["key"], text_of(spec, shown)))
            _, problem = field_problem(spec, texts[spec["key"]])
            if problem:
                out.problems[spec["key"]] = problem
        drawn = [s for s in specs if not words or _matches(s, words)]
        if any(s["key"] in out.problems for s in specs):
            opened.add(group)
        if drawn:
            expanded = gi == 0 or bool(words) or group in opened
            with st.sidebar.expander(group, expanded=expanded):
                _notes(scn, group)
                for spec in drawn:
                    _draw(raw, spec, f"in|{token}|{gi}|{spec['key']}", texts, store, out)
        for spec in specs:
            key = spec["key"]
            if key in out.problems:
                continue
            shown = _current_value(scn, spec)
            if spec["kind"] == "choice":
                if texts[key] != shown:
                    out.overrides[key] = texts[key]
                continue
            value, _ = field_problem(spec, texts[key])
            if texts[key].strip() != text_of(spec, shown) and value != sc.numeric_value(scn, key):
                out.overrides[key] = value
    return out


def _notes(scn, group: str) -> None:
    if group == "Wind" and scn.wind.timeseries is not None:
        st.caption(f"Hourly wind series: `{scn.wind.timeseries}`")
    if group == "Wind" and scn.wind.long_term is not None:
        st.caption(f"Corrected to the long term against `{scn.wind.long_term.reference}` "
                   f"({scn.wind.long_term.method.replace('_', ' ')})")
    if group == "Turbine" and scn.turbine.power_curve is not None:
        st.caption(f"Power curve table `{scn.turbine.power_curve}`: {scn.turbine.rated_power_kw:,.0f} kW, "
                   f"rotor {scn.turbine.rotor_diameter_m:g} m")


def _draw(raw: dict, spec, wkey: str, texts: dict, store: dict, out: Drawn) -> None:
    label = f"{spec['label']} [{spec['unit']}]" if spec["unit"] else spec["label"]
    hint = _help(raw, spec)
    key = spec["key"]
    if spec["kind"] == "choice":
        opts = list(spec["options"])
        value = st.selectbox(label, opts, index=opts.index(texts[key]), key=wkey, help=hint, format_func=plain)
    else:
        if wkey not in st.session_state:
            st.session_state[wkey] = texts[key]
        value = st.text_input(label, key=wkey, help=hint)
    store[key] = value
    out.shown += 1
    out.slots[key] = st.empty()
    if key in out.problems:
        out.slots[key].error(out.problems[key])


def key_of_error(scn, exc: ScenarioError) -> str | None:
    """The dotted key of an input the app offers that a loader's message names (list items by name)."""
    key = exc.key or ""
    m = re.fullmatch(r"maintenance\.(component|overhaul)\[(\d+)\]\.(\w+)", key)
    if m:
        items = getattr(scn.maintenance, m.group(1))
        i = int(m.group(2))
        if i < len(items):
            key = f"maintenance.{m.group(1)}.{items[i].name}.{m.group(3)}"
    return key


def message_at_field(scn, drawn: Drawn, exc: ScenarioError) -> str | None:
    """The loader's refusal put at the field it names, in the field's label and display unit; None where
    it names no field of the app."""
    key = key_of_error(scn, exc)
    spec = next((s for _, specs in input_groups(scn) for s in specs if s["key"] == key), None)
    if spec is None:
        return None
    text = f"{spec['label']}: {exc.message}"
    if spec["kind"] != "choice" and isinstance(exc.value, (int, float)) and not isinstance(exc.value, bool):
        shown = exc.value if spec["kind"] == "int" else _TO_SHOW[spec["show"]](exc.value)
        text = f"{spec['label']} {_num_text(shown)}{_unit(spec)}: {exc.message}"
    drawn.problems[key] = text
    if key in drawn.slots:
        drawn.slots[key].error(text)
    return text


def value_text(scn, key: str, value) -> str:
    """A value of a scenario key as its input shows it (display unit and format); others with separators."""
    spec = next((x for _, specs in input_groups(scn) for x in specs if x["key"] == key), None)
    if value is None:
        return "n/a"
    if spec is None or spec["kind"] == "choice":
        return f"{value:,.0f}" if isinstance(value, (int, float)) and abs(value) >= 100 else f"{value:g}"
    if spec["kind"] == "int":
        return str(int(value))
    shown = _TO_SHOW[spec["show"]](value)
    return format(shown, "," + spec["fmt"][1:])


def labels(scn) -> dict:
    """Dotted key -> the input's label with its unit, for every input the app offers."""
    out = {}
    for _, specs in input_groups(scn):
        for spec in specs:
            out[spec["key"]] = f"{spec['label']} [{spec['unit']}]" if spec["unit"] else spec["label"]
    return out
