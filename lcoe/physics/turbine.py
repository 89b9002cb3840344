"""Power curves: validated tables or curves built from physics, and air-density adjustment."""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.paths import check_input_file

BETZ_LIMIT = 16.0 / 27.0
#: a power curve has at most this many rows (one every 0.1 m/s up to 60 m/s needs 601)
MAX_CURVE_ROWS = 1000
#: the fastest speed a curve may name: beyond any cut-out, so no table is sized by a speed [m/s]
MAX_CURVE_SPEED_MPS = 60.0
# a plain decimal number as spreadsheets write it (Python's float() also takes '4_200' and
# non-ASCII digits, which no spreadsheet writes); nan and inf get their own message later
_NUMBER = re.compile(r"[+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?|[+-]?(?:nan|inf|infinity)", re.IGNORECASE)


def excerpt(text: str, limit: int = 40) -> str:
    """A short, quoted piece of a data file for a message (never more than ``limit`` characters of it)."""
    text = str(text)
    return repr(text if len(text) <= limit else text[:limit] + "...")


def parse_number(text: str) -> float:
    """A number cell of a data file; ValueError for anything but a plain decimal number."""
    t = text.strip()
    if not _NUMBER.fullmatch(t):
        raise ValueError(text)
    return float(t)


def swept_area_m2(rotor_diameter_m):
    """Rotor swept area pi D^2 / 4. [m^2]"""
    return math.pi * np.asarray(rotor_diameter_m, float) ** 2 / 4.0


def wind_power_kw(speed_mps, density_kgm3, area_m2, cp=1.0, efficiency=1.0):
    """Power extracted from the wind, 0.5 rho A Cp eta v^3. [kW]

    References
    ----------
    Kinetic energy flux through the rotor disc; Betz (1920) bounds Cp <= 16/27.
    """
    v = np.asarray(speed_mps, float)
    return 0.5 * density_kgm3 * area_m2 * cp * efficiency * v ** 3 / 1000.0


def momentum_thrust_coefficient(cp) -> np.ndarray:
    """Thrust coefficient of an ideal actuator disc with the given power coefficient. [-]

    Cp = 4 a (1 - a)^2 is solved for the axial induction a in 0..1/3 (bisection), then
    Ct = 4 a (1 - a). A power coefficient at or above the Betz limit gives a = 1/3,
    Ct = 8/9; zero power gives Ct = 0. Taken from the electrical power of the curve, this
    is a lower estimate of the rotor's thrust (drivetrain losses lower the Cp seen).

    References
    ----------
    One-dimensional momentum theory of the actuator disc (Betz 1920), e.g. Manwell,
    McGowan and Rogers, Wind Energy Explained, ch. 3.
    """
    c = np.clip(np.nan_to_num(np.asarray(cp, float)), 0.0, BETZ_LIMIT)
    lo, hi = np.zeros(c.shape), np.full(c.shape, 1.0 / 3.0)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        below = 4.0 * mid * (1.0 - mid) ** 2 < c
        lo = np.where(below, mid, lo)
        hi = np.where(below, hi, mid)
    a = 0.5 * (lo + hi)
    return 4.0 * a * (1.0 - a)


def normalised_speed(speed_mps, density_kgm3, reference_density_kgm3):
    """Speed normalisation for pitch-regulated turbines, v_n = v (rho / rho_0)^(1/3). [m/s]

    References
    ----------
    IEC 61400-12-1, power-curve density normalisation (pitch-regulated machines).
    """
    return np.asarray(speed_mps, float) * (density_kgm3 / reference_density_kgm3) ** (1.0 / 3.0)


