"""The scenario schema: typed, validated sections of one site, and the conventions derived from them.

Every value a user can get wrong is checked at the edge and reported as a
:class:`~lcoe.inputs.errors.ScenarioError` that names the file, the dotted key and
the value. Units live in the key names (``speed_mps``, ``cost_per_kw_year``);
fractions are 0..1.
"""

from __future__ import annotations

import datetime as dt
from typing import Annotated, Any, Literal, get_args

from pydantic import BaseModel, ConfigDict, Field, model_validator

from lcoe.inputs.plausibility import plausibility_warnings

SCHEMA_VERSION = 1

Frac = Annotated[float, Field(ge=0.0, le=1.0)]
LossFrac = Annotated[float, Field(ge=0.0, lt=1.0)]
Pos = Annotated[float, Field(gt=0.0)]
NonNeg = Annotated[float, Field(ge=0.0)]
Rate = Annotated[float, Field(gt=-1.0, le=1.0)]
# Money bounds: no single cost item reaches 1e12 (a trillion); rates per kW or per MWh are held to
# about a hundred times anything built (a turbine costs some 1,000 per kW), so no sum can overflow
Money = Annotated[float, Field(ge=0.0, le=1e12)]
PerKw = Annotated[float, Field(ge=0.0, le=1e5)]
PerKwYear = Annotated[float, Field(ge=0.0, le=1e4)]
PerMwh = Annotated[float, Field(ge=0.0, le=1e4)]

#: the most Monte Carlo trials a run takes (the file, the command line and the app alike)
MAX_TRIALS = 10_000_000
#: the largest seed: a whole number a spreadsheet cell holds exactly (2^53 - 1)
MAX_SEED = 2 ** 53 - 1
#: the most variants a scenario compares
MAX_VARIANTS = 200


#: the standard atmosphere's sea-level temperature [degC] and its lapse rate in the troposphere [K/m]
ISA_SEA_LEVEL_C = 15.0
ISA_LAPSE_K_PER_M = 0.0065


def isa_temperature_c(elevation_m):
    """The temperature of the standard atmosphere at an elevation: 15 degC at sea level, falling
    6.5 K per km. [degC]

    References
    ----------
    ISO 2533:1975, Standard Atmosphere (troposphere, below 11 km).
    """
    return ISA_SEA_LEVEL_C - ISA_LAPSE_K_PER_M * elevation_m


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True)


class Project(_Model):
    name: Annotated[str, Field(min_length=1)]
    currency: str = "EUR"
    lifetime_years: Annotated[int, Field(ge=1, le=60)]
    turbines: Annotated[int, Field(ge=1, le=10000)]


Sectors = Annotated[int, Field(ge=4, le=72)]


class Rose(_Model):
    """Wind directions by sector at ``wind.height_m``: sector i is centred on i * 360 / n degrees
    (0 = north, clockwise; the direction the wind comes from)."""

    frequency: Annotated[list[Annotated[float, Field(ge=0.0, le=1.0)]], Field(min_length=4, max_length=72)]
    weibull_scale_mps: Annotated[list[Annotated[float, Field(gt=0.0, lt=45.0)]], Field(min_length=4, max_length=72)]
    weibull_shape: Annotated[list[Annotated[float, Field(ge=0.5, le=10.0)]], Field(min_length=4, max_length=72)]

    @model_validator(mode="after")
    def _sectors(self) -> "Rose":
        n = len(self.frequency)
        for name in ("weibull_scale_mps", "weibull_shape"):
            if len(getattr(self, name)) != n:
                raise _Cross(f"wind.rose.{name}", getattr(self, name),
                             f"has {len(getattr(self, name))} value(s) but wind.rose.frequency has {n}; "
                             "give one value per sector")
        total = sum(self.frequency)
        if abs(total - 1.0) > 0.01:
            raise _Cross("wind.rose.frequency", self.frequency,
                         f"must sum to 1 (each sector's share of the time); these sum to {total:.4g}")
        return self


class LongTerm(_Model):
    """Long-term correction of ``wind.timeseries`` (the site's short measurement) against a long reference."""

    reference: Annotated[str, Field(min_length=1)]
    method: Literal["variance_ratio", "linear_regression"] = "variance_ratio"


