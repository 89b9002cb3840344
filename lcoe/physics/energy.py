"""Gross to net energy: losses, availability, degradation and P-values over the site's gross AEP
(:mod:`lcoe.physics.site`: the Weibull integral or a series, directions and wakes)."""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import LOSS_CATEGORIES
from lcoe.physics import farm
from lcoe.physics.site import (  # noqa: F401  (the site's names, as the energy module has always offered them)
    HOURS_PER_YEAR,
    Climate,
    Site,
    aep_weibull_mwh,
    aep_weibull_rows,
    build_site,
    climate_from,
    curve_from,
    gross_at_shape,
    mean_power_weibull_kw,
    shape_table,
    site_for,
)
from lcoe.physics.wind import Z_90, Z_99

# --------------------------------------------------------------------------- net energy

def loss_factor(losses) -> float:
    """prod(1 - loss_k) over the loss fractions, applied multiplicatively, in the order given. [-]

    ``losses``: the fractions (floats or per-row arrays), in the order of
    :data:`lcoe.inputs.schema.LOSS_CATEGORIES`.
    """
    out = 1.0
    for loss in losses:
        out = out * (1.0 - loss)
    return out


def downtime_fraction(rates, days_per_event) -> float:
    """Expected downtime D = sum(rate * downtime_days / 365) over the components. [-]"""
    return sum(r * d / 365.0 for r, d in zip(rates, days_per_event)) if len(rates) else 0.0


def wake_loss_of(scn, site: Site | None = None) -> float | None:
    """The wake loss computed from the scenario's layout, or None without a layout (``losses.wake`` applies). [-]"""
    if scn.layout is None:
        return None
    site = site if site is not None else site_for(scn)
    return site.wake.farm_loss


def losses_used(scn, site: Site | None = None) -> dict:
    """Each loss category's fraction as the net energy takes it: the typed values, the wake loss
    computed from the layout where there is one. [-]"""
    out = {k: float(getattr(scn.losses, k)) for k in type(scn.losses).model_fields}
    wake = wake_loss_of(scn, site)
    if wake is not None:
        out["wake"] = wake
    return out


def derived_speed_terms(scn, site: Site | None = None) -> list[tuple[str, float]]:
    """The speed uncertainty terms the data add to the scenario's: with a long-term correction,
    its own term (:func:`lcoe.physics.farm.long_term_term`). [(name, relative sd)]"""
    if scn.wind.long_term is None:
        return []
    site = site if site is not None else site_for(scn)
    sd, _, _ = farm.long_term_term(site.climate.long_term, scn.uncertainty.interannual_speed_sd)
    return [(farm.MCP_TERM, sd)]


def speed_terms(scn, site: Site | None = None) -> list[tuple[str, float]]:
    """Every long-term speed uncertainty term: ``[[uncertainty.speed]]`` and :func:`derived_speed_terms`.
    [(name, relative sd)]"""
    return [(x.name, float(x.sd)) for x in scn.uncertainty.speed] + derived_speed_terms(scn, site)


def component_downtime_fraction(components) -> float:
    """D of the scenario's component table (see :func:`downtime_fraction`). [-]"""
    return float(downtime_fraction([c.failure_rate_per_turbine_year for c in components],
                                   [c.downtime_days for c in components]))


def p50_energy(gross_mwh, loss_factor, availability_mature, downtime):
    """P50 net AEP = gross * prod(1 - loss) * availability_mature * (1 - D). [MWh/yr]"""
    return gross_mwh * loss_factor * availability_mature * (1.0 - downtime)


def yearly_energy(gross_mwh, loss_factor, availability, downtime, degradation, factor=None, out=None):
    """Net energy of each year, E_t = gross * prod(1 - loss) * avail_t * (1 - D) * degradation_t
    (times a per-row energy factor where given). [MWh/yr]"""
    base = gross_mwh * loss_factor * availability * (1.0 - downtime)
    if factor is None:
        return np.multiply(base, degradation, out=out)
    return np.multiply(base * degradation, factor, out=out)


