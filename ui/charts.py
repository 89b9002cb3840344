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
        x=x, y=alt.Y("power:Q", title="Power per turbine, site density [kW]"),
        tooltip=[alt.Tooltip("speed:Q", format=".1f"), alt.Tooltip("power:Q", format=",.0f")])
    if pdf is None:
        return line.properties(height=320)
    area = alt.Chart(pdf).mark_area(color=AMBER, opacity=0.35).encode(
        x=x, y=alt.Y("pdf:Q", title="Probability density [per m/s]"))
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
    """bins: lo, hi, count; marks: x, what (the P50 and P90 lines, then targets: target, 1.0x)."""
    bars = alt.Chart(bins).mark_bar(color="#8fb3d1").encode(
        x=alt.X("lo:Q", title=title, bin="binned"), x2="hi:Q", y=alt.Y("count:Q", title="Trials"))
    palette = ["#1d7a3a", RED, "#6a3d9a", "#333333", AMBER][:len(marks)]
    rule = alt.Chart(marks).mark_rule(strokeWidth=2.5).encode(
        x="x:Q", color=alt.Color("what:N", title=None, legend=alt.Legend(orient="bottom", direction="vertical",
                                                                          labelLimit=0),
                                 scale=alt.Scale(domain=list(marks["what"]), range=palette)),
        strokeDash=alt.StrokeDash("what:N", legend=None, scale=alt.Scale(
            domain=list(marks["what"]), range=[[1, 0], [1, 0], [6, 3], [2, 2], [6, 3]][:len(marks)])))
    return alt.layer(bars, rule).properties(height=320)


def tornado(bars: pd.DataFrame, order: list, title: str, base: float) -> alt.Chart:
    """bars: input (label), side, start, end (the figure from its base to its value at the input's end)."""
    ch = alt.Chart(bars).mark_bar().encode(
        y=alt.Y("input:N", sort=order, title=None, axis=alt.Axis(labelLimit=0)),
        x=alt.X("start:Q", title=title, scale=alt.Scale(zero=False)), x2="end:Q", color=alt.Color("side:N", title=None,
                                    scale=alt.Scale(domain=["low input", "high input"], range=[AMBER, BLUE])),
        tooltip=["input", "side", "input_value", alt.Tooltip("end:Q", format=",.3f")])
    rule = alt.Chart(pd.DataFrame({"x": [base]})).mark_rule(color="#333").encode(x="x:Q")
    return alt.layer(ch, rule).properties(height=max(220, 28 * len(order)))


def lines(data: pd.DataFrame, x: str, xtitle: str, y: str, ytitle: str, color: str | None = None,
          mark_x: float | None = None, band: pd.DataFrame | None = None, log: bool = False) -> alt.Chart:
    """One or more lines of ``y`` against ``x`` (split by ``color``); a dashed rule at ``mark_x``;
    ``band`` (x, lo, hi): a vertical bar from lo to hi at x; ``log``: both axes logarithmic."""
    def scale(col):
        if not log:
            return alt.Scale(zero=False)
        # a log axis would round out to whole decades and squeeze the data into a corner
        vals = data[col].dropna()
        return alt.Scale(type="log", nice=False, domain=[float(vals.min()) * 0.97, float(vals.max()) * 1.03])

    enc = {"x": alt.X(f"{x}:Q", title=xtitle, scale=scale(x), axis=alt.Axis(titleLimit=0)),
           "y": alt.Y(f"{y}:Q", title=ytitle, scale=scale(y), axis=alt.Axis(titleLimit=0)),
           "tooltip": [alt.Tooltip(f"{x}:Q"), alt.Tooltip(f"{y}:Q", format=",.3f")]}
    if color:
        enc["color"] = alt.Color(f"{color}:N", title=None, legend=alt.Legend(orient="bottom", direction="vertical",
                                                                            labelLimit=0),
                                 # the series keep the data's order: the first is blue, the second grey
                                 scale=alt.Scale(domain=list(dict.fromkeys(data[color])),
                                                 range=[BLUE, GREY, GREEN, AMBER]))
        enc["tooltip"].append(f"{color}:N")
    ch = alt.Chart(data).mark_line(point=True).encode(**enc)
    if band is not None:
        bar = alt.Chart(band).mark_rule(color=RED, strokeWidth=6, opacity=0.6).encode(
            x="x:Q", y="lo:Q", y2="hi:Q", tooltip=[alt.Tooltip("lo:Q", format=",.2f", title="P50"),
                                                   alt.Tooltip("hi:Q", format=",.2f", title="P90")])
        ch = alt.layer(ch, bar)
    if mark_x is not None:
        rule = alt.Chart(pd.DataFrame({"x": [mark_x]})).mark_rule(strokeDash=[4, 4], color=GREY).encode(x="x:Q")
        ch = alt.layer(ch, rule)
    return ch.properties(height=300)


