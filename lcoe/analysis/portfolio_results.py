"""What a portfolio Monte Carlo gives: P-values of the portfolio per year and over the life,
each site's contribution, the pooled debt cover and the diversification benefit.

The diversification benefit of a measure is the portfolio's P90 against the sum of the
sites' own P90s (each site's P90 from the same trials, times its share): for variables
that move together perfectly the two are equal (quantiles of comonotonic sums add:
Dhaene et al. 2002, "The concept of comonotonicity in actuarial science and finance:
theory", Insurance: Mathematics and Economics 31(1)); the less they move together, the
higher the portfolio's P90 lies above the sum. A site's tail mean is its average over
the portfolio's worst 10 % of trials; the sites' tail means add up to the portfolio's
(the expected-shortfall allocation of Tasche 1999, "Risk contributions and performance
measurement").
"""

from __future__ import annotations

import math
import warnings as _warnings_mod
from dataclasses import dataclass, field

import numpy as np

from lcoe.analysis.montecarlo import p_stats
from lcoe.analysis.study import clean
from lcoe.inputs.about import CAUTION

LINE_KEYS = ("energy_mwh", "revenue", "cfads", "equity_cash_flow")
SITE_KEYS = ("energy_1yr_mwh", "energy_10yr_mwh", "energy_life_mwh", "revenue_life", "cfads_life", "equity_npv",
             "min_dscr")
ADDITIVE_KEYS = SITE_KEYS[:-1]        # figures that add up across sites (times the shares)
LIFE_KEYS = ADDITIVE_KEYS + ("equity_irr", "pooled_min_dscr")
TAIL = 0.10                           # the worst share of trials for the tail means
YEAR_STATS = ("p50", "p90", "p99", "mean")
SITE_STATS = ("p50", "p90", "p99", "mean")


