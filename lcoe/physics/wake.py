"""Wake losses of a layout: the Jensen/Park top-hat wake, deficits combined by root-sum-square,
partial overlap by the exact area of two intersecting circles, for every direction and speed bin.

Behind a turbine of rotor diameter D and thrust coefficient Ct the wake is a top hat
whose radius grows linearly, D/2 + k x at x downstream, with the speed deficit

    delta(x) = (1 - sqrt(1 - Ct)) (D / (D + 2 k x))^2,

k being the wake decay constant. A rotor partly in the wake takes delta times the
share of its disc that the wake circle covers. The deficits of all upstream turbines on
one rotor are combined in quadrature, delta_j = sqrt(sum_i delta_ij^2), and its speed is
u_j = U (1 - delta_j). The thrust of each upstream turbine is taken at its own
(waked) inflow speed, so turbines are visited from upstream to downstream.

References
----------
N. O. Jensen, "A note on wind generator interaction", Risø-M-2411, Risø National
Laboratory, 1983 (the top-hat wake, linear expansion).
I. Katić, J. Højstrup, N. O. Jensen, "A simple model for cluster efficiency",
European Wind Energy Association Conference (EWEC), Rome, 1986 (the deficit in terms of
Ct, root-sum-square combination, partial overlap by area).
Circle-circle intersection area: standard plane geometry (e.g. E. W. Weisstein,
"Circle-Circle Intersection", MathWorld).
Wake decay constant 0.075 onshore, 0.04 offshore: common practice.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

DECAY_ONSHORE = 0.075      # common practice
DECAY_OFFSHORE = 0.04      # common practice
_GRID_STEP_MPS = 0.01      # the thrust table is interpolated on this grid
_CELLS = 4_000_000         # directions x turbines x turbines held at once (memory bound)


def circle_overlap_area(distance_m, r1_m, r2_m) -> np.ndarray:
    """Area shared by two circles of radii r1 and r2 whose centres are ``distance_m`` apart. [m^2]

    0 when they are apart, the smaller circle's area when one lies inside the other, else
    r1^2 acos((d^2 + r1^2 - r2^2) / (2 d r1)) + r2^2 acos((d^2 + r2^2 - r1^2) / (2 d r2))
    - sqrt((-d + r1 + r2)(d + r1 - r2)(d - r1 + r2)(d + r1 + r2)) / 2. Inputs broadcast.

    References
    ----------
    Circle-circle intersection (the lens area), standard plane geometry.
    """
    d = np.asarray(distance_m, float)
    r1 = np.asarray(r1_m, float)
    r2 = np.asarray(r2_m, float)
    d, r1, r2 = np.broadcast_arrays(d, r1, r2)
    out = np.zeros(d.shape)
    inside = d <= np.abs(r1 - r2)
    out[inside] = np.pi * np.minimum(r1, r2)[inside] ** 2
    lens = ~inside & (d < r1 + r2)
    if np.any(lens):
        dd, a, b = d[lens], r1[lens], r2[lens]
        c1 = np.clip((dd ** 2 + a ** 2 - b ** 2) / (2 * dd * a), -1.0, 1.0)
        c2 = np.clip((dd ** 2 + b ** 2 - a ** 2) / (2 * dd * b), -1.0, 1.0)
        k = np.maximum((-dd + a + b) * (dd + a - b) * (dd - a + b) * (dd + a + b), 0.0)
        out[lens] = a ** 2 * np.arccos(c1) + b ** 2 * np.arccos(c2) - 0.5 * np.sqrt(k)
    return out


def jensen_deficit(ct, distance_m, rotor_diameter_m, decay_constant) -> np.ndarray:
    """Speed deficit in the full wake, (1 - sqrt(1 - Ct)) (D / (D + 2 k x))^2; 0 upstream (x <= 0). [-]

    References
    ----------
    Jensen (1983); Katić, Højstrup and Jensen (1986).
    """
    x = np.asarray(distance_m, float)
    ct = np.clip(np.asarray(ct, float), 0.0, 1.0)
    d = rotor_diameter_m
    with np.errstate(invalid="ignore", divide="ignore"):
        out = (1.0 - np.sqrt(1.0 - ct)) * (d / (d + 2.0 * decay_constant * np.maximum(x, 0.0))) ** 2
    return np.where(x > 0, out, 0.0)


def wake_shares(x_m, y_m, directions_deg, rotor_diameter_m, decay_constant) -> tuple[np.ndarray, np.ndarray]:
    """Geometry of every wake: G[d, i, j] = (D / (D + 2 k x_ij))^2 * A_overlap / A_rotor for the wind
    from direction d (0 unless j is downstream of i), and each direction's turbines from the
    most upstream to the most downstream (indices, shape (directions, turbines)).

    The deficit on j from i is then (1 - sqrt(1 - Ct_i)) G[d, i, j].
    """
    th = np.radians(np.asarray(directions_deg, float))
    ex, ey = -np.sin(th), -np.cos(th)            # the direction the wind blows towards
    x = np.asarray(x_m, float) - np.mean(x_m)
    y = np.asarray(y_m, float) - np.mean(y_m)
    down = ex[:, None] * x[None, :] + ey[:, None] * y[None, :]        # (d, n)
    cross = -ey[:, None] * x[None, :] + ex[:, None] * y[None, :]
    dx = down[:, None, :] - down[:, :, None]                          # (d, i, j): j's distance behind i
    dc = np.abs(cross[:, None, :] - cross[:, :, None])
    radius = rotor_diameter_m / 2.0
    wake_r = radius + decay_constant * np.maximum(dx, 0.0)
    share = circle_overlap_area(dc, wake_r, radius) / (np.pi * radius ** 2)
    g = np.where(dx > 1e-9 * rotor_diameter_m, (radius / wake_r) ** 2 * share, 0.0)
    return g, np.argsort(down, axis=1, kind="stable")


@dataclass(frozen=True)
class WakeResult:
    """Mean power of each turbine without and with the wakes of the others, by sector. [kW]"""

    decay_constant: float
    direction_step_deg: float
    speed_bin_mps: float
    thrust_source: str
    free_kw: np.ndarray             # (turbines,) mean power standing alone
    waked_kw: np.ndarray            # (turbines,) mean power in the farm
    sector_free_kw: np.ndarray      # (sectors,) farm total, standing alone
    sector_waked_kw: np.ndarray     # (sectors,) farm total, in the farm

    @property
    def turbine_loss(self) -> np.ndarray:
        """Wake loss of each turbine, 1 - waked / free (0 where it makes nothing alone). [-]"""
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(self.free_kw > 0, 1.0 - self.waked_kw / np.where(self.free_kw > 0, self.free_kw, 1.0), 0.0)

    @property
    def sector_loss(self) -> np.ndarray:
        """Wake loss of the farm for the wind of each sector. [-]"""
        f = self.sector_free_kw
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.where(f > 0, 1.0 - self.sector_waked_kw / np.where(f > 0, f, 1.0), 0.0)

    @property
    def farm_loss(self) -> float:
        """Wake loss of the farm, 1 - sum waked / sum free. [-]"""
        free = float(self.free_kw.sum())
        return 1.0 - float(self.waked_kw.sum()) / free if free > 0 else 0.0


def sub_directions(sectors: int, step_deg: float) -> tuple[np.ndarray, int]:
    """Directions evenly spread inside each sector (about ``step_deg`` apart, symmetric about its
    centre), shape (sectors * m,), and m, the number per sector."""
    width = 360.0 / sectors
    m = max(1, int(round(width / step_deg)))
    offsets = ((np.arange(m) + 0.5) / m - 0.5) * width
    return (np.arange(sectors)[:, None] * width + offsets[None, :]).ravel(), m


def farm_wake(x_m, y_m, rotor_diameter_m: float, decay_constant: float, sector_bin_probability,
              bin_edges_mps, power_kw, thrust_coefficient, *, direction_step_deg: float = 1.0,
              thrust_source: str = "table") -> WakeResult:
    """Mean power of every turbine of a layout, alone and in the farm, over a wind rose.

    ``sector_bin_probability`` (sectors, bins) is the probability of the wind coming from
    each sector at a speed in each bin of ``bin_edges_mps``; each sector's probability is
    spread evenly over directions about ``direction_step_deg`` apart inside it, and each
    bin is taken at its centre speed U. ``power_kw(v)`` and ``thrust_coefficient(v)`` are
    the turbine's curves at the site. For each direction the turbines are visited from
    upstream to downstream; the work is vectorised over directions, bins and upstream
    turbines (one step per turbine), in chunks of directions that bound the memory.
    """
    prob = np.asarray(sector_bin_probability, float)
    edges = np.asarray(bin_edges_mps, float)
    centres = 0.5 * (edges[:-1] + edges[1:])
    sectors, bins = prob.shape
    x = np.asarray(x_m, float)
    y = np.asarray(y_m, float)
    n = x.size
    dirs, m = sub_directions(sectors, direction_step_deg)
    weight = np.repeat(prob / m, m, axis=0)                     # (directions, bins)
    # c(u) = 1 - sqrt(1 - Ct(u)) on a fine grid, interpolated in the sweep
    grid = np.arange(0.0, edges[-1] + 2 * _GRID_STEP_MPS, _GRID_STEP_MPS)
    c_grid = 1.0 - np.sqrt(1.0 - np.clip(thrust_coefficient(grid), 0.0, 1.0))
    free_p = power_kw(centres)                                   # (bins,)
    waked = np.zeros((dirs.size, n))                             # sum over bins of weight * P(u)
    reached = np.zeros((dirs.size, n), bool)                     # a wake reaches the turbine in this direction
    chunk = max(1, _CELLS // max(1, n * n))
    for lo in range(0, dirs.size, chunk):
        sl = slice(lo, min(lo + chunk, dirs.size))
        g, order = wake_shares(x, y, dirs[sl], rotor_diameter_m, decay_constant)
        nd = g.shape[0]
        g2 = g * g
        c2 = np.zeros((nd, bins, n))                             # c_i^2 of the turbines visited so far
        speed = np.empty((nd, bins, n))
        ar = np.arange(nd)
        for r in range(n):
            j = order[:, r]
            d2 = np.matmul(c2, g2[ar, :, j][:, :, None])[:, :, 0]     # (nd, bins): sum_i c_i^2 G_ij^2
            reached[sl.start + ar, j] = np.any(d2 > 0, axis=1)
            u = centres[None, :] * np.maximum(1.0 - np.sqrt(d2), 0.0)
            speed[ar, :, j] = u
            c2[ar, :, j] = np.interp(u, grid, c_grid) ** 2
        waked[sl] = np.einsum("db,dbn->dn", weight[sl], power_kw(speed))
    # where no wake reaches a turbine its power is the free one, to the last bit
    free_d = np.einsum("db,b->d", weight, free_p)
    free_dn = np.repeat(free_d[:, None], n, axis=1)
    waked = np.where(reached, waked, free_dn)
    by_sector = waked.reshape(sectors, m, n).sum(axis=1)         # (sectors, turbines)
    sector_free = free_dn.reshape(sectors, m, n).sum(axis=1).sum(axis=1)
    return WakeResult(float(decay_constant), 360.0 / sectors / m, float(edges[1] - edges[0]), thrust_source,
                      free_dn.sum(axis=0), waked.sum(axis=0), sector_free, by_sector.sum(axis=1))
