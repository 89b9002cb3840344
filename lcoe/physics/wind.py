"""Wind climate: Weibull distributions, shear, air density and hourly series."""

from __future__ import annotations

import math
import warnings as _warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from lcoe.inputs.errors import ScenarioError

R_DRY_AIR = 287.05  # J/(kg K), IEC 61400-12-1
P0_PA = 101325.0
Z_90 = 1.2815515655446004
Z_99 = 2.3263478740408408


def weibull_scale_from_mean(mean_speed_mps, shape):
    """Weibull scale A from the mean speed: A = mean / Gamma(1 + 1/k). [m/s]

    References
    ----------
    Standard Weibull distribution moments (also scipy.stats.weibull_min).
    """
    return np.asarray(mean_speed_mps) / _gamma(1.0 + 1.0 / np.asarray(shape))


def weibull_mean(scale_mps, shape):
    """Mean of a Weibull distribution, A * Gamma(1 + 1/k). [m/s]"""
    return np.asarray(scale_mps) * _gamma(1.0 + 1.0 / np.asarray(shape))


def weibull_pdf(speed_mps, scale_mps, shape):
    """Weibull probability density f(v) = k/A (v/A)^(k-1) exp(-(v/A)^k). [1/(m/s)]"""
    v = np.asarray(speed_mps, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = np.where(v > 0, v / scale_mps, 0.0)
        pdf = shape / scale_mps * np.power(x, shape - 1.0) * np.exp(-np.power(x, shape))
    # far in the tail (v / A or its powers overflow, e.g. a scale of 1e-200 m/s) the exponential wins:
    # the density's limit is 0, where the floating-point product inf * 0 would give NaN
    return np.where((v > 0) & ~np.isnan(pdf), pdf, 0.0)


def _gamma(x):
    from scipy.special import gamma
    return gamma(x)


def shear_factor(hub_height_m, height_m, alpha=1.0 / 7.0, roughness_length_m=None):
    """Ratio of hub-height to measurement-height wind speed. [-]

    Power law (hub / h)^alpha, or the neutral log law ln(hub/z0) / ln(h/z0) when a
    roughness length z0 is given.

    References
    ----------
    Power law: common practice in wind-resource assessment (alpha = 1/7 default).
    Log law: neutral atmospheric surface layer, e.g. Manwell, McGowan and Rogers,
    Wind Energy Explained, ch. 2.
    """
    if roughness_length_m is not None:
        return math.log(hub_height_m / roughness_length_m) / math.log(height_m / roughness_length_m)
    return (hub_height_m / height_m) ** alpha


def isa_pressure_pa(elevation_m):
    """Pressure of the ISO 2533 standard troposphere. [Pa]

    p = 101325 * (1 - 2.25577e-5 z)^5.25588.
    """
    return P0_PA * (1.0 - 2.25577e-5 * np.asarray(elevation_m, dtype=float)) ** 5.25588


def air_density(elevation_m=0.0, temperature_c=15.0):
    """Dry-air density from elevation and temperature. [kg/m^3]

    rho = p / (287.05 * (T_C + 273.15)), p from :func:`isa_pressure_pa`.

    References
    ----------
    ISO 2533:1975 standard atmosphere; IEC 61400-12-1 (R = 287.05 J/(kg K)).
    """
    return isa_pressure_pa(elevation_m) / (R_DRY_AIR * (np.asarray(temperature_c, dtype=float) + 273.15))


def isa_density(elevation_m):
    """Density of the ISO 2533 standard atmosphere (temperature lapse 6.5 K/km). [kg/m^3]"""
    t_k = 288.15 - 0.0065 * np.asarray(elevation_m, dtype=float)
    return isa_pressure_pa(elevation_m) / (R_DRY_AIR * t_k)


@dataclass(frozen=True)
class Series:
    """A wind series after cleaning (hourly unless ``step_h`` says otherwise). Speeds at the
    measurement height; ``hours`` counts the samples kept."""

    speed_mps: np.ndarray
    temperature_c: np.ndarray | None
    hours: int
    warnings: tuple[str, ...] = field(default=())
    direction_deg: np.ndarray | None = None   # where the wind comes from, clockwise from north
    timestamps: np.ndarray | None = None      # datetime64[ns], UTC, in the order of the speeds
    step_h: float = 1.0                       # the time step of the record [h]

    @property
    def mean_speed_mps(self) -> float:
        return float(self.speed_mps.mean())


def load_series(path: Path | str, *, key: str = "wind.timeseries", max_missing_share: float = 0.2,
                step_h: float | None = 1.0) -> Series:
    """Load an hourly series ``timestamp, speed_mps[, temperature_c][, direction_deg]``.

    Bad rows (non-numeric, NaN, negative or implausibly high speeds, directions outside
    0..360 degrees) and duplicate timestamps are dropped and reported; gaps in the hourly
    record are counted. A series with more than ``max_missing_share`` of its hours
    missing is refused. ``step_h`` is the record's time step in hours (None: the most
    common step between consecutive timestamps, for a reference series); gaps and
    missing records are counted against it.
    """
    import pandas as pd

    path = Path(path)
    shown = str(path)
    name = str(path.name)

    def fail(msg):
        return ScenarioError(msg, key=key, value=name, file=shown)

    try:
        # utf-8-sig: a byte-order mark, as some spreadsheets write, is not part of the header
        df = pd.read_csv(path, dtype=str, keep_default_na=False, encoding="utf-8-sig")
    except FileNotFoundError:
        raise fail("file not found") from None
    except IsADirectoryError:
        raise fail("is a folder, not a CSV file") from None
    except pd.errors.EmptyDataError:
        raise fail("is empty; expected the header 'timestamp,speed_mps[,temperature_c]' and one row per hour") from None
    except pd.errors.ParserError as exc:
        detail = str(exc).strip().splitlines()[-1] if str(exc).strip() else ""
        raise fail(f"cannot be read as CSV (ParserError: {detail})") from None
    except UnicodeDecodeError:
        raise fail("cannot be read as CSV (UnicodeDecodeError): not UTF-8 text") from None
    except (OSError, ValueError) as exc:
        raise fail(f"cannot be read as CSV ({type(exc).__name__})") from None
    cols = [str(c).strip() for c in df.columns]
    df.columns = cols
    if "timestamp" not in cols or "speed_mps" not in cols:
        raise fail(f"header must be 'timestamp,speed_mps[,temperature_c]', found {','.join(cols)!r}")
    # pandas renames a repeated column 'speed_mps' to 'speed_mps.1'; which one is meant is unclear
    repeated = [c.rsplit(".", 1)[0] for c in cols if "." in c and c.rsplit(".", 1)[1].isdigit()
                and c.rsplit(".", 1)[0] in cols]
    if repeated:
        raise fail(f"column {repeated[0]!r} appears more than once in the header")
    if len(df) == 0:
        raise fail("has no data rows")
    warnings: list[str] = []
    with _warnings.catch_warnings():   # unreadable stamps are counted below; pandas need not warn
        _warnings.filterwarnings("ignore", message="Could not infer format", category=UserWarning)
        ts = pd.to_datetime(df["timestamp"].str.strip(), errors="coerce", utc=True)
    speed = pd.to_numeric(df["speed_mps"].str.strip(), errors="coerce")
    temp = pd.to_numeric(df["temperature_c"].str.strip(), errors="coerce") if "temperature_c" in cols else None
    dirn = pd.to_numeric(df["direction_deg"].str.strip(), errors="coerce") if "direction_deg" in cols else None
    bad_ts = int(ts.isna().sum())
    bad_speed = (speed.isna() | (speed < 0) | (speed > 75)).to_numpy()
    bad_temp = np.zeros(len(df), bool) if temp is None else (temp.isna() | (temp < -60) | (temp > 60)).to_numpy()
    bad_dir = np.zeros(len(df), bool) if dirn is None else (dirn.isna() | (dirn < 0) | (dirn > 360)).to_numpy()
    bad = bad_speed | bad_temp | bad_dir | ts.isna().to_numpy()
    if bad_ts:
        warnings.append(f"{shown}: {bad_ts} row(s) with an unreadable timestamp dropped")
    if bad_speed.sum():
        warnings.append(f"{shown}: {int(bad_speed.sum())} row(s) with a missing, negative or non-numeric speed dropped")
    if bad_temp.sum():
        warnings.append(f"{shown}: {int(bad_temp.sum())} row(s) with a bad temperature dropped")
    if bad_dir.sum():
        warnings.append(f"{shown}: {int(bad_dir.sum())} row(s) with a missing or out-of-range direction "
                        "(0..360 degrees) dropped")
    keep = ~bad
    ts, speed = ts[keep], speed[keep]
    temp = temp[keep] if temp is not None else None
    dirn = dirn[keep] if dirn is not None else None
    dup = ts.duplicated(keep="first").to_numpy()
    if dup.sum():
        warnings.append(f"{shown}: {int(dup.sum())} duplicate timestamp(s); the first of each kept")
        ts, speed = ts[~dup], speed[~dup]
        temp = temp[~dup] if temp is not None else None
        dirn = dirn[~dup] if dirn is not None else None
    n = len(ts)
    if n == 0:
        raise fail(f"has no usable rows ({bad_ts} unreadable timestamp(s), {int(bad_speed.sum())} bad speed(s), "
                   f"{int(bad_temp.sum())} bad temperature(s) of {len(df)})")
    offsets_h = np.sort((ts - ts.min()).dt.total_seconds().to_numpy()) / 3600.0
    if step_h is None:
        diffs = np.round(np.diff(offsets_h), 6)
        diffs = diffs[diffs > 0]
        step_h = float(pd.Series(diffs).mode().iloc[0]) if diffs.size else 1.0
    span_h = int(round(offsets_h[-1] / step_h)) + 1
    expected = max(span_h, n, len(df))
    missing = expected - n
    unit = "hour(s)" if step_h == 1.0 else f"record(s) of {step_h:g} h"
    if missing > 0:
        steps_h = np.diff(offsets_h)
        holes = steps_h[steps_h > 1.5 * step_h]
        gaps = f"; {holes.size} gap(s) in the record, the longest {holes.max() - step_h:.0f} h" if holes.size else ""
        warnings.append(f"{shown}: {missing} of {expected} {unit} missing ({missing / expected:.1%}){gaps}")
    if missing / expected > max_missing_share:
        what = "hours" if step_h == 1.0 else "records"
        raise fail(f"{missing / expected:.1%} of the {what} are missing or bad, more than "
                   f"wind.max_missing_share = {max_missing_share:g} ({missing} of {expected} {unit})")
    if n * step_h < 24 * 30:
        warnings.append(f"{shown}: only {n * step_h:g} hour(s); a long-term energy estimate needs at least a year")
    return Series(speed_mps=speed.to_numpy(float), temperature_c=None if temp is None else temp.to_numpy(float),
                  hours=n, warnings=tuple(warnings), direction_deg=None if dirn is None else dirn.to_numpy(float),
                  timestamps=ts.dt.tz_convert(None).to_numpy(dtype="datetime64[ns]"), step_h=float(step_h))


def fit_weibull(speed_mps: np.ndarray) -> tuple[float, float]:
    """Maximum-likelihood Weibull fit, location fixed at 0. Returns (shape k, scale A).

    References
    ----------
    scipy.stats.weibull_min.fit with floc=0.
    """
    from scipy.stats import weibull_min

    v = np.asarray(speed_mps, float)
    v = v[v > 0]
    if v.size < 10:
        raise ScenarioError("too few positive speeds to fit a Weibull distribution", key="wind.timeseries",
                            has_value=False)
    with _warnings.catch_warnings():   # a nearly constant series makes scipy warn about its moments
        _warnings.simplefilter("ignore", RuntimeWarning)
        k, _, a = weibull_min.fit(v, floc=0)
    return float(k), float(a)
