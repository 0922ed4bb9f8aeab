"""Optional N-body confirmation of the analytic verdicts (extra ``nbody``: rebound).

A deterministic subset of the posterior draws is integrated with a symplectic
integrator (WHFast) and the MEGNO chaos indicator; the fraction of chaotic
draws is reported beside the analytic verdicts.  Never part of the default path.
"""
from __future__ import annotations

import numpy as np

from ..physics import nbody
from .common import effective_mass
from .registry import Column, Score, ScoreResult, register

__all__ = ["nbody_block", "N_ORBITS", "NbodyScore"]

#: Length of each integration in orbits of the innermost planet.
N_ORBITS = 3000


def nbody_block(post, n_draws, jobs=1, seed=0, n_orbits=N_ORBITS):
    """Integrate ``n_draws`` posterior draws; returns the JSON block."""
    if not nbody.nbody_available():
        from ..errors import InputError
        raise InputError("--nbody needs the optional extra: pip install 'archsys[nbody]'")
    sub = post.subset(n_draws)
    m = effective_mass(sub)
    ok = np.all(np.isfinite(m) & (m > 0), axis=1)
    if not ok.any():
        return {"draws": 0, "note": "no draw has masses for every planet; nothing integrated"}
    d = sub.draws
    n = int(ok.sum())
    rng = np.random.default_rng(seed)
    psi = d.get("psi")
    inc = np.where(np.isfinite(d["inc"]), d["inc"], np.pi / 2)[ok]
    node = d["node"][ok] if np.isfinite(d["node"][ok]).all() else np.zeros_like(inc)
    M0 = rng.uniform(0, 2 * np.pi, inc.shape)
    res = nbody.megno_draws(d["m_star"][ok], m[ok], d["a"][ok], d["ecc"][ok], inc, d["omega"][ok], node, M0,
                            n_orbits=n_orbits, jobs=jobs, seed=seed)
    return {
        "draws": n,
        "orbits_of_inner_planet": n_orbits,
        "integrator": "rebound WHFast + MEGNO",
        "chaotic_fraction": float(np.mean(res.chaotic)),
        "encounter_fraction": float(np.mean(res.encounter)),
        "megno": {"median": float(np.nanmedian(res.megno)), "max": float(np.nanmax(res.megno))},
        "orientation": "posterior orientations" if psi is not None else "coplanar, edge-on (no orientation posterior)",
        "note": "MEGNO near 2 means quasi-periodic over the integrated span; a finite integration cannot prove long-term stability",
    }


class NbodyScore(Score):
    """Runs only when the options ask for it (``options.nbody`` draws > 0)."""

    name = "nbody"
    order = 1000
    columns = (
        Column("nbody.draws", "N-body: draws integrated", "N-body: draws integrated", fmt="integer",
               table="system"),
        Column("nbody.orbits_of_inner_planet", "N-body: orbits of the inner planet",
               "N-body: orbits of the inner planet", fmt="integer", table="system"),
        Column("nbody.integrator", "N-body: integrator", "N-body: integrator", fmt="text", table="system"),
        Column("nbody.chaotic_fraction", "N-body: chaotic draws (MEGNO)", "N-body: chaotic draws (MEGNO)",
               fmt="percent", table="system"),
        Column("nbody.encounter_fraction", "N-body: draws with close encounters",
               "N-body: draws with close encounters", fmt="percent", table="system"),
        Column("nbody.megno.median", "N-body: median MEGNO", "N-body: median MEGNO", fmt="number",
               table="system"),
        Column("nbody.megno.max", "N-body: largest MEGNO", "N-body: largest MEGNO", fmt="number",
               table="system"),
        Column("nbody.orientation", "N-body: orientations", "N-body: orientations", fmt="text", table="system"),
        Column("nbody.note", "N-body: note", "N-body: note", fmt="text", table="system"),
    )

    def applies(self, ctx):
        return ctx.n_pairs >= 1 and int(getattr(ctx.options, "nbody", 0) or 0) > 0

    def summarise(self, ctx, arr):
        o = ctx.options
        return ScoreResult(system={"nbody": nbody_block(ctx.post, o.nbody, jobs=getattr(o, "jobs", 1),
                                                        seed=getattr(o, "seed", 0))})


register(NbodyScore)
