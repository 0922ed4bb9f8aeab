"""Geometry of several planets transiting one star: which of a system's orbits does an observer see?

Pure vectorised numpy over systems x planets (arrays shaped ``(n_systems,
n_planets)``); internal units: day, M_sun, R_sun, au, rad.

Transit condition (circular orbits)
-----------------------------------
A planet whose orbit normal is the unit vector ``n`` transits for an observer
in the unit direction ``o`` when the star's disc and the planet's disc overlap
at conjunction, i.e. when the projected distance ``a |o . n|`` is below
``R* + Rp``:

.. math:: |\\cos i_\\mathrm{sky}| = |\\hat o \\cdot \\hat n| < \\epsilon
          \\equiv \\frac{R_\\star + R_p}{a} = \\frac{R_\\star}{a}\\left(1 + \\frac{R_p}{R_\\star}\\right)

(grazing transits included; Winn 2010 eq. 9 with e = 0).  For isotropic
observers ``o . n`` is uniform on [-1, 1], so the probability of one planet
is exactly ``epsilon``.  Eccentric orbits are not modelled (assumption
stated in the outputs: circular orbits).

Orbit normals are tilted from a reference plane (normal ``z``) by ``psi`` at
node angle ``Omega``: ``n = (sin psi cos Omega, sin psi sin Omega, cos psi)``.
The observer's latitude above the reference plane is ``beta`` and, since the
nodes are uniform, its longitude can be fixed to 0 without loss of
generality: ``o = (cos beta, 0, sin beta)``.

Observer importance sampling
----------------------------
A planet tilted by ``psi`` can transit only if ``|beta| < psi + arcsin
epsilon`` (the angle between ``o`` and ``n`` differs from the angle between
``o`` and ``z`` by at most ``psi``).  So for each system with ``B = min(pi/2,
max_j(psi_j + arcsin epsilon_j))`` no observer with ``|beta| > B`` sees any
transit.  Drawing ``sin beta`` uniformly in ``[-sin B, sin B]`` and giving the
system the weight ``sin B`` (the isotropic probability of that band) is an
unbiased, much less noisy estimate of every ``P(k transits)`` with ``k >= 1``
than isotropic observers, most of whom see nothing.

Minimum spacing
---------------
Adjacent planets (masses ``m1``, ``m2``) separated by ``Delta`` mutual Hill
radii ``R_H = [(m1 + m2)/(3 M*)]^(1/3) (a1 + a2)/2`` (Gladman 1993) have
``a2/a1 = (1 + Delta x/2)/(1 - Delta x/2)`` with ``x = [(m1 + m2)/(3
M*)]^(1/3)``; :func:`min_period_ratio` returns the period ratio of that
spacing.

References
----------
.. [1] Winn, J. N. 2010, "Transits and Occultations", in *Exoplanets*, ed. S. Seager (eq. 9).
.. [2] Gladman, B. 1993, Icarus 106, 247 (mutual Hill radius).
"""
from __future__ import annotations

import numpy as np

from .constants import GM_SUN, REARTH_AU, RSUN_AU, TWO_PI

__all__ = ["transit_halfwidth", "semi_major_axis_au", "min_period_ratio", "enforce_spacing",
           "band_halfwidth", "cos_sky_inclination", "transit_mask"]


def semi_major_axis_au(period_day, m_star_msun):
    """Kepler III (planet mass neglected): ``a = [GM* P^2 / 4 pi^2]^(1/3)`` [au]."""
    P = np.asarray(period_day, dtype=float)
    return np.cbrt(GM_SUN * np.asarray(m_star_msun, dtype=float) * P * P / (TWO_PI * TWO_PI))


def transit_halfwidth(a_au, r_star_rsun, r_planet_rearth=0.0):
    """``epsilon = (R* + Rp) / a``: the largest ``|cos i_sky|`` that still gives a (grazing) transit."""
    r_p = np.nan_to_num(np.asarray(r_planet_rearth, dtype=float), nan=0.0)
    return np.minimum((np.asarray(r_star_rsun, dtype=float) * RSUN_AU + r_p * REARTH_AU)
                      / np.asarray(a_au, dtype=float), 1.0)


def min_period_ratio(m1_msun, m2_msun, m_star_msun, delta_hill):
    """Period ratio of two planets ``delta_hill`` mutual Hill radii apart (Gladman 1993)."""
    x = np.cbrt((np.asarray(m1_msun, dtype=float) + np.asarray(m2_msun, dtype=float))
                / (3.0 * np.asarray(m_star_msun, dtype=float)))
    h = np.minimum(0.5 * float(delta_hill) * x, 0.95)      # h >= 1 has no solution; a giant pair is capped
    return ((1.0 + h) / (1.0 - h)) ** 1.5


def enforce_spacing(period_day, mass_msun, m_star_msun, delta_hill):
    """Sort each system's planets by period and push outer planets out to ``delta_hill`` spacing.

    Parameters
    ----------
    period_day, mass_msun : arrays (n_systems, n_planets)
    m_star_msun : array (n_systems,)

    Returns
    -------
    period_day, order : arrays (n_systems, n_planets)
        Spaced periods (increasing along axis 1) and the sorting permutation
        to apply to every other per-planet array.

    Notes
    -----
    The loop runs over planet slots (at most the multiplicity), each step
    vectorised over all systems: ``P_j <- max(P_j, P_{j-1} * r_min)``.
    """
    order = np.argsort(period_day, axis=1)
    P = np.take_along_axis(np.asarray(period_day, dtype=float), order, axis=1)
    if P.shape[1] < 2 or not delta_hill:
        return P, order
    m = np.take_along_axis(np.asarray(mass_msun, dtype=float), order, axis=1)
    r = min_period_ratio(m[:, :-1], m[:, 1:], np.asarray(m_star_msun, dtype=float)[:, None], delta_hill)
    for j in range(1, P.shape[1]):
        np.maximum(P[:, j], P[:, j - 1] * r[:, j - 1], out=P[:, j])
    return P, order


def band_halfwidth(psi, asin_eps, detectable):
    """``B = min(pi/2, max_j(psi_j + arcsin eps_j))`` over the detectable planets of each system (rad).

    Systems without a detectable planet get ``B = 0`` (weight 0).
    """
    reach = np.where(detectable, np.abs(psi) + asin_eps, 0.0)
    return np.minimum(reach.max(axis=1), 0.5 * np.pi)


def cos_sky_inclination(psi, node, sin_beta):
    """``o . n`` for tilts ``psi`` and nodes ``node`` (n_systems, n_planets), observer latitude ``beta``."""
    sb = np.asarray(sin_beta, dtype=float)[:, None]
    cb = np.sqrt(np.maximum(1.0 - sb * sb, 0.0))
    return cb * np.sin(psi) * np.cos(node) + sb * np.cos(psi)


def transit_mask(psi, node, sin_beta, eps, detectable):
    """Boolean (n_systems, n_planets): the planet transits and passes the detectability cut."""
    return (np.abs(cos_sky_inclination(psi, node, sin_beta)) < eps) & detectable
