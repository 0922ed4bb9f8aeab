"""The importance step of the joint engine: pools of exact draws paired with orientation draws,
their weights and rejections by constraint, and systematic resampling (see :mod:`archsys.inference.joint`).
"""
from __future__ import annotations

import math

import numpy as np

from ..physics import kepler
from ..physics.constants import MEARTH_MSUN
from .exact import exact_draws, geometry_factor, mass_basis
from .orient_proposal import OrientationProposal, pareto_khat
from .stability import stable_draws
from .tilts import orbit_normals, prior_orientations
from .usability import KHAT_MAX

__all__ = ["MASS_CAP", "MAX_POOL_FACTOR", "MAX_CHUNK", "B_STANDARDISE"]

#: Upper bound of every true mass [M_sun] (about 84 M_J, the hydrogen-burning limit; common practice).
MASS_CAP = 0.08
#: The proposals may grow to this many times the requested draws (rejections by a stability prior in
#: tension with the data need many); they are drawn in chunks of at most MAX_CHUNK.
MAX_POOL_FACTOR = 64
MAX_CHUNK = 100_000


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


B_STANDARDISE = True


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
        proposal = isinstance(chain, OrientationProposal)
        if proposal:
            theta, lq = chain.sample(rng, m)
        else:
            theta = chain[rng.integers(0, len(chain), m)]
        with np.errstate(all="ignore"):
            # the block's density under the sampler's geometry factor (g0, and the lower bound for the
            # non-transit condition) and under each draw's own: log_prob(theta) and
            # log_prob(theta, g, g_nt=g), sharing what does not depend on g
            lp_model, (lt, c, terms) = model.log_prob_pair(theta, g)
        if proposal:
            # proposals outside the orientation block's support are not rejections by the data
            reject(~np.isfinite(lp_model), "proposal_support")
        else:
            lq = lp_model
        reject(~np.isfinite(lt), "geometry")
        with np.errstate(invalid="ignore"):
            lw_orient = np.where(np.isfinite(lt), lt - lq, 0.0)
            logw += lw_orient
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
            keep = np.flatnonzero(live)
            st, _ = stable_draws({k: v.take(keep, axis=0) for k, v in draws.items()})
            mask = np.zeros(m, dtype=bool)
            mask[np.flatnonzero(live)[~st]] = True
            reject(mask, "stability")
    reject(~np.isfinite(logw), "weights")
    bad = {k: v for k, v in bad.items() if np.any(v)}
    live = np.isfinite(logw)        # keep only draws that can be resampled (memory stays small)
    keep = np.flatnonzero(live)         # take: the rows of a boolean mask, several times faster on 2-D arrays
    draws = {k: v.take(keep, axis=0) for k, v in draws.items()}
    lo = lw_orient.take(keep) if np.ndim(lw_orient) else np.zeros(keep.size)
    blocks = {"orientation": lo, "rest": logw.take(keep) - lo}
    return {"draws": draws, "logw": logw.take(keep), "notes": notes, "blocks": blocks}, bad
