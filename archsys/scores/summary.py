"""Collect all scores of one posterior into a JSON-ready mapping."""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability, summarize
from .pairs import pair_arrays

__all__ = ["compute_scores"]


def compute_scores(post, options=None) -> dict:
    """Scores of one posterior: {"pairs": [...], "system": {...}, "arrays": {...}}."""
    names = post.system.planet_names
    arr = pair_arrays(post)
    pairs = []
    for j in range(len(names) - 1):
        hs = arr["hill_separation"][:, j]
        margin = arr["hill_margin"][:, j]
        known = np.isfinite(margin)
        pairs.append({
            "inner": names[j],
            "outer": names[j + 1],
            "period_ratio": summarize(arr["period_ratio"][:, j]),
            "hill_separation": summarize(hs),
            "hill_stable_probability": probability(margin[known] > 0) if known.any() else None,
        })
    system = {}
    if pairs:
        margins = arr["hill_margin"]
        known = np.all(np.isfinite(margins), axis=1)
        system["all_pairs_hill_stable_probability"] = (
            probability(np.all(margins[known] > 0, axis=1)) if known.any() else None)
    return {"pairs": pairs, "system": system, "arrays": arr}
