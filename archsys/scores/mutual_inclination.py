"""Mutual inclinations of adjacent pairs.

With sky inclinations and nodes for every planet (posterior or given), the
mutual inclination per draw; with sky inclinations only, its lower bound
|i_1 - i_2| (with the i <-> 180 deg - i reflection of transits taken into account).
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import summarize
from ..physics import flatness
from .registry import Column, Score, ScoreResult, register

__all__ = ["MutualInclinationScore"]


class MutualInclinationScore(Score):
    name = "mutual_inclination"
    order = 50
    columns = (
        Column("mutual_inclination_deg", "mutual inclination", r"$i_\mathrm{mut}$", "deg", "deg", unit_astropy="deg",
               description="mutual inclination of the pair"),
        Column("mutual_inclination_lower_bound_deg", "mutual inclination ≥", r"$i_\mathrm{mut}$ (lower bound)",
               "deg", "deg", unit_astropy="deg",
               description="lower bound on the mutual inclination from sky inclinations alone"),
    )

    def applies(self, ctx):
        return ctx.n_pairs >= 1 and np.isfinite(ctx.post["inc"]).all()

    def batch_key(self, ctx):
        return bool(np.isfinite(ctx.post["node"]).all())

    def per_draw(self, ctx):
        inc, node = ctx.post["inc"], ctx.post["node"]
        if np.isfinite(node).all():
            return {"mutual_inclination": flatness.adjacent_mutual_inclinations(inc, node)}
        lo, pairs = flatness.sky_inclination_spread(inc, reflection_ambiguous=True)
        adj = [i for i, (x, y) in enumerate(pairs) if y == x + 1]
        return {"mutual_inclination_lower_bound": lo[:, adj]}

    def summarise(self, ctx, arr):
        if "mutual_inclination" in arr:
            key, x = "mutual_inclination_deg", arr["mutual_inclination"]
        else:
            key, x = "mutual_inclination_lower_bound_deg", arr["mutual_inclination_lower_bound"]
        return ScoreResult(pairs=[{key: summarize(np.degrees(x[:, p]))} for p in range(ctx.n_pairs)])


register(MutualInclinationScore)
