"""The scenario: a typed, validated model of one site, loaded from TOML.

Every value a user can get wrong is checked here, at the edge, and reported as a
:class:`~lcoe.inputs.errors.ScenarioError` that names the file, the dotted key and the
value. Units live in the key names (``speed_mps``, ``cost_per_kw_year``);
fractions are 0..1.
"""

from __future__ import annotations

import copy
import difflib
import math
import re
import tomllib
from pathlib import Path
from typing import Annotated, Any, Literal, get_args

from pydantic import BaseModel, ConfigDict, Field, PrivateAttr, ValidationError, model_validator

from lcoe.inputs.errors import ScenarioError, _show

SCHEMA_VERSION = 1

Frac = Annotated[float, Field(ge=0.0, le=1.0)]
LossFrac = Annotated[float, Field(ge=0.0, lt=1.0)]
Pos = Annotated[float, Field(gt=0.0)]
NonNeg = Annotated[float, Field(ge=0.0)]
Rate = Annotated[float, Field(gt=-1.0, le=1.0)]


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True, strict=True)


class Project(_Model):
    name: Annotated[str, Field(min_length=1)]
    currency: str = "EUR"
    lifetime_years: Annotated[int, Field(ge=1, le=60)]
    turbines: Annotated[int, Field(ge=1, le=10000)]


class Wind(_Model):
    height_m: Pos
    mean_speed_mps: Annotated[float, Field(gt=0.0, lt=40.0)] | None = None
    weibull_scale_mps: Annotated[float, Field(gt=0.0, lt=45.0)] | None = None
    timeseries: Annotated[str, Field(min_length=1)] | None = None
    weibull_shape: Annotated[float, Field(ge=0.5, le=10.0)] | None = None
    shear_exponent: Annotated[float, Field(ge=-0.5, le=1.0)] | None = None
    roughness_length_m: Annotated[float, Field(gt=0.0, lt=10.0)] | None = None
    elevation_m: Annotated[float, Field(ge=-500.0, le=6000.0)] = 0.0
    mean_temperature_c: Annotated[float, Field(ge=-60.0, le=60.0)] = 15.0
    air_density_kgm3: Annotated[float, Field(ge=0.5, le=1.6)] | None = None
    max_missing_share: Annotated[float, Field(ge=0.0, lt=1.0)] = 0.2

    @model_validator(mode="after")
    def _one_source(self) -> "Wind":
        given = [k for k in ("mean_speed_mps", "weibull_scale_mps", "timeseries")
                 if getattr(self, k) is not None]
        if len(given) == 0:
            raise _Cross("wind", None, "give exactly one of mean_speed_mps, weibull_scale_mps or timeseries",
                         has_value=False)
        if len(given) > 1:
            raise _Cross(f"wind.{given[1]}", getattr(self, given[1]),
                         f"cannot be given together with wind.{given[0]}; give exactly one of "
                         "mean_speed_mps, weibull_scale_mps or timeseries")
        if self.timeseries is None and self.weibull_shape is None:
            raise _Cross("wind.weibull_shape", None, "is required with a Weibull climate (k > 0)",
                         has_value=False)
        if self.shear_exponent is not None and self.roughness_length_m is not None:
            raise _Cross("wind.roughness_length_m", self.roughness_length_m,
                         "cannot be given together with wind.shear_exponent; choose the power law or the log law")
        return self

    @property
    def alpha(self) -> float:
        return 1.0 / 7.0 if self.shear_exponent is None else self.shear_exponent


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


class Losses(_Model):
    wake: LossFrac = 0.0
    electrical: LossFrac = 0.0
    turbine_performance: LossFrac = 0.0
    environmental: LossFrac = 0.0
    curtailment: LossFrac = 0.0
    other: LossFrac = 0.0

    def factor(self) -> float:
        out = 1.0
        for name in LOSS_CATEGORIES:
            out *= 1.0 - getattr(self, name)
        return out


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
    replacement_cost: NonNeg = 0.0
    downtime_days: Annotated[float, Field(ge=0.0, le=365.0)] = 0.0


class Overhaul(_Model):
    name: Annotated[str, Field(min_length=1)]
    year: Annotated[int, Field(ge=1, le=60)]
    cost_per_turbine: NonNeg