class Wind(_Model):
    height_m: Pos
    # no measured site has a long-term mean above 20 m/s (a series in km/h reads as 25-30)
    mean_speed_mps: Annotated[float, Field(gt=0.0, le=20.0)] | None = None
    weibull_scale_mps: Annotated[float, Field(gt=0.0, lt=45.0)] | None = None
    timeseries: Annotated[str, Field(min_length=1)] | None = None
    weibull_shape: Annotated[float, Field(ge=0.5, le=10.0)] | None = None
    shear_exponent: Annotated[float, Field(ge=-0.5, le=1.0)] | None = None
    roughness_length_m: Annotated[float, Field(gt=0.0, lt=10.0)] | None = None
    elevation_m: Annotated[float, Field(ge=-500.0, le=6000.0)] = 0.0
    # None: the standard atmosphere's temperature at elevation_m (see :func:`isa_temperature_c`)
    mean_temperature_c: Annotated[float, Field(ge=-60.0, le=60.0)] | None = None
    air_density_kgm3: Annotated[float, Field(ge=0.5, le=1.6)] | None = None
    max_missing_share: Annotated[float, Field(ge=0.0, lt=1.0)] = 0.2
    rose: Rose | None = None
    sectors: Sectors | None = None
    long_term: LongTerm | None = None

    @model_validator(mode="after")
    def _one_source(self) -> "Wind":
        given = [k for k in ("mean_speed_mps", "weibull_scale_mps", "timeseries", "rose")
                 if getattr(self, k) is not None]
        if len(given) == 0:
            raise _Cross("wind", None, "give exactly one of mean_speed_mps, weibull_scale_mps, timeseries or rose",
                         has_value=False)
        if len(given) > 1:
            value = getattr(self, given[1])
            raise _Cross(f"wind.{given[1]}", value, f"cannot be given together with wind.{given[0]}; give exactly "
                         "one of mean_speed_mps, weibull_scale_mps, timeseries or rose",
                         has_value=not isinstance(value, BaseModel))
        if self.rose is not None:
            if self.weibull_shape is not None:
                raise _Cross("wind.weibull_shape", self.weibull_shape,
                             "cannot be given together with wind.rose: each sector has its own weibull_shape")
            if self.sectors is not None and self.sectors != len(self.rose.frequency):
                raise _Cross("wind.sectors", self.sectors,
                             f"differs from the {len(self.rose.frequency)} sectors of wind.rose")
        if self.long_term is not None and self.timeseries is None:
            raise _Cross("wind.long_term", None, "needs wind.timeseries: the site's short measurement to correct",
                         has_value=False)
        if self.timeseries is None and self.rose is None and self.weibull_shape is None:
            raise _Cross("wind.weibull_shape", None, "is required with a Weibull climate (k > 0)",
                         has_value=False)
        if self.shear_exponent is not None and self.roughness_length_m is not None:
            raise _Cross("wind.roughness_length_m", self.roughness_length_m,
                         "cannot be given together with wind.shear_exponent; choose the power law or the log law")
        return self

    @property
    def alpha(self) -> float:
        return 1.0 / 7.0 if self.shear_exponent is None else self.shear_exponent

    @property
    def temperature_c(self) -> float:
        """The mean air temperature at the site: as given, else the standard atmosphere's at
        ``elevation_m`` (:func:`isa_temperature_c`). [degC]"""
        if self.mean_temperature_c is not None:
            return self.mean_temperature_c
        return isa_temperature_c(self.elevation_m)


