"""The scenario: a typed, validated model of one site, loaded from TOML.

The sections and their rules are in :mod:`lcoe.inputs.schema`, dotted keys in
:mod:`lcoe.inputs.keys`, TOML reading and writing in :mod:`lcoe.inputs.toml`; this
module validates raw data into a :class:`Scenario` (with the file it came from),
applies overrides and variants, and loads a file.
"""

from __future__ import annotations

import contextlib
import copy
import math
import re
from pathlib import Path
from typing import Any

from pydantic import PrivateAttr, ValidationError

from lcoe.inputs.errors import ScenarioError, _show
from lcoe.inputs.keys import (  # noqa: F401
    FILE_SETTINGS,
    _inner_model,
    _model_at,
    get_dotted,
    is_integer_key,
    numeric_keys,
    numeric_value,
    set_dotted,
    suggest,
)
from lcoe.inputs.schema import (  # noqa: F401
    DEPRECIATION_METHODS,
    LOSS_CATEGORIES,
    MAX_VARIANTS,
    SCHEMA_VERSION,
    SIZING_CASES,
    ScenarioFields,
    Vary,
    _Cross,
)
from lcoe.inputs.toml import parse_toml, read_toml, to_toml  # noqa: F401


class Scenario(ScenarioFields):
    """One site, validated. Build with :func:`load` or :func:`from_dict`."""

    _base_dir: Path = PrivateAttr(default=Path("."))
    _source: str = PrivateAttr(default="<scenario>")
    _raw: dict = PrivateAttr(default_factory=dict)
    _site_key_memo: str | None = PrivateAttr(default=None)
    _sha256: str | None = PrivateAttr(default=None)

    @property
    def base_dir(self) -> Path:
        return self._base_dir

    @property
    def source(self) -> str:
        return self._source

    @property
    def file_sha256(self) -> str | None:
        """SHA-256 (hex) of the scenario file as read by :func:`load`; None for a scenario built from data."""
        return self._sha256

    @property
    def raw(self) -> dict:
        """The scenario as plain TOML-like data (a deep copy)."""
        return copy.deepcopy(self._raw)

    def resolve(self, relative: str) -> Path:
        p = Path(relative)
        return p if p.is_absolute() else self._base_dir / p

    def with_overrides(self, overrides: dict[str, Any], *, label: str = "override") -> "Scenario":
        """A new scenario with dotted keys replaced (same validation as the file).

        The variants come along as they are, without being copied or validated again (they
        were checked with the file): so applying each of many variants costs the same
        whatever their number."""
        raw = {k: copy.deepcopy(v) for k, v in self._raw.items() if k != "variants"}
        for key, value in overrides.items():
            if isinstance(key, str) and key.split(".")[0] == "variants":
                raise ScenarioError("an override cannot change the variants", key=f"{label}.{key}" if label else key,
                                    has_value=False)
            set_dotted(raw, key, value, label=label)
        scn = from_dict(raw, source=self._source, base_dir=self._base_dir, check_variants=False)
        if "variants" in self._raw:
            scn = scn.model_copy(update={"variants": self.variants})
            scn._raw = {**scn._raw, "variants": self._raw["variants"]}
        scn._sha256 = self._sha256      # the file it came from, changed by the overrides
        return scn

    def variant(self, name: str) -> "Scenario":
        if name not in self.variants:
            raise ScenarioError(f"unknown variant; known: {', '.join(self.variants) or 'none'}",
                                key="variants", value=name, file=self._source)
        return self.with_overrides(self.variants[name], label=f"variants.{name}")



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
    "date_type": "must be a date written without quotes, such as 2027-03-31",
    "date_parsing": "must be a date written without quotes, such as 2027-03-31",
    "model_type": "must be a table",
    "model_attributes_type": "must be a table",
    "list_type": "must be an array",
    "too_short": "needs at least {min_length} item(s)",
    "too_long": "takes at most {max_length} item(s)",
    "string_too_short": "must not be empty",
    "finite_number": "must be a finite number",
}


def check_version(raw: dict) -> None:
    """The file's ``schema_version`` is required and must be the one this program reads."""
    version = raw.get("schema_version")
    if version is None:
        raise ScenarioError(f"is required (this program reads version {SCHEMA_VERSION})", key="schema_version",
                            has_value=False)
    if version != SCHEMA_VERSION or isinstance(version, bool):
        raise ScenarioError(f"unsupported; this program reads version {SCHEMA_VERSION}",
                            key="schema_version", value=version)

