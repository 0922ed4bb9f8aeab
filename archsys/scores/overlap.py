"""First-order resonance overlap: the chaotic zone of Deck, Payne & Holman (2013).

Per draw: whether the pair's period ratio lies inside the zone where
first-order resonances overlap for the pair's mass ratios
(:func:`archsys.physics.spacing.in_overlap_zone`).  Summary: the fraction of draws.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability
from ..physics import resonance_overlap
from .common import adjacent, effective_mass, masked_apply
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["OverlapScore"]


class OverlapScore(Score):
    name = "resonance_overlap"
    order = 20
    columns = (Column("resonance_overlap_probability", "P(MMR overlap)", r"$P_\mathrm{ovl}$", fmt="percent",
                      description="fraction of draws inside the first-order resonance-overlap zone"),)

    def per_draw(self, ctx):
        m1, m2 = adjacent(effective_mass(ctx.post))
        ms = ctx.post["m_star"][:, None]
        ratio = ctx.arrays["period_ratio"]
        r_ok = np.where(ratio >= 1.0, ratio, np.nan)
        return {"overlap": masked_apply(lambda r, x, y: resonance_overlap.in_overlap_zone(r, x, y), r_ok, m1 / ms, m2 / ms)}

    def summarise(self, ctx, arr):
        pairs = []
        for p in range(ctx.n_pairs):
            f = arr["overlap"][:, p]
            ok = np.isfinite(f)
            pairs.append({"resonance_overlap_probability": probability(f[ok] > 0.5) if ok.any() else None})
        return ScoreResult(pairs=pairs)

    def verdicts(self, ctx):
        return [verdict("resonance_overlap", q["resonance_overlap_probability"], [q["inner"], q["outer"]],
                        criterion="period ratio inside the first-order resonance-overlap zone",
                        citation="Deck, Payne & Holman 2013")
                for q in ctx.pairs if (q.get("resonance_overlap_probability") or 0) >= 0.5]


register(OverlapScore)