class Turbine(_Model):
    hub_height_m: Annotated[float, Field(gt=0.0, le=300.0)]
    rated_power_kw: Annotated[float, Field(gt=0.0, le=30000.0)]
    rotor_diameter_m: Annotated[float, Field(gt=0.0, le=350.0)]
    power_curve: Annotated[str, Field(min_length=1)] | None = None
    curve_air_density_kgm3: Annotated[float, Field(ge=0.5, le=1.6)] = 1.225
    regulation: Literal["pitch", "stall"] = "pitch"
    cp_max: Annotated[float, Field(gt=0.0)] | None = None
    cut_in_mps: Annotated[float, Field(ge=0.0, le=15.0)] | None = None
    cut_out_mps: Annotated[float, Field(gt=0.0, le=60.0)] | None = None
    drivetrain_efficiency: Annotated[float, Field(gt=0.0, le=1.0)] | None = None

    @model_validator(mode="after")
    def _curve_source(self) -> "Turbine":
        physics = {k: getattr(self, k) for k in ("cp_max", "cut_in_mps", "cut_out_mps", "drivetrain_efficiency")}
        given = [k for k, v in physics.items() if v is not None]
        if self.power_curve is not None and given:
            raise _Cross(f"turbine.{given[0]}", physics[given[0]],
                         "cannot be given together with turbine.power_curve; use a curve table or physics parameters")
        if self.power_curve is None:
            if not given:
                raise _Cross("turbine", None, "give power_curve (a CSV table) or cp_max with cut_in_mps and cut_out_mps",
                             has_value=False)
            if self.cp_max is None:
                raise _Cross("turbine.cp_max", None, "is required for a physics-built power curve", has_value=False)
            if self.cp_max > 16.0 / 27.0:
                raise _Cross("turbine.cp_max", self.cp_max,
                             "must not exceed the Betz limit 16/27 = 0.5926")
            cut_in = 3.0 if self.cut_in_mps is None else self.cut_in_mps
            cut_out = 25.0 if self.cut_out_mps is None else self.cut_out_mps
            if cut_out <= cut_in:
                raise _Cross("turbine.cut_out_mps", cut_out, f"must be above turbine.cut_in_mps = {cut_in}")
        return self


class Layout(_Model):
    """Turbine positions (a CSV, or a regular grid) and the settings of the wake model."""

    positions: Annotated[str, Field(min_length=1)] | None = None
    rows: Annotated[int, Field(ge=1, le=1000)] | None = None
    columns: Annotated[int, Field(ge=1, le=1000)] | None = None
    row_spacing_diameters: Annotated[float, Field(ge=1.0, le=100.0)] | None = None
    column_spacing_diameters: Annotated[float, Field(ge=1.0, le=100.0)] | None = None
    row_bearing_deg: Annotated[float, Field(ge=0.0, le=360.0)] = 90.0
    location: Literal["onshore", "offshore"] = "onshore"
    wake_decay_constant: Annotated[float, Field(gt=0.0, le=0.2)] | None = None
    speed_bin_mps: Annotated[float, Field(ge=0.1, le=2.0)] = 1.0
    direction_step_deg: Annotated[float, Field(ge=0.5, le=30.0)] = 1.0

    @model_validator(mode="after")
    def _one_layout(self) -> "Layout":
        grid = {k: getattr(self, k) for k in ("rows", "columns", "row_spacing_diameters",
                                             "column_spacing_diameters")}
        given = [k for k, v in grid.items() if v is not None]
        if self.positions is not None and given:
            raise _Cross(f"layout.{given[0]}", grid[given[0]],
                         "cannot be given together with layout.positions; give a positions file or a grid")
        if self.positions is None:
            if not given:
                raise _Cross("layout", None, "give positions (a CSV of x_m, y_m) or a grid (rows, columns, "
                             "row_spacing_diameters, column_spacing_diameters)", has_value=False)
            missing = [k for k in grid if grid[k] is None]
            if missing:
                raise _Cross(f"layout.{missing[0]}", None, "is required for a grid layout", has_value=False)
            if self.rows * self.columns > 1000:
                raise _Cross("layout.rows", self.rows, f"times layout.columns = {self.columns} gives more than "
                             "1000 turbines")
        return self

    @property
    def decay_constant(self) -> float:
        """The wake decay constant: as given, else 0.075 onshore and 0.04 offshore (common practice)."""
        if self.wake_decay_constant is not None:
            return self.wake_decay_constant
        return 0.04 if self.location == "offshore" else 0.075


class Losses(_Model):
    wake: LossFrac = 0.0
    electrical: LossFrac = 0.0
    turbine_performance: LossFrac = 0.0
    environmental: LossFrac = 0.0
    curtailment: LossFrac = 0.0
    other: LossFrac = 0.0


LOSS_CATEGORIES = tuple(Losses.model_fields)


class Operations(_Model):
    availability_first_year: Annotated[float, Field(gt=0.0, le=1.0)] | None = None
    availability_mature: Annotated[float, Field(gt=0.0, le=1.0)] = 1.0
    ageing_starts_year: Annotated[int, Field(ge=0, le=60)] = 60
    availability_ageing_per_year: Annotated[float, Field(ge=0.0, le=0.2)] = 0.0
    degradation_per_year: Annotated[float, Field(ge=0.0, lt=0.2)] = 0.0


