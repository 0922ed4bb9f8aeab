"""The joint engine: exact draws from the summaries, an orientation MCMC, importance weights.

The joint posterior of a system factorises except for a few couplings
(planets couple only through the orientation model, the transit geometry,
non-crossing orbits and an optional stability prior).  So:

1. **Exact draws** of everything that the summaries determine independently:
   the star, periods, eccentricities (from the summary; planets without
   eccentricity data from the population prior), masses (true mass, m sin i or
   K; the mass-radius relation where only a radius or Rp/R* is known) and radii.
   An exact value is the same number in every draw.
2. **Orientations.**  With no orientation data (no transit, inclination or node)
   they are drawn exactly from the hierarchical prior
   (:func:`~archsys.inference.tilts.prior_orientations`).  Otherwise the
   orientation block alone (reference plane, sigma, one or two parameters per
   planet; :class:`~archsys.inference.orientation.OrientationModel`) is sampled
   with emcee to at least ``N_TAU`` autocorrelation times, with the geometry
   factor of the transit planets held at its median.
3. **Importance weights** pair each orientation draw with an exact draw of the
   rest: the ratio of the orientation density at that draw's own geometry factor
   to the one sampled, the population eccentricity prior where a planet has
   eccentricity data, likelihoods of any redundant summaries (e.g. K beside a true
   mass), and the joint constraints as indicators: orbits may not cross, transit
   and non-transit conditions, a planet lighter than the ``MASS_CAP``, and under
   ``require_stable`` the same Hill and AMD criteria that the report evaluates
   (:func:`~archsys.inference.stability.stable_draws`).
4. **Resampling** of the requested number of draws from the weighted pool.  The
   pool grows until its importance effective sample size reaches the requested
   number of draws (up to ``MAX_POOL_FACTOR`` times it); the effective sample
   size is reported either way.
"""
from __future__ import annotations

import math
import warnings

import numpy as np

from ..errors import ConvergenceWarning, InputError
from .basis import Basis, Origin
from .exact import ecc_prior_for, exact_draws, geometry_factor
from .orient_chain import run_orientation_mcmc
from .orientation import OrientationModel
from .phases import add_phases
from .posterior import Posterior
from .prior_choice import resolve_priors
from .route import choose_path
from .usability import KHAT_MAX, Status, assess, required_ess

from .importance import B_STANDARDISE, _REASONS, _importance, _r3, _systematic_resample, _try_proposal

__all__ = ["sample_joint"]


# --------------------------------------------------------------------------- the engine
def _resolve_priors(system, opts):
    choice = resolve_priors(opts)
    multis, singles = choice.no_data
    npl = system.n_planets
    ecc_priors = [ecc_prior_for(p, npl, choice.eccentricity, multis, singles) for p in system.planets]
    return choice.eccentricity, choice.sigma, ecc_priors


def _prior_block(user, sp, ecc_priors, system):
    def cite(p):
        return {"name": p.name, "citation": p.citation, "from_memory": p.from_memory}
    flat = {"name": "ecc-uniform", "citation": "flat on [0, 1) (least informative)", "from_memory": False}
    out = {"eccentricity": cite(user) if user is not None else flat,
           "mutual_inclination_sigma": cite(sp)}
    no_data = [(p.name, pr) for p, (pr, role) in zip(system.planets, ecc_priors) if role == "draw"]
    if no_data:
        out["eccentricity_without_data"] = dict(cite(no_data[0][1]), planets=[nm for nm, _ in no_data])
    return out


def _stability_record(opts):
    """The stability prior as a constraint record (named in every report where it ran)."""
    if not opts.analytic_stability_prior:
        return {}
    return {"stability": "imposed (--require-stable): Hill (Gladman 1993) and AMD (Laskar & Petit 2017) "
                         "stability of every adjacent pair; stability numbers are stable by construction"}


def _orient_kind_note(kind, hier, orient_free):
    if orient_free or (kind == "free" and not hier):
        return Basis("prior only (isotropic reference plane, Rayleigh tilts)" if orient_free and hier
                     else "prior only (isotropic orientation)", Origin.PRIOR)
    if kind == "fixed":
        return Basis("fixed (exact value given)", Origin.FIXED)
    return Basis({"b": "posterior (transit geometry" + (", hierarchical orientation model)" if hier else ")"),
                  "incl": "posterior (sky inclination summary" + (", hierarchical orientation model)" if hier else ")"),
                  "free": "posterior (hierarchical orientation model; no orientation data of its own)"}[kind],
                 Origin.DATA)