class Maintenance(_Model):
    fixed_per_kw_year: NonNeg = 0.0
    variable_per_mwh: NonNeg = 0.0
    insurance_per_kw_year: NonNeg = 0.0
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
    turbine_per_kw: NonNeg
    balance_of_plant_per_kw: NonNeg = 0.0
    grid_connection: NonNeg = 0.0
    development: NonNeg = 0.0
    contingency: Annotated[float, Field(ge=0.0, le=1.0)] = 0.0
    decommissioning_per_kw: NonNeg = 0.0
    salvage_per_kw: NonNeg = 0.0


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


class SpeedTerm(_Model):
    name: Annotated[str, Field(min_length=1)]
    sd: Annotated[float, Field(ge=0.0, le=0.5)]


class Uncertainty(_Model):
    interannual_speed_sd: Annotated[float, Field(ge=0.0, le=0.5)] = 0.0
    speed: list[SpeedTerm] = []
    energy: list[SpeedTerm] = []


class Vary(_Model):
    distribution: Literal["normal", "triangular", "lognormal", "uniform"]
    mean: float | None = None
    sd: NonNeg | None = None
    low: float | None = None
    mode: float | None = None
    high: float | None = None

    @model_validator(mode="after")
    def _params(self) -> "Vary":
        d = self.distribution
        if d in ("normal", "lognormal"):
            if self.sd is None:
                raise _Cross("sd", None, f"is required for a {d} distribution", has_value=False)
            if d == "lognormal" and self.mean is not None and self.mean <= 0:
                raise _Cross("mean", self.mean, "must be > 0 for a lognormal distribution")
        else:
            for k in ("low", "high"):
                if getattr(self, k) is None:
                    raise _Cross(k, None, f"is required for a {d} distribution", has_value=False)
            if self.high < self.low:
                raise _Cross("high", self.high, f"must be >= low = {self.low}")
            if d == "triangular" and self.mode is not None and not (self.low <= self.mode <= self.high):
                raise _Cross("mode", self.mode, f"must lie between low = {self.low} and high = {self.high}")
        return self


class Correlation(_Model):
    between: Annotated[list[str], Field(min_length=2, max_length=2)]
    rho: Annotated[float, Field(ge=-1.0, le=1.0)]


class MonteCarlo(_Model):
    trials: Annotated[int, Field(ge=0, le=10_000_000)] = 0
    seed: Annotated[int, Field(ge=0)] = 0
    sampling: Literal["random", "latin_hypercube"] = "random"
    failures: Literal["sampled", "expected"] = "sampled"
    chunk_size: Annotated[int, Field(ge=1000, le=1_000_000)] = 8192
    vary: dict[str, Vary] = {}
    correlation: list[Correlation] = []


