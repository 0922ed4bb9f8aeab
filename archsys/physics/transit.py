"""Transit geometry: a/R*, inclination from impact parameter, stellar density.

Internal units: au, R_sun, day, rad, g/cm^3 for densities.

References
----------
.. [1] Winn, J. N. 2010, "Transits and Occultations", in *Exoplanets*, ed. S. Seager (eqs. 7, 9).
.. [2] Seager, S. & Mallen-Ornelas, G. 2003, ApJ 585, 1038.
"""
from __future__ import annotations

import numpy as np

from .constants import AU_M, DAY_S, G_SI, RSUN_AU

__all__ = ["a_over_rstar", "eccentric_factor", "inclination_from_b", "impact_parameter",
           "stellar_density_gcc", "a_over_rstar_from_density", "transit_probability"]


def a_over_rstar(a_au, r_star_rsun):
    """Scaled semi-major axis a/R*."""
    return np.asarray(a_au) / (np.asarray(r_star_rsun) * RSUN_AU)


def eccentric_factor(ecc, omega_rad):
    r"""Star–planet distance at conjunction in units of a: :math:`(1-e^2)/(1+e\sin\omega)`."""
    e = np.asarray(ecc, dtype=float)
    return (1.0 - e * e) / (1.0 + e * np.sin(omega_rad))


def impact_parameter(aor, inc_rad, ecc=0.0, omega_rad=np.pi / 2):
    r"""Impact parameter :math:`b = (a/R_\star)\cos i\,(1-e^2)/(1+e\sin\omega)` (Winn 2010 eq. 7)."""
    return np.asarray(aor) * np.cos(inc_rad) * eccentric_factor(ecc, omega_rad)


def inclination_from_b(b, aor, ecc=0.0, omega_rad=np.pi / 2):
    """Inclination [rad] in [0, pi/2] from the impact parameter (inverse of :func:`impact_parameter`).

    Returns NaN where b exceeds the projected distance at conjunction (no solution).
    """
    c = np.asarray(b, dtype=float) / (np.asarray(aor) * eccentric_factor(ecc, omega_rad))
    with np.errstate(invalid="ignore"):
        return np.where(c <= 1.0, np.arccos(np.clip(c, 0.0, 1.0)), np.nan)


def stellar_density_gcc(aor, period_day):
    r"""Mean stellar density [g cm^-3] from a/R* and P, for m_p << M*.

    .. math:: \rho_\star = 3\pi (a/R_\star)^3 / (G P^2)   (Seager & Mallen-Ornelas 2003)
    """
    P = np.asarray(period_day, dtype=float) * DAY_S
    rho_si = 3.0 * np.pi * np.asarray(aor, dtype=float) ** 3 / (G_SI * P * P)
    return rho_si * 1e-3


def a_over_rstar_from_density(rho_gcc, period_day):
    """a/R* from the mean stellar density [g cm^-3] and period (inverse of :func:`stellar_density_gcc`)."""
    P = np.asarray(period_day, dtype=float) * DAY_S
    return np.cbrt(np.asarray(rho_gcc) * 1e3 * G_SI * P * P / (3.0 * np.pi))


def transit_probability(aor, ror=0.0, ecc=0.0, omega_rad=np.pi / 2, grazing=True):
    r"""Geometric transit probability :math:`(1 \pm R_p/R_\star)(R_\star/a)(1+e\sin\omega)/(1-e^2)` (Winn 2010 eq. 9).

    ``grazing=True`` counts grazing transits (the "+" sign).
    """
    k = np.asarray(ror, dtype=float)
    num = 1.0 + k if grazing else 1.0 - k
    return np.clip(num / np.asarray(aor) / eccentric_factor(ecc, omega_rad), 0.0, 1.0)
