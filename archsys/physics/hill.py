"""Hill radii, Hill spacing and the Gladman (1993) two-planet Hill criterion.

Pure vectorised numpy kernels.  Internal units: masses in solar masses,
semi-major axes in au, periods in days.  Every function broadcasts its
arguments elementwise, e.g. ``a1, a2, m1, m2`` shaped ``(n_draws, n_pairs)``
and ``m_star`` shaped ``(n_draws, 1)`` (or a scalar).

References
----------
.. [1] Gladman, B. 1993, Icarus 106, 247 (Hill stability of two planets).
.. [2] Chambers, J. E., Wetherill, G. W. & Boss, A. P. 1996, Icarus 119, 261
       (mutual Hill radius; instability times of N >= 3 planet systems).
.. [3] Marchal, C. & Bozis, G. 1982, Celest. Mech. 26, 311.
"""
import math

import numpy as np

from archsys.physics.constants import JULIAN_YEAR_DAY

__all__ = ["HILL_CRIT", "CHAMBERS_B", "CHAMBERS_C", "hill_radius", "mutual_hill_radius", "hill_separation",
           "critical_hill_separation_circular", "gladman_margin", "gladman_hill_stable",
           "gladman_critical_separation", "chambers_instability_time"]

#: Critical spacing of two circular, coplanar, low-mass planets in mutual Hill
#: radii (Gladman 1993; circular limit of the elements-form criterion).
HILL_CRIT = 2.0 * math.sqrt(3.0)

#: Slope b of log10(t / P_inner) = b * Delta + c.  From memory, heuristic:
#: recalled for the mu = 1e-7, equally spaced N >= 3 integrations of
#: Chambers, Wetherill & Boss (1996) with a_1 = 1 au (so years = inner orbits).
#: Low confidence ([Chambers1996]); not a literature value.
CHAMBERS_B = 1.18
#: Intercept c of the same fit.  From memory, heuristic; low confidence.
CHAMBERS_C = -1.66


def _positive(name, x):
    x = np.asarray(x, dtype=float)
    bad = ~(np.isfinite(x) & (x > 0))
    if np.any(bad):
        raise ValueError(f"{name} must be positive and finite; got {x[bad].flat[0]!r}")
    return x


def _eccentricity(name, e):
    e = np.asarray(e, dtype=float)
    bad = ~((e >= 0) & (e < 1))
    if np.any(bad):
        raise ValueError(f"{name} must be in [0, 1); got {e[bad].flat[0]!r}")
    return e


def hill_radius(a, m, m_star):
    """Hill radius of a single planet.

    Parameters
    ----------
    a : array_like, au
    m : array_like, M_sun
    m_star : array_like, M_sun

    Returns
    -------
    r_H : ndarray, au

    Notes
    -----
    .. math:: r_H = a \\left(\\frac{m}{3 M_\\star}\\right)^{1/3}
    """
    a = _positive("a", a)
    m = _positive("m", m)
    m_star = _positive("m_star", m_star)
    return a * np.cbrt(m / (3.0 * m_star))


def mutual_hill_radius(a1, a2, m1, m2, m_star):
    """Mutual Hill radius of a planet pair.

    Parameters
    ----------
    a1, a2 : array_like, au
    m1, m2 : array_like, M_sun
    m_star : array_like, M_sun

    Returns
    -------
    R_Hm : ndarray, au

    Notes
    -----
    Convention of Chambers, Wetherill & Boss (1996), with the *mean*
    semi-major axis (some authors use :math:`a_1` instead):

    .. math:: R_{H,m} = \\left[\\frac{m_1 + m_2}{3 M_\\star}\\right]^{1/3}
              \\frac{a_1 + a_2}{2}

    References
    ----------
    .. [1] Chambers, Wetherill & Boss 1996, Icarus 119, 261.
    """
    a1, a2 = _positive("a1", a1), _positive("a2", a2)
    m1, m2 = _positive("m1", m1), _positive("m2", m2)
    m_star = _positive("m_star", m_star)
    return np.cbrt((m1 + m2) / (3.0 * m_star)) * 0.5 * (a1 + a2)