class Scenario(_Model):
    """One site, validated. Build with :func:`load` or :func:`from_dict`."""

    schema_version: int
    project: Project
    wind: Wind
    turbine: Turbine
    losses: Losses = Losses()
    operations: Operations = Operations()
    maintenance: Maintenance = Maintenance()
    capex: Capex
    revenue: Revenue
    finance: Finance
    uncertainty: Uncertainty = Uncertainty()
    montecarlo: MonteCarlo = MonteCarlo()
    variants: dict[str, dict[str, Any]] = {}

    _base_dir: Path = PrivateAttr(default=Path("."))
    _source: str = PrivateAttr(default="<scenario>")
    _raw: dict = PrivateAttr(default_factory=dict)
    _site_key_memo: str | None = PrivateAttr(default=None)

    @property
    def base_dir(self) -> Path:
        return self._base_dir

    @property
    def source(self) -> str:
        return self._source

    @property
    def raw(self) -> dict:
        """The scenario as plain TOML-like data (a deep copy)."""
        return copy.deepcopy(self._raw)

    def resolve(self, relative: str) -> Path:
        p = Path(relative)
        return p if p.is_absolute() else self._base_dir / p

    # Derived conventions, kept here so every module reads them the same way.
    @property
    def lifetime(self) -> int:
        return self.project.lifetime_years

    @property
    def availability_first_year(self) -> float:
        o = self.operations
        return o.availability_mature if o.availability_first_year is None else o.availability_first_year

    @property
    def escalation(self) -> float:
        m = self.maintenance
        return self.finance.inflation if m.escalation is None else m.escalation

    @property
    def ppa_term_years(self) -> int:
        r = self.revenue
        return self.lifetime if r.ppa_term_years is None else r.ppa_term_years

    @property
    def merchant_price_per_mwh(self) -> float:
        r = self.revenue
        return r.ppa_price_per_mwh if r.merchant_price_per_mwh is None else r.merchant_price_per_mwh

    @property
    def equity_target_return(self) -> float:
        f = self.finance
        return f.discount_rate if f.equity_target_return is None else f.equity_target_return

    @property
    def plant_kw(self) -> float:
        return self.turbine.rated_power_kw * self.project.turbines

    def warnings(self) -> list[str]:
        """Non-fatal remarks about the assumptions (shown with every report)."""
        out = []
        if self.revenue.ppa_term_years is not None and self.revenue.ppa_term_years > self.lifetime:
            out.append(f"revenue.ppa_term_years = {self.revenue.ppa_term_years} is longer than "
                       f"project.lifetime_years = {self.lifetime}; the years past the life are ignored")
        if self.wind.timeseries is not None and self.wind.weibull_shape is not None:
            out.append("wind.weibull_shape is ignored with wind.timeseries (the distribution comes from the series)")
        if self.revenue.production_credit_years > self.lifetime and self.revenue.production_credit_per_mwh > 0:
            out.append(f"revenue.production_credit_years = {self.revenue.production_credit_years} is longer than "
                       f"the life; the credit ends with the project")
        return out

    def with_overrides(self, overrides: dict[str, Any], *, label: str = "override") -> "Scenario":
        """A new scenario with dotted keys replaced (same validation as the file)."""
        raw = self.raw
        for key, value in overrides.items():
            set_dotted(raw, key, value, label=label)
        return from_dict(raw, source=self._source, base_dir=self._base_dir, check_variants=False)

    def variant(self, name: str) -> "Scenario":
        if name not in self.variants:
            raise ScenarioError(f"unknown variant; known: {', '.join(self.variants) or 'none'}",
                                key="variants", value=name, file=self._source)
        return self.with_overrides(self.variants[name], label=f"variants.{name}")


class _Cross(ValueError):
    """A cross-field rule broken inside a model validator (converted to ScenarioError)."""

    def __init__(self, key: str, value: Any, message: str, *, has_value: bool = True):
        self.key, self.value, self.message, self.has_value = key, value, message, has_value
        super().__init__(message)


# --------------------------------------------------------------------------- dotted keys

def suggest(word: str, known: list[str]) -> list[str]:
    """The known key a mistyped one most likely meant (a list of 0 or 1 names).

    difflib's closest match first; failing that, the one known key that begins
    with the word (``failure_rate`` -> ``failure_rate_per_turbine_year``) or that
    the word begins with (``lifetime_years_total`` -> ``lifetime_years``).
    """
    word = str(word)
    known = [str(k) for k in known]
    hint = difflib.get_close_matches(word, known, n=1, cutoff=0.6) or \
        difflib.get_close_matches(word.lower(), known, n=1, cutoff=0.6)
    if hint:
        return hint
    low = word.lower()
    starts = [k for k in known if len(low) >= 3 and (k.lower().startswith(low) or low.startswith(k.lower()))]
    return starts[:1] if len(starts) == 1 else []


def _find_named(items: list, name: str) -> int | None:
    for i, item in enumerate(items):
        if isinstance(item, dict) and item.get("name") == name:
            return i
    return None


_LIST_TABLES = {("maintenance", "component"), ("maintenance", "overhaul"),
                ("uncertainty", "speed"), ("uncertainty", "energy")}


def _walk(raw: dict, key: str, *, create: bool, label: str):
    """Return (container, last_part) for a dotted key, walking named list items."""
    parts = key.split(".")
    node: Any = raw
    path: list[str] = []
    i = 0
    while i < len(parts) - 1:
        part = parts[i]
        path.append(part)
        if isinstance(node, dict):
            if part not in node:
                if create and _is_known_table(path):
                    node[part] = [] if tuple(path[-2:]) in _LIST_TABLES else {}
                else:
                    raise ScenarioError(_unknown_msg(path, node), key=f"{label}.{key}" if label else key,
                                        has_value=False)
            node = node[part]
        if isinstance(node, list):
            i += 1
            if i >= len(parts) - 1:
                raise ScenarioError("name an item and a field, e.g. maintenance.component.gearbox.replacement_cost",
                                    key=key, has_value=False)
            idx = _find_named(node, parts[i])
            if idx is None:
                names = [str(x.get("name")) for x in node if isinstance(x, dict)]
                raise ScenarioError(f"no item named {parts[i]!r} in {'.'.join(path)} (known: {', '.join(names) or 'none'})",
                                    key=f"{label}.{key}" if label else key, has_value=False)
            node = node[idx]
        i += 1
    return node, parts[-1]


