"""Newton's form of Kepler's third law and radial-velocity masses.

Kernels (names ending in the unit) take plain floats/arrays in the internal
units of :mod:`archsys.physics.constants` (day, M_sun, au, rad, m/s) and
broadcast over posterior draws.  The public functions without a unit suffix
take and return :class:`astropy.units.Quantity`.

References
----------
.. [1] Prsa, A. et al. 2016, AJ 152, 41 (IAU 2015 Resolution B3).
.. [2] Cumming, A., Marcy, G. W. & Butler, R. P. 1999, ApJ 526, 890.
.. [3] Lovis, C. & Fischer, D. 2010, in *Exoplanets*, ed. S. Seager.
"""
from __future__ import annotations

import numpy as np
import astropy.units as u

from .constants import AU_M, DAY_S, GM_SUN, TWO_PI

__all__ = [
    "a_au", "period_day", "mass_function_msun", "msini_from_k_msun", "mass_from_k_msun",
    "k_from_mass_ms", "true_mass", "semi_major_axis", "orbital_period", "minimum_mass",
]

_KMS_TO_AUDAY = DAY_S / AU_M  # (m/s) -> (au/day)


def a_au(period_day, m_total_msun):
    r"""Semi-major axis [au] from period [day] and total mass M* + m [M_sun].

    .. math:: a = \left[ G (M_\star + m) P^2 / 4\pi^2 \right]^{1/3}
    """
    P = np.asarray(period_day, dtype=float)
    return np.cbrt(GM_SUN * np.asarray(m_total_msun, dtype=float) * P * P / (TWO_PI * TWO_PI))


def period_day(a_au_, m_total_msun):
    r"""Orbital period [day] from semi-major axis [au] and M* + m [M_sun] (inverse of :func:`a_au`)."""
    a = np.asarray(a_au_, dtype=float)
    return TWO_PI * np.sqrt(a * a * a / (GM_SUN * np.asarray(m_total_msun, dtype=float)))


def mass_function_msun(period_day_, k_ms, ecc=0.0):
    r"""RV mass function f = (m sin i)^3 / (M* + m)^2 [M_sun].

    .. math:: f = P K^3 (1 - e^2)^{3/2} / (2 \pi G)
    """
    K = np.asarray(k_ms, dtype=float) * _KMS_TO_AUDAY
    e = np.asarray(ecc, dtype=float)
    return np.asarray(period_day_, dtype=float) * K**3 * (1.0 - e * e) ** 1.5 / (TWO_PI * GM_SUN)


def mass_from_k_msun(period_day_, k_ms, m_star_msun, ecc=0.0, sin_i=1.0, n_iter=40):
    r"""Planet mass [M_sun] from K, solving the exact cubic.

    Solves :math:`(m \sin i)^3 = f (M_\star + m)^2` for m > 0 by Newton's
    method, vectorised; with ``sin_i = 1`` this is the minimum mass in the
    m sin i convention of catalogues (sin i -> 1 inside M* + m).  The solution
    is exact when m is not negligible against M* (brown dwarfs, low-mass stars).
    """
    f = mass_function_msun(period_day_, k_ms, ecc)
    M = np.asarray(m_star_msun, dtype=float)
    s3 = np.asarray(sin_i, dtype=float) ** 3
    f, M, s3 = np.broadcast_arrays(f, M, s3)
    # Start above the root, where g is increasing and convex, so that Newton
    # descends monotonically onto the one positive root.  The root x obeys
    # x <= cbrt(4 f M*^2 / sin^3 i) if x <= M*, and x <= 4 f / sin^3 i if
    # x >= M*, since (M* + x)^2 <= 4 max(M*, x)^2.  (Starting from the
    # m << M* solution instead diverges to a negative root once f ~ M*.)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        x = np.maximum(np.cbrt(4.0 * f * M * M / s3), 4.0 * f / s3)
    for _ in range(n_iter):
        g = s3 * x**3 - f * (M + x) ** 2
        dg = 3.0 * s3 * x * x - 2.0 * f * (M + x)
        step = g / dg
        x = x - step
        if np.all(~(np.abs(step) > 1e-15 * np.abs(x))):   # converged (NaN rows stop too)
            break
    return x


def msini_from_k_msun(period_day_, k_ms, m_star_msun, ecc=0.0):
    """Minimum mass m sin i [M_sun] from K (exact cubic, sin i = 1 inside M* + m)."""
    return mass_from_k_msun(period_day_, k_ms, m_star_msun, ecc, 1.0)


def k_from_mass_ms(period_day_, m_planet_msun, m_star_msun, ecc=0.0, sin_i=1.0):
    r"""RV semi-amplitude [m/s] of a planet of mass m at inclination i.

    .. math:: K = (2\pi G/P)^{1/3} m \sin i (M_\star + m)^{-2/3} (1-e^2)^{-1/2}
    """
    P = np.asarray(period_day_, dtype=float)
    m = np.asarray(m_planet_msun, dtype=float)
    e = np.asarray(ecc, dtype=float)
    K = np.cbrt(TWO_PI * GM_SUN / P) * m * np.asarray(sin_i) / np.cbrt((np.asarray(m_star_msun) + m) ** 2)
    return K / np.sqrt(1.0 - e * e) / _KMS_TO_AUDAY


def true_mass(msini, inclination_rad):
    """True mass from m sin i and an inclination (any mass unit; i in rad)."""
    return np.asarray(msini) / np.sin(np.asarray(inclination_rad))


# ---------------------------------------------------------------- public API
@u.quantity_input(period="time", m_star="mass", m_planet="mass")
def semi_major_axis(period, m_star, m_planet=0 * u.M_sun):
    """Semi-major axis from Kepler's third law (Newton's form), as a Quantity [au].

    Parameters
    ----------
    period : Quantity ['time']
    m_star : Quantity ['mass']
    m_planet : Quantity ['mass'], optional

    Notes
    -----
    Masses are converted with astropy's M_sun, then multiplied by the IAU 2015
    nominal GM_sun (Prsa et al. 2016): for masses given in solar or Earth
    masses the result carries no uncertainty from G.
    """
    mt = (m_star + m_planet).to_value(u.M_sun)
    return a_au(period.to_value(u.day), mt) * u.au


@u.quantity_input(a="length", m_star="mass", m_planet="mass")
def orbital_period(a, m_star, m_planet=0 * u.M_sun):
    """Orbital period from the semi-major axis (inverse of :func:`semi_major_axis`) [day]."""
    mt = (m_star + m_planet).to_value(u.M_sun)
    return period_day(a.to_value(u.au), mt) * u.day


@u.quantity_input(period="time", k="speed", m_star="mass")
def minimum_mass(period, k, m_star, ecc=0.0):
    """Minimum mass m sin i from the RV semi-amplitude (exact cubic) [M_earth]."""
    m = msini_from_k_msun(period.to_value(u.day), k.to_value(u.m / u.s), m_star.to_value(u.M_sun), ecc)
    return (m * u.M_sun).to(u.M_earth)
