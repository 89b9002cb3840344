"""``lcoe new`` and ``lcoe keys``: a commented scenario to start a site from, and the key reference."""

from __future__ import annotations

import sys
from pathlib import Path

from lcoe.inputs import reference
from lcoe.inputs.errors import ScenarioError
from lcoe.outputs import files


def curve_path(path: Path) -> Path:
    """The power-curve template written beside a new scenario: ``site.toml`` -> ``site_curve.csv``."""
    return path.with_name(path.stem + "_curve.csv")


def cmd_new(args) -> int:
    path = Path(args.path)
    curve = curve_path(path)
    for p, option, suffix in ((path, "PATH", ".toml"), (curve, "the power curve beside PATH", ".csv")):
        files.check_output(p, option=option, stdout=False, suffix=suffix)
        if p.exists() or p.is_symlink():
            raise ScenarioError("already exists; lcoe new never replaces a file, so give a new name",
                                key=option, value=str(p))
    text = reference.template_text(curve.name)
    files.write_atomic(curve, lambda tmp: tmp.write_text(reference.curve_template_csv(), encoding="utf-8"),
                       option="PATH")
    try:
        files.write_atomic(path, lambda tmp: tmp.write_text(text, encoding="utf-8"), option="PATH")
    except BaseException:
        curve.unlink(missing_ok=True)
        raise
    print(f"written: {path} (every key with its unit, range and default) and {curve} (an invented power curve)")
    print(f"next: edit the values, then `lcoe check {path}` and `lcoe run {path}`; `lcoe keys` lists every key")
    return 0


def cmd_keys(args) -> int:
    sys.stdout.write(reference.reference_text(args.section))
    return 0
