"""Wind-project LCOE and project finance for one site.

The public Python API (:mod:`lcoe.api`), loaded on first use so that ``import lcoe``
and the command line start quickly::

    import lcoe
    site = lcoe.load("assumptions/tallowmere_ridge.toml")
    lcoe.run(site).metrics["lcoe_nominal_per_mwh"]

The package is layered, each layer importing only those below it: ``lcoe.inputs``
(scenario schema, keys, TOML) -> ``lcoe.physics`` (wind, turbine, energy) ->
``lcoe.finance`` (costs, tax, debt, cash flow, metrics) -> ``lcoe.engine`` ->
``lcoe.analysis`` (Monte Carlo, sensitivity, lifetime, lender cases, portfolio) -> ``lcoe.outputs``
(report, CSV, workbook) -> ``lcoe.cli`` and the app (``lcoe.ui``).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from lcoe.inputs.about import CAUTION, __version__
from lcoe.inputs.errors import ScenarioError

if TYPE_CHECKING:  # pragma: no cover - for type checkers and editors
    from lcoe.api import (  # noqa: F401
        BatchResult,
        LenderCases,
        MonteCarlo,
        Rows,
        RunResult,
        Solution,
        evaluate,
        PortfolioRun,
        lender_cases,
        load,
        load_portfolio,
        monte_carlo,
        portfolio,
        run,
        solve,
        sweep,
        tornado,
        write_workbook,
    )

_API = ("load", "run", "evaluate", "monte_carlo", "sweep", "tornado", "solve", "lender_cases", "write_workbook",
        "load_portfolio", "portfolio", "RunResult", "BatchResult", "MonteCarlo", "Rows", "Solution", "LenderCases",
        "PortfolioRun")

__all__ = ["ScenarioError", "CAUTION", "__version__", *_API]


def __getattr__(name: str):
    if name in _API:
        from lcoe import api
        return getattr(api, name)
    raise AttributeError(f"module 'lcoe' has no attribute {name!r}")


def __dir__():
    return sorted(__all__)
