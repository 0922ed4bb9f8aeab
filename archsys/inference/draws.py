"""Direct Monte Carlo draws from independent catalogue summaries.

When no joint constraint binds (independent Gaussian or asymmetric summaries,
no stability prior) the posterior of each quantity is its summary
distribution, and derived quantities are propagated draw by draw.  This is the
"direct" path; the MCMC engine (:mod:`archsys.inference.route`) is used when
constraints couple the parameters.
"""
from __future__ import annotations

import numpy as np

from ..errors import InputError
from ..physics import kepler, transit
from ..physics.constants import MEARTH_MSUN, REARTH_AU, RSUN_AU
from ..physics.massradius import SCATTER_DEX, mass_from_radius_mearth
from .basis import Basis, Origin
from .phases import add_phases
from .posterior import Posterior

__all__ = ["direct_draws", "eccentricity_draws", "radius_draws", "mass_from_radius_draws", "DEFAULT_DRAWS",
           "DIRECT_WHY"]

DEFAULT_DRAWS = 4000
#: ``sampler.why`` of the direct path (the joint engine's reasons: :class:`archsys.inference.route.PathReason`).
DIRECT_WHY = "no joint constraint binds: summaries are independent"
RSUN_REARTH = RSUN_AU / REARTH_AU


def _redraw_valid(sample, valid, rng, n, max_rounds=200):
    """Draw until ``valid(x)`` holds for all n rows (rejection, vectorised)."""
    out = sample(n)
    bad = ~valid(out)
    rounds = 0
    while bad.any() and rounds < max_rounds:
        out[bad] = sample(int(bad.sum()))[..., : out.shape[-1]] if out.ndim > 1 else sample(int(bad.sum()))
        bad = ~valid(out)
        rounds += 1
    return out, bad


def eccentricity_draws(planet, rng, n):
    """(ecc, omega [rad], note) for one planet from whichever parametrisation it gives."""
    q = planet.quantities
    if "secosw" in q or "ecosw" in q:
        a, b = ("secosw", "sesinw") if "secosw" in q else ("ecosw", "esinw")

        def sample(m):
            return np.stack([q[a].sample(rng, m), q[b].sample(rng, m)], axis=-1)

        def valid(x):
            r2 = x[:, 0] ** 2 + x[:, 1] ** 2
            return (r2 if a == "secosw" else np.sqrt(r2)) < 1.0

        x, bad = _redraw_valid(sample, valid, rng, n)
        r2 = x[:, 0] ** 2 + x[:, 1] ** 2
        e = r2 if a == "secosw" else np.sqrt(r2)
        e = np.minimum(e, 1 - 1e-9)
        w = np.arctan2(x[:, 1], x[:, 0])
        return e, w, Basis(f"from {a}/{b}", Origin.DATA)
    if "ecc" in q:
        e = q["ecc"].sample(rng, n)
        if "omega" in q:
            w = np.radians(q["omega"].sample(rng, n))
        else:
            w = rng.uniform(-np.pi, np.pi, n)
        return e, w, Basis("measured" if not q["ecc"].is_limit else f"{q['ecc'].kind} limit", Origin.DATA)
    w = np.radians(q["omega"].sample(rng, n)) if "omega" in q else rng.uniform(-np.pi, np.pi, n)
    return np.zeros(n), w, Basis("assumed circular", Origin.ASSUMED)


#: Rounds of redrawing rows whose periods break the planets' period order.
MAX_ORDER_ROUNDS = 100