def hill_separation(a1, a2, m1, m2, m_star):
    """Pair spacing in mutual Hill radii, :math:`\\Delta = (a_2 - a_1)/R_{H,m}`.

    Uses the Chambers, Wetherill & Boss (1996) mutual Hill radius (mean
    semi-major axis).  Negative when ``a2 < a1``.
    """
    return (np.asarray(a2, float) - np.asarray(a1, float)) / mutual_hill_radius(
        a1, a2, m1, m2, m_star)


def critical_hill_separation_circular():
    """Critical spacing :math:`2\\sqrt{3}` mutual Hill radii (Gladman 1993).

    Circular, coplanar, :math:`m \\ll M_\\star` limit; returns :data:`HILL_CRIT`.
    """
    return HILL_CRIT


def _gladman_sides(a1, a2, m1, m2, m_star, e1, e2):
    """LHS and RHS of the elements-form Gladman criterion, pair put in order."""
    a1, a2 = _positive("a1", a1), _positive("a2", a2)
    m1, m2 = _positive("m1", m1), _positive("m2", m2)
    m_star = _positive("m_star", m_star)
    e1, e2 = _eccentricity("e1", e1), _eccentricity("e2", e2)
    swap = a2 < a1  # the criterion is written for planet 1 inside planet 2
    if np.any(swap):
        a1, a2, m1, m2, e1, e2 = np.broadcast_arrays(a1, a2, m1, m2, e1, e2)
        a_in, a_out = np.where(swap, a2, a1), np.where(swap, a1, a2)
        m_in, m_out = np.where(swap, m2, m1), np.where(swap, m1, m2)
        e_in, e_out = np.where(swap, e2, e1), np.where(swap, e1, e2)
    else:
        # already in order: every term keeps its own shape, so the mass and eccentricity terms of a
        # (draws, 1) x (draws, trials) call are computed once per draw (same values, element by element)
        a_in, a_out, m_in, m_out, e_in, e_out = a1, a2, m1, m2, e1, e2
    mu1, mu2 = m_in / m_star, m_out / m_star
    mu = mu1 + mu2
    gamma1, gamma2 = np.sqrt(1.0 - e_in**2), np.sqrt(1.0 - e_out**2)
    delta = np.sqrt(a_out / a_in)
    lhs = mu**-3 * (mu1 + mu2 / delta**2) * (mu1 * gamma1 + mu2 * gamma2 * delta) ** 2
    rhs = 1.0 + 3.0 ** (4.0 / 3.0) * mu1 * mu2 / mu ** (4.0 / 3.0)
    return lhs, rhs


def gladman_margin(a1, a2, m1, m2, m_star, e1=0.0, e2=0.0):
    """Relative margin LHS/RHS - 1 of the Gladman (1993) Hill criterion.

    Positive means Hill stable (the ordering of the two orbits can never
    change and close encounters are forbidden).

    Parameters
    ----------
    a1, a2 : array_like, au
        Semi-major axes; if ``a2 < a1`` for an element, the planets are swapped.
    m1, m2, m_star : array_like, M_sun
    e1, e2 : array_like
        Eccentricities in [0, 1).

    Returns
    -------
    margin : ndarray

    Notes
    -----
    Orbital-elements form for small masses (coplanar):

    .. math:: \\mu^{-3}\\left(\\mu_1 + \\frac{\\mu_2}{\\delta^2}\\right)
              \\left(\\mu_1\\gamma_1 + \\mu_2\\gamma_2\\delta\\right)^2 >
              1 + 3^{4/3}\\frac{\\mu_1\\mu_2}{\\mu^{4/3}}

    with :math:`\\mu_i = m_i/M_\\star`, :math:`\\mu = \\mu_1 + \\mu_2`,
    :math:`\\gamma_i = \\sqrt{1 - e_i^2}`, :math:`\\delta = \\sqrt{a_2/a_1}`.
    The prefactors of this form are from memory ([Gladman1993]); its
    circular limit is :math:`\\Delta = 2\\sqrt{3}` mutual Hill radii, as in
    Gladman (1993).

    References
    ----------
    .. [1] Gladman, B. 1993, Icarus 106, 247.
    """
    lhs, rhs = _gladman_sides(a1, a2, m1, m2, m_star, e1, e2)
    return lhs / rhs - 1.0


