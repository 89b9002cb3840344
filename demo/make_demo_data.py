"""Make the invented demo data for the invented site "Tallowmere Ridge".

Everything here is made up for the demo: an invented 4.2 MW turbine with a 136 m
rotor whose power curve is built from physics, and two years of hourly wind at 100 m
(Weibull-distributed, with a seasonal and a daily pattern) and temperature.

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


def main() -> None:
    v, p = power_curve()
    lines = ["speed_mps,power_kw"] + [f"{a:g},{b:g}" for a, b in zip(v, p)]
    (HERE / "tallowmere_curve.csv").write_text("\n".join(lines) + "\n", encoding="utf-8")
    stamps, speed, temp = hourly_wind()
    rows = ["timestamp,speed_mps,temperature_c"]
    rows += [f"{str(s)}:00Z,{a:.2f},{b:.1f}" for s, a, b in zip(stamps, speed, temp)]
    (HERE / "tallowmere_wind_hourly.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    print(f"power curve: {len(v)} points, peak {p.max():g} kW; hourly wind: {len(speed)} hours, "
          f"mean {speed.mean():.2f} m/s at 100 m")


if __name__ == "__main__":
    main()
