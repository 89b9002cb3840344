"""Charts of the app: Altair builders over tables of engine results, drawn from a cache.

Each builder takes plain tables (pandas DataFrames, already in display units) and
returns an Altair chart; it computes nothing. :func:`draw` caches the Vega-Lite spec
on the content of the tables, so an input that leaves a chart's data unchanged
(O&M for the power curve, say) does not rebuild it.
"""

from __future__ import annotations

import hashlib

import altair as alt
import pandas as pd
import streamlit as st

BLUE, GREEN, AMBER, RED, GREY = "#1f5f8b", "#4c9a6a", "#e8a33d", "#c0392b", "#8a8a8a"


def _digest(name: str, tables: dict, params: dict) -> str:
    h = hashlib.sha256(name.encode())
    for key in sorted(tables):
        df = tables[key]
        h.update(key.encode())
        h.update(repr(list(df.columns)).encode())
        h.update(pd.util.hash_pandas_object(df, index=False).values.tobytes())
    h.update(repr(sorted(params.items())).encode())
    return h.hexdigest()


@st.cache_data(max_entries=256, show_spinner=False)
def _spec(digest: str, _build, _tables: dict, _params: dict) -> dict:
    return _build(**_tables, **_params).to_dict()


def draw(build, target=st, **kwargs) -> None:
    """Draw ``build(**kwargs)`` into ``target``; DataFrame arguments are the chart's data."""
    tables = {k: v for k, v in kwargs.items() if isinstance(v, pd.DataFrame)}
    params = {k: v for k, v in kwargs.items() if k not in tables}
    spec = _spec(_digest(build.__name__, tables, params), build, tables, params)
    target.vega_lite_chart(spec, width="stretch")


def power_curve(curve: pd.DataFrame, pdf: pd.DataFrame | None = None) -> alt.Chart:
    """curve: speed [m/s], power [kW]; pdf: speed, pdf [per m/s] (optional)."""
    x = alt.X("speed:Q", title="Wind speed at hub height [m/s]")
    line = alt.Chart(curve).mark_line(color=BLUE, strokeWidth=2.5).encode(
        x=x, y=alt.Y("power:Q", title="Power per turbine at the site's air density [kW]"),
        tooltip=[alt.Tooltip("speed:Q", format=".1f"), alt.Tooltip("power:Q", format=",.0f")])
    if pdf is None:
        return line.properties(height=320)
    area = alt.Chart(pdf).mark_area(color=AMBER, opacity=0.35).encode(
        x=x, y=alt.Y("pdf:Q", title="Wind-speed probability density [per m/s]"))
    return alt.layer(area, line).resolve_scale(y="independent").properties(height=320)


def wind_rose(sectors: pd.DataFrame) -> alt.Chart:
    """sectors: start, end (compass degrees the wind comes from, clockwise from north), frequency [%],
    share (of gross energy) [%], mean [m/s], label; wake [%] where a layout is given."""
    tips = ["label", alt.Tooltip("frequency:Q", format=".2f", title="time [%]"),
            alt.Tooltip("share:Q", format=".2f", title="gross energy [%]"),
            alt.Tooltip("mean:Q", format=".2f", title="mean speed [m/s]")]
    if "wake" in sectors:
        tips.append(alt.Tooltip("wake:Q", format=".2f", title="wake loss [%]"))
    angle = alt.Scale(domain=[0, 360], range=[0, 6.283185307179586])
    wedges = alt.Chart(sectors).mark_arc(stroke="white", strokeWidth=1).encode(
        theta=alt.Theta("start:Q", scale=angle), theta2="end:Q",
        radius=alt.Radius("frequency:Q", scale=alt.Scale(type="sqrt", zero=True, rangeMin=0, rangeMax=120), title="time [%]"),
        color=alt.Color("share:Q", title="Gross energy [%]", scale=alt.Scale(scheme="blues")),
        tooltip=tips)
    compass = pd.DataFrame({"deg": [0, 90, 180, 270], "text": ["N", "E", "S", "W"]})
    marks = alt.Chart(compass).mark_text(radius=138, fontSize=13, fontWeight="bold", color=GREY).encode(
        theta=alt.Theta("deg:Q", scale=angle), text="text:N")
    return alt.layer(wedges, marks).properties(height=320)


def energy_by_year(years: pd.DataFrame) -> alt.Chart:
    """years: year, energy [MWh], availability [%]."""
    base = alt.Chart(years).encode(x=alt.X("year:O", title="Operating year"))
    bars = base.mark_bar(color=GREEN).encode(
        y=alt.Y("energy:Q", title="Net energy [MWh]"),
        tooltip=["year", alt.Tooltip("energy:Q", format=",.0f"), alt.Tooltip("availability:Q", format=".2f")])
    line = base.mark_line(color="#333", point=True).encode(
        y=alt.Y("availability:Q", title="Availability [%]", scale=alt.Scale(zero=False)))
    return alt.layer(bars, line).resolve_scale(y="independent").properties(height=320)


