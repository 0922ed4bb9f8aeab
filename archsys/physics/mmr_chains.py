"""Resonant chains of adjacent near-resonant pairs, and Laplace-type relations between period triples.
"""
from __future__ import annotations

from math import gcd

import numpy as np

__all__ = ["resonant_chains", "chain_length_max", "LAPLACE_MAX_COEFF", "LAPLACE_TOL", "laplace_relations"]


def resonant_chains(flags, min_pairs=2):
    """Runs of consecutive near-resonant adjacent pairs in one system.

    Parameters
    ----------
    flags : array_like of bool, shape (n_pairs,)
        Near-resonance flag of each adjacent pair of one system (one draw).
    min_pairs : int
        Minimum run length counted as a chain (default 2, i.e. >= 3 planets).

    Returns
    -------
    chains : list of (start, stop)
        Pair-index ranges ``range(start, stop)``; the chain links planets
        ``start`` to ``stop`` (inclusive).
    """
    f = np.asarray(flags, dtype=bool)
    if f.ndim != 1:
        raise ValueError(f"resonant_chains takes one system, shape (n_pairs,); got {f.shape}; "
                         "use chain_length_max for many draws")
    edges = np.diff(np.concatenate([[0], f.astype(np.int8), [0]]))
    starts = np.flatnonzero(edges == 1)
    stops = np.flatnonzero(edges == -1)
    return [(int(a), int(b)) for a, b in zip(starts, stops) if b - a >= min_pairs]


def chain_length_max(flags):
    """Longest run of consecutive True along the last (pair) axis.

    Parameters
    ----------
    flags : array_like of bool, shape (..., n_pairs)

    Returns
    -------
    length : ndarray of int, shape (...)
        Number of pairs in the longest run (0 if none); a run of L pairs links
        L + 1 planets.  A chain in the sense of :func:`resonant_chains` has
        ``length >= 2``.
    """
    f = np.asarray(flags, dtype=bool)  # (..., n_pairs)
    run = np.zeros(f.shape[:-1], dtype=np.int64)
    best = np.zeros(f.shape[:-1], dtype=np.int64)
    for i in range(f.shape[-1]):  # loop over the few pairs, vectorised over draws
        run = np.where(f[..., i], run + 1, 0)
        best = np.maximum(best, run)
    return best


#: Largest integer coefficient searched for three-body relations p/P1 - (p+q)/P2 + q/P3 ~ 0.
LAPLACE_MAX_COEFF = 4
#: A three-body relation is reported when its residual frequency is below this fraction of the
#: middle planet's mean motion (a choice of this tool: 0.3 % of n2 holds the relations of the known
#: resonant chains, whose two-body offsets are ~1 %, and rejects most chance alignments).
LAPLACE_TOL = 3e-3


def laplace_relations(periods, max_coeff=LAPLACE_MAX_COEFF, tol=LAPLACE_TOL):
    """Three-body relations ``p/P1 - (p+q)/P2 + q/P3 ~ 0`` of consecutive triples in one system.

    Parameters
    ----------
    periods : array_like, shape (n_planets,)
        Periods of one system (e.g. posterior medians), sorted.
    max_coeff : int
        Largest p and q searched (1..max_coeff).
    tol : float
        Largest ``|p n1 - (p+q) n2 + q n3| / n2`` reported (n = 1/P).

    Returns
    -------
    list of dict
        One per triple that has a relation: ``planets`` (indices i, i+1, i+2), ``p``, ``q``,
        ``residual`` (fractional, signed) and ``coefficients`` ``(p, -(p+q), q)`` of the
        three-body angle ``p lam1 - (p+q) lam2 + q lam3``.  The smallest coefficients that
        satisfy the tolerance are taken (lowest ``p + q``, then smallest residual).

    Notes
    -----
    Such relations (e.g. the Laplace relation of the Galilean satellites, n1 - 3 n2 + 2 n3 = 0)
    make a slow three-body angle whose libration marks a resonant chain (Murray & Dermott 1999,
    ch. 8); whether it librates is read from the N-body integration.
    """
    P = np.asarray(periods, dtype=float)
    out = []
    for i in range(len(P) - 2):
        n1, n2, n3 = 1.0 / P[i], 1.0 / P[i + 1], 1.0 / P[i + 2]
        best = None
        for s in range(2, 2 * max_coeff + 1):
            for p in range(1, max_coeff + 1):
                q = s - p
                if not 1 <= q <= max_coeff or gcd(p, q) != 1:
                    continue
                r = (p * n1 - (p + q) * n2 + q * n3) / n2
                if np.isfinite(r) and abs(r) < tol and (best is None or abs(r) < abs(best[2])):
                    best = (p, q, float(r))
            if best is not None:
                break
        if best is not None:
            p, q, r = best
            out.append({"planets": (i, i + 1, i + 2), "p": p, "q": q, "residual": r,
                        "coefficients": (p, -(p + q), q)})
    return out