@dataclass(frozen=True)
class SiteCurve:
    """A power curve at the site's air density: P(v) in kW and the breakpoints of P."""

    kind: str
    rated_power_kw: float
    breaks_mps: np.ndarray          # sorted; P is smooth between consecutive breaks, zero outside
    table_speed_mps: np.ndarray     # table: speeds at the site; physics: unused
    table_power_kw: np.ndarray
    coeff_kw_per_v3: float = 0.0    # physics: P = coeff v^3 inside cut-in..cut-out, capped
    cut_in_mps: float = 0.0
    cut_out_mps: float = 0.0

    def power_kw(self, speed_mps) -> np.ndarray:
        v = np.asarray(speed_mps, float)
        if self.kind == "physics":
            p = np.minimum(self.coeff_kw_per_v3 * v ** 3, self.rated_power_kw)
            return np.where((v >= self.cut_in_mps) & (v < self.cut_out_mps), p, 0.0)
        p = np.interp(v, self.table_speed_mps, self.table_power_kw, left=0.0, right=0.0)
        return np.minimum(p, self.rated_power_kw)

    @property
    def rated_speed_mps(self) -> float:
        """The lowest speed at which the site curve reaches rated power (NaN if never)."""
        if self.kind == "physics":
            if not math.isfinite(self.rated_power_kw) or self.coeff_kw_per_v3 <= 0:
                return float("nan")
            v = (self.rated_power_kw / self.coeff_kw_per_v3) ** (1.0 / 3.0)
            return v if v < self.cut_out_mps else float("nan")
        at = np.nonzero(self.table_power_kw >= self.rated_power_kw * (1 - 1e-9))[0]
        return float(self.table_speed_mps[at[0]]) if at.size else float("nan")