def _dotted(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        else:
            out += ("." if out else "") + str(part)
    return out


def _convert(err: ValidationError, raw: dict, root=None) -> ScenarioError:
    """The first pydantic error as a ScenarioError naming the dotted key (``root``: the model
    the data was validated against, for suggestions; default the scenario)."""
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
        model = _model_at([p for p in loc[:-1] if isinstance(p, str)], root)
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
    if typ == "float_type" and isinstance(value, int) and not isinstance(value, bool):
        return ScenarioError("is too large to be a number here", key=key, value=value)
    if typ in _MESSAGES:
        try:
            msg = _MESSAGES[typ].format(**{k: _bound_text(v) for k, v in (e.get("ctx") or {}).items()})
        except (KeyError, IndexError):
            msg = e["msg"]
        return ScenarioError(msg, key=key, value=value)
    return ScenarioError(e["msg"].rstrip(".").lower(), key=key, value=value)


def _bound_text(v: Any) -> Any:
    """A limit as written in a message: 1e+12 rather than 1000000000000.0."""
    if isinstance(v, float) and v.is_integer() and abs(v) >= 1e5:
        return f"{v:g}"
    return v


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
        if "portfolio" in raw and "project" not in raw:
            raise ScenarioError("is a portfolio file, not a scenario (it has a [portfolio] table); run it with "
                                "lcoe portfolio", has_value=False)
        _check_finite(raw)
        variants = raw.get("variants")
        if isinstance(variants, dict) and len(variants) > MAX_VARIANTS:
            raise ScenarioError(f"{len(variants)} variants; a scenario compares at most {MAX_VARIANTS}",
                                key="variants", has_value=False)
        cases = raw.get("lender_cases")
        if isinstance(cases, dict) and len(cases) > MAX_VARIANTS:
            raise ScenarioError(f"{len(cases)} lender cases; a scenario runs at most {MAX_VARIANTS}",
                                key="lender_cases", has_value=False)
        check_version(raw)
        try:
            scn = Scenario.model_validate(raw)
        except ValidationError as err:
            raise _convert(err, raw) from None
        scn._source = source
        scn._base_dir = Path(base_dir)
        scn._raw = copy.deepcopy(raw)
        _cross_checks(scn)
        if check_variants:
            # the file's own Monte Carlo keys (a scenario derived from it, with a shorter life say,
            # is not refused for them: its Monte Carlo run checks them again, by their effect)
            for name in scn.montecarlo.vary:
                why = vary_refusal(scn, name)
                if why:
                    raise ScenarioError(why, key=f"montecarlo.vary.{name}", has_value=False)
            for name, overrides in scn.variants.items():
                _check_override_table(scn, "variants", name, overrides)
            for name, table in scn.lender_cases.items():
                _check_lender_case(scn, name, table)
        return scn
    except ScenarioError as exc:
        raise exc.with_file(source)


def _check_override_table(scn: Scenario, section: str, name: str, overrides: Any,
                          refused: tuple = ("variants", "lender_cases", "schema_version"), why: str = "") -> None:
    """A table of dotted keys and values (a variant, a lender case): each key names a scenario
    value, none of ``refused`` (top-level sections or dotted prefixes), and the scenario with
    them applied is valid."""
    if not isinstance(overrides, dict):
        raise ScenarioError("must be a table of dotted keys and values", key=f"{section}.{name}", has_value=False)
    for key, value in overrides.items():
        if key.split(".")[0] in refused or any(key.startswith(p + ".") for p in refused if "." in p):
            raise ScenarioError(f"a {section.rstrip('s').replace('_', ' ')} cannot change this key{why}",
                                key=f"{section}.{name}.{key}", value=value)
        _check_variant_key(scn, name, key, value, section)
    try:
        scn.with_overrides(overrides, label=f"{section}.{name}")
    except ScenarioError as exc:
        raise _variant_error(exc, scn, name, overrides, section) from None


LENDER_CASE_FIELDS = ("label", "energy_case")   # a lender case's own keys beside its dotted overrides


def _check_lender_case(scn: Scenario, name: str, table: Any) -> None:
    """A ``[lender_cases.NAME]`` table: an optional ``label`` (text) and ``energy_case`` (one of the
    P-cases, whose factor P_case / P50 scales every year's energy), then dotted overrides like a
    variant's; the debt terms and the life are locked at close, so a case cannot change them."""
    label = f"lender_cases.{name}"
    if not isinstance(table, dict):
        raise ScenarioError("must be a table of dotted keys and values", key=label, has_value=False)
    text = table.get("label")
    if text is not None and (not isinstance(text, str) or not text.strip() or len(text) > 200):
        raise ScenarioError("must be text of 1 to 200 characters", key=f"{label}.label", value=text)
    case = table.get("energy_case")
    if case is not None and case not in SIZING_CASES:
        raise ScenarioError(f"must be one of {', '.join(SIZING_CASES)}", key=f"{label}.energy_case", value=case)
    overrides = {k: v for k, v in table.items() if k not in LENDER_CASE_FIELDS}
    _check_override_table(scn, "lender_cases", name, overrides,
                          refused=("variants", "lender_cases", "schema_version", "montecarlo", "project",
                                   "finance.debt", "construction"),
                          why=" (the debt, the life and the construction period are fixed at close; a lender "
                              "case runs against them)")


def _check_variant_key(scn: Scenario, name: str, key: str, value: Any, section: str = "variants") -> None:
    """A variant's dotted key must name a scenario value: a section field, or a field of a named list item."""
    label = f"{section}.{name}.{key}"
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


def _variant_error(exc: ScenarioError, scn: Scenario, name: str, overrides: dict,
                   section: str = "variants") -> ScenarioError:
    """Re-key an error met while applying a variant: under the variant's own key when it set that
    value, else under ``variants.NAME`` with the scenario key it broke in the message."""
    if not exc.key or exc.key.startswith(f"{section}."):
        return exc
    raw = scn.raw
    for k, v in overrides.items():
        try:
            set_dotted(raw, k, v)
        except ScenarioError:
            pass
    key = _named_key(raw, exc.key)
    if key in overrides or exc.key in overrides:
        return ScenarioError(exc.message, key=f"{section}.{name}.{key}", value=exc.value, has_value=exc.has_value)
    inner = f"{key} = {_show(exc.value)}" if exc.has_value else key
    what = "variant" if section == "variants" else "lender case"
    return ScenarioError(f"with this {what}, {inner}: {exc.message}", key=f"{section}.{name}", has_value=False)


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
    for name in scn.variants:
        if _CONTROL.search(name) or not name.strip() or len(name) > MAX_NAME:
            raise ScenarioError(f"a variant's name must be one line of at most {MAX_NAME} printable characters",
                                key="variants", value=name)
    for key, rel in (("turbine.power_curve", scn.turbine.power_curve), ("wind.timeseries", scn.wind.timeseries)):
        if rel is not None and (not rel.strip() or _CONTROL.search(rel)):
            raise ScenarioError("must name a file (not blank, without control characters)", key=key, value=rel)


MAX_NAME = 60


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
    for i, c in enumerate(mc.correlation):
        for n in c.between:
            if n not in mc.vary:
                raise ScenarioError("must name an entry of [montecarlo.vary]",
                                    key=f"montecarlo.correlation[{i}].between", value=n)
        if c.between[0] == c.between[1]:
            raise ScenarioError("must name two different inputs", key=f"montecarlo.correlation[{i}].between",
                                value=c.between[0])
    _layout_checks(scn)


def _layout_checks(scn: Scenario) -> None:
    """A layout replaces the typed wake loss and needs wind directions; its grid holds project.turbines."""
    lay = scn.layout
    if lay is None:
        return
    w = scn.wind
    if w.rose is None and w.timeseries is None:
        raise ScenarioError("a layout needs wind directions: give [wind.rose], or a wind.timeseries with a "
                            "direction_deg column", key="layout", has_value=False)
    if "wake" in (scn._raw.get("losses") or {}):
        raise ScenarioError("cannot be given together with [layout]: the wake loss is computed from the layout",
                            key="losses.wake", value=scn.losses.wake)
    if lay.positions is None and lay.rows * lay.columns != scn.project.turbines:
        raise ScenarioError(f"must equal the grid's layout.rows x layout.columns = {lay.rows * lay.columns}",
                            key="project.turbines", value=scn.project.turbines)
    for name in scn.montecarlo.vary:
        if name == "losses.wake":
            raise ScenarioError("cannot vary with a [layout]: the wake loss is computed from the layout (its "
                                "uncertainty is an [[uncertainty.energy]] term)", key=f"montecarlo.vary.{name}",
                                has_value=False)
        if name.split(".")[0] in ("layout", "wind", "turbine"):
            raise ScenarioError("cannot vary between trials with a [layout]: each value needs its own wake "
                                "computation; use a sweep or variants", key=f"montecarlo.vary.{name}",
                                has_value=False)


def vary_refusal(scn: Scenario, key: str) -> str | None:
    """Why ``[montecarlo.vary."KEY"]`` cannot be drawn in this scenario, or None.

    A Monte Carlo trial draws a continuous value for each key and runs the model with the
    debt as sized at close, so a key is refused where a draw would not be honoured or
    would change nothing: whole numbers (a year of 11.6 matches no year), the debt's
    terms (the schedule is fixed at close), settings of the file and of the uncertainty
    itself, and inputs this scenario does not use.
    """
    try:
        base = numeric_value(scn, key)
    except ScenarioError as exc:
        return exc.message if exc.message.startswith("unknown key") else \
            f"does not name a numeric scenario value ({exc.message})"
    head = key.split(".")[0]
    if head in FILE_SETTINGS:
        return "is a setting of the file, not a model input"
    if key in ("project.lifetime_years", "project.turbines"):
        return "cannot vary between trials (it changes the shape of the model); use variants"
    if is_integer_key(key):
        return ("is a whole number (a year or a count): a trial's draw of, say, 11.6 would match no year, so it "
                "cannot be drawn; compare whole values with variants or `lcoe sweep`")
    if key.startswith("finance.debt."):
        return ("is a term of the debt, which is sized once at financial close; every trial meets that schedule, "
                "so its draws would change nothing; compare values with variants or `lcoe sweep` "
                "(which re-size the debt)")
    if head == "uncertainty":
        return "sets the spread of the wind and energy draws; it is not itself drawn"
    w, t, r, o = scn.wind, scn.turbine, scn.revenue, scn.operations
    unused = {
        "wind.weibull_shape": (w.timeseries is not None and "the distribution comes from wind.timeseries") or
        (getattr(w, "rose", None) is not None and "the wind rose gives each sector's shape"),
        "wind.max_missing_share": "it only decides whether the series is accepted",
        "wind.shear_exponent": w.roughness_length_m is not None and "the log law (wind.roughness_length_m) "
                                                                    "sets the shear",
        "wind.elevation_m": w.air_density_kgm3 is not None and "wind.air_density_kgm3 is given",
        "wind.mean_temperature_c": w.air_density_kgm3 is not None and "wind.air_density_kgm3 is given",
        "turbine.curve_air_density_kgm3": t.power_curve is None and "the power curve is built from physics",
        "revenue.merchant_price_per_mwh": scn.ppa_term_years >= scn.lifetime and "the PPA covers the whole life",
        "revenue.merchant_escalation": scn.ppa_term_years >= scn.lifetime and "the PPA covers the whole life",
        "revenue.ppa_price_per_mwh": scn.ppa_term_years == 0 and r.merchant_price_per_mwh is not None
        and "revenue.ppa_term_years = 0",
        "revenue.ppa_escalation": scn.ppa_term_years == 0 and "revenue.ppa_term_years = 0",
        "revenue.production_credit_per_mwh": r.production_credit_years == 0 and "revenue.production_credit_years = 0",
        "operations.availability_ageing_per_year": o.ageing_starts_year >= scn.lifetime and
        f"operations.ageing_starts_year = {o.ageing_starts_year} is not before the end of the life",
    }
    for c in scn.maintenance.component:
        prefix = f"maintenance.component.{c.name}."
        rate_varied = prefix + "failure_rate_per_turbine_year" in scn.montecarlo.vary
        if c.failure_rate_per_turbine_year == 0 and not rate_varied:
            for field in ("replacement_cost", "downtime_days"):
                unused[prefix + field] = f"the component never fails ({prefix}failure_rate_per_turbine_year = 0)"
    if unused.get(key):
        return f"is not used in this scenario ({unused[key]}), so its draws would change nothing"
    spec = scn.montecarlo.vary[key] if key in scn.montecarlo.vary else None
    if spec is not None and spec.distribution == "lognormal":
        mean = base if spec.mean is None else spec.mean
        if mean <= 0:
            return f"a lognormal input needs a mean > 0 (the scenario's value {mean:g} is used when mean is omitted)"
        if spec.sd > 1000.0 * mean:
            return f"sd = {spec.sd:g} is more than 1000 times the mean {mean:g}; no lognormal input is that wide"
    return None


def input_files(scn: Scenario) -> list[tuple[str, Path]]:
    """(label, path) of every file a run of the scenario reads: the scenario and the data files
    it names, its variants' included."""
    out: list[tuple[str, Path]] = []
    if scn.source and not scn.source.startswith("<"):
        out.append(("the scenario", Path(scn.source)))
    tables = [(None, scn)] + [(name, None) for name in scn.variants]
    for name, one in tables:
        if one is None:
            try:
                one = scn.variant(name)
            except ScenarioError:
                continue
        for key in ("turbine.power_curve", "wind.timeseries", "wind.long_term.reference", "layout.positions"):
            rel: Any = one
            for part in key.split("."):
                rel = getattr(rel, part, None) if rel is not None else None
            if isinstance(rel, str):
                label = f"{key} of variant {name}" if name else key
                out.append((label, one.resolve(rel)))
    return out


@contextlib.contextmanager
def naming_the_file(scn: Scenario):
    """A ScenarioError raised while a scenario runs names its file (unless it names a data file already)."""
    try:
        yield
    except ScenarioError as exc:
        raise exc.with_file(scn.source) from None


def load(path: str | Path) -> Scenario:
    """Load and validate a scenario file. Raises :class:`ScenarioError`."""
    if not str(path).strip():
        raise ScenarioError("no scenario file given (the path is blank)")
    path = Path(path)
    raw, digest = read_toml(path)
    scn = from_dict(raw, source=str(path), base_dir=path.parent)
    scn._sha256 = digest
    return scn
