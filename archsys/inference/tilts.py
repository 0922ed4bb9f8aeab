"""Orbit normals and the hierarchical tilt model shared by the orientation block and the joint engine.

Orbit normals in the sky frame (z towards the observer) are n = (sin i sin Omega, -sin i cos Omega,
cos i).  Each normal is tilted from the reference normal by psi ~ Rayleigh(sigma) at a uniform azimuth,
truncated at psi = pi; :func:`log_tilt_density` is that density per unit solid angle and
:func:`prior_orientations` draws from it exactly.  :func:`classify` says what the data give about each
planet's orientation (see :mod:`archsys.inference.orientation`).
"""
from __future__ import annotations

import numpy as np

__all__ = ["orbit_normals", "log_tilt_density", "log_tilt_density_raw", "classify", "prior_orientations"]


def orbit_normals(cos_i, node):
    """Unit orbit normals (..., 3) in the sky frame from cos i and the node [rad]."""
    sin_i = np.sqrt(np.clip(1.0 - cos_i * cos_i, 0.0, 1.0))
    return np.stack([sin_i * np.sin(node), -sin_i * np.cos(node), cos_i], axis=-1)


def log_tilt_density(cos_psi, sigma):
    """log [Rayleigh(psi; sigma) / (2 pi sin psi)] per unit solid angle, truncated at psi = pi."""
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return log_tilt_density_raw(cos_psi, sigma)


def log_tilt_density_raw(cos_psi, sigma):
    """:func:`log_tilt_density` without its floating-point error settings (callers inside their own)."""
    # the operations of log(ratio) - log(2 pi s2) - 0.5 psi^2 / s2 - log_norm with
    # ratio = psi / max(sin psi, 1e-300) (1 below psi = 1e-6), in place where they can be
    psi = np.array(cos_psi, dtype=float)
    shape = np.broadcast_shapes(psi.shape, np.shape(sigma))
    scalar = shape == ()
    if psi.shape != shape or scalar:
        psi = np.array(np.broadcast_to(psi, shape or (1,)))
    np.maximum(psi, -1.0, out=psi)                  # np.clip, without its overhead
    np.minimum(psi, 1.0, out=psi)
    np.arccos(psi, out=psi)
    s2 = sigma * sigma
    out = np.sin(psi)
    np.maximum(out, 1e-300, out=out)
    np.divide(psi, out, out=out)
    np.copyto(out, 1.0, where=~(psi > 1e-6))
    np.log(out, out=out)
    out -= np.log(2.0 * np.pi * s2)
    q = np.multiply(psi, 0.5)
    q *= psi
    q /= s2
    out -= q
    out -= np.log1p(-np.exp(-np.pi ** 2 / (2.0 * s2)))
    return out[0] if scalar else out


def classify(system, has_scale):
    """Orientation kind of each planet: 'b', 'incl', 'fixed' or 'free' (see module docstring).

    ``has_scale``: whether a/R* can be computed (stellar radius or density known).
    """
    kinds = []
    for p in system.planets:
        q = p.quantities
        if "inclination" in q:
            kinds.append("fixed" if q["inclination"].kind == "exact" else "incl")
        elif ("b" in q or p.transiting) and has_scale:
            kinds.append("b")
        else:
            kinds.append("free")
    return kinds


def prior_orientations(rng, n, npl, sigma_prior):
    """Orientations drawn exactly from the hierarchical prior (no orientation data).

    One planet: isotropic.  Several: isotropic reference plane, sigma from its
    prior (degrees), Rayleigh tilts at uniform azimuths.  Returns cos_i, node,
    cosI, sigma [rad], psi, each (n,) or (n, npl).
    """
    cosI = rng.uniform(0.0, 1.0, n)      # the mirror image (cos I < 0) is equivalent
    if npl == 1:
        return {"cos_i": cosI[:, None], "node": rng.uniform(-np.pi, np.pi, (n, 1)),
                "cosI": cosI, "sigma": np.full(n, np.nan), "psi": None}
    sig = np.radians(sigma_prior.sample(rng, n))
    psi = sig[:, None] * np.sqrt(-2.0 * np.log(rng.uniform(1e-300, 1.0, (n, npl))))
    for _ in range(200):           # the Rayleigh is truncated at pi (as the density is): redraw beyond it
        over = psi > np.pi
        if not over.any():
            break
        rows = np.nonzero(over)[0]
        psi[over] = sig[rows] * np.sqrt(-2.0 * np.log(rng.uniform(1e-300, 1.0, rows.size)))
    psi = np.minimum(psi, np.pi)
    phi = rng.uniform(-np.pi, np.pi, (n, npl))
    sinI = np.sqrt(1.0 - cosI ** 2)[:, None]
    nx = np.sin(psi) * np.cos(phi)
    ny_r, nz_r = np.sin(psi) * np.sin(phi), np.cos(psi)
    nz = cosI[:, None] * nz_r + sinI * ny_r
    ny = cosI[:, None] * ny_r - sinI * nz_r
    return {"cos_i": nz, "node": np.arctan2(nx, -ny), "cosI": cosI, "sigma": sig, "psi": psi}
