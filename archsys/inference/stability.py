"""The stability criterion used both as a prior (``require_stable``) and in the report.

One definition, so that the two can never disagree: a draw is stable when

* every adjacent pair whose two masses are known satisfies the eccentric Hill
  criterion of Gladman (1993) (``hill.gladman_margin > 0``), and
* when every planet's mass is known, the system is AMD-stable (Laskar & Petit
  2017, with the MMR-overlap correction of Petit, Laskar & Boue 2017): every
  pair's beta < 1 and the innermost planet's beta_* < 1, with the inclinations
  measured from the invariable plane of each draw (its total angular momentum,
  Laskar & Petit 2017) where every orbit's inclination and node are known,
  else the tilts from the reference plane (``psi``), else zero (coplanar); see
  :func:`amd_inclinations`.

Masses are the true masses where known, else m sin i (``effective_mass``), as in
the report's scores.  Stability verdicts are statistical, not guarantees.
"""
from __future__ import annotations

from enum import Enum

import numpy as np

from ..physics import amd, hill, invariable

__all__ = ["effective_mass", "stable_draws", "stability_inputs", "amd_inclinations", "InclinationBasis"]


class InclinationBasis(str, Enum):
    """What the AMD inclinations are measured from (recorded in the report)."""

    INVARIABLE = "invariable_plane"      # total angular momentum of each draw
    REFERENCE = "reference_plane"        # tilts psi from the fitted reference plane
    COPLANAR = "coplanar"                # no orientation information: zero inclinations



def effective_mass(draws):
    """True mass where known, else m sin i [M_sun], (n, n_planets)."""
    m = np.asarray(draws["mass"], dtype=float)
    return np.where(np.isfinite(m), m, np.asarray(draws["msini"], dtype=float))


def amd_inclinations(draws, m=None):
    """(inclinations (n, n_planets) for the AMD, :class:`InclinationBasis`).

    Inclinations from the invariable plane of each draw
    (:func:`archsys.physics.invariable.invariable_inclinations`) where every
    planet's sky inclination and node are finite; draws without them get the
    tilts from the reference plane (``psi``) where the posterior has those, else
    zero.  The basis returned is the one used by most draws.
    """
    e = np.asarray(draws["ecc"], dtype=float)
    m = effective_mass(draws) if m is None else m
    psi = draws.get("psi")
    fallback = np.zeros_like(e) if psi is None else np.asarray(psi, dtype=float)
    fallback = np.where(np.isfinite(fallback), fallback, 0.0)
    inc, node = draws.get("inc"), draws.get("node")
    if inc is None or node is None:
        return fallback, InclinationBasis.COPLANAR if psi is None else InclinationBasis.REFERENCE
    inc = np.asarray(inc, dtype=float)
    node = np.asarray(node, dtype=float)
    a = np.asarray(draws["a"], dtype=float)
    ok = np.all(np.isfinite(inc) & np.isfinite(node) & np.isfinite(m) & (m > 0) & np.isfinite(a)
                & np.isfinite(e) & (e < 1), axis=1)
    out = fallback.copy()
    if ok.any():
        out[ok] = invariable.invariable_inclinations(m[ok], a[ok], e[ok], inc[ok], node[ok],
                                                     np.asarray(draws["m_star"], dtype=float)[ok])
    if ok.mean() >= 0.5:
        return out, InclinationBasis.INVARIABLE
    return out, InclinationBasis.COPLANAR if psi is None else InclinationBasis.REFERENCE


def stability_inputs(draws):
    """(m, a, e, inclinations from the invariable plane, m_star) used by the criterion."""
    m = effective_mass(draws)
    e = np.asarray(draws["ecc"], dtype=float)
    inc, _ = amd_inclinations(draws, m)
    return m, np.asarray(draws["a"], dtype=float), e, inc, np.asarray(draws["m_star"], dtype=float)


def stable_draws(draws):
    """Boolean (n,): the draw passes the Hill and AMD criteria (see module docstring).

    Draws with crossing or unordered orbits are unstable.  Returns also the
    criteria that could be applied: (stable, {"hill_pairs": k, "amd": bool}).
    """
    m, a, e, inc, ms = stability_inputs(draws)
    n, npl = a.shape
    stable = np.ones(n, dtype=bool)
    if npl < 2:
        return stable, {"hill_pairs": 0, "amd": False}
    ordered = np.all(np.diff(a, axis=1) > 0, axis=1) & np.all(np.isfinite(a), axis=1)
    stable &= ordered
    known = np.isfinite(m) & (m > 0)
    pair_known = known[:, :-1] & known[:, 1:]
    rows = ordered & pair_known.any(axis=1)
    n_hill = int(np.sum(pair_known.all(axis=0)))
    if rows.any():
        mm = np.where(known, m, 1e-12)[rows]
        with np.errstate(all="ignore"):
            margin = hill.gladman_margin(a[rows, :-1], a[rows, 1:], mm[:, :-1], mm[:, 1:], ms[rows, None],
                                         np.clip(e[rows, :-1], 0.0, 1 - 1e-12), np.clip(e[rows, 1:], 0.0, 1 - 1e-12))
        ok = np.all(np.where(pair_known[rows], margin > 0, True), axis=1)
        stable[rows] &= ok
    all_known = ordered & known.all(axis=1)
    use_amd = bool(all_known.any())
    if use_amd:
        beta, beta_star = amd.amd_beta(m[all_known], a[all_known], e[all_known], inc[all_known], ms[all_known])
        stable[all_known] &= np.all(beta < 1.0, axis=1) & (beta_star < 1.0)
    return stable, {"hill_pairs": n_hill, "amd": use_amd}
