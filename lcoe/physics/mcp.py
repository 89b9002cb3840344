"""Long-term correction of a short site measurement against a long reference series
(measure-correlate-predict, MCP).

Over the concurrent period (timestamps present in both series) the site speed y is
related to the reference speed x by a straight line y = offset + slope x, found by one of
two published methods:

* linear regression: ordinary least squares, slope = r s_y / s_x;
* variance ratio: slope = s_y / s_x, so that the predicted series keeps the site's mean
  and standard deviation over the concurrent period (the regression line shrinks the
  spread by r, which lowers the energy of a cubic power curve).

In both, offset = mean(y) - slope mean(x). The line applied to the whole reference gives
the long-term site series (negative predictions set to zero, and counted); its
directions are the reference's, turned by the mean veer between site and reference over
the concurrent period.

References
----------
A. L. Rogers, J. W. Rogers, J. F. Manwell, "Comparison of the performance of four
measure-correlate-predict algorithms", Journal of Wind Engineering and Industrial
Aerodynamics 93 (2005) 243-264 (linear regression and the variance-ratio method; from
memory).
Ordinary least squares: any statistics text (also scipy.stats.linregress).
The uncertainty of the long-term mean: W. G. Cochran, Sampling Techniques, 3rd ed.,
Wiley (1977), ch. 12, double sampling for regression estimation (from memory): with n
concurrent units and n' reference units, V(mean) = S^2 (1 - rho^2) / n + rho^2 S^2 / n'.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.physics import wind as resource
from lcoe.physics.datafile import check_data_file

METHODS = ("variance_ratio", "linear_regression")
MIN_COVERAGE = 0.9            # concurrent records / reference records expected in the site period
MIN_COMPLETE_YEAR = 0.9       # a calendar year with this share of its records counts for the inter-annual sd
MIN_YEARS_FOR_SD = 3          # complete reference years needed to measure the inter-annual variability
LOW_R = 0.7                   # common practice: a correlation below this makes a weak long-term correction
MAX_REFERENCE_BYTES = 100_000_000
HOURS_PER_YEAR = 8760.0


def linear_regression(x, y) -> tuple[float, float]:
    """Ordinary least squares y = offset + slope x. Returns (slope, offset)."""
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    mx, my = x.mean(), y.mean()
    slope = float(np.sum((x - mx) * (y - my)) / np.sum((x - mx) ** 2))
    return slope, float(my - slope * mx)


def variance_ratio(x, y) -> tuple[float, float]:
    """The variance-ratio line: slope = s_y / s_x, offset = mean(y) - slope mean(x). Returns (slope, offset).

    References
    ----------
    Rogers, Rogers and Manwell (2005) (from memory).
    """
    x = np.asarray(x, float)
    y = np.asarray(y, float)
    slope = float(y.std() / x.std())
    return slope, float(y.mean() - slope * x.mean())


def correlation(x, y) -> float:
    """Pearson's correlation coefficient r of paired samples. [-]"""
    x = np.asarray(x, float) - np.mean(x)
    y = np.asarray(y, float) - np.mean(y)
    return float(np.sum(x * y) / math.sqrt(np.sum(x * x) * np.sum(y * y)))


def long_term_uncertainty(r: float, concurrent_years: float, reference_years: float,
                          interannual_sd: float) -> float:
    """Relative standard deviation of the long-term mean speed from an MCP. [-]

    sigma_LT = sigma_iav sqrt((1 - r^2) / N_c + r^2 / N_r), with N_c the concurrent and
    N_r the reference length in years and sigma_iav the relative inter-annual standard
    deviation of the yearly mean speed: the variance of a mean estimated by double
    sampling with a regression estimator, one year being one sampling unit.

    References
    ----------
    Cochran, Sampling Techniques, 3rd ed. (1977), ch. 12, double sampling for
    regression estimation (from memory).
    """
    r2 = min(max(r, -1.0), 1.0) ** 2
    return float(interannual_sd * math.sqrt((1.0 - r2) / concurrent_years + r2 / reference_years))


def _circular_mean_deg(angles_deg) -> float:
    a = np.radians(np.asarray(angles_deg, float))
    return float(np.degrees(np.arctan2(np.sin(a).mean(), np.cos(a).mean())))


def _day(t) -> str:
    return str(np.datetime_as_string(np.datetime64(t, "s"), unit="s")).replace("T", " ")[:16]


