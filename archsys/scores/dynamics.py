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

from ..inference.summary import summarize
from .registry import Column, Score, ScoreResult, register, verdict

from .dynamics_assess import (ANALYTIC_PASS, _classify, _instability_times, _laplace, _resonance_block,
                              _resonance_specs, assess_domain, nbody_plan, run_nbody)

__all__ = ["DynamicsScore"]


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
        *(c for key, what, cite, cite_tex in (
            ("compact_three_body", "instability time, compact system", "Yalinewich & Petrovich 2020",
             r"Yalinewich \& Petrovich 2020"),
            ("pair_minimum", "minimum Lagrange-instability time", "Veras & Mustill 2013", r"Veras \& Mustill 2013"))
          for c in (
            _col(f"instability_time.{key}.log10_inner_orbits", f"log₁₀ {what} ({cite})", "summary",
                 latex=rf"$\log_{{10}}$ {what} ({cite_tex})",
                 unit="inner orbits", unit_latex="inner orbits"),
            _col(f"instability_time.{key}.in_domain_probability", "draws inside that estimate's domain",
                 "percent", show=False),
            _col(f"instability_time.{key}.citation", "citation", show=False),
            _col(f"instability_time.{key}.domain", "domain", show=False))),
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
