"""The site: its wind climate at hub height (a Weibull, a rose, or a series, corrected to the long
term where a reference is given), its power curve at the site's air density, the gross AEP (the
Weibull integral or the series mean) with its table against a speed factor, the gross AEP by
sector and the wake losses of a layout; built once per scenario and cached.
"""

from __future__ import annotations

import hashlib
import math
from dataclasses import dataclass, field

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import (
    _kernels,  # compiled loops; tests set it to None to run the array formulas
    farm,
    mcp,
)
from lcoe.physics import rose as rs
from lcoe.physics import wind as resource
from lcoe.physics.turbine import PowerCurve, SiteCurve, physics_curve, read_curve_csv

HOURS_PER_YEAR = 8760.0
_GL_X, _GL_W = np.polynomial.legendre.leggauss(10)
# speed-factor grid of the tabulated AEP(scale factor); 1.0 is a node, so the base case is exact;
# factors outside it (hub speeds halved or doubled) are evaluated directly
_FACTORS = np.round(np.arange(0.50, 2.00 + 1e-9, 0.00125), 6)
#: the table's error bound, relative to the AEP at the factor looked up
TABLE_RTOL = 1e-5
_BATCH = 1 << 21   # factor-by-node (or factor-by-hour) values evaluated at once (bounds the memory)


# --------------------------------------------------------------------------- the Weibull integral

def _quadrature_nodes(breaks: np.ndarray, max_step: float = 0.5) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on each piece between curve breakpoints."""
    b = np.unique(np.asarray(breaks, float))
    edges = [b[0]]
    for lo, hi in zip(b[:-1], b[1:]):
        pieces = max(1, int(math.ceil((hi - lo) / max_step)))
        edges.extend(np.linspace(lo, hi, pieces + 1)[1:])
    e = np.asarray(edges)
    lo, hi = e[:-1, None], e[1:, None]
    half = (hi - lo) / 2.0
    nodes = (lo + hi) / 2.0 + half * _GL_X[None, :]
    weights = half * _GL_W[None, :]
    return nodes.ravel(), weights.ravel()


def mean_power_weibull_kw(curve: SiteCurve, scale_mps, shape) -> np.ndarray:
    """Mean power of one turbine, integral of P(v) f(v) dv over a Weibull climate. [kW]

    The curve is smooth between its breakpoints (table points, the rated-power kink,
    cut-in and cut-out), so the integral is taken piecewise with 10-point
    Gauss-Legendre quadrature on pieces of at most 0.5 m/s: exact for the
    piecewise-linear or cubic curve to far better than 0.01 %.
    ``scale_mps`` may be an array; the result has its shape, and each value is the same
    whatever else is in the array.
    """
    nodes, weights = _quadrature_nodes(curve.breaks_mps)
    p = curve.power_kw(nodes) * weights
    a = np.asarray(scale_mps, float)
    pdf = resource.weibull_pdf(nodes[None, :], a.reshape(-1, 1), shape)
    # a sum along each row, not a matrix product: a row's value must not depend on the others
    return np.sum(pdf * p, axis=1).reshape(a.shape)


def aep_weibull_mwh(curve: SiteCurve, scale_mps, shape, turbines=1) -> np.ndarray:
    """Gross AEP = turbines * 8760 h * integral P(v) f(v) dv. [MWh/yr]"""
    return turbines * HOURS_PER_YEAR * mean_power_weibull_kw(curve, scale_mps, shape) / 1000.0


# --------------------------------------------------------------------------- the site

@dataclass(frozen=True)
class Climate:
    """The wind at hub height and the site's air density.

    For a rose, ``scale_mps`` and ``shape`` describe the all-sector distribution by the
    Weibull with its mean and mean cube (:func:`lcoe.physics.rose.equivalent_weibull`);
    the energy is summed sector by sector.
    """

    kind: str                       # "weibull" | "series" | "rose"
    density_kgm3: float
    scale_mps: float
    shape: float
    mean_speed_mps: float
    speeds_mps: np.ndarray | None = None      # series: hub-height speeds
    densities_kgm3: np.ndarray | None = None  # series: hourly densities (or None: site density)
    warnings: tuple[str, ...] = field(default=())
    rose: rs.Rose | None = None               # directions at hub height (a rose, or derived from the series)
    long_term: mcp.LongTerm | None = None     # the long-term correction that made the series
    weights: np.ndarray | None = None         # series: weight of each row (sum 1; None: equal weights)
    series: object = None                     # series: the wind.Series it came from (without a long-term correction)

    def series_mean(self, values):
        """The mean over the series' rows (the last axis), each calendar month weighed by its length."""
        v = np.asarray(values, float)
        return v @ self.weights if self.weights is not None else v.mean(axis=-1)

    def row_weights(self) -> np.ndarray:
        """The weight of each row of the series in its mean (summing to 1)."""
        n = self.speeds_mps.size
        return self.weights if self.weights is not None else np.full(n, 1.0 / n)

    def pdf(self, speed_mps) -> np.ndarray:
        """Speed density at hub height: the rose's sector mixture, else the (fitted) Weibull. [1/(m/s)]"""
        if self.kind == "rose":
            return self.rose.pdf(speed_mps)
        return resource.weibull_pdf(speed_mps, self.scale_mps, self.shape)