@dataclass(frozen=True)
class LongTerm:
    """The concurrent-period statistics, both methods' lines and the long-term site series."""

    method: str
    reference: str
    reference_start: str
    reference_end: str
    reference_step_h: float
    reference_years: float
    site_start: str
    site_end: str
    concurrent_start: str
    concurrent_end: str
    concurrent_pairs: int
    concurrent_years: float
    coverage: float
    r: float
    regression_slope: float
    regression_offset_mps: float
    variance_ratio_slope: float
    variance_ratio_offset_mps: float
    site_mean_concurrent_mps: float
    reference_mean_concurrent_mps: float
    site_sd_concurrent_mps: float
    reference_sd_concurrent_mps: float
    reference_mean_long_term_mps: float
    site_mean_short_term_mps: float
    long_term_mean_regression_mps: float
    long_term_mean_variance_ratio_mps: float
    site_mean_long_term_mps: float
    veer_deg: float | None
    interannual_sd: float              # relative sd of the long-term series' complete calendar years (NaN: < 3)
    complete_years: int
    clipped: int
    speeds_mps: np.ndarray = field(repr=False)
    directions_deg: np.ndarray | None = field(repr=False)
    warnings: tuple[str, ...] = ()

    @property
    def slope(self) -> float:
        return self.variance_ratio_slope if self.method == "variance_ratio" else self.regression_slope

    @property
    def offset_mps(self) -> float:
        return self.variance_ratio_offset_mps if self.method == "variance_ratio" else self.regression_offset_mps

    def report(self) -> dict:
        """The JSON block ``long_term`` (the series itself left out)."""
        keys = ("method", "reference", "reference_start", "reference_end", "reference_step_h", "reference_years",
                "site_start", "site_end", "concurrent_start", "concurrent_end", "concurrent_pairs", "concurrent_years",
                "coverage", "r", "regression_slope", "regression_offset_mps", "variance_ratio_slope",
                "variance_ratio_offset_mps", "site_mean_concurrent_mps", "reference_mean_concurrent_mps",
                "site_sd_concurrent_mps", "reference_sd_concurrent_mps", "reference_mean_long_term_mps",
                "site_mean_short_term_mps", "long_term_mean_regression_mps", "long_term_mean_variance_ratio_mps",
                "site_mean_long_term_mps", "veer_deg", "complete_years", "clipped")
        out = {k: getattr(self, k) for k in keys}
        out["slope"], out["offset_mps"] = self.slope, self.offset_mps
        return out


def load_reference(path, *, key: str = "wind.long_term.reference", max_missing_share: float = 0.2
                   ) -> resource.Series:
    """A reference series ``timestamp, speed_mps[, direction_deg]`` at its own regular time step."""
    check_data_file(path, key=key, max_bytes=MAX_REFERENCE_BYTES)
    return resource.load_series(path, key=key, max_missing_share=max_missing_share, step_h=None, max_step_h=None)


def _interannual_sd(stamps, speeds, step_h) -> tuple[float, int]:
    """Relative sd (ddof 1) of the calendar-year means of complete years, and their number."""
    years = stamps.astype("datetime64[Y]").astype(int) + 1970
    uniq, inv, counts = np.unique(years, return_inverse=True, return_counts=True)
    sums = np.bincount(inv, weights=speeds)
    per_year = np.array([366.0 if (y % 4 == 0 and (y % 100 != 0 or y % 400 == 0)) else 365.0 for y in uniq]) \
        * 24.0 / step_h
    full = counts >= MIN_COMPLETE_YEAR * per_year
    if full.sum() < MIN_YEARS_FOR_SD:
        return float("nan"), int(full.sum())
    means = sums[full] / counts[full]
    return float(np.std(means, ddof=1) / np.mean(means)), int(full.sum())


