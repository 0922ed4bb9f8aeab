"""The v0.1.0 engine, kept only as the baseline of ``python -m archsys.bench``.

One emcee run over every parameter of the system at once (eccentricities, orientations, masses,
periods, star); see :mod:`archsys.inference.baseline.v010_model`.  The joint engine
(:mod:`archsys.inference.joint`) replaces it everywhere else.
"""
from __future__ import annotations

import sys
import time
import warnings

import emcee
import numpy as np

from ...errors import ConvergenceWarning
from ...physics.constants import MEARTH_MSUN
from ...physics.massradius import SCATTER_DEX, mass_from_radius_mearth
from ..draws import direct_draws
from ..phases import add_phases
from ..posterior import Posterior
from ..sampler import _priors
from ..joint import _why
from .v010_model import SystemModel

__all__ = ["sample_full_model"]

#: Required chain length in integrated autocorrelation times.
N_TAU = 50
#: Burn-in, in autocorrelation times.
BURN_TAU = 3
_BLOCK = 500


def _initial(model, system, rng, nwalkers, seed):
    """Walker start positions drawn from the summaries, filtered by the joint constraints."""
    cand = []
    n_try = 4096
    for attempt in range(12):
        d = direct_draws(system, n=n_try, seed=seed + 7919 * (attempt + 1))
        th = np.empty((n_try, model.ndim))
        ix = model.ix
        e = np.clip(np.where(np.isfinite(d["ecc"]), d["ecc"], 0.0), 0.0, 0.95)
        # planets without eccentricity information start from the prior
        for j, p in enumerate(system.planets):
            if not any(k in p.quantities for k in ("ecc", "secosw", "ecosw")):
                e[:, j] = np.clip(model.ecc_prior.sample(rng, n_try), 0.0, 0.3)
        w = d["omega"]
        for j in model.free_ecc:
            th[:, ix[f"x{j}"]] = np.sqrt(e[:, j]) * np.cos(w[:, j])
            th[:, ix[f"y{j}"]] = np.sqrt(e[:, j]) * np.sin(w[:, j])
        # orientation: reference plane and dispersion, then normals from the hierarchy;
        # planets with a sky inclination from the summaries start there
        inc = d["inc"]
        known = np.isfinite(inc)
        if known.any():
            ci = np.nanmedian(np.where(known, np.abs(np.cos(inc)), np.nan), axis=1)
            ci = np.where(np.isfinite(ci), ci, rng.uniform(0, 1, n_try))
            sig = np.radians(rng.uniform(0.1, 2.0, n_try))
        else:
            ci = rng.uniform(0.0, 1.0, n_try)
            sig = np.radians(np.clip(model.sigma_prior.sample(rng, n_try), 0.1, 30.0))
        if model.hier:
            th[:, ix["cosI"]] = np.clip(ci, 0.0, 1.0)
            th[:, ix["logsigma"]] = np.log(sig)
        else:
            sig = np.zeros(n_try)
        if model.node_ref_free:
            th[:, ix["node_ref"]] = 0.0
        sinI = np.sqrt(1.0 - ci * ci)
        for j in range(model.np_ if not model.orient_free else 0):
            psi = sig * np.sqrt(-2.0 * np.log(rng.uniform(1e-12, 1.0, n_try)))
            phi = rng.uniform(-np.pi, np.pi, n_try)
            # rotate the tilted normal from the reference frame to the sky frame
            nx = np.sin(psi) * np.cos(phi)
            ny_ref = np.sin(psi) * np.sin(phi)
            nz_ref = np.cos(psi)
            nz = ci * nz_ref + sinI * ny_ref
            ny = ci * ny_ref - sinI * nz_ref
            cos_i = nz
            node = np.arctan2(nx, -ny)
            if known[:, j].any():
                cos_i = np.where(known[:, j], np.cos(inc[:, j]), cos_i)
            if model.cos_kind[j] == "tanh":
                A = np.arctanh(np.clip(ci, 0.0, 1.0 - 1e-12))
                th[:, ix[f"cosi{j}"]] = (np.arctanh(np.clip(cos_i, -1 + 1e-12, 1 - 1e-12)) - A) / sig
            else:
                th[:, ix[f"cosi{j}"]] = cos_i if model.signed[j] else np.abs(cos_i)
            if f"node{j}" in ix:
                # invert Omega = Omega_ref + 2 arctan(sigma w) for the hierarchical model
                th[:, ix[f"node{j}"]] = np.tan(np.clip(node, -3.1, 3.1) / 2.0) / sig if model.hier else node
        for j in model.mass_planets:
            m = d["mass"][:, j]
            ms = d["msini"][:, j]
            base = np.where(np.isfinite(ms), ms, m)
            th[:, ix[f"logmsini{j}"]] = np.log(np.clip(base, 1e-12, 0.07))
        for j in model.free_periods:
            th[:, ix[f"P{j}"]] = d["period"][:, j]
        if model.star_mass_free:
            th[:, ix["mstar"]] = d["m_star"]
        if model.star_scale_free:
            th[:, ix["rstar"]] = d["r_star"] if model.star_scale == "radius" else d["rho_star"]
        lp = model.log_prob(th)
        good = np.isfinite(lp)
        if good.any():
            cand.append((th[good], lp[good]))
        if sum(len(c[0]) for c in cand) >= 4 * nwalkers:
            break
    if not cand:
        return None
    th = np.concatenate([c[0] for c in cand])
    lp = np.concatenate([c[1] for c in cand])
    order = np.argsort(-lp)[: max(4 * nwalkers, nwalkers)]
    if len(order) < nwalkers:
        pick = rng.choice(order, nwalkers, replace=True)
        jitter = 1e-6 * rng.standard_normal((nwalkers, model.ndim))
        return th[pick] + jitter * np.maximum(np.abs(th[pick]), 1e-3)
    return th[rng.choice(order, nwalkers, replace=False)]


