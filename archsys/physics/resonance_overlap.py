"""Resonance widths, nearness to resonance and the resonance-overlap zone of adjacent pairs.

Published coefficients carry their source beside them (Deck, Payne & Holman 2013; Wisdom 1980);
period ratios and the resonance table are :mod:`archsys.physics.spacing`.
"""
from __future__ import annotations

import numpy as np

from .spacing import _check_ratio, _table

__all__ = ["DECK2013_COEFF", "WISDOM1980_COEFF", "RES_WIDTH_COEFF", "NEAR_WINDOW_MULTIPLE",
           "resonance_width", "near_resonance", "overlap_zone", "in_overlap_zone"]

#: Deck, Payne & Holman 2013 first-order overlap coefficient:
#: overlap for 1 - alpha < 1.46 eps^(2/7) (coefficient from memory).
DECK2013_COEFF = 1.46
#: Wisdom 1980 test-particle overlap coefficient: Delta a / a < 1.3 mu^(2/7)
#: (from memory; Duncan, Quinn & Tremaine 1989 refit 1.5).
WISDOM1980_COEFF = 1.3
#: Coefficient W of the first-order half-width W j^(1/3) mu^(2/3) (fractional,
#: in period ratio).  Derived, not quoted: with this W, the half-widths of
#: neighbouring first-order resonances j:(j-1) and (j+1):j add up to their
#: separation ~1/j^2 exactly at the Deck et al. (2013) overlap boundary,
#: ratio - 1 = (3/2) * 1.46 eps^(2/7), in the large-j limit.  W = 3.11.
RES_WIDTH_COEFF = 0.5 * (1.5 * DECK2013_COEFF) ** (7.0 / 3.0)
#: A pair is "near" resonance when |Delta| is below this many half-widths.
#: 3 is a choice: it reaches the observed Kepler near-resonant peak 1-2 %
#: wide of first-order resonances (Fabrycky et al. 2014; Lithwick & Wu 2012)
#: for Neptune-mass pairs around a Sun-like star (window ~2.6 % at 2:1 and
#: ~3 % at 3:2 for mu = 1e-4), but only ~0.4 % for Earth-mass pairs.
NEAR_WINDOW_MULTIPLE = 3.0


def resonance_width(j, k, mu_sum, e=0.0):
    """Order-of-magnitude fractional half-width of a resonance, in period ratio.

    Parameters
    ----------
    j, k : int or array_like of int
        Resonance ``j:(j-k)`` of order ``k``.
    mu_sum : array_like
        ``(m1 + m2) / M_star`` of the pair.
    e : array_like, optional
        A representative eccentricity of the pair (e.g. the larger one or an
        rms value); default 0 (circular).

    Returns
    -------
    delta_w : ndarray
        Fractional half-width ``|ratio / ratio_res - 1|`` of the resonance.

    Notes
    -----
    First order (k = 1), with ``W =`` :data:`RES_WIDTH_COEFF` ``= 3.11``:

    .. math:: \\delta_w = W \\max\\left[ (\\mu^2 j)^{1/3}, (\\mu j e)^{1/2} \\right]

    The first branch is the near-circular width ``W j^{1/3} mu^{2/3}``, where
    the pendulum picture fails and the width saturates; the second is the
    pendulum width ``sqrt(mu e)`` with the first-order disturbing-function
    coefficient taken ~ j (Murray & Dermott 1999, ch. 8).  The two branches
    meet at ``e = (mu / j)^(1/3)``.  The ``j^(1/3)`` factor is what makes
    first-order widths overlap at ``ratio - 1 ~ mu^(2/7)`` (Wisdom 1980;
    Deck et al. 2013), and W is fixed by matching that boundary (see
    :data:`RES_WIDTH_COEFF`).

    Orders k >= 2: the standard pendulum scaling ``W sqrt(mu e^k)``, with the
    same W and no j dependence.  This is an order-of-magnitude estimate
    (common practice); the true coefficients depend on j and k through the
    disturbing function.  It vanishes for circular orbits.

    References
    ----------
    .. [1] Murray, C. D. & Dermott, S. F. 1999, Solar System Dynamics, ch. 8
    .. [2] Deck, K. M., Payne, M. & Holman, M. J. 2013, ApJ 774, 129
    .. [3] Wisdom, J. 1980, AJ 85, 1122
    """
    j = np.asarray(j, dtype=float)
    k = np.asarray(k, dtype=float)
    mu = np.asarray(mu_sum, dtype=float)
    e = np.asarray(e, dtype=float)
    if np.any(mu < 0) or np.any(e < 0) or np.any(e >= 1):
        raise ValueError("need mu_sum >= 0 and eccentricity in [0, 1)")
    first = RES_WIDTH_COEFF * np.maximum(np.cbrt(mu**2 * j), np.sqrt(mu * j * e))
    higher = RES_WIDTH_COEFF * np.sqrt(mu * e**k)
    return np.where(k == 1, first, higher)


