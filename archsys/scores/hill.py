"""Hill stability: separations in mutual Hill radii and the eccentric criterion of Gladman (1993).

Per draw: the separation of each adjacent pair in mutual Hill radii and the
margin of Gladman's (1993) eccentric Hill-stability criterion (positive:
Hill stable).  Summaries: the separation, the fraction of draws in which each
pair is Hill stable, and the fraction in which every pair is.
"""
from __future__ import annotations

import numpy as np

from ..inference.basis import Origin, origin_of
from ..inference.summary import probability, summarize
from ..physics import hill
from .common import adjacent, barely_constrained, effective_mass, flat_ecc_prior, masked_apply
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["HillScore", "stability_caveats"]


def stability_caveats(ctx, uses_ecc=True):
    """Caveat codes of a stability verdict: what it rests on beyond the data."""
    out = []
    planets = ctx.names
    sources = [origin_of(ctx.note(p, "ecc")) for p in planets]
    if uses_ecc and Origin.ASSUMED in sources:
        out.append("assumed_circular")
    if uses_ecc and Origin.PRIOR in sources:
        out.append("prior_only_eccentricity")
    flat = flat_ecc_prior(ctx.post)
    if uses_ecc and any(s is Origin.DATA and barely_constrained(ctx.post["ecc"][:, j], flat)
                        for j, s in enumerate(sources)):
        out.append("weak_eccentricity")
    if any(str(ctx.note(p, "mass")).startswith("minimum") for p in planets):
        out.append("minimum_masses")
    return out


class HillScore(Score):
    name = "hill"
    order = 30
    verdict_order = 1
    columns = (
        Column("hill_separation", "Δ (Hill)", r"$\Delta$", "R_H,m", r"$R_\mathrm{H,m}$",
               description="separation in mutual Hill radii"),
        Column("hill_stable_probability", "P(Hill stable)", r"$P_\mathrm{Hill}$", fmt="percent",
               description="fraction of draws Hill stable (Gladman 1993)"),
        Column("all_pairs_hill_stable_probability", "every adjacent pair Hill stable (Gladman 1993)",
               r"Every adjacent pair Hill stable (Gladman 1993)", fmt="percent", table="system"),
    )

    def per_draw(self, ctx):
        post = ctx.post
        a1, a2 = adjacent(post["a"])
        m1, m2 = adjacent(effective_mass(post))
        e1, e2 = adjacent(post["ecc"])
        ms = post["m_star"][:, None]
        return {"hill_separation": masked_apply(hill.hill_separation, a1, a2, m1, m2, ms),
                "hill_margin": masked_apply(hill.gladman_margin, a1, a2, m1, m2, ms, e1, e2)}

    def summarise(self, ctx, arr):
        pairs = []
        for p in range(ctx.n_pairs):
            margin = arr["hill_margin"][:, p]
            known = np.isfinite(margin)
            pairs.append({"hill_separation": summarize(arr["hill_separation"][:, p]),
                          "hill_stable_probability": probability(margin[known] > 0) if known.any() else None})
        margins = arr["hill_margin"]
        known = np.all(np.isfinite(margins), axis=1)
        p_all = probability(np.all(margins[known] > 0, axis=1)) if known.any() else None
        return ScoreResult(pairs=pairs, system={"all_pairs_hill_stable_probability": p_all})

    def verdicts(self, ctx):
        return [verdict("hill_stable_all_pairs", ctx.system.get("all_pairs_hill_stable_probability"),
                        ctx.names, criterion="eccentric Hill-stability criterion for every adjacent pair",
                        citation="Gladman 1993", caveats=stability_caveats(ctx))]


register(HillScore)
