"""The demo site's scenario files and invented data, shipped with the package.

In a source checkout they are the top-level ``assumptions/`` and ``demo/`` folders; an
installed package carries the same files as ``lcoe.demo_files.assumptions`` and
``lcoe.demo_files.demo`` (the scenarios' relative paths, ``../demo/...``, hold in both).
"""

from __future__ import annotations

import importlib.util
from pathlib import Path

_CHECKOUT = Path(__file__).resolve().parents[2]


def _folder(package: str, name: str) -> Path:
    try:
        spec = importlib.util.find_spec(package)
    except ModuleNotFoundError:
        spec = None
    for folder in (spec.submodule_search_locations or []) if spec is not None else []:
        if Path(folder).is_dir():
            return Path(folder)
    return _CHECKOUT / name


def assumptions_dir() -> Path:
    """The folder of the demo scenarios (``tallowmere_ridge.toml`` and its siblings)."""
    return _folder("lcoe.demo_files.assumptions", "assumptions")


def demo_scenario(name: str = "tallowmere_ridge.toml") -> Path:
    """The path of one demo scenario."""
    return assumptions_dir() / name


def demo_dir() -> Path:
    """The folder of the invented demo data (power curve, hourly wind)."""
    return _folder("lcoe.demo_files.demo", "demo")
