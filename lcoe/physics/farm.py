"""The wind farm of a scenario: its layout, its wake losses over the wind rose, the sector table
and the long-term correction statistics, as report-ready blocks.

The physics is in :mod:`lcoe.physics.rose`, :mod:`lcoe.physics.wake`,
:mod:`lcoe.physics.layout` and :mod:`lcoe.physics.mcp`; this module applies them to one
scenario's climate and turbine.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import layout as lay
from lcoe.physics import mcp
from lcoe.physics import wake as wk
from lcoe.physics.rose import Rose

HOURS_PER_YEAR = 8760.0
MODEL = ("Jensen/Park top-hat wake (Jensen 1983; Katic, Hojstrup and Jensen 1986), deficits combined by "
         "root-sum-square, partial overlap by circle-intersection area")
MCP_TERM = "long-term correction (MCP)"


def layout_of(scn) -> lay.Layout:
    """The scenario's turbine positions: the CSV, or the grid; their count must be project.turbines."""
    g = scn.layout
    d = scn.turbine.rotor_diameter_m
    if g.positions is None:
        return lay.grid_layout(g.rows, g.columns, g.row_spacing_diameters, g.column_spacing_diameters,
                               g.row_bearing_deg, d)
    path = scn.resolve(g.positions)
    out = lay.read_layout_csv(path, d)
    if out.turbines != scn.project.turbines:
        raise ScenarioError(f"has {out.turbines} turbine(s) but project.turbines = {scn.project.turbines}",
                            key="layout.positions", value=path.name, file=str(path))
    return out


@dataclass(frozen=True)
class FarmWake:
    """The layout and its wake result."""

    layout: lay.Layout
    result: wk.WakeResult
    location: str
    rotor_diameter_m: float
    source: str                     # the positions file name, or "grid R x C"

    @property
    def farm_loss(self) -> float:
        return self.result.farm_loss

    def report(self, gross_aep_mwh: float) -> dict:
        """The JSON block ``wake``; per-turbine energy from the farm's gross AEP shared equally."""
        res, L = self.result, self.layout
        loss = res.turbine_loss
        per = gross_aep_mwh / L.turbines
        spacing = L.nearest_spacing_m()
        return {
            "model": MODEL, "wake_decay_constant": res.decay_constant, "location": self.location,
            "thrust": res.thrust_source, "direction_step_deg": res.direction_step_deg,
            "speed_bin_mps": res.speed_bin_mps, "layout": self.source, "turbines": L.turbines,
            "nearest_spacing_m": spacing, "nearest_spacing_rotor_diameters": spacing / self.rotor_diameter_m,
            "farm_loss": res.farm_loss, "turbine_loss_min": float(loss.min()), "turbine_loss_max": float(loss.max()),
            "per_turbine": [{"name": n, "x_m": float(x), "y_m": float(y), "gross_aep_mwh": per,
                             "waked_aep_mwh": per * (1.0 - float(lo)), "wake_loss": float(lo)}
                            for n, x, y, lo in zip(L.names, L.x_m, L.y_m, loss)],
        }


def wake_of(scn, rose: Rose, curve, site_curve, density_kgm3: float) -> FarmWake:
    """Wake losses of the scenario's layout over a hub-height rose (every sector and speed bin)."""
    g = scn.layout
    layout = layout_of(scn)
    step = g.speed_bin_mps
    top = float(np.max(site_curve.breaks_mps)) if site_curve.breaks_mps.size else 30.0
    edges = np.arange(0.0, math.ceil(top / step) * step + step + 1e-9, step)
    prob = rose.bin_probabilities(edges)
    res = wk.farm_wake(layout.x_m, layout.y_m, scn.turbine.rotor_diameter_m, g.decay_constant, prob, edges,
                       site_curve.power_kw, lambda v: curve.thrust_coefficient_at(v, density_kgm3),
                       direction_step_deg=g.direction_step_deg, thrust_source=curve.thrust_source)
    source = scn.resolve(g.positions).name if g.positions is not None else f"grid {g.rows} x {g.columns}"
    return FarmWake(layout, res, g.location, scn.turbine.rotor_diameter_m, source)


def rose_report(rose: Rose, sector_aep_mwh: np.ndarray, wake: FarmWake | None) -> dict:
    """The JSON block ``wind_rose``: one row per sector at hub height, with its gross AEP and wake loss."""
    total = float(np.sum(sector_aep_mwh))
    means = rose.sector_mean_mps()
    loss = wake.result.sector_loss if wake is not None else None
    rows = []
    for s in range(rose.sectors):
        row = {"sector": s, "centre_deg": float(rose.centres_deg[s]), "frequency": float(rose.frequency[s]),
               "mean_speed_mps": float(means[s]), "weibull_scale_mps": float(rose.scale_mps[s]),
               "weibull_shape": float(rose.shape[s]), "gross_aep_mwh": float(sector_aep_mwh[s]),
               "gross_share": float(sector_aep_mwh[s]) / total if total > 0 else None}
        if loss is not None:
            row["wake_loss"] = float(loss[s])
        rows.append(row)
    return {"sectors": rose.sectors, "width_deg": rose.width_deg,
            "source": "scenario table" if rose.source == "table" else "derived from the wind series",
            "height": "hub", "rows": rows}


def long_term_term(lt: mcp.LongTerm, scenario_interannual_sd: float) -> tuple[float, float, str]:
    """(speed sd, inter-annual sd used, its source) of the long-term correction's uncertainty term.

    The inter-annual variability is the long-term series' own (complete calendar years)
    where it has at least three, else ``uncertainty.interannual_speed_sd``.
    """
    if math.isfinite(lt.interannual_sd):
        iav, source = lt.interannual_sd, "long-term series"
    else:
        iav, source = float(scenario_interannual_sd), "uncertainty.interannual_speed_sd"
    return mcp.long_term_uncertainty(lt.r, lt.concurrent_years, lt.reference_years, iav), iav, source


def long_term_report(lt: mcp.LongTerm, scenario_interannual_sd: float) -> dict:
    """The JSON block ``long_term``: concurrent statistics, both methods, the means and the uncertainty term."""
    sd, iav, source = long_term_term(lt, scenario_interannual_sd)
    out = lt.report()
    out.update(interannual_sd=iav, interannual_source=source, uncertainty_speed_sd=sd, uncertainty_term=MCP_TERM,
               long_term_over_short_term=lt.site_mean_long_term_mps / lt.site_mean_short_term_mps
               if lt.site_mean_short_term_mps > 0 else None)
    return out
