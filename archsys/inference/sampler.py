"""Posterior sampling with emcee's ensemble sampler.

* vectorised log-probability (all walkers in one call);
* initialisation from the direct Monte Carlo draws of the summaries, keeping
  only points the joint constraints allow;
* runs in blocks until the chain is at least ``N_TAU`` integrated
  autocorrelation times long (or until ``max_steps``, with a warning);
* burn-in of ``BURN_TAU`` autocorrelation times, thinning by half of one;
* effective sample size per parameter reported.

When no joint constraint binds the posterior is drawn directly
(:mod:`archsys.inference.draws`); :func:`needs_mcmc` decides, and the report
says which path ran.
"""
from __future__ import annotations

import numpy as np

from .draws import direct_draws
from .orient_chain import BURN_TAU, N_TAU
from .posterior import Posterior
from .priors import default_prior, load_prior

__all__ = ["needs_mcmc", "sample_system", "sample_full_model", "N_TAU", "BURN_TAU"]


def _priors(system, opts):
    ep = load_prior(opts.ecc_prior) if opts.ecc_prior else default_prior("eccentricity")
    sp = load_prior(opts.incl_prior) if opts.incl_prior else default_prior("mutual_inclination_sigma")
    if ep.quantity != "eccentricity":
        from ..errors import InputError
        raise InputError(f"--prior {opts.ecc_prior}: is a prior on {ep.quantity}, not eccentricity")
    if sp.quantity != "mutual_inclination_sigma":
        from ..errors import InputError
        raise InputError(f"--incl-prior {opts.incl_prior}: is a prior on {sp.quantity}, not mutual_inclination_sigma")
    return ep, sp


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


def sample_full_model(system, opts) -> Posterior:
    """The v0.1.0 engine (one emcee run over every parameter): the benchmark's baseline only."""
    from .baseline.v010_sampler import sample_full_model as run
    return run(system, opts)
