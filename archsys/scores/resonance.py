"""Period ratios, the nearest mean-motion resonance and the near-resonance probability.

Per draw: the adjacent period ratio P_out/P_in, the nearest tabulated resonance
j:(j-k) of order k <= 3 and the fractional offset from it, and whether the
ratio lies within a window of the first-order resonance widths, which scale
with the planets' mass ratio as mu^(2/3) (Deck, Payne & Holman 2013; see
:func:`archsys.physics.spacing.near_resonance`).  Summaries: the period ratio,
the most frequent nearest resonance over the draws with the offsets from it,
and the fraction of draws near a resonance of order 1-3 (:func:`near_window`).
"""
from __future__ import annotations

import numpy as np

from ..inference.basis import Origin, origin_of
from ..inference.summary import probability, summarize
from ..physics import spacing
from ..physics import resonance_overlap
from .common import adjacent, barely_constrained, effective_mass, flat_ecc_prior, modal_pair
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["ResonanceScore", "WIDE_RATIO", "near_first_order", "near_mmr", "near_window"]

#: Pairs wider than this period ratio get no nearest resonance: the table of
#: resonances of order <= 3 ends at 4:1 (common practice: resonances of order
#: > 3 are too weak to matter for planets).
WIDE_RATIO = 4.5

#: Widest near-resonance window (fractional offset): the super-periods' limit (scores.super_periods.MAX_OFFSET).
NEAR_MAX_OFFSET = 0.05

#: A pair counts as near resonance in a verdict when this fraction of draws is (common practice: majority).
NEAR_THRESHOLD = 0.5

def near_window(j, k, mu, e):
    """Half-width of the "near resonance" window of j:(j-k), as a fractional offset of the period ratio.

    Every order k <= 3 uses the same mass-scaled window, ``NEAR_WINDOW_MULTIPLE`` times the
    first-order width scale of :func:`archsys.physics.spacing.resonance_width` at that j, divided by
    the order k.  A choice of this tool: it names the pairs of a resonant chain of first-, second- and
    third-order resonances (e.g. 8:5, 5:3 and 3:2 links) the same way, with narrower windows for the
    weaker higher orders, and never wider than :data:`NEAR_MAX_OFFSET` (5 %, the offset within which the
    super-period columns report a pair).  Whether the pair is *in* resonance is decided by the libration of its
    resonant angles in the N-body integration, not by this window.
    """
    return np.minimum(resonance_overlap.NEAR_WINDOW_MULTIPLE * resonance_overlap.resonance_width(j, 1, mu, e) / k, NEAR_MAX_OFFSET)


def near_mmr(ratio, mu, e, max_order=spacing.MMR_MAX_ORDER):
    """(flag, j, k) per draw: near a resonance of order <= max_order, and which (0 where none).

    The resonance whose window (:func:`near_window`) holds the ratio most centrally is chosen.
    Windows are never wider than :data:`NEAR_MAX_OFFSET`, so a window is computed only for the
    draws within that offset of a resonance (the same answer, without the far draws).
    """
    ratio, mu, e = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (ratio, mu, e)))
    flag = np.zeros(np.shape(ratio), dtype=bool)
    which_j = np.zeros(np.shape(ratio), dtype=int)
    which_k = np.zeros(np.shape(ratio), dtype=int)
    best = np.full(np.shape(ratio), np.inf)
    for j, k, ratio_res in spacing.MMR_TABLE[spacing.MMR_TABLE["k"] <= max_order]:
        off = np.abs(ratio / ratio_res - 1.0)
        close = off < NEAR_MAX_OFFSET
        if not close.any():
            continue
        dist = off[close] / near_window(j, k, mu[close], e[close])
        hit = np.zeros(np.shape(ratio), dtype=bool)
        hit[close] = (dist < 1.0) & (dist < best[close])
        which_j[hit] = j
        which_k[hit] = k
        best[close] = np.where(hit[close], dist, best[close])
        flag[close] |= dist < 1.0
    return flag, which_j, which_k


def near_first_order(ratio, mu, e):
    """(flag, j) per draw: near a first-order resonance, and which one (j:(j-1); 0 where none)."""
    flag = np.zeros(np.shape(ratio), dtype=bool)
    which = np.zeros(np.shape(ratio), dtype=int)
    best = np.full(np.shape(ratio), np.inf)
    for j, k, ratio_res in spacing.MMR_TABLE[spacing.MMR_TABLE["k"] == 1]:
        window = resonance_overlap.NEAR_WINDOW_MULTIPLE * resonance_overlap.resonance_width(j, k, mu, e)
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
               description="fraction of draws near a resonance of order 1-3"),
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
        # which resonance of order <= 3 each draw is near (0: none; NaN: unknown masses or crossing periods)
        e_pair = np.maximum(e1, e2)
        known = np.isfinite(r_ok) & np.isfinite(mu) & np.isfinite(e_pair)
        which, which_k = np.full(ratio.shape, np.nan), np.full(ratio.shape, np.nan)
        if known.any():
            _, which[known], which_k[known] = near_mmr(r_ok[known], mu[known], e_pair[known])
        near = np.where(np.isfinite(which), (which > 0).astype(float), np.nan)
        near_j = np.nan_to_num(which).astype(int)
        near_k = np.nan_to_num(which_k).astype(int)
        return {"period_ratio": ratio, "mmr_j": j, "mmr_k": k, "mmr_offset": np.where(ordered, off, np.nan),
                "mu": mu, "near_resonance": near, "near_resonance_j": near_j, "near_resonance_k": near_k}

    def summarise(self, ctx, arr):
        pairs = []
        for p in range(ctx.n_pairs):
            ratio = arr["period_ratio"][:, p]
            jj, kk = arr["mmr_j"][:, p], arr["mmr_k"][:, p]
            bj, bk = modal_pair(jj, kk)
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
        near_k = ctx.arrays["near_resonance_k"]
        out = []
        for p, q in enumerate(ctx.pairs):
            prob = q.get("near_resonance_probability")
            if prob is None or prob < NEAR_THRESHOLD:
                continue
            sel = near_j[:, p] > 0
            j, k = modal_pair(near_j[:, p][sel], near_k[:, p][sel]) if sel.any() else (0, 0)
            eccs = [origin_of(ctx.note(q["inner"], "ecc")), origin_of(ctx.note(q["outer"], "ecc"))]
            loose = any(e is Origin.DATA and barely_constrained(ctx.post["ecc"][:, i], flat_ecc_prior(ctx.post))
                        for e, i in zip(eccs, (p, p + 1)))
            out.append(verdict(
                "near_resonance", prob, [q["inner"], q["outer"]],
                criterion="period ratio within the near-resonance window (3 first-order widths scaling with "
                          "mu^(2/3), divided by the order) of a resonance of order 1-3",
                citation="Deck, Payne & Holman 2013",
                caveats=(["prior_only_eccentricity"] if Origin.PRIOR in eccs else [])
                + (["weak_eccentricity"] if loose else []),
                mmr=spacing.mmr_label(j, k) if j else q.get("nearest_mmr"), order=int(k) if j else q.get("mmr_order"),
                nearest_mmr=q.get("nearest_mmr"), nearest_order=q.get("mmr_order"),
                libration_fraction=q.get("libration_probability")))
        return out


register(ResonanceScore)