def loglog(data: pd.DataFrame, x: str, xtitle: str, y: str, ytitle: str, color: str | None = None,
           mark_x: float | None = None) -> alt.Chart:
    """:func:`lines` on logarithmic axes (a power law is a straight line)."""
    return lines(data, x, xtitle, y, ytitle, color=color, mark_x=mark_x, log=True)


def daily_speed(days: pd.DataFrame) -> alt.Chart:
    """days: day, mean, min, max [m/s]."""
    x = alt.X("day:T", title="Day")
    band = alt.Chart(days).mark_area(color="#8fb3d1", opacity=0.4).encode(x=x, y=alt.Y("min:Q", title="Wind speed [m/s]"),
                                                                          y2="max:Q")
    line = alt.Chart(days).mark_line(color=BLUE, strokeWidth=1.2).encode(
        x=x, y="mean:Q", tooltip=[alt.Tooltip("day:T"), alt.Tooltip("mean:Q", format=".2f")])
    return alt.layer(band, line).properties(height=260)


def monthly_speed(months: pd.DataFrame) -> alt.Chart:
    """months: month (start), mean [m/s], coverage [%]."""
    return alt.Chart(months).mark_bar().encode(
        x=alt.X("yearmonth(month):O", title="Month"), y=alt.Y("mean:Q", title="Monthly mean speed [m/s]"),
        color=alt.Color("coverage:Q", title="Steps present [%]", scale=alt.Scale(domain=[0, 100], scheme="blues")),
        tooltip=[alt.Tooltip("yearmonth(month):O", title="month"), alt.Tooltip("mean:Q", format=".2f"),
                 alt.Tooltip("coverage:Q", format=".1f")]).properties(height=260)


def speed_histogram(bins: pd.DataFrame, pdf: pd.DataFrame | None = None) -> alt.Chart:
    """bins: lo, hi, density [per m/s]; pdf: speed, pdf [per m/s] (the fitted distribution)."""
    bars = alt.Chart(bins).mark_bar(color="#8fb3d1").encode(
        x=alt.X("lo:Q", bin="binned", title="Wind speed [m/s]"), x2="hi:Q",
        y=alt.Y("density:Q", title="Share of time [per m/s]"))
    if pdf is None:
        return bars.properties(height=260)
    line = alt.Chart(pdf).mark_line(color=RED, strokeWidth=2).encode(x="speed:Q", y="pdf:Q")
    return alt.layer(bars, line).properties(height=260)


def cases_by_year(data: pd.DataFrame, ytitle: str, order: list, bars: bool = False) -> alt.Chart:
    """data: year, case (a name of ``order``), value. "current" is drawn solid blue, the pinned cases dashed.
    The chart grows with the cases so that their legend below it fits."""
    height = 340 + 18 * max(0, len(order) - 3)
    palette = ["#a5a5a5", AMBER, GREEN, "#6a3d9a", RED, "#17becf", "#8c564b"]
    colors = [BLUE if n == "current" else palette[i % len(palette)] for i, n in enumerate(order)]
    enc = {"x": alt.X("year:O", title="Operating year"),
           "y": alt.Y("value:Q", title=ytitle, scale=alt.Scale(zero=bars), axis=alt.Axis(titleLimit=0)),
           "color": alt.Color("case:N", title=None, scale=alt.Scale(domain=order, range=colors),
                              legend=alt.Legend(orient="bottom", direction="vertical", labelLimit=0)),
           "tooltip": ["year", "case", alt.Tooltip("value:Q", format=",.3f")]}
    if bars:
        enc["xOffset"] = alt.XOffset("case:N", sort=order)
        return alt.Chart(data).mark_bar().encode(**enc).properties(height=height)
    enc["strokeDash"] = alt.StrokeDash("case:N", legend=None, scale=alt.Scale(
        domain=order, range=[[1, 0] if n == "current" else [6, 3] for n in order]))
    return alt.Chart(data).mark_line(point=True).encode(**enc).properties(height=height)
