"""Batch overrides (engine.evaluate, sweep, solve, Monte Carlo) are checked by the same rules
as the scenario file: a key the file would refuse is refused here, in one line, never ignored."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO

from lcoe import engine
from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError


@pytest.fixture(scope="module")
def scn():
    return sc.load(DEMO)


@pytest.mark.parametrize("over, message", [
    ({"capex.turbine_per_kW": [1e9]}, r"^capex\.turbine_per_kW: unknown key \(did you mean 'capex\.turbine_per_kw'\?\)$"),
    ({"losses.wake": [0.1, 1.5]}, r"^losses\.wake = 1\.5: row 2 of 2: must be >= 0 and < 1$"),
    ({"losses.wake": [float("nan")]}, r"^losses\.wake = nan: must be a finite number$"),
    ({"operations.ageing_starts_year": [14.5]}, r"^operations\.ageing_starts_year = 14\.5: must be a whole number$"),
    ({"montecarlo.trials": [10]}, r"^override key = 'montecarlo\.trials': is not a model input"),
    ({"maintenance.component.gearbox2.replacement_cost": [1.0]}, r"^maintenance\.component\.gearbox2\.replacement_cost: "),
    ({"project.name": [1.0]}, r"^project\.name = 'Tallowmere Ridge': is not a numeric value$"),
])
def test_a_bad_override_is_refused_with_the_files_message(scn, over, message):
    with pytest.raises(ScenarioError, match=message):
        engine.evaluate(scn, overrides=over)


def test_a_key_the_batch_cannot_vary_is_refused_not_ignored(scn):
    """project.turbines changes the model's shape; a batch would silently keep the file's count."""
    with pytest.raises(ScenarioError, match=r"^project\.turbines: cannot be varied here: it changes the shape"):
        engine.evaluate(scn, overrides={"project.turbines": [10]})


def test_debt_terms_with_the_debt_locked_are_refused(scn):
    base = engine.run(scn, breakeven=False)
    with pytest.raises(ScenarioError, match=r"^finance\.debt\.target_dscr: cannot be varied here: the debt is fixed"):
        engine.evaluate(scn, overrides={"finance.debt.target_dscr": [1.2]}, schedule=base.schedule)


def test_a_valid_batch_equals_the_file_route_row_by_row(scn):
    """Reference: the same value written into the scenario (with_overrides, validated like a file)."""
    values = np.array([0.05, 0.10])
    _, m, _ = engine.evaluate(scn, overrides={"losses.wake": values})
    for i, v in enumerate(values):
        one = engine.run(scn.with_overrides({"losses.wake": float(v)}), breakeven=False)
        assert m["lcoe_nominal_per_mwh"][i] == pytest.approx(one.metrics["lcoe_nominal_per_mwh"], rel=1e-12)
        assert m["equity_irr"][i] == pytest.approx(one.metrics["equity_irr"], rel=1e-9)
