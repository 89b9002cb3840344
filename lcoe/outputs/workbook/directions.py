"""Engine values on the Energy sheet: the wind rose, the wake loss of every turbine and the long-term
correction statistics (only where the scenario has directions, a layout or a long-term correction)."""

from __future__ import annotations

from openpyxl.chart import RadarChart, Reference
from openpyxl.styles import Alignment

from lcoe.outputs.workbook.cells import BOLD, ENGINE_FILL, HEAD_FILL, ITALIC, Book


def _heads(book: Book, ws, row: int, heads) -> None:
    for i, h in enumerate(heads, start=1):
        book.text(ws, row, i, h, font=BOLD, fill=HEAD_FILL).alignment = Alignment(wrap_text=True, vertical="top")
    ws.row_dimensions[row].height = 30


def write_directions(book: Book, ws, row: int, energy) -> int:
    """Write the blocks from ``row`` down; returns the next free row."""
    b = book
    rose, wake, lt = energy.wind_rose, energy.wake, energy.long_term
    if rose is None and wake is None and lt is None:
        return row
    b.text(ws, row, 1, "Engine values (computed by lcoe, not live): directions, wakes and the long-term wind",
           font=BOLD, fill=ENGINE_FILL)
    row += 2
    if rose is not None:
        b.text(ws, row, 1, f"Wind rose at hub height: {rose['sectors']} sectors of {rose['width_deg']:g} deg, "
                           f"{rose['source']}", font=BOLD)
        row += 1
        heads = ["Sector (wind from) [deg]", "Frequency", "Mean speed [m/s]", "Weibull A [m/s]", "Weibull k",
                 "Gross AEP [MWh/yr]", "Share of gross"]
        with_wake = "wake_loss" in rose["rows"][0]
        if with_wake:
            heads.append("Wake loss")
        _heads(b, ws, row, heads)
        first = row + 1
        for r in rose["rows"]:
            row += 1
            values = [(r["centre_deg"], "int"), (r["frequency"], "pct"), (r["mean_speed_mps"], "price"),
                      (r["weibull_scale_mps"], "price"), (r["weibull_shape"], "ratio"), (r["gross_aep_mwh"], "mwh"),
                      (r["gross_share"], "pct")] + ([(r["wake_loss"], "pct")] if with_wake else [])
            for col, (v, fmt) in enumerate(values, start=1):
                b.num(ws, row, col, v, fmt, fill=ENGINE_FILL)
        chart = RadarChart()
        chart.type = "filled"
        chart.title = "Wind rose: frequency and gross energy by sector"
        chart.add_data(Reference(ws, min_col=2, min_row=first - 1, max_row=row), titles_from_data=True)
        chart.add_data(Reference(ws, min_col=7, min_row=first - 1, max_row=row), titles_from_data=True)
        chart.set_categories(Reference(ws, min_col=1, min_row=first, max_row=row))
        chart.y_axis.delete = True
        chart.width, chart.height = 14, 10
        ws.add_chart(chart, f"K{first - 1}")
        row += 2
    if wake is not None:
        b.text(ws, row, 1, f"Wake loss per turbine: {wake['model']}", font=BOLD)
        b.text(ws, row + 1, 1, f"wake decay constant {wake['wake_decay_constant']:g} ({wake['location']}); thrust: "
                               f"{wake['thrust']}; directions every {wake['direction_step_deg']:g} deg, speed bins "
                               f"of {wake['speed_bin_mps']:g} m/s; layout {wake['layout']}", font=ITALIC)
        row += 2
        _heads(b, ws, row, ["Turbine", "x [m]", "y [m]", "Gross AEP [MWh/yr]", "Waked AEP [MWh/yr]", "Wake loss"])
        for t in wake["per_turbine"]:
            row += 1
            b.text(ws, row, 1, t["name"])
            for col, (v, fmt) in enumerate(((t["x_m"], "price"), (t["y_m"], "price"), (t["gross_aep_mwh"], "mwh"),
                                            (t["waked_aep_mwh"], "mwh"), (t["wake_loss"], "pct")), start=2):
                b.num(ws, row, col, v, fmt, fill=ENGINE_FILL)
        row += 1
        b.text(ws, row, 1, "Farm (the wake loss on Inputs)", font=BOLD)
        b.num(ws, row, 4, sum(t["gross_aep_mwh"] for t in wake["per_turbine"]), "mwh", fill=ENGINE_FILL)
        b.num(ws, row, 5, sum(t["waked_aep_mwh"] for t in wake["per_turbine"]), "mwh", fill=ENGINE_FILL)
        b.num(ws, row, 6, wake["farm_loss"], "pct", font=BOLD, fill=ENGINE_FILL)
        row += 3
    if lt is not None:
        b.text(ws, row, 1, f"Long-term correction (measure-correlate-predict, {lt['method'].replace('_', ' ')}) "
                           f"against {lt['reference']}", font=BOLD)
        b.text(ws, row + 1, 1, "linear regression and variance ratio as in Rogers, Rogers and Manwell (2005); the "
                               "variance ratio keeps the site's mean and standard deviation over the concurrent "
                               "period", font=ITALIC)
        row += 2
        items = [
            ("Reference period", f"{lt['reference_start']} to {lt['reference_end']}", None),
            ("Reference length [years]; time step [h]", lt["reference_years"], "price"),
            ("Site series", f"{lt['site_start']} to {lt['site_end']}", None),
            ("Concurrent records", lt["concurrent_pairs"], "int"),
            ("Concurrent length [years]", lt["concurrent_years"], "price"),
            ("Concurrent coverage of the site period", lt["coverage"], "pct"),
            ("Correlation r", lt["r"], "ratio"),
            ("Linear regression: slope", lt["regression_slope"], "rate"),
            ("Linear regression: offset [m/s]", lt["regression_offset_mps"], "rate"),
            ("Variance ratio: slope", lt["variance_ratio_slope"], "rate"),
            ("Variance ratio: offset [m/s]", lt["variance_ratio_offset_mps"], "rate"),
            ("Long-term site mean by linear regression [m/s]", lt["long_term_mean_regression_mps"], "price"),
            ("Long-term site mean by variance ratio [m/s]", lt["long_term_mean_variance_ratio_mps"], "price"),
            ("Site mean, measured period [m/s]", lt["site_mean_short_term_mps"], "price"),
            ("Site mean, long term (used) [m/s]", lt["site_mean_long_term_mps"], "price"),
            ("Veer, site minus reference [deg]", lt["veer_deg"], "price"),
            ("Inter-annual sd of the mean speed", lt["interannual_sd"], "pct"),
            ("Long-term uncertainty (a speed term)", lt["uncertainty_speed_sd"], "pct"),
        ]
        for label, v, fmt in items:
            b.text(ws, row, 1, label)
            if fmt is None:
                b.text(ws, row, 2, v, fill=ENGINE_FILL)
            else:
                b.num(ws, row, 2, v, fmt, fill=ENGINE_FILL)
            if label.startswith("Reference length"):
                b.num(ws, row, 3, lt["reference_step_h"], "price", fill=ENGINE_FILL)
            if label.startswith("Long-term uncertainty"):
                b.text(ws, row, 3, "= inter-annual sd x sqrt((1 - r^2) / Nc + r^2 / Nr), Nc and Nr the concurrent "
                                   "and reference years (Cochran 1977, double sampling)", font=ITALIC)
            row += 1
        b.text(ws, row, 1, "The uncertainty term is one of the speed terms behind the P-case factors on Inputs.",
               font=ITALIC)
        row += 1
    return row
