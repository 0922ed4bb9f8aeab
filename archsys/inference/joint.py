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
   (:func:`~archsys.inference.orientation.prior_orientations`).  Otherwise the
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
from ..physics import kepler
from ..physics.constants import MEARTH_MSUN
from .exact import ecc_prior_for, exact_draws, geometry_factor, mass_basis
from .orient_chain import BURN_TAU, N_TAU, run_orientation_mcmc
from .orient_proposal import OrientationProposal, pareto_khat
from .orientation import OrientationModel, orbit_normals, prior_orientations
from .phases import add_phases
from .posterior import Posterior
from .stability import stable_draws
from .usability import KHAT_MAX, Status, assess, required_ess

__all__ = ["sample_joint", "MASS_CAP", "N_TAU", "BURN_TAU", "MAX_POOL_FACTOR"]

#: Upper bound of every true mass [M_sun] (about 84 M_J, the hydrogen-burning limit; common practice).
MASS_CAP = 0.08
#: The proposals may grow to this many times the requested draws (rejections by a stability prior in
#: tension with the data need many); they are drawn in chunks of at most MAX_CHUNK.
MAX_POOL_FACTOR = 64
MAX_CHUNK = 100_000


# --------------------------------------------------------------------------- the engine
def _resolve_priors(system, opts):
    from .priors import default_prior, load_prior
    user = load_prior(opts.ecc_prior) if opts.ecc_prior else None
    if user is not None and user.quantity != "eccentricity":
        raise InputError(f"--prior {opts.ecc_prior}: is a prior on {user.quantity}, not eccentricity")
    sp = load_prior(opts.incl_prior) if opts.incl_prior else default_prior("mutual_inclination_sigma")
    if sp.quantity != "mutual_inclination_sigma":
        raise InputError(f"--incl-prior {opts.incl_prior}: is a prior on {sp.quantity}, not mutual_inclination_sigma")
    multis, singles = load_prior(DEFAULT_NO_DATA_PRIOR[0]), load_prior(DEFAULT_NO_DATA_PRIOR[1])
    npl = system.n_planets
    ecc_priors = [ecc_prior_for(p, npl, user, multis, singles) for p in system.planets]
    return user, sp, ecc_priors


#: Eccentricity prior of planets without eccentricity data (multi-planet systems, single planets)
#: when the user names none: see the README ("Priors") for the reasons.
DEFAULT_NO_DATA_PRIOR = ("ecc-vaneylen2019-multis", "ecc-kipping2013-rv")


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


def _systematic_resample(rng, w, n):
    """Indices of n draws by systematic resampling of normalised weights ``w``."""
    cdf = np.cumsum(w)
    cdf /= cdf[-1]
    u = (rng.uniform() + np.arange(n)) / n
    return np.minimum(np.searchsorted(cdf, u, side="right"), len(w) - 1)


def _single_orientation(system, d, g, rng, kinds):
    """Exact orientation of a one-planet system: (cos_i (n,1), node (n,1), logw (n,))."""
    p = system.planets[0]
    q = p.quantities
    n = d["period"].shape[0]
    logw = np.zeros(n)
    k = kinds[0]
    ror = q["ror"].center if "ror" in q else 0.0
    if k == "b":
        if "b" in q:
            beta = q["b"].sample(rng, n)
            logw = np.where((beta >= 0) & (beta <= 1 + ror), 0.0, -np.inf)
        else:
            beta = rng.uniform(0.0, 1.0 + ror, n)
        u = beta * g[:, 0]
        with np.errstate(divide="ignore", invalid="ignore"):
            logw = logw + np.log(g[:, 0])           # isotropic prior: flat in cos i
        logw = np.where(u <= 1.0, logw, -np.inf)
        cos_i = np.where(rng.uniform(size=n) < 0.5, 1.0, -1.0) * np.minimum(u, 1.0)
    elif k == "incl":
        i = np.radians(q["inclination"].sample(rng, n))
        with np.errstate(divide="ignore"):
            logw = np.log(np.abs(np.sin(i)))        # isotropic prior against a summary in i
        cos_i = np.cos(i)
    elif k == "fixed":
        cos_i = np.full(n, math.cos(math.radians(q["inclination"].value)))
    else:
        cos_i = rng.uniform(-1.0, 1.0, n)
    node_q = q.get("ascending_node")
    node = np.radians(node_q.sample(rng, n)) if node_q is not None else rng.uniform(-np.pi, np.pi, n)
    return cos_i[:, None], node[:, None], logw


