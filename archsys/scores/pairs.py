"""Per-pair scores over posterior draws: period ratios and Hill spacing."""
from __future__ import annotations

import numpy as np

from ..physics import hill
from .common import adjacent, effective_mass, masked_apply

__all__ = ["pair_arrays"]


def pair_arrays(post):
    """Per-draw arrays for adjacent pairs, each shaped (n_draws, n_pairs)."""
    P = post["period"]
    a = post["a"]
    m = effective_mass(post)
    m_star = post["m_star"][:, None]
    P1, P2 = adjacent(P)
    a1, a2 = adjacent(a)
    m1, m2 = adjacent(m)
    e1, e2 = adjacent(post["ecc"])
    out = {"period_ratio": P2 / P1}
    out["hill_separation"] = masked_apply(hill.hill_separation, a1, a2, m1, m2, m_star)
    out["hill_margin"] = masked_apply(hill.gladman_margin, a1, a2, m1, m2, m_star, e1, e2)
    return out