class _Progress:
    def __init__(self, enabled, name):
        self.enabled = enabled and sys.stderr.isatty()
        self.name = name
        self.t0 = time.perf_counter()

    def update(self, steps, target, tau):
        if not self.enabled:
            return
        frac = min(1.0, steps / max(target, 1))
        bar = "#" * int(24 * frac)
        sys.stderr.write(f"\r{self.name}: [{bar:<24}] {steps} steps, tau {tau:.0f}, "
                         f"{time.perf_counter() - self.t0:.0f} s ")
        sys.stderr.flush()

    def close(self):
        if self.enabled:
            sys.stderr.write("\n")


def sample_full_model(system, opts) -> Posterior:
    """The v0.1.0 engine: one emcee run over every parameter of the system at once.

    Kept only as the baseline of ``python -m archsys.bench`` (the joint engine replaces it).
    """
    t0 = time.perf_counter()
    ep, sp = _priors(system, opts)
    model = SystemModel(system, ep, sp, require_stable=opts.require_stable)
    rng = np.random.default_rng(opts.seed)
    fast = opts.mode == "fast"
    nwalkers = max(2 * model.ndim + 2, 32 if not fast else 24)
    nwalkers += nwalkers % 2
    max_steps = opts.max_steps or (4000 if fast else 60000)
    n_tau = 20 if fast else N_TAU
    p0 = _initial(model, system, rng, nwalkers, opts.seed)
    if p0 is None:
        from ...errors import InputError
        raise InputError(f"{system.source}: no parameter set satisfies the joint constraints "
                         "(transits, non-transits, non-crossing orbits"
                         + (", stability" if opts.require_stable else "") + "); check the inputs")
    moves = [(emcee.moves.DEMove(), 0.8), (emcee.moves.StretchMove(), 0.2)]
    sampler = emcee.EnsembleSampler(nwalkers, model.ndim, model.log_prob, vectorize=True, moves=moves)
    # emcee draws from numpy's legacy global state through its own RandomState; seed it explicitly
    sampler._random = np.random.RandomState(int(rng.integers(2**31)))
    prog = _Progress(not opts.quiet, system.name)
    state = p0
    tau = np.full(model.ndim, np.inf)
    converged = False
    steps = 0
    while steps < max_steps:
        # check convergence at geometrically growing intervals (the FFT costs O(steps))
        n = min(max(_BLOCK, steps // 4), max_steps - steps)
        with np.errstate(all="ignore"):
            state = sampler.run_mcmc(state, n, progress=False, skip_initial_state_check=True)
        steps += n
        chain = sampler.get_chain()
        with np.errstate(all="ignore"):
            tau = emcee.autocorr.integrated_time(chain[steps // 3:], tol=0, quiet=True)
        tmax = float(np.max(tau))
        prog.update(steps, n_tau * tmax, tmax)
        usable = steps - BURN_TAU * tmax
        enough = usable >= n_tau * tmax and (fast or steps >= 1000)
        if np.all(np.isfinite(tau)) and enough:
            converged = True
            break
    prog.close()
    tmax = float(np.max(tau)) if np.all(np.isfinite(tau)) else steps / 10
    burn = int(min(BURN_TAU * tmax, steps // 2))
    thin = max(1, int(tmax / 2))
    flat = sampler.get_chain(discard=burn, thin=thin, flat=True)
    lpf = sampler.get_log_prob(discard=burn, thin=thin, flat=True)
    flat = flat[np.isfinite(lpf)]
    n_after = (steps - burn) * nwalkers
    neff = {name: float(n_after / t) for name, t in zip(model.names, tau)}
    if not converged:
        warnings.warn(f"{system.name}: chain stopped at the cap of {max_steps} steps, "
                      f"{steps / tmax:.0f} autocorrelation times (< {n_tau}); intervals are rough",
                      ConvergenceWarning, stacklevel=2)
    # keep at most n_draws (evenly spaced, deterministic)
    if len(flat) > opts.n_draws:
        flat = flat[np.linspace(0, len(flat) - 1, opts.n_draws).round().astype(int)]
    post = _to_posterior(model, system, flat, opts, rng)
    post.wall_seconds = time.perf_counter() - t0
    post.sampler = {
        "method": "MCMC (emcee ensemble sampler, differential-evolution + stretch moves)",
        "why": _why(system, opts),
        "walkers": nwalkers,
        "steps": steps,
        "burn_in": burn,
        "thin": thin,
        "autocorrelation_time": {k: round(float(v), 2) for k, v in zip(model.names, tau)},
        "max_autocorrelation_time": round(tmax, 2),
        "chain_length_in_tau": round(steps / tmax, 1),
        "n_eff": {k: round(v, 1) for k, v in neff.items()},
        "min_n_eff": round(min(neff.values()), 1),
        "converged": converged,
        "target_tau_multiple": n_tau,
        "acceptance_fraction": round(float(np.mean(sampler.acceptance_fraction)), 3),
        "log_prob_evaluations": int(steps * nwalkers),
        "parameters": model.names,
    }
    post.prior = {"eccentricity": {"name": ep.name, "citation": ep.citation, "from_memory": ep.from_memory},
                  "mutual_inclination_sigma": {"name": sp.name, "citation": sp.citation,
                                               "from_memory": sp.from_memory}}
    return post


def _prior_orientations(model, c, rng, max_rounds=50):
    """Orientations drawn from the hierarchical prior (ORIENTATION_FREE systems).

    Rows whose true mass m sin i / sin i would exceed MASS_CAP are redrawn
    (the mass prior is truncated there).
    """
    from .v010_model import MASS_CAP
    n, npl = c["ecc"].shape
    msini = c["mass"]

    def draw(m):
        cosI = rng.uniform(0.0, 1.0, m)
        if npl == 1:
            return {"cos_i": cosI[:, None], "node": np.zeros((m, 1)), "cosI": cosI, "sigma": np.full(m, np.nan)}
        sig = np.radians(model.sigma_prior.sample(rng, m))
        psi = sig[:, None] * np.sqrt(-2.0 * np.log(rng.uniform(1e-300, 1.0, (m, npl))))
        phi = rng.uniform(-np.pi, np.pi, (m, npl))
        sinI = np.sqrt(1.0 - cosI ** 2)[:, None]
        nx = np.sin(psi) * np.cos(phi)
        ny_r, nz_r = np.sin(psi) * np.sin(phi), np.cos(psi)
        nz = cosI[:, None] * nz_r + sinI * ny_r
        ny = cosI[:, None] * ny_r - sinI * nz_r
        return {"cos_i": nz, "node": np.arctan2(nx, -ny), "cosI": cosI, "sigma": sig, "psi": psi}

    out = draw(n)
    for _ in range(max_rounds):
        sini = np.sqrt(np.clip(1.0 - out["cos_i"] ** 2, 0.0, 1.0))
        bad = np.any(msini > MASS_CAP * sini, axis=1)
        if not bad.any():
            break
        new = draw(int(bad.sum()))
        for k in out:
            out[k][bad] = new[k]
    return out


def _to_posterior(model, system, flat, opts, rng):
    c = model.unpack(flat)
    n = flat.shape[0]
    npl = system.n_planets
    cos_i = c["cos_i"]
    psi = None
    prior_orient = None
    if model.orient_free:
        prior_orient = _prior_orientations(model, c, rng)
        cos_i = prior_orient["cos_i"]
        c["node"] = prior_orient["node"]
        psi = prior_orient.get("psi")
    elif model.hier:
        # draw the sign of cos i for each planet from its conditional probability
        terms = model.orientation_terms(c)                         # (n, np, 2)
        p_plus = 1.0 / (1.0 + np.exp(np.clip(terms[..., 1] - terms[..., 0], -700, 700)))
        sign = np.where(rng.uniform(size=p_plus.shape) < p_plus, 1.0, -1.0)
        sign = np.where(np.asarray(model.signed)[None, :], 1.0, sign)
        cos_i = sign * c["cos_i"]
        from .v010_model import _normal
        normals = _normal(cos_i, c["node"])                        # (n, np, 3)
        nref = model.ref_normal(c)
        psi = np.arccos(np.clip(np.sum(normals * nref[:, None, :], axis=-1), -1.0, 1.0))
    # independent quantities drawn from their summaries
    period = c["period"].copy()
    for j, p in enumerate(system.planets):
        if j not in model.free_periods:
            period[:, j] = p.period.sample(rng, n)
    m_star = c["m_star"]
    mass = np.full((n, npl), np.nan)
    msini = np.full((n, npl), np.nan)
    notes = {}
    for j, p in enumerate(system.planets):
        note = {}
        q = p.quantities
        if j in model.mass_planets:
            if model.orient_free:
                msini[:, j] = c["mass"][:, j]          # sampled as m sin i (sin i = 1 inside)
                mass[:, j] = msini[:, j] / np.sqrt(1.0 - cos_i[:, j] ** 2)
            else:
                mass[:, j] = c["mass"][:, j]
                msini[:, j] = mass[:, j] * np.sin(c["inc"][:, j])
            if "mass" in q:
                note["mass"] = "true"
            elif model.has_transits and (p.transiting or "b" in q):
                note["mass"] = "true (m sin i / sin i, transit geometry)"
            else:
                note["mass"] = "true (posterior over inclination)"
        elif "radius" in q:
            r = q["radius"].sample(rng, n)
            mass[:, j] = mass_from_radius_mearth(r) * 10 ** (SCATTER_DEX * rng.standard_normal(n)) * MEARTH_MSUN
            note["mass"] = "from radius (mass-radius relation)"
        if j in model.fixed_ecc:
            note["ecc"] = "fixed (exact value given)"
        elif any(k in q for k in ("ecc", "secosw", "ecosw")):
            note["ecc"] = "posterior (summary x prior)"
        else:
            note["ecc"] = "prior only (no eccentricity data)"
        has_geom = any(k in q for k in ("b", "inclination")) or p.transiting is not None
        if model.orient_free:
            note["inc"] = ("prior only (isotropic reference plane, Rayleigh tilts)" if npl > 1
                           else "prior only (isotropic orientation)")
        elif model.hier:
            note["inc"] = "posterior (hierarchical orientation model)"
        else:
            note["inc"] = "posterior" if has_geom else "prior only (isotropic orientation)"
        notes[p.name] = note
    from ...physics import kepler
    a = kepler.a_au(period, m_star[:, None] + np.nan_to_num(mass))
    rs = c.get("star_scale") if model.star_scale == "radius" else None
    rho = c.get("star_scale") if model.star_scale == "density" else None
    draws = dict(m_star=m_star, r_star=rs if rs is not None else np.full(n, np.nan),
                 rho_star=rho if rho is not None else np.full(n, np.nan),
                 period=period, a=a, ecc=c["ecc"], omega=c["omega"], msini=msini, mass=mass,
                 inc=np.arccos(np.clip(cos_i, -1, 1)),
                 node=c["node"] if (model.hier or prior_orient) else np.full((n, npl), np.nan))
    if model.hier:
        draws.update(psi=psi, sigma_mutual=c["sigma"], ref_inc=np.arccos(c["cosI"]))
    elif prior_orient is not None and psi is not None:
        draws.update(psi=psi, sigma_mutual=prior_orient["sigma"], ref_inc=np.arccos(prior_orient["cosI"]))
    return add_phases(Posterior(system, draws, "mcmc", seed=opts.seed, notes=notes))
