"""The joint model of one system: parameters, priors and likelihoods from summaries.

Parameters (one vector per walker; all vectorised over walkers)
---------------------------------------------------------------
per planet j
    ``x_j = sqrt(e) cos(omega)``, ``y_j = sqrt(e) sin(omega)``
        Flat in (x, y) on the unit disk is flat in e and omega (the Jacobian
        d x d y = de domega / 2 is constant); the eccentricity prior is
        applied on top.
    ``c_j = |cos i_j|``, ``Omega_j``  (sky orientation of the orbit normal)
        Transits and radial velocities cannot tell i from 180 - i, so the
        sign of cos i_j is not a parameter: the hierarchical prior is summed
        over both signs (log-sum-exp) and, for each posterior draw, a sign is
        drawn afterwards with probability proportional to its prior term (the
        likelihood does not depend on it).  This removes the 2^(n-1)
        separated modes that a signed parametrisation has.  Planets with an
        astrometric inclination use a signed ``cos i_j`` in [-1, 1].
        Hierarchical prior: each orbit normal is tilted from the system
        reference normal by psi_j ~ Rayleigh(sigma) at a uniform azimuth, i.e.
        a density Rayleigh(psi; sigma) / (2 pi sin psi) per unit solid angle
        (cos i, Omega are uniform coordinates on the sphere), truncated to
        psi <= pi.
    ``log (m sin i)_j``  (only planets with K, m sin i or a true mass)
        m = exp(param) / sin i; prior flat in m sin i (Jacobian added), with
        m below ``MASS_CAP`` M_sun.  This is the prior implied by a Gaussian K
        summary, so the MCMC and the direct path agree for RV planets; sampling
        m sin i rather than m removes the m-i degeneracy of RV planets.
    (ORIENTATION_FREE) when no planet has transit or astrometric data and no
        stability prior is asked for, orientations do not enter the
        likelihood; they are not sampled but drawn afterwards from the
        hierarchical prior (sigma, reference plane, Rayleigh tilts), which is
        exact and mixes perfectly.
    ``P_j``  (only planets whose period is uncertain by more than 0.1 %)
        Other periods enter as independent draws afterwards; their coupling to
        a (P^(2/3)) and K (P^(1/3)) is below 0.1 %.
per system
    ``log sigma``  mutual-inclination dispersion [rad], prior from the
        ``mutual_inclination_sigma`` prior file (degrees).
    ``cos I_ref``  inclination of the reference plane to the sky, flat in
        [0, 1] (isotropic orientation; the mirror image is equivalent); its
        node on the sky is the zero of Omega (a free ``Omega_ref`` is added
        only when some planet has an astrometric node).

cos i parametrisation (COS_I_PARAMETRISATION)
    Planets with transit data use |cos i| (folded, see above); planets with an
    astrometric inclination use a signed cos i; planets without orientation
    data in a multi-planet system use ``z_j`` with
    ``cos i_j = tanh(atanh(cos I_ref) + sigma z_j)`` (non-centred: z_j is of
    order one whatever sigma is; Jacobian sigma (1 - cos^2 i) included), which
    avoids the funnel between sigma and a prior-dominated orientation.

Node scaling (NODE_SCALING)
    With several planets the node parameter is ``w_j`` with
    ``Omega_j = Omega_ref + 2 arctan(sigma w_j)`` (a bijection onto
    (-pi, pi) for every sigma; its Jacobian is in the log-posterior).  For
    nearly edge-on systems the node offsets are of order sigma, so w_j is of
    order one whatever sigma is: this removes the funnel between sigma and the
    nodes that a direct node parameter has.
    ``M*``, ``R*`` (or ``rho*``) when uncertain; their summaries are priors.

Orbit normals in the sky frame (z towards the observer):
``n = (sin i sin Omega, -sin i cos Omega, cos i)``; the tilt of planet j is
``cos psi_j = n_j . n_ref``, and pairwise mutual inclinations follow from
``cos psi_jk = n_j . n_k`` (equivalently cos i1 cos i2 + sin i1 sin i2 cos dOmega).

Likelihoods from summaries
--------------------------
* ``ecc``  split-normal (or one-sided half-Gaussian for limits) on e;
* ``secosw``/``sesinw``, ``ecosw``/``esinw``  Gaussian in that space;
* ``k``  K(m, i, e, M*, P) against the summary; ``msini`` against m sin i;
  ``mass`` against m;
* transits: ``b`` against |b(a/R*, i, e, omega)| (Winn 2010 eq. 7); a planet
  with ``transiting = true`` must have |b| < 1 + Rp/R*; a planet with
  ``transiting = false`` in a system with transits must have |b| > 1 + Rp/R*;
* ``inclination`` (to the sky) and ``ascending_node`` directly;
* orbits may not cross: a_in (1 + e_in) < a_out (1 - e_out);
* optional stability prior: every adjacent pair Hill stable (Gladman 1993,
  eccentric form) and AMD stable (Laskar & Petit 2017).
"""
from __future__ import annotations

