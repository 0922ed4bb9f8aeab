"""Flatness of planetary systems: mutual inclinations between orbits.

Float kernels; angles in radians.  Orbits are given by the inclination ``i``
and longitude of the ascending node ``Omega`` in one common reference frame
(e.g. the sky plane, an ecliptic, or the system's invariable plane).  Arrays
broadcast over leading draw axes; the last axis runs over planets, e.g.
``inc`` shaped ``(n_draws, n_planets)``.
"""
import numpy as np

__all__ = ["mutual_inclination", "pairwise_mutual_inclinations", "adjacent_mutual_inclinations",
           "max_mutual_inclination", "fraction_within", "sky_inclination_spread"]


def _hav(x):
    """Haversine sin^2(x / 2)."""
    return np.sin(0.5 * x) ** 2


def mutual_inclination(i1, O1, i2, O2):
    """Angle between two orbit normals (mutual inclination), radians.

    Parameters
    ----------
    i1, O1, i2, O2 : array_like, broadcastable
        Inclinations and longitudes of the ascending node of the two orbits
        in the same reference frame [rad].

    Returns
    -------
    psi : ndarray
        Mutual inclination in [0, pi].

    Notes
    -----
    Spherical law of cosines,

    .. math:: \\cos\\psi = \\cos i_1 \\cos i_2 + \\sin i_1 \\sin i_2 \\cos(\\Omega_1 - \\Omega_2),

    evaluated in its algebraically identical haversine form
    ``hav psi = hav(i1 - i2) + sin i1 sin i2 hav(Omega1 - Omega2)``, which
    keeps full precision for the sub-degree angles typical of compact
    systems (``arccos`` near 1 loses half the digits).  The haversine is
    clipped to [0, 1] against rounding.
    """
    i1, O1, i2, O2 = (np.asarray(x, dtype=float) for x in (i1, O1, i2, O2))
    h = _hav(i1 - i2) + np.sin(i1) * np.sin(i2) * _hav(O1 - O2)
    return 2.0 * np.arcsin(np.sqrt(np.clip(h, 0.0, 1.0)))


def _pairs(n, adjacent):
    if adjacent:
        first = np.arange(n - 1)
        return np.stack([first, first + 1], axis=1)  # (n - 1, 2)
    iu, ju = np.triu_indices(n, k=1)
    return np.stack([iu, ju], axis=1)  # (n (n - 1) / 2, 2)


def pairwise_mutual_inclinations(inc, node):
    """Mutual inclinations of all pairs ``i < j`` of planets.

    Parameters
    ----------
    inc, node : array_like, shape (..., n_planets)
        Inclinations and ascending-node longitudes [rad].

    Returns
    -------
    psi : ndarray, shape (..., n_pairs_all)
        ``n_pairs_all = n (n - 1) / 2``, ordered (0,1), (0,2), ..., (1,2), ...
    pairs : ndarray of int, shape (n_pairs_all, 2)
        Planet indices ``(i, j)`` of each column of ``psi``.
    """
    inc, node = np.broadcast_arrays(np.asarray(inc, float), np.asarray(node, float))
    pairs = _pairs(inc.shape[-1], adjacent=False)
    psi = mutual_inclination(inc[..., pairs[:, 0]], node[..., pairs[:, 0]],
                             inc[..., pairs[:, 1]], node[..., pairs[:, 1]])
    return psi, pairs


def adjacent_mutual_inclinations(inc, node):
    """Mutual inclinations of neighbouring planets (in the given order).

    Parameters
    ----------
    inc, node : array_like, shape (..., n_planets)
        Sorted by period, so neighbours are adjacent pairs.

    Returns
    -------
    psi : ndarray, shape (..., n_planets - 1)
    """
    inc, node = np.broadcast_arrays(np.asarray(inc, float), np.asarray(node, float))
    return mutual_inclination(inc[..., :-1], node[..., :-1], inc[..., 1:], node[..., 1:])


def max_mutual_inclination(inc, node):
    """Largest mutual inclination over all planet pairs of each system.

    Returns
    -------
    psi_max : ndarray, shape (...)
        NaN for systems with fewer than two planets.
    """
    psi, _ = pairwise_mutual_inclinations(inc, node)
    if psi.shape[-1] == 0:
        return np.full(psi.shape[:-1], np.nan)
    return psi.max(axis=-1)


def fraction_within(psi_ref, limit):
    """Whether every planet lies within ``limit`` of the reference plane.

    Parameters
    ----------
    psi_ref : array_like, shape (..., n_planets)
        Inclination of each orbit to the system's reference plane (e.g. the
        invariable plane) [rad].
    limit : float or array_like
        Angle [rad], e.g. ``np.radians(3)`` for the Fang & Margot (2012)
        "within 3 degrees of a common plane" statistic.

    Returns
    -------
    flag : ndarray of bool, shape (...)
        True where all ``|psi_ref| <= limit``.  The probability is the mean
        of ``flag`` over draws, which callers compute.
    """
    return np.all(np.abs(np.asarray(psi_ref, float)) <= limit, axis=-1)


def sky_inclination_spread(i_sky, reflection_ambiguous=False):
    """Lower bounds on the mutual inclinations from sky inclinations alone.

    Parameters
    ----------
    i_sky : array_like, shape (..., n_planets)
        Inclinations to the sky plane [rad], in [0, pi].
    reflection_ambiguous : bool
        If True, each ``i`` is only known up to ``i -> pi - i`` (transits
        measure ``|cos i|``), and the bound is
        ``min(|i_a - i_b|, |i_a + i_b - pi|)``.

    Returns
    -------
    psi_min : ndarray, shape (..., n_pairs_all)
        Lower bound on ``psi`` for each pair ``a < b``.
    pairs : ndarray of int, shape (n_pairs_all, 2)

    Notes
    -----
    Without the node difference, ``psi >= |i_a - i_b|`` for every
    ``Delta Omega`` (the law of cosines is smallest at ``Delta Omega = 0``),
    with equality for aligned nodes; ``psi <= i_a + i_b`` at anti-aligned
    nodes.  Spherical trigonometry (common practice).
    """
    i = np.asarray(i_sky, float)
    pairs = _pairs(i.shape[-1], adjacent=False)
    ia, ib = i[..., pairs[:, 0]], i[..., pairs[:, 1]]
    bound = np.abs(ia - ib)
    if reflection_ambiguous:
        bound = np.minimum(bound, np.abs(ia + ib - np.pi))
    return bound, pairs