class Component(_Model):
    name: Annotated[str, Field(min_length=1)]
    failure_rate_per_turbine_year: Annotated[float, Field(ge=0.0, le=20.0)]
    replacement_cost: Money = 0.0
    downtime_days: Annotated[float, Field(ge=0.0, le=365.0)] = 0.0


class Overhaul(_Model):
    name: Annotated[str, Field(min_length=1)]
    year: Annotated[int, Field(ge=1, le=60)]
    cost_per_turbine: Money


class Maintenance(_Model):
    fixed_per_kw_year: PerKwYear = 0.0
    variable_per_mwh: PerMwh = 0.0
    insurance_per_kw_year: PerKwYear = 0.0
    land_lease_share_of_revenue: Annotated[float, Field(ge=0.0, lt=1.0)] = 0.0
    escalation: Rate | None = None
    component: list[Component] = []
    overhaul: list[Overhaul] = []

    @model_validator(mode="after")
    def _unique_names(self) -> "Maintenance":
        for table in ("component", "overhaul"):
            seen: set[str] = set()
            for i, item in enumerate(getattr(self, table)):
                if item.name in seen:
                    raise _Cross(f"maintenance.{table}[{i}].name", item.name, "must be unique within the table")
                seen.add(item.name)
        return self


class Capex(_Model):
    turbine_per_kw: PerKw
    balance_of_plant_per_kw: PerKw = 0.0
    grid_connection: Money = 0.0
    development: Money = 0.0
    contingency: Annotated[float, Field(ge=0.0, le=1.0)] = 0.0
    decommissioning_per_kw: PerKw = 0.0
    salvage_per_kw: PerKw = 0.0


class Revenue(_Model):
    ppa_price_per_mwh: Annotated[float, Field(ge=0.0, le=10000.0)]
    ppa_term_years: Annotated[int, Field(ge=0, le=60)] | None = None
    ppa_escalation: Rate = 0.0
    merchant_price_per_mwh: Annotated[float, Field(ge=0.0, le=10000.0)] | None = None
    merchant_escalation: Rate = 0.0
    production_credit_per_mwh: Annotated[float, Field(ge=0.0, le=10000.0)] = 0.0
    production_credit_years: Annotated[int, Field(ge=0, le=60)] = 10


class Debt(_Model):
    sizing_case: Literal["p50", "p90_1yr", "p90_10yr", "p99_1yr"] = "p90_1yr"
    target_dscr: Annotated[float, Field(ge=1.0, le=5.0)] = 1.30
    # the target in the merchant years (after revenue.ppa_term_years); omitted: target_dscr in every year
    target_dscr_merchant: Annotated[float, Field(ge=1.0, le=5.0)] | None = None
    max_gearing: Annotated[float, Field(ge=0.0, le=1.0)] = 0.75
    tenor_years: Annotated[int, Field(ge=1, le=60)]
    interest_rate: Annotated[float, Field(ge=0.0, le=0.5)]
    upfront_fee: Annotated[float, Field(ge=0.0, le=0.2)] = 0.0


class Finance(_Model):
    inflation: Annotated[float, Field(ge=-0.5, le=1.0)] = 0.0
    discount_rate: Annotated[float, Field(gt=-0.5, le=1.0)]
    equity_target_return: Annotated[float, Field(gt=-0.5, le=1.0)] | None = None
    tax_rate: Annotated[float, Field(ge=0.0, lt=1.0)] = 0.0
    depreciation: Literal["straight_line", "declining_balance", "macrs_5", "macrs_7",
                          "macrs_15", "macrs_20"] = "straight_line"
    depreciation_years: Annotated[int, Field(ge=1, le=60)] = 20
    debt: Debt | None = None


DEPRECIATION_METHODS = get_args(Finance.model_fields["depreciation"].annotation)
SIZING_CASES = get_args(Debt.model_fields["sizing_case"].annotation)