def correct(site: resource.Series, ref: resource.Series, *, method: str, site_name: str, reference_name: str,
            key: str = "wind.long_term.reference", file: str | None = None) -> LongTerm:
    """The long-term site series of a short site series against a long reference (see the module)."""
    def fail(msg):
        return ScenarioError(msg, key=key, value=reference_name, file=file)

    s_t = site.timestamps.astype("int64")
    r_t = ref.timestamps.astype("int64")
    step_ns = int(round(ref.step_h * 3600e9))
    s_lo, s_hi, r_lo, r_hi = s_t.min(), s_t.max(), r_t.min(), r_t.max()
    if r_lo > s_lo + step_ns or r_hi < s_hi - step_ns:
        raise fail(f"covers {_day(ref.timestamps.min())} to {_day(ref.timestamps.max())}, but the site series "
                   f"{site_name} runs {_day(site.timestamps.min())} to {_day(site.timestamps.max())}; "
                   "the reference must cover the site period")
    common, i_site, i_ref = np.intersect1d(s_t, r_t, assume_unique=True, return_indices=True)
    first = math.ceil((s_lo - r_lo) / step_ns)
    last = math.floor((s_hi - r_lo) / step_ns)
    expected = max(1, last - first + 1)
    coverage = common.size / expected
    if coverage < MIN_COVERAGE or common.size < 10:
        hint = "" if common.size else "; no reference timestamp matches one of the site series (both read as UTC)"
        raise fail(f"only {coverage:.1%} of the site period has concurrent data ({common.size} of {expected} "
                   f"reference records); at least {MIN_COVERAGE:.0%} is needed{hint}")
    x = ref.speed_mps[i_ref]
    y = site.speed_mps[i_site]
    if np.ptp(x) <= 0 or np.ptp(y) <= 0:
        raise fail("the site or reference speeds do not vary over the concurrent period; no correlation can be found")
    r = correlation(x, y)
    b_lr, a_lr = linear_regression(x, y)
    b_vr, a_vr = variance_ratio(x, y)
    slope, offset = (b_vr, a_vr) if method == "variance_ratio" else (b_lr, a_lr)
    raw = offset + slope * ref.speed_mps
    clipped = int(np.sum(raw < 0))
    speeds = np.maximum(raw, 0.0)
    lt_lr = float(np.mean(np.maximum(a_lr + b_lr * ref.speed_mps, 0.0)))
    lt_vr = float(np.mean(np.maximum(a_vr + b_vr * ref.speed_mps, 0.0)))
    warns: list[str] = []
    veer = None
    directions = None
    if ref.direction_deg is not None:
        if site.direction_deg is not None:
            veer = _circular_mean_deg(site.direction_deg[i_site] - ref.direction_deg[i_ref])
        else:
            warns.append(f"{site_name} has no direction_deg column: the long-term directions are the reference's, "
                         "unturned (no veer measured)")
        directions = np.mod(ref.direction_deg + (veer or 0.0), 360.0)
    n_c = common.size * ref.step_h / HOURS_PER_YEAR
    n_r = ref.speed_mps.size * ref.step_h / HOURS_PER_YEAR
    iav, full_years = _interannual_sd(ref.timestamps, speeds, ref.step_h)
    if not math.isfinite(iav):
        warns.append(f"the reference has {full_years} complete calendar year(s), fewer than {MIN_YEARS_FOR_SD}: the "
                     "long-term uncertainty uses uncertainty.interannual_speed_sd")
    if r < LOW_R:
        warns.append(f"long-term correction: r = {r:.3f} between site and reference is low (common practice looks "
                     f"for r above about {LOW_R:g}); the correction is weak")
    if n_r < 5:
        warns.append(f"long-term correction: the reference spans {n_r:.1f} years; a long-term reference usually spans "
                     "10 years or more (common practice)")
    if n_c < 0.9:
        warns.append(f"long-term correction: {n_c:.2f} years of concurrent data, less than a year: the correlation "
                     "may carry a seasonal bias")
    if clipped:
        warns.append(f"long-term correction: {clipped} predicted speed(s) below zero set to zero")
    return LongTerm(
        method=method, reference=reference_name, reference_start=_day(ref.timestamps.min()),
        reference_end=_day(ref.timestamps.max()), reference_step_h=float(ref.step_h), reference_years=float(n_r),
        site_start=_day(site.timestamps.min()), site_end=_day(site.timestamps.max()),
        concurrent_start=_day(common.min().astype("datetime64[ns]")),
        concurrent_end=_day(common.max().astype("datetime64[ns]")), concurrent_pairs=int(common.size),
        concurrent_years=float(n_c), coverage=float(coverage), r=r, regression_slope=b_lr,
        regression_offset_mps=a_lr, variance_ratio_slope=b_vr, variance_ratio_offset_mps=a_vr,
        site_mean_concurrent_mps=float(y.mean()), reference_mean_concurrent_mps=float(x.mean()),
        site_sd_concurrent_mps=float(y.std()), reference_sd_concurrent_mps=float(x.std()),
        reference_mean_long_term_mps=float(ref.speed_mps.mean()), site_mean_short_term_mps=float(site.speed_mps.mean()),
        long_term_mean_regression_mps=lt_lr, long_term_mean_variance_ratio_mps=lt_vr,
        site_mean_long_term_mps=float(speeds.mean()), veer_deg=veer, interannual_sd=float(iav),
        complete_years=full_years, clipped=clipped, speeds_mps=speeds, directions_deg=directions,
        warnings=tuple(warns))
