"""Make the invented demo data for the invented site "Tallowmere Ridge".

Everything here is made up for the demo: an invented 4.2 MW turbine with a 136 m
rotor whose power curve is built from physics (with an invented thrust curve), two
years of hourly wind at 100 m (Weibull-distributed, with a seasonal and a daily
pattern) and temperature, and for the layout demo a 14-turbine layout, 12 months of
hourly site wind with directions and a 20-year, 6-hourly reference series with
directions, made from one invented weather record so that the two correlate.

    python demo/make_demo_data.py        # rewrites the files beside this script
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
from scipy import stats

HERE = Path(__file__).resolve().parent

RATED_KW = 4200.0
ROTOR_M = 136.0
CP_MAX = 0.47           # invented
DRIVETRAIN = 0.94       # invented
CUT_IN, CUT_OUT = 3.0, 25.0
RHO_CURVE = 1.225

MEAN_SPEED_100M = 7.4   # invented
WEIBULL_K = 2.1         # invented
MEAN_TEMP_C = 8.5       # invented
YEARS = 2


def power_curve() -> tuple[np.ndarray, np.ndarray]:
    """0.5 rho A Cp eta v^3 with a rounded knee into rated power, 0.5 m/s steps, kW."""
    v = np.arange(0.0, CUT_OUT + 1e-9, 0.5)
    area = math.pi * ROTOR_M ** 2 / 4.0
    cubic = 0.5 * RHO_CURVE * area * CP_MAX * DRIVETRAIN * v ** 3 / 1000.0
    m = 10.0  # soft minimum of the cubic and rated power: a rounded knee, as real machines show
    with np.errstate(divide="ignore"):
        p = np.where(cubic > 0, (cubic ** -m + RATED_KW ** -m) ** (-1.0 / m), 0.0)
    p = np.where(v < CUT_IN, 0.0, p)
    p = np.where(p > 0.995 * RATED_KW, RATED_KW, p)
    return v, np.round(p, 1)


def thrust_curve(v: np.ndarray) -> np.ndarray:
    """An invented thrust coefficient: 0.80 up to 9 m/s, falling as (9 / v)^2.2 above, 0 outside cut-in..cut-out."""
    ct = np.minimum(0.80, 0.80 * (9.0 / np.maximum(v, 1e-9)) ** 2.2)
    return np.round(np.where((v >= CUT_IN) & (v <= CUT_OUT), ct, 0.0), 3)


# ---- the layout demo (all invented): a ridge running NNW-SSE across the prevailing west-south-west wind
RIDGE_BEARING_DEG = 160.0
REF_START, REF_YEARS = np.datetime64("2005-01-01T00:00"), 20      # 2005-2024
SITE_YEAR = 2024
SITE_ANNUAL_FACTOR = 1.045        # lifts the measured year, which the drawn weather left calm, to about 5 % below the long term
VEER_DEG = 8.0                    # site direction minus reference direction


def ridge_layout(seed: int = 20260611) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Nine turbines along the crest 3.6 rotor diameters apart, five on a shoulder 7 diameters to the east."""
    rng = np.random.default_rng(seed)
    b = math.radians(RIDGE_BEARING_DEG)
    along = np.array([math.sin(b), math.cos(b)])
    east = np.array([math.cos(b), -math.sin(b)])     # perpendicular, towards the east-north-east
    crest = [i * 3.6 * ROTOR_M * along + 25.0 * math.sin(i / 2.5) * east for i in range(9)]
    shoulder = [(1.0 + 1.6 * i) * 3.6 * ROTOR_M * along + 7.0 * ROTOR_M * east for i in range(5)]
    pos = np.array(crest + shoulder) + rng.normal(0.0, 15.0, (14, 2))
    pos -= pos.min(axis=0) - 100.0
    return [f"T{i + 1:02d}" for i in range(14)], np.round(pos[:, 0], 1), np.round(pos[:, 1], 1)


def _ar1(rng, n: int, tau_h: float) -> np.ndarray:
    """A unit-variance Gaussian AR(1) with memory tau (hours)."""
    from scipy.signal import lfilter

    phi = math.exp(-1.0 / tau_h)
    e = rng.standard_normal(n) * math.sqrt(1 - phi ** 2)
    e[0] = rng.standard_normal()
    return lfilter([1.0], [1.0, -phi], e)