def _why(system, opts):
    if opts.mode == "mcmc":
        return "requested (--mode mcmc)"
    reasons = []
    if opts.analytic_stability_prior:
        reasons.append("stability prior")
    if opts.ecc_prior not in (None, "ecc-uniform"):
        reasons.append("population eccentricity prior")
    tr = [p for p in system.planets if p.transiting or "b" in p.quantities]
    if len(tr) >= 2:
        reasons.append("several transiting planets share one inclination dispersion")
    if tr and any(p.transiting is False for p in system.planets):
        reasons.append("a non-transiting planet constrains the geometry")
    if any("ascending_node" in p.quantities or "inclination" in p.quantities for p in system.planets) \
            and system.n_planets >= 2:
        reasons.append("measured orientations")
    return "; ".join(reasons) or "orbits cross in some direct draws"


_REASONS = {
    "geometry": "transit / non-transit conditions and orientation data",
    "period_order": "period order (the planets' periods overlap)",
    "mass_cap": f"true mass below {MASS_CAP} M_sun (nearly face-on orbits with a K or m sin i)",
    "crossing": "non-crossing orbits",
    "stability": "the stability prior (Gladman 1993 Hill criterion and Laskar & Petit 2017 AMD)",
    "weights": "zero likelihood or prior density (redundant summaries such as K beside a true mass, "
               "impact parameters, priors)",
    "proposal_support": "orientation proposals outside the orientation model's support",
}


def _orient_kind_note(kind, hier, orient_free):
    if orient_free:
        return "prior only (isotropic reference plane, Rayleigh tilts)" if hier else "prior only (isotropic orientation)"
    return {"b": "posterior (transit geometry" + (", hierarchical orientation model)" if hier else ")"),
            "incl": "posterior (sky inclination summary" + (", hierarchical orientation model)" if hier else ")"),
            "fixed": "fixed (exact value given)",
            "free": ("posterior (hierarchical orientation model; no orientation data of its own)" if hier
                     else "prior only (isotropic orientation)")}[kind]


B_STANDARDISE = True


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
        "why": _why(system, opts),
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


def _r3(x):
    return round(float(x), 3) if np.isfinite(x) else None


def _ess(lw):
    """Importance effective sample size (sum w)^2 / sum w^2 of finite log-weights (Kong 1992)."""
    lw = lw[np.isfinite(lw)]
    if lw.size == 0:
        return 0.0
    w = np.exp(lw - lw.max())
    return float(w.sum() ** 2 / np.sum(w * w))


def _importance(system, opts, model, kinds, source, hier, orient_free, ecc_priors, sp, rng, n):
    """Grow the weighted pool until its effective sample size reaches n (or the cap); diagnose its weights.

    Every proposal is either accepted (finite weight) or counted once under the first reason that
    rejected it, so ``accepted + sum(rejected) == proposals``.  ``khat`` and ``ess`` describe the final
    weights that the resampling uses; ``blocks`` the same for each factor of the weights.
    """
    pieces, total_ess, pool = [], 0.0, 0
    rejected = dict.fromkeys(_REASONS, 0)
    crossing_by_pair = None
    chunk = int(1.3 * n) + 16
    while True:
        piece, why_bad = _pool_piece(system, opts, model, kinds, source, hier, orient_free,
                                     ecc_priors, sp, rng, chunk)
        pair_cross = why_bad.pop("crossing_by_pair", None)
        if pair_cross is not None:
            crossing_by_pair = pair_cross if crossing_by_pair is None else crossing_by_pair + pair_cross
        for k, v in why_bad.items():
            rejected[k] += v
        pieces.append(piece)
        pool += chunk
        lw = np.concatenate([p["logw"] for p in pieces])
        good = np.isfinite(lw)
        total_ess = _ess(lw)
        if total_ess >= n or pool >= MAX_POOL_FACTOR * n:
            break
        rate = max(total_ess / pool, 1.0 / (MAX_POOL_FACTOR * n))
        chunk = int(min(max(n, 1.2 * (n - total_ess) / rate), MAX_POOL_FACTOR * n - pool, MAX_CHUNK))
    accepted = int(good.sum())
    if accepted + sum(rejected.values()) != pool:            # an accounting error is a bug, never hidden
        raise RuntimeError(f"importance accounting: {accepted} accepted + {sum(rejected.values())} rejected "
                           f"!= {pool} proposals")
    blocks = {}
    for name in pieces[0]["blocks"]:
        lb = np.concatenate([p["blocks"][name] for p in pieces])
        if lb.size and np.ptp(lb) > 0:
            blocks[name] = {"pareto_khat": _r3(pareto_khat(lb)), "effective_sample_size": round(_ess(lb), 1)}
    return {"pieces": pieces, "ess": total_ess, "pool": pool, "rejected": rejected, "lw": lw, "good": good,
            "crossing_by_pair": crossing_by_pair, "accepted": accepted,
            "khat": pareto_khat(lw) if accepted else np.inf, "blocks": blocks}



