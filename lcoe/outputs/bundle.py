"""A self-contained bundle of one scenario: the scenario file and every data file it names, in one zip.

Inside the zip the scenario sits in a folder of its own with its data files under
``data/``, and every data path of the scenario (its variants' included) points there,
relative to the scenario file; so ``lcoe check`` accepts the scenario wherever the zip
is unpacked. Where the inputs came from a file, that file's text is kept, comments and
all: only the values that differ are rewritten in place (:func:`edit_text`), and the
result is checked to read back as exactly the scenario; should an edit not fit the
file's layout, the scenario is written afresh instead (without the file's comments,
said in its first line).
"""

from __future__ import annotations

import io
import re
import tomllib
import zipfile
from pathlib import Path

from lcoe.analysis.montecarlo import refuse_idle_inputs
from lcoe.inputs import scenario as sc
from lcoe.inputs.about import CAUTION
from lcoe.inputs.errors import ScenarioError

DATA_KEYS = ("turbine.power_curve", "wind.timeseries", "wind.long_term.reference", "layout.positions")
DATA_FOLDER = "data"


def data_paths(raw: dict):
    """(holder, field), dotted key, path: every data file a scenario's raw tables name, its variants'
    included; ``holder[field]`` is the path's place."""
    for key in DATA_KEYS:
        *tables, name = key.split(".")
        table = raw
        for part in tables:
            table = table.get(part) if isinstance(table, dict) else None
        if isinstance(table, dict) and name in table:
            yield (table, name), key, table[name]
    variants = raw.get("variants")
    if isinstance(variants, dict):
        for vname, overrides in variants.items():
            if isinstance(overrides, dict):
                for key in DATA_KEYS:
                    if key in overrides:
                        yield (overrides, key), f"variants.{vname}.{key}", overrides[key]


# --------------------------------------------------------------------------- editing a file's text in place

def _parts(name: str) -> tuple:
    return tuple(p.strip().strip('"').strip("'") for p in re.findall(r'"[^"]*"|\'[^\']*\'|[^.]+', name.strip()))


def _header(line: str):
    """('table' | 'array', name parts) of a table header line, else None."""
    t = line.split("#", 1)[0].strip()
    m = re.fullmatch(r"\[\[(.+)\]\]", t)
    if m:
        return "array", _parts(m.group(1))
    m = re.fullmatch(r"\[([^\[\]]+)\]", t)
    if m:
        return "table", _parts(m.group(1))
    return None


def _key_line(line: str):
    """(key, value, comment start or None) of a one-line ``key = value`` line, else None."""
    if not line.strip() or line.lstrip().startswith("#") or _header(line):
        return None
    try:
        parsed = tomllib.loads(line)
    except tomllib.TOMLDecodeError:
        return None
    if len(parsed) != 1:
        return None
    ((key, value),) = parsed.items()
    if isinstance(value, dict):
        return None                     # a dotted key or an inline table: not edited in place
    cut = None
    for i in [m.start() for m in re.finditer("#", line)][::-1]:
        try:
            if tomllib.loads(line[:i]) == parsed:
                cut = i
        except tomllib.TOMLDecodeError:
            break
    return key, value, cut


def _blocks(lines: list[str]):
    """(kind, name parts, first body line, end line) of the root block and every table block."""
    starts = [(i, _header(line)) for i, line in enumerate(lines) if _header(line)]
    first = starts[0][0] if starts else len(lines)
    out = [("table", (), 0, first)]
    for n, (i, (kind, name)) in enumerate(starts):
        end = starts[n + 1][0] if n + 1 < len(starts) else len(lines)
        out.append((kind, name, i + 1, end))
    return out


def _find_block(lines, path: tuple, item: str | None):
    for kind, name, start, end in _blocks(lines):
        if name != path or (kind == "array") != (item is not None):
            continue
        if item is None:
            return start, end
        for j in range(start, end):
            k = _key_line(lines[j])
            if k and k[0] == "name" and k[1] == item:
                return start, end
    return None


def _value_text(v) -> str:
    return sc.to_toml({"x": v}).split("=", 1)[1].strip()


def _key_text(k: str) -> str:
    return sc.to_toml({k: 0}).split("=", 1)[0].strip()


class _NoFit(Exception):
    pass