def weather(seed: int = 20260612):
    """20 years of invented hourly weather: stamps, the site's true 100 m speed and direction, and the
    reference's speed and direction (the same weather seen by a coarser source, with its own noise)."""
    rng = np.random.default_rng(seed)
    hours = int((np.datetime64(f"{2005 + REF_YEARS}-01-01T00:00") - REF_START) / np.timedelta64(1, "h"))
    stamps = REF_START + np.arange(hours).astype("timedelta64[h]")
    t = np.arange(hours)
    # weather regimes with a persistence of about three days: west-south-west 65 %, north-east 25 %, north 10 %
    regimes = np.array([250.0, 50.0, 350.0])
    runs = rng.geometric(1.0 / 72.0, size=hours // 10)
    labels = rng.choice(3, size=runs.size, p=[0.65, 0.25, 0.10])
    regime = np.repeat(labels, runs)[:hours]
    direction = np.mod(regimes[regime] + 30.0 * _ar1(rng, hours, 12.0), 360.0)
    strength = np.array([1.08, 0.90, 0.80])[regime]
    u = stats.norm.cdf(_ar1(rng, hours, 30.0))
    day_of_year = (t / 24.0) % 365.25
    season = 1.0 + 0.12 * np.cos(2 * math.pi * (day_of_year - 15) / 365.25)
    diurnal = 1.0 + 0.05 * np.cos(2 * math.pi * (t % 24 - 15) / 24.0)
    year = stamps.astype("datetime64[Y]").astype(int) + 1970
    annual = 1.0 + 0.045 * rng.standard_normal(REF_YEARS)
    annual[SITE_YEAR - 2005] = SITE_ANNUAL_FACTOR
    scale = MEAN_SPEED_100M / math.gamma(1 + 1 / WEIBULL_K)
    truth = stats.weibull_min.ppf(u, WEIBULL_K, scale=scale) * season * diurnal * strength * annual[year - 2005]
    truth *= MEAN_SPEED_100M / truth.mean()
    reference = np.maximum(0.86 * truth * (1.0 + 0.22 * _ar1(rng, hours, 6.0)), 0.0)
    site = np.maximum(truth * (1.0 + 0.18 * _ar1(rng, hours, 4.0)), 0.0)
    site_dir = np.mod(direction + VEER_DEG + 12.0 * rng.standard_normal(hours), 360.0)
    return stamps, site, site_dir, reference, direction


def hourly_wind(seed: int = 20260501) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Hourly speeds with Weibull marginals, persistence, a winter peak and an afternoon peak."""
    rng = np.random.default_rng(seed)
    hours = 8760 * YEARS
    t = np.arange(hours)
    # persistent weather: AR(1) Gaussian with a 30-hour memory, mapped to uniform
    phi = math.exp(-1.0 / 30.0)
    z = np.empty(hours)
    z[0] = rng.standard_normal()
    eps = rng.standard_normal(hours) * math.sqrt(1 - phi ** 2)
    for i in range(1, hours):
        z[i] = phi * z[i - 1] + eps[i]
    u = stats.norm.cdf(z)
    day_of_year = (t / 24.0) % 365.0
    hour_of_day = t % 24
    season = 1.0 + 0.12 * np.cos(2 * math.pi * (day_of_year - 15) / 365.0)      # windier in winter
    diurnal = 1.0 + 0.06 * np.cos(2 * math.pi * (hour_of_day - 15) / 24.0)      # afternoon peak
    scale = MEAN_SPEED_100M / math.gamma(1 + 1 / WEIBULL_K)
    speed = stats.weibull_min.ppf(u, WEIBULL_K, scale=scale) * season * diurnal
    speed *= MEAN_SPEED_100M / speed.mean()
    temp = MEAN_TEMP_C - 7.0 * np.cos(2 * math.pi * (day_of_year - 20) / 365.0) \
        + 3.0 * np.cos(2 * math.pi * (hour_of_day - 15) / 24.0) + rng.normal(0, 1.5, hours)
    stamps = np.datetime64("2024-01-01T00:00") + t.astype("timedelta64[h]")
    return stamps, np.round(speed, 2), np.round(temp, 1)


def write_layout_demo() -> str:
    names, x, y = ridge_layout()
    rows = ["name,x_m,y_m"] + [f"{n},{a:.1f},{b:.1f}" for n, a, b in zip(names, x, y)]
    (HERE / "tallowmere_ridge_layout.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    stamps, site, site_dir, ref, ref_dir = weather()
    six = np.arange(0, stamps.size, 6)
    rows = ["timestamp,speed_mps,direction_deg"]
    rows += [f"{str(s)[:13]}:00Z,{a:.2f},{b:.0f}" for s, a, b in zip(stamps[six], ref[six], ref_dir[six])]
    (HERE / "tallowmere_reference_20yr.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    year = stamps.astype("datetime64[Y]").astype(int) + 1970
    keep = np.nonzero(year == SITE_YEAR)[0]
    rng = np.random.default_rng(20260613)
    outage = (keep >= keep[0] + 24 * 70) & (keep < keep[0] + 24 * 73)   # a three-day logger outage in March
    keep = keep[~outage & (rng.random(keep.size) > 0.01)]               # and 1 % scattered dropouts
    rows = ["timestamp,speed_mps,direction_deg"]
    rows += [f"{str(s)[:13]}:00Z,{a:.2f},{b:.0f}" for s, a, b in zip(stamps[keep], site[keep], site_dir[keep])]
    (HERE / "tallowmere_site_12months.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    return (f"layout: {len(names)} turbines; reference: {six.size} records of 6 h, mean {ref[six].mean():.2f} m/s; "
            f"site: {keep.size} hours in {SITE_YEAR}, mean {site[keep].mean():.2f} m/s")


def main() -> None:
    v, p = power_curve()
    ct = thrust_curve(v)
    lines = ["speed_mps,power_kw,ct"] + [f"{a:g},{b:g},{c:g}" for a, b, c in zip(v, p, ct)]
    (HERE / "tallowmere_curve.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    stamps, speed, temp = hourly_wind()
    rows = ["timestamp,speed_mps,temperature_c"]
    rows += [f"{str(s)}:00Z,{a:.2f},{b:.1f}" for s, a, b in zip(stamps, speed, temp)]
    (HERE / "tallowmere_wind_hourly.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    print(f"power curve: {len(v)} points, peak {p.max():g} kW; hourly wind: {len(speed)} hours, "
          f"mean {speed.mean():.2f} m/s at 100 m")
    print(write_layout_demo())


if __name__ == "__main__":
    main()