def direct_draws(system, n=DEFAULT_DRAWS, seed=0) -> Posterior:
    """Propagate every summary of ``system`` by ``n`` seeded Monte Carlo draws.

    Planets are labelled by period order (the reader sorts them), so a draw in
    which an outer planet's period falls below an inner one's is rejected and the
    whole row redrawn: the draws follow the product of the summaries truncated to
    ordered periods (and to true masses below ``MASS_CAP``).  Rows are redrawn only when needed, so systems whose period
    summaries do not overlap get exactly the draws of a single pass.
    """
    rng = np.random.default_rng(seed)
    draws, notes = _draw_rows(system, rng, n)
    bad = _order_broken(draws["period"]) | _too_heavy(draws["mass"])
    rounds = 0
    while bad.any() and rounds < MAX_ORDER_ROUNDS:
        sub, _ = _draw_rows(system, rng, int(bad.sum()))
        for k, v in draws.items():
            v[bad] = sub[k]
        bad = _order_broken(draws["period"]) | _too_heavy(draws["mass"])
        rounds += 1
    if bad.any() and _too_heavy(draws["mass"]).any():
        j = int(np.argmax(np.any(draws["mass"][bad] >= MASS_CAP, axis=0)))
        raise InputError(f"planet '{system.planet_names[j]}': nearly face-on orbit: the true mass m sin i / sin i "
                         f"exceeds {MASS_CAP} M_sun in most draws; check the inclination",
                         source=system.source)
    if bad.any():
        j = int(np.argmax(np.any(np.diff(draws["period"][bad], axis=1) < 0, axis=0)))
        names = system.planet_names
        raise InputError(f"periods of planets '{names[j]}' and '{names[j + 1]}' overlap so much that "
                         f"their order is undetermined; check the period uncertainties",
                         source=system.source)
    post = Posterior(system, draws, "direct", seed=seed, notes=notes,
                     sampler={"method": "direct Monte Carlo", "draws": n,
                              "why": DIRECT_WHY})
    return add_phases(post)


#: Upper bound of every true mass [M_sun] (about 84 M_J, the hydrogen-burning limit; common practice):
#: rows whose true mass from m sin i / sin i exceeds it (nearly face-on draws) are redrawn, as in the
#: joint engine.
MASS_CAP = 0.08


def _too_heavy(mass):
    """Rows (draws) where some true mass reaches the cap (nearly face-on orbits), shape (n,)."""
    with np.errstate(invalid="ignore"):
        return np.any(mass >= MASS_CAP, axis=1)


def star_draws(star, rng, n):
    """(mass [M_sun], radius [R_sun], density [g/cm^3]) draws of the star; NaN where not given."""
    m_star = star.mass.sample(rng, n)
    r_star = star.radius.sample(rng, n) if star.radius else np.full(n, np.nan)
    rho = star.density.sample(rng, n) if star.density else np.full(n, np.nan)
    return m_star, r_star, rho


def radius_draws(planet, r_star, rng, n):
    """Planet radius draws [R_earth]: ``radius`` as given, else ``ror`` times the stellar radius draws
    (NaN when neither is known)."""
    q = planet.quantities
    if "radius" in q:
        return q["radius"].sample(rng, n)
    if "ror" in q and np.isfinite(r_star).all():
        return q["ror"].sample(rng, n) * r_star * RSUN_REARTH
    return np.full(n, np.nan)


def mass_from_radius_draws(planet, radius, rng):
    """(mass draws [M_sun], basis note) from radius draws by the mass-radius relation with its scatter."""
    m = mass_from_radius_mearth(radius) * 10 ** (SCATTER_DEX * rng.standard_normal(radius.shape[0])) * MEARTH_MSUN
    note = ("from radius (mass-radius relation)" if "radius" in planet.quantities
            else "from Rp/R* x R* (mass-radius relation)")
    return m, note


def _order_broken(P):
    """Rows (draws) where the periods are not in the planets' order, shape (n,)."""
    return np.any(np.diff(P, axis=1) < 0, axis=1)


