"""Option types shared by the commands."""

from __future__ import annotations

import argparse


def whole_number(low: int = 0, high: int | None = None):
    """An argparse type: a whole number >= low (and <= high when given)."""
    def parse(text: str) -> int:
        try:
            v = int(text)
        except ValueError:
            v = _whole_float(text)     # 1e8, as people write large counts
            if v is None:
                raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
        if high is None and v < low:
            raise argparse.ArgumentTypeError(f"must be >= {low}, got {v}")
        if high is not None and not low <= v <= high:
            raise argparse.ArgumentTypeError(f"must be between {low} and {high}, got {v}")
        return v
    return parse


def _whole_float(text: str) -> int | None:
    """``1e8`` or ``2.5e6`` as the whole number it writes; None for anything else."""
    try:
        v = float(text)
    except ValueError:
        return None
    return int(v) if v == v and abs(v) < 1e18 and v == int(v) else None


nonneg_int = whole_number(0)


def sweep_number(text: str) -> str:
    """An argparse type for START and STOP: kept as text (a percentage is read once the key is
    known); a dotted key in its place is the sweep's former spelling, refused with the new one."""
    if "." in text and any(ch.isalpha() for ch in text.replace("e", "").replace("E", "")):
        raise argparse.ArgumentTypeError(f"{text!r} is a key, not a number: name the key with --key "
                                         "(lcoe sweep FILE --key KEY START STOP STEPS)")
    return text


def finite_number(text: str) -> float:
    """An argparse type: a finite number."""
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number, got {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text!r}")
    return v


# --------------------------------------------------------------------------- values of scenario keys

def is_fraction_key(key: str) -> bool:
    """True where a key's valid range lies within -1..1: a rate or a share, which may be written
    as a percentage."""
    from lcoe.inputs.keys import key_range
    lo, hi, _, _ = key_range(key)
    return -1.0 <= lo and hi <= 1.0


def key_number(text, key: str, option: str) -> float:
    """A number given for ``key`` on the command line: ``12.5%`` is 0.125 where the key is a
    fraction (:func:`is_fraction_key`); refused in one line naming the option otherwise."""
    from lcoe.inputs.errors import ScenarioError
    raw = str(text).strip()
    scale = 1.0
    if raw.endswith("%"):
        if not is_fraction_key(key):
            raise ScenarioError(f"a percentage is accepted only for a fraction (a rate or a share); {key} is not "
                                "one: give the number", key=option, value=text)
        raw, scale = raw[:-1].strip(), 0.01
    try:
        v = float(raw) * scale
    except ValueError:
        raise ScenarioError("must be a number" + (" (or a percentage, e.g. 5%)" if is_fraction_key(key) else ""),
                            key=option, value=text) from None
    if v != v or v in (float("inf"), float("-inf")):
        raise ScenarioError("must be a finite number", key=option, value=text)
    return v


def key_value(text: str, key: str, option: str):
    """The VALUE of ``--set KEY=VALUE``, read as TOML reads it (a number, true/false, a quoted
    string); a bare word is text, and ``N%`` a fraction as in :func:`key_number`."""
    import tomllib

    from lcoe.inputs.errors import ScenarioError
    raw = text.strip()
    if raw.endswith("%"):
        return key_number(raw, key, option)
    try:
        return tomllib.loads(f"v = {raw}")["v"]
    except tomllib.TOMLDecodeError:
        if raw and all(ch.isalnum() or ch in "_-." for ch in raw):
            return raw                 # a bare word: text, as `--set finance.depreciation=macrs_5`
        raise ScenarioError("must be a number, true/false or text", key=option, value=text) from None


def key_assignment(text: str, option: str = "--set") -> tuple[str, str]:
    """``KEY=VALUE`` split at its first '='; refused in one line when there is none."""
    from lcoe.inputs.errors import ScenarioError
    key, eq, value = str(text).partition("=")
    if not eq or not key.strip() or not value.strip():
        raise ScenarioError("must be KEY=VALUE, e.g. capex.turbine_per_kw=1150 or finance.discount_rate=7%",
                            key=option, value=text)
    return key.strip(), value.strip()