def sample_joint(system, opts) -> Posterior:
    """Posterior of ``system`` under ``opts`` by the joint engine (see module docstring)."""
    user, sp, ecc_priors = _resolve_priors(system, opts)
    n = int(opts.n_draws)
    npl = system.n_planets
    ss = np.random.SeedSequence(int(opts.seed))
    rng_pilot, rng_chain, rng_pool, rng_pick = (np.random.default_rng(s) for s in ss.spawn(4))
    orient_data = any(p.transiting or any(k in p.quantities for k in ("b", "inclination", "ascending_node"))
                      for p in system.planets)
    orient_free = not orient_data
    hier = npl >= 2 and orient_data
    if orient_data and (system.star.radius is not None or system.star.density is not None):
        # the geometry factor's median (sampled coordinates) and lower bound (non-transit support)
        pilot, _, _ = exact_draws(system, rng_pilot, 2048, ecc_priors)
        g_pilot = geometry_factor(system, pilot)
        with np.errstate(all="ignore"), warnings.catch_warnings():
            warnings.simplefilter("ignore", RuntimeWarning)
            g0 = np.nanmedian(g_pilot, axis=0)
            g_nt = 0.8 * np.nanmin(g_pilot, axis=0)
    else:
        g0 = g_nt = np.full(npl, np.nan)
    model = OrientationModel(system, sp, g0, g_nt, standardise=B_STANDARDISE)
    kinds = model.kinds
    chain, info, proposal = None, None, None
    if hier and opts.mode != "mcmc":
        proposal, info = _try_proposal(model, rng_chain, n)
    if hier and proposal is None:
        chain, info = run_orientation_mcmc(model, rng_chain, n, max_steps=opts.max_steps,
                                           quiet=getattr(opts, "quiet", True), name=system.name)
        if chain is None:
            raise InputError(f"{system.source}: no orientation of the orbits satisfies the transit, non-transit "
                             "and inclination data together; check b, Rp/R*, the transiting flags and the "
                             "stellar radius")
    source = chain if chain is not None else proposal
    imp = _importance(system, opts, model, kinds, source, hier, orient_free, ecc_priors, sp, rng_pool, n)
    fallback = None
    if proposal is not None and not (imp["khat"] <= KHAT_MAX):
        # the pilot looked healthy but the weights actually used are not: the orientation chain instead
        chain, cinfo = run_orientation_mcmc(model, rng_chain, n, max_steps=opts.max_steps,
                                            quiet=getattr(opts, "quiet", True), name=system.name)
        if chain is not None:
            fallback = {"from": "independent orientation proposal", "to": "orientation chain (emcee)",
                        "reason": "final_weights_khat", "pareto_khat_before": _r3(imp["khat"]),
                        "effective_sample_size_before": round(imp["ess"], 1)}
            info = dict(info or {}, **cinfo)
            info["orientation_draws"] = "MCMC (emcee), after the independent proposal's final weights failed"
            proposal = None
            imp = _importance(system, opts, model, kinds, chain, hier, orient_free, ecc_priors, sp, rng_pool, n)
    pieces, total_ess, pool, rejected = imp["pieces"], imp["ess"], imp["pool"], imp["rejected"]
    lw, good, crossing_by_pair = imp["lw"], imp["good"], imp["crossing_by_pair"]
    if not good.any():
        worst = max(rejected, key=rejected.get)
        detail = ""
        if worst == "crossing" and crossing_by_pair is not None:
            j = int(np.argmax(crossing_by_pair))
            names = system.planet_names
            detail = (f" (the orbits of '{names[j]}' and '{names[j + 1]}' cross in "
                      f"{100.0 * crossing_by_pair[j] / pool:.0f} % of draws; are the eccentricities limits?)")
        raise InputError(f"{system.source}: no draw satisfies the joint constraints; every one of {pool} draws "
                         f"failed, most often on {_REASONS[worst]}{detail}; check the inputs")
    if total_ess < n:
        worst = _REASONS[max(rejected, key=rejected.get)]
        verdict = ("the posterior is unusable (README, 'Usable posteriors')" if total_ess < required_ess(n)
                   else "intervals are rough")
        warnings.warn(f"{system.name}: importance effective sample size {total_ess:.0f} < {n} requested draws "
                      f"after {pool} proposals (most rejected on {worst}); {verdict}",
                      ConvergenceWarning, stacklevel=2)
    draws = {k: np.concatenate([p["draws"][k] for p in pieces]) for k in pieces[0]["draws"]}
    idx = np.flatnonzero(good)
    wn = np.exp(lw[good] - lw[good].max())
    pick = idx[_systematic_resample(rng_pick, wn, n)]
    draws = {k: v[pick] for k, v in draws.items()}
    notes = pieces[0]["notes"]
    for j, p in enumerate(system.planets):
        notes[p.name]["inc"] = _orient_kind_note(kinds[j], hier or (orient_free and npl >= 2), orient_free)
    post = Posterior(system, draws, "joint", seed=opts.seed, notes=notes)
    chain_neff = min(info["n_eff"].values()) if info and "n_eff" in info else math.inf
    post.sampler = {
        "method": ("joint engine: exact draws of the summaries, an MCMC (emcee) over the orientations, "
                   "importance weights" if chain is not None else
                   "joint engine: exact draws of the summaries, independent orientation draws from a Gaussian "
                   "approximation, importance weights" if proposal is not None else
                   "joint engine: exact draws of the summaries and orientations, importance weights"),
        "why": choose_path(system, opts).why,
    }
    if info:
        post.sampler.update(info)
    chain_ok = bool(info.get("converged", True)) if info else True
    min_neff = float(min(chain_neff, total_ess, n))
    usab = assess(min_neff, n, imp["khat"], chain_ok)
    importance = {"proposals": pool, "accepted": imp["accepted"], "effective_sample_size": round(total_ess, 1),
                  "efficiency": round(total_ess / pool, 4),
                  "rejected": {k: v for k, v in rejected.items() if v},
                  "pareto_khat": _r3(imp["khat"]), "blocks": imp["blocks"]}
    if fallback:
        importance["fallback"] = fallback
    post.sampler.update({
        "importance": importance,
        "min_n_eff": round(min_neff, 1),
        "converged": usab["status"] == Status.OK.value,
        "usability": usab,
    })
    post.prior = dict(_prior_block(user, sp, ecc_priors, system), **_stability_record(opts))
    return add_phases(post)


