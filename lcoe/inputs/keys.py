"""Dotted keys (``capex.turbine_per_kw``, ``maintenance.component.gearbox.replacement_cost``):
reading and setting them in raw scenario data, their effective values, and suggestions for a mistyped one.
"""

from __future__ import annotations

import difflib
import math
from typing import Any

import numpy as np
from pydantic import BaseModel

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import DERIVED_DEFAULTS, ScenarioFields


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
    model: Any = ScenarioFields
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


def _model_at(path: list[str], root: Any = None):
    model: Any = ScenarioFields if root is None else root
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


def numeric_value(scn: ScenarioFields, key: str) -> float:
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
                if key in DERIVED_DEFAULTS:
                    return float(scn.derived(key))
                if key == "layout.wake_decay_constant" and scn.layout is not None:
                    return float(scn.layout.decay_constant)
                if key == "wind.shear_exponent":
                    return float(scn.wind.alpha)
                if key == "wind.mean_temperature_c":
                    return float(scn.wind.temperature_c)
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


def numeric_keys(scn: ScenarioFields) -> list[str]:
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


# --------------------------------------------------------------------------- a key's type and range

FILE_SETTINGS = ("montecarlo", "variants", "schema_version")


def key_field(key: str):
    """The pydantic field of a dotted key, walking the schema (list items are skipped by name);
    None when the key names no field."""
    model: Any = ScenarioFields
    parts = key.split(".")
    after_list = False
    info = None
    for i, part in enumerate(parts):
        fields = getattr(model, "model_fields", None) or {}
        if part in fields:
            info = fields[part]
            if i == len(parts) - 1:
                return info
            after_list = "list[" in str(info.annotation).replace("typing.List[", "list[")
            model = _inner_model(info.annotation)
        elif after_list:
            after_list = False        # an item's name
        else:
            return None
    return None


def _metadata(info) -> list:
    metas = list(info.metadata)
    for arg in getattr(info.annotation, "__args__", ()) or ():
        for meta in getattr(arg, "__metadata__", ()) or ():
            metas.append(meta)
            metas.extend(getattr(meta, "metadata", []) or [])
    return metas


def key_range(key: str) -> tuple[float, float, bool, bool]:
    """(low, high, low is excluded, high is excluded) of a key, from the schema's constraints."""
    info = key_field(key)
    lo, hi, lo_open, hi_open = -math.inf, math.inf, False, False
    if info is None:
        return lo, hi, lo_open, hi_open
    for meta in _metadata(info):
        for attr in ("ge", "gt", "le", "lt"):
            v = getattr(meta, attr, None)
            if v is None:
                continue
            if attr in ("ge", "gt") and (v > lo or (v == lo and attr == "gt")):
                lo, lo_open = v, attr == "gt"
            elif attr in ("le", "lt") and (v < hi or (v == hi and attr == "lt")):
                hi, hi_open = v, attr == "lt"
    return lo, hi, lo_open, hi_open


OPEN_END_NUDGE = 1e-9   # relative step inside an excluded end (0 < x: the smallest value tried is 1e-9)


def key_bounds(key: str) -> tuple[float, float]:
    """The closed range of values a key may take, an excluded end moved inside by OPEN_END_NUDGE."""
    lo, hi, lo_open, hi_open = key_range(key)
    if lo_open:
        lo = lo + OPEN_END_NUDGE * max(1.0, abs(lo))
    if hi_open:
        hi = hi - OPEN_END_NUDGE * max(1.0, abs(hi))
    return lo, hi


def is_integer_key(key: str) -> bool:
    """True where the schema field takes whole numbers (years, counts)."""
    info = key_field(key)
    if info is None:
        return False
    ann = str(info.annotation)
    return "int" in ann and "float" not in ann


def _range_text(lo, hi, lo_open, hi_open) -> str:
    if math.isfinite(lo) and math.isfinite(hi):
        return f"must be {'>' if lo_open else '>='} {lo:g} and {'<' if hi_open else '<='} {hi:g}"
    if math.isfinite(lo):
        return f"must be {'>' if lo_open else '>='} {lo:g}"
    return f"must be {'<' if hi_open else '<='} {hi:g}"


def check_overrides(scn: ScenarioFields, overrides: dict | None, *, label: str = "override") -> dict:
    """Batch overrides (dotted key -> one value or one value per row) checked by the file's rules.

    An unknown key is refused with the "did you mean" suggestion; a setting of the file
    (``montecarlo.*``, ``variants``) is not a model input; every value must be a finite
    number inside the key's range, a whole number where the key takes one. A refused value
    names the key, the value and its row. Returns the overrides as float arrays.
    """
    out = {}
    for key, values in (overrides or {}).items():
        if not isinstance(key, str) or not key or key.split(".")[0] in FILE_SETTINGS:
            raise ScenarioError("is not a model input; choose a key such as 'capex.turbine_per_kw'",
                                key=f"{label} key", value=key)
        numeric_value(scn, key)          # unknown keys, items and non-numeric fields raise here
        try:
            a = np.asarray(values, dtype=float)
        except (TypeError, ValueError):
            raise ScenarioError("must be numbers", key=key, value=values) from None
        flat = a.reshape(-1)
        rows = flat.size

        def refuse(i, why):
            where = f"row {i + 1} of {rows}: " if rows > 1 else ""
            raise ScenarioError(where + why, key=key, value=float(flat[i]))

        bad = np.flatnonzero(~np.isfinite(flat))
        if bad.size:
            refuse(int(bad[0]), "must be a finite number")
        lo, hi, lo_open, hi_open = key_range(key)
        below = (flat <= lo) if lo_open else (flat < lo)
        above = (flat >= hi) if hi_open else (flat > hi)
        bad = np.flatnonzero(below | above)
        if bad.size:
            refuse(int(bad[0]), _range_text(lo, hi, lo_open, hi_open))
        if is_integer_key(key):
            bad = np.flatnonzero(flat != np.round(flat))
            if bad.size:
                refuse(int(bad[0]), "must be a whole number")
        out[key] = a
    return out
