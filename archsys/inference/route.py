"""Which path draws a posterior, and why: direct Monte Carlo draws or the joint engine.

:func:`choose_path` is the one place that decides.  When no joint constraint
binds, the posterior is drawn directly (:mod:`archsys.inference.draws`);
otherwise the joint engine runs (:mod:`archsys.inference.joint`: exact draws,
orientation block, importance weights).  The reasons it returns are the
report's ``sampler.why``, so the path and its explanation cannot disagree.
"""
from __future__ import annotations

import enum
from dataclasses import dataclass

import numpy as np

from .draws import DIRECT_WHY, direct_draws

__all__ = ["PathReason", "PathChoice", "choose_path", "needs_mcmc", "CROSSING_FRACTION"]

#: The joint engine runs when more than this fraction of 512 direct draws have crossing orbits.
CROSSING_FRACTION = 0.001


class PathReason(enum.Enum):
    """Why the joint engine runs.  The value is the phrase the report's ``sampler.why`` shows."""

    REQUESTED = "requested (--mode mcmc)"
    STABILITY_PRIOR = "stability prior"
    ECC_PRIOR = "population eccentricity prior"
    SHARED_DISPERSION = "several transiting planets share one inclination dispersion"
    NON_TRANSIT = "a non-transiting planet constrains the geometry"
    NODES = "measured orientations (ascending node)"
    CROSSING = "orbits cross in some direct draws"


@dataclass(frozen=True)
class PathChoice:
    """The path that runs (``joint``) and every reason that makes it run (empty for direct draws)."""

    reasons: tuple

    @property
    def joint(self) -> bool:
        return bool(self.reasons)

    @property
    def why(self) -> str:
        return "; ".join(r.value for r in self.reasons) if self.reasons else DIRECT_WHY


def _crossing(system, seed) -> bool:
    d = direct_draws(system, n=512, seed=seed)
    a, e = d["a"], d["ecc"]
    crossing = np.any(a[:, :-1] * (1 + e[:, :-1]) >= a[:, 1:] * (1 - e[:, 1:]), axis=1)
    return bool(crossing.mean() > CROSSING_FRACTION)


def choose_path(system, opts) -> PathChoice:
    """Decide between direct draws and the joint engine for ``system`` under ``opts``.

    A joint constraint binds, so direct draws would be wrong, when: the joint
    engine is requested (``--mode mcmc``); the stability prior is on; a
    population eccentricity prior other than flat is chosen; two or more planets
    transit (their inclinations share the dispersion sigma); a non-transiting
    planet sits beside transiting ones; any planet has a measured ascending node;
    or orbits cross in more than ``CROSSING_FRACTION`` of 512 direct draws (only
    checked when nothing else binds).  ``--mode direct`` / ``fast`` are handled
    by the caller (:func:`archsys.pipeline.analyze`), which never asks.
    """
    reasons = []
    if str(getattr(opts.mode, "value", opts.mode)) == "mcmc":
        reasons.append(PathReason.REQUESTED)
    if opts.analytic_stability_prior:
        reasons.append(PathReason.STABILITY_PRIOR)
    if opts.ecc_prior not in (None, "ecc-uniform"):
        reasons.append(PathReason.ECC_PRIOR)
    tr = [p for p in system.planets if p.transiting or "b" in p.quantities]
    if len(tr) >= 2:
        reasons.append(PathReason.SHARED_DISPERSION)
    if tr and any(p.transiting is False for p in system.planets):
        reasons.append(PathReason.NON_TRANSIT)
    if any("ascending_node" in p.quantities for p in system.planets):
        reasons.append(PathReason.NODES)
    if not reasons and system.n_planets >= 2 and _crossing(system, opts.seed):
        reasons.append(PathReason.CROSSING)
    return PathChoice(tuple(reasons))


def needs_mcmc(system, opts) -> bool:
    """True when a joint constraint binds (:func:`choose_path` decides)."""
    return choose_path(system, opts).joint