@dataclass(frozen=True)
class PowerCurve:
    """A turbine's power curve as supplied: a table at a reference density, or physics parameters."""

    kind: str                      # "table" | "physics"
    rated_power_kw: float
    rotor_diameter_m: float
    speed_mps: np.ndarray = None   # table
    power_kw: np.ndarray = None    # table
    reference_density_kgm3: float = 1.225
    regulation: str = "pitch"
    cp_max: float = 0.0            # physics
    cut_in_mps: float = 3.0
    cut_out_mps: float = 25.0
    drivetrain_efficiency: float = 1.0
    ct: np.ndarray = None          # table: thrust coefficient at each speed (optional)

    def thrust_coefficient_at(self, speed_mps, density_kgm3) -> np.ndarray:
        """Thrust coefficient at the site. [-]

        With a ``ct`` column: the table, at the speed normalised as the power is
        (pitch-regulated; stall-regulated at the speed itself), zero outside it. Without
        one: :func:`momentum_thrust_coefficient` of the site curve's power coefficient
        P / (0.5 rho A v^3).
        """
        v = np.asarray(speed_mps, float)
        if self.ct is not None:
            vn = v if self.regulation == "stall" else normalised_speed(v, density_kgm3, self.reference_density_kgm3)
            return np.interp(vn, self.speed_mps, self.ct, left=0.0, right=0.0)
        area = float(swept_area_m2(self.rotor_diameter_m))
        with np.errstate(divide="ignore", invalid="ignore"):
            cp = np.where(v > 0, self.power_kw_at(v, density_kgm3) * 1000.0 / (0.5 * density_kgm3 * area * v ** 3),
                          0.0)
        return momentum_thrust_coefficient(cp)

    @property
    def thrust_source(self) -> str:
        """Where the thrust coefficient comes from, in words."""
        return "ct column of the power curve" if self.ct is not None else \
            "momentum theory from the power coefficient (no ct column)"

    def power_kw_at(self, speed_mps, density_kgm3) -> np.ndarray:
        """Power at given speeds and (possibly hourly) densities, as :meth:`at_density` defines it. [kW]"""
        v = np.asarray(speed_mps, float)
        rho = np.asarray(density_kgm3, float)
        rated = self.rated_power_kw
        if self.kind == "physics":
            p = wind_power_kw(v, rho, float(swept_area_m2(self.rotor_diameter_m)), self.cp_max,
                              self.drivetrain_efficiency)
            p = np.minimum(p, rated)
            return np.where((v >= self.cut_in_mps) & (v < self.cut_out_mps), p, 0.0)
        if self.regulation == "stall":
            p = np.interp(v, self.speed_mps, self.power_kw, left=0.0, right=0.0) * rho / self.reference_density_kgm3
        else:
            vn = normalised_speed(v, rho, self.reference_density_kgm3)
            p = np.interp(vn, self.speed_mps, self.power_kw, left=0.0, right=0.0)
        return np.minimum(p, rated)

    def steps_kw_at(self, density_kgm3) -> list[tuple[np.ndarray, np.ndarray]]:
        """Where :meth:`power_kw_at` jumps, at each density: a list of (speed [m/s], change [kW]).

        P(v) is continuous except at the ends of its range: at the first table point (or
        the cut-in) it rises from zero to the power there, at the last point (or the
        cut-out) it falls back to zero. ``change`` is the power just above the speed minus
        the power just below it; the arrays have the shape of ``density_kgm3``.
        """
        rho = np.asarray(density_kgm3, float)
        rated = self.rated_power_kw
        out = []
        if self.kind == "physics":
            area = float(swept_area_m2(self.rotor_diameter_m))
            for v, sign in ((self.cut_in_mps, 1.0), (self.cut_out_mps, -1.0)):
                p = np.minimum(wind_power_kw(v, rho, area, self.cp_max, self.drivetrain_efficiency), rated)
                out.append((np.full(rho.shape, float(v)), sign * p))
            return out
        for at, sign in ((0, 1.0), (-1, -1.0)):
            s, p = float(self.speed_mps[at]), float(self.power_kw[at])
            if self.regulation == "stall":
                speed, power = np.full(rho.shape, s), p * rho / self.reference_density_kgm3
            else:
                speed, power = s / (rho / self.reference_density_kgm3) ** (1.0 / 3.0), np.full(rho.shape, p)
            out.append((speed, sign * np.minimum(power, rated)))
        return out

    def at_density(self, density_kgm3: float) -> SiteCurve:
        """The curve at the site: density-adjusted table, or physics at the site density.

        Table, pitch-regulated: P_site(v) = P_curve(v (rho / rho_curve)^(1/3)), capped at
        rated power (IEC 61400-12-1 speed normalisation). Table, stall-regulated:
        P_site = P_curve rho / rho_curve, capped. Physics: P = min(rated,
        0.5 rho A Cp eta v^3) between cut-in and cut-out, at the site density.
        """
        rated = self.rated_power_kw
        if self.kind == "physics":
            coeff = 0.5 * density_kgm3 * float(swept_area_m2(self.rotor_diameter_m)) * self.cp_max \
                * self.drivetrain_efficiency / 1000.0
            breaks = [self.cut_in_mps, self.cut_out_mps]
            if math.isfinite(rated):
                vr = (rated / coeff) ** (1.0 / 3.0)
                if self.cut_in_mps < vr < self.cut_out_mps:
                    breaks.append(vr)
            return SiteCurve("physics", rated, np.array(sorted(breaks)), np.empty(0), np.empty(0),
                             coeff_kw_per_v3=coeff, cut_in_mps=self.cut_in_mps, cut_out_mps=self.cut_out_mps)
        if self.regulation == "stall":
            v = self.speed_mps.copy()
            p = self.power_kw * density_kgm3 / self.reference_density_kgm3
        else:
            v = self.speed_mps / (density_kgm3 / self.reference_density_kgm3) ** (1.0 / 3.0)
            p = self.power_kw.copy()
        breaks = list(v)
        # where a segment crosses rated power the cap adds a kink
        over = p > rated
        for i in range(len(v) - 1):
            if over[i] != over[i + 1]:
                breaks.append(v[i] + (rated - p[i]) * (v[i + 1] - v[i]) / (p[i + 1] - p[i]))
        return SiteCurve("table", rated, np.array(sorted(breaks)), v, p)


def physics_curve(rated_power_kw, rotor_diameter_m, cp_max, cut_in_mps=3.0, cut_out_mps=25.0,
                  drivetrain_efficiency=1.0) -> PowerCurve:
    """A power curve built from physics: min(rated, 0.5 rho A Cp eta v^3), cut-in to cut-out.

    The rated speed follows from the rated power. ``cp_max`` may not exceed the Betz
    limit 16/27 (Betz 1920).
    """
    if cp_max > BETZ_LIMIT:
        raise ScenarioError("must not exceed the Betz limit 16/27 = 0.5926", key="turbine.cp_max", value=cp_max)
    if cut_out_mps <= cut_in_mps:
        raise ScenarioError(f"must be above turbine.cut_in_mps = {cut_in_mps}", key="turbine.cut_out_mps",
                            value=cut_out_mps)
    return PowerCurve("physics", float(rated_power_kw), float(rotor_diameter_m), cp_max=float(cp_max),
                      cut_in_mps=float(cut_in_mps), cut_out_mps=float(cut_out_mps),
                      drivetrain_efficiency=float(drivetrain_efficiency))


