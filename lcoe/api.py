"""The public Python API: load a scenario, run it, vary it, write the lender workbook, and run a
portfolio of sites.

Every function takes a :class:`~lcoe.inputs.scenario.Scenario` (from :func:`load`) or a
path to a scenario file, and returns a small dataclass with ``to_dict()`` (plain,
JSON-ready values) and ``to_frame()`` (a :class:`pandas.DataFrame`). Bad input raises
:class:`~lcoe.inputs.errors.ScenarioError` with one line naming the file, key and value.

Example::

    import lcoe
    site = lcoe.load("assumptions/tallowmere_ridge.toml")
    result = lcoe.run(site)
    result.metrics["lcoe_nominal_per_mwh"]
    lcoe.sweep(site, "wind.mean_speed_mps", [6.5, 7.0, 7.5]).to_frame()
"""

from __future__ import annotations

from dataclasses import dataclass
from os import PathLike
from pathlib import Path
from typing import Iterable, Sequence

import numpy as np
import pandas as pd

from lcoe import engine
from lcoe.analysis import cluster as _cluster
from lcoe.analysis import lender, montecarlo, sensitivity, study
from lcoe.analysis import portfolio as _portfolio
from lcoe.analysis.portfolio_results import LINE_KEYS, PortfolioResult
from lcoe.inputs import portfolio as _portfolio_file
from lcoe.inputs import scenario as _scenario
from lcoe.inputs.scenario import Scenario
from lcoe.outputs import workbook as _workbook

ScenarioLike = Scenario | str | PathLike


def load(path: str | PathLike) -> Scenario:
    """Read and validate a scenario file (TOML) and the data files it names."""
    return _scenario.load(path)


def _scenario_of(scenario: ScenarioLike) -> Scenario:
    return scenario if isinstance(scenario, Scenario) else load(scenario)


@dataclass(frozen=True)
class RunResult:
    """The deterministic case of a scenario: energy, costs, metrics and the yearly lines."""
    scenario: Scenario
    case: engine.Case

    @property
    def metrics(self) -> dict:
        return dict(self.case.metrics)

    @property
    def energy(self) -> dict:
        return self.case.energy.report()

    @property
    def warnings(self) -> list[str]:
        return list(self.case.warnings)

    def to_dict(self) -> dict:
        """The JSON report's blocks for this case (``lcoe run --json`` without Monte Carlo and variants)."""
        return study.Report(self.case).to_dict()

    def to_frame(self) -> pd.DataFrame:
        """The yearly lines, one row per year t = 0..L."""
        return pd.DataFrame(self.case.annual()).set_index("year")


def run(scenario: ScenarioLike, *, breakeven: bool = True) -> RunResult:
    """The deterministic case (P50 energy, debt sized on the sizing case); ``breakeven`` also
    solves the break-even PPA price (a root search: a few more runs)."""
    scn = _scenario_of(scenario)
    return RunResult(scn, engine.run(scn, breakeven=breakeven))


@dataclass(frozen=True)
class BatchResult:
    """Metrics of a batch of rows, one value per row for each metric key."""
    overrides: dict
    metrics: dict
    warnings: list

    def to_dict(self) -> dict:
        return {"overrides": {k: np.asarray(v, float).reshape(-1).tolist() for k, v in self.overrides.items()},
                "metrics": {k: [None if not np.isfinite(x) else float(x) for x in np.asarray(v, float).reshape(-1)]
                            for k, v in self.metrics.items()},
                "warnings": list(self.warnings)}

    def to_frame(self) -> pd.DataFrame:
        rows = max([np.size(v) for v in self.metrics.values()] + [1])
        cols = {k: np.broadcast_to(np.asarray(v, float).reshape(-1), (rows,)) for k, v in self.overrides.items()}
        cols.update({k: np.asarray(v, float).reshape(-1) for k, v in self.metrics.items()})
        return pd.DataFrame(cols)


def evaluate(scenario: ScenarioLike, overrides: dict[str, Sequence[float] | float]) -> BatchResult:
    """The model for a batch of overrides (dotted key -> one value per row, all rows the same
    length), in one vectorised pass; the debt is sized per row. Keys and values are checked
    by the file's rules; a key a batch cannot vary (the life, the turbine count) is refused."""
    scn = _scenario_of(scenario)
    _, m, warnings = engine.evaluate(scn, overrides=overrides)
    over = {k: np.asarray(v, float) for k, v in overrides.items()}
    return BatchResult(over, m, warnings)


@dataclass(frozen=True)
class MonteCarlo:
    """Monte Carlo results: percentiles, probabilities, histograms and every trial's values."""
    result: montecarlo.MonteCarloResult

    @property
    def trials(self) -> int:
        return self.result.trials

    @property
    def seed(self) -> int:
        return self.result.seed

    def to_dict(self) -> dict:
        """The ``montecarlo`` block of the JSON report."""
        return study.clean(self.result.report())

    def to_frame(self) -> pd.DataFrame:
        """Every trial's sampled results, one row per trial."""
        return pd.DataFrame({k: np.asarray(v) for k, v in self.result.samples.items()})


def monte_carlo(scenario: ScenarioLike, *, trials: int | None = None, seed: int | None = None,
                rng: np.random.Generator | None = None) -> MonteCarlo:
    """Monte Carlo of the scenario (``trials`` and ``seed`` default to its ``[montecarlo]`` table).

    ``rng``: a :class:`numpy.random.Generator` to take the seed from instead (one integer is
    drawn from it); the trials then come from random-number blocks keyed by that seed, so the
    result never depends on chunk sizes or threads. Give ``seed`` or ``rng``, not both.
    """
    if seed is not None and rng is not None:
        raise ValueError("give seed or rng, not both")
    scn = _scenario_of(scenario)
    if rng is not None:
        seed = int(rng.integers(0, 2 ** 63 - 1))
    return MonteCarlo(montecarlo.monte_carlo(scn, trials=trials, seed=seed))


