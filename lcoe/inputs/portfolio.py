"""The portfolio file: several sites (each a scenario file with an ownership share), the
correlation of their yearly wind, and draws common to every site.

```toml
schema_version = 1

[portfolio]
name = "Tallowmere Ridge cluster"
currency = "EUR"                 # every site's project.currency must match
trials = 10000
seed = 1818

[[site]]
scenario = "tallowmere_north.toml"   # relative to this file
name = "Tallowmere North"            # default: the scenario's project.name
share = 1.0                          # ownership share, 0 < share <= 1
latitude_deg = 54.62
longitude_deg = -2.41

[correlation]                    # of one year's mean wind speed between two sites
rule = "distance"                # rho = exp(-distance / length_km) between the site coordinates
length_km = 150.0
# rule = "matrix", matrix = [[1.0, 0.7], [0.7, 1.0]]   (rows in the order of [[site]])
long_term = "independent"        # or "correlated": the long-term speed terms follow the same matrix

[common.capex]                   # one capex factor for every site in a trial (mean/mode default 1)
distribution = "triangular"
low = 0.95
high = 1.15

[common.merchant_price]          # one merchant price path for every site
volatility = 0.08                # sd of the yearly change of the log price (a random walk)
```

Mistakes are :class:`~lcoe.inputs.errors.ScenarioError` naming the file, the dotted key
(``site[2].share``) and the value; a site's own scenario errors name its file.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Literal

import numpy as np
from pydantic import Field, ValidationError

from lcoe.inputs import scenario as sc
from lcoe.inputs.errors import ScenarioError
from lcoe.inputs.schema import Vary, _Model
from lcoe.inputs.toml import parse_toml

PSD_TOL = 1e-10     # the smallest eigenvalue a correlation matrix may have below zero (rounding)


class PortfolioSection(_Model):
    name: Annotated[str, Field(min_length=1)]
    currency: str = "EUR"
    trials: Annotated[int, Field(ge=1, le=10_000_000)] = 10_000
    seed: Annotated[int, Field(ge=0)] = 0


class SiteEntry(_Model):
    scenario: Annotated[str, Field(min_length=1)]
    name: Annotated[str, Field(min_length=1)] | None = None
    share: Annotated[float, Field(gt=0.0, le=1.0)] = 1.0
    latitude_deg: Annotated[float, Field(ge=-90.0, le=90.0)] | None = None
    longitude_deg: Annotated[float, Field(ge=-180.0, le=180.0)] | None = None


class CorrelationSection(_Model):
    rule: Literal["distance", "matrix"]
    length_km: Annotated[float, Field(gt=0.0, le=1.0e5)] | None = None
    matrix: list[list[float]] | None = None
    long_term: Literal["independent", "correlated"] = "independent"


class MerchantPricePath(_Model):
    volatility: Annotated[float, Field(ge=0.0, le=1.0)]


class CommonSection(_Model):
    capex: Vary | None = None
    merchant_price: MerchantPricePath | None = None


class PortfolioFields(_Model):
    schema_version: int
    portfolio: PortfolioSection
    site: Annotated[list[SiteEntry], Field(min_length=1)]
    correlation: CorrelationSection
    common: CommonSection = CommonSection()


@dataclass(frozen=True)
class PortfolioSite:
    name: str
    share: float
    scenario: sc.Scenario
    file: str
    latitude_deg: float | None = None
    longitude_deg: float | None = None


@dataclass(frozen=True)
class Portfolio:
    """A validated portfolio: its sites (scenarios loaded) in file order."""

    name: str
    currency: str
    trials: int
    seed: int
    sites: tuple[PortfolioSite, ...]
    correlation: CorrelationSection
    common: CommonSection
    source: str = "<portfolio>"

    @property
    def horizon(self) -> int:
        """The portfolio's last operating year: the longest site life. [years]"""
        return max(s.scenario.lifetime for s in self.sites)


def is_portfolio_file(path: str | Path) -> bool:
    """Whether a TOML file is a portfolio (it has a [portfolio] table) rather than a scenario."""
    try:
        return "portfolio" in parse_toml(Path(path))
    except ScenarioError:
        return False


def load(path: str | Path) -> Portfolio:
    """Load and validate a portfolio file and every scenario it lists. Raises ScenarioError."""
    path = Path(path)
    return from_dict(parse_toml(path), source=str(path), base_dir=path.parent)


def from_dict(raw: dict, *, source: str = "<portfolio>", base_dir: Path | str = ".") -> Portfolio:
    """Validate plain data (as parsed from TOML) into a :class:`Portfolio`, loading the scenarios."""
    base_dir = Path(base_dir)
    try:
        if not isinstance(raw, dict):
            raise ScenarioError("a portfolio must be a table of sections", has_value=False)
        if "portfolio" not in raw and "project" in raw:
            raise ScenarioError("is a scenario file, not a portfolio (it has no [portfolio] table); run it with "
                                "lcoe run, or list it in a portfolio file's [[site]]", has_value=False)
        sc._check_finite(raw)
        sc.check_version(raw)
        try:
            fields = PortfolioFields.model_validate(raw)
        except ValidationError as err:
            raise sc._convert(err, raw, PortfolioFields) from None
        _check_text(fields)
        sites = _load_sites(fields, base_dir)
        _check_correlation(fields.correlation, fields.site)
        _check_common(fields.common)
    except ScenarioError as exc:
        raise exc.with_file(source)
    p = fields.portfolio
    return Portfolio(name=p.name, currency=p.currency, trials=p.trials, seed=p.seed, sites=sites,
                     correlation=fields.correlation, common=fields.common, source=source)


