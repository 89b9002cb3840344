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


def finite_number(text: str) -> float:
    """An argparse type: a finite number."""
    try:
        v = float(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"must be a number, got {text!r}") from None
    if v != v or v in (float("inf"), float("-inf")):
        raise argparse.ArgumentTypeError(f"must be a finite number, got {text!r}")
    return v