def _is_known_table(path: list[str]) -> bool:
    model: Any = Scenario
    for part in path:
        fields = getattr(model, "model_fields", None)
        if not fields or part not in fields:
            return False
        ann = fields[part].annotation
        model = _inner_model(ann)
    return True


def _inner_model(ann: Any) -> Any:
    for arg in getattr(ann, "__args__", ()) or ():
        m = _inner_model(arg)
        if m is not None:
            return m
    if isinstance(ann, type) and issubclass(ann, BaseModel):
        return ann
    return None


def _unknown_msg(path: list[str], node: dict) -> str:
    known = list(node.keys())
    model = _model_at(path[:-1])
    if model is not None:
        known = list(model.model_fields)
    hint = suggest(path[-1], known)
    return "unknown key" + (f" (did you mean {'.'.join(path[:-1] + [hint[0]])!r}?)" if hint else "")


def _model_at(path: list[str]):
    model: Any = Scenario
    for part in path:
        fields = getattr(model, "model_fields", None)
        if not fields or part not in fields:
            return None
        model = _inner_model(fields[part].annotation)
    return model


def set_dotted(raw: dict, key: str, value: Any, *, label: str = "") -> None:
    """Set a dotted key in raw scenario data; list tables are addressed by item name."""
    if not isinstance(key, str) or not key or key.startswith(".") or key.endswith("."):
        raise ScenarioError("must be a dotted key such as 'project.lifetime_years'", key=label or "key", value=key)
    container, last = _walk(raw, key, create=True, label=label)
    if not isinstance(container, dict):
        raise ScenarioError("does not name a scenario value", key=f"{label}.{key}" if label else key, has_value=False)
    container[last] = value


def get_dotted(raw: dict, key: str) -> Any:
    container, last = _walk(raw, key, create=False, label="")
    if not isinstance(container, dict) or last not in container:
        raise KeyError(key)
    return container[last]


def numeric_value(scn: Scenario, key: str) -> float:
    """The effective numeric value of a dotted key (defaults applied)."""
    node: Any = scn
    parts = key.split(".")
    i = 0
    while i < len(parts):
        part = parts[i]
        if isinstance(node, list):
            match = [x for x in node if getattr(x, "name", None) == part]
            if not match:
                raise ScenarioError("no such item", key=key, has_value=False)
            node = match[0]
        elif isinstance(node, BaseModel) and part in type(node).model_fields:
            node = getattr(node, part)
            if node is None:
                derived = {"operations.availability_first_year": scn.availability_first_year,
                           "maintenance.escalation": scn.escalation,
                           "revenue.ppa_term_years": scn.ppa_term_years,
                           "revenue.merchant_price_per_mwh": scn.merchant_price_per_mwh,
                           "finance.equity_target_return": scn.equity_target_return,
                           "wind.shear_exponent": scn.wind.alpha}
                if key in derived:
                    return float(derived[key])
                raise ScenarioError("is not set in this scenario", key=key, has_value=False)
        else:
            model = node if isinstance(node, BaseModel) else None
            known = list(type(model).model_fields) if model is not None else []
            hint = suggest(part, known)
            raise ScenarioError("unknown key" + (f" (did you mean {'.'.join(parts[:i] + hint)!r}?)" if hint else ""),
                                key=key, has_value=False)
        i += 1
    if isinstance(node, bool) or not isinstance(node, (int, float)):
        raise ScenarioError("is not a numeric value", key=key, value=node)
    return float(node)


