"""Collect all scores of one posterior into a JSON-ready mapping."""
from __future__ import annotations

from collections import Counter

import numpy as np

from ..inference.summary import probability, summarize
from ..physics import spacing
from .pairs import amd_arrays, pair_arrays
from .predictions import add_predictions
from .system import flatness_block, instability_block, spacing_block

__all__ = ["compute_scores", "WIDE_RATIO"]

#: Pairs wider than this period ratio get no nearest resonance: the table of
#: resonances of order <= 3 ends at 4:1 (common practice: resonances of order
#: > 3 are too weak to matter for planets).
WIDE_RATIO = 4.5


def _prob_known(flags):
    f = np.asarray(flags, dtype=float)
    ok = np.isfinite(f)
    return probability(f[ok] > 0.5) if ok.any() else None


def _modal_mmr(arr, j):
    """Most frequent nearest resonance over the draws and the offsets from it."""
    jj, kk = arr["mmr_j"][:, j], arr["mmr_k"][:, j]
    (bj, bk), _ = Counter(zip(jj.tolist(), kk.tolist())).most_common(1)[0]
    ratio_res = bj / (bj - bk)
    off = arr["period_ratio"][:, j] / ratio_res - 1.0
    return bj, bk, off


def compute_scores(post, options=None) -> dict:
    """Scores of one posterior: {"pairs": [...], "system": {...}, "arrays": {...}}."""
    names = post.system.planet_names
    arr = pair_arrays(post)
    amd_res = amd_arrays(post) if len(names) >= 2 else None
    coplanar_amd = post.get("psi") is None
    pairs = []
    for j in range(len(names) - 1):
        margin = arr["hill_margin"][:, j]
        known = np.isfinite(margin)
        bj, bk, off = _modal_mmr(arr, j)
        wide = np.median(arr["period_ratio"][:, j]) > WIDE_RATIO
        entry = {
            "inner": names[j],
            "outer": names[j + 1],
            "period_ratio": summarize(arr["period_ratio"][:, j]),
            "nearest_mmr": None if wide else spacing.mmr_label(bj, bk),
            "mmr_order": None if wide else int(bk),
            "mmr_offset": None if wide else summarize(off),
            "near_resonance_probability": _prob_known(arr["near_resonance"][:, j]),
            "resonance_overlap_probability": _prob_known(arr["overlap"][:, j]),
            "hill_separation": summarize(arr["hill_separation"][:, j]),
            "hill_stable_probability": probability(margin[known] > 0) if known.any() else None,
        }
        if amd_res is not None:
            beta = amd_res[0][:, j]
            ok = ~np.isnan(beta)          # beta = inf (zero critical AMD) counts as unstable
            entry["amd_beta"] = summarize(beta)
            entry["amd_stable_probability"] = probability(beta[ok] < 1.0) if ok.any() else None
        if "mutual_inclination" in arr:
            entry["mutual_inclination_deg"] = summarize(np.degrees(arr["mutual_inclination"][:, j]))
        elif "mutual_inclination_lower_bound" in arr:
            entry["mutual_inclination_lower_bound_deg"] = summarize(
                np.degrees(arr["mutual_inclination_lower_bound"][:, j]))
        pairs.append(entry)
    system = {}
    if pairs:
        margins = arr["hill_margin"]
        known = np.all(np.isfinite(margins), axis=1)
        system["all_pairs_hill_stable_probability"] = (
            probability(np.all(margins[known] > 0, axis=1)) if known.any() else None)
        if amd_res is not None:
            beta, beta_star = amd_res
            ok = ~np.isnan(beta_star)
            system["amd"] = {
                "system_stable_probability": probability(np.all(beta[ok] < 1, axis=1) & (beta_star[ok] < 1))
                if ok.any() else None,
                "inclinations": "coplanar (no orientation posterior)" if coplanar_amd
                else "tilts from the reference plane (posterior)",
                "criterion": "Laskar & Petit 2017 with the MMR-overlap correction of Petit, Laskar & Boue 2017",
            }
        fb = flatness_block(post)
        if fb is not None:
            system["flatness"] = fb
            if "mutual_inclination_sigma_deg" in fb:
                system["mutual_inclination_sigma_deg"] = fb["mutual_inclination_sigma_deg"]
        sb = spacing_block(post, arr)
        if "gap_complexity" in sb:
            system["gap_complexity"] = sb["gap_complexity"]
        if "spacing_uniformity" in sb:
            system["spacing_uniformity"] = sb["spacing_uniformity"]
        if "resonant_chains" in sb:
            system["resonant_chains"] = [
                [names[a] for a in range(start, stop + 1)] for start, stop in sb["resonant_chains"]]
        ib = instability_block(post, arr)
        if ib is not None:
            system["spacing_heuristic"] = ib
    planets = [{} for _ in names]
    add_predictions(post, options, pairs, system, planets)
    system["verdicts"] = _verdicts(pairs, system)
    return {"pairs": pairs, "system": system, "planets": planets, "arrays": arr}


def _pct(p):
    return f"{100 * p:.0f} %"


def _verdicts(pairs, system):
    """Plain-language verdicts (statistical, not guarantees)."""
    v = []
    amd_b = system.get("amd")
    if amd_b and amd_b.get("system_stable_probability") is not None:
        p = amd_b["system_stable_probability"]
        word = "AMD stable" if p >= 0.95 else "AMD unstable" if p <= 0.05 else "possibly AMD unstable"
        v.append(f"System {word}: AMD-stable in {_pct(p)} of draws (Laskar & Petit 2017; "
                 f"{amd_b['inclinations']}). AMD instability means collisions are not excluded "
                 "by secular dynamics, not that they happen.")
    near = [f"{q['inner']}–{q['outer']} near {q['nearest_mmr']}" for q in pairs
            if (q.get("near_resonance_probability") or 0) >= 0.5]
    if near:
        v.append("Near first-order resonance: " + ", ".join(near) + ".")
    ch = system.get("resonant_chains")
    if ch:
        v.append("Resonant chain" + ("s" if len(ch) > 1 else "") + ": " + "; ".join(" – ".join(c) for c in ch) + ".")
    ov = [f"{q['inner']}–{q['outer']}" for q in pairs if (q.get("resonance_overlap_probability") or 0) >= 0.5]
    if ov:
        v.append("Inside the first-order resonance-overlap (chaotic) zone: " + ", ".join(ov) + ".")
    fb = system.get("flatness")
    if fb and "probability_all_within_5_deg" in fb:
        v.append(f"All orbits within 5° of a common plane in {_pct(fb['probability_all_within_5_deg'])} of draws.")
    sh = system.get("spacing_heuristic")
    if sh and sh.get("probability_min_separation_below_10") is not None and len(pairs) >= 2:
        p = sh["probability_min_separation_below_10"]
        if p >= 0.5:
            v.append(f"Closest pair below 10 mutual Hill radii in {_pct(p)} of draws: "
                     "for three or more planets this is often unstable on Gyr time-scales (heuristic).")
    return v
