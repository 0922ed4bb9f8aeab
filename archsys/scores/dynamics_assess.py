"""The pieces of the dynamical assessment (:mod:`archsys.scores.dynamics`): the analytic domain, the
N-body plan and run of posterior draws, verdict classes, instability times and libration blocks.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import summarize
from ..options import AUTO_NBODY_DRAWS
from ..physics import instability_time, nbody, spacing
from ..physics import nbody_runs
from ..physics import mmr_chains
from .common import effective_mass

__all__ = ["CLASSES", "REASONS", "ANALYTIC_PASS", "REASON_FRACTION", "COMPACT_DELTA", "COMPACT_RATIO",
           "HILL_MARGIN_NEAR", "REGULAR_MIN", "UNSTABLE_MIN", "NOMINAL_BODY_STEPS_PER_S", "MIN_NBODY_DRAWS",
           "N_SNAPSHOTS", "assess_domain", "nbody_plan", "run_nbody"]

#: Verdict classes (JSON ``dynamics.class``).
CLASSES = ("stable_analytic", "regular_nbody", "chaotic_survived", "unstable_nbody", "mixed_nbody",
           "not_proven_stable")
#: Reasons a system is outside the analytic criteria's domain (JSON ``dynamics.outside_domain``).
REASONS = ("near_resonance", "compact_three_or_more", "failed_sufficient_criterion", "near_hill_boundary",
           "unknown_masses")
#: Fraction of draws passing the sufficient criteria for "stable by analytic criterion".
ANALYTIC_PASS = 0.95
#: A reason counts when it holds in at least this fraction of draws (common practice: one draw in
#: ten is not negligible for a verdict quoted in a paper).
REASON_FRACTION = 0.10
#: Three or more planets are "compact" below this spacing in mutual Hill radii or period ratio
#: (issue 18; Chambers et al. 1996 find instability for Delta < 10 in every system they integrated,
#: and Lammers et al. 2024 find that period ratios below ~1.5 need near-circular orbits).
COMPACT_DELTA = 12.0
COMPACT_RATIO = 1.5
#: A pair is "near the Hill boundary" when the margin of the Gladman criterion, scaled by its size
#: near the boundary ((m1 + m2)/M_star)^(2/3), is below this value: 1.4 is about 1.5 times the critical
#: separation for circular orbits (2 sqrt 3 -> 5.2 mutual Hill radii); a choice of this tool.
HILL_MARGIN_NEAR = 1.4
#: N-body outcome thresholds (fractions of integrated draws).
REGULAR_MIN = 0.80
UNSTABLE_MIN = 0.50
#: Nominal integration speed used to turn ``--nbody-budget`` seconds into a fixed amount of work
#: (body-steps: bodies x WHFast steps).  A fixed conversion keeps the draws integrated -- and hence
#: the numbers -- the same on every machine; measured on this project's 2-core machine with MEGNO.
NOMINAL_BODY_STEPS_PER_S = 2.0e6
#: Fewest draws an N-body verdict is given from.
MIN_NBODY_DRAWS = 8
#: Snapshots per integrated draw for the resonance tests.
N_SNAPSHOTS = 200


def _ordered(post):
    a = np.asarray(post["a"], dtype=float)
    return np.all(np.isfinite(a), axis=1) & np.all(np.diff(a, axis=1) > 0, axis=1)


def assess_domain(ctx):
    """Analytic pass fractions and the reasons the system is outside the criteria's domain.

    Returns a dict: ``pass`` (bool per draw; NaN-free), ``p_pass``, ``reasons`` (list of codes),
    ``p_reason`` (code -> fraction of draws), ``near_pairs`` (pair indices near a resonance),
    ``known`` (bool: every mass known).
    """
    post = ctx.post
    arr = ctx.arrays
    n = len(post["a"])
    m = effective_mass(post)
    known = np.all(np.isfinite(m) & (m > 0), axis=1)
    margin = arr.get("hill_margin")
    if margin is None:
        margin = np.full((n, ctx.n_pairs), np.nan)
    hill_ok = np.all(np.where(np.isfinite(margin), margin > 0, False), axis=1)
    beta, beta_star = arr.get("amd_beta"), arr.get("amd_beta_star")
    if beta is None:
        amd_ok = np.zeros(n, dtype=bool)
    else:
        with np.errstate(invalid="ignore"):
            amd_ok = np.all(beta < 1.0, axis=1) & (beta_star < 1.0)
    passed = hill_ok & amd_ok & known & _ordered(post)
    reasons = {}
    near = arr.get("near_resonance")
    near_pairs = []
    if near is not None and near.size:
        p_near = np.nanmean(np.where(np.isfinite(near), near, 0.0), axis=0)
        near_pairs = [int(i) for i in np.flatnonzero(p_near >= REASON_FRACTION)]
        reasons["near_resonance"] = float(np.max(p_near)) if p_near.size else 0.0
    if ctx.post.system.n_planets >= 3:
        hs = arr.get("hill_separation")
        ratio = arr.get("period_ratio")
        compact = np.zeros(n, dtype=bool)
        if hs is not None:
            with np.errstate(invalid="ignore"):
                compact |= np.nanmin(np.where(np.isfinite(hs), hs, np.inf), axis=1) < COMPACT_DELTA
        if ratio is not None:
            compact |= np.min(ratio, axis=1) < COMPACT_RATIO
        reasons["compact_three_or_more"] = float(np.mean(compact))
    reasons["failed_sufficient_criterion"] = float(1.0 - np.mean(passed))
    mu = arr.get("mu")
    with np.errstate(invalid="ignore", divide="ignore"):
        scaled = margin / (mu ** (2.0 / 3.0) if mu is not None else 1.0)
        close = np.any(np.isfinite(scaled) & (scaled < HILL_MARGIN_NEAR), axis=1)
    reasons["near_hill_boundary"] = float(np.mean(close))
    reasons["unknown_masses"] = float(1.0 - np.mean(known))
    limit = {"failed_sufficient_criterion": 1.0 - ANALYTIC_PASS}
    active = [r for r in REASONS if reasons.get(r, 0.0) >= limit.get(r, REASON_FRACTION)
              and (r != "failed_sufficient_criterion" or reasons[r] > limit[r])]
    return {"pass": passed, "p_pass": float(np.mean(passed)), "reasons": active,
            "p_reason": [{"reason": k, "probability": round(v, 6)} for k, v in reasons.items()],
            "near_pairs": near_pairs,
            "known": bool(known.all())}


def nbody_plan(options, domain):
    """(draws to integrate, why) from the options and the domain assessment."""
    want = getattr(options, "nbody", 0)
    if want == "auto":
        if not domain["reasons"]:
            return 0, "inside_domain"
        want = AUTO_NBODY_DRAWS
    want = int(want or 0)
    if want <= 0:
        return 0, "turned_off"
    if not nbody.nbody_available():
        return 0, "rebound_missing"
    return want, "requested" if getattr(options, "nbody", 0) != "auto" else "outside_domain"


def _resonance_specs(ctx, pairs):
    """(i, i+1, p, q) of the near-resonant pairs: the (p+q):p resonance named in the pair table."""
    jj, kk = ctx.arrays.get("near_resonance_j"), ctx.arrays.get("near_resonance_k")
    out = []
    for i in pairs:
        sel = jj[:, i] > 0
        if not sel.any():
            continue
        vals, counts = np.unique(np.stack([jj[sel, i], kk[sel, i]], axis=1), axis=0, return_counts=True)
        j, k = (int(x) for x in vals[np.argmax(counts)])
        out.append((i, i + 1, j - k, k))
    return out


def run_nbody(post, n_draws, options, resonances=(), laplace=(), seed=0):
    """Integrate ``n_draws`` posterior draws (fewer when the work budget binds); returns (result, info)."""
    sub = post.subset(n_draws)
    d = sub.draws
    m = effective_mass(sub)
    ok = np.all(np.isfinite(m) & (m > 0), axis=1) & _ordered(sub)
    P = np.asarray(d["period"], dtype=float)
    npl = P.shape[1]
    horizon = float(options.nbody_orbits)
    # deterministic work cap: bodies x steps x draws <= budget x nominal speed
    steps = horizon * nbody.STEPS_PER_ORBIT * max(1.0, float(np.nanmedian(P[:, 0] / _step_period(d))))
    per_draw = (npl + 1) * steps
    cap = int(options.nbody_budget * NOMINAL_BODY_STEPS_PER_S // max(per_draw, 1.0))
    idx = np.flatnonzero(ok)[:max(cap, 0)]
    info = {"requested": int(n_draws), "usable": int(ok.sum()), "work_cap_draws": int(cap)}
    if idx.size < min(MIN_NBODY_DRAWS, int(n_draws)):
        return None, info
    inc = np.asarray(d["inc"], dtype=float)[idx]
    node = np.asarray(d["node"], dtype=float)[idx]
    edge_on = ~np.all(np.isfinite(inc), axis=1)
    inc = np.where(np.isfinite(inc), inc, np.pi / 2)
    node = np.where(np.isfinite(node), node, 0.0)
    omega = np.asarray(d["omega"], dtype=float)[idx]
    omega = np.where(np.isfinite(omega), omega, 0.0)
    M0 = d.get("mean_anomaly")
    rng = np.random.default_rng(np.random.SeedSequence([int(seed), 0x4E42]))
    uniform = rng.uniform(0.0, 2 * np.pi, (idx.size, npl))
    if M0 is None:
        M0 = uniform
    else:
        M0 = np.asarray(M0, dtype=float)[idx]
        M0 = np.where(np.isfinite(M0), M0, uniform)
    jobs = int(getattr(options, "jobs", 1) or 0) or _cores()
    res = nbody_runs.integrate_draws(np.asarray(d["m_star"], dtype=float)[idx], m[idx], np.asarray(d["a"])[idx],
                                np.clip(np.asarray(d["ecc"], dtype=float)[idx], 0.0, 0.999), inc, omega, node, M0,
                                n_inner_orbits=horizon, jobs=jobs, seed=seed, resonances=resonances,
                                laplace=laplace, n_snapshots=N_SNAPSHOTS)
    info.update(integrated=int(idx.size), orientation="posterior orientations" if not edge_on.any()
                else "coplanar and edge-on where the posterior has no orientation")
    Pi = P[idx]
    info["horizon"] = {"inner_orbits": int(round(horizon)),
                       "outer_orbits": summarize(horizon * Pi[:, 0] / Pi[:, -1]),
                       "years": summarize(horizon * Pi[:, 0] / 365.25)}
    return res, info


def _step_period(d):
    """Shortest pericentre time scale per draw relative to the inner period (for the work estimate)."""
    P = np.asarray(d["period"], dtype=float)
    e = np.clip(np.nan_to_num(np.asarray(d["ecc"], dtype=float)), 0.0, 0.99)
    ts = P * (1 - e) ** 1.5 / np.sqrt(1 + e)
    return np.nanmin(ts, axis=1)


def _cores():
    import os
    return max(1, len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count() or 1)


def _classify(res):
    done = np.asarray(res.completed, dtype=bool)
    event = (np.asarray(res.encounter) | np.asarray(res.escape) | np.asarray(res.crossing))[done]
    chaotic = np.asarray(res.chaotic)[done] & ~event
    regular = ~event & ~chaotic
    f_event, f_chaos, f_reg = (float(np.mean(x)) for x in (event, chaotic, regular))
    if f_event >= UNSTABLE_MIN:
        cls = "unstable_nbody"
    elif f_reg >= REGULAR_MIN:
        cls = "regular_nbody"
    elif f_event <= 1.0 - REGULAR_MIN and f_chaos >= 0.5:
        cls = "chaotic_survived"
    else:
        cls = "mixed_nbody"
    return cls, {"regular": f_reg, "chaotic_survived": f_chaos, "events": f_event,
                 "survived": 1.0 - f_event}


def _estimate(out, key, log10_t, citation, domain):
    """Add one published estimate when at least half of the draws are inside its domain."""
    fin = np.isfinite(log10_t)
    if fin.mean() >= 0.5:
        out[key] = {"log10_inner_orbits": summarize(log10_t[fin]), "in_domain_probability": float(fin.mean()),
                    "citation": citation, "domain": domain}


def _instability_times(ctx, domain):
    """Published instability-time estimates inside their domains (log10 inner orbits)."""
    post = ctx.post
    m = effective_mass(post)
    out = {}
    ok = _ordered(post) & np.all(np.isfinite(m) & (m > 0), axis=1)
    if not ok.any():
        return out
    a, P, e, ms = (np.asarray(post[k], dtype=float)[ok] for k in ("a", "period", "ecc", "m_star"))
    mm = m[ok]
    if post.system.n_planets >= 3:
        _estimate(out, "compact_three_body", instability_time.log10_time_compact(a, mm, P, ms, e),
                  "Yalinewich & Petrovich 2020; Petit et al. 2020",
                  "three or more planets, e <= 0.05, near-circular and coplanar, away from two-body "
                  "resonance overlap; the closest pair sets the time")
    if post.system.n_planets == 2:
        margin = ctx.arrays.get("hill_margin")
        hs = (margin[ok, 0] > 0) if margin is not None else np.zeros(len(a), bool)
        _estimate(out, "pair_minimum",
                  instability_time.log10_time_pair_minimum(mm[:, 0], mm[:, 1], ms, e[:, 0], e[:, 1], hs),
                  "Veras & Mustill 2013",
                  "two Hill-stable, nearly coplanar planets with e < 0.3; a minimum time before "
                  "Lagrange instability can appear")
    return out


def _resonance_block(ctx, res, specs, laplace_specs, names):
    out_pairs = {}
    for spec in specs:
        i, j, p, q = spec
        lib = np.asarray(res.librating[spec])[np.asarray(res.completed, bool)]
        amp = np.asarray(res.libration_amplitude[spec])[np.asarray(res.completed, bool)]
        out_pairs[i] = {"resonance": spacing.mmr_label(p + q, q), "libration_probability": float(np.mean(lib)),
                        "libration_amplitude_deg": summarize(np.degrees(amp[np.isfinite(amp)]))
                        if np.isfinite(amp).any() else None}
    lap = []
    for spec, rel in laplace_specs:
        lib = np.asarray(res.laplace_librating[spec])[np.asarray(res.completed, bool)]
        lap.append({**rel, "libration_probability": float(np.mean(lib))})
    return out_pairs, lap


def _laplace(ctx):
    Pd = np.asarray(ctx.post["period"], dtype=float)
    P = np.nanmedian(Pd, axis=0)
    names = ctx.names
    rels = []
    for r in mmr_chains.laplace_relations(P):
        i, j, k = r["planets"]
        p, q = r["p"], r["q"]
        resid = (p / Pd[:, i] - (p + q) / Pd[:, j] + q / Pd[:, k]) * Pd[:, j]
        rels.append({"planets": [names[i], names[j], names[k]], "p": p, "q": q,
                     "relation": f"{p}/P1 - {p + q}/P2 + {q}/P3 = 0",
                     "residual": summarize(resid), "_spec": (i, j, k, *r["coefficients"])})
    return rels