@dataclass
class PortfolioResult:
    pf: object                 # lcoe.inputs.portfolio.Portfolio
    plan: object               # lcoe.analysis.portfolio.Plan
    matrix: np.ndarray         # correlation of yearly wind (sites, sites)
    lines: dict                # LINE_KEYS -> (trials, H + 1), shares applied
    site_values: dict          # SITE_KEYS -> (trials, sites), shares applied (not to min_dscr)
    totals: dict               # equity_irr, equity_npv, pooled_min_dscr -> (trials,)
    warnings: list = field(default_factory=list)
    execution: dict = field(default_factory=dict)

    @property
    def trials(self) -> int:
        return self.plan.trials

    def portfolio_values(self, key: str) -> np.ndarray:
        """The portfolio's value of a life figure in every trial."""
        if key in self.totals:
            return self.totals[key]
        e = self.lines["energy_mwh"]
        if key == "energy_1yr_mwh":
            return e[:, 1]
        if key == "energy_10yr_mwh":
            return e[:, 1:min(self.plan.horizon, 10) + 1].sum(axis=1) / 10.0
        if key == "energy_life_mwh":
            return e[:, 1:].sum(axis=1)
        if key == "revenue_life":
            return self.lines["revenue"][:, 1:].sum(axis=1)
        if key == "cfads_life":
            return self.lines["cfads"][:, 1:].sum(axis=1)
        raise KeyError(key)

    def site_stats(self, key: str) -> list[dict]:
        """SITE_STATS of one figure for every site (P90 on the conservative, low side)."""
        x = self.site_values[key]
        with _warnings_mod.catch_warnings():
            _warnings_mod.simplefilter("ignore", RuntimeWarning)     # a site without debt has no DSCR
            q = np.nanpercentile(x, [50.0, 10.0, 1.0], axis=0)
            mean = np.nanmean(x, axis=0)
        return [{"p50": q[0, s], "p90": q[1, s], "p99": q[2, s], "mean": mean[s]} for s in range(x.shape[1])]

    def tail_trials(self, key: str) -> np.ndarray:
        """The trials of the portfolio's worst TAIL share for a figure (ties in trial order)."""
        v = self.portfolio_values(key)
        k = max(1, int(math.ceil(TAIL * v.size)))
        return np.argsort(v, kind="stable")[:k]

    def diversification(self) -> dict:
        out = {}
        for key in ADDITIVE_KEYS:
            port = p_stats(self.portfolio_values(key), True, ("p90",))["p90"]
            sites = sum(s["p90"] for s in self.site_stats(key))
            tail = self.tail_trials(key)
            out[key] = {"portfolio_p90": port, "sum_of_site_p90": sites, "benefit": port - sites,
                        "benefit_share": (port - sites) / abs(sites) if sites else None,
                        "portfolio_tail_mean": float(self.portfolio_values(key)[tail].mean())}
        return out

    def pooled_debt(self) -> dict | None:
        ds = self.plan.debt_service
        if not np.any(ds > 0):
            return None
        site_dscr = self.site_values["min_dscr"]
        with np.errstate(invalid="ignore"):
            any_below = np.any(site_dscr < 1.0, axis=1)
        pooled = self.totals["pooled_min_dscr"]
        return {"debt_amount": float(sum(sp.share * (sp.metrics.get("debt_amount") or 0.0)
                                         for sp in self.plan.sites)),
                "min_dscr": p_stats(pooled, True),
                "prob_min_dscr_below_1": float(np.mean(~(pooled >= 1.0))),
                "prob_any_site_min_dscr_below_1": float(np.mean(any_below))}

    def annual(self) -> list[dict]:
        rows = []
        ds = self.plan.debt_service
        q = {k: np.percentile(self.lines[k], [50.0, 10.0, 1.0], axis=0) for k in LINE_KEYS}
        mean = {k: self.lines[k].mean(axis=0) for k in LINE_KEYS}
        for t in range(self.plan.horizon + 1):
            row: dict = {"year": t}
            for k in LINE_KEYS:
                row[k] = {"p50": q[k][0, t], "p90": q[k][1, t], "p99": q[k][2, t], "mean": mean[k][t]}
            row["debt_service"] = float(ds[t])
            row["dscr_at_p90_cfads"] = q["cfads"][1, t] / ds[t] if ds[t] > 0 else None
            rows.append(row)
        return rows

    def report(self) -> dict:
        pf, plan = self.pf, self.plan
        stats = {k: self.site_stats(k) for k in SITE_KEYS}
        tails = {k: self.tail_trials(k) for k in ADDITIVE_KEYS}
        life_mean = self.portfolio_values("energy_life_mwh").mean()
        sites = []
        for i, (entry, sp) in enumerate(zip(pf.sites, plan.sites)):
            scn = sp.scenario
            sites.append({
                "name": sp.name, "scenario": entry.file, "share": sp.share,
                "latitude_deg": entry.latitude_deg, "longitude_deg": entry.longitude_deg,
                "lifetime_years": scn.lifetime, "turbines": scn.project.turbines,
                "capacity_mw": scn.plant_kw / 1000.0,
                "net_aep_p50_mwh": sp.share * sp.energy.net_aep_p50_mwh,
                "debt_amount": sp.share * (sp.metrics.get("debt_amount") or 0.0),
                "min_dscr_p50_case": sp.metrics.get("min_dscr"),
                "energy_share": float(self.site_values["energy_life_mwh"][:, i].mean() / life_mean)
                if life_mean else None,
                "montecarlo": {k: stats[k][i] for k in SITE_KEYS},
                "tail_mean": {k: float(self.site_values[k][tails[k], i].mean()) for k in ADDITIVE_KEYS},
            })
        c = pf.correlation
        common = pf.common
        out = {
            "portfolio": pf.name, "source": pf.source, "currency": pf.currency, "trials": plan.trials,
            "seed": plan.seed, "block_trials": plan.block, "horizon_years": plan.horizon,
            "correlation": {"rule": c.rule, "length_km": c.length_km, "long_term": c.long_term,
                            "matrix": self.matrix.tolist()},
            "common": {"capex": None if common.capex is None else common.capex.model_dump(),
                       "merchant_price": None if common.merchant_price is None else
                       common.merchant_price.model_dump()},
            "sites": sites,
            "life": {k: p_stats(self.portfolio_values(k), True) for k in LIFE_KEYS},
            "diversification": self.diversification(),
            "pooled_debt": self.pooled_debt(),
            "annual": self.annual(),
            "warnings": list(self.warnings),
            "caution": CAUTION,
            "execution": dict(self.execution),
        }
        return clean(out)