def _set(lines, path, item, key, value, *, delete=False) -> None:
    found = _find_block(lines, path, item)
    if found is None:
        raise _NoFit
    start, end = found
    for j in range(start, end):
        k = _key_line(lines[j])
        if k and k[0] == key:
            if delete:
                del lines[j]
                return
            comment = lines[j][k[2]:] if k[2] is not None else ""
            indent = lines[j][:len(lines[j]) - len(lines[j].lstrip())]
            lines[j] = f"{indent}{_key_text(key)} = {_value_text(value)}" + (f"  {comment.strip()}" if comment else "")
            return
    if delete:
        raise _NoFit
    last = max([j for j in range(start, end) if _key_line(lines[j])], default=start - 1)
    lines.insert(last + 1, f"{_key_text(key)} = {_value_text(value)}")


def _drop_item(lines, path, item) -> None:
    found = _find_block(lines, path, item)
    if found is None:
        raise _NoFit
    start, end = found
    del lines[start - 1:end]


def _drop_table(lines, path) -> None:
    """Delete the table ``[path]`` (its header and its lines); it must be a table of its own."""
    blocks = [b for b in _blocks(lines) if b[0] == "table" and b[1] == path]
    if len(blocks) != 1 or any(b[1][:len(path)] == path and len(b[1]) > len(path) for b in _blocks(lines)):
        raise _NoFit
    _, _, start, end = blocks[0]
    del lines[start - 1:end]


def _add_item(lines, path, item: dict) -> None:
    """Append ``[[path]]`` with ``item``'s keys after the last block of that list (a plain value each)."""
    if any(isinstance(v, (dict, list)) and not _is_scalar_list(v) for v in item.values()):
        raise _NoFit
    ends = [end for kind, name, _, end in _blocks(lines) if kind == "array" and name == path]
    at = ends[-1] if ends else len(lines)
    while at > 0 and not lines[at - 1].strip():
        at -= 1                # before the blank lines that part it from the next table
    header = "[[" + ".".join(_key_text(p) for p in path) + "]]"
    body = [header] + [f"{_key_text(k)} = {_value_text(v)}" for k, v in item.items()]
    lines[at:at] = ([""] if at else []) + body


def _is_items(v) -> bool:
    return isinstance(v, list) and bool(v) and all(isinstance(x, dict) and isinstance(x.get("name"), str) for x in v)


def _edit(lines, old: dict, new: dict, path: tuple, item: str | None) -> None:
    for key in list(old):
        if key not in new:
            if _is_items(old[key]) and item is None:
                for x in old[key]:
                    _drop_item(lines, path + (key,), x["name"])
                continue
            if isinstance(old[key], dict) and item is None:
                _drop_table(lines, path + (key,))
                continue
            if isinstance(old[key], (dict, list)) and not _is_scalar_list(old[key]):
                raise _NoFit
            _set(lines, path, item, key, None, delete=True)
    for key, value in new.items():
        was = old.get(key)
        if was == value and type(was) is type(value):
            continue
        if isinstance(value, dict) and isinstance(was, dict) and item is None:
            _edit(lines, was, value, path + (key,), None)
        elif _is_items(was) and (_is_items(value) or value == []) and item is None:
            names_old = [x["name"] for x in was]
            names_new = [x["name"] for x in value]
            kept = [n for n in names_old if n in names_new]
            if names_new[:len(kept)] != kept:
                raise _NoFit           # a moved item, or one added before a kept one
            for x in was:
                if x["name"] not in names_new:
                    _drop_item(lines, path + (key,), x["name"])
            for x in value[:len(kept)]:
                _edit(lines, next(o for o in was if o["name"] == x["name"]), x, path + (key,), x["name"])
            for x in value[len(kept):]:
                _add_item(lines, path + (key,), x)
        elif isinstance(value, dict) or _is_items(value) or isinstance(was, dict) or _is_items(was):
            raise _NoFit
        else:
            _set(lines, path, item, key, value)


def _is_scalar_list(v) -> bool:
    return isinstance(v, list) and not any(isinstance(x, dict) for x in v)


def edit_text(text: str, raw: dict) -> str | None:
    """``text`` (a scenario file) with its values changed to those of ``raw``, comments and layout
    kept; None where the changes do not fit the file's layout. The result reads back as ``raw``."""
    try:
        old = tomllib.loads(text)
    except tomllib.TOMLDecodeError:
        return None
    lines = text.splitlines()
    try:
        _edit(lines, old, raw, (), None)
    except _NoFit:
        return None
    out = "\n".join(lines) + "\n"
    try:
        return out if tomllib.loads(out) == raw else None
    except tomllib.TOMLDecodeError:
        return None


# --------------------------------------------------------------------------- the bundle

