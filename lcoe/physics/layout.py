"""Turbine positions: a CSV of ``x_m, y_m`` (optionally with ``name``) or a regular grid, and the
checks a layout must pass (a sane extent, no two turbines closer than one rotor diameter).

Coordinates are metres on a flat map, x to the east and y to the north (projected
coordinates such as UTM eastings and northings are fine: only differences matter).
"""

from __future__ import annotations

import csv
import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.physics.datafile import check_data_file

MAX_TURBINES = 1000            # positions in one layout
MAX_FILE_BYTES = 2_000_000     # a layout CSV
MAX_COORDINATE_M = 1.0e7       # |x|, |y|: beyond any projected coordinate on Earth
MAX_EXTENT_M = 50_000.0        # the farm's bounding box: a wider one is most likely a units mistake
_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


@dataclass(frozen=True)
class Layout:
    """Turbine positions (metres, x east, y north) and their names."""

    names: tuple[str, ...]
    x_m: np.ndarray
    y_m: np.ndarray
    source: str                    # "file" | "grid"

    @property
    def turbines(self) -> int:
        return int(self.x_m.size)

    def nearest_spacing_m(self) -> float:
        """The smallest distance between two turbines (NaN for one turbine). [m]"""
        return float(_pair_distances(self.x_m, self.y_m)[0])


def _pair_distances(x, y) -> tuple[float, int, int]:
    """(smallest distance, i, j) over all pairs i < j."""
    n = x.size
    if n < 2:
        return float("nan"), -1, -1
    d = np.hypot(x[:, None] - x[None, :], y[:, None] - y[None, :])
    d[np.tril_indices(n)] = np.inf
    flat = int(np.argmin(d))
    i, j = divmod(flat, n)
    return float(d[i, j]), i, j


def check_positions(names, x, y, rotor_diameter_m: float, fail) -> None:
    """A layout's sanity rules; ``fail(message)`` builds the error to raise."""
    if x.size > 1:
        span_x, span_y = float(np.ptp(x)), float(np.ptp(y))
        if max(span_x, span_y) > MAX_EXTENT_M:
            raise fail(f"the turbines span {span_x / 1000:.1f} km x {span_y / 1000:.1f} km, more than "
                       f"{MAX_EXTENT_M / 1000:.0f} km across; coordinates must be in metres")
        dist, i, j = _pair_distances(x, y)
        if dist < rotor_diameter_m:
            raise fail(f"turbines {names[i]} and {names[j]} are {dist:.1f} m apart, closer than one rotor "
                       f"diameter (turbine.rotor_diameter_m = {rotor_diameter_m:g})")


def grid_layout(rows: int, columns: int, row_spacing_diameters: float, column_spacing_diameters: float,
                row_bearing_deg: float, rotor_diameter_m: float) -> Layout:
    """A regular grid: ``rows`` rows of ``columns`` turbines each.

    Neighbours in a row are ``column_spacing_diameters`` rotor diameters apart along the
    compass bearing ``row_bearing_deg`` (90: the rows run east); the rows are
    ``row_spacing_diameters`` apart, the next row to the left of the bearing (for 90, to
    the north). Turbine names are R<row>C<column>, counted from 1.
    """
    b = math.radians(row_bearing_deg)
    along = np.array([math.sin(b), math.cos(b)])
    left = np.array([-math.cos(b), math.sin(b)])
    i, j = np.meshgrid(np.arange(rows), np.arange(columns), indexing="ij")
    d = rotor_diameter_m
    pos = (j.ravel()[:, None] * column_spacing_diameters * d * along[None, :]
           + i.ravel()[:, None] * row_spacing_diameters * d * left[None, :])
    names = tuple(f"R{r + 1}C{c + 1}" for r, c in zip(i.ravel(), j.ravel()))
    pos = np.round(pos, 6)
    return Layout(names, pos[:, 0].copy(), pos[:, 1].copy(), "grid")


def read_layout_csv(path: Path | str, rotor_diameter_m: float, *, key: str = "layout.positions") -> Layout:
    """Read turbine positions ``x_m, y_m`` (and an optional ``name`` column) and check them.

    Errors begin with the file and give the line of the bad row; turbines without a
    name column are named T1, T2, ... in file order.
    """
    path = Path(path)
    shown, name = str(path), path.name

    def fail(msg):
        return ScenarioError(msg, key=key, value=name, file=shown)

    check_data_file(path, key=key, max_bytes=MAX_FILE_BYTES)
    try:
        # utf-8-sig: a byte-order mark, as some spreadsheets write, is not part of the header
        with path.open(newline="", encoding="utf-8-sig") as fh:
            rows = list(csv.reader(fh))
    except UnicodeDecodeError:
        raise fail("cannot be read (UnicodeDecodeError): not UTF-8 text") from None
    except csv.Error as exc:
        raise fail(f"cannot be read as CSV ({exc})") from None
    except OSError as exc:
        raise fail(f"cannot be read ({type(exc).__name__}: {exc.strerror})") from None
    numbered = [(i, r) for i, r in enumerate(rows, start=1) if r and any(c.strip() for c in r)]
    if not numbered:
        raise fail("is empty; expected the header 'x_m,y_m' (optionally with 'name') and one row per turbine")
    header = [c.strip() for c in numbered[0][1]]
    allowed = {"name", "x_m", "y_m"}
    if "x_m" not in header or "y_m" not in header or set(header) - allowed or len(set(header)) != len(header):
        shown_head = ",".join(header)[:60]
        raise fail(f"header must be 'x_m,y_m' (optionally with 'name'), found {shown_head!r}")
    col = {c: header.index(c) for c in header}
    body = numbered[1:]
    if not body:
        raise fail("has no turbine rows")
    if len(body) > MAX_TURBINES:
        raise fail(f"has {len(body)} turbine rows; at most {MAX_TURBINES} are read")
    names, xs, ys = [], [], []
    for line, r in body:
        if len(r) != len(header):
            raise fail(f"row {line} has {len(r)} column(s), expected {len(header)}")
        try:
            x, y = float(r[col["x_m"]]), float(r[col["y_m"]])
        except ValueError:
            raise fail(f"row {line} is not numeric ({','.join(r)[:60]!r})") from None
        if not (math.isfinite(x) and math.isfinite(y)):
            raise fail(f"row {line} has a missing or non-finite coordinate")
        if abs(x) > MAX_COORDINATE_M or abs(y) > MAX_COORDINATE_M:
            raise fail(f"row {line}: coordinates must lie within +-{MAX_COORDINATE_M:.0e} m "
                       f"(x_m = {x:g}, y_m = {y:g})")
        if "name" in col:
            nm = r[col["name"]].strip()
            if not nm or _CONTROL.search(nm) or len(nm) > 40:
                raise fail(f"row {line}: a turbine name must be 1 to 40 characters of one line of text")
            if nm in names:
                raise fail(f"row {line}: turbine name {nm!r} appears twice")
        else:
            nm = f"T{len(names) + 1}"
        names.append(nm)
        xs.append(x)
        ys.append(y)
    x, y = np.array(xs), np.array(ys)
    check_positions(names, x, y, rotor_diameter_m, fail)
    return Layout(tuple(names), x, y, "file")
