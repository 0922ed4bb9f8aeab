"""Orbital phases: anomalies, the mean anomaly at a transit, propagation to an epoch.

Pure vectorised numpy over posterior draws; angles in radians, times in days.

Conventions (the usual radial-velocity and transit ones)
--------------------------------------------------------
The sky frame has the observer along +z: a planet is in front of its star
(inferior conjunction, mid-transit for a transiting orbit) where
``z = r sin(omega + f) sin i`` is largest, i.e. at true anomaly
``f_c = pi/2 - omega`` (``omega`` is the argument of periastron of the planet;
Winn 2010, "Transits and Occultations", eq. 1-3 and Sect. 3).  The mean
longitude is ``lambda = Omega + omega + M``; radial-velocity fits that do not
constrain the node take ``Omega = 0`` (then ``lambda = omega + M``).

Anomalies (Murray & Dermott 1999, Solar System Dynamics, eqs. 2.41-2.52):
``tan(E/2) = sqrt((1 - e)/(1 + e)) tan(f/2)`` and Kepler's equation
``M = E - e sin E``.
"""
from __future__ import annotations

import numpy as np

from .constants import TWO_PI

__all__ = ["eccentric_from_true", "mean_from_eccentric", "mean_from_true", "eccentric_from_mean",
           "true_from_mean", "mean_anomaly_at_transit", "propagate_mean_anomaly", "wrap_angle"]


def wrap_angle(x):
    """Angle(s) reduced to [0, 2 pi)."""
    out = np.mod(x, TWO_PI)
    return np.where(out >= TWO_PI, 0.0, out)   # np.mod(-tiny, 2 pi) can round up to 2 pi


def eccentric_from_true(f, e):
    """Eccentric anomaly E from the true anomaly f (same branch: E and f in the same half-orbit)."""
    f = np.asarray(f, dtype=float)
    e = np.asarray(e, dtype=float)
    return 2.0 * np.arctan2(np.sqrt(1.0 - e) * np.sin(0.5 * f), np.sqrt(1.0 + e) * np.cos(0.5 * f))


def mean_from_eccentric(E, e):
    """Kepler's equation M = E - e sin E."""
    return np.asarray(E, dtype=float) - np.asarray(e, dtype=float) * np.sin(E)


def mean_from_true(f, e):
    """Mean anomaly from the true anomaly, in [0, 2 pi)."""
    return wrap_angle(mean_from_eccentric(eccentric_from_true(f, e), e))


def eccentric_from_mean(M, e, tol=1e-14, max_iter=50):
    """Solve Kepler's equation for E (Newton's method from E0 = M + 0.85 e sign(sin M); Danby 1988).

    Converges for every e in [0, 1); vectorised over draws.
    """
    M = wrap_angle(np.asarray(M, dtype=float))
    e = np.broadcast_to(np.asarray(e, dtype=float), M.shape)
    E = M + 0.85 * e * np.sign(np.sin(M))
    for _ in range(max_iter):
        dE = (E - e * np.sin(E) - M) / (1.0 - e * np.cos(E))
        E = E - dE
        if np.all(np.abs(dE) < tol):
            break
    return E


def true_from_mean(M, e):
    """True anomaly from the mean anomaly, in (-pi, pi]."""
    E = eccentric_from_mean(M, e)
    e = np.asarray(e, dtype=float)
    return 2.0 * np.arctan2(np.sqrt(1.0 + e) * np.sin(0.5 * E), np.sqrt(1.0 - e) * np.cos(0.5 * E))


def mean_anomaly_at_transit(e, omega):
    """Mean anomaly at mid-transit (inferior conjunction): f = pi/2 - omega, in [0, 2 pi)."""
    return mean_from_true(0.5 * np.pi - np.asarray(omega, dtype=float), e)


def propagate_mean_anomaly(M_ref, t_ref, t, period):
    """Mean anomaly at time ``t`` of an orbit with mean anomaly ``M_ref`` at ``t_ref``, in [0, 2 pi).

    ``M(t) = M_ref + 2 pi (t - t_ref) / P`` (two-body motion).  The time difference is formed
    first, so catalogue times of ~2.46e6 days lose no precision.
    """
    dt = np.asarray(t, dtype=float) - np.asarray(t_ref, dtype=float)
    # the fractional number of orbits, reduced before multiplying by 2 pi keeps precision
    n_orb = dt / np.asarray(period, dtype=float)
    return wrap_angle(np.asarray(M_ref, dtype=float) + TWO_PI * (n_orb - np.floor(n_orb)))
