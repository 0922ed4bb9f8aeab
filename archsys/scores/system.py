"""System-level scores: flatness, gap complexity, spacing uniformity, packing."""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability, summarize
from ..physics import flatness, hill, spacing

__all__ = ["flatness_block", "spacing_block", "instability_block"]


def flatness_block(post):
    """Flatness from the orientation posterior, or what sky inclinations alone bound."""
    inc, node, psi = post["inc"], post["node"], post.get("psi")
    n = inc.shape[1]
    if n < 2:
        return None
    if psi is not None and np.isfinite(node).all():
        psi_all, _ = flatness.pairwise_mutual_inclinations(inc, node)
        return {
            "basis": "orientation posterior (hierarchical Rayleigh model)",
            "mutual_inclination_sigma_deg": summarize(np.degrees(post["sigma_mutual"])),
            "max_mutual_inclination_deg": summarize(np.degrees(psi_all.max(axis=1))),
            "max_tilt_from_reference_plane_deg": summarize(np.degrees(psi.max(axis=1))),
            "probability_all_within_5_deg": probability(flatness.fraction_within(psi, np.radians(5.0))),
            "probability_all_within_10_deg": probability(flatness.fraction_within(psi, np.radians(10.0))),
        }
    known = np.isfinite(inc).all(axis=0)
    if known.sum() >= 2:
        lo, _ = flatness.sky_inclination_spread(inc[:, known], reflection_ambiguous=True)
        return {
            "basis": "sky inclinations only: nodes unknown, so these are lower bounds on the mutual inclinations",
            "max_mutual_inclination_lower_bound_deg": summarize(np.degrees(lo.max(axis=1))),
            "planets_with_sky_inclination": int(known.sum()),
        }
    return {"basis": "no orientation information: flatness cannot be assessed (use MCMC with transit or astrometric data)"}


def spacing_block(post, pair):
    """Gap complexity (Gilbert & Fabrycky 2020), spacing uniformity and resonant chains."""
    P = post["period"]
    out = {}
    if P.shape[1] >= 3:
        out["gap_complexity"] = summarize(spacing.gap_complexity(P))
    if P.shape[1] >= 3:
        out["spacing_uniformity"] = summarize(spacing.spacing_uniformity(P))
    nr = pair.get("near_resonance")
    if nr is not None and nr.shape[1] >= 1:
        p_near = np.nanmean(np.where(np.isfinite(nr), nr, np.nan), axis=0)
        flags = np.nan_to_num(p_near) > 0.5
        chains = spacing.resonant_chains(flags, min_pairs=2)
        out["resonant_chains"] = [[int(a), int(b)] for a, b in chains]
    return out


def instability_block(post, pair):
    """Multi-planet spacing heuristic (Chambers, Wetherill & Boss 1996) for >= 3 planets."""
    hs = pair["hill_separation"]
    if hs.shape[1] < 2 or not np.isfinite(hs).any():
        return None
    dmin = np.nanmin(hs, axis=1)
    P_in = post["period"][:, 0]
    ok = np.isfinite(dmin) & (dmin > 0)
    if not ok.any():
        return None
    t = hill.chambers_instability_time(dmin[ok], P_in[ok])
    t_orb = t[0] if isinstance(t, tuple) else t
    log_t = np.log10(np.asarray(t_orb, dtype=float))
    return {
        "label": "heuristic (Chambers et al. 1996 fit for equally spaced planets; coefficients from memory)",
        "min_hill_separation": summarize(dmin),
        "log10_instability_time_inner_orbits": summarize(log_t),
        "probability_min_separation_below_10": probability(dmin[ok] < 10.0),
    }
