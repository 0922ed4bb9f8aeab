"""Which path draws a posterior: direct Monte Carlo draws or the joint engine.

When no joint constraint binds, the posterior is drawn directly
(:mod:`archsys.inference.draws`); otherwise the joint engine runs
(:mod:`archsys.inference.joint`: exact draws, orientation block, importance
weights).  :func:`needs_mcmc` decides, and the report says which path ran.
"""
from __future__ import annotations

import numpy as np

from .draws import direct_draws
from .posterior import Posterior

__all__ = ["needs_mcmc", "sample_system"]


def needs_mcmc(system, opts) -> bool:
    """True when a joint constraint binds, so that direct draws would be wrong.

    Binding constraints: two or more transiting planets (their inclinations are
    coupled through the dispersion sigma), a non-transiting planet beside
    transiting ones, a population prior other than flat, the stability prior,
    astrometric orientations, or orbits that cross in some direct draws.
    """
    if opts.analytic_stability_prior or opts.ecc_prior not in (None, "ecc-uniform"):
        return True
    tr = [p for p in system.planets if p.transiting or "b" in p.quantities]
    if len(tr) >= 2:
        return True
    if tr and any(p.transiting is False for p in system.planets):
        return True
    if any("ascending_node" in p.quantities for p in system.planets):
        return True
    if system.n_planets >= 2:
        d = direct_draws(system, n=512, seed=opts.seed)
        a, e = d["a"], d["ecc"]
        crossing = np.any(a[:, :-1] * (1 + e[:, :-1]) >= a[:, 1:] * (1 - e[:, 1:]), axis=1)
        if crossing.mean() > 0.001:
            return True
    return False


def sample_system(system, opts) -> Posterior:
    """Joint posterior of ``system`` under ``opts`` (the joint engine, :mod:`archsys.inference.joint`)."""
    from .joint import sample_joint
    return sample_joint(system, opts)

