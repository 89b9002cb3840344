"""Dotted keys (``capex.turbine_per_kw``, ``maintenance.component.gearbox.replacement_cost``):
reading and setting them in raw scenario data, their effective values, and suggestions for a mistyped one.
"""

from __future__ import annotations

import difflib
from typing import Any

from pydantic import BaseModel

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import ScenarioFields


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


def _model_at(path: list[str]):
    model: Any = ScenarioFields
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
                derived = {"operations.availability_first_year": scn.availability_first_year,
                           "maintenance.escalation": scn.escalation,
                           "revenue.ppa_term_years": scn.ppa_term_years,
                           "revenue.merchant_price_per_mwh": scn.merchant_price_per_mwh,
                           "finance.equity_target_return": scn.equity_target_return,
                           "wind.shear_exponent": scn.wind.alpha}
                if key == "layout.wake_decay_constant" and scn.layout is not None:
                    return float(scn.layout.decay_constant)
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