def availability_profile(years, first, mature, ageing_starts_year, ageing_per_year):
    """Availability of each operating year t = 1..L. [-]

    Year 1 is ``first``; later years ``mature``, less ``ageing_per_year`` per year
    after ``ageing_starts_year`` (absolute), never below zero. Inputs broadcast.
    """
    t = np.asarray(years, float)
    base = np.where(t <= 1, first, mature)
    age = np.where(t > ageing_starts_year, ageing_per_year * (t - ageing_starts_year), 0.0)
    return np.clip(base - age, 0.0, 1.0)


def degradation_factor(years, degradation_per_year):
    """(1 - degradation)^(t - 1): compounding performance decline. [-]"""
    return (1.0 - np.asarray(degradation_per_year, float)) ** (np.asarray(years, float) - 1.0)


def sigma_total(sensitivity, interannual_speed_sd, speed_sds, energy_sds, years=1):
    """Relative sd of the N-year mean net energy (floats or per-row arrays). [-]

    sigma_N = sqrt((S sigma_iav)^2 / N + sum (S sigma_speed)^2 + sum sigma_energy^2).

    References
    ----------
    Combination of independent uncertainties in quadrature: common practice in
    energy-yield assessment (the inter-annual term shrinks with 1/N).
    """
    s = sensitivity
    other = sum((s * x) ** 2 for x in speed_sds) + sum(x ** 2 for x in energy_sds)
    return np.sqrt((s * interannual_speed_sd) ** 2 / years + other)


def exceedance_factor(sigma, z):
    """P_x / P50 = 1 - z_x sigma, floored at zero. z_90 = 1.2815516, z_99 = 2.3263479. [-]"""
    return np.maximum(0.0, 1.0 - z * sigma)


def case_factors(sigma_1yr, sigma_10yr) -> dict:
    """P_case / P50 of each debt sizing case (p50, p90_1yr, p90_10yr, p99_1yr), floats or per-row arrays."""
    return {"p50": np.ones_like(np.asarray(sigma_1yr, float)) if np.ndim(sigma_1yr) else 1.0,
            "p90_1yr": exceedance_factor(sigma_1yr, Z_90), "p90_10yr": exceedance_factor(sigma_10yr, Z_90),
            "p99_1yr": exceedance_factor(sigma_1yr, Z_99)}


def sigmas(sensitivity, interannual_speed_sd, speed_sds, energy_sds):
    """(sigma_1yr, sigma_10yr) with a non-finite speed sensitivity taken as zero."""
    s = np.where(np.isfinite(sensitivity), sensitivity, 0.0) if np.ndim(sensitivity) else (
        sensitivity if math.isfinite(sensitivity) else 0.0)
    return (sigma_total(s, interannual_speed_sd, speed_sds, energy_sds, 1),
            sigma_total(s, interannual_speed_sd, speed_sds, energy_sds, 10))


@dataclass(frozen=True)
class EnergyResult:
    """Energy answers for one scenario (deterministic)."""

    air_density_kgm3: float
    hub_mean_speed_mps: float
    weibull_scale_mps: float
    weibull_shape: float
    gross_aep_mwh: float
    loss_factor: float
    downtime_fraction: float
    net_aep_p50_mwh: float
    net_aep_p90_1yr_mwh: float
    net_aep_p90_10yr_mwh: float
    net_aep_p99_1yr_mwh: float
    net_capacity_factor: float
    speed_sensitivity: float
    sigma_1yr: float
    sigma_10yr: float
    availability: np.ndarray       # t = 1..L
    energy_mwh: np.ndarray         # t = 1..L
    factors: dict                  # sizing case -> P_case / P50 (case_factors)
    warnings: tuple[str, ...]
    wake_loss: float = 0.0                  # the wake loss applied (computed from a layout, or losses.wake)
    wake_from_layout: bool = False
    wind_rose: dict | None = None           # the JSON blocks of directions, wakes and the long-term correction
    wake: dict | None = None
    long_term: dict | None = None
    speed_terms: tuple = ()                 # (name, sd) of every long-term speed uncertainty term

    def case_factor(self, case: str) -> float:
        """P_case / P50 for a debt sizing case (p50, p90_1yr, p90_10yr, p99_1yr)."""
        return self.factors[case]

    def report(self) -> dict:
        keys = ["air_density_kgm3", "hub_mean_speed_mps", "gross_aep_mwh", "net_aep_p50_mwh",
                "net_aep_p90_1yr_mwh", "net_aep_p90_10yr_mwh", "net_aep_p99_1yr_mwh", "net_capacity_factor",
                "speed_sensitivity", "sigma_1yr", "sigma_10yr", "weibull_scale_mps", "weibull_shape",
                "loss_factor", "downtime_fraction", "wake_loss"]
        return {k: float(getattr(self, k)) for k in keys}


