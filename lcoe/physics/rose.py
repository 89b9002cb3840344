"""Wind directions: a rose by sector (frequency, Weibull scale and shape per sector), a rose
derived from a series with directions, and the joint probability of sector and speed bin.

Directions are where the wind comes from, in degrees clockwise from north. A rose of n
sectors has sector i centred on i * 360 / n degrees and spanning half a sector width to
either side (sector 0 is centred on north).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.optimize import brentq
from scipy.special import gamma

from lcoe.physics import wind as resource

MIN_SECTOR_SAMPLES = 10   # fewer positive speeds than this: no Weibull fit for the sector


def sector_centres_deg(n: int) -> np.ndarray:
    """Centre direction of each of n sectors, i * 360 / n. [deg]"""
    return np.arange(n) * (360.0 / n)


def sector_of(direction_deg, n: int) -> np.ndarray:
    """The sector (0..n-1) each direction falls in; sector 0 spans -180/n..180/n degrees. [-]"""
    width = 360.0 / n
    d = np.mod(np.asarray(direction_deg, float) + width / 2.0, 360.0)
    return np.minimum((d // width).astype(np.intp), n - 1)


def weibull_fit_mle(speed_mps) -> tuple[float, float]:
    """Maximum-likelihood Weibull fit with the location at zero. Returns (shape k, scale A).

    The shape solves the profile-likelihood equation
    sum(v^k ln v) / sum(v^k) - 1/k - mean(ln v) = 0 (increasing in k; Brent's method),
    then A = mean(v^k)^(1/k). Zero speeds are left out. NaN, NaN with fewer than
    ``MIN_SECTOR_SAMPLES`` positive speeds or a constant sample.

    References
    ----------
    Maximum-likelihood estimation for the two-parameter Weibull distribution (the same
    estimate as scipy.stats.weibull_min.fit with floc=0).
    """
    v = np.asarray(speed_mps, float)
    v = v[v > 0]
    if v.size < MIN_SECTOR_SAMPLES or np.ptp(v) <= 1e-9 * v.max():
        return float("nan"), float("nan")
    x = v / v.max()          # scaled so that x^k cannot overflow
    lx = np.log(x)
    mean_lx = float(lx.mean())

    def g(k):
        w = x ** k
        return float((w * lx).sum() / w.sum()) - 1.0 / k - mean_lx

    lo, hi = 0.05, 2.0
    while g(hi) < 0 and hi < 200.0:
        hi *= 2.0
    if g(lo) > 0 or g(hi) < 0:
        return float("nan"), float("nan")
    k = brentq(g, lo, hi, xtol=1e-12, rtol=1e-12, maxiter=200)
    a = float(v.max() * np.mean(x ** k) ** (1.0 / k))
    return float(k), a


def equivalent_weibull(mean_mps: float, mean_cube: float) -> tuple[float, float]:
    """The Weibull (k, A) with a given mean speed and mean cube of speed (the energy pattern factor).

    Solves Gamma(1 + 3/k) / Gamma(1 + 1/k)^3 = E[v^3] / E[v]^3 for k (Brent's method),
    then A = mean / Gamma(1 + 1/k). Used to describe a rose's all-sector distribution
    by one Weibull that keeps its mean and its power density; the energy itself is
    always summed sector by sector. NaN where no Weibull has that ratio.

    References
    ----------
    Weibull moments A^n Gamma(1 + n/k) (standard distribution formulas).
    """
    if not (mean_mps > 0 and mean_cube > 0):
        return float("nan"), float("nan")
    epf = mean_cube / mean_mps ** 3

    def h(k):
        return math.lgamma(1 + 3 / k) - 3 * math.lgamma(1 + 1 / k) - math.log(epf)

    lo, hi = 0.3, 30.0
    if h(lo) < 0 or h(hi) > 0:
        return float("nan"), float("nan")
    k = brentq(h, lo, hi, xtol=1e-12, rtol=1e-12)
    return float(k), float(mean_mps / gamma(1 + 1 / k))


@dataclass(frozen=True)
class Rose:
    """Wind directions by sector at one height: frequency and speed distribution per sector.

    ``source`` "table": given as frequency, Weibull A and k per sector. ``source``
    "series": derived from speeds and directions (kept, so that the joint probability of
    sector and speed is the series' own histogram); A and k are then each sector's
    maximum-likelihood fit (NaN for a sector with too few data).
    """

    frequency: np.ndarray            # (n,) sums to 1 [-]
    scale_mps: np.ndarray            # (n,) Weibull A [m/s]
    shape: np.ndarray                # (n,) Weibull k [-]
    source: str                      # "table" | "series"
    speeds_mps: np.ndarray | None = None
    directions_deg: np.ndarray | None = None
    weights: np.ndarray | None = None        # series: each sample's weight (sum 1; None: equal)


    @property
    def sectors(self) -> int:
        return int(self.frequency.size)

    @property
    def width_deg(self) -> float:
        return 360.0 / self.sectors

    @property
    def centres_deg(self) -> np.ndarray:
        return sector_centres_deg(self.sectors)

    def scaled(self, factor: float) -> "Rose":
        """The rose with every speed multiplied by ``factor`` (shear to hub height; the shapes stay)."""
        return Rose(self.frequency, self.scale_mps * factor, self.shape, self.source,
                    None if self.speeds_mps is None else self.speeds_mps * factor, self.directions_deg, self.weights)

    def sector_mean_mps(self) -> np.ndarray:
        """Mean speed of each sector (the series' own where derived from one). [m/s]"""
        if self.source == "series":
            idx = sector_of(self.directions_deg, self.sectors)
            sums = np.bincount(idx, weights=self.speeds_mps, minlength=self.sectors)
            counts = np.bincount(idx, minlength=self.sectors)
            with np.errstate(invalid="ignore", divide="ignore"):
                return np.where(counts > 0, sums / np.maximum(counts, 1), np.nan)
        return resource.weibull_mean(self.scale_mps, self.shape)

    def mean_speed_mps(self) -> float:
        """All-sector mean speed, sum f_s mean_s. [m/s]"""
        if self.source == "series":
            return float(self.speeds_mps.mean())
        return float(np.sum(self.frequency * resource.weibull_mean(self.scale_mps, self.shape)))

    def mean_cube(self) -> float:
        """All-sector mean cube of speed. [(m/s)^3]"""
        if self.source == "series":
            return float(np.mean(self.speeds_mps ** 3))
        return float(np.sum(self.frequency * self.scale_mps ** 3 * gamma(1.0 + 3.0 / self.shape)))

    def pdf(self, speed_mps) -> np.ndarray:
        """All-sector speed density, sum f_s f_s(v) (table roses). [1/(m/s)]"""
        v = np.asarray(speed_mps, float)
        out = np.zeros(v.shape)
        for f, a, k in zip(self.frequency, self.scale_mps, self.shape):
            if f > 0 and np.isfinite(a) and np.isfinite(k):
                out = out + f * resource.weibull_pdf(v, a, k)
        return out

    def bin_probabilities(self, edges_mps: np.ndarray) -> np.ndarray:
        """Probability of each (sector, speed bin), shape (n, bins); rows sum to the frequencies
        less the share beyond the last edge. [-]

        Table: f_s (F_s(hi) - F_s(lo)) with the Weibull distribution function
        F(v) = 1 - exp(-(v/A)^k). Series: the share of the samples in each cell (by their weights).
        """
        e = np.asarray(edges_mps, float)
        n = self.sectors
        if self.source == "series":
            idx = sector_of(self.directions_deg, n)
            b = np.searchsorted(e, self.speeds_mps, side="right") - 1
            inside = (b >= 0) & (b < e.size - 1)
            cell = idx[inside] * (e.size - 1) + b[inside]
            if self.weights is None:
                counts = np.bincount(cell, minlength=n * (e.size - 1))
                return counts.reshape(n, e.size - 1) / float(self.speeds_mps.size)
            return np.bincount(cell, weights=self.weights[inside], minlength=n * (e.size - 1)).reshape(n, e.size - 1)
        a = self.scale_mps[:, None]
        k = self.shape[:, None]
        cdf = 1.0 - np.exp(-np.power(np.maximum(e[None, :], 0.0) / a, k))
        return self.frequency[:, None] * np.diff(cdf, axis=1)


def rose_from_table(frequency, scale_mps, shape) -> Rose:
    """A rose given per sector; the frequencies are normalised to sum to exactly one."""
    f = np.asarray(frequency, float)
    return Rose(f / f.sum(), np.asarray(scale_mps, float).copy(), np.asarray(shape, float).copy(), "table")


def rose_from_series(speed_mps, direction_deg, sectors: int = 12, weights=None) -> Rose:
    """A rose from paired speeds and directions: each sector's share of the samples (each sample
    weighed by ``weights``, summing to 1, as the series mean weighs it) and its maximum-likelihood
    Weibull (:func:`weibull_fit_mle`)."""
    v = np.asarray(speed_mps, float)
    d = np.asarray(direction_deg, float)
    idx = sector_of(d, sectors)
    if weights is None:
        share = np.bincount(idx, minlength=sectors) / float(v.size)
    else:
        weights = np.asarray(weights, float)
        share = np.bincount(idx, weights=weights, minlength=sectors)
    fits = [weibull_fit_mle(v[idx == s]) for s in range(sectors)]
    return Rose(share, np.array([f[1] for f in fits]), np.array([f[0] for f in fits]), "series",
                v, d, weights)


def sector_mean_power_kw(rose: Rose, *, sample_power_kw=None, weibull_mean_power_kw=None) -> np.ndarray:
    """Each sector's contribution to the mean power of one free-standing turbine (they sum to
    the all-sector mean power). [kW]

    Table: f_s times the Weibull integral of the sector (``weibull_mean_power_kw(A, k)``).
    Series: the sum of the samples' power (``sample_power_kw``, one value per sample, as the
    gross energy takes it) in the sector, divided by the number of all samples (or weighed as
    the series mean weighs them).
    """
    if rose.source == "series":
        idx = sector_of(rose.directions_deg, rose.sectors)
        p = np.asarray(sample_power_kw, float)
        if rose.weights is None:
            return np.bincount(idx, weights=p, minlength=rose.sectors) / p.size
        return np.bincount(idx, weights=p * rose.weights, minlength=rose.sectors)
    out = np.zeros(rose.sectors)
    for s, (f, a, k) in enumerate(zip(rose.frequency, rose.scale_mps, rose.shape)):
        if f > 0:
            out[s] = f * float(weibull_mean_power_kw(a, k))
    return out
