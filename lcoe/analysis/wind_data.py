"""The wind series of a scenario, summarised for a person to look at, and its speed swept.

A time plot (daily means), the monthly means with their coverage, the mean day (by
hour of the day, UTC), the gaps in the record, and the histogram of the speeds the
energy uses against the Weibull fitted to them. Every figure is taken from the site the
engine builds (:func:`lcoe.physics.energy.site_for`): the speeds at hub height with the
weight of each row (each calendar month weighed by its length), and the fitted
Weibull scale and shape; nothing here changes the energy.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from lcoe.analysis.sensitivity import elasticities
from lcoe.engine import evaluate
from lcoe.finance.cashflow import Sample
from lcoe.physics import energy as en

HIST_STEP_MPS = 0.5
TOP_GAPS = 10


def series_view(scn) -> dict | None:
    """The summaries of the scenario's wind series; None where it has none.

    Keys: ``height_m`` and ``at_hub`` (the height of the speeds shown), ``step_h``;
    ``daily`` (DataFrame: day, mean, min, max [m/s]); ``monthly`` (month start, mean [m/s],
    coverage [0..1 of the steps of that month]); ``diurnal`` (hour 0..23 UTC, mean [m/s]);
    ``coverage`` (steps present, steps expected from the first to the last timestamp,
    share); ``gaps`` (DataFrame of the longest holes: start, end [the first and the next
    present timestamps], hours missing); ``histogram`` (lo, hi, density [per m/s], the
    rows weighed as in the energy) and ``weibull`` (speed, pdf [per m/s] of the fitted
    Weibull), with ``scale_mps`` and ``shape``.
    """
    climate = en.site_for(scn).climate
    series = climate.series
    if series is None or series.timestamps is None:
        return None
    ts = pd.DatetimeIndex(series.timestamps)
    at_hub = climate.speeds_mps is not None and climate.speeds_mps.size == ts.size and climate.long_term is None
    speeds = np.asarray(climate.speeds_mps if at_hub else series.speed_mps, float)
    height = float(scn.turbine.hub_height_m if at_hub else scn.wind.height_m)
    s = pd.Series(speeds, index=ts).sort_index()
    day = s.resample("D")
    daily = pd.DataFrame({"mean": day.mean(), "min": day.min(), "max": day.max()}).dropna()
    daily = daily.rename_axis("day").reset_index()
    step_s = series.step_h * 3600.0
    month = s.resample("MS")
    counts = month.count()
    starts = counts.index
    ends = starts + pd.offsets.MonthBegin(1)
    first, last = s.index[0], s.index[-1]
    stop = last + pd.Timedelta(seconds=step_s)
    span_s = np.array([(min(e, stop) - max(b, first)).total_seconds() for b, e in zip(starts, ends)], float)
    monthly = pd.DataFrame({"month": starts, "mean": month.mean().to_numpy(),
                            "coverage": counts.to_numpy() / np.maximum(np.round(span_s / step_s), 1.0)})
    diurnal = s.groupby(s.index.hour).mean().rename_axis("hour").reset_index(name="mean")
    seconds = (s.index - first).total_seconds().to_numpy()
    expected = int(round(seconds[-1] / step_s)) + 1 if seconds.size else 0
    diffs = np.diff(seconds)
    holes = np.flatnonzero(diffs > 1.5 * step_s)
    gaps = pd.DataFrame({"start": s.index[holes], "end": s.index[holes + 1],
                         "hours": (diffs[holes] - step_s) / 3600.0})
    gaps = gaps.sort_values("hours", ascending=False, kind="stable").head(TOP_GAPS).reset_index(drop=True)
    w = climate.row_weights() if at_hub else np.full(speeds.size, 1.0 / speeds.size)
    top = HIST_STEP_MPS * np.ceil(max(float(speeds.max()), 1e-9) / HIST_STEP_MPS + 1e-9)
    edges = np.arange(0.0, top + HIST_STEP_MPS / 2, HIST_STEP_MPS)
    mass, edges = np.histogram(speeds, bins=edges, weights=w)
    hist = pd.DataFrame({"lo": edges[:-1], "hi": edges[1:], "density": mass / mass.sum() / HIST_STEP_MPS})
    v = np.linspace(0.0, float(edges[-1]), 241)
    weibull = pd.DataFrame({"speed": v, "pdf": climate.pdf(v) if at_hub else np.full(v.size, np.nan)})
    return {"height_m": height, "at_hub": at_hub, "step_h": float(series.step_h), "daily": daily,
            "monthly": monthly, "diurnal": diurnal,
            "coverage": {"present": int(s.size), "expected": expected, "share": s.size / expected if expected else 0.0},
            "gaps": gaps, "histogram": hist, "weibull": weibull if at_hub else None,
            "scale_mps": float(climate.scale_mps), "shape": float(climate.shape), "warnings": list(series.warnings)}


SWEEP_FACTORS = tuple(round(0.7 + 0.025 * i, 3) for i in range(25))    # 0.70 .. 1.30


def speed_sweep(scn, factors=SWEEP_FACTORS) -> list[dict]:
    """The energy and LCOE of a scenario whose wind is a series (or a rose), every speed scaled by
    each factor (the shape of the record kept): the engine's hub-speed factor, as the Monte Carlo
    applies it (:class:`lcoe.finance.cashflow.Sample`), in one batch; the debt as sized at close.

    Rows: ``factor``, ``hub_mean_speed_mps`` (the mean at hub height times the factor),
    ``gross_aep_mwh`` and ``net_aep_p50_mwh`` (the site's AEP ratio at the factor times the base
    figures: the losses, availability and a layout's wake loss are fractions that stay), ``lcoe``
    (nominal) and ``elasticity`` d ln(net AEP) / d ln(speed) from the neighbouring rows
    (:func:`lcoe.analysis.sensitivity.elasticities`).
    """
    f = np.asarray(factors, float)
    site = en.site_for(scn)
    energy = en.energy_of(scn, site)
    ratio = site.ratio_at_factor(f)
    rep = energy.report()
    _, m, _ = evaluate(scn, sample=Sample(speed_factor=np.repeat(f[:, None], scn.lifetime, axis=1)), energy=energy,
                       site=site)
    lcoe = np.asarray(m["lcoe_nominal_per_mwh"], float).reshape(-1)
    net = rep["net_aep_p50_mwh"] * ratio
    hub = float(energy.hub_mean_speed_mps)
    el = elasticities(f, net)
    return [{"factor": float(x), "hub_mean_speed_mps": hub * float(x),
             "gross_aep_mwh": float(rep["gross_aep_mwh"] * r), "net_aep_p50_mwh": float(n), "lcoe": float(c),
             "elasticity": e} for x, r, n, c, e in zip(f, ratio, net, lcoe, el)]