def _draw_rows(system, rng, n):
    """One pass of draws for every quantity: (draws dict, notes per planet)."""
    st = system.star
    npl = system.n_planets
    m_star, r_star, rho = star_draws(st, rng, n)

    shape = (n, npl)
    P, e, w = np.empty(shape), np.empty(shape), np.empty(shape)
    msini, mass = np.full(shape, np.nan), np.full(shape, np.nan)
    inc, node = np.full(shape, np.nan), np.full(shape, np.nan)
    radius = np.full(shape, np.nan)
    a = np.empty(shape)
    notes = {}
    for j, pl in enumerate(system.planets):
        q = pl.quantities
        note = {}
        P[:, j] = pl.period.sample(rng, n)
        e[:, j], w[:, j], note["ecc"] = eccentricity_draws(pl, rng, n)
        radius[:, j] = radius_draws(pl, r_star, rng, n)
        # masses (M_sun) before inclinations; Kepler III needs M* + m
        if "mass" in q:
            mass[:, j] = q["mass"].sample(rng, n) * MEARTH_MSUN
            note["mass"] = "true"
        if "msini" in q:
            msini[:, j] = q["msini"].sample(rng, n) * MEARTH_MSUN
            note.setdefault("mass", "minimum")
        elif "k" in q:
            k_draws = q["k"].sample(rng, n)
            msini[:, j] = kepler.msini_from_k_msun(P[:, j], k_draws, m_star, e[:, j])
            note.setdefault("mass", "minimum (from K)")
        elif "mass" not in q and np.isfinite(radius[:, j]).any():
            mass[:, j], note["mass"] = mass_from_radius_draws(pl, radius[:, j], rng)
        m_for_a = np.where(np.isfinite(mass[:, j]), mass[:, j], np.nan_to_num(msini[:, j]))
        a[:, j] = kepler.a_au(P[:, j], m_star + m_for_a)
        # inclination to the sky
        if "inclination" in q:
            inc[:, j] = np.radians(q["inclination"].sample(rng, n))
            note["inc"] = Basis("measured", Origin.DATA)
        elif "b" in q or pl.transiting:
            if st.radius is not None:
                aor = transit.a_over_rstar(a[:, j], r_star)
            elif st.density is not None:
                aor = transit.a_over_rstar_from_density(rho, P[:, j])
            else:
                aor = None
            if aor is not None:
                if "b" in q:
                    b = q["b"].sample(rng, n)
                    note["inc"] = Basis("from impact parameter", Origin.DATA)
                else:
                    ror = q["ror"].sample(rng, n) if "ror" in q else 0.0
                    b = rng.uniform(0.0, 1.0 + ror, n)
                    note["inc"] = Basis("transiting (b uniform on [0, 1 + Rp/R*])", Origin.DATA)
                inc[:, j] = transit.inclination_from_b(b, aor, e[:, j], w[:, j])
        if "ascending_node" in q:
            node[:, j] = np.radians(q["ascending_node"].sample(rng, n))
        # true mass from m sin i where the inclination is known
        if note.get("mass", "").startswith("minimum") and np.isfinite(inc[:, j]).any():
            sini = np.sin(inc[:, j])
            if "k" in q and "msini" not in q:   # exact cubic with the inclination inside M* + m
                mass[:, j] = kepler.mass_from_k_msun(P[:, j], k_draws, m_star, e[:, j], sini)
            else:
                mass[:, j] = msini[:, j] / sini
            note["mass"] = "true (m sin i / sin i)"
            # face-on draws (sin i = 0) have no finite true mass: leave them unknown
            # and keep the m sin i semi-major axis there
            mass[:, j] = np.where(np.isfinite(mass[:, j]) & (mass[:, j] > 0), mass[:, j], np.nan)
            a[:, j] = np.where(np.isfinite(mass[:, j]), kepler.a_au(P[:, j], m_star + np.nan_to_num(mass[:, j])),
                               a[:, j])
        # a true mass with a known inclination also has a minimum mass
        if note.get("mass") == "true" and np.isfinite(inc[:, j]).any():
            msini[:, j] = mass[:, j] * np.sin(inc[:, j])
        notes[pl.name] = note
    draws = dict(m_star=m_star, r_star=r_star, rho_star=rho, period=P, a=a, ecc=e, omega=w,
                 msini=msini, mass=mass, inc=inc, node=node, radius=radius)
    return draws, notes
