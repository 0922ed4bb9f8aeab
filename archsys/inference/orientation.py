"""The orientation block of the joint engine: reference plane, dispersion and orbit normals.

The joint posterior of a system is nearly separable: periods, the star,
eccentricities and masses are independent given their summaries, and the
planets couple only through the hierarchical orientation model (a common
reference plane and a mutual-inclination dispersion sigma), the transit
geometry, non-crossing orbits and (optionally) stability.  The engine
(:mod:`archsys.inference.joint`) therefore draws everything except the
orientations exactly, and samples only this block with emcee.

Hierarchical model
------------------
Each orbit normal is tilted from the reference normal by psi ~ Rayleigh(sigma)
at a uniform azimuth: a density Rayleigh(psi; sigma) / (2 pi sin psi) per unit
solid angle, truncated at psi = pi.  On the sphere, (cos i, Omega) are
uniform coordinates (area element d cos i d Omega), so this is also the
density in (cos i, Omega).  Orbit normals in the sky frame (z towards the
observer): n = (sin i sin Omega, -sin i cos Omega, cos i).

Parameters per planet (by what the data say about its orientation)
-------------------------------------------------------------------
``b``      transiting (impact-parameter summary, or ``transiting = true``):
           the true impact parameter beta in [0, 1 + Rp/R*].  |cos i| =
           beta g with g = (1 + e sin w) / ((1 - e^2) a/R*) (Winn 2010 eq. 7),
           so the impact-parameter likelihood is separable; g varies from
           draw to draw with the star, the period and the eccentricity, and
           the engine corrects for that by importance weights (g0 here is the
           median).  Transits cannot tell i from 180 - i: the prior is summed
           over both signs of cos i and a sign is drawn afterwards.
``incl``   a sky inclination summary: signed cos i in [-1, 1].
``fixed``  an exact inclination: no parameter.
``free``   no orientation data: z with cos i = tanh(atanh(cos I) + sigma z)
           (non-centred, no funnel between sigma and the orientation).
Nodes: w with Omega = Omega_ref + 2 arctan(sigma w) (a bijection onto
(-pi, pi) for every sigma; no funnel); an exact node has no parameter, a node
summary is a likelihood on the wrapped angle.

Per system: log sigma [rad] (prior from a ``mutual_inclination_sigma`` prior
file, in degrees), cos I_ref (flat: isotropic; in [0, 1] when every planet's
sign of cos i is unobservable, else in [-1, 1]) and Omega_ref (free only when
some node is known; otherwise rotation about the line of sight is a symmetry).
"""
from __future__ import annotations

import math

import numpy as np

from .tilts import classify, log_tilt_density_raw, orbit_normals

__all__ = ["OrientationModel"]

_NEG = -np.inf


def _clip(x, lo, hi):
    """np.clip(x, lo, hi) for lo <= hi (the same numbers, NaN kept) without its call overhead."""
    return np.minimum(np.maximum(x, lo), hi)