def cash_by_year(lines: pd.DataFrame, ytitle: str, order: list) -> alt.Chart:
    """lines: year, line (name), value (display money); ``order`` names the lines in legend order."""
    palette = [BLUE, AMBER, GREY, GREEN, RED, "#6a3d9a", "#17becf"][:len(order)]
    return alt.Chart(lines).mark_line(point=True).encode(
        x=alt.X("year:O", title="Operating year"), y=alt.Y("value:Q", title=ytitle),
        color=alt.Color("line:N", title=None, scale=alt.Scale(domain=order, range=palette)),
        tooltip=["year", "line", alt.Tooltip("value:Q", format=",.3f")]).properties(height=320)


def dscr_by_year(years: pd.DataFrame, rules: pd.DataFrame) -> alt.Chart:
    """years: year, dscr [x]; rules: y [x], what (label; the first row is the target, drawn red)."""
    bars = alt.Chart(years).mark_bar(color=BLUE).encode(
        x=alt.X("year:O", title="Operating year"), y=alt.Y("dscr:Q", title="DSCR, P50 case [x]"),
        tooltip=["year", alt.Tooltip("dscr:Q", format=".3f")])
    rule = alt.Chart(rules).mark_rule(strokeDash=[6, 3], strokeWidth=2).encode(
        y="y:Q", color=alt.Color("what:N", title=None,
                                 scale=alt.Scale(domain=list(rules["what"]), range=[RED, GREY][:len(rules)])))
    return alt.layer(bars, rule).properties(height=320)


def histogram(bins: pd.DataFrame, marks: pd.DataFrame, title: str) -> alt.Chart:
    """bins: lo, hi, count; marks: x, what (the P50 and P90 lines)."""
    bars = alt.Chart(bins).mark_bar(color="#8fb3d1").encode(
        x=alt.X("lo:Q", title=title, bin="binned"), x2="hi:Q", y=alt.Y("count:Q", title="Trials"))
    rule = alt.Chart(marks).mark_rule(strokeWidth=2.5).encode(
        x="x:Q", color=alt.Color("what:N", title=None,
                                 scale=alt.Scale(domain=list(marks["what"]), range=["#1d7a3a", RED][:len(marks)])))
    return alt.layer(bars, rule).properties(height=320)


def tornado(bars: pd.DataFrame, order: list, title: str, base: float) -> alt.Chart:
    """bars: input (label), side, start, end (the figure from its base to its value at the input's end)."""
    ch = alt.Chart(bars).mark_bar().encode(
        y=alt.Y("input:N", sort=order, title=None, axis=alt.Axis(labelLimit=320)),
        x=alt.X("start:Q", title=title, scale=alt.Scale(zero=False)), x2="end:Q", color=alt.Color("side:N", title=None,
                                    scale=alt.Scale(domain=["low input", "high input"], range=[AMBER, BLUE])),
        tooltip=["input", "side", "input_value", alt.Tooltip("end:Q", format=",.3f")])
    rule = alt.Chart(pd.DataFrame({"x": [base]})).mark_rule(color="#333").encode(x="x:Q")
    return alt.layer(ch, rule).properties(height=max(220, 28 * len(order)))


def lines(data: pd.DataFrame, x: str, xtitle: str, y: str, ytitle: str, color: str | None = None,
          mark_x: float | None = None) -> alt.Chart:
    """One or more lines of ``y`` against ``x`` (split by ``color``); a dashed rule at ``mark_x``."""
    enc = {"x": alt.X(f"{x}:Q", title=xtitle, scale=alt.Scale(zero=False)),
           "y": alt.Y(f"{y}:Q", title=ytitle, scale=alt.Scale(zero=False)),
           "tooltip": [alt.Tooltip(f"{x}:Q"), alt.Tooltip(f"{y}:Q", format=",.3f")]}
    if color:
        enc["color"] = alt.Color(f"{color}:N", title=None, legend=alt.Legend(orient="bottom", labelLimit=400))
        enc["tooltip"].append(f"{color}:N")
    ch = alt.Chart(data).mark_line(point=True).encode(**enc)
    if mark_x is not None:
        rule = alt.Chart(pd.DataFrame({"x": [mark_x]})).mark_rule(strokeDash=[4, 4], color=GREY).encode(x="x:Q")
        ch = alt.layer(ch, rule)
    return ch.properties(height=300)


def pinned_vs_current(data: pd.DataFrame, ytitle: str, bars: bool = False) -> alt.Chart:
    """data: year, case ('pinned' | 'current'), value. The pinned line is dashed, drawn over the current."""
    enc = {"x": alt.X("year:O", title="Operating year"),
           "y": alt.Y("value:Q", title=ytitle, scale=alt.Scale(zero=bars)),
           "color": alt.Color("case:N", title=None, scale=alt.Scale(domain=["pinned", "current"],
                                                                     range=["#a5a5a5", BLUE])),
           "tooltip": ["year", "case", alt.Tooltip("value:Q", format=",.3f")]}
    if bars:
        enc["xOffset"] = alt.XOffset("case:N", sort=["pinned", "current"])
        return alt.Chart(data).mark_bar().encode(**enc).properties(height=260)
    enc["strokeDash"] = alt.StrokeDash("case:N", title=None, scale=alt.Scale(domain=["pinned", "current"],
                                                                              range=[[6, 3], [1, 0]]))
    enc["order"] = alt.Order("case:N")   # "current" < "pinned": the pinned line is drawn last, on top
    return alt.Chart(data).mark_line(point=True).encode(**enc).properties(height=260)
