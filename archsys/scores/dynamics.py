"""One dynamical assessment per system: analytic criteria inside their domain, N-body outside it.

The analytic criteria -- Gladman (1993) Hill stability of each adjacent pair,
AMD stability (Laskar & Petit 2017; Petit, Laskar & Boue 2017) -- are
*sufficient* conditions: passing proves the absence of close encounters (Hill,
two planets) or of collisions in the secular dynamics (AMD), under their
assumptions; failing proves nothing.  They say nothing certain about systems of
three or more compact planets, about resonant pairs and chains (whose survival
is decided by the phases), or about eccentric pairs near the Hill boundary.

So a system gets one of these classes (:data:`CLASSES`):

* ``stable_analytic`` -- inside the criteria's domain and passing them in
  >= 95 % of draws;
* ``regular_nbody`` -- outside the domain; integrated draws are regular
  (MEGNO < 2.5) with no encounter, crossing or escape in >= 80 % of draws;
* ``chaotic_survived`` -- chaotic draws that survived the horizon (chaos is
  not instability);
* ``unstable_nbody`` -- close encounters, crossings or escapes within the
  horizon in >= 50 % of integrated draws;
* ``mixed_nbody`` -- integrated draws that split between these outcomes;
* ``not_proven_stable`` -- outside the domain (or failing a sufficient
  criterion) with no integration (``--nbody 0`` or rebound missing).

Never "unstable" from a failed sufficient criterion alone; never "stable" for
three or more compact planets from pairwise criteria alone.  The N-body step
integrates a subset of posterior draws with rebound
(:func:`archsys.physics.nbody.integrate_draws`) from phases at one common epoch
where the data give them (uniform otherwise, and said), tests the resonant
angles of near-resonant pairs and the three-body angles of Laplace-type
relations for libration, and reports the horizon in inner orbits, outer orbits
and years.  Published instability-time estimates are given where their domain
holds (:mod:`archsys.physics.instability_time`).

Every probability here is a fraction of posterior draws: a statistical
estimate, not a guarantee; a finite integration cannot prove stability beyond
its horizon.
"""
from __future__ import annotations

import numpy as np

