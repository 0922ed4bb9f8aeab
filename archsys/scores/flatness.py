"""Flatness of the system: mutual-inclination dispersion and how close to one plane the orbits lie.

With an orientation posterior (MCMC: tilts psi from the reference plane and the
dispersion sigma of the Rayleigh model), the largest mutual inclination, the
largest tilt and the probability that every orbit lies within 5 or 10 degrees
of the common plane.  With sky inclinations and nodes of every planet but no
orientation model, the mutual inclinations themselves.  With sky inclinations
only, lower bounds on the mutual inclinations (nodes unknown).
"""
from __future__ import annotations

import numpy as np

from ..inference.basis import Origin, origin_of
from ..inference.summary import probability, summarize
from ..physics import flatness
from .registry import Column, Score, ScoreResult, register, verdict

__all__ = ["FlatnessScore", "BASIS"]

#: The ``flatness.basis`` values (stable strings of the JSON contract).
BASIS = {
    "orientation": "orientation posterior (hierarchical Rayleigh model)",
    "nodes": "sky inclinations and ascending nodes of every planet (mutual inclinations)",
    "sky": "sky inclinations only: nodes unknown, so these are lower bounds on the mutual inclinations",
    "partial_nodes": "sky inclinations; nodes given for only some planets, so these are lower bounds on "
                     "the mutual inclinations",
    "none": "no orientation information: flatness cannot be assessed (use MCMC with transit or astrometric data)",
}

_DEG = dict(unit="deg", unit_latex="deg", unit_astropy="deg", table="system")


class FlatnessScore(Score):
    name = "flatness"
    order = 60
    columns = (
        Column("mutual_inclination_sigma_deg", "mutual-inclination dispersion σ",
               r"Mutual-inclination dispersion $\sigma_\mathrm{mut}$", **_DEG),
        Column("flatness.basis", "flatness basis", "Flatness basis", fmt="text", table="system"),
        Column("flatness.mutual_inclination_sigma_deg", "mutual-inclination dispersion σ",
               r"Mutual-inclination dispersion $\sigma_\mathrm{mut}$", show=False, **_DEG),
        Column("flatness.max_mutual_inclination_deg", "largest mutual inclination",
               "Largest mutual inclination", **_DEG),
        Column("flatness.max_tilt_from_reference_plane_deg", "largest tilt from the reference plane",
               "Largest tilt from the reference plane", **_DEG),
        Column("flatness.probability_all_within_5_deg", "all orbits within 5° of a common plane",
               r"All orbits within $5^\circ$ of a common plane", fmt="percent", table="system"),
        Column("flatness.probability_all_within_10_deg", "all orbits within 10° of a common plane",
               r"All orbits within $10^\circ$ of a common plane", fmt="percent", table="system"),
        Column("flatness.max_mutual_inclination_lower_bound_deg", "largest mutual inclination (lower bound)",
               "Largest mutual inclination (lower bound)", **_DEG),
        Column("flatness.planets_with_sky_inclination", "planets with a sky inclination",
               "Planets with a sky inclination", fmt="integer", table="system"),
    )

    def summarise(self, ctx, arr):
        post = ctx.post
        inc, node, psi = post["inc"], post["node"], post.get("psi")
        if psi is not None and np.isfinite(node).all():
            psi_all, _ = flatness.pairwise_mutual_inclinations(inc, node)
            fb = {
                "basis": BASIS["orientation"],
                "mutual_inclination_sigma_deg": summarize(np.degrees(post["sigma_mutual"])),
                "max_mutual_inclination_deg": summarize(np.degrees(psi_all.max(axis=1))),
                "max_tilt_from_reference_plane_deg": summarize(np.degrees(psi.max(axis=1))),
                "probability_all_within_5_deg": probability(flatness.fraction_within(psi, np.radians(5.0))),
                "probability_all_within_10_deg": probability(flatness.fraction_within(psi, np.radians(10.0))),
            }
            return ScoreResult(system={"flatness": fb,
                                       "mutual_inclination_sigma_deg": fb["mutual_inclination_sigma_deg"]})
        known = np.isfinite(inc).all(axis=0)
        if known.all() and np.isfinite(node).all():
            psi_all, _ = flatness.pairwise_mutual_inclinations(inc, node)
            return ScoreResult(system={"flatness": {
                "basis": BASIS["nodes"],
                "max_mutual_inclination_deg": summarize(np.degrees(psi_all.max(axis=1)))}})
        if known.sum() >= 2:
            lo, _ = flatness.sky_inclination_spread(inc[:, known], reflection_ambiguous=True)
            some_nodes = np.isfinite(node).all(axis=0).any()
            return ScoreResult(system={"flatness": {
                "basis": BASIS["partial_nodes" if some_nodes else "sky"],
                "max_mutual_inclination_lower_bound_deg": summarize(np.degrees(lo.max(axis=1))),
                "planets_with_sky_inclination": int(known.sum())}})
        return ScoreResult(system={"flatness": {"basis": BASIS["none"]}})

    def verdicts(self, ctx):
        fb = ctx.system.get("flatness") or {}
        if "probability_all_within_5_deg" not in fb:
            return []
        prior_only = all(origin_of(ctx.note(p, "inc")) is Origin.PRIOR for p in ctx.names)
        caveats = ["prior_only_orientation"] if prior_only else ()
        return [verdict("flat_within_5_deg", fb["probability_all_within_5_deg"], ctx.names,
                        criterion="every orbit within 5 deg of the common reference plane",
                        citation="", caveats=caveats)]


register(FlatnessScore)
