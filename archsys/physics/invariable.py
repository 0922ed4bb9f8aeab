"""The invariable plane of each posterior draw and the inclinations measured from it.

The angular momentum deficit (AMD) is defined about the total orbital angular
momentum of the system (Laskar 1997; Laskar & Petit 2017), so its
inclinations must be measured from the *invariable plane*, the plane normal to

.. math:: \\mathbf{L} = \\sum_k m_k \\sqrt{G M_\\star a_k (1 - e_k^2)}\\,\\hat{\\mathbf{n}}_k ,

and not from a fitted reference plane or the sky.  Pure vectorised numpy:
arrays shaped ``(..., n_planets)``; angles in radians; the orbit normal of a
planet with inclination i and longitude of node Omega (any fixed frame, e.g.
the sky frame of the posterior) is ``(sin i sin Omega, -sin i cos Omega, cos i)``.
The result does not depend on that frame, only on the relative orientations.

References
----------
.. [1] Laskar, J. 1997, A&A 317, L75.
.. [2] Laskar, J. & Petit, A. C. 2017, A&A 605, A72.
.. [3] Souami, D. & Souchay, J. 2012, A&A 543, A133 (the Solar System's
       invariable plane; inclinations of the planets to it).
"""
import numpy as np

from archsys.physics.constants import GM_SUN

__all__ = ["orbit_normal", "total_angular_momentum", "invariable_inclinations"]


def orbit_normal(inc, node):
    """Unit orbit normals, shape ``(..., 3)``, from inclination and longitude of node [rad]."""
    inc = np.asarray(inc, dtype=float)
    node = np.asarray(node, dtype=float)
    s = np.sin(inc)
    return np.stack([s * np.sin(node), -s * np.cos(node), np.cos(inc)], axis=-1)


def total_angular_momentum(m, a, e, inc, node, m_star):
    """Total orbital angular momentum vector of each draw, shape ``(..., 3)``.

    Parameters
    ----------
    m, a, e, inc, node : array_like, shape (..., n_planets)
        Masses [M_sun], semi-major axes [au], eccentricities, inclinations and
        longitudes of node [rad] in one common frame.
    m_star : array_like, shape (...)
        Stellar mass [M_sun].

    Returns
    -------
    L : ndarray, shape (..., 3), M_sun au^2 / day
        ``sum_k m_k sqrt(G M_star a_k (1 - e_k^2)) n_k`` (heliocentric,
        test-particle form, as in the AMD of Laskar & Petit 2017).
    """
    m, a, e, inc, node = np.broadcast_arrays(*(np.asarray(x, dtype=float) for x in (m, a, e, inc, node)))
    m_star = np.asarray(m_star, dtype=float)[..., None]
    g = m * np.sqrt(GM_SUN * m_star * a * (1.0 - e * e))
    return np.sum(g[..., None] * orbit_normal(inc, node), axis=-2)


def invariable_inclinations(m, a, e, inc, node, m_star):
    """Inclination of every orbit to the invariable plane of its draw [rad].

    Parameters
    ----------
    As :func:`total_angular_momentum`.

    Returns
    -------
    i_inv : ndarray, shape (..., n_planets)
        Angle between each orbit normal and the total angular momentum of the
        draw, in [0, pi].  For exactly coplanar orbits it is zero whatever the
        common orientation of the plane (the AMD then has no inclination part).

    Notes
    -----
    Where the total angular momentum vanishes (impossible for positive masses
    on prograde bound orbits) the inclinations are NaN.
    """
    L = total_angular_momentum(m, a, e, inc, node, m_star)
    norm = np.linalg.norm(L, axis=-1, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        lhat = np.where(norm > 0, L / norm, np.nan)
    n = orbit_normal(*np.broadcast_arrays(np.asarray(inc, float), np.asarray(node, float)))
    cosang = np.sum(n * lhat[..., None, :], axis=-1)
    return np.arccos(np.clip(cosang, -1.0, 1.0))
