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

__all__ = ["nbody_block", "N_ORBITS_OUTER", "NbodyScore"]

#: Default length of each integration in orbits of the *outermost* planet (``--nbody-orbits``).
#: Counting in inner orbits would judge a wide system after a few orbits of its outer pair; MEGNO
#: separates chaotic from quasi-periodic orbits after ~10^3 orbits of the pair concerned
#: (common practice).  The secular time-scales are longer still: say so beside the result.
N_ORBITS_OUTER = 1000


def nbody_block(post, n_draws, jobs=1, seed=0, n_orbits=N_ORBITS_OUTER):
    """Integrate ``n_draws`` posterior draws for ``n_orbits`` orbits of the outermost planet;
    returns the JSON block."""
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
    # the integrator counts inner orbits: convert the horizon with the median period ratio
    P = d["period"][ok]
    ratio = float(np.median(P[:, -1] / P[:, 0]))
    n_inner = float(n_orbits) * ratio
    res = nbody.megno_draws(d["m_star"][ok], m[ok], d["a"][ok], d["ecc"][ok], inc, d["omega"][ok], node, M0,
                            n_orbits=n_inner, jobs=jobs, seed=seed)
    years = float(n_orbits) * float(np.median(P[:, -1])) / 365.25
    return {
        "draws": n,
        "orbits_of_outer_planet": float(n_orbits),
        "orbits_of_inner_planet": round(n_inner, 6),
        "horizon_years": round(years, 3),
        "integrator": "rebound WHFast + MEGNO",
        "chaotic_fraction": float(np.mean(res.chaotic)),
        "encounter_fraction": float(np.mean(res.encounter)),
        "megno": {"median": float(np.nanmedian(res.megno)), "max": float(np.nanmax(res.megno))},
        "orientation": "posterior orientations" if psi is not None else "coplanar, edge-on (no orientation posterior)",
        "note": ("MEGNO near 2 means quasi-periodic over the integrated span; a finite integration cannot prove "
                 "long-term stability, and secular evolution acts on longer time-scales than this horizon"),
    }


def _col(key, label, fmt="text", **kw):
    return Column(f"nbody.{key}", f"N-body: {label}", f"N-body: {label}", fmt=fmt, table="system", **kw)


class NbodyScore(Score):
    """Runs only when the options ask for it (``options.nbody`` draws > 0)."""

    name = "nbody"
    order = 1000
    columns = (
        _col("draws", "draws integrated", "integer"),
        _col("orbits_of_outer_planet", "horizon (orbits of the outer planet)", "number"),
        _col("orbits_of_inner_planet", "horizon (orbits of the inner planet)", "number"),
        _col("horizon_years", "horizon", "number", unit="yr", unit_latex="yr", unit_astropy="yr"),
        _col("integrator", "integrator"),
        _col("chaotic_fraction", "chaotic draws (MEGNO)", "percent"),
        _col("encounter_fraction", "draws with close encounters", "percent"),
        _col("megno.median", "median MEGNO", "number"),
        _col("megno.max", "largest MEGNO", "number"),
        _col("orientation", "orientations"),
        _col("note", "note"),
    )

    def applies(self, ctx):
        return ctx.n_pairs >= 1 and int(getattr(ctx.options, "nbody", 0) or 0) > 0

    def summarise(self, ctx, arr):
        o = ctx.options
        return ScoreResult(system={"nbody": nbody_block(
            ctx.post, o.nbody, jobs=getattr(o, "jobs", 1), seed=getattr(o, "seed", 0),
            n_orbits=getattr(o, "nbody_orbits", None) or N_ORBITS_OUTER)})


register(NbodyScore)
