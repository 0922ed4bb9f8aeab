"""Per-pair scores over posterior draws.

For each adjacent pair and each draw: period ratio, nearest mean-motion
resonance and fractional offset, the near-resonance flag (width scaling with
the planets' masses), first-order resonance overlap (Deck, Payne & Holman
2013), separation in mutual Hill radii, the eccentric Hill criterion of
Gladman (1993), AMD stability (Laskar & Petit 2017, with the MMR-overlap
correction of Petit, Laskar & Boue 2017) and the mutual inclination.
"""
from __future__ import annotations

import numpy as np

from ..physics import amd, flatness, hill, spacing
from .common import adjacent, effective_mass, masked_apply

__all__ = ["pair_arrays", "amd_arrays"]


def _near_res(ratio, mu, e):
    return spacing.near_resonance(ratio, mu, e, max_order=1)


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
    ratio = P2 / P1
    out = {"period_ratio": ratio}
    # draws whose periods cross (ratio < 1) have no resonance; keep them NaN, not an error
    ordered = ratio >= 1.0
    j, k, off = spacing.nearest_mmr(np.where(ordered, ratio, 1.0))
    off = np.where(ordered, off, np.nan)
    out["mmr_j"], out["mmr_k"], out["mmr_offset"] = j, k, off
    mu = (m1 + m2) / m_star
    out["mu"] = mu
    e_pair = np.maximum(e1, e2)
    r_ok = np.where(ordered, ratio, np.nan)
    out["near_resonance"] = masked_apply(_near_res, r_ok, mu, e_pair, fill=np.nan)
    out["overlap"] = masked_apply(lambda r, x, y: spacing.in_overlap_zone(r, x, y), r_ok, m1 / m_star,
                                  m2 / m_star, fill=np.nan)
    out["hill_separation"] = masked_apply(hill.hill_separation, a1, a2, m1, m2, m_star)
    out["hill_margin"] = masked_apply(hill.gladman_margin, a1, a2, m1, m2, m_star, e1, e2)
    inc, node = post["inc"], post["node"]
    if np.isfinite(node).all() and np.isfinite(inc).all():
        out["mutual_inclination"] = flatness.adjacent_mutual_inclinations(inc, node)
    elif np.isfinite(inc).all():
        lo, pairs = flatness.sky_inclination_spread(inc, reflection_ambiguous=True)
        adj = [i for i, (x, y) in enumerate(pairs) if y == x + 1]
        out["mutual_inclination_lower_bound"] = lo[:, adj]
    return out


def amd_arrays(post):
    """AMD coefficients beta per draw: (beta (n, n_pairs), beta_star (n,)), or None.

    Inclinations are the tilts from the system reference plane (MCMC) or zero
    (coplanar) when the posterior has no orientation model.
    """
    m = effective_mass(post)
    a, e = post["a"], post["ecc"]
    psi = post.get("psi")
    inc = psi if psi is not None else np.zeros_like(e)
    ok = np.all(np.isfinite(m) & (m > 0), axis=1) & np.all(np.diff(a, axis=1) > 0, axis=1)
    if not ok.any():
        return None
    n, npair = a.shape[0], a.shape[1] - 1
    beta = np.full((n, npair), np.nan)
    beta_star = np.full(n, np.nan)
    b, bs = amd.amd_beta(m[ok], a[ok], e[ok], inc[ok], post["m_star"][ok])
    beta[ok], beta_star[ok] = b, bs
    return beta, beta_star