@dataclass(frozen=True)
class Site:
    """Climate, curves and the gross-energy answers that do not change between trials.

    The table of AEP against the speed factor f (every hub-height speed times f): with a
    series, power falls to zero in each hour whose speed crosses the cut-out (and rises
    from zero at a cut-in with power above zero), so AEP(f) has many small steps. They are
    kept apart and counted exactly (``step_factors``, one for each hour and curve end,
    sorted, with the cumulative ratio ``step_cum``); what remains, C(f) = AEP(f)/AEP(1) +
    the steps below f, is continuous and is interpolated linearly. ``ratio_at_factor``
    explains the lookup.
    """

    climate: Climate
    curve: PowerCurve
    site_curve: SiteCurve
    turbines: int
    gross_aep_mwh: float
    speed_sensitivity: float
    factors: np.ndarray       # speed-scale factors (the grid)
    aep_ratios: np.ndarray    # AEP(f) / AEP(1) at the grid's factors, evaluated directly
    cell_slopes: np.ndarray   # C(f[i+1]) - C(f[i]) of each cell
    cell_exact: np.ndarray    # cells evaluated directly (interpolation would miss the bound)
    step_factors: np.ndarray  # factors where a step of AEP(f) lies (sorted) ...
    step_cum: np.ndarray      # ... the fall of AEP(f)/AEP(1) over the first k steps (k = 0..)
    step_starts: np.ndarray   # steps below each grid factor (index into step_factors)
    sector_aep_mwh: np.ndarray | None = None   # gross AEP by sector (they sum to gross_aep_mwh)
    wake: farm.FarmWake | None = None          # wake losses of the layout
    rose_block: dict | None = None             # the report's wind_rose and wake blocks (read-only)
    wake_block: dict | None = None

    def gross_at_factor(self, factor) -> np.ndarray:
        """Gross AEP with every hub-height speed scaled by ``factor`` (the table). [MWh/yr]"""
        return self.gross_aep_mwh * self.ratio_at_factor(factor)

    def ratio_at_factor(self, factor) -> np.ndarray:
        """AEP(f) / AEP(1) from the table, within ``TABLE_RTOL`` of AEP(f) itself.

        Between grid factors f_i <= f < f_i+1: AEP(f_i)/AEP(1) + w (C(f_i+1) - C(f_i)) minus
        the steps between f_i and f, w = (f - f_i) / (f_i+1 - f_i). At a grid factor the
        value is the one evaluated directly. Cells where the interpolation misses the
        bound (the steep low-wind end, see :func:`_factor_table`) and factors outside the
        grid are evaluated directly.
        """
        f = np.asarray(factor, float)
        flat = f.reshape(-1)
        out = _table_lookup(flat, self)
        bad = np.isnan(out)
        if bad.any():
            out[bad] = self._direct_ratio(flat[bad])
        return out.reshape(f.shape)

    def _direct_ratio(self, f: np.ndarray) -> np.ndarray:
        flat = np.clip(f.ravel(), 0.0, None)
        return (self.aep_direct(flat) / self.gross_aep_mwh).reshape(f.shape)

    def aep_direct(self, factor) -> np.ndarray:
        """Gross AEP by direct integration (or series mean) at speed factors. [MWh/yr]"""
        f = np.atleast_1d(np.asarray(factor, float))
        c = self.climate
        out = np.empty(f.shape)
        if c.kind in ("weibull", "rose"):
            rows = max(1, _BATCH // 1024)
            for i in range(0, f.size, rows):
                part = f[i:i + rows]
                if c.kind == "weibull":
                    out[i:i + rows] = aep_weibull_mwh(self.site_curve, c.scale_mps * part, c.shape, self.turbines)
                    continue
                r = c.rose
                acc = np.zeros(part.shape)
                for fs, a, k in zip(r.frequency, r.scale_mps, r.shape):
                    if fs > 0:
                        acc = acc + fs * aep_weibull_mwh(self.site_curve, a * part, k, self.turbines)
                out[i:i + rows] = acc
            return out
        rho = c.densities_kgm3 if c.densities_kgm3 is not None else c.density_kgm3
        rows = max(1, _BATCH // c.speeds_mps.size)
        for i in range(0, f.size, rows):
            part = f[i:i + rows]
            out[i:i + rows] = c.series_mean(self.curve.power_kw_at(part[:, None] * c.speeds_mps[None, :], rho))
        return self.turbines * HOURS_PER_YEAR * out / 1000.0


# shape grid of the tabulated AEP(Weibull k): the whole range wind.weibull_shape accepts
_SHAPES = np.round(np.arange(0.5, 10.0 + 1e-9, 0.005), 6)


def shape_table(site: Site, fixed: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """(shapes, AEP(k) / AEP(base), d ln AEP / d ln v at k) over the shape grid, built once per site.

    ``fixed`` says what the scenario holds as the shape moves: ``"mean"`` (the scale follows,
    A = mean / Gamma(1 + 1/k)) or ``"scale"``. Monte Carlo trials that draw the shape read
    their energy here, as trials that draw the speed read the speed-factor table: one
    interpolation instead of one integration per trial. Linear interpolation on the
    0.005 grid is within 1e-5 of the integral (tests/test_energy.py).
    """
    memo = site.__dict__.setdefault("_shape_tables", {})
    if fixed in memo:
        return memo[fixed]
    c = site.climate
    k = _SHAPES.reshape(-1, 1)
    if fixed == "mean":
        scale = resource.weibull_scale_from_mean(c.mean_speed_mps, k)
    else:
        scale = np.full_like(k, c.scale_mps)
    aep = lambda f: aep_weibull_rows(site.site_curve, scale * f, k, site.turbines)  # noqa: E731
    gross, lo, hi = aep(1.0), aep(0.99), aep(1.01)
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = gross / site.gross_aep_mwh if site.gross_aep_mwh > 0 else np.ones_like(gross)
        sens = np.where((lo > 0) & (hi > 0), np.log(hi / lo) / math.log(1.01 / 0.99), np.nan)
    memo[fixed] = (_SHAPES, np.ascontiguousarray(ratio.ravel()), np.ascontiguousarray(sens.ravel()))
    return memo[fixed]


def aep_weibull_rows(curve: SiteCurve, scale_mps, shape, turbines=1) -> np.ndarray:
    """Gross AEP of one Weibull climate per row: ``scale_mps`` and ``shape`` both (n, 1). [MWh/yr]"""
    nodes, weights = _quadrature_nodes(curve.breaks_mps)
    p = curve.power_kw(nodes) * weights
    a = np.asarray(scale_mps, float).reshape(-1, 1)
    pdf = resource.weibull_pdf(nodes[None, :], a, np.asarray(shape, float).reshape(-1, 1))
    # a sum along each row (as mean_power_weibull_kw): a row's value does not depend on the others
    return turbines * HOURS_PER_YEAR * np.sum(pdf * p, axis=1, keepdims=True) / 1000.0


def gross_at_shape(site: Site, fixed: str, shape) -> tuple[np.ndarray, np.ndarray]:
    """Gross AEP and speed sensitivity at Weibull shapes ``shape`` (any shape of array), from the table."""
    ks, ratio, sens = shape_table(site, fixed)
    k = np.asarray(shape, dtype=float)
    flat = k.reshape(-1)
    return (site.gross_aep_mwh * np.interp(flat, ks, ratio).reshape(k.shape),
            np.interp(flat, ks, sens).reshape(k.shape))


def _table_lookup(f: np.ndarray, site: Site) -> np.ndarray:
    """The table at factors ``f`` (1-d); NaN where the factor must be evaluated directly (outside
    the grid, in a cell marked exact). Compiled (:func:`lcoe.physics._kernels.factor_table`) or
    the same formula on arrays."""
    if _kernels is not None:
        xc = np.ascontiguousarray(f, dtype=float)
        return _kernels.factor_table(xc, site.factors, site.aep_ratios, site.cell_slopes, site.cell_exact,
                                     site.step_factors, site.step_cum, site.step_starts, np.empty_like(xc))
    xp = site.factors
    x = np.asarray(f, float)
    i = np.clip(np.searchsorted(xp, x, side="right") - 1, 0, xp.size - 2)
    w = (x - xp[i]) / (xp[i + 1] - xp[i])
    start = site.step_starts[i]
    k = np.maximum(np.searchsorted(site.step_factors, x, side="left"), start)
    out = site.aep_ratios[i] + w * site.cell_slopes[i] - (site.step_cum[k] - site.step_cum[start])
    node = (x == xp[i]) | (x == xp[i + 1])
    out = np.where(site.cell_exact[i] & ~node, np.nan, out)
    out = np.where(x == xp[i], site.aep_ratios[i], np.where(x == xp[i + 1], site.aep_ratios[i + 1], out))
    out = np.where((x >= xp[0]) & (x <= xp[-1]), out, np.nan)
    return out


def _series_steps(site: Site, gross: float) -> tuple[np.ndarray, np.ndarray]:
    """The steps of a series' AEP(f)/AEP(1): (factor, fall) for each hour and curve end, sorted.

    An hour with speed v and a curve step at speed s (power change dP) steps at f = s / v;
    its fall in the ratio is -dP turbines 8760 h w / (1000 gross), w the hour's weight in the
    series mean. A step that lands on a grid factor (a round speed at a round factor) is placed just below it when the direct
    evaluation at that factor already includes it, else on it, so that the two agree there.
    """
    c = site.climate
    v = c.speeds_mps
    rho = np.broadcast_to(c.densities_kgm3 if c.densities_kgm3 is not None else c.density_kgm3, v.shape)
    # each hour weighs as in the series mean (its calendar month by the month's length)
    scale = site.turbines * HOURS_PER_YEAR / (1000.0 * gross) * c.row_weights()
    where, fall, hour = [], [], []
    for speed, change in site.curve.steps_kw_at(rho):
        ok = np.nonzero((v > 0) & (change != 0))[0]
        where.append(speed[ok] / v[ok])
        fall.append(-change[ok] * scale[ok])
        hour.append(ok)
    thr, fall, hour = np.concatenate(where), np.concatenate(fall), np.concatenate(hour)
    grid = site.factors
    h = (grid[-1] - grid[0]) / (grid.size - 1)
    k = np.clip(np.rint((thr - grid[0]) / h), 0, grid.size - 1).astype(np.intp)
    near = np.abs(thr - grid[k]) <= 8.0 * np.finfo(float).eps * grid[k]
    if near.any():
        fk, hk = grid[k[near]], hour[near]
        vk = v[hk]
        rk = c.densities_kgm3[hk] if c.densities_kgm3 is not None else c.density_kgm3
        at = site.curve.power_kw_at(vk * fk, rk)
        below = site.curve.power_kw_at(vk * (fk * (1.0 - 1e-9)), rk)
        above = site.curve.power_kw_at(vk * (fk * (1.0 + 1e-9)), rk)
        applied = np.abs(at - above) < np.abs(at - below)
        thr = thr.copy()
        thr[near] = np.where(applied, np.nextafter(fk, -np.inf), fk)
    order = np.argsort(thr, kind="stable")
    return thr[order], fall[order]


def _flat_table(f: np.ndarray) -> dict:
    """A table of ones with no steps and no exact cells (a site with no energy at f = 1)."""
    return {"aep_ratios": np.ones_like(f), "cell_slopes": np.zeros(f.size - 1),
            "cell_exact": np.zeros(f.size - 1, bool), "step_factors": np.empty(0), "step_cum": np.zeros(1),
            "step_starts": np.zeros(f.size, np.intp)}


def _factor_table(site: Site, gross: float) -> dict:
    """The table of AEP(f)/AEP(1) on the grid, its continuous part, the steps and the exact cells.

    AEP(f) is evaluated directly at every grid factor. Linear interpolation of a smooth
    function errs by at most h^2 max|C''| / 8 in a cell of width h; the second differences
    of the continuous part C at the four grid factors nearest the cell estimate h^2 C''
    there. A cell is interpolated only where that estimate of its error, taken four times
    over, is within ``TABLE_RTOL`` of the lowest AEP(f)/AEP(1) in the cell (the margin
    covers the change of C'' across the cell and, for a series, the many small kinks of
    the hours crossing the curve's breakpoints); elsewhere, mostly the steep low-wind end,
    the lookup evaluates AEP(f) directly.
    """
    f = site.factors
    ratios = site.aep_direct(f) / gross
    ratios[np.isclose(f, 1.0, rtol=0, atol=1e-12)] = 1.0
    if site.climate.kind == "series":
        thr, fall = _series_steps(site, gross)
    else:      # the Weibull integral is smooth in the scale: no steps
        thr, fall = np.empty(0), np.empty(0)
    cum = np.concatenate([[0.0], np.cumsum(fall)])
    cum_abs = np.concatenate([[0.0], np.cumsum(np.abs(fall))])
    starts = np.searchsorted(thr, f, side="left")          # steps below each grid factor
    cont = ratios + cum[starts]
    second = np.full(f.size + 2, np.inf)                   # |second difference| at each factor, padded
    second[2:-2] = np.abs(cont[:-2] - 2.0 * cont[1:-1] + cont[2:])
    worst = np.max(np.stack([second[0:-3], second[1:-2], second[2:-1], second[3:]]), axis=0)[:f.size - 1]
    lowest = np.minimum(ratios[:-1], ratios[1:]) - (cum_abs[starts[1:]] - cum_abs[starts[:-1]])
    exact = ~((4.0 * worst / 8.0 <= TABLE_RTOL * lowest) & (lowest > 0))
    return {"aep_ratios": ratios, "cell_slopes": np.diff(cont), "cell_exact": exact, "step_factors": thr,
            "step_cum": cum, "step_starts": starts.astype(np.intp)}


def climate_from(scn) -> Climate:
    w, t = scn.wind, scn.turbine
    shear = resource.shear_factor(t.hub_height_m, w.height_m, w.alpha, w.roughness_length_m)
    if w.air_density_kgm3 is not None:
        rho = float(w.air_density_kgm3)
    else:
        rho = float(resource.air_density(w.elevation_m, w.temperature_c))
    if w.rose is not None:
        rose = rs.rose_from_table(w.rose.frequency, w.rose.weibull_scale_mps, w.rose.weibull_shape).scaled(shear)
        mean = rose.mean_speed_mps()
        k, a = rs.equivalent_weibull(mean, rose.mean_cube())
        return Climate("rose", rho, a, k, mean, rose=rose)
    if w.timeseries is None:
        k = float(w.weibull_shape)
        a_ref = w.weibull_scale_mps if w.weibull_scale_mps is not None else \
            float(resource.weibull_scale_from_mean(w.mean_speed_mps, k))
        a = a_ref * shear
        mean = float(resource.weibull_mean(a, k))
        _check_hub_mean(mean, "wind.mean_speed_mps" if w.mean_speed_mps is not None else "wind.weibull_scale_mps",
                        w.mean_speed_mps if w.mean_speed_mps is not None else w.weibull_scale_mps)
        return Climate("weibull", rho, a, k, mean, warnings=tuple(_low_mean_note(mean)))
    path = scn.resolve(w.timeseries)
    series = resource.load_series(path, max_missing_share=w.max_missing_share)
    warns = list(series.warnings)
    dens = None
    lt = None
    weights = None
    if w.long_term is not None:
        site_path, ref_path = scn.resolve(w.timeseries), scn.resolve(w.long_term.reference)
        ref = mcp.load_reference(ref_path, max_missing_share=w.max_missing_share)
        lt = mcp.correct(series, ref, method=w.long_term.method, site_name=site_path.name,
                         reference_name=ref_path.name, file=str(ref_path))
        warns += list(ref.warnings) + list(lt.warnings)
        v, directions = lt.speeds_mps * shear, lt.directions_deg
        if series.temperature_c is not None and w.air_density_kgm3 is None:
            warns.append("the site series' temperature_c is not used with a long-term correction: the air density "
                         "comes from wind.elevation_m and wind.mean_temperature_c (else the standard "
                         "atmosphere's temperature at the elevation)")
    else:
        # the record itself must cover the year (with a long-term correction the reference does)
        warns += resource.require_year(series, path)
        weights = series.weights
        v, directions = series.speed_mps * shear, series.direction_deg
        if series.temperature_c is not None and w.air_density_kgm3 is None:
            dens = resource.air_density(w.elevation_m, series.temperature_c)
            rho = float(weights @ dens)
    if np.ptp(v) == 0:
        raise ScenarioError(f"every speed in the series is {v[0]:g} m/s; a constant record is not wind",
                            key="wind.timeseries", value=path.name, file=str(path))
    mean = float(weights @ v) if weights is not None else float(v.mean())
    _check_hub_mean(mean, "wind.timeseries", w.timeseries, file=str(path), series=True)
    warns += _low_mean_note(mean)
    rose = None if directions is None else rs.rose_from_series(v, directions, w.sectors or 12, weights=weights)
    try:
        k, a = resource.fit_weibull(v)
    except ScenarioError:
        k, a = float("nan"), float("nan")
        warns.append("too few positive speeds in the series to fit a Weibull distribution")
    if math.isfinite(k) and not 0.5 <= k <= 10.0:
        raise ScenarioError(f"the speeds fit a Weibull shape k = {k:.3g}, outside 0.5..10 (the range "
                            "wind.weibull_shape takes): the record is nearly constant, or nearly all calm",
                            key="wind.timeseries", value=path.name, file=str(path))
    return Climate("series", rho, a, k, mean, speeds_mps=v, densities_kgm3=dens, warnings=tuple(warns),
                   rose=rose, long_term=lt, weights=weights, series=series if lt is None else None)


#: below this hub-height mean the turbines would hardly turn (common practice: sites
#: worth building have 6 m/s or more) [m/s]
LOW_MEAN_SPEED_MPS = 3.0


def _check_hub_mean(mean: float, key: str, value, *, file: str | None = None, series: bool = False) -> None:
    """No measured site has a long-term hub-height mean above 20 m/s: refuse one."""
    if mean > resource.MAX_MEAN_SPEED_MPS:
        hint = " (is the series in km/h or knots? speed_mps is in m/s)" if series else ""
        raise ScenarioError(f"gives a hub-height mean speed of {mean:.1f} m/s; no site has a mean above "
                            f"{resource.MAX_MEAN_SPEED_MPS:g} m/s{hint}", key=key, value=value, file=file)


def _low_mean_note(mean: float) -> list[str]:
    if mean < LOW_MEAN_SPEED_MPS:
        return [f"the hub-height mean wind speed is {mean:.2f} m/s: below {LOW_MEAN_SPEED_MPS:g} m/s the turbines "
                "hardly turn (common practice: sites worth building have 6 m/s or more); check the wind input"]
    return []


def curve_from(scn) -> PowerCurve:
    t = scn.turbine
    if t.power_curve is not None:
        return read_curve_csv(scn.resolve(t.power_curve), t.rated_power_kw, t.rotor_diameter_m,
                              reference_density_kgm3=t.curve_air_density_kgm3, regulation=t.regulation)
    return physics_curve(t.rated_power_kw, t.rotor_diameter_m, t.cp_max,
                         3.0 if t.cut_in_mps is None else t.cut_in_mps,
                         25.0 if t.cut_out_mps is None else t.cut_out_mps,
                         1.0 if t.drivetrain_efficiency is None else t.drivetrain_efficiency)


def _site_key(scn) -> str:
    """A key for what the gross energy depends on: wind and turbine sections and file contents."""
    h = hashlib.sha256()
    h.update(scn.wind.model_dump_json().encode())
    h.update(scn.turbine.model_dump_json().encode())
    h.update(str(scn.project.turbines).encode())
    h.update(b"" if scn.layout is None else scn.layout.model_dump_json().encode())
    files = [scn.wind.timeseries, scn.turbine.power_curve,
             None if scn.wind.long_term is None else scn.wind.long_term.reference,
             None if scn.layout is None else scn.layout.positions]
    for rel in files:
        if rel is not None:
            p = scn.resolve(rel)
            try:
                h.update(str(p.resolve()).encode())
                st = p.stat()
                h.update(f"{st.st_mtime_ns}:{st.st_size}".encode())
            except (OSError, RuntimeError, ValueError):      # missing, a loop of links, a NUL: refused on reading
                h.update(b"missing")
    return h.hexdigest()


def site_for(scn) -> Site:
    """The :class:`Site` of a scenario, cached on what the gross energy depends on.

    The key is computed once per scenario object (scenarios are immutable)."""
    key = getattr(scn, "_site_key_memo", None)
    if key is None:
        key = _site_key(scn)
        try:
            scn._site_key_memo = key
        except (AttributeError, TypeError, ValueError):
            pass
    try:
        return _SITE_CACHE[key]
    except KeyError:
        pass
    site = _build_site(scn)
    if len(_SITE_CACHE) > 64:
        _SITE_CACHE.clear()
    _SITE_CACHE[key] = site
    return site


_SITE_CACHE: dict[str, Site] = {}


def _build_site(scn) -> Site:
    return build_site(scn)


def build_site(scn, climate: Climate | None = None, curve: PowerCurve | None = None) -> Site:
    """The :class:`Site` of a scenario, built afresh (not cached).

    ``climate`` and ``curve`` (from :func:`climate_from` and :func:`curve_from`) may be
    given when they were read elsewhere: a worker on another machine then builds the site
    without the scenario's wind series and power curve files (a layout's positions file is
    still read here)."""
    climate = climate_from(scn) if climate is None else climate
    curve = curve_from(scn) if curve is None else curve
    site_curve = curve.at_density(climate.density_kgm3)
    n = scn.project.turbines
    probe = Site(climate, curve, site_curve, n, 1.0, float("nan"), _FACTORS, **_flat_table(_FACTORS))
    gross = float(probe.aep_direct(1.0)[0])
    if gross > 0:
        table = _factor_table(probe, gross)
        lo, hi = probe.aep_direct(np.array([0.99, 1.01]))
        sens = math.log(hi / lo) / math.log(1.01 / 0.99) if lo > 0 and hi > 0 else float("nan")
    else:      # no energy at f = 1: a flat table of ones (every trial's gross AEP stays zero)
        table = _flat_table(_FACTORS)
        sens = float("nan")
    sector_aep, wake = _directions(scn, climate, curve, site_curve)
    rose_block = None if climate.rose is None else farm.rose_report(climate.rose, sector_aep, wake)
    wake_block = None if wake is None else wake.report(gross)
    return Site(climate, curve, site_curve, n, gross, sens, _FACTORS, **table, sector_aep_mwh=sector_aep, wake=wake,
                rose_block=rose_block, wake_block=wake_block)


def _directions(scn, climate: Climate, curve: PowerCurve, site_curve: SiteCurve):
    """Gross AEP by sector (None without directions) and the layout's wakes (None without a layout)."""
    rose = climate.rose
    if rose is None:
        if scn.layout is not None:
            w = scn.wind
            if w.long_term is not None:
                p = scn.resolve(w.long_term.reference)
                raise ScenarioError("has no direction_deg column: the long-term series takes its directions from the "
                                    "reference, and a layout needs wind directions", key="wind.long_term.reference",
                                    value=p.name, file=str(p))
            p = scn.resolve(w.timeseries)
            raise ScenarioError("has no direction_deg column; a layout needs wind directions", key="wind.timeseries",
                                value=p.name, file=str(p))
        return None, None
    n = scn.project.turbines
    if rose.source == "series":
        rho = climate.densities_kgm3 if climate.densities_kgm3 is not None else climate.density_kgm3
        per = rs.sector_mean_power_kw(rose, sample_power_kw=curve.power_kw_at(rose.speeds_mps, rho))
    else:
        per = rs.sector_mean_power_kw(rose, weibull_mean_power_kw=lambda a, k: mean_power_weibull_kw(site_curve, a, k))
    sector_aep = n * HOURS_PER_YEAR * per / 1000.0
    wake = None if scn.layout is None else farm.wake_of(scn, rose, curve, site_curve, climate.density_kgm3)
    return sector_aep, wake