class Construction(_Model):
    """The construction period from financial close to commercial operation (lcoe.finance.construction)."""
    financial_close: dt.date
    months: Annotated[int, Field(ge=1, le=60)]
    drawdown: Literal["even", "s_curve"] | Annotated[list[Annotated[float, Field(ge=0.0, le=1.0)]],
                                                     Field(min_length=1, max_length=20)] = "s_curve"
    funding: Literal["equity_first", "pro_rata"] = "equity_first"
    commitment_fee: Annotated[float, Field(ge=0.0, le=0.1)] = 0.0   # a year, on undrawn debt

    @model_validator(mode="after")
    def _shares(self) -> "Construction":
        if isinstance(self.drawdown, list):
            q = -(-self.months // 3)
            if len(self.drawdown) != q:
                raise _Cross("drawdown", self.drawdown, f"needs one share for each of the {q} quarter(s) of "
                                                        f"{self.months} months")
            if abs(sum(self.drawdown) - 1.0) > 1e-9:
                raise _Cross("drawdown", self.drawdown, f"shares must add up to 1 (they add up to "
                                                        f"{sum(self.drawdown):.6g})")
        return self


class Reserves(_Model):
    """Reserve accounts funded through the cash waterfall (lcoe.finance.waterfall)."""
    dsra_months: Annotated[float, Field(ge=0.0, le=24.0)] = 6.0       # of the next year's debt service
    maintenance_years: Annotated[int, Field(ge=0, le=20)] = 0          # MRA build-up before each overhaul
    deposit_rate: Annotated[float, Field(ge=0.0, le=0.5)] = 0.0        # earned on reserve balances


class Waterfall(_Model):
    """The lock-up test of the cash waterfall."""
    lockup_dscr: Annotated[float, Field(ge=1.0, le=5.0)] = 1.10        # no distributions below this DSCR
    cash_sweep: bool = False      # in a locked-up year the cash left prepays the debt instead of waiting


class SpeedTerm(_Model):
    name: Annotated[str, Field(min_length=1)]
    sd: Annotated[float, Field(ge=0.0, le=0.5)]


class Uncertainty(_Model):
    interannual_speed_sd: Annotated[float, Field(ge=0.0, le=0.5)] = 0.0
    speed: list[SpeedTerm] = []
    energy: list[SpeedTerm] = []


VaryNumber = Annotated[float, Field(ge=-1e12, le=1e12)]


class Vary(_Model):
    distribution: Literal["normal", "triangular", "lognormal", "uniform"]
    mean: VaryNumber | None = None
    sd: Annotated[float, Field(ge=0.0, le=1e12)] | None = None
    low: VaryNumber | None = None
    mode: VaryNumber | None = None
    high: VaryNumber | None = None

    @model_validator(mode="after")
    def _params(self) -> "Vary":
        d = self.distribution
        if d in ("normal", "lognormal"):
            if self.sd is None:
                raise _Cross("sd", None, f"is required for a {d} distribution", has_value=False)
            if d == "lognormal" and self.mean is not None and self.mean <= 0:
                raise _Cross("mean", self.mean, "must be > 0 for a lognormal distribution")
            if self.sd == 0:
                raise _Cross("sd", self.sd, "must be > 0: with no spread every trial draws the same value")
        else:
            for k in ("low", "high"):
                if getattr(self, k) is None:
                    raise _Cross(k, None, f"is required for a {d} distribution", has_value=False)
            if self.high < self.low:
                raise _Cross("high", self.high, f"must be >= low = {self.low}")
            if self.high == self.low:
                raise _Cross("high", self.high, f"must be above low = {self.low}: with no spread every trial "
                                                "draws the same value")
            if d == "triangular" and self.mode is not None and not (self.low <= self.mode <= self.high):
                raise _Cross("mode", self.mode, f"must lie between low = {self.low} and high = {self.high}")
        return self


class Correlation(_Model):
    between: Annotated[list[str], Field(min_length=2, max_length=2)]
    rho: Annotated[float, Field(ge=-1.0, le=1.0)]


class MonteCarlo(_Model):
    trials: Annotated[int, Field(ge=0, le=MAX_TRIALS)] = 0
    seed: Annotated[int, Field(ge=0, le=MAX_SEED)] = 0
    sampling: Literal["random", "latin_hypercube"] = "random"
    failures: Literal["sampled", "expected"] = "sampled"
    chunk_size: Annotated[int, Field(ge=1000, le=1_000_000)] = 8192
    vary: dict[str, Vary] = {}
    correlation: list[Correlation] = []


class _Cross(ValueError):
    """A cross-field rule broken inside a model validator (converted to ScenarioError)."""

    def __init__(self, key: str, value: Any, message: str, *, has_value: bool = True):
        self.key, self.value, self.message, self.has_value = key, value, message, has_value
        super().__init__(message)


# Keys a file may omit whose value then follows another key (SCENARIO.md): the one table of
# derived defaults. An override of the source key moves the follower too, as it would in the file.
DERIVED_DEFAULTS = {
    "operations.availability_first_year": "operations.availability_mature",
    "maintenance.escalation": "finance.inflation",
    "revenue.ppa_term_years": "project.lifetime_years",
    "revenue.merchant_price_per_mwh": "revenue.ppa_price_per_mwh",
    "finance.equity_target_return": "finance.discount_rate",
}


class ScenarioFields(_Model):
    """The fields of a scenario and the conventions derived from them (:class:`lcoe.inputs.scenario.Scenario` adds its file)."""

    schema_version: int
    project: Project
    wind: Wind
    turbine: Turbine
    losses: Losses = Losses()
    operations: Operations = Operations()
    maintenance: Maintenance = Maintenance()
    layout: Layout | None = None
    capex: Capex
    revenue: Revenue
    finance: Finance
    construction: Construction | None = None
    reserves: Reserves | None = None
    waterfall: Waterfall | None = None
    uncertainty: Uncertainty = Uncertainty()
    montecarlo: MonteCarlo = MonteCarlo()
    variants: dict[str, dict[str, Any]] = {}
    lender_cases: dict[str, dict[str, Any]] = {}   # [lender_cases.NAME]: label, energy_case, dotted overrides

    # Derived conventions, kept here so every module reads them the same way.
    @property
    def lifetime(self) -> int:
        return self.project.lifetime_years

    def derived(self, key: str) -> float:
        """The value of a key that the file may omit: its own when given, else the key it
        follows (:data:`DERIVED_DEFAULTS`)."""
        section, name = key.split(".")
        own = getattr(getattr(self, section), name)
        if own is not None:
            return own
        source = DERIVED_DEFAULTS[key]
        section, name = source.split(".")
        return getattr(getattr(self, section), name)

    @property
    def availability_first_year(self) -> float:
        return self.derived("operations.availability_first_year")

    @property
    def escalation(self) -> float:
        return self.derived("maintenance.escalation")

    @property
    def ppa_term_years(self) -> int:
        return self.derived("revenue.ppa_term_years")

    @property
    def merchant_price_per_mwh(self) -> float:
        return self.derived("revenue.merchant_price_per_mwh")

    @property
    def equity_target_return(self) -> float:
        return self.derived("finance.equity_target_return")

    @property
    def plant_kw(self) -> float:
        return self.turbine.rated_power_kw * self.project.turbines

    def lender_structure(self) -> list[str]:
        """The lender-structure keys this scenario sets (the merchant target DSCR, the
        construction period, reserve accounts, the cash waterfall): outputs that do not show
        them yet refuse the scenario rather than show numbers without them."""
        out = []
        if self.finance.debt is not None and self.finance.debt.target_dscr_merchant is not None:
            out.append("finance.debt.target_dscr_merchant")
        out += [name for name in ("construction", "reserves", "waterfall") if getattr(self, name) is not None]
        return out

    def warnings(self) -> list[str]:
        """Non-fatal remarks about the assumptions (shown with every report)."""
        out = []
        if self.revenue.ppa_term_years is not None and self.revenue.ppa_term_years > self.lifetime:
            out.append(f"revenue.ppa_term_years = {self.revenue.ppa_term_years} is longer than "
                       f"project.lifetime_years = {self.lifetime}; the years past the life are ignored")
        if self.wind.timeseries is not None and self.wind.weibull_shape is not None:
            out.append("wind.weibull_shape is ignored with wind.timeseries (the distribution comes from the series)")
        if self.wind.sectors is not None and self.wind.timeseries is None and self.wind.rose is None:
            out.append("wind.sectors is used only for a rose derived from a series; it is ignored here")
        if self.revenue.production_credit_years > self.lifetime and self.revenue.production_credit_per_mwh > 0:
            out.append(f"revenue.production_credit_years = {self.revenue.production_credit_years} is longer than "
                       f"the life; the credit ends with the project")
        return out + plausibility_warnings(self)

