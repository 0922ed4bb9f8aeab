"""Exact draws of everything in a system except the orientations (joint engine, step 1).

Each quantity is drawn from its own summary: the star, periods, eccentricities
(planets without eccentricity data from a population prior), masses (true mass,
m sin i, or K through the exact mass function once the inclination is known;
the mass-radius relation where only a radius or Rp/R* x R* is known) and radii
(Earth radii, from ``radius`` or ``ror`` times the stellar radius).
"""
from __future__ import annotations

import numpy as np

from ..physics import kepler, transit
from ..physics.constants import MEARTH_MSUN, REARTH_AU, RSUN_AU
from .basis import Basis, Origin
from .draws import eccentricity_draws, mass_from_radius_draws, radius_draws, star_draws

__all__ = ["exact_draws", "geometry_factor", "mass_basis", "ecc_prior_for", "RSUN_REARTH"]

RSUN_REARTH = RSUN_AU / REARTH_AU


def mass_basis(q):
    for key in ("mass", "msini", "k"):
        if key in q:
            return key
    return None


def ecc_prior_for(planet, n_planets, user_prior, multis_prior, singles_prior):
    """(prior or None, role) for one planet.  Data planets: the user's prior as a weight (None:
    flat).  Planets without eccentricity data: drawn from the user's prior, else the default."""
    q = planet.quantities
    has_data = any(k in q for k in ("ecc", "secosw", "ecosw"))
    if has_data:
        return user_prior, "weight"
    if user_prior is not None:
        return user_prior, "draw"
    return (multis_prior if n_planets >= 2 else singles_prior), "draw"


def exact_draws(system, rng, n, ecc_priors):
    """Draws of everything except orientations: dict of arrays, log-weights (n,), notes."""
    st = system.star
    npl = system.n_planets
    m_star, r_star, rho = star_draws(st, rng, n)
    shape = (n, npl)
    P, e, w = np.empty(shape), np.empty(shape), np.empty(shape)
    mass, msini, kdraw = (np.full(shape, np.nan) for _ in range(3))
    radius = np.full(shape, np.nan)
    logw = np.zeros(n)
    notes = {}
    for j, pl in enumerate(system.planets):
        q = pl.quantities
        note = {}
        P[:, j] = pl.period.sample(rng, n)
        prior, role = ecc_priors[j]
        if role == "draw":
            e[:, j] = prior.sample(rng, n)
            w[:, j] = np.radians(q["omega"].sample(rng, n)) if "omega" in q else rng.uniform(-np.pi, np.pi, n)
            note["ecc"] = Basis(f"prior only (no eccentricity data; prior {prior.name})", Origin.PRIOR)
        else:
            e[:, j], w[:, j], how = eccentricity_draws(pl, rng, n)
            exact = "ecc" in q and q["ecc"].kind == "exact"
            if exact:
                note["ecc"] = Basis("fixed (exact value given)", Origin.FIXED)
            else:
                note["ecc"] = Basis("posterior (summary x prior)" if prior is not None else
                                    "posterior (summary, flat prior)", Origin.DATA)
                if prior is not None:
                    with np.errstate(divide="ignore"):
                        logw += prior.logpdf_e(e[:, j])
        radius[:, j] = radius_draws(pl, r_star, rng, n)
        basis = mass_basis(q)
        if basis == "mass":
            mass[:, j] = q["mass"].sample(rng, n) * MEARTH_MSUN
            note["mass"] = "true"
        elif basis == "msini":
            msini[:, j] = q["msini"].sample(rng, n) * MEARTH_MSUN
        elif basis == "k":
            kdraw[:, j] = q["k"].sample(rng, n)
            msini[:, j] = kepler.msini_from_k_msun(P[:, j], kdraw[:, j], m_star, np.minimum(e[:, j], 0.999999))
        elif np.isfinite(radius[:, j]).any():
            mass[:, j], note["mass"] = mass_from_radius_draws(pl, radius[:, j], rng)
        notes[pl.name] = note
    d = dict(m_star=m_star, r_star=r_star, rho_star=rho, period=P, ecc=e, omega=w, mass=mass,
             msini=msini, k=kdraw, radius=radius)
    return d, logw, notes


def geometry_factor(system, d):
    """|cos i| per unit impact parameter, (n, n_planets): (1 + e sin w) / ((1 - e^2) a/R*).

    NaN where a/R* is unknown (no stellar radius or density).  The semi-major axis
    uses m sin i or the true mass (their difference changes a by < 1e-5 here).
    """
    st = system.star
    m_for_a = np.where(np.isfinite(d["mass"]), d["mass"], np.nan_to_num(d["msini"]))
    if st.radius is not None:
        aor = transit.a_over_rstar(kepler.a_au(d["period"], d["m_star"][:, None] + m_for_a), d["r_star"][:, None])
    elif st.density is not None:
        aor = transit.a_over_rstar_from_density(d["rho_star"][:, None], d["period"])
    else:
        return np.full(d["period"].shape, np.nan)
    return 1.0 / (aor * transit.eccentric_factor(d["ecc"], d["omega"]))
