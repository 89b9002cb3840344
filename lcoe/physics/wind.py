"""Wind climate: Weibull distributions, shear, air density and hourly series."""

from __future__ import annotations

import math
import warnings as _warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import isa_temperature_c

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
    return air_density(elevation_m, isa_temperature_c(np.asarray(elevation_m, dtype=float)))


#: a series is read up to this many years of record, whatever its time step
MAX_SERIES_YEARS = 30
#: rows read at most, before parsing: 30 years of 10-minute data
MAX_SERIES_ROWS = int(MAX_SERIES_YEARS * 365.25 * 24 * 6)
#: the time step of a series: from one minute to one hour [s]
MIN_STEP_S, MAX_STEP_S = 60.0, 3600.0
#: mean speed above which a record cannot be wind in m/s: no measured site comes near it [m/s]
MAX_MEAN_SPEED_MPS = 20.0
#: each calendar month needs at least this much of a month's data for an annual energy
MIN_MONTH_COVERAGE = 0.5
MONTHS = ("January", "February", "March", "April", "May", "June", "July", "August", "September", "October",
          "November", "December")
#: mean length of each calendar month over the 400-year Gregorian cycle [days]
MONTH_DAYS = np.array([31, 28 + 97 / 400, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], float)


@dataclass(frozen=True)
class Series:
    """A wind series after cleaning. Speeds at the measurement height; ``hours`` counts the
    samples kept, ``step_h`` is the time step (the most common time between rows).

    ``month_coverage`` is the data in each calendar month counted in months (2.0: two
    Januaries), and ``weights`` (summing to 1; None unless every calendar month has data)
    weigh each calendar month by its length, whatever its share of the record.
    """

    speed_mps: np.ndarray
    temperature_c: np.ndarray | None
    hours: int
    warnings: tuple[str, ...] = field(default=())
    direction_deg: np.ndarray | None = None   # where the wind comes from, clockwise from north
    timestamps: np.ndarray | None = None      # datetime64[ns], UTC, in the order of the speeds
    step_h: float = 1.0                       # the time step of the record [h]
    month_coverage: tuple[float, ...] = field(default=(0.0,) * 12)
    weights: np.ndarray | None = None
    years: float = 0.0

    @property
    def mean_speed_mps(self) -> float:
        if self.weights is not None:
            return float(self.weights @ self.speed_mps)
        return float(self.speed_mps.mean())

    @property
    def step_s(self) -> float:
        return self.step_h * 3600.0

    @property
    def step_text(self) -> str:
        return step_name(self.step_s)


def step_name(step_s: float) -> str:
    if step_s == 3600:
        return "hourly"
    return f"{step_s / 60:g}-minute" if step_s < 3600 else f"{step_s / 3600:g}-hour"


def _count_lines(path: Path, stop: int) -> int:
    """Lines in a file, counted in blocks and no further than ``stop``."""
    n = 0
    with open(path, "rb") as fh:
        while n <= stop:
            block = fh.read(1 << 20)
            if not block:
                break
            n += block.count(b"\n")
    return n


