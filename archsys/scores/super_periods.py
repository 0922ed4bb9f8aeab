"""Super-periods and approximate TTV amplitudes of near-resonant pairs (Lithwick, Xie & Wu 2012).

A pair whose period ratio lies within :data:`MAX_OFFSET` (fractional) of a
resonance j:(j-k) of order 1-3 (the same table as the pair's nearest MMR) gets the posterior of its
super-period 1/|j/P' - (j-k)/P|.  First-order pairs with masses also get the
order of magnitude of the TTV amplitudes of both planets from the formulae of
Lithwick, Xie & Wu (2012), for an assumed free eccentricity (default zero:
forced TTVs only); these are labelled approximate.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import summarize
from ..physics import spacing, timing
from ..physics import resonance_overlap
from .common import effective_mass, modal_pair
from .registry import Column, Score, ScoreResult, register

__all__ = ["super_period_block", "MAX_OFFSET"]

#: Largest |Delta| (fractional offset of the period ratio from the resonance,
#: posterior median) for which a super-period is reported.  A choice of this
#: tool: LXW12's formulae assume the pair is near, but not in, resonance, and
#: Kepler's near-resonant pairs sit 1-2 % wide ([Fabrycky2014]).
MAX_OFFSET = 0.05
MINUTES_PER_DAY = 1440.0
CITATION = "Lithwick, Xie & Wu 2012"


def super_period_block(post, free_eccentricity=0.0, nearest=None):
    """JSON-ready keys: (one mapping per adjacent pair, ``{}`` when not near resonance; system keys).

    Pair keys: ``super_period_resonance``, ``super_period_order``,
    ``super_period_offset`` (Delta), ``super_period_days``; first-order pairs with
    masses also ``ttv_amplitude_inner_min``, ``ttv_amplitude_outer_min``
    (approximate) and ``super_period_in_resonance_width_probability``.  System:
    ``{"timing": {"ttv_assumptions", "citation"}}`` when any pair qualifies.
    ``nearest``: the nearest resonances (j, k) per draw and pair when already known (the resonance
    score's ``mmr_j``/``mmr_k``); computed here otherwise.
    """
    P = np.asarray(post["period"], dtype=float)
    names = post.system.planet_names
    m = effective_mass(post)
    ms = np.asarray(post["m_star"], dtype=float)
    notes = getattr(post, "notes", {}) or {}
    z = float(free_eccentricity)
    pairs, minimum, any_ttv = [], False, False
    for i in range(P.shape[1] - 1):
        entry = {}
        pairs.append(entry)
        p1, p2 = P[:, i], P[:, i + 1]
        ok = np.isfinite(p1) & np.isfinite(p2) & (p2 > p1)
        if not ok.any():
            continue
        if nearest is not None:
            j, k = nearest[0][ok, i], nearest[1][ok, i]
        else:
            j, k, _ = spacing.nearest_mmr(p2[ok] / p1[ok], max_order=3)
        bj, bk = modal_pair(j, k)
        delta = p2[ok] / p1[ok] * (bj - bk) / bj - 1.0
        if abs(np.median(delta)) > MAX_OFFSET:
            continue
        entry.update(super_period_resonance=spacing.mmr_label(bj, bk), super_period_order=int(bk),
                     super_period_offset=summarize(delta),
                     super_period_days=summarize(timing.super_period(p1[ok], p2[ok], bj, bk)))
        mu1, mu2 = m[ok, i] / ms[ok], m[ok, i + 1] / ms[ok]
        have = np.isfinite(mu1) & np.isfinite(mu2)
        if bk != 1 or not have.any():
            continue
        alpha = float(np.median((p1[ok] / p2[ok]) ** (2.0 / 3.0)))      # f, g vary slowly with alpha
        a_in, a_out = timing.ttv_amplitudes(p1[ok][have], p2[ok][have], mu1[have], mu2[have], bj, z_free=z,
                                            coeff_alpha=alpha)
        # inside the resonance width the pair may librate: LXW12's near-resonance formulae do not apply
        e_pair = np.maximum(post["ecc"][ok, i], post["ecc"][ok, i + 1])[have]
        width = resonance_overlap.resonance_width(bj, bk, (mu1 + mu2)[have], np.nan_to_num(e_pair))
        entry.update(ttv_amplitude_inner_min=summarize(a_in * MINUTES_PER_DAY),
                     ttv_amplitude_outer_min=summarize(a_out * MINUTES_PER_DAY),
                     super_period_in_resonance_width_probability=float(np.mean(np.abs(delta[have]) < width)))
        any_ttv = True
        minimum |= any("minimum" in str(notes.get(nm, {}).get("mass", "")) for nm in names[i:i + 2])
    system = {}
    if any(pairs):
        text = ("super-periods of pairs within 5 % of a resonance of order 1-3 (as the nearest MMR); second- and third-order pairs: "
                "super-period only")
        if any_ttv:
            text += ("; TTV amplitudes approximate (order of magnitude) from the Lithwick, Xie & Wu 2012 "
                     f"formulae with free eccentricity |Z_free| = {z:g}"
                     + (" (forced TTVs only)" if z == 0 else ", averaged over its unknown phase")
                     + ("; m sin i used where the true mass is unknown, so amplitudes are lower limits"
                        if minimum else "")
                     + "; not valid inside the resonance width")
        system["timing"] = {"assumptions": text, "citation": CITATION}
    return pairs, system


_D = dict(unit="d", unit_latex="d", unit_astropy="d")
_MIN = dict(unit="min", unit_latex="min", unit_astropy="min")


class SuperPeriodScore(Score):
    table_group = "predictions"      # tables: the pair/planet predictions table (output.table_model)
    name = "super_period"
    order = 85
    columns = (
        Column("super_period_resonance", "super-period resonance", "Super-period resonance", fmt="text",
               description="resonance j:(j-k) (order 1-3) of the super-period"),
        Column("super_period_order", "super-period resonance order", "Super-period resonance order",
               fmt="integer", show=False),
        Column("super_period_offset", "Δ (super-period resonance)", r"$\Delta_\mathrm{sup}$", show=False,
               description="fractional offset of the period ratio from that resonance"),
        Column("super_period_days", "super-period", r"$P_\mathrm{sup}$", **_D,
               description="1/|j/P' - (j-k)/P| (Lithwick, Xie & Wu 2012)"),
        Column("ttv_amplitude_inner_min", "TTV amplitude, inner (approx.)", r"$V_\mathrm{in}$ (approx.)", **_MIN,
               description="order of magnitude, Lithwick, Xie & Wu 2012"),
        Column("ttv_amplitude_outer_min", "TTV amplitude, outer (approx.)", r"$V_\mathrm{out}$ (approx.)", **_MIN,
               description="order of magnitude, Lithwick, Xie & Wu 2012"),
        Column("super_period_in_resonance_width_probability", "inside the resonance width",
               "Inside the resonance width", fmt="percent",
               description="draws where the TTV formulae do not apply"),
        Column("timing.assumptions", "timing assumptions", "Timing assumptions", fmt="text", table="system"),
        Column("timing.citation", "timing citation", "Timing citation", fmt="text", table="system", show=False),
    )

    def summarise(self, ctx, arrays):
        z = getattr(ctx.options, "ttv_free_eccentricity", 0.0) or 0.0
        arr = ctx.arrays
        nearest = (arr["mmr_j"], arr["mmr_k"]) if "mmr_j" in arr and spacing.MMR_MAX_ORDER == 3 else None
        pairs, system = super_period_block(ctx.post, free_eccentricity=z, nearest=nearest)
        return ScoreResult(pairs=pairs, system=system)


register(SuperPeriodScore)