from dataclasses import dataclass, field
import math

import numpy as np

from ...physics import kepler, transit
from ...physics.constants import MEARTH_MSUN, RSUN_AU
from ...physics.massradius import mass_from_radius_mearth
from ..orientation import log_tilt_density, orbit_normals

__all__ = ["SystemModel", "MASS_CAP", "PERIOD_FREE_REL"]

#: Upper bound of the flat mass prior [M_sun] (about 84 M_J: the hydrogen-burning limit, common practice).
MASS_CAP = 0.08
#: Periods with a larger fractional uncertainty are sampled.
PERIOD_FREE_REL = 1e-3
_NEG = -np.inf


#: Width given to exact (bare-number) summaries inside the MCMC likelihood:
#: EXACT_REL times max(|value|, floor).  Fixing them exactly would leave a
#: sampled parameter without a constraint; a 0.1 % Gaussian keeps them fixed
#: for all practical purposes while the sampler can still move.
EXACT_REL = 1e-3
_EXACT_FLOOR = {"ecc": 1.0, "secosw": 1.0, "sesinw": 1.0, "ecosw": 1.0, "esinw": 1.0, "b": 1.0,
                "inclination": 10.0}


def _term(meas, fld):
    if meas.kind == "exact":
        w = EXACT_REL * max(abs(meas.value), _EXACT_FLOOR.get(fld, 0.0), 1e-300)
        return (float(meas.value), w, w)
    return meas.gauss_params()


# the orbit-normal and tilt-density helpers are the joint engine's (one definition)
_normal = orbit_normals
_log_tilt_density = log_tilt_density


