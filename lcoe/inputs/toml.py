"""TOML in and out: reading a scenario file with messages that point at the mistake, and
writing scenario data back as TOML.
"""

from __future__ import annotations

import datetime as _dt
import hashlib
import re
import tomllib
from pathlib import Path
from typing import Any

from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.paths import MAX_SCENARIO_BYTES, check_input_file

#: tables and arrays nest at most this deep (the format itself needs 3)
MAX_DEPTH = 32
#: a number in a scenario has at most this many digits (a float has 17 significant ones)
MAX_DIGITS = 30


def parse_toml(path: Path) -> dict:
    return read_toml(path)[0]


def read_toml(path: Path) -> tuple[dict, str]:
    """A scenario file's data and the SHA-256 (hex) of the very bytes that were parsed."""
    shown = str(path)
    check_input_file(path, lambda msg: ScenarioError(msg, file=shown), what="a scenario file",
                     max_bytes=MAX_SCENARIO_BYTES)
    try:
        data = path.read_bytes()
        # utf-8-sig: a byte-order mark, as some editors write, is not part of the text
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ScenarioError("is not UTF-8 text", file=shown) from None
    except OSError as exc:
        raise ScenarioError(f"cannot be read ({exc.strerror})", file=shown) from None
    return parse_toml_text(text, shown), hashlib.sha256(data).hexdigest()


def parse_toml_text(text: str, shown: str) -> dict:
    """TOML text to data, bounded: nesting and number lengths are checked before the parser
    sees them (a parser recursing 5,000 levels deep, or turning a 100,000-digit number into
    an integer, would fail or take minutes), and the result's depth after."""
    problem = _prescan(text)
    if problem:
        raise ScenarioError(problem, file=shown)
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ScenarioError(_syntax_message(str(exc), text), file=shown) from None
    except (RecursionError, ValueError, MemoryError) as exc:
        raise ScenarioError(f"cannot be read as TOML ({type(exc).__name__})", file=shown) from None
    if _depth(raw) > MAX_DEPTH:
        raise ScenarioError(f"tables nest more than {MAX_DEPTH} levels deep; a scenario needs 3", file=shown)
    return raw


_LONG_NUMBER = re.compile(r"[0-9_]{%d,}" % (MAX_DIGITS + 1))


def _prescan(text: str) -> str | None:
    """The first nesting or number-size problem outside strings and comments, or None.

    A quick look first: most files have neither many brackets nor long digit runs.
    """
    if text.count("[") + text.count("{") <= MAX_DEPTH and not _LONG_NUMBER.search(text):
        return None
    depth, line, i, n = 0, 1, 0, len(text)
    run = 0
    while i < n:
        ch = text[i]
        if ch == "\n":
            line += 1
        if ch.isdigit() or (ch == "_" and run):
            run += ch.isdigit()
            if run > MAX_DIGITS:
                return (f"line {line}: a number with more than {MAX_DIGITS} digits; numbers in a scenario are "
                        f"written with at most {MAX_DIGITS} (use an exponent, e.g. 1.5e9)")
            i += 1
            continue
        run = 0
        if ch == "#":
            j = text.find("\n", i)
            i = n if j < 0 else j
            continue
        if ch in "\"'":
            quote = ch * 3 if text.startswith(ch * 3, i) else ch
            i += len(quote)
            while i < n and not text.startswith(quote, i):
                if text[i] == "\n":
                    if len(quote) == 1:
                        break                  # an unclosed string: the parser reports it
                    line += 1
                if text[i] == "\\" and quote[0] == '"':
                    i += 1
                    line += i < n and text[i] == "\n"
                i += 1
            if text.startswith(quote, i):
                i += len(quote)
            continue
        if ch in "[{":
            depth += 1
            if depth > MAX_DEPTH:
                return f"line {line}: arrays or tables nest more than {MAX_DEPTH} levels deep; a scenario needs 3"
        elif ch in "]}":
            depth = max(0, depth - 1)
        i += 1
    return None


def _depth(node) -> int:
    """How deeply tables and arrays nest in parsed data (without recursion)."""
    deepest, stack = 0, [(node, 1)]
    while stack:
        item, d = stack.pop()
        if isinstance(item, dict):
            children = item.values()
        elif isinstance(item, list):
            children = item
        else:
            continue
        deepest = max(deepest, d)
        if d > MAX_DEPTH:
            return d
        stack.extend((c, d + 1) for c in children)
    return deepest


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
        if isinstance(v, _dt.date) and not isinstance(v, _dt.datetime):
            return v.isoformat()            # a TOML local date (construction.financial_close)
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
