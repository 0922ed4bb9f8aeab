"""Period ratios, the nearest mean-motion resonance and the near-resonance probability.

Per draw: the adjacent period ratio P_out/P_in, the nearest tabulated resonance
j:(j-k) of order k <= 3 and the fractional offset from it, and whether the
ratio lies within a window of the first-order resonance widths, which scale
with the planets' mass ratio as mu^(2/3) (Deck, Payne & Holman 2013; see
:func:`archsys.physics.spacing.near_resonance`).  Summaries: the period ratio,
the most frequent nearest resonance over the draws with the offsets from it,
and the fraction of draws near a first-order resonance.
"""
from __future__ import annotations

from collections import Counter

import numpy as np

from ..inference.basis import Source, source_of
from ..inference.summary import probability, summarize
from ..physics import spacing
from .common import adjacent, barely_constrained, effective_mass, flat_ecc_prior, masked_apply
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["ResonanceScore", "WIDE_RATIO", "near_first_order"]

#: Pairs wider than this period ratio get no nearest resonance: the table of
#: resonances of order <= 3 ends at 4:1 (common practice: resonances of order
#: > 3 are too weak to matter for planets).
WIDE_RATIO = 4.5

#: A pair counts as near resonance in a verdict when this fraction of draws is (common practice: majority).
NEAR_THRESHOLD = 0.5

def near_first_order(ratio, mu, e):
    """(flag, j) per draw: near a first-order resonance, and which one (j:(j-1); 0 where none)."""
    flag = np.zeros(np.shape(ratio), dtype=bool)
    which = np.zeros(np.shape(ratio), dtype=int)
    best = np.full(np.shape(ratio), np.inf)
    for j, k, ratio_res in spacing.MMR_TABLE[spacing.MMR_TABLE["k"] == 1]:
        window = spacing.NEAR_WINDOW_MULTIPLE * spacing.resonance_width(j, k, mu, e)
        dist = np.abs(ratio / ratio_res - 1.0) / window
        hit = (dist < 1.0) & (dist < best)
        which = np.where(hit, j, which)
        best = np.where(hit, dist, best)
        flag |= dist < 1.0
    return flag, which


class ResonanceScore(Score):
    name = "resonance"
    order = 10
    columns = (
        Column("period_ratio", "period ratio", r"$P_\mathrm{out}/P_\mathrm{in}$", unit_astropy="",
               description="adjacent period ratio"),
        Column("nearest_mmr", "nearest MMR", "MMR", fmt="text", description="nearest mean-motion resonance"),
        Column("mmr_order", "order", "Order", fmt="integer", description="order k of the nearest resonance"),
        Column("mmr_offset", "offset", r"$\delta$", "%", r"\%", scale=100.0, unit_astropy="%",
               description="fractional offset from the nearest resonance"),
        Column("near_resonance_probability", "P(near MMR)", r"$P_\mathrm{MMR}$", fmt="percent",
               description="fraction of draws near a first-order resonance"),
    )

    def per_draw(self, ctx):
        post = ctx.post
        P1, P2 = adjacent(post["period"])
        m1, m2 = adjacent(effective_mass(post))
        e1, e2 = adjacent(post["ecc"])
        ratio = P2 / P1
        # draws whose periods cross (ratio < 1) have no resonance; keep them NaN, not an error
        ordered = ratio >= 1.0
        j, k, off = spacing.nearest_mmr(np.where(ordered, ratio, 1.0))
        mu = (m1 + m2) / post["m_star"][:, None]
        r_ok = np.where(ordered, ratio, np.nan)
        # which first-order resonance each draw is near (0: none; NaN: unknown masses or crossing periods)
        which = masked_apply(lambda r, x, y: near_first_order(r, x, y)[1], r_ok, mu, np.maximum(e1, e2))
        near = np.where(np.isfinite(which), (which > 0).astype(float), np.nan)
        near_j = np.nan_to_num(which).astype(int)
        return {"period_ratio": ratio, "mmr_j": j, "mmr_k": k, "mmr_offset": np.where(ordered, off, np.nan),
                "mu": mu, "near_resonance": near, "near_resonance_j": near_j}

    def summarise(self, ctx, arr):
        pairs = []
        for p in range(ctx.n_pairs):
            ratio = arr["period_ratio"][:, p]
            jj, kk = arr["mmr_j"][:, p], arr["mmr_k"][:, p]
            (bj, bk), _ = Counter(zip(jj.tolist(), kk.tolist())).most_common(1)[0]
            wide = np.median(ratio) > WIDE_RATIO
            near = arr["near_resonance"][:, p]
            ok = np.isfinite(near)
            pairs.append({
                "period_ratio": summarize(ratio),
                "nearest_mmr": None if wide else spacing.mmr_label(bj, bk),
                "mmr_order": None if wide else int(bk),
                "mmr_offset": None if wide else summarize(ratio / (bj / (bj - bk)) - 1.0),
                "near_resonance_probability": probability(near[ok] > 0.5) if ok.any() else None,
            })
        return ScoreResult(pairs=pairs)

    def verdicts(self, ctx):
        near_j = ctx.arrays["near_resonance_j"]
        out = []
        for p, q in enumerate(ctx.pairs):
            prob = q.get("near_resonance_probability")
            if prob is None or prob < NEAR_THRESHOLD:
                continue
            js = near_j[:, p][near_j[:, p] > 0]
            j = Counter(js.tolist()).most_common(1)[0][0] if js.size else 0
            eccs = [source_of(ctx.note(q["inner"], "ecc")), source_of(ctx.note(q["outer"], "ecc"))]
            loose = any(e is Source.DATA and barely_constrained(ctx.post["ecc"][:, i], flat_ecc_prior(ctx.post))
                        for e, i in zip(eccs, (p, p + 1)))
            out.append(verdict(
                "near_resonance", prob, [q["inner"], q["outer"]],
                criterion="period ratio within 3 resonance widths (width scaling with mu^(2/3)) of a "
                          "first-order resonance",
                citation="Deck, Payne & Holman 2013",
                caveats=(["prior_only_eccentricity"] if Source.PRIOR in eccs else [])
                + (["weak_eccentricity"] if loose else []),
                mmr=spacing.mmr_label(j, 1) if j else q.get("nearest_mmr"), order=1,
                nearest_mmr=q.get("nearest_mmr"), nearest_order=q.get("mmr_order")))
        return out


register(ResonanceScore)