def table_curve(speed_mps, power_kw, rated_power_kw, rotor_diameter_m, *, reference_density_kgm3=1.225,
                regulation="pitch", source="power curve", key="turbine.power_curve",
                rated_tolerance=0.02, file: str | None = None, rows=None, ct=None) -> PowerCurve:
    """A validated power-curve table (speeds sorted and unique, power >= 0, peak near rated,
    a thrust coefficient ``ct`` where given in 0..1).

    ``file`` names the data file the table came from (the error then begins with it);
    ``rows`` gives each point's line number in that file (default: 2, 3, ...).
    """
    v = np.asarray(speed_mps, float)
    p = np.asarray(power_kw, float)
    line = (lambda i: int(rows[i])) if rows is not None else (lambda i: int(i) + 2)
    where = "" if file else f" in {source}"
    value = Path(source).name

    def fail(msg, detail=""):
        return ScenarioError(msg + where + detail, key=key, value=value, file=file)

    if v.size < 2:
        raise fail("needs at least two rows")
    if v.shape != p.shape:
        raise fail(f"has {v.size} speed(s) but {p.size} power value(s)")
    if not (np.all(np.isfinite(v)) and np.all(np.isfinite(p))):
        i = int(np.nonzero(~(np.isfinite(v) & np.isfinite(p)))[0][0])
        col, val = ("speed_mps", v[i]) if not np.isfinite(v[i]) else ("power_kw", p[i])
        raise fail(f"row {line(i)} has a missing or non-finite value",
                   f" ({col} = {val:g}); every cell must be a number")
    if np.any(v < 0):
        i = int(np.nonzero(v < 0)[0][0])
        raise fail(f"row {line(i)}: speed must be >= 0", f" (speed_mps = {v[i]:g})")
    if np.any(v > MAX_CURVE_SPEED_MPS):
        i = int(np.nonzero(v > MAX_CURVE_SPEED_MPS)[0][0])
        raise fail(f"row {line(i)}: speed must be <= {MAX_CURVE_SPEED_MPS:g} m/s",
                   f" (speed_mps = {v[i]:g}); a power curve ends at its cut-out speed")
    d = np.diff(v)
    if np.any(d == 0):
        i = int(np.nonzero(d == 0)[0][0]) + 1
        raise fail(f"row {line(i)}: duplicate speed {v[i]:g} m/s", f" (also on row {line(i - 1)})")
    if np.any(d < 0):
        i = int(np.nonzero(d < 0)[0][0]) + 1
        raise fail(f"row {line(i)}: speeds must increase (sorted ascending)",
                   f"; {v[i]:g} m/s follows {v[i - 1]:g} m/s")
    if np.any(p < 0):
        i = int(np.nonzero(p < 0)[0][0])
        raise fail(f"row {line(i)}: power must be >= 0", f" (power_kw = {p[i]:g})")
    peak = float(p.max())
    if peak > 0 and abs(peak * 1000.0 - rated_power_kw) <= 0.1 * rated_power_kw:
        raise fail(f"peak power {peak:g} looks like MW; the column power_kw must be in kW "
                   f"(turbine.rated_power_kw = {rated_power_kw:g})")
    if peak > 0 and abs(peak / 1000.0 - rated_power_kw) <= 0.1 * rated_power_kw:
        raise fail(f"peak power {peak:g} looks like W; the column power_kw must be in kW "
                   f"(turbine.rated_power_kw = {rated_power_kw:g})")
    if abs(peak - rated_power_kw) > rated_tolerance * rated_power_kw:
        off = (peak - rated_power_kw) / rated_power_kw
        raise fail(f"peak power {peak:g} kW differs from turbine.rated_power_kw = {rated_power_kw:g} "
                   f"by more than {rated_tolerance:.0%}", f" ({off:+.1%})")
    # Betz (1920): a rotor takes at most 16/27 of the power 0.5 rho A v^3 the wind carries through it
    limit = BETZ_LIMIT * wind_power_kw(v, reference_density_kgm3, float(swept_area_m2(rotor_diameter_m)))
    over = p > 1.01 * limit + 1.0
    if np.any(over):
        i = int(np.nonzero(over)[0][0])
        raise fail(f"row {line(i)}: {p[i]:g} kW at {v[i]:g} m/s is more than a {rotor_diameter_m:g} m rotor can take "
                   f"from the wind (the Betz limit 16/27 x 0.5 rho A v^3 is {limit[i]:.0f} kW there)")
    if ct is not None:
        c = np.asarray(ct, float)
        bad = ~np.isfinite(c) | (c < 0) | (c > 1)
        if np.any(bad):
            i = int(np.nonzero(bad)[0][0])
            raise fail(f"row {line(i)}: ct must be a thrust coefficient between 0 and 1", f" (ct = {c[i]:g})")
        ct = c
    return PowerCurve("table", float(rated_power_kw), float(rotor_diameter_m), speed_mps=v, power_kw=p,
                      reference_density_kgm3=float(reference_density_kgm3), regulation=regulation, ct=ct)