def _check_text(fields: PortfolioFields) -> None:
    texts = [("portfolio.name", fields.portfolio.name), ("portfolio.currency", fields.portfolio.currency)]
    texts += [(f"site[{i}].name", s.name) for i, s in enumerate(fields.site) if s.name is not None]
    for key, text in texts:
        if sc._CONTROL.search(text):
            raise ScenarioError("must be one line of text without control characters (tab, line break, escape)",
                                key=key, value=text)
        if not text.strip() and key != "portfolio.currency":
            raise ScenarioError("must not be blank", key=key, value=text)


def _load_sites(fields: PortfolioFields, base_dir: Path) -> tuple[PortfolioSite, ...]:
    out: list[PortfolioSite] = []
    seen: dict[str, int] = {}
    for i, entry in enumerate(fields.site):
        path = Path(entry.scenario)
        path = path if path.is_absolute() else base_dir / path
        if not path.is_file():
            raise ScenarioError("file not found" if not path.exists() else "is not a scenario file",
                                key=f"site[{i}].scenario", value=entry.scenario)
        scn = sc.load(path)         # its own mistakes name its own file
        if scn.project.currency != fields.portfolio.currency:
            raise ScenarioError(f"this site's project.currency = {scn.project.currency!r} differs from "
                                f"portfolio.currency = {fields.portfolio.currency!r}; a portfolio adds money in "
                                "one currency", key=f"site[{i}].scenario", value=entry.scenario)
        name = entry.name if entry.name is not None else scn.project.name
        if name in seen:
            raise ScenarioError(f"site[{seen[name]}] has the same name; give each [[site]] its own name",
                                key=f"site[{i}].name", value=name)
        seen[name] = i
        out.append(PortfolioSite(name=name, share=entry.share, scenario=scn, file=str(path),
                                 latitude_deg=entry.latitude_deg, longitude_deg=entry.longitude_deg))
    return tuple(out)


def _check_correlation(c: CorrelationSection, sites: list[SiteEntry]) -> None:
    n = len(sites)
    if c.rule == "distance":
        if c.length_km is None:
            raise ScenarioError('is required with rule = "distance" (rho = exp(-distance / length_km))',
                                key="correlation.length_km", has_value=False)
        if c.matrix is not None:
            raise ScenarioError('cannot be given with rule = "distance"; use rule = "matrix"',
                                key="correlation.matrix", has_value=False)
        for i, s in enumerate(sites):
            for k in ("latitude_deg", "longitude_deg"):
                if getattr(s, k) is None:
                    raise ScenarioError('is required with the correlation rule "distance"', key=f"site[{i}].{k}",
                                        has_value=False)
        return
    if c.length_km is not None:
        raise ScenarioError('belongs to rule = "distance"; with rule = "matrix" give the matrix alone',
                            key="correlation.length_km", value=c.length_km)
    if c.matrix is None:
        raise ScenarioError(f'is required with rule = "matrix": {n} rows of {n} numbers, one per [[site]] in order',
                            key="correlation.matrix", has_value=False)
    m = c.matrix
    if len(m) != n or any(len(row) != n for row in m):
        shape = f"{len(m)} row(s) of {', '.join(sorted({str(len(r)) for r in m}))}" if m else "no rows"
        raise ScenarioError(f"must have {n} rows of {n} numbers, one per [[site]] in order (it has {shape})",
                            key="correlation.matrix", has_value=False)
    r = np.asarray(m, float)
    for i in range(n):
        if r[i, i] != 1.0:
            raise ScenarioError("must be 1.0 (a site's correlation with itself)", key=f"correlation.matrix[{i}][{i}]",
                                value=m[i][i])
        for j in range(n):
            if not -1.0 <= r[i, j] <= 1.0:
                raise ScenarioError("must lie between -1 and 1", key=f"correlation.matrix[{i}][{j}]", value=m[i][j])
            if r[i, j] != r[j, i]:
                raise ScenarioError(f"must equal correlation.matrix[{j}][{i}] = {m[j][i]!r} (the matrix is symmetric)",
                                    key=f"correlation.matrix[{i}][{j}]", value=m[i][j])
    low = float(np.linalg.eigvalsh(r).min())
    if low < -PSD_TOL:
        raise ScenarioError(f"the correlations together are impossible: the matrix is not positive semi-definite "
                            f"(smallest eigenvalue {low:.3g})", key="correlation.matrix", has_value=False)


def _check_common(c: CommonSection) -> None:
    v = c.capex
    if v is None:
        return
    if v.distribution in ("triangular", "uniform") and v.low <= 0:
        raise ScenarioError("must be > 0: the capex factor multiplies every site's capex", key="common.capex.low",
                            value=v.low)
    if v.distribution in ("normal", "lognormal") and v.mean is not None and v.mean <= 0:
        raise ScenarioError("must be > 0: the capex factor multiplies every site's capex", key="common.capex.mean",
                            value=v.mean)
    if v.distribution == "triangular" and v.mode is None and not v.low <= 1.0 <= v.high:
        raise ScenarioError(f"is required when 1.0 lies outside low = {v.low} .. high = {v.high} "
                            "(the mode defaults to a factor of 1)", key="common.capex.mode", has_value=False)