from ..inference.summary import probability, summarize
from ..options import AUTO_NBODY_DRAWS
from ..physics import hill, instability_time, nbody, spacing
from .common import effective_mass
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["DynamicsScore", "CLASSES", "assess_domain", "nbody_plan", "run_nbody", "NOMINAL_BODY_STEPS_PER_S"]

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
    res = nbody.integrate_draws(np.asarray(d["m_star"], dtype=float)[idx], m[idx], np.asarray(d["a"])[idx],
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
        lt = instability_time.log10_time_compact(a, mm, P, ms, e)
        fin = np.isfinite(lt)
        if fin.mean() >= 0.5:
            out["compact_three_body"] = {
                "log10_inner_orbits": summarize(lt[fin]), "in_domain_probability": float(fin.mean()),
                "citation": "Yalinewich & Petrovich 2020; Petit et al. 2020",
                "domain": "three or more planets, e <= 0.05, near-circular and coplanar, away from two-body "
                          "resonance overlap; the closest pair sets the time"}
    if post.system.n_planets == 2:
        margin = ctx.arrays.get("hill_margin")
        hs = (margin[ok, 0] > 0) if margin is not None else np.zeros(len(a), bool)
        lt = instability_time.log10_time_pair_minimum(mm[:, 0], mm[:, 1], ms, e[:, 0], e[:, 1], hs)
        fin = np.isfinite(lt)
        if fin.mean() >= 0.5:
            out["pair_minimum"] = {
                "log10_inner_orbits": summarize(lt[fin]), "in_domain_probability": float(fin.mean()),
                "citation": "Veras & Mustill 2013",
                "domain": "two Hill-stable, nearly coplanar planets with e < 0.3; a minimum time before "
                          "Lagrange instability can appear"}
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
    for r in spacing.laplace_relations(P):
        i, j, k = r["planets"]
        p, q = r["p"], r["q"]
        resid = (p / Pd[:, i] - (p + q) / Pd[:, j] + q / Pd[:, k]) * Pd[:, j]
        rels.append({"planets": [names[i], names[j], names[k]], "p": p, "q": q,
                     "relation": f"{p}/P1 - {p + q}/P2 + {q}/P3 = 0",
                     "residual": summarize(resid), "_spec": (i, j, k, *r["coefficients"])})
    return rels


def _col(key, label, fmt="text", latex=None, **kw):
    return Column(f"dynamics.{key}", label, latex or label, fmt=fmt, table="system", **kw)


class DynamicsScore(Score):
    """The dynamical assessment (runs after every other score; may integrate draws)."""

    name = "dynamics"
    order = 1000
    verdict_order = 0
    columns = (
        _col("class", "dynamical class"),
        _col("verdict", "dynamical verdict", show=False),
        _col("basis", "dynamical verdict rests on"),
        _col("stable_probability", "P(stable)", "percent"),
        _col("survival_probability", "P(no close encounter, crossing or escape)", "percent"),
        _col("analytic_pass_probability", "sufficient criteria met (Hill + AMD)", "percent"),
        _col("outside_domain", "outside the analytic domain because", show=False),
        _col("outside_domain_probability", "draws outside the analytic domain, by reason", show=False),
        _col("stable_means", "stable means", show=False),
        _col("nbody_not_run", "why no N-body integration ran", show=False),
        _col("three_body_relations", "three-body relations", show=False),
        _col("instability_time.compact_three_body.log10_inner_orbits",
             "log₁₀ instability time, compact system (Yalinewich & Petrovich 2020)", "summary",
             latex=r"$\log_{10}$ instability time, compact system (Yalinewich \& Petrovich 2020)",
             unit="inner orbits", unit_latex="inner orbits"),
        _col("instability_time.compact_three_body.in_domain_probability", "draws inside that estimate's domain",
             "percent", show=False),
        _col("instability_time.compact_three_body.citation", "citation", show=False),
        _col("instability_time.compact_three_body.domain", "domain", show=False),
        _col("instability_time.pair_minimum.log10_inner_orbits",
             "log₁₀ minimum Lagrange-instability time (Veras & Mustill 2013)", "summary",
             latex=r"$\log_{10}$ minimum Lagrange-instability time (Veras \& Mustill 2013)",
             unit="inner orbits", unit_latex="inner orbits"),
        _col("instability_time.pair_minimum.in_domain_probability", "draws inside that estimate's domain",
             "percent", show=False),
        _col("instability_time.pair_minimum.citation", "citation", show=False),
        _col("instability_time.pair_minimum.domain", "domain", show=False),
        _col("nbody.why", "why N-body ran", show=False),
        _col("nbody.requested", "N-body draws requested", "integer", show=False),
        _col("nbody.usable", "draws with every mass known", "integer", show=False),
        _col("nbody.work_cap_draws", "draws within the work budget", "integer", show=False),
        _col("nbody.integrated", "N-body draws integrated", "integer", show=False),
        _col("nbody.note", "N-body note", show=False),
        _col("nbody.draws", "N-body draws integrated", "integer"),
        _col("nbody.horizon.inner_orbits", "N-body horizon (orbits of the innermost planet)", "integer"),
        _col("nbody.horizon.outer_orbits", "N-body horizon (orbits of the outermost planet)", "summary"),
        _col("nbody.horizon.years", "N-body horizon", "summary", unit="yr", unit_latex="yr", unit_astropy="yr"),
        _col("nbody.integrator", "N-body integrator", show=False),
        _col("nbody.regular_probability", "integrated draws regular (MEGNO < 2.5, no event)", "percent"),
        _col("nbody.chaotic_survived_probability", "integrated draws chaotic but surviving", "percent"),
        _col("nbody.event_probability", "integrated draws with an encounter, crossing or escape", "percent"),
        _col("nbody.survival_probability", "integrated draws surviving", "percent", show=False),
        _col("nbody.encounter_probability", "integrated draws with a close encounter", "percent", show=False),
        _col("nbody.crossing_probability", "integrated draws with crossing orbits", "percent", show=False),
        _col("nbody.escape_probability", "integrated draws with an escape", "percent", show=False),
        _col("nbody.megno", "MEGNO at the end of the integration", "summary"),
        _col("nbody.energy_error", "relative energy error", "summary", show=False),
        _col("nbody.phases", "phases"),
        _col("nbody.phases_uniform", "planets with uniformly drawn phases", "names", show=False),
        _col("nbody.orientation", "N-body orientations", show=False),
        _col("nbody.truncated_by_budget", "cut by the work budget", show=False),
        Column("libration_probability", "P(librating)", r"$P_\mathrm{lib}$", fmt="percent",
               description="fraction of integrated draws in which a resonant angle of the pair librates"),
        Column("libration_resonance", "resonance tested", "Resonance tested", fmt="text",
               description="resonance whose angles were tested for libration in the integration"),
        Column("libration_amplitude_deg", "libration amplitude", r"$A_\mathrm{lib}$", "deg", r"deg",
               unit_astropy="deg", show=False, description="half-range of the librating resonant angle"),
    )

    def applies(self, ctx):
        return ctx.n_pairs >= 1

    def summarise(self, ctx, arr):
        o = ctx.options
        domain = assess_domain(ctx)
        n_req, why = nbody_plan(o, domain)
        block = {"analytic_pass_probability": domain["p_pass"], "outside_domain": domain["reasons"],
                 "outside_domain_probability": domain["p_reason"]}
        times = _instability_times(ctx, domain)
        if times:
            block["instability_time"] = times
        laplace_rel = _laplace(ctx) if ctx.post.system.n_planets >= 3 else []
        pairs_out = [{} for _ in range(ctx.n_pairs)]
        res = None
        if n_req > 0:
            specs = _resonance_specs(ctx, domain["near_pairs"])
            lap_specs = [r["_spec"] for r in laplace_rel]
            res, info = run_nbody(ctx.post, n_req, o, specs, lap_specs, seed=getattr(o, "seed", 0))
            block["nbody"] = {"why": why, **{k: v for k, v in info.items() if k != "horizon"}}
            if res is None:
                block["nbody"]["note"] = "too few draws could be integrated (masses unknown or the work budget)"
            else:
                cls, fr = _classify(res)
                phases = getattr(ctx.post, "phases", {}) or {}
                src = phases.get("source") or {}
                uniform = [nm for nm in ctx.names if src.get(nm, "uniform") == "uniform"]
                done = np.asarray(res.completed, bool)
                block["nbody"].update({
                    "draws": int(done.sum()), "horizon": info["horizon"],
                    "integrator": "rebound WHFast + MEGNO (IAS15 after an energy-error switch)",
                    "regular_probability": fr["regular"], "chaotic_survived_probability": fr["chaotic_survived"],
                    "event_probability": fr["events"], "survival_probability": fr["survived"],
                    "encounter_probability": float(np.mean(np.asarray(res.encounter)[done])),
                    "crossing_probability": float(np.mean(np.asarray(res.crossing)[done])),
                    "escape_probability": float(np.mean(np.asarray(res.escape)[done])),
                    "megno": summarize(np.asarray(res.megno)[done]),
                    "energy_error": summarize(np.asarray(res.energy_error)[done]),
                    "phases": "from the data for every planet" if not uniform else
                              ("drawn uniformly for " + ", ".join(uniform)),
                    "phases_uniform": uniform,
                    "orientation": info.get("orientation"),
                    "truncated_by_budget": bool(info["integrated"] < min(info["requested"], info["usable"])),
                })
                pr, lap = _resonance_block(ctx, res, specs, [(r["_spec"], r) for r in laplace_rel], ctx.names)
                for i, entry in pr.items():
                    pairs_out[i] = {"libration_probability": entry["libration_probability"],
                                    "libration_resonance": entry["resonance"],
                                    "libration_amplitude_deg": entry["libration_amplitude_deg"]}
                for r in laplace_rel:
                    r.pop("_spec", None)
                laplace_rel = [{k: v for k, v in r.items() if k != "_spec"} for r in lap]
                block.update({"class": cls, "basis": "nbody", "stable_probability": fr["regular"],
                              "survival_probability": fr["survived"]})
        for r in laplace_rel:
            r.pop("_spec", None)
        if laplace_rel:
            block["three_body_relations"] = laplace_rel
        if "class" not in block:
            if not domain["reasons"] and domain["p_pass"] >= ANALYTIC_PASS:
                block.update({"class": "stable_analytic", "basis": "analytic", "stable_probability": domain["p_pass"],
                              "survival_probability": domain["p_pass"]})
            else:
                block.update({"class": "not_proven_stable", "basis": "analytic", "stable_probability": None,
                              "survival_probability": None, "nbody_not_run": why})
        block["stable_means"] = ("no close encounter within one mutual Hill radius, no orbit crossing or escape, "
                                 "and MEGNO < 2.5 over the horizon" if block["basis"] == "nbody" else
                                 "the sufficient analytic criteria hold (Gladman 1993 for every adjacent pair; AMD, "
                                 "Laskar & Petit 2017)")
        return ScoreResult(system={"dynamics": block}, pairs=pairs_out)

    def verdicts(self, ctx):
        b = ctx.system.get("dynamics") or {}
        if not b:
            return []
        cites = {"analytic": "Gladman 1993; Laskar & Petit 2017", "nbody": "Rein & Liu 2012; Cincotta & Simo 2000"}
        caveats = []
        nb = b.get("nbody") or {}
        if nb.get("phases_uniform"):
            caveats.append("uniform_phases")
        if nb.get("truncated_by_budget"):
            caveats.append("nbody_budget")
        if any(str(ctx.note(p, "mass")).startswith("minimum") for p in ctx.names):
            caveats.append("minimum_masses")
        if getattr(ctx.options, "require_stable", False):
            caveats.append("stable_by_construction")
        out = [verdict("three_body_relation", r.get("libration_probability"), r["planets"],
                       criterion="three-body relation of the mean motions", citation="Murray & Dermott 1999",
                       relation=r["relation"], residual=r["residual"])
               for r in b.get("three_body_relations") or []]
        return [verdict("dynamical_assessment", b.get("stable_probability"), ctx.names,
                        criterion=b.get("stable_means", ""), citation=cites.get(b.get("basis"), ""),
                        caveats=caveats, **{"class": b.get("class"), "basis": b.get("basis"),
                                            "outside_domain": b.get("outside_domain", []),
                                            "analytic_pass_probability": b.get("analytic_pass_probability"),
                                            "nbody_not_run": b.get("nbody_not_run")})] + out


register(DynamicsScore)
