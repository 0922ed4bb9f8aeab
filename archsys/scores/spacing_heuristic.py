"""Multi-planet spacing heuristic (Chambers, Wetherill & Boss 1996) for three or more planets.

Per draw: the smallest separation in mutual Hill radii and the instability time
of the fit for equally spaced planets.  Labelled a heuristic: real systems are
not equally spaced, and the coefficients are quoted from memory.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability, summarize
from ..physics import hill
from .hill import stability_caveats
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["SpacingHeuristicScore"]

LABEL = "heuristic (Chambers et al. 1996 fit for equally spaced planets; coefficients from memory)"


class SpacingHeuristicScore(Score):
    name = "spacing_heuristic"
    order = 90
    columns = (
        Column("spacing_heuristic.label", "spacing heuristic", "Spacing heuristic", fmt="text", table="system"),
        Column("spacing_heuristic.min_hill_separation", "smallest separation (mutual Hill radii)",
               r"Smallest separation $\Delta_\mathrm{min}$", "R_H,m", r"$R_\mathrm{H,m}$", table="system"),
        Column("spacing_heuristic.log10_instability_time_inner_orbits",
               "log₁₀ instability time (heuristic)", r"$\log_{10} t_\mathrm{inst}$ (heuristic)",
               "inner orbits", "inner orbits", table="system"),
        Column("spacing_heuristic.probability_min_separation_below_10",
               "closest pair below 10 mutual Hill radii", r"Closest pair below $10\,R_\mathrm{H,m}$",
               fmt="percent", table="system"),
    )

    def applies(self, ctx):
        hs = ctx.arrays.get("hill_separation")
        return hs is not None and hs.shape[1] >= 2 and np.isfinite(hs).any()

    def per_draw(self, ctx):
        dmin = np.nanmin(ctx.arrays["hill_separation"], axis=1)
        ok = np.isfinite(dmin) & (dmin > 0)
        log_t = np.full(dmin.shape, np.nan)
        if ok.any():
            t = hill.chambers_instability_time(dmin[ok], ctx.post["period"][:, 0][ok])
            t = t[0] if isinstance(t, tuple) else t
            log_t[ok] = np.log10(np.asarray(t, dtype=float))
        return {"min_hill_separation": np.where(ok, dmin, np.nan), "log10_instability_time": log_t}

    def summarise(self, ctx, arr):
        dmin = arr["min_hill_separation"]
        ok = np.isfinite(dmin)
        if not ok.any():
            return ScoreResult()
        return ScoreResult(system={"spacing_heuristic": {
            "label": LABEL,
            "min_hill_separation": summarize(dmin[ok]),
            "log10_instability_time_inner_orbits": summarize(arr["log10_instability_time"][ok]),
            "probability_min_separation_below_10": probability(dmin[ok] < 10.0),
        }})

    def verdicts(self, ctx):
        sh = ctx.system.get("spacing_heuristic") or {}
        p = sh.get("probability_min_separation_below_10")
        if p is None or p < 0.5:
            return []
        return [verdict("close_spacing_heuristic", p, ctx.names,
                        criterion="closest adjacent pair below 10 mutual Hill radii",
                        citation="Chambers, Wetherill & Boss 1996",
                        caveats=[c for c in stability_caveats(ctx, uses_ecc=False) if c == "minimum_masses"])]


register(SpacingHeuristicScore)