def read_curve_csv(path: Path | str, rated_power_kw, rotor_diameter_m, *, reference_density_kgm3=1.225,
                   regulation="pitch", key="turbine.power_curve") -> PowerCurve:
    """Read ``speed_mps, power_kw[, ct]`` from a CSV file and validate it as a table curve.

    The optional third column ``ct`` is the thrust coefficient (for wake losses).
    Errors begin with the file and give the line number of the bad row.
    """
    path = Path(path)
    name = path.name
    shown = str(path)

    def fail(msg):
        return ScenarioError(msg, key=key, value=name, file=shown)

    check_input_file(path, fail, what="a CSV file")
    try:
        # utf-8-sig: a byte-order mark, as some spreadsheets write, is not part of the header
        with path.open(newline="", encoding="utf-8-sig") as fh:
            rows, filled = [], 0
            for row in csv.reader(fh):     # read no further than the row cap (a file may hold millions)
                rows.append(row)
                filled += bool(row and any(c.strip() for c in row))
                if filled > MAX_CURVE_ROWS + 1:
                    raise fail(f"has more than {MAX_CURVE_ROWS:,} rows; a power curve has at most "
                               f"{MAX_CURVE_ROWS:,} (one every 0.5 m/s to {MAX_CURVE_SPEED_MPS:g} m/s needs 121)")
    except FileNotFoundError:
        raise fail("file not found") from None
    except IsADirectoryError:
        raise fail("is a folder, not a CSV file") from None
    except UnicodeDecodeError:
        raise fail("cannot be read (UnicodeDecodeError): not UTF-8 text") from None
    except csv.Error as exc:
        raise fail(f"cannot be read as CSV ({exc})") from None
    except OSError as exc:
        raise fail(f"cannot be read ({type(exc).__name__}: {exc.strerror})") from None
    numbered = [(i, r) for i, r in enumerate(rows, start=1) if r and any(c.strip() for c in r)]
    if not numbered:
        raise fail("is empty; expected the header 'speed_mps,power_kw' and one row per speed")
    header = [c.strip() for c in numbered[0][1]]
    if header[:2] != ["speed_mps", "power_kw"]:
        hint = ""
        if header[:1] == ["speed_mps"] and len(header) > 1 and header[1].lower() in ("power_mw", "power"):
            hint = " (power in kW, named power_kw)"
        elif len(header) == 1 and (";" in header[0] or "\t" in header[0]):
            hint = " (columns separated by commas)"
        raise fail(f"header must be 'speed_mps,power_kw'{hint}, found {excerpt(','.join(header))}")
    with_ct = len(header) > 2 and header[2].lower() == "ct"
    width = 3 if with_ct else 2
    speeds, powers, cts, lines = [], [], [], []
    for i, r in numbered[1:]:
        if len(r) < width:
            raise fail(f"row {i} has {len(r)} column(s), expected {width}")
        try:
            speeds.append(parse_number(r[0]))
            powers.append(parse_number(r[1]))
            if with_ct:
                cts.append(parse_number(r[2]))
        except ValueError:
            raise fail(f"row {i} is not numeric ({excerpt(','.join(r))})") from None
        lines.append(i)
    return table_curve(speeds, powers, rated_power_kw, rotor_diameter_m, reference_density_kgm3=reference_density_kgm3,
                       regulation=regulation, source=shown, key=key, file=shown, rows=lines,
                       ct=cts if with_ct else None)