def load_series(path: Path | str, *, key: str = "wind.timeseries", max_missing_share: float = 0.2,
                step_h: float | None = None, max_step_h: float | None = MAX_STEP_S / 3600.0) -> Series:
    """Load a wind series ``timestamp, speed_mps[, temperature_c][, direction_deg]``.

    Bad rows (non-numeric, NaN, negative or implausibly high speeds, directions outside
    0..360 degrees) and duplicate timestamps are dropped and reported. The time step is
    ``step_h`` hours, or (None, the default) the most common time between rows, from one
    minute to ``max_step_h`` (hourly for a site series; None: any, for a reference series);
    missing time is counted against it, and a series with more than ``max_missing_share``
    of its steps missing is refused. Coverage of each calendar month is reported;
    :func:`require_year` refuses a record that does not cover the year.
    """
    import pandas as pd

    from lcoe.inputs.paths import check_input_file
    from lcoe.physics.turbine import excerpt

    path = Path(path)
    shown = str(path)
    name = str(path.name)

    def fail(msg):
        return ScenarioError(msg, key=key, value=name, file=shown)

    check_input_file(path, fail, what="a CSV file")
    try:
        lines = _count_lines(path, MAX_SERIES_ROWS + 1)
    except OSError as exc:
        raise fail(f"cannot be read ({exc.strerror or type(exc).__name__})") from None
    if lines > MAX_SERIES_ROWS + 1:
        raise fail(f"has more than {MAX_SERIES_ROWS:,} rows; a series is read up to {MAX_SERIES_ROWS:,} "
                   f"({MAX_SERIES_YEARS} years of 10-minute data)")
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
    except (OSError, ValueError, MemoryError) as exc:
        raise fail(f"cannot be read as CSV ({type(exc).__name__})") from None
    cols = [str(c).strip() for c in df.columns]
    df.columns = cols
    if "timestamp" not in cols or "speed_mps" not in cols:
        raise fail(f"header must be 'timestamp,speed_mps[,temperature_c]', found {excerpt(','.join(cols))}")
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
    mean = float(speed.mean())
    if mean > MAX_MEAN_SPEED_MPS:
        raise fail(f"the mean speed is {mean:.1f} m/s; no site has a mean above {MAX_MEAN_SPEED_MPS:g} m/s "
                   f"(is the column in km/h or knots? speed_mps is in m/s)")
    seconds = np.sort((ts - ts.min()).dt.total_seconds().to_numpy())
    diffs = np.diff(seconds)
    step = 3600.0 if step_h is None else float(step_h) * 3600.0
    if step_h is None and diffs.size:
        values, counts = np.unique(np.round(diffs[diffs > 0], 3), return_counts=True)
        step = float(values[np.argmax(counts)]) if values.size else 3600.0
        if step < MIN_STEP_S:
            raise fail(f"rows are {step:g} s apart; a series is read at 1-minute to hourly steps")
        if max_step_h is not None and step > max_step_h * 3600.0:
            raise fail(f"rows are {step / 3600:g} h apart (the most common step); the energy needs hourly or finer "
                       "data (a mean over hours hides the speeds the power curve sees)")
        regular = float(np.mean(np.round(diffs, 3) == step))
        if regular < 0.5:
            warnings.append(f"{shown}: the time between rows is irregular (only {regular:.0%} of them are "
                            f"{step_name(step)} steps)")
    span_s = float(seconds[-1]) if seconds.size else 0.0
    years = (span_s + step) / (365.25 * 86400.0)
    if years > MAX_SERIES_YEARS + 0.01:
        raise fail(f"covers {years:.1f} years; a series is read up to {MAX_SERIES_YEARS} years")
    hourly = step == 3600.0
    unit = "hour(s)" if hourly else f"{step_name(step)} step(s)"
    expected = max(int(round(span_s / step)) + 1, n, len(df))
    missing = expected - n
    if missing > 0:
        holes = diffs[diffs > 1.5 * step]
        gaps = f"; {holes.size} gap(s) in the record, the longest {(holes.max() - step) / 3600:.0f} h" \
            if holes.size else ""
        warnings.append(f"{shown}: {missing} of {expected} {unit} missing ({missing / expected:.1%}){gaps}")
    if missing / expected > max_missing_share:
        what = "hours" if hourly else "time steps"
        raise fail(f"{missing / expected:.1%} of the {what} are missing or bad, more than "
                   f"wind.max_missing_share = {max_missing_share:g} ({missing} of {expected} {unit})")
    month = ts.dt.month.to_numpy() - 1
    per_month = np.bincount(month, minlength=12).astype(float)
    coverage = per_month * step / (MONTH_DAYS * 86400.0)
    weights = None
    if np.all(per_month > 0):
        weights = (MONTH_DAYS / MONTH_DAYS.sum() / per_month)[month]
    return Series(speed_mps=speed.to_numpy(float), temperature_c=None if temp is None else temp.to_numpy(float),
                  hours=n, warnings=tuple(warnings), direction_deg=None if dirn is None else dirn.to_numpy(float),
                  timestamps=ts.dt.tz_convert(None).to_numpy(dtype="datetime64[ns]"), step_h=step / 3600.0,
                  month_coverage=tuple(float(c) for c in coverage), weights=weights, years=years)


def require_year(series: Series, path: Path | str, *, key: str = "wind.timeseries") -> list[str]:
    """Refuse a series that cannot give an annual energy; return the notes on how it is weighted.

    Every calendar month needs at least half a month of data (a year or more of record):
    a summer alone, or one January, says nothing of the year. Months covered unequally (a
    record of 18 months) are weighted by their length, not by their share of the record.
    """
    path = Path(path)
    cov = np.asarray(series.month_coverage)
    thin = [MONTHS[m] for m in range(12) if cov[m] < MIN_MONTH_COVERAGE]
    if thin:
        have = 12 - len(thin)
        listed = ", ".join(thin[:3]) + (f" and {len(thin) - 3} more" if len(thin) > 3 else "")
        raise ScenarioError(f"covers {have} of the 12 calendar months well enough: too little data in {listed}; "
                            f"an annual energy needs at least half of every calendar month (a year or more of "
                            f"record)", key=key, value=path.name, file=str(path))
    notes = []
    if cov.max() > 1.25 * cov.min():
        notes.append(f"{path}: calendar months are covered unequally ({coverage_text(cov)} months of data); each "
                     "month weighs by its length in the energy, not by its share of the record")
    return notes


def coverage_text(coverage) -> str:
    return ", ".join(f"{MONTHS[m][:3]} {c:.1f}" for m, c in enumerate(coverage))


def fit_weibull(speed_mps: np.ndarray) -> tuple[float, float]:
    """Maximum-likelihood Weibull fit, location fixed at 0. Returns (shape k, scale A).

    References
    ----------
    scipy.stats.weibull_min.fit with floc=0.
    """
    from scipy.stats import weibull_min

    v = np.asarray(speed_mps, float)
    v = v[v > 0]
    if v.size > 200_000:        # the fit's time grows with the rows; evenly spaced ones tell the same
        v = v[:: int(math.ceil(v.size / 200_000))]
    if v.size < 10:
        raise ScenarioError("too few positive speeds to fit a Weibull distribution", key="wind.timeseries",
                            has_value=False)
    with _warnings.catch_warnings():   # a nearly constant series makes scipy warn about its moments
        _warnings.simplefilter("ignore", RuntimeWarning)
        k, _, a = weibull_min.fit(v, floc=0)
    return float(k), float(a)
