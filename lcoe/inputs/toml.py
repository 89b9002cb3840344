"""TOML in and out: reading a scenario file with messages that point at the mistake, and
writing scenario data back as TOML.
"""

from __future__ import annotations

import re
import tomllib
from pathlib import Path
from typing import Any

from lcoe.inputs.errors import ScenarioError


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