def _try_proposal(model, rng, n):
    """The independent orientation proposal if its importance weights are healthy, else (None, info)."""
    prop = OrientationProposal(model)
    m = max(2 * n, 4000)
    th, lq = prop.sample(rng, m)
    with np.errstate(all="ignore"):
        lw = model.log_prob(th) - lq
    good = np.isfinite(lw)
    if not good.any():
        return None, None
    w = np.exp(lw[good] - lw[good].max())
    ess = float(w.sum() ** 2 / np.sum(w * w))
    khat = pareto_khat(lw)
    info = {"orientation_draws": "independent (importance sampling from a Gaussian approximation)",
            "orientation_pilot": {"proposals": m, "effective_sample_size": round(ess, 1),
                                  "pareto_khat": round(khat, 3)}}
    if khat < KHAT_MAX and ess >= 0.02 * m:
        return prop, info
    return None, None


def _pool_piece(system, opts, model, kinds, chain, hier, orient_free, ecc_priors, sp, rng, m):
    """m proposals: exact draws + orientations, their log-weights and the rejection counts."""
    npl = system.n_planets
    d, logw, notes = exact_draws(system, rng, m, ecc_priors)
    g = geometry_factor(system, d)
    bad = {}
    counted = np.zeros(m, dtype=bool)          # each proposal is counted under its first rejection only
    lw_orient = np.zeros(m)                    # the orientation block's factor of the weights

    def reject(mask, reason):
        mask = mask & ~counted
        bad[reason] = bad.get(reason, 0) + int(mask.sum())
        counted[mask] = True
        logw[mask] = -np.inf

    reject(np.isneginf(logw), "weights")       # zero prior density (e.g. e outside a population prior)

    psi = sigma = ref_inc = None
    if hier:
        if isinstance(chain, OrientationProposal):
            theta, lq = chain.sample(rng, m)
            with np.errstate(all="ignore"):
                inside = np.isfinite(model.log_prob(theta))
            # proposals outside the orientation block's support are not rejections by the data
            reject(~inside, "proposal_support")
        else:
            theta = chain[rng.integers(0, len(chain), m)]
            with np.errstate(all="ignore"):
                lq = model.log_prob(theta)
        with np.errstate(all="ignore"):
            lt = model.log_prob(theta, g, g_nt=g)
        reject(~np.isfinite(lt), "geometry")
        with np.errstate(invalid="ignore"):
            lw_orient = np.where(np.isfinite(lt), lt - lq, 0.0)
            logw += lw_orient
        c = model.unpack(theta, g)
        with np.errstate(all="ignore"):
            terms = model.sign_terms(c)
        p_plus = 1.0 / (1.0 + np.exp(np.clip(terms[..., 1] - terms[..., 0], -700, 700)))
        sign = np.where(rng.uniform(size=p_plus.shape) < p_plus, 1.0, -1.0)
        cos_i = np.where(model.folded, sign * np.abs(c["u"]), c["u"])
        node = c["node"]
        nref = model.ref_normal(c)
        normals = orbit_normals(np.clip(cos_i, -1, 1), node)
        psi = np.arccos(np.clip(np.sum(normals * nref[:, None, :], axis=-1), -1.0, 1.0))
        sigma, ref_inc = c["sigma"], np.arccos(np.clip(c["cosI"], -1.0, 1.0))
    elif orient_free:
        o = prior_orientations(rng, m, npl, sp)
        cos_i, node = o["cos_i"], o["node"]
        if npl >= 2:
            psi, sigma, ref_inc = o["psi"], o["sigma"], np.arccos(o["cosI"])
    else:
        cos_i, node, lw1 = _single_orientation(system, d, g, rng, kinds)
        reject(~np.isfinite(lw1), "geometry")
        lw_orient = np.where(np.isfinite(lw1), lw1, 0.0)
        logw += lw_orient
    cos_i = np.clip(cos_i, -1.0, 1.0)
    sin_i = np.sqrt(1.0 - cos_i * cos_i)
    P, e, ms = d["period"], d["ecc"], d["m_star"]
    mass, msini = d["mass"], d["msini"]
    for j, p in enumerate(system.planets):
        q = p.quantities
        basis = mass_basis(q)
        with np.errstate(all="ignore"):
            if basis == "msini":
                mass[:, j] = msini[:, j] / sin_i[:, j]
            elif basis == "k":
                mass[:, j] = kepler.mass_from_k_msun(P[:, j], d["k"][:, j], ms, np.minimum(e[:, j], 0.999999),
                                                     np.maximum(sin_i[:, j], 1e-300))
                msini[:, j] = mass[:, j] * sin_i[:, j]
            elif basis == "mass":
                msini[:, j] = mass[:, j] * sin_i[:, j]
                if "msini" in q:
                    logw += q["msini"].log_likelihood(msini[:, j] / MEARTH_MSUN)
            if basis in ("mass", "msini") and "k" in q:
                K = kepler.k_from_mass_ms(P[:, j], mass[:, j], ms, np.minimum(e[:, j], 0.999999), sin_i[:, j])
                logw += q["k"].log_likelihood(K)
        if basis is not None:
            notes[p.name]["mass"] = notes[p.name].get("mass") or (
                "true (m sin i / sin i, transit geometry)" if kinds[j] == "b" else
                "true (m sin i / sin i, measured inclination)" if kinds[j] in ("incl", "fixed") else
                "true (posterior over inclination)")
            reject(~(np.isfinite(mass[:, j]) & (mass[:, j] > 0) & (mass[:, j] < MASS_CAP)), "mass_cap")
        if p.transiting and kinds[j] != "b" and np.isfinite(g[:, j]).all():
            ror = q["ror"].center if "ror" in q else 0.0
            reject(np.abs(cos_i[:, j]) >= (1.0 + ror) * g[:, j], "geometry")
            if "b" in q:
                logw += q["b"].log_likelihood(np.abs(cos_i[:, j]) / g[:, j])
    reject(~np.isfinite(logw), "weights")     # NaN, or a likelihood term of zero (not counted above)
    mass = np.where(np.isfinite(mass), mass, np.nan)
    a = kepler.a_au(P, ms[:, None] + np.nan_to_num(mass))
    if npl >= 2:
        reject(np.any(np.diff(P, axis=1) <= 0, axis=1), "period_order")
        cross = a[:, :-1] * (1 + e[:, :-1]) >= a[:, 1:] * (1 - e[:, 1:])
        bad["crossing_by_pair"] = cross.sum(axis=0)
        reject(np.any(cross, axis=1), "crossing")
    draws = dict(m_star=ms, r_star=d["r_star"], rho_star=d["rho_star"], period=P, a=a, ecc=e, omega=d["omega"],
                 msini=msini, mass=mass, inc=np.arccos(cos_i), node=node, radius=d["radius"])
    if psi is not None:
        draws.update(psi=psi, sigma_mutual=sigma, ref_inc=ref_inc)
    if opts.analytic_stability_prior and npl >= 2:
        live = np.isfinite(logw)
        if live.any():
            st, _ = stable_draws({k: v[live] for k, v in draws.items()})
            mask = np.zeros(m, dtype=bool)
            mask[np.flatnonzero(live)[~st]] = True
            reject(mask, "stability")
    reject(~np.isfinite(logw), "weights")
    bad = {k: v for k, v in bad.items() if np.any(v)}
    live = np.isfinite(logw)        # keep only draws that can be resampled (memory stays small)
    draws = {k: v[live] for k, v in draws.items()}
    lo = lw_orient[live] if np.ndim(lw_orient) else np.zeros(int(live.sum()))
    blocks = {"orientation": lo, "rest": logw[live] - lo}
    return {"draws": draws, "logw": logw[live], "notes": notes, "blocks": blocks}, bad