def numeric_keys(scn: Scenario) -> list[str]:
    """All numeric dotted keys of a scenario (list items addressed by name)."""
    out: list[str] = []

    def visit(model: BaseModel, prefix: str):
        for name in type(model).model_fields:
            if prefix == "" and name in ("schema_version", "variants", "montecarlo"):
                continue
            value = getattr(model, name)
            key = f"{prefix}{name}"
            if isinstance(value, BaseModel):
                visit(value, key + ".")
            elif isinstance(value, list):
                for item in value:
                    if isinstance(item, BaseModel):
                        visit(item, f"{key}.{item.name}.")
            elif isinstance(value, (int, float)) and not isinstance(value, bool):
                out.append(key)
    visit(scn, "")
    return out


# --------------------------------------------------------------------------- loading

_MESSAGES = {
    "greater_than": "must be > {gt}",
    "greater_than_equal": "must be >= {ge}",
    "less_than": "must be < {lt}",
    "less_than_equal": "must be <= {le}",
    "int_type": "must be an integer",
    "int_from_float": "must be an integer",
    "float_type": "must be a number",
    "string_type": "must be text (a quoted string)",
    "bool_type": "must be true or false",
    "missing": "is required",
    "dict_type": "must be a table",
    "model_type": "must be a table",
    "model_attributes_type": "must be a table",
    "list_type": "must be an array",
    "too_short": "needs at least {min_length} item(s)",
    "too_long": "takes at most {max_length} item(s)",
    "string_too_short": "must not be empty",
    "finite_number": "must be a finite number",
}