ITEM_TABLES = ("component", "overhaul", "correlation", "energy", "speed")


def _prune(raw):
    """An empty list of items (no overhauls left after a shorter life) is the same as none: left out."""
    if isinstance(raw, dict):
        return {k: _prune(v) for k, v in raw.items() if not (k in ITEM_TABLES and v == [])}
    return raw


def fitted(scn) -> tuple[dict, list[str]]:
    """The scenario's tables without what ``lcoe check`` would refuse for these inputs, and what
    was left out, in words: a variant that no longer fits them (a longer life's overhaul after a
    shorter one's end), a Monte Carlo input they do not use (a merchant price when the PPA now
    covers the whole life) with the correlations that name it."""
    raw = _prune(tomllib.loads(sc.to_toml(scn.raw)))       # a deep copy, as the file would read
    notes = []
    for vname in list(raw.get("variants", {})):
        try:
            scn.variant(vname)
        except ScenarioError as exc:
            del raw["variants"][vname]
            notes.append(f"variant {vname}, it does not fit these inputs ({exc.message})")
    if "variants" in raw and not raw["variants"]:
        del raw["variants"]
    mc = raw.get("montecarlo", {})
    for _ in range(len(mc.get("vary", {}))):
        try:
            refuse_idle_inputs(sc.from_dict(raw, source=scn.source, base_dir=scn.base_dir, check_variants=False))
            break
        except ScenarioError as exc:
            key = (exc.key or "")[len("montecarlo.vary."):]
            if not (exc.key or "").startswith("montecarlo.vary.") or key not in mc["vary"]:
                raise
            del mc["vary"][key]
            mc["correlation"] = [c for c in mc.get("correlation", []) if key not in c.get("between", [])]
            notes.append(f"montecarlo.vary.{key}, these inputs do not use it ({exc.message})")
    if mc:
        raw["montecarlo"] = _prune(mc)
    return raw, notes


def _safe(name: str) -> str:
    out = re.sub(r"[^A-Za-z0-9._-]", "_", name).strip("._") or "file"
    return out[:80]


def bundle_files(scn, file_text: str | None = None, name: str = "scenario") -> dict[str, bytes]:
    """Path inside the bundle -> bytes: ``NAME/NAME.toml`` and ``NAME/data/...``.

    ``scn`` gives the values and the data files (read from where it names them);
    ``file_text`` is the text of the file the inputs came from (its comments are kept).
    """
    folder = _safe(name)
    raw, left_out = fitted(scn)
    files: dict[str, bytes] = {}
    taken: dict[Path, str] = {}
    for (holder, field), _key, rel in list(data_paths(raw)):
        if not isinstance(rel, str):
            continue
        path = scn.resolve(rel).resolve()
        if path not in taken:
            base = _safe(Path(rel.replace("\\", "/")).name)
            stem, dot, ext = base.rpartition(".")
            inside, n = base, 1
            while f"{DATA_FOLDER}/{inside}" in files:
                n += 1
                inside = f"{stem}_{n}{dot}{ext}" if dot else f"{base}_{n}"
            files[f"{DATA_FOLDER}/{inside}"] = path.read_bytes()
            taken[path] = f"{DATA_FOLDER}/{inside}"
        holder[field] = taken[path]
    kept = edit_text(file_text, raw) if file_text else None
    note = (f"# {folder}.toml: written by the lcoe app with its data files in {DATA_FOLDER}/ beside it "
            "(paths relative to this file).\n# " + CAUTION.replace("\n", " ") + "\n"
            + "".join(f"# Left out: {why}.\n" for why in left_out))
    if kept is None:
        text = note + ("# The original file's comments could not be kept: its layout did not fit the changes.\n"
                       if file_text else "") + sc.to_toml(raw)
    else:
        text = note + kept
    if tomllib.loads(text) != raw:        # never a bundle that reads back as other values
        raise AssertionError("the bundle's scenario does not read back as the inputs")
    out = {f"{folder}/{folder}.toml": text.encode("utf-8")}
    out.update({f"{folder}/{k}": v for k, v in files.items()})
    return out


def bundle_zip(scn, file_text: str | None = None, name: str = "scenario") -> bytes:
    """The bundle as the bytes of one zip file (see :func:`bundle_files`)."""
    buf = io.BytesIO()
    with zipfile.ZipFile(buf, "w", compression=zipfile.ZIP_DEFLATED) as z:
        for path, data in bundle_files(scn, file_text, name).items():
            z.writestr(path, data)
    return buf.getvalue()