def gladman_hill_stable(a1, a2, m1, m2, m_star, e1=0.0, e2=0.0):
    """Boolean Hill stability of a pair (Gladman 1993); see :func:`gladman_margin`."""
    return gladman_margin(a1, a2, m1, m2, m_star, e1, e2) > 0.0


def gladman_critical_separation(m1, m2, m_star, e1=0.0, e2=0.0, n_iter=80):
    """Critical spacing (mutual Hill radii) at which the Gladman margin is zero.

    Vectorised bisection in :math:`\\ln \\delta`, :math:`\\delta = \\sqrt{a_2/a_1}`.
    The criterion's left side has its minimum at
    :math:`\\delta^3 = \\gamma_1/\\gamma_2` and rises monotonically beyond it,
    so the root above :math:`\\max(1, (\\gamma_1/\\gamma_2)^{1/3})` is unique.

    Parameters
    ----------
    m1, m2, m_star : array_like, M_sun
        Inner and outer planet masses, stellar mass.
    e1, e2 : array_like
        Inner and outer eccentricities.
    n_iter : int
        Bisection steps (80 gives machine precision in :math:`\\ln\\delta`).

    Returns
    -------
    delta_crit : ndarray
        Critical :math:`\\Delta = (a_2 - a_1)/R_{H,m}` (independent of :math:`a_1`).
    """
    m1, m2, m_star, e1, e2 = np.broadcast_arrays(
        *(np.asarray(x, float) for x in (m1, m2, m_star, e1, e2)))
    e1, e2 = _eccentricity("e1", e1), _eccentricity("e2", e2)
    g1, g2 = np.sqrt(1.0 - e1**2), np.sqrt(1.0 - e2**2)

    def margin(log_d):
        return gladman_margin(1.0, np.exp(2.0 * log_d), m1, m2, m_star, e1, e2)

    lo = np.maximum(0.0, np.log(g1 / g2) / 3.0)
    hi = lo + 1.0
    for _ in range(60):  # expand the upper bracket where needed
        bad = margin(hi) <= 0.0
        if not bad.any():
            break
        hi = np.where(bad, hi + 2.0 * (hi - lo), hi)
    for _ in range(n_iter):
        mid = 0.5 * (lo + hi)
        stable = margin(mid) > 0.0
        hi = np.where(stable, mid, hi)
        lo = np.where(stable, lo, mid)
    ratio = np.exp(hi + lo)  # a2/a1 = delta^2 at the root
    return (ratio - 1.0) / (np.cbrt((m1 + m2) / (3.0 * m_star)) * 0.5 * (1.0 + ratio))


def chambers_instability_time(delta, period_inner_day, b=CHAMBERS_B, c=CHAMBERS_C):
    """Heuristic instability time of a compact multi-planet system.

    **Heuristic only.**  The functional form
    :math:`\\log_{10}(t / P_{inner}) = b\\,\\Delta + c` is that of Chambers,
    Wetherill & Boss (1996) for N >= 3 equally spaced planets on initially
    circular, coplanar orbits; the default coefficients :data:`CHAMBERS_B`,
    :data:`CHAMBERS_C` are from memory (low confidence) and the slope depends
    on planet mass and number.  Use it for orientation, not as a verdict.

    Parameters
    ----------
    delta : array_like
        Spacing in mutual Hill radii.
    period_inner_day : array_like
        Orbital period of the innermost planet [day].
    b, c : float
        Fit coefficients; default to the labelled module constants.

    Returns
    -------
    t_orbits : ndarray
        Time in orbits of the inner planet.
    t_years : ndarray
        Same time in Julian years.

    References
    ----------
    .. [1] Chambers, Wetherill & Boss 1996, Icarus 119, 261.
    """
    delta = np.asarray(delta, dtype=float)
    period = _positive("period_inner_day", period_inner_day)
    t_orbits = 10.0 ** (b * delta + c)
    return t_orbits, t_orbits * period / JULIAN_YEAR_DAY
