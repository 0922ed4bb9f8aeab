"""Gap complexity (Gilbert & Fabrycky 2020) and spacing uniformity of a system's period sequence.
"""
from __future__ import annotations

from functools import lru_cache

import numpy as np

from .spacing import period_ratios

__all__ = ["c_max", "lmc_maximiser", "gap_complexity", "spacing_uniformity"]


def _sorted_periods(periods):
    P = np.asarray(periods, dtype=float)
    if P.ndim == 0:
        raise ValueError("periods must have a planet axis (last axis); got a scalar")
    return np.sort(P, axis=-1)


def _lmc(p):
    """LMC complexity H * D of distributions p along the last axis (natural log)."""
    n = p.shape[-1]
    plogp = np.where(p > 0, p * np.log(np.where(p > 0, p, 1.0)), 0.0)
    H = -plogp.sum(axis=-1)  # Shannon entropy
    D = ((p - 1.0 / n) ** 2).sum(axis=-1)  # disequilibrium
    return H * D


def _family(x, n):
    """Distributions (x, (1-x)/(n-1), ..., (1-x)/(n-1)), shape (len(x), n)."""
    x = np.atleast_1d(x)[:, None]
    return np.concatenate([x, np.repeat((1.0 - x) / (n - 1), n - 1, axis=1)], axis=1)


@lru_cache(maxsize=None)
def _lmc_max(n):
    # One component x, the other n-1 equal: the maximum of the LMC complexity
    # lies on this family (Anteneodo & Plastino 1996, from memory; checked in
    # the tests against unrestricted maximisation).  Dense grid, then
    # golden-section refinement of the best bracket.
    x = np.linspace(0.0, 1.0, 20001)
    i = int(np.argmax(_lmc(_family(x, n))))
    lo, hi = x[max(i - 1, 0)], x[min(i + 1, x.size - 1)]
    g = (np.sqrt(5.0) - 1.0) / 2.0
    for _ in range(80):
        a, b = hi - g * (hi - lo), lo + g * (hi - lo)
        if _lmc(_family(a, n))[0] > _lmc(_family(b, n))[0]:
            hi = b
        else:
            lo = a
    xbest = 0.5 * (lo + hi)
    return float(_lmc(_family(xbest, n))[0]), xbest


def c_max(n):
    """Maximum LMC complexity C_max(n) over distributions of n gaps (cached).

    Computed numerically; values for n = 2..10 are 0.1060, 0.2123, 0.2906,
    0.3503, 0.3977, 0.4366, 0.4693, 0.4974, 0.5220.  Gilbert & Fabrycky (2020)
    tabulate 0.106 ... 0.497 (agreeing to 1e-3, recalled from memory) and 0.520
    for n = 10, which this computation does not reproduce (0.522).
    """
    n = int(n)
    if n < 2:
        raise ValueError(f"c_max needs n >= 2 gaps; got {n}")
    return _lmc_max(n)[0]


def lmc_maximiser(n):
    """Normalised gap distribution p* of n gaps with maximal complexity.

    One large gap first, then n - 1 equal small gaps (any order gives the same
    complexity).
    """
    if int(n) < 2:
        raise ValueError(f"lmc_maximiser needs n >= 2 gaps; got {n}")
    x = _lmc_max(int(n))[1]
    p = _family(x, int(n))[0]
    return p if x >= 1.0 / n else p[::-1]


def gap_complexity(periods):
    """Gap complexity C of each system (Gilbert & Fabrycky 2020).

    Parameters
    ----------
    periods : array_like, shape (..., n_planets)
        Positive periods; sorted internally along the last axis.

    Returns
    -------
    C : ndarray, shape (...)
        In [0, 1]; 0 for equal spacing in log P, 1 for the maximally complex
        spacing.  NaN when ``n_planets < 3`` (a single gap carries no
        information about the pattern of gaps).

    Notes
    -----
    With ``n = N - 1`` gaps,

    .. math:: p_i^* = \\frac{\\log(P_{i+1}/P_i)}{\\log(P_{max}/P_{min})}, \\qquad
              C = -K \\left(\\sum_i p_i^* \\log p_i^*\\right)
                  \\left(\\sum_i (p_i^* - 1/n)^2\\right),

    natural logarithms, ``K = 1 / C_max(n)`` from :func:`c_max`.  Invariant
    under scaling all periods.

    References
    ----------
    .. [1] Gilbert, G. J. & Fabrycky, D. C. 2020, AJ 159, 281
    .. [2] Lopez-Ruiz, R., Mancini, H. L. & Calbet, X. 1995, Phys. Lett. A 209, 321
    """
    P = _sorted_periods(periods)  # (..., N)
    N = P.shape[-1]
    if N < 3:
        return np.full(P.shape[:-1], np.nan)
    logr = np.log(period_ratios(P))  # (..., n)
    p_star = logr / logr.sum(axis=-1, keepdims=True)  # sum of logs = log(Pmax/Pmin)
    return _lmc(p_star) / c_max(N - 1)


def spacing_uniformity(periods):
    """Coefficient of variation of the log period ratios within each system.

    Parameters
    ----------
    periods : array_like, shape (..., n_planets)
        Positive periods; sorted internally along the last axis.

    Returns
    -------
    cv : ndarray, shape (...)
        ``std(log r) / mean(log r)`` over the adjacent pairs (population
        standard deviation, ddof = 0).  0 for equal period ratios ("peas in a
        pod"-like regular spacing), larger for irregular spacing; NaN for
        fewer than 2 pairs (3 planets).  Invariant under scaling all periods.

    References
    ----------
    .. [1] Weiss, L. M. et al. 2018, AJ 155, 48 (correlated adjacent period ratios)
    """
    P = _sorted_periods(periods)  # (..., N)
    if P.shape[-1] < 3:
        return np.full(P.shape[:-1], np.nan)
    logr = np.log(period_ratios(P))  # (..., n_pairs)
    return logr.std(axis=-1) / logr.mean(axis=-1)
