"""Option types shared by the commands."""

from __future__ import annotations

import argparse


def whole_number(low: int = 0, high: int | None = None):
    """An argparse type: a whole number >= low (and <= high when given)."""
    def parse(text: str) -> int:
        try:
            v = int(text)
        except ValueError:
            raise argparse.ArgumentTypeError(f"must be a whole number, got {text!r}") from None
        if high is None and v < low:
            raise argparse.ArgumentTypeError(f"must be >= {low}, got {v}")
        if high is not None and not low <= v <= high:
            raise argparse.ArgumentTypeError(f"must be between {low} and {high}, got {v}")
        return v
    return parse


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