class OrientationModel:
    """Log-density of the orientation block, vectorised over walkers (or draws).

    Parameters
    ----------
    system : System
    sigma_prior : Prior
        Prior on sigma in degrees.
    g0 : ndarray (n_planets,)
        |cos i| per unit impact parameter at the median of the other parameters
        (NaN for planets without transit geometry).
    g_nt : ndarray (n_planets,)
        Lower bound of g over the draws, for the non-transit condition inside
        the sampler (so that its support covers every draw's exact condition).
    """

    def __init__(self, system, sigma_prior, g0, g_nt, standardise=True):
        self.b_std = standardise
        self.system = system
        self.sigma_prior = sigma_prior
        self.np_ = system.n_planets
        self.g0 = np.asarray(g0, float)
        self.g_nt = np.asarray(g_nt, float)
        self.kinds = classify(system, True)
        for j, k in enumerate(self.kinds):
            if k == "b" and not np.isfinite(self.g0[j]):
                self.kinds[j] = "free"
        self.folded = np.array([k == "b" for k in self.kinds])
        self._fold_any, self._fold_all = bool(self.folded.any()), bool(self.folded.all())
        self.names, self.ix = [], {}

        def add(name):
            self.ix[name] = len(self.names)
            self.names.append(name)

        add("logsigma")
        add("cosI")
        planets = system.planets
        self.node_info = any("ascending_node" in p.quantities for p in planets)
        if self.node_info:
            add("node_ref")
        self.signed_any = any(k in ("incl", "fixed") for k in self.kinds)
        self.cosI_lo = -1.0 if self.signed_any else 0.0
        self.b_fixed = {}
        self.ror = np.zeros(self.np_)
        for j, (p, k) in enumerate(zip(planets, self.kinds)):
            q = p.quantities
            if "ror" in q:
                self.ror[j] = q["ror"].center
            if k == "b":
                if "b" in q and q["b"].kind == "exact":
                    self.b_fixed[j] = float(q["b"].value)
                else:
                    add(f"beta{j}")
            elif k == "incl":
                add(f"cosi{j}")
            elif k == "free":
                add(f"z{j}")
            node = q.get("ascending_node")
            if node is None or node.kind != "exact":
                add(f"w{j}")
        self.ndim = len(self.names)
        self.fixed_cos = {j: math.cos(math.radians(p.quantities["inclination"].value))
                          for j, (p, k) in enumerate(zip(planets, self.kinds)) if k == "fixed"}
        self.fixed_node = {j: math.radians(p.quantities["ascending_node"].value)
                           for j, p in enumerate(planets)
                           if "ascending_node" in p.quantities and p.quantities["ascending_node"].kind == "exact"}
        self.node_like = [(j, math.radians(p.quantities["ascending_node"].value),
                           math.radians(p.quantities["ascending_node"].sigma))
                          for j, p in enumerate(planets)
                          if "ascending_node" in p.quantities and p.quantities["ascending_node"].kind != "exact"]
        self._b_gauss = {}
        for j, (p, k) in enumerate(zip(planets, self.kinds)):
            if k == "b" and j not in self.b_fixed:
                gp = p.quantities["b"].gauss_params() if "b" in p.quantities else None
                top = 1.0 + self.ror[j]
                if gp is None:
                    self._b_gauss[j] = (0.5 * top, top / math.sqrt(12.0))
                else:
                    cen, sm, sp = gp
                    widths = [w for w in (sm, sp) if math.isfinite(w)]
                    self._b_gauss[j] = (cen, max(float(np.mean(widths)), 1e-6))
        #: Gaussian summaries of |cos i| of the planets with orientation data, for the standardised
        #: coordinate of the reference plane (see _ref_conditional)
        ref = []
        if self.b_std:
            for j, k in enumerate(self.kinds):
                if k == "b":
                    y, sd = self._b_gauss.get(j, (self.b_fixed.get(j, 0.0), 0.0))
                    ref.append((y * self.g0[j], sd * self.g0[j]))
                elif k == "incl":
                    meas = planets[j].quantities["inclination"]
                    i0 = math.radians(meas.center)
                    ref.append((math.cos(i0), abs(math.sin(i0)) * math.radians(meas.sigma)))
                elif k == "fixed":
                    ref.append((self.fixed_cos[j], 0.0))
        self._ref_info = bool(ref)
        self._ref_y = np.array([r[0] for r in ref])
        self._ref_s2 = np.array([r[1] for r in ref]) ** 2
        self.b_like = [(j, p.quantities["b"]) for j, (p, k) in enumerate(zip(planets, self.kinds))
                       if k == "b" and "b" in p.quantities and p.quantities["b"].kind != "exact"]
        self.i_like = [(j, p.quantities["inclination"]) for j, (p, k) in enumerate(zip(planets, self.kinds))
                       if k == "incl"]
        transits = any(p.transiting or "b" in p.quantities for p in planets)
        self.non_transit = [j for j, p in enumerate(planets)
                            if transits and p.transiting is False and "b" not in p.quantities
                            and np.isfinite(self.g_nt[j])]
        self._vectorise()
        self._g0_cache = {}
        self._i_gauss = []
        for j, meas in self.i_like:
            gp = meas.gauss_params()
            if gp is not None:
                cen, sm, sp = gp
                asym = math.isfinite(sm) and math.isfinite(sp) and sm != sp
                gp = (cen, sm, sp, math.log(sm) if asym else None, math.log(sp) if asym else None)
            self._i_gauss.append((j, gp))

    def _vectorise(self):
        """Index arrays so that unpack and log_prob never loop over planets."""
        ix, K = self.ix, self.kinds
        jb = [j for j, k in enumerate(K) if k == "b" and j not in self.b_fixed]
        jbf = sorted(self.b_fixed)
        ji = [j for j, k in enumerate(K) if k == "incl"]
        jf = [j for j, k in enumerate(K) if k == "fixed"]
        jz = [j for j, k in enumerate(K) if k == "free"]
        jw = [j for j in range(self.np_) if j not in self.fixed_node]
        jnf = sorted(self.fixed_node)
        arr = lambda x: np.array(x, dtype=int)  # noqa: E731
        self._vec = {
            "jb": arr(jb), "cb": arr([ix[f"beta{j}"] for j in jb]), "jbf": arr(jbf),
            "bf": np.array([self.b_fixed[j] for j in jbf]), "jall_b": arr(sorted(jb + jbf)),
            "ji": arr(ji), "ci": arr([ix[f"cosi{j}"] for j in ji]),
            "jf": arr(jf), "cf": np.array([self.fixed_cos[j] for j in jf]),
            "jz": arr(jz), "cz": arr([ix[f"z{j}"] for j in jz]),
            "jw": arr(jw), "cw": arr([ix[f"w{j}"] for j in jw]),
            "jnf": arr(jnf), "nf": np.array([self.fixed_node[j] for j in jnf]),
            "top_b": 1.0 + self.ror[jb], "nt": arr(self.non_transit), "top_nt": 1.0 + self.ror[self.non_transit],
        }
        gi = []
        for j in ji:
            meas = self.system.planets[j].quantities["inclination"]
            i0 = math.radians(meas.center)
            gi.append((math.cos(i0), max(abs(math.sin(i0)) * math.radians(meas.sigma), 1e-6)))
        self._gi_y = np.array([x[0] for x in gi])
        self._gi_s = np.array([x[1] for x in gi])
        self._gb_y = np.array([self._b_gauss[j][0] for j in jb])
        self._gb_s = np.array([self._b_gauss[j][1] for j in jb])
        self._g0_b = self.g0[jb] if jb else np.zeros(0)
        self._gb_inv_s2 = 1.0 / (self._gb_s * self._gb_s)
        self._gb_y_s2 = self._gb_y / (self._gb_s * self._gb_s)
        # vectorised split-normal likelihood of the impact parameters
        rows = [(np.searchsorted(jb, j), meas.gauss_params()) for j, meas in self.b_like]
        rows = [(k, gp) for k, gp in rows if gp is not None]
        self._bl = None
        if rows:
            cen = np.array([gp[0] for _, gp in rows])
            sm = np.array([gp[1] for _, gp in rows])
            sp = np.array([gp[2] for _, gp in rows])
            asym = np.isfinite(sm) & np.isfinite(sp) & (sm != sp)
            self._bl = (arr([k for k, _ in rows]), cen, 1.0 / sm, 1.0 / sp,
                        np.where(asym, np.log(sm), 0.0), np.where(asym, np.log(sp), 0.0))

    # ------------------------------------------------------------------
    def unpack(self, theta, g=None):
        """Physical orientation quantities from parameter rows (m, ndim).

        ``g`` (m, n_planets) or (n_planets,): |cos i| per unit impact parameter
        (default ``g0``).  ``u`` is cos i, folded (>= 0) for 'b' planets.
        """
        return self._with_g(self._unpack_common(np.atleast_2d(theta)), g)

    def cos_ref(self, theta):
        """cos I of parameter rows: :meth:`unpack`'s ``cosI`` alone (the same operations)."""
        th = np.atleast_2d(theta)
        if self._ref_info:
            mean, sd = self._ref_conditional(np.exp(th[:, self.ix["logsigma"]]))
            return mean + sd * th[:, self.ix["cosI"]]
        return th[:, self.ix["cosI"]]

    def _unpack_common(self, th):
        """What :meth:`unpack` computes independently of ``g``: everything but the 'b' planets'
        cos i, with the log-Jacobian's terms kept apart (added in the same order by _with_g)."""
        m = th.shape[0]
        ix = self.ix
        c = {"sigma": np.exp(th[:, ix["logsigma"]]), "logsigma": th[:, ix["logsigma"]]}
        if self._ref_info:
            mean, sd = self._ref_conditional(c["sigma"])
            c["cosI"] = mean + sd * th[:, ix["cosI"]]
            log_jac0 = np.log(sd)
        else:
            c["cosI"] = th[:, ix["cosI"]]
            log_jac0 = 0.0
        c["node_ref"] = th[:, ix["node_ref"]] if self.node_info else np.zeros(m)
        sig = c["sigma"]
        u = np.empty((m, self.np_))
        node = np.empty((m, self.np_))
        beta = np.full((m, self.np_), np.nan)
        before, after = [], []            # log-Jacobian terms before and after the g term
        V = self._vec
        if len(V["jb"]):
            if self.b_std:
                mean, sd = self._beta_conditional(V["jb"], c["cosI"][:, None], sig[:, None])
                beta[:, V["jb"]] = mean + sd * th[:, V["cb"]]
                before.append(np.add.reduce(np.log(sd), axis=1))
            else:
                beta[:, V["jb"]] = th[:, V["cb"]]
        if len(V["jbf"]):
            beta[:, V["jbf"]] = V["bf"]
        if len(V["ji"]):
            if self.b_std:
                mean, sd = self._gauss_conditional(self._gi_y, self._gi_s, None, c["cosI"][:, None], sig[:, None])
                u[:, V["ji"]] = mean + sd * th[:, V["ci"]]
                after.append(np.add.reduce(np.log(sd), axis=1))
            else:
                u[:, V["ji"]] = th[:, V["ci"]]
        if len(V["jf"]):
            u[:, V["jf"]] = V["cf"]
        if len(V["jz"]):
            A = np.arctanh(_clip(c["cosI"], -1.0 + 1e-12, 1.0 - 1e-12))[:, None]
            uz = np.tanh(A + sig[:, None] * th[:, V["cz"]])
            u[:, V["jz"]] = uz
            with np.errstate(divide="ignore"):
                after.append(np.add.reduce(np.log(sig[:, None] * np.maximum(1.0 - uz * uz, 0.0)), axis=1))
        if len(V["jw"]):
            sw = sig[:, None] * th[:, V["cw"]]
            node[:, V["jw"]] = c["node_ref"][:, None] + 2.0 * np.arctan(sw)
            after.append(np.add.reduce(np.log(2.0 * sig[:, None] / (1.0 + sw * sw)), axis=1))
        if len(V["jnf"]):
            node[:, V["jnf"]] = V["nf"]
        c.update(u=u, node=node, beta=beta, _jac=(log_jac0, before, after))
        return c

    def _with_g(self, base, g):
        """:meth:`unpack`'s result from :meth:`_unpack_common`'s and ``g``."""
        m = base["sigma"].shape[0]
        log_jac0, before, after = base["_jac"]
        c = {k: v for k, v in base.items() if k != "_jac"}
        log_jac = np.zeros(m) + log_jac0
        for term in before:
            log_jac += term
        V = self._vec
        if len(V["jall_b"]):
            u = base["u"].copy()
            gb, log_gb = self._g_columns(g, m)
            u[:, V["jall_b"]] = base["beta"][:, V["jall_b"]] * gb
            log_jac += log_gb
            c["u"] = u
        for term in after:
            log_jac += term
        c["log_jac"] = log_jac
        return c

    def _g_columns(self, g, m):
        """The 'b' planets' g (m, n_b) and the sum of their logs (m,); for g0 kept per m (the
        emcee walkers call with the same m at every step)."""
        if g is None:
            hit = self._g0_cache.get(m)
            if hit is not None:
                return hit
        gg = np.broadcast_to(np.asarray(self.g0 if g is None else g, float), (m, self.np_))
        gb = gg[:, self._vec["jall_b"]]
        out = (gb, np.add.reduce(np.log(gb), axis=1))
        if g is None:
            if len(self._g0_cache) > 16:
                self._g0_cache.clear()
            self._g0_cache[m] = out
        return out

    def _ref_conditional(self, sigma):
        """Mean and width of cos I given sigma in a Gaussian approximation: each planet with
        orientation data has |cos i| ~ N(cos I, sigma^2 + s_j^2).  The sampled coordinate is cos I
        standardised by them (this removes the funnel between sigma and the reference plane)."""
        w = 1.0 / (sigma[:, None] ** 2 + self._ref_s2[None, :] + 1e-300)
        prec = np.add.reduce(w, axis=1)
        return np.add.reduce(w * self._ref_y[None, :], axis=1) / prec, 1.0 / np.sqrt(prec)

    @staticmethod
    def _gauss_conditional(y, s, g, cosI, sigma):
        """Mean and width of x given (cos I, sigma) when |cos i| = x g has the Gaussian prior
        N(cos I, (sigma sin I)^2) and x the Gaussian summary N(y, s^2).  ``g=None``: g = 1 (the
        divisions by it are left out, which changes no number, and the (cos I, sigma) factors stay
        one column until they meet the summaries)."""
        tau = sigma * np.sqrt(_clip(1.0 - cosI * cosI, 1e-12, 1.0))
        if g is not None:
            tau = tau / g
            cosI = cosI / g
        tt = tau * tau
        prec = 1.0 / tt + 1.0 / (s * s)
        mean = (cosI / tt + y / (s * s)) / prec
        return mean, 1.0 / np.sqrt(prec)

    def _beta_conditional(self, jb, cosI, sigma):
        """Mean and width of the impact parameter of planet j given (cos I, sigma) in a Gaussian
        approximation (prior |cos i| ~ N(cos I, (sigma sin I)^2), summary ~ N(y, s^2)).

        The sampled coordinate is beta standardised by them: this removes the funnel between
        sigma and the impact parameters (the exact density is still evaluated in beta)."""
        if jb is self._vec["jb"]:          # every 'b' planet: the constants kept by _vectorise
            g, inv_s2, y_s2 = self._g0_b, self._gb_inv_s2, self._gb_y_s2
        else:
            k = np.searchsorted(self._vec["jb"], jb)
            g, y, s = self._g0_b[k], self._gb_y[k], self._gb_s[k]
            inv_s2, y_s2 = 1.0 / (s * s), y / (s * s)
        tau = sigma * np.sqrt(_clip(1.0 - cosI * cosI, 1e-12, 1.0)) / g
        tt = tau * tau
        prec = 1.0 / tt + inv_s2
        mean = (cosI / g / tt + y_s2) / prec
        return mean, 1.0 / np.sqrt(prec)

    def ref_normal(self, c):
        return orbit_normals(_clip(c["cosI"], -1.0, 1.0), c["node_ref"])

    def sign_terms(self, c, mirror=True, like=None):
        """log prior densities (m, n_planets, 2) of the orbit normal with cos i = +|u| and -|u|
        (for signed planets the first entry is the density at the signed u).  ``mirror=False``:
        for signed planets the second entry repeats the first (their mirror image is never used
        by the engine).  ``like``: the terms of the same parameters under another g (only the
        'b' planets' cos i differs), whose other columns are taken as they are.

        The components of the reference normal are those of :meth:`ref_normal`, and every tilt
        density is evaluated in one call (elementwise, so the same numbers)."""
        cI = _clip(c["cosI"], -1.0, 1.0)
        sin_I = np.sqrt(_clip(1.0 - cI * cI, 0.0, 1.0))
        node_ref = c["node_ref"]
        n0 = (sin_I * np.sin(node_ref))[:, None]
        n1 = (-sin_I * np.cos(node_ref))[:, None]
        n2 = cI[:, None]
        sig = c["sigma"][:, None]
        f = self.folded
        with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
            if like is not None:
                out = like.copy()
                if self._fold_any:
                    au = np.abs(c["u"][:, f])
                    si = np.sqrt(_clip(1.0 - au * au, 0.0, 1.0))
                    node = c["node"][:, f]
                    common = si * (np.sin(node) * n0 - np.cos(node) * n1)
                    zpart = au * n2
                    k = common.shape[1]
                    both = log_tilt_density_raw(np.concatenate([common + zpart, common - zpart], axis=1), sig)
                    out[:, f, 0] = both[:, :k]
                    out[:, f, 1] = both[:, k:]
                return out
            u = c["u"]
            au = np.where(f, np.abs(u), u)
            si = np.sqrt(_clip(1.0 - au * au, 0.0, 1.0))
            node = c["node"]
            common = si * (np.sin(node) * n0 - np.cos(node) * n1)
            zpart = au * n2
            npl = u.shape[1]
            out = np.empty(u.shape + (2,))
            if mirror or self._fold_all:
                both = log_tilt_density_raw(np.concatenate([common + zpart, common - zpart], axis=1), sig)
                out[..., 0] = both[:, :npl]
                out[..., 1] = both[:, npl:]
            elif self._fold_any:      # the mirror image only where the sign of cos i is unobserved
                both = log_tilt_density_raw(np.concatenate([common + zpart, common[:, f] - zpart[:, f]], axis=1),
                                            sig)
                out[..., 0] = both[:, :npl]
                out[..., 1] = out[..., 0]
                out[:, f, 1] = both[:, npl:]
            else:
                out[..., 0] = log_tilt_density_raw(common + zpart, sig)
                out[..., 1] = out[..., 0]
        return out

    def log_prob(self, theta, g=None, g_nt=None, parts=False):
        """Log-density of the orientation block (m,), with the geometry factor ``g``.

        ``g_nt`` is the factor used in the non-transit condition |cos i| > (1 + Rp/R*) g;
        inside the sampler it is the lower bound ``self.g_nt``.  ``parts=True`` returns
        ``(log_prob, unpack(theta, g), sign_terms(...))``: the engine reuses them.
        """
        c = self.unpack(theta, g)
        out, terms = self._log_prob_of(c, g_nt)
        return (out, c, terms) if parts else out

    def log_prob_pair(self, theta, g):
        """``log_prob(theta)`` and ``log_prob(theta, g, g_nt=g, parts=True)`` together: the same
        numbers, with what does not depend on g (all but the 'b' planets' cos i) computed once."""
        base = self._unpack_common(np.atleast_2d(theta))
        c0, c1 = self._with_g(base, None), self._with_g(base, g)
        out0, t0 = self._log_prob_of(c0, None)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            t1 = self.sign_terms(c1, like=t0)
        out1, _ = self._log_prob_of(c1, g, t1)
        return out0, (out1, c1, t1)

    def _log_prob_of(self, c, g_nt, terms=None):
        """(log_prob, sign terms) from unpacked parameters ``c`` (terms computed unless given)."""
        ok = (c["cosI"] >= self.cosI_lo) & (c["cosI"] <= 1.0)
        V = self._vec
        if len(V["jb"]):
            bj = c["beta"][:, V["jb"]]
            ok &= np.logical_and.reduce((bj >= 0.0) & (bj <= V["top_b"]), axis=1)
        ok &= np.logical_and.reduce(np.abs(c["u"]) <= 1.0, axis=1)
        if len(V["nt"]):
            gnt = self.g_nt if g_nt is None else g_nt
            gnt = np.broadcast_to(np.asarray(gnt, float), c["u"].shape)
            ok &= np.logical_and.reduce(np.abs(c["u"][:, V["nt"]]) > V["top_nt"] * gnt[:, V["nt"]], axis=1)
        with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
            if terms is None:
                terms = self.sign_terms(c, mirror=False)
            orient = np.where(self.folded, np.logaddexp(terms[..., 0], terms[..., 1]), terms[..., 0])
            sig_deg = np.degrees(c["sigma"])
            lp = (np.add.reduce(orient, axis=1) + c["log_jac"]
                  + self.sigma_prior.logpdf(np.where(ok, sig_deg, 1.0)) + c["logsigma"])
            if self._bl is not None:
                k, cen, inv_m, inv_p, lw_m, lw_p = self._bl
                d = c["beta"][:, V["jb"][k]] - cen
                neg = d < 0
                r = d * np.where(neg, inv_m, inv_p)
                lp += np.add.reduce(-0.5 * r * r - np.where(neg, lw_m, lw_p), axis=1)
            for j, gp in self._i_gauss:
                # Measurement.log_likelihood of the inclination summary, its operations inlined
                x = np.degrees(np.arccos(_clip(c["u"][:, j], -1.0, 1.0)))
                if gp is None:
                    lp += np.zeros_like(x)
                    continue
                cen, sm, sp, log_sm, log_sp = gp
                d = x - cen
                neg = d < 0
                r = np.where(neg, d / sm, d / sp)
                lp += -0.5 * r * r - np.where(neg, log_sm, log_sp) if log_sm is not None else -0.5 * r * r
            for j, mu, sd in self.node_like:
                d = (c["node"][:, j] - mu + np.pi) % (2 * np.pi) - np.pi
                lp += -0.5 * (d / sd) ** 2
        return np.where(ok & np.isfinite(lp), lp, _NEG), terms
