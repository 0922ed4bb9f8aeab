"""Published instability-time estimates, each with the domain it was derived for.

Pure vectorised numpy; times are returned in orbits of the *innermost* planet
of the system (``log10``), so that they compare directly with an N-body
horizon.  Each estimate comes with a domain test: outside it the estimate is
NaN, never extrapolated.

* :func:`log10_time_compact` -- compact systems of three or more planets on
  near-circular, coplanar orbits, away from two-body resonances: the survival
  time of Yalinewich & Petrovich (2020), whose spacing unit scales as
  ``mu^(1/4)`` -- the scaling that Petit et al. (2020) derive from the overlap
  of three-body resonances and that Lammers, Hadden & Murray (2024) find in
  N-body integrations -- rather than the ``mu^(1/3)`` of mutual Hill radii.
* :func:`log10_time_pair_minimum` -- two Hill-stable planets with e < 0.3:
  the minimum Lagrange-instability time of Veras & Mustill (2013).

References
----------
.. [1] Yalinewich, A. & Petrovich, C. 2020, ApJL 892, L11 (T/P = c1 (a/da)
       exp(c2 (da/a) / mu^(1/4)), c1 = 5e-4, c2 = 8; read from the abstract).
.. [2] Petit, A. C., Pichierri, G., Davies, M. B. & Johansen, A. 2020, A&A 641,
       A176 (three-body resonance overlap; spacing in units of eps^(1/4)).
.. [3] Lammers, C., Hadden, S. & Murray, N. 2024, arXiv:2403.17928 (power law
       in spacing / eps^(1/4); tightly spaced systems need e <~ 0.05).
.. [4] Veras, D. & Mustill, A. J. 2013, MNRAS 434, L11 (log10 x ~ 5.2
       [mu / (M_J/M_sun)]^(-0.18) inner orbits; read from the abstract).
"""
import numpy as np

from archsys.physics.constants import MJUP_MSUN

__all__ = ["YP20_C1", "YP20_C2", "COMPACT_ECC_MAX", "VM13_ECC_MAX", "log10_time_compact",
           "log10_time_pair_minimum"]

#: Yalinewich & Petrovich (2020) coefficients (their abstract): T/P = c1 (a/da) exp(c2 (da/a)/mu^(1/4)).
YP20_C1 = 5e-4
YP20_C2 = 8.0
#: Largest eccentricity inside the compact-system domain.  The estimates are for initially
#: near-circular orbits; Lammers et al. (2024) find that tightly spaced systems need e <~ 0.05 to
#: survive, i.e. the times fall steeply with e, so beyond this the estimate is not given.
COMPACT_ECC_MAX = 0.05
#: Largest fractional spacing da/a of the compact domain (the derivation assumes da << a).
COMPACT_SPACING_MAX = 0.5
#: Veras & Mustill (2013) domain: "eccentricities less than about 0.3", nearly coplanar.
VM13_ECC_MAX = 0.3


def log10_time_compact(a, m, period, m_star, e=None):
    """log10 survival time of a compact system, in orbits of the innermost planet.

    Parameters
    ----------
    a, m, period : array_like, shape (..., n_planets)
        Semi-major axes [au] (increasing), masses [M_sun], periods [day].
    m_star : array_like, shape (...)
        Stellar mass [M_sun].
    e : array_like, shape (..., n_planets), optional
        Eccentricities; where any exceeds :data:`COMPACT_ECC_MAX` the draw is
        outside the domain (NaN).

    Returns
    -------
    log10_t : ndarray, shape (...)
        ``min`` over adjacent pairs of the Yalinewich & Petrovich (2020) time
        ``T = c1 (a/da) exp(c2 (da/a) / mu^(1/4)) P`` with ``a``, ``P`` the
        pair means and ``mu`` the pair's mean planet-to-star mass ratio,
        divided by the innermost period.  NaN outside the domain: fewer than
        three planets, eccentric orbits, ``da/a >`` :data:`COMPACT_SPACING_MAX`
        for the closest pair, or unknown masses.

    Notes
    -----
    The formula is for equal-mass, evenly spaced planets; for uneven systems
    the closest pair (the shortest time) is taken, which is common practice
    for such estimates and makes the estimate conservative.
    """
    a = np.asarray(a, dtype=float)
    m = np.asarray(m, dtype=float)
    period = np.asarray(period, dtype=float)
    m_star = np.asarray(m_star, dtype=float)[..., None]
    if a.shape[-1] < 3:
        return np.full(a.shape[:-1], np.nan)
    a_mean = 0.5 * (a[..., 1:] + a[..., :-1])
    frac = (a[..., 1:] - a[..., :-1]) / a_mean
    mu = 0.5 * (m[..., 1:] + m[..., :-1]) / m_star
    p_mean = 0.5 * (period[..., 1:] + period[..., :-1])
    with np.errstate(all="ignore"):
        log_t = (np.log10(YP20_C1) - np.log10(frac) + YP20_C2 * frac / mu ** 0.25 / np.log(10.0)
                 + np.log10(p_mean / period[..., :1]))
        out = np.min(log_t, axis=-1)
        ok = np.all(np.isfinite(log_t) & (frac > 0) & (mu > 0), axis=-1)
        ok &= np.min(frac, axis=-1) <= COMPACT_SPACING_MAX
        if e is not None:
            ok &= np.all(np.asarray(e, dtype=float) <= COMPACT_ECC_MAX, axis=-1)
    return np.where(ok, out, np.nan)


def log10_time_pair_minimum(m1, m2, m_star, e1=0.0, e2=0.0, hill_stable=True):
    """log10 of the minimum Lagrange-instability time of a Hill-stable pair [inner orbits].

    Veras & Mustill (2013): two nearly coplanar, Hill-stable planets with
    e < 0.3 can become Lagrange unstable (escape of the outer planet or
    collision with the star) only after ``x`` initial orbits of the inner
    planet, ``log10 x ~ 5.2 [mu / (M_J/M_sun)]^(-0.18)``, with ``mu`` the
    planet-to-star mass ratio (their planets have equal masses; the larger of
    the two is used here, which gives the shorter, more cautious time).

    Returns NaN outside the domain (not Hill stable, or an eccentricity >= 0.3).
    """
    m1, m2, m_star, e1, e2, hs = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in
                                                      (m1, m2, m_star, e1, e2, hill_stable)))
    mu = np.maximum(m1, m2) / m_star
    with np.errstate(all="ignore"):
        x = 5.2 * (mu / MJUP_MSUN) ** (-0.18)
    ok = (hs > 0) & (e1 < VM13_ECC_MAX) & (e2 < VM13_ECC_MAX) & (mu > 0)
    return np.where(ok, x, np.nan)