@dataclass(frozen=True)
class Rows:
    """Rows of a sweep or a tornado: ``rows`` as the CLI's ``--json`` prints them."""
    kind: str
    key: str
    rows: list

    def to_dict(self) -> dict:
        return study.clean({"kind": self.kind, "key": self.key, "rows": self.rows})

    def to_frame(self) -> pd.DataFrame:
        flat = []
        for r in self.rows:
            row = {k: v for k, v in r.items() if not isinstance(v, dict)}
            for block in ("energy", "metrics"):
                row.update(r.get(block, {}) or {})
            flat.append(row)
        return pd.DataFrame(flat)


def sweep(scenario: ScenarioLike, key: str, values: Iterable[float], *, breakeven: bool = False) -> Rows:
    """The model at each value of one dotted key (debt re-sized at each), with the elasticity
    d ln(net AEP) / d ln(value) from neighbouring rows."""
    return Rows("sweep", key, sensitivity.sweep(_scenario_of(scenario), key, list(values), breakeven=breakeven))


def tornado(scenario: ScenarioLike, *, metric: str = "lcoe_nominal_per_mwh",
            inputs: Sequence[str] | None = None) -> Rows:
    """One-at-a-time swings of each input between its low and high value, largest first."""
    rows = sensitivity.tornado(_scenario_of(scenario), metric=metric, inputs=list(inputs) if inputs else None)
    return Rows("tornado", metric, rows)


@dataclass(frozen=True)
class Solution:
    """A goal seek: the value of ``key`` that gives ``metric`` = ``target``."""
    found: dict

    @property
    def value(self) -> float:
        return self.found["value"]

    def to_dict(self) -> dict:
        return study.clean(dict(self.found))

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([self.to_dict()])


def solve(scenario: ScenarioLike, *, target_metric: str, target_value: float, vary_key: str,
          low: float | None = None, high: float | None = None) -> Solution:
    """The value of ``vary_key`` at which ``target_metric`` equals ``target_value`` (Brent's method)."""
    return Solution(sensitivity.solve(_scenario_of(scenario), target_metric=target_metric,
                                      target_value=target_value, vary_key=vary_key, low=low, high=high))


@dataclass(frozen=True)
class LenderCases:
    """The lender cases with the debt locked at the base sizing."""
    results: list

    def to_dict(self) -> dict:
        return study.clean({r.case.name: r.to_dict() for r in self.results})

    def to_frame(self) -> pd.DataFrame:
        return pd.DataFrame([{"case": r.case.name, "label": r.case.label, **r.metrics} for r in self.results]
                            ).set_index("case")


def lender_cases(scenario: ScenarioLike) -> LenderCases:
    """The default lender cases (P90/P99 energy, O&M +10 %, availability -2 points, price -10 %,
    combined), each run with the debt fixed as sized at close."""
    return LenderCases(lender.lender_cases(_scenario_of(scenario)))


def write_workbook(scenario: ScenarioLike, path: str | PathLike, *, trials: int | None = None,
                   variants: bool = True, sensitivity: bool = True) -> Path:
    """Write the lender workbook (.xlsx, live formulas) of a scenario, atomically; ``trials``
    defaults to the scenario's own (0 leaves the Monte Carlo sheet out)."""
    rep = study.build(_scenario_of(scenario), trials=trials, variants=variants, sensitivity=sensitivity)
    return _workbook.write(rep, path)


@dataclass(frozen=True)
class PortfolioRun:
    """A portfolio Monte Carlo: the report (``to_dict``, as ``lcoe portfolio --json``) and the
    yearly P-values (``to_frame``); ``result`` holds every trial's yearly lines and site figures."""
    result: PortfolioResult

    def to_dict(self) -> dict:
        return self.result.report()

    def to_frame(self) -> pd.DataFrame:
        """One row per year t = 0..horizon: P50, P90, P99 and mean of each yearly line."""
        rows = []
        for r in self.result.annual():
            row = {"year": r["year"]}
            for k in LINE_KEYS:
                row.update({f"{k}_{st}": r[k][st] for st in ("p50", "p90", "p99", "mean")})
            row["debt_service"] = r["debt_service"]
            rows.append(row)
        return pd.DataFrame(rows).set_index("year")


def load_portfolio(path: str | PathLike) -> _portfolio_file.Portfolio:
    """Load and validate a portfolio file and every scenario it lists."""
    return _portfolio_file.load(path)


def portfolio(pf: _portfolio_file.Portfolio | str | PathLike, *, trials: int | None = None,
              scheduler: str | None = None, workers: int | None = None) -> PortfolioRun:
    """The portfolio Monte Carlo of a portfolio file (or :func:`load_portfolio`'s result): on the
    Dask scheduler at ``scheduler``, else on a Dask cluster in this process with ``workers``
    workers (default one per core; 0: a plain loop without Dask). The result is the same bit
    for bit wherever it runs."""
    pf = pf if isinstance(pf, _portfolio_file.Portfolio) else _portfolio_file.load(pf)
    if scheduler is not None:
        runner = _cluster.remote(scheduler)
    elif workers == 0:
        runner = _cluster.Plain()
    else:
        runner = _cluster.local(workers)
    with runner:
        return PortfolioRun(_portfolio.run(pf, trials=trials, runner=runner))
