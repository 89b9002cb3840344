"""Without the lender structure (construction, reserves, lock-up), every result is today's.

Reference: ``tests/data/demo_report_before_lender_structure.json``, the JSON report of
``lcoe run assumptions/tallowmere_ridge.toml --json`` written by the code before the
construction period, reserve accounts, cash waterfall and lender cases were added. The
demo run with those sections taken out must give every number of that file to 1e-12
(relative) and the same texts; blocks added since (such as ``lender_cases``) are new keys
and are not compared.
"""

from __future__ import annotations

import json
import math
import tomllib
from pathlib import Path

import pytest
from conftest import DEMO, plain_demo

from lcoe.analysis import study
from lcoe.inputs import scenario as sc

FIXTURE = Path(__file__).parent / "data" / "demo_report_before_lender_structure.json"
def _compare(old, new, path="report"):
    if isinstance(old, dict):
        assert isinstance(new, dict), path
        for k, v in old.items():
            assert k in new, f"{path}.{k} is missing"
            _compare(v, new[k], f"{path}.{k}")
    elif isinstance(old, list):
        assert isinstance(new, list) and len(new) == len(old), path
        for i, (a, b) in enumerate(zip(old, new)):
            _compare(a, b, f"{path}[{i}]")
    elif isinstance(old, float) and not isinstance(new, bool):
        assert isinstance(new, (int, float)) and math.isfinite(new), path
        assert new == pytest.approx(old, rel=1e-12, abs=1e-12 * max(1.0, abs(old))), path
    else:
        assert new == old, path


@pytest.fixture(scope="module")
def report():
    return json.loads(json.dumps(study.build(plain_demo()).to_dict()))


def test_the_demo_without_the_lender_structure_gives_todays_report(report):
    _compare(json.loads(FIXTURE.read_text()), report)


def test_the_fixture_is_the_full_report():
    """The reference holds every block of the report (a file that lost its blocks would pass)."""
    old = json.loads(FIXTURE.read_text())
    for key in ("energy", "costs", "metrics", "annual", "montecarlo", "variants", "warnings"):
        assert key in old
    assert len(old["annual"]) == 26 and old["montecarlo"]["trials"] == 10000