def near_resonance(ratio, mu_sum, e_pair=0.0, max_order=1,
                   window_multiple=NEAR_WINDOW_MULTIPLE):
    """Flag period ratios near (not necessarily in) a mean-motion resonance.

    Parameters
    ----------
    ratio : array_like, shape (...)
        Period ratios ``>= 1``.
    mu_sum : array_like, broadcastable to ``ratio``
        ``(m1 + m2) / M_star`` of each pair.
    e_pair : array_like, optional
        Representative eccentricity of each pair, see :func:`resonance_width`.
    max_order : int
        Consider resonances of order ``k <= max_order`` (default: first order).
    window_multiple : float
        Window in units of the half-width (default :data:`NEAR_WINDOW_MULTIPLE`).

    Returns
    -------
    flag : ndarray of bool, shape (...)
        True where ``|Delta| < window_multiple * resonance_width(j, k, mu, e)``
        for any tabulated resonance with ``k <= max_order``.

    Notes
    -----
    The flag means *near* resonance.  The observed Kepler pairs piled up 1-2 %
    wide of 2:1 and 3:2 are mostly wider than the libration width, so the
    window is a named multiple (3) of the width scale rather than the width
    itself.  Libration (being *in* resonance) needs the resonant angles and
    cannot be decided from the period ratio alone.  With e = 0, second- and
    third-order resonances have zero width and are never flagged.
    """
    r = _check_ratio(ratio)
    r, mu, e = np.broadcast_arrays(r, np.asarray(mu_sum, float), np.asarray(e_pair, float))
    flag = np.zeros(r.shape, dtype=bool)
    for j, k, ratio_res in _table(max_order):  # ~10-20 table rows, not draws
        window = window_multiple * resonance_width(j, k, mu, e)
        flag |= np.abs(r / ratio_res - 1.0) < window
    return flag


def overlap_zone(mu1, mu2, criterion="deck2013"):
    """Critical period ratio below which first-order resonances overlap.

    Parameters
    ----------
    mu1, mu2 : array_like
        Planet-to-star mass ratios of the pair.
    criterion : {"deck2013", "wisdom1980"}
        ``"deck2013"``: two massive planets on near-circular orbits,
        ``1 - alpha < 1.46 eps^(2/7)``, ``eps = mu1 + mu2``.
        ``"wisdom1980"``: test-particle criterion ``Delta a / a < 1.3 mu^(2/7)``,
        applied with ``mu = mu1 + mu2`` (the perturber's mass ratio when the
        other body is a test particle).

    Returns
    -------
    ratio_crit : ndarray
        ``P_outer / P_inner = alpha_crit^(-3/2)``; pairs closer than this are
        in the overlap (chaotic) zone.

    Notes
    -----
    Wisdom's ``Delta a / a`` is taken as ``(a2 - a1) / a2 = 1 - alpha`` so that
    both criteria share one form; other readings differ at second order in
    ``Delta a / a``, below the accuracy of either criterion.  Both coefficients
    are from memory.  Deck et al. (2013) state that at lowest order the
    boundary does not depend on ``mu1 / mu2``.

    References
    ----------
    .. [1] Wisdom, J. 1980, AJ 85, 1122
    .. [2] Deck, K. M., Payne, M. & Holman, M. J. 2013, ApJ 774, 129
    """
    coeffs = {"deck2013": DECK2013_COEFF, "wisdom1980": WISDOM1980_COEFF}
    if criterion not in coeffs:
        raise ValueError(f"criterion must be one of {sorted(coeffs)}; got {criterion!r}")
    eps = np.asarray(mu1, dtype=float) + np.asarray(mu2, dtype=float)
    if np.any(eps < 0):
        raise ValueError("mass ratios must be non-negative")
    one_minus_alpha = coeffs[criterion] * eps ** (2.0 / 7.0)
    alpha = np.clip(1.0 - one_minus_alpha, 0.0, None)
    with np.errstate(divide="ignore"):
        return alpha ** -1.5


def in_overlap_zone(ratio, mu1, mu2, criterion="deck2013"):
    """True where a period ratio lies inside the first-order overlap zone."""
    return _check_ratio(ratio) < overlap_zone(mu1, mu2, criterion)