def _dotted(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out


def _convert(err: ValidationError, raw: dict) -> ScenarioError:
    errors = err.errors(include_url=False)
    # An unknown key usually explains a "missing" one next to it (a typo): report it first.
    e = next((x for x in errors if x["type"] == "extra_forbidden"), errors[0])
    loc = tuple(p for p in e["loc"] if not (isinstance(p, str) and ("function-after" in p or p.startswith("constrained"))))
    # drop union branch labels pydantic adds (e.g. 'float', 'none')
    clean = []
    for p in loc:
        if isinstance(p, str) and p in ("float", "int", "str", "none", "constrained-float", "constrained-int",
                                         "constrained-str", "literal", "lax-or-strict", "is-instance"):
            continue
        clean.append(p)
    loc = tuple(clean)
    ctx_err = e.get("ctx", {}).get("error") if e.get("ctx") else None
    if isinstance(ctx_err, _Cross):
        prefix = _dotted(loc)
        key = ctx_err.key
        if prefix and not key.startswith(prefix.split(".")[0] + ".") and key != prefix.split(".")[0]:
            key = f"{prefix}.{key}"
        elif prefix and "montecarlo" in prefix:
            key = f"{prefix}.{key}"
        return ScenarioError(ctx_err.message, key=key, value=ctx_err.value, has_value=ctx_err.has_value)
    key = _dotted(loc)
    typ = e["type"]
    value = e.get("input")
    if typ == "extra_forbidden":
        model = _model_at([p for p in loc[:-1] if isinstance(p, str)])
        known = list(model.model_fields) if model is not None else []
        hint = suggest(str(loc[-1]), known)
        parent = _dotted(loc[:-1])
        msg = "unknown key"
        if hint:
            msg += f" (did you mean {(parent + '.' if parent else '') + hint[0]!r}?)"
        return ScenarioError(msg, key=key, has_value=False)
    if typ == "missing":
        return ScenarioError("is required", key=key, has_value=False)
    if typ == "literal_error":
        expected = e.get("ctx", {}).get("expected", "")
        return ScenarioError(f"must be one of {expected}", key=key, value=value)
    if typ in _MESSAGES:
        try:
            msg = _MESSAGES[typ].format(**e.get("ctx", {}))
        except (KeyError, IndexError):
            msg = e["msg"]
        return ScenarioError(msg, key=key, value=value)
    return ScenarioError(e["msg"].rstrip(".").lower(), key=key, value=value)


def _check_finite(raw: Any, path: str = "") -> None:
    if isinstance(raw, dict):
        for k, v in raw.items():
            _check_finite(v, f"{path}.{k}" if path else str(k))
    elif isinstance(raw, list):
        for i, v in enumerate(raw):
            _check_finite(v, f"{path}[{i}]")
    elif isinstance(raw, float) and not math.isfinite(raw):
        raise ScenarioError("must be a finite number", key=path, value=raw)


def from_dict(raw: dict, *, source: str = "<scenario>", base_dir: Path | str = ".",
              check_variants: bool = True) -> Scenario:
    """Validate plain data (as parsed from TOML) into a :class:`Scenario`."""
    try:
        if not isinstance(raw, dict):
            raise ScenarioError("a scenario must be a table of sections", has_value=False)
        _check_finite(raw)
        version = raw.get("schema_version")
        if version is None:
            raise ScenarioError(f"is required (this program reads version {SCHEMA_VERSION})", key="schema_version",
                                has_value=False)
        if version != SCHEMA_VERSION or isinstance(version, bool):
            raise ScenarioError(f"unsupported; this program reads version {SCHEMA_VERSION}",
                                key="schema_version", value=version)
        try:
            scn = Scenario.model_validate(raw)
        except ValidationError as err:
            raise _convert(err, raw) from None
        scn._source = source
        scn._base_dir = Path(base_dir)
        scn._raw = copy.deepcopy(raw)
        _cross_checks(scn)
        if check_variants:
            for name, overrides in scn.variants.items():
                if not isinstance(overrides, dict):
                    raise ScenarioError("must be a table of dotted keys and values", key=f"variants.{name}",
                                        has_value=False)
                for key, value in overrides.items():
                    if key.split(".")[0] in ("variants", "schema_version"):
                        raise ScenarioError("a variant cannot change this key", key=f"variants.{name}.{key}",
                                            value=value)
                    _check_variant_key(scn, name, key, value)
                try:
                    scn.with_overrides(overrides, label=f"variants.{name}")
                except ScenarioError as exc:
                    raise _variant_error(exc, scn, name, overrides) from None
        return scn
    except ScenarioError as exc:
        raise exc.with_file(source)


def _check_variant_key(scn: Scenario, name: str, key: str, value: Any) -> None:
    """A variant's dotted key must name a scenario value: a section field, or a field of a named list item."""
    label = f"variants.{name}.{key}"
    parts = key.split(".")
    if any(not p for p in parts):
        raise ScenarioError("must be a dotted key such as 'project.lifetime_years'", key=label, value=value)
    model: Any = Scenario
    walked: list[str] = []
    i = 0
    while i < len(parts):
        part = parts[i]
        fields = model.model_fields
        if part not in fields:
            hint = suggest(part, list(fields))
            msg = "unknown key" + (f" (did you mean {'.'.join(walked + hint + parts[i + 1:])!r}?)" if hint else "")
            raise ScenarioError(msg, key=label, value=value)
        walked.append(part)
        ann = fields[part].annotation
        inner = _inner_model(ann)
        i += 1
        if i == len(parts):
            return
        if inner is None:
            raise ScenarioError(f"{'.'.join(walked)} is a value, not a table", key=label, value=value)
        origin = getattr(ann, "__origin__", None)
        if origin is dict:          # montecarlo.vary.NAME...: names may hold dots; checked on validation
            return
        if origin is list:          # maintenance.component.NAME.field
            walked.append(parts[i])
            i += 1
            if i == len(parts):
                raise ScenarioError("name an item and a field, e.g. maintenance.component.gearbox.replacement_cost",
                                    key=label, value=value)
        model = inner


def _named_key(raw: dict, key: str) -> str:
    """``maintenance.component[0].x`` -> ``maintenance.component.gearbox.x`` (the item's name)."""
    out: list[str] = []
    node: Any = raw
    for token in re.findall(r"[^.\[\]]+|\[\d+\]", key):
        if token.startswith("[") and isinstance(node, list):
            idx = int(token[1:-1])
            item = node[idx] if idx < len(node) else None
            nm = item.get("name") if isinstance(item, dict) else None
            if not isinstance(nm, str):
                return key
            out.append(nm)
            node = item
        else:
            out.append(token)
            node = node.get(token) if isinstance(node, dict) else None
    return ".".join(out)


def _variant_error(exc: ScenarioError, scn: Scenario, name: str, overrides: dict) -> ScenarioError:
    """Re-key an error met while applying a variant: under the variant's own key when it set that
    value, else under ``variants.NAME`` with the scenario key it broke in the message."""
    if not exc.key or exc.key.startswith("variants."):
        return exc
    raw = scn.raw
    for k, v in overrides.items():
        try:
            set_dotted(raw, k, v)
        except ScenarioError:
            pass
    key = _named_key(raw, exc.key)
    if key in overrides or exc.key in overrides:
        return ScenarioError(exc.message, key=f"variants.{name}.{key}", value=exc.value, has_value=exc.has_value)
    inner = f"{key} = {_show(exc.value)}" if exc.has_value else key
    return ScenarioError(f"with this variant, {inner}: {exc.message}", key=f"variants.{name}", has_value=False)


_CONTROL = re.compile(r"[\x00-\x1f\x7f]")


def _check_text(scn: Scenario) -> None:
    """Names and labels are one line of printable text: they go into tables, CSV and the workbook."""
    texts = [("project.name", scn.project.name), ("project.currency", scn.project.currency)]
    for table in ("component", "overhaul"):
        texts += [(f"maintenance.{table}[{i}].name", x.name) for i, x in enumerate(getattr(scn.maintenance, table))]
    for table in ("speed", "energy"):
        texts += [(f"uncertainty.{table}[{i}].name", x.name) for i, x in enumerate(getattr(scn.uncertainty, table))]
    for key, text in texts:
        if _CONTROL.search(text):
            raise ScenarioError("must be one line of text without control characters (tab, line break, escape)",
                                key=key, value=text)
    if not scn.project.name.strip():
        raise ScenarioError("must not be blank", key="project.name", value=scn.project.name)


def _cross_checks(scn: Scenario) -> None:
    _check_text(scn)
    L = scn.lifetime
    t = scn.turbine
    if t.hub_height_m <= t.rotor_diameter_m / 2.0:
        raise ScenarioError(f"must be above the rotor radius {t.rotor_diameter_m / 2.0:g} m "
                            "(the blade would reach the ground)", key="turbine.hub_height_m", value=t.hub_height_m)
    downtime = sum(c.failure_rate_per_turbine_year * c.downtime_days / 365.0 for c in scn.maintenance.component)
    if downtime >= 1.0:
        raise ScenarioError(f"the expected downtime sum(rate * downtime_days / 365) = {downtime:.3g} must be below 1 "
                            "(the turbines would never run)", key="maintenance.component", has_value=False)
    for i, oh in enumerate(scn.maintenance.overhaul):
        if oh.year > L:
            raise ScenarioError(f"must lie within the operating life 1..{L}",
                                key=f"maintenance.overhaul[{i}].year", value=oh.year)
    debt = scn.finance.debt
    if debt is not None and debt.tenor_years > L:
        raise ScenarioError(f"must not be longer than project.lifetime_years = {L}",
                            key="finance.debt.tenor_years", value=debt.tenor_years)
    mc = scn.montecarlo
    for name in mc.vary:
        try:
            numeric_value(scn, name)
        except ScenarioError as exc:
            msg = exc.message if exc.message.startswith("unknown key") else \
                f"does not name a numeric scenario value ({exc.message})"
            raise ScenarioError(msg, key=f"montecarlo.vary.{name}", has_value=False) from None
        if name in ("project.lifetime_years", "project.turbines"):
            raise ScenarioError("cannot vary between trials (it changes the shape of the model); use variants",
                                key=f"montecarlo.vary.{name}", has_value=False)
    for i, c in enumerate(mc.correlation):
        for n in c.between:
            if n not in mc.vary:
                raise ScenarioError("must name an entry of [montecarlo.vary]",
                                    key=f"montecarlo.correlation[{i}].between", value=n)
        if c.between[0] == c.between[1]:
            raise ScenarioError("must name two different inputs", key=f"montecarlo.correlation[{i}].between",
                                value=c.between[0])


def parse_toml(path: Path) -> dict:
    try:
        text = path.read_bytes().decode("utf-8")
    except FileNotFoundError:
        raise ScenarioError("file not found", file=str(path)) from None
    except IsADirectoryError:
        raise ScenarioError("is a folder, not a scenario file", file=str(path)) from None
    except UnicodeDecodeError:
        raise ScenarioError("is not UTF-8 text", file=str(path)) from None
    except OSError as exc:
        raise ScenarioError(f"cannot be read ({exc.strerror})", file=str(path)) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(_syntax_message(str(exc), text), file=str(path)) from None


_TOML_HINTS = {
    "cannot overwrite a value": "a key is given twice",
    "invalid value": "text needs quotes; numbers use '.' for decimals",
    "illegal character '\\n'": "a string or value is not closed on its line",
    "unclosed array": "a '[' has no matching ']'",
    "unterminated string": "a string has no closing quote",
    "expected newline or end of document after a statement": "one key = value per line; numbers use '.' for decimals",
}


def _syntax_message(detail: str, text: str) -> str:
    """``TOML syntax error at line L, column C: what (hint); near: 'the line'`` from tomllib's text."""
    m = re.search(r"\s*\(at line (\d+), column (\d+)\)\s*$", detail)
    lines = text.splitlines()
    if m:
        line, col = int(m.group(1)), int(m.group(2))
        what = detail[:m.start()]
    elif re.search(r"\(at end of document\)\s*$", detail):
        line = max(len(lines), 1)
        col = len(lines[-1]) + 1 if lines else 1
        what = re.sub(r"\s*\(at end of document\)\s*$", "", detail)
    else:
        return f"TOML syntax error: {detail}"
    what = what[:1].lower() + what[1:]
    # tomllib names a table as a tuple of keys: ('finance', 'debt') -> [finance.debt]
    what = re.sub(r"\(((?:'[^']*',?\s*)+)\)", lambda g: "[" + ".".join(re.findall(r"'([^']*)'", g.group(1))) + "]",
                  what)
    hint = next((h for k, h in _TOML_HINTS.items() if what.lower().startswith(k)), None)
    out = f"TOML syntax error at line {line}, column {col}: {what}"
    if hint:
        out += f" ({hint})"
    if 1 <= line <= len(lines) and lines[line - 1].strip():
        near = lines[line - 1].strip()
        out += f"; the line reads {near[:50] + ('...' if len(near) > 50 else '')!r}"
    return out


def load(path: str | Path) -> Scenario:
    """Load and validate a scenario file. Raises :class:`ScenarioError`."""
    path = Path(path)
    raw = parse_toml(path)
    return from_dict(raw, source=str(path), base_dir=path.parent)


_TOML_ESCAPES = {"\\": "\\\\", '"': '\\"', "\b": "\\b", "\t": "\\t", "\n": "\\n", "\f": "\\f", "\r": "\\r"}


def _toml_char(ch: str) -> str:
    """One character of a TOML basic string: quotes, backslashes and control characters escaped."""
    if ch in _TOML_ESCAPES:
        return _TOML_ESCAPES[ch]
    if ord(ch) < 0x20 or ord(ch) == 0x7F:
        return f"\\u{ord(ch):04X}"
    return ch


def to_toml(raw: dict) -> str:
    """Write scenario data back as TOML (the subset this format uses)."""
    lines: list[str] = []

    def fmt(v: Any) -> str:
        if isinstance(v, bool):
            return "true" if v else "false"
        if isinstance(v, int):
            return str(v)
        if isinstance(v, float):
            return repr(v)
        if isinstance(v, str):
            return '"' + "".join(_toml_char(ch) for ch in v) + '"'
        if isinstance(v, list):
            return "[" + ", ".join(fmt(x) for x in v) + "]"
        raise TypeError(type(v))

    def qkey(k: str) -> str:
        return k if k.replace("_", "").replace("-", "").isalnum() else fmt(k)

    def table(prefix: str, d: dict):
        scalars = {k: v for k, v in d.items() if not isinstance(v, dict) and not
                   (isinstance(v, list) and v and all(isinstance(x, dict) for x in v))}
        if prefix and (scalars or not d):
            lines.append(f"\n[{prefix}]")
        for k, v in scalars.items():
            lines.append(f"{qkey(k)} = {fmt(v)}")
        for k, v in d.items():
            if isinstance(v, dict):
                table(f"{prefix}.{qkey(k)}" if prefix else qkey(k), v)
            elif isinstance(v, list) and v and all(isinstance(x, dict) for x in v):
                for item in v:
                    lines.append(f"\n[[{prefix}.{qkey(k)}]]" if prefix else f"\n[[{qkey(k)}]]")
                    for ik, iv in item.items():
                        lines.append(f"{qkey(ik)} = {fmt(iv)}")
    table("", raw)
    return "\n".join(lines).lstrip() + "\n"