#: a net capacity factor above this is not seen in wind farms (common practice) [-]
HIGH_CAPACITY_FACTOR = 0.6


def energy_of(scn, site: Site | None = None) -> EnergyResult:
    """Gross and net energy, the yearly profile and the P-values of a scenario
    (``site``: its :class:`Site`, when already built; default :func:`site_for`)."""
    site = site_for(scn) if site is None else site
    c = site.climate
    used = losses_used(scn, site)
    lf = loss_factor([used[name] for name in LOSS_CATEGORIES])
    d = component_downtime_fraction(scn.maintenance.component)
    o = scn.operations
    years = np.arange(1, scn.lifetime + 1)
    avail = availability_profile(years, scn.availability_first_year, o.availability_mature,
                                 o.ageing_starts_year, o.availability_ageing_per_year)
    gross = site.gross_aep_mwh
    energy = yearly_energy(gross, lf, avail, d, degradation_factor(years, o.degradation_per_year))
    p50 = p50_energy(gross, lf, o.availability_mature, d)
    u = scn.uncertainty
    terms = speed_terms(scn, site)
    s1, s10 = sigmas(site.speed_sensitivity, u.interannual_speed_sd, [sd for _, sd in terms],
                     [x.sd for x in u.energy])
    s1, s10 = float(s1), float(s10)
    factors = {k: float(v) for k, v in case_factors(s1, s10).items()}
    warns = list(c.warnings)
    if d >= 1.0:
        raise ScenarioError("the expected component downtime sum(rate * downtime_days / 365) reaches 100 %",
                            key="maintenance.component", has_value=False)
    if gross <= 0:
        warns.append("gross AEP is zero: the power curve produces nothing in this wind climate")
    if site.wake is not None and site.wake.layout.turbines == 1:
        warns.append("the layout has one turbine: no wakes (wake.nearest_spacing_m is null)")
    if c.rose is not None:
        unfit = [s for s in range(c.rose.sectors) if not np.isfinite(c.rose.shape[s])]
        if unfit:
            warns.append(f"wind_rose: sector(s) {', '.join(map(str, unfit))} have too few samples for a Weibull fit "
                         "(their weibull_scale_mps and weibull_shape are null; their energy is counted)")
    cf = p50 / (scn.plant_kw * HOURS_PER_YEAR / 1000.0)
    if cf > HIGH_CAPACITY_FACTOR:
        warns.append(f"the net capacity factor is {cf:.0%}: no wind farm runs that steadily (common practice: "
                     "25-50 %); check the power curve and the wind input")
    return EnergyResult(
        air_density_kgm3=c.density_kgm3, hub_mean_speed_mps=c.mean_speed_mps, weibull_scale_mps=c.scale_mps,
        weibull_shape=c.shape, gross_aep_mwh=gross, loss_factor=lf, downtime_fraction=d,
        net_aep_p50_mwh=p50, net_aep_p90_1yr_mwh=p50 * factors["p90_1yr"],
        net_aep_p90_10yr_mwh=p50 * factors["p90_10yr"], net_aep_p99_1yr_mwh=p50 * factors["p99_1yr"],
        net_capacity_factor=cf, speed_sensitivity=site.speed_sensitivity, sigma_1yr=s1, sigma_10yr=s10,
        availability=avail, energy_mwh=energy, factors=factors, warnings=tuple(warns), wake_loss=used["wake"],
        wake_from_layout=site.wake is not None,
        wind_rose=site.rose_block, wake=site.wake_block,
        long_term=None if c.long_term is None else farm.long_term_report(c.long_term, u.interannual_speed_sd),
        speed_terms=tuple(terms))