@dataclass
class SystemModel:
    """Parameter layout and vectorised log-posterior of one system."""

    system: object
    ecc_prior: object
    sigma_prior: object
    require_stable: bool = False
    names: list = field(default_factory=list)

    def __post_init__(self):
        s = self.system
        self.np_ = s.n_planets
        idx = 0
        self.ix = {}

        def add(name):
            nonlocal idx
            self.ix[name] = idx
            self.names.append(name)
            idx += 1

        #: planets whose eccentricity is given as an exact number are held fixed
        self.fixed_ecc = {}
        for j, p in enumerate(s.planets):
            q = p.quantities
            if "ecc" in q and q["ecc"].kind == "exact" and ("omega" not in q or q["omega"].kind == "exact"):
                om = math.radians(q["omega"].value) if "omega" in q else math.pi / 2
                self.fixed_ecc[j] = (q["ecc"].value, om)
        self.free_ecc = [j for j in range(self.np_) if j not in self.fixed_ecc]
        for j in self.free_ecc:
            add(f"x{j}")
            add(f"y{j}")
        self.has_transits = any(p.transiting or "b" in p.quantities for p in s.planets)
        #: ORIENTATION_FREE: no transit, astrometric or stability information -> the likelihood
        #: does not depend on the orientations (masses are sampled as m sin i), so they are
        #: drawn afterwards from the hierarchical prior instead of being sampled
        self.orient_free = not self.require_stable and not self.has_transits and not any(
            k in p.quantities for p in s.planets for k in ("inclination", "ascending_node"))
        #: one planet: no reference plane or dispersion; its orientation is isotropic
        self.hier = self.np_ >= 2 and not self.orient_free
        #: how cos i is parametrised per planet (see COS_I_PARAMETRISATION)
        self.cos_kind = []
        for p in s.planets:
            if "inclination" in p.quantities:
                self.cos_kind.append("signed")
            elif ("b" in p.quantities or p.transiting) or not self.hier:
                self.cos_kind.append("folded")
            else:
                self.cos_kind.append("tanh")
        self.signed = [k != "folded" for k in self.cos_kind]
        self.tanh_planets = [j for j, k in enumerate(self.cos_kind) if k == "tanh"]
        for j in range(self.np_):
            if self.orient_free:
                continue
            add(f"cosi{j}")
            if self.hier or self.signed[j]:
                add(f"node{j}")
        self.mass_planets = []
        for j, p in enumerate(s.planets):
            if any(k in p.quantities for k in ("k", "msini", "mass")):
                add(f"logmsini{j}")
                self.mass_planets.append(j)
        self.free_periods = []
        for j, p in enumerate(s.planets):
            per = p.period
            if per.kind != "exact" and per.sigma / per.center > PERIOD_FREE_REL:
                add(f"P{j}")
                self.free_periods.append(j)
        if self.hier:
            add("logsigma")
            add("cosI")
        self.node_ref_free = self.hier and any("ascending_node" in p.quantities for p in s.planets)
        if self.node_ref_free:
            add("node_ref")
        self.star_mass_free = s.star.mass.kind != "exact"
        if self.star_mass_free:
            add("mstar")
        self.star_scale = None
        if s.star.radius is not None:
            self.star_scale = "radius"
        elif s.star.density is not None:
            self.star_scale = "density"
        self.star_scale_free = self.star_scale is not None and getattr(s.star, self.star_scale).kind != "exact"
        if self.star_scale_free:
            add("rstar")
        self.ndim = idx
        self._cols = {"cosi": [self.ix[f"cosi{j}"] for j in range(self.np_) if f"cosi{j}" in self.ix],
                      "x": [self.ix[f"x{j}"] for j in self.free_ecc],
                      "y": [self.ix[f"y{j}"] for j in self.free_ecc]}
        self._terms = {}
        for fld in ("ecc", "secosw", "sesinw", "ecosw", "esinw", "mass", "msini", "k", "inclination", "b"):
            rows = [(j, _term(p.quantities[fld], fld)) for j, p in enumerate(s.planets)
                    if fld in p.quantities and not (fld == "ecc" and j in self.fixed_ecc)]
            rows = [(j, g) for j, g in rows if g is not None]
            if rows:
                cen = np.array([g[0] for _, g in rows])
                sm = np.array([g[1] for _, g in rows])
                sp = np.array([g[2] for _, g in rows])
                # each half of an asymmetric normal holds probability 1/2, so its density
                # scales as 1/width; limits (one infinite width) and symmetric terms get none
                asym = np.isfinite(sm) & np.isfinite(sp) & (sm != sp)
                self._terms[fld] = (np.array([j for j, _ in rows]), cen, 1.0 / sm, 1.0 / sp,
                                    np.where(asym, np.log(sm), 0.0), np.where(asym, np.log(sp), 0.0))
        self._angles = []
        for fld, key in (("omega", "omega"), ("ascending_node", "node")):
            for j, p in enumerate(s.planets):
                q = p.quantities.get(fld)
                if fld == "omega" and j in self.fixed_ecc:
                    continue
                if q is not None and q.kind != "exact" and q.sigma > 0:
                    self._angles.append((key, j, math.radians(q.value), math.radians(q.sigma)))
        # transit geometry: which planets must (not) transit
        self._geom = np.array([j for j, p in enumerate(s.planets) if p.transiting is not None or "b" in p.quantities], int)
        self._must_transit = np.array([bool(p.transiting or (p.transiting is None and "b" in p.quantities))
                                       for p in s.planets])[self._geom] if len(self._geom) else np.zeros(0, bool)
        self._ror = np.array([p.quantities["ror"].center if "ror" in p.quantities else 0.0
                              for p in s.planets])[self._geom] if len(self._geom) else np.zeros(0)

    # ------------------------------------------------------------------
    def unpack(self, theta):
        """Physical quantities (arrays over walkers) from parameter vectors (nw, ndim).

        ``cos_i`` is |cos i| (signed for planets with an astrometric inclination).
        """
        th = np.atleast_2d(theta)
        nw = th.shape[0]
        s = self.system
        c = {}
        x = np.empty((nw, self.np_))
        y = np.empty((nw, self.np_))
        x[:, self.free_ecc] = th[:, self._cols["x"]]
        y[:, self.free_ecc] = th[:, self._cols["y"]]
        for j, (e0, w0) in self.fixed_ecc.items():
            x[:, j] = math.sqrt(e0) * math.cos(w0)
            y[:, j] = math.sqrt(e0) * math.sin(w0)
        c["x"], c["y"] = x, y
        c["ecc"] = x * x + y * y
        c["omega"] = np.arctan2(y, x)
        c["cos_i"] = th[:, self._cols["cosi"]].copy() if not self.orient_free else np.zeros((nw, self.np_))
        node = np.zeros((nw, self.np_))
        for j in range(self.np_):
            if f"node{j}" in self.ix:
                node[:, j] = th[:, self.ix[f"node{j}"]]
        c["inc"] = np.arccos(np.clip(c["cos_i"], -1.0, 1.0))
        c["node_ref"] = th[:, self.ix["node_ref"]] if self.node_ref_free else np.zeros(nw)
        if self.hier:
            c["logsigma"] = th[:, self.ix["logsigma"]]
            c["sigma"] = np.exp(c["logsigma"])
            c["cosI"] = th[:, self.ix["cosI"]]
            if self.tanh_planets:
                t = self.tanh_planets
                A = np.arctanh(np.clip(c["cosI"], 0.0, 1.0 - 1e-12))[:, None]
                ci = np.tanh(A + c["sigma"][:, None] * th[:, [self._cols["cosi"][j] for j in t]])
                c["cos_i"][:, t] = ci
                c["log_jac_cos"] = np.sum(np.log(c["sigma"][:, None] * np.maximum(1.0 - ci * ci, 1e-300)), axis=1)
                c["inc"] = np.arccos(np.clip(c["cos_i"], -1.0, 1.0))
            # node parameters are scaled by sigma (see NODE_SCALING); keep the Jacobian
            sw = c["sigma"][:, None] * node
            c["node"] = c["node_ref"][:, None] + 2.0 * np.arctan(sw)
            c["log_jac_node"] = np.sum(np.log(2.0 * c["sigma"][:, None] / (1.0 + sw * sw)), axis=1)
            c["node_w"] = node
        else:
            c["node"] = node
            c["logsigma"] = np.zeros(nw)
            c["sigma"] = np.full(nw, np.nan)
            c["cosI"] = np.zeros(nw)
        c["m_star"] = th[:, self.ix["mstar"]] if self.star_mass_free else np.full(nw, s.star.mass.center)
        if self.star_scale is not None:
            meas = getattr(s.star, self.star_scale)
            c["star_scale"] = th[:, self.ix["rstar"]] if self.star_scale_free else np.full(nw, meas.center)
        P = np.empty((nw, self.np_))
        for j, p in enumerate(s.planets):
            P[:, j] = th[:, self.ix[f"P{j}"]] if j in self.free_periods else p.period.center
        c["period"] = P
        m = np.zeros((nw, self.np_))
        sin_i = np.sin(c["inc"])
        for j in self.mass_planets:
            m[:, j] = np.exp(th[:, self.ix[f"logmsini{j}"]]) / np.maximum(sin_i[:, j], 1e-12)
        c["mass"] = m
        c["a"] = kepler.a_au(P, c["m_star"][:, None] + m)
        return c

    def ref_normal(self, c):
        cI = np.clip(c["cosI"], -1.0, 1.0)
        return _normal(cI, c["node_ref"])

    def orientation_terms(self, c):
        """log prior terms (nw, n_planets, 2) of the two signs of cos i (+, -)."""
        nref = self.ref_normal(c)                                  # (nw, 3)
        ci = c["cos_i"]
        si = np.sqrt(np.clip(1.0 - ci * ci, 0.0, 1.0))
        node = c["node"]
        common = si * (np.sin(node) * nref[:, 0:1] - np.cos(node) * nref[:, 1:2])
        zpart = ci * nref[:, 2:3]
        sig = c["sigma"][:, None]
        return np.stack([_log_tilt_density(common + zpart, sig),
                         _log_tilt_density(common - zpart, sig)], axis=-1)

    def _aor(self, c):
        if self.star_scale == "radius":
            return c["a"] / (c["star_scale"][:, None] * RSUN_AU)
        if self.star_scale == "density":
            return transit.a_over_rstar_from_density(c["star_scale"][:, None], c["period"])
        return None

    def log_prob(self, theta):
        """Vectorised log-posterior over walkers: theta (nw, ndim) -> (nw,)."""
        theta = np.atleast_2d(theta)
        s = self.system
        c = self.unpack(theta)
        nw = theta.shape[0]
        lp = np.zeros(nw)
        e = c["ecc"]
        ok = np.all(e < 1.0, axis=1)
        if self.hier:
            ok &= (c["cosI"] >= 0.0) & (c["cosI"] <= 1.0)
        ok &= np.all(c["mass"] < MASS_CAP, axis=1) if self.mass_planets else True
        ok &= (c["m_star"] > 0)
        if self.star_scale is not None:
            ok &= c["star_scale"] > 0
        if self.free_periods:
            ok &= np.all(c["period"] > 0, axis=1)
        if not self.orient_free:
            raw_c = theta[:, self._cols["cosi"]]
            folded = ~np.asarray(self.signed)
            ok &= np.all(np.where(folded, (raw_c >= 0.0) & (raw_c <= 1.0), True), axis=1)
        ok &= np.all(np.abs(c["cos_i"]) <= 1.0, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            if self.hier:
                # hierarchical orientation prior, summed over the unobservable sign of cos i
                terms = self.orientation_terms(c)
                signed = np.asarray(self.signed)
                orient = np.where(signed, terms[..., 0], np.logaddexp(terms[..., 0], terms[..., 1]))
                lp += np.sum(orient, axis=1) + c["log_jac_node"] + c.get("log_jac_cos", 0.0)
                # prior on sigma (the prior file is in degrees) with the Jacobian of log sigma
                sig_deg = np.degrees(c["sigma"])
                lp += np.where(ok, self.sigma_prior.logpdf(np.where(ok, sig_deg, 1.0)), 0.0) + c["logsigma"]
            # (one planet: isotropic orientation, flat in cos i and node -> constant)
            # eccentricity prior (flat in (x, y) is flat in e; add the prior density in e)
            ef = e[:, self.free_ecc]
            lp += np.sum(self.ecc_prior.logpdf_e(np.where(ef < 1.0, ef, 0.5)), axis=1)
        # mass prior: flat in m sin i; the parameter is log(m sin i) -> Jacobian m sin i
        for j in self.mass_planets:
            lp += theta[:, self.ix[f"logmsini{j}"]]
        # star and period summaries act as priors
        if self.star_mass_free:
            lp += s.star.mass.log_likelihood(c["m_star"])
        if self.star_scale_free:
            lp += getattr(s.star, self.star_scale).log_likelihood(c["star_scale"])
        for j in self.free_periods:
            lp += s.planets[j].period.log_likelihood(c["period"][:, j])
        lp += self._log_like(c)
        # orbits may not cross
        if self.np_ >= 2:
            a = c["a"]
            ok &= np.all(a[:, :-1] * (1 + e[:, :-1]) < a[:, 1:] * (1 - e[:, 1:]), axis=1)
        if self.require_stable and self.np_ >= 2:
            ok &= self._stable(c)
        lp = np.where(ok & np.isfinite(lp), lp, _NEG)
        return lp

    @staticmethod
    def _gauss(x, term):
        """Sum over planets of the log density of an asymmetric normal (or one-sided limit)."""
        _, cen, inv_m, inv_p, lw_m, lw_p = term
        d = x - cen
        neg = d < 0
        r = d * np.where(neg, inv_m, inv_p)
        return np.sum(-0.5 * r * r - np.where(neg, lw_m, lw_p), axis=1)

    def _log_like(self, c):
        """Sum of the summary likelihoods, vectorised over walkers and planets."""
        T = self._terms
        e, w = c["ecc"], c["omega"]
        ll = np.zeros(e.shape[0])
        if "ecc" in T:
            ll += self._gauss(e[:, T["ecc"][0]], T["ecc"])
        if "secosw" in T:
            ll += self._gauss(c["x"][:, T["secosw"][0]], T["secosw"])
            ll += self._gauss(c["y"][:, T["sesinw"][0]], T["sesinw"])
        if "ecosw" in T:
            ll += self._gauss((e * np.cos(w))[:, T["ecosw"][0]], T["ecosw"])
            ll += self._gauss((e * np.sin(w))[:, T["esinw"][0]], T["esinw"])
        for key, j, mu, sd in self._angles:
            d = (c[key][:, j] - mu + np.pi) % (2 * np.pi) - np.pi
            ll += -0.5 * (d / sd) ** 2
        sin_i = np.sin(c["inc"])
        if "mass" in T:
            ll += self._gauss(c["mass"][:, T["mass"][0]] / MEARTH_MSUN, T["mass"])
        if "msini" in T:
            j = T["msini"][0]
            ll += self._gauss(c["mass"][:, j] * sin_i[:, j] / MEARTH_MSUN, T["msini"])
        if "k" in T:
            j = T["k"][0]
            K = kepler.k_from_mass_ms(c["period"][:, j], c["mass"][:, j], c["m_star"][:, None],
                                      np.minimum(e[:, j], 0.999999), sin_i[:, j])
            ll += self._gauss(K, T["k"])
        if "inclination" in T:
            ll += self._gauss(np.degrees(c["inc"][:, T["inclination"][0]]), T["inclination"])
        if len(self._geom) and self.has_transits:
            g = self._geom
            aor = self._aor(c)
            b = np.abs(transit.impact_parameter(aor[:, g], c["inc"][:, g], e[:, g], w[:, g]))
            if "b" in T:
                jb = np.searchsorted(g, T["b"][0])
                ll += self._gauss(b[:, jb], T["b"])
            edge = 1.0 + self._ror
            ok = np.all(np.where(self._must_transit, b < edge, b > edge), axis=1)
            ll = np.where(ok, ll, _NEG)
        return ll

    def _stable(self, c):
        from ...physics import amd, hill
        m = self.full_masses(c)
        a, e = c["a"], c["ecc"]
        ms = c["m_star"][:, None]
        good = np.all(m > 0, axis=1) & np.all(np.isfinite(m), axis=1)
        out = np.zeros(a.shape[0], dtype=bool)
        if good.any():
            g = good
            mg = m[g]
            margin = hill.gladman_margin(a[g, :-1], a[g, 1:], mg[:, :-1], mg[:, 1:], ms[g], e[g, :-1], e[g, 1:])
            st = np.all(margin > 0, axis=1)
            st &= amd.amd_stable(mg, a[g], e[g], np.zeros_like(e[g]), c["m_star"][g])[1]
            out[g] = st
        return out

    def full_masses(self, c):
        """Masses of all planets [M_sun] for stability: sampled ones, else the radius relation median."""
        m = c["mass"].copy()
        for j, p in enumerate(self.system.planets):
            if j not in self.mass_planets:
                if "radius" in p.quantities:
                    m[:, j] = mass_from_radius_mearth(p.quantities["radius"].center) * MEARTH_MSUN
                else:
                    m[:, j] = np.nan
        return m
